/** The `ponds` report object (schema sill/ponds@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { ponds, type PondsOptions, type PondsResult } from '../hydro/ponds.js';
import type { RemovedSummary } from '../hydro/hierarchy.js';
import { num, type SurfaceInfo, type EulerInfo, type FeatureHook } from './common.js';
import { depressionCore, reportHead, reportUnits, cellAreaRange, type DepressionCore } from './hydro-common.js';

export { cleanValue, cleanDifference, type CellRef, type PourRecord } from './hydro-common.js';

export const PONDS_CAUTION =
  'Screening information only: spill levels, pour points and volumes come from the DEM alone (its resolution, ' +
  'errors and missing culverts or drains included). They do not replace hydraulic modelling, surveyed data or a ' +
  "licensed engineer's judgement; local codes and floodplain rules govern any decision.";

export interface DepressionRecord extends DepressionCore {
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

export interface PondsReportOptions extends PondsOptions, FeatureHook {
  labelLevel?: 'leaf' | 'top';
}

export function pondsReport(surface: Grid | Mesh, opts: PondsReportOptions = {}, input: string | null = null): PondsRun {
  const result = ponds(surface, { ...opts, source: opts.source ?? input ?? 'input' });
  opts.onFeatures?.(result.hierarchy.count);
  return { result, report: buildPondsReport(result, input, opts.labelLevel ?? 'leaf') };
}

export function buildPondsReport(result: PondsResult, input: string | null, labelLevel: 'leaf' | 'top' = 'leaf'): PondsReport {
  const H = result.hierarchy;
  const depressions: DepressionRecord[] = [];
  let leaf = 0, merged = 0, topLevel = 0, volume = 0, area = 0;
  for (let id = 1; id <= H.count; id++) {
    const d = depressionCore(result, id);
    if (d.kind === 'leaf') leaf++; else merged++;
    if (d.parent === null) { topLevel++; volume += H.volume[id]; area += H.area[id]; }
    depressions.push({ ...d, meanDepth: H.meanDepth[id] });
  }
  const zf = result.areas.zFactor;
  const o = result.options;
  return {
    schema: 'sill/ponds@1',
    ...reportHead(result, input, PONDS_CAUTION),
    units: reportUnits(result, {}),
    cellArea: cellAreaRange(result.areas),
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
