/**
 * A smooth fit of a 3-D grid (src/surface/grid3.ts), evaluated anywhere with its gradient and
 * Hessian: the tensor product, along x, y and z, of piecewise cubic Hermite interpolation whose
 * slopes at the lattice points are the fourth-order central differences
 * m_i = (f_{i−2} − 8f_{i−1} + 8f_{i+1} − f_{i+2}) / 12.
 *
 * Those slopes are exact for polynomials up to degree 4, and a cubic Hermite piece is fixed by its
 * end values and slopes, so along each axis the fit reproduces every cubic exactly and the tensor
 * product reproduces every tricubic polynomial (x^a y^b z^c, a, b, c ≤ 3). It passes through the
 * samples, is C¹ (value and gradient continuous; the Hessian jumps across lattice planes, as any
 * C¹ piecewise cubic's does) and accurate to O(h⁴). Value, gradient and Hessian are the exact value
 * and derivatives of one piecewise polynomial, so they are consistent with each other. Each
 * evaluation reads a 6 × 6 × 6 block of samples around the point.
 *
 * On a closed axis the stencil's samples beyond the edge are the cubic through the four samples
 * nearest the edge, extrapolated one or two steps (so cubics are still reproduced up to the edge);
 * such an axis needs at least 4 samples. On a periodic axis the stencil wraps. A stencil touching
 * nodata has no fit. Derivatives are with respect to the grid's coordinates x, y, z.
 */
import type { Grid3 } from '../surface/grid3.js';

/**
 * Values written by evaluate: f, ∂f/∂x, ∂f/∂y, ∂f/∂z, then the Hessian's upper triangle
 * ∂²f/∂x², ∂²f/∂x∂y, ∂²f/∂x∂z, ∂²f/∂y², ∂²f/∂y∂z, ∂²f/∂z².
 */
export type Field3Sample = Float64Array;

export function newSample3(): Field3Sample {
  return new Float64Array(10);
}

/**
 * Weights of the six samples at offsets −2 … 3 for the value, first and second derivative at
 * t ∈ [0, 1] of the cubic Hermite piece between offsets 0 and 1 with fourth-order slopes.
 */
export function hermite4Weights(t: number, w: Float64Array, dw: Float64Array, d2w: Float64Array): void {
  const t2 = t * t, t3 = t2 * t;
  // Hermite basis: h00, h10 (slope at 0), h01, h11 (slope at 1) and their derivatives
  const h00 = 2 * t3 - 3 * t2 + 1, h10 = t3 - 2 * t2 + t, h01 = -2 * t3 + 3 * t2, h11 = t3 - t2;
  const d00 = 6 * t2 - 6 * t, d10 = 3 * t2 - 4 * t + 1, d01 = -6 * t2 + 6 * t, d11 = 3 * t2 - 2 * t;
  const e00 = 12 * t - 6, e10 = 6 * t - 4, e01 = -12 * t + 6, e11 = 6 * t - 2;
  // m0 = (f₋₂ − 8f₋₁ + 8f₁ − f₂)/12, m1 = (f₋₁ − 8f₀ + 8f₂ − f₃)/12
  const put = (o: Float64Array, a00: number, a10: number, a01: number, a11: number): void => {
    o[0] = a10 / 12;
    o[1] = (-8 * a10 + a11) / 12;
    o[2] = a00 - (8 * a11) / 12;
    o[3] = (8 * a10) / 12 + a01;
    o[4] = (-a10 + 8 * a11) / 12;
    o[5] = -a11 / 12;
  };
  put(w, h00, h10, h01, h11);
  put(dw, d00, d10, d01, d11);
  put(d2w, e00, e10, e01, e11);
}

/** The cubic through samples 0…3 evaluated at −1 and −2 (Lagrange coefficients). */
const EXTRAP_1 = [4, -6, 4, -1];
const EXTRAP_2 = [10, -20, 15, -4];

/** One axis of the fit: for a coordinate, the six sample indices and their folded weights. */
class Axis {
  readonly n: number;
  readonly wrap: boolean;
  readonly idx = new Int32Array(6);
  readonly w = new Float64Array(6);
  readonly dw = new Float64Array(6);
  readonly d2w = new Float64Array(6);
  private readonly rw = new Float64Array(6);
  private readonly rdw = new Float64Array(6);
  private readonly rd2w = new Float64Array(6);

