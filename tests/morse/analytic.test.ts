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

describe('more analytic surfaces', () => {
  it('a monkey saddle ρ³·cos(3θ + π/3) is one pass of multiplicity 2 (connectivity 6)', () => {
    // Source: analytic — Re((x+iy)³) rotated by 20°: three lower sectors around 45°, 180°, 270°,
    // which the Freudenthal ring (0°, 45°, 90°, 180°, 225°, 270°) samples alternately lower/upper.
    const g = gridOf(21, 21, (c, r) => {
      const x = (c - 10) / 10, y = (r - 10) / 10;
      return Math.hypot(x, y) ** 3 * Math.cos(3 * Math.atan2(y, x) + Math.PI / 3);
    });
    const s = survey(g, { boundary: 'closed', connectivity: 6 });
    const centre = 10 * 21 + 10;
    const k = Array.from(s.critical.vertex).indexOf(centre);
    expect(k).toBeGreaterThanOrEqual(0);
    expect(KIND_NAMES[s.critical.kind[k]]).toBe('pass');
    expect(s.critical.multiplicity[k]).toBe(2);
    expect(s.euler.holds).toBe(true);
  });

  it('three lower cells separated by higher ones make a monkey saddle in connectivity 8', () => {
    // Source: definition — the lower link {E, NW, SW} has three pieces in the 8-neighbour ring.
    const vals = [1, 1, 1, 1, 1,  1, -1, 1, 1, 1,  1, 1, 0, -1, 1,  1, -1, 1, 1, 1,  1, 1, 1, 1, 1];
    const g = new Grid({ width: 5, height: 5, values: Float64Array.from(vals) });
    const s = survey(g, { boundary: 'closed' });
    const k = Array.from(s.critical.vertex).indexOf(12);
    expect(KIND_NAMES[s.critical.kind[k]]).toBe('pass');
    expect(s.critical.multiplicity[k]).toBe(2);
    expect(s.euler.holds).toBe(true);
  });

  it('a sum of Gaussians: the wells found and ranked by persistence', () => {
    // Source: analytic — three separated Gaussian wells of depths 5, 3, 1 on a flat plane: three
    // minima at their centres; the two shallower ones die at passes near height 0, persistence ≈ depth.
    const wells = [[15, 15, 5], [45, 20, 3], [30, 45, 1]];
    const g = gridOf(60, 60, (c, r) => -wells.reduce((s, [wc, wr, d]) => s + d * Math.exp(-((c - wc) ** 2 + (r - wr) ** 2) / 30), 0) + 1e-6 * (c + 60 * r));
    const s = survey(g, { boundary: 'closed', minPersistence: 0.05 });
    const pits = Array.from(s.kept.vertex).filter((_, i) => s.kept.kind[i] === 1).map((v) => [v % 60, Math.floor(v / 60)]);
    expect(pits.sort()).toEqual([[15, 15], [30, 45], [45, 20]].sort());
    const p0 = [];
    for (let k = 0; k < s.pairs.dim.length; k++) if (s.pairs.dim[k] === 0 && s.pairs.persistence[k] > 0.05) p0.push(s.pairs.persistence[k]);
    p0.sort((a, b) => b - a);
    expect(p0).toHaveLength(2);
    expect(p0[0]).toBeCloseTo(3, 1);
    expect(p0[1]).toBeCloseTo(1, 1);
  });

  it('join tree: leaves are the pits, the root is the outside vertex on an open boundary', () => {
    // Source: definition of the join tree (components of sublevel sets) on two analytic bowls.
    const g = gridOf(30, 15, (c, r) => Math.min((c - 7) ** 2 + (r - 7) ** 2, (c - 22) ** 2 + (r - 7) ** 2 + 3) + 0.001 * c);
    const s = survey(g, { boundary: 'open' });
    const t = s.join;
    expect(t.hasVirtual).toBe(true);
    expect(t.vertex[0]).toBe(-1);
    const roots = Array.from(t.parent).filter((p) => p === -1);
    expect(roots).toHaveLength(1);
    const leaves = Array.from(t.vertex).filter((v, k) => v >= 0 && t.childCount[k] === 0);
    expect(leaves.sort((a, b) => a - b)).toEqual([7 * 30 + 7, 7 * 30 + 22]);
  });
});

describe('counts without lists', () => {
  it('countCriticalPoints gives the counts of findCriticalPoints', async () => {
    const { countCriticalPoints, findCriticalPoints } = await import('../../src/morse/critical.js');
    const { buildComplex } = await import('../../src/surface/complex.js');
    // Source: same definition, two code paths — rounded sin·sin (ties) with nodata cells, several modes.
    const g = gridOf(23, 17, (c, r) => (c % 7 === 3 && r % 5 === 2 ? NaN : Math.round(4 * Math.sin(c / 2) * Math.sin(r / 3))));
    for (const connectivity of [4, 6, 8] as const) for (const boundary of ['open', 'closed', 'periodic'] as const) {
      const cx = buildComplex(g, { connectivity, boundary });
      const { pits, passes, peaks, outsidePit } = findCriticalPoints(cx);
      expect(countCriticalPoints(cx)).toEqual({ pits, passes, peaks, outsidePit });
    }
  });
});
