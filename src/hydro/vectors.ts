/**
 * Depression outlines as GeoJSON polygons, traced with d3-contour on each depression's cell
 * mask and georeferenced with the grid's transform.
 *
 * d3-contour runs marching squares with samples at cell centres, so at an isolated corner it
 * cuts diagonally across the cell. Every segment it returns joins two edge midpoints of one
 * marching square, whose centre is a cell corner; putting that corner back between the two
 * ends of each diagonal segment gives the exact outline along cell edges (the polygon area is
 * then exactly the cells' area — a check the tests make).
 */
import { contours, type Contours } from 'd3-contour';
import type { Grid } from '../surface/grid.js';
import type { Hierarchy } from './hierarchy.js';
import { sortOrder } from '../morse/order.js';

export type Ring = [number, number][];
export type PolygonCoords = Ring[];

export interface DepressionOutline {
  id: number;
  /** Polygons (exterior ring first, then holes), in map coordinates, exterior counter-clockwise. */
  polygons: PolygonCoords[];
  /** True when the outline was left out to stay within the tracing budget (polygons is then empty). */
  omitted?: boolean;
}

export interface OutlineOptions {
  /**
   * Most grid cells the tracing may scan, summed over the depressions' bounding boxes (default:
   * 8 × the grid's cells). Top-level and leaf depressions (whose regions do not overlap) are
   * always traced; nested merged depressions — each one scans again the cells of the ones inside
   * it, which in a deep hierarchy adds up fast — are traced largest volume first while the budget
   * lasts.
   */
  budget?: number;
}

/**
 * Bounding boxes [c0, r0, c1, r1] (inclusive) of the cells of each label 1..count (labels ≤ 0
 * are none); a label without cells gets c1 = r1 = −1.
 */
export function labelBoxes(labels: Int32Array, width: number, count: number): Int32Array {
  const box = new Int32Array(4 * (count + 1));
  for (let d = 0; d <= count; d++) { box[4 * d] = 0x7fffffff; box[4 * d + 1] = 0x7fffffff; box[4 * d + 2] = -1; box[4 * d + 3] = -1; }
  const height = labels.length / width;
  for (let r = 0, i = 0; r < height; r++) {
    for (let c = 0; c < width; c++, i++) {
      const d = labels[i];
      if (d <= 0) continue;
      const b = 4 * d;
      if (c < box[b]) box[b] = c;
      if (r < box[b + 1]) box[b + 1] = r;
      if (c > box[b + 2]) box[b + 2] = c;
      if (r > box[b + 3]) box[b + 3] = r;
    }
  }
  return box;
}

/** Cells in the bounding box of label `d` (0 when it has none). */
export function boxCells(box: Int32Array, d: number): number {
  const b = 4 * d;
  return box[b + 2] < 0 ? 0 : (box[b + 2] - box[b] + 1) * (box[b + 3] - box[b + 1] + 1);
}

/** A ring as flat map coordinates x0, y0, x1, y1, …, closed (the last vertex repeats the first). */
export type FlatRing = Float64Array;
/** A polygon as flat rings: the exterior first, then the holes. */
export type FlatPolygon = FlatRing[];

/**
 * The polygons of a cell mask (1 inside) of bw × bh cells whose first cell is (c0, r0), traced
 * with `gen` (d3-contour, no smoothing, threshold 0.5) and put on the map with `transform`, as
 * flat rings (one typed array a ring, no object per vertex beyond d3-contour's own).
 */
export function maskRings(gen: Contours, mask: Uint8Array, bw: number, bh: number, c0: number, r0: number, transform: readonly number[]): FlatPolygon[] {
  const [x0, dx, rx, y0, ry, dy] = transform;
  const geom = gen.size([bw, bh]).contour(mask as unknown as number[], 0.5);
  const polygons: FlatPolygon[] = [];
  for (const poly of geom.coordinates) {
    const rings: FlatRing[] = [];
    for (let k = 0; k < poly.length; k++) {
      const corner = cornerRingFlat(poly[k]);
      const L = corner.length >> 1;
      const mapped = new Float64Array(2 * L + 2);
      for (let v = 0; v < L; v++) {
        const C = c0 + corner[2 * v], Rr = r0 + corner[2 * v + 1];
        mapped[2 * v] = x0 + C * dx + Rr * rx;
        mapped[2 * v + 1] = y0 + C * ry + Rr * dy;
      }
      const a = flatRingArea(mapped, L);
      // exterior counter-clockwise, holes clockwise (RFC 7946 §3.1.6)
      if ((k === 0 && a < 0) || (k > 0 && a > 0)) {
        for (let i = 0, j = L - 1; i < j; i++, j--) {
          const tx = mapped[2 * i], ty = mapped[2 * i + 1];
          mapped[2 * i] = mapped[2 * j]; mapped[2 * i + 1] = mapped[2 * j + 1];
          mapped[2 * j] = tx; mapped[2 * j + 1] = ty;
        }
      }
      mapped[2 * L] = mapped[0];
      mapped[2 * L + 1] = mapped[1];
      rings.push(mapped);
    }
    polygons.push(rings);
  }
  return polygons;
}

