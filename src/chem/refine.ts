/**
 * Sub-sample refinement of a stationary point on a fitted surface (src/chem/field.ts).
 *
 * Newton's method on the fit, taken in the eigenbasis of its Hessian: along each eigenvector the
 * step is −gᵢ/|λᵢ|, except along the lowest mode when a transition state is sought, where it is
 * +gᵢ/|λᵢ| (uphill). Where the Hessian already has the wanted signature this is exactly Newton's
 * step (quadratic convergence); elsewhere it still heads for the wanted kind of point. Steps are
 * limited to half a sample spacing and the search to a few spacings around the start; leaving that
 * neighbourhood, leaving the fitted domain, or ending with the wrong Hessian signature is reported,
 * never hidden.
 */
import { newSample, type Field } from './field.js';

export interface SymmetricEigen {
  /** Eigenvalues, ascending. */
  values: [number, number];
  /** Unit eigenvectors, in the order of `values`. */
  vectors: [[number, number], [number, number]];
}

/** Eigen-decomposition of the symmetric matrix [[a, b], [b, c]], in closed form. */
export function eigenSymmetric2(a: number, b: number, c: number): SymmetricEigen {
  const m = (a + c) / 2;
  const d = Math.hypot((a - c) / 2, b);
  const l1 = m - d, l2 = m + d;
  // eigenvector of l2: angle θ with tan 2θ = 2b / (a − c)
  const theta = 0.5 * Math.atan2(2 * b, a - c);
  const v2: [number, number] = [Math.cos(theta), Math.sin(theta)];
  const v1: [number, number] = [-v2[1], v2[0]];
  return { values: [l1, l2], vectors: [v1, v2] };
}

export type RefineKind = 'minimum' | 'transition-state';

export type RefineStatus =
  | 'converged'
  | 'wrong-signature'
  | 'left-neighbourhood'
  | 'outside-fit'
  | 'not-converged';

export interface Refined {
  status: RefineStatus;
  /** One line saying what happened when status is not 'converged'. */
  message: string | null;
  x: number;
  y: number;
  energy: number;
  gradient: [number, number];
  hessian: [[number, number], [number, number]];
  eigen: SymmetricEigen;
  iterations: number;
  /** Distance from the starting point, in map units. */
  shift: number;
}

export interface RefineOptions {
  /** Largest distance from the start, in sample spacings; default 3. */
  maxShift?: number;
  /** Largest single step, in sample spacings; default 0.5. */
  maxStep?: number;
  /** Iteration limit; default 100. */
  maxIterations?: number;
}

/** Halvings of a step that lands where the fit is undefined, before the refinement gives up. */
const MAX_HALVINGS = 4;

