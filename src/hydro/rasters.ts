/**
 * Per-cell results from the sweep labels and the hierarchy, in one pass over the grid:
 *  filled = max(z, fill level of the node the cell joined)  (the spill level of the outermost
 *           depression containing the cell, or of the outermost one below --fill-only-below),
 *  depth  = filled − z,
 *  labels = id of the innermost depression whose water covers the cell (z below its spill
 *           level), 0 for dry cells, −1 for nodata.
 */
import type { Hierarchy } from './hierarchy.js';

/** A stretch of memory free for reuse. */
export interface SpareMemory {
  buffer: ArrayBuffer;
  byteOffset: number;
  byteLength: number;
}

export interface PondRasters {
  filled: Float32Array | Float64Array;
  depth: Float32Array | Float64Array;
  /** Innermost depression id per cell; 0 = in no depression, −1 = nodata. */
  labels: Int32Array;
  /** Σ (filled − z)·a over the cells, in area unit × vertical unit (before the z factor). */
  filledVolume: number;
  /** Cells raised by the filling, and their area. */
  filledCells: number;
  filledArea: number;
}

/**
 * @param label   the sweep's per-cell node label; overwritten in place with the depression ids
 * @param rowArea area of each row's cells (for the filled volume Σ depth·a)
 * @param spare   buffers that may be reused for filled and depth (their contents are discarded)
 */
export function pondRasters(
  values: Float32Array | Float64Array,
  width: number,
  label: Int32Array,
  hier: Hierarchy,
  rowArea: Float64Array,
  spare: SpareMemory[] = [],
): PondRasters {
  const n = values.length;
  const f32 = values instanceof Float32Array;
  const size = f32 ? 4 : 8;
  const take = (): Float32Array | Float64Array => {
    const k = spare.findIndex((b) => b.byteLength >= n * size && b.byteOffset % size === 0);
    if (k >= 0) {
      const b = spare.splice(k, 1)[0];
      return f32 ? new Float32Array(b.buffer, b.byteOffset, n) : new Float64Array(b.buffer, b.byteOffset, n);
    }
    return f32 ? new Float32Array(n) : new Float64Array(n);
  };
  const filled = take();
  const depth = take();
  const { fillOfNode, repOfNode, spillValue, parent } = hier;
  const height = n / width;
  // per node, side by side: fill level, innermost depression id, its spill level
  const K = fillOfNode.length;
  const rec = new Float64Array(3 * K);
  for (let k = 0; k < K; k++) { const d = repOfNode[k]; rec[3 * k] = fillOfNode[k]; rec[3 * k + 1] = d; rec[3 * k + 2] = d > 0 ? spillValue[d] : Infinity; }
  let filledVolume = 0, filledCells = 0, filledArea = 0;
  for (let r = 0, i = 0; r < height; r++) {
    let rowSum = 0, rowCells = 0;
    for (let c = 0; c < width; c++, i++) {
      const z = values[i];
      if (z !== z) { filled[i] = NaN; depth[i] = NaN; label[i] = -1; continue; }
      const k = label[i];
      if (k <= 0) { filled[i] = z; depth[i] = 0; label[i] = 0; continue; }
      const f = rec[3 * k];
      if (f > z) { filled[i] = f; depth[i] = f - z; rowSum += f - z; rowCells++; } else { filled[i] = z; depth[i] = 0; }
      let d = rec[3 * k + 1];
      if (d > 0 && !(z < rec[3 * k + 2])) {
        // the cell lies at the rim of its innermost depression: the first one up that covers it
        do d = parent[d]; while (d > 0 && !(z < spillValue[d]));
      }
      label[i] = d;
    }
    filledVolume += rowSum * rowArea[r];
    filledArea += rowCells * rowArea[r];
    filledCells += rowCells;
  }
  return { filled, depth, labels: label, filledVolume, filledArea, filledCells };
}

/** Outermost (top-level) depression id per cell, from the innermost labels. */
export function topLabels(labels: Int32Array, hier: Hierarchy): Int32Array {
  const top = new Int32Array(hier.count + 1);
  for (let id = hier.count; id >= 1; id--) top[id] = hier.parent[id] > 0 ? top[hier.parent[id]] : id;
  const out = new Int32Array(labels.length);
  for (let i = 0; i < labels.length; i++) { const d = labels[i]; out[i] = d > 0 ? top[d] : d; }
  return out;
}
