/**
 * The ponds and runoff reports as columns: each record's JSON text, written straight from the
 * columns, is JSON.stringify of the record view built from the same columns (the language's own
 * serialiser is the outside reference); the whole report streamed by writeJson equals
 * JSON.stringify of the report with its lists materialised; the summary's bounded selection
 * picks what a full sort picks (Array.prototype.sort, the reference).
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { pondsReport, pondsCsvColumns, pondsCsvRow } from '../../src/report/ponds.js';
import { runoffReport, runoffCsvColumns, runoffCsvRow } from '../../src/report/runoff.js';
import { csvCell } from '../../src/io/stream.js';
import { topK, topKBy, cleanValue, cleanDifference } from '../../src/report/hydro-common.js';
import { TextSink, writeJson } from '../../src/io/stream.js';
import { gridArb } from './arbitraries.js';
import { mkdtempSync, openSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** The report as JSON through writeJson: a sink on a temporary file, read back. */
function streamed(value: unknown, indent: number): string {
  const dir = mkdtempSync(join(tmpdir(), 'sill-columns-'));
  try {
    const path = join(dir, 'out.json');
    const sink = new TextSink(openSync(path, 'w'), true, 97);
    writeJson(sink, value, indent);
    sink.close();
    return readFileSync(path, 'utf8');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** A variant of the grid with float32 values (the reports clean float32 values). */
const asFloat32 = (g: Grid): Grid => new Grid({ width: g.width, height: g.height, values: Float32Array.from(g.values), transform: g.transform, crs: g.crs });

describe('depression and pond records from columns', () => {
  it('each record\'s JSON text is JSON.stringify of its record view; the streamed report equals JSON.stringify (ponds)', () => {
    fc.assert(fc.property(gridArb, fc.boolean(), fc.constantFrom(0, 0.5), ({ g, conn, outlet }, f32, minDepth) => {
      const grid = f32 ? asFloat32(g) : g;
      const { report } = pondsReport(grid, { connectivity: conn, nodataOutlet: outlet, euler: false, minDepth });
      const deps = report.depressions;
      for (let i = 0; i < deps.length; i++) expect(deps.options.json!(i)).toBe(JSON.stringify(deps.at(i)));
      expect(streamed(report, 1)).toBe(streamedReference(report, 1));
      expect(streamed(report, 0)).toBe(JSON.stringify(report));
    }), { numRuns: 120 });
  });

  it('the same for runoff: depression records with their water, and the ponds', () => {
    fc.assert(fc.property(gridArb, fc.boolean(), fc.constantFrom(0.001, 0.3, 5), ({ g, conn, outlet }, f32, depth) => {
      const grid = f32 ? asFloat32(g) : g;
      const { report } = runoffReport(grid, { connectivity: conn, nodataOutlet: outlet, euler: false, depth });
      for (let i = 0; i < report.depressions.length; i++) expect(report.depressions.options.json!(i)).toBe(JSON.stringify(report.depressions.at(i)));
      for (let i = 0; i < report.ponds.length; i++) expect(report.ponds.options.json!(i)).toBe(JSON.stringify(report.ponds.at(i)));
      expect(streamed(report, 0)).toBe(JSON.stringify(report));
      expect(streamed(report, 1)).toBe(streamedReference(report, 1));
    }), { numRuns: 120 });
  });
});

/**
 * The indented layout report.json has always had: JSON.stringify(…, null, 1) of everything but
 * the lists, then each list one compact record a line (as the writer before the columns made it).
 */
function streamedReference(report: object, indent: number): string {
  const lists = Object.entries(report).filter(([, v]) => v !== null && typeof v === 'object' && typeof (v as { toArray?: unknown }).toArray === 'function').map(([k]) => k);
  const rest: Record<string, unknown> = { ...report };
  for (const k of lists) delete rest[k];
  const head = JSON.stringify(rest, null, indent);
  let out = head.slice(0, head.lastIndexOf('}')).replace(/\s+$/, '');
  for (const k of lists) {
    const rows = (report as Record<string, { toArray(): unknown[] }>)[k].toArray();
    out += `,\n "${k}": [`;
    rows.forEach((r, i) => { out += (i ? ',' : '') + '\n  ' + JSON.stringify(r); });
    out += rows.length ? '\n ]' : ']';
  }
  return out + '\n}';
}

describe('CSV rows straight from the columns', () => {
  const tokens = { elevation: 'm', area: 'm2', volume: 'm3' };
  const line = (columns: [string, (d: number) => unknown][], d: number) => columns.map(([, f]) => csvCell(f(d))).join(',') + '\n';
  it('each row of depressions.csv and runoff.csv equals the line made cell by cell from the column accessors', () => {
    fc.assert(fc.property(gridArb, fc.boolean(), ({ g, conn, outlet }, f32) => {
      const grid = f32 ? asFloat32(g) : g;
      const p = pondsReport(grid, { connectivity: conn, nodataOutlet: outlet, euler: false });
      const pc = pondsCsvColumns(p.result, p.report.depressions.columns, tokens);
      for (let d = 1; d <= p.report.depressions.length; d++) expect(pondsCsvRow(p.result, p.report.depressions.columns, d)).toBe(line(pc, d));
      const r = runoffReport(grid, { connectivity: conn, nodataOutlet: outlet, euler: false, depth: 0.2 });
      const rc = runoffCsvColumns(r.result, r.report.depressions.columns, tokens);
      for (let d = 1; d <= r.report.depressions.length; d++) expect(runoffCsvRow(r.result, r.report.depressions.columns, d)).toBe(line(rc, d));
    }), { numRuns: 100 });
  });
});

describe('top-k by a bounded selection', () => {
  it('equals the first k of a full sort (largest first, ties by the smaller index)', () => {
    fc.assert(fc.property(fc.array(fc.constantFrom(0, 1, 2, 2.5, 7, 1e9, NaN), { maxLength: 60 }), fc.integer({ min: 0, max: 12 }), (vals, k) => {
      const a = Float64Array.from([NaN, ...vals]);
      const want = Array.from({ length: vals.length }, (_, i) => i + 1).filter((i) => a[i] === a[i]).sort((x, y) => a[y] - a[x] || x - y).slice(0, k);
      expect(topK(a, 1, a.length, k)).toEqual(want);
    }));
  });

  it('with a composite order (two keys, then the index)', () => {
    fc.assert(fc.property(fc.array(fc.tuple(fc.integer({ min: 0, max: 3 }), fc.integer({ min: 0, max: 3 })), { maxLength: 50 }), fc.integer({ min: 1, max: 9 }), (pairs, k) => {
      const weaker = (i: number, j: number) => pairs[i][0] !== pairs[j][0] ? pairs[i][0] < pairs[j][0] : pairs[i][1] !== pairs[j][1] ? pairs[i][1] < pairs[j][1] : i > j;
      const want = pairs.map((_, i) => i).sort((i, j) => pairs[j][0] - pairs[i][0] || pairs[j][1] - pairs[i][1] || i - j).slice(0, k);
      expect(topKBy(0, pairs.length, k, weaker)).toEqual(want);
    }));
  });
});

describe('cleanValue', () => {
  /** The definition: the shortest of 6…9 significant digits (Number.prototype.toPrecision, the language's own rounding) that reads back as the float32. */
  const reference = (v: number): number => {
    if (!Number.isFinite(v)) return v;
    for (let p = 6; p <= 9; p++) { const x = Number(v.toPrecision(p)); if (Math.fround(x) === v) return x; }
    return v;
  };
  const f32 = new Float32Array(1), u32 = new Uint32Array(f32.buffer);
  it('equals the toPrecision definition for every kind of float32 (raw bit patterns: subnormals, ±0, extremes)', () => {
    fc.assert(fc.property(fc.integer({ min: 0, max: 2 ** 32 - 1 }), (bits) => {
      u32[0] = bits;
      const v = f32[0];
      expect(Object.is(cleanValue(v, true), reference(v))).toBe(true);
    }), { numRuns: 20000 });
  });
  it('and for terrain-like values near decimal boundaries', () => {
    fc.assert(fc.property(fc.integer({ min: -2e8, max: 2e8 }), fc.constantFrom(1, 10, 100, 1000, 1e4), fc.integer({ min: -2, max: 2 }), (m, d, ulps) => {
      u32[0] = 0; f32[0] = m / d;
      u32[0] += ulps;
      const v = f32[0];
      expect(Object.is(cleanValue(v, true), reference(v))).toBe(true);
    }), { numRuns: 20000 });
  });
});

describe('cleanDifference', () => {
  /** The definition: a − b rounded by toFixed to the fractional digits of the longer of String(a), String(b) (as is, when one has an exponent). */
  const reference = (a: number, b: number): number => {
    const dec = (x: number) => { const t = String(x); if (/e/i.test(t)) return -1; const k = t.indexOf('.'); return k < 0 ? 0 : t.length - k - 1; };
    const da = dec(a), db = dec(b);
    return da < 0 || db < 0 ? a - b : Number((a - b).toFixed(Math.max(da, db)));
  };
  const f32 = new Float32Array(1), u32 = new Uint32Array(f32.buffer);
  const clean32 = fc.integer({ min: 0, max: 2 ** 32 - 1 }).map((bits) => { u32[0] = bits; return cleanValue(f32[0], true); }).filter(Number.isFinite);
  const decimal = fc.tuple(fc.integer({ min: -1e9, max: 1e9 }), fc.integer({ min: 0, max: 12 })).map(([m, k]) => m / 10 ** k);
  it('equals the toFixed definition on clean float32 values, decimals and any doubles', () => {
    for (const arb of [clean32, decimal, fc.double({ noNaN: true, noDefaultInfinity: true })]) {
      fc.assert(fc.property(arb, arb, (a, b) => { expect(Object.is(cleanDifference(a, b), reference(a, b))).toBe(true); }), { numRuns: 20000 });
    }
  });
});
