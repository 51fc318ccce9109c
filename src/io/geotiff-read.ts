/**
 * GeoTIFF → Grid. The `geotiff` package parses the file (header, image directory, tags,
 * BigTIFF); this module checks the file before anything large is allocated, turns the GeoTIFF
 * georeferencing tags into a GDAL-order geotransform and an EPSG-coded CRS, and decodes the
 * band's strips or tiles itself (tiff-decode.ts) straight into the grid's values — on several
 * threads for a large file — for every layout but a few rare ones (16-bit floats, LERC, ZSTD,
 * mixed sample sizes, empty blocks), which go through the package's own decoder in row bands.
 */
import GeoTIFF, { type GeoTIFFImage, type ImageFileDirectory } from 'geotiff';
import { existsSync } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { InputError } from '../errors.js';
import { useBoundedLzw } from './lzw.js';
import { Grid, gridValues, type Crs, type GeoTransform, type GridValues } from '../surface/grid.js';
import { checkGridSize, finishValues, nodataFor, openForReading, printable, readAt, transferSamples } from './common.js';
import { blocksPerGrab, decodeBlockCells, decodeShare, type BlockCells, type BlockFailure, type BlockLayout } from './tiff-decode.js';

export interface GeoTiffReadOptions {
  /** 1-based band number; default 1. */
  band?: number;
  /** Nodata value; overrides the file's GDAL_NODATA tag. */
  nodata?: number;
  /**
   * Threads that decode strips and tiles, this one included; default: the number of cores.
   * 1 decodes on this thread only. The values are the same whatever the number.
   */
  threads?: number;
  /**
   * Decode on several threads only when the band holds at least this many bytes of samples
   * (default 8 MiB) and its blocks are compressed or predicted: below that, and for plain
   * uncompressed blocks (a copy out of the file), starting the workers costs more than it saves.
   */
  parallelMinBytes?: number;
}

/** Default of `parallelMinBytes`. */
const PARALLEL_MIN_BYTES = 8 * 1024 * 1024;

// TIFF tag numbers used here.
const TAG = {
  Compression: 259,
  Predictor: 317,
  StripOffsets: 273,
  StripByteCounts: 279,
  TileOffsets: 324,
  TileByteCounts: 325,
  ModelPixelScale: 33550,
  ModelTiepoint: 33922,
  ModelTransformation: 34264,
  GeoKeyDirectory: 34735,
  GeoAsciiParams: 34737,
  GdalNodata: 42113,
} as const;

// GeoKey ids.
const KEY = {
  GTModelType: 1024,
  GTRasterType: 1025,
  GTCitation: 1026,
  GeographicType: 2048,
  GeogCitation: 2049,
  GeogAngularUnits: 2054,
  ProjectedCSType: 3072,
  PCSCitation: 3073,
  ProjLinearUnits: 3076,
} as const;

const RASTER_PIXEL_IS_POINT = 2;
const USER_DEFINED = 32767;

const LINEAR_UNITS: Record<number, string> = {
  9001: 'metre',
  9002: 'foot',
  9003: 'US survey foot',
  9030: 'nautical mile',
  9036: 'kilometre',
};
const ANGULAR_UNITS: Record<number, string> = { 9101: 'radian', 9102: 'degree', 9105: 'grad' };

const COMPRESSIONS: Record<number, [name: string, supported: boolean]> = {
  1: ['none', true],
  5: ['LZW', true],
  8: ['DEFLATE', true],
  32946: ['DEFLATE', true],
  32773: ['PackBits', true],
  34887: ['LERC', true],
  50000: ['ZSTD', true],
  2: ['CCITT RLE', false],
  3: ['CCITT Group 3', false],
  4: ['CCITT Group 4', false],
  6: ['old-style JPEG', false],
  7: ['JPEG', false],
  34925: ['LZMA', false],
  50001: ['WEBP', false],
};

/** Cells converted per read: bounds the working copy of native samples to a few tens of MB. */
const BAND_CELLS = 4_000_000;

/**
 * A byte source for the `geotiff` package that never invents data: a read past the end of
 * the file returns only the bytes that exist, so decoding a cut-off file fails instead of
 * silently yielding zeros.
 */
class FileBytes {
  constructor(private readonly fh: FileHandle, private readonly size: number) {}

  get fileSize(): number {
    return this.size;
  }

  async fetch(slices: { offset: number; length: number }[]): Promise<ArrayBuffer[]> {
    return Promise.all(slices.map((s) => this.read(s.offset, s.length)));
  }

  async fetchSlice(slice: { offset: number; length: number }): Promise<{ data: ArrayBuffer; offset: number; length: number }> {
    const data = await this.read(slice.offset, slice.length);
    return { data, offset: slice.offset, length: data.byteLength };
  }

