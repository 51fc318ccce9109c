/** The `ponds` report object (schema sill/ponds@1) and its tables. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { ponds, type PondsOptions, type PondsResult } from '../hydro/ponds.js';
import type { RemovedSummary } from '../hydro/hierarchy.js';
import { type SurfaceInfo, type EulerInfo, type FeatureHook } from './common.js';
import { formatNumber, compactRows, type Rows } from '../io/stream.js';
import { EFFECT_STATUS, type Culvert, type CulvertEffects, type EffectStatus } from '../hydro/culverts.js';
import {
  depressionColumns, depressionCore, depressionCoreJson, childrenText, reportHead, reportUnits, cellAreaRange, DepressionRows, cellRef, cleanValue,
  type DepressionCore, type DepressionColumns, type CellRef,
} from './hydro-common.js';

export { cleanValue, cleanDifference, DepressionRows, type CellRef, type PourRecord } from './hydro-common.js';

export const PONDS_CAUTION =
  'Screening information only: spill levels, pour points and volumes come from the DEM alone (its resolution, ' +
  'errors and missing culverts or drains included). They do not replace hydraulic modelling, surveyed data or a ' +
  "licensed engineer's judgement; local codes and floodplain rules govern any decision.";

export interface DepressionRecord extends DepressionCore {
  meanDepth: number;
  /** Cells whose water reaches this depression's pits (its catchment, children's included), and their area; null when catchments were not computed. */
  catchmentCells: number | null;
  catchmentArea: number | null;
  /** Shape of the wet area at the spill level (docs/ponds.md, "Shape attributes"); null when not computed. */
  perimeter: number | null;
  majorAxis: number | null;
  minorAxis: number | null;
  orientation: number | null;
  elongation: number | null;
  boxRatio: number | null;
  /** catchmentArea ÷ area. */
  catchmentRatio: number | null;
}

/** The catchment and shape members of depression `d`'s record, from the columns (null when not computed). */
export function pondsExtras(result: PondsResult, d: number): Pick<DepressionRecord, 'catchmentCells' | 'catchmentArea' | 'perimeter' | 'majorAxis' | 'minorAxis' | 'orientation' | 'elongation' | 'boxRatio' | 'catchmentRatio'> {
  const C = result.catchments, S = result.shapes, H = result.hierarchy;
  return {
    catchmentCells: C ? C.cells[d] : null,
    catchmentArea: C ? C.area[d] : null,
    perimeter: S ? S.perimeter[d] : null,
    majorAxis: S ? S.majorAxis[d] : null,
    minorAxis: S ? S.minorAxis[d] : null,
    orientation: S ? S.orientation[d] : null,
    elongation: S ? elongation(S.majorAxis[d], S.minorAxis[d]) : null,
    boxRatio: S ? S.boxRatio[d] : null,
    catchmentRatio: C ? ratio(C.area[d], H.area[d]) : null,
  };
}

/** major ÷ minor axis (null for a wet area one cell wide, whose minor axis is 0). */
function elongation(major: number, minor: number): number | null {
  return minor > 0 ? major / minor : null;
}

function ratio(a: number, b: number): number | null {
  return b > 0 ? a / b : null;
}

const nj = (x: number | null): string => (x === null ? 'null' : formatNumber(x));

/** The same members as JSON text (leading comma, no closing brace). */
export function pondsExtrasJson(result: PondsResult, d: number): string {
  const e = pondsExtras(result, d);
  return `,"catchmentCells":${nj(e.catchmentCells)},"catchmentArea":${nj(e.catchmentArea)},"perimeter":${nj(e.perimeter)},"majorAxis":${nj(e.majorAxis)}` +
    `,"minorAxis":${nj(e.minorAxis)},"orientation":${nj(e.orientation)},"elongation":${nj(e.elongation)},"boxRatio":${nj(e.boxRatio)},"catchmentRatio":${nj(e.catchmentRatio)}`;
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
    /** Valid cells (and their area) whose water leaves the map without reaching a reported depression — straight away or through flats and removed depressions; null without catchments. */
    offMap: { cells: number; area: number } | null;
    /** Valid cells (and area) whose water stays in regions walled in by nodata (--nodata-as wall). */
    walledIn: { cells: number; area: number } | null;
    /** Cells and area of the top-level catchments: with offMap and walledIn, the valid cells and area. */
    catchments: { cells: number; area: number } | null;
  };
  labelLevel: 'leaf' | 'top';
  /**
   * With -o: which depressions have a polygon in depressions.geojson (`--outlines`: the leaf, the
   * top-level or all depressions), how many of them, and a note saying so.
   */
  outlines?: { levels: 'leaf' | 'top' | 'all'; features: number; depressions: number; note: string };
  /** With --culverts: the lines applied and how the depressions changed against the DEM without them. */
  culverts?: CulvertsReport;
  /** One record per depression, made on demand from the columns (`depressions.columns`). */
  depressions: DepressionRows<DepressionRecord>;
}

