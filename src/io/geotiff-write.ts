/**
 * Raster → GeoTIFF. A small writer of its own, one band, little-endian, with the
 * georeferencing (ModelPixelScale + ModelTiepoint for north-up grids, ModelTransformation
 * otherwise), EPSG GeoKeys and the GDAL_NODATA tag. Two layouts:
 *
 * - `cog` (default): a Cloud Optimized GeoTIFF — 512 × 512 tiles, DEFLATE with a predictor
 *   (2 for integers, 3 for floats), overviews halving the size until one tile holds them
 *   (average of the valid cells, or nearest), every image directory at the front of the
 *   file, then the tile data from the smallest overview to the full resolution image.
 *   BigTIFF when the file may exceed 4 GiB. Tiles are compressed by worker threads
 *   (tile-encoder.ts), in bands of rows, and the bytes never depend on the thread count.
 * - `strips`: uncompressed strips, no overviews (the plain layout every reader opens).
 *
 * The file is written under a temporary name in the target folder and renamed at the end,
 * so a failure never leaves a half-written file under the requested name.
 */
import { open, rename, unlink, type FileHandle } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';
import { constants as zlib } from 'node:zlib';
import { InputError } from '../errors.js';
import type { Crs, GeoTransform } from '../surface/grid.js';
import { fsReason } from './common.js';
import { defaultThreads, tileEncoder, type TileEncoder, type TileJob } from './tile-encoder.js';

export type RasterValues =
  | Float32Array
  | Float64Array
  | Int8Array
  | Uint8Array
  | Int16Array
  | Uint16Array
  | Int32Array
  | Uint32Array;

export interface RasterToWrite {
  width: number;
  height: number;
  /** Row-major values. In float arrays NaN marks nodata and is written as `nodata` when that is a number. */
  values: RasterValues;
  transform: GeoTransform;
  crs: Crs | null;
  nodata: number | null;
}

export interface GeoTiffWriteOptions {
  /** `cog` (default): tiled, compressed, with overviews; `strips`: plain uncompressed strips. */
  layout?: 'cog' | 'strips';
  /**
   * How each overview cell is made from the 2 × 2 cells below it: `average` of the cells that
   * are not nodata (default for float rasters; integers are rounded half up), `nearest` (the
   * top-left cell; default for integer rasters such as labels), or `none` (no overviews).
   */
  overviews?: 'average' | 'nearest' | 'none';
  /** Threads that compress tiles: 1 = the calling thread; default the number of cores. */
  threads?: number;
  /** BigTIFF: `auto` (default) when the file may exceed 4 GiB, or forced on or off. */
  bigTiff?: boolean | 'auto';
  /** zlib level 1–9 (default 1, chosen by measurement: bench/geotiff-write.mjs). */
  level?: number;
  /**
   * zlib strategy: `rle` (default: runs only — as small as full matching on predicted rasters
   * and faster, measured in bench/geotiff-write.mjs) or `default` (full matching).
   */
  strategy?: 'rle' | 'default';
}

/** Tile width and height of the COG layout. */
export const TILE = 512;
/** zlib level: chosen by measurement (docs/performance.md, bench/geotiff-write.mjs). */
const DEFLATE_LEVEL = 1;
/** Band buffers in flight across every raster being written (bounds the copies and compressed bytes held). */
const WINDOW_BYTES = 64 * 1024 * 1024;

// TIFF field types.
const ASCII = 2;
const SHORT = 3;
const LONG = 4;
const DOUBLE = 12;
const LONG8 = 16;

interface Entry {
  tag: number;
  type: number;
  values: number[] | string;
}

interface Layout {
  format: number;
  bits: number;
  bytes: number;
  float: boolean;
}

/** SampleFormat (1 unsigned, 2 signed, 3 float) and bits of each array type. */
function sampleLayout(values: RasterValues): Layout {
  const l = (format: number, bits: number): Layout => ({ format, bits, bytes: bits / 8, float: format === 3 });
  if (values instanceof Float32Array) return l(3, 32);
  if (values instanceof Float64Array) return l(3, 64);
  if (values instanceof Int8Array) return l(2, 8);
  if (values instanceof Uint8Array) return l(1, 8);
  if (values instanceof Int16Array) return l(2, 16);
  if (values instanceof Uint16Array) return l(1, 16);
  if (values instanceof Int32Array) return l(2, 32);
  if (values instanceof Uint32Array) return l(1, 32);
  throw new TypeError('raster values must be a Float32/Float64/Int8/Uint8/Int16/Uint16/Int32/Uint32 array');
}

