/**
 * NumPy `.npy` arrays (format versions 1.0, 2.0 and 3.0) → Grid. A 2-D array of shape
 * (rows, cols) becomes a grid `cols` wide and `rows` high, row 0 first, in C or Fortran
 * order. Georeferencing comes from `origin` (centre of element [0, 0]) and `spacing`.
 */
import { InputError } from '../errors.js';
import { Grid, gridValues, type GeoTransform, type GridValues } from '../surface/grid.js';
import { checkGridSize, infinityError, nodataFor, openForReading, printable, readAt } from './common.js';

export interface NpyReadOptions {
  /** Map coordinates of the centre of element [0, 0]; default [0, 0]. */
  origin?: [number, number];
  /** Step [dx, dy] from one column to the next and from one row to the next; default [1, 1]. */
  spacing?: [number, number];
  /** Values equal to this are nodata. */
  nodata?: number;
}

type Kind = 'f' | 'i' | 'u';

export interface Dtype {
  kind: Kind;
  size: number;
  bigEndian: boolean;
}

const SUPPORTED = "'<f4', '<f8', '<i2', '<i4', '|u1', '<u2' (also '|i1', '<u4' and big-endian '>' forms)";

export function parseDescr(path: string, descr: string): Dtype {
  const m = /^([<>|=])([fiu])(\d+)$/.exec(descr);
  const unsupported = () =>
    new InputError(`${path}: the array has dtype '${printable(descr)}', which sill does not read; save it as one of ${SUPPORTED}, e.g. with array.astype('<f8')`);
  if (!m) throw unsupported();
  const kind = m[2] as Kind;
  const size = Number(m[3]);
  const ok = kind === 'f' ? size === 4 || size === 8 : size === 1 || size === 2 || size === 4;
  if (!ok) throw unsupported();
  return { kind, size, bigEndian: m[1] === '>' };
}

export interface NpyHeader {
  dtype: Dtype;
  fortran: boolean;
  shape: number[];
  dataOffset: number;
}

/** The header of a .npy file; `ndim`: the number of dimensions the caller reads (2 for a grid, 3 for a 3-D grid). */
export async function readNpyHeader(path: string, fh: import('node:fs/promises').FileHandle, size: number, ndim: 2 | 3 = 2): Promise<NpyHeader> {
  const pre = await readAt(fh, 0, 12);
  const magic = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93NUMPY
  if (pre.length < 6 || magic.some((b, i) => pre[i] !== b)) {
    throw new InputError(`${path} is not a .npy file (it does not start with the \\x93NUMPY magic string); save the array with numpy.save`);
  }
  if (pre.length < 10) throw new InputError(`${path} is truncated inside the .npy header; save the array again`);
  const major = pre[6];
  const dv = new DataView(pre.buffer, pre.byteOffset, pre.byteLength);
  let headerLen: number;
  let headerStart: number;
  if (major === 1) {
    headerLen = dv.getUint16(8, true);
    headerStart = 10;
  } else if (major === 2 || major === 3) {
    if (pre.length < 12) throw new InputError(`${path} is truncated inside the .npy header; save the array again`);
    headerLen = dv.getUint32(8, true);
    headerStart = 12;
  } else {
    throw new InputError(`${path} uses .npy format version ${major}.${pre[7]}, which sill does not read (1.0, 2.0 and 3.0 are read); save it again with numpy.save`);
  }
  if (headerStart + headerLen > size) {
    throw new InputError(`${path} is truncated inside the .npy header (${headerStart + headerLen} bytes declared, ${size} in the file); save the array again`);
  }
  const header = new TextDecoder(major === 3 ? 'utf-8' : 'latin1').decode(await readAt(fh, headerStart, headerLen));
  const descr = /'descr'\s*:\s*'([^']*)'/.exec(header);
  const fortran = /'fortran_order'\s*:\s*(True|False)/.exec(header);
  const shape = /'shape'\s*:\s*\(([^)]*)\)/.exec(header);
  if (!descr || !fortran || !shape) {
    const structured = /'descr'\s*:\s*\[/.test(header);
    throw new InputError(
      structured
        ? `${path} holds a structured (record) array, which sill does not read; save a plain 2-D numeric array`
        : `${path}: the .npy header cannot be read (${JSON.stringify(header.trim().slice(0, 80))}); save the array again with numpy.save`,
    );
  }
  const dims = shape[1]
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '')
    .map((s) => Number(s.replace(/L$/, '')));
  if (dims.some((d) => !Number.isSafeInteger(d) || d < 0)) {
    throw new InputError(`${path}: the .npy shape (${shape[1]}) is not a list of whole numbers; save the array again`);
  }
  if (dims.length !== ndim) {
    throw new InputError(ndim === 2
      ? `${path} holds a ${dims.length}-D array of shape (${dims.join(', ')}); sill needs a 2-D array (rows, columns), or a 3-D array (z, y, x) for survey`
      : `${path} holds a ${dims.length}-D array of shape (${dims.join(', ')}); a 3-D grid needs a 3-D array indexed [z, y, x]`);
  }
  return { dtype: parseDescr(path, descr[1]), fortran: fortran[1] === 'True', shape: dims, dataOffset: headerStart + headerLen };
}

