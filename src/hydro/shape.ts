/**
 * Shape attributes of the depressions' wet areas at their spill levels, as hydrologists report them
 * for nested depressions: perimeter, the axes and orientation of the ellipse with the same second
 * moments, elongation, and the share of the bounding box the wet area fills.
 *
 * Moments: one pass over the cells adds, per innermost depression (the label raster), Σa, Σa·x,
 * Σa·y, Σa·x², Σa·y², Σa·x·y and the bounding box; a merged depression's sums are its children's
 * plus its own layer's, so they are added up the tree. A uniform ellipse with semi-axes A ≥ B has
 * variances A²/4 and B²/4 along its axes, so the equivalent ellipse of a wet area has semi-axes
 * 2√λ₁ and 2√λ₂ from the eigenvalues of its covariance matrix, and its major axis points along the
 * first eigenvector.
 *
 * Perimeter: the length of the shoreline at the spill level, traced by marching squares between the
 * cell centres, with each crossing placed by linear interpolation of the DEM at the spill level —
 * a curve whose length converges to the true shoreline's as the grid is refined (a staircase of
 * cell edges would not: it converges to the taxicab length). In each 2 × 2 block of cells every
 * depression whose wet area holds some but not all four corners gets that block's piece; those are
 * the depressions on the chains from the corners' labels up to the lowest one holding all four.
 *
 * Lengths in the unit areas are in (metres when the CRS says its unit, map units without a CRS). On a geographic grid, positions are taken in metres on a
 * local sinusoidal projection about the grid's centre (east–west distances scaled by the ellipsoid's
 * parallel radius at each row, north–south by the meridian radius): fine for depressions of a few
 * kilometres, an approximation for very large ones (stated in docs/ponds.md).
 */
import type { Grid, GridValues } from '../surface/grid.js';
import { useWorker, onSharedMemory, startPerimeterJob, type ThreadOptions } from '../morse/parallel.js';
import type { Hierarchy } from './hierarchy.js';
import { WGS84_A, WGS84_F } from './areas.js';

export interface DepressionShapes {
  /** Per depression id (entry 0 unused). Lengths in metres (map units without a CRS); orientation in degrees counter-clockwise from east, in (−90, 90]. */
  perimeter: Float64Array;
  majorAxis: Float64Array;
  minorAxis: Float64Array;
  orientation: Float64Array;
  /** Wet area ÷ the area of its bounding box (rows × columns of cells it spans). */
  boxRatio: Float64Array;
}

/** Metres per degree along the parallel and along the meridian at latitude `lat` (degrees), on WGS84. */
function metresPerDegree(lat: number): [number, number] {
  const phi = (lat * Math.PI) / 180, e2 = WGS84_F * (2 - WGS84_F);
  const s = Math.sin(phi), w = Math.sqrt(1 - e2 * s * s);
  const N = WGS84_A / w, M = (WGS84_A * (1 - e2)) / (w * w * w);
  return [(N * Math.cos(phi) * Math.PI) / 180, (M * Math.PI) / 180];
}

/**
 * @param labels innermost depression id per cell (0 dry, −1 nodata): the ponds label raster
 * @param rowArea area of each row's cells (area unit)
 * @param connectivity 8 joins wet cells that meet at a corner (the shoreline passes between the two dry ones)
 */
