/**
 * The 3-D survey on analytic surfaces whose critical points are known from outside sill:
 * - a separable function a(x) + b(y) + c(z) of periodic factors on the 3-torus: its critical
 *   points are the products of the factors' (a point is critical when each coordinate is critical
 *   for its factor, and the indices add), so the counts by index follow from the product formula
 *   (Künneth: Σ_k c_k t^k = Π (m + M·t) over the factors, m minima and M maxima each);
 * - three Gaussian wells in a harmonic bowl on a closed box: the stationary points found by
 *   SciPy's root finder (fixtures/reference/gaussians3.json, tests/reference/gaussians3.py), their
 *   Morse indices from the Hessian's eigenvalues, and the dimension-0 pairs by the elder rule.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { Grid3 } from '../../src/surface/grid3.js';
import { survey3, MINIMUM, SADDLE1, SADDLE2, MAXIMUM } from '../../src/morse/survey3.js';
import type { Connectivity3 } from '../../src/surface/complex3.js';

function countsByIndex(kind: Uint8Array, mult: Int32Array): number[] {
  const c = [0, 0, 0, 0];
  for (let r = 0; r < kind.length; r++) c[kind[r] - 1] += mult[r];
  return c;
}

describe('separable function on the 3-torus: counts from the product formula', () => {
  // factors cos(2x) (2 minima, 2 maxima), cos(y) (1, 1), cos(3z) (3, 3); sample positions shifted
  // by a non-symmetric phase so that no two neighbouring samples tie
  const nx = 24, ny = 20, nz = 27;
  const v = new Float64Array(nx * ny * nz);
  for (let k = 0; k < nz; k++) for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) {
    const x = (2 * Math.PI * (i + 0.37)) / nx, y = (2 * Math.PI * (j + 0.21)) / ny, z = (2 * Math.PI * (k + 0.13)) / nz;
    v[i + nx * (j + ny * k)] = Math.cos(2 * x) + 0.8 * Math.cos(y) + 1.3 * Math.cos(3 * z);
  }
  // Source: product formula (m + M t)(m + M t)(m + M t) = (2 + 2t)(1 + t)(3 + 3t) = 6 + 18t + 18t² + 6t³.
  const expected = [6, 18, 18, 6];
  for (const connectivity of [14, 26] as Connectivity3[]) {
    it(`connectivity ${connectivity}: 6 minima, 18 index-1, 18 index-2 saddles, 6 maxima; χ = 0`, () => {
      const s = survey3(new Grid3({ nx, ny, nz, values: v }), { connectivity, boundary: 'periodic' });
      expect(s.simplices.characteristic).toBe(0);
      expect(countsByIndex(s.critical.kind, s.critical.multiplicity)).toEqual(expected);
      expect(s.euler.holds).toBe(true);
      // the 6 maxima at value 1 + 0.8 + 1.3 (up to sampling) and the minima at −3.1
      for (let r = 0; r < s.critical.kind.length; r++) {
        const val = v[s.critical.vertex[r]];
        if (s.critical.kind[r] === MAXIMUM) expect(val).toBeGreaterThan(3.1 - 0.1);
        if (s.critical.kind[r] === MINIMUM) expect(val).toBeLessThan(-3.1 + 0.1);
      }
    });
  }
});

interface Ref {
  scipy_version: string; bowl: number; wells: { depth: number; centre: number[]; width: number }[];
  countsByIndex: number[]; stationaryPoints: { x: number; y: number; z: number; value: number; index: number }[];
  pairs0: [number, number][];
}
const ref = JSON.parse(readFileSync(new URL('../../fixtures/reference/gaussians3.json', import.meta.url), 'utf8')) as Ref;

describe(`Gaussian wells in a bowl against SciPy ${ref.scipy_version}`, () => {
  const n = 49, lo = -3, h = 6 / (n - 1);
  const v = new Float64Array(n * n * n);
  for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) {
    const x = lo + i * h, y = lo + j * h, z = lo + k * h;
    let f = ref.bowl * (x * x + y * y + z * z);
    for (const w of ref.wells) {
      const d2 = (x - w.centre[0]) ** 2 + (y - w.centre[1]) ** 2 + (z - w.centre[2]) ** 2;
      f -= w.depth * Math.exp(-d2 / (2 * w.width * w.width));
    }
    v[i + n * (j + n * k)] = f;
  }
  const grid = new Grid3({ nx: n, ny: n, nz: n, values: v, origin: [lo, lo, lo], spacing: [h, h, h] });
  for (const connectivity of [14, 26] as Connectivity3[]) {
    it(`connectivity ${connectivity}: critical points by index, places and values; dimension-0 pairs`, () => {
      const s = survey3(grid, { connectivity, boundary: 'closed' });
      // Source: SciPy root finding of ∇V = 0, Morse index from the Hessian's eigenvalues (NumPy).
      const c = countsByIndex(s.critical.kind, s.critical.multiplicity), want = ref.countsByIndex;
      if (connectivity === 14) {
        expect(c).toEqual(want);
      } else {
        // the 26-neighbour flag complex is not a manifold: next to a saddle it may add an
        // (index-1, index-2) pair of tiny persistence; minima, maxima and c1 − c2 are exact
        expect([c[0], c[3], c[1] - c[2]]).toEqual([want[0], want[3], want[1] - want[2]]);
        expect(c[1] - want[1]).toBeLessThanOrEqual(1);
      }
      const kinds = [MINIMUM, SADDLE1, SADDLE2, MAXIMUM];
      for (let r = 0; r < s.critical.vertex.length; r++) {
        const p = s.critical.vertex[r];
        const i = p % n, j = Math.floor(p / n) % n, k = Math.floor(p / (n * n));
        const x = grid.x(i), y = grid.y(j), z = grid.z(k);
        const near = ref.stationaryPoints.filter((q) => connectivity === 26 || kinds[q.index] === s.critical.kind[r])
          .map((q) => ({ q, d: Math.hypot(q.x - x, q.y - y, q.z - z) })).sort((a, b) => a.d - b.d)[0];
        // within two grid steps (the lattice point nearest a saddle need not be the one picked), value
        // within 0.02 (with 26, the nearest stationary point of any index: the extra pair sits by a saddle)
        expect(near.d).toBeLessThan(2 * h * Math.sqrt(3));
        expect(Math.abs(v[p] - near.q.value)).toBeLessThan(0.02);
      }
      const pairs: [number, number][] = [];
      for (let q = 0; q < s.pairs.dim.length; q++) {
        if (s.pairs.dim[q] === 0 && s.pairs.persistence[q] > 0) pairs.push([v[s.pairs.birthVertex[q]], v[s.pairs.deathVertex[q]]]);
      }
      pairs.sort((a, b) => a[0] - b[0]);
      const wantPairs = [...ref.pairs0].sort((a, b) => a[0] - b[0]);
      expect(pairs.length).toBe(wantPairs.length);
      pairs.forEach((p, q) => {
        expect(Math.abs(p[0] - wantPairs[q][0])).toBeLessThan(0.02);
        expect(Math.abs(p[1] - wantPairs[q][1])).toBeLessThan(0.02);
      });
    });
  }
});