export interface CulvertsReport {
  file: string;
  note: string;
  lines: Rows<{ name: string; cells: number; lowered: number; invert: number | null; invertFrom: 'given' | 'lower end'; from: CellRef; to: CellRef }>;
  /** How many depressions without the culverts stayed the same, shrank, grew, merged into another or vanished; `new`: depressions with them that fill from a pit to a pass none had before. */
  effects: Record<EffectStatus, number> & { new: number };
  /** The depressions (ids without the culverts) that changed, and the depression (id with them) that now holds each one's pit. */
  changed: Rows<{ before: number; status: EffectStatus; after: number | null; volumeBefore: number; volumeAfter: number; spillBefore: number; spillAfter: number | null }>;
}

/** The `culverts` member of the report. */
export function culvertsReport(file: string, grid: Grid, culverts: Culvert[], fx: CulvertEffects): CulvertsReport {
  const c = fx.changed, f32 = grid.values instanceof Float32Array;
  return {
    file,
    note: 'every cell along each line lowered to the invert (a breach line); the results and files are those of the DEM with the culverts, compared here with the DEM without them',
    lines: compactRows(culverts.length, (i) => {
      const k = culverts[i];
      return { name: k.name, cells: k.cells.length, lowered: k.lowered, invert: Number.isNaN(k.invert) ? null : cleanValue(k.invert, f32), invertFrom: k.invertFrom,
        from: cellRef(grid, k.cells[0]), to: cellRef(grid, k.cells[k.cells.length - 1]) };
    }),
    effects: { ...fx.counts },
    changed: compactRows(c.before.length, (i) => ({
      before: c.before[i], status: EFFECT_STATUS[c.status[i]], after: c.after[i] > 0 ? c.after[i] : null,
      volumeBefore: c.volumeBefore[i], volumeAfter: c.volumeAfter[i], spillBefore: cleanValue(c.spillBefore[i], f32), spillAfter: Number.isNaN(c.spillAfter[i]) ? null : cleanValue(c.spillAfter[i], f32),
    })),
  };
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

/** @param columns the depressions' columns when the caller made them (default: made here from the grid) */
export function buildPondsReport(result: PondsResult, input: string | null, labelLevel: 'leaf' | 'top' = 'leaf', columns?: DepressionColumns): PondsReport {
  const H = result.hierarchy, C = result.catchments;
  const cols = columns ?? depressionColumns(result);
  let leaf = 0, merged = 0, topLevel = 0, volume = 0, area = 0;
  for (let id = 1; id <= H.count; id++) {
    if (H.childStart[id + 1] === H.childStart[id]) leaf++; else merged++;
    if (H.parent[id] === 0) { topLevel++; volume += H.volume[id]; area += H.area[id]; }
  }
  const depressions = new DepressionRows<DepressionRecord>(
    H.count,
    (i) => ({ ...depressionCore(result, cols, i + 1), meanDepth: H.meanDepth[i + 1], ...pondsExtras(result, i + 1) }),
    (i) => depressionCoreJson(result, cols, i + 1) + `,"meanDepth":${formatNumber(H.meanDepth[i + 1])}${pondsExtrasJson(result, i + 1)}}`,
    cols,
  );
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
      offMap: C ? { ...C.offMap } : null,
      walledIn: C ? { ...C.closed } : null,
      catchments: C ? topCatchments(H, C) : null,
    },
    labelLevel,
    // set by the writer of -o (depressions.geojson); the depressions come last in the JSON
    outlines: undefined,
    // set with --culverts
    culverts: undefined,
    depressions,
  };
}

/** The catchment and shape columns of depressions.csv for depression `d` (leading comma). */
function pondsExtrasCsv(result: PondsResult, d: number, c: (x: number) => string): string {
  const e = pondsExtras(result, d);
  const v = (x: number | null) => (x === null ? '' : c(x));
  return `,${v(e.catchmentCells)},${v(e.catchmentArea)},${v(e.perimeter)},${v(e.majorAxis)},${v(e.minorAxis)},${v(e.orientation)},${v(e.elongation)},${v(e.boxRatio)},${v(e.catchmentRatio)}`;
}

/** Cells and area of the top-level depressions' catchments (the sum the parts of the valid area are checked by). */
function topCatchments(H: PondsResult['hierarchy'], C: NonNullable<PondsResult['catchments']>): { cells: number; area: number } {
  let cells = 0, area = 0;
  for (let d = 1; d <= H.count; d++) if (H.parent[d] === 0) { cells += C.cells[d]; area += C.area[d]; }
  return { cells, area };
}

