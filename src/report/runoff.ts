/** The `runoff` report object (schema sill/runoff@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { runoff, type RunoffOptions, type RunoffResult, type RunoffWater } from '../hydro/runoff.js';
import { type SurfaceInfo, type EulerInfo, type FeatureHook } from './common.js';
import { Rows, formatNumber } from '../io/stream.js';
import { depressionColumns, depressionCore, depressionCoreJson, reportHead, reportUnits, cellAreaRange, DepressionRows, type DepressionCore, type DepressionColumns } from './hydro-common.js';

export const RUNOFF_CAUTION =
  'Screening information only: the runoff is routed instantly over the DEM as it stands — no infiltration, evaporation, ' +
  'storage in the soil, or flow through culverts, drains and pipes unless the depth given is already net of them, and no ' +
  'timing, peak flows or channel hydraulics. Levels and volumes come from the DEM alone, with its resolution and errors. ' +
  "They do not replace hydraulic modelling, surveyed data or a licensed engineer's judgement; local codes and floodplain " +
  'rules govern any decision.';

export type WaterState = 'full' | 'partial' | 'dry';

export interface RunoffDepressionRecord extends DepressionCore {
  /** Water that reached it: from its catchment and from its neighbours' overflow (volume unit). */
  received: number;
  /** Water it holds after the routing, nested depressions included. */
  waterVolume: number;
  /** Water it passed on at its pour point (received − waterVolume). */
  passedOn: number;
  /** The water surface, when its water is one body (null: dry, or pools at several levels in nested depressions). */
  waterLevel: number | null;
  state: WaterState;
  /** waterVolume / volume. */
  fillFraction: number;
  wetCells: number;
  wetArea: number;
  /** Deepest water in it (level − lowest wet cell). */
  maxWaterDepth: number;
}

export interface PondRecord {
  /** Water body id, largest volume first (ponds.geojson uses the same ids). */
  id: number;
  volume: number;
  level: number;
  cells: number;
  area: number;
  maxDepth: number;
  /** The innermost depression holding it, or null for a walled-in region. */
  depression: number | null;
  /** It stands at the depression's spill level. */
  full: boolean;
}

export interface RunoffReport {
  schema: 'sill/runoff@1';
  sill: string;
  input: string | null;
  caution: string;
  surface: SurfaceInfo;
  connectivity: number;
  boundary: 'open';
  nodataAs: 'outlet' | 'wall';
  euler: EulerInfo | null;
  units: { horizontal: string; elevation: string; depth: string; area: string; volume: string; runoff: string; notes: string[] };
  cellArea: { uniform: boolean; min: number; max: number };
  /** The water put on the DEM. */
  runoff: {
    mode: 'uniform' | 'raster';
    /** Uniform depth in metres, and as given (e.g. '40mm'). */
    depth: number | null;
    depthText: string | null;
    raster: { source: string; unit: string; metresPerUnit: number; resampled: boolean; missingCells: number; outsideCells: number } | null;
    initialLevel: { source: string; resampled: boolean; wetCells: number } | null;
    /** Valid cells that received water. */
    cells: number;
  };
  /** Volumes: input = ponded + outflow, to within balanceError (relative). */
  water: RunoffWater;
  counts: { depressions: number; full: number; partial: number; dry: number; ponds: number; closedRegions: number; flats: number };
  totals: {
    /** Water the top-level depressions hold when full (`sill ponds` totals.volume). */
    capacity: number;
    /** Ponded water as a fraction of that. */
    fillFraction: number;
    wetArea: number;
    wetCells: number;
    /** Water held in walled-in regions (--nodata-as wall), in the ponded volume. */
    closedRegionWater: number;
  };
  warnings: string[];
  /** With -o: how many ponds have a polygon in ponds.geojson (every pond). */
  outlines?: { features: number; note: string };
  /** Records made on demand from the columns (record i is depression id i + 1, pond id i + 1). */
  depressions: DepressionRows<RunoffDepressionRecord>;
  ponds: Rows<PondRecord>;
}

export interface RunoffRun {
  result: RunoffResult;
  report: RunoffReport;
}

export interface RunoffReportOptions extends RunoffOptions, FeatureHook {
  /** The depth as the user wrote it (e.g. '40mm'), for the report. */
  depthText?: string;
  /** Unit of the depth raster's values, as named (e.g. 'mm'). */
  depthRasterUnit?: string;
}

export function runoffReport(surface: Grid | Mesh, opts: RunoffReportOptions, input: string | null = null): RunoffRun {
  const result = runoff(surface, { ...opts, source: opts.source ?? input ?? 'input' });
  opts.onFeatures?.(result.hierarchy.count);
  return { result, report: buildRunoffReport(result, input, opts) };
}

