/** `sill ponds IN`: depression hierarchy, spill levels, pour points, volumes; filled/depth/label rasters. */
import { Option, type Command } from 'commander';
import { InputError } from '../errors.js';
import { pondsReport, pondsCsvColumns, type PondsReport, type DepressionRecord } from '../report/ponds.js';
import type { PondsResult } from '../hydro/ponds.js';
import { topLabels } from '../hydro/rasters.js';
import { depressionOutlines, type DepressionOutline } from '../hydro/vectors.js';
import { toWgs84 } from '../hydro/reproject.js';
import { stageVolume } from '../hydro/stage.js';
import { writeGeoTiff } from '../io/index.js';
import { toCsv, featureCollection, pointFeature, type Feature } from '../io/tables.js';
import { openSync, writeSync, closeSync } from 'node:fs';
import { once } from 'node:events';
import { OutputFolder } from '../io/outdir.js';
import { addCommonOptions, parseBoundary, parseConnectivity, parseNumber, Progress, say, fmt, fmtCoord, type CommonOptions } from './common.js';
import { loadInput } from './load.js';
import { reportRequest, addReport, reportSummary, flagsOf, PONDS_FLAGS, type ReportRequest } from './report-option.js';
import { buildPondsReport as buildPondsHtml } from '../render/html/ponds.js';

export interface PondsCliOptions extends CommonOptions {
  nodataAs?: string;
  minDepth?: string;
  minArea?: string;
  minVolume?: string;
  fillOnlyBelow?: string;
  labelLevel?: string;
  zUnits?: string;
  zFactor?: string;
  xyUnits?: string;
  wgs84?: boolean;
  stageVolume?: string;
  stageStep?: string;
}

export function registerPonds(program: Command): void {
  const cmd = program
    .command('ponds')
    .description('closed depressions of a DEM: spill levels, pour points, volumes and nesting; filled, depth and label rasters')
    .argument('<input>', 'GeoTIFF, .npy or text grid (a DEM)');
  addCommonOptions(cmd, { boundary: 'open' })
    .addOption(new Option('--nodata-as <mode>', 'nodata cells: outlet (water drains into them) or wall').choices(['outlet', 'wall']).default('outlet'))
    .option('--min-depth <v>', 'merge depressions shallower than V (spill − pit, vertical unit) into their parent')
    .option('--min-area <v>', 'merge depressions with a wet area below V (m², or map units² without a CRS) into their parent')
    .option('--min-volume <v>', 'merge depressions holding less than V (m³) into their parent')
    .option('--fill-only-below <v>', 'in filled.tif and depth.tif, fill only depressions holding less than V (m³)')
    .addOption(new Option('--label-level <level>', 'labels.tif holds the innermost (leaf) or the outermost (top) depression id').choices(['leaf', 'top']).default('leaf'))
    .option('--z-units <unit>', 'vertical unit of the DEM: m, ft, us-ft, cm, mm (default: metres, assumed)')
    .option('--z-factor <f>', 'metres per vertical unit of the DEM (instead of --z-units)')
    .option('--xy-units <unit>', 'horizontal unit when the input has no CRS: m, ft, us-ft, km, deg')
    .option('--wgs84', 'also write depressions-wgs84.geojson in longitude/latitude (projected CRSs with a known EPSG code)')
    .option('--stage-volume <id>', 'write stage-volume-ID.csv: water level, wet area and volume of depression ID from its pit to its spill level')
    .option('--stage-step <dz>', 'level step of the stage-volume table (vertical unit; default: 50 steps)')
    .action(async (input: string, opts: PondsCliOptions) => {
      await runPondsCommand(input, opts);
    });
}

function optionalNumber(name: string, s: string | undefined, min = 0): number | undefined {
  return s === undefined ? undefined : parseNumber(name, s, { min });
}

