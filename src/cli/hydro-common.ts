/** What `sill ponds` and `sill runoff` share on the command line: option checks, streamed output files, the summary's common lines. */
import { openSync, writeSync, closeSync } from 'node:fs';
import { once } from 'node:events';
import { InputError, SelfCheckError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Connectivity } from '../surface/complex.js';
import type { StageRow } from '../hydro/stage.js';
import type { DepressionOutline } from '../hydro/vectors.js';
import type { PondsUnits } from '../hydro/areas.js';
import type { SurfaceInfo, EulerInfo } from '../report/common.js';
import { toCsv, featureCollection, type Feature } from '../io/tables.js';
import { parseBoundary, parseConnectivity, parseNumber, THRESHOLD, type CommonOptions } from './common.js';

export interface HydroCliOptions extends CommonOptions {
  nodataAs?: string;
  zFactor?: string;
  stageVolume?: string;
  stageStep?: string;
}

/** --connectivity, and --boundary, which must be open (`command` names the command in the message). */
export function parseOpenBoundary(command: string, opts: HydroCliOptions): { connectivity: Connectivity; boundary: 'open' } {
  const connectivity = parseConnectivity(opts.connectivity);
  const boundary = parseBoundary(opts.boundary);
  if (boundary !== 'open') {
    throw new InputError(`${command} needs --boundary open (water leaves the map at its edge and, unless --nodata-as wall, at nodata cells); got '${boundary}'`);
  }
  return { connectivity, boundary };
}

export function parseNodataAs(opts: HydroCliOptions): 'outlet' | 'wall' {
  const nodataAs = opts.nodataAs ?? 'outlet';
  if (nodataAs !== 'outlet' && nodataAs !== 'wall') throw new InputError(`--nodata-as must be outlet or wall, got '${nodataAs}'`);
  return nodataAs;
}

/** --z-factor, --stage-volume and --stage-step, checked together. */
export function parseZAndStage(opts: HydroCliOptions): { zFactor?: number; stageId?: number; stageStep?: number } {
  const zFactor = opts.zFactor === undefined ? undefined : parseNumber('--z-factor', opts.zFactor, { positive: true, max: 1e6, minMagnitude: 1e-6, why: 'it is metres per vertical unit of the DEM, between micrometres (1e-6) and thousands of kilometres (1e6)' });
  const stageId = opts.stageVolume === undefined ? undefined : parseNumber('--stage-volume', opts.stageVolume, { integer: true, min: 1, max: 2 ** 31 - 1, why: 'depression ids are 32-bit (see depressions.csv for the ids of this DEM)' });
  const stageStep = opts.stageStep === undefined ? undefined : parseNumber('--stage-step', opts.stageStep, { ...THRESHOLD, positive: true });
  if (stageStep !== undefined && stageId === undefined) throw new InputError('--stage-step needs --stage-volume ID');
  if (stageId !== undefined && !opts.out) throw new InputError('--stage-volume writes a table: give an output folder with -o/--out');
  return { zFactor, stageId, stageStep };
}

/** After the analysis: the Euler relation holds, and the --stage-volume id names a depression (`table` lists them). */
export function checkHydroReport(report: { euler: EulerInfo | null; depressions: readonly unknown[] }, stageId: number | undefined, table: string): void {
  if (report.euler && !report.euler.holds) {
    throw eulerFailure(report.euler);
  }
  const n = report.depressions.length;
  if (stageId !== undefined && stageId > n) {
    throw new InputError(`--stage-volume ${stageId}: there ${n === 1 ? 'is 1 depression' : `are ${n} depressions`} (ids 1…${n}); pick one from ${table}`);
  }
}

/** The Euler relation failed: the figures for the one-line message. */
export function eulerFailure(e: EulerInfo): SelfCheckError {
  return new SelfCheckError('the Euler relation does not hold', `χ = ${e.characteristic} by counting simplices, pits − passes + peaks = ${e.pits - e.passes + e.peaks}`);
}

/** Largest relative water-balance error a run may report: |input − ponded − outflow| / input. */
export const BALANCE_TOLERANCE = 1e-9;

/** Refuse a runoff result whose water does not balance. */
export function checkBalance(w: { input: number; ponded: number; outflow: number; balanceError: number }): void {
  if (!(w.balanceError <= BALANCE_TOLERANCE)) {
    throw new SelfCheckError(
      `the water balance is off by ${w.balanceError.toExponential(2)} relative, more than ${BALANCE_TOLERANCE}`,
      `input ${w.input.toPrecision(10)}, ponded ${w.ponded.toPrecision(10)}, outflow ${w.outflow.toPrecision(10)}`,
      'if the runoff depth is tiny next to the elevations, subtract a base elevation from the DEM; otherwise this is a bug in sill, please report it with the input',
    );
  }
}

/** Text pieces to stdout, waiting when it is full (a large report can be longer than one string may be). */
export async function printChunks(chunks: Iterable<string>): Promise<void> {
  for (const chunk of chunks) {
    if (!process.stdout.write(chunk)) await once(process.stdout, 'drain');
  }
}

