/**
 * Decoding of TIFF strips and tiles straight into a grid's values: read the block's bytes,
 * decompress (none, DEFLATE through node:zlib, LZW and PackBits in typed-array loops), put the
 * samples in the machine's byte order, undo the predictor (2: horizontal differencing, 3:
 * floating-point byte planes) in place and copy the band's samples into their rows.
 *
 * The same code runs on the main thread and in the decoding workers (tiff-worker.ts): blocks are
 * handed out in increasing order from a shared counter, each block writes only its own cells, so
 * the values do not depend on which thread decoded what. Nodata, NaN and infinities are dealt with
 * afterwards in one pass in row-major order (`finishValues`), so the first bad cell named is the
 * same whatever the threads did.
 *
 * Only node: built-ins are imported here: the workers load this module on their own.
 */
import { readSync } from 'node:fs';
import { inflateSync } from 'node:zlib';

/** What a decoder needs to know about the band and its blocks; plain data (sent to workers). */
export interface BlockLayout {
  littleEndian: boolean;
  /** TIFF compression code: 1 none, 5 LZW, 8 or 32946 DEFLATE, 32773 PackBits. */
  compression: number;
  /** 1 none, 2 horizontal differencing, 3 floating point. */
  predictor: number;
  /** 1 unsigned, 2 signed integer, 3 floating point. */
  sampleFormat: number;
  bytesPerSample: number;
  /** Samples per pixel stored in each block: the file's count when pixel-interleaved, else 1. */
  samplesPerBlockPixel: number;
  /** Position of the band's sample within a pixel of a block. */
  sampleIndex: number;
  tiled: boolean;
  blockWidth: number;
  blockHeight: number;
  blocksAcross: number;
  /** Block numbers of the band are firstBlock … firstBlock + blockCount − 1. */
  firstBlock: number;
  blockCount: number;
  width: number;
  height: number;
}

/** A block that could not be decoded: the lowest such block number wins, whichever thread met it. */
export interface BlockFailure {
  block: number;
  reason: string;
}

/** Blocks taken from the shared counter at a time: few enough to balance, enough to keep the counter cold. */
export function blocksPerGrab(layout: BlockLayout): number {
  const bytes = layout.blockWidth * layout.blockHeight * layout.bytesPerSample * layout.samplesPerBlockPixel;
  return Math.max(1, Math.min(64, Math.floor((1 << 20) / Math.max(1, bytes))));
}

/** Scratch buffers one thread reuses from block to block. */
class Scratch {
  raw = new Uint8Array(0);
  block = new Uint8Array(0);
  copy = new Uint8Array(0);
  lzwStart = new Int32Array(4096);
  lzwLength = new Int32Array(4096);

  rawOf(n: number): Uint8Array {
    if (this.raw.length < n) this.raw = new Uint8Array(n);
    return this.raw;
  }

  blockOf(n: number): Uint8Array {
    // a multiple of 8 bytes from an 8-aligned start, so every sample type can view it
    if (this.block.length < n) this.block = new Uint8Array(new ArrayBuffer((n + 7) & ~7));
    return this.block;
  }

  copyOf(n: number): Uint8Array {
    if (this.copy.length < n) this.copy = new Uint8Array(n);
    return this.copy;
  }
}

/**
 * Decode blocks of the band into `out` until the shared counter `next[0]` passes the last block,
 * taking `grab` blocks at a time. Returns the first failure met, or null; stops at a failure.
 */
export function decodeShare(
  fd: number,
  layout: BlockLayout,
  offsets: Float64Array,
  counts: Float64Array,
  out: Float32Array | Float64Array,
  next: Int32Array,
  grab: number,
): BlockFailure | null {
  const scratch = new Scratch();
  for (;;) {
    const from = Atomics.add(next, 0, grab);
    if (from >= layout.blockCount) return null;
    const to = Math.min(layout.blockCount, from + grab);
    for (let k = from; k < to; k++) {
      const failure = decodeBlock(fd, layout, offsets, counts, out, k, scratch);
      if (failure !== null) return { block: k, reason: failure };
    }
  }
}

/** The cells of one decoded block, clipped to the image: `rows` × `cols` values from (row0, col0). */
export interface BlockCells {
  values: Float32Array | Float64Array;
  row0: number;
  col0: number;
  rows: number;
  cols: number;
}

/**
 * Decode block k of the band (0-based within the band) on its own, into an array of its cells
 * (raw samples: nodata and infinities are the caller's, as with decodeShare). A reason string when
 * it cannot be decoded. Windowed reads (the mosaic's overlap check) decode only the blocks they need.
 */