export function buildRunoffReport(result: RunoffResult, input: string | null, opts: { depthText?: string; depthRasterUnit?: string } = {}): RunoffReport {
  const H = result.hierarchy;
  const Rt = result.route;
  const cols = depressionColumns(result);
  let nFull = 0, nPartial = 0, nDry = 0, capacity = 0;
  for (let id = 1; id <= H.count; id++) {
    const k = H.node[id];
    if (Rt.full[k]) nFull++; else if (Rt.stored[k] > 0) nPartial++; else nDry++;
    if (H.parent[id] === 0) capacity += H.volume[id];
  }
  const depressions = new DepressionRows<RunoffDepressionRecord>(
    H.count,
    (i) => ({ ...depressionCore(result, cols, i + 1), ...runoffPart(result, i + 1) }),
    (i) => depressionCoreJson(result, cols, i + 1) + runoffPartJson(result, i + 1),
    cols,
  );
  const B = result.bodies;
  let wetArea = 0, wetCells = 0;
  for (let b = 1; b <= B.count; b++) { wetArea += B.area[b]; wetCells += B.cells[b]; }
  const ponds = new Rows<PondRecord>(B.count, (i) => pondRecord(result, i + 1), { compact: true, json: (i) => pondJson(result, i + 1) });
  const inp = result.input;
  return {
    schema: 'sill/runoff@1',
    ...reportHead(result, input, RUNOFF_CAUTION),
    units: reportUnits(result, { runoff: 'm' }),
    cellArea: cellAreaRange(result.areas),
    runoff: {
      mode: inp.mode,
      depth: inp.depth,
      depthText: opts.depthText ?? null,
      raster: inp.raster
        ? { source: inp.raster.source, unit: opts.depthRasterUnit ?? (inp.raster.factor === 1 ? 'm' : `${inp.raster.factor} m`), metresPerUnit: inp.raster.factor, resampled: inp.raster.resampled, missingCells: inp.raster.missingCells, outsideCells: inp.raster.outsideCells }
        : null,
      initialLevel: inp.initial ? { ...inp.initial } : null,
      cells: inp.wetInputCells,
    },
    water: { ...result.water },
    counts: { depressions: H.count, full: nFull, partial: nPartial, dry: nDry, ponds: B.count, closedRegions: result.closedRegions.count, flats: H.removed.flats },
    totals: {
      capacity,
      fillFraction: capacity > 0 ? Math.min(1, (result.water.ponded - result.closedRegions.water) / capacity) : 0,
      wetArea, wetCells, closedRegionWater: result.closedRegions.water,
    },
    warnings: [...result.warnings],
    // set by the writer of -o (ponds.geojson); the lists come last in the JSON
    outlines: undefined,
    depressions,
    ponds,
  };
}

/** The water state of depression `id` after the routing. */
export function waterState(result: RunoffResult, id: number): WaterState {
  const k = result.hierarchy.node[id];
  return result.route.full[k] ? 'full' : result.route.stored[k] > 0 ? 'partial' : 'dry';
}

/** Depression `id`'s single water level, or null (dry, or pools at several levels). */
export function waterLevelOf(result: RunoffResult, id: number): number | null {
  const lev = result.singleLevel[result.hierarchy.node[id]];
  return lev === lev && Number.isFinite(lev) ? lev : null;
}

function fillFractionOf(result: RunoffResult, k: number): number {
  const cap = result.tree.capacity[k];
  return cap > 0 ? Math.min(1, result.route.stored[k] / cap) : 1;
}

/** The runoff members of depression `id`'s record. */
function runoffPart(result: RunoffResult, id: number): Omit<RunoffDepressionRecord, keyof DepressionCore> {
  const k = result.hierarchy.node[id], Rt = result.route;
  return {
    received: Rt.received[k],
    waterVolume: Rt.stored[k],
    passedOn: Rt.passedOn[k],
    waterLevel: waterLevelOf(result, id),
    state: waterState(result, id),
    fillFraction: fillFractionOf(result, k),
    wetCells: result.wetCells[k],
    wetArea: result.wetArea[k],
    maxWaterDepth: result.maxWaterDepth[k],
  };
}

/** The same as JSON text, from its first comma to the record's closing brace. */
function runoffPartJson(result: RunoffResult, id: number): string {
  const k = result.hierarchy.node[id], Rt = result.route;
  const lev = waterLevelOf(result, id);
  return `,"received":${formatNumber(Rt.received[k])},"waterVolume":${formatNumber(Rt.stored[k])},"passedOn":${formatNumber(Rt.passedOn[k])}` +
    `,"waterLevel":${lev === null ? 'null' : formatNumber(lev)},"state":"${waterState(result, id)}","fillFraction":${formatNumber(fillFractionOf(result, k))}` +
    `,"wetCells":${formatNumber(result.wetCells[k])},"wetArea":${formatNumber(result.wetArea[k])},"maxWaterDepth":${formatNumber(result.maxWaterDepth[k])}}`;
}

