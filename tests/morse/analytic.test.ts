import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { survey } from '../../src/morse/survey.js';
import { KIND_NAMES } from '../../src/morse/critical.js';

function gridOf(w: number, h: number, f: (c: number, r: number) => number, f32 = false): Grid {
  const values = f32 ? new Float32Array(w * h) : new Float64Array(w * h);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) values[r * w + c] = f(c, r);
  return new Grid({ width: w, height: h, values });
}

describe('analytic surfaces', () => {
  it('sin·sin on a torus: 2 pits, 4 passes, 2 peaks after simplification, χ = 0', () => {
    // Source: analytic — sin(x)sin(y) on [0,2π)² has minima at (π/2,3π/2),(3π/2,π/2), maxima at
    // (π/2,π/2),(3π/2,3π/2) and saddles at (0,0),(0,π),(π,0),(π,π); the torus has χ = 0.
    for (const conn of [4, 6, 8] as const) {
      const N = 32;
      const g = gridOf(N, N, (c, r) => Math.sin((2 * Math.PI * c) / N) * Math.sin((2 * Math.PI * r) / N));
      const s = survey(g, { connectivity: conn, boundary: 'periodic', minPersistence: 1e-9 });
      expect(s.simplices.characteristic).toBe(0);
      expect(s.euler.holds).toBe(true);
      expect(s.eulerKept).toEqual({ pits: 2, passes: 4, peaks: 2, holds: true });
      const kinds = Array.from(s.kept.kind, (k) => KIND_NAMES[k]).sort();
      expect(kinds).toEqual(['pass', 'pass', 'pass', 'pass', 'peak', 'peak', 'pit', 'pit']);
      // pits at grid cells (N/4, 3N/4) and (3N/4, N/4)
      const pits = Array.from(s.kept.vertex).filter((_, i) => s.kept.kind[i] === 1).map((v) => [v % N, Math.floor(v / N)]);
      expect(pits.sort()).toEqual([[8, 24], [24, 8]].sort());
    }
  });

  it('a single paraboloid has one pit, closed and open', () => {
    // Source: analytic — z = x² + y² has a single minimum at the origin.
    const g = gridOf(21, 17, (c, r) => (c - 10) ** 2 + (r - 8) ** 2 + 0.01 * c);
    const closed = survey(g, { boundary: 'closed' });
    expect(closed.euler).toMatchObject({ characteristic: 1, pits: 1, holds: true });
    const open = survey(g, { boundary: 'open' });
    expect(open.euler.characteristic).toBe(2);
    expect(open.euler.holds).toBe(true);
    const interiorPits = Array.from(open.critical.kind).filter((k) => k === 1).length;
    expect(interiorPits).toBe(1);
    expect(open.critical.outsidePit).toBe(true);
  });
});
