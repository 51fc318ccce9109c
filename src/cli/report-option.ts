/**
 * `--report` and `--png` for every analysis command: validate them before the work starts, and
 * add the report files to the command's output folder (so they are written all-or-nothing with
 * the rest). Each command's CLI file calls reportRequest() once and addReport() where it writes.
 */
import { join, resolve } from 'node:path';
import { InputError } from '../errors.js';
import type { OutputFolder } from '../io/outdir.js';
import type { BuiltReport, ReportContext } from '../render/html/model.js';
import { writeReportFiles, loadResvg } from '../render/html/write.js';
import { shellQuote } from '../render/html/surface.js';

export interface ReportFlags {
  report?: boolean;
  png?: boolean;
}

export interface ReportRequest {
  report: boolean;
  png: boolean;
  /** The command line that reproduces this run (shown in the report header). */
  commandLine: string;
}

/** Options that change a run's result, in the order `sill <command> --help` lists them, with their defaults. */
const REPRODUCING: [string, string, string | undefined][] = [
  ['connectivity', '--connectivity', undefined],
  ['boundary', '--boundary', undefined],
  ['minPersistence', '--min-persistence', undefined],
  ['band', '--band', '1'],
  ['nodata', '--nodata', undefined],
  ['origin', '--origin', undefined],
  ['spacing', '--spacing', undefined],
  ['columns', '--columns', '1,2,3'],
  ['layout', '--layout', undefined],
];

/**
 * The command line that reproduces a run: the command, its positional arguments, every option that
 * shapes the result (`extra` adds the command's own, e.g. ['--depth', '0.05']), and -o.
 */
export function commandLineOf(command: string, positional: string[], opts: Record<string, unknown>, extra: string[] = []): string {
  const parts = ['sill', command, ...positional.map(shellQuote)];
  for (const [key, flag, dflt] of REPRODUCING) {
    const v = opts[key];
    if (v === undefined || v === null || v === false || (dflt !== undefined && String(v) === dflt)) continue;
    parts.push(flag, shellQuote(String(v)));
  }
  parts.push(...extra.map(shellQuote));
  if (typeof opts.out === 'string') parts.push('-o', shellQuote(opts.out));
  if (opts.report) parts.push('--report');
  if (opts.png) parts.push('--png');
  return parts.join(' ');
}

/** A command's own options that shape its result: [option key, flag, default]. */
export type FlagSpec = [string, string, string | undefined][];

export const PONDS_FLAGS: FlagSpec = [
  ['nodataAs', '--nodata-as', 'outlet'], ['minDepth', '--min-depth', undefined], ['minArea', '--min-area', undefined],
  ['minVolume', '--min-volume', undefined], ['fillOnlyBelow', '--fill-only-below', undefined], ['labelLevel', '--label-level', 'leaf'],
  ['outlines', '--outlines', 'top'],
  ['zUnits', '--z-units', undefined], ['zFactor', '--z-factor', undefined], ['xyUnits', '--xy-units', undefined],
];

export const BARRIERS_FLAGS: FlagSpec = [
  ['units', '--units', 'none'], ['to', '--to', undefined], ['temperature', '--temperature', '300'], ['cap', '--cap', undefined],
  ['period', '--period', undefined], ['images', '--images', '81'], ['maxPaths', '--max-paths', '200'],
  ['samples', '--samples', undefined], ['bins', '--bins', undefined], ['variables', '--variables', undefined], ['weights', '--weights', undefined],
  ['logWeights', '--log-weights', undefined], ['range', '--range', undefined], ['bandwidth', '--bandwidth', undefined], ['blocks', '--blocks', undefined],
  ['resamples', '--resamples', undefined], ['seed', '--seed', undefined], ['minCount', '--min-count', undefined],
];

/** The flags of `spec` set to something other than their default, as command-line words. */
export function flagsOf(opts: Record<string, unknown>, spec: FlagSpec): string[] {
  const out: string[] = [];
  for (const [key, flag, dflt] of spec) {
    const v = opts[key];
    if (v === undefined || v === null || v === false || (dflt !== undefined && String(v) === dflt)) continue;
    out.push(flag);
    if (v !== true) out.push(String(v));
  }
  return out;
}

/**
 * What to render for this run, or null. `--report`/`--png` need `-o DIR`; `--png` checks up front
 * that the renderer loads, so a missing binary fails before the analysis rather than after it.
 */
export function reportRequest(command: string, positional: string[], opts: ReportFlags & { out?: string } & Record<string, unknown>, extra: string[] = []): ReportRequest | null {
  if (!opts.report && !opts.png) return null;
  if (!opts.out) throw new InputError(`${opts.report ? '--report' : '--png'} writes files: add -o DIR to say where`);
  if (opts.png) loadResvg();
  return { report: !!opts.report, png: !!opts.png, commandLine: commandLineOf(command, positional, opts, extra) };
}

/** The files `--report`/`--png` may add to the output folder. */
export function reportNames(req: ReportRequest | null | undefined): string[] {
  if (!req) return [];
  return [...(req.report ? ['report.html', 'map.svg', 'tree.svg', 'persistence.svg'] : []), ...(req.png ? ['map.png'] : [])];
}

/** Build the report (lazily: only when asked) and stage its files in `out`. Returns the names written. */
export function addReport(out: OutputFolder, req: ReportRequest | null | undefined, files: string[], build: (ctx: ReportContext) => BuiltReport): string[] {
  if (!req) return [];
  const built = build({ commandLine: req.commandLine, files });
  return writeReportFiles(out, built, { report: req.report, png: req.png });
}

/** One summary line with the path of the report (and of the PNG). */
export function reportSummary(dir: string, req: ReportRequest | null | undefined): string {
  if (!req) return '';
  const files = [...(req.report ? [join(resolve(dir), 'report.html')] : []), ...(req.png ? [join(resolve(dir), 'map.png')] : [])];
  return `report    ${files.join('  ')}`;
}
