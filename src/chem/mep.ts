/**
 * Minimum-energy paths on a fitted surface (src/chem/field.ts).
 *
 * 1. Steepest descent from the transition state, a small step along ± the eigenvector of the
 *    negative Hessian eigenvalue, down to the two minima.
 * 2. Each descent may stop in a shallow local minimum that simplification folded into a deeper
 *    basin; the caller names the minimum each end belongs to, and the path is extended straight to
 *    it. The joined path, resampled to equal arc length, seeds the string method (E, Ren &
 *    Vanden-Eijnden, Phys. Rev. B 66, 052301 (2002); the simplified string method, J. Chem. Phys.
 *    126, 164103 (2007)): every iteration moves each image down the full gradient,
 *    φᵢ ← φᵢ − Δt ∇V(φᵢ), then redistributes the images at equal arc length along the polyline
 *    through them. Ends pinned to a named minimum stay there; an end without one is free and
 *    settles into the nearest minimum. The iteration stops when no image moves more than a small
 *    fraction of the sample spacing in an iteration ('converged'), or — on a rough surface where
 *    images keep shuffling between small bumps — when the highest and lowest energies on the
 *    string have stopped changing ('stalled', reported as such).
 * 3. The highest point on the converged string (the polyline sampled finely) is reported; it
 *    should coincide with the refined transition state.
 *
 * Coordinates stay unwrapped along the path on periodic surfaces (the field wraps when it
 * evaluates), so arc length is continuous across the seam.
 */
import { newSample, type Field } from './field.js';

export interface PathOptions {
  /** Number of images on the string; default 81. */
  images?: number;
  /** Iteration limit of the string method; default 2000. */
  maxIterations?: number;
  /** Convergence: largest image displacement per iteration, in sample spacings; default 1e-4. */
  tolerance?: number;
}

export interface PathPoint {
  s: number;
  x: number;
  y: number;
  energy: number;
}

export type PathStatus = 'converged' | 'stalled' | 'not-converged' | 'left-fit' | 'no-fit';

export interface MinimumEnergyPath {
  status: PathStatus;
  message: string | null;
  /** Images of the converged string, unwrapped coordinates, from end A to end B. */
  images: PathPoint[];
  /** Arc length of the whole string. */
  length: number;
  /** Highest point on the string (polyline sampled 16× between images). */
  maximum: PathPoint;
  iterations: number;
}

/** A descent path: points from the start downhill, ending near a minimum (or where the fit ends). */
export function steepestDescent(field: Field, x0: number, y0: number, maxSteps = 20000): { xs: number[]; ys: number[]; ok: boolean } {
  const s = newSample();
  const h = field.spacing;
  const xs = [x0], ys = [y0];
  let x = x0, y = y0;
  if (!field.evaluate(x, y, s)) return { xs, ys, ok: false };
  let e = s[0];
  let ds = 0.25 * h;
  for (let k = 0; k < maxSteps; k++) {
    const gx = s[1], gy = s[2], g = Math.hypot(gx, gy);
    if (!(g > 0)) break;
    const L = Math.max(Math.abs(s[3]) + Math.abs(s[4]), Math.abs(s[4]) + Math.abs(s[5]), 1e-300); // ≥ |λ|max
    const a = Math.min(ds / g, 1 / L);
    const nx = x - a * gx, ny = y - a * gy;
    if (!field.evaluate(nx, ny, s)) return { xs, ys, ok: false };
    if (s[0] > e) {
      // overshoot: go back and take a shorter step
      ds /= 2;
      field.evaluate(x, y, s);
      if (ds < 1e-9 * h) break;
      continue;
    }
    const moved = Math.hypot(nx - x, ny - y);
    x = nx; y = ny; e = s[0];
    const lx = xs[xs.length - 1], ly = ys[ys.length - 1];
    if (Math.hypot(x - lx, y - ly) >= 0.25 * h) { xs.push(x); ys.push(y); }
    if (moved < 1e-7 * h) break;
  }
  if (xs[xs.length - 1] !== x || ys[ys.length - 1] !== y) { xs.push(x); ys.push(y); }
  return { xs, ys, ok: true };
}