export async function runPondsCommand(input: string, opts: PondsCliOptions): Promise<PondsReport> {
  const progress = new Progress(opts.quiet || opts.json);
  const connectivity = parseConnectivity(opts.connectivity);
  const boundary = parseBoundary(opts.boundary);
  if (boundary !== 'open') {
    throw new InputError(`ponds needs --boundary open (water leaves the map at its edge and, unless --nodata-as wall, at nodata cells); got '${boundary}'`);
  }
  const nodataAs = opts.nodataAs ?? 'outlet';
  if (nodataAs !== 'outlet' && nodataAs !== 'wall') throw new InputError(`--nodata-as must be outlet or wall, got '${nodataAs}'`);
  const labelLevel = opts.labelLevel ?? 'leaf';
  if (labelLevel !== 'leaf' && labelLevel !== 'top') throw new InputError(`--label-level must be leaf or top, got '${labelLevel}'`);
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', { min: 0 });
  const minDepth = optionalNumber('--min-depth', opts.minDepth);
  const minArea = optionalNumber('--min-area', opts.minArea);
  const minVolume = optionalNumber('--min-volume', opts.minVolume);
  const fillOnlyBelow = opts.fillOnlyBelow === undefined ? undefined : parseNumber('--fill-only-below', opts.fillOnlyBelow, { positive: true });
  const zFactor = opts.zFactor === undefined ? undefined : parseNumber('--z-factor', opts.zFactor, { positive: true });
  const stageId = opts.stageVolume === undefined ? undefined : parseNumber('--stage-volume', opts.stageVolume, { integer: true, min: 1 });
  const stageStep = opts.stageStep === undefined ? undefined : parseNumber('--stage-step', opts.stageStep, { positive: true });
  if (stageStep !== undefined && stageId === undefined) throw new InputError('--stage-step needs --stage-volume ID');
  if (stageId !== undefined && !opts.out) throw new InputError('--stage-volume writes a table: give an output folder with -o/--out');
  const render = reportRequest('ponds', [input], { ...opts }, flagsOf({ ...opts }, PONDS_FLAGS));
  if (opts.wgs84 && !opts.out) throw new InputError('--wgs84 writes depressions-wgs84.geojson: give an output folder with -o/--out');

  progress.stage(`reading ${input}`);
  const surface = await loadInput(input, opts);
  const { result, report } = pondsReport(surface, {
    connectivity, boundary, nodataOutlet: nodataAs === 'outlet',
    minDepth, minArea, minVolume, minPersistence, fillOnlyBelow,
    zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits,
    labelLevel, source: input,
    onStage: (s) => progress.stage(s),
  }, input);
  if (report.euler && !report.euler.holds) {
    const e = report.euler;
    throw new Error(`Euler relation fails (χ = ${e.characteristic}, pits − passes + peaks = ${e.pits - e.passes + e.peaks}); this is a bug in sill, please report it with the input`);
  }
  if (stageId !== undefined && stageId > report.depressions.length) {
    throw new InputError(`--stage-volume ${stageId}: there ${report.depressions.length === 1 ? 'is 1 depression' : `are ${report.depressions.length} depressions`} (ids 1…${report.depressions.length}); pick one from depressions.csv`);
  }
  // check --wgs84 before writing anything
  const project = opts.wgs84 ? toWgs84(result.grid.crs, input) : null;
  let written: string[] = [];
  if (opts.out) {
    progress.stage('writing files');
    written = await writePondsFiles(opts.out, result, report, { project, stageId, stageStep, progress, render });
  }
  progress.done();
  if (opts.json) {
    // streamed: the text of a large report can be longer than one string may be
    for (const chunk of reportJsonChunks(report, false)) {
      if (!process.stdout.write(chunk)) await once(process.stdout, 'drain');
    }
  }
  say(opts, pondsSummary(report, opts.out, written));
  if (render && opts.out) say(opts, reportSummary(opts.out, render));
  return report;
}

interface WriteOptions {
  project: ((x: number, y: number) => [number, number]) | null;
  stageId?: number;
  stageStep?: number;
  progress?: Progress;
  render?: ReportRequest | null;
}

