/**
 * Pass 2 of the tiled depression sweep: each window is swept again (the same local sweep as
 * pass 1) and every cell gets its global label — the global node whose component it joined,
 * exactly as the single sweep labels it — and the window's share of every node's sums.
 *
 * A cell whose local node is final has that node's global number. A cell whose local node l is
 * provisional joined, at its instant, the global component that contains l; its current node is
 * found by walking up the global tree from the node current just after l's creation cell, past
 * every node that had spilled by then (a node spills at the creation cell of its parent). The
 * cells are visited in sweep order, so each provisional node's walk only moves up.
 */
import { CELLS, SUMA, SUMAZ, TIEN, TIEA } from '../hydro/sweep.js';
import type { Connectivity } from '../surface/complex.js';
import type { WindowCells } from './windows.js';
import { sweepWindow } from './pass1.js';
import type { GlobalTree } from './merge.js';

/** Numbers per node in a window's share of the sums: CELLS, SUMA, SUMAZ, TIEN, TIEA (the offsets of src/hydro/sweep.ts). */
export const SHARE_STRIDE = 5;

export interface WindowShare {
  /** Global nodes with cells in this window (a node may appear more than once). */
  node: Int32Array;
  /** SHARE_STRIDE sums per entry of `node`. */
  rec: Float64Array;
}

export interface Pass2Result {
  /** Global label per cell of the window (0 = outside; undefined on nodata cells). */
  label: Int32Array;
  share: WindowShare;
}

/** What pass 2 needs of the global tree (a worker gets these once). */
export type TreeWalk = Pick<GlobalTree, 'parent' | 'spill' | 'spillZ' | 'z0'>;

/**
 * @param prov    the window's provisional flags (from its pass-1 summary)
 * @param map     the window's local node → global node map (GlobalTree.windowMap)
 * @param rowArea weight of each mosaic row (ignored when `uniform`: every cell weighs 1)
 */
export function pass2(cells: WindowCells, conn: Connectivity, nodataOutlet: boolean, prov: Uint8Array, map: Int32Array, tree: TreeWalk, rowArea: Float64Array, uniform: boolean): Pass2Result {
  const { own, values, mosaicWidth: MW } = cells;
  const w = own.width, n = w * own.height;
  const { sw, order } = sweepWindow(cells, conn, nodataOutlet);
  const K = sw.count, label = sw.label;
  if (K !== prov.length) throw new Error(`internal: the second sweep of window (${own.col0}, ${own.row0}) found ${K} nodes, the first ${prov.length}`);
  const gParent = tree.parent, gSpill = tree.spill, gSpillZ = tree.spillZ;

  // slots: 1..K−1 the local nodes (final ones), then one per (provisional node, global node) met
  let slotNode = new Int32Array(K + 64);
  for (let k = 1; k < K; k++) slotNode[k] = prov[k] ? 0 : map[k];
  let slots = K;
  const ptr = new Int32Array(K), ptrSlot = new Int32Array(K);
  for (let k = 1; k < K; k++) if (prov[k]) { ptr[k] = map[k]; ptrSlot[k] = -1; }
  for (let s = 0; s < order.length; s++) {
    const v = order[s];
    const l = label[v];
    if (l <= 0 || !prov[l]) continue;
    const z = values[v], gv = (own.row0 + ((v / w) | 0)) * MW + own.col0 + (v % w);
    let x = ptr[l];
    // up past every node that has spilled by this cell (its parent's creation cell is ≤ it)
    while (x > 0) {
      const sp = gSpill[x];
      if (sp < 0) break;
      const sz = gSpillZ[x];
      if (sz < z || (sz === z && sp <= gv)) x = gParent[x];
      else break;
    }
    if (x !== ptr[l] || ptrSlot[l] < 0) {
      ptr[l] = x;
      if (x === 0) ptrSlot[l] = 0;
      else {
        if (slots === slotNode.length) { const b = new Int32Array(2 * slots); b.set(slotNode); slotNode = b; }
        slotNode[slots] = x;
        ptrSlot[l] = slots++;
      }
    }
    label[v] = -1 - ptrSlot[l]; // marked: already a slot
  }
  // sums per slot in storage order, as the single sweep takes them per node
  const z0 = tree.z0;
  const rec = new Float64Array(SHARE_STRIDE * slots);
  for (let r = 0, i = 0; r < own.height; r++) {
    const a = uniform ? 1 : rowArea[own.row0 + r];
    for (let c = 0; c < w; c++, i++) {
      const z = values[i];
      if (z !== z) continue;
      const lb = label[i];
      const slot = lb < 0 ? -1 - lb : lb;
      if (slot === 0) { label[i] = 0; continue; }
      const k = slotNode[slot];
      label[i] = k;
      const b = SHARE_STRIDE * slot;
      rec[b + CELLS] += 1; rec[b + SUMA] += a; rec[b + SUMAZ] += a * (z - z0);
      if (z === gSpillZ[k]) { rec[b + TIEN] += 1; rec[b + TIEA] += a; }
    }
  }
  // keep the slots with cells
  let m = 0;
  for (let s = 1; s < slots; s++) if (rec[SHARE_STRIDE * s + CELLS] > 0) m++;
  const node = new Int32Array(m), out = new Float64Array(SHARE_STRIDE * m);
  for (let s = 1, j = 0; s < slots; s++) {
    if (!(rec[SHARE_STRIDE * s + CELLS] > 0)) continue;
    node[j] = slotNode[s];
    out.set(rec.subarray(SHARE_STRIDE * s, SHARE_STRIDE * s + SHARE_STRIDE), SHARE_STRIDE * j);
    j++;
  }
  return { label: label.slice(0, n), share: { node, rec: out } };
}
