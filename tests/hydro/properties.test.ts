/**
 * Identities of the depression hierarchy, as property tests over random small DEMs (ties,
 * plateaus, nodata), and the filled DEM against the definition (brute-force relaxation of
 * minimax paths to an outlet — an independent implementation in tests/hydro/helpers.ts).
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { ponds, type PondsResult } from '../../src/hydro/ponds.js';
import { pondsReport } from '../../src/report/ponds.js';
import { survey } from '../../src/morse/survey.js';
import { PIT } from '../../src/morse/critical.js';
import { Grid } from '../../src/surface/grid.js';
import { bruteFill, gridOf } from './helpers.js';
import { gridArb } from './arbitraries.js';

function run(g: Grid, conn: 4 | 6 | 8, outlet: boolean, extra = {}): PondsResult {
  return ponds(g, { connectivity: conn, nodataOutlet: outlet, euler: false, ...extra });
}

/** |a − b| within `tol` relative to the larger magnitude (and at least to `tol` absolute). */
function near(a: number, b: number, tol = 1e-9): void {
  expect(Math.abs(a - b)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(a), Math.abs(b)));
}

function subtree(r: PondsResult, d: number, e: number): boolean {
  const H = r.hierarchy;
  return H.tin[e] >= H.tin[d] && H.tin[e] < H.tout[d];
}

