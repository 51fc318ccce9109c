/**
 * Minimum-energy paths on the tricubic fit of a 3-D grid (src/chem/field3.ts): the 3-D twin of
 * src/chem/mep.ts, with the images held in typed arrays (no per-image objects while iterating).
 *
 * 1. Steepest descent from the transition state, a small step along ± the eigenvector of the
 *    negative Hessian eigenvalue, down to the two minima; the caller may name the minimum each end
 *    belongs to, and the path is then extended straight to it.
 * 2. The joined path, resampled to equal arc length, seeds the simplified string method (E, Ren &
 *    Vanden-Eijnden, J. Chem. Phys. 126, 164103 (2007)): each iteration moves every image down the
 *    gradient, φᵢ ← φᵢ − Δtᵢ ∇V(φᵢ), then redistributes the images at equal arc length along the
 *    polyline through them. Pinned ends stay; free ends settle into the nearest minimum. It stops
 *    when no image moves more than a small fraction of the sample spacing ('converged'), or when
 *    the highest and lowest energies on the string have stopped changing ('stalled').
 * 3. The highest point on the string (the polyline sampled 16× between images) is reported; it
 *    should coincide with the refined transition state.
 *
 * Coordinates stay unwrapped along the path on periodic axes (the field wraps when it evaluates).
 */
import { newSample3, type GridField3, type Field3Sample } from './field3.js';
import type { PathOptions, PathStatus } from './mep.js';

export interface Path3 {
  status: PathStatus;
  message: string | null;
  /** Arc length at each image, then the image coordinates and energies (unwrapped), end A to end B. */
  s: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  energy: Float64Array;
  /** Arc length of the whole string. */
  length: number;
  /** Highest point on the string. */
  maximum: { s: number; x: number; y: number; z: number; energy: number };
  iterations: number;
}

/** Where a descent that stopped at (x, y, z) should end (a minimum's nearest periodic image), or null for a free end. */
export type EndTarget3 = (x: number, y: number, z: number) => [number, number, number] | null;

/** Largest |eigenvalue| bound of the fitted Hessian (Gershgorin). */
function gershgorin(s: Field3Sample): number {
  return Math.max(
    Math.abs(s[4]) + Math.abs(s[5]) + Math.abs(s[6]),
    Math.abs(s[5]) + Math.abs(s[7]) + Math.abs(s[8]),
    Math.abs(s[6]) + Math.abs(s[8]) + Math.abs(s[9]),
  );
}

/** A descent path from (x0, y0, z0), points every quarter spacing, ending near a minimum or where the fit ends. */
export function steepestDescent3(field: GridField3, x0: number, y0: number, z0: number, maxSteps = 20000): { xs: number[]; ys: number[]; zs: number[]; ok: boolean } {
  const s = newSample3();
  const h = field.spacing;
  const xs = [x0], ys = [y0], zs = [z0];
  let x = x0, y = y0, z = z0;
  if (!field.evaluate(x, y, z, s)) return { xs, ys, zs, ok: false };
  let e = s[0];
  let ds = 0.25 * h;
  for (let k = 0; k < maxSteps; k++) {
    const gx = s[1], gy = s[2], gz = s[3], g = Math.sqrt(gx * gx + gy * gy + gz * gz);
    if (!(g > 0)) break;
    const a = Math.min(ds / g, 1 / Math.max(gershgorin(s), 1e-300));
    const nx = x - a * gx, ny = y - a * gy, nz = z - a * gz;
    if (!field.evaluate(nx, ny, nz, s)) return { xs, ys, zs, ok: false };
    if (s[0] > e) {
      ds /= 2;
      field.evaluate(x, y, z, s);
      if (ds < 1e-9 * h) break;
      continue;
    }
    const moved = Math.sqrt((nx - x) ** 2 + (ny - y) ** 2 + (nz - z) ** 2);
    x = nx; y = ny; z = nz; e = s[0];
    const L = xs.length - 1;
    if (Math.sqrt((x - xs[L]) ** 2 + (y - ys[L]) ** 2 + (z - zs[L]) ** 2) >= 0.25 * h) { xs.push(x); ys.push(y); zs.push(z); }
    if (moved < 1e-7 * h) break;
  }
  const L = xs.length - 1;
  if (xs[L] !== x || ys[L] !== y || zs[L] !== z) { xs.push(x); ys.push(y); zs.push(z); }
  return { xs, ys, zs, ok: true };
}

