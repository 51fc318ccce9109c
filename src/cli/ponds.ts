/** `sill ponds IN`: depression hierarchy, spill levels, pour points, volumes; filled/depth/label rasters. */
import { Option, type Command } from 'commander';
import { InputError } from '../errors.js';
import { pondsReport, pondsCsvColumns, pondsCsvRow, culvertsReport, type PondsReport } from '../report/ponds.js';
import { ponds } from '../hydro/ponds.js';
import type { Hierarchy } from '../hydro/hierarchy.js';
import { applyCulverts, culvertEffects, type Culvert } from '../hydro/culverts.js';
import { readCulverts, type CulvertSpec } from '../io/culverts.js';
import { topK } from '../report/hydro-common.js';
import { writeDepressionsGeojson, writePourPointsGeojson, depressionsDescription, outlinesNote, POUR_POINTS_DESCRIPTION } from '../report/depressions-geojson.js';
import { OUTLINE_LEVELS, type OutlineLevels } from '../hydro/vectors.js';
import type { PondsResult } from '../hydro/ponds.js';
import { topLabels } from '../hydro/rasters.js';
import { writeSpillPathsGeojson } from '../report/spill-paths-geojson.js';
import { writeCatchmentsGeojson } from '../report/catchments-geojson.js';
import { toWgs84 } from '../hydro/reproject.js';
import { stageVolume } from '../hydro/stage.js';
import type { OutputFolder } from '../io/outdir.js';
import { openGeoPackage, type GeoPackageOutput } from '../io/gpkg-thread.js';
import { defaultThreads } from '../io/tile-encoder.js';
import { addCommonOptions, parseNumber, parseThreads, Progress, say, fmt, fmtCoord, openOutput, NO_GPKG, inputTime, GPKG_FILE, THRESHOLD, AREA_THRESHOLD, type NumberLimits } from './common.js';
import {
  parseOpenBoundary, parseNodataAs, parseZAndStage, checkHydroReport, printReport, writeReportFile, writeIdCsv,
  stageCsv, summaryHead, summaryTail, type HydroCliOptions,
} from './hydro-common.js';
import { prepareInput, inputList, mosaicInfo, rasterNames, rasterFiles, writeRasterProducts, type Inputs } from './mosaic.js';
import type { OpenedMosaic } from '../io/mosaic.js';
import { checkCellBudget, featureBudget } from './budget.js';
import { runTiledPonds, tiledNote, TILED_PONDS_FILES } from './tiled.js';
import { reportRequest, addReport, reportSummary, reportNames, flagsOf, PONDS_FLAGS, type ReportRequest } from './report-option.js';
import { buildPondsReport as buildPondsHtml } from '../render/html/ponds.js';
import { addStagedOptions, stagedRequested, runPondsStaged, type StagedCliOptions } from './staged.js';

export interface PondsCliOptions extends HydroCliOptions {
  minDepth?: string;
  minArea?: string;
  minVolume?: string;
  fillOnlyBelow?: string;
  labelLevel?: string;
  outlines?: string;
  zUnits?: string;
  xyUnits?: string;
  wgs84?: boolean;
  culverts?: string;
  /** false with --no-gpkg: no results.gpkg. */
  gpkg?: boolean;
  /** A mosaic tile by tile even when it would fit in memory assembled (src/cli/tiled.ts). */
  tiled?: boolean;
  workers?: string;
  runDir?: string;
}

