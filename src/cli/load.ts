import { loadSurface } from '../io/index.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { parseColumns, parseLayout, parseNodata, parseNumber, parsePair, parseThreads, type CommonOptions } from './common.js';

/** Load the input surface with the options every command shares. */
export async function loadInput(path: string, opts: CommonOptions): Promise<Grid | Mesh> {
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
