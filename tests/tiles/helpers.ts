/** Random tilings of small grids for the tile tests, and the single-grid reference runs. */
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { buildComplex, type GridComplex } from '../../src/surface/complex.js';
import { sortOrder } from '../../src/morse/order.js';
import { sweepDepressions, nodeSums, type DepressionSweep, type NodeSums } from '../../src/hydro/sweep.js';
import { cellAreas } from '../../src/hydro/areas.js';
import type { CellWindow } from '../../src/tiles/mosaic.js';
import type { TileCut } from '../../src/tiles/memory.js';

/** A random partition of a w × h grid into rectangles by recursive straight cuts (T-junctions included). */
export function guillotine(w: number, h: number, seed: number, maxTiles: number): CellWindow[] {
  let s = seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const out: CellWindow[] = [];
  const stack: CellWindow[] = [{ col0: 0, row0: 0, width: w, height: h }];
  while (stack.length) {
    const r = stack.pop()!;
    const canV = r.width >= 2, canH = r.height >= 2;
    if (out.length + stack.length + 1 >= maxTiles || (!canV && !canH) || rnd() < 0.15) { out.push(r); continue; }
    const vertical = canV && (!canH || rnd() < 0.5);
    if (vertical) {
      const k = 1 + Math.floor(rnd() * (r.width - 1));
      stack.push({ ...r, width: k }, { ...r, col0: r.col0 + k, width: r.width - k });
    } else {
      const k = 1 + Math.floor(rnd() * (r.height - 1));
      stack.push({ ...r, height: k }, { ...r, row0: r.row0 + k, height: r.height - k });
    }
  }
  return out;
}

/**
 * Tiles from owned windows: abutting (tile = own), or sharing their edge row/column with the
 * neighbour to the left/above, which owns it (tile = own grown by one cell up and left where
 * there is a neighbour), as tiles that share edges are cut.
 */
export function tilesOf(owns: CellWindow[], shared: boolean): TileCut[] {
  return owns.map((o) => {
    if (!shared) return { ...o, own: o };
    const c0 = o.col0 > 0 ? o.col0 - 1 : 0, r0 = o.row0 > 0 ? o.row0 - 1 : 0;
    return { col0: c0, row0: r0, width: o.col0 + o.width - c0, height: o.row0 + o.height - r0, own: o };
  });
}

export const tilingArb = fc.record({ seed: fc.integer(), maxTiles: fc.integer({ min: 1, max: 12 }), shared: fc.boolean(), gap: fc.constantFrom(false, false, false, true) });

/** The single-grid sweep and its sums, exactly as `ponds()` takes them. */
export function singleSweep(g: Grid, conn: 4 | 6 | 8, outlet: boolean): { sw: DepressionSweep; sums: NodeSums } {
  const cx = buildComplex(g, { connectivity: conn, boundary: 'open', nodataOutlet: outlet }) as GridComplex;
  const areas = cellAreas(g);
  const sw = sweepDepressions(cx, sortOrder(g.values), areas);
  return { sw, sums: nodeSums(sw, g.values, g.width, areas.rowArea, areas.uniform) };
}
