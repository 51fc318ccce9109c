/** What `sill ponds` and `sill runoff` share on the command line: option checks, streamed output files, the summary's common lines. */
import { relative, resolve } from 'node:path';
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Connectivity } from '../surface/complex.js';
import type { StageRow } from '../hydro/stage.js';
import type { PondsUnits } from '../hydro/areas.js';
import { eulerFailure } from '../report/common.js';
import type { SurfaceInfo, EulerInfo } from '../report/common.js';
import { toCsv, collectionHead } from '../io/tables.js';
import { TextSink, writeJson, writeCsv, withFileSink, FeatureCollectionWriter } from '../io/stream.js';
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
export function checkHydroReport(report: { euler: EulerInfo | null; depressions: { length: number } }, stageId: number | undefined, table: string): void {
  if (report.euler && !report.euler.holds) {
    throw eulerFailure(report.euler);
  }
  const n = report.depressions.length;
  if (stageId !== undefined && stageId > n) {
    throw new InputError(`--stage-volume ${stageId}: there ${n === 1 ? 'is 1 depression' : `are ${n} depressions`} (ids 1…${n}); pick one from ${table}`);
  }
}

export { eulerFailure, checkBalance, BALANCE_TOLERANCE } from '../report/common.js';

/** A report as JSON on stdout (compact, then a newline), streamed from its columns. */
export function printReport(report: object): void {
  const sink = new TextSink(1);
  writeJson(sink, report, 0);
  sink.write('\n');
  sink.close();
}

/** A report as report.json (indented by one space, lists one record a line), streamed from its columns. */
export function writeReportFile(path: string, report: object): void {
  withFileSink(path, (sink) => {
    writeJson(sink, report, 1);
    sink.write('\n');
  });
}

/**
 * A CSV table of ids 1..n: the header of `columns`, then each row's text from `row(id)` when given
 * (a writer straight from the columns), else from the columns' accessors of the id.
 */
export function writeIdCsv(path: string, n: number, columns: readonly [string, (id: number) => unknown][], row?: (id: number) => string): void {
  withFileSink(path, (sink) => {
    if (!row) { writeCsv(sink, n, columns.map(([h, f]) => [h, (i: number) => f(i + 1)] as const)); return; }
    writeCsv(sink, 0, columns);
    for (let id = 1; id <= n; id++) sink.write(row(id));
  });
}

/** A GeoJSON feature collection streamed into `path`; `write` adds the features (a second file may be written alongside). */
export function withCollection(path: string, crs: Grid['crs'], meta: Record<string, unknown>, write: (fc: FeatureCollectionWriter) => void): void {
  withFileSink(path, (sink) => {
    const fc = new FeatureCollectionWriter(sink, collectionHead(crs, meta));
    write(fc);
    fc.end();
  });
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

interface SummaryHead {
  surface: SurfaceInfo;
  nodataAs: 'outlet' | 'wall';
  connectivity: number;
  euler: EulerInfo | null;
}

/** The summary's first lines: the surface, the outlets, the Euler check. */
/** A mosaic in the summary: its tiles, how it was given, and that it was assembled. */
export function mosaicLine(m: { tileCount: number; kind: string; assembled?: boolean }): string {
  const given = m.kind === 'vrt' ? 'a VRT' : m.kind === 'folder' ? 'a folder' : 'GeoTIFF paths';
  return `${m.tileCount} tile${m.tileCount === 1 ? '' : 's'} from ${given}, ${m.assembled === false ? 'analysed tile by tile' : 'assembled into one grid in memory'}`;
}

export function summaryHead(r: SummaryHead): string[] {
  const s = r.surface;
  const lines: string[] = [];
  lines.push(`surface      ${s.width} × ${s.height} grid, ${s.validCells} valid cells${s.crs?.name ? `, ${s.crs.name}` : ', no CRS'}`);
  const m = (r as { mosaic?: { tileCount: number; kind: string; assembled?: boolean } }).mosaic;
  if (m) lines.push(`mosaic       ${mosaicLine(m)}`);
  lines.push(`outlets      grid edge${r.nodataAs === 'outlet' ? ' and nodata cells' : ' (nodata cells are walls)'}; connectivity ${r.connectivity}`);
  if (r.euler) {
    const e = r.euler;
    lines.push(`Euler        pits − passes + peaks = ${e.pits - e.passes + e.peaks}, χ = ${e.characteristic} by counting simplices: ${e.holds ? 'holds' : 'FAILS'}`);
  }
  return lines;
}

/** The written files for the summary: names in DIR, and a folder of per-tile files as `folder/ (n files)`. */
function fileList(outDir: string, files: string[]): string {
  const root = resolve(outDir);
  const names: string[] = [];
  const folders = new Map<string, number>();
  for (const f of files) {
    const rel = relative(root, resolve(f)).split(/[\\/]/);
    if (rel.length > 1 && !rel[0].startsWith('..')) {
      if (!folders.has(rel[0])) names.push(`${rel[0]}/`);
      folders.set(rel[0], (folders.get(rel[0]) ?? 0) + 1);
    } else names.push(rel[rel.length - 1]);
  }
  return names.map((n) => (n.endsWith('/') ? `${n} (${folders.get(n.slice(0, -1))} files)` : n)).join(' ');
}

/** The summary's last lines: the caution, which outlines were written, the files written. */
export function summaryTail(r: { caution: string; outlines?: { note: string } }, outDir: string | undefined, files: string[]): string[] {
  const lines = [`caution      ${r.caution}`];
  if (r.outlines) lines.push(`outlines     ${r.outlines.note}`);
  if (outDir) lines.push(`files        ${outDir}/ ${fileList(outDir, files)}`);
  return lines;
}
