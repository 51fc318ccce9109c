/** Option parsing and output plumbing shared by every command. */
import { statSync } from 'node:fs';
import { Command, Option } from 'commander';
import { InputError } from '../errors.js';
import { BOUNDARIES, type Boundary, type Connectivity } from '../surface/complex.js';
import { OutputFolder } from '../io/outdir.js';
import { SILL_VERSION } from '../report/common.js';
import { VALUE_LIMIT } from '../io/range.js';
import { TEXT_LAYOUTS, type TextLayout } from '../io/text.js';

export { VALUE_LIMIT };

export interface CommonOptions {
  out?: string;
  json?: boolean;
  connectivity?: string;
  boundary?: string;
  minPersistence?: string;
  band?: string;
  nodata?: string;
  quiet?: boolean;
  origin?: string;
  spacing?: string;
  columns?: string;
  layout?: string;
  report?: boolean;
  png?: boolean;
  force?: boolean;
  threads?: string;
}

export function addCommonOptions(cmd: Command, defaults: { boundary: Boundary }): Command {
  return cmd
    .option('-o, --out <dir>', 'write the output files of this command into DIR')
    .option('--json', 'print the report object as JSON on stdout (and nothing else)')
    .addOption(new Option('--connectivity <n>', 'grid connectivity: 8 (sublevel 8-, superlevel 4-connected), 6 (triangulated), 4; 3-D grids: 14 (triangulated, their default) or 26').default('8'))
    .addOption(new Option('--boundary <mode>', `grid boundary: ${BOUNDARIES.join(', ')}`).default(defaults.boundary))
    .option('--min-persistence <v>', 'drop features whose persistence is below V (surface units)', '0')
    .option('--band <n>', 'band of a multi-band GeoTIFF (1-based, at most 65535)', '1')
    .option('--nodata <v>', "value marking missing cells (a number, 'inf' or '-inf'); overrides the file's own")
    .option('--origin <x,y>', 'matrix text input: coordinates of the centre of the first value')
    .option('--spacing <dx,dy>', 'matrix text input: step along a line and from one line to the next')
    .option('--columns <x,y,v>', 'column text input: 1-based columns of x, y and value', '1,2,3')
    .option('--layout <layout>', 'text input: read the lines as a matrix of values or as x y value columns (needed when the file leaves it open)')
    .option('--report', 'also write report.html (one self-contained page) and map.svg, tree.svg, persistence.svg into -o DIR')
    .option('--png', 'also render the map as map.png into -o DIR')
    .option('--force', 'write into an output folder that holds files sill did not write (they are kept; same-named ones are replaced)')
    .option('--threads <n>', 'threads to use (default: the number of cores; 1 keeps all work on one thread, with identical results)')
    .option('--quiet', 'no progress or summary on the terminal');
}

/** The GeoPackage holding every vector output of a run as layers (left out with --no-gpkg). */
export const GPKG_FILE = 'results.gpkg';

/**
 * The time results.gpkg records as its layers' last change: the input's modification time, so
 * that a run repeated on the same input writes the same bytes (now, if the input cannot be read).
 */
export function inputTime(input: string): Date {
  try {
    return statSync(input).mtime;
  } catch {
    return new Date();
  }
}

/** --no-gpkg, for the commands with vector outputs. */
export const NO_GPKG = ['--no-gpkg', 'do not write results.gpkg (the GeoPackage of the vector outputs)'] as const;

/**
 * The output folder of a run, checked before any work (src/io/outdir.ts): `names` are the files the
 * run may write, `inputs` the files it reads (refused when a result would take their place).
 */
export function openOutput(opts: { out?: string; force?: boolean }, command: string, names: readonly string[], inputs: readonly (string | undefined)[]): OutputFolder | null {
  if (!opts.out) return null;
  return new OutputFolder(opts.out, { command, version: SILL_VERSION, names, inputs, force: opts.force });
}

export interface NumberLimits {
  min?: number;
  /** Upper bound; `why` says where it comes from (shown in the message). */
  max?: number;
  why?: string;
  integer?: boolean;
  positive?: boolean;
  /** Smallest magnitude other than 0 (values whose squares would underflow); `why` applies too. */
  minMagnitude?: number;
}

/**
 * Bounds of options that set a length, a coordinate or a threshold in surface units: the same range
 * the loaders accept for values and coordinates (src/io/range.ts), so squares and products stay
 * inside float64.
 */
export const VALUE_WHY = 'larger magnitudes overflow float64 when squared or multiplied; rescale the input (e.g. to km or kJ/mol) instead';

/** Thresholds in surface units (persistence, depth, level steps): 0 up to the value range. */
export const THRESHOLD: NumberLimits = { min: 0, max: VALUE_LIMIT, why: VALUE_WHY };
/** Thresholds of areas and volumes: 0 up to 1e300 (the square of the value range). */
export const AREA_THRESHOLD: NumberLimits = { min: 0, max: 1e300, why: 'beyond any area or volume sill can compute (float64 overflows)' };

export function parseNumber(name: string, s: string | undefined, opts: NumberLimits = {}): number {
  const v = Number(s);
  if (s === undefined || s.trim() === '' || !Number.isFinite(v)) throw new InputError(`${name} must be a finite number, got '${s}'`);
  if (opts.integer && !Number.isInteger(v)) throw new InputError(`${name} must be a whole number, got '${s}'`);
  if (opts.min !== undefined && v < opts.min) throw new InputError(`${name} must be at least ${opts.min}, got '${s}'`);
  if (opts.positive && !(v > 0)) throw new InputError(`${name} must be greater than 0, got '${s}'`);
  if (opts.max !== undefined && v > opts.max) throw new InputError(`${name} must be at most ${fmtLimit(opts.max)}, got '${s}'${opts.why ? `: ${opts.why}` : ''}`);
  if (opts.minMagnitude !== undefined && v !== 0 && Math.abs(v) < opts.minMagnitude) {
    throw new InputError(`${name} must be 0 or at least ${fmtLimit(opts.minMagnitude)} in magnitude, got '${s}'${opts.why ? `: ${opts.why}` : ''}`);
  }
  return v;
}

