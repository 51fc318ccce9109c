/**
 * `sill ponds MOSAIC` tile by tile (docs/tiles.md, "Tile by tile on the command line"): the
 * library's pondsTiled on the mosaic — memory set by the tiles in flight, never by the mosaic —
 * when the assembled grid would not fit the memory budget, or on request (--tiled).
 *
 * What it writes with `-o DIR`: the per-tile rasters filled/, depth/, labels/ (one GeoTIFF per
 * input tile, the same files the in-memory mosaic path writes) and filled.vrt, depth.vrt,
 * labels.vrt; depressions.csv, pour-points.geojson and report.json, global, streamed from the
 * columns. What needs cells across tile seams and is not computed tile by tile yet is listed in
 * NOT_COMPUTED (report.json `notComputed`, one line on stderr).
 *
 * Functions another driver (a scheduler's stages) can call:
 *
 *   writeTileRasters(out: OutputFolder, tile: MosaicTile, crs: Crs | null,
 *                    products: RasterProduct[], threads?: number): Promise<void>      (src/cli/mosaic.ts)
 *     writes NAME/<tile name>.tif for each product; `values` hold the whole input tile's cells.
 *
 *   new TileAssembler(tiles: MosaicTile[])
 *   assembler.window(k: number, own: CellWindow, products: RasterValues[]): [number, RasterValues[]][]
 *     given window k's products (tile k's owned window), the tiles now complete, each with its
 *     products over the whole input tile: its owned cells plus the shared edge rows and columns
 *     other windows own (kept from them until the tile is complete; in canonical order only the
 *     edges are kept, so memory stays at the windows in flight and their edges).
 *
 *   writeProductVrts(out, base, products, mosaic)                                   (src/cli/mosaic.ts)
 *
 *   runTiledPonds(args: TiledPondsArgs): Promise<{ report: PondsReport; written: string[] }>
 */
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative, resolve, isAbsolute } from 'node:path';
import { InputError } from '../errors.js';
import { pondsTiled, type TiledPondsResult, type TiledPondsOptions } from '../tiles/ponds.js';
import type { CellWindow, MosaicTile } from '../tiles/mosaic.js';
import type { OpenedMosaic } from '../io/mosaic.js';
import type { RasterValues } from '../io/geotiff-write.js';
import { OutputError, plainReason, type OutputFolder } from '../io/outdir.js';
import { VALUE_LIMIT } from '../io/range.js';
import { Grid, type GridValues } from '../surface/grid.js';
import type { Connectivity } from '../surface/complex.js';
import { outletNeighbourOf } from '../hydro/spill-paths.js';
import { topLabels } from '../hydro/rasters.js';
import type { PondsResult } from '../hydro/ponds.js';
import { buildPondsReport, pondsCsvColumns, pondsCsvRow, type PondsReport } from '../report/ponds.js';
import { depressionColumns } from '../report/hydro-common.js';
import { writePourPointsGeojson, POUR_POINTS_DESCRIPTION } from '../report/depressions-geojson.js';
import { checkHydroReport, writeIdCsv, writeReportFile } from './hydro-common.js';
import { mosaicInfo, writeTileRasters, writeProductVrts, dataType, rasterNames, type RasterProduct } from './mosaic.js';
import { ProgressBar } from './progress-bar.js';

/** The raster products a tiled ponds run writes. */
export const TILED_RASTERS = ['filled', 'depth', 'labels'];

/** The files `ponds MOSAIC -o DIR` writes tile by tile. */
export const TILED_PONDS_FILES = [...rasterNames(TILED_RASTERS, true), 'depressions.csv', 'pour-points.geojson', 'report.json'];

/** What a tiled run does not compute, and why (report.json `notComputed`; docs/tiles.md). */
export const NOT_COMPUTED: { what: string; files: string[]; keys: string[]; reason: string }[] = [
  {
    what: 'catchments',
    files: ['catchments/', 'catchments.vrt', 'catchments.geojson'],
    keys: ['totals.offMap', 'totals.walledIn', 'totals.catchments', 'depressions[].catchmentCells', 'depressions[].catchmentArea', 'depressions[].catchmentRatio'],
    reason: 'a cell\'s catchment follows its water downhill across tile seams; it is not traced tile by tile yet',
  },
  {
    what: 'depression outlines',
    files: ['depressions.geojson'],
    keys: ['outlines'],
    reason: 'a depression that crosses a seam has one outline; outlines traced per tile would be cut at the tile edges',
  },
  {
    what: 'spill paths',
    files: ['spill-paths.geojson'],
    keys: [],
    reason: 'a spill path runs on across tile seams',
  },
  {
    what: 'shape attributes',
    files: [],
    keys: ['depressions[].perimeter', 'depressions[].majorAxis', 'depressions[].minorAxis', 'depressions[].orientation', 'depressions[].elongation', 'depressions[].boxRatio'],
    reason: 'a wet area that crosses a seam needs its cells on both sides',
  },
  {
    what: 'results.gpkg',
    files: ['results.gpkg'],
    keys: [],
    reason: 'its layers are built from the outlines, spill paths and catchments (the pour points are in pour-points.geojson)',
  },
];

