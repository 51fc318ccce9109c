/**
 * One state per stationary point: the helpers `barriers` uses after refinement.
 *
 *  - `localSpacing`: the sample spacing around a sample — the mean length of its Delaunay edges on
 *    scattered samples (median, so the long edges along the hull do not count), the fit's spacing on a grid.
 *  - `groupByPoint`: union of the points that lie within a tolerance of each other (a sweep over x,
 *    so near-linear for well-spread points).
 *  - `outwardRise`: on scattered samples, how much the surface rises over one local spacing out of
 *    the sampled window at a hull sample (gradient of the fit, outward normal of the hull there).
 */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { newSample, type Field } from './field.js';

/** Median length of the Delaunay edges at sample i (mesh; the median, so the long edges along the hull do not count), or `fallback` (grid). */
export function localSpacing(surface: Grid | Mesh, i: number, fallback: number): number {
  if (surface.kind === 'grid') return fallback;
  const m = surface;
  const d: number[] = [];
  for (let q = m.nbrOffsets[i]; q < m.nbrOffsets[i + 1]; q++) {
    const j = m.nbrs[q];
    d.push(Math.hypot(m.x[j] - m.x[i], m.y[j] - m.y[i]));
  }
  if (d.length === 0) return fallback;
  d.sort((a, b) => a - b);
  const k = d.length >> 1;
  return d.length % 2 ? d[k] : (d[k - 1] + d[k]) / 2;
}

/**
 * Groups of points within tolerance of each other (transitively): the group index of every point.
 * `tol[k]` is point k's tolerance; two points join when their distance (by `delta`, which honours
 * periodicity) is at most the larger one. Points with `use[k]` false stay alone. A sweep over x:
 * each point is compared with those at most the largest tolerance further along, and, when x wraps
 * with period `periodX`, with those across the seam.
 */
export function groupByPoint(x: ArrayLike<number>, y: ArrayLike<number>, tol: ArrayLike<number>, use: ArrayLike<boolean>,
  delta: (ax: number, ay: number, bx: number, by: number) => [number, number], periodX: number | null): Int32Array {
  const n = x.length;
  const parent = Int32Array.from({ length: n }, (_, k) => k);
  const find = (a: number): number => { while (parent[a] !== a) a = parent[a] = parent[parent[a]]; return a; };
  const idx: number[] = [];
  let tmax = 0;
  for (let k = 0; k < n; k++) if (use[k]) { idx.push(k); tmax = Math.max(tmax, tol[k]); }
  const join = (a: number, b: number) => {
    if (Math.hypot(...delta(x[a], y[a], x[b], y[b])) <= Math.max(tol[a], tol[b])) parent[find(a)] = find(b);
  };
  idx.sort((a, b) => x[a] - x[b]);
  for (let p = 0; p < idx.length; p++) {
    for (let q = p + 1; q < idx.length && x[idx[q]] - x[idx[p]] <= tmax; q++) join(idx[p], idx[q]);
  }
  if (periodX !== null && idx.length > 1) {
    // across the seam: the first points (within tmax of the lowest x) against the last ones
    const lo = x[idx[0]];
    for (let p = 0; p < idx.length && x[idx[p]] - lo <= tmax; p++) {
      for (let q = idx.length - 1; q > p && x[idx[p]] + periodX - x[idx[q]] <= tmax; q--) join(idx[p], idx[q]);
    }
  }
  const out = new Int32Array(n);
  for (let k = 0; k < n; k++) out[k] = find(k);
  return out;
}

/** What outwardRise needs of the hull, computed once: each sample's place on it and the hull's orientation. */
export interface HullInfo {
  /** Position of each sample on the hull, −1 off it. */
  position: Int32Array;
  /** +1 when the hull runs counter-clockwise, −1 clockwise. */
  orientation: number;
}

export function hullInfo(mesh: Mesh): HullInfo {
  const H = mesh.hull.length;
  const position = new Int32Array(mesh.size).fill(-1);
  let area2 = 0;
  for (let k = 0; k < H; k++) {
    const a = mesh.hull[k], b = mesh.hull[(k + 1) % H];
    position[a] = k;
    area2 += mesh.x[a] * mesh.y[b] - mesh.x[b] * mesh.y[a];
  }
  return { position, orientation: area2 > 0 ? 1 : -1 };
}

/**
 * Rise of the surface over one local spacing along the outward normal of the hull at sample i, a
 * hull sample or a neighbour of one (positive: the surface climbs out of the window), from the
 * gradient of the fit at the sample, or where the fit is not defined there (too few samples on the
 * hull), up to two spacings inside. NaN when i is not on or next to the hull, or the fit is undefined.
 */
export function outwardRise(mesh: Mesh, hull: HullInfo, i: number, field: Field, h: number): number {
  const H = mesh.hull.length;
  // the hull sample itself, or the nearest hull sample among its neighbours
  let e = mesh.onHull[i] ? i : -1, bestD = Infinity;
  if (e < 0) {
    for (let q = mesh.nbrOffsets[i]; q < mesh.nbrOffsets[i + 1]; q++) {
      const j = mesh.nbrs[q];
      const d = Math.hypot(mesh.x[j] - mesh.x[i], mesh.y[j] - mesh.y[i]);
      if (mesh.onHull[j] && d < bestD) { e = j; bestD = d; }
    }
  }
  const hp = e < 0 ? -1 : hull.position[e];
  if (hp < 0 || H < 3) return NaN;
  const prev = mesh.hull[(hp + H - 1) % H], next = mesh.hull[(hp + 1) % H];
  // the outward normal, whichever way the hull runs
  const sgn = hull.orientation;
  let nx = 0, ny = 0;
  for (const [a, b] of [[prev, e], [e, next]]) {
    const dx = mesh.x[b] - mesh.x[a], dy = mesh.y[b] - mesh.y[a];
    const len = Math.hypot(dx, dy);
    if (len > 0) { nx += (sgn * dy) / len; ny += (-sgn * dx) / len; }
  }
  const nl = Math.hypot(nx, ny);
  if (!(nl > 0)) return NaN;
  nx /= nl; ny /= nl;
  const s = newSample();
  for (const t of [0, 0.5, 1, 2]) {
    if (field.evaluate(mesh.x[i] - t * h * nx, mesh.y[i] - t * h * ny, s)) return (s[1] * nx + s[2] * ny) * h;
  }
  return NaN;
}
