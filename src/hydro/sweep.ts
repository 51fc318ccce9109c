/**
 * The depression sweep: one union-find pass over the cells in (value, index) order — the same
 * order, neighbour graph and outside vertex ω as the join tree of src/morse — that also keeps,
 * for every tree node, the running sums a volume needs:
 *   cells N, Σ a (area), Σ a·(z − z0), and how many of the latest cells share the top value
 * (they lie exactly at the spill level and hold no water).
 * At the pass where a component meets another one its sums are final, so its volume at the
 * spill level h is  V = (h − z0)·Σa − Σa·(z − z0)  without a second pass over its cells.
 * Per cell it records the node whose component the cell joined (Int32 label).
 *
 * Node 0 is ω (the outside: grid edge and draining nodata). Nodes are numbered in sweep order,
 * so a child always has a smaller number than its parent.
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
  /** Node → number of cells of its component when it spilled. */
  cells: Float64Array;
  /** Node → Σ a over its cells (a = row weight, see `rowArea`). */
  sumA: Float64Array;
  /** Node → Σ a·(z − z0). */
  sumAz: Float64Array;
  /** Node → value of the latest cell joined. */
  lastZ: Float64Array;
  /** Node → cells (and Σ a) at that latest value. */
  tieCells: Float64Array;
  tieA: Float64Array;
  /** Offset subtracted from every value in the sums (the lowest value), for precision. */
  z0: number;
  /** Cell → node whose component it joined: 0 = the outside, −1 = nodata. */
  label: Int32Array;
  /** The union-find array (length n + 1), handed back so its memory can be reused. */
  scratch: Int32Array;
}

/** Ring offsets (dcol, drow) of the sublevel graph, as in src/surface/complex.ts. */
export function sublevelOffsets(conn: 4 | 6 | 8): [number, number][] {
  if (conn === 4) return [[1, 0], [0, 1], [-1, 0], [0, -1]];
  if (conn === 6) return [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]];
  return [[1, 0], [1, 1], [0, 1], [-1, 1], [-1, 0], [-1, -1], [0, -1], [1, -1]];
}


/**
 * For every set `mask` of ring positions already swept: one ring position per group of swept
 * positions that are already in one component — joined by graph edges between swept positions
 * (those edges are in the sublevel set) — counting only groups that hold a graph neighbour of
 * the centre. One union-find lookup per group is then enough.
 */
function groupRepresentatives(conn: 4 | 6 | 8): { dc: number[]; dr: number[]; reps: Uint8Array } {
  const dc = conn === 6 ? [1, 1, 0, -1, -1, 0] : [1, 1, 0, -1, -1, -1, 0, 1];
  const dr = conn === 6 ? [0, 1, 1, 0, -1, -1] : [0, 1, 1, 1, 0, -1, -1, -1];
  const k = dc.length;
  const adjacent = (a: number, b: number): boolean => {
    const x = dc[a] - dc[b], y = dr[a] - dr[b], ax = Math.abs(x), ay = Math.abs(y);
    if (conn === 8) return Math.max(ax, ay) === 1;
    if (conn === 4) return ax + ay === 1;
    return ax + ay === 1 || (x === y && ax === 1);
  };
  const isNbr = (q: number): boolean => (conn === 4 ? dc[q] === 0 || dr[q] === 0 : true);
  const reps = new Uint8Array(1 << k);
  const lab = new Int8Array(k);
  for (let mask = 0; mask < 1 << k; mask++) {
    for (let q = 0; q < k; q++) lab[q] = mask & (1 << q) ? q : -1;
    for (let changed = true; changed;) {
      changed = false;
      for (let a = 0; a < k; a++) {
        if (lab[a] < 0) continue;
        for (let b = 0; b < k; b++) {
          if (lab[b] < 0 || lab[b] <= lab[a] || !adjacent(a, b)) continue;
          lab[b] = lab[a];
          changed = true;
        }
      }
    }
    let out = 0;
    for (let root = 0; root < k; root++) {
      if (lab[root] !== root) continue;
      for (let q = 0; q < k; q++) if (lab[q] === root && isNbr(q)) { out |= 1 << q; break; }
    }
    reps[mask] = out;
  }
  return { dc, dr, reps };
}

