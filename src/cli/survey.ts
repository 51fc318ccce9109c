/** `sill survey IN`: critical points, Euler check, merge trees, persistence pairs. */
import type { Command } from 'commander';
import { surveyReport, mergeTreeRecords, criticalPointRecord, type SurveyReport } from '../report/survey.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, withFileSink, writeJson, writeCsv, writePointCollection } from '../io/stream.js';
import { KIND_NAMES } from '../morse/critical.js';
import type { OutputFolder } from '../io/outdir.js';
import type { GpkgLayerSpec } from '../io/gpkg.js';
import { openGeoPackage, type GeoPackageOutput } from '../io/gpkg-thread.js';
import { defaultThreads } from '../io/tile-encoder.js';
import { addCommonOptions, parseBoundary, parseConnectivity, parseNumber, parseThreads, Progress, say, fmt, fmtCoord, openOutput, THRESHOLD, GPKG_FILE, NO_GPKG, inputTime, type CommonOptions } from './common.js';
import { prepareInput, inputList, mosaicInfo, type Inputs } from './mosaic.js';
import { checkCellBudget, featureBudget } from './budget.js';
import { eulerFailure, mosaicLine } from './hydro-common.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { SurveyResult } from '../morse/survey.js';
import { reportRequest, addReport, reportSummary, reportNames, type ReportRequest } from './report-option.js';
import { buildSurveyReport } from '../render/html/survey.js';
import { addGrid3Options, isGrid3Input, runSurvey3, type Grid3CliOptions } from './survey3.js';
import type { Survey3Report } from '../report/survey3.js';

export function registerSurvey(program: Command): void {
  const cmd = program
    .command('survey')
    .description('critical points (pits, passes, peaks), Euler check, merge trees and persistence pairs')
    .argument('<input...>', 'GeoTIFF, .npy, or text grid / scattered samples; or a mosaic: a .vrt, a folder of GeoTIFF tiles, or several GeoTIFF paths; or a 3-D grid: a 3-D .npy array [z, y, x] or x y z value text');
  addGrid3Options(addCommonOptions(cmd, { boundary: 'open' }).option(...NO_GPKG)).action(async (input: string[], opts: SurveyCliOptions, command: Command) => {
    opts.connectivityDefault = command.getOptionValueSource('connectivity') === 'default';
    opts.boundaryDefault = command.getOptionValueSource('boundary') === 'default';
    await runSurveyCommand(input, opts);
  });
}

export interface SurveyCliOptions extends CommonOptions, Grid3CliOptions {
  /** false with --no-gpkg: no results.gpkg. */
  gpkg?: boolean;
}

export async function runSurveyCommand(input: Inputs, opts: SurveyCliOptions): Promise<SurveyReport | Survey3Report> {
  if (await isGrid3Input(inputList(input), opts)) return runSurvey3(inputList(input)[0], opts);
  const progress = new Progress(opts.quiet || opts.json);
  const connectivity = parseConnectivity(opts.connectivity);
  const boundary = parseBoundary(opts.boundary);
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', THRESHOLD);
  const threads = parseThreads(opts.threads);
  const render = reportRequest('survey', inputList(input), { ...opts });
  const src = await prepareInput(input, opts, 'survey');
  const out = openOutput(opts, 'survey', [...SURVEY_FILES, ...(opts.gpkg === false ? [] : [GPKG_FILE]), ...reportNames(render)], src.files);
  progress.stage(`reading ${src.mosaic ? src.mosaic.source : src.inputs[0]}`);
  const { surface, mosaic, label } = await src.load();
  const cells = surface.size;
  checkCellBudget('survey', cells, label);
  progress.stage('ordering, critical points, merge trees');
  const onFeatures = featureBudget('survey', cells, opts.out ? 'out' : opts.json ? 'json' : 'none', label);
  const { result, report } = surveyReport(surface, { connectivity, boundary, minPersistence, threads, onFeatures }, label);
  if (mosaic) Object.assign(report, { mosaic: mosaicInfo(mosaic) });
  progress.done();
  if (!report.euler.holds) throw eulerFailure(report.euler);
  if (out) await writeSurveyFiles(out, surface, result, report, render, opts.gpkg !== false && inputTime(src.files[0]), threads);
  if (opts.json) writeJsonStdout(report);
  say(opts, surveySummary(report, opts.out, opts.gpkg !== false));
  if (render && opts.out) say(opts, reportSummary(opts.out, render));
  return report;
}