export function decodeBlockCells(fd: number, L: BlockLayout, offsets: Float64Array, counts: Float64Array, k: number, float64: boolean): BlockCells | string {
  const bx = k % L.blocksAcross;
  const by = (k - bx) / L.blocksAcross;
  const row0 = by * L.blockHeight, col0 = bx * L.blockWidth;
  const rows = Math.min(L.blockHeight, L.height - row0), cols = Math.min(L.blockWidth, L.width - col0);
  // the block as a one-block image of its own clipped size: decodeBlock writes it at (0, 0)
  const one: BlockLayout = { ...L, width: cols, height: rows, blocksAcross: 1, firstBlock: L.firstBlock + k, blockCount: 1 };
  const values = float64 ? new Float64Array(rows * cols) : new Float32Array(rows * cols);
  const failure = decodeBlock(fd, one, offsets, counts, values, 0, new Scratch());
  return failure ?? { values, row0, col0, rows, cols };
}

/** Decode block k of the band (0-based within the band); a reason string when it cannot be decoded. */
function decodeBlock(
  fd: number,
  L: BlockLayout,
  offsets: Float64Array,
  counts: Float64Array,
  out: Float32Array | Float64Array,
  k: number,
  scratch: Scratch,
): string | null {
  const bx = k % L.blocksAcross;
  const by = (k - bx) / L.blocksAcross;
  const row0 = by * L.blockHeight;
  const col0 = bx * L.blockWidth;
  const rows = Math.min(L.blockHeight, L.height - row0);
  const cols = Math.min(L.blockWidth, L.width - col0);
  const pixelBytes = L.bytesPerSample * L.samplesPerBlockPixel;
  const rowBytes = L.blockWidth * pixelBytes;
  const need = rowBytes * rows; // the rows that hold cells of the image
  const offset = offsets[L.firstBlock + k];
  const count = counts[L.firstBlock + k];

  // Uncompressed float samples in the machine's order, one per pixel, full-width strips: read
  // straight into the values.
  if (L.compression === 1 && L.littleEndian && L.predictor === 1 && L.samplesPerBlockPixel === 1 && !L.tiled &&
      L.sampleFormat === 3 && L.bytesPerSample === out.BYTES_PER_ELEMENT) {
    if (count < need) return `it holds ${count} bytes where ${need} are needed`;
    const dst = new Uint8Array(out.buffer, out.byteOffset + row0 * L.width * L.bytesPerSample, need);
    const got = readFully(fd, dst, offset);
    return got < need ? `the file ends ${need - got} bytes into it` : null;
  }

  let data: Uint8Array;
  if (L.compression === 1) {
    if (count < need) return `it holds ${count} bytes where ${need} are needed`;
    data = scratch.blockOf(need).subarray(0, need);
    if (readFully(fd, data, offset) < need) return 'the file ends inside it';
  } else {
    const raw = scratch.rawOf(count).subarray(0, count);
    if (readFully(fd, raw, offset) < count) return 'the file ends inside it';
    const block = scratch.blockOf(need);
    let got: number;
    if (L.compression === 8 || L.compression === 32946) {
      let inflated: Buffer;
      try {
        inflated = inflateSync(raw);
      } catch (err) {
        return `DEFLATE data is damaged (${(err as Error).message})`;
      }
      got = Math.min(need, inflated.length);
      block.set(inflated.subarray(0, got));
    } else if (L.compression === 5) {
      got = lzwDecode(raw, block, need, scratch);
      if (got < 0) return 'LZW data is damaged (a code refers to a string not yet defined)';
    } else if (L.compression === 32773) {
      got = packBitsDecode(raw, block, need);
    } else {
      return `compression ${L.compression} is not decoded here`;
    }
    if (got < need) return `it decodes to ${got} bytes instead of ${need}`;
    data = block.subarray(0, need);
  }

  if (L.predictor === 3) {
    floatPredictor(data, rows, rowBytes, L.bytesPerSample, L.samplesPerBlockPixel, scratch);
  } else {
    if (!L.littleEndian && L.bytesPerSample > 1) swapBytes(data, L.bytesPerSample);
    if (L.predictor === 2) horizontalPredictor(data, rows, rowBytes, L.bytesPerSample, L.samplesPerBlockPixel);
  }
  copySamples(data, L, out, row0, col0, rows, cols);
  return null;
}