/**
 * Columns of depressions.csv (units in the headers), each an accessor of depression id `d` reading
 * the columns — no record is made.
 */
export function pondsCsvColumns(result: PondsResult, cols: DepressionColumns, tokens: { elevation: string; area: string; volume: string }): [string, (d: number) => unknown][] {
  const z = tokens.elevation, a = tokens.area, v = tokens.volume;
  const L = a.endsWith('2') ? a.slice(0, -1) : a; // the length unit of the area's (m2 → m)
  const H = result.hierarchy, g = result.grid, W = g.width, C = result.catchments;
  const col = (i: number) => i % W, row = (i: number) => Math.floor(i / W);
  return [
    ['id', (d) => d],
    ['parent', (d) => (H.parent[d] === 0 ? '' : H.parent[d])],
    ['level', (d) => H.level[d]],
    ['kind', (d) => (H.childStart[d + 1] === H.childStart[d] ? 'leaf' : 'merged')],
    ['children', (d) => childrenText(H, d, ' ')],
    [`pit_value_${z}`, (d) => cols.pitValue[d]],
    ['pit_col', (d) => col(H.pit[d])],
    ['pit_row', (d) => row(H.pit[d])],
    ['pit_x', (d) => g.x(col(H.pit[d]), row(H.pit[d]))],
    ['pit_y', (d) => g.y(col(H.pit[d]), row(H.pit[d]))],
    [`spill_value_${z}`, (d) => cols.spillValue[d]],
    ['pour_col', (d) => col(H.spillCell[d])],
    ['pour_row', (d) => row(H.spillCell[d])],
    ['pour_x', (d) => g.x(col(H.spillCell[d]), row(H.spillCell[d]))],
    ['pour_y', (d) => g.y(col(H.spillCell[d]), row(H.spillCell[d]))],
    ['pour_to_col', (d) => cols.toCol[d]],
    ['pour_to_row', (d) => cols.toRow[d]],
    ['into', (d) => (H.into[d] === 0 ? 'outside' : H.into[d])],
    ['cells', (d) => H.wetCells[d]],
    [`area_${a}`, (d) => H.area[d]],
    [`volume_${v}`, (d) => H.volume[d]],
    [`max_depth_${z}`, (d) => cols.maxDepth[d]],
    [`mean_depth_${z}`, (d) => H.meanDepth[d]],
    ['catchment_cells', (d) => pondsExtras(result, d).catchmentCells ?? ''],
    [`catchment_area_${a}`, (d) => pondsExtras(result, d).catchmentArea ?? ''],
    [`perimeter_${L}`, (d) => pondsExtras(result, d).perimeter ?? ''],
    [`major_axis_${L}`, (d) => pondsExtras(result, d).majorAxis ?? ''],
    [`minor_axis_${L}`, (d) => pondsExtras(result, d).minorAxis ?? ''],
    ['orientation_deg', (d) => pondsExtras(result, d).orientation ?? ''],
    ['elongation', (d) => pondsExtras(result, d).elongation ?? ''],
    ['box_ratio', (d) => pondsExtras(result, d).boxRatio ?? ''],
    ['catchment_ratio', (d) => pondsExtras(result, d).catchmentRatio ?? ''],
  ];
}

/**
 * Row `d` of depressions.csv as text (with its newline), straight from the columns: the same line
 * writeCsv makes from pondsCsvColumns (a test holds them equal), without a call per cell.
 */
export function pondsCsvRow(result: PondsResult, cols: DepressionColumns, d: number): string {
  const H = result.hierarchy, g = result.grid, W = g.width, C = result.catchments;
  const pit = H.pit[d], pr = Math.floor(pit / W), pc = pit - pr * W;
  const pass = H.spillCell[d], sr = Math.floor(pass / W), sc = pass - sr * W;
  const p = H.parent[d], into = H.into[d];
  const c = (x: number) => formatNumber(x, '');
  return `${d},${p === 0 ? '' : p},${H.level[d]},${H.childStart[d + 1] === H.childStart[d] ? 'leaf' : 'merged'},${childrenText(H, d, ' ')}` +
    `,${c(cols.pitValue[d])},${pc},${pr},${c(g.x(pc, pr))},${c(g.y(pc, pr))},${c(cols.spillValue[d])},${sc},${sr},${c(g.x(sc, sr))},${c(g.y(sc, sr))}` +
    `,${cols.toCol[d]},${cols.toRow[d]},${into === 0 ? 'outside' : into},${c(H.wetCells[d])},${c(H.area[d])},${c(H.volume[d])},${c(cols.maxDepth[d])},${c(H.meanDepth[d])}` +
    pondsExtrasCsv(result, d, c) + '\n';
}