/** The GDAL_NODATA text: shortest round-trip decimal, and nan / inf / -inf. */
function nodataText(v: number): string {
  if (Number.isNaN(v)) return 'nan';
  if (v === Infinity) return 'inf';
  if (v === -Infinity) return '-inf';
  return String(v);
}

function fieldSize(type: number): number {
  return type === SHORT ? 2 : type === LONG ? 4 : type === DOUBLE || type === LONG8 ? 8 : 1;
}

function entryCount(e: Entry): number {
  return typeof e.values === 'string' ? e.values.length + 1 : e.values.length;
}

/** GeoKeyDirectory for an EPSG-coded CRS (version 1.1.0; each key stored inline). */
function geoKeys(epsg: number, geographic: boolean): number[] {
  const keys: [number, number][] = geographic
    ? [[1024, 2], [1025, 1], [2048, epsg]] // geographic model, PixelIsArea, GeographicTypeGeoKey
    : [[1024, 1], [1025, 1], [3072, epsg]]; // projected model, PixelIsArea, ProjectedCSTypeGeoKey
  const out = [1, 1, 0, keys.length];
  for (const [k, v] of keys) out.push(k, 0, 1, v);
  return out;
}

function checkRaster(path: string, r: RasterToWrite): void {
  const { width, height, values, transform, crs, nodata } = r;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
    throw new RangeError(`${path}: raster size must be positive whole numbers, got ${width}×${height}`);
  }
  if (values.length !== width * height) {
    throw new RangeError(`${path}: a ${width}×${height} raster needs ${width * height} values, got ${values.length}`);
  }
  if (!Array.isArray(transform) || transform.length !== 6 || !transform.every(Number.isFinite)) {
    throw new RangeError(`${path}: the geotransform must be six finite numbers, got ${JSON.stringify(transform)}`);
  }
  if (transform[1] * transform[5] - transform[2] * transform[4] === 0) {
    throw new RangeError(`${path}: the geotransform ${JSON.stringify(transform)} is singular (cells of zero area)`);
  }
  if (crs && crs.epsg !== undefined && !(Number.isInteger(crs.epsg) && crs.epsg > 0 && crs.epsg < 32767)) {
    throw new RangeError(`${path}: EPSG code ${crs.epsg} is outside 1…32766`);
  }
  if (nodata !== null && typeof nodata !== 'number') throw new RangeError(`${path}: nodata must be a number or null`);
}

function checkOptions(o: GeoTiffWriteOptions): void {
  if (o.layout !== undefined && o.layout !== 'cog' && o.layout !== 'strips') throw new RangeError(`layout must be 'cog' or 'strips', got ${String(o.layout)}`);
  if (o.overviews !== undefined && !['average', 'nearest', 'none'].includes(o.overviews)) {
    throw new RangeError(`overviews must be 'average', 'nearest' or 'none', got ${String(o.overviews)}`);
  }
  if (o.threads !== undefined && !(Number.isInteger(o.threads) && o.threads >= 1)) throw new RangeError(`threads must be a whole number from 1 up, got ${o.threads}`);
  if (o.level !== undefined && !(Number.isInteger(o.level) && o.level >= 1 && o.level <= 9)) throw new RangeError(`level must be a whole number 1–9, got ${o.level}`);
  if (o.strategy !== undefined && o.strategy !== 'rle' && o.strategy !== 'default') throw new RangeError(`strategy must be 'rle' or 'default', got ${String(o.strategy)}`);
  if (o.bigTiff !== undefined && o.bigTiff !== 'auto' && typeof o.bigTiff !== 'boolean') throw new RangeError(`bigTiff must be true, false or 'auto'`);
}

/** The georeferencing, GeoKey and nodata entries of the full-resolution image. */
function geoEntries(r: RasterToWrite): Entry[] {
  const [x0, dx, rx, y0, ry, dy] = r.transform;
  const entries: Entry[] = [];
  if (rx === 0 && ry === 0 && dx > 0 && dy < 0) {
    entries.push({ tag: 33550, type: DOUBLE, values: [dx, -dy, 0] }); // ModelPixelScale
    entries.push({ tag: 33922, type: DOUBLE, values: [0, 0, 0, x0, y0, 0] }); // ModelTiepoint: corner of cell (0,0)
  } else {
    entries.push({ tag: 34264, type: DOUBLE, values: [dx, rx, 0, x0, ry, dy, 0, y0, 0, 0, 0, 0, 0, 0, 0, 1] });
  }
  // A CRS without an EPSG code cannot be stated by keys alone: then no GeoKeys are written
  // (a bare key directory would make readers invent an engineering CRS).
  if (r.crs && r.crs.epsg !== undefined) entries.push({ tag: 34735, type: SHORT, values: geoKeys(r.crs.epsg, r.crs.geographic === true) });
  return entries;
}

