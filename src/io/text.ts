/**
 * Text surfaces: columns `x y value` (a regular lattice in any order → Grid, otherwise
 * scattered samples → Mesh), or a matrix of values with one grid row per line.
 *
 * Fields are separated by whitespace and/or commas; blank lines and lines starting with `#`
 * are ignored; a first data line with non-numeric fields is taken as a header and skipped.
 * `nan` marks a missing value; `inf` / `-inf` are refused unless they are the nodata value.
 * Decimal commas (`1,479` between tabs or spaces) are refused rather than read as two fields.
 *
 * Matrix or columns: read as a matrix when `layout` says so, or `origin`/`spacing` is given, or
 * the rows do not have 3 fields; as columns when `layout` or `columns` says so, or the 3-field
 * rows have a header line or fill a regular lattice. Rows of 3 numbers that do neither (they could
 * be a 3-wide matrix or scattered samples) are refused with `layout` as the fix, and so are
 * `origin`/`spacing` on rows that read as x y value columns.
 */
import { InputError } from '../errors.js';
import { Grid, MAX_CELLS, gridValues, type GeoTransform } from '../surface/grid.js';
import { Mesh } from '../surface/mesh.js';
import { openForReading, printable } from './common.js';
import { checkCoordinateRange, VALUE_LIMIT } from './range.js';

/** How the lines of a text surface are read. */
export type TextLayout = 'matrix' | 'columns';
export const TEXT_LAYOUTS: readonly TextLayout[] = ['matrix', 'columns'];

export interface TextSurfaceOptions {
  /** Name used in messages (the file path). */
  source?: string;
  /** 1-based column numbers of x, y and value; default [1, 2, 3]. */
  columns?: [number, number, number];
  /** Matrix input: map coordinates of the centre of the first value (row 0, col 0); default [0, 0]. */
  origin?: [number, number];
  /** Matrix input: step [dx, dy] along a line and from one line to the next; default [1, 1]. */
  spacing?: [number, number];
  /** Values equal to this are nodata. */
  nodata?: number;
  /** Read the lines as a matrix of values or as x y value columns; default: decided from the file when unambiguous. */
  layout?: TextLayout;
}

/**
 * Relative tolerance, as a fraction of the spacing, for coordinates to sit on a lattice: 0.1 %,
 * so coordinates printed with four or more significant digits (a 5° scan written as radians to
 * 4 decimals, say) are still read as the lattice they are.
 */
export const LATTICE_TOLERANCE = 1e-3;
/** Distinct coordinates closer than this fraction of the largest gap are round-off of one value. */
const MERGE_TOLERANCE = 1e-6;
/** A lattice with more than this many nodes per sample is treated as scattered samples. */
export const LATTICE_MAX_FILL = 4;

const NUMBER = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;
const SPECIAL = /^([+-]?)(nan|inf|infinity)$/i;
const SEPARATOR = /\s*,\s*|\s+/;
/** A field with a decimal comma between whitespace separators: `1,479`, `-0,5e3`. */
const DECIMAL_COMMA = /(?:^|\s)([+-]?\d+,\d+(?:[eE][+-]?\d+)?)(?=\s|$)/;

/** Parse one field; undefined when it is not a number. */
function parseField(s: string): number | undefined {
  if (NUMBER.test(s)) return Number(s);
  const m = SPECIAL.exec(s);
  if (!m) return undefined;
  if (m[2].toLowerCase() === 'nan') return NaN;
  return m[1] === '-' ? -Infinity : Infinity;
}

export interface Table {
  /** A header line (non-numeric first data line, or a comment of three names just before the data) was seen. */
  header: boolean;
  /** Row-major fields, `rows × fields`. */
  data: Float64Array;
  /** 1-based line number of each row. */
  lines: Uint32Array;
  rows: number;
  fields: number;
}

function quote(s: string): string {
  return `'${printable(s)}'`;
}