  async read(offset: number, length: number): Promise<ArrayBuffer> {
    const end = Math.min(this.size, offset + length);
    const n = Math.max(0, end - offset);
    const bytes = await readAt(this.fh, offset, n);
    return bytes.byteLength === bytes.buffer.byteLength ? (bytes.buffer as ArrayBuffer) : bytes.slice().buffer;
  }

  async close(): Promise<void> {
    // the handle is closed by readGeoTiff
  }
}

interface Header {
  littleEndian: boolean;
  bigTiff: boolean;
  ifdOffset: number;
}

function notTiff(path: string, detail: string): InputError {
  return new InputError(`${path} is not a TIFF file (${detail}); give a GeoTIFF, a .npy array or a text grid`);
}

/**
 * The geotiff package's decoders report some damage with console.warn (LZW: "ran off the end of the
 * buffer before finding EOI_CODE") and go on. Those lines never reach the terminal: while a band is
 * read they are collected (and reported as damage); strips still decoding after a failure are dropped.
 */
const GEOTIFF_WARNING = /^(ran off the end of the buffer before finding EOI_CODE|more than one frame is not supported)/;
let decoderWarnings: string[] | null = null;
let warnFiltered = false;
function filterDecoderWarnings(): void {
  if (warnFiltered) return;
  warnFiltered = true;
  const warn = console.warn;
  console.warn = function (this: Console, ...args: unknown[]) {
    const text = args.map(String).join(' ');
    if (GEOTIFF_WARNING.test(text)) { decoderWarnings?.push(text); return; }
    warn.apply(this, args);
  };
}

/** A decoder's failure in words: pako throws bare strings, DataView overruns say nothing about the file. */
function decoderReason(err: unknown, method: string): string {
  if (err instanceof RangeError) return `the ${method} data ends early or is invalid`;
  const msg = err instanceof Error ? err.message : typeof err === 'string' ? err : '';
  const line = (msg ?? '').split('\n')[0].trim();
  return line ? `the ${method} decoder: ${line}` : `the ${method} data is invalid`;
}

function truncated(path: string, detail: string): InputError {
  return new InputError(`${path} is truncated or damaged: ${detail}; copy, download or export the file again`);
}

async function readHeader(path: string, fh: FileHandle, size: number): Promise<Header> {
  const b = await readAt(fh, 0, 16);
  if (b.length < 2) throw notTiff(path, `only ${b.length} byte(s) long`);
  const bom = String.fromCharCode(b[0], b[1]);
  if (bom !== 'II' && bom !== 'MM') throw notTiff(path, 'it does not start with the TIFF byte-order mark II or MM');
  const littleEndian = bom === 'II';
  if (b.length < 8) throw truncated(path, `the ${size}-byte file ends inside the TIFF header`);
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const magic = dv.getUint16(2, littleEndian);
  if (magic !== 42 && magic !== 43) throw notTiff(path, `version number ${magic}, expected 42 or 43`);
  const bigTiff = magic === 43;
  let ifdOffset: number;
  if (bigTiff) {
    if (b.length < 16) throw truncated(path, `the ${size}-byte file ends inside the BigTIFF header`);
    if (dv.getUint16(4, littleEndian) !== 8) throw notTiff(path, 'BigTIFF header with an offset size other than 8');
    ifdOffset = Number(dv.getBigUint64(8, littleEndian));
  } else {
    ifdOffset = dv.getUint32(4, littleEndian);
  }
  const countBytes = bigTiff ? 8 : 2;
  if (ifdOffset < 8 || ifdOffset + countBytes > size) {
    throw truncated(path, `the first image directory is at byte ${ifdOffset} but the file has ${size} bytes`);
  }
  const c = await readAt(fh, ifdOffset, countBytes);
  const cdv = new DataView(c.buffer, c.byteOffset, c.byteLength);
  const entries = bigTiff ? Number(cdv.getBigUint64(0, littleEndian)) : cdv.getUint16(0, littleEndian);
  const ifdEnd = ifdOffset + countBytes + entries * (bigTiff ? 20 : 12) + (bigTiff ? 8 : 4);
  if (entries === 0) throw truncated(path, 'the first image directory is empty');
  if (ifdEnd > size) throw truncated(path, `the image directory ends at byte ${ifdEnd} but the file has ${size} bytes`);
  return { littleEndian, bigTiff, ifdOffset };
}

/** Load an array-valued tag as plain numbers. */
/** A tag's value; a value that lies outside the file (a damaged offset or count) is damage, named. */
async function loadTag(path: string, ifd: ImageFileDirectory, tag: number): Promise<unknown> {
  try {
    return await ifd.loadValue(tag);
  } catch (err) {
    if (err instanceof InputError) throw err;
    const why = err instanceof RangeError ? 'its value lies past the end of the file' : printable(String((err as Error)?.message ?? err), 80);
    throw truncated(path, `TIFF tag ${tag} cannot be read (${why})`);
  }
}