/** Resample a polyline to `n` points at equal arc length (`work`: optional scratch of ≥ xs.length). */
export function resample(xs: ArrayLike<number>, ys: ArrayLike<number>, n: number, outX: Float64Array, outY: Float64Array, work?: Float64Array): number {
  const m = xs.length;
  const cum = work !== undefined && work.length >= m ? work : new Float64Array(m);
  cum[0] = 0;
  for (let i = 1; i < m; i++) cum[i] = cum[i - 1] + Math.hypot(xs[i] - xs[i - 1], ys[i] - ys[i - 1]);
  const L = cum[m - 1];
  if (!(L > 0)) {
    for (let k = 0; k < n; k++) { outX[k] = xs[0]; outY[k] = ys[0]; }
    return 0;
  }
  let j = 0;
  for (let k = 0; k < n; k++) {
    const target = (L * k) / (n - 1);
    while (j < m - 2 && cum[j + 1] < target) j++;
    const seg = cum[j + 1] - cum[j];
    const t = seg > 0 ? Math.min(1, Math.max(0, (target - cum[j]) / seg)) : 0;
    outX[k] = xs[j] + t * (xs[j + 1] - xs[j]);
    outY[k] = ys[j] + t * (ys[j + 1] - ys[j]);
  }
  return L;
}

/**
 * Where a descent that stopped at (x, y) (unwrapped) should end: the position of the minimum it
 * belongs to, as the periodic image nearest to (x, y); null leaves the end free.
 */
export type EndTarget = (x: number, y: number) => [number, number] | null;

/**
 * The minimum-energy path through the transition state at (tx, ty) whose unstable direction is
 * (vx, vy), by descent and the simplified string method.
 */
