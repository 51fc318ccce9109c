/**
 * Raster → GeoTIFF. A small writer of its own: classic little-endian TIFF, one band,
 * uncompressed strips, with the georeferencing (ModelPixelScale + ModelTiepoint for
 * north-up grids, ModelTransformation otherwise), EPSG GeoKeys and the GDAL_NODATA tag.
 * The file is written under a temporary name in the target folder and renamed at the end,
 * so a failure never leaves a half-written file under the requested name.
 */
import { open, rename, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';
import { InputError } from '../errors.js';
import type { Crs, GeoTransform } from '../surface/grid.js';
import { fsReason } from './common.js';

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

// TIFF field types.
const SHORT = 3;
const LONG = 4;
const DOUBLE = 12;
const ASCII = 2;

interface Entry {
  tag: number;
  type: number;
  values: number[] | string;
}

/** SampleFormat (1 unsigned, 2 signed, 3 float) and bits of each array type. */
function sampleLayout(values: RasterValues): { format: number; bits: number; float: boolean } {
  if (values instanceof Float32Array) return { format: 3, bits: 32, float: true };
  if (values instanceof Float64Array) return { format: 3, bits: 64, float: true };
  if (values instanceof Int8Array) return { format: 2, bits: 8, float: false };
  if (values instanceof Uint8Array) return { format: 1, bits: 8, float: false };
  if (values instanceof Int16Array) return { format: 2, bits: 16, float: false };
  if (values instanceof Uint16Array) return { format: 1, bits: 16, float: false };
  if (values instanceof Int32Array) return { format: 2, bits: 32, float: false };
  if (values instanceof Uint32Array) return { format: 1, bits: 32, float: false };
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
  return type === SHORT ? 2 : type === LONG ? 4 : type === DOUBLE ? 8 : 1;
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

/**
 * Write a one-band GeoTIFF that GDAL reads with the same geotransform, EPSG code, nodata
 * value and values. `crs.geographic` decides between GeographicTypeGeoKey and
 * ProjectedCSTypeGeoKey for the EPSG code. Files above 4 GiB (which would need BigTIFF)
 * are refused.
 */
export async function writeGeoTiff(path: string, raster: RasterToWrite): Promise<void> {
  checkRaster(path, raster);
  const { width, height, values, transform, crs, nodata } = raster;
  const { format, bits, float } = sampleLayout(values);
  const bytesPerSample = bits / 8;
  const rowBytes = width * bytesPerSample;
  const rowsPerStrip = Math.max(1, Math.min(height, Math.floor((64 * 1024) / rowBytes)));
  const strips = Math.ceil(height / rowsPerStrip);
  const dataBytes = width * height * bytesPerSample;

  const [x0, dx, rx, y0, ry, dy] = transform;
  const entries: Entry[] = [
    { tag: 256, type: LONG, values: [width] },
    { tag: 257, type: LONG, values: [height] },
    { tag: 258, type: SHORT, values: [bits] },
    { tag: 259, type: SHORT, values: [1] }, // no compression
    { tag: 262, type: SHORT, values: [1] }, // BlackIsZero
    { tag: 273, type: LONG, values: new Array<number>(strips).fill(0) }, // StripOffsets, filled below
    { tag: 277, type: SHORT, values: [1] },
    { tag: 278, type: LONG, values: [rowsPerStrip] },
    { tag: 279, type: LONG, values: Array.from({ length: strips }, (_, s) => Math.min(rowsPerStrip, height - s * rowsPerStrip) * rowBytes) },
    { tag: 284, type: SHORT, values: [1] }, // one plane
    { tag: 339, type: SHORT, values: [format] },
  ];
  if (rx === 0 && ry === 0 && dx > 0 && dy < 0) {
    entries.push({ tag: 33550, type: DOUBLE, values: [dx, -dy, 0] }); // ModelPixelScale
    entries.push({ tag: 33922, type: DOUBLE, values: [0, 0, 0, x0, y0, 0] }); // ModelTiepoint: corner of cell (0,0)
  } else {
    entries.push({ tag: 34264, type: DOUBLE, values: [dx, rx, 0, x0, ry, dy, 0, y0, 0, 0, 0, 0, 0, 0, 0, 1] });
  }
  // A CRS without an EPSG code cannot be stated by keys alone: then no GeoKeys are written
  // (a bare key directory would make readers invent an engineering CRS).
  if (crs && crs.epsg !== undefined) entries.push({ tag: 34735, type: SHORT, values: geoKeys(crs.epsg, crs.geographic === true) });
  if (nodata !== null) entries.push({ tag: 42113, type: ASCII, values: nodataText(nodata) });
  entries.sort((a, b) => a.tag - b.tag);

  // Layout: header (8) | IFD | out-of-line tag values | strips.
  const ifdOffset = 8;
  const ifdBytes = 2 + entries.length * 12 + 4;
  let extra = ifdOffset + ifdBytes;
  const placed = new Map<Entry, number>();
  for (const e of entries) {
    const n = entryCount(e) * fieldSize(e.type);
    if (n > 4) {
      extra = (extra + 7) & ~7; // 8-byte alignment keeps doubles aligned
      placed.set(e, extra);
      extra += n;
    }
  }
  const dataStart = (extra + 15) & ~15;
  const total = dataStart + dataBytes;
  if (total > 0xffffffff) {
    throw new InputError(
      `${path}: a ${width}×${height} ${bits}-bit raster needs ${(total / 1024 ** 3).toFixed(1)} GiB, more than a classic TIFF can hold (4 GiB); write smaller tiles`,
    );
  }
  const offsets = entries.find((e) => e.tag === 273)!.values as number[];
  for (let s = 0; s < strips; s++) offsets[s] = dataStart + s * rowsPerStrip * rowBytes;

  const head = new Uint8Array(dataStart);
  const dv = new DataView(head.buffer);
  head[0] = 0x49; head[1] = 0x49; // "II": little-endian
  dv.setUint16(2, 42, true);
  dv.setUint32(4, ifdOffset, true);
  dv.setUint16(ifdOffset, entries.length, true);
  const put = (at: number, type: number, v: number) => {
    if (type === SHORT) dv.setUint16(at, v, true);
    else if (type === LONG) dv.setUint32(at, v, true);
    else dv.setFloat64(at, v, true);
  };
  entries.forEach((e, k) => {
    const at = ifdOffset + 2 + 12 * k;
    dv.setUint16(at, e.tag, true);
    dv.setUint16(at + 2, e.type, true);
    dv.setUint32(at + 4, entryCount(e), true);
    const where = placed.get(e) ?? at + 8;
    if (placed.has(e)) dv.setUint32(at + 8, where, true);
    if (typeof e.values === 'string') {
      for (let i = 0; i < e.values.length; i++) head[where + i] = e.values.charCodeAt(i) & 0x7f;
      head[where + e.values.length] = 0;
    } else {
      const size = fieldSize(e.type);
      e.values.forEach((v, i) => put(where + i * size, e.type, v));
    }
  });
  dv.setUint32(ifdOffset + 2 + 12 * entries.length, 0, true); // no further IFD

  const dir = dirname(path);
  const tmp = join(dir, `.${basename(path)}.${process.pid}-${randomBytes(4).toString('hex')}.tmp`);
  let fh;
  try {
    fh = await open(tmp, 'wx');
  } catch (err) {
    throw writeError(path, err);
  }
  try {
    await fh.write(head, 0, head.length, 0);
    // Values in chunks of whole rows: copy, turn NaN into the nodata value, fix byte order.
    const littleHost = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
    const chunkRows = Math.max(1, Math.floor((4 * 1024 * 1024) / rowBytes));
    const chunk = new ArrayBuffer(Math.min(height, chunkRows) * rowBytes);
    const Ctor = values.constructor as new (b: ArrayBuffer, o: number, n: number) => RasterValues;
    const fill = float && nodata !== null && !Number.isNaN(nodata) ? (values instanceof Float32Array ? Math.fround(nodata) : nodata) : null;
    let pos = dataStart;
    for (let r0 = 0; r0 < height; r0 += chunkRows) {
      const r1 = Math.min(height, r0 + chunkRows);
      const n = (r1 - r0) * width;
      const view = new Ctor(chunk, 0, n);
      view.set(values.subarray(r0 * width, r1 * width) as never);
      if (fill !== null) {
        for (let i = 0; i < n; i++) if (view[i] !== view[i]) view[i] = fill;
      }
      const bytes = Buffer.from(chunk, 0, n * bytesPerSample);
      if (!littleHost && bytesPerSample > 1) {
        if (bytesPerSample === 2) bytes.swap16();
        else if (bytesPerSample === 4) bytes.swap32();
        else bytes.swap64();
      }
      await fh.write(bytes, 0, bytes.length, pos);
      pos += bytes.length;
    }
    await fh.close();
    fh = undefined;
    await rename(tmp, path);
  } catch (err) {
    if (fh) await fh.close().catch(() => undefined);
    await unlink(tmp).catch(() => undefined);
    if (err instanceof InputError) throw err;
    if ((err as NodeJS.ErrnoException)?.code) throw writeError(path, err);
    throw err;
  }
}

/** A file-system failure while writing: a runtime failure (not bad input) that keeps its error code, so callers can say it in plain words. */
function writeError(path: string, err: unknown): Error {
  return Object.assign(new Error(`cannot write ${path}: ${fsReason(err)}`), { code: (err as NodeJS.ErrnoException).code, path });
}
