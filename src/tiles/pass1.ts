/**
 * Pass 1 of the tiled depression sweep: each owned window is swept on its own (the single-grid
 * sweep of src/hydro/sweep.ts over the window's cells, ω attached only at the mosaic's true
 * outlets), and reduced to what the seam merge needs.
 *
 * A local component that never contains a perimeter cell before it merges (or stays closed)
 * cannot reach any other window: its node is a node of the global sweep as it is ("final").
 * Nodes whose component contains a perimeter cell, and all their ancestors, are "provisional":
 * the global tree decides what happens at their creation vertex. The events the merge replays,
 * in global (value, index) order, are the cells where something can differ from the local sweep:
 * perimeter cells, the creation cells of provisional nodes and the cells where a provisional node
 * spills to the outside. For each event the summary lists the cell's lower neighbours in the
 * sweep's ring order with what each belonged to just before the event: a local node (its local
 * root at that instant), the outside, or a cell of another window (resolved by the merge).
 */
import { sortOrder } from '../morse/order.js';
import { sweepDepressions, sublevelOffsets, type DepressionSweep } from '../hydro/sweep.js';
import type { Connectivity } from '../surface/complex.js';
import type { WindowCells } from './windows.js';
import { windowComplex, haloValue } from './windows.js';

/** A tree of sweep nodes as columns (a window's local tree, or the mosaic's global one); cells are global indices. */
export interface NodeColumns {
  /** Node → creation cell (global index) and its value. */
  vertex: Int32Array;
  vertexZ: Float64Array;
  /** Node → lowest cell of its component (global index) and its value. */
  birth: Int32Array;
  birthZ: Float64Array;
  /** Node → parent (in the window's tree or the global one; 0 = outside, −1 = never spilled). */
  parent: Int32Array;
  /** Node → spill cell (global, −1), its value (+∞ when none), entry (global, −1), to (global, −2 outlet, −1). */
  spill: Int32Array;
  spillZ: Float64Array;
  entry: Int32Array;
  to: Int32Array;
}

/** Pass 1's result for one window: typed arrays only (a worker can transfer it; a file can hold it). */
export interface WindowSummary extends NodeColumns {
  /** Local nodes, ω (0) included. */
  count: number;
  /** Node → 1 when provisional. */
  prov: Uint8Array;
  /** Events in sweep order: cell (global), value, 1 when it touches an outlet, 1 when on the perimeter, the cell's local label after the sweep. */
  evCell: Int32Array;
  evZ: Float64Array;
  evOutlet: Uint8Array;
  evPerimeter: Uint8Array;
  evLabel: Int32Array;
  /** Lower neighbours of event e: nbrStart[e]..nbrStart[e+1]; ref ≥ 1 local node, 0 the outside, ≤ −1 the cell −1 − ref of another window; cell: the neighbour (global). */
  nbrStart: Int32Array;
  nbrRef: Int32Array;
  nbrCell: Int32Array;
  /** Lowest and highest valid values of the window (+∞ and −∞ when none). */
  zmin: number;
  zmax: number;
  perimeterCells: number;
}

/** The local sweep of a window: the same on pass 1 and pass 2. */
export function sweepWindow(cells: WindowCells, conn: Connectivity, nodataOutlet: boolean): { sw: DepressionSweep; order: Uint32Array } {
  const cx = windowComplex(cells, conn, nodataOutlet);
  const order = sortOrder(cells.values);
  const sw = sweepDepressions(cx, order);
  return { sw, order };
}

