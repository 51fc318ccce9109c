/**
 * From the sweep's tree to the depressions sill reports.
 *
 * Every node of the tree below the outside vertex is a candidate depression: its component,
 * filled to the level of the pass where it meets another component (the spill level), holds
 * V = Σ a·(h − z). The candidates that are kept:
 *  - must hold water: a node whose spill level equals its pit value is part of a flat
 *    (ties on a plateau), not a depression; it is counted as a flat;
 *  - must pass the user's filters (depth = spill − pit, wet area, volume). Depth, area and volume
 *    never decrease from a child to its parent, so the kept nodes are closed upward.
 * A removed node is merged into its parent: its cells become the parent's. When that leaves a
 * kept node with a single kept child, the child's spill is no longer a separate event (the water
 * rises on through the removed neighbour's basin), so the two are one depression: the pair is
 * reported once, with the child's pit and the parent's spill ("absorbed").
 * Components that never meet the outside (walled in by nodata with --nodata-as wall) have no
 * spill level; they are reported as closed regions and left unfilled.
 */
import { SUM_STRIDE as S, CELLS, SUMA, SUMAZ, TIEN, TIEA, SPILLZ, PITZ, type DepressionSweep, type NodeSums } from './sweep.js';

export interface HierarchyFilters {
  /** Smallest depth (spill − pit) kept, in the DEM's vertical unit. */
  minDepth?: number;
  /** Smallest wet area kept, in the area unit. */
  minArea?: number;
  /** Smallest volume kept, in the volume unit. */
  minVolume?: number;
}

export interface Hierarchy {
  /** Reported depressions, ids 1..count; arrays are indexed by id (index 0 unused). */
  count: number;
  /** id → raw node of the sweep (the top of its chain). */
  node: Int32Array;
  /** id → parent id (0 = top level). */
  parent: Int32Array;
  /** id → children ids, CSR: childStart[id]..childStart[id+1] in `children`. */
  childStart: Int32Array;
  children: Int32Array;
  /** id → nesting level (0 = top level). */
  level: Int32Array;
  /** id → pit cell, spill (pass) cell. */
  pit: Int32Array;
  spillCell: Int32Array;
  pitValue: Float64Array;
  spillValue: Float64Array;
  /** id → the depression it spills into (0 = the outside). */
  into: Int32Array;
  /** id → the cell beyond the pass it overflows into: a cell index, or −2 for an outlet (off the grid or nodata). */
  pourTo: Int32Array;
  /** id → wet cells (depth > 0), wet area, volume (area unit × vertical unit × zFactor), max and mean depth. */
  wetCells: Float64Array;
  area: Float64Array;
  volume: Float64Array;
  maxDepth: Float64Array;
  meanDepth: Float64Array;
  /** id → Euler-tour interval: id d' lies in the subtree of d when tin[d] ≤ tin[d'] < tout[d]. */
  tin: Int32Array;
  tout: Int32Array;
  /** raw node → id of the innermost reported depression its cells belong to (0 = none). */
  repOfNode: Int32Array;
  /** raw node → the level its cells fill to (spill of the outermost depression containing them), −∞ for none. */
  fillOfNode: Float64Array;
  /** What was not reported. */
  removed: RemovedSummary;
}

export interface RemovedSummary {
  /** Nodes removed by the filters. */
  filtered: number;
  /** Of those, the ones whose water still counts inside a kept parent, and the volume of the outermost such ones. */
  insideKept: { depressions: number; volume: number };
  /** Of those, the ones at the top level: not filled and not in the totals; the volume of the outermost such ones. */
  topLevel: { depressions: number; volume: number };
  /** Nodes that hold no water (spill level = pit value: ties on flats). */
  flats: number;
  /** Kept nodes that became one depression with their parent when a sibling was removed. */
  absorbed: number;
  /** Components with no outlet (enclosed by nodata walls): count and cells. */
  closedRegions: { count: number; cells: number };
}

