/**
 * The depression sweep: one union-find pass over the cells in (value, index) order — the same
 * order, neighbour graph and outside vertex ω as the join tree of src/morse — that records the
 * tree of components (pits, the passes where components meet, the pass where each one reaches
 * the outside) and, per cell, the node whose component the cell joined (Int32 label).
 *
 * The volume sums then come from one pass over the cells in storage order (sequential, so
 * cheap), added up the tree: for every node, its cells N, Σ a (area), Σ a·(z − z0), and the
 * cells that lie exactly at its spill level (ties on the rim; they hold no water). With these,
 * the volume at the spill level h is  V = (h − z0)·Σa − Σa·(z − z0)  — no pass per depression.
 *
 * Node 0 is ω (the outside: grid edge and draining nodata). Nodes are numbered in sweep order,
 * so a child always has a smaller number than its parent.
 *
 * Memory: the union-find parent and the label of a cell sit side by side (one cache line holds
 * both for a cell and its row neighbours), 8 bytes per cell.
 * Which neighbours of a cell come before it is worked out beforehand in storage order, so the
 * sweep itself reads little more than the union-find entries it needs.
 */
import type { GridComplex } from '../surface/complex.js';

export interface DepressionSweep {
  /** Number of nodes, ω (node 0) included. */
  count: number;
  /** Node → the cell that created it (pit, or the pass where components met); −1 for ω. */
  vertex: Int32Array;
  /** Node → lowest cell of its component (the pit it drains to). */
  birth: Int32Array;
  /** Node → parent node: 0 = it spilled to the outside, −1 = it never spilled (no outlet). */
  parent: Int32Array;
  /** Node → the cell where its component met another one (the pass), −1 if it never did. */
  spill: Int32Array;
  /** Node → the neighbour of the spill cell that lies in this component. */
  entry: Int32Array;
  /** Node that spilled to the outside → the neighbour of the spill cell in the outside's component, or −2 when the spill cell touches an outlet itself. */
  to: Int32Array;
  /** Cell → node whose component it joined (0 = the outside); undefined on nodata cells. */
  label: Int32Array;
  /** Memory free after the sweep (the union-find half of the cell array), for reuse. */
  spare: { buffer: ArrayBuffer; byteOffset: number; byteLength: number };
  /** The volume sums, when the sweep was asked for them. */
  sums?: NodeSums;
}

export interface NodeSums {
  /** Offset subtracted from every value in the sums (the lowest value), for precision. */
  z0: number;
  /**
   * One record of SUM_STRIDE numbers per node: cells of its component when it spilled (CELLS),
   * Σ a (SUMA), Σ a·(z − z0) (SUMAZ), cells and Σ a exactly at its spill level (TIEN, TIEA), the
   * spill level (+∞ when it never spilled; SPILLZ) and the pit value (PITZ).
   */
  rec: Float64Array;
}

export const SUM_STRIDE = 8, CELLS = 0, SUMA = 1, SUMAZ = 2, TIEN = 3, TIEA = 4, SPILLZ = 5, PITZ = 6;

/** Ring offsets (dcol, drow) of the sublevel graph, as in src/surface/complex.ts. */
export function sublevelOffsets(conn: 4 | 6 | 8): [number, number][] {
  if (conn === 4) return [[1, 0], [0, 1], [-1, 0], [0, -1]];
  if (conn === 6) return [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]];
  return [[1, 0], [1, 1], [0, 1], [-1, 1], [-1, 0], [-1, -1], [0, -1], [1, -1]];
}


/** Where the sweep leaves the values it read ahead (see sweepDepressions). */
export let prefetchSink = 0;

/** Bits of a cell's info word, written before the sweep into its label slot. */
const INFO_OUTLET = 1 << 8; // the cell touches an outlet (ω)
const INFO_EDGE = 1 << 9; // on the grid edge: neighbours are listed by the complex

