/**
 * readJsonMembers (src/io/json-head.ts) reads some top-level members of a JSON file without holding
 * it. Reference: the JavaScript engine's own JSON.parse on the whole text — the members must be
 * equal for any JSON object, whatever the chunk boundaries fall on (strings with braces, brackets,
 * escaped quotes and non-ASCII text, deep nesting, members larger than a chunk).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readJsonMembers } from '../../src/io/json-head.js';
import { inputCells } from '../../src/io/dimensions.js';

describe('readJsonMembers', () => {
  let dir: string;
  beforeAll(() => { dir = mkdtempSync(join(tmpdir(), 'sill-json-head-')); });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('equals JSON.parse on random objects, with and without white space, for any read size (fast-check)', () => {
    const tricky = fc.constantFrom('{', '}', '[', ']', '"', '\\', ',', ':', 'é', '∑', '\n', ' ');
    const str = fc.array(fc.oneof(tricky, fc.string({ maxLength: 4 })), { maxLength: 6 }).map((a) => a.join(''));
    const value = fc.letrec((tie) => ({
      v: fc.oneof({ depthSize: 'small' }, fc.double({ noNaN: true, noDefaultInfinity: true }), fc.boolean(), fc.constant(null), str,
        fc.array(tie('v'), { maxLength: 4 }), fc.dictionary(str, tie('v'), { maxKeys: 4 })),
    })).v;
    let k = 0;
    fc.assert(fc.property(fc.dictionary(str, value, { maxKeys: 8 }), fc.boolean(), fc.array(str, { maxLength: 3 }), fc.integer({ min: 1, max: 64 }), (obj, pretty, extra, chunk) => {
      const path = join(dir, `o${k++}.json`);
      writeFileSync(path, JSON.stringify(obj, null, pretty ? 2 : undefined));
      const keys = [...Object.keys(obj).filter((_, i) => i % 2 === 0), ...extra];
      const want: Record<string, unknown> = {};
      for (const key of keys) if (Object.prototype.hasOwnProperty.call(obj, key)) want[key] = JSON.parse(JSON.stringify(obj))[key];
      expect(readJsonMembers(path, keys, chunk)).toEqual(want);
    }), { numRuns: 300 });
  });

  it('reads members before and after an array larger than its 1 MiB chunk, and stops once it has them', () => {
    const path = join(dir, 'big.json');
    const big = Array.from({ length: 300_000 }, (_, i) => ({ id: i, s: i % 7 === 0 ? 'a "}]" b' : 'x' }));
    const obj = { schema: 'x@1', euler: { characteristic: 2 }, depressions: big, totals: { volume: 1.5 } };
    writeFileSync(path, JSON.stringify(obj));
    expect(readJsonMembers(path, ['euler', 'totals', 'missing'])).toEqual({ euler: { characteristic: 2 }, totals: { volume: 1.5 } });
    expect(readJsonMembers(path, ['depressions']).depressions).toEqual(big);
    // text cut short inside a skipped array is an error, not a silent answer
    writeFileSync(path, JSON.stringify(obj).slice(0, 2_000_000));
    expect(() => readJsonMembers(path, ['totals'])).toThrow(/not a JSON object \(cut short\)/);
  });

  it('refuses text that is not a JSON object', () => {
    const path = join(dir, 'bad.json');
    writeFileSync(path, '[1, 2]');
    expect(() => readJsonMembers(path, ['a'])).toThrow(/not a JSON object/);
  });
});

describe('inputCells (the memory a scheduler grants an input)', () => {
  it('reads width × height from GeoTIFF headers written by GDAL, classic and BigTIFF, and from .npy shapes', () => {
    // Source: GDAL wrote these fixtures (tests/reference/make_geotiff_fixtures.py); their sizes are in fixtures/io/expected.json
    const fx = (n: string) => new URL(`../../fixtures/io/${n}`, import.meta.url).pathname;
    expect(inputCells(fx('float32-tile-deflate.tif'))).toBe(33 * 17);
    expect(inputCells(fx('bigtiff-float32.tif'))).toBe(33 * 17);
    expect(inputCells(fx('float64-bigendian.tif'))).toBe(33 * 17);
    expect(inputCells(fx('numpy-f8-c.npy'))).toBe(4 * 6);
    expect(inputCells(fx('numpy-i2-fortran-v2.npy'))).toBe(5 * 3);
  });
});