/** --threads: a whole number from 1 to 256, or undefined for the library's default (the number of cores). */
export function parseThreads(s: string | undefined): number | undefined {
  return s === undefined ? undefined : parseNumber('--threads', s, { integer: true, min: 1, max: 256, why: 'sill uses at most one worker per core, and no machine it runs on has more than 256' });
}

/** A limit for a message: whole numbers below 1e15 in groups of three (65 535), others like 1e150 or 0.001. */
function fmtLimit(x: number): string {
  if (Number.isInteger(x) && Math.abs(x) < 1e15) return String(x).replace(/\B(?=(\d{3})+(?!\d))/g, ' ');
  return Math.abs(x) >= 1e7 || (x !== 0 && Math.abs(x) < 1e-4) ? x.toExponential().replace('e+', 'e') : String(x);
}

export function parsePair(name: string, s: string | undefined): [number, number] | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',');
  if (parts.length !== 2) throw new InputError(`${name} takes two numbers separated by a comma, got '${s}'`);
  const lim = { max: VALUE_LIMIT, why: VALUE_WHY };
  const v: [number, number] = [parseNumber(name, parts[0], lim), parseNumber(name, parts[1], lim)];
  if (v.some((x) => x < -VALUE_LIMIT)) throw new InputError(`${name} must lie between -${VALUE_LIMIT.toExponential()} and ${VALUE_LIMIT.toExponential()}, got '${s}': ${VALUE_WHY}`);
  if (name === '--spacing' && v.some((x) => x !== 0 && Math.abs(x) < 1 / VALUE_LIMIT)) {
    throw new InputError(`${name} steps must be at least ${(1 / VALUE_LIMIT).toExponential()} in magnitude, got '${s}': cell areas would underflow float64; give the spacing in a smaller unit`);
  }
  return v;
}

export function parseConnectivity(s: string | undefined): Connectivity {
  if (s === '4' || s === '6' || s === '8') return Number(s) as Connectivity;
  throw new InputError(`--connectivity must be 4, 6 or 8, got '${s}'`);
}

export function parseBoundary(s: string | undefined): Boundary {
  if (BOUNDARIES.includes(s as Boundary)) return s as Boundary;
  throw new InputError(`--boundary must be one of ${BOUNDARIES.join(', ')}, got '${s}'`);
}

export function parseLayout(s: string | undefined): TextLayout | undefined {
  if (s === undefined) return undefined;
  if (TEXT_LAYOUTS.includes(s as TextLayout)) return s as TextLayout;
  throw new InputError(`--layout must be matrix or columns, got '${s}'`);
}

export function parseNodata(s: string | undefined): number | undefined {
  if (s === undefined) return undefined;
  const t = s.trim().toLowerCase();
  if (t === 'inf' || t === '+inf' || t === 'infinity') return Infinity;
  if (t === '-inf' || t === '-infinity') return -Infinity;
  if (t === 'nan') return NaN;
  const v = Number(s);
  if (s.trim() === '' || Number.isNaN(v)) throw new InputError(`--nodata must be a number, 'inf', '-inf' or 'nan', got '${s}'`);
  return v;
}

/** Highest column number --columns accepts. */
export const MAX_COLUMN = 10000;

export function parseColumns(s: string | undefined): [number, number, number] | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',').map((p) => parseNumber('--columns', p, { integer: true, min: 1, max: MAX_COLUMN, why: 'rows with more fields than that are a matrix of values, not x y value columns (--layout matrix)' }));
  if (parts.length !== 3) throw new InputError(`--columns takes three 1-based column numbers (x,y,value), got '${s}'`);
  return parts as [number, number, number];
}

/** Status lines on stderr: only when it is a terminal and not --quiet. */
export class Progress {
  private readonly on: boolean;
  private readonly t0 = Date.now();
  constructor(quiet: boolean | undefined) {
    this.on = !quiet && (!!process.stderr.isTTY || process.env.SILL_STDERR_TTY === '1');
  }
  stage(what: string): void {
    if (this.on) process.stderr.write(`\r\x1b[K[${((Date.now() - this.t0) / 1000).toFixed(1)} s] ${what}…`);
  }
  done(): void {
    if (this.on) process.stderr.write('\r\x1b[K');
  }
}

/** Print a human summary unless --json or --quiet. */
export function say(opts: CommonOptions, text: string): void {
  if (!opts.json && !opts.quiet) process.stdout.write(text.endsWith('\n') ? text : text + '\n');
}

/** A value for the terminal: `digits` significant digits, no float32 noise. */
export function fmt(x: number | null | undefined, digits = 5): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  if (x !== 0 && (Math.abs(x) >= 1e9 || Math.abs(x) < 1e-4)) return x.toExponential(digits - 1);
  if (Math.abs(x) >= 10 ** digits) return x.toFixed(0);
  return Number(x.toPrecision(digits)).toString();
}

/** A map coordinate for the terminal: two decimals for metres, six for degrees. */
export function fmtCoord(x: number, geographic = false): string {
  return geographic ? x.toFixed(6) : Number(x.toFixed(2)).toString();
}