export function registerPonds(program: Command): void {
  const cmd = program
    .command('ponds')
    .description('closed depressions of a DEM: spill levels, pour points, volumes and nesting; filled, depth and label rasters')
    .argument('<input...>', 'GeoTIFF, .npy or text grid (a DEM); or a mosaic: a .vrt, a folder of GeoTIFF tiles, or several GeoTIFF paths');
  addCommonOptions(cmd, { boundary: 'open' })
    .addOption(new Option('--nodata-as <mode>', 'nodata cells: outlet (water drains into them) or wall').choices(['outlet', 'wall']).default('outlet'))
    .option('--min-depth <v>', 'merge depressions shallower than V (spill − pit, vertical unit) into their parent')
    .option('--min-area <v>', 'merge depressions with a wet area below V (m², or map units² without a CRS) into their parent')
    .option('--min-volume <v>', 'merge depressions holding less than V (m³) into their parent')
    .option('--fill-only-below <v>', 'in filled.tif and depth.tif, fill only depressions holding less than V (m³)')
    .addOption(new Option('--label-level <level>', 'labels.tif holds the innermost (leaf) or the outermost (top) depression id').choices(['leaf', 'top']).default('leaf'))
    .addOption(new Option('--outlines <levels>', 'depressions.geojson outlines the outermost depressions (top), the innermost (leaf) or every level of the nesting (all)').choices([...OUTLINE_LEVELS]).default('top'))
    .option('--z-units <unit>', 'vertical unit of the DEM: m, ft, us-ft, cm, mm (default: metres, assumed)')
    .option('--z-factor <f>', 'metres per vertical unit of the DEM (instead of --z-units)')
    .option('--xy-units <unit>', 'horizontal unit when the input has no CRS: m, ft, us-ft, km, deg')
    .option('--wgs84', 'also write depressions-wgs84.geojson and pour-points-wgs84.geojson in longitude/latitude (projected CRSs with a known EPSG code)')
    .option('--stage-volume <id>', 'write stage-volume-ID.csv: water level, wet area and volume of depression ID from its pit to its spill level')
    .option('--culverts <file>', 'lines through embankments (GeoJSON LineStrings or CSV x1,y1,x2,y2[,invert][,name]) where water passes at the invert; reports what changed')
    .option('--stage-step <dz>', 'level step of the stage-volume table (vertical unit; default: 50 steps)')
    .option(...NO_GPKG)
    .option('--tiled', 'analyse a mosaic tile by tile, as when it would not fit in memory assembled (docs/tiles.md; fewer outputs)')
    .option('--workers <n>', 'tiles analysed at a time by a tile-by-tile run (default: the number of cores); with --scheduler: tasks at a time (slurm: the arrays\' limit, none by default)')
    .option('--run-dir <dir>', 'folder for the stage files and labels of a tile-by-tile run (default: inside the output folder\'s staging folder, removed at the end); with --scheduler: the run folder on a file system every node sees, and a rerun with the same folder resumes');
  addStagedOptions(cmd)
    .action(async (input: string[], opts: PondsCliOptions & StagedCliOptions) => {
      if (stagedRequested(opts)) await runPondsStaged(input, opts);
      else await runPondsCommand(input, opts);
    });
}

function optionalNumber(name: string, s: string | undefined, limits: NumberLimits): number | undefined {
  return s === undefined ? undefined : parseNumber(name, s, limits);
}

