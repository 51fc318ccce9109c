/**
 * Shape attributes of the depressions (src/hydro/shape.ts) against analytic ellipses.
 *
 * A crater z = q inside its crest and 2C − q beyond it, with q = (x/a)² + (y/b)² (rotated by θ) and a
 * crest at q = C(φ) = Q·(1.5 − 0.5·cos φ) (φ the angle around the ellipse), so its lowest point is at
 * φ = 0: its one depression spills there, at the reported spill level h just below Q, and its wet area
 * is the ellipse q < h with semi-axes A = a√h and B = b√h, clear of the crest except at the pass.
 * Then (outside sources):
 *  - the ellipse with the same second moments is that ellipse: major and minor axes 2A and 2B,
 *    orientation θ (a uniform ellipse has variances A²/4 and B²/4 along its axes — a standard result);
 *  - the perimeter converges to Ramanujan's approximation π[3(A + B) − √((3A + B)(A + 3B))]
 *    (Ramanujan 1914; its error is below 1e-5 relative for A/B = 2, far under the tolerances here);
 *  - the bounding-box ratio of an axis-aligned ellipse converges to π/4.
 */
import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { ponds } from '../../src/hydro/ponds.js';

function crater(step: number, a: number, b: number, Q: number, theta: number): Grid {
  const X = 1.6 * a * Math.sqrt(2 * Q), Y = X; // square, large enough for the rotated crest
  const w = 2 * Math.round(X / step) + 1, h = 2 * Math.round(Y / step) + 1;
  const v = new Float64Array(w * h);
  const ct = Math.cos(theta), st = Math.sin(theta);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const x = (c - (w - 1) / 2) * step, y = ((h - 1) / 2 - r) * step;
      const u = x * ct + y * st, t = -x * st + y * ct;
      const q = (u / a) ** 2 + (t / b) ** 2;
      const C = Q * (1.5 - 0.5 * Math.cos(Math.atan2(t / b, u / a)));
      v[r * w + c] = q < C ? q : 2 * C - q;
    }
  }
  return new Grid({ width: w, height: h, values: v, transform: [-(w / 2) * step, step, 0, (h / 2) * step, 0, -step], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
}

function ramanujan(A: number, B: number): number {
  return Math.PI * (3 * (A + B) - Math.sqrt((3 * A + B) * (A + 3 * B)));
}

function shapeOf(g: Grid) {
  const res = ponds(g, { connectivity: 8, euler: false });
  expect(res.hierarchy.count).toBe(1);
  return { s: res.shapes!, h: res.hierarchy.spillValue[1] };
}

describe('shape attributes of an elliptical crater', () => {
  const a = 40, b = 20, Q = 1;
  it('axes and orientation of the equivalent ellipse; the perimeter converges to Ramanujan\'s', () => {
    const errs: number[] = [], boxes: number[] = [];
    for (const step of [2, 1, 0.5]) {
      const { s, h } = shapeOf(crater(step, a, b, Q, 0));
      const A = a * Math.sqrt(h), B = b * Math.sqrt(h);
      expect(Math.abs(s.majorAxis[1] - 2 * A) / (2 * A)).toBeLessThan(0.02);
      expect(Math.abs(s.minorAxis[1] - 2 * B) / (2 * B)).toBeLessThan(0.03);
      expect(Math.abs(s.orientation[1])).toBeLessThan(1e-6);
      expect(Math.abs(s.boxRatio[1] - Math.PI / 4)).toBeLessThan(0.05);
      boxes.push(Math.abs(s.boxRatio[1] - Math.PI / 4));
      errs.push(Math.abs(s.perimeter[1] - ramanujan(A, B)) / ramanujan(A, B));
    }
    // measured: 9e-4, 1.2e-3, 4.9e-4 — smooth arcs converge at second order; the arc by the pass, where
    // the shoreline meets the crest, adds a part that shrinks with the cell but not smoothly
    for (const e of errs) expect(e).toBeLessThan(0.002);
    expect(errs[2]).toBeLessThan(errs[0]);
    expect(errs[2]).toBeLessThan(0.001);
    expect(boxes[2]).toBeLessThan(boxes[1]);
    expect(boxes[1]).toBeLessThan(boxes[0]);
  });

  it('a rotated crater: the orientation is the rotation', () => {
    for (const deg of [30, -60, 90]) {
      const { s } = shapeOf(crater(1, a, b, Q, (deg * Math.PI) / 180));
      expect(Math.abs(s.orientation[1] - deg)).toBeLessThan(1);
      expect(s.majorAxis[1] / s.minorAxis[1]).toBeGreaterThan(1.9);
    }
  });

  it('a circular crater: elongation 1 (axes equal), perimeter 2πR', () => {
    const { s, h } = shapeOf(crater(0.5, 20, 20, Q, 0));
    const R = 20 * Math.sqrt(h);
    expect(Math.abs(s.majorAxis[1] / s.minorAxis[1] - 1)).toBeLessThan(0.01);
    expect(Math.abs(s.perimeter[1] - 2 * Math.PI * R) / (2 * Math.PI * R)).toBeLessThan(0.002);
  });
});

describe('the perimeter on two threads', () => {
  it('is the same bits as on one (the worker takes half the rows; the halves are added the same way)', () => {
    const g = crater(1, 40, 20, 1, 0.3);
    // some roughness so that many depressions nest
    let s = 7;
    for (let i = 0; i < g.values.length; i++) { s = (Math.imul(s, 1103515245) + 12345) >>> 0; g.values[i] += (s / 2 ** 32) * 0.05; }
    const one = ponds(g, { connectivity: 8, euler: false, threads: 1 }).shapes!;
    const two = ponds(g, { connectivity: 8, euler: false, threads: 2, parallelMinCells: 0 }).shapes!;
    expect(one.perimeter.length).toBeGreaterThan(20);
    expect(Array.from(two.perimeter).every((v, i) => Object.is(v, one.perimeter[i]))).toBe(true);
  });
});

describe('shape attributes on a geographic grid', () => {
  it('in metres: the same crater laid out in degrees near 46° N gives the axes and perimeter in metres', () => {
    // metres per degree on WGS84 at 46° N (from the ellipsoid's radii of curvature: common geodesy formulas)
    const a0 = 6378137, f0 = 1 / 298.257223563, e2 = f0 * (2 - f0), phi = (46 * Math.PI) / 180;
    const w0 = Math.sqrt(1 - e2 * Math.sin(phi) ** 2);
    const mx = ((a0 / w0) * Math.cos(phi) * Math.PI) / 180, my = ((a0 * (1 - e2)) / w0 ** 3 * Math.PI) / 180;
    const step = 1; // metres
    const m = crater(step, 40, 20, 1, 0);
    // the same cells, with a geotransform in degrees: 1 m east–west and north–south at 46° N
    const w = m.width, h = m.height;
    const g = new Grid({ width: w, height: h, values: m.values, transform: [10, step / mx, 0, 46 + (h / 2) * (step / my), 0, -step / my], crs: { epsg: 4326, geographic: true, linearUnit: 'degree' } });
    const res = ponds(g, { connectivity: 8, euler: false });
    expect(res.hierarchy.count).toBe(1);
    const s = res.shapes!, hh = res.hierarchy.spillValue[1];
    const A = 40 * Math.sqrt(hh), B = 20 * Math.sqrt(hh);
    // within a few parts in a thousand: the crater spans about 100 m of latitude, where the scale changes by 2e-5
    expect(Math.abs(s.majorAxis[1] - 2 * A) / (2 * A)).toBeLessThan(0.01);
    expect(Math.abs(s.minorAxis[1] - 2 * B) / (2 * B)).toBeLessThan(0.01);
    expect(Math.abs(s.perimeter[1] - ramanujan(A, B)) / ramanujan(A, B)).toBeLessThan(0.003);
  });
});
