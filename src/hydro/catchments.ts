/**
 * Catchments: where each cell's water goes, and so which land drains into each depression.
 *
 * The rule is runoff's (docs/runoff.md): a cell's water runs by steepest descent on the sweep's
 * neighbour graph, in the (value, index) order, to a pit — or off the map when it reaches a cell
 * next to an outlet (grid edge, draining nodata). A cell belongs to the catchment of the innermost
 * reported depression that holds the pit its water reaches; a merged depression's catchment is the
 * union of its children's and the land that drains straight into its own layer. Cells whose water
 * reaches no reported depression either leave the map — straight away, or through flats and
 * depressions the filters removed, which pass their water on to the outside — or stay in a region
 * walled in by nodata (`--nodata-as wall`). The catchments of the top-level depressions, the area
 * that drains off the map and the walled-in area add up to the valid area.
 */
import type { GridComplex } from '../surface/complex.js';
import type { DepressionSweep } from './sweep.js';
import type { Hierarchy } from './hierarchy.js';
import { flowDestinations, stepWeights } from './runoff-route.js';

/** Value of a cell in `Catchments.labels` whose water leaves the map (and nodata: see NODATA). */
export const CATCH_OFF_MAP = 0;
/** … whose water stays in a region walled in by nodata. */
export const CATCH_CLOSED = -2;
/** … for a nodata cell. */
export const CATCH_NODATA = -1;

export interface Catchments {
  /**
   * Per cell: the innermost reported depression whose pit its water reaches (an id ≥ 1), or
   * CATCH_OFF_MAP, CATCH_CLOSED, CATCH_NODATA. Null when only the sums were asked for.
   */
  labels: Int32Array | null;
  /** Per depression id (entry 0 unused): cells and area (area unit) of its catchment, children's included. */
  cells: Float64Array;
  area: Float64Array;
  /** Valid cells whose water leaves the map, and their area. */
  offMap: { cells: number; area: number };
  /** Valid cells whose water stays in a region walled in by nodata, and their area. */
  closed: { cells: number; area: number };
  /**
   * Where water that reaches a pit of no reported depression goes on (a flat, or a depression the
   * filters removed, which spills to the outside): sorted pit cells, and for each the pass cell where its
   * outermost unreported component spills and the cell beyond it (−2: the pass touches an outlet).
   * Only with `labels` (the spill paths read it).
   */
  resume: { pit: Int32Array; pass: Int32Array; to: Int32Array } | null;
}

/**
 * The catchments of the reported depressions. Call between the hierarchy and the rasters: `sw.label`
 * must still hold the sweep's node of every cell (pondRasters overwrites it).
 * @param rowArea area of each row's cells (area unit)
 * @param geographic the grid is in longitude/latitude (descent distances in metres along the ellipsoid's parallels)
 * @param scratch  when given (n entries, e.g. memory the sweep no longer needs), the per-cell work is done
 *                 there and only the sums are returned (`labels` null); otherwise a new array becomes `labels`
 */
export function catchments(cx: GridComplex, sw: DepressionSweep, hier: Hierarchy, transform: readonly number[], rowArea: Float64Array,
  uniform: boolean, geographic: boolean, scratch?: Int32Array): Catchments {
  const n = cx.n, w = cx.w, h = cx.h, values = cx.values;
  // the pit node each cell's water reaches (0: off the map)
  const dest = scratch ?? new Int32Array(n);
  flowDestinations(cx, sw.label, dest, stepWeights(transform, h, cx.connectivity, geographic), 0);
  // node → what its pit's water counts for: the innermost reported depression, or off the map / walled in
  const K = sw.count;
  const nodeCatch = new Int32Array(K);
  const closed = new Uint8Array(K);
  // outermost node of each chain of unreported nodes that spills to the outside (for `resume`)
  const topU = scratch ? null : new Int32Array(K);
  let resumable = 0;
  for (let k = K - 1; k >= 1; k--) {
    const p = sw.parent[k];
    closed[k] = p === -1 || (p > 0 && closed[p] === 1) ? 1 : 0;
    const d = hier.repOfNode[k];
    nodeCatch[k] = d > 0 ? d : closed[k] ? CATCH_CLOSED : CATCH_OFF_MAP;
    if (topU && nodeCatch[k] === CATCH_OFF_MAP) {
      topU[k] = p === 0 ? k : topU[p];
      if (sw.birth[k] === sw.vertex[k]) resumable++;
    }
  }
  let resume: Catchments['resume'] = null;
  if (topU) {
    const pit = new Int32Array(resumable), pass = new Int32Array(resumable), to = new Int32Array(resumable);
    let m = 0;
    for (let k = 1; k < K; k++) {
      if (nodeCatch[k] !== CATCH_OFF_MAP || sw.birth[k] !== sw.vertex[k]) continue;
      pit[m] = sw.vertex[k]; pass[m] = sw.spill[topU[k]]; to[m] = sw.to[topU[k]]; m++;
    }
    // sorted by pit cell (nodes are in (value, index) order, not cell order)
    const idx = Int32Array.from({ length: m }, (_, q) => q).sort((a, b) => pit[a] - pit[b]);
    resume = { pit: idx.map((q) => pit[q]), pass: idx.map((q) => pass[q]), to: idx.map((q) => to[q]) };
  }
  const R = hier.count + 1;
  const cellsOf = new Float64Array(R);
  const rowCells = new Float64Array(R);
  const areaOf = new Float64Array(R);
  const touched = new Int32Array(R);
  let offCells = 0, offArea = 0, closedCells = 0, closedArea = 0;
  for (let r = 0, i = 0; r < h; r++) {
    const a = rowArea[r];
    let nt = 0, rowOff = 0, rowClosed = 0;
    for (let c = 0; c < w; c++, i++) {
      if (values[i] !== values[i]) { dest[i] = CATCH_NODATA; continue; }
      const t = dest[i];
      const d = t > 0 ? nodeCatch[t] : CATCH_OFF_MAP;
      dest[i] = d;
      if (d > 0) {
        if (rowCells[d] === 0) touched[nt++] = d;
        rowCells[d]++;
      } else if (d === CATCH_OFF_MAP) rowOff++;
      else rowClosed++;
    }
    // areas row by row (a row's cells share one area), so sums stay exact on projected grids
    for (let q = 0; q < nt; q++) {
      const d = touched[q];
      cellsOf[d] += rowCells[d];
      if (!uniform) areaOf[d] += rowCells[d] * a;
      rowCells[d] = 0;
    }
    offCells += rowOff; closedCells += rowClosed;
    if (!uniform) { offArea += rowOff * a; closedArea += rowClosed * a; }
  }
  // children before parents (ids follow the sweep's node order)
  for (let d = 1; d < R; d++) {
    const p = hier.parent[d];
    if (p > 0) { cellsOf[p] += cellsOf[d]; areaOf[p] += areaOf[d]; }
  }
  if (uniform) {
    const a = rowArea[0];
    for (let d = 1; d < R; d++) areaOf[d] = cellsOf[d] * a;
    offArea = offCells * a; closedArea = closedCells * a;
  }
  return { labels: scratch ? null : dest, cells: cellsOf, area: areaOf, offMap: { cells: offCells, area: offArea }, closed: { cells: closedCells, area: closedArea }, resume };
}
