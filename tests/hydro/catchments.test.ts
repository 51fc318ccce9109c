/**
 * Catchments of the depressions (src/hydro/catchments.ts) against sources outside sill:
 *  - analytic: two equal paraboloid bowls side by side, z = min((x−a)² + y², (x+a)² + y²), with the open
 *    boundary — each bowl's catchment is the half of the grid on its side of the perpendicular bisector,
 *    less the edge ring whose water leaves the map; only cells the bisector crosses may go either way;
 *    the merged depression's catchment is both halves. A single cone: every cell but the edge ring.
 *  - a plain steepest-descent walk written here, cell by cell, from the rule docs/runoff.md states
 *    (largest drop over distance to a neighbour earlier in the (value, index) order, ties to the first
 *    in ring order; cells next to an outlet drain off the map), on random grids with ties and nodata;
 *  - properties (fast-check): the top-level catchments, the area draining off the map and the walled-in
 *    area partition the valid cells; every wet cell drains into the depression whose water covers it
 *    (it runs down inside that depression's component), so catchmentCells ≥ wet cells.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { ponds, type PondsResult } from '../../src/hydro/ponds.js';
import { CATCH_OFF_MAP, CATCH_CLOSED, CATCH_NODATA } from '../../src/hydro/catchments.js';
import { sublevelOffsets } from '../../src/hydro/sweep.js';
import { seededValues } from '../morse/arbitraries.js';

const UTM = { epsg: 32633, geographic: false, linearUnit: 'metre' };

function gridFrom(w: number, h: number, f: (x: number, y: number) => number, step = 1): Grid {
  const v = new Float64Array(w * h);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) v[r * w + c] = f((c - (w - 1) / 2) * step, ((h - 1) / 2 - r) * step);
  return new Grid({ width: w, height: h, values: v, transform: [0, step, 0, h * step, 0, -step], crs: UTM });
}

function run(g: Grid, conn: 4 | 8 = 8, nodataOutlet = true): PondsResult {
  return ponds(g, { connectivity: conn, nodataOutlet, catchments: 'raster', euler: false });
}

/** On the grid edge (its cells touch the outside in every connectivity). */
const onRing = (c: number, r: number, w: number, h: number) => c === 0 || r === 0 || c === w - 1 || r === h - 1;

describe('catchments on analytic surfaces', () => {
  it('two equal bowls: each catchment is its half of the grid less the edge ring; the merged one is both', () => {
    const w = 61, h = 41, a = 12;
    const g = gridFrom(w, h, (x, y) => Math.min((x - a) ** 2 + y * y, (x + a) ** 2 + y * y));
    const res = run(g);
    const H = res.hierarchy, C = res.catchments!;
    expect(H.count).toBe(3); // two bowls and the pair after they merge over the bisector
    const leaves = [1, 2, 3].filter((d) => H.childStart[d + 1] === H.childStart[d]);
    const merged = [1, 2, 3].find((d) => H.childStart[d + 1] > H.childStart[d])!;
    const left = leaves.find((d) => H.pit[d] % w < (w - 1) / 2)!, right = leaves.find((d) => d !== left)!;
    // analytic halves: columns left and right of the bisector (column 30), inside the ring
    const inner = (w - 2) * (h - 2);
    const half = ((w - 1) / 2 - 1) * (h - 2), bisector = h - 2;
    expect(C.cells[left]).toBeGreaterThanOrEqual(half);
    expect(C.cells[left]).toBeLessThanOrEqual(half + bisector);
    expect(C.cells[right]).toBeGreaterThanOrEqual(half);
    expect(C.cells[right]).toBeLessThanOrEqual(half + bisector);
    expect(C.cells[merged]).toBe(inner);
    expect(C.offMap.cells).toBe(2 * (w + h) - 4);
    for (let r = 0; r < h; r++) {
      for (let c = 0; c < w; c++) {
        const lab = C.labels![r * w + c];
        if (onRing(c, r, w, h)) expect(lab).toBe(CATCH_OFF_MAP);
        else if (c < (w - 1) / 2) expect(lab).toBe(left);
        else if (c > (w - 1) / 2) expect(lab).toBe(right);
      }
    }
    expect(C.area[merged]).toBe(inner * 1); // cells of 1 m²
  });

  it('a cone: the catchment is every cell but the edge ring', () => {
    const w = 33, h = 27;
    const res = run(gridFrom(w, h, (x, y) => Math.hypot(x, y), 2));
    const C = res.catchments!;
    expect(res.hierarchy.count).toBe(1);
    expect(C.cells[1]).toBe((w - 2) * (h - 2));
    expect(C.area[1]).toBe((w - 2) * (h - 2) * 4);
    expect(C.offMap.cells).toBe(2 * (w + h) - 4);
    expect(C.offMap.area).toBe((2 * (w + h) - 4) * 4);
  });
});

