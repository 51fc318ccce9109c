/** `sill runoff IN --depth D`: route a runoff depth through the depression hierarchy (fill, spill, merge). */
import { Option, type Command } from 'commander';
import { InputError } from '../errors.js';
import { runoffReport, runoffCsvColumns, runoffCsvRow, type RunoffReport } from '../report/runoff.js';
import type { RunoffResult } from '../hydro/runoff.js';
import { runoffStageVolume } from '../hydro/runoff.js';
import { parseDepth, depthUnit, DEPTH_UNITS } from '../hydro/runoff-input.js';
import { traceBodyOutlines } from '../hydro/runoff-vectors.js';
import { loadSurface } from '../io/index.js';
import { formatNumber as jn } from '../io/stream.js';
import { writeOutlineGeometry, outlineRings } from '../hydro/vectors.js';
import type { OutputFolder } from '../io/outdir.js';
import type { GpkgLayerSpec } from '../io/gpkg.js';
import { openGeoPackage, type GeoPackageOutput } from '../io/gpkg-thread.js';
import { defaultThreads } from '../io/tile-encoder.js';
import type { Grid } from '../surface/grid.js';
import { addCommonOptions, parseNumber, parseThreads, Progress, say, fmt, openOutput, NO_GPKG, inputTime, THRESHOLD, GPKG_FILE } from './common.js';
import {
  parseOpenBoundary, parseNodataAs, parseZAndStage, checkHydroReport, checkBalance, printReport, writeReportFile, writeIdCsv, withCollection,
  stageCsv, summaryHead, summaryTail, type HydroCliOptions,
} from './hydro-common.js';
import { prepareInput, inputList, mosaicInfo, rasterNames, rasterFiles, writeRasterProducts, type Inputs } from './mosaic.js';
import type { OpenedMosaic } from '../io/mosaic.js';
import { checkCellBudget, featureBudget } from './budget.js';
import { reportRequest, addReport, reportSummary, reportNames, flagsOf, type FlagSpec, type ReportRequest } from './report-option.js';
import { buildRunoffHtml } from '../render/html/runoff.js';

export interface RunoffCliOptions extends HydroCliOptions {
  depth?: string;
  depthRaster?: string;
  depthUnits?: string;
  initialLevel?: string;
  zUnits?: string;
  xyUnits?: string;
  /** false with --no-gpkg: no results.gpkg. */
  gpkg?: boolean;
}

/** The options of `runoff` that shape its result, for the command line in the report header. */
export const RUNOFF_FLAGS: FlagSpec = [
  ['depth', '--depth', undefined], ['depthRaster', '--depth-raster', undefined], ['depthUnits', '--depth-units', undefined],
  ['initialLevel', '--initial-level', undefined], ['nodataAs', '--nodata-as', 'outlet'],
  ['zUnits', '--z-units', undefined], ['zFactor', '--z-factor', undefined], ['xyUnits', '--xy-units', undefined],
];

export function registerRunoff(program: Command): void {
  const cmd = program
    .command('runoff')
    .description('route a runoff depth through the depressions of a DEM (fill, spill, merge): where the water ponds, how deep, and how much leaves the map')
    .argument('<input...>', 'GeoTIFF, .npy or text grid (a DEM); or a mosaic: a .vrt, a folder of GeoTIFF tiles, or several GeoTIFF paths');
  addCommonOptions(cmd, { boundary: 'open' })
    .option('--depth <d>', 'uniform runoff depth with its unit, e.g. 25mm, 0.1m, 2in, 1ft')
    .option('--depth-raster <file>', 'runoff depth per cell (a raster; nodata = no runoff); resampled to the DEM when its grid differs')
    .option('--depth-units <unit>', 'unit of the --depth-raster values: mm, cm, m, in, ft (default m)')
    .option('--initial-level <file>', 'water surface already present (a raster in the DEM\'s vertical unit; nodata or below ground = none)')
    .addOption(new Option('--nodata-as <mode>', 'nodata cells: outlet (water drains into them) or wall').choices(['outlet', 'wall']).default('outlet'))
    .option('--z-units <unit>', 'vertical unit of the DEM: m, ft, us-ft, cm, mm (default: metres, assumed)')
    .option('--z-factor <f>', 'metres per vertical unit of the DEM (instead of --z-units)')
    .option('--xy-units <unit>', 'horizontal unit when the input has no CRS: m, ft, us-ft, km, deg')
    .option('--stage-volume <id>', 'write stage-volume-ID.csv: water level, wet area and volume of depression ID from its pit to its spill level')
    .option('--stage-step <dz>', 'level step of the stage-volume table (vertical unit; default: 50 steps)')
    .option(...NO_GPKG)
    .action(async (input: string[], opts: RunoffCliOptions) => {
      await runRunoffCommand(input, opts);
    });
}

