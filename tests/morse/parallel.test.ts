/**
 * The analysis on two threads (src/morse/parallel.ts, src/morse/sweep-worker.ts) gives exactly
 * what one thread gives: the same order, critical points, simplex counts, merge trees and pairs,
 * bit for bit, in every connectivity and boundary mode, on random grids with ties, plateaus and
 * nodata, and on the GUDHI reference cases (whose pairs it must still match). Errors raised in the
 * worker reach the caller as the same kind of error with the same message.
 *
 * The worker runs the compiled module (dist/morse/sweep-worker.js): npm test builds first.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { seededValues } from './arbitraries.js';
import { readFileSync } from 'node:fs';
import { Grid } from '../../src/surface/grid.js';
import { buildComplex, GridComplex, type Boundary, type Connectivity } from '../../src/surface/complex.js';
import { survey, type SurveyResult } from '../../src/morse/survey.js';
import { sortOrder } from '../../src/morse/order.js';
import { countCriticalPoints, findCriticalPoints } from '../../src/morse/critical.js';
import { buildMergeTree, sweepLeaves } from '../../src/morse/mergetree.js';
import { gridTask, startEulerJob, startSplitJob, onSharedMemory, useWorker, workerFile } from '../../src/morse/parallel.js';
import { InputError } from '../../src/errors.js';

const BOUNDARIES: Boundary[] = ['open', 'closed', 'periodic', 'periodic-x', 'periodic-y'];
const CONNS: Connectivity[] = [4, 6, 8];
const TWO = { threads: 2, parallelMinCells: 0 };

/** Every typed array and number of a survey result, by name (the complex itself left out). */
function contents(r: SurveyResult): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  const walk = (prefix: string, x: unknown): void => {
    if (ArrayBuffer.isView(x)) { out[prefix] = Array.from(x as unknown as ArrayLike<number>); return; }
    if (x !== null && typeof x === 'object') { for (const [k, v] of Object.entries(x)) walk(`${prefix}.${k}`, v); return; }
    out[prefix] = x;
  };
  const { complex: _c, threads: _t, ...rest } = r;
  walk('', rest);
  return out;
}

/** Random small grids with few distinct values (ties, plateaus) and some NaN cells, float32 or float64. */
const gridArb = fc
  .record({
    w: fc.integer({ min: 4, max: 11 }),
    h: fc.integer({ min: 4, max: 11 }),
    levels: fc.integer({ min: 1, max: 5 }),
    holeRate: fc.constantFrom(0, 0, 0.1, 0.3),
    f32: fc.boolean(),
    seed: fc.integer(),
  })
  .map(({ w, h, levels, holeRate, f32, seed }) => ({
    w, h, values: seededValues(w, h, levels, holeRate, seed, (n): Float32Array | Float64Array => (f32 ? new Float32Array(n) : new Float64Array(n)), 0.5 * levels),
  }));

