/**
 * The tiled depression sweep against the single-grid run on the same cells (the reference; the
 * single grid's filled DEM is itself checked against scikit-image in tests/hydro/reference.test.ts):
 * random DEMs with ties, plateaus and nodata, cut into random tilings with and without shared
 * edges, some with a tile left out (a gap), in 4, 6 and 8 connectivity → the same sweep tree,
 * node numbers and sums, hierarchy columns and rasters. Sums are added in another order, so the
 * sums of real numbers (Σa·(z − z0), areas on geographic grids, volumes) may differ in the last
 * bits: those are compared to a relative 1e-12.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { InputError } from '../../src/errors.js';
import { ponds } from '../../src/hydro/ponds.js';
import { SUM_STRIDE, CELLS, SUMA, SUMAZ, TIEN, TIEA, SPILLZ, PITZ } from '../../src/hydro/sweep.js';
import { gridMosaic } from '../../src/tiles/memory.js';
import { pondsTiled } from '../../src/tiles/ponds.js';
import type { PondRasters } from '../../src/hydro/rasters.js';
import { gridArb } from '../hydro/arbitraries.js';
import { guillotine, tilesOf, tilingArb, singleSweep } from './helpers.js';

function near(a: number, b: number, scale: number): void {
  if (a === b) return;
  expect(Math.abs(a - b)).toBeLessThanOrEqual(1e-12 * Math.max(Math.abs(a), Math.abs(b), scale));
}

async function check(g0: Grid, conn: 4 | 6 | 8, outlet: boolean, tiling: { seed: number; maxTiles: number; shared: boolean; gap: boolean }, filters: Record<string, number> = {}): Promise<void> {
  const owns = guillotine(g0.width, g0.height, tiling.seed, tiling.maxTiles);
  // a left-out tile is a gap: nodata in the reference
  const values = g0.values.slice();
  const gap = new Uint8Array(g0.size);
  if (tiling.gap && owns.length > 1) {
    const o = owns.splice(Math.abs(tiling.seed) % owns.length, 1)[0];
    for (let r = o.row0; r < o.row0 + o.height; r++) {
      values.fill(NaN, r * g0.width + o.col0, r * g0.width + o.col0 + o.width);
      gap.fill(1, r * g0.width + o.col0, r * g0.width + o.col0 + o.width);
    }
  }
  const g = new Grid({ width: g0.width, height: g0.height, values, transform: g0.transform, crs: g0.crs });
  const mosaic = gridMosaic(g, tilesOf(owns, tiling.shared));
  const opts = { connectivity: conn, nodataOutlet: outlet, workers: 1, ...filters };
  let ref;
  try { ref = ponds(g, { ...opts, euler: true }); } catch (e) {
    if (!(e instanceof InputError)) throw e;
    await expect(pondsTiled(mosaic, opts)).rejects.toThrow(InputError);
    return;
  }
  const W = g.width;
  const filled = new Float64Array(g.size).fill(-1), depth = new Float64Array(g.size).fill(-1), labels = new Int32Array(g.size).fill(-9);
  const r = await pondsTiled(mosaic, {
    ...opts,
    onRasters: (_t, own, rs: PondRasters) => {
      for (let y = 0; y < own.height; y++) for (let x = 0; x < own.width; x++) {
        const i = (own.row0 + y) * W + own.col0 + x, j = y * own.width + x;
        filled[i] = rs.filled[j]; depth[i] = rs.depth[j]; labels[i] = rs.labels[j];
      }
    },
  });
  const { sw, sums } = singleSweep(g, conn, outlet);
  // the Euler check: critical points per owned cell, simplices anchored once across seams and gaps
  expect(r.euler).toEqual(ref.euler);
  expect(r.sweepPits).toBe(ref.sweepPits);
  // the sweep tree: numbers, creation cells, pits, parents, spills, entries, pour targets
  expect(r.tree.count).toBe(sw.count);
  expect(Array.from(r.tree.vertex)).toEqual(Array.from(sw.vertex));
  expect(Array.from(r.tree.birth)).toEqual(Array.from(sw.birth));
  expect(Array.from(r.tree.parent)).toEqual(Array.from(sw.parent));
  expect(Array.from(r.tree.spill)).toEqual(Array.from(sw.spill));
  expect(Array.from(r.tree.entry)).toEqual(Array.from(sw.entry));
  expect(Array.from(r.tree.to)).toEqual(Array.from(sw.to));
  // node sums
  expect(r.sums.z0).toBe(sums.z0);
  for (let k = 1; k < sw.count; k++) {
    const b = SUM_STRIDE * k;
    for (const f of [CELLS, TIEN, SPILLZ, PITZ]) expect(r.sums.rec[b + f]).toBe(sums.rec[b + f]);
    for (const f of [SUMA, SUMAZ, TIEA]) near(r.sums.rec[b + f], sums.rec[b + f], 0);
  }
  // hierarchy columns
  const H = ref.hierarchy, T = r.hierarchy;
  expect(T.count).toBe(H.count);
  for (const col of ['node', 'parent', 'childStart', 'children', 'level', 'pit', 'spillCell', 'pitValue', 'spillValue', 'into', 'pourTo', 'wetCells', 'maxDepth', 'tin', 'tout', 'repOfNode', 'fillOfNode'] as const) {
    expect(Array.from(T[col] as ArrayLike<number>), col).toEqual(Array.from(H[col] as ArrayLike<number>));
  }
  for (let d = 1; d <= H.count; d++) {
    const k = H.node[d], b = SUM_STRIDE * k;
    // the volume is a difference of two sums: its rounding is relative to their size
    const scale = Math.abs(sums.rec[b + SPILLZ] - sums.z0) * sums.rec[b + SUMA] * (ref.areas.uniform ? ref.areas.rowArea[0] : 1);
    near(T.volume[d], H.volume[d], scale);
    near(T.area[d], H.area[d], 0);
    near(T.meanDepth[d], H.meanDepth[d], Math.abs(H.maxDepth[d]));
  }
  expect(T.removed.filtered).toBe(H.removed.filtered);
  expect(T.removed.flats).toBe(H.removed.flats);
  expect(T.removed.absorbed).toBe(H.removed.absorbed);
  expect(T.removed.closedRegions).toEqual(H.removed.closedRegions);
  // rasters, cell for cell
  for (let i = 0; i < g.size; i++) {
    if (gap[i]) { expect(labels[i]).toBe(-9); continue; } // no tile: no output there
    if (g.values[i] !== g.values[i]) { expect(Number.isNaN(filled[i])).toBe(true); expect(labels[i]).toBe(-1); continue; }
    expect(filled[i]).toBe(ref.rasters.filled[i]);
    expect(depth[i]).toBe(ref.rasters.depth[i]);
    expect(labels[i]).toBe(ref.rasters.labels[i]);
  }
  expect(r.filledCells).toBe(ref.rasters.filledCells);
  near(r.filledVolume, ref.rasters.filledVolume, 0);
}

describe('ponds tile by tile equals the single grid', () => {
  it('random DEMs, random tilings (abutting, shared edges, gaps), connectivity 4/6/8, filters', async () => {
    const filters = fc.constantFrom<Record<string, number>>({}, {}, { minDepth: 0.5 }, { minVolume: 20 }, { minArea: 12 }, { fillOnlyBelow: 30 });
    await fc.assert(fc.asyncProperty(gridArb, tilingArb, filters, async ({ g, conn, outlet }, tiling, f) => {
      await check(g, conn, outlet, tiling, f);
    }), { numRuns: 200 });
  });

  it('larger grids with few levels (long plateaus across seams), float32 and float64', async () => {
    await fc.assert(fc.asyncProperty(
      fc.record({ w: fc.integer({ min: 10, max: 40 }), h: fc.integer({ min: 10, max: 40 }), levels: fc.constantFrom(0, 2, 3, 4), seed: fc.integer(), conn: fc.constantFrom<4 | 8>(4, 8), outlet: fc.boolean(), hole: fc.constantFrom(0, 0.05), f32: fc.boolean() }),
      tilingArb,
      async ({ w, h, levels, seed, conn, outlet, hole, f32 }, tiling) => {
        const { randomGrid } = await import('../hydro/helpers.js');
        await check(randomGrid(seed, w, h, levels, hole, f32), conn, outlet, { ...tiling, maxTiles: tiling.maxTiles + 4 });
      }), { numRuns: 60 });
  });
});

describe('ponds tile by tile: bad input', () => {
  it('one-line InputErrors for bad options, an all-nodata or flat mosaic', async () => {
    const g = new Grid({ width: 6, height: 5, values: Float64Array.from({ length: 30 }, (_, i) => (i * 7) % 11) });
    const m = gridMosaic(g, tilesOf(guillotine(6, 5, 5, 4), false));
    await expect(pondsTiled(m, { workers: 0 })).rejects.toThrow(/--workers must be a whole number ≥ 1, got 0/);
    await expect(pondsTiled(m, { workers: 1, minDepth: -1 })).rejects.toThrow(InputError);
    await expect(pondsTiled(gridMosaic(new Grid({ width: 6, height: 5, values: new Float64Array(30).fill(NaN) }), tilesOf(guillotine(6, 5, 1, 3), true)), { workers: 1 })).rejects.toThrow(/every cell is nodata/);
    await expect(pondsTiled(gridMosaic(new Grid({ width: 6, height: 5, values: new Float64Array(30).fill(3) }), tilesOf(guillotine(6, 5, 1, 3), true)), { workers: 1 })).rejects.toThrow(/every valid cell has the same value/);
    const huge = { ...m, width: 50_000, height: 50_000 };
    await expect(pondsTiled(huge, { workers: 1 })).rejects.toThrow(/more than the 2147483647 sill indexes/);
  });
});