/** The descent rule written out plainly, one cell at a time: the pit a cell's water reaches, or −1 off the map. */
function plainDescent(g: Grid, conn: 4 | 8, nodataOutlet: boolean): Int32Array {
  const w = g.width, h = g.height, z = g.values;
  const off = sublevelOffsets(conn);
  const out = new Int32Array(w * h);
  const outlet = (c: number, r: number) => c < 0 || r < 0 || c >= w || r >= h || (nodataOutlet && Number.isNaN(z[r * w + c]));
  for (let i = 0; i < w * h; i++) {
    if (Number.isNaN(z[i])) { out[i] = -2; continue; }
    let cur = i;
    for (;;) {
      const c = cur % w, r = Math.floor(cur / w);
      if (off.some(([dc, dr]) => outlet(c + dc, r + dr))) { cur = -1; break; }
      let best = -1, bd = -1;
      for (const [dc, dr] of off) {
        const j = (r + dr) * w + c + dc, y = z[j];
        if (!(y < z[cur] || (y === z[cur] && j < cur))) continue;
        const d = (z[cur] - y) / Math.hypot(dc * g.transform[1], dr * g.transform[5]);
        if (d > bd) { best = j; bd = d; }
      }
      if (best < 0) break;
      cur = best;
    }
    out[i] = cur;
  }
  return out;
}

describe('catchments on random grids (fast-check)', () => {
  const grids = fc.record({
    w: fc.integer({ min: 4, max: 24 }), h: fc.integer({ min: 4, max: 24 }),
    levels: fc.integer({ min: 2, max: 40 }), hole: fc.constantFrom(0, 0.05, 0.2), seed: fc.integer(),
    conn: fc.constantFrom(4 as const, 8 as const), outlet: fc.boolean(),
  });

  it('each cell counts for the depression holding the pit a plain descent walk reaches; the parts add up to the valid cells', () => {
    fc.assert(fc.property(grids, ({ w, h, levels, hole, seed, conn, outlet }) => {
      const g = new Grid({ width: w, height: h, values: seededValues(w, h, levels, hole, seed), transform: [0, 2, 0, 0, 0, -3] });
      let res: PondsResult;
      try { res = run(g, conn, outlet); } catch { return; } // flat or all-nodata grids are refused (tested elsewhere)
      const C = res.catchments!, H = res.hierarchy, L = res.rasters.labels;
      const walk = plainDescent(g, conn, outlet);
      let valid = 0, top = 0;
      for (let i = 0; i < w * h; i++) {
        if (Number.isNaN(g.values[i])) { expect(C.labels![i]).toBe(CATCH_NODATA); continue; }
        valid++;
        const pit = walk[i];
        if (pit < 0) expect(C.labels![i]).toBe(CATCH_OFF_MAP);
        else {
          // the pit's innermost covering depression, as the label raster says (0: none → off the map or walled in)
          const d = L[pit];
          const k = C.labels![i];
          // the pit's catchment is the innermost depression whose water covers it — or, for a flat pit lying
          // exactly at the spill level of a depression nested there, that depression (the flat joins it
          // at its spill level, and its water is that depression's); with no cover and no such
          // depression it drains off the map or stays walled in
          if (k > 0 && k !== d) {
            expect(g.values[pit]).toBe(H.spillValue[k]);
            if (d > 0) expect(H.tin[d] <= H.tin[k] && H.tin[k] < H.tout[d]).toBe(true);
          } else if (k <= 0) {
            expect(d).toBe(0);
            expect([CATCH_OFF_MAP, CATCH_CLOSED]).toContain(k);
          }
        }
        // a wet cell drains into the depression whose water covers it (or one nested in it)
        const cover = L[i];
        if (cover > 0) {
          const k = C.labels![i];
          expect(k).toBeGreaterThan(0);
          expect(H.tin[cover] <= H.tin[k] && H.tin[k] < H.tout[cover]).toBe(true);
        }
      }
      for (let d = 1; d <= H.count; d++) {
        if (H.parent[d] === 0) top += C.cells[d];
        expect(C.cells[d]).toBeGreaterThanOrEqual(H.wetCells[d]);
        expect(C.area[d]).toBe(C.cells[d] * 6);
      }
      expect(top + C.offMap.cells + C.closed.cells).toBe(valid);
      if (outlet) expect(C.closed.cells).toBe(0);
      // the sums alone, worked out in the sweep's spare memory, are the same (and the rasters unchanged)
      const sums = ponds(g, { connectivity: conn, nodataOutlet: outlet, euler: false });
      expect(sums.catchments!.labels).toBeNull();
      expect(Array.from(sums.catchments!.cells)).toEqual(Array.from(C.cells));
      expect(sums.catchments!.offMap).toEqual(C.offMap);
      expect(Array.from(sums.rasters.labels)).toEqual(Array.from(L));
    }), { numRuns: 300, seed: 11 });
  });
});

describe('catchment areas on a geographic grid', () => {
  it('add up with the area draining off the map to the valid area (ellipsoidal cell areas, rows differ)', () => {
    const w = 40, h = 30;
    const v = seededValues(w, h, 30, 0.05, 7);
    const g = new Grid({ width: w, height: h, values: v, transform: [10, 0.01, 0, 60, 0, -0.01], crs: { epsg: 4326, geographic: true } });
    const res = run(g);
    const C = res.catchments!, H = res.hierarchy;
    let valid = 0, top = 0;
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) if (!Number.isNaN(v[r * w + c])) valid += res.areas.rowArea[r];
    for (let d = 1; d <= H.count; d++) if (H.parent[d] === 0) top += C.area[d];
    expect(Math.abs(top + C.offMap.area + C.closed.area - valid)).toBeLessThanOrEqual(1e-12 * valid);
    expect(res.areas.rowArea[0]).not.toBe(res.areas.rowArea[h - 1]);
  });
});
