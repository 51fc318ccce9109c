/**
 * Outlines of the ponds (water bodies) after routing, as GeoJSON polygons along cell edges:
 * d3-contour on each body's cell mask within its bounding box, diagonal cuts put back to the
 * cell corner (cornerRing of src/hydro/vectors.ts), georeferenced with the grid's transform.
 * Bodies do not overlap, but their boxes may; the scanning stays within a budget of cells, the
 * largest bodies first, and the rest are left without a polygon (and said so).
 */
import { contours } from 'd3-contour';
import type { Grid } from '../surface/grid.js';
import { labelBoxes, boxCells, maskRings, flatToPairs, type DepressionOutline, type FlatPolygon } from './vectors.js';
import { sortOrder } from '../morse/order.js';

/**
 * The ponds' outlines handed to `visit` one pond at a time in id order: its polygons, or null when
 * its box did not fit in the budget. Returns how many were traced and left out.
 * @param labels body id per cell (0 dry, −1 nodata), ids 1..count
 * @param volume body id → volume (ranking for the budget)
 * @param budget most cells scanned over the boxes (default 8 × the grid's cells)
 */
export function traceBodyOutlines(grid: Grid, labels: Int32Array, count: number, volume: Float64Array, visit: (id: number, polygons: FlatPolygon[] | null) => void, budget = 8 * labels.length): { traced: number; omitted: number } {
  const W = grid.width;
  const box = labelBoxes(labels, W, count);
  // largest volume first (ties: smaller id)
  const negVolume = new Float64Array(count);
  for (let b = 1; b <= count; b++) negVolume[b - 1] = 0 - volume[b];
  const order = sortOrder(negVolume);
  const trace = new Uint8Array(count + 1);
  let left = budget;
  for (let q = 0; q < order.length; q++) {
    const b = order[q] + 1;
    const cost = boxCells(box, b);
    if (cost > left) continue;
    trace[b] = 1;
    left -= cost;
  }
  const gen = contours().smooth(false).thresholds([0.5]);
  let traced = 0, omitted = 0;
  let mask = new Uint8Array(0);
  for (let b = 1; b <= count; b++) {
    const q = 4 * b;
    if (!trace[b]) { omitted++; visit(b, null); continue; }
    traced++;
    const c0 = box[q], r0 = box[q + 1], c1 = box[q + 2], r1 = box[q + 3];
    if (c1 < 0) { visit(b, []); continue; }
    const bw = c1 - c0 + 1, bh = r1 - r0 + 1;
    if (mask.length < bw * bh) mask = new Uint8Array(Math.max(bw * bh, 2 * mask.length));
    else mask.fill(0, 0, bw * bh);
    for (let r = 0; r < bh; r++) {
      const row = (r0 + r) * W + c0;
      for (let c = 0; c < bw; c++) if (labels[row + c] === b) mask[r * bw + c] = 1;
    }
    visit(b, maskRings(gen, mask, bw, bh, c0, r0, grid.transform));
  }
  return { traced, omitted };
}

/** Every pond's outline as a list (see traceBodyOutlines; the writers stream). */
export function bodyOutlines(grid: Grid, labels: Int32Array, count: number, volume: Float64Array, budget = 8 * labels.length): DepressionOutline[] {
  const out: DepressionOutline[] = [];
  traceBodyOutlines(grid, labels, count, volume, (id, polygons) => out.push(polygons === null ? { id, polygons: [], omitted: true } : { id, polygons: polygons.map(flatToPairs) }), budget);
  return out;
}
