/**
 * Depression outlines: the polygons follow cell edges, so their area (shoelace, in map units)
 * equals the wet cells × cell area exactly, on north-up, south-up and rotated grids; exterior
 * rings are counter-clockwise and holes clockwise (RFC 7946 §3.1.6).
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { pondsReport } from '../../src/report/ponds.js';
import { depressionOutlines, ringArea } from '../../src/hydro/vectors.js';
import { Grid, type GeoTransform } from '../../src/surface/grid.js';
import { randomGrid, fillReference, gridOf } from './helpers.js';

function polygonArea(polys: [number, number][][][]): number {
  let a = 0;
  for (const p of polys) {
    p.forEach((ring, k) => {
      const s = ringArea(ring);
      if (k === 0) expect(s).toBeGreaterThan(0); else expect(s).toBeLessThan(0);
      expect(ring[0]).toEqual(ring[ring.length - 1]);
      a += s;
    });
  }
  return a;
}

const transforms: GeoTransform[] = [
  [500000, 5, 0, 5800000, 0, -5],
  [500000, 5, 0, 5800000, 0, 5],
  [100, 3, 1, 200, 0.5, -2],
  [0, 1, 0, 0, 0, 1],
];

describe('depression outlines', () => {
  it('polygon area = wet cells × cell area, every depression (property test)', () => {
    fc.assert(fc.property(fc.integer(), fc.integer({ min: 3, max: 14 }), fc.integer({ min: 3, max: 14 }), fc.constantFrom(...transforms), fc.constantFrom<4 | 6 | 8>(4, 6, 8),
      (seed, w, h, t, conn) => {
        const g0 = randomGrid(seed, w, h, 4, 0.1);
        const g = new Grid({ width: w, height: h, values: g0.values, transform: t, crs: null });
        let lo = Infinity, hi = -Infinity;
        for (const z of g.values) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
        fc.pre(hi > lo);
        const { result, report } = pondsReport(g, { connectivity: conn, euler: false });
        const outlines = depressionOutlines(g, result.rasters.labels, result.hierarchy);
        const cellArea = Math.abs(t[1] * t[5] - t[2] * t[4]);
        for (const o of outlines) {
          const d = report.depressions.at(o.id - 1);
          expect(polygonArea(o.polygons)).toBeCloseTo(d.cells * cellArea, 6);
          expect(d.area).toBeCloseTo(d.cells * cellArea, 9);
        }
      }), { numRuns: 200 });
  });

  it('bowls: the merged depression is one polygon holding both nested ones, in map coordinates', () => {
    const c = fillReference().cases.find((x) => x.name === 'bowls-c8')!;
    const t: GeoTransform = [300000, 2, 0, 6000000, 0, -2];
    const g0 = gridOf(c.width, c.height, c.values);
    const g = new Grid({ width: c.width, height: c.height, values: g0.values, transform: t, crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
    const { result, report } = pondsReport(g, {});
    const top = report.depressions.filter((d) => d.parent === null);
    expect(top).toHaveLength(1);
    const outlines = depressionOutlines(g, result.rasters.labels, result.hierarchy);
    const o = outlines[top[0].id - 1];
    expect(o.polygons).toHaveLength(1);
    const xs = o.polygons[0][0].map((p) => p[0]), ys = o.polygons[0][0].map((p) => p[1]);
    // corners of cells: x = 300000 + 2·col, y = 6000000 − 2·row
    for (const x of xs) expect(Number.isInteger((x - 300000) / 2)).toBe(true);
    for (const y of ys) expect(Number.isInteger((6000000 - y) / 2)).toBe(true);
    expect(Math.min(...xs)).toBeGreaterThanOrEqual(300000);
    expect(Math.max(...ys)).toBeLessThanOrEqual(6000000);
    expect(polygonArea(o.polygons)).toBe(top[0].cells * 4);
  });

  it('a ring-shaped depression has a hole', () => {
    // a moat of 0 around an island of 5 inside a rim of 9, with one notch of 6
    const v: number[] = [];
    for (let r = 0; r < 9; r++) for (let c = 0; c < 9; c++) {
      const edge = r === 0 || c === 0 || r === 8 || c === 8;
      const island = r >= 3 && r <= 5 && c >= 3 && c <= 5;
      v.push(edge ? (r === 4 && c === 8 ? 6 : 9) : island ? 8 : 0);
    }
    const g = gridOf(9, 9, v);
    const { result, report } = pondsReport(g, {});
    const d = report.depressions.find((x) => x.parent === null)!;
    expect(d.spillValue).toBe(6);
    const [o] = depressionOutlines(g, result.rasters.labels, result.hierarchy).filter((x) => x.id === d.id);
    expect(o.polygons).toHaveLength(1);
    expect(o.polygons[0]).toHaveLength(2);
    expect(polygonArea(o.polygons)).toBe(49 - 9);
  });

  it('within a tracing budget: top-level and leaf depressions always, nested merged ones left out first', () => {
    // pits 1, 2, 3 in a row; 1 and 2 meet at 5 (a nested merged depression), then 3 joins at 7
    const v = [
      9, 9, 9, 9, 9, 9, 9,
      9, 1, 5, 2, 7, 3, 9,
      9, 9, 9, 9, 9, 9, 9,
    ];
    const g = gridOf(7, 3, v);
    const { result, report } = pondsReport(g, {});
    const nested = report.depressions.filter((d) => d.parent !== null && d.children.length > 0);
    expect(nested).toHaveLength(1);
    const all = depressionOutlines(g, result.rasters.labels, result.hierarchy);
    expect(all.every((o) => !o.omitted && o.polygons.length === 1)).toBe(true);
    const few = depressionOutlines(g, result.rasters.labels, result.hierarchy, { budget: 0 });
    for (const o of few) {
      const d = report.depressions.at(o.id - 1);
      if (d.parent === null || d.children.length === 0) { expect(o.omitted).toBeFalsy(); expect(o.polygons).toHaveLength(1); }
      else { expect(o.omitted).toBe(true); expect(o.polygons).toEqual([]); }
    }
  });
});
