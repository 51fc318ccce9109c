/**
 * Per-frame values of a sampled run (one row per frame, one column per variable), read in chunks:
 * text columns (spaces, tabs or commas; `#` comments; an optional header line of names) or a 2-D
 * `.npy` array of shape (frames, columns). Only the columns asked for are kept, as one flat
 * Float64Array per chunk (`frames × columns`, frame-major): no object per frame, so a series of
 * 10⁷ frames streams through in a few megabytes.
 */
import { InputError } from '../errors.js';
import { openForReading, readAt, printable } from './common.js';
import { readNpyHeader } from './npy.js';

export interface FrameChunk {
  /** Index of the first frame of the chunk in the series (0-based). */
  start: number;
  frames: number;
  /** `frames × columns.length` values, frame-major, in the order of `columns`. */
  data: Float64Array;
}

export interface FrameSourceInfo {
  format: 'text' | 'npy';
  /** Fields per row in the file. */
  fields: number;
  /** Names from a header line (text), when there is one. */
  names: string[] | null;
}

/** Frames per chunk. */
export const FRAME_CHUNK = 65536;
const BYTES_PER_READ = 4 * 1024 * 1024;

/**
 * Read the frames of `path`, keeping the 1-based `columns`, chunk by chunk: `onChunk` is called
 * with each chunk (its data array is reused: copy what must outlive the call). Non-finite values
 * are refused with the line (text) or frame (npy) and column.
 */
export async function readFrames(
  path: string,
  columns: readonly number[],
  onChunk: (chunk: FrameChunk) => void,
): Promise<FrameSourceInfo> {
  for (const c of columns) {
    if (!Number.isInteger(c) || c < 1) throw new InputError(`sample columns are whole numbers from 1 up, got ${c}`);
  }
  return path.toLowerCase().endsWith('.npy') ? readNpyFrames(path, columns, onChunk) : readTextFrames(path, columns, onChunk);
}

const SEPARATOR = /[\s,]+/;

function notFinite(path: string, where: string, col: number, field: string): InputError {
  return new InputError(
    `${path} ${where}, column ${col}: ${field === '' ? 'empty field' : `'${printable(field)}' is not a finite number`}; ` +
      'every frame needs a finite value in every column used (remove or fix the frame)',
  );
}

async function readTextFrames(path: string, columns: readonly number[], onChunk: (c: FrameChunk) => void): Promise<FrameSourceInfo> {
  const { fh, size } = await openForReading(path);
  const k = columns.length;
  const data = new Float64Array(FRAME_CHUNK * k);
  const cols = columns.map((c) => c - 1);
  const need = Math.max(...columns);
  let frames = 0, inChunk = 0, lineNo = 0, fields = -1, firstLine = 0;
  let names: string[] | null = null;
  const decoder = new TextDecoder('utf-8');
  let rest = '';
  const line = (raw: string): void => {
    lineNo++;
    const s = raw.trim();
    if (s === '' || s.charCodeAt(0) === 35 /* # */) return;
    const parts = s.split(SEPARATOR);
    if (fields < 0) {
      if (names === null && frames === 0 && inChunk === 0 && parts.some((p) => !isNumber(p))) {
        names = parts;
        return;
      }
      fields = parts.length;
      firstLine = lineNo;
      if (need > fields) {
        throw new InputError(`${path}: column ${need} was asked for but line ${lineNo} has ${fields} field${fields === 1 ? '' : 's'}; check the column numbers`);
      }
    } else if (parts.length !== fields) {
      throw new InputError(`${path} line ${lineNo}: the row has ${parts.length} fields but line ${firstLine} has ${fields}; every row needs the same number of fields`);
    }
    const base = inChunk * k;
    for (let j = 0; j < k; j++) {
      const f = parts[cols[j]];
      const v = f === '' ? NaN : Number(f);
      if (!Number.isFinite(v)) throw notFinite(path, `line ${lineNo}`, cols[j] + 1, f);
      data[base + j] = v;
    }
    if (++inChunk === FRAME_CHUNK) {
      onChunk({ start: frames, frames: inChunk, data });
      frames += inChunk;
      inChunk = 0;
    }
  };
  try {
    for (let pos = 0; pos < size; pos += BYTES_PER_READ) {
      const bytes = await readAt(fh, pos, Math.min(BYTES_PER_READ, size - pos));
      let text = rest + decoder.decode(bytes, { stream: pos + bytes.length < size });
      if (pos === 0 && text.charCodeAt(0) === 0xfeff) text = text.slice(1); // byte-order mark
      let from = 0;
      for (let nl = text.indexOf('\n'); nl >= 0; nl = text.indexOf('\n', from)) {
        line(text.slice(from, nl));
        from = nl + 1;
      }
      rest = text.slice(from);
      if (bytes.length === 0) break;
    }
    if (rest !== '') line(rest);
    if (inChunk > 0) onChunk({ start: frames, frames: inChunk, data: data.subarray(0, inChunk * k) });
    frames += inChunk;
  } finally {
    await fh.close().catch(() => undefined);
  }
  if (frames === 0) throw new InputError(`${path}: no frames found (only blank lines, comments or a header); give one row of numbers per frame`);
  return { format: 'text', fields: Math.max(fields, 0), names };
}

