/**
 * Smooth fits of a sampled surface, evaluated anywhere with first and second derivatives.
 *
 *  - GridField: bicubic convolution interpolation (Keys, IEEE Trans. ASSP 29, 1153 (1981), a = −½,
 *    the tensor-product Catmull–Rom cubic). It passes through the samples, reproduces polynomials up
 *    to degree 2 exactly (so a quadratic's Hessian is recovered exactly) and is accurate to O(h³).
 *    On a closed axis the missing stencil sample beyond the edge is Keys' cubic extrapolation
 *    f₋₁ = 3f₀ − 3f₁ + f₂; on a periodic axis the stencil wraps. A stencil touching nodata has no fit.
 *  - MeshField: moving least squares over scattered samples — at each point, a weighted polynomial
 *    fit (quadratic or cubic) to the samples within a fixed radius, with Wendland's C² weight
 *    (1 − r)⁴(4r + 1); value and derivatives are those of the local polynomial at the point. Where
 *    the samples within the radius are too few or degenerate, the radius is widened ×1.5, then ×2.
 *    Defined inside the convex hull only.
 *
 * All derivatives are with respect to the map coordinates x, y.
 */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';

/** Values written by Field.evaluate: f, ∂f/∂x, ∂f/∂y, ∂²f/∂x², ∂²f/∂x∂y, ∂²f/∂y². */
export type FieldSample = Float64Array;

export interface Field {
  readonly kind: 'bicubic' | 'mls';
  /** Typical distance between samples, in map units. */
  readonly spacing: number;
  /** The surface wraps along at least one axis. */
  readonly periodic: boolean;
  /** Evaluate at (x, y); false when the fit is not available there (outside, nodata, too few samples). */
  evaluate(x: number, y: number, out: FieldSample): boolean;
  /** Bring a point into the fundamental domain of a periodic surface (unchanged otherwise). */
  wrap(x: number, y: number): [number, number];
  /** Shortest displacement from a to b, honouring periodicity. */
  delta(ax: number, ay: number, bx: number, by: number): [number, number];
  /** Index of the sample nearest to (x, y) (grid cell or scattered point), or −1 when there is none nearby. */
  nearestSample(x: number, y: number): number;
}

export function newSample(): FieldSample {
  return new Float64Array(6);
}

/** Catmull–Rom weights and their first and second derivatives at t ∈ [0, 1], for offsets −1, 0, 1, 2. */
function cubicWeights(t: number, w: Float64Array, dw: Float64Array, d2w: Float64Array): void {
  const t2 = t * t, t3 = t2 * t;
  w[0] = (-t3 + 2 * t2 - t) / 2;
  w[1] = (3 * t3 - 5 * t2 + 2) / 2;
  w[2] = (-3 * t3 + 4 * t2 + t) / 2;
  w[3] = (t3 - t2) / 2;
  dw[0] = (-3 * t2 + 4 * t - 1) / 2;
  dw[1] = (9 * t2 - 10 * t) / 2;
  dw[2] = (-9 * t2 + 8 * t + 1) / 2;
  dw[3] = (3 * t2 - 2 * t) / 2;
  d2w[0] = -3 * t + 2;
  d2w[1] = 9 * t - 5;
  d2w[2] = -9 * t + 4;
  d2w[3] = 3 * t - 1;
}

export class GridField implements Field {
  readonly kind = 'bicubic' as const;
  readonly spacing: number;
  readonly periodic: boolean;
  readonly wrapX: boolean;
  readonly wrapY: boolean;
  private readonly w: number;
  private readonly h: number;
  private readonly v: Float32Array | Float64Array;
  private readonly t: number[];
  private readonly det: number;
  // ∂(u, v)/∂(x, y)
  private readonly ux: number;
  private readonly uy: number;
  private readonly vx: number;
  private readonly vy: number;
  private readonly wx = new Float64Array(4);
  private readonly dwx = new Float64Array(4);
  private readonly d2wx = new Float64Array(4);
  private readonly wy = new Float64Array(4);
  private readonly dwy = new Float64Array(4);
  private readonly d2wy = new Float64Array(4);
  private readonly s = new Float64Array(16);

