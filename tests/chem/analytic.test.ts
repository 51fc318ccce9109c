import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { barriers } from '../../src/chem/barriers.js';
import { GridField, MeshField, newSample } from '../../src/chem/field.js';
import { refineStationary, eigenSymmetric2 } from '../../src/chem/refine.js';
import { layoutDisconnectivity } from '../../src/chem/disconnectivity.js';

/** N×N samples over [0, 2π)² at x = (c + off)·2π/N (cell centres), periodic-ready. */
function torus(N: number, f: (x: number, y: number) => number, off = 0): Grid {
  const d = (2 * Math.PI) / N;
  const v = new Float64Array(N * N);
  for (let r = 0; r < N; r++) for (let c = 0; c < N; c++) v[r * N + c] = f((c + off) * d, (r + off) * d);
  return new Grid({ width: N, height: N, values: v, transform: [(off - 0.5) * d, d, 0, (off - 0.5) * d, 0, d] });
}

/** w×h grid with cell centres at x = x0 + c·h, y = y0 + r·h. */
function gridOf(w: number, ht: number, x0: number, y0: number, h: number, f: (x: number, y: number) => number): Grid {
  const v = new Float64Array(w * ht);
  for (let r = 0; r < ht; r++) for (let c = 0; c < w; c++) v[r * w + c] = f(x0 + c * h, y0 + r * h);
  return new Grid({ width: w, height: ht, values: v, transform: [x0 - h / 2, h, 0, y0 - h / 2, 0, h] });
}

const wrapAngle = (a: number) => a - 2 * Math.PI * Math.floor(a / (2 * Math.PI) + 1e-9);

describe('quadratic saddle z = a·x² − b·y²', () => {
  // Source: analytic — the Hessian of a·x² − b·y² is diag(2a, −2b) everywhere; the saddle is at the origin.
  const a = 1.7, b = 0.6, x0 = -0.013, y0 = 0.021;
  const f = (x: number, y: number) => a * (x - x0) ** 2 - b * (y - y0) ** 2;

  it('on a grid: eigenvalues 2a and −2b to 1e-6, position exact', () => {
    const g = gridOf(41, 41, -1, -1, 0.05, f);
    const r = barriers(g, { minPersistence: 0 });
    const interior = r.transitionStates.filter((t) => !t.onEdge);
    expect(interior).toHaveLength(1);
    const t = interior[0];
    expect(t.refined.status).toBe('converged');
    expect(t.refined.eigen.values[0]).toBeCloseTo(-2 * b, 6);
    expect(t.refined.eigen.values[1]).toBeCloseTo(2 * a, 6);
    expect(t.refined.x).toBeCloseTo(x0, 9);
    expect(t.refined.y).toBeCloseTo(y0, 9);
    // the unstable direction is the y axis
    expect(Math.abs(t.refined.eigen.vectors[0][1])).toBeCloseTo(1, 9);
    // the minima sit on the closed edge: flagged, and refinement says it could not stay on the samples
    expect(r.minima.length).toBeGreaterThan(0);
    for (const m of r.minima) {
      expect(m.onEdge).toBe(true);
      expect(m.refined.status).not.toBe('converged');
      expect(m.refined.message).toBeTruthy();
      expect(m.basis).toBe('sampled');
    }
  });

  it('on a rotated grid the Hessian is taken in map coordinates', () => {
    const th = 0.4, h = 0.05, N = 41;
    const [c, s] = [Math.cos(th), Math.sin(th)];
    const v = new Float64Array(N * N);
    // cell centre (col, row) → map: origin (−1, −1) rotated lattice
    const ox = -1, oy = -1;
    for (let r = 0; r < N; r++) for (let k = 0; k < N; k++) {
      const x = ox + k * h * c - r * h * s, y = oy + k * h * s + r * h * c;
      v[r * N + k] = f(x, y);
    }
    const t = [ox - 0.5 * h * c + 0.5 * h * s, h * c, -h * s, oy - 0.5 * h * s - 0.5 * h * c, h * s, h * c] as [number, number, number, number, number, number];
    const g = new Grid({ width: N, height: N, values: v, transform: t });
    const field = new GridField(g, false, false);
    const res = refineStationary(field, 0.05, -0.04, 'transition-state');
    expect(res.status).toBe('converged');
    expect(res.x).toBeCloseTo(x0, 9);
    expect(res.y).toBeCloseTo(y0, 9);
    expect(res.eigen.values[0]).toBeCloseTo(-2 * b, 6);
    expect(res.eigen.values[1]).toBeCloseTo(2 * a, 6);
  });

  it('on scattered samples the local fit reproduces the quadratic: eigenvalues to 1e-6', () => {
    let seed = 7;
    const rand = () => ((seed = (seed * 1103515245 + 12345) >>> 0) / 2 ** 32);
    const n = 1500;
    const x = new Float64Array(n), y = new Float64Array(n), z = new Float64Array(n);
    for (let i = 0; i < n; i++) { x[i] = 2 * rand() - 1; y[i] = 2 * rand() - 1; z[i] = f(x[i], y[i]); }
    for (const degree of [2, 3] as const) {
      const field = new MeshField(new Mesh(x.slice(), y.slice(), z.slice()), { degree });
      const res = refineStationary(field, 0.06, 0.05, 'transition-state');
      expect(res.status).toBe('converged');
      expect(res.eigen.values[0]).toBeCloseTo(-2 * b, 6);
      expect(res.eigen.values[1]).toBeCloseTo(2 * a, 6);
      expect(res.x).toBeCloseTo(x0, 8);
      expect(res.y).toBeCloseTo(y0, 8);
    }
  });

  it('2×2 symmetric eigen-decomposition in closed form', () => {
    // Source: analytic — [[2, 1], [1, 2]] has eigenvalues 1 and 3 with vectors (1, −1)/√2 and (1, 1)/√2.
    const e = eigenSymmetric2(2, 1, 2);
    expect(e.values[0]).toBeCloseTo(1, 14);
    expect(e.values[1]).toBeCloseTo(3, 14);
    expect(Math.abs(e.vectors[1][0] * Math.SQRT1_2 + e.vectors[1][1] * Math.SQRT1_2)).toBeCloseTo(1, 14);
    expect(Math.abs(e.vectors[0][0] * Math.SQRT1_2 - e.vectors[0][1] * Math.SQRT1_2)).toBeCloseTo(1, 14);
  });
});