/** Pond `b`'s record. */
export function pondRecord(result: RunoffResult, b: number): PondRecord {
  const B = result.bodies;
  return {
    id: b, volume: B.volume[b], level: B.level[b], cells: B.cells[b], area: B.area[b], maxDepth: B.maxDepth[b],
    depression: B.depression[b] > 0 ? B.depression[b] : null, full: B.full[b] === 1,
  };
}

function pondJson(result: RunoffResult, b: number): string {
  const B = result.bodies;
  return `{"id":${b},"volume":${formatNumber(B.volume[b])},"level":${formatNumber(B.level[b])},"cells":${formatNumber(B.cells[b])},"area":${formatNumber(B.area[b])}` +
    `,"maxDepth":${formatNumber(B.maxDepth[b])},"depression":${B.depression[b] > 0 ? B.depression[b] : 'null'},"full":${B.full[b] === 1 ? 'true' : 'false'}}`;
}

/** Columns of runoff.csv (units in the headers), each an accessor of depression id `d` reading the columns. */
export function runoffCsvColumns(result: RunoffResult, cols: DepressionColumns, tokens: { elevation: string; area: string; volume: string }): [string, (d: number) => unknown][] {
  const z = tokens.elevation, a = tokens.area, v = tokens.volume;
  const H = result.hierarchy, g = result.grid, W = g.width, Rt = result.route;
  const col = (i: number) => i % W, row = (i: number) => Math.floor(i / W);
  const k = (d: number) => H.node[d];
  return [
    ['id', (d) => d],
    ['parent', (d) => (H.parent[d] === 0 ? '' : H.parent[d])],
    ['level', (d) => H.level[d]],
    ['kind', (d) => (H.childStart[d + 1] === H.childStart[d] ? 'leaf' : 'merged')],
    [`pit_value_${z}`, (d) => cols.pitValue[d]],
    [`spill_value_${z}`, (d) => cols.spillValue[d]],
    ['into', (d) => (H.into[d] === 0 ? 'outside' : H.into[d])],
    [`capacity_${v}`, (d) => H.volume[d]],
    [`received_${v}`, (d) => Rt.received[k(d)]],
    [`stored_${v}`, (d) => Rt.stored[k(d)]],
    [`passed_on_${v}`, (d) => Rt.passedOn[k(d)]],
    [`water_level_${z}`, (d) => waterLevelOf(result, d) ?? ''],
    ['state', (d) => waterState(result, d)],
    ['fill_fraction', (d) => fillFractionOf(result, k(d))],
    ['wet_cells', (d) => result.wetCells[k(d)]],
    [`wet_area_${a}`, (d) => result.wetArea[k(d)]],
    [`max_water_depth_${z}`, (d) => result.maxWaterDepth[k(d)]],
    ['pit_col', (d) => col(H.pit[d])],
    ['pit_row', (d) => row(H.pit[d])],
    ['pour_col', (d) => col(H.spillCell[d])],
    ['pour_row', (d) => row(H.spillCell[d])],
    ['pour_x', (d) => g.x(col(H.spillCell[d]), row(H.spillCell[d]))],
    ['pour_y', (d) => g.y(col(H.spillCell[d]), row(H.spillCell[d]))],
  ];
}

/** Row `d` of runoff.csv as text (with its newline), straight from the columns: the line writeCsv makes from runoffCsvColumns. */
export function runoffCsvRow(result: RunoffResult, cols: DepressionColumns, d: number): string {
  const H = result.hierarchy, g = result.grid, W = g.width, Rt = result.route;
  const k = H.node[d];
  const pit = H.pit[d], pr = Math.floor(pit / W), pc = pit - pr * W;
  const pass = H.spillCell[d], sr = Math.floor(pass / W), sc = pass - sr * W;
  const p = H.parent[d], into = H.into[d];
  const lev = waterLevelOf(result, d);
  const c = (x: number) => formatNumber(x, '');
  return `${d},${p === 0 ? '' : p},${H.level[d]},${H.childStart[d + 1] === H.childStart[d] ? 'leaf' : 'merged'},${c(cols.pitValue[d])},${c(cols.spillValue[d])}` +
    `,${into === 0 ? 'outside' : into},${c(H.volume[d])},${c(Rt.received[k])},${c(Rt.stored[k])},${c(Rt.passedOn[k])},${lev === null ? '' : c(lev)},${waterState(result, d)}` +
    `,${c(fillFractionOf(result, k))},${c(result.wetCells[k])},${c(result.wetArea[k])},${c(result.maxWaterDepth[k])},${pc},${pr},${sc},${sr},${c(g.x(sc, sr))},${c(g.y(sc, sr))}\n`;
}