  constructor(grid: Grid, wrapX: boolean, wrapY: boolean) {
    this.w = grid.width;
    this.h = grid.height;
    this.v = grid.values;
    this.t = [...grid.transform];
    this.wrapX = wrapX;
    this.wrapY = wrapY;
    this.periodic = wrapX || wrapY;
    const [, a, b, , c, d] = this.t;
    this.det = a * d - b * c;
    if (!(Math.abs(this.det) > 0)) throw new RangeError('grid transform is singular');
    this.ux = d / this.det; this.uy = -b / this.det;
    this.vx = -c / this.det; this.vy = a / this.det;
    const cs = grid.cellSize();
    this.spacing = Math.sqrt(cs[0] * cs[1]);
  }

  /** Continuous cell coordinates (col, row) of a map point; cell centres sit at integers. */
  toCell(x: number, y: number): [number, number] {
    const dx = x - this.t[0], dy = y - this.t[3];
    return [this.ux * dx + this.uy * dy - 0.5, this.vx * dx + this.vy * dy - 0.5];
  }

  /** Map point of continuous cell coordinates. */
  toMap(u: number, v: number): [number, number] {
    const t = this.t;
    return [t[0] + (u + 0.5) * t[1] + (v + 0.5) * t[2], t[3] + (u + 0.5) * t[4] + (v + 0.5) * t[5]];
  }

  wrap(x: number, y: number): [number, number] {
    if (!this.periodic) return [x, y];
    let [u, v] = this.toCell(x, y);
    // wrap into [−½, w − ½) so a point keeps the cell it is nearest to
    if (this.wrapX) u = u - this.w * Math.floor((u + 0.5) / this.w);
    if (this.wrapY) v = v - this.h * Math.floor((v + 0.5) / this.h);
    return this.toMap(u, v);
  }

  delta(ax: number, ay: number, bx: number, by: number): [number, number] {
    if (!this.periodic) return [bx - ax, by - ay];
    const [ua, va] = this.toCell(ax, ay), [ub, vb] = this.toCell(bx, by);
    let du = ub - ua, dv = vb - va;
    if (this.wrapX) du -= this.w * Math.round(du / this.w);
    if (this.wrapY) dv -= this.h * Math.round(dv / this.h);
    const t = this.t;
    return [du * t[1] + dv * t[2], du * t[4] + dv * t[5]];
  }

  nearestSample(x: number, y: number): number {
    const [u, v] = this.toCell(x, y);
    let c = Math.round(u), r = Math.round(v);
    if (this.wrapX) c = ((c % this.w) + this.w) % this.w;
    if (this.wrapY) r = ((r % this.h) + this.h) % this.h;
    if (c < 0 || r < 0 || c >= this.w || r >= this.h) return -1;
    const i = r * this.w + c;
    return this.v[i] === this.v[i] ? i : -1;
  }

  /** Sample at integer cell (c, r), wrapping or extrapolating one step beyond a closed edge. */
  private sample(c: number, r: number): number {
    const w = this.w, h = this.h;
    if (c < 0 || c >= w) {
      if (this.wrapX) c = ((c % w) + w) % w;
      else if (c === -1) return 3 * this.sample(0, r) - 3 * this.sample(1, r) + this.sample(2, r);
      else if (c === w) return 3 * this.sample(w - 1, r) - 3 * this.sample(w - 2, r) + this.sample(w - 3, r);
      else return NaN;
    }
    if (r < 0 || r >= h) {
      if (this.wrapY) r = ((r % h) + h) % h;
      else if (r === -1) return 3 * this.sample(c, 0) - 3 * this.sample(c, 1) + this.sample(c, 2);
      else if (r === h) return 3 * this.sample(c, h - 1) - 3 * this.sample(c, h - 2) + this.sample(c, h - 3);
      else return NaN;
    }
    return this.v[r * w + c];
  }