export async function runPondsCommand(input: Inputs, opts: PondsCliOptions): Promise<PondsReport> {
  const progress = new Progress(opts.quiet || opts.json);
  const { connectivity, boundary } = parseOpenBoundary('ponds', opts);
  const nodataAs = parseNodataAs(opts);
  const labelLevel = opts.labelLevel ?? 'leaf';
  if (labelLevel !== 'leaf' && labelLevel !== 'top') throw new InputError(`--label-level must be leaf or top, got '${labelLevel}'`);
  const outlines = (opts.outlines ?? 'top') as OutlineLevels;
  if (!OUTLINE_LEVELS.includes(outlines)) throw new InputError(`--outlines must be leaf, top or all, got '${opts.outlines}'`);
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', THRESHOLD);
  const threads = parseThreads(opts.threads);
  const minDepth = optionalNumber('--min-depth', opts.minDepth, THRESHOLD);
  const minArea = optionalNumber('--min-area', opts.minArea, AREA_THRESHOLD);
  const minVolume = optionalNumber('--min-volume', opts.minVolume, AREA_THRESHOLD);
  const fillOnlyBelow = opts.fillOnlyBelow === undefined ? undefined : parseNumber('--fill-only-below', opts.fillOnlyBelow, { ...AREA_THRESHOLD, positive: true });
  const { zFactor, stageId, stageStep } = parseZAndStage(opts);
  const render = reportRequest('ponds', inputList(input), { ...opts }, flagsOf({ ...opts }, PONDS_FLAGS));
  if (opts.wgs84 && !opts.out) throw new InputError('--wgs84 writes depressions-wgs84.geojson and pour-points-wgs84.geojson: give an output folder with -o/--out');
  const workers = opts.workers === undefined ? undefined
    : parseNumber('--workers', opts.workers, { integer: true, min: 1, max: 4096, why: 'more worker threads than that exhaust the machine' });
  const src = await prepareInput(input, opts, 'ponds', { tiled: true });
  if (opts.tiled && !src.mosaic) {
    throw new InputError('--tiled applies to a mosaic (a .vrt, a folder of GeoTIFF tiles or several GeoTIFF paths); a single file is analysed in memory — leave --tiled out');
  }
  if (src.mosaic && (opts.tiled || !src.fits)) {
    const why = opts.tiled ? '--tiled' : 'the assembled mosaic would not fit the memory budget';
    const refuse = (flag: string, what: string): never => { throw new InputError(`${src.mosaic!.source}: ${flag} is not available tile by tile (${why}): ${what}; leave ${flag} out`); };
    if (render) refuse('--report', 'the report page draws the whole grid');
    if (opts.culverts) refuse('--culverts', 'the lines are burnt into the whole grid');
    if (stageId !== undefined) refuse('--stage-volume', 'the table is made from the whole grid');
    if (opts.wgs84) refuse('--wgs84', 'depressions-wgs84.geojson needs the outlines');
    const out = openOutput(opts, 'ponds', TILED_PONDS_FILES, src.files);
    const { report, written } = await runTiledPonds({
      mosaic: src.mosaic, out, why: opts.tiled ? 'asked' : 'memory', connectivity, nodataOutlet: nodataAs === 'outlet',
      minDepth, minArea, minVolume, minPersistence, fillOnlyBelow, zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits,
      labelLevel, workers, runDir: opts.runDir, threads, quiet: !!(opts.quiet || opts.json),
    });
    // once the run has succeeded (a failure is its one line alone)
    if (!opts.quiet) process.stderr.write(`sill ponds: ${tiledNote(src.mosaic.source, opts.tiled ? 'asked' : 'memory')}\n`);
    if (opts.json) printReport(report);
    say(opts, pondsSummary(report, opts.out, written));
    return report;
  }
  if (opts.runDir !== undefined) throw new InputError('--run-dir applies to a tile-by-tile run of a mosaic (--tiled); leave it out');
  const out = openOutput(opts, 'ponds', [
    ...pondsFiles(src.mosaic !== null), ...(opts.gpkg === false ? [] : [GPKG_FILE]), ...(opts.wgs84 ? PONDS_WGS84_FILES : []), ...(stageId !== undefined ? [`stage-volume-${stageId}.csv`] : []), ...reportNames(render),
  ], opts.culverts ? [...src.files, opts.culverts] : src.files);

  progress.stage(`reading ${src.mosaic ? src.mosaic.source : src.inputs[0]}`);
  const { surface, mosaic, label } = await src.load();
  checkCellBudget('ponds', surface.size, label);
  // --culverts: the depressions of the DEM as it is, kept for the comparison; then the analysis runs on the DEM with them
  let culv: { specs: CulvertSpec[]; before: Hierarchy; applied: Culvert[] } | null = null;
  let dem = surface;
  if (opts.culverts) {
    if (surface.kind !== 'grid') throw new InputError(`--culverts needs a grid DEM; ${label} holds scattered samples`);
    const specs = readCulverts(opts.culverts, surface);
    progress.stage('depressions without the culverts');
    const before = ponds(surface, { connectivity, nodataOutlet: nodataAs === 'outlet', minDepth, minArea, minVolume, minPersistence,
      zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits, source: label, threads, euler: false, catchments: 'none', shapes: false }).hierarchy;
    const applied = applyCulverts(surface, specs);
    dem = applied.grid;
    culv = { specs, before, applied: applied.culverts };
  }
  const { result, report } = pondsReport(dem, {
    onFeatures: featureBudget('ponds', surface.size, opts.out ? 'out' : opts.json ? 'json' : 'none', label),
    connectivity, boundary, nodataOutlet: nodataAs === 'outlet',
    minDepth, minArea, minVolume, minPersistence, fillOnlyBelow,
    zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits,
    labelLevel, source: label, threads,
    catchments: opts.out ? 'raster' : 'sums',
    onStage: (s) => progress.stage(s),
  }, label);
  if (culv && opts.culverts) {
    report.culverts = culvertsReport(opts.culverts, result.grid, culv.applied, culvertEffects(culv.before, result.hierarchy, result.rasters.labels));
  }
  if (mosaic) Object.assign(report, { mosaic: mosaicInfo(mosaic) });
  checkHydroReport(report, stageId, 'depressions.csv');
  // check --wgs84 before writing anything
  const project = opts.wgs84 ? toWgs84(result.grid.crs, label) : null;
  let written: string[] = [];
  if (out) {
    progress.stage('writing files');
    written = await writePondsFiles(out, result, report, { project, outlines, stageId, stageStep, progress, render, threads, mosaic, gpkg: opts.gpkg !== false && inputTime(src.files[0]) });
  }
  progress.done();
  if (opts.json) printReport(report);
  say(opts, pondsSummary(report, opts.out, written));
  if (render && opts.out) say(opts, reportSummary(opts.out, render));
  return report;
}