describe('periodic analytic surfaces', () => {
  it('sin x · sin y on a torus: 2 minima, 4 transition states at their exact positions, χ = 0', () => {
    // Source: analytic — minima (π/2, 3π/2), (3π/2, π/2) at −1; saddles (0,0), (0,π), (π,0), (π,π)
    // at 0 with Hessian eigenvalues ±1, each joining the two minima; the torus has χ = 0.
    const g = torus(32, (x, y) => Math.sin(x) * Math.sin(y));
    const r = barriers(g, { boundary: 'periodic', minPersistence: 1e-6 });
    expect(r.survey.simplices.characteristic).toBe(0);
    expect(r.survey.euler.holds).toBe(true);
    expect(r.minima).toHaveLength(2);
    expect(r.transitionStates).toHaveLength(4);
    const key = (x: number, y: number) => `${Math.round(wrapAngle(x) / (Math.PI / 2))},${Math.round(wrapAngle(y) / (Math.PI / 2))}`;
    expect(r.minima.map((m) => key(m.refined.x, m.refined.y)).sort()).toEqual(['1,3', '3,1']);
    expect(r.transitionStates.map((t) => key(t.refined.x, t.refined.y)).sort()).toEqual(['0,0', '0,2', '2,0', '2,2']);
    for (const m of r.minima) {
      expect(m.refined.status).toBe('converged');
      expect(Math.abs(wrapAngle(m.refined.x) - Math.round(wrapAngle(m.refined.x) / (Math.PI / 2)) * (Math.PI / 2))).toBeLessThan(1e-9);
      expect(m.refined.energy).toBeCloseTo(-1, 9);
      expect(m.refined.eigen.values[0]).toBeCloseTo(1, 1); // exact 1; the bicubic fit is O(h²) here
    }
    for (const t of r.transitionStates) {
      expect(t.refined.status).toBe('converged');
      expect(t.refined.energy).toBeCloseTo(0, 9);
      expect(t.refined.eigen.values[0]).toBeCloseTo(-1, 1);
      expect(t.refined.eigen.values[1]).toBeCloseTo(1, 1);
      expect([...t.connects].sort()).toEqual(['M1', 'M2']);
      expect(t.path?.agrees).toBe(true);
      expect([...t.path!.ends].sort()).toEqual(['M1', 'M2']);
    }
    // barriers: 1 both ways through every saddle
    expect(r.barriers).toHaveLength(4);
    for (const row of r.barriers) { expect(row.forward).toBeCloseTo(1, 9); expect(row.backward).toBeCloseTo(1, 9); }
    // symmetric basins: equal populations (source: the symmetry (x, y) → (y, x) swaps the minima).
    // Cells on the watersheds are split by the tie-break of the order, so at an amplitude of 8 kT
    // their weight, and the imbalance, is below 1e-3.
    const g8 = torus(32, (x, y) => 8 * Math.sin(x) * Math.sin(y));
    const rk = barriers(g8, { boundary: 'periodic', units: 'kT' });
    expect(rk.minima).toHaveLength(2);
    expect(Math.abs(rk.minima[0].basin.population! - 0.5)).toBeLessThan(1e-3);
  });

  it('sampled off the lattice of critical points, the refined positions are within 1e-3 rad', () => {
    const g = torus(32, (x, y) => Math.sin(x) * Math.sin(y), 0.37);
    const r = barriers(g, { boundary: 'periodic', minPersistence: 1e-6 });
    expect(r.minima).toHaveLength(2);
    expect(r.transitionStates).toHaveLength(4);
    for (const p of [...r.minima, ...r.transitionStates]) {
      const q = Math.PI / 2;
      expect(Math.abs(wrapAngle(p.refined.x + 0.1) - 0.1 - Math.round((wrapAngle(p.refined.x + 0.1) - 0.1) / q) * q)).toBeLessThan(1e-3);
      expect(Math.abs(wrapAngle(p.refined.y + 0.1) - 0.1 - Math.round((wrapAngle(p.refined.y + 0.1) - 0.1) / q) * q)).toBeLessThan(1e-3);
    }
  });

  it('cos x + cos y on a torus: one minimum joined to itself through two transition states', () => {
    // Source: analytic — minimum (π, π) at −2, saddles (0, π), (π, 0) at 0 (eigenvalues ±1), maximum
    // (0, 0); pits − passes + peaks = 1 − 2 + 1 = 0 = χ(torus). Each saddle leads from the minimum
    // to its own periodic image: barrier 2 both ways.
    const g = torus(30, (x, y) => Math.cos(x) + Math.cos(y));
    const r = barriers(g, { boundary: 'periodic', minPersistence: 1e-6 });
    expect(r.survey.euler).toMatchObject({ characteristic: 0, pits: 1, passes: 2, peaks: 1, holds: true });
    expect(r.minima).toHaveLength(1);
    expect(r.minima[0].refined.x).toBeCloseTo(Math.PI, 9);
    expect(r.minima[0].refined.y).toBeCloseTo(Math.PI, 9);
    expect(r.transitionStates).toHaveLength(2);
    const pos = r.transitionStates.map((t) => [Math.round(wrapAngle(t.refined.x + 0.1) - 0.1), Math.round(t.refined.y * 1e6) / 1e6]);
    expect(pos.map(([x, y]) => `${x},${Math.round(y / Math.PI)}`).sort()).toEqual(['0,1', '3,0']);
    for (const t of r.transitionStates) {
      expect(t.connects).toEqual(['M1', 'M1']);
      expect(t.inTree).toBe(false); // no merge of basins: the hierarchy is the single minimum
      expect(t.refined.eigen.values[0]).toBeCloseTo(-1, 1);
      expect(t.path?.agrees).toBe(true);
      // the path goes once around the torus: length about 2π along the minimum-energy route
      expect(t.path!.length).toBeGreaterThan(2 * Math.PI * 0.99);
      expect(t.path!.length).toBeLessThan(2 * Math.PI * 1.01);
    }
    expect(r.barriers.map((b) => [b.from, b.to, Number(b.forward!.toFixed(9)), Number(b.backward!.toFixed(9))])).toEqual([['M1', 'M1', 2, 2], ['M1', 'M1', 2, 2]]);
    expect(r.hierarchy).toHaveLength(1);
  });
});