describe('depression hierarchy: identities (property tests)', () => {
  it('filled equals the minimax-path definition; filled ≥ original; walled-in cells are left as they are', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      const r = run(g, conn, outlet);
      const F = bruteFill(g, conn, outlet);
      let closedCells = 0;
      for (let i = 0; i < g.size; i++) {
        const z = g.values[i];
        if (z !== z) { expect(Number.isNaN(r.rasters.filled[i])).toBe(true); continue; }
        expect(r.rasters.filled[i]).toBeGreaterThanOrEqual(z);
        if (F[i] === Infinity) { closedCells++; expect(r.rasters.filled[i]).toBe(z); } else expect(r.rasters.filled[i]).toBe(F[i]);
      }
      expect(r.hierarchy.removed.closedRegions.cells).toBe(closedCells);
    }), { numRuns: 300 });
  });

  it('Σ depth × cell area equals the total volume of the top-level depressions', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      const { result: r, report } = pondsReport(g, { connectivity: conn, nodataOutlet: outlet, euler: false });
      let sum = 0;
      for (let i = 0; i < g.size; i++) if (g.values[i] === g.values[i]) sum += r.rasters.depth[i] * r.areas.rowArea[Math.floor(i / g.width)];
      const top = report.depressions.filter((d) => d.parent === null).reduce((s, d) => s + d.volume, 0);
      expect(Math.abs(sum - top)).toBeLessThanOrEqual(1e-9 * Math.max(1, top));
      expect(Math.abs(report.totals.volume - top)).toBeLessThanOrEqual(1e-9 * Math.max(1, top));
      expect(Math.abs(report.totals.filledVolume - top)).toBeLessThanOrEqual(1e-9 * Math.max(1, top));
    }), { numRuns: 300 });
  });

  it('each depression: volume, area and cells equal direct sums over its wet cells; merged ≥ Σ children; spill > pit', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      const { result: r, report } = pondsReport(g, { connectivity: conn, nodataOutlet: outlet, euler: false });
      const labels = r.rasters.labels;
      for (const d of report.depressions) {
        expect(d.spillValue).toBeGreaterThan(d.pitValue);
        expect(d.maxDepth).toBeCloseTo(d.spillValue - d.pitValue, 12);
        let vol = 0, area = 0, cells = 0, zmin = Infinity;
        for (let i = 0; i < g.size; i++) {
          const e = labels[i];
          if (e <= 0 || !subtree(r, d.id, e)) continue;
          const z = g.values[i], a = r.areas.rowArea[Math.floor(i / g.width)];
          expect(z).toBeLessThan(d.spillValue);
          vol += (d.spillValue - z) * a; area += a; cells++; zmin = Math.min(zmin, z);
        }
        expect(cells).toBe(d.cells);
        expect(Math.abs(vol - d.volume)).toBeLessThanOrEqual(1e-9 * Math.max(1, vol));
        expect(Math.abs(area - d.area)).toBeLessThanOrEqual(1e-9 * Math.max(1, area));
        expect(zmin).toBe(d.pitValue);
        const kids = d.children.map((k) => report.depressions.at(k - 1));
        if (kids.length) {
          expect(kids.length).toBeGreaterThanOrEqual(2);
          expect(d.volume).toBeGreaterThanOrEqual(kids.reduce((s, k) => s + k.volume, 0) * (1 - 1e-12));
          for (const k of kids) {
            expect(k.parent).toBe(d.id);
            expect(k.spillValue).toBeLessThanOrEqual(d.spillValue);
            // a nested depression spills into one of its siblings
            expect(d.children).toContain(k.into);
          }
        } else {
          expect(d.kind).toBe('leaf');
        }
        if (d.parent === null) expect(d.into).toBe('outside');
        // the pour point is a neighbour pair: the pass cell, and the cell (or outlet) beyond it
        expect(Math.max(Math.abs(d.pour.to.col - d.pour.col), Math.abs(d.pour.to.row - d.pour.row))).toBe(1);
      }
    }), { numRuns: 300 });
  });

  it('a DEM with no depression reports none (the filled DEM of any DEM has none)', () => {
    fc.assert(fc.property(gridArb, ({ g, conn }) => {
      const F = bruteFill(g, conn, true);
      const filled = new Grid({ width: g.width, height: g.height, values: F, transform: g.transform, crs: g.crs });
      let lo = Infinity, hi = -Infinity;
      for (const z of F) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
      fc.pre(hi > lo);
      const r = run(filled, conn, true);
      expect(r.hierarchy.count).toBe(0);
      for (let i = 0; i < F.length; i++) if (F[i] === F[i]) expect(r.rasters.depth[i]).toBe(0);
    }), { numRuns: 200 });
  });

  it('filters merge depressions into their parent and account for the water', () => {
    fc.assert(fc.property(gridArb, fc.double({ min: 0, max: 3, noNaN: true }), fc.double({ min: 0, max: 60, noNaN: true }), ({ g, conn, outlet }, minDepth, minVolume) => {
      const all = pondsReport(g, { connectivity: conn, nodataOutlet: outlet, euler: false }).report;
      const { result: r, report: f } = pondsReport(g, { connectivity: conn, nodataOutlet: outlet, euler: false, minDepth, minVolume });
      for (const d of f.depressions) {
        expect(d.maxDepth).toBeGreaterThanOrEqual(minDepth - 1e-12);
        expect(d.volume).toBeGreaterThanOrEqual(minVolume);
      }
      // water of removed top-level depressions leaves the totals, and the report says how much
      near(f.totals.volume + f.removed.topLevel.volume, all.totals.volume);
      expect(f.removed.filtered).toBe(f.removed.insideKept.depressions + f.removed.topLevel.depressions);
      // every kept depression keeps its spill level and volume (it is one of the unfiltered ones)
      const key = (d: { spillValue: number; volume: number; pour: { col: number; row: number } }) => `${d.spillValue}@${d.pour.col},${d.pour.row}:${d.volume.toPrecision(12)}`;
      const before = new Set(all.depressions.map(key));
      for (const d of f.depressions) expect(before.has(key(d))).toBe(true);
      // filled DEM: removed top-level depressions are not filled
      let sum = 0;
      for (let i = 0; i < g.size; i++) if (g.values[i] === g.values[i]) sum += r.rasters.depth[i] * r.areas.rowArea[Math.floor(i / g.width)];
      near(sum, f.totals.volume);
    }), { numRuns: 200 });
  });

  it('--min-persistence keeps the same pits as the survey (persistence = spill − pit for depressions)', () => {
    fc.assert(fc.property(gridArb, fc.double({ min: 0.01, max: 4, noNaN: true }), ({ g, conn }, V) => {
      const r = ponds(g, { connectivity: conn, minPersistence: V, euler: false });
      const s = survey(g, { connectivity: conn, boundary: 'open', minPersistence: V });
      const H = r.hierarchy;
      const leaves = new Set<number>();
      for (let id = 1; id <= H.count; id++) if (H.childStart[id + 1] === H.childStart[id]) leaves.add(H.pit[id]);
      const kept = new Set<number>();
      for (let k = 0; k < s.kept.vertex.length; k++) if (s.kept.kind[k] === PIT) kept.add(s.kept.vertex[k]);
      if (conn !== 4) expect([...leaves].sort((a, b) => a - b)).toEqual([...kept].sort((a, b) => a - b));
      else for (const p of leaves) expect(r.rasters.labels[p]).toBeGreaterThan(0);
    }), { numRuns: 200 });
  });

  it('--fill-only-below fills exactly the outermost depressions holding less than V', () => {
    fc.assert(fc.property(gridArb, fc.double({ min: 0.5, max: 80, noNaN: true }), ({ g, conn, outlet }, V) => {
      const { result: r, report } = pondsReport(g, { connectivity: conn, nodataOutlet: outlet, euler: false, fillOnlyBelow: V });
      const byId = report.depressions;
      const filledBy = byId.filter((d) => d.volume < V && (d.parent === null || byId.at(d.parent - 1).volume >= V));
      const want = filledBy.reduce((s, d) => s + d.volume, 0);
      near(report.totals.filledVolume, want);
      for (let i = 0; i < g.size; i++) {
        const e = r.rasters.labels[i];
        if (e <= 0) continue;
        const hit = filledBy.find((d) => subtree(r, d.id, e));
        if (hit) expect(r.rasters.filled[i]).toBe(hit.spillValue);
        else expect(r.rasters.filled[i]).toBe(g.values[i]);
      }
    }), { numRuns: 200 });
  });
});