export function depressionShapes(g: Grid, labels: Int32Array, hier: Hierarchy, rowArea: Float64Array, geographic: boolean, connectivity: number, threads: ThreadOptions = {}): DepressionShapes {
  const W = g.width, Hh = g.height, z = g.values, R = hier.count + 1;
  const t = g.transform;
  // position of cell centres: x = X0[row] + col·DX[row] (+ row terms), y likewise, in map units or local metres
  const c0 = (W - 1) / 2, r0 = (Hh - 1) / 2;
  const sx = new Float64Array(Hh), sy = new Float64Array(Hh);
  // projected: map units times the unit's metres, which the cell area already carries (area = det × unit²)
  const unit = geographic ? 1 : Math.sqrt(rowArea[0] / Math.abs(t[1] * t[5] - t[2] * t[4]));
  for (let r = 0; r < Hh; r++) {
    if (geographic) { const [mx, my] = metresPerDegree(g.y(c0, r)); sx[r] = mx; sy[r] = my; } else { sx[r] = unit; sy[r] = unit; }
  }
  // geographic: x = (lon − lon_c)·mx(row), y = (lat − lat_c)·my(row) — local; projected: map coordinates relative to the centre
  const xc = g.x(c0, r0), yc = g.y(c0, r0);
  const [px, py] = centrePositions(t, sx, sy, xc, yc);

  // --- moments and boxes, per innermost label, then up the tree (children have smaller ids)
  const S = 6;
  const m = new Float64Array(S * R);
  const cmin = new Int32Array(R).fill(W), cmax = new Int32Array(R).fill(-1), rmin = new Int32Array(R).fill(Hh), rmax = new Int32Array(R).fill(-1);
  for (let r = 0, i = 0; r < Hh; r++) {
    const a = rowArea[r];
    for (let c = 0; c < W; c++, i++) {
      const d = labels[i];
      if (d <= 0) continue;
      const x = px(c, r), y = py(c, r), o = S * d;
      m[o] += a; m[o + 1] += a * x; m[o + 2] += a * y; m[o + 3] += a * x * x; m[o + 4] += a * y * y; m[o + 5] += a * x * y;
      if (c < cmin[d]) cmin[d] = c;
      if (c > cmax[d]) cmax[d] = c;
      if (r < rmin[d]) rmin[d] = r;
      if (r > rmax[d]) rmax[d] = r;
    }
  }
  for (let d = 1; d < R; d++) {
    const p = hier.parent[d];
    if (p <= 0) continue;
    for (let k = 0; k < S; k++) m[S * p + k] += m[S * d + k];
    if (cmin[d] < cmin[p]) cmin[p] = cmin[d];
    if (cmax[d] > cmax[p]) cmax[p] = cmax[d];
    if (rmin[d] < rmin[p]) rmin[p] = rmin[d];
    if (rmax[d] > rmax[p]) rmax[p] = rmax[d];
  }
  const cellW = Math.hypot(t[1], t[4]), cellH = Math.hypot(t[2], t[5]);
  const majorAxis = new Float64Array(R), minorAxis = new Float64Array(R), orientation = new Float64Array(R), boxRatio = new Float64Array(R);
  for (let d = 1; d < R; d++) {
    const o = S * d, A = m[o];
    if (!(A > 0)) continue;
    const mx = m[o + 1] / A, my = m[o + 2] / A;
    const vxx = Math.max(0, m[o + 3] / A - mx * mx), vyy = Math.max(0, m[o + 4] / A - my * my), vxy = m[o + 5] / A - mx * my;
    const half = (vxx + vyy) / 2, dif = Math.sqrt(((vxx - vyy) / 2) ** 2 + vxy * vxy);
    const l1 = half + dif, l2 = Math.max(0, half - dif);
    majorAxis[d] = 4 * Math.sqrt(l1);
    minorAxis[d] = 4 * Math.sqrt(l2);
    let ang = (0.5 * Math.atan2(2 * vxy, vxx - vyy) * 180) / Math.PI;
    if (ang <= -90) ang += 180;
    orientation[d] = dif === 0 ? 0 : ang;
    // bounding box in the same units: the rows and columns of cells it spans
    const rm = (rmin[d] + rmax[d]) >> 1;
    const bw = (cmax[d] - cmin[d] + 1) * cellW * sx[rm], bh = (rmax[d] - rmin[d] + 1) * cellH * sy[rm];
    boxRatio[d] = bw > 0 && bh > 0 ? Math.min(1, hier.area[d] / (bw * bh)) : 0;
  }

  // --- perimeter by marching squares at each depression's spill level: the blocks in two halves of
  // rows, on two threads when asked (the halves are added the same way on one thread, so the sums
  // are the same bits either way)
  const task: PerimeterTask = {
    width: W, height: Hh, values: z, labels, tin: hier.tin, tout: hier.tout, parent: hier.parent, spillValue: hier.spillValue,
    transform: Array.from(t), sx, sy, xc, yc, connectivity, row0: 0, row1: 0, count: R,
  };
  const mid = Math.max(0, (Hh - 1) >> 1);
  let second: Float64Array;
  let first: Float64Array;
  if (Hh > 2 && useWorker(threads, W * Hh)) {
    const job = startPerimeterJob({ ...task, values: onSharedMemory(z), labels: onSharedMemory(labels), row0: mid, row1: Hh - 1 });
    try {
      first = perimeterRows({ ...task, row0: 0, row1: mid });
    } catch (e) {
      job.abandon();
      throw e;
    }
    second = job.result();
  } else {
    first = perimeterRows({ ...task, row0: 0, row1: mid });
    second = perimeterRows({ ...task, row0: mid, row1: Hh - 1 });
  }
  const perimeter = new Float64Array(R);
  for (let d = 1; d < R; d++) perimeter[d] = first[d] + second[d];
  return { perimeter, majorAxis, minorAxis, orientation, boxRatio };
}

/** What one thread needs to add up the shoreline lengths of the 2 × 2 blocks whose top row lies in [row0, row1). */
export interface PerimeterTask {
  width: number;
  height: number;
  values: GridValues;
  labels: Int32Array;
  tin: Int32Array;
  tout: Int32Array;
  parent: Int32Array;
  spillValue: Float64Array;
  transform: number[];
  sx: Float64Array;
  sy: Float64Array;
  xc: number;
  yc: number;
  connectivity: number;
  row0: number;
  row1: number;
  /** Depressions + 1 (the length of the result). */
  count: number;
}