/** The one stderr line of a tiled run. */
export function tiledNote(source: string, why: TiledWhy): string {
  const reason = why === 'asked' ? '--tiled' : why === 'scheduler' ? 'as stages of a run folder, --scheduler' : 'the assembled mosaic would not fit the memory budget';
  return `${source}: analysed tile by tile (${reason}); ` +
    `not computed: ${NOT_COMPUTED.map((n) => n.what).join(', ')} — they need cells across tile seams (report.json "notComputed", docs/tiles.md)`;
}

export type TiledWhy = 'asked' | 'memory' | 'scheduler';

function isInside(path: string, dir: string): boolean {
  const r = relative(resolve(dir), resolve(path));
  return r !== '' && !r.startsWith('..') && !isAbsolute(r);
}

interface Piece { win: CellWindow; values: RasterValues[] }

function intersect(a: CellWindow, b: CellWindow): CellWindow | null {
  const c0 = Math.max(a.col0, b.col0), r0 = Math.max(a.row0, b.row0);
  const c1 = Math.min(a.col0 + a.width, b.col0 + b.width), r1 = Math.min(a.row0 + a.height, b.row0 + b.height);
  return c1 > c0 && r1 > r0 ? { col0: c0, row0: r0, width: c1 - c0, height: r1 - r0 } : null;
}

/** Copy window `w` of `src` (laid out over window `from`) into `dst` (laid out over window `to`). */
function copyWindow(src: RasterValues, from: CellWindow, dst: RasterValues, to: CellWindow, w: CellWindow): void {
  for (let r = 0; r < w.height; r++) {
    const s = (w.row0 + r - from.row0) * from.width + (w.col0 - from.col0);
    const d = (w.row0 + r - to.row0) * to.width + (w.col0 - to.col0);
    dst.set(src.subarray(s, s + w.width), d);
  }
}

function like(v: RasterValues, n: number): RasterValues {
  return new (v.constructor as new (n: number) => RasterValues)(n);
}

/**
 * Whole input tiles from the owned windows (see the file header). A tile is ready once every
 * window that owns some of its cells has been given; until then the parts of those windows that
 * lie in it are kept (in canonical order, only the edges a tile shares with earlier ones).
 */
export class TileAssembler {
  private readonly pending = new Map<number, Piece[]>();
  private readonly need: Int32Array;

  constructor(private readonly tiles: readonly MosaicTile[]) {
    const T = tiles.length;
    this.need = new Int32Array(T);
    for (let k = 0; k < T; k++) {
      const o = tiles[k].own;
      if (o.width <= 0 || o.height <= 0) continue;
      for (let u = 0; u < T; u++) if (intersect(tiles[u], o)) this.need[u]++;
    }
  }

  /**
   * Window `k` (tile k's owned window `own`) and its products; returns the tiles that are now
   * complete, with their products over the whole tile (in tile order).
   */
  window(k: number, own: CellWindow, products: RasterValues[]): [number, RasterValues[]][] {
    const T = this.tiles, ready: [number, RasterValues[]][] = [];
    for (let u = 0; u < T.length; u++) {
      const w = intersect(T[u], own);
      if (!w) continue;
      if (this.need[u] <= 0) throw new Error(`internal: window ${k} given twice, or tile ${T[u].name} already written`);
      // the window's own products as they are (not touched again), a copy of the part another tile shares
      const piece = u === k && w.width === own.width && w.height === own.height ? { win: own, values: products }
        : { win: w, values: products.map((p) => { const v = like(p, w.width * w.height); copyWindow(p, own, v, w, w); return v; }) };
      const list = this.pending.get(u);
      if (list) list.push(piece); else this.pending.set(u, [piece]);
      if (--this.need[u] === 0) ready.push([u, this.assemble(u)]);
    }
    return ready;
  }

  /** True when every tile has been returned complete. */
  finished(): boolean {
    return this.need.every((n) => n === 0);
  }

  private assemble(u: number): RasterValues[] {
    const t = this.tiles[u], pieces = this.pending.get(u)!;
    this.pending.delete(u);
    const p0 = pieces[0];
    if (pieces.length === 1 && p0.win.col0 === t.col0 && p0.win.row0 === t.row0 && p0.win.width === t.width && p0.win.height === t.height) return p0.values;
    const out = p0.values.map((p) => like(p, t.width * t.height));
    for (const piece of pieces) piece.values.forEach((v, j) => copyWindow(v, piece.win, out[j], t, piece.win));
    return out;
  }
}

