/**
 * Simplification of merge trees by persistence. Source: the persistence simplification of
 * Edelsbrunner, Letscher & Zomorodian (Discrete Comput. Geom. 28, 2002) — cancelling every pair of
 * persistence below a threshold leaves exactly the pairs at or above it, and every surviving
 * component keeps its own birth; checked on random grids with ties, plateaus and nodata.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { smallGrids } from './arbitraries.js';
import { survey } from '../../src/morse/survey.js';
import { buildMergeTree, simplifyMergeTree, type MergeTree } from '../../src/morse/mergetree.js';
import { sortOrder } from '../../src/morse/order.js';
import { buildComplex, type Boundary, type Connectivity } from '../../src/surface/complex.js';

const gridArb = smallGrids({ maxSide: 10, minLevels: 2, maxLevels: 9, holeRates: [0, 0, 0.15] });

const pairsOf = (t: MergeTree, v: ArrayLike<number>) =>
  Array.from(t.pairBirth, (b, k) => [b, t.pairDeath[k], Math.abs(v[t.pairDeath[k]] - v[b])] as const);
const key = (p: readonly [number, number, number]) => `${p[0]}>${p[1]}`;

describe('simplifyMergeTree', () => {
  it('keeps exactly the pairs of persistence ≥ the threshold, and a well-formed tree over the survivors', () => {
    fc.assert(fc.property(gridArb, fc.constantFrom<Connectivity>(4, 6, 8), fc.constantFrom<Boundary>('open', 'closed', 'periodic'), fc.constantFrom(0.5, 1, 2, 3.5), fc.constantFrom<'join' | 'split'>('join', 'split'), (g, connectivity, boundary, minP, kind) => {
      const cx = buildComplex(g, { connectivity, boundary });
      const full = buildMergeTree(cx, sortOrder(cx.values), kind);
      const simple = simplifyMergeTree(full, cx.values, minP);
      const want = pairsOf(full, cx.values).filter((p) => p[2] >= minP).map(key).sort();
      expect(pairsOf(simple, cx.values).map(key).sort()).toEqual(want);
      // children before parents, child counts agree with the parent links, every kept leaf is a leaf of the full tree
      const nn = simple.vertex.length, count = new Int32Array(nn);
      for (let i = 0; i < nn; i++) {
        const p = simple.parent[i];
        if (p >= 0) { expect(p).toBeGreaterThan(i); count[p]++; }
      }
      expect(Array.from(count)).toEqual(Array.from(simple.childCount));
      for (let i = 0; i < nn; i++) if (simple.childCount[i] === 1) throw new Error('a kept node with one child should have been spliced out');
      // every surviving leaf's birth is its own vertex; the pairs' births are leaves
      const leaves = new Set<number>();
      for (let i = 0; i < nn; i++) if (simple.childCount[i] === 0) { expect(simple.birth[i]).toBe(simple.vertex[i]); leaves.add(simple.vertex[i]); }
      for (const b of simple.pairBirth) expect(leaves.has(b)).toBe(true);
    }), { numRuns: 400 });
  });

  it('survey counts: pits kept = pits of the full tree minus the dimension-0 pairs removed', () => {
    fc.assert(fc.property(gridArb, fc.constantFrom(1, 2), (g, minP) => {
      const s = survey(g, { boundary: 'closed', minPersistence: minP });
      const leaves = (t: MergeTree) => t.childCount.reduce((n, c) => n + (c === 0 ? 1 : 0), 0);
      const s0 = survey(g, { boundary: 'closed' });
      let removed0 = 0;
      for (let k = 0; k < s0.join.pairBirth.length; k++) {
        const p = Math.abs(g.values[s0.join.pairDeath[k]] - g.values[s0.join.pairBirth[k]]);
        if (p < minP) removed0++;
      }
      expect(leaves(s.join)).toBe(leaves(s0.join) - removed0);
    }), { numRuns: 200 });
  });
});