async function tagNumbers(path: string, ifd: ImageFileDirectory, tag: number): Promise<number[] | null> {
  if (!ifd.hasTag(tag)) return null;
  const v: unknown = await loadTag(path, ifd, tag);
  if (v === undefined || v === null) return null;
  if (typeof v === 'number' || typeof v === 'bigint') return [Number(v)];
  if (typeof v === 'string') return null;
  return Array.from(v as ArrayLike<number | bigint>, Number);
}

async function tagString(path: string, ifd: ImageFileDirectory, tag: number): Promise<string | null> {
  if (!ifd.hasTag(tag)) return null;
  const v: unknown = await loadTag(path, ifd, tag);
  return typeof v === 'string' ? v : null;
}

/**
 * geotiff 3.0.5 decodes strip/tile offset arrays that lie outside the first block it read
 * as little-endian whatever the file's byte order. Read those arrays here with the file's
 * own byte order and hand them over already decoded.
 */
async function resolveOffsetArrays(ifd: ImageFileDirectory, bytes: FileBytes, littleEndian: boolean): Promise<void> {
  for (const tag of [TAG.StripOffsets, TAG.StripByteCounts, TAG.TileOffsets, TAG.TileByteCounts]) {
    const deferred = ifd.deferredArrays.get(tag);
    if (!deferred) continue;
    const { arrayOffset, fieldType, length } = deferred;
    const size = fieldType === 3 ? 2 : fieldType === 4 ? 4 : fieldType === 16 ? 8 : 0;
    if (size === 0) throw new Error(`unexpected field type ${fieldType} for tag ${tag}`);
    const buf = await bytes.read(arrayOffset, size * length);
    if (buf.byteLength < size * length) throw new RangeError(`tag ${tag} runs past the end of the file`);
    const dv = new DataView(buf);
    const out = new Array<number>(length);
    for (let i = 0; i < length; i++) {
      out[i] =
        size === 2 ? dv.getUint16(2 * i, littleEndian) : size === 4 ? dv.getUint32(4 * i, littleEndian) : Number(dv.getBigUint64(8 * i, littleEndian));
    }
    ifd.deferredArrays.delete(tag);
    ifd.actualizedFields.set(tag, out);
  }
}

interface GeoKeys {
  shorts: Map<number, number>;
  ascii: Map<number, string>;
}

function parseGeoKeys(dir: number[] | null, asciiParams: string | null): GeoKeys | null {
  if (!dir || dir.length < 4) return null;
  const n = dir[3];
  const shorts = new Map<number, number>();
  const ascii = new Map<number, string>();
  for (let k = 0; k < n && 4 + 4 * k + 3 < dir.length; k++) {
    const [id, loc, count, off] = dir.slice(4 + 4 * k, 8 + 4 * k);
    if (loc === 0) shorts.set(id, off);
    else if (loc === TAG.GeoAsciiParams && asciiParams !== null) {
      ascii.set(id, asciiParams.substring(off, off + count).replace(/[|\0]+$/, '').trim());
    }
  }
  return { shorts, ascii };
}

function crsFromKeys(keys: GeoKeys | null): Crs | null {
  if (!keys) return null;
  const k = keys.shorts;
  const model = k.get(KEY.GTModelType);
  const pcs = k.get(KEY.ProjectedCSType);
  const gcs = k.get(KEY.GeographicType);
  const geographic = model === 2 || (model === undefined && pcs === undefined && gcs !== undefined);
  const projected = model === 1 || (model === undefined && pcs !== undefined);
  if (!geographic && !projected) return null;
  const crs: Crs = { geographic };
  const code = geographic ? gcs : pcs;
  if (code !== undefined && code > 0 && code < USER_DEFINED) crs.epsg = code;
  const name = geographic
    ? keys.ascii.get(KEY.GeogCitation) ?? keys.ascii.get(KEY.GTCitation)
    : keys.ascii.get(KEY.GTCitation) ?? keys.ascii.get(KEY.PCSCitation);
  if (name) crs.name = name;
  if (geographic) {
    const u = k.get(KEY.GeogAngularUnits);
    crs.linearUnit = u !== undefined ? ANGULAR_UNITS[u] ?? `unit ${u}` : 'degree';
  } else {
    const u = k.get(KEY.ProjLinearUnits);
    if (u !== undefined && u !== USER_DEFINED) crs.linearUnit = LINEAR_UNITS[u] ?? `unit ${u}`;
  }
  return crs;
}

