/**
 * Outlines of the ponds (water bodies) after routing, as GeoJSON polygons along cell edges:
 * d3-contour on each body's cell mask within its bounding box, diagonal cuts put back to the
 * cell corner (cornerRing of src/hydro/vectors.ts), georeferenced with the grid's transform.
 * Bodies do not overlap, but their boxes may; the scanning stays within a budget of cells, the
 * largest bodies first, and the rest are left without a polygon (and said so).
 */
import { contours } from 'd3-contour';
import type { Grid } from '../surface/grid.js';
import { labelBoxes, boxCells, maskPolygons, type DepressionOutline } from './vectors.js';

/**
 * @param labels body id per cell (0 dry, −1 nodata), ids 1..count
 * @param volume body id → volume (ranking for the budget)
 * @param budget most cells scanned over the boxes (default 8 × the grid's cells)
 */
export function bodyOutlines(grid: Grid, labels: Int32Array, count: number, volume: Float64Array, budget = 8 * labels.length): DepressionOutline[] {
  const W = grid.width;
  const box = labelBoxes(labels, W, count);
  const ids = Array.from({ length: count }, (_, q) => q + 1).sort((a, b) => volume[b] - volume[a] || a - b);
  const trace = new Uint8Array(count + 1);
  let left = budget;
  for (const b of ids) {
    const cost = boxCells(box, b);
    if (cost > left) continue;
    trace[b] = 1;
    left -= cost;
  }
  const gen = contours().smooth(false).thresholds([0.5]);
  const out: DepressionOutline[] = [];
  for (let b = 1; b <= count; b++) {
    const q = 4 * b;
    if (!trace[b]) { out.push({ id: b, polygons: [], omitted: true }); continue; }
    const c0 = box[q], r0 = box[q + 1], c1 = box[q + 2], r1 = box[q + 3];
    if (c1 < 0) { out.push({ id: b, polygons: [] }); continue; }
    const bw = c1 - c0 + 1, bh = r1 - r0 + 1;
    const mask = new Uint8Array(bw * bh);
    for (let r = 0; r < bh; r++) {
      const row = (r0 + r) * W + c0;
      for (let c = 0; c < bw; c++) if (labels[row + c] === b) mask[r * bw + c] = 1;
    }
    out.push({ id: b, polygons: maskPolygons(gen, mask, bw, bh, c0, r0, grid.transform) });
  }
  return out;
}
