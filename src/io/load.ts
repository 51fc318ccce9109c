/**
 * One entry point for every surface file: picks the reader by the file's first bytes,
 * then by its extension (.tif/.tiff → GeoTIFF, .npy → NumPy), and reads anything else as
 * text. Grids are checked to be usable before they are returned.
 */
import { extname } from 'node:path';
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { openForReading, readAt } from './common.js';
import { readGeoTiff } from './geotiff-read.js';
import { readNpy } from './npy.js';
import { readTextSurface, type TextLayout } from './text.js';
import { checkGridUsable } from './validate.js';
import { checkValueRange, checkTransformRange } from './range.js';

export interface LoadOptions {
  /** GeoTIFF: the 1-based band to read. Default 1. */
  band?: number;
  /** Values equal to this are nodata (overrides a GeoTIFF's own nodata tag). Default: the file's own nodata, if any. */
  nodata?: number;
  /** GeoTIFF: threads that decode a large compressed file, this one included. Default: the number of cores (same values whatever the number). */
  threads?: number;
  /** Matrix text and .npy: map coordinates [x, y] of the centre of the first value. Default [0, 0]. */
  origin?: [number, number];
  /** Matrix text and .npy: step [dx, dy] along a row and from one row to the next. Default [1, 1]. */
  spacing?: [number, number];
  /** Column text: 1-based column numbers of x, y and value. Default [1, 2, 3]. */
  columns?: [number, number, number];
  /** Text: read the lines as a `matrix` of values or as x y value `columns`. Default: decided from the file (an ambiguous file is refused with a hint). */
  layout?: TextLayout;
}

export type SurfaceFormat = 'geotiff' | 'npy' | 'text';

/** Which reader a file needs, from its first bytes and then its extension. */
export async function detectFormat(path: string): Promise<SurfaceFormat> {
  const { fh } = await openForReading(path);
  let head: Uint8Array;
  try {
    head = await readAt(fh, 0, 4096);
  } catch (err) {
    throw new InputError(`cannot read ${path}: ${(err as Error).message}`);
  } finally {
    await fh.close().catch(() => undefined);
  }
  const h = (i: number) => head[i];
  if (head.length >= 4 && ((h(0) === 0x49 && h(1) === 0x49 && h(3) === 0 && (h(2) === 42 || h(2) === 43)) ||
      (h(0) === 0x4d && h(1) === 0x4d && h(2) === 0 && (h(3) === 42 || h(3) === 43)))) {
    return 'geotiff';
  }
  if (head.length >= 6 && h(0) === 0x93 && String.fromCharCode(...head.subarray(1, 6)) === 'NUMPY') return 'npy';
  const ext = extname(path).toLowerCase();
  if (ext === '.tif' || ext === '.tiff') return 'geotiff'; // the reader explains what is wrong
  if (ext === '.npy') return 'npy';
  if (head.includes(0)) {
    throw new InputError(`${path} is a binary file that is not a GeoTIFF or a .npy array; give a GeoTIFF, a .npy array or a text grid`);
  }
  return 'text';
}

/** Load a surface file as a Grid or (scattered text samples) a Mesh. */
export async function loadSurface(path: string, opts: LoadOptions = {}): Promise<Grid | Mesh> {
  const format = await detectFormat(path);
  const { band, nodata, origin, spacing, columns, layout, threads } = opts;
  if (format === 'geotiff' && (origin !== undefined || spacing !== undefined)) {
    throw new InputError(`${path} is a GeoTIFF and carries its own georeferencing; origin and spacing apply only to matrix text and .npy inputs`);
  }
  if (format !== 'text' && layout !== undefined) {
    throw new InputError(`layout applies only to text input, and ${path} is a ${format === 'npy' ? '.npy array' : 'GeoTIFF'}; leave --layout out`);
  }
  if (format !== 'text' && columns !== undefined) {
    throw new InputError(`columns apply only to x y value text input, and ${path} is a ${format === 'npy' ? '.npy array' : 'GeoTIFF'}`);
  }
  if (format !== 'geotiff' && band !== undefined && band !== 1) {
    throw new InputError(`${path} has a single band; band ${band} applies only to GeoTIFF input`);
  }
  let surface: Grid | Mesh;
  if (format === 'geotiff') surface = await readGeoTiff(path, { band, nodata, threads });
  else if (format === 'npy') surface = await readNpy(path, { origin, spacing, nodata });
  else surface = await readTextSurface(path, { origin, spacing, nodata, columns, layout });
  if (surface.kind === 'grid') {
    checkGridUsable(surface, path);
    checkTransformRange(surface, path);
    checkValueRange(surface.values, surface.width, path);
  }
  return surface;
}
