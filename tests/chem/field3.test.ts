import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { spawnSync } from 'node:child_process';
import { Grid3 } from '../../src/surface/grid3.js';
import { GridField3, newSample3, hermite4Weights } from '../../src/chem/field3.js';
import { eigenSymmetric3, refineStationary3 } from '../../src/chem/refine3.js';
import { minimumEnergyPath3 } from '../../src/chem/mep3.js';
import { PYTHON, runs } from '../prereq.js';
import { reference3, sampleGrid3, mbZ, gaussians, type Stationary3 } from './surfaces3.js';

/** A random tricubic polynomial Σ c_abc x^a y^b z^c (a, b, c ≤ 3) with its gradient and Hessian. */
function tricubic(coef: number[]) {
  const pw = (t: number, e: number, d: number): number => {
    // d-th derivative of t^e
    if (d > e) return 0;
    let k = 1;
    for (let q = 0; q < d; q++) k *= e - q;
    return k * t ** (e - d);
  };
  return (x: number, y: number, z: number, dx = 0, dy = 0, dz = 0): number => {
    let s = 0;
    for (let a = 0; a < 4; a++) for (let b = 0; b < 4; b++) for (let c = 0; c < 4; c++) {
      s += coef[a + 4 * b + 16 * c] * pw(x, a, dx) * pw(y, b, dy) * pw(z, c, dz);
    }
    return s;
  };
}

function gridOf(f: (x: number, y: number, z: number) => number, n: [number, number, number], origin: [number, number, number], spacing: [number, number, number]): Grid3 {
  const values = new Float64Array(n[0] * n[1] * n[2]);
  for (let k = 0; k < n[2]; k++) for (let j = 0; j < n[1]; j++) for (let i = 0; i < n[0]; i++) {
    values[i + n[0] * (j + n[1] * k)] = f(origin[0] + i * spacing[0], origin[1] + j * spacing[1], origin[2] + k * spacing[2]);
  }
  return new Grid3({ nx: n[0], ny: n[1], nz: n[2], values, origin, spacing });
}

