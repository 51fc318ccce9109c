/**
 * `sill survey IN` on a 3-D grid (a .npy 3-D array, or x y z value text): the options that
 * place and wrap a 3-D grid, the run, the files of -o DIR and the terminal summary.
 */
import { Option, type Command } from 'commander';
import { InputError, SelfCheckError } from '../errors.js';
import { readGrid3, isGrid3File, type Grid3ReadOptions, type Triple } from '../io/grid3-read.js';
import { survey3Report, mergeTree3Records, criticalPoint3Record, type Survey3Report } from '../report/survey3.js';
import { KIND3_NAMES } from '../morse/survey3.js';
import type { Grid3 } from '../surface/grid3.js';
import type { Survey3Result } from '../morse/survey3.js';
import type { Boundary3, Connectivity3 } from '../surface/complex3.js';
import { TextSink, withFileSink, writeJson, writeCsv } from '../io/stream.js';
import type { OutputFolder } from '../io/outdir.js';
import { parseNodata, parseNumber, say, fmt, openOutput, Progress, THRESHOLD, VALUE_LIMIT, type CommonOptions } from './common.js';
import { checkCellBudget, featureBudget } from './budget.js';
import { columnCount } from './load.js';

/** Options only 3-D grids take. */
export interface Grid3CliOptions {
  periodicAxes?: string;
  period?: string;
  /** Set by the command: --connectivity / --boundary were left at their defaults. */
  connectivityDefault?: boolean;
  boundaryDefault?: boolean;
}

/** Add --periodic-axes and --period (3-D grids) to a command. */
export function addGrid3Options(cmd: Command): Command {
  return cmd
    .addOption(new Option('--periodic-axes <axes>', '3-D grids: axes that wrap, e.g. x,y (the others follow --boundary open or closed)'))
    .addOption(new Option('--period <p>', '3-D grids: period of the periodic axes, one value or one per periodic axis (default: points × spacing)'));
}

/** True when the (single) input is a 3-D grid; refuses 3-D-only options on other inputs. */
export async function isGrid3Input(inputs: readonly string[], opts: CommonOptions & Grid3CliOptions): Promise<boolean> {
  const three = inputs.length === 1 && opts.layout === undefined && (await isGrid3File(inputs[0], columnCount(opts.columns)));
  if (!three && (opts.periodicAxes !== undefined || opts.period !== undefined)) {
    throw new InputError(`--periodic-axes and --period apply to 3-D grids (a 3-D .npy array, or x y z value text); for a 2-D grid use --boundary periodic, periodic-x or periodic-y`);
  }
  return three;
}

function parseTriple(name: string, s: string | undefined): Triple | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',');
  if (parts.length !== 3) throw new InputError(`${name} for a 3-D grid takes three numbers x,y,z separated by commas, got '${s}'`);
  const v = parts.map((p) => parseNumber(name, p, { max: VALUE_LIMIT, min: -VALUE_LIMIT })) as Triple;
  return v;
}

function parseAxes(s: string | undefined, boundary: Boundary3): [boolean, boolean, boolean] | undefined {
  if (s === undefined) return undefined;
  const names = s.split(',').map((a) => a.trim().toLowerCase());
  if (names.length === 0 || names.some((a) => a !== 'x' && a !== 'y' && a !== 'z') || new Set(names).size !== names.length) {
    throw new InputError(`--periodic-axes takes axis names x, y, z separated by commas (each once), got '${s}'`);
  }
  if (boundary === 'periodic') throw new InputError(`--boundary periodic wraps every axis; give --boundary open or closed with --periodic-axes ${s} to wrap only those`);
  return [names.includes('x'), names.includes('y'), names.includes('z')];
}

function parseConnectivity3(s: string | undefined, isDefault: boolean): Connectivity3 {
  if (isDefault || s === undefined) return 14;
  if (s === '14' || s === '26') return Number(s) as Connectivity3;
  throw new InputError(`--connectivity of a 3-D grid must be 14 (Freudenthal triangulation) or 26 (26-neighbour flag complex), got '${s}'`);
}