/** A raster input (depth, initial level) as a grid. */
async function loadRaster(path: string, option: string): Promise<Grid> {
  const s = await loadSurface(path);
  if (s.kind !== 'grid') throw new InputError(`${option} ${path} holds scattered samples; give a raster (GeoTIFF, .npy or a text grid)`);
  return s;
}

export async function runRunoffCommand(input: Inputs, opts: RunoffCliOptions): Promise<RunoffReport> {
  const progress = new Progress(opts.quiet || opts.json);
  const { connectivity, boundary } = parseOpenBoundary('runoff', opts);
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', THRESHOLD);
  if (minPersistence > 0) {
    throw new InputError('runoff routes the water through every depression, shallow ones included (they store water too); --min-persistence does not apply — filter runoff.csv instead');
  }
  const nodataAs = parseNodataAs(opts);
  const threads = parseThreads(opts.threads);
  if (opts.depth !== undefined && opts.depthRaster !== undefined) throw new InputError('give either --depth or --depth-raster, not both');
  if (opts.depth === undefined && opts.depthRaster === undefined) throw new InputError('say how much runoff to route: --depth D with its unit (e.g. --depth 40mm) or --depth-raster R.tif');
  if (opts.depthUnits !== undefined && opts.depthRaster === undefined) throw new InputError('--depth-units names the unit of --depth-raster values; with --depth write the unit in the value (e.g. 40mm)');
  const depth = opts.depth !== undefined ? parseDepth(opts.depth, '--depth') : null;
  let rasterUnit = 'm';
  if (opts.depthUnits !== undefined) {
    const u = depthUnit(opts.depthUnits);
    if (u === null) throw new InputError(`--depth-units must be one of mm, cm, m, in, ft; got '${opts.depthUnits}'`);
    rasterUnit = u;
  }
  const { zFactor, stageId, stageStep } = parseZAndStage(opts);
  const render = reportRequest('runoff', inputList(input), { ...opts }, flagsOf({ ...opts }, RUNOFF_FLAGS));
  const src = await prepareInput(input, opts, 'runoff');
  const out = openOutput(opts, 'runoff', [...runoffFiles(src.mosaic !== null), ...(opts.gpkg === false ? [] : [GPKG_FILE]), ...(stageId !== undefined ? [`stage-volume-${stageId}.csv`] : []), ...reportNames(render)],
    [...src.files, opts.depthRaster, opts.initialLevel]);

  progress.stage(`reading ${src.mosaic ? src.mosaic.source : src.inputs[0]}`);
  const { surface, mosaic, label } = await src.load();
  checkCellBudget('runoff', surface.size, label);
  const depthRaster = opts.depthRaster !== undefined ? await loadRaster(opts.depthRaster, '--depth-raster') : undefined;
  const initialLevel = opts.initialLevel !== undefined ? await loadRaster(opts.initialLevel, '--initial-level') : undefined;
  const { result, report } = runoffReport(surface, {
    onFeatures: featureBudget('runoff', surface.size, opts.out ? 'out' : opts.json ? 'json' : 'none', label),
    connectivity, boundary, nodataOutlet: nodataAs === 'outlet',
    depth: depth?.metres, depthText: opts.depth?.trim(),
    depthRaster, depthRasterFactor: DEPTH_UNITS[rasterUnit], depthRasterSource: opts.depthRaster, depthRasterUnit: rasterUnit,
    initialLevel, initialLevelSource: opts.initialLevel,
    zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits,
    source: label, threads,
    onStage: (s) => progress.stage(s),
  }, label);
  if (mosaic) Object.assign(report, { mosaic: mosaicInfo(mosaic) });
  checkHydroReport(report, stageId, 'runoff.csv');
  checkBalance(report.water);
  progress.done();
  for (const w of report.warnings) process.stderr.write(`sill: warning: ${w}\n`);
  let written: string[] = [];
  if (out) {
    progress.stage('writing files');
    written = await writeRunoffFiles(out, result, report, { stageId, stageStep, progress, render, threads, mosaic, gpkg: opts.gpkg !== false && inputTime(src.files[0]) });
    progress.done();
  }
  if (opts.json) printReport(report);
  say(opts, runoffSummary(report, opts.out, written));
  if (render && opts.out) say(opts, reportSummary(opts.out, render));
  return report;
}

