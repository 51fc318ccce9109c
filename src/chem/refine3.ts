/**
 * Sub-sample refinement of a stationary point on the tricubic fit of a 3-D grid
 * (src/chem/field3.ts): the 3-D twin of src/chem/refine.ts, with the same method and safeguards.
 *
 * Newton's method taken in the eigenbasis of the fitted Hessian: along each eigenvector the step is
 * −gᵢ/|λᵢ|, except along the lowest mode when a transition state is sought, where it is +gᵢ/|λᵢ|
 * (uphill). Where the Hessian already has the wanted signature this is Newton's step; elsewhere it
 * still heads for the wanted kind of point. Steps are limited to half a sample spacing and the
 * search to a few spacings around the start; leaving that neighbourhood, leaving the fitted domain,
 * or ending with the wrong Hessian signature (a minimum needs three positive eigenvalues, a
 * transition state exactly one negative) is reported, never hidden.
 */
import { newSample3, type GridField3 } from './field3.js';
import type { RefineKind, RefineOptions, RefineStatus } from './refine.js';

export interface SymmetricEigen3 {
  /** Eigenvalues, ascending. */
  values: [number, number, number];
  /** Unit eigenvectors, in the order of `values`. */
  vectors: [[number, number, number], [number, number, number], [number, number, number]];
}

/**
 * Eigen-decomposition of the symmetric 3 × 3 matrix [[a, b, c], [b, d, e], [c, e, f]] by the
 * cyclic Jacobi method (plane rotations annihilating one off-diagonal element at a time, until the
 * off-diagonal part is below 1e-15 of the matrix's norm; common practice for small symmetric
 * matrices, quadratically convergent).
 */
export function eigenSymmetric3(a: number, b: number, c: number, d: number, e: number, f: number): SymmetricEigen3 {
  const A = [[a, b, c], [b, d, e], [c, e, f]];
  const V = [[1, 0, 0], [0, 1, 0], [0, 0, 1]];
  const norm = Math.sqrt(a * a + d * d + f * f + 2 * (b * b + c * c + e * e));
  for (let sweep = 0; sweep < 50; sweep++) {
    const off = Math.sqrt(A[0][1] ** 2 + A[0][2] ** 2 + A[1][2] ** 2);
    if (!(off > 1e-15 * norm)) break;
    for (let p = 0; p < 2; p++) {
      for (let q = p + 1; q < 3; q++) {
        const apq = A[p][q];
        if (apq === 0) continue;
        // rotation angle that zeroes A[p][q]: tan 2θ = 2apq / (aqq − app), the smaller root
        const theta = (A[q][q] - A[p][p]) / (2 * apq);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const cs = 1 / Math.sqrt(t * t + 1), sn = t * cs;
        for (let k = 0; k < 3; k++) {
          const akp = A[k][p], akq = A[k][q];
          A[k][p] = cs * akp - sn * akq;
          A[k][q] = sn * akp + cs * akq;
        }
        for (let k = 0; k < 3; k++) {
          const apk = A[p][k], aqk = A[q][k];
          A[p][k] = cs * apk - sn * aqk;
          A[q][k] = sn * apk + cs * aqk;
        }
        for (let k = 0; k < 3; k++) {
          const vkp = V[k][p], vkq = V[k][q];
          V[k][p] = cs * vkp - sn * vkq;
          V[k][q] = sn * vkp + cs * vkq;
        }
      }
    }
  }
  const order = [0, 1, 2].sort((i, j) => A[i][i] - A[j][j]);
  const col = (k: number): [number, number, number] => [V[0][k], V[1][k], V[2][k]];
  return {
    values: [A[order[0]][order[0]], A[order[1]][order[1]], A[order[2]][order[2]]],
    vectors: [col(order[0]), col(order[1]), col(order[2])],
  };
}

export interface Refined3 {
  status: RefineStatus;
  /** One line saying what happened when status is not 'converged'. */
  message: string | null;
  x: number;
  y: number;
  z: number;
  energy: number;
  gradient: [number, number, number];
  hessian: [[number, number, number], [number, number, number], [number, number, number]];
  eigen: SymmetricEigen3;
  iterations: number;
  /** Distance from the starting point, in map units. */
  shift: number;
}

const MAX_HALVINGS = 4;

function eigenOf(s: Float64Array): SymmetricEigen3 {
  return eigenSymmetric3(s[4], s[5], s[6], s[7], s[8], s[9]);
}

function hessianOf(s: Float64Array): Refined3['hessian'] {
  return [[s[4], s[5], s[6]], [s[5], s[7], s[8]], [s[6], s[8], s[9]]];
}

