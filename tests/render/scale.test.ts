import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { niceStep, ticks, contourLevels, isIndexLevel, Linear, fmtNum } from '../../src/render/figures/scale.js';

const isNice = (step: number) => {
  const mant = step / 10 ** Math.floor(Math.log10(step) + 1e-12);
  return [1, 2, 2.5, 5, 10].some((m) => Math.abs(mant - m) < 1e-9);
};

describe('nice steps, ticks and contour levels', () => {
  it('steps are 1, 2, 2.5 or 5 times a power of ten', () => {
    expect(niceStep(10, 10)).toBe(1);
    expect(niceStep(17, 6)).toBe(5);
    expect(niceStep(0.03, 6)).toBeCloseTo(0.005, 15);
    fc.assert(fc.property(fc.double({ min: 1e-6, max: 1e9, noNaN: true }), fc.integer({ min: 2, max: 30 }), (span, target) => {
      const s = niceStep(span, target);
      return isNice(s) && span / s <= target * (1 + 1e-9) && span / s > target / 5;
    }));
  });

  it('ticks are the multiples of the step inside the range, printed without float noise', () => {
    expect(ticks(0, 1, 5)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(ticks(5873000, 5874000, 5)).toEqual([5873000, 5873200, 5873400, 5873600, 5873800, 5874000]);
    expect(ticks(-0.3, 0.3, 6)).toEqual([-0.3, -0.2, -0.1, 0, 0.1, 0.2, 0.3]);
  });

  it('contour levels lie strictly inside the range, evenly spaced, and not too many', () => {
    fc.assert(fc.property(fc.double({ min: -1e4, max: 1e4, noNaN: true }), fc.double({ min: 1e-3, max: 1e4, noNaN: true }), (lo, span) => {
      const hi = lo + span;
      const c = contourLevels(lo, hi, 12);
      if (!(c.levels.length >= 1 && c.levels.length <= 24)) return false;
      for (let i = 0; i < c.levels.length; i++) {
        if (!(c.levels[i] > lo && c.levels[i] < hi)) return false;
        if (Math.abs(c.levels[i] / c.step - Math.round(c.levels[i] / c.step)) > 1e-6) return false;
        if (i > 0 && Math.abs(c.levels[i] - c.levels[i - 1] - c.step) > 1e-9 * Math.max(1, Math.abs(hi))) return false;
      }
      return true;
    }));
  });

  it('index contours fall on multiples of 5 steps (4 for steps of 2.5)', () => {
    const c = contourLevels(237.3, 258.9, 12);
    expect(c.step).toBe(2);
    expect(c.levels.filter((l) => isIndexLevel(l, c))).toEqual([240, 250]);
    const d = contourLevels(0.1, 24.7, 10);
    expect(d.step).toBe(2.5);
    expect(d.levels.filter((l) => isIndexLevel(l, d))).toEqual([10, 20]);
  });

  it('linear maps invert', () => {
    const s = new Linear(240, 260, 400, 0);
    expect(s.map(240)).toBe(400);
    expect(s.map(250)).toBe(200);
    expect(s.invert(100)).toBe(255);
  });

  it('formats with a true minus sign and no float noise', () => {
    expect(fmtNum(-2.5)).toBe('−2.5');
    expect(fmtNum(0.1 + 0.2)).toBe('0.3');
    expect(fmtNum(Infinity)).toBe('∞');
    expect(fmtNum(5873250, 5)).toBe('5873250');
  });
});

describe('top-k selection', async () => {
  const { topIndices } = await import('../../src/render/figures/scale.js');
  it('equals the first k of a full stable sort, largest first, NaN never picked', () => {
    fc.assert(fc.property(fc.array(fc.oneof(fc.integer({ min: -5, max: 5 }), fc.constant(NaN), fc.constant(Infinity), fc.constant(-Infinity)), { maxLength: 80 }), fc.integer({ min: 0, max: 90 }), (xs, k) => {
      const keys = Float64Array.from(xs);
      const want = xs.map((x, i) => [x, i] as [number, number]).filter(([x]) => !Number.isNaN(x)).sort((a, b) => b[0] - a[0] || a[1] - b[1]).slice(0, k).map(([, i]) => i);
      return JSON.stringify(Array.from(topIndices(keys, k))) === JSON.stringify(want);
    }));
  });
});
