/**
 * Streamed text output: a buffered sink that writes fixed-size chunks to a file descriptor, an
 * exact number formatter, lazy row lists, and a JSON serialiser that writes a value tree holding
 * such lists piece by piece — byte for byte what `JSON.stringify(value, null, indent)` would
 * return, without ever holding the document (or one object per row) in memory.
 */
import { closeSync, openSync, writeSync } from 'node:fs';

/**
 * A buffered text sink: strings are encoded as UTF-8 into one reused buffer of about `chunk`
 * bytes, written out whenever it is full (small strings are first joined in a short pending run,
 * long ones go out on their own): no copy of the text beyond its encoding.
 */
export class TextSink {
  private pending = '';
  private readonly buf: Buffer;
  private pos = 0;
  private closed = false;

  /** `fd` is an open file descriptor (1 for stdout); `owned` closes it with the sink. */
  constructor(readonly fd: number, private readonly owned = false, chunk = 1 << 18) {
    this.buf = Buffer.allocUnsafe(Math.max(4, chunk));
  }

  /** A sink writing a new file at `path` (truncated if it exists). */
  static file(path: string): TextSink {
    return new TextSink(openSync(path, 'w'), true);
  }

  write(s: string): void {
    this.pending += s;
    if (this.pending.length >= PENDING) this.encode();
  }

  /** Move the pending run into the buffer (UTF-8 is at most 3 bytes per UTF-16 unit). */
  private encode(): void {
    const s = this.pending;
    if (s.length === 0) return;
    this.pending = '';
    if (3 * s.length > this.buf.length - this.pos) {
      this.drain();
      if (3 * s.length > this.buf.length) { writeAll(this.fd, Buffer.from(s, 'utf8')); return; }
    }
    this.pos += this.buf.write(s, this.pos, 'utf8');
  }

  private drain(): void {
    if (this.pos > 0) writeAll(this.fd, this.buf.subarray(0, this.pos));
    this.pos = 0;
  }

  /** Write what is buffered. */
  flush(): void {
    this.encode();
    this.drain();
  }

  /** Flush, and close the descriptor when the sink opened it. */
  close(): void {
    if (this.closed) return;
    this.flush();
    this.closed = true;
    if (this.owned) closeSync(this.fd);
  }
}
/** Characters gathered before they are encoded into the buffer. */
const PENDING = 1 << 13;

/** writeSync until every byte is out; a non-blocking pipe that is full (EAGAIN) is waited for. */
function writeAll(fd: number, buf: Buffer): void {
  let off = 0;
  while (off < buf.length) {
    try {
      off += writeSync(fd, buf, off, buf.length - off);
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== 'EAGAIN') throw e;
      Atomics.wait(WAIT, 0, 0, 2);
    }
  }
}
const WAIT = new Int32Array(new SharedArrayBuffer(4));

/**
 * A finite double as the shortest decimal text that parses back to the same double (the
 * ECMAScript Number-to-String algorithm guarantees shortest round-trip digits), with −0 kept as
 * "-0"; non-finite values as `nonFinite` (JSON: null).
 */
export function formatNumber(x: number, nonFinite = 'null'): string {
  if (x === 0) return 1 / x < 0 ? '-0' : '0';
  if (x !== x || x === Infinity || x === -Infinity) return nonFinite;
  return '' + x;
}

/**
 * A list whose records are made on demand from columns: `at(i)` builds record i. Iterable, and
 * `toJSON` materialises it (for callers who want plain arrays; the streamed writers never do).
 */
export class Rows<T> implements Iterable<T> {
  /**
   * `options.compact`: the JSON writer puts one record a line even inside indented output;
   * `options.json(i)`: record i's compact JSON text, written straight from the columns (it must
   * equal JSON.stringify(at(i)), −0 aside), so that writing never builds the record.
   */
  constructor(readonly length: number, readonly at: (i: number) => T, readonly options: RowsOptions = {}) {}

  *[Symbol.iterator](): Iterator<T> {
    for (let i = 0; i < this.length; i++) yield this.at(i);
  }

  toArray(): T[] {
    const out = new Array<T>(this.length);
    for (let i = 0; i < this.length; i++) out[i] = this.at(i);
    return out;
  }

  map<U>(f: (r: T, i: number) => U): U[] {
    const out = new Array<U>(this.length);
    for (let i = 0; i < this.length; i++) out[i] = f(this.at(i), i);
    return out;
  }

