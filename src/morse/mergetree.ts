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
import { sortOrder } from './order.js';

/** What a sweep needs of a complex (grids and meshes in 2-D, and 3-D grids). */
export type SweepComplex = Pick<SurfaceComplex, 'n' | 'values' | 'hasOmega' | 'omegaAdj' | 'hasTop' | 'topAdj' | 'maxDegree' | 'sublevelNbrs' | 'superlevelNbrs'>;

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

/** Root of x in the union-find forest (entries p + 1 = parent p, −1 − node = root), with path halving. */
export function find(parent: Int32Array, x: number): number {
  for (;;) {
    const p = parent[x];
    if (p < 0) return x;
    const gp = parent[p - 1];
    if (gp < 0) return p - 1;
    parent[x] = gp; // x now points to its grandparent
    x = gp - 1;
  }
}

/** Append root r to roots[0 … nr−1] unless present; returns the new count. */
export function addRoot(roots: Int32Array, nr: number, r: number): number {
  for (let t = 0; t < nr; t++) if (roots[t] === r) return nr;
  roots[nr] = r;
  return nr + 1;
}

/** Flags of cells j, j + 1, j + 2 in a bit set, as bits 0–2. */
function three(bits: Int32Array, j: number): number {
  const q = j >>> 5, sh = j & 31;
  let x = bits[q] >>> sh;
  if (sh > 29) x |= bits[q + 1] << (32 - sh);
  return x & 7;
}

/** The tree being built: nodes, elder-rule pairs, and the merge step. */
export class TreeBuilder {
  readonly vertex: IntList;
  readonly parent: IntList;
  readonly birth: IntList;
  readonly children: IntList;
  /** Union-by-rank: the rank of the union-find tree whose root carries this node. */
  readonly rank: IntList;
  readonly pairB: IntList;
  readonly pairD: IntList;

  /**
   * @param leaves components the sweep will start, when known: L leaves make at most 2L − 1 nodes
   *   (each merge of k components ends k − 1 of them) and exactly L − (components left) pairs,
   *   so the lists are sized once instead of growing.
   */
  constructor(private readonly values: ArrayLike<number>, private readonly up: boolean, leaves?: number) {
    const nodes = leaves !== undefined ? Math.max(16, 2 * leaves - 1) : 1024;
    const pairs = leaves !== undefined ? Math.max(16, leaves - 1) : 1024;
    this.vertex = new IntList(nodes);
    this.parent = new IntList(nodes);
    this.birth = new IntList(nodes);
    this.children = new IntList(nodes);
    this.rank = new IntList(nodes);
    this.pairB = new IntList(pairs);
    this.pairD = new IntList(pairs);
  }

  newNode(vtx: number, birth: number): number {
    this.vertex.push(vtx);
    this.parent.push(-1);
    this.children.push(0);
    this.rank.push(0);
    return this.birth.push(birth);
  }

  /** true when component birth a is older than b in this sweep's direction */
  older(a: number, b: number): boolean {
    if (a < 0) return true;
    if (b < 0) return false;
    const va = this.values[a], vb = this.values[b];
    return this.up ? va < vb || (va === vb && a < b) : va > vb || (va === vb && a > b);
  }

  /** Vertex v joins the nr distinct components in roots[]: the oldest survives, the others die at v. */
  merge(forest: Int32Array, roots: Int32Array, v: number, nr: number): void {
    const birth = this.birth.data;
    let elder = roots[0];
    for (let t = 1; t < nr; t++) {
      const r = roots[t];
      if (this.older(birth[-1 - forest[r]], birth[-1 - forest[elder]])) elder = r;
    }
    const node = this.newNode(v, birth[-1 - forest[elder]]);
    const parent = this.parent.data, children = this.children.data, bornAt = this.birth.data, rank = this.rank.data;
    // union by rank: the root of highest rank becomes the root of the union (the elder rule is
    // carried by the tree node, not by which root survives)
    let top = roots[0], topRank = rank[-1 - forest[top]], tie = false;
    for (let t = 0; t < nr; t++) {
      const r = roots[t];
      const child = -1 - forest[r];
      parent[child] = node;
      children[node]++;
      if (r !== elder) { this.pairB.push(bornAt[child]); this.pairD.push(v); }
      if (t > 0) {
        const rr = rank[child];
        if (rr > topRank) { top = r; topRank = rr; tie = false; } else if (rr === topRank) tie = true;
      }
    }
    for (let t = 0; t < nr; t++) {
      const r = roots[t];
      if (r !== top) forest[r] = top + 1;
    }
    forest[v] = top + 1;
    forest[top] = -1 - node;
    rank[node] = tie ? topRank + 1 : topRank;
  }
}