export function readTable(text: string, src: string): Table {
  let cap = 1024;
  let data = new Float64Array(cap);
  let lines = new Uint32Array(64);
  let n = 0; // values stored
  let rows = 0;
  let fields = -1;
  let firstDataLine = 0;
  let headerSeen = false;
  let commentNames = false;
  let lineNo = 0;
  let pos = text.charCodeAt(0) === 0xfeff ? 1 : 0; // byte-order mark
  while (pos <= text.length) {
    let end = text.indexOf('\n', pos);
    if (end < 0) end = text.length;
    lineNo++;
    const line = text.slice(pos, end).trim();
    pos = end + 1;
    if (line === '' || line.charCodeAt(0) === 35 /* # */) {
      // a comment naming three columns before the data ("# x y z") is a header too
      if (rows === 0 && line !== '') {
        const names = line.slice(1).trim().split(SEPARATOR);
        commentNames = names.length === 3 && names.every((w) => w !== '' && parseField(w) === undefined);
      }
      continue;
    }
    if (line.indexOf(',') >= 0) {
      const dc = /\s/.test(line) ? DECIMAL_COMMA.exec(line) : null;
      if (dc) {
        throw new InputError(
          `${src} line ${lineNo}: '${dc[1]}' is a number with a decimal comma; sill reads decimal points only (a comma separates fields) — ` +
            'convert the file to decimal points (e.g. export it with a point as the decimal separator)',
        );
      }
    }
    const parts = line.split(SEPARATOR);
    if (fields < 0 && !headerSeen && rows === 0) {
      // A first data line with a non-numeric field is a header.
      if (parts.some((p) => parseField(p) === undefined)) {
        headerSeen = true;
        continue;
      }
    }
    if (fields < 0) {
      fields = parts.length;
      firstDataLine = lineNo;
    } else if (parts.length !== fields) {
      const col = Math.min(parts.length, fields) + 1;
      const what = parts.length < fields ? `missing field: the row has ${parts.length} fields` : `extra field: the row has ${parts.length} fields`;
      throw new InputError(`${src} line ${lineNo}, column ${col}: ${what} but line ${firstDataLine} has ${fields}; every row needs the same number of fields`);
    }
    if (n + fields > cap) {
      while (n + fields > cap) cap *= 2;
      const d = new Float64Array(cap);
      d.set(data.subarray(0, n));
      data = d;
    }
    for (let k = 0; k < fields; k++) {
      const v = parseField(parts[k]);
      if (v === undefined) {
        const f = parts[k];
        const semicolon = f.includes(';') ? ' (semicolons do not separate fields: use spaces, tabs or commas, and decimal points)' : '';
        throw new InputError(
          `${src} line ${lineNo}, column ${k + 1}: ${f === '' ? 'empty field' : `${quote(f)} is not a number`}${semicolon}; ` +
            'every field after the header must be a number (write nan for a missing value)',
        );
      }
      data[n++] = v;
    }
    if (rows === lines.length) {
      const l = new Uint32Array(lines.length * 2);
      l.set(lines);
      lines = l;
    }
    lines[rows++] = lineNo;
  }
  if (rows === 0) {
    throw new InputError(`${src}: no rows of numbers found (only blank lines, comments or a header); give x y value columns or a matrix of values`);
  }
  return { header: headerSeen || commentNames, data, lines, rows, fields };
}

function textInfinity(src: string, line: number, col: number, v: number): InputError {
  const s = v > 0 ? 'inf' : '-inf';
  return new InputError(
    `${src} line ${line}, column ${col}: the value is ${v > 0 ? '+' : '-'}Infinity; an infinite value is not a usable height or energy — ` +
      `fix the file, or treat such values as missing with nodata ${s} (--nodata ${s})`,
  );
}

/** Turn the nodata value into NaN and refuse infinities; `v` as read. */
export function cleanValue(v: number, nodata: number | undefined, src: string, line: number, col: number): number {
  if (v - v === 0) return v === nodata ? NaN : v;
  if (v !== v || v === nodata) return NaN;
  throw textInfinity(src, line, col, v);
}

function checkPair(name: string, p: [number, number] | undefined, nonzero: boolean): void {
  if (p === undefined) return;
  if (!Array.isArray(p) || p.length !== 2 || !p.every(Number.isFinite) || (nonzero && (p[0] === 0 || p[1] === 0))) {
    throw new InputError(`${name} must be two finite numbers${nonzero ? ', neither zero' : ''}, got ${JSON.stringify(p)}`);
  }
}