/** The same as [x, y] pairs (for callers that want GeoJSON-shaped coordinates). */
export function maskPolygons(gen: Contours, mask: Uint8Array, bw: number, bh: number, c0: number, r0: number, transform: readonly number[]): PolygonCoords[] {
  return maskRings(gen, mask, bw, bh, c0, r0, transform).map(flatToPairs);
}

/** Flat rings as [x, y] pairs. */
export function flatToPairs(poly: FlatPolygon): PolygonCoords {
  return poly.map((r) => {
    const ring: Ring = [];
    for (let i = 0; i + 1 < r.length; i += 2) ring.push([r[i], r[i + 1]]);
    return ring;
  });
}

/** Signed area of the first `n` vertices of a flat ring (shoelace, the same sums as ringArea). */
function flatRingArea(r: Float64Array, n: number): number {
  let s = 0;
  for (let i = 0, j = n - 1; i < n; j = i++) s += (r[2 * j] - r[2 * i]) * (r[2 * j + 1] + r[2 * i + 1]);
  return s / 2;
}

/** cornerRing on flat coordinates: the ring's cell-corner vertices (not closed), collinear ones dropped. */
export function cornerRingFlat(ring: number[][]): Float64Array {
  const n = ring.length;
  let cur = new Float64Array(4 * n), out = new Float64Array(4 * n);
  let L = 0;
  for (let i = 0; i + 1 < n; i++) {
    const x1 = ring[i][0], y1 = ring[i][1], x2 = ring[i + 1][0], y2 = ring[i + 1][1];
    cur[2 * L] = x1; cur[2 * L + 1] = y1; L++;
    if (x1 !== x2 && y1 !== y2) { cur[2 * L] = Number.isInteger(x1) ? x1 : x2; cur[2 * L + 1] = Number.isInteger(y1) ? y1 : y2; L++; }
  }
  // drop collinear vertices (cyclically) until none is left
  for (let changed = true; changed && L > 3;) {
    changed = false;
    let m = 0;
    for (let i = 0; i < L; i++) {
      let ax, ay;
      if (m) { ax = out[2 * m - 2]; ay = out[2 * m - 1]; } else { const q = (i + L - 1) % L; ax = cur[2 * q]; ay = cur[2 * q + 1]; }
      const bx = cur[2 * i], by = cur[2 * i + 1];
      const q = (i + 1) % L, cx = cur[2 * q], cy = cur[2 * q + 1];
      if ((bx - ax) * (cy - by) - (by - ay) * (cx - bx) === 0) { changed = true; continue; }
      out[2 * m] = bx; out[2 * m + 1] = by; m++;
    }
    const t = cur; cur = out; out = t;
    L = m;
  }
  return cur.subarray(0, 2 * L);
}

/** Bounding boxes [c0, r0, c1, r1] (inclusive) of each depression's wet cells, nested ones included. */
export function depressionBoxes(labels: Int32Array, width: number, hier: Hierarchy): Int32Array {
  const R = hier.count + 1;
  const box = labelBoxes(labels, width, hier.count);
  for (let d = 1; d < R; d++) {
    const p = hier.parent[d];
    if (p <= 0) continue;
    const b = 4 * d, q = 4 * p;
    if (box[b + 2] < 0) continue;
    if (box[b] < box[q]) box[q] = box[b];
    if (box[b + 1] < box[q + 1]) box[q + 1] = box[b + 1];
    if (box[b + 2] > box[q + 2]) box[q + 2] = box[b + 2];
    if (box[b + 3] > box[q + 3]) box[q + 3] = box[b + 3];
  }
  return box;
}

/** Signed area of a ring (shoelace), positive when counter-clockwise in (x, y). */
export function ringArea(ring: Ring): number {
  let s = 0;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) s += (ring[j][0] - ring[i][0]) * (ring[j][1] + ring[i][1]);
  return s / 2;
}

