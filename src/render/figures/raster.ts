/**
 * The map frame and display rasters. Plot coordinates are grid units with the origin at the
 * top-left corner of cell (0, 0): cell (c, r) covers [c, c+1] × [r, r+1] and its centre is at
 * (c + 0.5, r + 0.5). Map coordinates reach plot coordinates through the inverse of the grid's
 * affine geotransform. Large grids are shown downsampled by an integer block factor.
 */
import type { GeoTransform } from '../../surface/grid.js';

export interface Frame {
  /** Grid size in cells. */
  width: number;
  height: number;
  /** Geotransform of the grid (cell corners). */
  transform: GeoTransform;
  /** Display block size: one display pixel covers factor × factor cells. */
  factor: number;
  /** Display raster size. */
  dw: number;
  dh: number;
}

/** The smallest integer block factor that brings the longer side down to at most maxSide. */
export function blockFactor(width: number, height: number, maxSide: number): number {
  return Math.max(1, Math.ceil(Math.max(width, height) / Math.max(1, maxSide)));
}

export function makeFrame(width: number, height: number, transform: GeoTransform, maxSide: number): Frame {
  const factor = blockFactor(width, height, maxSide);
  return { width, height, transform, factor, dw: Math.ceil(width / factor), dh: Math.ceil(height / factor) };
}

/** Plot coordinates of the centre of cell (col, row). */
export function cellCentre(col: number, row: number): [number, number] {
  return [col + 0.5, row + 0.5];
}

/** Plot coordinates (fractional col, row from the grid's corner) of a map point: the inverse affine transform. */
export function mapToPlot(t: GeoTransform, x: number, y: number): [number, number] {
  const det = t[1] * t[5] - t[2] * t[4];
  const dx = x - t[0], dy = y - t[3];
  return [(t[5] * dx - t[2] * dy) / det, (-t[4] * dx + t[1] * dy) / det];
}

/** Map coordinates of a plot point. */
export function plotToMap(t: GeoTransform, u: number, v: number): [number, number] {
  return [t[0] + u * t[1] + v * t[2], t[3] + u * t[4] + v * t[5]];
}

/** True when the transform has no rotation terms: map axes run along columns and rows. */
export function northUp(t: GeoTransform): boolean {
  return t[2] === 0 && t[4] === 0;
}

export interface BlockStats {
  dw: number;
  dh: number;
  factor: number;
  /** Mean, minimum and maximum of the valid cells of each block; NaN where a block has none. */
  mean: Float32Array;
  min: Float32Array;
  max: Float32Array;
  /** Valid cells in each block. */
  count: Uint32Array;
}

/** Block statistics of a row-major grid (NaN = nodata) over factor × factor blocks; edge blocks may be partial. */
export function blockStats(values: ArrayLike<number>, width: number, height: number, factor: number): BlockStats {
  const dw = Math.ceil(width / factor), dh = Math.ceil(height / factor), n = dw * dh;
  const sum = new Float64Array(n), count = new Uint32Array(n);
  const min = new Float32Array(n).fill(Infinity), max = new Float32Array(n).fill(-Infinity);
  for (let r = 0; r < height; r++) {
    const base = Math.floor(r / factor) * dw, row = r * width;
    for (let c = 0; c < width; c++) {
      const v = values[row + c];
      if (v !== v) continue;
      const k = base + ((c / factor) | 0);
      sum[k] += v;
      count[k]++;
      if (v < min[k]) min[k] = v;
      if (v > max[k]) max[k] = v;
    }
  }
  const mean = new Float32Array(n);
  for (let k = 0; k < n; k++) {
    if (count[k] === 0) { mean[k] = NaN; min[k] = NaN; max[k] = NaN; } else mean[k] = sum[k] / count[k];
  }
  return { dw, dh, factor, mean, min, max, count };
}

/** The value of the cell at the centre of each block (labels and other categories, which cannot be averaged). */
export function blockCentreSample<T extends ArrayLike<number>>(values: T, width: number, height: number, factor: number): Int32Array {
  const dw = Math.ceil(width / factor), dh = Math.ceil(height / factor);
  const out = new Int32Array(dw * dh);
  for (let j = 0; j < dh; j++) {
    const r = Math.min(height - 1, j * factor + (factor >> 1));
    for (let i = 0; i < dw; i++) {
      const c = Math.min(width - 1, i * factor + (factor >> 1));
      out[j * dw + i] = values[r * width + c];
    }
  }
  return out;
}

/** Smallest and largest finite value. */
export function finiteRange(values: ArrayLike<number>): [number, number] {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return lo <= hi ? [lo, hi] : [NaN, NaN];
}

/**
 * Scattered samples shown on a regular display grid: the value at each display cell centre is the
 * linear interpolation on the Delaunay triangle containing it (NaN outside the hull).
 */
export function rasterizeTriangles(
  x: ArrayLike<number>, y: ArrayLike<number>, values: ArrayLike<number>, triangles: ArrayLike<number>, maxSide: number,
): { width: number; height: number; values: Float32Array; transform: GeoTransform } {
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] < x0) x0 = x[i];
    if (x[i] > x1) x1 = x[i];
    if (y[i] < y0) y0 = y[i];
    if (y[i] > y1) y1 = y[i];
  }
  const span = Math.max(x1 - x0, y1 - y0) || 1;
  const cs = span / maxSide;
  const width = Math.max(1, Math.ceil((x1 - x0) / cs)), height = Math.max(1, Math.ceil((y1 - y0) / cs));
  const transform: GeoTransform = [x0, cs, 0, y1, 0, -cs];
  const out = new Float32Array(width * height).fill(NaN);
  for (let t = 0; t + 2 < triangles.length; t += 3) {
    const a = triangles[t], b = triangles[t + 1], c = triangles[t + 2];
    const ax = (x[a] - x0) / cs, ay = (y1 - y[a]) / cs;
    const bx = (x[b] - x0) / cs, by = (y1 - y[b]) / cs;
    const cx = (x[c] - x0) / cs, cy = (y1 - y[c]) / cs;
    const det = (by - cy) * (ax - cx) + (cx - bx) * (ay - cy);
    if (det === 0) continue;
    const c0 = Math.max(0, Math.floor(Math.min(ax, bx, cx) - 0.5)), c1 = Math.min(width - 1, Math.ceil(Math.max(ax, bx, cx) - 0.5));
    const r0 = Math.max(0, Math.floor(Math.min(ay, by, cy) - 0.5)), r1 = Math.min(height - 1, Math.ceil(Math.max(ay, by, cy) - 0.5));
    for (let r = r0; r <= r1; r++) {
      const py = r + 0.5;
      for (let col = c0; col <= c1; col++) {
        const px = col + 0.5;
        const l1 = ((by - cy) * (px - cx) + (cx - bx) * (py - cy)) / det;
        const l2 = ((cy - ay) * (px - cx) + (ax - cx) * (py - cy)) / det;
        const l3 = 1 - l1 - l2;
        const eps = -1e-9;
        if (l1 < eps || l2 < eps || l3 < eps) continue;
        out[r * width + col] = l1 * values[a] + l2 * values[b] + l3 * values[c];
      }
    }
  }
  return { width, height, values: out, transform };
}
