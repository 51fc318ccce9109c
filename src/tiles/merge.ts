/**
 * The seam merge: the global sweep tree from the windows' pass-1 summaries.
 *
 * The events of all windows are replayed in global (value, index) order with one union-find
 * over the windows' local nodes and the outside (element 0). At each event the cell's lower
 * neighbours, in the sweep's ring order, are looked up: a local node or the outside as pass 1
 * recorded it, or a perimeter cell of another window (its local label there). Their union-find
 * roots are the global components the cell meets, and the single sweep's rule applies to them
 * unchanged: none → a pit; one → the cell joins it; the outside among several → the others
 * spill to the outside here; several → a new node over them, with its lowest pit. Each
 * component's current node is kept at its root. Entry (first neighbour of the component in ring
 * order) and `to` follow the single sweep's definitions exactly.
 *
 * Events that only local information decides never reach the merge: final nodes keep their
 * local parent, spill, entry and to unless they meet a provisional component at an event.
 * Global node numbers are the ranks of the nodes' creation cells in (value, index) order — the
 * single sweep's numbering, whatever the tiling.
 */
import type { WindowSummary, NodeColumns } from './pass1.js';

/** The global tree (the single sweep's, node for node; parent: the global parent). */
export interface GlobalTree extends NodeColumns {
  /** Nodes, the outside (0) included. */
  count: number;
  /** Per window: local node → its global node (final nodes), or the global node current just after its creation cell (provisional nodes; 0 = the outside). */
  windowMap: Int32Array[];
  /** Lowest valid value of the mosaic (0 when there is none). */
  z0: number;
  /** Events replayed and the bytes of the summaries, all and of the events alone (for the perimeter measurements). */
  events: number;
  summaryBytes: number;
  eventBytes: number;
}

/** Open-addressing hash from a global cell (≥ 0) to an Int32 value. */
class CellTable {
  private readonly keys: Int32Array;
  private readonly vals: Int32Array;
  private readonly mask: number;
  constructor(count: number) {
    let cap = 16;
    while (cap < 2 * count) cap *= 2;
    this.keys = new Int32Array(cap).fill(-1);
    this.vals = new Int32Array(cap);
    this.mask = cap - 1;
  }
  set(k: number, v: number): void {
    let h = Math.imul(k, 0x9e3779b1) & this.mask;
    while (this.keys[h] !== -1 && this.keys[h] !== k) h = (h + 1) & this.mask;
    this.keys[h] = k; this.vals[h] = v;
  }
  get(k: number): number {
    let h = Math.imul(k, 0x9e3779b1) & this.mask;
    for (;;) {
      const x = this.keys[h];
      if (x === k) return this.vals[h];
      if (x === -1) throw new Error(`internal: the seam merge found no perimeter cell ${k}`);
      h = (h + 1) & this.mask;
    }
  }
}

/** Bytes of a summary's arrays: all of them, and those of its events (the part that grows with the perimeter; the rest grows with the window's nodes). */
export function summaryBytes(s: WindowSummary): { all: number; events: number } {
  let all = 0, events = 0;
  for (const [k, v] of Object.entries(s)) {
    if (!ArrayBuffer.isView(v)) continue;
    all += v.byteLength;
    if (k.startsWith('ev') || k.startsWith('nbr')) events += v.byteLength;
  }
  return { all, events };
}

