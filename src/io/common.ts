/**
 * Helpers shared by the loaders: file-system error wording, size limits checked before
 * allocating, and the conversion of raw samples into grid values (nodata → NaN,
 * infinities refused unless they are the nodata value).
 */
import { open, type FileHandle } from 'node:fs/promises';
import { totalmem } from 'node:os';
import { InputError } from '../errors.js';
import { MAX_CELLS, type GridValues } from '../surface/grid.js';

/** A short reason for a failed file-system call, without the errno noise. */
export function fsReason(err: unknown): string {
  const e = err as NodeJS.ErrnoException;
  switch (e?.code) {
    case 'ENOENT': return 'no such file or directory';
    case 'EACCES': case 'EPERM': return 'permission denied';
    case 'EISDIR': return 'it is a directory, not a file';
    case 'ENOTDIR': return 'a part of the path is not a directory';
    case 'EMFILE': case 'ENFILE': return 'too many open files';
    case 'ELOOP': return 'too many symbolic links';
    default: return e instanceof Error ? e.message : String(err);
  }
}

/** Open a regular file for reading; any failure becomes "cannot read FILE: reason". */
export async function openForReading(path: string): Promise<{ fh: FileHandle; size: number }> {
  let fh: FileHandle;
  try {
    fh = await open(path, 'r');
  } catch (err) {
    throw new InputError(`cannot read ${path}: ${fsReason(err)}`);
  }
  try {
    const st = await fh.stat();
    if (st.isDirectory()) throw Object.assign(new Error('directory'), { code: 'EISDIR' });
    return { fh, size: st.size };
  } catch (err) {
    await fh.close().catch(() => undefined);
    throw new InputError(`cannot read ${path}: ${fsReason(err)}`);
  }
}

/** Read exactly `length` bytes at `position`, or fewer at the end of the file. */
export async function readAt(fh: FileHandle, position: number, length: number): Promise<Uint8Array> {
  const buf = new Uint8Array(length);
  let got = 0;
  while (got < length) {
    const { bytesRead } = await fh.read(buf, got, length - got, position + got);
    if (bytesRead === 0) break;
    got += bytesRead;
  }
  return got === length ? buf : buf.subarray(0, got);
}

const GIB = 1024 ** 3;

function gib(bytes: number): string {
  return `${(bytes / GIB).toFixed(1)} GiB`;
}

/**
 * Refuse a grid before allocating it: more than MAX_CELLS cells, or more bytes than the
 * machine has memory for (`bytesPerCell` for the values plus `extraBytes` of working space).
 */
export function checkGridSize(source: string, width: number, height: number, bytesPerCell: number, extraBytes = 0): void {
  const cells = width * height;
  if (!Number.isSafeInteger(cells) || cells > MAX_CELLS) {
    throw new InputError(
      `${source}: ${width}×${height} is ${cells.toExponential(3)} cells, more than the limit of ${MAX_CELLS.toExponential(0)}; ` +
        'cut the surface into smaller tiles or resample it to a coarser cell size',
    );
  }
  const need = cells * bytesPerCell + extraBytes;
  const have = totalmem();
  if (need > have) {
    throw new InputError(
      `${source}: ${width}×${height} cells need about ${gib(need)} of memory but this machine has ${gib(have)}; ` +
        'cut the surface into smaller tiles or resample it to a coarser cell size',
    );
  }
}

/** The nodata value to compare float32 samples with: GDAL compares in float32 too. */
export function nodataFor(nodata: number | null | undefined, float32: boolean): number {
  if (nodata === null || nodata === undefined || Number.isNaN(nodata)) return NaN;
  return float32 ? Math.fround(nodata) : nodata;
}

export function infinityError(source: string, value: number, col: number, row: number, where = ''): InputError {
  const sign = value > 0 ? '+' : '-';
  return new InputError(
    `${source}: cell (col ${col}, row ${row})${where} is ${sign}Infinity; an infinite value is not a usable height or energy — ` +
      `fix the file, or treat such cells as missing with nodata ${sign === '+' ? 'inf' : '-inf'} (--nodata ${sign === '+' ? 'inf' : '-inf'})`,
  );
}

/**
 * Copy `n` samples from `src` (any typed array) into `out` starting at `outStart`, turning
 * the nodata value and NaN into NaN. An infinity that is not the nodata value is an error
 * naming the cell (row-major position `outStart + i` in a grid `width` wide).
 */
export function transferSamples(
  src: ArrayLike<number>,
  n: number,
  out: GridValues,
  outStart: number,
  width: number,
  nodataMatch: number,
  integerSamples: boolean,
  source: string,
): void {
  if (integerSamples) {
    // Integers are never NaN or infinite: only the nodata value needs care.
    if (nodataMatch === nodataMatch) {
      for (let i = 0; i < n; i++) {
        const v = src[i];
        out[outStart + i] = v === nodataMatch ? NaN : v;
      }
    } else {
      for (let i = 0; i < n; i++) out[outStart + i] = src[i];
    }
    return;
  }
  for (let i = 0; i < n; i++) {
    const v = src[i];
    if (v - v === 0) {
      out[outStart + i] = v === nodataMatch ? NaN : v; // finite
    } else if (v !== v || v === nodataMatch) {
      out[outStart + i] = NaN; // NaN, or the infinity that is the nodata value
    } else {
      const k = outStart + i;
      throw infinityError(source, v, k % width, Math.floor(k / width));
    }
  }
}

/**
 * Text from a file for a one-line message: control and unprintable characters as '?', at most
 * `max` characters (then '...'), so a damaged tag or header never breaks the line.
 */
export function printable(s: string, max = 40): string {
  const clean = s.replace(/[\u0000-\u001f\u007f-\u009f\u2028\u2029\ufffd]/g, '?');
  return clean.length > max ? `${clean.slice(0, max - 3)}...` : clean;
}

/**
 * The same rules as `transferSamples`, in place over values already copied from the file: the
 * nodata value and NaN become NaN (one NaN bit pattern), and an infinity that is not the nodata
 * value is an error naming the first such cell in row-major order.
 */
export function finishValues(out: GridValues, nodataMatch: number, integerSamples: boolean, width: number, source: string): void {
  const n = out.length;
  if (integerSamples) {
    if (nodataMatch === nodataMatch) for (let i = 0; i < n; i++) if (out[i] === nodataMatch) out[i] = NaN;
    return;
  }
  for (let i = 0; i < n; i++) {
    const v = out[i];
    if (v - v === 0) {
      if (v === nodataMatch) out[i] = NaN; // finite
    } else if (v !== v || v === nodataMatch) {
      out[i] = NaN; // NaN, or the infinity that is the nodata value
    } else {
      throw infinityError(source, v, i % width, Math.floor(i / width));
    }
  }
}
