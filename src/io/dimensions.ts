/**
 * How many cells an input holds, from its header alone (no values read): for the memory a
 * scheduler should grant a run on it. GeoTIFF (classic and BigTIFF: ImageWidth × ImageLength of the
 * first image), .npy (the shape), GDAL VRT (rasterXSize × rasterYSize), a folder of GeoTIFF tiles
 * (their sum); anything else (text) from its size, as one cell per 8 bytes.
 */
import { closeSync, openSync, readSync, readdirSync, statSync } from 'node:fs';
import { extname, join } from 'node:path';

function head(path: string, n: number): Buffer {
  const fd = openSync(path, 'r');
  try {
    const b = Buffer.alloc(n);
    const got = readSync(fd, b, 0, n, 0);
    return b.subarray(0, got);
  } finally {
    closeSync(fd);
  }
}

function readAt(path: string, at: number, n: number): Buffer {
  const fd = openSync(path, 'r');
  try {
    const b = Buffer.alloc(n);
    const got = readSync(fd, b, 0, n, at);
    return b.subarray(0, got);
  } finally {
    closeSync(fd);
  }
}

/** Width × height of the first image of a TIFF, or null when the header is not one. */
function tiffCells(path: string): number | null {
  const h = head(path, 16);
  if (h.length < 8) return null;
  const le = h[0] === 0x49 && h[1] === 0x49;
  if (!le && !(h[0] === 0x4d && h[1] === 0x4d)) return null;
  const u16 = (b: Buffer, o: number) => (le ? b.readUInt16LE(o) : b.readUInt16BE(o));
  const u32 = (b: Buffer, o: number) => (le ? b.readUInt32LE(o) : b.readUInt32BE(o));
  const u64 = (b: Buffer, o: number) => Number(le ? b.readBigUInt64LE(o) : b.readBigUInt64BE(o));
  const big = u16(h, 2) === 43;
  if (!big && u16(h, 2) !== 42) return null;
  const ifd = big ? u64(h, 8) : u32(h, 4);
  const countBytes = big ? 8 : 2, entryBytes = big ? 20 : 12;
  const cb = readAt(path, ifd, countBytes);
  if (cb.length < countBytes) return null;
  const count = Math.min(big ? u64(cb, 0) : u16(cb, 0), 4096);
  const e = readAt(path, ifd + countBytes, count * entryBytes);
  let w = 0, hgt = 0;
  for (let k = 0; k + entryBytes <= e.length; k += entryBytes) {
    const tag = u16(e, k), type = u16(e, k + 2), vo = k + (big ? 12 : 8);
    const v = type === 3 ? u16(e, vo) : type === 4 ? u32(e, vo) : type === 16 ? u64(e, vo) : 0;
    if (tag === 256) w = v;
    else if (tag === 257) hgt = v;
  }
  return w > 0 && hgt > 0 ? w * hgt : null;
}

function npyCells(path: string): number | null {
  const text = head(path, 4096).toString('latin1');
  const m = /'shape':\s*\(([^)]*)\)/.exec(text);
  if (!m) return null;
  const dims = m[1].split(',').map((s) => s.trim()).filter(Boolean).map(Number);
  return dims.length && dims.every((d) => Number.isSafeInteger(d) && d > 0) ? dims.reduce((a, b) => a * b, 1) : null;
}

function vrtCells(path: string): number | null {
  const text = head(path, 8192).toString('utf8');
  const x = /rasterXSize\s*=\s*"(\d+)"/.exec(text), y = /rasterYSize\s*=\s*"(\d+)"/.exec(text);
  return x && y ? Number(x[1]) * Number(y[1]) : null;
}

/** The cells of an input, from its header (an estimate from the file size when the header does not say). */
export function inputCells(path: string): number {
  let st;
  try {
    st = statSync(path);
  } catch {
    return 0;
  }
  if (st.isDirectory()) {
    let sum = 0;
    for (const n of readdirSync(path)) if (/\.tiff?$/i.test(n)) sum += inputCells(join(path, n));
    return sum;
  }
  try {
    const ext = extname(path).toLowerCase();
    const c = ext === '.vrt' ? vrtCells(path) : ext === '.npy' ? npyCells(path) : tiffCells(path) ?? npyCells(path);
    if (c !== null) return c;
  } catch { /* unreadable: the run says why; estimate from the size */ }
  return Math.ceil(st.size / 8);
}