  /** The first record for which `f` holds (records are built one at a time), or undefined. */
  find(f: (r: T, i: number) => boolean): T | undefined {
    for (let i = 0; i < this.length; i++) { const r = this.at(i); if (f(r, i)) return r; }
    return undefined;
  }

  /** The records for which `f` holds, as an array (for the few a caller looks at). */
  filter(f: (r: T, i: number) => boolean): T[] {
    const out: T[] = [];
    for (let i = 0; i < this.length; i++) { const r = this.at(i); if (f(r, i)) out.push(r); }
    return out;
  }

  toJSON(): T[] {
    return this.toArray();
  }
}

export interface RowsOptions {
  compact?: boolean;
  json?: (i: number) => string;
}

/** Rows that the JSON writer puts one compact record a line even inside indented output. */
export function compactRows<T>(length: number, at: (i: number) => T, json?: (i: number) => string): Rows<T> {
  return new Rows(length, at, { compact: true, json });
}

/**
 * Write `value` as JSON into `sink`: the same text as `JSON.stringify(value, null, indent)`
 * (indent 0: compact), except that −0 is written "-0" and `Rows` are written one record at a time
 * (compact rows one record a line).
 */
export function writeJson(sink: TextSink, value: unknown, indent = 0): void {
  const gap = ' '.repeat(indent);
  if (!writeValue(sink, value, gap, '')) sink.write('null');
}

/** Returns false when the value has no JSON form here (undefined, a function, a symbol). */
function writeValue(sink: TextSink, value: unknown, gap: string, ind: string): boolean {
  if (value !== null && typeof value === 'object' && typeof (value as { toJSON?: unknown }).toJSON === 'function' && !(value instanceof Rows)) {
    value = (value as { toJSON(): unknown }).toJSON();
  }
  switch (typeof value) {
    case 'number': sink.write(formatNumber(value)); return true;
    case 'string': sink.write(JSON.stringify(value)); return true;
    case 'boolean': sink.write(value ? 'true' : 'false'); return true;
    case 'bigint': throw new TypeError('writeJson: a BigInt has no JSON form');
    case 'undefined': case 'function': case 'symbol': return false;
  }
  if (value === null) { sink.write('null'); return true; }
  if (value instanceof Rows) { writeRows(sink, value, gap, ind); return true; }
  if (Array.isArray(value)) { writeArray(sink, value.length, (i) => value[i], gap, ind, false); return true; }
  writeObject(sink, value as Record<string, unknown>, gap, ind);
  return true;
}

function writeRows(sink: TextSink, rows: Rows<unknown>, gap: string, ind: string): void {
  const json = rows.options.json;
  if (json && (rows.options.compact || !gap)) {
    const n = rows.length;
    if (n === 0) { sink.write('[]'); return; }
    const inner = ind + gap;
    const sep = gap ? ',\n' + inner : ',';
    sink.write(gap ? '[\n' + inner : '[');
    for (let i = 0; i < n; i++) sink.write(i ? sep + json(i) : json(i));
    sink.write(gap ? '\n' + ind + ']' : ']');
    return;
  }
  writeArray(sink, rows.length, rows.at, gap, ind, !!rows.options.compact);
}

function writeArray(sink: TextSink, n: number, at: (i: number) => unknown, gap: string, ind: string, compact: boolean): void {
  if (n === 0) { sink.write('[]'); return; }
  const inner = ind + gap;
  const sep = gap ? ',\n' + inner : ',';
  sink.write(gap ? '[\n' + inner : '[');
  // the list's depth in gaps (the writer indents by whole gaps), and the length of the wrappers' text
  const depth = gap ? ind.length / gap.length : 0;
  let head = 0, tail = 0;
  for (let k = 0; k <= depth; k++) { head += 2 + gap.length * (k + 1); tail += 2 + gap.length * k; }
  // runs of records that the runtime's own serialiser writes as this writer would (nativeSafe)
  // go to JSON.stringify a batch at a time, and the batch's text is shifted to this depth
  const batch: unknown[] = [];
  const writeBatch = (): void => {
    let t: string;
    if (compact && gap) t = batch.map((r) => JSON.stringify(r)).join(sep);
    else if (!gap || compact) t = JSON.stringify(batch).slice(1, -1);
    else {
      // wrapped in as many arrays as the list is deep, the runtime indents the records as they
      // stand here; the wrappers' brackets are cut off again
      t = JSON.stringify(depth === 0 ? batch : wrap(batch, depth), null, gap).slice(head, -tail);
    }
    sink.write(t);
    batch.length = 0;
  };
  for (let i = 0; i < n; i++) {
    const v = at(i);
    if (v !== null && typeof v === 'object' && nativeSafe(v)) {
      if (batch.length === 0 && i) sink.write(sep);
      batch.push(v);
      if (batch.length === 256) writeBatch();
      continue;
    }
    if (batch.length) writeBatch();
    if (i) sink.write(sep);
    const ok = compact ? writeValue(sink, v, '', '') : writeValue(sink, v, gap, inner);
    if (!ok) sink.write('null');
  }
  if (batch.length) writeBatch();
  sink.write(gap ? '\n' + ind + ']' : ']');
}

