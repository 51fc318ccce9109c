/** The `ponds` report object (schema sill/ponds@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { ponds, type PondsOptions, type PondsResult } from '../hydro/ponds.js';
import type { RemovedSummary } from '../hydro/hierarchy.js';
import { surfaceInfo, num, SILL_VERSION, type SurfaceInfo, type EulerInfo } from './common.js';

export const PONDS_CAUTION =
  'Screening information only: spill levels, pour points and volumes come from the DEM alone (its resolution, ' +
  'errors and missing culverts or drains included). They do not replace hydraulic modelling, surveyed data or a ' +
  "licensed engineer's judgement; local codes and floodplain rules govern any decision.";

export interface CellRef {
  col: number;
  row: number;
  x: number;
  y: number;
}

export interface PourRecord extends CellRef {
  /** The cell beyond the pass that the water overflows into; `outside` when it leaves the map (off the grid or a nodata outlet). */
  to: CellRef & { outside: boolean };
}

export interface DepressionRecord {
  id: number;
  parent: number | null;
  children: number[];
  /** 0 for a top-level depression, 1 for one nested in it, … */
  level: number;
  kind: 'leaf' | 'merged';
  pitValue: number;
  pit: CellRef;
  spillValue: number;
  pour: PourRecord;
  /** The depression the overflow runs into, or 'outside'. */
  into: number | 'outside';
  /** Cells under water at the spill level (depth > 0). */
  cells: number;
  area: number;
  volume: number;
  maxDepth: number;
  meanDepth: number;
}

export interface PondsReport {
  schema: 'sill/ponds@1';
  sill: string;
  input: string | null;
  caution: string;
  surface: SurfaceInfo;
  connectivity: number;
  boundary: 'open';
  nodataAs: 'outlet' | 'wall';
  euler: EulerInfo | null;
  units: { horizontal: string; elevation: string; depth: string; area: string; volume: string; notes: string[] };
  /** Area of one cell: a single value, or the range over rows on a geographic grid. */
  cellArea: { uniform: boolean; min: number; max: number };
  filters: { minDepth: number; minArea: number; minVolume: number; minPersistence: number; fillOnlyBelow: number | null };
  removed: RemovedSummary;
  counts: { depressions: number; leaf: number; merged: number; topLevel: number; flats: number; closedRegions: number };
  totals: {
    depressions: number;
    /** Volume of the top-level depressions at their spill levels (the water a fully filled DEM holds). */
    volume: number;
    /** Wet area of the top-level depressions. */
    area: number;
    /** Σ depth × cell area over the depth raster (equals `volume` unless --fill-only-below). */
    filledVolume: number;
    filledArea: number;
    filledCells: number;
  };
  labelLevel: 'leaf' | 'top';
  /** With -o: how many depressions have a polygon in depressions.geojson. */
  outlines?: { traced: number; omitted: number; note: string };
  depressions: DepressionRecord[];
}

export interface PondsRun {
  result: PondsResult;
  report: PondsReport;
}

export interface PondsReportOptions extends PondsOptions {
  labelLevel?: 'leaf' | 'top';
}

/**
 * A float32 grid value as the shortest decimal that reads back as the same float32
 * (239.46 rather than 239.4600067138672); float64 values are returned as they are.
 */
export function cleanValue(v: number, float32: boolean): number {
  if (!float32 || !Number.isFinite(v)) return v;
  for (let p = 6; p <= 9; p++) {
    const x = Number(v.toPrecision(p));
    if (Math.fround(x) === v) return x;
  }
  return v;
}

/** a − b of two clean decimals, rounded to the decimals they are written with (0.03, not 0.0300140380859375). */
export function cleanDifference(a: number, b: number): number {
  const dec = (x: number) => {
    const s = String(x);
    if (/e/i.test(s)) return -1;
    const k = s.indexOf('.');
    return k < 0 ? 0 : s.length - k - 1;
  };
  const da = dec(a), db = dec(b);
  if (da < 0 || db < 0) return a - b;
  return Number((a - b).toFixed(Math.max(da, db)));
}

function cellRef(g: Grid, i: number): CellRef {
  const row = Math.floor(i / g.width), col = i - row * g.width;
  return { col, row, x: g.x(col, row), y: g.y(col, row) };
}

