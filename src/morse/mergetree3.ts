/**
 * Join and split trees of a 3-D grid: the sweep of mergetree.ts with a fast path for interior
 * points away from ω and τ. Which neighbours are swept already (one bit each) tells, through the
 * components of the link restricted to them, whether the point starts a component (none), can only
 * extend one (one group: no find), or may join several (one find per group). Neighbours joined
 * by an edge among themselves are in one sublevel component already, so this is exact. On a large
 * grid it keeps the union-find forest — far larger than the cache — out of most steps.
 */
import type { Complex3 } from '../surface/complex3.js';
import { componentReps } from '../surface/complex3.js';
import { TreeBuilder, find, addRoot, type MergeTree } from './mergetree.js';

/** Components of the link graph on `mask` (or 0 when mask is 0). */
function groupsOf(adj: Int32Array, mask: number): number {
  let n = 0;
  for (let r = componentReps(adj, mask); r !== 0; r &= r - 1) n++;
  return n;
}

export function buildMergeTree3(cx: Complex3, order: Uint32Array, kind: 'join' | 'split', scratch?: Int32Array, leaves?: number): MergeTree {
  const n = cx.n;
  const up = kind === 'join';
  const virtualAdj = up ? (cx.hasOmega ? cx.omegaAdj : null) : (cx.hasTop ? cx.topAdj : null);
  const forest = scratch !== undefined && scratch.length >= n + 1 ? scratch : new Int32Array(n + 1);
  const done = new Int32Array((n + 32) >>> 5);
  const tree = new TreeBuilder(cx.values, up, leaves);
  const nbr = new Int32Array(cx.maxDegree + 1);
  const roots = new Int32Array(cx.maxDegree + 1);
  if (virtualAdj !== null) forest[n] = -1 - tree.newNode(-1, -1);

  const off = up ? cx.subOff : cx.supOff;
  const deg = off.length;
  const { adj, comps, reps } = cx.sweepLink(up);
  // points that take the general path, one bit each: not interior, or next to ω / τ
  const slow = new Int32Array((n + 32) >>> 5);
  for (let i = 0; i < n; i++) {
    if (!cx.interior(i) || (virtualAdj !== null && virtualAdj[i] === 1)) slow[i >>> 5] |= 1 << (i & 31);
  }

  const m = order.length;
  for (let s = 0; s < m; s++) {
    const v = order[up ? s : m - 1 - s];
    done[v >>> 5] |= 1 << (v & 31);
    if (((slow[v >>> 5] >>> (v & 31)) & 1) === 0) {
      let swept = 0;
      for (let q = 0; q < deg; q++) {
        const j = v + off[q];
        if ((done[j >>> 5] >>> (j & 31)) & 1) swept |= 1 << q;
      }
      const groups = comps !== null ? comps[swept] : groupsOf(adj, swept);
      if (groups === 0) {
        forest[v] = -1 - tree.newNode(v, v);
        continue;
      }
      if (groups === 1) {
        // all swept neighbours are in one component: attach v under any of them
        const j = v + off[31 - Math.clz32(swept & -swept)];
        const p = forest[j];
        forest[v] = p > 0 ? p : j + 1;
        continue;
      }
      let nr = 0;
      for (let r = reps !== null ? reps[swept] : componentReps(adj, swept); r !== 0; r &= r - 1) {
        nr = addRoot(roots, nr, find(forest, v + off[31 - Math.clz32(r & -r)]));
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
    if (nr === 0) forest[v] = -1 - tree.newNode(v, v);
    else if (nr === 1) forest[v] = roots[0] + 1;
    else tree.merge(forest, roots, v, nr);
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