/**
 * Info words of all cells, written into the odd entries of `cv`: bit q (ring position q of
 * the sweep stencil's representatives) is set when that neighbour comes before the cell in the (value, index)
 * order; INFO_OUTLET and INFO_EDGE as named. Each neighbouring pair is compared once: a cell
 * compares itself with its forward neighbours (later in storage order), and takes the backward
 * bits from its backward neighbours' forward bits, negated (the order is total). A nodata cell
 * keeps its forward bits all set, so that no cell sees it as lower.
 */
function lowerNeighbours(values: Float32Array | Float64Array, w: number, h: number, conn: 4 | 6 | 8, omegaAdj: Uint8Array, cv: Int32Array): void {
  const ring8 = conn !== 6;
  // forward ring positions: 8-ring (1,0) (1,1) (0,1) (−1,1) → bits 0–3; 6-ring (1,0) (1,1) (0,1) → bits 0–2
  const fwdAll = ring8 ? 0b1111 : 0b111;
  // backward bits (8-ring 4–7, 6-ring 3–5): the backward neighbour, already written, is lower
  // unless this cell is lower than it — its forward bit towards this cell, negated
  const b0 = ring8 ? 4 : 3;
  for (let r = 0, i = 0; r < h; r++) {
    const down = r < h - 1, interiorRow = r > 0 && down;
    for (let c = 0; c < w; c++, i++) {
      const z = values[i];
      if (z !== z) { cv[2 * i + 1] = fwdAll; continue; }
      const right = c < w - 1;
      // forward neighbours come later in storage order: lower only when strictly lower
      let info = 0;
      if (right) info |= +(values[i + 1] < z);
      if (down) {
        if (right) info |= +(values[i + w + 1] < z) << 1;
        info |= +(values[i + w] < z) << 2;
        if (ring8 && c > 0) info |= +(values[i + w - 1] < z) << 3;
      }
      if (interiorRow && c > 0 && right) {
        info |= ((cv[2 * (i - 1) + 1] & 1) ^ 1) << b0;
        info |= (((cv[2 * (i - w - 1) + 1] >> 1) & 1) ^ 1) << (b0 + 1);
        info |= (((cv[2 * (i - w) + 1] >> 2) & 1) ^ 1) << (b0 + 2);
        if (ring8) info |= (((cv[2 * (i - w + 1) + 1] >> 3) & 1) ^ 1) << 7;
      } else {
        info |= INFO_EDGE;
      }
      if (omegaAdj[i] === 1) info |= INFO_OUTLET;
      cv[2 * i + 1] = info;
    }
  }
}

/** The union-find root of cell `j` in the interleaved cell array, halving the path on the way. */
function findRoot(cv: Int32Array, j: number): number {
  let x = j;
  for (;;) {
    const p = cv[2 * x];
    if (p < 0) return x;
    const gp = cv[2 * p];
    if (gp < 0) return p;
    cv[2 * x] = gp;
    x = gp;
  }
}

/** Add root `x` (reached through neighbour `j`) to the first `nr` roots unless it is there; the new count. */
function addRoot(roots: Int32Array, ents: Int32Array, nr: number, x: number, j: number): number {
  for (let t = 0; t < nr; t++) if (roots[t] === x) return nr;
  roots[nr] = x;
  ents[nr] = j;
  return nr + 1;
}

/**
 * @param cx    the grid complex (open boundary) — its ω-adjacency and neighbour graph are used
 * @param order ascending (value, index) order of the valid cells (src/morse/order.ts)
 * @param areas when given, the volume sums are taken in the same pass that lays out the labels
 *              (the result's `sums`); rowArea as in nodeSums
 */