describe('tricubic fit of a 3-D grid', () => {
  it('the six-point weights: the Hermite piece with fourth-order slopes reproduces cubics along one axis', () => {
    // Source (published property): the five-point central difference (f₋₂ − 8f₋₁ + 8f₁ − f₂)/12h
    // is exact for polynomials of degree ≤ 4 (Abramowitz & Stegun, Handbook of Mathematical
    // Functions, §25.3 — cited from memory), and a cubic Hermite piece is fixed by its end values
    // and slopes, so every cubic is reproduced with its first and second derivatives.
    const w = new Float64Array(6), dw = new Float64Array(6), d2w = new Float64Array(6);
    fc.assert(fc.property(
      fc.double({ min: 0, max: 1, noNaN: true }), fc.array(fc.double({ min: -5, max: 5, noNaN: true }), { minLength: 4, maxLength: 4 }),
      (t, [c0, c1, c2, c3]) => {
        hermite4Weights(t, w, dw, d2w);
        const p = (u: number) => c0 + c1 * u + c2 * u * u + c3 * u * u * u;
        let v = 0, d = 0, d2 = 0;
        for (let q = 0; q < 6; q++) { v += w[q] * p(q - 2); d += dw[q] * p(q - 2); d2 += d2w[q] * p(q - 2); }
        expect(v).toBeCloseTo(p(t), 9);
        expect(d).toBeCloseTo(c1 + 2 * c2 * t + 3 * c3 * t * t, 9);
        expect(d2).toBeCloseTo(2 * c2 + 6 * c3 * t, 9);
      },
    ));
  });

  it('reproduces tricubic polynomials exactly — value, gradient and Hessian — up to the closed edges', () => {
    // Source: the same published property per axis (tensor products of cubic-exact
    // interpolants are exact for x^a y^b z^c, a, b, c ≤ 3); the edge extrapolation is the cubic
    // through the four edge samples, exact for cubics (Lagrange).
    fc.assert(fc.property(
      fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 64, maxLength: 64 }),
      fc.tuple(fc.integer({ min: 4, max: 7 }), fc.integer({ min: 4, max: 7 }), fc.integer({ min: 4, max: 7 })),
      fc.tuple(fc.double({ min: 0.3, max: 1.5, noNaN: true }), fc.double({ min: 0.3, max: 1.5, noNaN: true }), fc.double({ min: 0.3, max: 1.5, noNaN: true })),
      fc.tuple(fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true })),
      (coef, n, sp, t) => {
        const f = tricubic(coef);
        const origin: [number, number, number] = [-0.7, 0.2, -0.4];
        const field = new GridField3(gridOf((x, y, z) => f(x, y, z), n, origin, sp));
        const p = [0, 1, 2].map((d) => origin[d] + t[d] * (n[d] - 1) * sp[d]);
        const s = newSample3();
        expect(field.evaluate(p[0], p[1], p[2], s)).toBe(true);
        const want = [
          f(p[0], p[1], p[2]), f(p[0], p[1], p[2], 1), f(p[0], p[1], p[2], 0, 1), f(p[0], p[1], p[2], 0, 0, 1),
          f(p[0], p[1], p[2], 2), f(p[0], p[1], p[2], 1, 1), f(p[0], p[1], p[2], 1, 0, 1),
          f(p[0], p[1], p[2], 0, 2), f(p[0], p[1], p[2], 0, 1, 1), f(p[0], p[1], p[2], 0, 0, 2),
        ];
        const scale = 1 + Math.max(...want.map(Math.abs));
        for (let q = 0; q < 10; q++) expect(Math.abs(s[q] - want[q])).toBeLessThan(1e-8 * scale);
      },
    ), { numRuns: 60 });
  });

  it('passes through the samples and its gradient is the derivative of its value', () => {
    // Source: interpolation and consistency are definitions (common practice): the value at a lattice
    // point is the sample; a central difference of the value approximates the returned gradient.
    fc.assert(fc.property(fc.integer({ min: 1, max: 2 ** 30 }), (seed) => {
      let r = seed;
      const rnd = () => ((r = (r * 1103515245 + 12345) % 2147483648) / 2147483648);
      const n: [number, number, number] = [6, 5, 7];
      const values = Float64Array.from({ length: 210 }, rnd);
      const g = new Grid3({ nx: n[0], ny: n[1], nz: n[2], values, spacing: [1, 0.5, 2] });
      const field = new GridField3(g, [true, false, false]);
      const s = newSample3(), a = newSample3(), b = newSample3();
      const i = Math.floor(rnd() * 6), j = Math.floor(rnd() * 5), k = Math.floor(rnd() * 7);
      expect(field.evaluate(i, j * 0.5, k * 2, s)).toBe(true);
      expect(s[0]).toBeCloseTo(values[g.index(i, j, k)], 12);
      const x = 0.1 + rnd() * 5.8, y = 0.05 + rnd() * 1.9, z = 0.1 + rnd() * 11.8, e = 1e-6;
      field.evaluate(x, y, z, s);
      const d = [[e, 0, 0], [0, e, 0], [0, 0, e]];
      for (let q = 0; q < 3; q++) {
        field.evaluate(x + d[q][0], y + d[q][1], z + d[q][2], a);
        field.evaluate(x - d[q][0], y - d[q][1], z - d[q][2], b);
        expect(Math.abs((a[0] - b[0]) / (2 * e) - s[1 + q])).toBeLessThan(1e-5 * (1 + Math.abs(s[1 + q])));
        // Hessian row q: the derivative of the gradient
        const hrow = q === 0 ? [s[4], s[5], s[6]] : q === 1 ? [s[5], s[7], s[8]] : [s[6], s[8], s[9]];
        for (let m = 0; m < 3; m++) expect(Math.abs((a[1 + m] - b[1 + m]) / (2 * e) - hrow[m])).toBeLessThan(1e-4 * (1 + Math.abs(hrow[m])));
      }
      // the wrapped axis: one period further is the same point
      field.evaluate(x + 6, y, z, a);
      expect(a[0]).toBeCloseTo(s[0], 10);
    }), { numRuns: 40 });
  });

  it('no fit where the stencil touches nodata or the point is outside a closed axis', () => {
    const values = new Float64Array(8 * 8 * 8).fill(1);
    const g = new Grid3({ nx: 8, ny: 8, nz: 8, values });
    values[g.index(4, 4, 4)] = NaN;
    const field = new GridField3(g);
    const s = newSample3();
    expect(field.evaluate(3.5, 3.5, 3.5, s)).toBe(false);
    expect(field.evaluate(0.5, 0.5, 0.5, s)).toBe(true);
    expect(field.evaluate(-0.1, 2, 2, s)).toBe(false);
    expect(field.evaluate(2, 2, 7.01, s)).toBe(false);
  });
});

