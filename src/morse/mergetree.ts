/**
 * Merge trees by union-find sweeps over the (value, index) order.
 * Join tree: components of sublevel sets (leaves are pits, inner nodes are the passes where
 * components meet). Split tree: components of superlevel sets (leaves are peaks).
 * Persistence pairs follow the elder rule: at a merge, every component but the oldest dies.
 * A virtual vertex (ω at −∞ for the join tree on an open boundary, τ at +∞ for the split tree
 * on a closed one) is the oldest of all; its node has vertex −1.
 */
import type { SurfaceComplex } from '../surface/complex.js';
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
 */
export function buildMergeTree(cx: SurfaceComplex, order: Uint32Array, kind: 'join' | 'split'): MergeTree {
  const n = cx.n;
  const values = cx.values;
  const up = kind === 'join';
  const virtualAdj = up ? (cx.hasOmega ? cx.omegaAdj : null) : (cx.hasTop ? cx.topAdj : null);
  const parent = new Int32Array(n + 1);
  const rank = new Uint8Array(n + 1); // 0 = not yet swept
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
      const gp = parent[p];
      if (gp < 0) return p;
      parent[x] = gp;
      x = gp;
    }
  };
  /** true when component birth a is older than b in this sweep's direction */
  const older = (a: number, b: number): boolean => {
    if (a < 0) return true;
    if (b < 0) return false;
    const va = values[a], vb = values[b];
    return up ? va < vb || (va === vb && a < b) : va > vb || (va === vb && a > b);
  };

  if (virtualAdj !== null) {
    const node = newNode(-1, -1);
    parent[n] = -1 - node;
    rank[n] = 1;
  }
  const m = order.length;
  for (let s = 0; s < m; s++) {
    const v = order[up ? s : m - 1 - s];
    rank[v] = 1;
    const k = up ? cx.sublevelNbrs(v, nbr) : cx.superlevelNbrs(v, nbr);
    let nr = 0;
    for (let q = 0; q < k; q++) {
      const j = nbr[q];
      if (rank[j] === 0) continue;
      const r = find(j);
      let seen = false;
      for (let t = 0; t < nr; t++) if (roots[t] === r) { seen = true; break; }
      if (!seen) roots[nr++] = r;
    }
    if (virtualAdj !== null && virtualAdj[v]) {
      const r = find(n);
      let seen = false;
      for (let t = 0; t < nr; t++) if (roots[t] === r) { seen = true; break; }
      if (!seen) roots[nr++] = r;
    }
    if (nr === 0) {
      parent[v] = -1 - newNode(v, v);
    } else if (nr === 1) {
      parent[v] = roots[0];
    } else {
      // merge: the oldest component survives, the others die here
      let elder = roots[0];
      for (let t = 1; t < nr; t++) {
        const r = roots[t];
        if (older(nodeBirth.data[-1 - parent[r]], nodeBirth.data[-1 - parent[elder]])) elder = r;
      }
      const elderBirth = nodeBirth.data[-1 - parent[elder]];
      const node = newNode(v, elderBirth);
      let top = roots[0];
      for (let t = 0; t < nr; t++) {
        const r = roots[t];
        const child = -1 - parent[r];
        nodeParent.data[child] = node;
        nodeChildren.data[node]++;
        if (r !== elder) { pairB.push(nodeBirth.data[child]); pairD.push(v); }
        if (rank[r] > rank[top]) top = r;
      }
      for (let t = 0; t < nr; t++) {
        const r = roots[t];
        if (r !== top) { parent[r] = top; if (rank[r] === rank[top] && rank[top] < 255) rank[top]++; }
      }
      parent[v] = top;
      parent[top] = -1 - node;
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