const CHUNK_BYTES = 8 * 1024 * 1024;

/** Read a 2-D `.npy` array as a Grid. */
export async function readNpy(path: string, opts: NpyReadOptions = {}): Promise<Grid> {
  for (const [name, p, nonzero] of [['origin', opts.origin, false], ['spacing', opts.spacing, true]] as const) {
    if (p !== undefined && (!Array.isArray(p) || p.length !== 2 || !p.every(Number.isFinite) || (nonzero && (p[0] === 0 || p[1] === 0)))) {
      throw new InputError(`${name} must be two finite numbers${nonzero ? ', neither zero' : ''}, got ${JSON.stringify(p)}`);
    }
  }
  if (opts.nodata !== undefined && typeof opts.nodata !== 'number') {
    throw new InputError(`nodata must be a number, got ${String(opts.nodata)}`);
  }
  const { fh, size } = await openForReading(path);
  try {
    const { dtype, fortran, shape, dataOffset } = await readNpyHeader(path, fh, size);
    const [rows, cols] = shape;
    if (rows === 0 || cols === 0) {
      throw new InputError(`${path} holds an empty array of shape (${rows}, ${cols}); sill needs at least 2 rows and 2 columns`);
    }
    const float64Out = dtype.size === 8 || (dtype.kind !== 'f' && dtype.size === 4);
    checkGridSize(path, cols, rows, float64Out ? 8 : 4, CHUNK_BYTES);
    const cells = rows * cols;
    const need = cells * dtype.size;
    const have = size - dataOffset;
    if (have < need) {
      throw new InputError(
        `${path} is truncated: its header declares a ${rows}×${cols} '${dtype.kind}${dtype.size}' array (${need} bytes of data) but only ${have} bytes follow; save the array again`,
      );
    }

    const values: GridValues = gridValues(cells, float64Out);
    const match = nodataFor(opts.nodata, dtype.kind === 'f' && dtype.size === 4);
    const integer = dtype.kind !== 'f';
    const hostLittle = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
    const swap = dtype.size > 1 && dtype.bigEndian === hostLittle;
    const perChunk = Math.floor(CHUNK_BYTES / dtype.size);
    let firstInf = -1; // row-major index of the first infinity (Fortran data arrives column by column)
    let infValue = 0;
    for (let start = 0; start < cells; start += perChunk) {
      const count = Math.min(perChunk, cells - start);
      const bytes = await readAt(fh, dataOffset + start * dtype.size, count * dtype.size);
      if (bytes.length < count * dtype.size) throw new InputError(`${path} is truncated: the data ends early; save the array again`);
      const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.length);
      if (swap) {
        if (dtype.size === 2) buf.swap16();
        else if (dtype.size === 4) buf.swap32();
        else buf.swap64();
      }
      const ab = bytes.buffer as ArrayBuffer;
      const src =
        dtype.kind === 'f'
          ? dtype.size === 4 ? new Float32Array(ab, bytes.byteOffset, count) : new Float64Array(ab, bytes.byteOffset, count)
          : dtype.kind === 'i'
            ? dtype.size === 1 ? new Int8Array(ab, bytes.byteOffset, count) : dtype.size === 2 ? new Int16Array(ab, bytes.byteOffset, count) : new Int32Array(ab, bytes.byteOffset, count)
            : dtype.size === 1 ? new Uint8Array(ab, bytes.byteOffset, count) : dtype.size === 2 ? new Uint16Array(ab, bytes.byteOffset, count) : new Uint32Array(ab, bytes.byteOffset, count);
      for (let i = 0; i < count; i++) {
        const lin = start + i;
        const k = fortran ? (lin % rows) * cols + Math.floor(lin / rows) : lin;
        const v = src[i];
        if (integer || v - v === 0) {
          values[k] = v === match ? NaN : v;
        } else if (v !== v || v === match) {
          values[k] = NaN;
        } else {
          if (firstInf < 0 || k < firstInf) {
            firstInf = k;
            infValue = v;
          }
          if (!fortran) break;
        }
      }
      if (firstInf >= 0 && !fortran) break;
    }
    if (firstInf >= 0) throw infinityError(path, infValue, firstInf % cols, Math.floor(firstInf / cols));

    const [X, Y] = opts.origin ?? [0, 0];
    const [DX, DY] = opts.spacing ?? [1, 1];
    const transform: GeoTransform = [X - DX / 2, DX, 0, Y - DY / 2, 0, DY];
    return new Grid({ width: cols, height: rows, values, transform, crs: null, nodata: opts.nodata ?? null });
  } finally {
    await fh.close().catch(() => undefined);
  }
}