/** Turn a d3-contour ring (midpoints of cell edges, closed) into cell-corner vertices without collinear points. */
export function cornerRing(ring: number[][]): Ring {
  const pts: [number, number][] = [];
  for (let i = 0; i + 1 < ring.length; i++) {
    const [x1, y1] = ring[i], [x2, y2] = ring[i + 1];
    pts.push([x1, y1]);
    if (x1 !== x2 && y1 !== y2) pts.push([Number.isInteger(x1) ? x1 : x2, Number.isInteger(y1) ? y1 : y2]);
  }
  // drop collinear vertices (cyclically) until none is left
  let cur = pts;
  for (let changed = true; changed && cur.length > 3;) {
    changed = false;
    const out: [number, number][] = [];
    const L = cur.length;
    for (let i = 0; i < L; i++) {
      const a = out.length ? out[out.length - 1] : cur[(i + L - 1) % L];
      const b = cur[i], c = cur[(i + 1) % L];
      if ((b[0] - a[0]) * (c[1] - b[1]) - (b[1] - a[1]) * (c[0] - b[0]) === 0) { changed = true; continue; }
      out.push(b);
    }
    cur = out;
  }
  return cur;
}

/**
 * Outline of every depression at its spill level (its wet cells, nested depressions included),
 * within a budget of scanned cells (see OutlineOptions), handed to `visit` one depression at a
 * time in id order: its polygons, or null when it was left out by the budget. Nothing is kept
 * between depressions. Returns how many were traced and left out.
 * @param labels innermost depression id per cell (0 none, −1 nodata)
 */
export function traceDepressionOutlines(grid: Grid, labels: Int32Array, hier: Hierarchy, visit: (id: number, polygons: FlatPolygon[] | null) => void, opts: OutlineOptions = {}): { traced: number; omitted: number } {
  const W = grid.width;
  const box = depressionBoxes(labels, W, hier);
  const trace = new Uint8Array(hier.count + 1);
  let budget = opts.budget ?? 8 * labels.length;
  let nNested = 0;
  for (let d = 1; d <= hier.count; d++) {
    const leaf = hier.childStart[d + 1] === hier.childStart[d];
    if (hier.parent[d] === 0 || leaf) { trace[d] = 1; budget -= boxCells(box, d); } else nNested++;
  }
  // nested merged depressions, largest volume first (ties: smaller id), while the budget lasts
  const nested = new Int32Array(nNested), negVolume = new Float64Array(nNested);
  for (let d = 1, q = 0; d <= hier.count; d++) {
    if (trace[d]) continue;
    nested[q] = d;
    negVolume[q++] = 0 - hier.volume[d];
  }
  const byVolume = sortOrder(negVolume);
  for (let q = 0; q < byVolume.length; q++) {
    const d = nested[byVolume[q]];
    const c = boxCells(box, d);
    if (c > budget) continue;
    trace[d] = 1;
    budget -= c;
  }
  const { tin, tout } = hier;
  const gen = contours().smooth(false).thresholds([0.5]);
  let traced = 0, omitted = 0;
  let mask = new Uint8Array(0);
  for (let d = 1; d <= hier.count; d++) {
    const b = 4 * d;
    const c0 = box[b], r0 = box[b + 1], c1 = box[b + 2], r1 = box[b + 3];
    if (!trace[d]) { omitted++; visit(d, null); continue; }
    traced++;
    if (c1 < 0) { visit(d, []); continue; }
    const bw = c1 - c0 + 1, bh = r1 - r0 + 1;
    // one mask buffer, grown when needed (d3-contour reads only its first bw × bh entries)
    if (mask.length < bw * bh) mask = new Uint8Array(Math.max(bw * bh, 2 * mask.length));
    else mask.fill(0, 0, bw * bh);
    const lo = tin[d], hi = tout[d];
    for (let r = 0; r < bh; r++) {
      const row = (r0 + r) * W + c0;
      for (let c = 0; c < bw; c++) {
        const e = labels[row + c];
        if (e > 0 && tin[e] >= lo && tin[e] < hi) mask[r * bw + c] = 1;
      }
    }
    visit(d, maskRings(gen, mask, bw, bh, c0, r0, grid.transform));
  }
  return { traced, omitted };
}

/** Every depression's outline as a list (see traceDepressionOutlines; for a few depressions — the writers stream). */
export function depressionOutlines(grid: Grid, labels: Int32Array, hier: Hierarchy, opts: OutlineOptions = {}): DepressionOutline[] {
  const out: DepressionOutline[] = [];
  traceDepressionOutlines(grid, labels, hier, (id, polygons) => out.push(polygons === null ? { id, polygons: [], omitted: true } : { id, polygons: polygons.map(flatToPairs) }), opts);
  return out;
}