describe('monkey saddle', () => {
  it('three lower pieces: one transition state of multiplicity 2 joining three basins pairwise', () => {
    // Source: definition — the lower link {E, NW, SW} of the centre cell has three pieces in the
    // 8-neighbour ring, each draining to its own pit.
    const vals = [9, 9, 9, 9, 9, 9, -1, 9, 9, 9, 9, 9, 0, -3, 9, 9, -2, 9, 9, 9, 9, 9, 9, 9, 9].map((v, i) => v + 1e-3 * i);
    const g = new Grid({ width: 5, height: 5, values: Float64Array.from(vals) });
    const r = barriers(g, { minPersistence: 0.5 });
    expect(r.minima).toHaveLength(3);
    const centre = r.transitionStates.find((t) => t.vertex === 12)!;
    expect(centre.multiplicity).toBe(2);
    expect(centre.connectsPairs.map((p) => p.join('-')).sort()).toEqual(['M1-M2', 'M1-M3', 'M2-M3']);
    expect(r.barriers.filter((b) => b.via === centre.id)).toHaveLength(3);
  });
});

describe('basin thermodynamics', () => {
  it('a harmonic well: F = −kT ln(2π kT / √(ab)) (Gaussian integral)', () => {
    // Source: analytic — ∫∫ exp(−(a x² + b y²)/2) dx dy = 2π/√(ab) (energies in kT).
    const a = 1, b = 4;
    const g = gridOf(241, 241, -6, -6, 0.05, (x, y) => 0.5 * (a * x * x + b * y * y) + 0.001 * x);
    const r = barriers(g, { units: 'kT' });
    expect(r.minima).toHaveLength(1);
    // the small tilt shifts F by −(0.001)²/(2a) ≈ −5e-7: negligible at 1e-5
    expect(r.minima[0].basin.freeEnergy!).toBeCloseTo(-Math.log((2 * Math.PI) / Math.sqrt(a * b)), 5);
    expect(r.minima[0].basin.population).toBe(1);
  });

  it('two separated harmonic wells: population ratio (k₂/k₁)·exp(−(E₁−E₂)/kT)', () => {
    // Source: analytic — each basin integral is 2π/k·exp(−E) when the wells are far apart (tails below 1e-14).
    const k1 = 4, k2 = 9, E1 = 0, E2 = 0.7;
    const g = gridOf(321, 161, -8, -4, 0.05, (x, y) =>
      Math.min(0.5 * k1 * ((x + 4) ** 2 + y * y) + E1, 0.5 * k2 * ((x - 4) ** 2 + y * y) + E2));
    const r = barriers(g, { units: 'kT', temperature: 350 });
    expect(r.minima).toHaveLength(2);
    const [m1, m2] = r.minima;
    expect(m1.refined.x).toBeCloseTo(-4, 6);
    expect(m2.refined.x).toBeCloseTo(4, 6);
    const ratio = (k2 / k1) * Math.exp(E2 - E1);
    expect(m1.basin.population! / m2.basin.population!).toBeCloseTo(ratio, 6);
    expect(m1.basin.population! + m2.basin.population!).toBeCloseTo(1, 12);
    // the transition state lies on the ridge between them (piecewise surface: a kink, so the
    // fitted Hessian there need not be smooth; it is found and joins the two wells)
    expect(r.transitionStates.filter((t) => !t.onEdge)[0]?.connects).toEqual(['M1', 'M2']);
  });
});