function nodataEntry(nodata: number | null): Entry[] {
  return nodata === null ? [] : [{ tag: 42113, type: ASCII, values: nodataText(nodata) }];
}

// ---------------------------------------------------------------------------------------
// Image file directories, classic TIFF or BigTIFF.

interface PlacedIfd {
  entries: Entry[];
  at: number;
  /** Where each out-of-line value array lies. */
  values: Map<Entry, number>;
}

/** Lay out image directories one after the other from `start`, each followed by its long values. */
function placeIfds(ifds: Entry[][], start: number, big: boolean): { placed: PlacedIfd[]; end: number } {
  const entrySize = big ? 20 : 12;
  const inline = big ? 8 : 4;
  let pos = start;
  const placed: PlacedIfd[] = [];
  for (const raw of ifds) {
    const entries = [...raw].sort((a, b) => a.tag - b.tag);
    pos = (pos + 7) & ~7;
    const at = pos;
    pos += (big ? 8 : 2) + entries.length * entrySize + (big ? 8 : 4);
    const values = new Map<Entry, number>();
    for (const e of entries) {
      const n = entryCount(e) * fieldSize(e.type);
      if (n > inline) {
        pos = (pos + 7) & ~7; // 8-byte alignment keeps doubles aligned
        values.set(e, pos);
        pos += n;
      }
    }
    placed.push({ entries, at, values });
  }
  return { placed, end: pos };
}

/** Serialise the header and the placed directories into `head` (which starts at file offset 0). */
function writeHeader(head: Uint8Array, placed: PlacedIfd[], big: boolean): void {
  const dv = new DataView(head.buffer, head.byteOffset, head.byteLength);
  head[0] = 0x49; head[1] = 0x49; // "II": little-endian
  if (big) {
    dv.setUint16(2, 43, true);
    dv.setUint16(4, 8, true);
    dv.setUint16(6, 0, true);
    dv.setBigUint64(8, BigInt(placed[0].at), true);
  } else {
    dv.setUint16(2, 42, true);
    dv.setUint32(4, placed[0].at, true);
  }
  const put = (at: number, type: number, v: number) => {
    if (type === SHORT) dv.setUint16(at, v, true);
    else if (type === LONG) dv.setUint32(at, v, true);
    else if (type === LONG8) dv.setBigUint64(at, BigInt(v), true);
    else dv.setFloat64(at, v, true);
  };
  placed.forEach((ifd, k) => {
    const { entries, at } = ifd;
    const entrySize = big ? 20 : 12;
    const first = at + (big ? 8 : 2);
    if (big) dv.setBigUint64(at, BigInt(entries.length), true);
    else dv.setUint16(at, entries.length, true);
    entries.forEach((e, j) => {
      const p = first + entrySize * j;
      dv.setUint16(p, e.tag, true);
      dv.setUint16(p + 2, e.type, true);
      const count = entryCount(e);
      const valueAt = big ? p + 12 : p + 8;
      if (big) dv.setBigUint64(p + 4, BigInt(count), true);
      else dv.setUint32(p + 4, count, true);
      const outOfLine = ifd.values.get(e);
      if (outOfLine !== undefined) {
        if (big) dv.setBigUint64(valueAt, BigInt(outOfLine), true);
        else dv.setUint32(valueAt, outOfLine, true);
      }
      const where = outOfLine ?? valueAt;
      if (typeof e.values === 'string') {
        for (let i = 0; i < e.values.length; i++) head[where + i] = e.values.charCodeAt(i) & 0x7f;
        head[where + e.values.length] = 0;
      } else {
        const size = fieldSize(e.type);
        e.values.forEach((v, i) => put(where + i * size, e.type, v));
      }
    });
    const next = k + 1 < placed.length ? placed[k + 1].at : 0;
    const nextAt = first + entrySize * entries.length;
    if (big) dv.setBigUint64(nextAt, BigInt(next), true);
    else dv.setUint32(nextAt, next, true);
  });
}

// ---------------------------------------------------------------------------------------
// Writing under a temporary name.