function parseBoundary3(s: string | undefined, isDefault: boolean): Boundary3 {
  if (isDefault || s === undefined) return 'closed';
  if (s === 'open' || s === 'closed' || s === 'periodic') return s;
  if (s === 'periodic-x' || s === 'periodic-y') throw new InputError(`--boundary ${s} is for 2-D grids; on a 3-D grid give --boundary closed (or open) --periodic-axes ${s.slice(-1)}`);
  throw new InputError(`--boundary of a 3-D grid must be open, closed or periodic, got '${s}'`);
}

/** The read options of a 3-D grid from the command line. */
export function grid3ReadOptions(opts: CommonOptions & Grid3CliOptions, boundary: Boundary3): Grid3ReadOptions {
  const axes = parseAxes(opts.periodicAxes, boundary) ?? (boundary === 'periodic' ? [true, true, true] as [boolean, boolean, boolean] : undefined);
  let columns: [number, number, number, number] | undefined;
  if (opts.columns !== undefined && opts.columns !== '1,2,3') {
    const parts = opts.columns.split(',').map((p) => parseNumber('--columns', p, { integer: true, min: 1, max: 1000 }));
    if (parts.length !== 4) throw new InputError(`--columns for a 3-D grid takes four 1-based column numbers (x,y,z,value), got '${opts.columns}'`);
    columns = parts as [number, number, number, number];
  }
  return {
    origin: parseTriple('--origin', opts.origin),
    spacing: parseTriple('--spacing', opts.spacing),
    nodata: parseNodata(opts.nodata),
    columns,
    periodicAxes: axes,
    period: opts.period === undefined ? undefined : opts.period.split(',').map((p) => parseNumber('--period', p, { max: VALUE_LIMIT })),
  };
}

/** The files `survey -o DIR` writes for a 3-D grid. */
export const SURVEY3_FILES = ['report.json', 'critical-points.csv', 'merge-tree.json'];

export async function runSurvey3(path: string, opts: CommonOptions & Grid3CliOptions): Promise<Survey3Report> {
  const progress = new Progress(opts.quiet || opts.json);
  const connectivity = parseConnectivity3(opts.connectivity, opts.connectivityDefault ?? opts.connectivity === '8');
  const boundary = parseBoundary3(opts.boundary, opts.boundaryDefault ?? false);
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', THRESHOLD);
  if (opts.report || opts.png) {
    throw new InputError(`--report and --png draw 2-D maps and are not made for 3-D grids yet; leave them out (report.json, critical-points.csv and merge-tree.json describe the 3-D survey)`);
  }
  if (opts.band !== undefined && opts.band !== '1') throw new InputError(`--band applies to GeoTIFF input, and ${path} is a 3-D grid`);
  const read = grid3ReadOptions(opts, boundary);
  const out = openOutput(opts, 'survey', SURVEY3_FILES, [path]);
  progress.stage(`reading ${path}`);
  const grid = await readGrid3(path, read);
  checkCellBudget('survey', grid.size, path);
  progress.stage('ordering, critical points, merge trees');
  const onFeatures = featureBudget('survey', grid.size, opts.out ? 'out' : opts.json ? 'json' : 'none', path);
  const { result, report } = survey3Report(grid, {
    connectivity, boundary: boundary === 'periodic' ? 'periodic' : boundary, periodicAxes: boundary === 'periodic' ? undefined : read.periodicAxes,
    minPersistence, onFeatures,
  }, path);
  progress.done();
  const e = report.euler;
  if (!e.holds) {
    throw new SelfCheckError('the Euler relation does not hold', `χ = ${e.characteristic} by counting simplices, minima − index-1 + index-2 − maxima = ${e.minima - e.saddles1 + e.saddles2 - e.maxima}`);
  }
  if (out) await writeSurvey3Files(out, grid, result, report);
  if (opts.json) {
    const sink = new TextSink(1);
    writeJson(sink, report);
    sink.write('\n');
    sink.close();
  }
  say(opts, survey3Summary(report, opts.out));
  return report;
}

