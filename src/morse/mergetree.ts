/**
 * Merge trees by union-find sweeps over the (value, index) order.
 * Join tree: components of sublevel sets (leaves are pits, inner nodes are the passes where
 * components meet). Split tree: components of superlevel sets (leaves are peaks).
 * Persistence pairs follow the elder rule: at a merge, every component but the oldest dies.
 * A virtual vertex (ω at −∞ for the join tree on an open boundary, τ at +∞ for the split tree
 * on a closed one) is the oldest of all; its node has vertex −1.
 */
import { GridComplex, type SurfaceComplex } from '../surface/complex.js';
import { IntList } from './growable.js';

export interface MergeTree {
  kind: 'join' | 'split';
  /** Node → vertex (−1 for the virtual vertex). Nodes are numbered in sweep order, so children come before parents. */
  vertex: Int32Array;
  /** Node → parent node, −1 for a root. */
  parent: Int32Array;
  /** Node → the vertex that created the oldest component in its subtree (−1 = virtual). */
  birth: Int32Array;
  /** Node → number of children (0 for a leaf). */
  childCount: Int32Array;
  /** True when node 0 is the virtual vertex. */
  hasVirtual: boolean;
  /** Elder-rule pairs (birth vertex, death vertex): component created at birth dies at death. */
  pairBirth: Int32Array;
  pairDeath: Int32Array;
}

/**
 * Sweep the order upward (join tree) or downward (split tree).
 * @param order ascending (value, index) order of the valid vertices
 * @param scratch optional work buffer of at least cx.n + 1 entries, reused between sweeps to save
 *   memory (its contents are overwritten); without it the sweep allocates its own.
 */