/** Refine the stationary point of `kind` near (x0, y0) on the field. */
export function refineStationary(field: Field, x0: number, y0: number, kind: RefineKind, opts: RefineOptions = {}): Refined {
  const h = field.spacing;
  const maxShift = (opts.maxShift ?? 3) * h;
  const maxStep = (opts.maxStep ?? 0.5) * h;
  const maxIt = opts.maxIterations ?? 100;
  const s = newSample();
  let x = x0, y = y0;
  const fail = (status: RefineStatus, message: string, it: number): Refined => {
    const ok = field.evaluate(x, y, s);
    const e = eigenSymmetric2(s[3], s[4], s[5]);
    return {
      status, message, x, y, energy: ok ? s[0] : NaN, gradient: [s[1], s[2]],
      hessian: [[s[3], s[4]], [s[4], s[5]]], eigen: e, iterations: it, shift: Math.hypot(...field.delta(x0, y0, x, y)),
    };
  };
  if (!field.evaluate(x, y, s)) {
    return { ...fail('outside-fit', 'no fit at the sampled point (it touches unsampled cells or the edge of the samples)', 0), energy: NaN };
  }
  let it = 0;
  let converged = false;
  for (; it < maxIt; it++) {
    const e = eigenSymmetric2(s[3], s[4], s[5]);
    const scale = Math.max(Math.abs(e.values[0]), Math.abs(e.values[1]));
    const floor = Math.max(1e-12 * scale, 1e-300);
    let dx = 0, dy = 0;
    for (let k = 0; k < 2; k++) {
      const [vx, vy] = e.vectors[k];
      const g = s[1] * vx + s[2] * vy;
      const lam = Math.max(Math.abs(e.values[k]), floor);
      const up = kind === 'transition-state' && k === 0;
      const step = (up ? g : -g) / lam;
      dx += step * vx; dy += step * vy;
    }
    let len = Math.hypot(dx, dy);
    if (!Number.isFinite(len)) return fail('not-converged', 'the fitted Hessian is singular here', it);
    if (len > maxStep) { dx *= maxStep / len; dy *= maxStep / len; len = maxStep; }
    x += dx; y += dy;
    if (Math.hypot(...field.delta(x0, y0, x, y)) > maxShift) {
      return fail('left-neighbourhood', `Newton's iteration moved more than ${opts.maxShift ?? 3} sample spacings from the sampled point without converging; the grid location is kept`, it + 1);
    }
    // where the fit has a gap (too few samples around a point of scattered samples), shorter steps first
    let halvings = 0;
    while (!field.evaluate(x, y, s)) {
      if (halvings++ === MAX_HALVINGS) return fail('outside-fit', 'the iteration reached unsampled cells or the edge of the samples', it + 1);
      dx /= 2; dy /= 2; len /= 2;
      x -= dx; y -= dy;
    }
    if (len < 1e-10 * h) { converged = true; it++; break; }
  }
  const e = eigenSymmetric2(s[3], s[4], s[5]);
  const [wx, wy] = field.wrap(x, y);
  const out: Refined = {
    status: 'converged', message: null, x: wx, y: wy, energy: s[0], gradient: [s[1], s[2]],
    hessian: [[s[3], s[4]], [s[4], s[5]]], eigen: e, iterations: it, shift: Math.hypot(...field.delta(x0, y0, x, y)),
  };
  if (!converged) {
    out.status = 'not-converged';
    out.message = `Newton's iteration did not settle in ${maxIt} steps`;
    return out;
  }
  const neg = (e.values[0] < 0 ? 1 : 0) + (e.values[1] < 0 ? 1 : 0);
  const want = kind === 'minimum' ? 0 : 1;
  const zero = e.values[0] === 0 || e.values[1] === 0;
  if (neg !== want || zero) {
    out.status = 'wrong-signature';
    out.message = `the fitted Hessian has ${neg} negative eigenvalue${neg === 1 ? '' : 's'}${zero ? ' and a zero one' : ''} (${fmtEig(e.values)}); a ${kind === 'minimum' ? 'minimum needs none' : 'first-order saddle needs exactly one'}`;
  }
  return out;
}

function fmtEig(v: [number, number]): string {
  return v.map((x) => Number(x.toPrecision(4))).join(', ');
}

/**
 * Steepest descent on the fit from (x0, y0): steps along −∇f of at most half a sample spacing, each
 * halved until the energy drops; stops when a step shorter than 10⁻⁶ spacing no longer lowers it or
 * after `maxTravel` spacings. Returns where it stopped, or null when the fit is undefined at the start.
 */
export function descendOnFit(field: Field, x0: number, y0: number, maxTravel: number): { x: number; y: number; energy: number } | null {
  const h = field.spacing;
  const s = newSample(), t = newSample();
  if (!field.evaluate(x0, y0, s)) return null;
  let x = x0, y = y0, travelled = 0;
  let step = 0.5 * h;
  for (let it = 0; it < 100 * maxTravel && travelled < maxTravel * h; it++) {
    const g = Math.hypot(s[1], s[2]);
    if (!(g > 0)) break;
    let moved = false;
    for (let a = Math.min(step * 2, 0.5 * h); a >= 1e-6 * h; a /= 2) {
      const nx = x - (a * s[1]) / g, ny = y - (a * s[2]) / g;
      if (field.evaluate(nx, ny, t) && t[0] < s[0]) {
        x = nx; y = ny; s.set(t); travelled += a; step = a; moved = true;
        break;
      }
    }
    if (!moved) break;
  }
  const [wx, wy] = field.wrap(x, y);
  return { x: wx, y: wy, energy: s[0] };
}