export function minimumEnergyPath(field: Field, tx: number, ty: number, vx: number, vy: number, opts: PathOptions = {}, endTarget: EndTarget = () => null): MinimumEnergyPath {
  const n = opts.images ?? 81;
  const maxIt = opts.maxIterations ?? 2000;
  const h = field.spacing;
  const tol = (opts.tolerance ?? 1e-4) * h;
  const s = newSample();
  const empty: PathPoint = { s: 0, x: tx, y: ty, energy: NaN };
  if (!field.evaluate(tx, ty, s)) {
    return { status: 'no-fit', message: 'no fit at the transition state', images: [], length: 0, maximum: empty, iterations: 0 };
  }
  const vn = Math.hypot(vx, vy);
  const ux = vx / vn, uy = vy / vn;
  const d0 = 0.1 * h;
  const a = steepestDescent(field, tx - d0 * ux, ty - d0 * uy);
  const b = steepestDescent(field, tx + d0 * ux, ty + d0 * uy);
  const ta = endTarget(a.xs[a.xs.length - 1], a.ys[a.ys.length - 1]);
  const tb = endTarget(b.xs[b.xs.length - 1], b.ys[b.ys.length - 1]);
  const px = [...(ta ? [ta[0]] : []), ...a.xs.slice().reverse(), tx, ...b.xs, ...(tb ? [tb[0]] : [])];
  const py = [...(ta ? [ta[1]] : []), ...a.ys.slice().reverse(), ty, ...b.ys, ...(tb ? [tb[1]] : [])];
  let X = new Float64Array(n), Y = new Float64Array(n);
  let X2 = new Float64Array(n), Y2 = new Float64Array(n);
  let Xn = new Float64Array(n), Yn = new Float64Array(n);
  const work = new Float64Array(n);
  resample(px, py, n, X, Y);

  // L ≥ |λ|max over the initial images (Gershgorin bound); Δt = 1/L is below the stability limit
  // 2/|λ|max of explicit gradient steps, without overshoot along any mode
  const curvature = (): number => {
    let L = 0;
    for (let k = 0; k < n; k++) {
      if (!field.evaluate(X[k], Y[k], s)) return NaN;
      L = Math.max(L, Math.abs(s[3]) + Math.abs(s[4]), Math.abs(s[4]) + Math.abs(s[5]));
    }
    return L;
  };
  let L = curvature();
  if (!Number.isFinite(L)) {
    return { status: 'left-fit', message: 'the descent from the transition state reached unsampled cells or the edge of the samples', images: [], length: 0, maximum: empty, iterations: 0 };
  }
  const dt = 1 / Math.max(L, 1e-300);
  // an image moves at most a fifth of a sample spacing, or a quarter of the image spacing on a long string
  const maxMove = Math.max(0.2 * h, (0.25 * resample(X, Y, n, X2, Y2, work)) / (n - 1));
  let status: PathStatus = 'not-converged';
  let message: string | null = null;
  let it = 0;
  // on a rough surface the images may keep shuffling between small bumps while the path's profile
  // no longer changes: watch the highest and lowest image energies every 50 iterations
  let hiE = -Infinity, loE = Infinity, lastHi = NaN, lastLo = NaN, moved = Infinity;
  for (; it < maxIt; it++) {
    let left = false;
    hiE = -Infinity; loE = Infinity;
    for (let k = 0; k < n; k++) {
      if (!field.evaluate(X[k], Y[k], s)) { left = true; break; }
      if (s[0] > hiE) hiE = s[0];
      if (s[0] < loE) loE = s[0];
      if ((k === 0 && ta) || (k === n - 1 && tb)) { X2[k] = X[k]; Y2[k] = Y[k]; continue; }
      // each image steps with its own Δt = 1/Lᵢ (Lᵢ ≥ the largest |eigenvalue| of its Hessian): a
      // diagonal preconditioning of the gradient flow that leaves its fixed point, the string with no
      // gradient across it, unchanged while converging far faster where the surface is flat
      const Lk = Math.max(Math.abs(s[3]) + Math.abs(s[4]), Math.abs(s[4]) + Math.abs(s[5]), 1e-3 * L);
      const dtk = Math.min(1 / Lk, 1e3 * dt);
      let dx = -dtk * s[1], dy = -dtk * s[2];
      const m = Math.hypot(dx, dy);
      if (m > maxMove) { dx *= maxMove / m; dy *= maxMove / m; }
      X2[k] = X[k] + dx; Y2[k] = Y[k] + dy;
    }
    if (left) {
      status = 'left-fit';
      message = 'the string reached unsampled cells or the edge of the samples';
      break;
    }
    resample(X2, Y2, n, Xn, Yn, work);
    moved = 0;
    for (let k = 0; k < n; k++) moved = Math.max(moved, Math.hypot(Xn[k] - X[k], Yn[k] - Y[k]));
    const tx0 = X, ty0 = Y;
    X = Xn; Y = Yn; Xn = tx0; Yn = ty0;
    if (moved < tol) { status = 'converged'; it++; break; }
    if (it > 0 && it % 50 === 0) {
      const scale = 1e-5 * Math.max(hiE - loE, 1e-300);
      if (it >= 500 && Math.abs(hiE - lastHi) <= scale && Math.abs(loE - lastLo) <= scale) {
        status = 'stalled';
        message = `the images still move up to ${Number((moved / h).toPrecision(2))} sample spacings per iteration (a rough surface), but the highest and lowest energies on the string have not changed by 1e-5 of its energy range in 50 iterations`;
        it++;
        break;
      }
      lastHi = hiE; lastLo = loE;
    }
  }
  if (status === 'not-converged') message = `the string method did not settle in ${maxIt} iterations (images still move up to ${Number((moved / h).toPrecision(2))} sample spacings per iteration)`;

  const images: PathPoint[] = [];
  let cum = 0;
  for (let k = 0; k < n; k++) {
    if (k > 0) cum += Math.hypot(X[k] - X[k - 1], Y[k] - Y[k - 1]);
    const ok = field.evaluate(X[k], Y[k], s);
    images.push({ s: cum, x: X[k], y: Y[k], energy: ok ? s[0] : NaN });
  }
  // highest point on the polyline, sampled 16× per segment
  let best: PathPoint = images[0];
  for (let k = 0; k + 1 < n; k++) {
    const segLen = images[k + 1].s - images[k].s;
    for (let q = 0; q < 16; q++) {
      const t = q / 16;
      const x = X[k] + t * (X[k + 1] - X[k]), y = Y[k] + t * (Y[k + 1] - Y[k]);
      if (!field.evaluate(x, y, s)) continue;
      if (!(s[0] <= best.energy)) best = { s: images[k].s + t * segLen, x, y, energy: s[0] };
    }
  }
  if (images[n - 1].energy > best.energy) best = images[n - 1];
  return { status, message, images, length: cum, maximum: best, iterations: it };
}