export interface HierarchyOptions extends HierarchyFilters {
  /** Area of a unit row weight (the sums are in row weights; see CellAreas). */
  areaScale: number;
  /** Metres per vertical unit, for volumes. */
  zFactor: number;
  /** Fill only depressions whose volume is below this (default: fill all). */
  fillOnlyBelow?: number;
}

export function buildHierarchy(sw: DepressionSweep, sums: NodeSums, opts: HierarchyOptions): Hierarchy {
  const K = sw.count;
  const { areaScale, zFactor } = opts;
  const minDepth = opts.minDepth ?? 0, minArea = opts.minArea ?? 0, minVolume = opts.minVolume ?? 0;
  const z0 = sums.z0;

  // per raw node: closed (no outlet above) and kept; the statistics are computed when needed
  // (from the sums) rather than stored, to keep memory per node small
  const closed = new Uint8Array(K);
  const keep = new Uint8Array(K);
  const rec = sums.rec;
  const depthOf = (k: number): number => rec[S * k + SPILLZ] - rec[S * k + PITZ];
  const wetAOf = (k: number): number => (rec[S * k + SUMA] - rec[S * k + TIEA]) * areaScale;
  const volOf = (k: number): number => {
    const v = ((rec[S * k + SPILLZ] - z0) * rec[S * k + SUMA] - rec[S * k + SUMAZ]) * areaScale * zFactor;
    return v > 0 ? v : 0;
  };
  let closedCount = 0, closedCells = 0;
  for (let k = K - 1; k >= 1; k--) {
    const p = sw.parent[k];
    if (p === -1) { closed[k] = 1; closedCount++; closedCells += rec[S * k + CELLS]; continue; }
    if (p > 0 && closed[p]) closed[k] = 1;
  }
  let flats = 0, filtered = 0;
  for (let k = 1; k < K; k++) {
    if (closed[k]) continue;
    const d = depthOf(k);
    if (!(d > 0)) { flats++; continue; }
    if (d < minDepth || wetAOf(k) < minArea || volOf(k) < minVolume) { filtered++; continue; }
    keep[k] = 1;
  }
  // kept children per node
  const keptKids = new Int32Array(K);
  for (let k = 1; k < K; k++) if (keep[k] && sw.parent[k] > 0) keptKids[sw.parent[k]]++;
  const reported = new Uint8Array(K);
  let count = 0, absorbed = 0;
  for (let k = 1; k < K; k++) {
    if (!keep[k]) continue;
    const p = sw.parent[k];
    if (p === 0 || keptKids[p] >= 2) { reported[k] = 1; count++; } else absorbed++;
  }
  // ids in node order (children before parents)
  const idOf = new Int32Array(K);
  const node = new Int32Array(count + 1);
  for (let k = 1, id = 0; k < K; k++) if (reported[k]) { idOf[k] = ++id; node[id] = k; }
  // raw node → innermost reported id (top-down: parents have larger numbers)
  const repOfNode = new Int32Array(K);
  for (let k = K - 1; k >= 1; k--) {
    if (closed[k]) continue;
    const p = sw.parent[k];
    repOfNode[k] = reported[k] ? idOf[k] : p > 0 ? repOfNode[p] : 0;
  }
  // removed water: a filtered node lies either inside a kept depression (its water still counts
  // there) or at the top level (not filled, not in the totals). Volumes are summed over the
  // outermost filtered node of each removed subtree, since a node's water includes its children's.
  const insideKept = { depressions: 0, volume: 0 }, topLevel = { depressions: 0, volume: 0 };
  const underKept = new Uint8Array(K);
  for (let k = K - 1; k >= 1; k--) {
    if (closed[k]) continue;
    const p = sw.parent[k];
    underKept[k] = p > 0 && (keep[p] || underKept[p]) ? 1 : 0;
    if (keep[k] || !(depthOf(k) > 0)) continue;
    const outermost = p === 0 || keep[p];
    const bucket = underKept[k] ? insideKept : topLevel;
    bucket.depressions++;
    if (outermost) bucket.volume += volOf(k);
  }

  // reported arrays
  const R = count + 1;
  const parent = new Int32Array(R), level = new Int32Array(R), pit = new Int32Array(R), spillCell = new Int32Array(R);
  const pitValue = new Float64Array(R), spillValue = new Float64Array(R), into = new Int32Array(R), pourTo = new Int32Array(R);
  const wetCells = new Float64Array(R), area = new Float64Array(R), volume = new Float64Array(R);
  const maxDepth = new Float64Array(R), meanDepth = new Float64Array(R);
  const childCount = new Int32Array(R + 1);
  for (let id = 1; id <= count; id++) {
    const k = node[id];
    const p = sw.parent[k];
    parent[id] = p > 0 ? repOfNode[p] : 0;
    childCount[parent[id]]++;
    pit[id] = sw.birth[k];
    spillCell[id] = sw.spill[k];
    pitValue[id] = rec[S * k + PITZ];
    spillValue[id] = rec[S * k + SPILLZ];
    wetCells[id] = rec[S * k + CELLS] - rec[S * k + TIEN];
    area[id] = wetAOf(k);
    volume[id] = volOf(k);
    maxDepth[id] = depthOf(k);
    meanDepth[id] = area[id] > 0 ? volume[id] / zFactor / area[id] : 0;
    if (p === 0) { into[id] = 0; pourTo[id] = sw.to[k]; }
  }
  // children lists (CSR), ascending ids
  const childStart = new Int32Array(R + 1);
  for (let id = 1; id <= count; id++) childStart[id + 1] = childStart[id] + childCount[id];
  const children = new Int32Array(Math.max(0, count - childCount[0]));
  const fillPos = childStart.slice();
  for (let id = 1; id <= count; id++) { const p = parent[id]; if (p > 0) children[fillPos[p]++] = id; }
  // spill into a sibling: the sibling with the lowest pit (ties by cell index), pour into its entry cell
  for (let id = 1; id <= count; id++) {
    const p = parent[id];
    if (p === 0) continue;
    let best = 0, bz = Infinity, bc = -1;
    for (let q = childStart[p]; q < childStart[p + 1]; q++) {
      const s = children[q];
      if (s === id) continue;
      const z = pitValue[s], c = pit[s];
      if (z < bz || (z === bz && c < bc)) { best = s; bz = z; bc = c; }
    }
    into[id] = best;
    pourTo[id] = sw.entry[node[best]];
  }
  // levels and Euler-tour intervals (parents have larger ids: go down from the top)
  const tin = new Int32Array(R), tout = new Int32Array(R);
  {
    let clock = 0;
    const stack: number[] = [];
    for (let id = count; id >= 1; id--) {
      if (parent[id] !== 0) continue;
      stack.push(id);
      level[id] = 0;
      while (stack.length) {
        const d = stack[stack.length - 1];
        if (d > 0) {
          tin[d] = clock++;
          stack[stack.length - 1] = -d;
          for (let q = childStart[d]; q < childStart[d + 1]; q++) { const c = children[q]; level[c] = level[d] + 1; stack.push(c); }
        } else {
          tout[-d] = clock;
          stack.pop();
        }
      }
    }
  }
  // fill level per reported id, then per raw node
  const fillId = new Float64Array(R).fill(-Infinity);
  const limit = opts.fillOnlyBelow;
  for (let id = count; id >= 1; id--) {
    const p = parent[id];
    if (limit === undefined) fillId[id] = p > 0 ? fillId[p] : spillValue[id];
    else if (p > 0 && volume[p] < limit) fillId[id] = fillId[p];
    else fillId[id] = volume[id] < limit ? spillValue[id] : -Infinity;
  }
  const fillOfNode = new Float64Array(K).fill(-Infinity);
  for (let k = 1; k < K; k++) { const d = repOfNode[k]; if (d > 0) fillOfNode[k] = fillId[d]; }

  return {
    count, node, parent, childStart, children, level, pit, spillCell, pitValue, spillValue, into, pourTo,
    wetCells, area, volume, maxDepth, meanDepth, tin, tout, repOfNode, fillOfNode,
    removed: { filtered, insideKept, topLevel, flats, absorbed, closedRegions: { count: closedCount, cells: closedCells } },
  };
}
