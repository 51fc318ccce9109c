/**
 * 3-D grids from files (docs/grids3d.md):
 * - `.npy` 3-D arrays indexed [z, y, x] (C order: x fastest, as a 2-D array's [row, column] is
 *   [y, x]; Fortran order read accordingly), placed by `origin` and `spacing` (three values each);
 * - text rows `x y z value` (header line of four names, or `columns` with four column numbers)
 *   filling a regular lattice in any order; lattice points no row gives are nodata. Origin and
 *   spacing come from the coordinates.
 * Periodic axes: `periodicAxes` with `period` (one value for all of them, or one per periodic
 * axis); without `period` an axis of n points and spacing d has period n·d. A lattice that holds
 * both ends of the period (n·d = period + d) or does not span it is refused.
 */
import { InputError } from '../errors.js';
import { Grid3 } from '../surface/grid3.js';
import { MAX_CELLS } from '../surface/grid.js';
import { openForReading, printable, readAt } from './common.js';
import { readNpyHeader } from './npy.js';
import { readTable, cleanValue, latticeAxis, LATTICE_MAX_FILL, LATTICE_TOLERANCE } from './text.js';
import { VALUE_LIMIT } from './range.js';
import { readFile, stat } from 'node:fs/promises';
import { extname } from 'node:path';

export type Triple = [number, number, number];

export interface Grid3ReadOptions {
  /** .npy: coordinates of point [0, 0, 0]. Default [0, 0, 0]. */
  origin?: Triple;
  /** .npy: steps along x, y, z (positive). Default [1, 1, 1]. */
  spacing?: Triple;
  /** Values equal to this are nodata. */
  nodata?: number;
  /** Text: 1-based columns of x, y, z and value. Default [1, 2, 3, 4]. */
  columns?: [number, number, number, number];
  /** Axes that wrap, [x, y, z]. */
  periodicAxes?: [boolean, boolean, boolean];
  /** Period of the periodic axes: one value for all, or one per periodic axis in x, y, z order. */
  period?: number[];
}

const AXES = 'xyz';

/**
 * True when `path` holds a 3-D grid: a .npy file with a 3-D array, or text whose rows have four
 * fields under a header line of four names, or any text when `--columns` names four columns.
 * `columns`: how many column numbers --columns gives (0: none; 3 asks for x y value text).
 */
export async function isGrid3File(path: string, columns: number): Promise<boolean> {
  // anything that is not a readable file (a folder of tiles, a missing path) is for the 2-D readers to judge
  try {
    if (!(await stat(path)).isFile()) return false;
  } catch {
    return false;
  }
  let opened: Awaited<ReturnType<typeof openForReading>>;
  try {
    opened = await openForReading(path);
  } catch {
    return false;
  }
  const fh = opened.fh;
  try {
    const head = await readAt(fh, 0, 4096);
    if (head.length >= 6 && head[0] === 0x93 && String.fromCharCode(...head.subarray(1, 6)) === 'NUMPY') {
      const hdr = new TextDecoder('latin1').decode(head);
      const shape = /'shape'\s*:\s*\(([^)]*)\)/.exec(hdr);
      return shape !== null && shape[1].split(',').filter((s) => s.trim() !== '').length === 3;
    }
    const ext = extname(path).toLowerCase();
    if (ext === '.tif' || ext === '.tiff' || ext === '.vrt' || head.includes(0)) return false;
    if (columns === 4) return true;
    if (columns === 3) return false;
    const text = new TextDecoder('utf-8').decode(head);
    for (const raw of text.split('\n')) {
      const line = raw.trim();
      if (line === '' || line.startsWith('#')) continue;
      const parts = line.split(/\s*,\s*|\s+/);
      return parts.length === 4 && parts.every((p) => p !== '' && !/^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/.test(p) && !/^[+-]?(nan|inf|infinity)$/i.test(p));
    }
    return false;
  } finally {
    await fh.close().catch(() => undefined);
  }
}