/** The GDAL-order geotransform, at pixel corners, from the GeoTIFF model tags. */
function transformFromTags(
  tiepoints: number[] | null,
  scale: number[] | null,
  matrix: number[] | null,
  pixelIsPoint: boolean,
): GeoTransform {
  let gt: GeoTransform;
  if (matrix && matrix.length >= 16) {
    gt = [matrix[3], matrix[0], matrix[1], matrix[7], matrix[4], matrix[5]];
  } else if (tiepoints && tiepoints.length >= 6 && scale && scale.length >= 2) {
    const [i, j, , x, y] = tiepoints;
    gt = [x - i * scale[0], scale[0], 0, y + j * scale[1], 0, -scale[1]];
  } else {
    return [0, 1, 0, 0, 0, 1]; // no affine georeferencing: x = column, y = row (as GDAL reports it)
  }
  if (pixelIsPoint) {
    // The model tags locate pixel centres; move the origin to the corner of the first cell.
    gt[0] -= 0.5 * gt[1] + 0.5 * gt[2];
    gt[3] -= 0.5 * gt[4] + 0.5 * gt[5];
  }
  return gt;
}

function parseNodataTag(path: string, text: string | null): number | null {
  if (text === null) return null;
  const s = text.replace(/\0+$/, '').trim();
  if (s === '') return null;
  if (/^[+-]?nan$/i.test(s)) return NaN;
  if (/^\+?inf(inity)?$/i.test(s)) return Infinity;
  if (/^-inf(inity)?$/i.test(s)) return -Infinity;
  const v = Number(s);
  if (!Number.isFinite(v)) {
    throw new InputError(`${path}: the GDAL_NODATA tag '${printable(s)}' is not a number; give the nodata value explicitly (--nodata V)`);
  }
  return v;
}

const FLOAT32_MAX = 3.4028234663852886e38;

/** A float band's nodata as GDAL reports it: rounded to float32, with values a hair beyond the float32 range pulled in. */
function float32Nodata(v: number): number {
  const a = Math.abs(v);
  if (a > FLOAT32_MAX && a < Infinity && a <= FLOAT32_MAX * (1 + 1e-6)) return Math.sign(v) * FLOAT32_MAX;
  return Math.fround(v);
}

interface SampleKind {
  float64Out: boolean;
  integer: boolean;
  float32Samples: boolean;
}

function sampleKind(path: string, image: GeoTIFFImage, band: number): SampleKind {
  const fmt = image.getSampleFormat(band - 1);
  if (!Number.isInteger(fmt)) throw truncated(path, `its SampleFormat tag gives no value for band ${band}`);
  const bits = image.getBitsPerSample(band - 1);
  const fix = 'sill reads 8-, 16- and 32-bit integers and 16-, 32- and 64-bit floats: convert the band to one of these (Float32 or Float64 keeps every value)';
  const label = (f: string) => `${path}: band ${band} holds ${bits}-bit ${f} samples, which sill does not read; ${fix}`;
  switch (fmt) {
    case 1:
    case 2:
      if (bits === 8 || bits === 16) return { float64Out: false, integer: true, float32Samples: false };
      if (bits === 32) return { float64Out: true, integer: true, float32Samples: false };
      throw new InputError(label(fmt === 1 ? 'unsigned integer' : 'signed integer'));
    case 3:
      if (bits === 16 || bits === 32) return { float64Out: false, integer: false, float32Samples: true };
      if (bits === 64) return { float64Out: true, integer: false, float32Samples: false };
      throw new InputError(label('floating-point'));
    case 5:
    case 6:
      throw new InputError(`${path}: band ${band} holds complex ${fmt === 5 ? 'integer' : 'floating-point'} samples, which sill does not read; ${fix}`);
    default:
      throw new InputError(`${path}: band ${band} has sample format ${fmt} (${bits}-bit), which sill does not read; ${fix}`);
  }
}

/** What a GeoTIFF's header says about one band: enough to place it in a mosaic without reading its cells. */
export interface GeoTiffInfo {
  width: number;
  height: number;
  /** GDAL-order geotransform at pixel corners. */
  transform: GeoTransform;
  crs: Crs | null;
  /** The nodata value in effect (the option, else the file's GDAL_NODATA tag), or null. */
  nodata: number | null;
  /** The band's sample type in GDAL's words (Byte, Int16, UInt16, Int32, UInt32, Float32, Float64 …). */
  sampleType: string;
  /** True when the band's values need float64 (32-bit integers, 64-bit floats). */
  float64: boolean;
  bands: number;
}

/** The file opened and checked up to its georeferencing: everything but the cells. */
interface Inspected extends GeoTiffInfo {
  header: Header;
  image: GeoTIFFImage;
  ifd: ImageFileDirectory;
  kind: SampleKind;
  compression: number;
  comp: [name: string, supported: boolean];
  rowsPerRead: number;
  offsets: number[];
  counts: number[];
  what: string;
  perPlane: number;
  expected: number;
  match: number;
}