interface WriteOptions {
  project: ((x: number, y: number) => [number, number]) | null;
  /** Which depressions depressions.geojson outlines (default: the top-level ones). */
  outlines?: OutlineLevels;
  stageId?: number;
  stageStep?: number;
  progress?: Progress;
  render?: ReportRequest | null;
  /** Threads that compress the rasters (default: the number of cores). */
  threads?: number;
  /** The input mosaic: the rasters are written one GeoTIFF a tile plus a VRT each. */
  mosaic?: OpenedMosaic | null;
  /** results.gpkg: the time it records as its layers' last change (default now), or false for none. */
  gpkg?: Date | false;
}

/** The files `ponds -o DIR` always writes (--wgs84, --stage-volume and --report add theirs). */
export const PONDS_FILES = ['filled.tif', 'depth.tif', 'labels.tif', 'catchments.tif', 'depressions.geojson', 'pour-points.geojson', 'spill-paths.geojson', 'catchments.geojson', 'depressions.csv', 'report.json'];
/** The files --wgs84 adds. */
export const PONDS_WGS84_FILES = ['depressions-wgs84.geojson', 'pour-points-wgs84.geojson'];

/** The raster products of ponds. */
const PONDS_RASTERS = ['filled', 'depth', 'labels', 'catchments'];

/** PONDS_FILES, or for a mosaic the same with filled/, depth/, labels/, catchments/ (a GeoTIFF a tile) and their VRTs. */
export function pondsFiles(mosaic: boolean): string[] {
  return mosaic ? [...rasterNames(PONDS_RASTERS, true), ...PONDS_FILES.filter((f) => !f.endsWith('.tif'))] : PONDS_FILES;
}