describe('survey on two threads', () => {
  it('the worker module is built (npm run build), so the two-thread path is really taken', () => {
    expect(workerFile()).not.toBeNull();
    expect(useWorker({ threads: 2, parallelMinCells: 0 }, 16)).toBe(true);
    expect(useWorker({ threads: 1, parallelMinCells: 0 }, 16)).toBe(false);
    expect(useWorker({ threads: 2 }, 100)).toBe(false); // small grids stay on one thread
  });

  it('random grids, every connectivity, boundary and nodata mode: identical to one thread', () => {
    fc.assert(
      fc.property(gridArb, fc.constantFrom(...CONNS), fc.constantFrom(...BOUNDARIES), fc.boolean(), fc.constantFrom(0, 0.5, 1.5), ({ w, h, values }, connectivity, boundary, nodataOutlet, minPersistence) => {
        const opts = { connectivity, boundary, nodataOutlet, minPersistence };
        const one = survey(new Grid({ width: w, height: h, values: values.slice() }), { ...opts, threads: 1 });
        const two = survey(new Grid({ width: w, height: h, values: values.slice() }), { ...opts, ...TWO });
        expect(one.threads).toBe(1);
        expect(two.threads).toBe(2);
        expect(contents(two)).toEqual(contents(one));
        // Source: Euler–Poincaré relation (pits − passes + peaks = χ, χ counted from simplices) — common practice.
        expect(two.euler.holds).toBe(true);
      }),
      { numRuns: 150, seed: 10 },
    );
  });

  it('values not on shared memory are copied there; the caller\'s array is left alone', () => {
    const w = 40, h = 30, v = new Float32Array(w * h);
    for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) * 10 + ((i * 2654435761) >>> 0) / 2 ** 32;
    const before = v.slice();
    const two = survey(new Grid({ width: w, height: h, values: v }), TWO);
    const one = survey(new Grid({ width: w, height: h, values: v.slice() }), { threads: 1 });
    expect(two.threads).toBe(2);
    expect(contents(two)).toEqual(contents(one));
    expect(v).toEqual(before);
    expect(v.buffer instanceof SharedArrayBuffer).toBe(false);
  });

  interface Case {
    name: string; width: number; height: number; values: (number | null)[];
    connectivity: Connectivity; boundary: Boundary; pairs0: [number, number][]; pairs1: [number, number][]; chi: number;
  }
  const ref = JSON.parse(readFileSync(new URL('../../fixtures/reference/gudhi-pairs.json', import.meta.url), 'utf8')) as { gudhi_version: string; cases: Case[] };
  it(`GUDHI ${ref.gudhi_version} reference cases: identical to one thread, pairs still GUDHI's`, () => {
    const sorted = (p: [number, number][]) => [...p].sort((a, b) => a[0] - b[0] || a[1] - b[1]);
    for (const c of ref.cases) {
      const values = Float64Array.from(c.values, (x) => (x === null ? NaN : x));
      const opts = { connectivity: c.connectivity, boundary: c.boundary };
      const one = survey(new Grid({ width: c.width, height: c.height, values: values.slice() }), { ...opts, threads: 1 });
      const two = survey(new Grid({ width: c.width, height: c.height, values: values.slice() }), { ...opts, ...TWO });
      expect(two.threads, c.name).toBe(2);
      expect(contents(two), c.name).toEqual(contents(one));
      // Source: GUDHI persistence of the same complex (fixtures/reference/gudhi-pairs.json).
      expect(two.simplices.characteristic, c.name).toBe(c.chi);
      const mine: [number, number][][] = [[], []];
      for (let k = 0; k < two.pairs.dim.length; k++) {
        if (!(two.pairs.persistence[k] > 0)) continue;
        mine[two.pairs.dim[k]].push([values[two.pairs.birthVertex[k]], values[two.pairs.deathVertex[k]]]);
      }
      expect(sorted(mine[0]).length, c.name).toBe(c.pairs0.length);
      expect(sorted(mine[1]).length, c.name).toBe(c.pairs1.length);
      sorted(mine[0]).forEach((p, i) => { expect(p[0]).toBeCloseTo(sorted(c.pairs0)[i][0], 9); expect(p[1]).toBeCloseTo(sorted(c.pairs0)[i][1], 9); });
      sorted(mine[1]).forEach((p, i) => { expect(p[0]).toBeCloseTo(sorted(c.pairs1)[i][0], 9); expect(p[1]).toBeCloseTo(sorted(c.pairs1)[i][1], 9); });
    }
  });
});

describe('the Euler check in the worker', () => {
  it('random grids, open boundary, nodata as outlet or wall: the same counts as on this thread', () => {
    fc.assert(
      fc.property(gridArb, fc.constantFrom(...CONNS), fc.boolean(), ({ w, h, values }, connectivity, nodataOutlet) => {
        const g = new Grid({ width: w, height: h, values: onSharedMemory(values) });
        const cx = buildComplex(g, { connectivity, boundary: 'open', nodataOutlet }) as GridComplex;
        const got = startEulerJob(gridTask(cx)).result();
        expect(got.critical).toEqual(countCriticalPoints(cx));
        expect(got.simplices).toEqual(cx.countSimplices());
      }),
      { numRuns: 60, seed: 11 },
    );
  });
});

