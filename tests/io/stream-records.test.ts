/**
 * The JSON writer's record path (records of a list written by the runtime's serialiser when that
 * gives the same text). Outside source: JSON.stringify itself, with −0 marked by a replacer so the
 * reference can say where "-0" belongs.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, openSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { withFileSink, writeJson, Rows, compactRows, TextSink } from '../../src/io/stream.js';

function capture(f: Parameters<typeof withFileSink>[1]): string {
  const dir = mkdtempSync(join(tmpdir(), 'sill-records-'));
  try {
    withFileSink(join(dir, 'r.json'), f);
    return readFileSync(join(dir, 'r.json'), 'utf8');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

const MARK = '\u0000negative zero\u0000';
/** JSON.stringify with −0 written "-0" (marked by a replacer, then unquoted). */
function reference(v: unknown, indent: number): string {
  return JSON.stringify(v, (_k, x) => (Object.is(x, -0) ? MARK : x), indent || undefined).replaceAll(JSON.stringify(MARK), '-0');
}

// records as the reports make them: numbers (with −0), nulls, strings, nested objects and arrays
const num = fc.oneof(fc.constant(-0), fc.constant(0), fc.double({ noNaN: true, noDefaultInfinity: true }), fc.integer());
const leaf = fc.oneof(num, fc.constant(null), fc.string(), fc.boolean());
const record = fc.dictionary(fc.string({ maxLength: 6 }), fc.oneof(leaf, fc.array(leaf, { maxLength: 3 }), fc.dictionary(fc.string({ maxLength: 4 }), leaf, { maxKeys: 3 })), { maxKeys: 6 });

describe('writeJson records', () => {
  it('Rows of records equal JSON.stringify of the array, −0 kept, at every indent', () => {
    fc.assert(fc.property(fc.array(record, { maxLength: 12 }), fc.constantFrom(0, 1, 2), (recs, indent) => {
      const got = capture((s) => writeJson(s, { head: -0, list: new Rows(recs.length, (i) => recs[i]), plain: recs }, indent));
      expect(got).toBe(reference({ head: -0, list: recs, plain: recs }, indent));
    }), { numRuns: 300 });
  });

  it('lists nested at any depth, among other members and in arrays', () => {
    fc.assert(fc.property(fc.array(record, { maxLength: 6 }), fc.integer({ min: 0, max: 4 }), fc.constantFrom(1, 2, 3), (recs, depth, indent) => {
      let v: unknown = new Rows(recs.length, (i) => recs[i]), plain: unknown = recs;
      for (let k = 0; k < depth; k++) { v = k % 2 ? [1, v] : { x: -0, v }; plain = k % 2 ? [1, plain] : { x: -0, v: plain }; }
      expect(capture((s) => writeJson(s, v, indent))).toBe(reference(plain, indent));
    }), { numRuns: 200 });
  });

  it('compact rows: one record a line, the records as JSON.stringify writes them', () => {
    fc.assert(fc.property(fc.array(record, { minLength: 1, maxLength: 8 }), (recs) => {
      const got = capture((s) => writeJson(s, { list: compactRows(recs.length, (i) => recs[i]) }, 1));
      expect(got).toBe(`{\n "list": [\n${recs.map((r) => '  ' + reference(r, 0)).join(',\n')}\n ]\n}`);
    }), { numRuns: 200 });
  });
});

describe('TextSink', () => {
  it('keeps the order and the bytes of small and large pieces of multi-byte text, at any buffer size', () => {
    // Source: Node's own UTF-8 encoder (Buffer.from(text, 'utf8')) of the concatenated text.
    fc.assert(fc.property(fc.array(fc.oneof(fc.string({ unit: 'grapheme', maxLength: 5 }), fc.string({ unit: 'grapheme', minLength: 2000, maxLength: 12000 })), { maxLength: 30 }), fc.constantFrom(4, 64, 5000, 1 << 18), (pieces, chunk) => {
      const dir = mkdtempSync(join(tmpdir(), 'sill-sink-'));
      try {
        const path = join(dir, 's.txt');
        const sink = new TextSink(openSync(path, 'w'), true, chunk);
        for (const p of pieces) sink.write(p);
        sink.close();
        expect(readFileSync(path).equals(Buffer.from(pieces.join(''), 'utf8'))).toBe(true);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    }), { numRuns: 60 });
  });
});