export async function readGrid3(path: string, opts: Grid3ReadOptions = {}): Promise<Grid3> {
  const { fh } = await openForReading(path);
  let npy = false;
  try {
    const head = await readAt(fh, 0, 6);
    npy = head.length >= 6 && head[0] === 0x93 && String.fromCharCode(...head.subarray(1, 6)) === 'NUMPY';
  } finally {
    await fh.close().catch(() => undefined);
  }
  const grid = npy ? await readNpy3(path, opts) : await readText3(path, opts);
  if (grid.validCount() === 0) throw new InputError(`${path}: every point of the ${grid.nx}×${grid.ny}×${grid.nz} grid is nodata; nothing to analyse (check --nodata)`);
  return withPeriods(grid, path, opts);
}

function checkTriple(name: string, p: Triple | undefined, positive: boolean): void {
  if (p === undefined) return;
  if (!Array.isArray(p) || p.length !== 3 || !p.every(Number.isFinite) || (positive && !p.every((x) => x > 0))) {
    throw new InputError(`${name} of a 3-D grid must be three finite numbers${positive ? ', all positive' : ''} (x,y,z), got ${JSON.stringify(p)}`);
  }
}

async function readNpy3(path: string, opts: Grid3ReadOptions): Promise<Grid3> {
  checkTriple('--origin', opts.origin, false);
  checkTriple('--spacing', opts.spacing, true);
  if (opts.columns !== undefined) throw new InputError(`--columns applies to x y z value text input, and ${path} is a .npy array`);
  const { fh, size } = await openForReading(path);
  try {
    const hdr = await readNpyHeader(path, fh, size, 3);
    const [nz, ny, nx] = hdr.shape;
    const cells = nx * ny * nz;
    if (cells === 0) throw new InputError(`${path} holds an empty array of shape (${hdr.shape.join(', ')}); a 3-D grid needs at least one point`);
    if (cells > MAX_CELLS) throw new InputError(`${path}: ${nx}×${ny}×${nz} is ${cells.toExponential(3)} points, more than the limit of ${MAX_CELLS.toExponential(0)}; cut or coarsen the grid`);
    const dt = hdr.dtype;
    const need = cells * dt.size;
    if (size - hdr.dataOffset < need) {
      throw new InputError(`${path} is truncated: its header declares a ${hdr.shape.join('×')} '${dt.kind}${dt.size}' array (${need} bytes of data) but only ${size - hdr.dataOffset} bytes follow; save the array again`);
    }
    const float64 = dt.size === 8 || (dt.kind !== 'f' && dt.size === 4);
    const values = float64 ? new Float64Array(cells) : new Float32Array(cells);
    const hostLittle = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
    const swap = dt.size > 1 && dt.bigEndian === hostLittle;
    const nodata = opts.nodata;
    const chunk = Math.max(1, Math.floor((8 << 20) / dt.size));
    for (let start = 0; start < cells; start += chunk) {
      const count = Math.min(chunk, cells - start);
      const bytes = await readAt(fh, hdr.dataOffset + start * dt.size, count * dt.size);
      if (bytes.length < count * dt.size) throw new InputError(`${path} is truncated: the data ends early; save the array again`);
      const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.length);
      if (swap) { if (dt.size === 2) buf.swap16(); else if (dt.size === 4) buf.swap32(); else buf.swap64(); }
      const ab = bytes.buffer as ArrayBuffer, o = bytes.byteOffset;
      const src = dt.kind === 'f'
        ? dt.size === 4 ? new Float32Array(ab, o, count) : new Float64Array(ab, o, count)
        : dt.kind === 'i'
          ? dt.size === 1 ? new Int8Array(ab, o, count) : dt.size === 2 ? new Int16Array(ab, o, count) : new Int32Array(ab, o, count)
          : dt.size === 1 ? new Uint8Array(ab, o, count) : dt.size === 2 ? new Uint16Array(ab, o, count) : new Uint32Array(ab, o, count);
      for (let q = 0; q < count; q++) {
        const lin = start + q;
        // C order: lin = x + nx·(y + ny·z) already; Fortran order: lin = z + nz·(y + ny·x)
        let k = lin;
        if (hdr.fortran) { const z = lin % nz, r = (lin - z) / nz, y = r % ny, x = (r - y) / ny; k = x + nx * (y + ny * z); }
        const v = src[q];
        if (v === nodata || v !== v) { values[k] = NaN; continue; }
        if (!(Math.abs(v) <= VALUE_LIMIT)) {
          const x = k % nx, y = Math.floor(k / nx) % ny, z = Math.floor(k / (nx * ny));
          throw new InputError(`${path}: the value at [z, y, x] = [${z}, ${y}, ${x}] is ${v}; values must be finite and within ±1e150 — fix the array or mark such values as nodata (--nodata)`);
        }
        values[k] = v;
      }
    }
    return new Grid3({ nx, ny, nz, values, origin: opts.origin ?? [0, 0, 0], spacing: opts.spacing ?? [1, 1, 1] });
  } finally {
    await fh.close().catch(() => undefined);
  }
}