export function buildMergeTree(cx: SurfaceComplex, order: Uint32Array, kind: 'join' | 'split', scratch?: Int32Array): MergeTree {
  const n = cx.n;
  const values = cx.values;
  const up = kind === 'join';
  const virtualAdj = up ? (cx.hasOmega ? cx.omegaAdj : null) : (cx.hasTop ? cx.topAdj : null);
  // Union-find forest, one entry per vertex (+1 for the virtual vertex at index n), set when the
  // vertex is swept: p + 1 (> 0) = parent p, −1 − node (< 0) = a root carrying its tree node.
  // Entries of vertices not swept yet are never read, so a reused buffer needs no clearing.
  const parent = scratch !== undefined && scratch.length >= n + 1 ? scratch : new Int32Array(n + 1);
  // swept vertices, one bit each: small enough to stay in cache while the forest does not
  const done = new Int32Array((n + 32) >>> 5);
  const nodeVertex = new IntList(1024), nodeParent = new IntList(1024), nodeBirth = new IntList(1024), nodeChildren = new IntList(1024);
  const pairB = new IntList(1024), pairD = new IntList(1024);
  const nbr = new Int32Array(cx.maxDegree + 1);
  const roots = new Int32Array(cx.maxDegree + 1);

  const newNode = (vtx: number, birth: number): number => {
    nodeVertex.push(vtx);
    nodeParent.push(-1);
    nodeChildren.push(0);
    return nodeBirth.push(birth);
  };
  const find = (x: number): number => {
    for (;;) {
      const p = parent[x];
      if (p < 0) return x;
      const gp = parent[p - 1];
      if (gp < 0) return p - 1;
      parent[x] = gp; // path halving: x now points to its grandparent
      x = gp - 1;
    }
  };
  /** true when component birth a is older than b in this sweep's direction */
  const older = (a: number, b: number): boolean => {
    if (a < 0) return true;
    if (b < 0) return false;
    const va = values[a], vb = values[b];
    return up ? va < vb || (va === vb && a < b) : va > vb || (va === vb && a > b);
  };
  const addRoot = (nr: number, r: number): number => {
    for (let t = 0; t < nr; t++) if (roots[t] === r) return nr;
    roots[nr] = r;
    return nr + 1;
  };
  /** Vertex v joins the nr distinct components in roots[]: the oldest survives, the others die at v. */
  const merge = (v: number, nr: number): void => {
    let elder = roots[0];
    for (let t = 1; t < nr; t++) {
      const r = roots[t];
      if (older(nodeBirth.data[-1 - parent[r]], nodeBirth.data[-1 - parent[elder]])) elder = r;
    }
    const elderBirth = nodeBirth.data[-1 - parent[elder]];
    const node = newNode(v, elderBirth);
    for (let t = 0; t < nr; t++) {
      const r = roots[t];
      const child = -1 - parent[r];
      nodeParent.data[child] = node;
      nodeChildren.data[node]++;
      if (r !== elder) { pairB.push(nodeBirth.data[child]); pairD.push(v); }
    }
    for (let t = 0; t < nr; t++) {
      const r = roots[t];
      if (r !== elder) parent[r] = elder + 1;
    }
    parent[v] = elder + 1;
    parent[elder] = -1 - node;
  };

  if (virtualAdj !== null) {
    const node = newNode(-1, -1);
    parent[n] = -1 - node;
  }

  // Interior grid cells away from the virtual vertex: which ring positions are swept already
  // tells, through the stencil tables, whether v starts a component, can only extend one (no
  // find needed), or may join several (one find per group of connected neighbours).
  const grid = cx instanceof GridComplex ? cx : null;
  const stencil = grid !== null ? grid.sweepStencil(up) : null;
  // without nodata, only cells on the grid edge can touch the virtual vertex
  const interiorVirtual = virtualAdj !== null && (grid === null || grid.hasNodata);
  const w = grid !== null ? grid.w : 0, h = grid !== null ? grid.h : 0;
  const off = stencil !== null ? stencil.offsets : new Int32Array(0);
  const comps = stencil !== null ? stencil.components : new Uint8Array(1);
  const nbrMask = stencil !== null ? stencil.nbrMask : 0;
  const repr = stencil !== null ? stencil.representatives : new Uint8Array(1);
  const win = stencil !== null ? stencil.windowToRing : new Uint8Array(512);
  const rs = off.length;
  // ring position 0 is the east neighbour; the west one is position 4 of 8, or 3 of 6
  const westPos = rs === 6 ? 3 : 4, westBit = 1 << westPos;
  // cells that take the general path, one bit each: the grid edge, and cells next to the virtual
  // vertex when nodata lets it reach the interior
  let slow: Int32Array | null = null;
  if (grid !== null) {
    slow = new Int32Array((n + 32) >>> 5);
    const mark = (i: number): void => { slow![i >>> 5] |= 1 << (i & 31); };
    for (let c = 0; c < w; c++) { mark(c); mark((h - 1) * w + c); }
    for (let r = 0; r < h; r++) { mark(r * w); mark(r * w + w - 1); }
    if (interiorVirtual) for (let i = 0; i < n; i++) if (virtualAdj![i]) mark(i);
  }
  /** Flags of cells j, j + 1, j + 2 in the bit set, as bits 0–2. */
  const three = (bits: Int32Array, j: number): number => {
    const q = j >>> 5, sh = j & 31;
    let x = bits[q] >>> sh;
    if (sh > 29) x |= bits[q + 1] << (32 - sh);
    return x & 7;
  };

  const m = order.length;
  for (let s = 0; s < m; s++) {
    const v = order[up ? s : m - 1 - s];
    done[v >>> 5] |= 1 << (v & 31);
    if (slow !== null && ((slow[v >>> 5] >>> (v & 31)) & 1) === 0) {
      const swept = win[three(done, v - w - 1) | (three(done, v - 1) << 3) | (three(done, v + w - 1) << 6)];
      const groups = comps[swept];
      if (groups === 1) {
        // all swept neighbours are in one component: attach v under any of them, preferring
        // the neighbours on its own row (their forest entries share v's cache line)
        const nb = swept & nbrMask;
        const k = nb & 1 ? 0 : nb & westBit ? westPos : 31 - Math.clz32(nb & -nb);
        const j = v + off[k];
        const p = parent[j];
        parent[v] = p > 0 ? p : j + 1;
        continue;
      }
      if (groups === 0) {
        parent[v] = -1 - newNode(v, v);
        continue;
      }
      // one find per group of neighbours already known to be connected, in ring order
      // (the first neighbour of each group), so roots[] is ordered as a scan of all would order it
      let nr = 0;
      for (let reps = repr[swept]; reps !== 0; reps &= reps - 1) {
        nr = addRoot(nr, find(v + off[31 - Math.clz32(reps & -reps)]));
      }
      if (nr === 1) parent[v] = roots[0] + 1;
      else merge(v, nr);
      continue;
    }
    const k = up ? cx.sublevelNbrs(v, nbr) : cx.superlevelNbrs(v, nbr);
    let nr = 0;
    for (let q = 0; q < k; q++) {
      const j = nbr[q];
      if (((done[j >>> 5] >>> (j & 31)) & 1) === 0) continue;
      nr = addRoot(nr, find(j));
    }
    if (virtualAdj !== null && virtualAdj[v]) nr = addRoot(nr, find(n));
    if (nr === 0) {
      parent[v] = -1 - newNode(v, v);
    } else if (nr === 1) {
      parent[v] = roots[0] + 1;
    } else {
      merge(v, nr);
    }
  }
  return {
    kind,
    vertex: nodeVertex.toArray(),
    parent: nodeParent.toArray(),
    birth: nodeBirth.toArray(),
    childCount: nodeChildren.toArray(),
    hasVirtual: virtualAdj !== null,
    pairBirth: pairB.toArray(),
    pairDeath: pairD.toArray(),
  };
}