/** Shoreline length per depression over the blocks of rows [row0, row1) (see the file's comment). */
export function perimeterRows(task: PerimeterTask): Float64Array {
  const { width: W, height: Hh, values: z, labels, tin, tout, parent, spillValue, transform: t, sx, sy, xc, yc, connectivity } = task;
  const perimeter = new Float64Array(task.count);
  const [px, py] = centrePositions(t, sx, sy, xc, yc);
  // pieces per corner mask (bit k: corner k inside; corners (c, r), (c+1, r), (c+1, r+1), (c, r+1)):
  // pairs of sides joined (side s joins corners s and s+1). Diagonal masks give two pieces: with
  // 8-connectivity the two inside corners are one wet area and the shoreline cuts off the outside
  // corners; otherwise it cuts off the inside ones.
  const PIECES: number[][] = [];
  for (let mask = 0; mask < 16; mask++) {
    const inside = (k: number) => (mask >> k) & 1;
    const sides: number[] = [];
    for (let q = 0; q < 4; q++) if (inside(q) !== inside((q + 1) & 3)) sides.push(q);
    if (sides.length === 2) PIECES.push(sides);
    else if (sides.length === 4) {
      const cutInside = connectivity !== 8;
      const pieces: number[] = [];
      for (let q = 0; q < 4; q++) if ((inside(q) === 1) === cutInside) pieces.push((q + 3) & 3, q);
      PIECES.push(pieces);
    } else PIECES.push([]);
  }
  const cx = new Float64Array(4), cy = new Float64Array(4), cz = new Float64Array(4), cl = new Int32Array(4);
  const ptx = new Float64Array(4), pty = new Float64Array(4);
  for (let r = task.row0; r < task.row1 && r + 1 < Hh; r++) {
    for (let c = 0; c + 1 < W; c++) {
      const i0 = r * W + c;
      const l0 = labels[i0], l1 = labels[i0 + 1], l2 = labels[i0 + W + 1], l3 = labels[i0 + W];
      if (l0 === l1 && l1 === l2 && l2 === l3) continue;
      if (l0 <= 0 && l1 <= 0 && l2 <= 0 && l3 <= 0) continue;
      cl[0] = l0; cl[1] = l1; cl[2] = l2; cl[3] = l3;
      cx[0] = px(c, r); cy[0] = py(c, r); cz[0] = z[i0];
      cx[1] = px(c + 1, r); cy[1] = py(c + 1, r); cz[1] = z[i0 + 1];
      cx[2] = px(c + 1, r + 1); cy[2] = py(c + 1, r + 1); cz[2] = z[i0 + W + 1];
      cx[3] = px(c, r + 1); cy[3] = py(c, r + 1); cz[3] = z[i0 + W];
      // the depressions whose wet area holds some but not all corners: the chains from each corner's
      // label up to the first one holding all four; a chain stops early where it meets an earlier one
      const t0 = l0 > 0 ? tin[l0] : -1, t1 = l1 > 0 ? tin[l1] : -1, t2 = l2 > 0 ? tin[l2] : -1, t3 = l3 > 0 ? tin[l3] : -1;
      for (let k = 0; k < 4; k++) {
        let x = cl[k];
        const earlier = (1 << k) - 1;
        while (x > 0) {
          const a = tin[x], b = tout[x];
          const mask = (a <= t0 && t0 < b ? 1 : 0) | (a <= t1 && t1 < b ? 2 : 0) | (a <= t2 && t2 < b ? 4 : 0) | (a <= t3 && t3 < b ? 8 : 0);
          // x holds an earlier corner: that corner's chain went through x and on up already
          if (mask & earlier || mask === 15) break;
          const pieces = PIECES[mask], h = spillValue[x];
          // crossing points on the sides used, then the pieces' lengths
          let len = 0;
          for (let e = 0; e < pieces.length; e += 2) {
            for (let u = 0; u < 2; u++) {
              const sd = pieces[e + u], p0 = sd, p1 = (sd + 1) & 3;
              const inn = (mask >> p0) & 1 ? p0 : p1, out = inn === p0 ? p1 : p0;
              const zi = cz[inn], zo = cz[out];
              let f = zo > zi ? (h - zi) / (zo - zi) : 0.5;
              if (!(f >= 0)) f = 0; else if (f > 1) f = 1;
              ptx[u] = cx[inn] + f * (cx[out] - cx[inn]);
              pty[u] = cy[inn] + f * (cy[out] - cy[inn]);
            }
            const ddx = ptx[1] - ptx[0], ddy = pty[1] - pty[0];
            len += Math.sqrt(ddx * ddx + ddy * ddy);
          }
          perimeter[x] += len;
          x = parent[x];
        }
      }
    }
  }
  return perimeter;
}

/**
 * Positions of cell centres in the shape attributes' units: map coordinates relative to (xc, yc),
 * scaled per row by sx, sy (the unit's metres on projected grids; metres per degree on geographic ones).
 */
function centrePositions(t: readonly number[], sx: Float64Array, sy: Float64Array, xc: number, yc: number): [(c: number, r: number) => number, (c: number, r: number) => number] {
  return [
    (c, r) => (t[0] + (c + 0.5) * t[1] + (r + 0.5) * t[2] - xc) * sx[r],
    (c, r) => (t[3] + (c + 0.5) * t[4] + (r + 0.5) * t[5] - yc) * sy[r],
  ];
}