/** Resample a 3-D polyline to n points at equal arc length; returns its length. */
export function resample3(
  xs: ArrayLike<number>, ys: ArrayLike<number>, zs: ArrayLike<number>, n: number,
  outX: Float64Array, outY: Float64Array, outZ: Float64Array, work?: Float64Array,
): number {
  const m = xs.length;
  const cum = work !== undefined && work.length >= m ? work : new Float64Array(m);
  cum[0] = 0;
  for (let i = 1; i < m; i++) cum[i] = cum[i - 1] + Math.sqrt((xs[i] - xs[i - 1]) ** 2 + (ys[i] - ys[i - 1]) ** 2 + (zs[i] - zs[i - 1]) ** 2);
  const L = cum[m - 1];
  if (!(L > 0)) {
    for (let k = 0; k < n; k++) { outX[k] = xs[0]; outY[k] = ys[0]; outZ[k] = zs[0]; }
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
    outZ[k] = zs[j] + t * (zs[j + 1] - zs[j]);
  }
  return L;
}

/**
 * The minimum-energy path through the transition state at (tx, ty, tz) whose unstable direction is
 * (vx, vy, vz), by descent and the simplified string method.
 */
export function minimumEnergyPath3(
  field: GridField3, tx: number, ty: number, tz: number, vx: number, vy: number, vz: number,
  opts: PathOptions = {}, endTarget: EndTarget3 = () => null,
): Path3 {
  const n = opts.images ?? 81;
  const maxIt = opts.maxIterations ?? 2000;
  const h = field.spacing;
  const tol = (opts.tolerance ?? 1e-4) * h;
  const s = newSample3();
  const none = (status: PathStatus, message: string): Path3 => ({
    status, message, s: new Float64Array(0), x: new Float64Array(0), y: new Float64Array(0), z: new Float64Array(0),
    energy: new Float64Array(0), length: 0, maximum: { s: 0, x: tx, y: ty, z: tz, energy: NaN }, iterations: 0,
  });
  if (!field.evaluate(tx, ty, tz, s)) return none('no-fit', 'no fit at the transition state');
  const vn = Math.sqrt(vx * vx + vy * vy + vz * vz);
  const ux = vx / vn, uy = vy / vn, uz = vz / vn;
  const d0 = 0.1 * h;
  const a = steepestDescent3(field, tx - d0 * ux, ty - d0 * uy, tz - d0 * uz);
  const b = steepestDescent3(field, tx + d0 * ux, ty + d0 * uy, tz + d0 * uz);
  const la = a.xs.length - 1, lb = b.xs.length - 1;
  const ta = endTarget(a.xs[la], a.ys[la], a.zs[la]);
  const tb = endTarget(b.xs[lb], b.ys[lb], b.zs[lb]);
  const join = (d: 0 | 1 | 2, sa: number[], sb: number[], t: number) => [
    ...(ta ? [ta[d]] : []), ...sa.slice().reverse(), t, ...sb, ...(tb ? [tb[d]] : []),
  ];
  let X = new Float64Array(n), Y = new Float64Array(n), Z = new Float64Array(n);
  const X2 = new Float64Array(n), Y2 = new Float64Array(n), Z2 = new Float64Array(n);
  let Xn = new Float64Array(n), Yn = new Float64Array(n), Zn = new Float64Array(n);
  const work = new Float64Array(n);
  resample3(join(0, a.xs, b.xs, tx), join(1, a.ys, b.ys, ty), join(2, a.zs, b.zs, tz), n, X, Y, Z);

  let L = 0;
  for (let k = 0; k < n; k++) {
    if (!field.evaluate(X[k], Y[k], Z[k], s)) return none('left-fit', 'the descent from the transition state reached unsampled points or the edge of the grid');
    L = Math.max(L, gershgorin(s));
  }
  const dt = 1 / Math.max(L, 1e-300);
  const maxMove = Math.max(0.2 * h, (0.25 * resample3(X, Y, Z, n, X2, Y2, Z2, work)) / (n - 1));
  let status: PathStatus = 'not-converged';
  let message: string | null = null;
  let it = 0;
  let hiE = -Infinity, loE = Infinity, lastHi = NaN, lastLo = NaN, moved = Infinity;
  for (; it < maxIt; it++) {
    let left = false;
    hiE = -Infinity; loE = Infinity;
    for (let k = 0; k < n; k++) {
      if (!field.evaluate(X[k], Y[k], Z[k], s)) { left = true; break; }
      if (s[0] > hiE) hiE = s[0];
      if (s[0] < loE) loE = s[0];
      if ((k === 0 && ta) || (k === n - 1 && tb)) { X2[k] = X[k]; Y2[k] = Y[k]; Z2[k] = Z[k]; continue; }
      // each image steps with its own Δt = 1/Lᵢ (as in 2-D: a diagonal preconditioning that keeps the fixed point)
      const Lk = Math.max(gershgorin(s), 1e-3 * L);
      const dtk = Math.min(1 / Lk, 1e3 * dt);
      let dx = -dtk * s[1], dy = -dtk * s[2], dz = -dtk * s[3];
      const m = Math.sqrt(dx * dx + dy * dy + dz * dz);
      if (m > maxMove) { dx *= maxMove / m; dy *= maxMove / m; dz *= maxMove / m; }
      X2[k] = X[k] + dx; Y2[k] = Y[k] + dy; Z2[k] = Z[k] + dz;
    }
    if (left) {
      status = 'left-fit';
      message = 'the string reached unsampled points or the edge of the grid';
      break;
    }
    resample3(X2, Y2, Z2, n, Xn, Yn, Zn, work);
    moved = 0;
    for (let k = 0; k < n; k++) moved = Math.max(moved, Math.sqrt((Xn[k] - X[k]) ** 2 + (Yn[k] - Y[k]) ** 2 + (Zn[k] - Z[k]) ** 2));
    [X, Xn] = [Xn, X]; [Y, Yn] = [Yn, Y]; [Z, Zn] = [Zn, Z];
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

  const S = new Float64Array(n), E = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    if (k > 0) S[k] = S[k - 1] + Math.sqrt((X[k] - X[k - 1]) ** 2 + (Y[k] - Y[k - 1]) ** 2 + (Z[k] - Z[k - 1]) ** 2);
    E[k] = field.evaluate(X[k], Y[k], Z[k], s) ? s[0] : NaN;
  }
  let best = { s: 0, x: X[0], y: Y[0], z: Z[0], energy: E[0] };
  for (let k = 0; k + 1 < n; k++) {
    for (let q = 0; q < 16; q++) {
      const t = q / 16;
      const x = X[k] + t * (X[k + 1] - X[k]), y = Y[k] + t * (Y[k + 1] - Y[k]), z = Z[k] + t * (Z[k + 1] - Z[k]);
      if (!field.evaluate(x, y, z, s)) continue;
      if (!(s[0] <= best.energy)) best = { s: S[k] + t * (S[k + 1] - S[k]), x, y, z, energy: s[0] };
    }
  }
  if (E[n - 1] > best.energy) best = { s: S[n - 1], x: X[n - 1], y: Y[n - 1], z: Z[n - 1], energy: E[n - 1] };
  return { status, message, s: S, x: X, y: Y, z: Z, energy: E, length: S[n - 1], maximum: best, iterations: it };
}