export function sweepDepressions(cx: GridComplex, order: Uint32Array, areas?: { rowArea: Float64Array; uniform: boolean }): DepressionSweep {
  const values = cx.values;
  const n = cx.n, w = cx.w, h = cx.h;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: the depression sweep needs the open boundary');
  const m = order.length;

  // one ring position per group of already-joined swept neighbours: the merge-tree sweep's stencil
  const stencil = cx.sweepStencil(true);
  const reps = stencil.representatives, roff = stencil.offsets, rs = roff.length;

  // cell i: cv[2i] union-find parent (a cell, or −1 − node at a root), cv[2i + 1] label. Entry 2n
  // is ω's root (node 0). Before the sweep, in storage order (cheap: sequential), the label slot
  // gets the cell's info word: which ring neighbours come before it in the order — exactly the
  // neighbours already swept when the sweep reaches it — and whether it touches an outlet.
  const cv = new Int32Array(2 * n + 2);
  lowerNeighbours(values, w, h, cx.connectivity, omegaAdj, cv);
  cv[2 * n] = -1;

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

  const roots = new Int32Array(16), ents = new Int32Array(16);
  const nbr = new Int32Array(cx.maxDegree + 1);

  // Reading the info word of the cell 32 places ahead in the order starts its (random) memory
  // access early, so that it overlaps the work on the cells before it; the value is folded into
  // `ahead` only so the read is not optimised away.
  let ahead = 0;
  for (let s = 0; s < m; s++) {
    const v = order[s];
    ahead ^= cv[2 * order[s + 32 < m ? s + 32 : s] + 1];
    const info = cv[2 * v + 1];
    let nr = 0;
    if ((info & INFO_EDGE) === 0) {
      // one union-find lookup per group of lower neighbours already joined through each other
      let rep = reps[info & 0xff];
      while (rep !== 0) {
        const q = 31 - Math.clz32(rep & -rep);
        rep &= rep - 1;
        const j = v + roff[q];
        nr = addRoot(roots, ents, nr, findRoot(cv, j), j);
      }
    } else {
      const z = values[v];
      const k = cx.sublevelNbrs(v, nbr);
      for (let q = 0; q < k; q++) {
        const j = nbr[q], y = values[j];
        if (!(y < z || (y === z && j < v))) continue;
        nr = addRoot(roots, ents, nr, findRoot(cv, j), j);
      }
    }
    const atOutlet = (info & INFO_OUTLET) !== 0;
    if (atOutlet) {
      let t = 0;
      while (t < nr && roots[t] !== n) t++;
      if (t === nr) { roots[nr] = n; ents[nr++] = -2; }
    }

    if (nr === 0) {
      // a pit: a new component
      if (count === cap) grow();
      const k = count++;
      vertex[k] = v; birth[k] = v; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
      cv[2 * v] = -1 - k;
      cv[2 * v + 1] = k;
    } else if (nr === 1) {
      const R = roots[0];
      cv[2 * v] = R;
      cv[2 * v + 1] = -1 - cv[2 * R];
    } else {
      let omegaAt = -1;
      for (let t = 0; t < nr; t++) if (roots[t] === n) { omegaAt = t; break; }
      if (omegaAt >= 0) {
        // every other component spills to the outside here
        const toCell = atOutlet ? -2 : ents[omegaAt];
        for (let t = 0; t < nr; t++) {
          if (t === omegaAt) continue;
          const R = roots[t];
          const k = -1 - cv[2 * R];
          parent[k] = 0; spill[k] = v; entry[k] = ents[t]; to[k] = toCell;
          cv[2 * R] = n;
        }
        cv[2 * v] = n;
        cv[2 * v + 1] = 0;
      } else {
        // components meet at a pass: a new node over them. The union-find root of the oldest
        // component (lowest pit, usually the largest) stays the root; path halving keeps the
        // trees shallow.
        if (count === cap) grow();
        const k = count++;
        let top = roots[0], eb = -1, ebz = Infinity;
        for (let t = 0; t < nr; t++) {
          const R = roots[t];
          const ch = -1 - cv[2 * R];
          parent[ch] = k; spill[ch] = v; entry[ch] = ents[t]; to[ch] = -1;
          const bi = birth[ch], bz = values[bi];
          if (bz < ebz || (bz === ebz && bi < eb)) { eb = bi; ebz = bz; top = R; }
        }
        vertex[k] = v; birth[k] = eb; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
        for (let t = 0; t < nr; t++) if (roots[t] !== top) cv[2 * roots[t]] = top;
        cv[2 * top] = -1 - k;
        cv[2 * v] = top;
        cv[2 * v + 1] = k;
      }
    }
  }
  prefetchSink = ahead;
  const cut = (a: Int32Array): Int32Array => a.slice(0, count);
  const sw: DepressionSweep = {
    count,
    vertex: cut(vertex), birth: cut(birth), parent: cut(parent), spill: cut(spill), entry: cut(entry), to: cut(to),
    label: new Int32Array(cv.buffer, 0, n),
    spare: { buffer: cv.buffer as ArrayBuffer, byteOffset: 4 * n, byteLength: 4 * (n + 2) },
  };
  if (areas) {
    // the labels move into the first half of the cell array while the volume sums are taken
    sw.sums = sumNodes(sw, values, w, areas.rowArea, areas.uniform, cv);
  } else {
    // labels into the first half of the cell array (reading ahead of writing), the rest is free
    for (let i = 0; i < n; i++) cv[i] = cv[2 * i + 1];
  }
  return sw;
}