function matrixGrid(t: Table, src: string, opts: TextSurfaceOptions): Grid {
  const [X, Y] = opts.origin ?? [0, 0];
  const [DX, DY] = opts.spacing ?? [1, 1];
  const width = t.fields;
  const height = t.rows;
  if (width * height > MAX_CELLS) {
    throw new InputError(`${src}: ${width}×${height} values exceed the limit of ${MAX_CELLS} cells; cut the matrix into smaller tiles`);
  }
  const values = t.data.length === width * height ? t.data : t.data.slice(0, width * height);
  const nodata = opts.nodata;
  for (let r = 0; r < height; r++) {
    const base = r * width;
    for (let c = 0; c < width; c++) {
      const v = values[base + c];
      if (v - v !== 0 || v === nodata) values[base + c] = cleanValue(v, nodata, src, t.lines[r], c + 1);
    }
  }
  const transform: GeoTransform = [X - DX / 2, DX, 0, Y - DY / 2, 0, DY];
  return new Grid({ width, height, values, transform, crs: null, nodata: nodata ?? null });
}

export interface Axis {
  lo: number;
  /** NaN when all coordinates are equal. */
  step: number;
  count: number;
}

/**
 * Unique coordinates as a regular lattice: spacing = smallest gap between distinct values,
 * every value an integer multiple of it from the minimum (within LATTICE_TOLERANCE of the
 * spacing). Values closer together than round-off count as one. Null when irregular or
 * when the lattice would need more than `maxCount` nodes.
 */
export function latticeAxis(v: Float64Array, maxCount: number): Axis | null {
  const s = Float64Array.from(v).sort();
  let m = 0;
  for (let i = 0; i < s.length; i++) if (m === 0 || s[i] !== s[m - 1]) s[m++] = s[i];
  const lo = s[0];
  if (m === 1) return { lo, step: NaN, count: 1 };
  let gmax = 0;
  for (let i = 1; i < m; i++) gmax = Math.max(gmax, s[i] - s[i - 1]);
  // Merge values that differ by round-off only; the spacing is the smallest remaining gap.
  const merge = MERGE_TOLERANCE * gmax;
  let prev = lo;
  let d0 = Infinity;
  let hi = lo;
  for (let i = 1; i < m; i++) {
    if (s[i] - s[i - 1] > merge) {
      d0 = Math.min(d0, s[i] - prev);
      prev = s[i];
      hi = s[i];
    }
  }
  if (d0 === Infinity) return { lo, step: NaN, count: 1 };
  const k = Math.round((hi - lo) / d0);
  if (k + 1 > maxCount) return null;
  const step = (hi - lo) / k;
  const tol = LATTICE_TOLERANCE * step;
  for (let i = 0; i < m; i++) {
    const j = Math.round((s[i] - lo) / step);
    if (Math.abs(s[i] - lo - j * step) > tol) return null;
  }
  return { lo, step, count: k + 1 };
}

interface ColumnsReading {
  x: Float64Array;
  y: Float64Array;
  v: Float64Array;
  /** The lattice the points fill, or null (scattered). */
  lattice: { ax: Axis; ay: Axis } | null;
}