describe('symmetric 3 × 3 eigenvalues (Jacobi)', () => {
  it('A·v = λ·v with orthonormal vectors, ascending values, trace and determinant kept', () => {
    // Source: the definition of an eigen-decomposition, and the invariants trace = Σλ, det = Πλ
    // (linear algebra, common practice).
    const entry = fc.double({ min: -100, max: 100, noNaN: true });
    fc.assert(fc.property(fc.tuple(entry, entry, entry, entry, entry, entry), ([a, b, c, d, e, f]) => {
      const { values: L, vectors: V } = eigenSymmetric3(a, b, c, d, e, f);
      const A = [[a, b, c], [b, d, e], [c, e, f]];
      const scale = 1 + Math.max(...[a, b, c, d, e, f].map(Math.abs));
      expect(L[0]).toBeLessThanOrEqual(L[1]);
      expect(L[1]).toBeLessThanOrEqual(L[2]);
      for (let k = 0; k < 3; k++) {
        for (let r = 0; r < 3; r++) {
          const av = A[r][0] * V[k][0] + A[r][1] * V[k][1] + A[r][2] * V[k][2];
          expect(Math.abs(av - L[k] * V[k][r])).toBeLessThan(1e-10 * scale);
        }
        for (let m = 0; m < 3; m++) {
          const dot = V[k][0] * V[m][0] + V[k][1] * V[m][1] + V[k][2] * V[m][2];
          expect(Math.abs(dot - (k === m ? 1 : 0))).toBeLessThan(1e-12);
        }
      }
      expect(Math.abs(L[0] + L[1] + L[2] - (a + d + f))).toBeLessThan(1e-10 * scale);
      const det = a * (d * f - e * e) - b * (b * f - e * c) + c * (b * e - d * c);
      expect(Math.abs(L[0] * L[1] * L[2] - det)).toBeLessThan(1e-9 * scale ** 3);
    }));
  });
});

const ref = reference3();

/** Refine every SciPy stationary point from the lattice point nearest to it; check against SciPy. */
function checkRefinement(grid: Grid3, points: Stationary3[], tolX: number, tolE: number) {
  const field = new GridField3(grid);
  const [ox, oy, oz] = grid.origin, h = grid.spacing[0];
  const out = [];
  for (const p of points) {
    if (p.kind !== 'minimum' && p.kind !== 'saddle') continue;
    const snap = (v: number, o: number) => o + Math.round((v - o) / h) * h;
    const r = refineStationary3(field, snap(p.x, ox), snap(p.y, oy), snap(p.z, oz), p.kind === 'minimum' ? 'minimum' : 'transition-state');
    expect(r.status, r.message ?? '').toBe('converged');
    expect(Math.abs(r.x - p.x)).toBeLessThan(tolX);
    expect(Math.abs(r.y - p.y)).toBeLessThan(tolX);
    expect(Math.abs(r.z - p.z)).toBeLessThan(tolX);
    expect(Math.abs(r.energy - p.energy)).toBeLessThan(tolE);
    // Hessian signature: the same number of negative eigenvalues as SciPy's analytic Hessian
    const neg = r.eigen.values.filter((l) => l < 0).length;
    expect(neg).toBe(p.hessianEigenvalues.filter((l) => l < 0).length);
    expect(neg).toBe(p.kind === 'minimum' ? 0 : 1);
    out.push({ p, r, field });
  }
  return out;
}

