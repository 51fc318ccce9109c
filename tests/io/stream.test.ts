/**
 * Streamed writers. Outside sources: the ECMAScript Number-to-String algorithm (shortest digits that
 * round-trip, as `Number(text)` parses them back) and `JSON.stringify` itself, which the streamed
 * JSON must reproduce byte for byte.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, openSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { TextSink, formatNumber, writeJson, Rows, compactRows, writeCsv, withFileSink, FeatureCollectionWriter, featureJson, pointJson, polygonsJson, writePolygons } from '../../src/io/stream.js';

/** Collects what a sink would write (a sink on a temporary file, read back). */
function capture(f: (s: TextSink) => void, chunk = 7): string {
  const dir = mkdtempSync(join(tmpdir(), 'sill-stream-'));
  try {
    const path = join(dir, 'out.txt');
    // a real file with a small chunk size, so the chunking and UTF-8 encoding are exercised
    const real = new TextSink(openSync(path, 'w'), true, chunk);
    f(real);
    real.close();
    return readFileSync(path, 'utf8');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

const noNegZero = (v: unknown): unknown => {
  if (typeof v === 'number') return Object.is(v, -0) ? 0 : v;
  if (Array.isArray(v)) return v.map(noNegZero);
  if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, noNegZero(x)]));
  return v;
};

describe('formatNumber', () => {
  it('every double parses back to itself (subnormals, −0, integers beyond 2^53, extremes)', () => {
    // Source: ECMAScript Number::toString gives the shortest digits that round-trip.
    fc.assert(fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
      expect(Object.is(Number(formatNumber(x)), x)).toBe(true);
    }), { numRuns: 20000 });
    for (const x of [-0, 0, 5e-324, -5e-324, 2.2250738585072014e-308, Number.MAX_VALUE, -Number.MAX_VALUE, 2 ** 53 + 2, 2 ** 60, -(2 ** 70), 0.1, 1 / 3]) {
      expect(Object.is(Number(formatNumber(x)), x)).toBe(true);
    }
    expect(formatNumber(-0)).toBe('-0');
  });

  it('bit patterns of every kind, drawn as raw 64-bit words, round-trip', () => {
    const f = new Float64Array(1), u = new BigUint64Array(f.buffer);
    fc.assert(fc.property(fc.bigInt({ min: 0n, max: (1n << 64n) - 1n }), (bits) => {
      u[0] = bits;
      const x = f[0];
      if (Number.isNaN(x)) return;
      if (!Number.isFinite(x)) { expect(formatNumber(x)).toBe('null'); return; }
      expect(Object.is(Number(formatNumber(x)), x)).toBe(true);
    }), { numRuns: 20000 });
  });

  it('non-finite values take the given text', () => {
    expect(formatNumber(NaN)).toBe('null');
    expect(formatNumber(Infinity, '')).toBe('');
  });
});

describe('writeJson', () => {
  it('equals JSON.stringify for random JSON values, compact and indented', () => {
    // Source: JSON.stringify (ECMA-262 SerializeJSONProperty), the reference the streamed text must match.
    fc.assert(fc.property(fc.jsonValue(), fc.constantFrom(0, 1, 2), (raw, indent) => {
      const v = noNegZero(raw);
      expect(capture((s) => writeJson(s, v, indent))).toBe(JSON.stringify(v, null, indent || undefined));
    }), { numRuns: 400 });
  });

  it('skips undefined members and writes undefined array entries as null, like JSON.stringify', () => {
    const v = { a: undefined, b: [undefined, () => 1, 2], c: { toJSON: () => 'x' }, d: 'é\u2028"' };
    expect(capture((s) => writeJson(s, v, 1))).toBe(JSON.stringify(v, null, 1));
    expect(capture((s) => writeJson(s, v))).toBe(JSON.stringify(v));
  });

  it('writes Rows like the array they stand for, and compact rows one record a line', () => {
    const col = Float64Array.from([1.5, -2, 3e300]);
    const rows = new Rows(col.length, (i) => ({ i, v: col[i] }));
    const plain = { n: 3, rows: rows.toArray(), empty: [] };
    expect(capture((s) => writeJson(s, { n: 3, rows, empty: new Rows(0, () => 0) }, 1))).toBe(JSON.stringify(plain, null, 1));
    expect(capture((s) => writeJson(s, { n: 3, rows }))).toBe(JSON.stringify({ n: 3, rows: plain.rows }));
    const compact = capture((s) => writeJson(s, { n: 3, rows: compactRows(col.length, rows.at) }, 1));
    expect(compact).toBe('{\n "n": 3,\n "rows": [\n  {"i":0,"v":1.5},\n  {"i":1,"v":-2},\n  {"i":2,"v":3e+300}\n ]\n}');
    expect(JSON.parse(compact)).toEqual({ n: 3, rows: plain.rows });
  });

  it('keeps −0 and NaN as JSON can hold them', () => {
    expect(capture((s) => writeJson(s, [-0, NaN, Infinity]))).toBe('[-0,null,null]');
  });
});