/** The rows as x y value columns: coordinates and values checked, and the lattice they fill if any. */
function readColumns(t: Table, src: string, opts: TextSurfaceOptions): ColumnsReading {
  const cols = opts.columns ?? [1, 2, 3];
  if (!Array.isArray(cols) || cols.length !== 3 || !cols.every((c) => Number.isInteger(c) && c >= 1) || new Set(cols).size !== 3) {
    throw new InputError(`columns must be three different column numbers from 1 up (x, y, value), got ${JSON.stringify(cols)}`);
  }
  const bad = cols.find((c) => c > t.fields);
  if (bad !== undefined) {
    throw new InputError(`${src}: column ${bad} was asked for but the rows have ${t.fields} field${t.fields === 1 ? '' : 's'}; check the column numbers`);
  }
  const [cx, cy, cv] = [cols[0] - 1, cols[1] - 1, cols[2] - 1];
  const n = t.rows;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const v = new Float64Array(n);
  const nodata = opts.nodata;
  for (let i = 0; i < n; i++) {
    const b = i * t.fields;
    x[i] = t.data[b + cx];
    y[i] = t.data[b + cy];
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i])) {
      const which = !Number.isFinite(x[i]) ? ['x', cx] : ['y', cy];
      throw new InputError(`${src} line ${t.lines[i]}, column ${(which[1] as number) + 1}: the ${which[0]} coordinate is ${!Number.isFinite(x[i]) ? x[i] : y[i]}; coordinates must be finite numbers`);
    }
    v[i] = cleanValue(t.data[b + cv], nodata, src, t.lines[i], cv + 1);
    if (Math.abs(v[i]) > VALUE_LIMIT) {
      throw new InputError(
        `${src} line ${t.lines[i]}, column ${cv + 1}: the value ${v[i].toExponential(3)} is out of range (sill works with magnitudes up to 1e150, so squares and products fit in float64); ` +
          'rescale the values (e.g. subtract a base level or change the unit)',
      );
    }
  }
  checkCoordinateRange(x, y, src, (i) => `line ${t.lines[i]}`);

  const maxNodes = LATTICE_MAX_FILL * n;
  const ax = latticeAxis(x, maxNodes);
  const ay = ax ? latticeAxis(y, maxNodes) : null;
  return { x, y, v, lattice: ax && ay && ax.count * ay.count <= maxNodes ? { ax, ay } : null };
}

function columnsSurface(t: Table, src: string, opts: TextSurfaceOptions, reading: ColumnsReading, decided: boolean): Grid | Mesh {
  const { x, y, v, lattice } = reading;
  const n = t.rows;
  const nodata = opts.nodata;
  if (lattice) {
    const { ax, ay } = lattice;
    const dx = Number.isNaN(ax.step) ? (Number.isNaN(ay.step) ? 1 : ay.step) : ax.step;
    const dy = Number.isNaN(ay.step) ? dx : ay.step;
    const width = ax.count;
    const height = ay.count;
    const values = gridValues(width * height, true).fill(NaN);
    const owner = new Uint32Array(width * height);
    for (let i = 0; i < n; i++) {
      const c = width === 1 ? 0 : Math.round((x[i] - ax.lo) / dx);
      const r = height === 1 ? 0 : height - 1 - Math.round((y[i] - ay.lo) / dy); // row 0 at the largest y
      const k = r * width + c;
      if (owner[k] !== 0) {
        throw new InputError(
          `${src} lines ${owner[k]} and ${t.lines[i]} both give the lattice point (${x[i]}, ${y[i]}); remove one of them or average them` +
            (decided ? '' : ' (or, if the lines are rows of a matrix of values, give --layout matrix)'),
        );
      }
      owner[k] = t.lines[i];
      values[k] = v[i];
    }
    const ymax = ay.lo + (height - 1) * dy;
    const transform: GeoTransform = [ax.lo - dx / 2, dx, 0, ymax + dy / 2, 0, -dy];
    return new Grid({ width, height, values, transform, crs: null, nodata: nodata ?? null });
  }

  // Scattered samples: drop nodata points, refuse repeated locations, triangulate.
  const keep: number[] = [];
  for (let i = 0; i < n; i++) if (v[i] === v[i]) keep.push(i);
  const order = keep.slice().sort((a, b) => x[a] - x[b] || y[a] - y[b]);
  for (let k = 1; k < order.length; k++) {
    const a = order[k - 1];
    const b = order[k];
    if (x[a] === x[b] && y[a] === y[b]) {
      const [la, lb] = [t.lines[a], t.lines[b]].sort((p, q) => p - q);
      throw new InputError(`${src} lines ${la} and ${lb} both give a sample at (${x[a]}, ${y[a]}); remove one of them or average them`);
    }
  }
  const mx = new Float64Array(keep.length);
  const my = new Float64Array(keep.length);
  const mv = new Float64Array(keep.length);
  keep.forEach((i, k) => {
    mx[k] = x[i];
    my[k] = y[i];
    mv[k] = v[i];
  });
  try {
    return new Mesh(mx, my, mv);
  } catch (err) {
    if (err instanceof InputError) throw new InputError(`${src}: ${err.message}`);
    throw err;
  }
}

