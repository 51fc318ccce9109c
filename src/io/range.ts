/**
 * The range of numbers sill computes with. Volumes, areas, Hessians and squared distances multiply
 * values and coordinates together: with magnitudes up to 1e150 every square and pairwise product
 * stays inside float64 (max ≈ 1.8e308, smallest normal ≈ 2.2e-308). Inputs outside that range are
 * refused before the work with a hint to rescale, instead of giving overflowed or underflowed results.
 */
import { InputError } from '../errors.js';
import type { Grid, GridValues } from '../surface/grid.js';

/** Largest magnitude accepted for a value or a coordinate. */
export const VALUE_LIMIT = 1e150;
/** Smallest magnitude other than 0 accepted for a coordinate step or a scattered coordinate. */
export const TINY_LIMIT = 1e-150;

const HINT = 'sill works with magnitudes up to 1e150 (squares and products must fit in float64)';

/** Refuse a grid holding a value beyond ±VALUE_LIMIT; names the first such cell. */
export function checkValueRange(values: GridValues, width: number, source: string): void {
  const n = values.length;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v > VALUE_LIMIT || v < -VALUE_LIMIT) {
      throw new InputError(
        `${source}: cell (col ${i % width}, row ${Math.floor(i / width)}) holds ${v.toExponential(3)}, out of range: ${HINT}; ` +
          'rescale the values (e.g. subtract a base level or change the unit)',
      );
    }
  }
}

/** Refuse a geotransform whose origin or steps are out of range (a step below TINY_LIMIT makes cell areas underflow). */
export function checkTransformRange(grid: Grid, source: string): void {
  const t = grid.transform;
  for (const i of [0, 3]) {
    if (!(Math.abs(t[i]) <= VALUE_LIMIT)) {
      throw new InputError(`${source}: the grid origin ${t[i].toExponential(3)} is out of range: ${HINT}; give coordinates in a larger unit or shift them`);
    }
  }
  for (const i of [1, 2, 4, 5]) {
    const a = Math.abs(t[i]);
    if (!(a <= VALUE_LIMIT) || (a !== 0 && a < TINY_LIMIT)) {
      throw new InputError(
        `${source}: the cell size ${t[i].toExponential(3)} is out of range (steps must lie between 1e-150 and 1e150): ${HINT}; ` +
          'give coordinates in another unit',
      );
    }
  }
}

/**
 * Refuse scattered coordinates beyond ±VALUE_LIMIT or closer to 0 than TINY_LIMIT (other than 0).
 * `line(i)` names point i in messages.
 */
export function checkCoordinateRange(x: Float64Array, y: Float64Array, source: string, line: (i: number) => string): void {
  for (let i = 0; i < x.length; i++) {
    for (const [axis, v] of [['x', x[i]], ['y', y[i]]] as const) {
      const a = Math.abs(v);
      if (a > VALUE_LIMIT || (a !== 0 && a < TINY_LIMIT)) {
        throw new InputError(
          `${source} ${line(i)}: the ${axis} coordinate ${v.toExponential(3)} is out of range (coordinates are 0 or between 1e-150 and 1e150 in magnitude): ` +
            `${HINT}; give coordinates in another unit or shift them`,
        );
      }
    }
  }
}
