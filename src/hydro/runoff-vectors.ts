/**
 * Outlines of the ponds (water bodies) after routing, as GeoJSON polygons along cell edges:
 * d3-contour on each body's cell mask within its bounding box, diagonal cuts put back to the
 * cell corner (cornerRing of src/hydro/vectors.ts), georeferenced with the grid's transform.
 * Bodies do not overlap, but their boxes may; the scanning stays within a budget of cells, the
 * largest bodies first, and the rest are left without a polygon (and said so).
 */
import { contours } from 'd3-contour';
import type { Grid } from '../surface/grid.js';
import { cornerRing, ringArea, type DepressionOutline, type Ring, type PolygonCoords } from './vectors.js';

/**
 * @param labels body id per cell (0 dry, −1 nodata), ids 1..count
 * @param volume body id → volume (ranking for the budget)
 * @param budget most cells scanned over the boxes (default 8 × the grid's cells)
 */
export function bodyOutlines(grid: Grid, labels: Int32Array, count: number, volume: Float64Array, budget = 8 * labels.length): DepressionOutline[] {
  const W = grid.width, Hh = grid.height;
  const box = new Int32Array(4 * (count + 1));
  for (let b = 0; b <= count; b++) { box[4 * b] = 0x7fffffff; box[4 * b + 1] = 0x7fffffff; box[4 * b + 2] = -1; box[4 * b + 3] = -1; }
  for (let r = 0, i = 0; r < Hh; r++) {
    for (let c = 0; c < W; c++, i++) {
      const b = labels[i];
      if (b <= 0) continue;
      const q = 4 * b;
      if (c < box[q]) box[q] = c;
      if (r < box[q + 1]) box[q + 1] = r;
      if (c > box[q + 2]) box[q + 2] = c;
      if (r > box[q + 3]) box[q + 3] = r;
    }
  }
  const ids = Array.from({ length: count }, (_, q) => q + 1).sort((a, b) => volume[b] - volume[a] || a - b);
  const trace = new Uint8Array(count + 1);
  let left = budget;
  for (const b of ids) {
    const q = 4 * b;
    const cost = box[q + 2] < 0 ? 0 : (box[q + 2] - box[q] + 1) * (box[q + 3] - box[q + 1] + 1);
    if (cost > left) continue;
    trace[b] = 1;
    left -= cost;
  }
  const [x0, dx, rx, y0, ry, dy] = grid.transform;
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
    const geom = gen.size([bw, bh]).contour(mask as unknown as number[], 0.5);
    const polygons: PolygonCoords[] = [];
    for (const poly of geom.coordinates) {
      const rings: Ring[] = [];
      poly.forEach((ring, k) => {
        const mapped: Ring = cornerRing(ring).map(([X, Y]) => {
          const C = c0 + X, Rr = r0 + Y;
          return [x0 + C * dx + Rr * rx, y0 + C * ry + Rr * dy];
        });
        const a = ringArea(mapped);
        // exterior counter-clockwise, holes clockwise (RFC 7946 §3.1.6)
        if ((k === 0 && a < 0) || (k > 0 && a > 0)) mapped.reverse();
        mapped.push([mapped[0][0], mapped[0][1]]);
        rings.push(mapped);
      });
      polygons.push(rings);
    }
    out.push({ id: b, polygons });
  }
  return out;
}