function checkReadOptions(opts: GeoTiffReadOptions): number {
  const band = opts.band ?? 1;
  if (!Number.isInteger(band) || band < 1) {
    throw new InputError(`band must be a whole number from 1 up, got ${band}`);
  }
  if (opts.threads !== undefined && !(Number.isInteger(opts.threads) && opts.threads >= 1)) {
    throw new InputError(`threads must be a whole number from 1 up, got ${opts.threads}`);
  }
  if (opts.nodata !== undefined && typeof opts.nodata !== 'number') {
    throw new InputError(`nodata must be a number, got ${String(opts.nodata)}`);
  }
  return band;
}

/** GDAL's name of a TIFF sample type. */
function sampleTypeName(format: number, bits: number): string {
  if (format === 3) return bits === 16 ? 'Float16' : bits === 32 ? 'Float32' : 'Float64';
  if (bits === 8) return format === 2 ? 'Int8' : 'Byte';
  return `${format === 2 ? 'Int' : 'UInt'}${bits}`;
}

/**
 * The header of one band of a GeoTIFF — size, georeferencing, nodata, sample type — with the
 * same checks readGeoTiff makes before it decodes (every strip or tile lies inside the file), and
 * no cell read.
 */
export async function readGeoTiffInfo(path: string, opts: GeoTiffReadOptions = {}): Promise<GeoTiffInfo> {
  const band = checkReadOptions(opts);
  const { fh, size } = await openForReading(path);
  useBoundedLzw();
  try {
    const { width, height, transform, crs, nodata, sampleType, float64, bands } = await inspect(path, fh, size, band, opts);
    return { width, height, transform, crs, nodata, sampleType, float64, bands };
  } finally {
    await fh.close().catch(() => undefined);
  }
}

async function inspect(path: string, fh: FileHandle, size: number, band: number, opts: GeoTiffReadOptions): Promise<Inspected> {
  const header = await readHeader(path, fh, size);
  const bytes = new FileBytes(fh, size);
  let image: GeoTIFFImage;
  try {
    const tiff = await GeoTIFF.fromSource(bytes as unknown as Parameters<typeof GeoTIFF.fromSource>[0]);
    image = await tiff.getImage(0);
    await resolveOffsetArrays(image.fileDirectory, bytes, header.littleEndian);
  } catch (err) {
    if (err instanceof InputError) throw err;
    const why = err instanceof RangeError ? 'a tag value lies past the end of the file' : (err as Error).message;
    throw truncated(path, `its image directory cannot be parsed (${why})`);
  }
  const ifd = image.fileDirectory;
  const width = image.getWidth();
  const height = image.getHeight();
  if (!(width > 0 && height > 0)) throw truncated(path, `the image size is ${width}×${height}`);

  const bandCount = image.getSamplesPerPixel();
  if (!(bandCount >= 1)) throw truncated(path, `it declares ${bandCount} samples per pixel, so it holds no band`);
  for (let s = 0; s < bandCount; s++) {
    const bits = image.getBitsPerSample(s);
    if (!(Number.isInteger(bits) && bits > 0)) {
      throw truncated(path, `it declares ${bandCount} samples per pixel but gives no usable BitsPerSample for sample ${s + 1}`);
    }
  }
  if (band > bandCount) {
    throw new InputError(`${path} has ${bandCount} band${bandCount === 1 ? '' : 's'}; band ${band} does not exist — choose a band from 1 to ${bandCount}`);
  }
  const kind = sampleKind(path, image, band);
  if (image.planarConfiguration === 1) {
    for (let s = 0; s < bandCount; s++) {
      if (image.getBitsPerSample(s) % 8 !== 0) sampleKind(path, image, s + 1); // throws for a bit-packed band
    }
  }
  const compression = Number((await tagNumbers(path, ifd, TAG.Compression))?.[0] ?? 1);
  const comp = COMPRESSIONS[compression];
  if (!comp || !comp[1]) {
    throw new InputError(
      `${path} uses ${comp ? comp[0] : `compression method ${compression}`}, which sill does not decode; ` +
        'rewrite it with DEFLATE, LZW, PackBits or no compression',
    );
  }

  // Refuse sizes before allocating anything large.
  const bytesPerCell = kind.float64Out ? 8 : 4;
  const tileW = image.getTileWidth();
  const tileH = image.getTileHeight();
  if (!(tileW > 0 && tileH > 0)) throw truncated(path, `the ${image.isTiled ? 'tile' : 'strip'} size is ${tileW}×${tileH}`);
  const rowsPerRead = tileH * Math.max(1, Math.floor(BAND_CELLS / (width * tileH)));
  const workBytes = Math.min(height, rowsPerRead) * width * 8;
  checkGridSize(path, width, height, bytesPerCell, workBytes);

  // Every strip or tile must lie inside the file.
  const offsets = await tagNumbers(path, ifd, image.isTiled ? TAG.TileOffsets : TAG.StripOffsets);
  const counts = await tagNumbers(path, ifd, image.isTiled ? TAG.TileByteCounts : TAG.StripByteCounts);
  const what = image.isTiled ? 'tile' : 'strip';
  const perPlane = Math.ceil(width / tileW) * Math.ceil(height / tileH);
  const expected = perPlane * (image.planarConfiguration === 2 ? bandCount : 1);
  if (!offsets || !counts || offsets.length < expected || counts.length < expected) {
    throw truncated(path, `it lists ${offsets?.length ?? 0} ${what} offsets and ${counts?.length ?? 0} byte counts where ${expected} are needed`);
  }
  for (let i = 0; i < expected; i++) {
    if (counts[i] > 0 && offsets[i] + counts[i] > size) {
      throw truncated(path, `${what} ${i + 1} of ${expected} ends at byte ${offsets[i] + counts[i]} but the file has ${size} bytes`);
    }
  }

  // Georeferencing.
  const keys = parseGeoKeys(await tagNumbers(path, ifd, TAG.GeoKeyDirectory), await tagString(path, ifd, TAG.GeoAsciiParams));
  const pixelIsPoint = keys?.shorts.get(KEY.GTRasterType) === RASTER_PIXEL_IS_POINT;
  const transform = transformFromTags(
    await tagNumbers(path, ifd, TAG.ModelTiepoint),
    await tagNumbers(path, ifd, TAG.ModelPixelScale),
    await tagNumbers(path, ifd, TAG.ModelTransformation),
    pixelIsPoint,
  );
  const crs = crsFromKeys(keys);
  let fileNodata = parseNodataTag(path, await tagString(path, ifd, TAG.GdalNodata));
  if (fileNodata !== null && kind.float32Samples) fileNodata = float32Nodata(fileNodata);
  const nodata = opts.nodata !== undefined ? opts.nodata : fileNodata;
  const match = nodataFor(nodata, kind.float32Samples);

  const sampleType = sampleTypeName(image.getSampleFormat(band - 1), image.getBitsPerSample(band - 1));
  return {
    width, height, transform, crs, nodata: nodata ?? null, sampleType, float64: kind.float64Out, bands: bandCount,
    header, image, ifd, kind, compression, comp, rowsPerRead, offsets, counts, what, perPlane, expected, match,
  };
}

