/** The `runoff` report object (schema sill/runoff@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { runoff, type RunoffOptions, type RunoffResult, type RunoffWater } from '../hydro/runoff.js';
import { surfaceInfo, num, SILL_VERSION, type SurfaceInfo, type EulerInfo } from './common.js';
import { cleanValue, cleanDifference, type CellRef } from './ponds.js';

export const RUNOFF_CAUTION =
  'Screening information only: the runoff is routed instantly over the DEM as it stands — no infiltration, evaporation, ' +
  'storage in the soil, or flow through culverts, drains and pipes unless the depth given is already net of them, and no ' +
  'timing, peak flows or channel hydraulics. Levels and volumes come from the DEM alone, with its resolution and errors. ' +
  "They do not replace hydraulic modelling, surveyed data or a licensed engineer's judgement; local codes and floodplain " +
  'rules govern any decision.';

export type WaterState = 'full' | 'partial' | 'dry';

export interface RunoffDepressionRecord {
  id: number;
  parent: number | null;
  children: number[];
  /** 0 for a top-level depression, 1 for one nested in it, … */
  level: number;
  kind: 'leaf' | 'merged';
  pitValue: number;
  pit: CellRef;
  spillValue: number;
  /** The pass cell, and the cell beyond it the overflow runs into (`outside`: off the grid or a nodata outlet). */
  pour: CellRef & { to: CellRef & { outside: boolean } };
  /** Where it spills: the depression its overflow runs into, or 'outside'. */
  into: number | 'outside';
  /** Cells, area and volume at the spill level (what `sill ponds` reports): the capacity. */
  cells: number;
  area: number;
  volume: number;
  maxDepth: number;
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

export interface RunoffReportOptions extends RunoffOptions {
  /** The depth as the user wrote it (e.g. '40mm'), for the report. */
  depthText?: string;
  /** Unit of the depth raster's values, as named (e.g. 'mm'). */
  depthRasterUnit?: string;
}

function cellRef(g: Grid, i: number): CellRef {
  const row = Math.floor(i / g.width), col = i - row * g.width;
  return { col, row, x: g.x(col, row), y: g.y(col, row) };
}

/** The cell beyond the pass: a cell, or the first outlet of the ring (off the grid or nodata). */
function pourTarget(res: RunoffResult, pass: number, to: number): CellRef & { outside: boolean } {
  const g = res.grid;
  if (to >= 0) return { ...cellRef(g, to), outside: false };
  const row = Math.floor(pass / g.width), col = pass - row * g.width;
  const ring = res.options.connectivity === 4 ? [[1, 0], [0, 1], [-1, 0], [0, -1]]
    : res.options.connectivity === 6 ? [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]]
      : [[1, 0], [0, 1], [-1, 0], [0, -1], [1, 1], [-1, 1], [-1, -1], [1, -1]];
  for (const [dc, dr] of ring) {
    const c = col + dc, r = row + dr;
    const off = c < 0 || r < 0 || c >= g.width || r >= g.height;
    if (off || (res.options.nodataOutlet && Number.isNaN(g.values[r * g.width + c]))) {
      return { col: c, row: r, x: g.x(c, r), y: g.y(c, r), outside: true };
    }
  }
  throw new Error(`internal: pass cell (${col}, ${row}) spills to the outside but touches no outlet`);
}

export function runoffReport(surface: Grid | Mesh, opts: RunoffReportOptions, input: string | null = null): RunoffRun {
  const result = runoff(surface, { ...opts, source: opts.source ?? input ?? 'input' });
  return { result, report: buildRunoffReport(result, input, opts) };
}

export function buildRunoffReport(result: RunoffResult, input: string | null, opts: { depthText?: string; depthRasterUnit?: string } = {}): RunoffReport {
  const g = result.grid;
  const H = result.hierarchy;
  const T = result.tree, Rt = result.route;
  const u = result.areas.units;
  const f32 = g.values instanceof Float32Array;
  const depressions: RunoffDepressionRecord[] = [];
  let nFull = 0, nPartial = 0, nDry = 0, capacity = 0;
  for (let id = 1; id <= H.count; id++) {
    const k = H.node[id];
    const kids = Array.from(H.children.subarray(H.childStart[id], H.childStart[id + 1]));
    const isTop = H.parent[id] === 0;
    const pitValue = cleanValue(H.pitValue[id], f32), spillValue = cleanValue(H.spillValue[id], f32);
    const stored = Rt.stored[k];
    const state: WaterState = Rt.full[k] ? 'full' : stored > 0 ? 'partial' : 'dry';
    if (state === 'full') nFull++; else if (state === 'partial') nPartial++; else nDry++;
    if (isTop) capacity += H.volume[id];
    const lev = result.singleLevel[k];
    depressions.push({
      id,
      parent: isTop ? null : H.parent[id],
      children: kids,
      level: H.level[id],
      kind: kids.length === 0 ? 'leaf' : 'merged',
      pitValue,
      pit: cellRef(g, H.pit[id]),
      spillValue,
      pour: { ...cellRef(g, H.spillCell[id]), to: pourTarget(result, H.spillCell[id], H.pourTo[id]) },
      into: H.into[id] === 0 ? 'outside' : H.into[id],
      cells: H.wetCells[id],
      area: H.area[id],
      volume: H.volume[id],
      maxDepth: f32 ? cleanDifference(spillValue, pitValue) : H.maxDepth[id],
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
  const rowArea = result.areas.rowArea;
  let amin = Infinity, amax = -Infinity;
  for (let r = 0; r < rowArea.length; r++) { amin = Math.min(amin, rowArea[r]); amax = Math.max(amax, rowArea[r]); }
  const e = result.euler;
  const inp = result.input;
  return {
    schema: 'sill/runoff@1',
    sill: SILL_VERSION,
    input,
    caution: RUNOFF_CAUTION,
    surface: surfaceInfo(g),
    connectivity: result.options.connectivity,
    boundary: 'open',
    nodataAs: result.options.nodataOutlet ? 'outlet' : 'wall',
    euler: e ? { ...e } : null,
    units: {
      horizontal: u.horizontal, elevation: u.elevation, depth: u.elevation, area: u.area, volume: u.volume, runoff: 'm',
      notes: g.crs && g.crs.epsg === undefined
        ? [...u.notes, 'the CRS has no EPSG code, so the GeoTIFFs and the GeoJSON are written without one: assign the DEM\'s CRS to them in your GIS']
        : u.notes,
    },
    cellArea: { uniform: result.areas.uniform, min: amin, max: amax },
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