/**
 * Sweep the order upward (join tree) or downward (split tree).
 * @param order ascending (value, index) order of the valid vertices
 * @param scratch optional work buffer of at least cx.n + 1 entries, reused between sweeps to save
 *   memory (its contents are overwritten); without it the sweep allocates its own.
 * @param leaves the number of components the sweep starts, when known (pits with ω for the join
 *   tree, peaks with τ for the split tree; an upper bound will do): the tree's lists are then
 *   allocated once at about their final size. Only memory depends on it, never the result.
 */
export function buildMergeTree(cx: SweepComplex, order: Uint32Array, kind: 'join' | 'split', scratch?: Int32Array, leaves?: number): MergeTree {
  // The loops below use no closures: optimised code then does not hold on to one call's arrays
  // and is reused from call to call (it matters for many small grids).
  const n = cx.n;
  const up = kind === 'join';
  const virtualAdj = up ? (cx.hasOmega ? cx.omegaAdj : null) : (cx.hasTop ? cx.topAdj : null);
  // Union-find forest, one entry per vertex (+1 for the virtual vertex at index n), set when the
  // vertex is swept: p + 1 (> 0) = parent p, −1 − node (< 0) = a root carrying its tree node.
  // Entries of vertices not swept yet are never read, so a reused buffer needs no clearing.
  const forest = scratch !== undefined && scratch.length >= n + 1 ? scratch : new Int32Array(n + 1);
  // swept vertices, one bit each: small enough to stay in cache while the forest does not
  const done = new Int32Array((n + 32) >>> 5);
  const tree = new TreeBuilder(cx.values, up, leaves);
  const nbr = new Int32Array(cx.maxDegree + 1);
  const roots = new Int32Array(cx.maxDegree + 1);

  if (virtualAdj !== null) forest[n] = -1 - tree.newNode(-1, -1);

  // Interior grid cells away from the virtual vertex: which ring positions are swept already
  // tells, through the stencil tables, whether v starts a component, can only extend one (no
  // find needed), or may join several (one find per group of connected neighbours).
  const grid = cx instanceof GridComplex ? cx : null;
  const stencil = grid !== null ? grid.sweepStencil(up) : null;
  const w = grid !== null ? grid.w : 0;
  const off = stencil !== null ? stencil.offsets : new Int32Array(0);
  const comps = stencil !== null ? stencil.components : new Uint8Array(1);
  const nbrMask = stencil !== null ? stencil.nbrMask : 0;
  const repr = stencil !== null ? stencil.representatives : new Uint8Array(1);
  const win = stencil !== null ? stencil.windowToRing : new Uint8Array(512);
  const rs = off.length;
  // ring position 0 is the east neighbour; the west one is position 4 of 8, or 3 of 6
  const westPos = rs === 6 ? 3 : 4, westBit = 1 << westPos;
  // cells that take the general path, one bit each: the grid edge, and cells next to the virtual
  // vertex when nodata lets it reach the interior (without nodata only edge cells touch it)
  const slow = grid !== null ? generalCells(grid, virtualAdj !== null && grid.hasNodata ? virtualAdj : null) : null;

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
        const p = forest[j];
        forest[v] = p > 0 ? p : j + 1;
        continue;
      }
      if (groups === 0) {
        forest[v] = -1 - tree.newNode(v, v);
        continue;
      }
      // one find per group of neighbours already known to be connected, in ring order
      // (the first neighbour of each group), so roots[] is ordered as a scan of all would order it
      let nr = 0;
      for (let reps = repr[swept]; reps !== 0; reps &= reps - 1) {
        nr = addRoot(roots, nr, find(forest, v + off[31 - Math.clz32(reps & -reps)]));
      }
      if (nr === 1) forest[v] = roots[0] + 1;
      else tree.merge(forest, roots, v, nr);
      continue;
    }
    const k = up ? cx.sublevelNbrs(v, nbr) : cx.superlevelNbrs(v, nbr);
    let nr = 0;
    for (let q = 0; q < k; q++) {
      const j = nbr[q];
      if (((done[j >>> 5] >>> (j & 31)) & 1) === 0) continue;
      nr = addRoot(roots, nr, find(forest, j));
    }
    if (virtualAdj !== null && virtualAdj[v]) nr = addRoot(roots, nr, find(forest, n));
    if (nr === 0) {
      forest[v] = -1 - tree.newNode(v, v);
    } else if (nr === 1) {
      forest[v] = roots[0] + 1;
    } else {
      tree.merge(forest, roots, v, nr);
    }
  }
  return {
    kind,
    vertex: tree.vertex.take(),
    parent: tree.parent.take(),
    birth: tree.birth.take(),
    childCount: tree.children.take(),
    hasVirtual: virtualAdj !== null,
    pairBirth: tree.pairB.take(),
    pairDeath: tree.pairD.take(),
  };
}

/** Components a sweep starts, at most, from the critical points: its leaves (see buildMergeTree). */
export function sweepLeaves(cx: Pick<SurfaceComplex, 'hasTop'>, counts: { pits: number; peaks: number }, kind: 'join' | 'split'): number {
  // pits count ω already; a peak next to a wall joins τ's component instead of starting one
  return kind === 'join' ? counts.pits : counts.peaks + (cx.hasTop ? 1 : 0);
}