/** Refine the stationary point of `kind` near (x0, y0, z0) on the 3-D fit. */
export function refineStationary3(field: GridField3, x0: number, y0: number, z0: number, kind: RefineKind, opts: RefineOptions = {}): Refined3 {
  const h = field.spacing;
  const maxShift = (opts.maxShift ?? 3) * h;
  const maxStep = (opts.maxStep ?? 0.5) * h;
  const maxIt = opts.maxIterations ?? 100;
  const s = newSample3();
  let x = x0, y = y0, z = z0;
  const shiftNow = () => field.distance(x0, y0, z0, x, y, z);
  const record = (status: RefineStatus, message: string | null, it: number, ok: boolean): Refined3 => ({
    status, message, x, y, z, energy: ok ? s[0] : NaN, gradient: [s[1], s[2], s[3]],
    hessian: hessianOf(s), eigen: eigenOf(s), iterations: it, shift: shiftNow(),
  });
  const fail = (status: RefineStatus, message: string, it: number): Refined3 => record(status, message, it, field.evaluate(x, y, z, s));
  if (!field.evaluate(x, y, z, s)) {
    return record('outside-fit', 'no fit at the sampled point (its stencil touches unsampled points or leaves the grid)', 0, false);
  }
  let it = 0;
  let converged = false;
  for (; it < maxIt; it++) {
    const e = eigenOf(s);
    const scale = Math.max(Math.abs(e.values[0]), Math.abs(e.values[2]));
    const floor = Math.max(1e-12 * scale, 1e-300);
    let dx = 0, dy = 0, dz = 0;
    for (let k = 0; k < 3; k++) {
      const [vx, vy, vz] = e.vectors[k];
      const g = s[1] * vx + s[2] * vy + s[3] * vz;
      const lam = Math.max(Math.abs(e.values[k]), floor);
      const up = kind === 'transition-state' && k === 0;
      const step = (up ? g : -g) / lam;
      dx += step * vx; dy += step * vy; dz += step * vz;
    }
    let len = Math.sqrt(dx * dx + dy * dy + dz * dz);
    if (!Number.isFinite(len)) return fail('not-converged', 'the fitted Hessian is singular here', it);
    if (len > maxStep) { dx *= maxStep / len; dy *= maxStep / len; dz *= maxStep / len; len = maxStep; }
    x += dx; y += dy; z += dz;
    if (shiftNow() > maxShift) {
      return fail('left-neighbourhood', `Newton's iteration moved more than ${opts.maxShift ?? 3} sample spacings from the sampled point without converging; the grid location is kept`, it + 1);
    }
    let halvings = 0;
    while (!field.evaluate(x, y, z, s)) {
      if (halvings++ === MAX_HALVINGS) return fail('outside-fit', 'the iteration reached unsampled points or the edge of the grid', it + 1);
      dx /= 2; dy /= 2; dz /= 2; len /= 2;
      x -= dx; y -= dy; z -= dz;
    }
    if (len < 1e-10 * h) { converged = true; it++; break; }
  }
  const shift = shiftNow();
  [x, y, z] = field.wrapPoint(x, y, z);
  const out: Refined3 = { ...record('converged', null, it, true), shift };
  if (!converged) {
    out.status = 'not-converged';
    out.message = `Newton's iteration did not settle in ${maxIt} steps`;
    return out;
  }
  const ev = out.eigen.values;
  const neg = ev.filter((l) => l < 0).length;
  const zero = ev.some((l) => l === 0);
  const want = kind === 'minimum' ? 0 : 1;
  if (neg !== want || zero) {
    out.status = 'wrong-signature';
    out.message = `the fitted Hessian has ${neg} negative eigenvalue${neg === 1 ? '' : 's'}${zero ? ' and a zero one' : ''} (${ev.map((l) => Number(l.toPrecision(4))).join(', ')}); a ${kind === 'minimum' ? 'minimum needs none' : 'first-order saddle needs exactly one'}`;
  }
  return out;
}

/**
 * Steepest descent on the 3-D fit from (x0, y0, z0), as descendOnFit in 2-D: steps along −∇f of at
 * most half a sample spacing, halved until the energy drops; stops when a step shorter than 10⁻⁶
 * spacing no longer lowers it or after `maxTravel` spacings. Null when there is no fit at the start.
 */
export function descendOnFit3(field: GridField3, x0: number, y0: number, z0: number, maxTravel: number): { x: number; y: number; z: number; energy: number } | null {
  const h = field.spacing;
  const s = newSample3(), t = newSample3();
  if (!field.evaluate(x0, y0, z0, s)) return null;
  let x = x0, y = y0, z = z0, travelled = 0;
  let step = 0.5 * h;
  for (let it = 0; it < 100 * maxTravel && travelled < maxTravel * h; it++) {
    const g = Math.sqrt(s[1] * s[1] + s[2] * s[2] + s[3] * s[3]);
    if (!(g > 0)) break;
    let moved = false;
    for (let a = Math.min(step * 2, 0.5 * h); a >= 1e-6 * h; a /= 2) {
      const nx = x - (a * s[1]) / g, ny = y - (a * s[2]) / g, nz = z - (a * s[3]) / g;
      if (field.evaluate(nx, ny, nz, t) && t[0] < s[0]) {
        x = nx; y = ny; z = nz; s.set(t); travelled += a; step = a; moved = true;
        break;
      }
    }
    if (!moved) break;
  }
  const [wx, wy, wz] = field.wrapPoint(x, y, z);
  return { x: wx, y: wy, z: wz, energy: s[0] };
}