  /** Evaluate in cell coordinates; derivatives with respect to (u, v). */
  evaluateCell(u: number, v: number, out: FieldSample): boolean {
    const w = this.w, h = this.h;
    if (this.wrapX) u -= w * Math.floor(u / w);
    else if (!(u >= 0 && u <= w - 1) || w < 3) return false;
    if (this.wrapY) v -= h * Math.floor(v / h);
    else if (!(v >= 0 && v <= h - 1) || h < 3) return false;
    let i = Math.floor(u), j = Math.floor(v);
    if (!this.wrapX && i >= w - 1) i = w - 2;
    if (!this.wrapY && j >= h - 1) j = h - 2;
    cubicWeights(u - i, this.wx, this.dwx, this.d2wx);
    cubicWeights(v - j, this.wy, this.dwy, this.d2wy);
    const s = this.s, vals = this.v;
    const interior = i >= 1 && j >= 1 && i + 2 < w && j + 2 < h;
    for (let b = 0; b < 4; b++) {
      for (let a = 0; a < 4; a++) {
        const x = interior ? vals[(j + b - 1) * w + i + a - 1] : this.sample(i + a - 1, j + b - 1);
        if (x !== x) return false;
        s[4 * b + a] = x;
      }
    }
    let f = 0, fu = 0, fv = 0, fuu = 0, fuv = 0, fvv = 0;
    const wx = this.wx, dwx = this.dwx, d2wx = this.d2wx, wy = this.wy, dwy = this.dwy, d2wy = this.d2wy;
    for (let b = 0; b < 4; b++) {
      let r0 = 0, r1 = 0, r2 = 0;
      for (let a = 0; a < 4; a++) {
        const x = s[4 * b + a];
        r0 += wx[a] * x; r1 += dwx[a] * x; r2 += d2wx[a] * x;
      }
      f += wy[b] * r0; fu += wy[b] * r1; fuu += wy[b] * r2;
      fv += dwy[b] * r0; fuv += dwy[b] * r1; fvv += d2wy[b] * r0;
    }
    out[0] = f; out[1] = fu; out[2] = fv; out[3] = fuu; out[4] = fuv; out[5] = fvv;
    return true;
  }

  evaluate(x: number, y: number, out: FieldSample): boolean {
    const [u, v] = this.toCell(x, y);
    if (!this.evaluateCell(u, v, out)) return false;
    const fu = out[1], fv = out[2], fuu = out[3], fuv = out[4], fvv = out[5];
    const ux = this.ux, uy = this.uy, vx = this.vx, vy = this.vy;
    out[1] = fu * ux + fv * vx;
    out[2] = fu * uy + fv * vy;
    out[3] = fuu * ux * ux + 2 * fuv * ux * vx + fvv * vx * vx;
    out[4] = fuu * ux * uy + fuv * (ux * vy + uy * vx) + fvv * vx * vy;
    out[5] = fuu * uy * uy + 2 * fuv * uy * vy + fvv * vy * vy;
    return true;
  }
}

/** Wendland's compactly supported C² weight, r = distance / radius. */
function wendland(r: number): number {
  if (r >= 1) return 0;
  const a = 1 - r;
  return a * a * a * a * (4 * r + 1);
}

export interface MeshFieldOptions {
  /** Polynomial degree of the local fit: 2 (quadratic) or 3 (cubic); default 3. */
  degree?: 2 | 3;
  /** Mean number of samples inside the fitting radius; default 30 (cubic) or 18 (quadratic). */
  neighbours?: number;
}

/** Radius factors the scattered-sample fit tries in turn where samples are sparse. */
const WIDENINGS = [1, 1.5, 2];

export class MeshField implements Field {
  readonly kind = 'mls' as const;
  readonly spacing: number;
  readonly periodic = false;
  readonly radius: number;
  readonly degree: 2 | 3;
  private readonly mesh: Mesh;
  private readonly terms: number;
  private readonly minCount: number;
  // bucket index
  private readonly bx0: number;
  private readonly by0: number;
  private readonly nbx: number;
  private readonly nby: number;
  private readonly bucketStart: Uint32Array;
  private readonly bucketItems: Uint32Array;
  // hull for inside tests (counter-clockwise after construction)
  private readonly hx: Float64Array;
  private readonly hy: Float64Array;
  private readonly A: Float64Array;
  private readonly rhs: Float64Array;
  private readonly phi: Float64Array;