/** The files `survey -o DIR` writes (besides the report's). */
export const SURVEY_FILES = ['report.json', 'critical-points.csv', 'critical-points.geojson', 'merge-tree.json'];

/** The critical-points layer of results.gpkg: the properties of critical-points.geojson as typed columns. */
export const CRITICAL_POINTS_LAYER: GpkgLayerSpec = {
  name: 'critical-points',
  geometry: 'POINT',
  description: 'pits, passes and peaks (the features of critical-points.geojson)',
  columns: [['kind', 'TEXT'], ['value', 'REAL'], ['multiplicity', 'INTEGER'], ['col', 'INTEGER'], ['row', 'INTEGER'], ['onEdge', 'BOOLEAN']],
};

export async function writeSurveyFiles(out: OutputFolder, surface: Grid | Mesh, result: SurveyResult, report: SurveyReport, render?: ReportRequest | null, gpkg: Date | false = new Date(), threads?: number): Promise<string[]> {
  let gp: GeoPackageOutput | null = null;
  try {
    withFileSink(out.path('report.json'), (sink) => { writeJson(sink, report, 1); sink.write('\n'); });
    await out.checkpoint();
    const K = result.kept, cx = result.complex;
    // the record of the row being written, made once for its columns
    let atK = -1, atRec: ReturnType<typeof criticalPointRecord> | null = null;
    const at = (k: number) => (k === atK ? atRec! : (atK = k, atRec = criticalPointRecord(surface, result, k)));
    const grid = surface.kind === 'grid' ? surface : null;
    withFileSink(out.path('critical-points.csv'), (sink) => writeCsv(sink, K.vertex.length, [
      ['kind', (k) => KIND_NAMES[K.kind[k]]],
      ['col', (k) => (grid ? K.vertex[k] % grid.width : null)], ['row', (k) => (grid ? Math.floor(K.vertex[k] / grid.width) : null)],
      ['x', (k) => at(k).x], ['y', (k) => at(k).y],
      ['value', (k) => cx.values[K.vertex[k]]], ['multiplicity', (k) => K.multiplicity[k]], ['on_edge', (k) => (cx.onEdge(K.vertex[k]) ? 1 : 0)],
    ]));
    await out.checkpoint();
    withFileSink(out.path('critical-points.geojson'), (sink) => {
      writePointCollection(sink, collectionHead(surface.crs, { name: 'critical-points' }), K.vertex.length, (k) => at(k).x, (k) => at(k).y, (k) => {
        const c = at(k);
        return { kind: c.kind, value: c.value, multiplicity: c.multiplicity, col: c.col, row: c.row, onEdge: c.onEdge };
      });
      sink.write('\n');
    });
    await out.checkpoint();
    if (gpkg !== false) {
      // the same points as critical-points.geojson, fid = its feature id + 1
      // written by a thread of its own (with more than one) while this one writes merge-tree.json
      gp = openGeoPackage(out.path(GPKG_FILE), surface.crs, { lastChange: gpkg, thread: (threads ?? defaultThreads()) > 1 });
      const layer = gp.layer(CRITICAL_POINTS_LAYER);
      for (let k = 0; k < K.vertex.length; k++) {
        const c = at(k);
        layer.point(k + 1, c.x, c.y, [c.kind, c.value, c.multiplicity, c.col, c.row, c.onEdge]);
      }
      await out.checkpoint();
    }
    const values = result.complex.values;
    withFileSink(out.path('merge-tree.json'), (sink) => {
      writeJson(sink, {
        schema: 'sill/merge-tree@1',
        minPersistence: report.minPersistence,
        join: { description: 'components of sublevel sets: leaves are pits, inner nodes passes; node "outside" is the outside vertex at −∞', nodes: mergeTreeRecords(surface, values, result.join) },
        split: { description: 'components of superlevel sets: leaves are peaks, inner nodes passes; node "top" is the wall/edge vertex at +∞', nodes: mergeTreeRecords(surface, values, result.split) },
      });
      sink.write('\n');
    });
    await out.checkpoint();
    addReport(out, render, ['report.json', 'critical-points.csv', 'critical-points.geojson', 'merge-tree.json'], (ctx) => buildSurveyReport(surface, result, report, ctx));
    await gp?.finish();
    gp = null;
    return await out.commit();
  } catch (e) {
    await gp?.abort();
    throw out.fail(e);
  }
}