/**
 * Parse a text surface. With `origin` or `spacing` the lines are a matrix of values (one
 * grid row per line). Otherwise rows of exactly three fields, or any rows when `columns`
 * is given, are x y value samples: a Grid when they fill a regular lattice, a Mesh when
 * they are scattered. Rows of another constant length are a matrix with origin 0,0 and
 * spacing 1,1.
 */
export function parseTextSurface(text: string, opts: TextSurfaceOptions = {}): Grid | Mesh {
  const src = opts.source ?? 'text input';
  checkPair('origin', opts.origin, false);
  checkPair('spacing', opts.spacing, true);
  if (opts.nodata !== undefined && typeof opts.nodata !== 'number') {
    throw new InputError(`nodata must be a number, got ${String(opts.nodata)}`);
  }
  const layout = opts.layout;
  if (layout !== undefined && !TEXT_LAYOUTS.includes(layout)) throw new InputError(`layout must be matrix or columns, got '${String(layout)}'`);
  const matrixAsked = opts.origin !== undefined || opts.spacing !== undefined;
  if (matrixAsked && opts.columns !== undefined) {
    throw new InputError('columns applies to x y value input and origin/spacing to a matrix of values; give one or the other');
  }
  if (layout === 'matrix' && opts.columns !== undefined) throw new InputError('columns names the x y value columns, but layout is matrix; give one or the other');
  if (layout === 'columns' && matrixAsked) throw new InputError('origin and spacing place a matrix of values, but layout is columns (x y value rows carry their own coordinates); leave origin and spacing out');
  const table = readTable(text, src);
  if (layout === 'matrix') return matrixGrid(table, src, opts);
  if (layout === 'columns' || opts.columns !== undefined) return columnsSurface(table, src, opts, readColumns(table, src, opts), true);
  if (table.fields !== 3) {
    // x y value needs exactly 3 fields (or --columns): any other constant count is a matrix
    return matrixGrid(table, src, opts);
  }
  if (matrixAsked) {
    if (table.header || looksLikeColumns(table, src, opts)) {
      throw new InputError(
        `${src} reads as x y value columns (${table.header ? 'it has a header line' : 'its rows fill a regular lattice'}), and origin/spacing place a matrix of values; ` +
          'leave --origin/--spacing out (the columns carry their own coordinates), or give --layout matrix if each line really is a row of 3 values',
      );
    }
    return matrixGrid(table, src, opts);
  }
  const reading = readColumns(table, src, opts);
  if (reading.lattice || table.header) return columnsSurface(table, src, opts, reading, table.header);
  throw new InputError(
    `${src}: ${table.rows} rows of 3 numbers without a header could be a 3 × ${table.rows} matrix of values or ${table.rows} scattered x y value samples; ` +
      'say which with --layout matrix (add --origin/--spacing to place it) or --layout columns (or add a header line such as: x y value)',
  );
}

/** 3-field rows that read as x y value columns: at least 4 of them, filling at least half of a lattice at least 2 × 2. */
function looksLikeColumns(t: Table, src: string, opts: TextSurfaceOptions): boolean {
  if (t.rows < 4) return false;
  let r: ColumnsReading;
  try {
    r = readColumns(t, src, opts);
  } catch {
    return false; // not usable as columns (non-finite coordinates, out of range): a matrix is what is left
  }
  if (!r.lattice) return false;
  const { ax, ay } = r.lattice;
  return ax.count >= 2 && ay.count >= 2 && ax.count * ay.count <= 2 * t.rows;
}

/** Read a text surface from a file; see parseTextSurface. */
export async function readTextSurface(path: string, opts: Omit<TextSurfaceOptions, 'source'> = {}): Promise<Grid | Mesh> {
  const { fh, size } = await openForReading(path);
  let text: string;
  try {
    text = await fh.readFile('utf8');
  } catch (err) {
    if ((err as NodeJS.ErrnoException)?.code === 'ERR_STRING_TOO_LONG') {
      throw new InputError(`cannot read ${path}: ${size} bytes is too large for a text surface; convert it to a GeoTIFF or a .npy array`);
    }
    throw new InputError(`cannot read ${path}: ${(err as Error).message}`);
  } finally {
    await fh.close().catch(() => undefined);
  }
  return parseTextSurface(text, { ...opts, source: path });
}