/**
 * Simplify a merge tree by persistence: a leaf survives when its component lives at least
 * `minPersistence` (or forever); a merge node survives when two or more surviving branches meet there.
 * Returns a new tree over the surviving nodes (pairs are those of the survivors).
 */
export function simplifyMergeTree(tree: MergeTree, values: ArrayLike<number>, minPersistence: number): MergeTree {
  if (!(minPersistence > 0)) return tree;
  const nn = tree.vertex.length;
  // death of each leaf's component: from the pairs
  const deathOfBirth = new Map<number, number>();
  for (let p = 0; p < tree.pairBirth.length; p++) deathOfBirth.set(tree.pairBirth[p], tree.pairDeath[p]);
  const rep = new Int32Array(nn).fill(-1);
  const kids: number[][] = Array.from({ length: nn }, () => []);
  for (let i = 0; i < nn; i++) if (tree.parent[i] >= 0) kids[tree.parent[i]].push(i);
  const V = new IntList(), P = new IntList(), B = new IntList(), C = new IntList();
  const pb = new IntList(), pd = new IntList();
  const add = (vtx: number, birth: number) => { V.push(vtx); P.push(-1); C.push(0); return B.push(birth); };
  const persistence = (birth: number): number => {
    if (birth < 0) return Infinity;
    const d = deathOfBirth.get(birth);
    return d === undefined ? Infinity : Math.abs(values[d] - values[birth]);
  };
  for (let i = 0; i < nn; i++) {
    if (kids[i].length === 0) {
      if (persistence(tree.vertex[i] < 0 ? -1 : tree.birth[i]) >= minPersistence) rep[i] = add(tree.vertex[i], tree.birth[i]);
      continue;
    }
    const live = kids[i].map((c) => rep[c]).filter((r) => r >= 0);
    if (live.length >= 2) {
      const node = add(tree.vertex[i], tree.birth[i]);
      for (const r of live) {
        P.data[r] = node;
        C.data[node]++;
        if (B.data[r] !== tree.birth[i]) { pb.push(B.data[r]); pd.push(tree.vertex[i]); }
      }
      rep[i] = node;
    } else if (live.length === 1) {
      rep[i] = live[0];
    }
  }
  return {
    kind: tree.kind,
    vertex: V.toArray(), parent: P.toArray(), birth: B.toArray(), childCount: C.toArray(),
    hasVirtual: tree.hasVirtual,
    pairBirth: pb.toArray(), pairDeath: pd.toArray(),
  };
}