export async function writePondsFiles(out: OutputFolder, result: PondsResult, report: PondsReport, w: WriteOptions = { project: null }): Promise<string[]> {
  let rasters: Promise<void>[] = [];
  let gpkg: GeoPackageOutput | null = null;
  try {
    const g = result.grid;
    const base = { width: g.width, height: g.height, transform: g.transform, crs: g.crs };
    const R = result.rasters;
    const valueNodata = g.nodata !== null && Number.isFinite(g.nodata) ? g.nodata : NaN;
    // The rasters are compressed by worker threads while this thread writes the catalogues.
    w.progress?.stage(w.mosaic ? 'writing filled, depth, labels and catchments: a GeoTIFF a tile and a VRT each' : 'writing filled.tif, depth.tif, labels.tif and catchments.tif');
    const labels = report.labelLevel === 'top' ? topLabels(R.labels, result.hierarchy) : R.labels;
    const catch0 = result.catchments?.labels;
    if (!catch0) throw new Error('internal: ponds -o needs the catchment of every cell');
    const catchLabels = report.labelLevel === 'top' ? topLabels(catch0, result.hierarchy) : catch0;
    rasters = writeRasterProducts(out, base, [
      { name: 'catchments', values: catchLabels, nodata: -1, overviews: 'nearest' },
      { name: 'filled', values: R.filled, nodata: valueNodata, overviews: 'average' },
      { name: 'depth', values: R.depth, nodata: -9999, overviews: 'average' },
      { name: 'labels', values: labels, nodata: -1, overviews: 'nearest' },
    ], w.mosaic ?? null, w.threads);
    for (const r of rasters) r.catch(() => undefined); // awaited below

    await out.checkpoint();

    const tokens = result.areas.units.tokens;
    const levels = w.outlines ?? 'top';
    const meta = { name: 'depressions', description: depressionsDescription(levels), units: report.units, caution: report.caution };
    w.progress?.stage(`tracing outlines, writing depressions.geojson${w.gpkg !== false ? ' and results.gpkg' : ''}`);
    // results.gpkg is written by a thread of its own (with more than one) from the rows this thread makes
    if (w.gpkg !== false) gpkg = openGeoPackage(out.path(GPKG_FILE), g.crs, { lastChange: w.gpkg, thread: (w.threads ?? defaultThreads()) > 1 });
    const features = writeDepressionsGeojson(out.path('depressions.geojson'), w.project ? out.path('depressions-wgs84.geojson') : null, result, report.depressions.columns, levels, w.project, meta, gpkg);
    report.outlines = { levels, features, depressions: report.depressions.length, note: outlinesNote(levels, features, report.depressions.length) };
    await out.checkpoint();
    w.progress?.stage('writing pour-points.geojson');
    writePourPointsGeojson(out.path('pour-points.geojson'), w.project ? out.path('pour-points-wgs84.geojson') : null, result, report.depressions.columns, w.project,
      { name: 'pour-points', description: POUR_POINTS_DESCRIPTION, units: report.units, caution: report.caution }, gpkg);
    await out.checkpoint();
    w.progress?.stage('writing spill-paths.geojson');
    writeSpillPathsGeojson(out.path('spill-paths.geojson'), result, catch0, meta, gpkg);
    await out.checkpoint();
    w.progress?.stage('tracing catchments, writing catchments.geojson');
    writeCatchmentsGeojson(out.path('catchments.geojson'), result, catch0, levels, meta, gpkg);
    await out.checkpoint();
    w.progress?.stage('writing depressions.csv');
    const cols = report.depressions.columns;
    writeIdCsv(out.path('depressions.csv'), report.depressions.length, pondsCsvColumns(result, cols, tokens), (d) => pondsCsvRow(result, cols, d));
    if (w.stageId !== undefined) {
      out.write(`stage-volume-${w.stageId}.csv`, stageCsv(stageVolume(result, w.stageId, w.stageStep), tokens));
    }
    await out.checkpoint();
    w.progress?.stage('writing report.json');
    writeReportFile(out.path('report.json'), report);
    await out.checkpoint();
    w.progress?.stage('writing the report');
    addReport(out, w.render, ['report.json', 'depressions.csv', 'depressions.geojson', 'pour-points.geojson', 'spill-paths.geojson', 'catchments.geojson', ...rasterFiles(PONDS_RASTERS, !!w.mosaic)], (ctx) => buildPondsHtml(result, report, ctx));
    await gpkg?.finish();
    gpkg = null;
    await Promise.all(rasters);
    return await out.commit();
  } catch (e) {
    await Promise.allSettled(rasters); // every raster writer has finished (and removed its temporary file)
    await gpkg?.abort();
    throw out.fail(e);
  }
}


