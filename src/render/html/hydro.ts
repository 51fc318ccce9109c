/**
 * What the ponds and runoff report pages share: the DEM with the water depth on top, the pour
 * arrows, the spill-level tree's reduction, the hover read-outs and the header.
 */
import type { Grid } from '../../surface/grid.js';
import type { PondsUnits } from '../../hydro/areas.js';
import type { EulerInfo, SurfaceInfo } from '../../report/common.js';
import { mapGeometry } from '../figures/map.js';
import { reduceSweepTree } from '../figures/tree.js';
import { blockStats, finiteRange, type BlockStats } from '../figures/raster.js';
import { makeRamp, type Ramp } from '../figures/colour.js';
import { overlay } from '../figures/layers.js';
import { encodePng, pngDataUri } from '../figures/png.js';
import { topIndices } from '../figures/scale.js';
import { RAMPS } from '../figures/theme.js';
import type { HeaderRow, HoverLayer } from './model.js';
import {
  surfaceDisplay, surfaceLayer, surfaceContours, surfaceHover, commonHeader, valueDecimals, fmtDec, packArray,
  type SurfaceDisplay, type SurfaceLayer,
} from './surface.js';

export const dkey = (id: number): string => `d${id}`;

/** The map's layer switches on both pages. */
export function hydroToggles(): { id: string; label: string; on: boolean }[] {
  return [
    { id: 'surface', label: 'terrain', on: true }, { id: 'depth', label: 'water depth', on: true }, { id: 'contours', label: 'contours', on: true },
    { id: 'outlines', label: 'outlines', on: true }, { id: 'markers', label: 'markers', on: true },
  ];
}

/** Direction (degrees, plot coordinates) from the pour cell to the cell the water spills into. */
export function pourAngle(d: { pour: { col: number; row: number; to: { col: number; row: number } } }): number {
  return (Math.atan2(d.pour.to.row - d.pour.row, d.pour.to.col - d.pour.col) * 180) / Math.PI;
}

/** Record indices ordered deepest nesting level first (children before their parents), from the nesting level of each record. */
export function childrenFirstOf(levels: ArrayLike<number>): Int32Array {
  const n = levels.length;
  let maxLevel = 0;
  for (let i = 0; i < n; i++) if (levels[i] > maxLevel) maxLevel = levels[i];
  const start = new Int32Array(maxLevel + 2);
  for (let i = 0; i < n; i++) start[maxLevel - levels[i] + 1]++;
  for (let l = 1; l <= maxLevel + 1; l++) start[l] += start[l - 1];
  const out = new Int32Array(n);
  for (let i = 0; i < n; i++) out[start[maxLevel - levels[i]]++] = i;
  return out;
}

/** The depression tree as columns indexed by id (entry 0 unused): a hierarchy with the report's spill values. */
export interface DepressionTreeColumns {
  count: number;
  /** id → parent id (0: top level). */
  parent: Int32Array;
  /** id → children, CSR: childStart[id]..childStart[id + 1]. */
  childStart: Int32Array;
  level: Int32Array;
  spillValue: ArrayLike<number>;
  volume: ArrayLike<number>;
}

export interface WaterDisplay {
  sd: SurfaceDisplay;
  layer: SurfaceLayer;
  contours: ReturnType<typeof surfaceContours>;
  /** Decimals of the DEM's values, and a level written with them. */
  dec: number;
  fz: (x: number | null) => string;
  /** Block statistics of the water depth at display resolution, its deepest value, ramp and ramp top. */
  dstats: BlockStats;
  dmax: number;
  depthRamp: Ramp;
  dTop: number;
  depthPng: string;
  /** Simplification tolerance of outlines traced at display resolution. */
  tol: number;
}

/** The DEM in greys with hillshade and contours, and the water depth `depth` (a full-resolution raster) as an overlay. */
export function waterDisplay(g: Grid, zu: string, depth: ArrayLike<number>): WaterDisplay {
  const sd = surfaceDisplay(g);
  const layer = surfaceLayer(sd, { domain: 'terrain', label: `elevation [${zu}]`, underWater: true });
  const contours = surfaceContours(sd, 10);
  const dec = valueDecimals(g.values, finiteRange(sd.stats.min)[0], finiteRange(sd.stats.max)[1]);
  const fz = (x: number | null) => fmtDec(x, dec);
  const f = sd.frame.factor;
  const dstats = blockStats(depth, g.width, g.height, f);
  const [, dmax] = finiteRange(dstats.max);
  const depthRamp = makeRamp(RAMPS.depth.name, RAMPS.depth.lo, RAMPS.depth.hi);
  const dTop = dmax > 0 ? dmax : 1;
  const depthPng = pngDataUri(encodePng(overlay(dstats.mean, depthRamp, 0, dTop, 0.88), sd.frame.dw, sd.frame.dh, 4));
  const kfig = mapGeometry(g.width, g.height, 0).k;
  return { sd, layer, contours, dec, fz, dstats, dmax, depthRamp, dTop, depthPng, tol: Math.max(0.3, 0.6 / (kfig * f)) };
}