  constructor(n: number, wrap: boolean) {
    this.n = n;
    this.wrap = wrap;
  }

  /** Set the stencil for lattice coordinate u; false outside a closed axis or when it is too short. */
  set(u: number): boolean {
    const n = this.n;
    if (n < 4) return false;
    if (this.wrap) u -= n * Math.floor(u / n);
    else if (!(u >= 0 && u <= n - 1)) {
      // a point on the edge, off by rounding in its map coordinate, is on the edge
      if (u < 0 && u > -1e-9) u = 0;
      else if (u > n - 1 && u < n - 1 + 1e-9) u = n - 1;
      else return false;
    }
    let i = Math.floor(u);
    if (i >= n - 1 && !this.wrap) i = n - 2;
    hermite4Weights(u - i, this.rw, this.rdw, this.rd2w);
    const base = i - 2;
    if (this.wrap) {
      for (let p = 0; p < 6; p++) {
        let q = base + p;
        q -= n * Math.floor(q / n);
        this.idx[p] = q;
        this.w[p] = this.rw[p]; this.dw[p] = this.rdw[p]; this.d2w[p] = this.rd2w[p];
      }
      return true;
    }
    // closed: positions beyond an edge fold onto the four samples nearest to it (see EXTRAP_*)
    this.w.fill(0); this.dw.fill(0); this.d2w.fill(0);
    for (let p = 0; p < 6; p++) {
      const q = base + p;
      if (q >= 0 && q < n) {
        this.w[p] += this.rw[p]; this.dw[p] += this.rdw[p]; this.d2w[p] += this.rd2w[p];
        continue;
      }
      const c = q === -1 || q === n ? EXTRAP_1 : EXTRAP_2;
      for (let r = 0; r < 4; r++) {
        // target sample r steps in from the edge, at window position target − base
        const target = q < 0 ? r : n - 1 - r;
        const slot = target - base;
        this.w[slot] += c[r] * this.rw[p]; this.dw[slot] += c[r] * this.rdw[p]; this.d2w[slot] += c[r] * this.rd2w[p];
      }
    }
    // slots outside the grid carry no weight now; point them at a valid sample
    for (let p = 0; p < 6; p++) {
      const q = base + p;
      this.idx[p] = q < 0 ? 0 : q >= n ? n - 1 : q;
    }
    return true;
  }
}

export class GridField3 {
  readonly kind = 'tricubic' as const;
  /** Geometric mean of the three spacings, in map units. */
  readonly spacing: number;
  readonly periodic: boolean;
  readonly wrap: readonly [boolean, boolean, boolean];
  private readonly grid: Grid3;
  private readonly ax: Axis;
  private readonly ay: Axis;
  private readonly az: Axis;
  private readonly period: [number, number, number];

  constructor(grid: Grid3, wrap: readonly [boolean, boolean, boolean] = [false, false, false]) {
    this.grid = grid;
    this.wrap = wrap;
    this.periodic = wrap[0] || wrap[1] || wrap[2];
    this.ax = new Axis(grid.nx, wrap[0]);
    this.ay = new Axis(grid.ny, wrap[1]);
    this.az = new Axis(grid.nz, wrap[2]);
    const [sx, sy, sz] = grid.spacing;
    this.spacing = Math.cbrt(sx * sy * sz);
    this.period = [grid.nx * sx, grid.ny * sy, grid.nz * sz];
  }