/** Read into `dst` from file position `position` until it is full or the file ends; bytes read. */
function readFully(fd: number, dst: Uint8Array, position: number): number {
  let got = 0;
  while (got < dst.length) {
    const n = readSync(fd, dst, got, dst.length - got, position + got);
    if (n === 0) break;
    got += n;
  }
  return got;
}

/** Reverse the bytes of every `size`-byte sample (big-endian file → this machine's order). */
function swapBytes(b: Uint8Array, size: number): void {
  if (size === 2) {
    for (let i = 0; i + 1 < b.length; i += 2) { const t = b[i]; b[i] = b[i + 1]; b[i + 1] = t; }
  } else if (size === 4) {
    for (let i = 0; i + 3 < b.length; i += 4) {
      let t = b[i]; b[i] = b[i + 3]; b[i + 3] = t;
      t = b[i + 1]; b[i + 1] = b[i + 2]; b[i + 2] = t;
    }
  } else if (size === 8) {
    for (let i = 0; i + 7 < b.length; i += 8) {
      for (let j = 0; j < 4; j++) { const t = b[i + j]; b[i + j] = b[i + 7 - j]; b[i + 7 - j] = t; }
    }
  }
}

/**
 * Predictor 2 (TIFF 6.0 §14): each sample is stored as the difference from the sample of the
 * same channel one pixel to the left, modulo 2^bits; samples already in the machine's order.
 */
function horizontalPredictor(b: Uint8Array, rows: number, rowBytes: number, size: number, spp: number): void {
  if (size === 1) {
    for (let r = 0; r < rows; r++) {
      const s = r * rowBytes;
      for (let i = s + spp; i < s + rowBytes; i++) b[i] = b[i] + b[i - spp];
    }
  } else if (size === 2) {
    const w = new Uint16Array(b.buffer, b.byteOffset, (rows * rowBytes) >> 1);
    const n = rowBytes >> 1;
    for (let r = 0; r < rows; r++) {
      const s = r * n;
      for (let i = s + spp; i < s + n; i++) w[i] = w[i] + w[i - spp];
    }
  } else if (size === 4) {
    const w = new Uint32Array(b.buffer, b.byteOffset, (rows * rowBytes) >> 2);
    const n = rowBytes >> 2;
    for (let r = 0; r < rows; r++) {
      const s = r * n;
      for (let i = s + spp; i < s + n; i++) w[i] = (w[i] + w[i - spp]) >>> 0;
    }
  } else {
    throw new Error(`predictor 2 with ${8 * size}-bit samples`);
  }
}

/**
 * Predictor 3 (Adobe Photoshop TIFF technical note 3, as libtiff writes it): a row's bytes
 * are differenced byte by byte across the row with a stride of one pixel, after the samples'
 * bytes were regrouped into planes, most significant byte first. Undo the differencing, then
 * put each sample's bytes back together in the machine's (little-endian) order.
 */
function floatPredictor(b: Uint8Array, rows: number, rowBytes: number, size: number, spp: number, scratch: Scratch): void {
  const tmp = scratch.copyOf(rowBytes);
  const wc = rowBytes / size; // samples in a row
  for (let r = 0; r < rows; r++) {
    const s = r * rowBytes;
    if (spp === 1) {
      let acc = 0;
      for (let i = 0; i < rowBytes; i++) tmp[i] = acc = (acc + b[s + i]) & 255;
    } else {
      for (let i = s + spp; i < s + rowBytes; i++) b[i] = b[i] + b[i - spp];
      for (let i = 0; i < rowBytes; i++) tmp[i] = b[s + i];
    }
    if (size === 4) {
      const w = new Uint32Array(b.buffer, b.byteOffset + s, wc);
      for (let i = 0; i < wc; i++) w[i] = (tmp[i] << 24) | (tmp[wc + i] << 16) | (tmp[2 * wc + i] << 8) | tmp[3 * wc + i];
    } else {
      for (let i = 0; i < wc; i++) {
        const o = s + i * size;
        for (let j = 0; j < size; j++) b[o + j] = tmp[(size - 1 - j) * wc + i];
      }
    }
  }
}

