/**
 * Mosaic inputs → a Mosaic (src/tiles/mosaic.ts): a GDAL VRT, a folder of GeoTIFF tiles, or
 * several GeoTIFF paths. Only the tiles' headers are read to place them; the strips where tiles
 * overlap are read to check that they hold equal values. Every rule a mosaic breaks is one
 * InputError line naming the tile(s), before any cell of the mosaic is assembled. docs/tiles.md
 * states the rules.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { basename, dirname, extname, isAbsolute, join, resolve } from 'node:path';
import { InputError } from '../errors.js';
import { gridValues, MAX_CELLS, type Crs, type GeoTransform, type GridValues } from '../surface/grid.js';
import type { CellWindow, Mosaic, MosaicTile } from '../tiles/mosaic.js';
import { fsReason, printable } from './common.js';
import { readGeoTiff, readGeoTiffInfo, readGeoTiffWindows, type GeoTiffInfo } from './geotiff-read.js';
import { parseXml, type XmlElement } from './xml.js';

export interface MosaicOptions {
  /** 1-based band: of the VRT (its sources name the tiles' bands), or of every tile. Default 1. */
  band?: number;
  /** Nodata value for every tile, overriding the VRT's and the tiles' own. */
  nodata?: number;
  /** Threads that decode one tile (readGeoTiff's option). */
  threads?: number;
  /**
   * Read the strips where tiles overlap to check that they hold equal values (default true). False
   * only for a caller that checked the same tiles before and knows them unchanged since (the tasks
   * of a staged run, src/tiles/stages.ts, which compare each tile file's size and time).
   */
  checkOverlaps?: boolean;
}

/** How the mosaic was given. */
export type MosaicKind = 'vrt' | 'folder' | 'files';

/** A Mosaic with what the readers know besides the contract. */
export interface OpenedMosaic extends Mosaic {
  kind: MosaicKind;
  /** The tiles' sample type in GDAL's words (Float32, Int16, …). */
  sampleType: string;
}

/**
 * Tolerance of tile placement, in cells: a tile's origin must lie within 1e-6 cell of a whole cell
 * of the lattice. Our own choice: far above the rounding of float64 map coordinates (2.2e-16 of
 * the coordinate, ≈ 2e-7 cell at 10^9 cells from the origin) and of the decimal geotransforms GDAL
 * writes (17 significant digits), far below any real misplacement (a resampled tile is off by a
 * sizeable fraction of a cell).
 */
export const PLACEMENT_TOLERANCE = 1e-6;

/** Relative tolerance of equal cell sizes (our choice, as above: float64 rounding is 1e-16). */
const CELL_SIZE_TOLERANCE = 1e-9;

const TIFF_NAME = /\.tiff?$/i;

/**
 * True when IN names a mosaic: several paths, a folder, or a .vrt file. A single other file is a
 * plain surface (the loaders' path, unchanged).
 */
export function isMosaicInput(inputs: readonly string[]): boolean {
  if (inputs.length !== 1) return inputs.length > 1;
  const p = inputs[0];
  if (extname(p).toLowerCase() === '.vrt') return true;
  try {
    return statSync(p).isDirectory();
  } catch {
    return false; // the loader says what is wrong with it
  }
}

/** A tile before placement. */
interface Candidate {
  path: string;
  band: number;
  nodata?: number;
  /** Where the VRT puts it (DstRect), to check against its geotransform. */
  dst?: CellWindow;
  info?: GeoTiffInfo;
}

/** The VRT's own description of the mosaic. */
interface VrtFrame {
  width: number;
  height: number;
  transform: GeoTransform;
  nodata: number | null;
  epsg: number | null;
  dataType: string;
}