export async function writePondsFiles(dir: string, result: PondsResult, report: PondsReport, w: WriteOptions = { project: null }): Promise<string[]> {
  const out = new OutputFolder(dir);
  try {
    const g = result.grid;
    const base = { width: g.width, height: g.height, transform: g.transform, crs: g.crs };
    const R = result.rasters;
    const valueNodata = g.nodata !== null && Number.isFinite(g.nodata) ? g.nodata : NaN;
    w.progress?.stage('writing filled.tif');
    await writeGeoTiff(out.path('filled.tif'), { ...base, values: R.filled, nodata: valueNodata });
    w.progress?.stage('writing depth.tif');
    await writeGeoTiff(out.path('depth.tif'), { ...base, values: R.depth, nodata: -9999 });
    w.progress?.stage('writing labels.tif');
    const labels = report.labelLevel === 'top' ? topLabels(R.labels, result.hierarchy) : R.labels;
    await writeGeoTiff(out.path('labels.tif'), { ...base, values: labels, nodata: -1 });

    w.progress?.stage('tracing outlines');
    const outlines = depressionOutlines(g, R.labels, result.hierarchy);
    const omitted = outlines.reduce((k, o) => k + (o.omitted ? 1 : 0), 0);
    report.outlines = {
      traced: outlines.length - omitted,
      omitted,
      note: omitted > 0
        ? `${omitted} nested merged depressions have no polygon in depressions.geojson (null geometry): tracing every level of this deep hierarchy would scan the grid too many times; the top-level and leaf depressions and the largest nested ones are traced — use --min-depth, --min-area or --min-volume to simplify the hierarchy`
        : 'every depression has its polygon',
    };
    const tokens = result.areas.units.tokens;
    const meta = {
      name: 'depressions',
      description: 'closed depressions at their spill levels (polygons) and their pour points (points)',
      units: report.units,
      caution: report.caution,
    };
    w.progress?.stage('writing depressions.geojson');
    writeChunks(out.path('depressions.geojson'), featureChunks(report, outlines, null, g.crs, meta));
    if (w.project) writeChunks(out.path('depressions-wgs84.geojson'), featureChunks(report, outlines, w.project, null, { ...meta, name: 'depressions-wgs84' }));
    w.progress?.stage('writing depressions.csv');
    writeChunks(out.path('depressions.csv'), csvChunks(report.depressions, pondsCsvColumns(tokens)));
    if (w.stageId !== undefined) {
      const table = stageVolume(result, w.stageId, w.stageStep);
      out.write(`stage-volume-${w.stageId}.csv`, toCsv(table, [
        [`level_${tokens.elevation}`, (s) => s.level],
        [`area_${tokens.area}`, (s) => s.area],
        [`volume_${tokens.volume}`, (s) => s.volume],
        ['cells', (s) => s.cells],
      ]));
    }
    w.progress?.stage('writing report.json');
    writeChunks(out.path('report.json'), reportJsonChunks(report, true));
    w.progress?.stage('writing the report');
    addReport(out, w.render, ['report.json', 'depressions.csv', 'depressions.geojson', 'filled.tif', 'depth.tif', 'labels.tif'], (ctx) => buildPondsHtml(result, report, ctx));
    return out.commit();
  } catch (e) {
    out.abort();
    throw e;
  }
}

function depressionProps(d: DepressionRecord): Record<string, unknown> {
  return {
    kind: 'depression', id: d.id, parent: d.parent, level: d.level, type: d.kind, children: d.children.join(' '),
    pitValue: d.pitValue, spillValue: d.spillValue, into: d.into, cells: d.cells, area: d.area, volume: d.volume,
    maxDepth: d.maxDepth, meanDepth: d.meanDepth, pourCol: d.pour.col, pourRow: d.pour.row,
  };
}