/** Write text pieces to a file through a 1 MB buffer (no single string holds the whole file). */
export function writeChunks(path: string, chunks: Iterable<string>): void {
  const fd = openSync(path, 'w');
  try {
    let buf: string[] = [], size = 0;
    for (const c of chunks) {
      buf.push(c);
      size += c.length;
      if (size >= 1 << 20) { writeSync(fd, buf.join('')); buf = []; size = 0; }
    }
    if (buf.length) writeSync(fd, buf.join(''));
  } finally {
    closeSync(fd);
  }
}

/** A report as JSON text in pieces: every other key, then each of the `lists` one record a line. */
export function* listJsonChunks(report: object, lists: readonly string[], pretty: boolean): Generator<string> {
  const rest: Record<string, unknown> = { ...report };
  for (const name of lists) delete rest[name];
  const head = pretty ? JSON.stringify(rest, null, 1) : JSON.stringify(rest);
  yield head.slice(0, head.lastIndexOf('}')).replace(/\s+$/, '');
  for (const name of lists) {
    const rows = (report as Record<string, readonly unknown[]>)[name];
    yield pretty ? `,\n "${name}": [` : `,"${name}":[`;
    for (let k = 0; k < rows.length; k++) yield (k ? ',' : '') + (pretty ? '\n  ' : '') + JSON.stringify(rows[k]);
    yield pretty && rows.length ? '\n ]' : ']';
  }
  yield pretty ? '\n}\n' : '}\n';
}

/** CSV text in pieces of 10 000 rows (one header). */
export function* csvChunks<T>(rows: readonly T[], columns: readonly [string, (r: T) => unknown][]): Generator<string> {
  for (let k = 0; k < Math.max(1, rows.length); k += 10000) {
    const text = toCsv(rows.slice(k, k + 10000), columns);
    yield k === 0 ? text : text.slice(text.indexOf('\n') + 1);
  }
}

/** A GeoJSON feature collection in pieces, in the layout of featureCollection (src/io/tables.ts), one feature at a time. */
export function* collectionChunks(crs: Grid['crs'], meta: Record<string, unknown>, features: Iterable<Feature>): Generator<string> {
  const empty = featureCollection([], crs, meta);
  yield empty.slice(0, empty.lastIndexOf('[') + 1);
  let first = true;
  for (const f of features) {
    yield (first ? '' : ',') + JSON.stringify(f);
    first = false;
  }
  yield ']}\n';
}

/** The stage-volume table as CSV (units in the headers). */
export function stageCsv(table: StageRow[], tokens: PondsUnits['tokens']): string {
  return toCsv(table, [
    [`level_${tokens.elevation}`, (s) => s.level],
    [`area_${tokens.area}`, (s) => s.area],
    [`volume_${tokens.volume}`, (s) => s.volume],
    ['cells', (s) => s.cells],
  ]);
}

/** The report's `outlines` entry: how many were traced, and `omittedNote(n)` when n were left out. */
export function outlinesEntry(outlines: DepressionOutline[], omittedNote: (n: number) => string, allNote: string): { traced: number; omitted: number; note: string } {
  const omitted = outlines.reduce((k, o) => k + (o.omitted ? 1 : 0), 0);
  return { traced: outlines.length - omitted, omitted, note: omitted > 0 ? omittedNote(omitted) : allNote };
}

interface SummaryHead {
  surface: SurfaceInfo;
  nodataAs: 'outlet' | 'wall';
  connectivity: number;
  euler: EulerInfo | null;
}

/** The summary's first lines: the surface, the outlets, the Euler check. */
export function summaryHead(r: SummaryHead): string[] {
  const s = r.surface;
  const lines: string[] = [];
  lines.push(`surface      ${s.width} × ${s.height} grid, ${s.validCells} valid cells${s.crs?.name ? `, ${s.crs.name}` : ', no CRS'}`);
  lines.push(`outlets      grid edge${r.nodataAs === 'outlet' ? ' and nodata cells' : ' (nodata cells are walls)'}; connectivity ${r.connectivity}`);
  if (r.euler) {
    const e = r.euler;
    lines.push(`Euler        pits − passes + peaks = ${e.pits - e.passes + e.peaks}, χ = ${e.characteristic} by counting simplices: ${e.holds ? 'holds' : 'FAILS'}`);
  }
  return lines;
}

/** The summary's last lines: the caution, the outlines left out, the files written. */
export function summaryTail(r: { caution: string; outlines?: { omitted: number; note: string } }, outDir: string | undefined, files: string[]): string[] {
  const lines = [`caution      ${r.caution}`];
  if (r.outlines && r.outlines.omitted > 0) lines.push(`outlines     ${r.outlines.note}`);
  if (outDir) lines.push(`files        ${outDir}/ ${files.map((f) => f.split(/[\\/]/).pop()).join(' ')}`);
  return lines;
}
