/**
 * The noise floor of a sampled energy surface: the persistence below which a minimum or a saddle
 * cannot be told from the error of the sampling itself.
 *
 *  - Scattered samples: the plane-fit residual of every sample — its value minus the least-squares
 *    plane through its Delaunay neighbours (not through itself) at its location. On a smooth surface
 *    the residual is the error of interpolating linearly between neighbours (½·curvature·spacing²),
 *    which is what makes the wrinkles of the piecewise-linear surface; added noise adds to it. The
 *    spread is estimated robustly by the median absolute deviation about the median, scaled by
 *    1.4826 (a standard deviation for normal errors), over the samples off the hull (a hull sample's
 *    neighbours lie on one side). The floor is NOISE_FACTOR times that spread.
 *  - Grids: the value quantum when every value is a whole multiple of one step from the lowest
 *    (values rounded to a fixed number of decimals), else 0: a regular scan's interpolation error is
 *    not estimated, and a smooth grid has no wrinkles for it to remove.
 */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';

/**
 * The floor is this many robust standard deviations of the plane-fit residual. For bounded noise of
 * amplitude ε (uniform in ±ε) the residual's deviation is about 0.62·ε (the sample's own error plus
 * the plane's, fitted through about six neighbours), so the floor is about 3·ε — above 2·ε, the
 * largest persistence that noise of amplitude ε can create or change by (stability of persistence
 * diagrams: Cohen-Steiner, Edelsbrunner & Harer, Discrete Comput. Geom. 37, 103 (2007)).
 */
export const NOISE_FACTOR = 5;
/** 1/Φ⁻¹(3/4): the median absolute deviation of normal errors times this is their standard deviation. */
export const MAD_SCALE = 1.4826;

export interface NoiseFloor {
  /** The floor in the input energy unit (0 when none could be derived). */
  value: number;
  /** How it was obtained, in one line. */
  estimator: string;
  /** Robust deviation of the plane-fit residual (scattered samples) or the value quantum (grids); null when there is none. */
  scale: number | null;
  /** Samples the estimate is made from. */
  samples: number;
}

/** The noise floor of a surface (see the module comment). */
export function noiseFloor(surface: Grid | Mesh): NoiseFloor {
  return surface.kind === 'grid' ? gridQuantum(surface) : meshResidualFloor(surface);
}

/** Plane-fit residuals of the samples off the hull (see the module comment); NaN for hull samples and degenerate stars. */
export function planeResiduals(mesh: Mesh): Float64Array {
  const n = mesh.size, x = mesh.x, y = mesh.y, z = mesh.values;
  const r = new Float64Array(n).fill(NaN);
  for (let i = 0; i < n; i++) {
    if (mesh.onHull[i]) continue;
    // least squares z ≈ c + a·dx + b·dy over the neighbours, coordinates relative to sample i
    let s = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0, sz = 0, sxz = 0, syz = 0;
    for (let k = mesh.nbrOffsets[i]; k < mesh.nbrOffsets[i + 1]; k++) {
      const j = mesh.nbrs[k];
      const dx = x[j] - x[i], dy = y[j] - y[i], zj = z[j];
      s++; sx += dx; sy += dy; sxx += dx * dx; sxy += dx * dy; syy += dy * dy;
      sz += zj; sxz += dx * zj; syz += dy * zj;
    }
    if (s < 3) continue;
    // c from the normal equations by Cramer's rule
    const det = s * (sxx * syy - sxy * sxy) - sx * (sx * syy - sxy * sy) + sy * (sx * sxy - sxx * sy);
    const scale = s * sxx * syy;
    if (!(Math.abs(det) > 1e-12 * Math.abs(scale))) continue;
    const detC = sz * (sxx * syy - sxy * sxy) - sx * (sxz * syy - sxy * syz) + sy * (sxz * sxy - sxx * syz);
    r[i] = z[i] - detC / det;
  }
  return r;
}