export function pondsSummary(r: PondsReport, outDir?: string, files: string[] = []): string {
  const s = r.surface;
  const u = r.units;
  const lines = summaryHead(r);
  const c = r.counts;
  lines.push(`depressions  ${c.depressions} (${c.leaf} leaf, ${c.merged} merged; ${c.topLevel} top-level)`);
  if (c.flats > 0) lines.push(`             ${c.flats} flat${c.flats === 1 ? '' : 's'} at their own spill level hold no water and are not counted`);
  const rm = r.removed;
  if (rm.filtered > 0) {
    lines.push(`removed      ${rm.filtered} by the filters: ${rm.insideKept.depressions} inside kept depressions (their ${fmt(rm.insideKept.volume)} ${u.volume} still counted there), ` +
      `${rm.topLevel.depressions} at the top level (${fmt(rm.topLevel.volume)} ${u.volume} not filled, not in the totals)`);
  }
  if (rm.absorbed > 0) lines.push(`             ${rm.absorbed} merged with their parent after a removed neighbour left them a single spill`);
  if (rm.closedRegions.count > 0) {
    lines.push(`no outlet    ${rm.closedRegions.count} region${rm.closedRegions.count === 1 ? '' : 's'} (${rm.closedRegions.cells} cells) walled in by nodata: not filled; use --nodata-as outlet to let them drain`);
  }
  if (r.culverts) {
    const e = r.culverts.effects;
    const lowered = r.culverts.lines.toArray().reduce((n, l) => n + l.lowered, 0);
    lines.push(`culverts     ${r.culverts.lines.length} line${r.culverts.lines.length === 1 ? '' : 's'} from ${r.culverts.file}, ${lowered} cells lowered to their inverts; ` +
      `against the DEM without them: ${e.vanished} depressions vanished, ${e.merged} merged, ${e.shrank} shrank, ${e.grew} grew, ${e.unchanged} unchanged`);
  }
  lines.push(`totals       ${fmt(r.totals.volume)} ${u.volume} over ${fmt(r.totals.area)} ${u.area} (top-level depressions at their spill levels)`);
  const t = r.totals;
  if (t.catchments && t.offMap && t.walledIn) {
    const all = t.catchments.area + t.offMap.area + t.walledIn.area;
    const pc = (a: number) => `${all > 0 ? ((100 * a) / all).toFixed(1) : '0.0'} %`;
    lines.push(`catchments   ${pc(t.catchments.area)} of the valid area drains into depressions, ${pc(t.offMap.area)} off the map` +
      (t.walledIn.cells > 0 ? `, ${pc(t.walledIn.area)} into regions walled in by nodata` : ''));
  }
  if (r.filters.fillOnlyBelow !== null) lines.push(`filled       only depressions below ${fmt(r.filters.fillOnlyBelow)} ${u.volume}: ${fmt(r.totals.filledVolume)} ${u.volume} filled`);
  lines.push(`units        elevations and depths in ${u.elevation}, areas in ${u.area}, volumes in ${u.volume}; horizontal: ${u.horizontal}`);
  for (const note of u.notes) lines.push(`             ${note}`);
  const geo = !!s.crs?.geographic;
  // the five largest by a bounded selection over the volume column (ties: the smaller id)
  const top = topK(r.depressions.columns.volume, 1, r.depressions.length + 1, 5).map((id) => r.depressions.at(id - 1));
  if (top.length) {
    lines.push('largest:');
    for (const d of top) {
      lines.push(`  #${d.id}${d.parent === null ? '' : ` (in #${d.parent})`}: ${fmt(d.volume)} ${u.volume}, ${fmt(d.area)} ${u.area}, pit ${fmt(d.pitValue)} → spill ${fmt(d.spillValue)}; ` +
        `pours at cell (${d.pour.col}, ${d.pour.row}), x ${fmtCoord(d.pour.x, geo)}, y ${fmtCoord(d.pour.y, geo)} into ${d.into === 'outside' ? 'the outside' : `#${d.into}`}`);
    }
  }
  lines.push(...summaryTail(r, outDir, files));
  return lines.join('\n');
}

