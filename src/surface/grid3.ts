/**
 * The regular 3-D grid: values on a lattice of nx × ny × nz points, x fastest
 * (index = i + nx·(j + ny·k)), an origin and a spacing per axis, and NaN for nodata.
 * Periodicity is a property of the analysis (its boundary option), not of the values,
 * as for 2-D grids; `periods` records the period of each axis when the input states one.
 */
import type { GridValues } from './grid.js';

export interface Grid3Init {
  nx: number;
  ny: number;
  nz: number;
  values: GridValues;
  /** Coordinates of the lattice point (0, 0, 0). Default [0, 0, 0]. */
  origin?: readonly [number, number, number];
  /** Distance between neighbouring lattice points along x, y, z (positive). Default [1, 1, 1]. */
  spacing?: readonly [number, number, number];
  /** Period of each axis (null: not periodic or not stated). Default all null. */
  periods?: readonly [number | null, number | null, number | null];
  /** Names of the three variables, when the input gives them (column headers). */
  names?: readonly [string, string, string];
  /** The values hold no −0 already: skip that pass. */
  normalised?: boolean;
}

export class Grid3 {
  readonly kind = 'grid3' as const;
  readonly nx: number;
  readonly ny: number;
  readonly nz: number;
  readonly values: GridValues;
  readonly origin: readonly [number, number, number];
  readonly spacing: readonly [number, number, number];
  readonly periods: readonly [number | null, number | null, number | null];
  readonly names: readonly [string, string, string] | null;

  constructor(init: Grid3Init) {
    const { nx, ny, nz, values } = init;
    for (const [k, n] of [['nx', nx], ['ny', ny], ['nz', nz]] as const) {
      if (!Number.isInteger(n) || n < 1) throw new RangeError(`3-D grid size ${k} must be a positive integer, got ${n}`);
    }
    if (values.length !== nx * ny * nz) {
      throw new RangeError(`3-D grid of ${nx}×${ny}×${nz} needs ${nx * ny * nz} values, got ${values.length}`);
    }
    const spacing = init.spacing ?? [1, 1, 1];
    for (const s of spacing) if (!(s > 0) || !Number.isFinite(s)) throw new RangeError(`3-D grid spacing must be positive and finite, got ${spacing.join(', ')}`);
    this.nx = nx;
    this.ny = ny;
    this.nz = nz;
    this.values = values;
    // (value, index) order: −0 and +0 are one value, so make them one bit pattern (as Grid does).
    if (init.normalised !== true) for (let i = 0; i < values.length; i++) if (values[i] === 0) values[i] = 0;
    this.origin = init.origin ?? [0, 0, 0];
    this.spacing = spacing;
    this.periods = init.periods ?? [null, null, null];
    this.names = init.names ?? null;
  }

  get size(): number {
    return this.nx * this.ny * this.nz;
  }

  /** Flat index of lattice point (i, j, k). */
  index(i: number, j: number, k: number): number {
    return i + this.nx * (j + this.ny * k);
  }

  /** Coordinates of lattice point (i, j, k) (no wrapping). */
  x(i: number): number { return this.origin[0] + i * this.spacing[0]; }
  y(j: number): number { return this.origin[1] + j * this.spacing[1]; }
  z(k: number): number { return this.origin[2] + k * this.spacing[2]; }

  /** Number of points holding a value (not nodata). */
  validCount(): number {
    const v = this.values;
    let n = 0;
    for (let i = 0; i < v.length; i++) if (v[i] === v[i]) n++;
    return n;
  }
}