interface WriteOptions {
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

/** The files `runoff -o DIR` always writes (--stage-volume and --report add theirs). */
export const RUNOFF_FILES = ['water-level.tif', 'water-depth.tif', 'ponds.geojson', 'runoff.csv', 'report.json'];

/** The raster products of runoff. */
const RUNOFF_RASTERS = ['water-level', 'water-depth'];

/** RUNOFF_FILES, or for a mosaic the same with water-level/, water-depth/ (a GeoTIFF a tile) and their VRTs. */
export function runoffFiles(mosaic: boolean): string[] {
  return mosaic ? [...rasterNames(RUNOFF_RASTERS, true), ...RUNOFF_FILES.filter((f) => !f.endsWith('.tif'))] : RUNOFF_FILES;
}

/** The ponds layer of results.gpkg: the properties of ponds.geojson as typed columns. */
export const PONDS_LAYER: GpkgLayerSpec = {
  name: 'ponds',
  geometry: 'MULTIPOLYGON',
  description: 'water standing after routing the runoff: one polygon per pond (the features of ponds.geojson)',
  columns: [
    ['kind', 'TEXT'], ['id', 'INTEGER'], ['volume', 'REAL'], ['level', 'REAL'], ['area', 'REAL'], ['cells', 'INTEGER'],
    ['maxDepth', 'REAL'], ['depression', 'INTEGER'], ['full', 'BOOLEAN'],
  ],
};

export async function writeRunoffFiles(out: OutputFolder, result: RunoffResult, report: RunoffReport, w: WriteOptions = {}): Promise<string[]> {
  let rasters: Promise<void>[] = [];
  let gpkg: GeoPackageOutput | null = null;
  try {
    const g = result.grid;
    const base = { width: g.width, height: g.height, transform: g.transform, crs: g.crs };
    const R = result.rasters;
    // The rasters are compressed by worker threads while this thread writes the catalogues.
    w.progress?.stage(w.mosaic ? 'writing water-level and water-depth: a GeoTIFF a tile and a VRT each' : 'writing water-level.tif and water-depth.tif');
    rasters = writeRasterProducts(out, base, [
      { name: 'water-level', values: R.level, nodata: -9999, overviews: 'average' },
      { name: 'water-depth', values: R.depth, nodata: -9999, overviews: 'average' },
    ], w.mosaic ?? null, w.threads);
    for (const r of rasters) r.catch(() => undefined); // awaited below

    const tokens = result.areas.units.tokens;
    w.progress?.stage(`tracing pond outlines, writing ponds.geojson${w.gpkg !== false ? ' and results.gpkg' : ''}`);
    const meta = {
      name: 'ponds',
      description: `water standing after routing ${report.runoff.depthText ?? 'the runoff'} through the depressions: one polygon per pond (connected water under one level)`,
      units: report.units,
      water: report.water,
      caution: report.caution,
    };
    const B = result.bodies;
    let features = 0;
    // results.gpkg is written by a thread of its own (with more than one) from the rows this thread makes
    if (w.gpkg !== false) gpkg = openGeoPackage(out.path(GPKG_FILE), g.crs, { lastChange: w.gpkg, thread: (w.threads ?? defaultThreads()) > 1 });
    const layer = gpkg?.layer(PONDS_LAYER) ?? null;
    withCollection(out.path('ponds.geojson'), g.crs, meta, (fc) => {
      // one polygon per pond, written as it is traced
      features = traceBodyOutlines(g, R.bodies, B.count, (b, o) => {
        const props = `{"kind":"pond","id":${b},"volume":${jn(B.volume[b])},"level":${jn(B.level[b])},"area":${jn(B.area[b])},"cells":${jn(B.cells[b])}` +
          `,"maxDepth":${jn(B.maxDepth[b])},"depression":${B.depression[b] > 0 ? B.depression[b] : 'null'},"full":${B.full[b] === 1 ? 'true' : 'false'}}`;
        fc.featureWith(b, (k) => writeOutlineGeometry(k, o, g.transform), props);
        layer?.polygons(b, outlineRings(o, g.transform), ['pond', b, B.volume[b], B.level[b], B.area[b], B.cells[b], B.maxDepth[b], B.depression[b] > 0 ? B.depression[b] : null, B.full[b] === 1]);
      });
    });
    if (features !== B.count) throw new Error(`${features} pond outlines traced for ${B.count} ponds (internal error)`);
    report.outlines = { features, note: `ponds.geojson outlines all ${features} ponds` };
    await out.checkpoint();
    w.progress?.stage('writing runoff.csv');
    const cols = report.depressions.columns;
    writeIdCsv(out.path('runoff.csv'), report.depressions.length, runoffCsvColumns(result, cols, tokens), (d) => runoffCsvRow(result, cols, d));
    if (w.stageId !== undefined) {
      out.write(`stage-volume-${w.stageId}.csv`, stageCsv(runoffStageVolume(result, w.stageId, w.stageStep), tokens));
    }
    await out.checkpoint();
    w.progress?.stage('writing report.json');
    writeReportFile(out.path('report.json'), report);
    await out.checkpoint();
    w.progress?.stage('writing the report');
    addReport(out, w.render, ['report.json', 'runoff.csv', 'ponds.geojson', ...rasterFiles(RUNOFF_RASTERS, !!w.mosaic)], (ctx) => buildRunoffHtml(result, report, ctx));
    await gpkg?.finish();
    gpkg = null;
    await Promise.all(rasters);
    return await out.commit();
  } catch (e) {
    await gpkg?.abort();
    await Promise.allSettled(rasters); // every raster writer has finished (and removed its temporary file)
    throw out.fail(e);
  }
}

const pct = (x: number) => `${fmt(100 * x, 3)} %`;

export function runoffSummary(r: RunoffReport, outDir?: string, files: string[] = []): string {
  const u = r.units;
  const v = u.volume;
  const lines = summaryHead(r);
  const ro = r.runoff;
  if (ro.mode === 'uniform') lines.push(`runoff       ${ro.depthText ?? `${fmt(ro.depth)} m`} over every valid cell`);
  else lines.push(`runoff       ${ro.raster!.source} (${ro.raster!.unit}), ${ro.cells} cells with water${ro.raster!.resampled ? '; resampled to the DEM (see the warning)' : ''}`);
  if (ro.initialLevel) lines.push(`             water already standing (${ro.initialLevel.source}) on ${ro.initialLevel.wetCells} cells`);
  const w = r.water;
  lines.push(`water        input ${fmt(w.input)} ${v}${w.initial > 0 ? ` (runoff ${fmt(w.runoff)}, already standing ${fmt(w.initial)})` : ''}`);
  lines.push(`             ponded ${fmt(w.ponded)} ${v}, outflow ${fmt(w.outflow)} ${v} (${fmt(w.outflowDirect)} straight off the map, ${fmt(w.outflow - w.outflowDirect)} over pour points)`);
  lines.push(`balance      input − ponded − outflow = ${fmt(w.input - w.ponded - w.outflow, 3)} ${v}, relative error ${w.balanceError.toExponential(1)}`);
  const c = r.counts;
  lines.push(`depressions  ${c.depressions}: ${c.full} full, ${c.partial} partly filled, ${c.dry} dry` +
    (r.totals.capacity > 0 ? `; ${pct(r.totals.fillFraction)} of their ${fmt(r.totals.capacity)} ${v} capacity used` : ''));
  lines.push(`ponds        ${c.ponds} (connected water under one level) over ${fmt(r.totals.wetArea)} ${u.area}`);
  if (c.closedRegions > 0) lines.push(`no outlet    ${c.closedRegions} walled-in region${c.closedRegions === 1 ? '' : 's'} hold${c.closedRegions === 1 ? 's' : ''} ${fmt(r.totals.closedRegionWater)} ${v}`);
  lines.push(`units        elevations and levels in ${u.elevation}, areas in ${u.area}, volumes in ${v}; horizontal: ${u.horizontal}`);
  for (const note of u.notes) lines.push(`             ${note}`);
  const top = Array.from({ length: Math.min(5, r.ponds.length) }, (_, i) => r.ponds.at(i)); // ponds are numbered largest first
  if (top.length) {
    lines.push('largest ponds:');
    for (const p of top) {
      const d = p.depression === null ? 'a walled-in region' : `depression #${p.depression}`;
      lines.push(`  pond ${p.id}: ${fmt(p.volume)} ${v} at level ${fmt(p.level, 7)} ${u.elevation}, ${fmt(p.area)} ${u.area}, up to ${fmt(p.maxDepth)} ${u.elevation} deep, in ${d}${p.full ? ' (full: more water spills on)' : ''}`);
    }
  }
  lines.push(...summaryTail(r, outDir, files));
  return lines.join('\n');
}
