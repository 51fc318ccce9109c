/** fast-check generators shared by the ponding and runoff property tests. */
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { randomGrid } from './helpers.js';

/**
 * Random small DEMs (ties, plateaus, nodata), not flat, with a connectivity and whether nodata
 * cells are outlets: about half on a geographic grid (per-row areas), half on a projected one
 * with 2 m × 3 m cells.
 */
export const gridArb = fc
  .record({
    w: fc.integer({ min: 3, max: 12 }),
    h: fc.integer({ min: 3, max: 12 }),
    levels: fc.constantFrom(0, 2, 3, 5, 9),
    holeRate: fc.constantFrom(0, 0, 0.08, 0.25),
    seed: fc.integer(),
    conn: fc.constantFrom<4 | 6 | 8>(4, 6, 8),
    outlet: fc.boolean(),
    geo: fc.boolean(),
  })
  .map(({ w, h, levels, holeRate, seed, conn, outlet, geo }) => {
    const g0 = randomGrid(seed, w, h, levels, holeRate);
    const g = geo
      ? new Grid({ width: w, height: h, values: g0.values, transform: [10, 0.5, 0, 60, 0, -0.5], crs: { epsg: 4326, geographic: true, linearUnit: 'degree' } })
      : new Grid({ width: w, height: h, values: g0.values, transform: [0, 2, 0, 0, 0, -3], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
    return { g, conn, outlet };
  })
  .filter(({ g }) => {
    let lo = Infinity, hi = -Infinity;
    for (const z of g.values) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
    return hi > lo;
  });
