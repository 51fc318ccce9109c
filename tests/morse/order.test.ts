import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { sortOrder } from '../../src/morse/order.js';

/** Where two orders first differ (−1: identical), so a failure on a large array reports briefly. */
function firstDifference(a: ArrayLike<number>, b: ArrayLike<number>): number {
  if (a.length !== b.length) return Math.min(a.length, b.length);
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return i;
  return -1;
}

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

  // The float32 sort finishes each top bucket (sign, exponent and 3 mantissa bits) by insertion
  // sort or by two LSD passes of 10 bits.
  // These arrays put tens of thousands of keys into one or a few buckets, with ties, NaN and
  // both signs, and compare with the comparison sort (the definition of the order).
  it('matches a comparison sort on float32 arrays crowded into few top buckets (all bucket paths)', () => {
    const spec = fc.record({
      n: fc.integer({ min: 1, max: 90_000 }),
      centre: fc.constantFrom(0, 1, -1, 1000, -700, 1e-30, 3e38),
      spread: fc.constantFrom(0, 1e-6, 0.01, 1, 100),
      distinct: fc.integer({ min: 1, max: 5000 }),
      nanEvery: fc.constantFrom(0, 3, 17, 1000),
      crowdEvery: fc.constantFrom(0, 2, 5), // a share of the values on one point, the rest spread: sparse and crowded sub-buckets
      seed: fc.integer({ min: 1, max: 2 ** 31 - 1 }),
    });
    fc.assert(fc.property(spec, ({ n, centre, spread, distinct, nanEvery, crowdEvery, seed }) => {
      let s = seed;
      const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32);
      const v = new Float32Array(n);
      for (let i = 0; i < n; i++) {
        const x = crowdEvery > 0 && i % crowdEvery !== 0 ? centre : centre + spread * (Math.floor(rnd() * distinct) / distinct - 0.5);
        v[i] = nanEvery > 0 && i % nanEvery === 0 ? NaN : x;
        if (v[i] === 0) v[i] = 0; // Grid normalises -0 to +0
      }
      expect(firstDifference(sortOrder(v), reference(v))).toBe(-1);
    }), { numRuns: 40 });
  });

  it('matches a comparison sort on a float32 grid of 300 000 values in one top bucket, as a DEM might be', () => {
    const n = 300_000;
    const v = new Float32Array(n);
    for (let i = 0; i < n; i++) v[i] = 1030 + ((Math.imul(i, 2654435761) >>> 0) % 90_001) / 1000; // 1030 … 1120 m, one top bucket
    expect(firstDifference(sortOrder(v), reference(v))).toBe(-1);
  });

  it('matches a comparison sort on a crowded top bucket whose other sub-buckets hold a few keys each', () => {
    const v = new Float32Array(60_000);
    for (let i = 0; i < v.length; i++) v[i] = i % 3 === 0 ? 1024 + (((i * 7919) % 20_000) / 20_000) * 128 : 1100.5; // [1024, 1152): one top bucket
    expect(firstDifference(sortOrder(v), reference(v))).toBe(-1);
  });
});