export interface TiledPondsArgs {
  mosaic: OpenedMosaic;
  out: OutputFolder | null;
  why: TiledWhy;
  connectivity: Connectivity;
  nodataOutlet: boolean;
  minDepth?: number;
  minArea?: number;
  minVolume?: number;
  minPersistence: number;
  fillOnlyBelow?: number;
  zUnits?: string;
  zFactor?: number;
  xyUnits?: string;
  labelLevel: 'leaf' | 'top';
  /** Worker threads for the tiles' passes (default: the number of cores). */
  workers?: number;
  /** The run folder (default: a folder inside the output's staging folder, or a temporary folder without -o). */
  runDir?: string;
  /** Threads that compress the rasters. */
  threads?: number;
  quiet: boolean;
  /** Runs the tile passes (default: pondsTiled on worker threads; `ponds --scheduler` passes pondsStaged with its engine). */
  run?: (opts: TiledPondsOptions) => Promise<TiledPondsResult>;
}

/** The mosaic as a grid without its cells, for the report writers (they read its size, transform, CRS and the type of its values only). */
function headerGrid(m: OpenedMosaic, validCells: number): Grid {
  const g = Object.create(Grid.prototype) as Grid;
  Object.assign(g, {
    kind: 'grid', width: m.width, height: m.height, values: m.float64 ? new Float64Array(0) : new Float32Array(0),
    transform: m.transform, crs: m.crs, nodata: m.nodata,
  });
  Object.defineProperty(g, 'size', { value: m.width * m.height });
  Object.defineProperty(g, 'validCount', { value: () => validCells });
  return g;
}

/** Refuse a window holding a value beyond ±VALUE_LIMIT, as the loaders refuse one grid (src/io/range.ts). */
function checkWindowRange(values: GridValues, own: CellWindow, source: string): void {
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v > VALUE_LIMIT || v < -VALUE_LIMIT) {
      throw new InputError(`${source}: cell (col ${own.col0 + (i % own.width)}, row ${own.row0 + Math.floor(i / own.width)}) holds ${v.toExponential(3)}, out of range: ` +
        'sill works with magnitudes up to 1e150 (squares and products must fit in float64); rescale the values (e.g. subtract a base level or change the unit)');
    }
  }
}

