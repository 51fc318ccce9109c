/**
 * The order of the listed persistence pairs (most persistent first, ties in pair order) as an index
 * sort and as a partial selection. Outside source: JavaScript's own stable `Array.prototype.sort`
 * with a comparator (ECMAScript 2019 requires stability), which the report used to apply to objects.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { pairsByPersistence, mostPersistentPairs, countListedPairs, type PersistencePairs } from '../../src/morse/survey.js';

/** Pairs with only the persistence column filled (the order reads nothing else). */
function pairsOf(p: number[]): PersistencePairs {
  const n = p.length;
  return { dim: new Uint8Array(n), birthVertex: new Int32Array(n), deathVertex: new Int32Array(n), persistence: Float64Array.from(p) };
}

/** The reference: filter, then a stable comparison sort of the indices. */
function reference(p: number[], minP: number): number[] {
  const idx: number[] = [];
  for (let k = 0; k < p.length; k++) if (p[k] > 0 && !(p[k] < minP)) idx.push(k);
  return idx.sort((a, b) => p[b] - p[a]);
}

// persistence values with many ties, zeros, subnormals and huge values
const persistence = fc.oneof(
  fc.constantFrom(0, 0, 1, 1, 2, 0.5, 5e-324, 1e300),
  fc.double({ min: 0, max: 1e6, noNaN: true }),
  fc.integer({ min: 0, max: 5 }).map((x) => x / 4),
);

describe('persistence pair order', () => {
  it('pairsByPersistence equals a stable comparison sort of the listed pairs', () => {
    fc.assert(fc.property(fc.array(persistence, { maxLength: 300 }), fc.constantFrom(0, 0.25, 1, 3), (p, minP) => {
      const P = pairsOf(p);
      const want = reference(p, minP);
      expect(Array.from(pairsByPersistence(P, minP))).toEqual(want);
      expect(countListedPairs(P, minP)).toBe(want.length);
    }), { numRuns: 500 });
  });

  it('mostPersistentPairs is the head of that order', () => {
    fc.assert(fc.property(fc.array(persistence, { maxLength: 300 }), fc.constantFrom(0, 0.25, 1), fc.integer({ min: 0, max: 12 }), (p, minP, k) => {
      const want = reference(p, minP).slice(0, k);
      expect(Array.from(mostPersistentPairs(pairsOf(p), minP, k))).toEqual(want);
    }), { numRuns: 500 });
  });
});
