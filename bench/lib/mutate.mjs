/**
 * Byte mutations of valid input files for the fuzz job (tests/io/fuzz.test.ts, bench/fuzz.mjs):
 * fast-check arbitraries of edits — overwrite a byte, flip a bit, truncate, insert, delete,
 * repeat a span — biased to the first 512 bytes, where headers and directories live.
 */
import fc from 'fast-check';

/** Valid inputs from fixtures/io: GeoTIFF layouts and compressions, .npy, and the three kinds of text. */
export const FUZZ_FIXTURES = [
  'float32-strip-none.tif', 'float32-strip-lzw.tif', 'float32-strip-deflate.tif', 'float32-strip-packbits.tif',
  'float32-tile-deflate-predictor3.tif', 'int16-strip-lzw-predictor2.tif', 'int16-tile-deflate.tif', 'float64-bigendian.tif',
  'bigtiff-float32.tif', 'bands3-pixel.tif', 'uint16-tile-deflate.tif',
  'numpy-f8-c.npy', 'numpy-i2-fortran-v2.npy',
  'columns-lattice.xyz', 'matrix.txt', 'scattered.csv',
];

const position = fc.oneof(fc.nat(511), fc.nat(1 << 20));

/** One edit; positions are reduced modulo the file's length when applied. */
export const editArb = fc.oneof(
  fc.record({ kind: fc.constant('set'), pos: position, byte: fc.integer({ min: 0, max: 255 }) }),
  fc.record({ kind: fc.constant('flip'), pos: position, bit: fc.integer({ min: 0, max: 7 }) }),
  fc.record({ kind: fc.constant('truncate'), pos: position }),
  fc.record({ kind: fc.constant('insert'), pos: position, bytes: fc.uint8Array({ minLength: 1, maxLength: 16 }) }),
  fc.record({ kind: fc.constant('delete'), pos: position, len: fc.integer({ min: 1, max: 64 }) }),
  fc.record({ kind: fc.constant('repeat'), pos: position, len: fc.integer({ min: 1, max: 64 }), times: fc.integer({ min: 1, max: 4 }) }),
  // the characters that matter in text: separators, signs, decimal marks, exponents, specials
  fc.record({ kind: fc.constant('char'), pos: position, ch: fc.constantFrom(',', ';', '\t', ' ', '\n', '-', '+', '.', 'e', 'E', '#', '0', '9', 'n', 'i', '\0', '\r') }),
);

export const caseArb = fc.record({
  fixture: fc.constantFrom(...FUZZ_FIXTURES),
  edits: fc.array(editArb, { minLength: 1, maxLength: 6 }),
});

/** The fixture's bytes with the edits applied in order. */
export function applyEdits(src, edits) {
  let b = Uint8Array.from(src);
  for (const e of edits) {
    const n = b.length;
    if (n === 0) break;
    const p = e.pos % n;
    switch (e.kind) {
      case 'set': b[p] = e.byte; break;
      case 'flip': b[p] ^= 1 << e.bit; break;
      case 'char': b[p] = e.ch.charCodeAt(0); break;
      case 'truncate': b = b.slice(0, p); break;
      case 'insert': { const c = new Uint8Array(n + e.bytes.length); c.set(b.subarray(0, p)); c.set(e.bytes, p); c.set(b.subarray(p), p + e.bytes.length); b = c; break; }
      case 'delete': { const q = Math.min(n, p + e.len); const c = new Uint8Array(n - (q - p)); c.set(b.subarray(0, p)); c.set(b.subarray(q), p); b = c; break; }
      case 'repeat': { const q = Math.min(n, p + e.len); const span = b.slice(p, q); const c = new Uint8Array(n + span.length * e.times); c.set(b.subarray(0, q)); for (let t = 0; t < e.times; t++) c.set(span, q + t * span.length); c.set(b.subarray(q), q + span.length * e.times); b = c; break; }
    }
  }
  return b;
}

/** The extension to give the mutated copy (the loaders look at it after the magic bytes). */
export function extensionOf(name) {
  return name.slice(name.lastIndexOf('.'));
}