async function readText3(path: string, opts: Grid3ReadOptions): Promise<Grid3> {
  if (opts.origin !== undefined || opts.spacing !== undefined) {
    throw new InputError(`${path}: x y z value columns carry their own coordinates; --origin and --spacing apply to .npy input — leave them out`);
  }
  const cols = opts.columns ?? [1, 2, 3, 4];
  if (cols.length !== 4 || new Set(cols).size !== 4 || !cols.every((c) => Number.isInteger(c) && c >= 1)) {
    throw new InputError(`--columns for a 3-D grid takes four different 1-based column numbers (x,y,z,value), got '${cols.join(',')}'`);
  }
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    throw new InputError(`cannot read ${path}: ${(err as Error).message}`);
  }
  const t = readTable(text, path);
  const bad = cols.find((c) => c > t.fields);
  if (bad !== undefined) throw new InputError(`${path}: column ${bad} was asked for but the rows have ${t.fields} field${t.fields === 1 ? '' : 's'}; check --columns`);
  const names = headerNames(text, cols);
  const n = t.rows;
  const coords = [new Float64Array(n), new Float64Array(n), new Float64Array(n)];
  const v = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    const b = r * t.fields;
    for (let a = 0; a < 3; a++) {
      const c = t.data[b + cols[a] - 1];
      if (!Number.isFinite(c) || Math.abs(c) > VALUE_LIMIT) {
        throw new InputError(`${path} line ${t.lines[r]}, column ${cols[a]}: the ${AXES[a]} coordinate is ${c}; coordinates must be finite numbers within ±1e150`);
      }
      coords[a][r] = c;
    }
    v[r] = cleanValue(t.data[b + cols[3] - 1], opts.nodata, path, t.lines[r], cols[3]);
    if (Math.abs(v[r]) > VALUE_LIMIT) throw new InputError(`${path} line ${t.lines[r]}, column ${cols[3]}: the value ${v[r]} is beyond ±1e150; rescale the values`);
  }
  const maxNodes = LATTICE_MAX_FILL * n;
  const axes = coords.map((c, a) => {
    const ax = latticeAxis(c, maxNodes);
    if (ax === null) {
      throw new InputError(`${path}: the ${AXES[a]} coordinates (column ${cols[a]}) do not form a regular lattice (evenly spaced within ${LATTICE_TOLERANCE * 100} % of the step); a 3-D grid needs x y z value rows on a lattice`);
    }
    return ax;
  });
  const size = axes.map((ax) => ax.count);
  const cells = size[0] * size[1] * size[2];
  if (cells > maxNodes) {
    throw new InputError(`${path}: the ${n} rows cover only ${((100 * n) / cells).toFixed(1)} % of their ${size.join('×')} lattice; a 3-D grid needs rows for at least ${100 / LATTICE_MAX_FILL} % of its points (missing points are nodata)`);
  }
  const step = axes.map((ax) => (Number.isNaN(ax.step) ? 1 : ax.step));
  const values = new Float64Array(cells).fill(NaN);
  const owner = new Uint32Array(cells);
  for (let r = 0; r < n; r++) {
    const ijk = [0, 1, 2].map((a) => (size[a] === 1 ? 0 : Math.round((coords[a][r] - axes[a].lo) / step[a])));
    const k = ijk[0] + size[0] * (ijk[1] + size[1] * ijk[2]);
    if (owner[k] !== 0) {
      throw new InputError(`${path} lines ${owner[k]} and ${t.lines[r]} both give the lattice point (${coords[0][r]}, ${coords[1][r]}, ${coords[2][r]}); remove one of them or average them`);
    }
    owner[k] = t.lines[r];
    values[k] = v[r];
  }
  return new Grid3({
    nx: size[0], ny: size[1], nz: size[2], values, normalised: false,
    origin: [axes[0].lo, axes[1].lo, axes[2].lo], spacing: [step[0], step[1], step[2]],
    names: names ?? undefined,
  });
}