/** The hover read-outs: elevation, water depth, and the label raster (`labels` at full, `displayLabels` at display resolution). */
export function waterHover(w: WaterDisplay, zu: string, label: string, prefix: string, blockPrefix: string, labels: Int32Array, displayLabels: Int32Array): HoverLayer[] {
  const hover: HoverLayer[] = [surfaceHover(w.sd, 'elevation', zu)];
  if (w.sd.frame.factor === 1) {
    hover.push({ label: 'water depth', unit: zu, mode: 'exact', b64: packArray(Float32Array.from(w.dstats.mean)) });
    hover.push({ label, unit: '', mode: 'label', prefix, b64: packArray(Int32Array.from(labels)) });
  } else {
    hover.push({ label: 'water depth', unit: zu, mode: 'range', b64: `${packArray(w.dstats.min)},${packArray(w.dstats.max)}` });
    hover.push({ label, unit: '', mode: 'label', prefix: blockPrefix, b64: packArray(displayLabels) });
  }
  return hover;
}

/**
 * The spill-level tree reduced to its largest innermost depressions (by volume, at most
 * `maxLeaves`): the reduction (of record indices, id − 1), each depression's floor where its
 * children merge (by id), and the leaf count. Reads the columns only.
 */
export function spillTree(t: DepressionTreeColumns, maxLeaves: number): { red: ReturnType<typeof reduceSweepTree>; childSpill: Float64Array; leafCount: number } {
  const N = t.count;
  const childSpill = new Float64Array(N + 1).fill(-Infinity);
  for (let id = 1; id <= N; id++) { const p = t.parent[id]; if (p !== 0 && t.spillValue[id] > childSpill[p]) childSpill[p] = t.spillValue[id]; }
  // keep the largest innermost depressions; contract the rest on typed arrays
  const parentIx = new Int32Array(N), kids = new Int32Array(N), leafRank = new Float64Array(N);
  let leafCount = 0;
  for (let i = 0; i < N; i++) {
    const id = i + 1;
    parentIx[i] = t.parent[id] === 0 ? -1 : t.parent[id] - 1;
    kids[i] = t.childStart[id + 1] - t.childStart[id];
    leafRank[i] = kids[i] ? NaN : t.volume[id];
    if (!kids[i]) leafCount++;
  }
  const keepLeaf = new Uint8Array(N);
  for (const i of topIndices(leafRank, maxLeaves)) keepLeaf[i] = 1;
  const red = reduceSweepTree(parentIx, kids, (i) => keepLeaf[i] === 1, childrenFirstOf(t.level.subarray(1, N + 1)));
  return { red, childSpill, leafCount };
}

/** The header: the common rows (without the Euler check when it was not run), then `rows` before the parameters. */
export function waterHeader(
  report: { input: string | null; surface: SurfaceInfo; connectivity: number; boundary: string; euler: EulerInfo | null; sill: string },
  params: string[], commandLine: string, rows: HeaderRow[],
): HeaderRow[] {
  const header = report.euler
    ? commonHeader({ ...report, euler: report.euler }, params.join(', '), commandLine)
    : commonHeader({ ...report, euler: { characteristic: 0, pits: 0, passes: 0, peaks: 0, holds: true, outsidePit: false, simplices: [] } }, params.join(', '), commandLine).filter((h) => h.label !== 'Euler check');
  header.splice(header.findIndex((h) => h.label === 'Parameters'), 0, ...rows);
  return header;
}

/** The units row: `what` names what is in the vertical unit (e.g. 'elevations and depths'). */
export function unitsRow(u: Pick<PondsUnits, 'horizontal' | 'elevation' | 'area' | 'volume' | 'notes'>, what: string): HeaderRow {
  return { label: 'Units', value: `${what} in ${u.elevation}, areas in ${u.area}, volumes in ${u.volume}; horizontal: ${u.horizontal}${u.notes.length ? ` (${u.notes.join(' ')})` : ''}` };
}