describe('stationary points of analytic 3-D surfaces, against SciPy', () => {
  // Source for these checks: SciPy's optimize.root on the analytic gradients, classified by
  // numpy.linalg.eigvalsh of the analytic Hessians (tests/reference/energy3d.py →
  // fixtures/chem/stationary-3d.json).
  const mb = ref.surfaces['mb-z'];
  const mbGrid = sampleGrid3(mbZ, mb.window, 0.025);

  it('Müller–Brown plus a coupled harmonic z (grid spacing 0.025): 3 minima, 2 transition states', () => {
    expect(mb.stationaryPoints.filter((p) => p.kind === 'minimum')).toHaveLength(3);
    expect(mb.stationaryPoints.filter((p) => p.kind === 'saddle')).toHaveLength(2);
    checkRefinement(mbGrid, mb.stationaryPoints, 2e-3, 0.05);
  });

  it('three Gaussian wells (grid spacing 0.1): 3 minima, 2 transition states', () => {
    const g = ref.surfaces.gaussians;
    expect(g.stationaryPoints.filter((p) => p.kind === 'minimum')).toHaveLength(3);
    expect(g.stationaryPoints.filter((p) => p.kind === 'saddle')).toHaveLength(2);
    checkRefinement(sampleGrid3(gaussians, g.window, 0.1), g.stationaryPoints, 5e-3, 5e-3);
  });

  it('the string method: the path through each Müller–Brown-z transition state peaks there and ends in two minima', () => {
    const minima = mb.stationaryPoints.filter((p) => p.kind === 'minimum');
    for (const { p, r, field } of checkRefinement(mbGrid, mb.stationaryPoints.filter((q) => q.kind === 'saddle'), 2e-3, 0.05)) {
      const [vx, vy, vz] = r.eigen.vectors[0];
      const path = minimumEnergyPath3(field, r.x, r.y, r.z, vx, vy, vz);
      expect(path.status, path.message ?? '').toBe('converged');
      // the highest point is the transition state (SciPy's energy; refined position)
      expect(Math.abs(path.maximum.energy - p.energy)).toBeLessThan(0.1);
      expect(field.distance(path.maximum.x, path.maximum.y, path.maximum.z, r.x, r.y, r.z)).toBeLessThan(2 * field.spacing);
      // both ends settle on SciPy minima
      const n = path.x.length;
      for (const k of [0, n - 1]) {
        const d = Math.min(...minima.map((m) => Math.hypot(path.x[k] - m.x, path.y[k] - m.y, path.z[k] - m.z)));
        expect(d).toBeLessThan(0.02);
      }
      // a minimum-energy path: the gradient has no component across the path (E, Ren &
      // Vanden-Eijnden's definition), checked on the analytic surface at the interior images
      let gMax = 0, across = 0;
      const e = 1e-6;
      for (let k = 1; k + 1 < n; k++) {
        const x = path.x[k], y = path.y[k], z = path.z[k];
        const g = [(mbZ(x + e, y, z) - mbZ(x - e, y, z)) / (2 * e), (mbZ(x, y + e, z) - mbZ(x, y - e, z)) / (2 * e), (mbZ(x, y, z + e) - mbZ(x, y, z - e)) / (2 * e)];
        const t = [path.x[k + 1] - path.x[k - 1], path.y[k + 1] - path.y[k - 1], path.z[k + 1] - path.z[k - 1]];
        const tn = Math.hypot(...t), gt = (g[0] * t[0] + g[1] * t[1] + g[2] * t[2]) / tn;
        gMax = Math.max(gMax, Math.hypot(...g));
        across = Math.max(across, Math.sqrt(Math.max(0, g[0] ** 2 + g[1] ** 2 + g[2] ** 2 - gt * gt)));
      }
      expect(across).toBeLessThan(0.05 * gMax);
    }
  });

  it('a periodic surface: a minimum on the seam and a saddle, analytic', () => {
    // Source (analytic): V = −cos x − cos y − cos z − ½ cos(x − z) has its minimum at the origin
    // (V = −3.5) and a first-order saddle at (0, π, 0) (V = −1.5; Hessian diag cos: y-curvature −1).
    const P = 2 * Math.PI, n = 24, h = P / n;
    const V = (x: number, y: number, z: number) => -Math.cos(x) - Math.cos(y) - Math.cos(z) - 0.5 * Math.cos(x - z);
    const g = gridOf(V, [n, n, n], [0, 0, 0], [h, h, h]);
    const field = new GridField3(g, [true, true, true]);
    const m = refineStationary3(field, h * (n - 1), h, -0.01, 'minimum');
    expect(m.status).toBe('converged');
    expect(field.distance(m.x, m.y, m.z, 0, 0, 0)).toBeLessThan(1e-3);
    expect(m.energy).toBeCloseTo(-3.5, 3);
    const t = refineStationary3(field, h, Math.PI + 0.5 * h, -h, 'transition-state');
    expect(t.status).toBe('converged');
    expect(field.distance(t.x, t.y, t.z, 0, Math.PI, 0)).toBeLessThan(1e-3);
    expect(t.energy).toBeCloseTo(-1.5, 3);
    expect(t.eigen.values[0]).toBeLessThan(0);
    expect(t.eigen.values[1]).toBeGreaterThan(0);
    // the path over the saddle leads from the minimum back to itself, across the seam
    const path = minimumEnergyPath3(field, t.x, t.y, t.z, ...t.eigen.vectors[0]);
    expect(path.status, path.message ?? '').toBe('converged');
    expect(Math.abs(path.maximum.energy - t.energy)).toBeLessThan(1e-3);
    const last = path.x.length - 1;
    expect(Math.abs(Math.abs(path.y[last] - path.y[0]) - P)).toBeLessThan(0.05);
  });

  it.runIf(runs('numpy') && spawnSync(PYTHON, ['-c', 'import scipy'], { encoding: 'utf8' }).status === 0)(
    'live: the reference script run now gives the committed stationary points (Müller–Brown-z)',
    () => {
      const r = spawnSync(PYTHON, [new URL('../reference/energy3d.py', import.meta.url).pathname, '--stdout', '--surface', 'mb-z'], { encoding: 'utf8', timeout: 120_000 });
      expect(r.status, r.stderr).toBe(0);
      const live = JSON.parse(r.stdout);
      for (const name of ['mb-z'] as const) {
        const a = live.surfaces[name].stationaryPoints as Stationary3[], b = ref.surfaces[name].stationaryPoints;
        expect(a.map((p) => p.kind)).toEqual(b.map((p) => p.kind));
        a.forEach((p, k) => {
          expect(Math.hypot(p.x - b[k].x, p.y - b[k].y, p.z - b[k].z)).toBeLessThan(1e-8);
          expect(Math.abs(p.energy - b[k].energy)).toBeLessThan(1e-8);
        });
      }
    },
    120_000,
  );
});
