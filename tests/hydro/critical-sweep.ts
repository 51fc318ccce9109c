/**
 * A second, independent way to the depression tree and labels, used as a reference for
 * src/hydro/sweep.ts: instead of sweeping every cell in (value, index) order, it classifies the
 * cells in storage order, follows receivers downhill to pits, replays the merges at the critical
 * cells only (with a union-find over pits) and labels the other cells from their receivers.
 */
import type { GridComplex } from '../../src/surface/complex.js';
import { type DepressionSweep } from '../../src/hydro/sweep.js';

/** Codes of the per-cell receiver byte (critical-cell sweep). Bits 0–3: the receiver. */
const RECV_NONE = 15; // nodata, or a pit (no lower neighbour)
const RECV_OMEGA = 14; // next to an outlet: the cell drains to the outside
const CRITICAL = 0x80; // the cell may change the components (pit, or two or more lower groups, or an outlet cell with lower neighbours)
const LABELLED = 0x40; // phase 2: the label slot holds the cell's label

/**
 * The same tree and labels as sweepDepressions, computed by touching most cells only in storage
 * order (fast on large grids, where a sweep in elevation order spends its time waiting for memory):
 *
 * 1. In storage order, each cell's lower neighbours (by the same (value, index) order) are grouped
 *    as in the sweep. A cell with no lower neighbour is a pit; a cell whose lower neighbours form
 *    two or more groups, or that touches an outlet and has lower neighbours, is *critical*; every
 *    other cell just joins the one component below it and changes nothing. Each cell also gets a
 *    receiver: its highest lower neighbour (or the outside, for a cell touching an outlet).
 * 2. Following receivers downhill from any cell ends at a pit or at the outside, and that whole path
 *    lies below the cell, so the cell's component at any later time is the one holding that pit.
 * 3. Only the critical cells (pits and passes — a small fraction) are sorted, and a union-find over
 *    the pits alone replays the sweep's merges at them, in the same order, with the same neighbour
 *    groups, so nodes, parents, spill cells and pour cells come out identical.
 * 4. Every other cell's label is its receiver's label, raised to the ancestor that was current when
 *    the cell joined (ancestors whose spill came before the cell in the order are passed).
 */
