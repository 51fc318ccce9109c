/** The `runoff` report object (schema sill/runoff@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { runoff, type RunoffOptions, type RunoffResult, type RunoffWater } from '../hydro/runoff.js';
import { num, type SurfaceInfo, type EulerInfo, type FeatureHook } from './common.js';
import { depressionCore, reportHead, reportUnits, cellAreaRange, type DepressionCore } from './hydro-common.js';

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
  /** With -o: how many ponds have a polygon in ponds.geojson. */
  outlines?: { traced: number; omitted: number; note: string };
  depressions: RunoffDepressionRecord[];
  ponds: PondRecord[];
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
  const T = result.tree, Rt = result.route;
  const depressions: RunoffDepressionRecord[] = [];
  let nFull = 0, nPartial = 0, nDry = 0, capacity = 0;
  for (let id = 1; id <= H.count; id++) {
    const k = H.node[id];
    const stored = Rt.stored[k];
    const state: WaterState = Rt.full[k] ? 'full' : stored > 0 ? 'partial' : 'dry';
    if (state === 'full') nFull++; else if (state === 'partial') nPartial++; else nDry++;
    if (H.parent[id] === 0) capacity += H.volume[id];
    const lev = result.singleLevel[k];
    depressions.push({
      ...depressionCore(result, id),
      received: Rt.received[k],
      waterVolume: stored,
      passedOn: Rt.passedOn[k],
      waterLevel: lev === lev && Number.isFinite(lev) ? lev : null,
      state,
      fillFraction: T.capacity[k] > 0 ? Math.min(1, stored / T.capacity[k]) : 1,
      wetCells: result.wetCells[k],
      wetArea: result.wetArea[k],
      maxWaterDepth: result.maxWaterDepth[k],
    });
  }
  const B = result.bodies;
  const ponds: PondRecord[] = [];
  let wetArea = 0, wetCells = 0;
  for (let b = 1; b <= B.count; b++) {
    wetArea += B.area[b];
    wetCells += B.cells[b];
    ponds.push({
      id: b, volume: B.volume[b], level: B.level[b], cells: B.cells[b], area: B.area[b], maxDepth: B.maxDepth[b],
      depression: B.depression[b] > 0 ? B.depression[b] : null, full: B.full[b] === 1,
    });
  }
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
    depressions,
    ponds,
  };
}

/** Columns of runoff.csv (units in the headers). */
export function runoffCsvColumns(tokens: { elevation: string; area: string; volume: string }): [string, (d: RunoffDepressionRecord) => unknown][] {
  const z = tokens.elevation, a = tokens.area, v = tokens.volume;
  return [
    ['id', (d) => d.id],
    ['parent', (d) => d.parent ?? ''],
    ['level', (d) => d.level],
    ['kind', (d) => d.kind],
    [`pit_value_${z}`, (d) => num(d.pitValue)],
    [`spill_value_${z}`, (d) => num(d.spillValue)],
    ['into', (d) => d.into],
    [`capacity_${v}`, (d) => d.volume],
    [`received_${v}`, (d) => d.received],
    [`stored_${v}`, (d) => d.waterVolume],
    [`passed_on_${v}`, (d) => d.passedOn],
    [`water_level_${z}`, (d) => d.waterLevel ?? ''],
    ['state', (d) => d.state],
    ['fill_fraction', (d) => d.fillFraction],
    ['wet_cells', (d) => d.wetCells],
    [`wet_area_${a}`, (d) => d.wetArea],
    [`max_water_depth_${z}`, (d) => d.maxWaterDepth],
    ['pit_col', (d) => d.pit.col],
    ['pit_row', (d) => d.pit.row],
    ['pour_col', (d) => d.pour.col],
    ['pour_row', (d) => d.pour.row],
    ['pour_x', (d) => d.pour.x],
    ['pour_y', (d) => d.pour.y],
  ];
}
