/**
 * Runoff routing as property tests (fast-check) over random small DEMs (ties, plateaus, nodata as
 * outlet or wall, connectivity 4, 6 and 8, projected and geographic cells) and random runoff fields:
 *  - conservation of mass: input = ponded + outflow to 1e-9 relative, the ponded water summed over
 *    the cells of the water-depth raster;
 *  - every pond is what its level says: the cells below the level connected to its deepest cell
 *    (a flood fill written here), holding Σ (level − z) × area; no water touches an outlet, and no
 *    level rises above the filled DEM of the minimax-path definition (tests/hydro/helpers.ts);
 *  - enough runoff fills every depression to that filled DEM;
 *  - monotonicity: more runoff never lowers a water level and never reduces the outflow;
 *  - the bookkeeping of each depression: received = held + passed on, held ≤ capacity.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { runoff, type RunoffResult } from '../../src/hydro/runoff.js';
import { runoffReport } from '../../src/report/runoff.js';
import { Grid } from '../../src/surface/grid.js';
import { bruteFill, NEIGHBOURS } from './helpers.js';
import { gridArb } from './arbitraries.js';

/** A runoff field: uniform, or per cell in [0, scale) with some cells nodata. */
const fieldArb = fc.record({ seed: fc.integer(), scale: fc.constantFrom(0.01, 0.3, 2, 20), holes: fc.constantFrom(0, 0.2), uniform: fc.boolean() });

function fieldOf(g: Grid, f: { seed: number; scale: number; holes: number }): Grid {
  let s = f.seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const v = new Float64Array(g.size);
  for (let i = 0; i < v.length; i++) v[i] = rnd() < f.holes ? NaN : rnd() * f.scale;
  return new Grid({ width: g.width, height: g.height, values: v, transform: g.transform, crs: g.crs });
}

function route(g: Grid, conn: 4 | 6 | 8, outlet: boolean, f: { seed: number; scale: number; holes: number; uniform: boolean }): RunoffResult {
  return f.uniform
    ? runoff(g, { depth: f.scale, connectivity: conn, nodataOutlet: outlet, euler: false })
    : runoff(g, { depthRaster: fieldOf(g, f), connectivity: conn, nodataOutlet: outlet, euler: false });
}

/** Conservation of mass: input = ponded + outflow, to 1e-9 of the input. */
function checkBalance(r: RunoffResult): void {
  const w = r.water;
  const tol = 1e-9 * Math.max(w.input, 1e-300);
  expect(Math.abs(w.input - w.ponded - w.outflow)).toBeLessThanOrEqual(tol);
  expect(Math.abs(w.stored - w.ponded)).toBeLessThanOrEqual(tol);
}

/** The cell touches an outlet: off the grid, or a draining nodata cell, among its neighbours. */
function touchesOutlet(g: Grid, i: number, conn: 4 | 6 | 8, outlet: boolean): boolean {
  const c = i % g.width, r = (i - c) / g.width;
  for (const [dc, dr] of NEIGHBOURS[conn]) {
    const cc = c + dc, rr = r + dr;
    if (cc < 0 || rr < 0 || cc >= g.width || rr >= g.height) return true;
    if (outlet && Number.isNaN(g.values[rr * g.width + cc])) return true;
  }
  return false;
}

