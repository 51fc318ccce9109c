/** Option parsing and output plumbing shared by every command. */
import { Command, Option } from 'commander';
import { InputError } from '../errors.js';
import { BOUNDARIES, type Boundary, type Connectivity } from '../surface/complex.js';
import { OutputFolder } from '../io/outdir.js';
import { SILL_VERSION } from '../report/common.js';

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
  report?: boolean;
  png?: boolean;
  force?: boolean;
  threads?: string;
}

export function addCommonOptions(cmd: Command, defaults: { boundary: Boundary }): Command {
  return cmd
    .option('-o, --out <dir>', 'write the output files of this command into DIR')
    .option('--json', 'print the report object as JSON on stdout (and nothing else)')
    .addOption(new Option('--connectivity <n>', 'grid connectivity: 8 (sublevel 8-, superlevel 4-connected), 6 (triangulated), 4').default('8'))
    .addOption(new Option('--boundary <mode>', `grid boundary: ${BOUNDARIES.join(', ')}`).default(defaults.boundary))
    .option('--min-persistence <v>', 'drop features whose persistence is below V (surface units)', '0')
    .option('--band <n>', 'band of a multi-band GeoTIFF (1-based)', '1')
    .option('--nodata <v>', "value marking missing cells (a number, 'inf' or '-inf'); overrides the file's own")
    .option('--origin <x,y>', 'matrix text input: coordinates of the centre of the first value')
    .option('--spacing <dx,dy>', 'matrix text input: step along a line and from one line to the next')
    .option('--columns <x,y,v>', 'column text input: 1-based columns of x, y and value', '1,2,3')
    .option('--report', 'also write report.html (one self-contained page) and map.svg, tree.svg, persistence.svg into -o DIR')
    .option('--png', 'also render the map as map.png into -o DIR')
    .option('--force', 'write into an output folder that holds files sill did not write (they are kept; same-named ones are replaced)')
    .option('--threads <n>', 'threads to use (default: the number of cores; 1 keeps all work on one thread, with identical results)')
    .option('--quiet', 'no progress or summary on the terminal');
}

/**
 * The output folder of a run, checked before any work (src/io/outdir.ts): `names` are the files the
 * run may write, `inputs` the files it reads (refused when a result would take their place).
 */
export function openOutput(opts: { out?: string; force?: boolean }, command: string, names: readonly string[], inputs: readonly (string | undefined)[]): OutputFolder | null {
  if (!opts.out) return null;
  return new OutputFolder(opts.out, { command, version: SILL_VERSION, names, inputs, force: opts.force });
}

export function parseNumber(name: string, s: string | undefined, opts: { min?: number; integer?: boolean; positive?: boolean } = {}): number {
  const v = Number(s);
  if (s === undefined || s.trim() === '' || !Number.isFinite(v)) throw new InputError(`${name} must be a finite number, got '${s}'`);
  if (opts.integer && !Number.isInteger(v)) throw new InputError(`${name} must be a whole number, got '${s}'`);
  if (opts.min !== undefined && v < opts.min) throw new InputError(`${name} must be at least ${opts.min}, got '${s}'`);
  if (opts.positive && !(v > 0)) throw new InputError(`${name} must be greater than 0, got '${s}'`);
  return v;
}

/** --threads: a whole number from 1 up, or undefined for the library's default (the number of cores). */
export function parseThreads(s: string | undefined): number | undefined {
  return s === undefined ? undefined : parseNumber('--threads', s, { integer: true, min: 1 });
}

export function parsePair(name: string, s: string | undefined): [number, number] | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',');
  if (parts.length !== 2) throw new InputError(`${name} takes two numbers separated by a comma, got '${s}'`);
  return [parseNumber(name, parts[0]), parseNumber(name, parts[1])];
}

export function parseConnectivity(s: string | undefined): Connectivity {
  if (s === '4' || s === '6' || s === '8') return Number(s) as Connectivity;
  throw new InputError(`--connectivity must be 4, 6 or 8, got '${s}'`);
}

export function parseBoundary(s: string | undefined): Boundary {
  if (BOUNDARIES.includes(s as Boundary)) return s as Boundary;
  throw new InputError(`--boundary must be one of ${BOUNDARIES.join(', ')}, got '${s}'`);
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

export function parseColumns(s: string | undefined): [number, number, number] | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',').map((p) => parseNumber('--columns', p, { integer: true, min: 1 }));
  if (parts.length !== 3) throw new InputError(`--columns takes three 1-based column numbers (x,y,value), got '${s}'`);
  return parts as [number, number, number];
}

/** Status lines on stderr: only when it is a terminal and not --quiet. */
export class Progress {
  private readonly on: boolean;
  private readonly t0 = Date.now();
  constructor(quiet: boolean | undefined) {
    this.on = !quiet && !!process.stderr.isTTY;
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
