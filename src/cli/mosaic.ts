/**
 * Mosaics on the command line: IN as a .vrt, a folder of GeoTIFF tiles or several GeoTIFF paths
 * (src/io/mosaic.ts). For now the mosaic is assembled into one grid in memory (guarded by the
 * memory budget) and the command's analysis runs on it; the rasters of `-o DIR` are written back
 * as one GeoTIFF per input tile plus one VRT per product (docs/tiles.md).
 */
import { InputError } from '../errors.js';
import { openMosaic, isMosaicInput, type OpenedMosaic } from '../io/mosaic.js';
import { writeGeoTiff, type RasterValues } from '../io/geotiff-write.js';
import { vrtText } from '../io/vrt-write.js';
import { checkGridUsable } from '../io/validate.js';
import { checkTransformRange, checkValueRange } from '../io/range.js';
import type { OutputFolder } from '../io/outdir.js';
import { Grid, type GeoTransform } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { MosaicTile } from '../tiles/mosaic.js';
import { parseNodata, parseNumber, parseThreads, type CommonOptions } from './common.js';
import { checkCellBudget, type BudgetCommand } from './budget.js';
import { loadInput } from './load.js';

/** IN as commander gives it: one path, or several (a variadic argument). */
export type Inputs = string | readonly string[];

export function inputList(input: Inputs): string[] {
  return typeof input === 'string' ? [input] : [...input];
}

/** The report.json entry of a mosaic: how it was given, its tiles and where each sits. */
export interface MosaicInfo {
  kind: 'vrt' | 'folder' | 'files';
  source: string;
  tileCount: number;
  sampleType: string;
  /** True when the mosaic is assembled into one grid in memory for this analysis; false when it is analysed tile by tile (docs/tiles.md). */
  assembled: boolean;
  tiles: { name: string; file: string; col: number; row: number; width: number; height: number }[];
}

export function mosaicInfo(m: OpenedMosaic, assembled = true): MosaicInfo {
  return {
    kind: m.kind, source: m.source, tileCount: m.tiles.length, sampleType: m.sampleType, assembled,
    tiles: m.tiles.map((t) => ({ name: t.name, file: t.path, col: t.col0, row: t.row0, width: t.width, height: t.height })),
  };
}

export interface LoadedInput {
  surface: Grid | Mesh;
  /** The mosaic, when IN was one. */
  mosaic: OpenedMosaic | null;
  /** IN for messages: the path, or the mosaic's name. */
  label: string;
}

/** IN checked and, for a mosaic, opened (headers and overlap strips only); the cells are read by load(). */
export interface PreparedInput {
  inputs: string[];
  mosaic: OpenedMosaic | null;
  /** The files the run reads: IN and every tile (for the output folder's check). */
  files: string[];
  /** A mosaic: whether its assembled grid fits the memory budget (src/cli/budget.ts); always true for one file. */
  fits: boolean;
  load(): Promise<LoadedInput>;
}

/**
 * Prepare IN: one surface file as before, or a mosaic opened and checked now — before the output
 * folder is opened, so that it knows every tile — and assembled into one grid by load(), refused
 * by the memory budget before any cell is read when the assembled grid would not fit.
 */
export async function prepareInput(input: Inputs, opts: CommonOptions, command: BudgetCommand, how: { tiled?: boolean } = {}): Promise<PreparedInput> {
  const inputs = inputList(input);
  if (!isMosaicInput(inputs)) {
    return { inputs, mosaic: null, files: inputs, fits: true, load: async () => ({ surface: await loadInput(inputs[0], opts), mosaic: null, label: inputs[0] }) };
  }
  for (const [key, flag] of [['origin', '--origin'], ['spacing', '--spacing'], ['layout', '--layout']] as const) {
    if (opts[key] !== undefined) throw new InputError(`${flag} applies to text and .npy input; a mosaic of GeoTIFF tiles carries its own georeferencing — leave ${flag} out`);
  }
  if (opts.columns !== undefined && opts.columns !== '1,2,3') throw new InputError('--columns applies to x y value text input, not to a mosaic of GeoTIFF tiles');
  const mosaic = await openMosaic(inputs, {
    band: parseNumber('--band', opts.band ?? '1', { integer: true, min: 1, max: 65535, why: 'a TIFF holds at most 65 535 bands (SamplesPerPixel is a 16-bit field)' }),
    nodata: parseNodata(opts.nodata),
    threads: parseThreads(opts.threads),
  });
  // a command that can run tile by tile (how.tiled) learns whether the assembled grid fits instead of being refused;
  // load() still refuses it
  const budget = (): void => checkCellBudget(command, mosaic.width * mosaic.height, mosaic.source,
    `the mosaic's ${mosaic.tiles.length} tiles are assembled into one grid in memory for ${command}; give fewer tiles (a smaller area) or resample them to a coarser cell size`);
  let fits = true;
  if (how.tiled) {
    try { budget(); } catch (e) { if (!(e instanceof InputError)) throw e; fits = false; }
  } else budget();
  const load = async (): Promise<LoadedInput> => {
    budget();
    const values = await mosaic.readWindow({ col0: 0, row0: 0, width: mosaic.width, height: mosaic.height });
    const grid = new Grid({ width: mosaic.width, height: mosaic.height, values, transform: mosaic.transform, crs: mosaic.crs, nodata: mosaic.nodata });
    checkGridUsable(grid, mosaic.source);
    checkTransformRange(grid, mosaic.source);
    checkValueRange(grid.values, grid.width, mosaic.source);
    return { surface: grid, mosaic, label: mosaic.source };
  };
  return { inputs, mosaic, files: [...inputs, ...mosaic.tiles.map((t) => t.path)], fits, load };
}