describe('small cases by hand', () => {
  it('a single pit in a rim: one depression, volume and pour point', () => {
    // 5×5 with a 3×3 basin: rim 5 except one notch of 3 on the east side, floor 1 with the centre 0
    const v = [
      5, 5, 5, 5, 5,
      5, 1, 1, 1, 5,
      5, 1, 0, 1, 3,
      5, 1, 1, 1, 5,
      5, 5, 5, 5, 5,
    ];
    const g = gridOf(5, 5, v);
    const { report } = pondsReport(g, {});
    expect(report.depressions).toHaveLength(1);
    const d = report.depressions.at(0);
    expect(d.pitValue).toBe(0);
    expect(d.spillValue).toBe(3);
    expect([d.pour.col, d.pour.row]).toEqual([4, 2]);
    expect(d.into).toBe('outside');
    expect(d.pour.to).toMatchObject({ col: 5, row: 2, outside: true });
    expect(d.cells).toBe(9);
    expect(d.volume).toBe(8 * 2 + 3); // eight cells 2 deep, the centre 3 deep (unit cells)
    expect(d.maxDepth).toBe(3);
    expect(report.totals).toMatchObject({ depressions: 1, volume: 19, area: 9 });
  });

  it('two pits joined by a pass nest under one merged depression; flats hold no water', () => {
    const v = [
      9, 9, 9, 9, 9, 9, 9,
      9, 2, 9, 4, 9, 1, 9,
      9, 9, 9, 9, 9, 9, 9,
    ];
    // the two pits at (1,1) and (5,1)... joined through (3,1) at 4? no: (3,1) is a pit itself.
    const g = gridOf(7, 3, v);
    const { report } = pondsReport(g, {});
    // three separate one-cell pits spilling over the rim of 9 to the outside
    expect(report.depressions.map((d) => [d.pitValue, d.spillValue, d.into])).toEqual([[1, 9, 'outside'], [2, 9, 'outside'], [4, 9, 'outside']]);
    const v2 = [
      9, 9, 9, 9, 9, 9, 9,
      9, 2, 6, 4, 4, 1, 9,
      9, 9, 9, 9, 9, 9, 9,
    ];
    const r2 = pondsReport(gridOf(7, 3, v2), {}).report;
    // pit 1 spills at 4 into the pit at 2 (over the flat 4 4) — one chain; pit 2 spills at 6
    const byPit = new Map(r2.depressions.map((d) => [d.pitValue, d]));
    const top = r2.depressions.find((d) => d.parent === null)!;
    expect(top.spillValue).toBe(9);
    expect(top.children.length).toBe(2);
    expect(byPit.get(2)!.spillValue).toBe(6);
    expect(byPit.get(2)!.into).toBe(top.children.find((c) => c !== byPit.get(2)!.id));
    expect(top.volume).toBe(7 + 3 + 5 + 5 + 8); // 9 − (2, 6, 4, 4, 1)
  });
});