  /** Evaluate at (x, y, z); false where there is no fit (outside a closed axis, nodata in the stencil). */
  evaluate(x: number, y: number, z: number, out: Field3Sample): boolean {
    const g = this.grid;
    const [ox, oy, oz] = g.origin, [sx, sy, sz] = g.spacing;
    const ax = this.ax, ay = this.ay, az = this.az;
    if (!ax.set((x - ox) / sx) || !ay.set((y - oy) / sy) || !az.set((z - oz) / sz)) return false;
    const v = g.values, nx = g.nx, nxy = nx * g.ny;
    let f = 0, fx = 0, fy = 0, fz = 0, fxx = 0, fxy = 0, fxz = 0, fyy = 0, fyz = 0, fzz = 0;
    for (let c = 0; c < 6; c++) {
      const wz = az.w[c], dwz = az.dw[c], d2wz = az.d2w[c];
      if (wz === 0 && dwz === 0 && d2wz === 0) continue;
      const kOff = az.idx[c] * nxy;
      // per z-slab: value, ∂x, ∂y, ∂xx, ∂xy, ∂yy of the bicubic in (x, y)
      let p0 = 0, px = 0, py = 0, pxx = 0, pxy = 0, pyy = 0;
      for (let b = 0; b < 6; b++) {
        const wy = ay.w[b], dwy = ay.dw[b], d2wy = ay.d2w[b];
        if (wy === 0 && dwy === 0 && d2wy === 0) continue;
        const row = kOff + ay.idx[b] * nx;
        let r0 = 0, r1 = 0, r2 = 0;
        for (let a = 0; a < 6; a++) {
          const wx = ax.w[a], dwx = ax.dw[a], d2wx = ax.d2w[a];
          if (wx === 0 && dwx === 0 && d2wx === 0) continue;
          const s = v[row + ax.idx[a]];
          if (s !== s) return false;
          r0 += wx * s; r1 += dwx * s; r2 += d2wx * s;
        }
        p0 += wy * r0; px += wy * r1; pxx += wy * r2;
        py += dwy * r0; pxy += dwy * r1; pyy += d2wy * r0;
      }
      f += wz * p0; fx += wz * px; fy += wz * py; fxx += wz * pxx; fxy += wz * pxy; fyy += wz * pyy;
      fz += dwz * p0; fxz += dwz * px; fyz += dwz * py; fzz += d2wz * p0;
    }
    out[0] = f;
    out[1] = fx / sx; out[2] = fy / sy; out[3] = fz / sz;
    out[4] = fxx / (sx * sx); out[5] = fxy / (sx * sy); out[6] = fxz / (sx * sz);
    out[7] = fyy / (sy * sy); out[8] = fyz / (sy * sz); out[9] = fzz / (sz * sz);
    return true;
  }

  /** Bring a point into the fundamental domain of the wrapped axes (lattice point i at [−½, n − ½) steps). */
  wrapPoint(x: number, y: number, z: number): [number, number, number] {
    const g = this.grid;
    const p = [x, y, z];
    for (let d = 0; d < 3; d++) {
      if (!this.wrap[d]) continue;
      const u = (p[d] - g.origin[d]) / g.spacing[d];
      const n = d === 0 ? g.nx : d === 1 ? g.ny : g.nz;
      p[d] = g.origin[d] + (u - n * Math.floor((u + 0.5) / n)) * g.spacing[d];
    }
    return [p[0], p[1], p[2]];
  }

  /** Shortest displacement from a to b, honouring the wrapped axes. */
  delta(ax: number, ay: number, az: number, bx: number, by: number, bz: number): [number, number, number] {
    let dx = bx - ax, dy = by - ay, dz = bz - az;
    if (this.wrap[0]) dx -= this.period[0] * Math.round(dx / this.period[0]);
    if (this.wrap[1]) dy -= this.period[1] * Math.round(dy / this.period[1]);
    if (this.wrap[2]) dz -= this.period[2] * Math.round(dz / this.period[2]);
    return [dx, dy, dz];
  }

  /** Distance from a to b, honouring the wrapped axes. */
  distance(ax: number, ay: number, az: number, bx: number, by: number, bz: number): number {
    const [dx, dy, dz] = this.delta(ax, ay, az, bx, by, bz);
    return Math.sqrt(dx * dx + dy * dy + dz * dz);
  }

  /** Flat index of the lattice point nearest to (x, y, z), or −1 outside the grid or at nodata. */
  nearestSample(x: number, y: number, z: number): number {
    const g = this.grid;
    const n = [g.nx, g.ny, g.nz], p = [x, y, z], ijk = [0, 0, 0];
    for (let d = 0; d < 3; d++) {
      let i = Math.round((p[d] - g.origin[d]) / g.spacing[d]);
      if (this.wrap[d]) i = ((i % n[d]) + n[d]) % n[d];
      if (i < 0 || i >= n[d]) return -1;
      ijk[d] = i;
    }
    const k = g.index(ijk[0], ijk[1], ijk[2]);
    return g.values[k] === g.values[k] ? k : -1;
  }
}