async function openTemporary(path: string): Promise<{ fh: FileHandle; tmp: string }> {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}-${randomBytes(4).toString('hex')}.tmp`);
  try {
    return { fh: await open(tmp, 'wx'), tmp };
  } catch (err) {
    throw writeError(path, err);
  }
}

function writeFailure(path: string, err: unknown): unknown {
  if (err instanceof InputError) return err;
  if ((err as NodeJS.ErrnoException)?.code) return writeError(path, err);
  return err;
}

/** A file-system failure while writing: a runtime failure (not bad input) that keeps its error code, so callers can say it in plain words. */
function writeError(path: string, err: unknown): Error {
  return Object.assign(new Error(`cannot write ${path}: ${fsReason(err)}`), { code: (err as NodeJS.ErrnoException).code, path });
}

const LITTLE_HOST = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** The value NaN cells are written as, in the array's own precision, or null. */
function fillValue(values: RasterValues, nodata: number | null): number | null {
  const float = values instanceof Float32Array || values instanceof Float64Array;
  if (!float || nodata === null || Number.isNaN(nodata)) return null;
  return values instanceof Float32Array ? Math.fround(nodata) : nodata;
}

type ArrayCtor = new (b: ArrayBufferLike, o?: number, n?: number) => RasterValues;

/**
 * Write a one-band GeoTIFF that GDAL reads with the same geotransform, EPSG code, nodata
 * value and values — by default a Cloud Optimized GeoTIFF (see the module comment).
 * `crs.geographic` decides between GeographicTypeGeoKey and ProjectedCSTypeGeoKey.
 */
export async function writeGeoTiff(path: string, raster: RasterToWrite, options: GeoTiffWriteOptions = {}): Promise<void> {
  checkRaster(path, raster);
  checkOptions(options);
  if ((options.layout ?? 'cog') === 'strips') return writeStrips(path, raster, options);
  return writeCog(path, raster, options);
}

// ---------------------------------------------------------------------------------------
// Plain strips.

async function writeStrips(path: string, raster: RasterToWrite, options: GeoTiffWriteOptions): Promise<void> {
  const { width, height, values, nodata } = raster;
  const { format, bits, bytes: bytesPerSample } = sampleLayout(values);
  const rowBytes = width * bytesPerSample;
  const rowsPerStrip = Math.max(1, Math.min(height, Math.floor((64 * 1024) / rowBytes)));
  const strips = Math.ceil(height / rowsPerStrip);
  const dataBytes = width * height * bytesPerSample;

  const stripEntries = (big: boolean): Entry[] => [
    { tag: 256, type: LONG, values: [width] },
    { tag: 257, type: LONG, values: [height] },
    { tag: 258, type: SHORT, values: [bits] },
    { tag: 259, type: SHORT, values: [1] }, // no compression
    { tag: 262, type: SHORT, values: [1] }, // BlackIsZero
    { tag: 273, type: big ? LONG8 : LONG, values: new Array<number>(strips).fill(0) }, // StripOffsets, filled below
    { tag: 277, type: SHORT, values: [1] },
    { tag: 278, type: LONG, values: [rowsPerStrip] },
    { tag: 279, type: LONG, values: Array.from({ length: strips }, (_, s) => Math.min(rowsPerStrip, height - s * rowsPerStrip) * rowBytes) },
    { tag: 284, type: SHORT, values: [1] }, // one plane
    { tag: 339, type: SHORT, values: [format] },
    ...geoEntries(raster),
    ...nodataEntry(nodata),
  ];
  let big = options.bigTiff === true;
  let entries = stripEntries(big);
  let { placed, end } = placeIfds([entries], big ? 16 : 8, big);
  if (!big && options.bigTiff !== false && ((end + 15) & ~15) + dataBytes > 0xffffffff) {
    big = true;
    entries = stripEntries(big);
    ({ placed, end } = placeIfds([entries], 16, big));
  }
  const dataStart = (end + 15) & ~15;
  if (!big && dataStart + dataBytes > 0xffffffff) {
    throw new InputError(`${path}: a ${width}×${height} ${bits}-bit raster needs more than a classic TIFF can hold (4 GiB); allow BigTIFF`);
  }
  const offsets = placed[0].entries.find((e) => e.tag === 273)!.values as number[];
  for (let s = 0; s < strips; s++) offsets[s] = dataStart + s * rowsPerStrip * rowBytes;
  const head = new Uint8Array(dataStart);
  writeHeader(head, placed, big);

  const { fh, tmp } = await openTemporary(path);
  let handle: FileHandle | undefined = fh;
  try {
    await fh.write(head, 0, head.length, 0);
    // Values in chunks of whole rows: copy, turn NaN into the nodata value, fix byte order.
    const chunkRows = Math.max(1, Math.floor((4 * 1024 * 1024) / rowBytes));
    const chunk = new ArrayBuffer(Math.min(height, chunkRows) * rowBytes);
    const Ctor = values.constructor as ArrayCtor;
    const fill = fillValue(values, nodata);
    let pos = dataStart;
    for (let r0 = 0; r0 < height; r0 += chunkRows) {
      const r1 = Math.min(height, r0 + chunkRows);
      const n = (r1 - r0) * width;
      const view = new Ctor(chunk, 0, n);
      view.set(values.subarray(r0 * width, r1 * width) as never);
      if (fill !== null) {
        for (let i = 0; i < n; i++) if (view[i] !== view[i]) view[i] = fill;
      }
      const buf = Buffer.from(chunk, 0, n * bytesPerSample);
      if (!LITTLE_HOST && bytesPerSample > 1) {
        if (bytesPerSample === 2) buf.swap16();
        else if (bytesPerSample === 4) buf.swap32();
        else buf.swap64();
      }
      await fh.write(buf, 0, buf.length, pos);
      pos += buf.length;
    }
    handle = undefined;
    await fh.close();
    await rename(tmp, path);
  } catch (err) {
    if (handle) await handle.close().catch(() => undefined);
    await unlink(tmp).catch(() => undefined);
    throw writeFailure(path, err);
  }
}

// ---------------------------------------------------------------------------------------
// Cloud Optimized GeoTIFF.

interface Level {
  width: number;
  height: number;
  tilesX: number;
  tilesY: number;
}

/** The full image and its overviews: each half the size of the one before (rounded up), until one fits in a tile. */
export function cogLevels(width: number, height: number, overviews: boolean): Level[] {
  const level = (w: number, h: number): Level => ({ width: w, height: h, tilesX: Math.ceil(w / TILE), tilesY: Math.ceil(h / TILE) });
  const levels = [level(width, height)];
  if (!overviews) return levels;
  let w = width, h = height;
  while (w > TILE || h > TILE) {
    w = Math.ceil(w / 2);
    h = Math.ceil(h / 2);
    levels.push(level(w, h));
  }
  return levels;
}

/** A bound on the zlib stream of `n` bytes (above zlib's own deflateBound). */
function deflateBound(n: number): number {
  return n + Math.ceil(n / 1024) + 64;
}

/** True when a COG of these levels could pass 4 GiB, so it must be a BigTIFF. */
export function cogMayExceed4GiB(levels: Level[], bytesPerSample: number, headerBytes: number): boolean {
  let total = headerBytes;
  const tileBound = deflateBound(TILE * TILE * bytesPerSample);
  for (const l of levels) total += l.tilesX * l.tilesY * tileBound;
  return total > 0xffffffff;
}

/** Band buffers in flight across all writers of this process. */
const inFlight = {
  used: 0,
  waiting: new Set<() => void>(),
  /** Take `bytes` unless the window is full (one band is always let through). */
  take(bytes: number): boolean {
    if (this.used > 0 && this.used + bytes > WINDOW_BYTES) return false;
    this.used += bytes;
    return true;
  },
  give(bytes: number): void {
    this.used -= bytes;
    const wake = [...this.waiting];
    this.waiting.clear();
    for (const f of wake) f();
  },
};

/** A band of rows of one level, ready to be cut into tiles. */
interface Band {
  level: number;
  /** First row of the band in its level, and how many rows it holds. */
  row0: number;
  rows: number;
  /** The rows: `rows` × level width samples starting at `byteOffset`. */
  buf: ArrayBufferLike;
  byteOffset: number;
  /** Bytes that count against the window while the band is in flight. */
  cost: number;
}

interface Deferred<T> {
  promise: Promise<T>;
  resolve: (v: T) => void;
  reject: (e: unknown) => void;
}

function deferred<T>(): Deferred<T> {
  let resolve!: (v: T) => void, reject!: (e: unknown) => void;
  const promise = new Promise<T>((a, b) => ((resolve = a), (reject = b)));
  promise.catch(() => undefined); // observed where it is awaited
  return { promise, resolve, reject };
}

async function writeCog(path: string, raster: RasterToWrite, options: GeoTiffWriteOptions): Promise<void> {
  const { width, height, values, nodata } = raster;
  const sample = sampleLayout(values);
  const overviewMode = options.overviews ?? (sample.float ? 'average' : 'nearest');
  const levels = cogLevels(width, height, overviewMode !== 'none');
  const predictor = sample.float ? 3 : 2;
  const level = options.level ?? DEFLATE_LEVEL;
  const strategy = (options.strategy ?? 'rle') === 'rle' ? zlib.Z_RLE : zlib.Z_DEFAULT_STRATEGY;
  const threads = options.threads ?? defaultThreads();
  // a raster of one tile is compressed on this thread: starting workers would cost more
  const encoder: TileEncoder = tileEncoder(levels[0].tilesX * levels[0].tilesY > 1 ? threads : 1);
  const fill = fillValue(values, nodata);

  // Directories: the full image, then the overviews, largest first.
  const ifdEntries = (big: boolean): Entry[][] =>
    levels.map((l, k) => [
      ...(k > 0 ? [{ tag: 254, type: LONG, values: [1] }] : []), // NewSubfileType: reduced-resolution image
      { tag: 256, type: LONG, values: [l.width] },
      { tag: 257, type: LONG, values: [l.height] },
      { tag: 258, type: SHORT, values: [sample.bits] },
      { tag: 259, type: SHORT, values: [8] }, // DEFLATE (zlib stream)
      { tag: 262, type: SHORT, values: [1] }, // BlackIsZero
      { tag: 277, type: SHORT, values: [1] },
      { tag: 284, type: SHORT, values: [1] },
      { tag: 317, type: SHORT, values: [predictor] },
      { tag: 322, type: SHORT, values: [TILE] },
      { tag: 323, type: SHORT, values: [TILE] },
      { tag: 324, type: big ? LONG8 : LONG, values: new Array<number>(l.tilesX * l.tilesY).fill(0) }, // TileOffsets
      { tag: 325, type: LONG, values: new Array<number>(l.tilesX * l.tilesY).fill(0) }, // TileByteCounts
      { tag: 339, type: SHORT, values: [sample.format] },
      ...(k === 0 ? geoEntries(raster) : []),
      ...nodataEntry(nodata),
    ]);
  let big = options.bigTiff === true;
  let layout = placeIfds(ifdEntries(big), big ? 16 : 8, big);
  if (!big && options.bigTiff !== false && cogMayExceed4GiB(levels, sample.bytes, layout.end)) {
    big = true;
    layout = placeIfds(ifdEntries(big), 16, big);
  }
  const dataStart = (layout.end + 15) & ~15;
  const tileArrays = layout.placed.map((p) => ({
    offsets: p.entries.find((e) => e.tag === 324)!.values as number[],
    counts: p.entries.find((e) => e.tag === 325)!.values as number[],
  }));

  // Compressed overview tiles are held until all are done (the smallest overview comes first
  // in the file); full-resolution bands are written in order as they are done.
  const overviewTiles: Uint8Array[][] = levels.map((l, k) => (k === 0 ? [] : new Array<Uint8Array>(l.tilesX * l.tilesY)));
  const overviewsDone = deferred<void>();
  const mainDone = Array.from({ length: levels[0].tilesY }, () => deferred<Uint8Array[]>());
  const mainCost = new Array<number>(levels[0].tilesY).fill(0);
  let overviewsPending = 0;
  let overviewsProduced = levels.length === 1;
  let failure: unknown = null;
  let outstanding = 0;
  let drained: Deferred<void> | null = null;
  const given = new Array<boolean>(levels[0].tilesY).fill(false); // window share of a full band given back

  const fail = (err: unknown) => {
    if (failure === null) failure = err;
    overviewsDone.reject(err);
    for (const d of mainDone) d.reject(err);
  };
  const settleOne = () => {
    outstanding--;
    if (outstanding === 0 && drained) drained.resolve();
  };
  const checkOverviews = () => {
    if (overviewsProduced && overviewsPending === 0) overviewsDone.resolve();
  };

  const submit = (band: Band) => {
    const l = levels[band.level];
    const ty = band.row0 / TILE;
    const jobs: Promise<Uint8Array>[] = [];
    for (let tx = 0; tx < l.tilesX; tx++) {
      const job: TileJob = {
        buf: band.buf, byteOffset: band.byteOffset + tx * TILE * sample.bytes, rowStride: l.width,
        rows: band.rows, cols: Math.min(TILE, l.width - tx * TILE), tile: TILE,
        bps: sample.bytes, float: sample.float, predictor, fill, level, strategy,
      };
      jobs.push(encoder.encode(job));
    }
    outstanding++;
    if (band.level > 0) overviewsPending++;
    else mainCost[ty] = band.cost;
    Promise.all(jobs).then(
      (done) => {
        if (band.level > 0) {
          for (let tx = 0; tx < done.length; tx++) overviewTiles[band.level][ty * l.tilesX + tx] = done[tx];
          overviewsPending--;
          inFlight.give(band.cost);
          checkOverviews();
        } else {
          mainDone[ty].resolve(done); // its window share is given back once written
        }
        settleOne();
      },
      (err) => {
        inFlight.give(band.cost);
        if (band.level === 0) given[ty] = true;
        fail(err);
        settleOne();
      },
    );
  };

  // Make bands and hand them to the encoder while the window has room; resumed as it frees.
  const bands = cogBands(values, levels, overviewMode === 'nearest', nodata, fill, encoder.needsShared);
  let stash: Band | null = null;
  const pump = () => {
    while (failure === null) {
      let band = stash;
      stash = null;
      if (!band) {
        let next: IteratorResult<Band>;
        try {
          next = bands.next();
        } catch (err) {
          fail(err);
          return;
        }
        if (next.done) break;
        band = next.value;
      }
      if (band.level === 0 && !overviewsProduced) {
        overviewsProduced = true;
        checkOverviews();
      }
      if (!inFlight.take(band.cost)) {
        stash = band;
        inFlight.waiting.add(pump);
        return;
      }
      submit(band);
    }
  };
  checkOverviews();
  pump(); // the work starts on this turn, before anything is awaited

  let fh: FileHandle | undefined;
  let tmp: string | undefined;
  try {
    ({ fh, tmp } = await openTemporary(path));
    await overviewsDone.promise;
    let pos = dataStart;
    const list: Uint8Array[] = [];
    for (let k = levels.length - 1; k >= 1; k--) {
      const t = overviewTiles[k];
      for (let i = 0; i < t.length; i++) {
        tileArrays[k].offsets[i] = pos;
        tileArrays[k].counts[i] = t[i].length;
        pos += t[i].length;
        list.push(t[i]);
      }
    }
    overviewTiles.length = 0;
    await writeAll(fh, list, dataStart);
    const { tilesX } = levels[0];
    for (let ty = 0; ty < mainDone.length; ty++) {
      const done = await mainDone[ty].promise;
      const at = pos;
      for (let tx = 0; tx < done.length; tx++) {
        tileArrays[0].offsets[ty * tilesX + tx] = pos;
        tileArrays[0].counts[ty * tilesX + tx] = done[tx].length;
        pos += done[tx].length;
      }
      await writeAll(fh, done, at);
      given[ty] = true;
      inFlight.give(mainCost[ty]);
    }
    if (!big && pos > 0xffffffff) throw new Error(`${path}: the compressed raster passed 4 GiB in a classic TIFF`);
    const head = new Uint8Array(dataStart);
    writeHeader(head, layout.placed, big);
    await fh.write(head, 0, head.length, 0);
    const h = fh;
    fh = undefined;
    await h.close();
    await rename(tmp, path);
  } catch (err) {
    fail(err);
    inFlight.waiting.delete(pump);
    // let every job in flight finish before giving up, so nothing runs on after the failure
    if (outstanding > 0) {
      drained = deferred<void>();
      await drained.promise;
    }
    for (let ty = 0; ty < given.length; ty++) if (!given[ty] && mainCost[ty] > 0) inFlight.give(mainCost[ty]);
    if (fh) await fh.close().catch(() => undefined);
    if (tmp) await unlink(tmp).catch(() => undefined);
    throw writeFailure(path, err);
  }
}

/** Write buffers one after the other from `at`. */
async function writeAll(fh: FileHandle, list: Uint8Array[], at: number): Promise<void> {
  for (let i = 0; i < list.length; i += 256) {
    const part = list.slice(i, i + 256);
    const n = part.reduce((s, b) => s + b.length, 0);
    const { bytesWritten } = await fh.writev(part, at);
    if (bytesWritten !== n) throw new Error(`short write: ${bytesWritten} of ${n} bytes`);
    at += n;
  }
}

/**
 * The bands to encode, in order: every overview band as soon as it is complete (each level
 * made from the one above it, two tile rows of it per band), then the full-resolution bands.
 * Bands live in shared memory when workers encode them; the full image is read in place when
 * it is already shared or when this thread encodes.
 */
function* cogBands(values: RasterValues, levels: Level[], nearest: boolean, nodata: number | null, fill: number | null, shared: boolean): Generator<Band> {
  const Ctor = values.constructor as ArrayCtor;
  const bps = values.BYTES_PER_ELEMENT;
  const integer = !(values instanceof Float32Array || values instanceof Float64Array);
  // what counts as missing in the averages: the nodata value (NaN always counts for floats)
  const missing = integer ? nodata : fill ?? NaN;
  const alloc = (n: number): RasterValues => new Ctor(shared ? new SharedArrayBuffer(n * bps) : new ArrayBuffer(n * bps));
  const open: ({ buf: RasterValues; row0: number; rows: number } | undefined)[] = [];

  function* emit(k: number, buf: RasterValues, row0: number, rows: number): Generator<Band> {
    yield { level: k, row0, rows, buf: buf.buffer, byteOffset: buf.byteOffset, cost: rows * levels[k].width * bps };
    if (k + 1 < levels.length) yield* reduceInto(k + 1, buf, 0, row0, rows);
  }
  function* reduceInto(k: number, src: RasterValues, srcStart: number, srcRow0: number, srcRows: number): Generator<Band> {
    const l = levels[k];
    const dstRow0 = srcRow0 / 2;
    let band = open[k];
    if (!band) band = open[k] = { buf: alloc(Math.min(TILE, l.height - dstRow0) * l.width), row0: dstRow0, rows: 0 };
    reduceRows(src, srcStart, levels[k - 1].width, srcRows, band.buf, dstRow0 - band.row0, l.width, nearest, integer, missing);
    band.rows += Math.ceil(srcRows / 2);
    if (band.rows === TILE || band.row0 + band.rows === l.height) {
      open[k] = undefined;
      yield* emit(k, band.buf, band.row0, band.rows);
    }
  }

  if (levels.length > 1) {
    // The full image two tile rows at a time: each makes one band of the first overview.
    for (let r0 = 0; r0 < levels[0].height; r0 += 2 * TILE) {
      yield* reduceInto(1, values, r0, r0, Math.min(2 * TILE, levels[0].height - r0));
    }
  }
  const w = levels[0].width;
  const inPlace = !shared || values.buffer instanceof SharedArrayBuffer;
  for (let r0 = 0; r0 < levels[0].height; r0 += TILE) {
    const rows = Math.min(TILE, levels[0].height - r0);
    if (inPlace) {
      yield { level: 0, row0: r0, rows, buf: values.buffer, byteOffset: values.byteOffset + r0 * w * bps, cost: rows * w * bps };
    } else {
      const copy = alloc(rows * w);
      copy.set(values.subarray(r0 * w, (r0 + rows) * w) as never);
      yield { level: 0, row0: r0, rows, buf: copy.buffer, byteOffset: 0, cost: rows * w * bps };
    }
  }
}

/**
 * Make overview rows from the rows of the level above: `srcRows` rows of `srcW` samples from
 * row `srcStart` of `src` give ceil(srcRows / 2) rows of `dstW` samples written from row
 * `dstRow` of `dst`. Nearest takes the top-left cell of each 2 × 2 block; average takes the
 * mean of its cells that are not `missing` (NaN counts as missing for floats), in the order
 * top-left, top-right, bottom-left, bottom-right, and `missing` when none is valid.
 */
function reduceRows(
  src: RasterValues, srcStart: number, srcW: number, srcRows: number,
  dst: RasterValues, dstRow: number, dstW: number,
  nearest: boolean, integer: boolean, missing: number | null,
): void {
  const rows = Math.ceil(srcRows / 2);
  for (let r = 0; r < rows; r++) {
    const a = (srcStart + 2 * r) * srcW;
    const b = 2 * r + 1 < srcRows ? a + srcW : -1;
    const o = (dstRow + r) * dstW;
    if (nearest) {
      for (let i = 0; i < dstW; i++) dst[o + i] = src[a + 2 * i];
      continue;
    }
    for (let i = 0; i < dstW; i++) {
      const c = 2 * i;
      const right = c + 1 < srcW;
      let sum = 0, n = 0, v: number;
      v = src[a + c]; if (v === v && v !== missing) { sum += v; n++; }
      if (right) { v = src[a + c + 1]; if (v === v && v !== missing) { sum += v; n++; } }
      if (b >= 0) {
        v = src[b + c]; if (v === v && v !== missing) { sum += v; n++; }
        if (right) { v = src[b + c + 1]; if (v === v && v !== missing) { sum += v; n++; } }
      }
      dst[o + i] = n === 0 ? (missing ?? 0) : integer ? Math.floor(sum / n + 0.5) : sum / n;
    }
  }
}