export async function writeSurvey3Files(out: OutputFolder, g: Grid3, result: Survey3Result, report: Survey3Report): Promise<string[]> {
  try {
    withFileSink(out.path('report.json'), (sink) => { writeJson(sink, report, 1); sink.write('\n'); });
    await out.checkpoint();
    const K = result.kept, cx = result.complex;
    let atK = -1, atRec: ReturnType<typeof criticalPoint3Record> | null = null;
    const at = (k: number) => (k === atK ? atRec! : (atK = k, atRec = criticalPoint3Record(g, result, k)));
    withFileSink(out.path('critical-points.csv'), (sink) => writeCsv(sink, K.vertex.length, [
      ['kind', (k) => KIND3_NAMES[K.kind[k]]], ['morse_index', (k) => K.index[k]],
      ['col', (k) => at(k).col], ['row', (k) => at(k).row], ['layer', (k) => at(k).layer],
      ['x', (k) => at(k).x], ['y', (k) => at(k).y], ['z', (k) => at(k).z],
      ['value', (k) => cx.values[K.vertex[k]]], ['multiplicity', (k) => K.multiplicity[k]], ['on_edge', (k) => (cx.onEdge(K.vertex[k]) ? 1 : 0)],
    ]));
    await out.checkpoint();
    withFileSink(out.path('merge-tree.json'), (sink) => {
      writeJson(sink, {
        schema: 'sill/merge-tree@1',
        minPersistence: report.minPersistence,
        join: { description: 'components of sublevel sets: leaves are minima, inner nodes index-1 saddles; node "outside" is the outside vertex at −∞', nodes: mergeTree3Records(g, cx.values, result.join) },
        split: { description: 'components of superlevel sets: leaves are maxima, inner nodes index-2 saddles; node "top" is the wall vertex at +∞', nodes: mergeTree3Records(g, cx.values, result.split) },
      });
      sink.write('\n');
    });
    await out.checkpoint();
    return await out.commit();
  } catch (e) {
    throw out.fail(e);
  }
}

export function survey3Summary(r: Survey3Report, outDir?: string): string {
  const s = r.surface, e = r.euler;
  const lines: string[] = [];
  const names = s.names ? ` (${s.names.join(', ')})` : '';
  lines.push(`surface   ${s.width} × ${s.height} × ${s.depth} 3-D grid${names}, ${s.validCells} valid points`);
  const wrap = r.periodicAxes.length === 0 ? '' : r.boundary === 'periodic' ? '' : `, periodic ${r.periodicAxes.join(',')}`;
  lines.push(`complex   connectivity ${r.connectivity} (${r.connectivity === 14 ? 'Freudenthal triangulation' : '26-neighbour flag complex'}), boundary ${r.boundary}${wrap}`);
  lines.push(`critical  ${e.minima} minima${e.outsidePit ? ' (incl. the outside)' : ''}, ${e.saddles1} index-1 saddles, ${e.saddles2} index-2 saddles, ${e.maxima} maxima`);
  lines.push(`Euler     minima − index-1 + index-2 − maxima = ${e.minima - e.saddles1 + e.saddles2 - e.maxima}, χ = ${e.characteristic} by counting simplices: ${e.holds ? 'holds' : 'FAILS'}`);
  if (r.minPersistence > 0) {
    const k = r.eulerKept;
    lines.push(`kept      persistence ≥ ${fmt(r.minPersistence)}: ${k.minima} minima, ${k.saddles1} index-1, ${k.saddles2} index-2 saddles, ${k.maxima} maxima (Euler ${k.holds ? 'holds' : 'FAILS'}); ${r.counts.removedPairs.dim0 + r.counts.removedPairs.dim2} pairs removed`);
  }
  if (r.counts.zeroPersistencePairs > 0) lines.push(`          ${r.counts.zeroPersistencePairs} pairs of zero persistence (ties, flats) not listed`);
  const top = Array.from({ length: Math.min(5, r.pairs.length) }, (_, q) => r.pairs.at(q));
  if (top.length) {
    lines.push('most persistent features (pairs of dimension 0 and 2; dimension 1 is not computed):');
    for (const p of top) {
      const a = p.dim === 0 ? p.birthAt : p.deathAt;
      lines.push(`  ${p.dim === 0 ? 'minimum' : 'maximum'} ${fmt(p.dim === 0 ? p.birth : p.death)} at point (${a.col}, ${a.row}, ${a.layer}), x ${fmt(a.x)}, y ${fmt(a.y)}, z ${fmt(a.z)}: persistence ${fmt(p.persistence)}`);
    }
  }
  if (outDir) lines.push(`files     ${outDir}/ report.json critical-points.csv merge-tree.json`);
  return lines.join('\n');
}