/**
 * Read one band of a GeoTIFF as a Grid. Cells equal to the nodata value (the `nodata`
 * option, else the file's GDAL_NODATA tag) and NaN cells become NaN.
 */
export async function readGeoTiff(path: string, opts: GeoTiffReadOptions = {}): Promise<Grid> {
  const band = checkReadOptions(opts);
  const { fh, size } = await openForReading(path);
  filterDecoderWarnings();
  useBoundedLzw();
  try {
    const { width, height, transform, crs, nodata, header, image, ifd, kind, compression, comp, rowsPerRead, offsets, counts, what, perPlane, expected, match } =
      await inspect(path, fh, size, band, opts);
    const predictor = Number((await tagNumbers(path, ifd, TAG.Predictor))?.[0] ?? 1);
    const threads = opts.threads ?? availableParallelism();
    const layout = blockLayout(image, band, compression, predictor, header.littleEndian, counts, perPlane);
    let values: GridValues;
    if (layout) {
      const bytes = width * height * (kind.float64Out ? 8 : 4);
      // uncompressed blocks are a copy out of the file: one thread does that as fast as several
      const decodes = layout.compression !== 1 || layout.predictor !== 1;
      const workers = threads > 1 && decodes && bytes >= (opts.parallelMinBytes ?? PARALLEL_MIN_BYTES) ? Math.min(threads, layout.blockCount) - 1 : 0;
      const script = workers > 0 ? workerScript() : null;
      values = gridValues(width * height, kind.float64Out); // on shared memory, for the decoding and analysis workers
      const failure = await decodeBlocks(path, fh.fd, layout, offsets, counts, values, script && values.buffer instanceof SharedArrayBuffer ? workers : 0, script);
      if (failure) {
        const where = failure.block < 0 ? 'a decoding thread failed' : `${what} ${layout.firstBlock + failure.block + 1} of ${expected} cannot be decoded`;
        throw truncated(path, `${where} (${failure.reason})`);
      }
      finishValues(values, match, kind.integer, width, path);
    } else {
      values = gridValues(width * height, kind.float64Out);
      for (let y0 = 0; y0 < height; y0 += rowsPerRead) {
        const y1 = Math.min(height, y0 + rowsPerRead);
        let samples: ArrayLike<number>;
        const warned: string[] = [];
        decoderWarnings = warned;
        try {
          const r = await image.readRasters({ window: [0, y0, width, y1], samples: [band - 1], interleave: false });
          samples = r[0];
        } catch (err) {
          throw truncated(path, `rows ${y0}–${y1 - 1} cannot be decoded (${decoderReason(err, comp[0])})`);
        } finally {
          decoderWarnings = null;
        }
        if (warned.length > 0) throw truncated(path, `rows ${y0}–${y1 - 1} cannot be decoded (the ${comp[0]} decoder: ${warned[0].trim()})`);
        if (samples.length !== (y1 - y0) * width) {
          throw truncated(path, `rows ${y0}–${y1 - 1} decode to ${samples.length} values instead of ${(y1 - y0) * width}`);
        }
        transferSamples(samples, samples.length, values, y0 * width, width, match, kind.integer, path);
      }
    }
    return new Grid({ width, height, values, transform, crs, nodata });
  } finally {
    await fh.close().catch(() => undefined);
  }
}

