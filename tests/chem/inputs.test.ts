import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { barriers } from '../../src/chem/barriers.js';
import { preparePeriodic, applyCap } from '../../src/chem/prepare.js';
import { InputError } from '../../src/errors.js';

/** Torsion-like grid in degrees: columns at x0 + c·step, rows at y0 + r·step. */
function degrees(w: number, h: number, x0: number, y0: number, step: number, f: (x: number, y: number) => number): Grid {
  const v = new Float64Array(w * h);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) v[r * w + c] = f(x0 + c * step, y0 + r * step);
  return new Grid({ width: w, height: h, values: v, transform: [x0 - step / 2, step, 0, y0 - step / 2, 0, step] });
}
const rad = Math.PI / 180;
const torsion = (x: number, y: number) => 3 * Math.cos(3 * x * rad) + 2 * Math.cos(y * rad) + Math.sin((x + 2 * y) * rad);

describe('periodic axes must close', () => {
  it('accepts a 360° span (72 samples 5° apart) and records the period', () => {
    const g = degrees(72, 72, -180, -180, 5, torsion);
    const p = preparePeriodic(g, 'periodic');
    expect(p.period).toEqual([360, 360]);
    expect(p.surface).toBe(g);
    const r = barriers(g, { boundary: 'periodic', units: 'kJ/mol' });
    expect(r.period).toEqual([360, 360]);
    expect(r.survey.simplices.characteristic).toBe(0);
  });

  it('accepts 2π in radians', () => {
    const N = 40, d = (2 * Math.PI) / N;
    const g = degrees(N, N, 0, 0, d, (x, y) => Math.cos(3 * x) + Math.sin(y));
    expect(preparePeriodic(g, 'periodic').period).toEqual([2 * Math.PI, 2 * Math.PI]);
  });

  it('drops a repeated end (both −180° and 180° listed) and says so', () => {
    const g = degrees(73, 72, -180, -180, 5, torsion); // x from −180 to 180 inclusive
    const p = preparePeriodic(g, 'periodic-x');
    expect(p.surface.kind).toBe('grid');
    expect((p.surface as Grid).width).toBe(72);
    expect(p.notes.join(' ')).toMatch(/last column, which repeats the first, was dropped/);
  });

  it('refuses a periodic axis whose span is not one period, in one line with the fix', () => {
    const g = degrees(70, 72, -180, -180, 5, torsion); // 350°
    expect(() => preparePeriodic(g, 'periodic')).toThrow(InputError);
    try { preparePeriodic(g, 'periodic'); } catch (e) {
      const msg = (e as Error).message;
      expect(msg).not.toMatch(/\n/);
      expect(msg).toMatch(/70 samples 5 apart span 350, not one period \(360° or 2π\)/);
      expect(msg).toMatch(/--boundary closed/);
    }
    // 73 columns whose ends differ: not a repeated end, so refused too
    const h = degrees(73, 72, -180, -180, 5, (x, y) => torsion(x, y) + 0.01 * x);
    expect(() => preparePeriodic(h, 'periodic-x')).toThrow(/does not close/);
    // an explicit period is honoured
    expect(preparePeriodic(g, 'periodic', [350, 360]).period).toEqual([350, 360]);
  });

  it('suggests a periodic boundary when a closed axis spans a full turn', () => {
    const g = degrees(72, 30, -180, 0, 5, torsion);
    const p = preparePeriodic(g, 'closed');
    expect(p.notes).toHaveLength(1);
    expect(p.notes[0]).toMatch(/x \(columns\) axis spans a full 360°.*--boundary periodic-x/);
    const r = barriers(g, {});
    expect(r.notes.some((n) => /spans a full 360°/.test(n))).toBe(true);
  });
});

describe('bad input', () => {
  it('no minimum left after simplification', () => {
    // a bowl on an open boundary: its only pit spills off the map at persistence ≈ 1
    const g = degrees(21, 21, -1, -1, 0.1, (x, y) => x * x + y * y);
    expect(() => barriers(g, { boundary: 'open', minPersistence: 5 })).toThrow(/no minimum is left after simplification/);
    // closed boundary keeps the global minimum whatever the threshold
    expect(barriers(g, { minPersistence: 5 }).minima).toHaveLength(1);
  });

  it('temperature ≤ 0 and a negative persistence are refused', () => {
    const g = degrees(10, 10, 0, 0, 1, (x, y) => x * x + y * y);
    expect(() => barriers(g, { temperature: 0 })).toThrow(InputError);
    expect(() => barriers(g, { temperature: -1 })).toThrow(/above 0/);
    expect(() => barriers(g, { minPersistence: -1 })).toThrow(InputError);
  });

  it('scattered samples on one line, or repeated, are refused', () => {
    const x = Float64Array.from([0, 1, 2, 3]), y = Float64Array.from([0, 1, 2, 3]);
    expect(() => new Mesh(x, y, Float64Array.from([1, 2, 3, 4]))).toThrow(/on one line/);
    const x2 = Float64Array.from([0, 1, 0, 1]), y2 = Float64Array.from([0, 0, 1, 0]);
    expect(() => new Mesh(x2, y2, Float64Array.from([1, 2, 3, 4]))).toThrow(/share the location/);
  });

  it('scattered samples cannot wrap', () => {
    const n = 50, x = new Float64Array(n), y = new Float64Array(n), v = new Float64Array(n);
    for (let i = 0; i < n; i++) { x[i] = Math.cos(i * 2.4) * i; y[i] = Math.sin(i * 2.4) * i; v[i] = x[i] * x[i] + y[i] * y[i]; }
    expect(() => barriers(new Mesh(x, y, v), { boundary: 'periodic' })).toThrow(/needs a regular grid/);
  });
});

describe('energy cap', () => {
  it('samples above the cap are unsampled: the fit stops there, the count is reported', () => {
    const g = degrees(30, 30, -1.5, -1.5, 0.1, (x, y) => (x * x - 1) ** 2 + 3 * y * y);
    const c = applyCap(g, 3);
    expect(c.capped).toBeGreaterThan(0);
    expect((c.surface as Grid).validCount()).toBe(900 - c.capped);
    const r = barriers(g, { cap: 3, minPersistence: 0.1 });
    expect(r.notes.some((n) => /above the cap 3 treated as unsampled/.test(n))).toBe(true);
    // Source: analytic — (x² − 1)² + 3y² has minima at (±1, 0) and a saddle at the origin, all well
    // below the cap; at spacing 0.1 the bicubic fit's gradient carries an O(h²) error (≈ 4e-3 here)
    const xs = r.minima.map((m) => m.refined.x).sort((a, b) => a - b);
    expect(xs).toHaveLength(2);
    expect(Math.abs(xs[0] + 1)).toBeLessThan(1e-2);
    expect(Math.abs(xs[1] - 1)).toBeLessThan(1e-2);
    expect(r.transitionStates.filter((t) => !t.onEdge)).toHaveLength(1);
    expect(() => barriers(g, { cap: -10 })).toThrow(/every sample is above the cap/);
  });
});