/** One raster product of a command: `name` without extension (filled, depth, labels, water-level …). */
export interface RasterProduct {
  name: string;
  values: RasterValues;
  nodata: number | null;
  overviews: 'average' | 'nearest';
}

/** The output names of raster products: NAME.tif for one grid; NAME/ (one file a tile) and NAME.vrt for a mosaic. */
export function rasterNames(products: readonly string[], mosaic: boolean): string[] {
  return mosaic ? products.flatMap((p) => [`${p}/`, `${p}.vrt`]) : products.map((p) => `${p}.tif`);
}

/** The files the report page lists for the rasters: NAME.tif, or NAME.vrt for a mosaic. */
export function rasterFiles(products: readonly string[], mosaic: boolean): string[] {
  return products.map((p) => `${p}.${mosaic ? 'vrt' : 'tif'}`);
}

/** GDAL's name of a raster's sample type. */
export function dataType(v: RasterValues): string {
  if (v instanceof Float32Array) return 'Float32';
  if (v instanceof Float64Array) return 'Float64';
  if (v instanceof Int32Array) return 'Int32';
  if (v instanceof Uint32Array) return 'UInt32';
  if (v instanceof Int16Array) return 'Int16';
  if (v instanceof Uint16Array) return 'UInt16';
  return 'Byte';
}

/**
 * Write raster products: for one grid, NAME.tif each (all at once, compressed on worker threads);
 * for a mosaic, NAME/<tile>.tif for every input tile — the tile's cells cropped from the result,
 * with the tile's own geotransform — then NAME.vrt stitching them. Returns the writers' promises.
 */
export function writeRasterProducts(
  out: OutputFolder,
  base: { width: number; height: number; transform: GeoTransform; crs: Grid['crs'] },
  products: readonly RasterProduct[],
  mosaic: OpenedMosaic | null,
  threads: number | undefined,
): Promise<void>[] {
  if (!mosaic) {
    return products.map((p) => writeGeoTiff(out.path(`${p.name}.tif`), { ...base, values: p.values, nodata: p.nodata }, { overviews: p.overviews, threads }));
  }
  return [(async () => {
    const W = base.width;
    // one tile at a time (its products together): memory is the products of one tile
    for (const t of mosaic.tiles) {
      await writeTileRasters(out, t, base.crs, products.map((p) => {
        const Ctor = p.values.constructor as new (n: number) => RasterValues;
        const v = new Ctor(t.width * t.height);
        for (let r = 0; r < t.height; r++) {
          const from = (t.row0 + r) * W + t.col0;
          v.set(p.values.subarray(from, from + t.width), r * t.width);
        }
        return { ...p, values: v };
      }), threads);
    }
    writeProductVrts(out, base, products.map((p) => ({ name: p.name, dataType: dataType(p.values), nodata: p.nodata })), mosaic);
  })()];
}

/**
 * Write one input tile's raster products: NAME/<tile name>.tif for each product, `values` being
 * the tile's cells (tile.width × tile.height, row-major), with the tile's own geotransform; then a
 * checkpoint of the output folder. The in-memory mosaic path and the tile-by-tile run (src/cli/tiled.ts)
 * write their tiles with it, so the two write the same files.
 */
export async function writeTileRasters(out: OutputFolder, t: MosaicTile, crs: Grid['crs'], products: readonly RasterProduct[], threads: number | undefined): Promise<void> {
  await Promise.all(products.map((p) => {
    if (p.values.length !== t.width * t.height) throw new Error(`internal: ${p.values.length} values for the ${t.width}×${t.height} tile ${t.name}`);
    return writeGeoTiff(out.path(`${p.name}/${t.name}.tif`), { width: t.width, height: t.height, transform: t.transform, crs, values: p.values, nodata: p.nodata },
      { overviews: p.overviews, threads });
  }));
  await out.checkpoint();
}

/** NAME.vrt for each product, stitching NAME/<tile name>.tif of every tile of the mosaic (paths relative to DIR). */
export function writeProductVrts(
  out: OutputFolder,
  base: { width: number; height: number; transform: GeoTransform; crs: Grid['crs'] },
  products: readonly { name: string; dataType: string; nodata: number | null }[],
  mosaic: { tiles: readonly MosaicTile[] },
): void {
  for (const p of products) {
    out.write(`${p.name}.vrt`, vrtText({
      width: base.width, height: base.height, transform: base.transform, crs: base.crs, dataType: p.dataType, nodata: p.nodata,
      sources: mosaic.tiles.map((t) => ({ file: `${p.name}/${t.name}.tif`, col0: t.col0, row0: t.row0, width: t.width, height: t.height })),
    }));
  }
}