const LITTLE_ENDIAN_MACHINE = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * The layout of the band's blocks for tiff-decode.ts, or null when the band needs the
 * package's decoder: 16-bit floats, compressions other than none, LZW, DEFLATE and PackBits,
 * predictors other than 1–3 (or 2 on 64-bit samples), pixel-interleaved samples of different
 * sizes, blocks with no bytes (sparse files), or a big-endian machine.
 */
function blockLayout(
  image: GeoTIFFImage,
  band: number,
  compression: number,
  predictor: number,
  littleEndian: boolean,
  counts: number[],
  perPlane: number,
): BlockLayout | null {
  if (!LITTLE_ENDIAN_MACHINE) return null;
  if (![1, 5, 8, 32946, 32773].includes(compression)) return null;
  const sampleFormat = image.getSampleFormat(band - 1);
  const bits = image.getBitsPerSample(band - 1);
  if (sampleFormat === 3 && bits === 16) return null;
  if (!(predictor === 1 || (predictor === 2 && bits <= 32) || predictor === 3)) return null;
  const spp = image.getSamplesPerPixel();
  const chunky = image.planarConfiguration !== 2;
  if (chunky) {
    for (let s = 0; s < spp; s++) if (image.getBitsPerSample(s) !== bits) return null;
  }
  const firstBlock = chunky ? 0 : (band - 1) * perPlane;
  for (let i = firstBlock; i < firstBlock + perPlane; i++) if (!(counts[i] > 0)) return null;
  const width = image.getWidth(), height = image.getHeight();
  const blockWidth = image.getTileWidth(), blockHeight = image.getTileHeight();
  return {
    littleEndian,
    compression,
    predictor,
    sampleFormat,
    bytesPerSample: bits / 8,
    samplesPerBlockPixel: chunky ? spp : 1,
    sampleIndex: chunky ? band - 1 : 0,
    tiled: image.isTiled,
    blockWidth,
    blockHeight,
    blocksAcross: Math.ceil(width / blockWidth),
    firstBlock,
    blockCount: perPlane,
    width,
    height,
  };
}

/** True when reads can decode on several threads (the worker's script is built). */
export function parallelDecodingAvailable(): boolean {
  return workerScript() !== null;
}

/**
 * The decoding worker's script: next to this module when it runs from the build; from the
 * sources (the tests), the built one — null when there is none, and the read stays on one thread.
 */
function workerScript(): URL | null {
  for (const rel of ['./tiff-worker.js', '../../dist/io/tiff-worker.js']) {
    const url = new URL(rel, import.meta.url);
    if (existsSync(fileURLToPath(url))) return url;
  }
  return null;
}

/**
 * Decode every block of the band into `values`: this thread and `workers` workers take blocks
 * from one shared counter until none is left. The failure of the lowest-numbered block, or null.
 */
async function decodeBlocks(
  path: string,
  fd: number,
  layout: BlockLayout,
  offsets: number[],
  counts: number[],
  values: GridValues,
  workers: number,
  script: URL | null,
): Promise<BlockFailure | null> {
  const offs = Float64Array.from(offsets), cnts = Float64Array.from(counts);
  const next = new Int32Array(workers > 0 ? new SharedArrayBuffer(4) : new ArrayBuffer(4));
  const grab = blocksPerGrab(layout);
  const pending: Promise<BlockFailure | null>[] = [];
  for (let w = 0; w < workers && script; w++) {
    pending.push(new Promise((resolve) => {
      const worker = new Worker(script, { workerData: { path, layout, offsets: offs, counts: cnts, out: values, next, grab } });
      let answered = false;
      worker.once('message', (m: BlockFailure | null) => { answered = true; resolve(m); });
      worker.once('error', (err) => { answered = true; resolve({ block: -1, reason: err.message }); });
      worker.once('exit', (code) => { if (!answered) resolve({ block: -1, reason: `a decoding thread stopped (exit code ${code})` }); });
    }));
  }
  let failures: (BlockFailure | null)[];
  try {
    const mine = decodeShare(fd, layout, offs, cnts, values, next, grab);
    failures = [mine, ...(await Promise.all(pending))];
  } catch (err) {
    Atomics.store(next, 0, layout.blockCount); // let the workers stop
    await Promise.all(pending);
    throw err;
  }
  let first: BlockFailure | null = null;
  for (const f of failures) {
    if (f && (first === null || (f.block >= 0 && (first.block < 0 || f.block < first.block)))) first = f;
  }
  return first;
}