export function seamMerge(sums: WindowSummary[]): GlobalTree {
  const nw = sums.length;
  // element of local node k of window t: base[t] + k − 1; the outside is 0
  const base = new Int32Array(nw + 1);
  base[0] = 1;
  for (let t = 0; t < nw; t++) base[t + 1] = base[t] + sums[t].count - 1;
  const L = base[nw];
  // temporary nodes: the local nodes (by element), then the nodes the merge creates
  let cap = L + 1024;
  let tVertex = new Int32Array(cap), tBirth = new Int32Array(cap), tParent = new Int32Array(cap), tSpill = new Int32Array(cap);
  let tEntry = new Int32Array(cap), tTo = new Int32Array(cap), tVertexZ = new Float64Array(cap), tBirthZ = new Float64Array(cap), tSpillZ = new Float64Array(cap);
  let tIsNode = new Uint8Array(cap);
  const grow = (): void => {
    cap *= 2;
    const gi = (a: Int32Array) => { const b = new Int32Array(cap); b.set(a); return b; };
    const gf = (a: Float64Array) => { const b = new Float64Array(cap); b.set(a); return b; };
    tVertex = gi(tVertex); tBirth = gi(tBirth); tParent = gi(tParent); tSpill = gi(tSpill); tEntry = gi(tEntry); tTo = gi(tTo);
    tVertexZ = gf(tVertexZ); tBirthZ = gf(tBirthZ); tSpillZ = gf(tSpillZ);
    const u = new Uint8Array(cap); u.set(tIsNode); tIsNode = u;
  };
  let z0 = Infinity, events = 0, bytes = 0, evBytes = 0, perimeterEvents = 0;
  for (let t = 0; t < nw; t++) {
    const s = sums[t], b = base[t] - 1;
    for (let k = 1; k < s.count; k++) {
      const e = b + k;
      tVertex[e] = s.vertex[k]; tVertexZ[e] = s.vertexZ[k]; tBirth[e] = s.birth[k]; tBirthZ[e] = s.birthZ[k];
      const p = s.parent[k];
      tParent[e] = p > 0 ? b + p : p;
      tSpill[e] = s.spill[k]; tSpillZ[e] = s.spillZ[k]; tEntry[e] = s.entry[k]; tTo[e] = s.to[k];
      tIsNode[e] = s.prov[k] ? 0 : 1;
    }
    if (s.zmin < z0) z0 = s.zmin;
    events += s.evCell.length;
    const sb = summaryBytes(s);
    bytes += sb.all; evBytes += sb.events;
    for (let i = 0; i < s.evCell.length; i++) perimeterEvents += s.evPerimeter[i];
  }
  if (z0 === Infinity) z0 = 0;
  let count = L; // temporary ids 1 … count − 1 are in use: the next node the merge creates is `count`

  // perimeter cell → element of its local label
  const cellElem = new CellTable(perimeterEvents);
  for (let t = 0; t < nw; t++) {
    const s = sums[t], b = base[t] - 1;
    for (let i = 0; i < s.evCell.length; i++) if (s.evPerimeter[i]) cellElem.set(s.evCell[i], s.evLabel[i] > 0 ? b + s.evLabel[i] : 0);
  }

  // union-find over elements; cur[root] = the component's current (temporary) node, 0 = outside
  const uf = new Int32Array(L);
  const cur = new Int32Array(L);
  for (let e = 0; e < L; e++) { uf[e] = e; cur[e] = e; }
  const find = (x: number): number => {
    while (uf[x] !== x) { const p = uf[uf[x]]; uf[x] = p; x = p; }
    return x;
  };
  const g0 = new Int32Array(L);

  // events of all windows in global (value, index) order: a heap of the windows' next events
  const pos = new Int32Array(nw);
  const heap: number[] = [];
  const less = (a: number, b: number): boolean => {
    const za = sums[a].evZ[pos[a]], zb = sums[b].evZ[pos[b]];
    return za < zb || (za === zb && sums[a].evCell[pos[a]] < sums[b].evCell[pos[b]]);
  };
  const push = (t: number): void => {
    let i = heap.length;
    heap.push(t);
    while (i > 0) { const p = (i - 1) >> 1; if (!less(heap[i], heap[p])) break; [heap[i], heap[p]] = [heap[p], heap[i]]; i = p; }
  };
  const pop = (): number => {
    const top = heap[0], last = heap.pop()!;
    if (heap.length > 0) {
      heap[0] = last;
      for (let i = 0; ;) {
        const l = 2 * i + 1, r = l + 1;
        let m = i;
        if (l < heap.length && less(heap[l], heap[m])) m = l;
        if (r < heap.length && less(heap[r], heap[m])) m = r;
        if (m === i) break;
        [heap[i], heap[m]] = [heap[m], heap[i]]; i = m;
      }
    }
    return top;
  };
  for (let t = 0; t < nw; t++) if (sums[t].evCell.length > 0) push(t);

  let roots: Int32Array = new Int32Array(16), ents: Int32Array = new Int32Array(16);
  while (heap.length > 0) {
    const t = pop();
    const s = sums[t], ev = pos[t], b = base[t] - 1;
    pos[t]++;
    if (pos[t] < s.evCell.length) push(t);
    const v = s.evCell[ev], z = s.evZ[ev];
    const lab = s.evLabel[ev];
    const self = lab > 0 ? b + lab : 0;
    // the global components among the lower neighbours, first neighbour of each in ring order
    let nr = 0;
    for (let q = s.nbrStart[ev]; q < s.nbrStart[ev + 1]; q++) {
      const ref = s.nbrRef[q];
      const el = ref > 0 ? b + ref : ref === 0 ? 0 : cellElem.get(-1 - ref);
      const R = find(el);
      let u = 0;
      while (u < nr && roots[u] !== R) u++;
      if (u < nr) continue;
      if (nr === roots.length) { roots = grow32(roots); ents = grow32(ents); }
      roots[nr] = R; ents[nr++] = s.nbrCell[q];
    }
    const atOutlet = s.evOutlet[ev] === 1;
    if (atOutlet) {
      let u = 0;
      while (u < nr && roots[u] !== 0) u++;
      if (u === nr) { if (nr === roots.length) { roots = grow32(roots); ents = grow32(ents); } roots[nr] = 0; ents[nr++] = -2; }
    }
    let result: number; // the cell's node after the event (0 = outside)
    if (nr === 0) {
      if (count === cap) grow();
      const k = count++;
      tVertex[k] = v; tVertexZ[k] = z; tBirth[k] = v; tBirthZ[k] = z; tParent[k] = -1; tSpill[k] = -1; tSpillZ[k] = Infinity; tEntry[k] = -1; tTo[k] = -1; tIsNode[k] = 1;
      if (self === 0) throw new Error(`internal: a pit of the seam merge (cell ${v}) joined the outside in its window`);
      cur[find(self)] = k;
      result = k;
    } else {
      let omegaAt = -1;
      for (let u = 0; u < nr; u++) if (roots[u] === 0) { omegaAt = u; break; }
      if (nr === 1) {
        result = roots[0] === 0 ? 0 : cur[roots[0]];
      } else if (omegaAt >= 0) {
        const toCell = atOutlet ? -2 : ents[omegaAt];
        for (let u = 0; u < nr; u++) {
          if (u === omegaAt) continue;
          const k = cur[roots[u]];
          tParent[k] = 0; tSpill[k] = v; tSpillZ[k] = z; tEntry[k] = ents[u]; tTo[k] = toCell;
        }
        result = 0;
      } else {
        if (count === cap) grow();
        const k = count++;
        let eb = -1, ebz = Infinity;
        for (let u = 0; u < nr; u++) {
          const ch = cur[roots[u]];
          tParent[ch] = k; tSpill[ch] = v; tSpillZ[ch] = z; tEntry[ch] = ents[u]; tTo[ch] = -1;
          const bi = tBirth[ch], bz = tBirthZ[ch];
          if (bz < ebz || (bz === ebz && bi < eb)) { eb = bi; ebz = bz; }
        }
        tVertex[k] = v; tVertexZ[k] = z; tBirth[k] = eb; tBirthZ[k] = ebz; tParent[k] = -1; tSpill[k] = -1; tSpillZ[k] = Infinity; tEntry[k] = -1; tTo[k] = -1; tIsNode[k] = 1;
        result = k;
      }
      // one component now: the roots and the cell's own local node; the outside stays the root
      let top = omegaAt >= 0 ? 0 : roots[0];
      for (let u = 0; u < nr; u++) if (roots[u] !== top) uf[roots[u]] = top;
      const rs = find(self);
      if (rs !== top) { if (rs === 0) throw new Error(`internal: cell ${v} joined the outside in its window but not in the seam merge`); uf[rs] = top; }
      if (top !== 0) cur[top] = result;
    }
    if (lab > 0 && s.vertex[lab] === v) g0[self] = result;
  }

  // global numbers: the nodes sorted by creation cell in (value, index) order
  let nodes = 0;
  for (let k = 1; k < count; k++) nodes += tIsNode[k];
  const ids = new Int32Array(nodes);
  for (let k = 1, i = 0; k < count; k++) if (tIsNode[k]) ids[i++] = k;
  ids.sort((a, b) => (tVertexZ[a] - tVertexZ[b]) || (tVertex[a] - tVertex[b]));
  const K = nodes + 1;
  const gid = new Int32Array(count);
  for (let i = 0; i < ids.length; i++) gid[ids[i]] = i + 1;
  const vertex = new Int32Array(K), birth = new Int32Array(K), parent = new Int32Array(K), spill = new Int32Array(K), entry = new Int32Array(K), to = new Int32Array(K);
  const vertexZ = new Float64Array(K), birthZ = new Float64Array(K), spillZ = new Float64Array(K);
  vertex[0] = -1; birth[0] = -1; parent[0] = -1; spill[0] = -1; entry[0] = -1; to[0] = -1; spillZ[0] = Infinity;
  for (let i = 1; i < K; i++) {
    const k = ids[i - 1];
    vertex[i] = tVertex[k]; vertexZ[i] = tVertexZ[k]; birth[i] = tBirth[k]; birthZ[i] = tBirthZ[k];
    const p = tParent[k];
    if (p > 0 && !tIsNode[p]) throw new Error(`internal: node at cell ${tVertex[k]} kept a provisional parent after the seam merge`);
    parent[i] = p > 0 ? gid[p] : p;
    spill[i] = tSpill[k]; spillZ[i] = tSpillZ[k]; entry[i] = tEntry[k]; to[i] = tTo[k];
  }
  const windowMap: Int32Array[] = [];
  for (let t = 0; t < nw; t++) {
    const s = sums[t], b = base[t] - 1;
    const m = new Int32Array(s.count);
    for (let k = 1; k < s.count; k++) m[k] = s.prov[k] ? (g0[b + k] > 0 ? gid[g0[b + k]] : 0) : gid[b + k];
    windowMap.push(m);
  }
  return { count: K, vertex, vertexZ, birth, birthZ, parent, spill, spillZ, entry, to, windowMap, z0, events, summaryBytes: bytes, eventBytes: evBytes };
}

function grow32(a: Int32Array): Int32Array {
  const b = new Int32Array(2 * a.length);
  b.set(a);
  return b;
}