function isNumber(s: string): boolean {
  if (s === '') return false;
  const v = Number(s);
  return v === v || /^[+-]?nan$/i.test(s);
}

async function readNpyFrames(path: string, columns: readonly number[], onChunk: (c: FrameChunk) => void): Promise<FrameSourceInfo> {
  const { fh, size } = await openForReading(path);
  try {
    const { dtype, fortran, shape, dataOffset } = await readNpyHeader(path, fh, size);
    const [rows, fields] = shape;
    if (rows === 0) throw new InputError(`${path} holds no frames (shape (0, ${fields})); save the frames as a 2-D array (frames, variables)`);
    const need = Math.max(...columns);
    if (need > fields) throw new InputError(`${path}: column ${need} was asked for but the array has ${fields} column${fields === 1 ? '' : 's'} (shape (${rows}, ${fields})); check the column numbers`);
    if (size - dataOffset < rows * fields * dtype.size) {
      throw new InputError(`${path} is truncated: its header declares ${rows}×${fields} values of ${dtype.size} bytes but only ${size - dataOffset} bytes follow; save the array again`);
    }
    const k = columns.length;
    const data = new Float64Array(FRAME_CHUNK * k);
    const hostLittle = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
    const swap = dtype.size > 1 && dtype.bigEndian === hostLittle;
    const view = (bytes: Uint8Array, count: number) => {
      const buf = Buffer.from(bytes.slice()); // an aligned copy
      if (swap) {
        if (dtype.size === 2) buf.swap16();
        else if (dtype.size === 4) buf.swap32();
        else buf.swap64();
      }
      const ab = buf.buffer as ArrayBuffer, o = buf.byteOffset;
      if (dtype.kind === 'f') return dtype.size === 4 ? new Float32Array(ab, o, count) : new Float64Array(ab, o, count);
      if (dtype.kind === 'i') return dtype.size === 1 ? new Int8Array(ab, o, count) : dtype.size === 2 ? new Int16Array(ab, o, count) : new Int32Array(ab, o, count);
      return dtype.size === 1 ? new Uint8Array(ab, o, count) : dtype.size === 2 ? new Uint16Array(ab, o, count) : new Uint32Array(ab, o, count);
    };
    for (let start = 0; start < rows; start += FRAME_CHUNK) {
      const count = Math.min(FRAME_CHUNK, rows - start);
      if (!fortran) {
        // C order: the chunk's rows are contiguous
        const src = view(await readAt(fh, dataOffset + start * fields * dtype.size, count * fields * dtype.size), count * fields);
        for (let i = 0; i < count; i++) {
          for (let j = 0; j < k; j++) {
            const v = src[i * fields + columns[j] - 1];
            if (!Number.isFinite(v)) throw notFinite(path, `frame ${start + i + 1} (row ${start + i} of the array)`, columns[j], String(v));
            data[i * k + j] = v;
          }
        }
      } else {
        // Fortran order: each column is contiguous; read the chunk's stretch of each column asked for
        for (let j = 0; j < k; j++) {
          const c = columns[j] - 1;
          const src = view(await readAt(fh, dataOffset + (c * rows + start) * dtype.size, count * dtype.size), count);
          for (let i = 0; i < count; i++) {
            const v = src[i];
            if (!Number.isFinite(v)) throw notFinite(path, `frame ${start + i + 1} (row ${start + i} of the array)`, columns[j], String(v));
            data[i * k + j] = v;
          }
        }
      }
      onChunk({ start, frames: count, data: count === FRAME_CHUNK ? data : data.subarray(0, count * k) });
    }
    return { format: 'npy', fields, names: null };
  } finally {
    await fh.close().catch(() => undefined);
  }
}
