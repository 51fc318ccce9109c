/**
 * Outlines of the ponds (water bodies) after routing, as GeoJSON polygons along cell edges: the
 * tracer of src/hydro/vectors.ts over the body labels (a flat partition: every pond, one pass).
 */
import type { Grid } from '../surface/grid.js';
import { traceOutlines, outlineRings, flatToPairs, flips, type DepressionOutline, type Outline } from './vectors.js';

/**
 * Every pond's outline handed to `visit` in id order. Returns how many were outlined.
 * @param labels body id per cell (0 dry, −1 nodata), ids 1..count
 */
export function traceBodyOutlines(grid: Grid, labels: Int32Array, count: number, visit: (id: number, o: Outline) => void): number {
  const keyOf = new Int32Array(count + 1);
  for (let b = 1; b <= count; b++) keyOf[b] = b;
  return traceOutlines(labels, grid.width, grid.height, { kind: 'flat', keyOf, count }, flips(grid.transform), visit);
}

/** Every pond's outline as a list (see traceBodyOutlines; the writers stream). */
export function bodyOutlines(grid: Grid, labels: Int32Array, count: number): DepressionOutline[] {
  const out: DepressionOutline[] = [];
  traceBodyOutlines(grid, labels, count, (id, o) => out.push({ id, polygons: outlineRings(o, grid.transform).map(flatToPairs) }));
  return out;
}