/** Copy the band's samples of a decoded block (machine order) into their cells of `out`. */
function copySamples(
  data: Uint8Array,
  L: BlockLayout,
  out: Float32Array | Float64Array,
  row0: number,
  col0: number,
  rows: number,
  cols: number,
): void {
  const spp = L.samplesPerBlockPixel;
  const rowSamples = L.blockWidth * spp;
  const n = rows * rowSamples;
  const buf = data.buffer, off = data.byteOffset;
  const W = L.width;
  let src: Uint8Array | Int8Array | Uint16Array | Int16Array | Uint32Array | Int32Array | Float32Array | Float64Array;
  const f = L.sampleFormat, size = L.bytesPerSample;
  if (f === 3) src = size === 4 ? new Float32Array(buf, off, n) : new Float64Array(buf, off, n);
  else if (size === 1) src = f === 2 ? new Int8Array(buf, off, n) : new Uint8Array(buf, off, n);
  else if (size === 2) src = f === 2 ? new Int16Array(buf, off, n) : new Uint16Array(buf, off, n);
  else src = f === 2 ? new Int32Array(buf, off, n) : new Uint32Array(buf, off, n);
  if (spp === 1 && src.BYTES_PER_ELEMENT === out.BYTES_PER_ELEMENT && f === 3) {
    // same float type: a row is one memory copy
    const same = src as Float32Array | Float64Array;
    for (let r = 0; r < rows; r++) {
      const s = r * rowSamples;
      (out as Float64Array).set((same as Float64Array).subarray(s, s + cols), (row0 + r) * W + col0);
    }
    return;
  }
  const first = L.sampleIndex;
  for (let r = 0; r < rows; r++) {
    const s = r * rowSamples + first;
    const d = (row0 + r) * W + col0;
    for (let c = 0; c < cols; c++) out[d + c] = src[s + c * spp];
  }
}

/**
 * TIFF LZW (TIFF 6.0 §13): MSB-first codes of 9–12 bits, 256 clears the table, 257 ends the
 * data; the code width grows one code early, as every TIFF writer does. A table entry is the
 * string old + (first byte of the next string), which the output already holds contiguously
 * where old was written: so an entry is kept as (start in the output, length) and decoding a
 * code is a copy from earlier output. Decoding stops once `limit` bytes are out.
 * Returns the bytes written into `dst` (at most `limit`), or −1 for a code not yet defined.
 */
function lzwDecode(src: Uint8Array, dst: Uint8Array, limit: number, s: Scratch): number {
  const start = s.lzwStart, length = s.lzwLength;
  const n = src.length;
  let i = 0, acc = 0, accBits = 0;
  let width = 9, nextCode = 258;
  let oldPos = -1, oldLen = 0;
  let o = 0;
  while (o < limit) {
    while (accBits < width) {
      if (i >= n) return Math.min(o, limit);
      acc = ((acc << 8) | src[i++]) >>> 0;
      accBits += 8;
    }
    accBits -= width;
    const code = (acc >>> accBits) & ((1 << width) - 1);
    acc &= (1 << accBits) - 1;
    if (code === 257) break;
    if (code === 256) {
      width = 9;
      nextCode = 258;
      oldPos = -1;
      continue;
    }
    let len: number;
    if (code < 256) {
      dst[o] = code;
      len = 1;
    } else if (code < nextCode && oldPos >= 0) {
      // a known string: copy it from where it was first written
      len = length[code];
      const from = start[code];
      const end = Math.min(len, limit - o);
      for (let k = 0; k < end; k++) dst[o + k] = dst[from + k];
    } else if (code === nextCode && oldPos >= 0) {
      // the string being defined: old + first byte of old (the copy overlaps by one byte)
      len = oldLen + 1;
      const end = Math.min(len, limit - o);
      for (let k = 0; k < end; k++) dst[o + k] = dst[oldPos + k];
    } else {
      return -1;
    }
    if (oldPos >= 0 && nextCode < 4096) {
      start[nextCode] = oldPos;
      length[nextCode] = oldLen + 1;
      nextCode++;
      if (nextCode + 1 >= 1 << width && width < 12) width++;
    }
    oldPos = o;
    oldLen = len;
    o += len;
  }
  return Math.min(o, limit);
}

/** PackBits (TIFF 6.0 §9): n ≥ 0 copies n + 1 bytes, −127 ≤ n ≤ −1 repeats the next byte 1 − n times, −128 is skipped. */
function packBitsDecode(src: Uint8Array, dst: Uint8Array, limit: number): number {
  let i = 0, o = 0;
  while (i < src.length && o < limit) {
    const n = (src[i++] << 24) >> 24;
    if (n >= 0) {
      const end = Math.min(i + n + 1, src.length);
      const take = Math.min(end - i, limit - o);
      dst.set(src.subarray(i, i + take), o);
      o += take;
      i = end;
    } else if (n !== -128) {
      if (i >= src.length) break;
      const v = src[i++];
      const end = Math.min(o + 1 - n, limit);
      dst.fill(v, o, end);
      o = end;
    }
  }
  return o;
}