/**
 * A window of one band of a GeoTIFF — columns col0…col0+width−1, rows row0…row0+height−1 —
 * decoding only the strips or tiles the window touches (the mosaic reader compares the strips where
 * tiles overlap with it): with sill's own decoder, or for the rare layouts it leaves to the
 * `geotiff` package, through the package. Nodata and NaN become NaN, as in readGeoTiff; a window
 * outside the image is a programming error.
 */
export async function readGeoTiffWindow(path: string, win: Window, opts: GeoTiffReadOptions = {}): Promise<GridValues> {
  return (await readGeoTiffWindows(path, [win], opts))[0];
}

/** A rectangle of cells of an image. */
export interface Window {
  col0: number;
  row0: number;
  width: number;
  height: number;
}

/** Several windows of one band, as readGeoTiffWindow reads one: the file opened once, each block decoded once. */
export async function readGeoTiffWindows(path: string, wins: readonly Window[], opts: GeoTiffReadOptions = {}): Promise<GridValues[]> {
  const band = checkReadOptions(opts);
  const { fh, size } = await openForReading(path);
  filterDecoderWarnings();
  useBoundedLzw();
  try {
    const info = await inspect(path, fh, size, band, opts);
    for (const win of wins) {
      if (win.col0 < 0 || win.row0 < 0 || win.width < 1 || win.height < 1 || win.col0 + win.width > info.width || win.row0 + win.height > info.height) {
        throw new RangeError(`window ${win.col0},${win.row0} ${win.width}×${win.height} lies outside ${path} (${info.width}×${info.height})`);
      }
    }
    const predictor = Number((await tagNumbers(path, info.ifd, TAG.Predictor))?.[0] ?? 1);
    const layout = blockLayout(info.image, band, info.compression, predictor, info.header.littleEndian, info.counts, info.perPlane);
    const result: GridValues[] = [];
    if (layout) {
      // sill's own decoder, only the blocks the windows touch, each once
      const offs = Float64Array.from(info.offsets), cnts = Float64Array.from(info.counts);
      const blocks = new Map<number, BlockCells>();
      for (const win of wins) {
        const out = gridValues(win.width * win.height, info.float64);
        const bx0 = Math.floor(win.col0 / layout.blockWidth), bx1 = Math.floor((win.col0 + win.width - 1) / layout.blockWidth);
        const by0 = Math.floor(win.row0 / layout.blockHeight), by1 = Math.floor((win.row0 + win.height - 1) / layout.blockHeight);
        for (let by = by0; by <= by1; by++) {
          for (let bx = bx0; bx <= bx1; bx++) {
            const k = by * layout.blocksAcross + bx;
            let b = blocks.get(k);
            if (!b) {
              const d = decodeBlockCells(fh.fd, layout, offs, cnts, k, info.float64);
              if (typeof d === 'string') throw truncated(path, `${info.what} ${layout.firstBlock + k + 1} of ${info.expected} cannot be decoded (${d})`);
              blocks.set(k, (b = d));
            }
            const r0 = Math.max(win.row0, b.row0), r1 = Math.min(win.row0 + win.height, b.row0 + b.rows);
            const c0 = Math.max(win.col0, b.col0), c1 = Math.min(win.col0 + win.width, b.col0 + b.cols);
            for (let r = r0; r < r1; r++) {
              const from = (r - b.row0) * b.cols + (c0 - b.col0);
              out.set(b.values.subarray(from, from + (c1 - c0)), (r - win.row0) * win.width + (c0 - win.col0));
            }
          }
        }
        finishValues(out, info.match, info.kind.integer, win.width, path);
        result.push(out);
      }
      return result;
    }
    for (const win of wins) {
      const out = gridValues(win.width * win.height, info.float64);
      let samples: ArrayLike<number>;
      const warned: string[] = [];
      decoderWarnings = warned;
      const rows = `rows ${win.row0}–${win.row0 + win.height - 1}`;
      try {
        const r = await info.image.readRasters({ window: [win.col0, win.row0, win.col0 + win.width, win.row0 + win.height], samples: [band - 1], interleave: false });
        samples = r[0];
      } catch (err) {
        throw truncated(path, `${rows} cannot be decoded (${decoderReason(err, info.comp[0])})`);
      } finally {
        decoderWarnings = null;
      }
      if (warned.length > 0) throw truncated(path, `${rows} cannot be decoded (the ${info.comp[0]} decoder: ${warned[0].trim()})`);
      if (samples.length !== out.length) throw truncated(path, `${rows} decode to ${samples.length} values instead of ${out.length}`);
      transferSamples(samples, samples.length, out, 0, win.width, info.match, info.kind.integer, path);
      result.push(out);
    }
    return result;
  } finally {
    await fh.close().catch(() => undefined);
  }
}