/** Union-find value of a cell not swept yet (or nodata, which is never swept). */
const UNSWEPT = -0x80000000;
/** Fields of a node's record in the interleaved Float64 statistics (one cache line per node). */
const STRIDE = 8, CELLS = 0, SUMA = 1, SUMAZ = 2, LASTZ = 3, TIEN = 4, TIEA = 5;

/**
 * @param cx      the grid complex (open boundary) — its ω-adjacency and neighbour graph are used
 * @param order   ascending (value, index) order of the valid cells (src/morse/order.ts)
 * @param rowArea weight of each row's cells (ignored when `uniform`: every cell weighs 1 and the caller scales)
 */
export function sweepDepressions(cx: GridComplex, order: Uint32Array, rowArea: Float64Array, uniform: boolean): DepressionSweep {
  const values = cx.values;
  const n = cx.n, w = cx.w, h = cx.h;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: the depression sweep needs the open boundary');
  const m = order.length;
  const z0 = m > 0 ? values[order[0]] : 0;

  const { dc, dr, reps } = groupRepresentatives(cx.connectivity);
  const rs = dc.length;
  const roff = new Int32Array(rs);
  for (let q = 0; q < rs; q++) roff[q] = dr[q] * w + dc[q];

  const label = new Int32Array(n);
  const swept = new Uint8Array(n);
  const uf = new Int32Array(n + 1).fill(UNSWEPT);
  uf[n] = -1; // ω's root holds node 0

  let cap = 1024;
  let vertex = new Int32Array(cap), birth = new Int32Array(cap), parent = new Int32Array(cap);
  let spill = new Int32Array(cap), entry = new Int32Array(cap), to = new Int32Array(cap);
  let st = new Float64Array(cap * STRIDE);
  const grow = () => {
    cap *= 2;
    const gi = (a: Int32Array) => { const b = new Int32Array(cap); b.set(a); return b; };
    vertex = gi(vertex); birth = gi(birth); parent = gi(parent); spill = gi(spill); entry = gi(entry); to = gi(to);
    const b = new Float64Array(cap * STRIDE); b.set(st); st = b;
  };
  vertex[0] = -1; birth[0] = -1; parent[0] = -1; spill[0] = -1; entry[0] = -1; to[0] = -1;
  let count = 1;

  const roots = new Int32Array(16), ents = new Int32Array(16);
  const nbr = new Int32Array(cx.maxDegree + 1);
  const w1 = w - 1, h1 = h - 1;

  for (let s = 0; s < m; s++) {
    const v = order[s];
    const z = values[v];
    const r = (v / w) | 0;
    const c = v - r * w;
    let nr = 0;
    if (c > 0 && c < w1 && r > 0 && r < h1) {
      let mask = 0;
      for (let q = 0; q < rs; q++) mask |= swept[v + roff[q]] << q; // branch-free: the flags are unpredictable
      let rep = reps[mask];
      while (rep !== 0) {
        const q = 31 - Math.clz32(rep & -rep);
        rep &= rep - 1;
        const j = v + roff[q];
        let x = j;
        for (;;) {
          const p = uf[x];
          if (p < 0) break;
          const gp = uf[p];
          if (gp < 0) { x = p; break; }
          uf[x] = gp;
          x = gp;
        }
        let t = 0;
        while (t < nr && roots[t] !== x) t++;
        if (t === nr) { roots[nr] = x; ents[nr++] = j; }
      }
    } else {
      const k = cx.sublevelNbrs(v, nbr);
      for (let q = 0; q < k; q++) {
        const j = nbr[q];
        if (uf[j] === UNSWEPT) continue;
        let x = j;
        for (;;) {
          const p = uf[x];
          if (p < 0) break;
          const gp = uf[p];
          if (gp < 0) { x = p; break; }
          uf[x] = gp;
          x = gp;
        }
        let t = 0;
        while (t < nr && roots[t] !== x) t++;
        if (t === nr) { roots[nr] = x; ents[nr++] = j; }
      }
    }
    swept[v] = 1;
    const atOutlet = omegaAdj[v] === 1;
    if (atOutlet) {
      let t = 0;
      while (t < nr && roots[t] !== n) t++;
      if (t === nr) { roots[nr] = n; ents[nr++] = -2; }
    }
    const a = uniform ? 1 : rowArea[r];
    const zr = z - z0;

    if (nr === 0) {
      // a pit: a new component
      if (count === cap) grow();
      const k = count++;
      vertex[k] = v; birth[k] = v; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
      const b = k * STRIDE;
      st[b + CELLS] = 1; st[b + SUMA] = a; st[b + SUMAZ] = a * zr; st[b + LASTZ] = z; st[b + TIEN] = 1; st[b + TIEA] = a;
      uf[v] = -1 - k;
      label[v] = k;
    } else if (nr === 1) {
      const R = roots[0];
      const k = -1 - uf[R];
      uf[v] = R;
      label[v] = k;
      if (k !== 0) {
        const b = k * STRIDE;
        st[b + CELLS] += 1; st[b + SUMA] += a; st[b + SUMAZ] += a * zr;
        if (st[b + LASTZ] === z) { st[b + TIEN] += 1; st[b + TIEA] += a; } else { st[b + LASTZ] = z; st[b + TIEN] = 1; st[b + TIEA] = a; }
      }
    } else {
      let omegaAt = -1;
      for (let t = 0; t < nr; t++) if (roots[t] === n) { omegaAt = t; break; }
      if (omegaAt >= 0) {
        // every other component spills to the outside here
        const toCell = atOutlet ? -2 : ents[omegaAt];
        for (let t = 0; t < nr; t++) {
          if (t === omegaAt) continue;
          const R = roots[t];
          const k = -1 - uf[R];
          parent[k] = 0; spill[k] = v; entry[k] = ents[t]; to[k] = toCell;
          uf[R] = n;
        }
        uf[v] = n;
        label[v] = 0;
      } else {
        // components meet at a pass: a new node over them
        if (count === cap) grow();
        const k = count++;
        let top = roots[0], topCells = -1;
        let eb = -1, ebz = Infinity;
        let N = 1, SA = a, SAZ = a * zr, TN = 1, TA = a;
        for (let t = 0; t < nr; t++) {
          const R = roots[t];
          const ch = -1 - uf[R];
          parent[ch] = k; spill[ch] = v; entry[ch] = ents[t]; to[ch] = -1;
          const b = ch * STRIDE;
          const cells = st[b + CELLS];
          N += cells; SA += st[b + SUMA]; SAZ += st[b + SUMAZ];
          if (st[b + LASTZ] === z) { TN += st[b + TIEN]; TA += st[b + TIEA]; }
          const bi = birth[ch], bz = values[bi];
          if (bz < ebz || (bz === ebz && bi < eb)) { eb = bi; ebz = bz; }
          if (cells > topCells) { top = R; topCells = cells; }
        }
        vertex[k] = v; birth[k] = eb; parent[k] = -1; spill[k] = -1; entry[k] = -1; to[k] = -1;
        const b = k * STRIDE;
        st[b + CELLS] = N; st[b + SUMA] = SA; st[b + SUMAZ] = SAZ; st[b + LASTZ] = z; st[b + TIEN] = TN; st[b + TIEA] = TA;
        for (let t = 0; t < nr; t++) if (roots[t] !== top) uf[roots[t]] = top;
        uf[top] = -1 - k;
        uf[v] = top;
        label[v] = k;
      }
    }
  }
  const cut = (a: Int32Array): Int32Array => a.slice(0, count);
  const field = (f: number): Float64Array => {
    const out = new Float64Array(count);
    for (let k = 0; k < count; k++) out[k] = st[k * STRIDE + f];
    return out;
  };
  return {
    count,
    vertex: cut(vertex), birth: cut(birth), parent: cut(parent), spill: cut(spill), entry: cut(entry), to: cut(to),
    cells: field(CELLS), sumA: field(SUMA), sumAz: field(SUMAZ), lastZ: field(LASTZ), tieCells: field(TIEN), tieA: field(TIEA),
    z0,
    label,
    scratch: uf,
  };
}
