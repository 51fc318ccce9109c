/**
 * The Müller–Brown potential (Müller & Brown, Theor. Chim. Acta 53, 75 (1979)) from its published
 * parameters, and samplings of it for the tests: a regular grid and scattered points; the
 * Wolfe–Quapp surface and the SciPy references of both.
 */
import { readFileSync } from 'node:fs';
import { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { scatteredPoints } from '../../bench/lib/scattered.mjs';

const A = [-200, -100, -170, 15];
const a = [-1, -1, -6.5, 0.7];
const b = [0, 0, 11, 0.6];
const c = [-10, -10, -6.5, 0.7];
const x0 = [1, 0, -0.5, -1];
const y0 = [0, 0.5, 1.5, 1];

export function muellerBrown(x: number, y: number): number {
  let e = 0;
  for (let k = 0; k < 4; k++) {
    const dx = x - x0[k], dy = y - y0[k];
    e += A[k] * Math.exp(a[k] * dx * dx + b[k] * dx * dy + c[k] * dy * dy);
  }
  return e;
}

export interface MbReference {
  scipy: string;
  stationaryPoints: { kind: 'minimum' | 'saddle' | 'maximum'; x: number; y: number; energy: number; hessianEigenvalues: [number, number] }[];
  codata: Record<string, number | string>;
}

/** SciPy's stationary points (tests/reference/mueller_brown.py → fixtures/chem/mueller-brown.json). */
export function mbReference(): MbReference {
  return JSON.parse(readFileSync(new URL('../../fixtures/chem/mueller-brown.json', import.meta.url), 'utf8'));
}

/** Grid over x ∈ [x0, x1], y ∈ [y0, y1] at spacing h, row 0 at the top (largest y), as text grids load. */
export function mbGrid(h = 0.01, win = { x: [-1.5, 1.2], y: [-0.5, 2.0] }): Grid {
  const w = Math.round((win.x[1] - win.x[0]) / h) + 1;
  const ht = Math.round((win.y[1] - win.y[0]) / h) + 1;
  const values = new Float64Array(w * ht);
  for (let r = 0; r < ht; r++) {
    const y = win.y[1] - r * h;
    for (let col = 0; col < w; col++) values[r * w + col] = muellerBrown(win.x[0] + col * h, y);
  }
  return new Grid({ width: w, height: ht, values, transform: [win.x[0] - h / 2, h, 0, win.y[1] + h / 2, 0, -h] });
}

/** Deterministic uniform scattered samples (mulberry32) over the window. */
export function mbScattered(n = 5000, seed = 1979, win = { x: [-1.5, 1.2], y: [-0.5, 2.0] }): Mesh {
  return scatteredSamples(muellerBrown, n, seed, win);
}

/** f at n deterministic uniform random points (mulberry32, seeded) over the window. */
export function scatteredSamples(f: (x: number, y: number) => number, n: number, seed: number, win: { x: number[]; y: number[] }): Mesh {
  const { x, y, v } = scatteredPoints(f, n, seed, win);
  return new Mesh(x, y, v);
}

/** The Wolfe–Quapp surface W = x⁴ + y⁴ − 2x² − 4y² + xy + 0.3x + 0.1y. */
export function wolfeQuapp(x: number, y: number): number {
  return x ** 4 + y ** 4 - 2 * x * x - 4 * y * y + x * y + 0.3 * x + 0.1 * y;
}

export const WQ_WINDOW = { x: [-2, 2], y: [-2, 2] };

/** SciPy's stationary points of the Wolfe–Quapp surface (tests/reference/wolfe_quapp.py → fixtures/chem/wolfe-quapp.json). */
export function wqReference(): MbReference {
  return JSON.parse(readFileSync(new URL('../../fixtures/chem/wolfe-quapp.json', import.meta.url), 'utf8'));
}