describe('disconnectivity layout', () => {
  it('leaves left to right, deeper branch first; joins between their branches', () => {
    // hand-built hierarchy: ((A −3, B −1) at 0, C −2) at 2
    const L = layoutDisconnectivity([
      { id: 0, kind: 'minimum', ref: 'B', energy: -1, parent: 3, children: [] },
      { id: 1, kind: 'minimum', ref: 'A', energy: -3, parent: 3, children: [] },
      { id: 2, kind: 'minimum', ref: 'C', energy: -2, parent: 4, children: [] },
      { id: 3, kind: 'transition-state', ref: 'T1', energy: 0, parent: 4, children: [0, 1] },
      { id: 4, kind: 'transition-state', ref: 'T2', energy: 2, parent: null, children: [3, 2] },
    ]);
    expect(L.leafOrder.map((k) => L.nodes[k].ref)).toEqual(['A', 'B', 'C']);
    expect(L.nodes[3].x).toBe(0.5);
    expect(L.nodes[4].x).toBe(1.25);
    expect(L.roots).toEqual([4]);
  });
});

describe('fields', () => {
  it('the bicubic fit passes through the samples and wraps on a periodic axis', () => {
    const g = torus(24, (x, y) => Math.cos(x) * Math.sin(2 * y) + 0.3 * Math.sin(x));
    const f = new GridField(g, true, true);
    const s = newSample(), s2 = newSample();
    const d = (2 * Math.PI) / 24;
    expect(f.evaluate(5 * d, 7 * d, s)).toBe(true);
    expect(s[0]).toBeCloseTo(g.values[7 * 24 + 5], 12);
    // one period away is the same point (inside a cell: second derivatives jump across cell lines)
    expect(f.evaluate(5.3 * d, 7.6 * d, s)).toBe(true);
    expect(f.evaluate(5.3 * d + 2 * Math.PI, 7.6 * d - 2 * Math.PI, s2)).toBe(true);
    for (let k = 0; k < 6; k++) expect(s2[k]).toBeCloseTo(s[k], 9);
    // between the last and the first column (across the seam) the fit is defined
    expect(f.evaluate(23.5 * d, 3 * d, s)).toBe(true);
  });

  it('no fit where the stencil touches nodata', () => {
    const g = gridOf(10, 10, 0, 0, 1, (x, y) => x * x + y * y);
    g.values[5 * 10 + 5] = NaN;
    const f = new GridField(g, false, false);
    expect(f.evaluate(5.2, 5.3, newSample())).toBe(false);
    expect(f.evaluate(1.5, 1.5, newSample())).toBe(true);
  });
});