/** Bit set of the cells a grid sweep handles in general: the grid edge, and the given cells. */
function generalCells(grid: GridComplex, also: Uint8Array | null): Int32Array {
  const n = grid.n, w = grid.w, h = grid.h;
  const bits = new Int32Array((n + 32) >>> 5);
  for (let c = 0; c < w; c++) {
    bits[c >>> 5] |= 1 << (c & 31);
    const i = (h - 1) * w + c;
    bits[i >>> 5] |= 1 << (i & 31);
  }
  for (let r = 0; r < h; r++) {
    const i = r * w, j = i + w - 1;
    bits[i >>> 5] |= 1 << (i & 31);
    bits[j >>> 5] |= 1 << (j & 31);
  }
  if (also !== null) for (let i = 0; i < n; i++) if (also[i]) bits[i >>> 5] |= 1 << (i & 31);
  return bits;
}

/**
 * Simplify a merge tree by persistence: a leaf survives when its component lives at least
 * `minPersistence` (or forever); a merge node survives when two or more surviving branches meet there.
 * Returns a new tree over the surviving nodes (pairs are those of the survivors).
 */
export function simplifyMergeTree(tree: MergeTree, values: ArrayLike<number>, minPersistence: number): MergeTree {
  if (!(minPersistence > 0)) return tree;
  const nn = tree.vertex.length;
  // persistence of each leaf's component, from the pair born at its birth vertex (none: forever)
  const leafPers = leafPersistence(tree, values);
  // children of each node in increasing node order, in one array (CSR)
  const start = new Int32Array(nn + 1);
  for (let i = 0; i < nn; i++) if (tree.parent[i] >= 0) start[tree.parent[i] + 1]++;
  for (let i = 0; i < nn; i++) start[i + 1] += start[i];
  const kids = new Int32Array(start[nn]), fill = start.slice(0, nn);
  for (let i = 0; i < nn; i++) if (tree.parent[i] >= 0) kids[fill[tree.parent[i]]++] = i;
  const rep = new Int32Array(nn).fill(-1);
  const V = new IntList(), P = new IntList(), B = new IntList(), C = new IntList();
  const pb = new IntList(), pd = new IntList();
  for (let i = 0; i < nn; i++) {
    const k0 = start[i], k1 = start[i + 1];
    if (k0 === k1) {
      if (leafPers[i] >= minPersistence) { V.push(tree.vertex[i]); P.push(-1); C.push(0); rep[i] = B.push(tree.birth[i]); }
      continue;
    }
    let live = 0, first = -1;
    for (let k = k0; k < k1; k++) if (rep[kids[k]] >= 0) { if (live++ === 0) first = rep[kids[k]]; }
    if (live >= 2) {
      V.push(tree.vertex[i]); P.push(-1); C.push(0);
      const node = B.push(tree.birth[i]);
      for (let k = k0; k < k1; k++) {
        const r = rep[kids[k]];
        if (r < 0) continue;
        P.data[r] = node;
        C.data[node]++;
        if (B.data[r] !== tree.birth[i]) { pb.push(B.data[r]); pd.push(tree.vertex[i]); }
      }
      rep[i] = node;
    } else if (live === 1) {
      rep[i] = first;
    }
  }
  return {
    kind: tree.kind,
    vertex: V.toArray(), parent: P.toArray(), birth: B.toArray(), childCount: C.toArray(),
    hasVirtual: tree.hasVirtual,
    pairBirth: pb.toArray(), pairDeath: pd.toArray(),
  };
}

/**
 * For each node, |value(death) − value(birth)| of the pair born at the node's birth vertex, or
 * Infinity (the virtual vertex, or a component that never dies). Births and pair births are matched
 * by two index sorts (no map).
 */
function leafPersistence(tree: MergeTree, values: ArrayLike<number>): Float64Array {
  const nn = tree.vertex.length, np = tree.pairBirth.length;
  const out = new Float64Array(nn).fill(Infinity);
  const nodeKey = new Float64Array(nn), pairKey = new Float64Array(np);
  for (let i = 0; i < nn; i++) nodeKey[i] = tree.vertex[i] < 0 ? NaN : tree.birth[i];
  for (let p = 0; p < np; p++) pairKey[p] = tree.pairBirth[p];
  const nodes = sortOrder(nodeKey), pairs = sortOrder(pairKey);
  for (let a = 0, b = 0; a < nodes.length && b < pairs.length;) {
    const x = nodeKey[nodes[a]], y = pairKey[pairs[b]];
    if (x < y) a++;
    else if (y < x) b++;
    else {
      const p = pairs[b];
      out[nodes[a]] = Math.abs(values[tree.pairDeath[p]] - values[tree.pairBirth[p]]);
      a++;
    }
  }
  return out;
}