/** Open a mosaic given as one .vrt, one folder, or several GeoTIFF paths. */
export async function openMosaic(inputs: readonly string[], opts: MosaicOptions = {}): Promise<OpenedMosaic> {
  const band = opts.band ?? 1;
  if (!Number.isInteger(band) || band < 1) throw new InputError(`band must be a whole number from 1 up, got ${band}`);
  let kind: MosaicKind;
  let source: string;
  let candidates: Candidate[];
  let frame: VrtFrame | null = null;
  if (inputs.length === 0) throw new InputError('give a .vrt mosaic, a folder of GeoTIFF tiles or GeoTIFF paths');
  if (inputs.length > 1) {
    kind = 'files';
    source = `${inputs[0]} and ${inputs.length - 1} more file${inputs.length === 2 ? '' : 's'}`;
    for (const p of inputs) {
      let dir = false;
      try { dir = statSync(p).isDirectory(); } catch { /* readGeoTiffInfo names it */ }
      if (dir || extname(p).toLowerCase() === '.vrt') {
        throw new InputError(`${p}: a mosaic is one .vrt, one folder, or several GeoTIFF files — not ${dir ? 'a folder' : 'a .vrt'} among other inputs`);
      }
    }
    candidates = inputs.map((path) => ({ path, band, nodata: opts.nodata }));
  } else if (extname(inputs[0]).toLowerCase() === '.vrt') {
    kind = 'vrt';
    source = inputs[0];
    const vrt = readVrt(inputs[0], band, opts.nodata);
    frame = vrt.frame;
    candidates = vrt.tiles;
  } else {
    kind = 'folder';
    source = inputs[0];
    let names: string[];
    try {
      names = readdirSync(inputs[0], { withFileTypes: true }).filter((e) => !e.isDirectory() && TIFF_NAME.test(e.name)).map((e) => e.name);
    } catch (err) {
      throw new InputError(`cannot read the folder ${inputs[0]}: ${fsReason(err)}`);
    }
    names.sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
    if (names.length === 0) throw new InputError(`the folder ${inputs[0]} holds no .tif or .tiff file; give a folder of GeoTIFF tiles`);
    candidates = names.map((n) => ({ path: join(inputs[0], n), band, nodata: opts.nodata }));
  }

  // Headers only, a few at a time; each reader's message names its file.
  for (let k = 0; k < candidates.length; k += 16) {
    await Promise.all(candidates.slice(k, k + 16).map(async (c) => {
      c.info = await readGeoTiffInfo(c.path, { band: c.band, nodata: c.nodata });
    }));
  }
  const placed = place(candidates, frame, source);
  const tiles = placed.tiles;
  const names = new Map<string, string>();
  for (const t of tiles) {
    const other = names.get(t.name);
    if (other !== undefined) throw new InputError(`tiles ${other} and ${t.path} have the same name ${t.name}; per-tile outputs are named after the tiles — rename one of them`);
    names.set(t.name, t.path);
  }
  tiles.sort((a, b) => a.row0 - b.row0 || a.col0 - b.col0 || (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  const overlaps = overlappingPairs(tiles);
  ownWindows(tiles, overlaps);
  const ref = candidates[0].info!;
  const nodata = opts.nodata !== undefined ? opts.nodata : frame ? frame.nodata ?? ref.nodata : ref.nodata;
  const byTile = new Map(candidates.map((c) => [c.path, c]));
  const readOpts = (t: MosaicTile) => {
    const c = byTile.get(t.path)!;
    return { band: c.band, nodata: c.nodata, threads: opts.threads };
  };
  if (opts.checkOverlaps !== false) await checkOverlaps(tiles, overlaps, placed.transform, readOpts);

  const width = placed.width, height = placed.height;
  const mosaic: OpenedMosaic = {
    kind, source, width, height, transform: placed.transform, crs: ref.crs, nodata, float64: ref.float64, sampleType: ref.sampleType, tiles,
    async readWindow(w: CellWindow): Promise<GridValues> {
      if (w.width < 1 || w.height < 1 || w.col0 < 0 || w.row0 < 0 || w.col0 + w.width > width || w.row0 + w.height > height) {
        throw new RangeError(`window ${w.col0},${w.row0} ${w.width}×${w.height} lies outside the mosaic (${width}×${height})`);
      }
      if (w.width * w.height > MAX_CELLS) {
        throw new InputError(`${source}: a window of ${w.width}×${w.height} cells is more than the limit of ${MAX_CELLS.toExponential(0)} cells on one grid; read it in parts`);
      }
      const out = gridValues(w.width * w.height, ref.float64);
      out.fill(NaN);
      for (const t of tiles) {
        const o = intersect(t.own, w);
        if (!o) continue;
        if (2 * o.width * o.height < t.width * t.height) {
          // a small part (a neighbour's edge rows): only the blocks that hold it
          const [part] = await readGeoTiffWindows(t.path, [{ col0: o.col0 - t.col0, row0: o.row0 - t.row0, width: o.width, height: o.height }], readOpts(t));
          for (let r = 0; r < o.height; r++) out.set(part.subarray(r * o.width, (r + 1) * o.width), (o.row0 + r - w.row0) * w.width + (o.col0 - w.col0));
          continue;
        }
        // most of the tile: the whole tile (the parallel decoder), then its part; memory is one tile at a time
        const g = await readGeoTiff(t.path, readOpts(t));
        if (g.width !== t.width || g.height !== t.height) {
          throw new InputError(`${t.path} is now ${g.width}×${g.height} cells but was ${t.width}×${t.height} when the mosaic was opened; do not change tiles during a run`);
        }
        for (let r = o.row0; r < o.row0 + o.height; r++) {
          const from = (r - t.row0) * t.width + (o.col0 - t.col0);
          out.set(g.values.subarray(from, from + o.width), (r - w.row0) * w.width + (o.col0 - w.col0));
        }
      }
      return out;
    },
  };
  return mosaic;
}

/** The rectangle common to two windows, or null. */
export function intersect(a: CellWindow, b: CellWindow): CellWindow | null {
  const c0 = Math.max(a.col0, b.col0), c1 = Math.min(a.col0 + a.width, b.col0 + b.width);
  const r0 = Math.max(a.row0, b.row0), r1 = Math.min(a.row0 + a.height, b.row0 + b.height);
  return c0 < c1 && r0 < r1 ? { col0: c0, row0: r0, width: c1 - c0, height: r1 - r0 } : null;
}

function crsText(c: Crs | null): string {
  if (!c) return 'none';
  if (c.epsg) return `EPSG:${c.epsg}`;
  return c.name ? `'${printable(c.name, 60)}'` : c.geographic ? 'an unnamed geographic CRS' : 'an unnamed projected CRS';
}

function sameCrs(a: Crs | null, b: Crs | null): boolean {
  if (!a || !b) return a === b;
  if (a.epsg !== undefined || b.epsg !== undefined) return a.epsg === b.epsg;
  return !!a.geographic === !!b.geographic && a.name === b.name && a.linearUnit === b.linearUnit;
}

const num = (x: number) => String(Number(x.toPrecision(12)));

/** Tiles placed on one lattice: the checks of CRS, type, cell size, rotation and whole-cell offsets. */
function place(candidates: Candidate[], frame: VrtFrame | null, source: string): { tiles: MosaicTile[]; width: number; height: number; transform: GeoTransform } {
  const ref = candidates[0];
  const R = ref.info!;
  const [, dx, , , , dy] = frame ? frame.transform : R.transform;
  for (const c of candidates) {
    const t = c.info!.transform;
    if (t[2] !== 0 || t[4] !== 0) {
      throw new InputError(`${c.path}: its geotransform has rotation terms (${num(t[2])}, ${num(t[4])}); tiles must be north-up grids — warp it first (gdalwarp)`);
    }
  }
  if (frame && (frame.transform[2] !== 0 || frame.transform[4] !== 0)) {
    throw new InputError(`${source}: its GeoTransform has rotation terms (${num(frame.transform[2])}, ${num(frame.transform[4])}); sill takes north-up mosaics`);
  }
  for (const c of candidates) {
    const I = c.info!;
    if (c !== ref && !sameCrs(I.crs, R.crs)) {
      throw new InputError(`${c.path}: its CRS ${crsText(I.crs)} differs from ${crsText(R.crs)} of ${ref.path}; reproject the tiles to one CRS (e.g. gdalwarp -t_srs) before making the mosaic`);
    }
    if (c !== ref && I.sampleType !== R.sampleType) {
      throw new InputError(`${c.path}: its sample type ${I.sampleType} differs from ${R.sampleType} of ${ref.path}; convert the tiles to one type (e.g. gdal_translate -ot ${R.sampleType})`);
    }
    const [, tdx, , , , tdy] = I.transform;
    if (Math.abs(tdx - dx) > CELL_SIZE_TOLERANCE * Math.abs(dx) || Math.abs(tdy - dy) > CELL_SIZE_TOLERANCE * Math.abs(dy)) {
      const other = frame ? `the mosaic's ${num(dx)} × ${num(dy)} (${source})` : `${num(dx)} × ${num(dy)} of ${ref.path}`;
      throw new InputError(`${c.path}: its cell size ${num(tdx)} × ${num(tdy)} differs from ${other}; resample the tiles to one cell size (e.g. gdalwarp -tr)`);
    }
  }
  if (frame) {
    if (frame.epsg !== null && R.crs?.epsg !== undefined && frame.epsg !== R.crs.epsg) {
      throw new InputError(`${source}: its SRS is EPSG:${frame.epsg} but its tiles (${ref.path}) are in EPSG:${R.crs.epsg}; build the VRT again from the tiles (gdalbuildvrt)`);
    }
    if (frame.dataType !== '' && frame.dataType !== R.sampleType) {
      throw new InputError(`${source}: its band's dataType ${frame.dataType} differs from the tiles' ${R.sampleType}; GDAL would convert the values — build the VRT again with the tiles' type`);
    }
  }
  // Offsets in cells from the lattice's origin (the VRT's, else the first tile's).
  const [ox, , , oy] = frame ? frame.transform : R.transform;
  const offsets = candidates.map((c) => {
    const t = c.info!.transform;
    const fc = (t[0] - ox) / dx, fr = (t[3] - oy) / dy;
    const col = Math.round(fc) + 0, row = Math.round(fr) + 0; // + 0: no −0
    if (Math.abs(fc - col) > PLACEMENT_TOLERANCE || Math.abs(fr - row) > PLACEMENT_TOLERANCE) {
      const lattice = frame ? `the lattice of ${source}` : `the lattice of ${ref.path}`;
      throw new InputError(
        `${c.path}: its origin (x ${num(t[0])}, y ${num(t[3])}) lies ${num(Math.abs(fc - col))} cell across and ${num(Math.abs(fr - row))} cell down from a whole cell of ${lattice}; ` +
          'tiles must sit on whole cells of one grid — resample the tile onto that grid (gdalwarp -tap or -te)',
      );
    }
    return [col, row];
  });
  let transform: GeoTransform, col0 = 0, row0 = 0, width: number, height: number;
  if (frame) {
    transform = [...frame.transform];
    width = frame.width;
    height = frame.height;
  } else {
    col0 = Math.min(...offsets.map((o) => o[0]));
    row0 = Math.min(...offsets.map((o) => o[1]));
    const atCol = candidates[offsets.findIndex((o) => o[0] === col0)].info!.transform;
    const atRow = candidates[offsets.findIndex((o) => o[1] === row0)].info!.transform;
    // the corner from the tiles' own numbers (no arithmetic on coordinates)
    transform = [atCol[0], dx, 0, atRow[3], 0, dy];
    width = Math.max(...candidates.map((c, k) => offsets[k][0] + c.info!.width)) - col0;
    height = Math.max(...candidates.map((c, k) => offsets[k][1] + c.info!.height)) - row0;
  }
  if (!Number.isSafeInteger(width * height) || width * height > MAX_CELLS * 1000) {
    throw new InputError(`${source}: the tiles span ${width}×${height} cells; check that they belong to one mosaic (one far-off tile stretches it)`);
  }
  const tiles = candidates.map((c, k): MosaicTile => {
    const I = c.info!;
    const w: CellWindow = { col0: offsets[k][0] - col0, row0: offsets[k][1] - row0, width: I.width, height: I.height };
    if (frame) {
      if (w.col0 < 0 || w.row0 < 0 || w.col0 + w.width > width || w.row0 + w.height > height) {
        throw new InputError(`${c.path}: the tile reaches outside the ${width}×${height} cells of ${source} (it starts at column ${w.col0}, row ${w.row0}); build the VRT again without clipping (gdalbuildvrt without -te)`);
      }
      const d = c.dst!;
      if (d.col0 !== w.col0 || d.row0 !== w.row0 || d.width !== w.width || d.height !== w.height) {
        throw new InputError(
          `${source}: the DstRect of ${c.path} (${d.col0}, ${d.row0}, ${d.width}×${d.height}) disagrees with the tile's geotransform, which puts it at (${w.col0}, ${w.row0}, ${w.width}×${w.height}); build the VRT again (gdalbuildvrt)`,
        );
      }
    }
    const name = basename(c.path).replace(TIFF_NAME, '');
    return { ...w, name, path: c.path, own: { ...w }, transform: [...I.transform] };
  });
  return { tiles, width, height, transform };
}

/** Pairs [i, j], i < j in canonical order, of tiles that share cells (a sweep down the rows). */
function overlappingPairs(tiles: MosaicTile[]): [number, number][] {
  const pairs: [number, number][] = [];
  for (let i = 0; i < tiles.length; i++) {
    const a = tiles[i];
    for (let j = i + 1; j < tiles.length && tiles[j].row0 < a.row0 + a.height; j++) {
      if (intersect(a, tiles[j])) pairs.push([i, j]);
    }
  }
  return pairs;
}

/** True when every cell of row/column `line` between `from` and `to` (exclusive) lies in one of `rects`. */
function covered(rects: CellWindow[], horizontal: boolean, line: number, from: number, to: number): boolean {
  const spans: [number, number][] = [];
  for (const r of rects) {
    const [l0, l1, s0, s1] = horizontal ? [r.row0, r.row0 + r.height, r.col0, r.col0 + r.width] : [r.col0, r.col0 + r.width, r.row0, r.row0 + r.height];
    if (line >= l0 && line < l1 && s1 > from && s0 < to) spans.push([s0, s1]);
  }
  spans.sort((p, q) => p[0] - q[0]);
  let at = from;
  for (const [s0, s1] of spans) {
    if (s0 > at) return false;
    at = Math.max(at, s1);
    if (at >= to) return true;
  }
  return at >= to;
}

/**
 * Each tile's owned window: the tile less its edge rows and columns that tiles earlier in the
 * canonical order cover (one or several of them: a row shared with two tiles above is cut too).
 * An overlap that would leave a tile a non-rectangular share is refused.
 */
function ownWindows(tiles: MosaicTile[], pairs: [number, number][]): void {
  const earlier: number[][] = tiles.map(() => []);
  for (const [i, j] of pairs) earlier[j].push(i);
  for (let j = 0; j < tiles.length; j++) {
    const t = tiles[j];
    const own = t.own;
    const rects = earlier[j].map((i) => tiles[i] as CellWindow);
    for (let changed = rects.length > 0; changed;) {
      changed = false;
      if (own.height > 0 && covered(rects, true, own.row0, own.col0, own.col0 + own.width)) { own.row0++; own.height--; changed = true; }
      if (own.height > 0 && covered(rects, true, own.row0 + own.height - 1, own.col0, own.col0 + own.width)) { own.height--; changed = true; }
      if (own.height > 0 && own.width > 0 && covered(rects, false, own.col0, own.row0, own.row0 + own.height)) { own.col0++; own.width--; changed = true; }
      if (own.height > 0 && own.width > 0 && covered(rects, false, own.col0 + own.width - 1, own.row0, own.row0 + own.height)) { own.width--; changed = true; }
      if (own.width <= 0 || own.height <= 0) {
        throw new InputError(`${t.path} lies wholly inside tiles earlier in the mosaic (${tiles[earlier[j][0]].path}${earlier[j].length > 1 ? ' and others' : ''}); drop it`);
      }
    }
    for (const i of earlier[j]) {
      const o = intersect(tiles[i], own);
      if (o) {
        const where = `${o.width}×${o.height} cells from (${o.col0}, ${o.row0})`;
        throw new InputError(
          `tiles ${tiles[i].path} and ${t.path} overlap in a block (${where}) that is not whole edge rows or columns of ${t.path} covered by earlier tiles; ` +
            'tiles may share whole edge rows or columns (diagonal neighbours may share a corner only while a tile beside both is there) — ' +
            'add the missing neighbour or cut the tiles again (gdal_translate -srcwin)',
        );
      }
    }
  }
}

/**
 * The overlapping strips hold equal values (NaN equal to NaN), else one line naming both tiles and
 * the first differing cell. Each tile is opened once, for all its overlaps (each block decoded
 * once); a pair's strips are kept until both sides are read, then compared and dropped: memory is
 * the strips plus the decoded blocks of one tile. The first differing pair in canonical order is
 * named.
 */
async function checkOverlaps(
  tiles: MosaicTile[],
  pairs: [number, number][],
  transform: GeoTransform,
  readOpts: (t: MosaicTile) => { band: number; nodata?: number; threads?: number },
): Promise<void> {
  const byTile: number[][] = tiles.map(() => []);
  pairs.forEach(([i, j], p) => { byTile[i].push(p); byTile[j].push(p); });
  const first: (GridValues | null)[] = pairs.map(() => null);
  let failure: { pair: number; message: string } | null = null;
  for (let t = 0; t < tiles.length; t++) {
    const mine = byTile[t].filter((p) => failure === null || p < failure.pair);
    if (mine.length === 0) continue;
    const T = tiles[t];
    const wins = mine.map((p) => {
      const o = intersect(tiles[pairs[p][0]], tiles[pairs[p][1]])!;
      return { col0: o.col0 - T.col0, row0: o.row0 - T.row0, width: o.width, height: o.height };
    });
    const strips = await readGeoTiffWindows(T.path, wins, readOpts(T));
    mine.forEach((p, k) => {
      if (pairs[p][0] === t) { first[p] = strips[k]; return; }
      const message = compareStrips(tiles[pairs[p][0]], T, first[p]!, strips[k], transform);
      first[p] = null;
      if (message !== null && (failure === null || p < failure.pair)) failure = { pair: p, message };
    });
  }
  if (failure !== null) throw new InputError((failure as { message: string }).message);
}

/** The line for the first cell where the strips of tiles a (earlier) and b differ, or null when they are equal. */
function compareStrips(a: MosaicTile, b: MosaicTile, va: GridValues, vb: GridValues, transform: GeoTransform): string | null {
  const o = intersect(a, b)!;
  for (let k = 0; k < va.length; k++) {
    const x = va[k], y = vb[k];
    if (x === y || (x !== x && y !== y)) continue;
    const col = o.col0 + (k % o.width), row = o.row0 + Math.floor(k / o.width);
    const mx = transform[0] + (col + 0.5) * transform[1], my = transform[3] + (row + 0.5) * transform[5];
    const v = (z: number) => (z !== z ? 'nodata' : va instanceof Float32Array ? float32Text(z) : String(z));
    const diff = x === x && y === y ? ` (difference ${va instanceof Float32Array ? float32Text(Math.fround(y - x)) : String(y - x)})` : '';
    return `tiles ${a.path} and ${b.path} overlap with different values: at cell (${col}, ${row}) of the mosaic, x ${num(mx)}, y ${num(my)}, ` +
      `${a.name} has ${v(x)} and ${b.name} has ${v(y)}${diff}; shared cells must be equal — fix or drop one of the tiles`;
  }
  return null;
}

/** A float32 value in its shortest decimal form (46.4, not 46.400001525878906). */
function float32Text(x: number): string {
  for (let p = 1; p < 9; p++) {
    const t = Number(x.toPrecision(p));
    if (Math.fround(t) === x) return String(t);
  }
  return String(Number(x.toPrecision(9)));
}

/** The EPSG code at the end of a WKT (its last AUTHORITY or ID), or "EPSG:n" given as such. */
function epsgOfSrs(s: string): number | null {
  const t = s.trim();
  const m = /^EPSG:(\d+)$/i.exec(t) ?? /(?:AUTHORITY|ID)\[\s*"EPSG"\s*,\s*"?(\d+)"?\s*\]\s*\]\s*$/.exec(t);
  return m ? Number(m[1]) : null;
}

function attrInt(el: XmlElement, name: string, vrt: string): number {
  const s = el.attrs[name];
  const v = Number(s);
  if (s === undefined || s.trim() === '' || !Number.isFinite(v)) throw new InputError(`${vrt}: <${el.name}> at line ${el.line} has no usable ${name} attribute; build the VRT again (gdalbuildvrt)`);
  if (!Number.isInteger(v)) {
    throw new InputError(`${vrt}: <${el.name}> at line ${el.line} has ${name}="${printable(s)}", not a whole number of cells; sill takes tiles on whole cells of one grid (build the VRT from aligned tiles)`);
  }
  return v;
}

function child(el: XmlElement, name: string): XmlElement | undefined {
  return el.children.find((c) => c.name === name);
}

/** Elements of a VRT sill understands; anything else changes the values or the layout and is refused. */
const DATASET_CHILDREN = new Set(['SRS', 'GeoTransform', 'Metadata', 'VRTRasterBand', 'BlockXSize', 'BlockYSize']);
const BAND_CHILDREN = new Set(['NoDataValue', 'ColorInterp', 'Description', 'Metadata', 'Histograms', 'SimpleSource', 'ComplexSource', 'UnitType']);
const SOURCE_CHILDREN = new Set(['SourceFilename', 'SourceBand', 'SourceProperties', 'SrcRect', 'DstRect', 'NODATA', 'ScaleOffset', 'ScaleRatio', 'UseMaskBand']);

function unsupported(vrt: string, el: XmlElement, what: string): InputError {
  return new InputError(`${vrt}: ${what} at line ${el.line} is not supported — sill reads VRTs of whole tiles on one grid as gdalbuildvrt writes them; give the folder of tiles instead, or build the VRT again (gdalbuildvrt)`);
}

function parseNumberText(vrt: string, el: XmlElement): number {
  const s = el.text.trim();
  if (/^[+-]?nan$/i.test(s)) return NaN;
  if (/^\+?inf(inity)?$/i.test(s)) return Infinity;
  if (/^-inf(inity)?$/i.test(s)) return -Infinity;
  const v = Number(s);
  if (s === '' || Number.isNaN(v)) throw new InputError(`${vrt}: <${el.name}> at line ${el.line} holds '${printable(s)}', not a number`);
  return v;
}

/** The VRT's frame and its band's sources (whole tiles, placed by DstRect). */
function readVrt(vrt: string, band: number, nodataOption: number | undefined): { frame: VrtFrame; tiles: Candidate[] } {
  let text: string;
  try {
    text = readFileSync(vrt, 'utf8');
  } catch (err) {
    throw new InputError(`cannot read ${vrt}: ${fsReason(err)}`);
  }
  const root = parseXml(text, vrt);
  if (root.name !== 'VRTDataset') throw new InputError(`${vrt} is not a GDAL VRT (its root element is <${printable(root.name)}>, not <VRTDataset>)`);
  if (root.attrs.subClass !== undefined) throw unsupported(vrt, root, `a VRTDataset of subClass ${printable(root.attrs.subClass)}`);
  for (const c of root.children) if (!DATASET_CHILDREN.has(c.name)) throw unsupported(vrt, c, `<${printable(c.name)}>`);
  const width = attrInt(root, 'rasterXSize', vrt), height = attrInt(root, 'rasterYSize', vrt);
  if (width < 1 || height < 1) throw new InputError(`${vrt}: the mosaic is ${width}×${height} cells; it needs at least one`);
  const gtEl = child(root, 'GeoTransform');
  if (!gtEl) throw new InputError(`${vrt} has no <GeoTransform>; sill places tiles by their map coordinates — build the VRT from georeferenced tiles`);
  const gt = gtEl.text.split(',').map((s) => Number(s.trim()));
  if (gt.length !== 6 || gt.some((v) => !Number.isFinite(v)) || gt[1] === 0 || gt[5] === 0) {
    throw new InputError(`${vrt}: <GeoTransform> at line ${gtEl.line} is not six numbers with non-zero cell sizes`);
  }
  const srs = child(root, 'SRS');
  const bands = root.children.filter((c) => c.name === 'VRTRasterBand');
  if (bands.length === 0) throw new InputError(`${vrt} has no <VRTRasterBand>`);
  const bandEl = bands.find((b) => Number(b.attrs.band) === band) ?? (bands.every((b) => b.attrs.band === undefined) ? bands[band - 1] : undefined);
  if (!bandEl) throw new InputError(`${vrt} has ${bands.length} band${bands.length === 1 ? '' : 's'}; band ${band} does not exist — choose a band from 1 to ${bands.length}`);
  if (bandEl.attrs.subClass !== undefined) throw unsupported(vrt, bandEl, `a VRTRasterBand of subClass ${printable(bandEl.attrs.subClass)} (derived or computed values)`);
  for (const c of bandEl.children) if (!BAND_CHILDREN.has(c.name)) throw unsupported(vrt, c, `<${printable(c.name)}> in band ${band}`);
  const ndEl = child(bandEl, 'NoDataValue');
  const bandNodata = ndEl ? parseNumberText(vrt, ndEl) : null;
  const tiles: Candidate[] = [];
  const seen = new Set<string>();
  for (const s of bandEl.children) {
    if (s.name !== 'SimpleSource' && s.name !== 'ComplexSource') continue;
    for (const c of s.children) if (!SOURCE_CHILDREN.has(c.name)) throw unsupported(vrt, c, `<${printable(c.name)}> in a source`);
    if (s.attrs.resampling !== undefined && s.attrs.resampling.toLowerCase() !== 'nearest') throw unsupported(vrt, s, `resampling="${printable(s.attrs.resampling)}"`);
    const fn = child(s, 'SourceFilename');
    if (!fn || fn.text.trim() === '') throw new InputError(`${vrt}: the source at line ${s.line} has no <SourceFilename>`);
    const name = fn.text.trim();
    if (name.startsWith('/vsi')) throw unsupported(vrt, fn, `the virtual file ${printable(name)}`);
    const relative = fn.attrs.relativeToVRT === '1' && !isAbsolute(name);
    const path = relative ? join(dirname(vrt), name) : name;
    const key = resolve(path);
    if (seen.has(key)) throw unsupported(vrt, s, `a second source from ${printable(path)}`);
    seen.add(key);
    const sb = child(s, 'SourceBand');
    const sourceBand = sb ? Number(sb.text.trim()) : 1;
    if (!Number.isInteger(sourceBand) || sourceBand < 1) throw unsupported(vrt, sb ?? s, `<SourceBand>${printable(sb?.text ?? '')}</SourceBand> (a mask band or not a band number)`);
    const scaleOffset = child(s, 'ScaleOffset'), scaleRatio = child(s, 'ScaleRatio');
    if ((scaleOffset && parseNumberText(vrt, scaleOffset) !== 0) || (scaleRatio && parseNumberText(vrt, scaleRatio) !== 1)) {
      throw unsupported(vrt, scaleOffset ?? scaleRatio!, 'scaling of source values (ScaleOffset/ScaleRatio)');
    }
    const mask = child(s, 'UseMaskBand');
    if (mask && mask.text.trim().toLowerCase() !== 'false' && mask.text.trim() !== '0') throw unsupported(vrt, mask, '<UseMaskBand>');
    const src = child(s, 'SrcRect'), dst = child(s, 'DstRect');
    if (!src || !dst) throw new InputError(`${vrt}: the source ${printable(path)} at line ${s.line} has no <SrcRect> and <DstRect>; build the VRT again (gdalbuildvrt)`);
    const rect = (el: XmlElement): CellWindow => ({ col0: attrInt(el, 'xOff', vrt), row0: attrInt(el, 'yOff', vrt), width: attrInt(el, 'xSize', vrt), height: attrInt(el, 'ySize', vrt) });
    const sr = rect(src), dr = rect(dst);
    if (sr.width !== dr.width || sr.height !== dr.height) throw unsupported(vrt, dst, `a source resampled from ${sr.width}×${sr.height} to ${dr.width}×${dr.height} cells (${printable(path)})`);
    if (sr.col0 !== 0 || sr.row0 !== 0) throw unsupported(vrt, src, `part of a tile (SrcRect from column ${sr.col0}, row ${sr.row0} of ${printable(path)})`);
    const nd = child(s, 'NODATA');
    const sourceNodata = nd ? parseNumberText(vrt, nd) : null;
    if (sourceNodata !== null && bandNodata !== null && !Object.is(sourceNodata, bandNodata) && !(Number.isNaN(sourceNodata) && Number.isNaN(bandNodata)) && nodataOption === undefined) {
      throw new InputError(`${vrt}: the source ${printable(path)} marks nodata with ${sourceNodata} but the band with ${bandNodata}; sill takes one nodata value — build the VRT again, or give --nodata`);
    }
    const nodata = nodataOption ?? sourceNodata ?? bandNodata ?? undefined;
    tiles.push({ path, band: sourceBand, nodata, dst: dr });
  }
  if (tiles.length === 0) throw new InputError(`${vrt}: band ${band} has no sources (no tiles)`);
  // the whole-tile check needs the tile's size: SrcRect must cover it (checked against the header below)
  return {
    frame: { width, height, transform: gt as GeoTransform, nodata: bandNodata, epsg: srs ? epsgOfSrs(srs.text) : null, dataType: bandEl.attrs.dataType ?? '' },
    tiles,
  };
}