/** Write text pieces to a file through a 1 MB buffer (no single string holds the whole file). */
function writeChunks(path: string, chunks: Iterable<string>): void {
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

/** The report as JSON text in pieces: every key, then the depressions one record a line. */
export function* reportJsonChunks(report: PondsReport, pretty: boolean): Generator<string> {
  const { depressions, ...rest } = report;
  const head = pretty ? JSON.stringify(rest, null, 1) : JSON.stringify(rest);
  yield head.slice(0, head.lastIndexOf('}')).replace(/\s+$/, '');
  yield pretty ? ',\n "depressions": [' : ',"depressions":[';
  for (let k = 0; k < depressions.length; k++) yield (k ? ',' : '') + (pretty ? '\n  ' : '') + JSON.stringify(depressions[k]);
  yield pretty ? (depressions.length ? '\n ]\n}\n' : ']\n}\n') : ']}\n';
}

/** CSV text in pieces of 10 000 rows (one header). */
function* csvChunks<T>(rows: readonly T[], columns: readonly [string, (r: T) => unknown][]): Generator<string> {
  for (let k = 0; k < Math.max(1, rows.length); k += 10000) {
    const text = toCsv(rows.slice(k, k + 10000), columns);
    yield k === 0 ? text : text.slice(text.indexOf('\n') + 1);
  }
}

/**
 * depressions.geojson in pieces, in the layout of featureCollection (src/io/tables.ts): the
 * collection's members, then one feature at a time — a polygon per depression (null geometry when
 * its outline was left out), then a point per pour point.
 */
function* featureChunks(report: PondsReport, outlines: DepressionOutline[], project: ((x: number, y: number) => [number, number]) | null, crs: PondsResult['grid']['crs'], meta: Record<string, unknown>): Generator<string> {
  const empty = featureCollection([], crs, meta);
  yield empty.slice(0, empty.lastIndexOf('[') + 1);
  const P = project ?? ((x: number, y: number): [number, number] => [x, y]);
  let first = true;
  for (const o of outlines) {
    const d = report.depressions[o.id - 1];
    const coords = o.polygons.map((poly) => poly.map((ring) => ring.map(([x, y]) => P(x, y))));
    const f: Feature = {
      type: 'Feature', id: d.id,
      geometry: o.omitted ? null : coords.length === 1 ? { type: 'Polygon', coordinates: coords[0] } : { type: 'MultiPolygon', coordinates: coords },
      properties: depressionProps(d),
    };
    yield (first ? '' : ',') + JSON.stringify(f);
    first = false;
  }
  for (const d of report.depressions) {
    const [x, y] = P(d.pour.x, d.pour.y);
    yield (first ? '' : ',') + JSON.stringify(pointFeature(x, y, {
      kind: 'pour point', id: d.id, spillValue: d.spillValue, into: d.into, pourCol: d.pour.col, pourRow: d.pour.row,
      toCol: d.pour.to.col, toRow: d.pour.to.row, toOutside: d.pour.to.outside,
    }));
    first = false;
  }
  yield ']}\n';
}

export function pondsSummary(r: PondsReport, outDir?: string, files: string[] = []): string {
  const s = r.surface;
  const u = r.units;
  const lines: string[] = [];
  lines.push(`surface      ${s.width} × ${s.height} grid, ${s.validCells} valid cells${s.crs?.name ? `, ${s.crs.name}` : ', no CRS'}`);
  lines.push(`outlets      grid edge${r.nodataAs === 'outlet' ? ' and nodata cells' : ' (nodata cells are walls)'}; connectivity ${r.connectivity}`);
  if (r.euler) {
    const e = r.euler;
    lines.push(`Euler        pits − passes + peaks = ${e.pits - e.passes + e.peaks}, χ = ${e.characteristic} by counting simplices: ${e.holds ? 'holds' : 'FAILS'}`);
  }
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
  lines.push(`totals       ${fmt(r.totals.volume)} ${u.volume} over ${fmt(r.totals.area)} ${u.area} (top-level depressions at their spill levels)`);
  if (r.filters.fillOnlyBelow !== null) lines.push(`filled       only depressions below ${fmt(r.filters.fillOnlyBelow)} ${u.volume}: ${fmt(r.totals.filledVolume)} ${u.volume} filled`);
  lines.push(`units        elevations and depths in ${u.elevation}, areas in ${u.area}, volumes in ${u.volume}; horizontal: ${u.horizontal}`);
  for (const note of u.notes) lines.push(`             ${note}`);
  const geo = !!s.crs?.geographic;
  const top = [...r.depressions].sort((a, b) => b.volume - a.volume || a.id - b.id).slice(0, 5);
  if (top.length) {
    lines.push('largest:');
    for (const d of top) {
      lines.push(`  #${d.id}${d.parent === null ? '' : ` (in #${d.parent})`}: ${fmt(d.volume)} ${u.volume}, ${fmt(d.area)} ${u.area}, pit ${fmt(d.pitValue)} → spill ${fmt(d.spillValue)}; ` +
        `pours at cell (${d.pour.col}, ${d.pour.row}), x ${fmtCoord(d.pour.x, geo)}, y ${fmtCoord(d.pour.y, geo)} into ${d.into === 'outside' ? 'the outside' : `#${d.into}`}`);
    }
  }
  lines.push(`caution      ${r.caution}`);
  if (r.outlines && r.outlines.omitted > 0) lines.push(`outlines     ${r.outlines.note}`);
  if (outDir) lines.push(`files        ${outDir}/ ${files.map((f) => f.split(/[\\/]/).pop()).join(' ')}`);
  return lines.join('\n');
}