/** Where the water goes beyond the pass: a cell, or the nearest outlet of the ring (off the grid or nodata). */
function pourTarget(res: PondsResult, pass: number, to: number): PourRecord['to'] {
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

export function pondsReport(surface: Grid | Mesh, opts: PondsReportOptions = {}, input: string | null = null): PondsRun {
  const result = ponds(surface, { ...opts, source: opts.source ?? input ?? 'input' });
  return { result, report: buildPondsReport(result, input, opts.labelLevel ?? 'leaf') };
}

export function buildPondsReport(result: PondsResult, input: string | null, labelLevel: 'leaf' | 'top' = 'leaf'): PondsReport {
  const g = result.grid;
  const H = result.hierarchy;
  const u = result.areas.units;
  const depressions: DepressionRecord[] = [];
  let leaf = 0, merged = 0, topLevel = 0, volume = 0, area = 0;
  const f32 = g.values instanceof Float32Array;
  for (let id = 1; id <= H.count; id++) {
    const pitValue = cleanValue(H.pitValue[id], f32), spillValue = cleanValue(H.spillValue[id], f32);
    const kids = Array.from(H.children.subarray(H.childStart[id], H.childStart[id + 1]));
    const isTop = H.parent[id] === 0;
    if (kids.length === 0) leaf++; else merged++;
    if (isTop) { topLevel++; volume += H.volume[id]; area += H.area[id]; }
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
      meanDepth: H.meanDepth[id],
    });
  }
  const rowArea = result.areas.rowArea;
  let amin = Infinity, amax = -Infinity;
  for (let r = 0; r < rowArea.length; r++) { amin = Math.min(amin, rowArea[r]); amax = Math.max(amax, rowArea[r]); }
  const e = result.euler;
  const zf = result.areas.zFactor;
  const o = result.options;
  return {
    schema: 'sill/ponds@1',
    sill: SILL_VERSION,
    input,
    caution: PONDS_CAUTION,
    surface: surfaceInfo(g),
    connectivity: o.connectivity,
    boundary: 'open',
    nodataAs: o.nodataOutlet ? 'outlet' : 'wall',
    euler: e ? { ...e } : null,
    units: {
      horizontal: u.horizontal, elevation: u.elevation, depth: u.elevation, area: u.area, volume: u.volume,
      notes: g.crs && g.crs.epsg === undefined
        ? [...u.notes, 'the CRS has no EPSG code, so the GeoTIFFs and the GeoJSON are written without one: assign the DEM\'s CRS to them in your GIS']
        : u.notes,
    },
    cellArea: { uniform: result.areas.uniform, min: amin, max: amax },
    filters: { minDepth: o.minDepth, minArea: o.minArea, minVolume: o.minVolume, minPersistence: o.minPersistence, fillOnlyBelow: o.fillOnlyBelow },
    removed: H.removed,
    counts: { depressions: H.count, leaf, merged, topLevel, flats: H.removed.flats, closedRegions: H.removed.closedRegions.count },
    totals: {
      depressions: H.count,
      volume,
      area,
      filledVolume: result.rasters.filledVolume * zf,
      filledArea: result.rasters.filledArea,
      filledCells: result.rasters.filledCells,
    },
    labelLevel,
    depressions,
  };
}

/** Units written into table headers: `area_m2`, `volume_m3`, `spill_value_m`, … */
export function pondsCsvColumns(tokens: { elevation: string; area: string; volume: string }): [string, (d: DepressionRecord) => unknown][] {
  const z = tokens.elevation, a = tokens.area, v = tokens.volume;
  return [
    ['id', (d) => d.id],
    ['parent', (d) => d.parent ?? ''],
    ['level', (d) => d.level],
    ['kind', (d) => d.kind],
    ['children', (d) => d.children.join(' ')],
    [`pit_value_${z}`, (d) => num(d.pitValue)],
    ['pit_col', (d) => d.pit.col],
    ['pit_row', (d) => d.pit.row],
    ['pit_x', (d) => d.pit.x],
    ['pit_y', (d) => d.pit.y],
    [`spill_value_${z}`, (d) => num(d.spillValue)],
    ['pour_col', (d) => d.pour.col],
    ['pour_row', (d) => d.pour.row],
    ['pour_x', (d) => d.pour.x],
    ['pour_y', (d) => d.pour.y],
    ['pour_to_col', (d) => d.pour.to.col],
    ['pour_to_row', (d) => d.pour.to.row],
    ['into', (d) => d.into],
    ['cells', (d) => d.cells],
    [`area_${a}`, (d) => d.area],
    [`volume_${v}`, (d) => d.volume],
    [`max_depth_${z}`, (d) => d.maxDepth],
    [`mean_depth_${z}`, (d) => d.meanDepth],
  ];
}