export function pass1(cells: WindowCells, conn: Connectivity, nodataOutlet: boolean): WindowSummary {
  const { own, values, perimeter, outlet, mosaicWidth: MW } = cells;
  const w = own.width, h = own.height, n = w * h;
  const { sw } = sweepWindow(cells, conn, nodataOutlet);
  const K = sw.count, label = sw.label;
  const g = (i: number): number => (own.row0 + ((i / w) | 0)) * MW + own.col0 + (i % w);
  const gc = (i: number): number => (i >= 0 ? g(i) : i);
  // (value, index) order of two local cells
  const before = (a: number, b: number): boolean => { const za = values[a], zb = values[b]; return za < zb || (za === zb && a < b); };

  // provisional nodes: the labels of perimeter cells and their ancestors
  const prov = new Uint8Array(K);
  for (let i = 0; i < n; i++) {
    if (perimeter[i] === 0) continue;
    for (let x = label[i]; x > 0 && prov[x] === 0; x = sw.parent[x]) prov[x] = 1;
  }
  // events: perimeter cells, creation cells of provisional nodes, their spills to the outside
  const isEvent = new Uint8Array(n);
  for (let i = 0; i < n; i++) if (perimeter[i]) isEvent[i] = 1;
  for (let k = 1; k < K; k++) {
    if (!prov[k]) continue;
    isEvent[sw.vertex[k]] = 1;
    if (sw.parent[k] === 0) isEvent[sw.spill[k]] = 1;
  }
  let E = 0;
  for (let i = 0; i < n; i++) E += isEvent[i];
  // the events in sweep order: few, so sorted on their own (not found by a pass over the order)
  const evLocal = new Int32Array(E);
  for (let i = 0, e = 0; i < n; i++) if (isEvent[i]) evLocal[e++] = i;
  evLocal.sort((a, b) => (values[a] - values[b]) || (a - b));

  const ring = sublevelOffsets(conn);
  const jump = new Int32Array(K);
  for (let k = 0; k < K; k++) jump[k] = k;
  const evCell = new Int32Array(E), evZ = new Float64Array(E), evOutlet = new Uint8Array(E), evPerimeter = new Uint8Array(E), evLabel = new Int32Array(E);
  const nbrStart = new Int32Array(E + 1);
  let nbrRef: Int32Array = new Int32Array(Math.max(16, 4 * E)), nbrCell: Int32Array = new Int32Array(nbrRef.length);
  let e = 0, t = 0;
  for (let s = 0; s < E; s++) {
    const v = evLocal[s];
    const r = (v / w) | 0, c = v - r * w, z = values[v];
    evCell[e] = g(v); evZ[e] = z; evOutlet[e] = outlet[v]; evPerimeter[e] = perimeter[v]; evLabel[e] = label[v];
    for (let q = 0; q < ring.length; q++) {
      const cc = c + ring[q][0], rr = r + ring[q][1];
      const gcol = own.col0 + cc, grow = own.row0 + rr;
      if (cc < 0 || cc >= w || rr < 0 || rr >= h) {
        // outside the window: a lower valid cell of another window, if any (perimeter cells only)
        if (!perimeter[v]) continue;
        const nz = haloValue(cells, gcol, grow);
        if (nz === undefined || !(nz < z || (nz === z && grow * MW + gcol < evCell[e]))) continue;
        if (t === nbrRef.length) { nbrRef = growI32(nbrRef); nbrCell = growI32(nbrCell); }
        nbrRef[t] = -1 - (grow * MW + gcol); nbrCell[t++] = grow * MW + gcol;
        continue;
      }
      const j = rr * w + cc, y = values[j];
      if (!(y < z || (y === z && j < v))) continue;
      // the local root of j just before v: up the tree while the node has already spilled.
      // Events come in sweep order, so a node's root only moves up: jump[] keeps the last one found.
      let x = label[j];
      while (x > 0) {
        const y = jump[x];
        if (y !== x) { x = y; continue; }
        const sp = sw.spill[x];
        if (sp >= 0 && before(sp, v)) { jump[x] = sw.parent[x] > 0 ? sw.parent[x] : 0; x = jump[x]; } else break;
      }
      for (let y = label[j]; y > 0 && y !== x;) { const nx = jump[y]; jump[y] = x; y = nx; }
      if (t === nbrRef.length) { nbrRef = growI32(nbrRef); nbrCell = growI32(nbrCell); }
      nbrRef[t] = x; nbrCell[t++] = g(j);
    }
    nbrStart[++e] = t;
  }
  let zmin = Infinity, zmax = -Infinity;
  for (let i = 0; i < n; i++) { const z = values[i]; if (z < zmin) zmin = z; if (z > zmax) zmax = z; }

  const vertex = new Int32Array(K), birth = new Int32Array(K), spill = new Int32Array(K), entry = new Int32Array(K), to = new Int32Array(K);
  const vertexZ = new Float64Array(K), birthZ = new Float64Array(K), spillZ = new Float64Array(K).fill(Infinity);
  vertex[0] = -1; birth[0] = -1; spill[0] = -1; entry[0] = -1; to[0] = -1;
  for (let k = 1; k < K; k++) {
    vertex[k] = g(sw.vertex[k]); vertexZ[k] = values[sw.vertex[k]];
    birth[k] = g(sw.birth[k]); birthZ[k] = values[sw.birth[k]];
    spill[k] = gc(sw.spill[k]); if (sw.spill[k] >= 0) spillZ[k] = values[sw.spill[k]];
    entry[k] = gc(sw.entry[k]); to[k] = gc(sw.to[k]);
  }
  return {
    count: K, prov, vertex, vertexZ, birth, birthZ, parent: sw.parent.slice(), spill, spillZ, entry, to,
    evCell, evZ, evOutlet, evPerimeter, evLabel, nbrStart, nbrRef: nbrRef.slice(0, t), nbrCell: nbrCell.slice(0, t),
    zmin, zmax, perimeterCells: cells.perimeterCells,
  };
}

function growI32(a: Int32Array): Int32Array {
  const b = new Int32Array(2 * a.length);
  b.set(a);
  return b;
}
