import { loadSurface } from '../io/index.js';
import { isGrid3File } from '../io/grid3-read.js';
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { parseColumns, parseLayout, parseNodata, parseNumber, parsePair, parseThreads, type CommonOptions } from './common.js';

/** How many column numbers --columns gives (0 when left at its default). */
export function columnCount(columns: string | undefined): number {
  return columns === undefined || columns === '1,2,3' ? 0 : columns.split(',').length;
}

/** Load the input surface with the options every command shares. */
export async function loadInput(path: string, opts: CommonOptions): Promise<Grid | Mesh> {
  // a 3-D grid read as 2-D would be misread (four-field rows as a matrix): only survey and barriers take them so far
  if (opts.layout === undefined && (await isGrid3File(path, columnCount(opts.columns)))) {
    throw new InputError(`${path} is a 3-D grid (a 3-D .npy array, or x y z value rows under a header of four names); this command takes 2-D grids — sill survey and sill barriers read 3-D grids (--layout matrix reads four-field rows as a 2-D matrix)`);
  }
  return loadSurface(path, {
    band: parseNumber('--band', opts.band ?? '1', { integer: true, min: 1, max: 65535, why: 'a TIFF holds at most 65 535 bands (SamplesPerPixel is a 16-bit field)' }),
    nodata: parseNodata(opts.nodata),
    threads: parseThreads(opts.threads),
    origin: parsePair('--origin', opts.origin),
    spacing: parsePair('--spacing', opts.spacing),
    columns: opts.columns && opts.columns !== '1,2,3' ? parseColumns(opts.columns) : undefined,
    layout: parseLayout(opts.layout),
  });
}