export async function runTiledPonds(a: TiledPondsArgs): Promise<{ report: PondsReport; written: string[] }> {
  const { mosaic, out } = a;
  const source = mosaic.source;
  if (mosaic.width < 2 || mosaic.height < 2) throw new InputError(`${source}: the mosaic is too small (${mosaic.width} × ${mosaic.height} cells); a DEM needs at least 2 × 2`);
  const bar = new ProgressBar(a.quiet);
  let tmp: string | null = null;
  let runDir: string;
  if (a.runDir !== undefined) {
    try { mkdirSync(a.runDir, { recursive: true }); } catch (e) { throw new InputError(`--run-dir ${a.runDir}: cannot make the folder: ${plainReason(e)}; give a folder that can be made or exists`); }
    runDir = a.runDir;
  }
  else if (out) runDir = out.scratch();
  else runDir = tmp = mkdtempSync(join(tmpdir(), 'sill-run-'));
  try {
    const assembler = new TileAssembler(mosaic.tiles);
    const valueNodata = mosaic.nodata !== null && Number.isFinite(mosaic.nodata) ? mosaic.nodata : NaN;
    const spec: Omit<RasterProduct, 'values'>[] = [
      { name: 'filled', nodata: valueNodata, overviews: 'average' },
      { name: 'depth', nodata: -9999, overviews: 'average' },
      { name: 'labels', nodata: -1, overviews: 'nearest' },
    ];
    let types: string[] = [];
    const write = async (k: number, values: RasterValues[]): Promise<void> => {
      if (!out) return;
      await writeTileRasters(out, mosaic.tiles[k], mosaic.crs, spec.map((s, j) => ({ ...s, values: values[j] })), a.threads);
    };
    // the outlet beyond the pass of each depression that spills to the outside, found in its window's halo
    let outCol = new Int32Array(0), outRow = new Int32Array(0), outFound = new Uint8Array(0), candidates = new Int32Array(0);
    let validCells = 0;
    const W = mosaic.width;
    const res: TiledPondsResult = await (a.run ?? ((o: TiledPondsOptions) => pondsTiled(mosaic, o)))({
      connectivity: a.connectivity, nodataOutlet: a.nodataOutlet,
      minDepth: a.minDepth, minArea: a.minArea, minVolume: a.minVolume, minPersistence: a.minPersistence, fillOnlyBelow: a.fillOnlyBelow,
      zUnits: a.zUnits, zFactor: a.zFactor, xyUnits: a.xyUnits,
      workers: a.workers, runDir,
      onStage: (stage, done, total) => bar.update(stage, done, total),
      onRasters: async (tile, own, rs, win) => {
        const H = win.hierarchy;
        checkWindowRange(win.values, own, source);
        for (let i = 0; i < win.values.length; i++) if (win.values[i] === win.values[i]) validCells++;
        if (outFound.length !== H.count + 1) {
          outCol = new Int32Array(H.count + 1); outRow = new Int32Array(H.count + 1); outFound = new Uint8Array(H.count + 1);
          let n = 0;
          for (let d = 1; d <= H.count; d++) if (H.pourTo[d] < 0) n++;
          candidates = new Int32Array(n);
          for (let d = 1, j = 0; d <= H.count; d++) if (H.pourTo[d] < 0) candidates[j++] = d;
        }
        const { hw, values: hv } = win.read;
        for (let j = 0; j < candidates.length; j++) {
          const d = candidates[j], p = H.spillCell[d], r = Math.floor(p / W), c = p - r * W;
          if (r < own.row0 || r >= own.row0 + own.height || c < own.col0 || c >= own.col0 + own.width) continue;
          const o = outletNeighbourOf(W, mosaic.height, a.connectivity, a.nodataOutlet, p, (cc, rr) => Number.isNaN(hv[(rr - hw.row0) * hw.width + (cc - hw.col0)]));
          if (o) { outCol[d] = o[0]; outRow[d] = o[1]; outFound[d] = 1; }
        }
        if (!out) return;
        const labels = a.labelLevel === 'top' ? topLabels(rs.labels, H) : rs.labels;
        const products = [rs.filled, rs.depth, labels];
        types = products.map(dataType);
        for (const [k, values] of assembler.window(mosaic.tiles.indexOf(tile), own, products)) await write(k, values);
      },
    });
    if (out && !assembler.finished()) throw new Error('internal: a tile of the mosaic was not written complete');
    bar.update('writing depressions.csv, pour-points.geojson and report.json');

    const result = {
      grid: headerGrid(mosaic, validCells), complex: null, areas: res.areas, hierarchy: res.hierarchy,
      rasters: { filled: new Float32Array(0), depth: new Float32Array(0), labels: new Int32Array(0), filledVolume: res.filledVolume, filledCells: res.filledCells, filledArea: res.filledArea },
      catchments: null, shapes: null, sweepPits: res.sweepPits, euler: res.euler, options: res.options,
    } as unknown as PondsResult;
    const cols = depressionColumns(result, (d) => (outFound[d] ? [outCol[d], outRow[d]] : null));
    const report = buildPondsReport(result, source, a.labelLevel, cols);
    Object.assign(report, {
      mosaic: mosaicInfo(mosaic, false),
      tiled: { why: a.why, windows: mosaic.tiles.filter((t) => t.own.width > 0 && t.own.height > 0).length, perimeterCells: res.seams.perimeterCells, summaryBytes: res.seams.summaryBytes },
      notComputed: NOT_COMPUTED.map((n) => ({ ...n })),
    });
    checkHydroReport(report, undefined, 'depressions.csv');
    if (!out) { bar.done(); return { report, written: [] }; }

    writeProductVrts(out, { width: mosaic.width, height: mosaic.height, transform: mosaic.transform, crs: mosaic.crs },
      TILED_RASTERS.map((name, j) => ({ name, dataType: types[j] ?? (name === 'labels' ? 'Int32' : mosaic.float64 ? 'Float64' : 'Float32'), nodata: spec[j].nodata })), mosaic);
    writePourPointsGeojson(out.path('pour-points.geojson'), null, result, cols, null,
      { name: 'pour-points', description: POUR_POINTS_DESCRIPTION, units: report.units, caution: report.caution }, null);
    await out.checkpoint();
    writeIdCsv(out.path('depressions.csv'), report.depressions.length, pondsCsvColumns(result, cols, res.areas.units.tokens), (d) => pondsCsvRow(result, cols, d));
    await out.checkpoint();
    writeReportFile(out.path('report.json'), report);
    await out.checkpoint();
    const written = await out.commit();
    bar.done();
    return { report, written };
  } catch (e) {
    bar.done();
    // a file of the run folder that cannot be written or read: a runtime failure (exit 1), named as such
    const path = (e as NodeJS.ErrnoException)?.path;
    const err = typeof path === 'string' && typeof (e as NodeJS.ErrnoException).code === 'string' && isInside(path, runDir)
      ? new OutputError(`cannot use the run folder ${a.runDir ?? '(inside the output folder\'s staging folder)'}: ${plainReason(e)} at ${path}; ${out ? `nothing in ${out.given} was changed` : 'nothing was written'}`)
      : e;
    throw out ? out.fail(err) : err;
  } finally {
    if (tmp) rmSync(tmp, { recursive: true, force: true });
  }
}
