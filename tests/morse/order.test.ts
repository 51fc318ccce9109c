import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { sortOrder } from '../../src/morse/order.js';

/** Reference order: a comparison sort by (value, index) — the definition of the order. */
function reference(values: ArrayLike<number>): number[] {
  const idx: number[] = [];
  for (let i = 0; i < values.length; i++) if (values[i] === values[i]) idx.push(i);
  return idx.sort((a, b) => (values[a] < values[b] ? -1 : values[a] > values[b] ? 1 : a - b));
}

describe('radix order by (value, index)', () => {
  it('matches a comparison sort on random float64 arrays with ties, negatives, ±0, ±Infinity and NaN', () => {
    const val = fc.oneof(
      fc.double({ noNaN: false }),
      fc.constantFrom(0, -0, 1, -1, Infinity, -Infinity, NaN, 1e-310, -1e-310),
      fc.integer({ min: -3, max: 3 }),
    );
    fc.assert(fc.property(fc.array(val, { maxLength: 300 }), (arr) => {
      const v = Float64Array.from(arr, (x) => (x === 0 ? 0 : x)); // Grid normalises -0 to +0
      expect(Array.from(sortOrder(v))).toEqual(reference(v));
    }), { numRuns: 300 });
  });

  it('matches a comparison sort on random float32 arrays', () => {
    fc.assert(fc.property(fc.array(fc.oneof(fc.float({ noNaN: false }), fc.integer({ min: -2, max: 2 })), { maxLength: 300 }), (arr) => {
      const v = Float32Array.from(arr, (x) => (x === 0 ? 0 : x));
      expect(Array.from(sortOrder(v))).toEqual(reference(v));
    }), { numRuns: 300 });
  });

  it('handles a large array with few distinct values (stable ties)', () => {
    const n = 200_000;
    const v = new Float32Array(n);
    for (let i = 0; i < n; i++) v[i] = (i * 7919) % 13;
    expect(Array.from(sortOrder(v))).toEqual(reference(v));
  });
});