/**
 * Per-node sums from the labels, in one pass over the cells in storage order, then added up the
 * tree (children have smaller numbers than their parents).
 * @param rowArea weight of each row's cells (ignored when `uniform`: every cell weighs 1)
 */
export function nodeSums(sw: DepressionSweep, values: Float32Array | Float64Array, width: number, rowArea: Float64Array, uniform: boolean): NodeSums {
  return sw.sums ?? sumNodes(sw, values, width, rowArea, uniform, null);
}

/** nodeSums; with `cv` (the sweep's interleaved cell array) the labels are read from it and laid out in its first half on the way. */
function sumNodes(sw: DepressionSweep, values: Float32Array | Float64Array, width: number, rowArea: Float64Array, uniform: boolean, cv: Int32Array | null): NodeSums {
  const K = sw.count, n = values.length;
  const height = n / width;
  const R = SUM_STRIDE;
  const rec = new Float64Array(R * K);
  for (let k = 1; k < K; k++) {
    rec[R * k + SPILLZ] = sw.spill[k] >= 0 ? values[sw.spill[k]] : Infinity;
    rec[R * k + PITZ] = values[sw.birth[k]];
  }
  let z0 = Infinity;
  for (let i = 0; i < n; i++) { const z = values[i]; if (z < z0) z0 = z; }
  if (z0 === Infinity) z0 = 0;
  const label = sw.label;
  const stride = cv ? 2 : 1, off = cv ? 1 : 0;
  const src = cv ?? label;
  for (let r = 0, i = 0; r < height; r++) {
    const a = uniform ? 1 : rowArea[r];
    for (let c = 0; c < width; c++, i++) {
      const k = src[stride * i + off];
      label[i] = k;
      const z = values[i];
      if (z !== z || k === 0) continue;
      const b = R * k;
      rec[b + CELLS] += 1; rec[b + SUMA] += a; rec[b + SUMAZ] += a * (z - z0);
      if (z === rec[b + SPILLZ]) { rec[b + TIEN] += 1; rec[b + TIEA] += a; }
    }
  }
  const parent = sw.parent;
  for (let k = 1; k < K; k++) {
    const p = parent[k];
    if (p <= 0) continue;
    const b = R * k, q = R * p;
    rec[q + CELLS] += rec[b + CELLS]; rec[q + SUMA] += rec[b + SUMA]; rec[q + SUMAZ] += rec[b + SUMAZ];
    // a child's cells at its spill level lie at the parent's spill level only when the two are equal
    if (rec[b + SPILLZ] === rec[q + SPILLZ]) { rec[q + TIEN] += rec[b + TIEN]; rec[q + TIEA] += rec[b + TIEA]; }
  }
  return { z0, rec };
}
