/** Random small grids for the property tests of src/morse: few distinct values (ties, plateaus) and some NaN cells. */
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';

/**
 * Values of a w × h grid from a seeded generator: whole numbers below `levels` (minus `offset`), a share
 * `holeRate` of NaN cells, never all NaN.
 */
export function seededValues<T extends Float32Array | Float64Array>(
  w: number, h: number, levels: number, holeRate: number, seed: number,
  make: (n: number) => T = ((n: number) => new Float64Array(n)) as (n: number) => T, offset = 0,
): T {
  let s = seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const values = make(w * h);
  for (let i = 0; i < w * h; i++) values[i] = rnd() < holeRate ? NaN : Math.floor(rnd() * levels) - offset;
  if (!values.some((x) => x === x)) values[0] = 0;
  return values;
}

/** Grids of 4 to `maxSide` cells a side, `minLevels` to `maxLevels` values, a NaN share drawn from `holeRates`. */
export function smallGrids(o: { maxSide: number; minLevels: number; maxLevels: number; holeRates: number[] }): fc.Arbitrary<Grid> {
  return fc
    .record({
      w: fc.integer({ min: 4, max: o.maxSide }),
      h: fc.integer({ min: 4, max: o.maxSide }),
      levels: fc.integer({ min: o.minLevels, max: o.maxLevels }),
      holeRate: fc.constantFrom(...o.holeRates),
      seed: fc.integer(),
    })
    .map(({ w, h, levels, holeRate, seed }) => new Grid({ width: w, height: h, values: seededValues(w, h, levels, holeRate, seed) }));
}