describe('errors in the worker', () => {
  const shared = (n: number) => onSharedMemory(Float32Array.from({ length: n }, (_, i) => (i * 7919) % 13));

  it('a RangeError raised there arrives as a RangeError with its message', () => {
    const g = new Grid({ width: 6, height: 5, values: shared(30) });
    const cx = buildComplex(g, { connectivity: 8, boundary: 'open' }) as GridComplex;
    // a grid definition whose size does not match its values: the worker's Grid refuses it
    const bad = { ...gridTask(cx), width: 7 };
    let mainErr: unknown;
    try { new Grid({ width: 7, height: 5, values: g.values }); } catch (e) { mainErr = e; }
    expect(mainErr).toBeInstanceOf(RangeError);
    const job = startEulerJob(bad);
    expect(() => job.result()).toThrow(RangeError);
    expect(() => startEulerJob(bad).result()).toThrow((mainErr as Error).message);
  });

  it('an InputError raised there arrives as an InputError with its message', () => {
    const g = new Grid({ width: 6, height: 5, values: shared(30) });
    const cx = buildComplex(g, { connectivity: 8, boundary: 'closed' }) as GridComplex;
    // a periodic axis of 3 samples is refused by the complex, here as in the worker
    const bad = { ...gridTask(cx), width: 3, height: 10, boundary: 'periodic' as Boundary };
    let mainErr: unknown;
    try { buildComplex(new Grid({ width: 3, height: 10, values: g.values }), { boundary: 'periodic' }); } catch (e) { mainErr = e; }
    expect(mainErr).toBeInstanceOf(InputError);
    const order = new Uint32Array(new SharedArrayBuffer(4 * 30));
    const job = startSplitJob(bad, order, new Int32Array(new SharedArrayBuffer(4 * 31)));
    job.orderReady();
    let got: unknown;
    try { job.result(); } catch (e) { got = e; }
    expect(got).toBeInstanceOf(InputError);
    expect((got as Error).message).toBe((mainErr as Error).message);
  });

  it('a job abandoned before the order is written releases the worker, which then serves the next one', () => {
    const g = new Grid({ width: 6, height: 5, values: shared(30) });
    const cx = buildComplex(g, { connectivity: 8, boundary: 'open' }) as GridComplex;
    const order = new Uint32Array(new SharedArrayBuffer(4 * 30));
    startSplitJob(gridTask(cx), order, new Int32Array(new SharedArrayBuffer(4 * 31))).abandon();
    const got = startEulerJob(gridTask(cx)).result();
    expect(got.critical).toEqual(countCriticalPoints(cx));
  });
});

describe('sortOrder into a given buffer', () => {
  it('writes the same order as it returns without one (float32 and float64, NaN left out)', () => {
    fc.assert(
      fc.property(gridArb, ({ values }) => {
        const want = sortOrder(values);
        const out = new Uint32Array(new SharedArrayBuffer(4 * want.length));
        const got = sortOrder(values, out);
        expect(got).toBe(out);
        expect(Array.from(got)).toEqual(Array.from(want));
        // with the index buffers in a work buffer too, or only there (the order then is not a view of it)
        const work = new Uint32Array(2 * values.length + 2).fill(7);
        expect(Array.from(sortOrder(values, new Uint32Array(want.length), work))).toEqual(Array.from(want));
        const alone = sortOrder(values, undefined, work);
        expect(Array.from(alone)).toEqual(Array.from(want));
        expect(alone.buffer).not.toBe(work.buffer);
      }),
      { numRuns: 100, seed: 12 },
    );
    // all in one bucket of every pass: the early returns copy into the buffer too
    for (const v of [new Float32Array([2, 2, 2]), new Float64Array([2, NaN, 2])]) {
      const m = v[1] !== v[1] ? 2 : 3;
      expect(Array.from(sortOrder(v, new Uint32Array(m)))).toEqual(Array.from(sortOrder(v)));
      expect(Array.from(sortOrder(v, undefined, new Uint32Array(2 * m)))).toEqual(Array.from(sortOrder(v)));
    }
  });

  it('refuses a buffer of the wrong size', () => {
    expect(() => sortOrder(new Float32Array([1, NaN, 0]), new Uint32Array(3))).toThrow(/holds 3 entries but there are 2 valid values/);
    expect(() => sortOrder(new Float64Array([1, 3, 0]), undefined, new Uint32Array(5))).toThrow(/work buffer holds 5 entries but the sort needs 6/);
  });
});

describe('merge-tree lists sized from the critical points', () => {
  it('L leaves give at most 2L − 1 nodes and L − 1 pairs; the trees are those built without the size', () => {
    fc.assert(
      fc.property(gridArb, fc.constantFrom(...CONNS), fc.constantFrom(...BOUNDARIES), ({ w, h, values }, connectivity, boundary) => {
        const cx = buildComplex(new Grid({ width: w, height: h, values: values.slice() }), { connectivity, boundary });
        const order = sortOrder(cx.values);
        const cp = findCriticalPoints(cx);
        for (const kind of ['join', 'split'] as const) {
          const L = sweepLeaves(cx, cp, kind);
          const sized = buildMergeTree(cx, order, kind, undefined, L);
          const grown = buildMergeTree(cx, order, kind);
          expect(sized).toEqual(grown);
          // leaves of the tree: nodes without children (the elder rule's births)
          let leaves = 0;
          for (let k = 0; k < sized.childCount.length; k++) if (sized.childCount[k] === 0) leaves++;
          expect(leaves).toBeLessThanOrEqual(L);
          expect(sized.vertex.length).toBeLessThanOrEqual(Math.max(1, 2 * L - 1));
          expect(sized.pairBirth.length).toBeLessThanOrEqual(Math.max(0, L - 1));
        }
      }),
      { numRuns: 150, seed: 13 },
    );
  });
});
