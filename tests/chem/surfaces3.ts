/**
 * Analytic 3-D energy surfaces for the tests, from the parameters of tests/reference/energy3d.py:
 * the Müller–Brown potential (Müller & Brown, Theor. Chim. Acta 53, 75 (1979)) plus a harmonic
 * third coordinate coupled to x, and a sum of three Gaussian wells; their grids and SciPy's
 * stationary points (fixtures/chem/stationary-3d.json).
 */
import { readFileSync } from 'node:fs';
import { Grid3 } from '../../src/surface/grid3.js';
import { muellerBrown } from './mb.js';

export interface Stationary3 {
  kind: 'minimum' | 'saddle' | 'saddle2' | 'maximum';
  x: number;
  y: number;
  z: number;
  energy: number;
  hessianEigenvalues: [number, number, number];
}

export interface Surface3Reference {
  window: [number, number][];
  stationaryPoints: Stationary3[];
}

export interface Reference3 {
  scipy: string;
  numpy: string;
  surfaces: { 'mb-z': Surface3Reference & { K: number; C: number }; gaussians: Surface3Reference & { A: number[]; centres: number[][]; widths: number[] } };
}

export const REFERENCE3_PATH = new URL('../../fixtures/chem/stationary-3d.json', import.meta.url);

export function reference3(): Reference3 {
  return JSON.parse(readFileSync(REFERENCE3_PATH, 'utf8'));
}

const ref = reference3();

/** W(x, y, z) = V_MB(x, y) + K (z − C x)². */
export function mbZ(x: number, y: number, z: number): number {
  const { K, C } = ref.surfaces['mb-z'];
  return muellerBrown(x, y) + K * (z - C * x) ** 2;
}

/** −Σ A_k exp(−|r − c_k|² / (2 s_k²)). */
export function gaussians(x: number, y: number, z: number): number {
  const { A, centres, widths } = ref.surfaces.gaussians;
  let e = 0;
  for (let k = 0; k < A.length; k++) {
    const [cx, cy, cz] = centres[k];
    const r2 = (x - cx) ** 2 + (y - cy) ** 2 + (z - cz) ** 2;
    e -= A[k] * Math.exp(-r2 / (2 * widths[k] ** 2));
  }
  return e;
}

/** f sampled on the lattice over `win` (lower corners at the lattice origin) at spacing h. */
export function sampleGrid3(f: (x: number, y: number, z: number) => number, win: [number, number][], h: number): Grid3 {
  const n = win.map(([lo, hi]) => Math.round((hi - lo) / h) + 1);
  const values = new Float64Array(n[0] * n[1] * n[2]);
  for (let k = 0; k < n[2]; k++) {
    for (let j = 0; j < n[1]; j++) {
      for (let i = 0; i < n[0]; i++) values[i + n[0] * (j + n[1] * k)] = f(win[0][0] + i * h, win[1][0] + j * h, win[2][0] + k * h);
    }
  }
  return new Grid3({ nx: n[0], ny: n[1], nz: n[2], values, origin: [win[0][0], win[1][0], win[2][0]], spacing: [h, h, h] });
}