export function sweepByCriticalCells(cx: GridComplex, sort: (values: Float32Array | Float64Array) => Uint32Array): DepressionSweep {
  const values = cx.values;
  const n = cx.n, w = cx.w, h = cx.h;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: the depression sweep needs the open boundary');
  const stencil = cx.sweepStencil(true);
  const reps = stencil.representatives, roff = stencil.offsets, rs = roff.length, nbrMask = stencil.nbrMask;
  const nbr = new Int32Array(cx.maxDegree + 1);
  const w1 = w - 1, h1 = h - 1;

  // phase 1: receivers, pits, critical cells; `slot` holds the pit id (−1 = the outside) of each
  // pit and outlet cell, UNSET elsewhere
  const UNSET = -2;
  const recv = new Uint8Array(n);
  const slot = new Int32Array(n);
  let pits = 0, critical = 0;
  for (let r = 0, i = 0; r < h; r++) {
    const interiorRow = r > 0 && r < h1;
    for (let c = 0; c < w; c++, i++) {
      const z = values[i];
      if (z !== z) { recv[i] = RECV_NONE; slot[i] = UNSET; continue; }
      if (interiorRow && c > 0 && c < w1) {
        // lower neighbours (mask), and the receiver: the highest of them in the graph. (Any lower
        // neighbour would do; the highest leaves the fewest spills between a cell and its
        // receiver, and so the fewest steps up the tree in phase 4.)
        let mask = 0, best = -1, bz = -Infinity;
        for (let q = 0; q < rs; q++) {
          const j = i + roff[q];
          const y = values[j];
          if (y < z || (y === z && j < i)) {
            mask |= 1 << q;
            if (y > bz && (nbrMask >> q) & 1) { best = q; bz = y; }
          }
        }
        const rep = reps[mask];
        if (omegaAdj[i] === 1) {
          recv[i] = RECV_OMEGA | (rep !== 0 ? CRITICAL : 0);
          slot[i] = -1;
          if (rep !== 0) critical++;
        } else if (rep === 0) {
          recv[i] = RECV_NONE | CRITICAL;
          slot[i] = pits++;
          critical++;
        } else {
          recv[i] = best | ((rep & (rep - 1)) !== 0 ? CRITICAL : 0);
          slot[i] = UNSET;
          if ((rep & (rep - 1)) !== 0) critical++;
        }
      } else {
        // the grid edge: every cell there touches an outlet
        const k = cx.sublevelNbrs(i, nbr);
        let any = false;
        for (let q = 0; q < k; q++) { const j = nbr[q], y = values[j]; if (y < z || (y === z && j < i)) { any = true; break; } }
        recv[i] = RECV_OMEGA | (any ? CRITICAL : 0);
        slot[i] = -1;
        if (any) critical++;
      }
    }
  }
  // phase 2: the pit (or the outside) at the end of every cell's receiver path
  let stack = new Int32Array(1024);
  const push = (sp: number, x: number): number => {
    if (sp === stack.length) { const b = new Int32Array(stack.length * 2); b.set(stack); stack = b; }
    stack[sp] = x;
    return sp + 1;
  };
  for (let i = 0; i < n; i++) {
    if (slot[i] !== UNSET || recv[i] === RECV_NONE) continue;
    let sp = 0, x = i;
    while (slot[x] === UNSET) { sp = push(sp, x); x += roff[recv[x] & 15]; }
    const root = slot[x];
    while (sp > 0) slot[stack[--sp]] = root;
  }
  // phase 3: the critical cells, in (value, index) order, replay the sweep over pit components
  const crit = new Int32Array(critical);
  const critValues = values instanceof Float32Array ? new Float32Array(critical) : new Float64Array(critical);
  for (let i = 0, m = 0; i < n; i++) if (recv[i] & CRITICAL) { crit[m] = i; critValues[m++] = values[i]; }
  const corder = sort(critValues);
  const critLabel = new Int32Array(critical);
  const uf = new Int32Array(pits + 1); // pit components; entry `pits` is the outside (node 0)
  uf[pits] = -1;
  const OUT = pits;

  let cap = 1024;
  let vertex = new Int32Array(cap), birth = new Int32Array(cap), parent = new Int32Array(cap);
  let spill = new Int32Array(cap), entry = new Int32Array(cap), to = new Int32Array(cap);
  const grow = () => {
    cap *= 2;
    const gi = (a: Int32Array) => { const b = new Int32Array(cap); b.set(a); return b; };
    vertex = gi(vertex); birth = gi(birth); parent = gi(parent); spill = gi(spill); entry = gi(entry); to = gi(to);
  };
  vertex[0] = -1; birth[0] = -1; parent[0] = -1; spill[0] = -1; entry[0] = -1; to[0] = -1;
  let count = 1;
  const rank = new Uint8Array(pits + 1);
  const roots = new Int32Array(16), ents = new Int32Array(16);
  const find = (p: number): number => {
    let x = p < 0 ? OUT : p;
    for (;;) {
      const a = uf[x];
      if (a < 0) return x;
      const b = uf[a];
      if (b < 0) return a;
      uf[x] = b;
      x = b;
    }
  };

  for (let o = 0; o < critical; o++) {
    const pos = corder[o];
    const v = crit[pos];
    const z = values[v];
    const code = recv[v] & 15;
    if (code === RECV_NONE) {
      // a pit: a new component
      if (count === cap) grow();
      const k = count++;
      vertex[k] = v; birth[k] = v; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
      uf[slot[v]] = -1 - k;
      critLabel[pos] = k;
      continue;
    }
    let nr = 0;
    const r = (v / w) | 0, c = v - r * w;
    if (c > 0 && c < w1 && r > 0 && r < h1) {
      let mask = 0;
      for (let q = 0; q < rs; q++) {
        const j = v + roff[q], y = values[j];
        if (y < z || (y === z && j < v)) mask |= 1 << q;
      }
      let rep = reps[mask];
      while (rep !== 0) {
        const q = 31 - Math.clz32(rep & -rep);
        rep &= rep - 1;
        const j = v + roff[q];
        const x = find(slot[j]);
        let t = 0;
        while (t < nr && roots[t] !== x) t++;
        if (t === nr) { roots[nr] = x; ents[nr++] = j; }
      }
    } else {
      const k = cx.sublevelNbrs(v, nbr);
      for (let q = 0; q < k; q++) {
        const j = nbr[q], y = values[j];
        if (!(y < z || (y === z && j < v))) continue;
        const x = find(slot[j]);
        let t = 0;
        while (t < nr && roots[t] !== x) t++;
        if (t === nr) { roots[nr] = x; ents[nr++] = j; }
      }
    }
    const atOutlet = omegaAdj[v] === 1;
    if (atOutlet) {
      let t = 0;
      while (t < nr && roots[t] !== OUT) t++;
      if (t === nr) { roots[nr] = OUT; ents[nr++] = -2; }
    }
    if (nr === 1) { critLabel[pos] = -1 - uf[roots[0]]; continue; }
    let omegaAt = -1;
    for (let t = 0; t < nr; t++) if (roots[t] === OUT) { omegaAt = t; break; }
    if (omegaAt >= 0) {
      const toCell = atOutlet ? -2 : ents[omegaAt];
      for (let t = 0; t < nr; t++) {
        if (t === omegaAt) continue;
        const R = roots[t];
        const k = -1 - uf[R];
        parent[k] = 0; spill[k] = v; entry[k] = ents[t]; to[k] = toCell;
        uf[R] = OUT;
      }
      critLabel[pos] = 0;
    } else {
      if (count === cap) grow();
      const k = count++;
      let top = roots[0], eb = -1, ebz = Infinity;
      for (let t = 0; t < nr; t++) {
        const R = roots[t];
        const ch = -1 - uf[R];
        parent[ch] = k; spill[ch] = v; entry[ch] = ents[t]; to[ch] = -1;
        const bi = birth[ch], bz = values[bi];
        if (bz < ebz || (bz === ebz && bi < eb)) { eb = bi; ebz = bz; }
        if (rank[R] > rank[top]) top = R;
      }
      vertex[k] = v; birth[k] = eb; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
      for (let t = 0; t < nr; t++) {
        const R = roots[t];
        if (R === top) continue;
        uf[R] = top;
        if (rank[R] === rank[top] && rank[top] < 255) rank[top]++;
      }
      uf[top] = -1 - k;
      critLabel[pos] = k;
    }
  }
  // phase 4: labels. `slot` becomes the label array: critical cells first, then every other cell
  // from its receiver's label, raised past the ancestors that spilled before the cell.
  for (let m = 0; m < critical; m++) { const v = crit[m]; slot[v] = critLabel[m]; recv[v] |= LABELLED; }
  const label = slot;
  // per node, side by side (one cache line per step up the tree): spill level, spill cell, parent
  const up = new Float64Array(3 * count);
  for (let k = 0; k < count; k++) {
    const s = spill[k];
    up[3 * k] = k > 0 && s >= 0 ? values[s] : Infinity;
    up[3 * k + 1] = s;
    up[3 * k + 2] = parent[k];
  }
  for (let i = 0; i < n; i++) {
    const code = recv[i];
    if (code & LABELLED || code === RECV_NONE) continue;
    let sp = 0, x = i;
    for (;;) {
      const cx2 = recv[x];
      if (cx2 & LABELLED) break;
      if ((cx2 & 15) === RECV_OMEGA) { label[x] = 0; recv[x] |= LABELLED; break; }
      sp = push(sp, x);
      x += roff[cx2 & 15];
    }
    // going up the path: the current node and its spill cell and level stay in registers; they
    // are read again only when the cell is above that spill (the node had merged by then)
    let k = label[x];
    let kz = up[3 * k], ks = up[3 * k + 1];
    while (sp > 0) {
      const y = stack[--sp];
      const zy = values[y];
      while (kz < zy || (kz === zy && ks < y)) {
        k = up[3 * k + 2];
        kz = up[3 * k];
        ks = up[3 * k + 1];
      }
      label[y] = k;
      recv[y] |= LABELLED;
    }
  }
  const cut = (a: Int32Array): Int32Array => a.slice(0, count);
  return {
    count,
    vertex: cut(vertex), birth: cut(birth), parent: cut(parent), spill: cut(spill), entry: cut(entry), to: cut(to),
    label,
    spare: { buffer: new ArrayBuffer(0), byteOffset: 0, byteLength: 0 },
  };
}