/**
 * True when JSON.stringify writes `v` exactly as writeValue would: no −0 anywhere in it (the
 * runtime writes "0"), no `toJSON` and no Rows below it. Nested JSON text is the standalone text
 * with every line break followed by the enclosing indentation (JSON strings never hold a raw line break).
 */
/** `x` inside `depth` one-element arrays. */
function wrap(x: unknown, depth: number): unknown {
  for (let k = 0; k < depth; k++) x = [x];
  return x;
}

function nativeSafe(v: unknown): boolean {
  if (typeof v === 'number') return v !== 0 || 1 / v > 0;
  if (v === null || typeof v !== 'object') return true;
  if (typeof (v as { toJSON?: unknown }).toJSON === 'function') return false;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) if (!nativeSafe(v[i])) return false;
    return true;
  }
  // for…in also visits inherited enumerable keys: at worst a record takes the slow path
  const o = v as Record<string, unknown>;
  for (const k in o) if (!nativeSafe(o[k])) return false;
  return true;
}

function writeObject(sink: TextSink, obj: Record<string, unknown>, gap: string, ind: string): void {
  const inner = ind + gap;
  let first = true;
  for (const key of Object.keys(obj)) {
    const v = obj[key];
    if (v === undefined || typeof v === 'function' || typeof v === 'symbol') continue;
    sink.write(first ? (gap ? '{\n' + inner : '{') : (gap ? ',\n' + inner : ','));
    first = false;
    sink.write(JSON.stringify(key) + (gap ? ': ' : ':'));
    if (!writeValue(sink, v, gap, inner)) sink.write('null');
  }
  sink.write(first ? '{}' : (gap ? '\n' + ind + '}' : '}'));
}

/** A CSV cell: numbers exactly (non-finite empty), strings quoted when they hold `",\n\r`. */
export function csvCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return formatNumber(v, '');
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  const s = String(v);
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** CSV straight from columns: a header row, then row i from each column's accessor `(i) => value`. */
export function writeCsv(sink: TextSink, n: number, columns: readonly (readonly [string, (i: number) => unknown])[]): void {
  sink.write(columns.map(([h]) => csvCell(h)).join(',') + '\n');
  const m = columns.length;
  for (let i = 0; i < n; i++) {
    let line = csvCell(columns[0][1](i));
    for (let c = 1; c < m; c++) line += ',' + csvCell(columns[c][1](i));
    sink.write(line + '\n');
  }
}

/** CSV from a list of records: `columns` maps each header to an accessor of a record (writeCsv over the list). */
export function writeCsvRecords<T>(sink: TextSink, rows: readonly T[], columns: readonly (readonly [string, (r: T) => unknown])[]): void {
  writeCsv(sink, rows.length, columns.map(([h, f]) => [h, (i: number) => f(rows[i])] as const));
}

/** A JSON string literal (JSON.stringify of a string). */
export const jsonString = (s: string): string => JSON.stringify(s);

/** A JSON number or null: formatNumber, kept short to call from record writers. */
export const jn = (x: number): string => formatNumber(x);

/**
 * A GeoJSON FeatureCollection written feature by feature: `members` are the collection's other
 * members (type first, as JSON.stringify would write them), then `features` one at a time as
 * their JSON text, in the layout of JSON.stringify (no spaces) and a final newline.
 */
export class FeatureCollectionWriter {
  private first = true;

  constructor(readonly sink: TextSink, members: Record<string, unknown>) {
    const head = JSON.stringify({ ...members, features: [] });
    sink.write(head.slice(0, head.length - 2));
  }

