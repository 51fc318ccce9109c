/**
 * ponds and runoff on two threads: the Euler self-check counts in a worker while the depression
 * sweep runs (src/hydro/common.ts openComplex). The counts, and so every result, are identical to
 * the one-thread run, on random DEMs with ties, plateaus and nodata in every connectivity and
 * nodata mode. The worker runs the compiled module (dist/): npm test builds first.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { openComplex } from '../../src/hydro/common.js';
import { pondsReport } from '../../src/report/ponds.js';
import { runoffReport } from '../../src/report/runoff.js';
import { onSharedMemory } from '../../src/morse/parallel.js';
import { gridArb } from './arbitraries.js';

const TWO = { threads: 2, parallelMinCells: 0 };

/** The same grid with its values on shared memory (as the loaders give them), or not. */
function copyOf(g: Grid, shared: boolean): Grid {
  const values = shared ? onSharedMemory(g.values.slice()) : g.values.slice();
  return new Grid({ width: g.width, height: g.height, values, transform: g.transform, crs: g.crs });
}

describe('the Euler self-check of ponds and runoff in a worker', () => {
  it('openComplex counts in the worker exactly when asked for two threads on shared values, with the same figures', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      const none = () => undefined;
      const one = openComplex(copyOf(g, true), conn, outlet, true, none, { threads: 1 }).euler;
      const two = openComplex(copyOf(g, true), conn, outlet, true, none, TWO).euler;
      const unshared = openComplex(copyOf(g, false), conn, outlet, true, none, TWO).euler;
      expect(one.inWorker).toBe(false);
      expect(two.inWorker).toBe(true);
      expect(unshared.inWorker).toBe(false); // no copy of the values just for the check
      const e = one.result();
      expect(two.result()).toEqual(e);
      expect(unshared.result()).toEqual(e);
      // Source: Euler–Poincaré relation, χ counted from the simplices — common practice.
      expect(e!.holds).toBe(true);
    }), { numRuns: 80, seed: 21 });
  });

  it('ponds and runoff reports: identical with one and two threads', () => {
    fc.assert(fc.property(gridArb, ({ g, conn, outlet }) => {
      const opts = { connectivity: conn, nodataOutlet: outlet };
      const p1 = pondsReport(copyOf(g, true), { ...opts, threads: 1 });
      const p2 = pondsReport(copyOf(g, true), { ...opts, ...TWO });
      expect(JSON.stringify(p2.report)).toBe(JSON.stringify(p1.report));
      expect(Array.from(p2.result.rasters.filled)).toEqual(Array.from(p1.result.rasters.filled));
      expect(Array.from(p2.result.rasters.labels)).toEqual(Array.from(p1.result.rasters.labels));
      const r1 = runoffReport(copyOf(g, true), { ...opts, depth: 0.04, threads: 1 });
      const r2 = runoffReport(copyOf(g, true), { ...opts, depth: 0.04, ...TWO });
      expect(JSON.stringify(r2.report)).toBe(JSON.stringify(r1.report));
    }), { numRuns: 60, seed: 22 });
  });
});
