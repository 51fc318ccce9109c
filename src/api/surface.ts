/**
 * The library's doors for surfaces: `readSurface` for every file sill reads, `gridFromArray` for
 * values another library already holds in memory. Both check what they return the way the command
 * line does (one-line `InputError`s naming the input), and remember the input's name so that the
 * analyses name it in their reports and messages.
 */
import { InputError } from '../errors.js';
import { Grid, gridValues, type Crs, type GeoTransform } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { loadSurface, type LoadOptions } from '../io/load.js';
import { checkGridSize, finishValues, nodataFor } from '../io/common.js';
import { checkGridUsable } from '../io/validate.js';
import { checkTransformRange, checkValueRange } from '../io/range.js';

/** What every analysis reads: a regular grid, or scattered samples triangulated as a mesh. */
export type Surface = Grid | Mesh;

/** The name each surface was read under (a file path, or the `name` given to gridFromArray). */
const names = new WeakMap<Surface, string>();

/** The name `surface` was read or made under, or null (a Grid or Mesh built directly). */
export function surfaceName(surface: Surface): string | null {
  return names.get(surface) ?? null;
}

/** The options of `readSurface`: those of the loaders (src/io/load.ts), with their defaults. */
export type ReadSurfaceOptions = LoadOptions;

/**
 * Read a surface file: a GeoTIFF, a NumPy `.npy` array, or text (a matrix of values, or x y value
 * columns forming a lattice or scattered samples). The format is decided by the file's first bytes,
 * then its extension. Grids are checked to be usable (at least 2 × 2, values and coordinates within
 * ±1e150). Throws `InputError` with a one-line message for anything the caller can fix.
 */
export async function readSurface(input: string, options: ReadSurfaceOptions = {}): Promise<Surface> {
  if (typeof input !== 'string' || input === '') throw new InputError('readSurface needs the path of a surface file (GeoTIFF, .npy or text)');
  const surface = await loadSurface(input, options);
  names.set(surface, input);
  return surface;
}

export interface GridFromArrayOptions {
  /** Columns (values per row). Required. */
  width: number;
  /** Rows. Default: values.length / width. */
  height?: number;
  /**
   * GDAL-style geotransform [x0, dx, rx, y0, ry, dy] at cell corners. Default: from `origin` and
   * `spacing`, else [0, 1, 0, 0, 0, 1] (cell (col, row) centred on (col + 0.5, row + 0.5)).
   */
  transform?: GeoTransform;
  /** Map coordinates [x, y] of the centre of the first value (instead of `transform`). Default [0, 0] with `spacing`. */
  origin?: [number, number];
  /** Step [dx, dy] along a row and from one row to the next (instead of `transform`). Default [1, 1] with `origin`. */
  spacing?: [number, number];
  /** Coordinate reference system, e.g. `{ epsg: 32633 }`. Default none. */
  crs?: Crs | null;
  /** Values equal to this are nodata (NaN always is). Default none. */
  nodata?: number | null;
  /**
   * Copy the values (default true): the caller's array is left as it is, and the copy lives on
   * shared memory so that a second thread can read it. With false a Float32Array or Float64Array
   * is used in place (nodata values become NaN and −0 becomes 0 in it); other arrays are copied.
   */
  copy?: boolean;
  /** A name for the surface in reports and messages. Default 'array'. */
  name?: string;
}

/**
 * A grid from row-major values held in memory (another library's raster, a NumPy buffer, a
 * simulation), checked like a file: at least 2 × 2, no infinities (unless they are the nodata
 * value), values and coordinates within ±1e150. Float64 input stays float64; anything else
 * becomes float32 only when it is a Float32Array, else float64.
 */
export function gridFromArray(values: ArrayLike<number>, options: GridFromArrayOptions): Grid {
  const name = options.name ?? 'array';
  const { width } = options;
  if (!values || typeof values.length !== 'number') throw new InputError(`${name}: the values must be an array or typed array of numbers`);
  if (!Number.isInteger(width) || width < 1) throw new InputError(`${name}: width must be a whole number ≥ 1, got ${width}`);
  const height = options.height ?? values.length / width;
  if (!Number.isInteger(height) || height < 1 || width * height !== values.length) {
    throw new InputError(`${name}: ${values.length} values do not fill ${options.height === undefined ? `rows of ${width}` : `${width} × ${height} cells`}; give width and height with width × height = values.length`);
  }
  if (options.transform !== undefined && (options.origin !== undefined || options.spacing !== undefined)) {
    throw new InputError(`${name}: give either transform or origin/spacing, not both`);
  }
  const float32 = values instanceof Float32Array;
  checkGridSize(name, width, height, float32 ? 4 : 8);
  let out: Float32Array | Float64Array;
  if (options.copy === false && (values instanceof Float32Array || values instanceof Float64Array)) {
    out = values;
  } else {
    out = gridValues(width * height, !float32);
    out.set(values);
  }
  const nodata = options.nodata ?? null;
  finishValues(out, nodataFor(nodata, float32), false, width, name);
  let transform = options.transform;
  if (transform === undefined && options.origin === undefined && options.spacing === undefined) {
    transform = [0, 1, 0, 0, 0, 1];
  } else if (transform === undefined) {
    const [X, Y] = options.origin ?? [0, 0];
    const [DX, DY] = options.spacing ?? [1, 1];
    for (const v of [X, Y, DX, DY]) if (!Number.isFinite(v)) throw new InputError(`${name}: origin and spacing must be finite numbers`);
    if (DX === 0 || DY === 0) throw new InputError(`${name}: spacing must not be 0`);
    transform = [X - DX / 2, DX, 0, Y - DY / 2, 0, DY];
  } else if (transform.length !== 6 || !transform.every(Number.isFinite)) {
    throw new InputError(`${name}: transform must be six finite numbers [x0, dx, rx, y0, ry, dy]`);
  }
  const grid = new Grid({ width, height, values: out, transform: [...transform] as GeoTransform, crs: options.crs ?? null, nodata });
  checkGridUsable(grid, name);
  checkTransformRange(grid, name);
  checkValueRange(grid.values, width, name);
  names.set(grid, name);
  return grid;
}