describe('runoff routing: properties over random DEMs and runoff fields', () => {
  it('conserves mass: input = ponded (Σ depth × area over the cells) + outflow', () => {
    fc.assert(fc.property(gridArb, fieldArb, ({ g, conn, outlet }, f) => {
      const r = route(g, conn, outlet, f);
      checkBalance(r);
      // the ponded volume again, straight from the water-depth raster
      let sum = 0;
      for (let i = 0; i < g.size; i++) if (g.values[i] === g.values[i]) sum += r.rasters.depth[i] * r.areas.rowArea[Math.floor(i / g.width)];
      expect(Math.abs(sum - r.water.ponded)).toBeLessThanOrEqual(1e-9 * Math.max(r.water.input, 1e-300));
    }), { numRuns: 400, seed: 20261202 });
  });

  it('each pond: connected water at one level, holding Σ (level − z) × area, every cell below the level next to it included; none touches an outlet or rises above the filled DEM', () => {
    fc.assert(fc.property(gridArb, fieldArb, ({ g, conn, outlet }, f) => {
      const r = route(g, conn, outlet, f);
      const F = bruteFill(g, conn, outlet);
      const W = g.width, B = r.bodies, lab = r.rasters.bodies;
      let gridArea = 0, zMax = 0;
      for (let i = 0; i < g.size; i++) {
        if (g.values[i] !== g.values[i]) continue;
        gridArea += r.areas.rowArea[Math.floor(i / W)];
        zMax = Math.max(zMax, Math.abs(g.values[i]));
      }
      const nbrs = (i: number): number[] => {
        const c = i % W, rr = (i - c) / W, out: number[] = [];
        for (const [dc, dr] of NEIGHBOURS[conn]) {
          const cc = c + dc, r2 = rr + dr;
          if (cc >= 0 && r2 >= 0 && cc < W && r2 < g.height) out.push(r2 * W + cc);
        }
        return out;
      };
      for (let b = 1; b <= B.count; b++) {
        const level = B.level[b];
        let deepest = -1, cells = 0, vol = 0;
        for (let i = 0; i < g.size; i++) {
          if (lab[i] !== b) continue;
          cells++;
          expect(g.values[i]).toBeLessThan(level);
          vol += (level - g.values[i]) * r.areas.rowArea[Math.floor(i / W)];
          if (deepest < 0 || g.values[i] < g.values[deepest]) deepest = i;
          // maximal: a neighbour below the level is water of the same pond
          for (const j of nbrs(i)) if (g.values[j] < level) expect(lab[j]).toBe(b);
        }
        expect(cells).toBe(B.cells[b]);
        // the stored volume is h·ΣA − Σ A·z over the depression's cells (never more than the grid):
        // a few units in the last place of those sums is the finest it can resolve — it matters for
        // a small pond on huge cells (0.5° geographic cells of ~10⁹ m²)
        const resolution = 16 * Number.EPSILON * (Math.abs(level) + zMax) * gridArea * r.areas.zFactor;
        expect(Math.abs(vol * r.areas.zFactor - B.volume[b])).toBeLessThanOrEqual(1e-9 * Math.max(1, B.volume[b]) + resolution);
        // connected: a flood fill from the deepest cell through cells not above the level (pools may touch at a
        // pass cell standing exactly at the level) reaches every cell of the pond
        const seen = new Set<number>([deepest]);
        const stack = [deepest];
        while (stack.length) {
          const i = stack.pop()!;
          for (const j of nbrs(i)) if (!seen.has(j) && g.values[j] <= level) { seen.add(j); stack.push(j); }
        }
        for (let i = 0; i < g.size; i++) if (lab[i] === b) expect(seen.has(i)).toBe(true);
      }
      for (let i = 0; i < g.size; i++) {
        const lv = r.rasters.level[i];
        if (Number.isNaN(lv)) { expect(lab[i]).toBeLessThanOrEqual(0); continue; }
        expect(lab[i]).toBeGreaterThan(0);
        expect(lv).toBe(B.level[lab[i]]);
        expect(touchesOutlet(g, i, conn, outlet)).toBe(false);
        if (F[i] !== Infinity) expect(lv).toBeLessThanOrEqual(F[i]);
      }
    }), { numRuns: 300, seed: 20261202 });
  });

  it('enough runoff fills every depression to the filled DEM (minimax-path definition)', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      let lo = Infinity, hi = -Infinity;
      for (const z of g.values) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
      const r = runoff(g, { depth: hi - lo + 1, connectivity: conn, nodataOutlet: outlet, euler: false });
      checkBalance(r);
      const F = bruteFill(g, conn, outlet);
      for (let i = 0; i < g.size; i++) {
        const z = g.values[i];
        if (z !== z || F[i] === Infinity) continue;
        if (F[i] > z) expect(r.rasters.level[i]).toBe(F[i]); else expect(Number.isNaN(r.rasters.level[i])).toBe(true);
      }
    }), { numRuns: 300, seed: 20261202 });
  });

  it('monotone: more runoff never lowers a water level and never reduces the outflow', () => {
    fc.assert(fc.property(gridArb, fieldArb, fieldArb, ({ g, conn, outlet }, f1, f2) => {
      const a = fieldOf(g, { ...f1, holes: 0 });
      const extra = fieldOf(g, f2);
      const b = new Grid({ width: g.width, height: g.height, values: a.values.map((x, i) => x + (extra.values[i] === extra.values[i] ? extra.values[i] : 0)), transform: g.transform, crs: g.crs });
      const r1 = runoff(g, { depthRaster: a, connectivity: conn, nodataOutlet: outlet, euler: false });
      const r2 = runoff(g, { depthRaster: b, connectivity: conn, nodataOutlet: outlet, euler: false });
      checkBalance(r1);
      checkBalance(r2);
      const tol = 1e-9 * Math.max(1, r2.water.input);
      expect(r2.water.outflow).toBeGreaterThanOrEqual(r1.water.outflow - tol);
      expect(r2.water.ponded).toBeGreaterThanOrEqual(r1.water.ponded - tol);
      for (let i = 0; i < g.size; i++) {
        const l1 = r1.rasters.level[i], l2 = r2.rasters.level[i];
        if (Number.isNaN(l1)) continue;
        expect(Number.isNaN(l2)).toBe(false);
        expect(l2).toBeGreaterThanOrEqual(l1 - 1e-9);
      }
      // and per depression: it never holds less
      for (let d = 1; d <= r1.hierarchy.count; d++) {
        const k = r1.hierarchy.node[d];
        expect(r2.route.stored[k]).toBeGreaterThanOrEqual(r1.route.stored[k] - tol);
      }
    }), { numRuns: 300, seed: 20261202 });
  });

  it('each depression: received = held + passed on, held ≤ capacity; full ones hold their capacity, dry ones nothing', () => {
    fc.assert(fc.property(gridArb, fieldArb, ({ g, conn, outlet }, f) => {
      const opts = f.uniform ? { depth: f.scale } : { depthRaster: fieldOf(g, f) };
      const { result: r, report } = runoffReport(g, { ...opts, connectivity: conn, nodataOutlet: outlet, euler: false });
      const tol = 1e-9 * Math.max(1, r.water.input);
      let top = 0;
      for (const d of report.depressions) {
        expect(Math.abs(d.received - d.waterVolume - d.passedOn)).toBeLessThanOrEqual(tol);
        expect(d.waterVolume).toBeLessThanOrEqual(d.volume + tol);
        expect(d.passedOn).toBeGreaterThanOrEqual(0);
        if (d.state === 'full') expect(Math.abs(d.waterVolume - d.volume)).toBeLessThanOrEqual(tol);
        if (d.state === 'dry') { expect(d.waterVolume).toBe(0); expect(d.wetCells).toBe(0); }
        if (d.state !== 'full') expect(d.passedOn).toBeLessThanOrEqual(tol);
        if (d.waterLevel !== null) {
          let top = d;
          while (top.parent !== null) top = report.depressions.at(top.parent - 1);
          expect(d.waterLevel).toBeGreaterThan(d.pitValue);
          expect(d.waterLevel).toBeLessThanOrEqual(top.spillValue);
        }
        // what a full depression passes on goes somewhere: into its neighbour, or (outermost ones) off the map
        if (d.parent === null) top += d.passedOn;
        const kids = d.children.map((c) => report.depressions.at(c - 1));
        if (kids.length) expect(d.waterVolume).toBeGreaterThanOrEqual(kids.reduce((s, c) => s + c.waterVolume, 0) - tol);
      }
      expect(top).toBeLessThanOrEqual(r.water.outflow - r.water.outflowDirect + tol);
      expect(report.counts.full + report.counts.partial + report.counts.dry).toBe(report.depressions.length);
    }), { numRuns: 300, seed: 20261202 });
  });
});