/** The report on stdout as one line of JSON, written in chunks. */
function writeJsonStdout(report: SurveyReport): void {
  const sink = new TextSink(1);
  writeJson(sink, report);
  sink.write('\n');
  sink.close();
}

export function surveySummary(r: SurveyReport, outDir?: string, gpkg = true): string {
  const s = r.surface;
  const lines: string[] = [];
  lines.push(s.kind === 'grid'
    ? `surface   ${s.width} × ${s.height} grid, ${s.validCells} valid cells${s.crs?.name ? `, ${s.crs.name}` : ', no CRS'}`
    : `surface   ${s.points} scattered samples (Delaunay triangulation)`);
  const m = (r as { mosaic?: { tileCount: number; kind: string } }).mosaic;
  if (m) lines.push(`mosaic    ${mosaicLine(m)}`);
  lines.push(`complex   connectivity ${r.connectivity ?? 'triangulation'}, boundary ${r.boundary}`);
  const e = r.euler;
  lines.push(`critical  ${e.pits} pits${e.outsidePit ? ' (incl. the outside)' : ''}, ${e.passes} passes, ${e.peaks} peaks`);
  lines.push(`Euler     pits − passes + peaks = ${e.pits - e.passes + e.peaks}, χ = ${e.characteristic} by counting simplices: ${e.holds ? 'holds' : 'FAILS'}`);
  if (r.minPersistence > 0) {
    const k = r.eulerKept;
    lines.push(`kept      persistence ≥ ${fmt(r.minPersistence)}: ${k.pits} pits, ${k.passes} passes, ${k.peaks} peaks (Euler ${k.holds ? 'holds' : 'FAILS'}); ${r.counts.removedPairs.dim0 + r.counts.removedPairs.dim1} pairs removed`);
  }
  if (r.counts.zeroPersistencePairs > 0) lines.push(`          ${r.counts.zeroPersistencePairs} pairs of zero persistence (ties, flats) not listed`);
  const geo = !!s.crs?.geographic;
  const top = r.pairs.top(5);
  if (top.length) {
    lines.push('most persistent features:');
    for (const p of top) {
      const a = p.dim === 0 ? p.birthAt : p.deathAt;
      const where = a.col !== null ? `cell (${a.col}, ${a.row})` : `point ${a.index}`;
      lines.push(`  ${p.dim === 0 ? 'pit ' : 'peak'} ${fmt(p.dim === 0 ? p.birth : p.death)} at ${where}, x ${fmtCoord(a.x, geo)}, y ${fmtCoord(a.y, geo)}: persistence ${fmt(p.persistence)}`);
    }
  }
  if (outDir) lines.push(`files     ${outDir}/ report.json critical-points.csv critical-points.geojson merge-tree.json${gpkg ? ' results.gpkg' : ''}`);
  return lines.join('\n');
}
