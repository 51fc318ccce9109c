/**
 * Free energies from samples (src/chem/samples.ts) and their block bootstrap (src/chem/bootstrap.ts).
 * Outside sources: NumPy's histogramdd and SciPy's gaussian_kde on the same frames
 * (tests/reference/samples_reference.py → fixtures/chem/samples-reference.json, versions in the
 * file); the Müller–Brown potential (Müller & Brown, Theor. Chim. Acta 53, 75 (1979)) with its
 * stationary points from SciPy's root finder (tests/reference/mueller_brown.py), sampled by the
 * Metropolis chain of bench/lib/metropolis.mjs.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { sampleDensity, framesInMemory, densityValues, freeEnergyValues, freeEnergyGrid, freeEnergyGrid3, binOf, type SampleOptions } from '../../src/chem/samples.js';
import { bootstrapBarriers, spread, matchStates } from '../../src/chem/bootstrap.js';
import { barriers, type BarriersOptions } from '../../src/chem/barriers.js';
import { barriersFromSamples } from '../../src/report/samples.js';
import { InputError } from '../../src/errors.js';
import { metropolis } from '../../bench/lib/metropolis.mjs';
import { muellerBrown, mbReference } from './mb.js';

interface HistCase { name: string; frames: number[][]; weights: number[] | null; bins: number[]; range: [number, number][]; density: number[] }
interface KdeCase { name: string; frames: number[][]; bins: number[]; range: [number, number][]; bandwidth: number[]; periodic: boolean[]; density: number[] }
const REF: { histograms: HistCase[]; kde: KdeCase[]; spread: { values: number[]; mean: number; se: number; low: number; high: number } } =
  JSON.parse(readFileSync(new URL('../../fixtures/chem/samples-reference.json', import.meta.url), 'utf8'));

const flat = (rows: number[][], extra?: number[] | null) => {
  const k = rows[0].length + (extra ? 1 : 0);
  const out = new Float64Array(rows.length * k);
  rows.forEach((r, i) => { r.forEach((v, j) => { out[i * k + j] = v; }); if (extra) out[i * k + k - 1] = extra[i]; });
  return { data: out, fields: k };
};

describe('histogram: NumPy histogramdd(density=True) on the same frames', () => {
  for (const c of REF.histograms) {
    it(c.name, async () => {
      const dims = c.bins.length;
      const periodic = c.name.startsWith('periodic');
      const { data, fields } = flat(c.frames, c.weights);
      const opts: SampleOptions = {
        bins: c.bins,
        weights: c.weights ? dims + 1 : undefined,
        // "range of the data" cases leave the range to sill; the others give NumPy's
        range: c.name.includes('given range') || periodic ? c.range.map((r, a) => (periodic && a > 0 ? null : r)) : undefined,
        periodic: periodic ? [true, false] : undefined,
        period: periodic ? [360, null] : undefined,
        blocks: 4,
      };
      const d = await sampleDensity(framesInMemory(data, fields), opts);
      const p = densityValues(d);
      // NumPy: histogramdd density (reference fixture); sill's bins x fastest, as the fixture
      expect(p.length).toBe(c.density.length);
      for (let i = 0; i < p.length; i++) expect(p[i]).toBeCloseTo(c.density[i], 12);
      const F = freeEnergyValues(d, 2.5);
      let min = Infinity;
      for (let i = 0; i < F.length; i++) {
        expect(Number.isNaN(F[i])).toBe(c.density[i] === 0); // unsampled bins masked, never a made-up value
        if (F[i] < min) min = F[i];
      }
      expect(min).toBe(0);
      if (dims === 3) {
        const g = freeEnergyGrid3(d, 1);
        expect([g.nx, g.ny, g.nz]).toEqual(c.bins);
        for (let a = 0; a < 3; a++) {
          const w = (c.range[a][1] - c.range[a][0]) / c.bins[a];
          expect(g.spacing[a]).toBeCloseTo(w, 12);
          expect(g.origin[a]).toBeCloseTo(c.range[a][0] + w / 2, 12);
        }
        const F1 = freeEnergyValues(d, 1);
        const k = g.index(1, 2, 1);
        expect(g.values[k]).toBe(F1[k]);
      }
    });
  }
});

describe('kernel density: SciPy gaussian_kde at the bin centres', () => {
  for (const c of REF.kde) {
    it(c.name, async () => {
      const { data, fields } = flat(c.frames);
      const d = await sampleDensity(framesInMemory(data, fields), {
        bins: c.bins, range: c.range, bandwidth: c.bandwidth, periodic: c.periodic, period: c.periodic.map((q) => (q ? 360 : null)), blocks: 2,
      });
      const p = densityValues(d);
      const peak = Math.max(...c.density);
      let compared = 0, worstAbs = 0, worstRel = 0;
      for (let i = 0; i < p.length; i++) {
        // SciPy's kernels are not cut; sill's are cut at 5 bandwidths (each kernel loses at most e^−12.5 ≈ 4·10⁻⁶ of its peak)
        worstAbs = Math.max(worstAbs, Math.abs(p[i] - c.density[i]) / peak);
        if (c.density[i] < 1e-2 * peak) continue;
        worstRel = Math.max(worstRel, Math.abs(p[i] / c.density[i] - 1));
        compared++;
      }
      expect(worstAbs).toBeLessThan(1e-5);
      expect(worstRel).toBeLessThan(1e-3);
      expect(compared).toBeGreaterThan(p.length / 5);
    });
  }
});

describe('block bootstrap pieces', () => {
  it('spread: mean, standard deviation (ddof 1) and 2.5/97.5 percentiles as NumPy computes them', () => {
    const s = spread(Float64Array.from(REF.spread.values), REF.spread.values.length)!;
    expect(s.mean).toBeCloseTo(REF.spread.mean, 12);
    expect(s.se).toBeCloseTo(REF.spread.se, 12);
    expect(s.low).toBeCloseTo(REF.spread.low, 12);
    expect(s.high).toBeCloseTo(REF.spread.high, 12);
    expect(spread(new Float64Array([1]), 1)).toBeNull();
  });

  it('a resample of blocks is the density of the frames of those blocks (fast-check)', async () => {
    await fc.assert(fc.asyncProperty(
      fc.array(fc.tuple(fc.double({ min: -3, max: 3, noNaN: true }), fc.double({ min: -2, max: 2, noNaN: true }), fc.double({ min: 0, max: 5, noNaN: true })), { minLength: 12, maxLength: 60 }),
      fc.integer({ min: 2, max: 6 }), fc.array(fc.integer({ min: 0, max: 3 }), { minLength: 6, maxLength: 6 }), fc.boolean(),
      async (rows, blocks, mult, kde) => {
        const data = Float64Array.from(rows.flat());
        const opts: SampleOptions = { bins: [5, 4], range: [[-3, 3], [-2, 2]], weights: 3, blocks, bandwidth: kde ? [0.7, 0.5] : null };
        // a block with no weight inside the range is refused (tested elsewhere): skip such draws
        const d = await sampleDensity(framesInMemory(data, 3), opts).catch(() => null);
        if (d === null) return;
        const m: number[] = mult.slice(0, blocks);
        if (!m.some((x) => x > 0)) m[0] = 1;
        // the frames of the resample, written out block by block, binned directly
        const n = rows.length, parts: number[] = [];
        for (let b = 0; b < blocks; b++) {
          for (let r = 0; r < m[b]; r++) {
            for (let i = 0; i < n; i++) if (Math.floor((i * blocks) / n) === b) parts.push(...rows[i]);
          }
        }
        const direct = await sampleDensity(framesInMemory(Float64Array.from(parts), 3), { ...opts, blocks: 2 }).catch(() => null);
        if (direct === null) return;
        const p = densityValues(d, m), q = densityValues(direct);
        for (let i = 0; i < p.length; i++) expect(p[i]).toBeCloseTo(q[i], 9);
      }), { numRuns: 40 });
  });

  it('histogram normalisation and masking (fast-check): Σ p·bin volume = 1, min F = 0, NaN exactly in empty bins; shifting a periodic variable by whole periods changes nothing', async () => {
    await fc.assert(fc.asyncProperty(
      // angles k/10 + 0.05: never within round-off of a bin edge (360/nx), where a shift by whole periods may round into the next bin
      fc.array(fc.tuple(fc.integer({ min: -1800, max: 1799 }).map((k) => k / 10 + 0.05), fc.double({ min: 0, max: 10, noNaN: true })), { minLength: 4, maxLength: 80 }),
      fc.integer({ min: 3, max: 12 }), fc.integer({ min: 3, max: 9 }), fc.array(fc.integer({ min: -3, max: 3 }), { minLength: 80, maxLength: 80 }),
      async (rows, nx, ny, turns) => {
        const opts: SampleOptions = { bins: [nx, ny], range: [[-180, 180], [0, 10]], periodic: [true, false], period: [360, null], blocks: 2 };
        const d = await sampleDensity(framesInMemory(Float64Array.from(rows.flat()), 2), opts);
        const p = densityValues(d);
        const vol = (360 / nx) * (10 / ny);
        expect(p.reduce((a, x) => a + x * vol, 0)).toBeCloseTo(1, 10);
        const F = freeEnergyValues(d, 1);
        expect(Math.min(...Array.from(F).filter((x) => !Number.isNaN(x)))).toBe(0);
        for (let i = 0; i < F.length; i++) expect(Number.isNaN(F[i])).toBe(d.counts[i] === 0);
        const shifted = rows.flatMap(([x, y], i) => [x + 360 * turns[i], y]);
        const e = await sampleDensity(framesInMemory(Float64Array.from(shifted), 2), opts);
        const q = densityValues(e);
        for (let i = 0; i < p.length; i++) expect(q[i]).toBeCloseTo(p[i], 9);
      }), { numRuns: 60 });
  });

  it('the resampling is seeded: the same seed gives the same intervals, another seed others', async () => {
    const n = 4000, data = new Float64Array(2 * n);
    let s = 7;
    const u = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) + 0.5) / 4294967296;
    for (let i = 0; i < n; i++) {
      // two normal wells at x = ±1 (Box–Muller)
      const r = Math.sqrt(-2 * Math.log(u())), t = 2 * Math.PI * u();
      data[2 * i] = (i % 2 ? 1 : -1) + 0.4 * r * Math.cos(t);
      data[2 * i + 1] = 0.4 * r * Math.sin(t);
    }
    const d = await sampleDensity(framesInMemory(data, 2), { bins: [16, 10] });
    const opts: BarriersOptions = { units: 'kT', cap: 6 };
    const r = barriers(freeEnergyGrid(d, 1), { ...opts, maxPaths: 0 });
    const a = bootstrapBarriers(d, 1, r, opts, { resamples: 12, seed: 9 });
    const b = bootstrapBarriers(d, 1, r, opts, { resamples: 12, seed: 9 });
    const c = bootstrapBarriers(d, 1, r, opts, { resamples: 12, seed: 10 });
    expect(b).toEqual(a);
    expect(c.barriers).not.toEqual(a.barriers);
  });

  it('barriersFromSamples refuses what it cannot do with one line: no unit, 3 variables (the 3-D grid is built by freeEnergyGrid3)', async () => {
    const data = Float64Array.from({ length: 300 }, (_, i) => Math.sin(i * 1.7) + (i % 3));
    for (const [opts, msg] of [
      [{ samples: { bins: [5, 5] } }, /needs an energy unit/],
      [{ units: 'kT', samples: { bins: [5, 5, 5] } }, /3-variable surfaces is not available yet/],
    ] as const) {
      const err = await barriersFromSamples(framesInMemory(data, 3), opts as never).then(() => null, (e) => e);
      expect(err).toBeInstanceOf(InputError);
      expect(err.message).toMatch(msg);
    }
  });

  it('states are matched by position, across the period, one to one', () => {
    const st = (x: number, y: number) => ({ bestX: x, bestY: y }) as never;
    const d = { width: [10, 1], bins: [36, 10], periods: [360, null] } as never;
    const m = matchStates([st(-175, 5), st(0, 5), st(100, 5)], [st(178, 5.5), st(5, 5), st(12, 5), st(150, 5)], d);
    expect(Array.from(m)).toEqual([0, 1, -1]); // (-175 ↔ 178: 7° across the period); 100 has nothing within 2 bins
    const one = matchStates([st(0, 5), st(4, 5)], [st(2, 5)], d);
    expect(Array.from(one).filter((j) => j >= 0)).toHaveLength(1);
  });

  it('bins: a point on the right edge of a closed range is in the last bin; periodic points wrap', async () => {
    const d = await sampleDensity(framesInMemory(Float64Array.from([0, 0, 1, 1, 0.5, 0.5]), 2), { bins: [4, 4], blocks: 2 });
    expect(binOf(d, [1, 1])).toBe(15);
    expect(binOf(d, [1.01, 1])).toBe(-1);
  });
});

describe('Müller–Brown frames from a seeded Metropolis chain', () => {
  // V/kT = V_MB/20 on the window of tests/reference/mueller_brown.py. At this temperature the
  // shallow minimum (-0.050, 0.467) is 0.43 kT deep towards its lower saddle, below the default
  // threshold of 1 kT, so it merges into the basin of (0.623, 0.028): the stationary points left
  // are the minima (-0.558, 1.442) and (0.623, 0.028) and the saddle (-0.822, 0.624) between them.
  const S = 20;
  const box = { x: [-1.5, 1.2] as [number, number], y: [-0.5, 2.0] as [number, number] };
  const ref = mbReference().stationaryPoints;
  const near = (x: number, y: number) => ref.reduce((a, p) => (Math.hypot(p.x - x, p.y - y) < Math.hypot(a.x - x, a.y - y) ? p : a));
  const A = near(-0.558, 1.442), B = near(0.623, 0.028), T = near(-0.822, 0.624);
  const exact = { forward: (T.energy - A.energy) / S, backward: (T.energy - B.energy) / S };
  const analysis: BarriersOptions = { units: 'kT', cap: 7 };

  async function run(seed: number, weighted: boolean) {
    // unbiased: exp(−V/kT); weighted: frames from exp(−(V + Bias)/kT) with Bias = −0.5 V, log-weight Bias/kT
    const energy = (x: number, y: number) => (weighted ? 0.5 : 1) * muellerBrown(x, y) / S;
    const ch = metropolis({ energy, box, start: [-0.55, 1.44], frames: 300000, thin: 5, step: 0.05, seed, extra: weighted ? (x, y) => -0.5 * muellerBrown(x, y) / S : undefined });
    const d = await sampleDensity(framesInMemory(ch.data, ch.fields), { bins: [30, 30], range: [box.x, box.y], logWeights: weighted ? 3 : undefined });
    const r = barriers(freeEnergyGrid(d, 1), { ...analysis, maxPaths: 0 });
    const boot = bootstrapBarriers(d, 1, r, analysis, { resamples: 40, seed });
    return { r, boot, d };
  }

  it('3 seeds: the true states, and barriers within their bootstrap intervals of the exact ones in most', async () => {
    let inside = 0, total = 0;
    for (const seed of [1, 2, 3]) {
      const { r, boot, d } = await run(seed, false);
      // minima whose basins hold at least 20 frames (a few isolated bins on the sparse outskirts may hold a frame or two)
      const frames = new Float64Array(r.minima.length);
      for (let c = 0; c < r.basinOf.length; c++) if (r.basinOf[c] >= 0) frames[r.basinOf[c]] += d.counts[c];
      const held = r.minima.filter((_, i) => frames[i] >= 20);
      expect(held).toHaveLength(2);
      expect(held.some((m) => Math.hypot(m.bestX - A.x, m.bestY - A.y) < 0.1) && held.some((m) => Math.hypot(m.bestX - B.x, m.bestY - B.y) < 0.1)).toBe(true);
      expect(r.transitionStates).toHaveLength(1);
      const t = r.transitionStates[0];
      expect(Math.hypot(t.bestX - T.x, t.bestY - T.y)).toBeLessThan(0.1); // one bin
      expect(r.barriers).toHaveLength(1);
      const row = r.barriers[0], u = boot.barriers[0];
      const fromA = Math.hypot(r.minima.find((m) => m.id === row.from)!.bestX - A.x, r.minima.find((m) => m.id === row.from)!.bestY - A.y) < 0.1;
      const [f, b] = fromA ? [exact.forward, exact.backward] : [exact.backward, exact.forward];
      expect(u.found).toBe(40);
      for (const [est, s, want] of [[row.forward!, u.forward!, f], [row.backward!, u.backward!, b]] as const) {
        expect(Math.abs(est - want)).toBeLessThan(4 * s.se + 0.05); // a sanity bound
        total++;
        if (want >= s.low && want <= s.high) inside++;
      }
    }
    // 95 % intervals: most should hold (the 20-seed rate is in bench/barriers-samples.mjs and docs/barriers.md)
    expect(inside).toBeGreaterThanOrEqual(total - 2);
  }, 60000);

  it('weights: frames from the biased potential V − V/2, reweighted by exp(bias/kT), recover V\'s barriers', async () => {
    const { r, boot } = await run(7, true);
    expect(r.transitionStates).toHaveLength(1);
    const row = r.barriers[0], u = boot.barriers[0];
    const fromA = Math.hypot(r.minima.find((m) => m.id === row.from)!.bestX - A.x, r.minima.find((m) => m.id === row.from)!.bestY - A.y) < 0.1;
    const [f, b] = fromA ? [exact.forward, exact.backward] : [exact.backward, exact.forward];
    expect(Math.abs(row.forward! - f)).toBeLessThan(Math.max(3 * u.forward!.se, 0.15));
    expect(Math.abs(row.backward! - b)).toBeLessThan(Math.max(3 * u.backward!.se, 0.15));
    // without the weights the barriers are those of V/2: far off
    expect(Math.abs(row.forward! - f / 2)).toBeGreaterThan(1);
  }, 30000);
});