/** The names of the x, y, z columns from a header line, or null. */
function headerNames(text: string, cols: number[]): [string, string, string] | null {
  for (const raw of text.split('\n', 200)) {
    const line = raw.trim().replace(/^\ufeff/, '');
    if (line === '') continue;
    const body = line.startsWith('#') ? line.slice(1).trim() : line;
    const parts = body.split(/\s*,\s*|\s+/);
    const numeric = parts.some((p) => /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/.test(p));
    if (line.startsWith('#') && (numeric || parts.length < 4)) continue;
    if (numeric) return null;
    if (cols.some((c) => c > parts.length)) return null;
    return [printable(parts[cols[0] - 1]), printable(parts[cols[1] - 1]), printable(parts[cols[2] - 1])];
  }
  return null;
}

/** Set the periods of the periodic axes, checking that the lattice spans exactly one period. */
function withPeriods(g: Grid3, path: string, opts: Grid3ReadOptions): Grid3 {
  const wrap = opts.periodicAxes ?? [false, false, false];
  const which = [0, 1, 2].filter((a) => wrap[a]);
  const given = opts.period;
  if (given !== undefined) {
    if (which.length === 0) throw new InputError('--period needs periodic axes: give --periodic-axes (e.g. x,y) or --boundary periodic');
    if (given.length !== 1 && given.length !== which.length) {
      throw new InputError(`--period takes one value or one per periodic axis (${which.map((a) => AXES[a]).join(',')}), got ${given.length}`);
    }
    if (!given.every((p) => Number.isFinite(p) && p > 0)) throw new InputError(`--period must be positive, got ${given.join(',')}`);
  }
  const periods: [number | null, number | null, number | null] = [null, null, null];
  const n = [g.nx, g.ny, g.nz];
  which.forEach((a, q) => {
    const span = n[a] * g.spacing[a];
    const p = given === undefined ? span : given.length === 1 ? given[0] : given[q];
    const tol = LATTICE_TOLERANCE * g.spacing[a];
    if (Math.abs(span - p) > tol) {
      const both = Math.abs(span - g.spacing[a] - p) <= tol;
      throw new InputError(both
        ? `${path}: the ${AXES[a]} axis holds both ends of its period ${p} (${n[a]} points ${g.spacing[a]} apart); drop the last layer so that each point appears once`
        : `${path}: the ${AXES[a]} axis has ${n[a]} points ${g.spacing[a]} apart (${span}), which is not one period ${p}; give the period the axis covers, or do not wrap it`);
    }
    periods[a] = p;
  });
  return new Grid3({
    nx: g.nx, ny: g.ny, nz: g.nz, values: g.values, normalised: true,
    origin: g.origin, spacing: g.spacing, periods, names: g.names ?? undefined,
  });
}