function meshResidualFloor(mesh: Mesh): NoiseFloor {
  const r = planeResiduals(mesh);
  // the residuals that exist, packed to the front
  let k = 0;
  for (let i = 0; i < r.length; i++) if (r[i] === r[i]) r[k++] = r[i];
  const how = `${NOISE_FACTOR} × 1.4826 × the median absolute deviation of each sample from the least-squares plane through its Delaunay neighbours`;
  if (k < 3) return { value: 0, estimator: `${how}: too few samples off the hull, so 0`, scale: null, samples: k };
  const a = r.subarray(0, k);
  const med = median(a);
  for (let k = 0; k < a.length; k++) a[k] = Math.abs(a[k] - med);
  const sigma = MAD_SCALE * median(a);
  return { value: NOISE_FACTOR * sigma, estimator: how, scale: sigma, samples: k };
}

/** Median of a typed array (sorted in place). */
function median(a: Float64Array): number {
  a.sort();
  const m = a.length >> 1;
  return a.length % 2 ? a[m] : (a[m - 1] + a[m]) / 2;
}

/** Values the quantum is first estimated from (a strided sample of the grid, sorted). */
const QUANTUM_SAMPLE = 65536;

/**
 * The value quantum of a grid: the step q such that every valid value is the lowest plus a whole
 * number of steps (within the rounding of the stored type). Estimated from a strided sample of at
 * most 65 536 values — the greatest common divisor of the gaps between its sorted distinct values,
 * by Euclid's algorithm with the storage rounding as tolerance, sharpened by the whole value range —
 * then checked against every value in one pass (no copy of the grid). Null when the values are not
 * quantised: the divisor shrinks below a millionth of the range, or a value is off the steps.
 */
export function valueQuantum(values: ArrayLike<number>): number | null {
  const n = values.length;
  let lo = Infinity, hi = -Infinity, count = 0;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v !== v) continue;
    count++;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  if (!(hi > lo)) return null;
  // rounding of the stored values: float32 grids carry about 7 significant digits
  const mag = Math.max(Math.abs(lo), Math.abs(hi));
  const slack = 4 * (values instanceof Float32Array ? 2 ** -23 : 2 ** -52) * mag;
  const least = 1e-6 * (hi - lo);
  const stride = Math.max(1, Math.floor(count / QUANTUM_SAMPLE));
  const pick: number[] = [lo, hi];
  for (let i = 0, k = 0; i < n; i++) {
    const v = values[i];
    if (v !== v) continue;
    if (k++ % stride === 0) pick.push(v);
  }
  const sample = Float64Array.from(pick).sort();
  let q = 0;
  for (let i = 1; i < sample.length; i++) {
    const d = sample[i] - sample[i - 1];
    if (d <= slack) continue;
    q = q === 0 ? d : gcdTol(q, d, 2 * slack + 1e-9 * d);
    if (q < least) return null;
  }
  if (q === 0) return null;
  // the step from the whole range (the divisor's own rounding would grow with the step count)
  q = (hi - lo) / Math.round((hi - lo) / q);
  // check: every value a whole number of steps above the lowest
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v !== v) continue;
    const m = (v - lo) / q;
    if (Math.abs(m - Math.round(m)) * q > 2 * slack + 1e-6 * q) return null;
  }
  return q;
}

/** Greatest common divisor of two positive numbers, remainders below tol counting as zero. */
function gcdTol(a: number, b: number, tol: number): number {
  if (a < b) [a, b] = [b, a];
  while (b > tol) {
    let r = a - b * Math.floor(a / b);
    if (b - r <= tol) r = 0;
    [a, b] = [b, r];
  }
  return a;
}

function gridQuantum(grid: Grid): NoiseFloor {
  const q = valueQuantum(grid.values);
  const n = grid.validCount();
  if (q === null) {
    return { value: 0, estimator: 'grid: the values are not quantised (not whole steps of one size), so no noise floor is derived (0); give --min-persistence to remove shallow features', scale: null, samples: n };
  }
  return { value: q, estimator: `grid: the value quantum ${fmt(q)} (every value is the lowest plus whole steps of it): rounding alone makes features this deep`, scale: q, samples: n };
}

function fmt(x: number): string {
  return Number(x.toPrecision(4)).toString();
}