  /** One feature, given as its JSON text. */
  feature(text: string): void {
    this.sink.write(this.first ? text : ',' + text);
    this.first = false;
  }

  /**
   * One feature whose geometry is written by `geometry` into the sink (so that a geometry of
   * millions of vertices is never one string): the same text as feature(featureJson(…)).
   */
  featureWith(id: number | undefined, geometry: (sink: TextSink) => void, properties: string): void {
    const lead = id === undefined ? '{"type":"Feature","geometry":' : `{"type":"Feature","id":${jn(id)},"geometry":`;
    this.sink.write(this.first ? lead : ',' + lead);
    this.first = false;
    geometry(this.sink);
    this.sink.write(`,"properties":${properties}}`);
  }

  end(): void {
    this.sink.write(']}\n');
  }
}

/** A feature's JSON text: `{"type":"Feature","id":…,"geometry":…,"properties":…}` (id left out when undefined). */
export function featureJson(id: number | undefined, geometry: string, properties: string): string {
  return id === undefined
    ? `{"type":"Feature","geometry":${geometry},"properties":${properties}}`
    : `{"type":"Feature","id":${jn(id)},"geometry":${geometry},"properties":${properties}}`;
}

/** A GeoJSON Point geometry's JSON text. */
export function pointJson(x: number, y: number): string {
  return `{"type":"Point","coordinates":[${jn(x)},${jn(y)}]}`;
}

/**
 * Polygons (each a list of rings, a ring as flat coordinates x0, y0, x1, y1, …) as a GeoJSON
 * geometry's JSON text: null for none, a Polygon for one, a MultiPolygon for several; `project`
 * maps each vertex first.
 */
export function polygonsJson(polygons: readonly (readonly ArrayLike<number>[])[], project: ((x: number, y: number) => [number, number]) | null = null): string {
  const parts: string[] = [];
  writePolygons({ write: (t: string) => { parts.push(t); } }, polygons, project);
  return parts.join('');
}

/** The same geometry written piece by piece into `sink` (a ring's vertices in pieces of 4096). */
export function writePolygons(sink: { write(s: string): void }, polygons: readonly (readonly ArrayLike<number>[])[], project: ((x: number, y: number) => [number, number]) | null = null): void {
  if (polygons.length === 0) { sink.write('null'); return; }
  const ring = (r: ArrayLike<number>): void => {
    let s = '[';
    for (let k = 0; k + 1 < r.length; k += 2) {
      let x = r[k], y = r[k + 1];
      if (project) [x, y] = project(x, y);
      s += (k ? ',[' : '[') + jn(x) + ',' + jn(y) + ']';
      if ((k & 8190) === 8190) { sink.write(s); s = ''; }
    }
    sink.write(s + ']');
  };
  const poly = (p: readonly ArrayLike<number>[]): void => {
    sink.write('[');
    for (let q = 0; q < p.length; q++) { if (q) sink.write(','); ring(p[q]); }
    sink.write(']');
  };
  if (polygons.length === 1) {
    sink.write('{"type":"Polygon","coordinates":');
    poly(polygons[0]);
    sink.write('}');
    return;
  }
  sink.write('{"type":"MultiPolygon","coordinates":[');
  for (let q = 0; q < polygons.length; q++) { if (q) sink.write(','); poly(polygons[q]); }
  sink.write(']}');
}

/** Write into a new file at `path` through a sink, closing it whatever happens. */
export function withFileSink(path: string, f: (sink: TextSink) => void): void {
  const sink = TextSink.file(path);
  try {
    f(sink);
  } finally {
    sink.close();
  }
}

/**
 * A GeoJSON FeatureCollection of points straight from columns: the text of
 * `JSON.stringify({ ...head, features })` where feature i is `{ type: 'Feature', id: i, geometry:
 * { type: 'Point', coordinates: [x(i), y(i)] }, properties: properties(i) }` (−0 written "-0").
 * `head` holds the members before `features` (type, name, crs …).
 */
export function writePointCollection(sink: TextSink, head: Record<string, unknown>, n: number, x: (i: number) => number, y: (i: number) => number, properties: (i: number) => Record<string, unknown>): void {
  writeJson(sink, { ...head, features: new Rows(n, (i) => ({ type: 'Feature', id: i, geometry: { type: 'Point', coordinates: [x(i), y(i)] }, properties: properties(i) })) });
}