describe('writeCsv', () => {
  it('writes a header and one line per row from column accessors, quoting where needed', () => {
    const v = Float32Array.from([0.1, NaN, -0]);
    const text = capture((s) => writeCsv(s, 3, [['value', (i) => v[i]], ['name', (i) => (i === 1 ? 'a,"b"' : `p${i}`)]]));
    expect(text).toBe(`value,name\n${Number(v[0])},p0\n,"a,""b"""\n-0,p2\n`);
  });

  it('withFileSink writes many chunks of multi-byte text intact', () => {
    const dir = mkdtempSync(join(tmpdir(), 'sill-stream-'));
    try {
      const path = join(dir, 'big.txt');
      const line = 'ä€𝄞 pit,pass,peak\n';
      withFileSink(path, (s) => { for (let i = 0; i < 50000; i++) s.write(line); });
      expect(readFileSync(path, 'utf8')).toBe(line.repeat(50000));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('GeoJSON from columns', () => {
  const coord = fc.double({ noNaN: true, noDefaultInfinity: true }).map((x) => (Object.is(x, -0) ? 0 : x));
  const ring = fc.array(fc.tuple(coord, coord), { minLength: 1, maxLength: 6 });
  const polygons = fc.array(fc.array(ring, { minLength: 1, maxLength: 3 }), { maxLength: 3 });

  it('geometries and features equal JSON.stringify of the objects they stand for (the reference)', () => {
    fc.assert(fc.property(polygons, coord, coord, fc.option(fc.integer({ min: 0, max: 1e6 }), { nil: undefined }), (polys, x, y, id) => {
      const want = polys.length === 0 ? null : polys.length === 1 ? { type: 'Polygon', coordinates: polys[0] } : { type: 'MultiPolygon', coordinates: polys };
      const flat = polys.map((p) => p.map((r) => Float64Array.from(r.flat())));
      expect(polygonsJson(flat)).toBe(JSON.stringify(want));
      expect(pointJson(x, y)).toBe(JSON.stringify({ type: 'Point', coordinates: [x, y] }));
      const props = { kind: 'pit', v: x };
      const f = featureJson(id, pointJson(x, y), JSON.stringify(props));
      expect(f).toBe(JSON.stringify({ type: 'Feature', ...(id !== undefined ? { id } : {}), geometry: { type: 'Point', coordinates: [x, y] }, properties: props }));
      // a projection maps every vertex
      expect(polygonsJson(flat, (a, b) => [b, a])).toBe(JSON.stringify(want && { ...want, coordinates: polys.length === 1 ? polys[0].map((r) => r.map(([a, b]) => [b, a])) : polys.map((p) => p.map((r) => r.map(([a, b]) => [b, a]))) }));
    }));
  });

  it('a collection streamed feature by feature equals JSON.stringify of the whole collection', () => {
    const members = { type: 'FeatureCollection', name: 'x', crs: { type: 'name', properties: { name: 'urn:ogc:def:crs:EPSG::32633' } } };
    const feats = [0, 1, 2].map((i) => ({ type: 'Feature', id: i, geometry: { type: 'Point', coordinates: [i, i === 0 ? 0 : -i / 3] }, properties: { i } }));
    const text = capture((s) => {
      const fcw = new FeatureCollectionWriter(s, members);
      for (const f of feats) fcw.feature(featureJson(f.id, pointJson(f.geometry.coordinates[0], f.geometry.coordinates[1]), JSON.stringify(f.properties)));
      fcw.end();
    });
    expect(text).toBe(JSON.stringify({ ...members, features: feats }) + '\n');
    expect(capture((s) => { const w = new FeatureCollectionWriter(s, members); w.end(); })).toBe(JSON.stringify({ ...members, features: [] }) + '\n');
    // a geometry written piece by piece (a ring of 10 000 vertices crosses the writer's pieces)
    const big = Float64Array.from({ length: 20002 }, (_, i) => (i % 2 ? -i / 7 : i * 1.5 + 0.25));
    big[20000] = big[0]; big[20001] = big[1];
    const pieces = capture((s) => {
      const w = new FeatureCollectionWriter(s, members);
      w.featureWith(7, (k) => writePolygons(k, [[big], [big.subarray(0, 8)]]), '{"a":1}');
      w.featureWith(undefined, (k) => writePolygons(k, []), '{}');
      w.end();
    });
    const pairs = (r: Float64Array) => Array.from({ length: r.length / 2 }, (_, i) => [r[2 * i], r[2 * i + 1]]);
    expect(pieces).toBe(JSON.stringify({ ...members, features: [
      { type: 'Feature', id: 7, geometry: { type: 'MultiPolygon', coordinates: [[pairs(big)], [pairs(big.subarray(0, 8))]] }, properties: { a: 1 } },
      { type: 'Feature', geometry: null, properties: {} },
    ] }) + '\n');
  });
});