  constructor(mesh: Mesh, opts: MeshFieldOptions = {}) {
    this.mesh = mesh;
    this.degree = opts.degree ?? 3;
    this.terms = this.degree === 3 ? 10 : 6;
    // more samples than unknowns, with a margin; the solver refuses a degenerate set anyway
    this.minCount = this.terms + 2;
    const n = mesh.size;
    // hull polygon and its area
    const H = mesh.hull.length;
    let hx = Float64Array.from(mesh.hull, (i) => mesh.x[i]);
    let hy = Float64Array.from(mesh.hull, (i) => mesh.y[i]);
    let area2 = 0;
    for (let k = 0; k < H; k++) {
      const k1 = (k + 1) % H;
      area2 += hx[k] * hy[k1] - hx[k1] * hy[k];
    }
    if (area2 < 0) { hx = hx.reverse(); hy = hy.reverse(); area2 = -area2; }
    this.hx = hx; this.hy = hy;
    const area = area2 / 2;
    this.spacing = Math.sqrt(area / n);
    const K = opts.neighbours ?? (this.degree === 3 ? 30 : 18);
    this.radius = Math.sqrt((K * area) / (Math.PI * n));
    // buckets of side = radius
    let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
    for (let i = 0; i < n; i++) {
      x0 = Math.min(x0, mesh.x[i]); x1 = Math.max(x1, mesh.x[i]);
      y0 = Math.min(y0, mesh.y[i]); y1 = Math.max(y1, mesh.y[i]);
    }
    const R = this.radius;
    this.bx0 = x0; this.by0 = y0;
    this.nbx = Math.max(1, Math.floor((x1 - x0) / R) + 1);
    this.nby = Math.max(1, Math.floor((y1 - y0) / R) + 1);
    const nb = this.nbx * this.nby;
    const count = new Uint32Array(nb + 1);
    const bucketOf = new Uint32Array(n);
    for (let i = 0; i < n; i++) {
      const b = this.bucket(mesh.x[i], mesh.y[i]);
      bucketOf[i] = b;
      count[b + 1]++;
    }
    for (let b = 0; b < nb; b++) count[b + 1] += count[b];
    this.bucketStart = count.slice();
    this.bucketItems = new Uint32Array(n);
    const fill = count.slice(0, nb);
    for (let i = 0; i < n; i++) this.bucketItems[fill[bucketOf[i]]++] = i;
    this.A = new Float64Array(this.terms * this.terms);
    this.rhs = new Float64Array(this.terms);
    this.phi = new Float64Array(this.terms);
  }

  private bucket(x: number, y: number): number {
    const bx = Math.min(this.nbx - 1, Math.max(0, Math.floor((x - this.bx0) / this.radius)));
    const by = Math.min(this.nby - 1, Math.max(0, Math.floor((y - this.by0) / this.radius)));
    return by * this.nbx + bx;
  }

  /** Inside (or on) the convex hull of the samples. */
  inside(x: number, y: number): boolean {
    const hx = this.hx, hy = this.hy, H = hx.length;
    const tol = 1e-12 * this.spacing * this.spacing;
    for (let k = 0; k < H; k++) {
      const k1 = k + 1 === H ? 0 : k + 1;
      const cross = (hx[k1] - hx[k]) * (y - hy[k]) - (hy[k1] - hy[k]) * (x - hx[k]);
      if (cross < -tol) return false;
    }
    return true;
  }

  wrap(x: number, y: number): [number, number] {
    return [x, y];
  }

  delta(ax: number, ay: number, bx: number, by: number): [number, number] {
    return [bx - ax, by - ay];
  }

  nearestSample(x: number, y: number): number {
    const m = this.mesh, R = this.radius;
    const bxc = Math.floor((x - this.bx0) / R), byc = Math.floor((y - this.by0) / R);
    let best = -1, bestD = Infinity;
    for (let by = Math.max(0, byc - 1); by <= Math.min(this.nby - 1, byc + 1); by++) {
      for (let bx = Math.max(0, bxc - 1); bx <= Math.min(this.nbx - 1, bxc + 1); bx++) {
        const b = by * this.nbx + bx;
        for (let k = this.bucketStart[b]; k < this.bucketStart[b + 1]; k++) {
          const i = this.bucketItems[k];
          const d = Math.hypot(m.x[i] - x, m.y[i] - y);
          if (d < bestD) { bestD = d; best = i; }
        }
      }
    }
    return bestD <= R ? best : -1;
  }

