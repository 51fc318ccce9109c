/**
 * A bounded LZW decoder for TIFF strips and tiles (TIFF 6.0, section 13: codes of 9 to 12 bits,
 * most significant bit first, Clear = 256, EndOfInformation = 257, the code width growing one code
 * early as libtiff writes it). It replaces the geotiff package's decoder, which on damaged data can
 * follow a broken dictionary chain without end and grow a JavaScript array until V8 aborts the
 * process (found by the fuzz job, tests/io/fuzz.test.ts). Here the dictionary lives in typed
 * arrays, every code is checked, and the output never exceeds one block (tile width × height ×
 * bytes per pixel): data that would run past it stops there, as libtiff stops at the block size.
 * Checked against GDAL: the LZW fixtures of fixtures/io (strips, tiles, predictor 2) read back
 * cell for cell as GDAL read them (tests/io/geotiff-read.test.ts, fixtures/io/expected.json).
 */
import { addDecoder, BaseDecoder } from 'geotiff';

const CLEAR = 256;
const EOI = 257;
const FIRST = 258;
const MAX_CODES = 4096;

/** Decode one LZW block into at most `maxBytes` bytes; throws on a code that cannot occur in valid data. */
export function decodeLzw(input: Uint8Array, maxBytes: number): Uint8Array {
  const prefix = new Int16Array(MAX_CODES);
  const suffix = new Uint8Array(MAX_CODES);
  const length = new Uint16Array(MAX_CODES);
  const first = new Uint8Array(MAX_CODES);
  for (let c = 0; c < 256; c++) { prefix[c] = -1; suffix[c] = c; length[c] = 1; first[c] = c; }
  const out = new Uint8Array(maxBytes);
  const nbitsTotal = input.length * 8;
  let pos = 0, bit = 0, width = 9, next = FIRST, old = -1;

  while (true) {
    if (bit + width > nbitsTotal) throw new Error('the data ends before its end-of-information code');
    // read `width` bits, most significant first
    let code = 0;
    for (let k = 0; k < width; k++, bit++) code = (code << 1) | ((input[bit >> 3] >> (7 - (bit & 7))) & 1);
    if (code === EOI) break;
    if (code === CLEAR) { width = 9; next = FIRST; old = -1; continue; }
    let emit: number; // the code whose string is written
    if (old < 0) {
      if (code > 255) throw new Error(`code ${code} follows a clear code (a literal byte was expected)`);
      emit = code;
    } else if (code < next) {
      emit = code;
      if (next < MAX_CODES) { prefix[next] = old; suffix[next] = first[code]; length[next] = length[old] + 1; first[next] = first[old]; next++; }
    } else if (code === next && next < MAX_CODES) {
      // the string of the previous code plus its own first byte
      prefix[next] = old; suffix[next] = first[old]; length[next] = length[old] + 1; first[next] = first[old];
      emit = next++;
    } else {
      throw new Error(`code ${code} is not in the dictionary of ${next} entries`);
    }
    // write the string of `emit` backwards from its end, cut at the block size
    const L = length[emit];
    const end = pos + L;
    let c = emit;
    for (let q = end - 1; q >= pos; q--) { if (q < maxBytes) out[q] = suffix[c]; c = prefix[c]; }
    pos = end;
    if (pos >= maxBytes) { pos = maxBytes; break; }
    old = code;
    if (next + 1 >= 1 << width && width < 12) width++;
  }
  return out.subarray(0, pos);
}

interface BlockParameters {
  tileWidth: number;
  tileHeight: number;
  bitsPerSample: number | ArrayLike<number>;
}

class BoundedLzwDecoder extends BaseDecoder {
  override decodeBlock(buffer: ArrayBufferLike): ArrayBufferLike {
    const p = this.parameters as unknown as BlockParameters;
    const bits = typeof p.bitsPerSample === 'number' ? [p.bitsPerSample] : Array.from(p.bitsPerSample);
    const bytesPerPixel = Math.ceil(bits.reduce((a, b) => a + b, 0) / 8);
    const max = p.tileWidth * p.tileHeight * bytesPerPixel;
    if (!(max > 0 && Number.isSafeInteger(max))) throw new Error(`the block size ${p.tileWidth}×${p.tileHeight} is not usable`);
    const decoded = decodeLzw(new Uint8Array(buffer), max);
    return decoded.buffer.slice(decoded.byteOffset, decoded.byteOffset + decoded.byteLength);
  }
}

let registered = false;
/** Use the bounded decoder for LZW (compression 5) from now on; idempotent. */
export function useBoundedLzw(): void {
  if (registered) return;
  registered = true;
  addDecoder(5, () => Promise.resolve(BoundedLzwDecoder as unknown as typeof BaseDecoder), undefined, false);
}