  evaluate(x: number, y: number, out: FieldSample): boolean {
    if (!this.inside(x, y)) return false;
    // where the samples are sparse, the fit widens its radius (×1.5, then ×2) before giving up
    for (const widen of WIDENINGS) if (this.fitAt(x, y, this.radius * widen, out)) return true;
    return false;
  }

  /** The local polynomial fit at (x, y) over the samples within radius R; false with too few samples or a singular system. */
  private fitAt(x: number, y: number, R: number, out: FieldSample): boolean {
    const m = this.mesh, T = this.terms;
    const A = this.A, rhs = this.rhs, phi = this.phi;
    A.fill(0); rhs.fill(0);
    const reach = Math.ceil(R / this.radius);
    const bxc = Math.floor((x - this.bx0) / this.radius), byc = Math.floor((y - this.by0) / this.radius);
    let count = 0;
    for (let by = Math.max(0, byc - reach); by <= Math.min(this.nby - 1, byc + reach); by++) {
      for (let bx = Math.max(0, bxc - reach); bx <= Math.min(this.nbx - 1, bxc + reach); bx++) {
        const b = by * this.nbx + bx;
        for (let k = this.bucketStart[b]; k < this.bucketStart[b + 1]; k++) {
          const i = this.bucketItems[k];
          const xi = (m.x[i] - x) / R, eta = (m.y[i] - y) / R;
          const r = Math.sqrt(xi * xi + eta * eta);
          if (r >= 1) continue;
          const wgt = wendland(r);
          count++;
          phi[0] = 1; phi[1] = xi; phi[2] = eta; phi[3] = xi * xi; phi[4] = xi * eta; phi[5] = eta * eta;
          if (T === 10) { phi[6] = xi * xi * xi; phi[7] = xi * xi * eta; phi[8] = xi * eta * eta; phi[9] = eta * eta * eta; }
          const z = m.values[i];
          for (let p = 0; p < T; p++) {
            const wp = wgt * phi[p];
            rhs[p] += wp * z;
            for (let q = p; q < T; q++) A[p * T + q] += wp * phi[q];
          }
        }
      }
    }
    if (count < this.minCount) return false;
    if (!choleskySolve(A, rhs, T)) return false;
    out[0] = rhs[0];
    out[1] = rhs[1] / R;
    out[2] = rhs[2] / R;
    out[3] = (2 * rhs[3]) / (R * R);
    out[4] = rhs[4] / (R * R);
    out[5] = (2 * rhs[5]) / (R * R);
    return true;
  }
}

/**
 * Solve A·c = b in place (b ← c) for a symmetric positive-definite A given by its upper triangle
 * (row-major, n×n). False when A is not numerically positive definite.
 */
function choleskySolve(A: Float64Array, b: Float64Array, n: number): boolean {
  // A = Lᵀ L with L upper-triangular stored in the upper triangle of A
  let maxDiag = 0;
  for (let i = 0; i < n; i++) maxDiag = Math.max(maxDiag, A[i * n + i]);
  const eps = 1e-12 * maxDiag;
  for (let i = 0; i < n; i++) {
    let d = A[i * n + i];
    for (let k = 0; k < i; k++) d -= A[k * n + i] * A[k * n + i];
    if (!(d > eps)) return false;
    d = Math.sqrt(d);
    A[i * n + i] = d;
    for (let j = i + 1; j < n; j++) {
      let s = A[i * n + j];
      for (let k = 0; k < i; k++) s -= A[k * n + i] * A[k * n + j];
      A[i * n + j] = s / d;
    }
  }
  // forward: Lᵀ y = b
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= A[k * n + i] * b[k];
    b[i] = s / A[i * n + i];
  }
  // back: L c = y
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= A[i * n + k] * b[k];
    b[i] = s / A[i * n + i];
  }
  return true;
}

/** The fit of a surface: bicubic on grids (wrapping as the boundary says), moving least squares on meshes. */
export function fieldFor(surface: Grid | Mesh, wrapX = false, wrapY = false, meshOpts: MeshFieldOptions = {}): Field {
  return surface.kind === 'grid' ? new GridField(surface, wrapX, wrapY) : new MeshField(surface, meshOpts);
}
