/**
 * The surface as the report shows it, shared by every command's adapter: the display frame and
 * block statistics, the coloured (and, for terrain, hillshaded) raster layer, contour lines,
 * the pointer read-out data, plot positions of features, and the header rows every report has.
 */
import { deflateRawSync } from 'node:zlib';
import type { Grid, GeoTransform } from '../../surface/grid.js';
import type { Mesh } from '../../surface/mesh.js';
import { makeFrame, blockStats, rasterizeTriangles, mapToPlot, finiteRange, northUp, type Frame, type BlockStats } from '../figures/raster.js';
import { hillshade, autoZFactor } from '../figures/hillshade.js';
import { makeRamp, type Ramp } from '../figures/colour.js';
import { colourise } from '../figures/layers.js';
import { encodePng, pngDataUri } from '../figures/png.js';
import { contourLines, type ContourSet } from '../figures/contours.js';
import { fmtNum } from '../figures/scale.js';
import { RAMPS } from '../figures/theme.js';
import type { RasterLayer, LegendRamp } from '../figures/map.js';
import type { HeaderRow, HoverLayer } from './model.js';
import type { SurfaceInfo, EulerInfo } from '../../report/common.js';

/** Longest side of the display raster (larger grids are shown in blocks). */
export const MAX_DISPLAY_SIDE = 1000;
/** Longest side of the raster a scattered-sample surface is interpolated onto for display. */
export const MESH_DISPLAY_SIDE = 600;

export interface SurfaceDisplay {
  frame: Frame;
  stats: BlockStats;
  /** The display grid is the data grid (not an interpolated mesh). */
  isGrid: boolean;
  /** Values of the display grid at full resolution (the data grid, or the interpolated mesh raster). */
  values: ArrayLike<number>;
  transform: GeoTransform;
  xyUnit: string;
  geographic: boolean;
  /** Metres per horizontal unit (for hillshading; 1 when the unit is unknown: taken to be that of the values). */
  metresPerUnit: number | null;
}

export function xyUnitOf(crs: { geographic?: boolean; linearUnit?: string } | null | undefined): string {
  if (!crs) return '';
  if (crs.geographic) return '°';
  const u = crs.linearUnit;
  if (!u) return '';
  if (/^met(re|er)s?$/i.test(u)) return 'm';
  if (/foot|feet/i.test(u)) return 'ft';
  return u;
}

export function surfaceDisplay(surface: Grid | Mesh, maxSide = MAX_DISPLAY_SIDE): SurfaceDisplay {
  let width: number, height: number, values: ArrayLike<number>, transform: GeoTransform;
  if (surface.kind === 'grid') {
    ({ width, height, values, transform } = surface);
  } else {
    const r = rasterizeTriangles(surface.x, surface.y, surface.values, surface.triangles, Math.min(maxSide, MESH_DISPLAY_SIDE));
    ({ width, height, values, transform } = r);
  }
  const frame = makeFrame(width, height, transform, maxSide);
  const stats = blockStats(values, width, height, frame.factor);
  const crs = surface.crs;
  const xyUnit = xyUnitOf(crs);
  let metresPerUnit: number | null = null;
  if (crs?.geographic) {
    const lat = transform[3] + (height / 2) * transform[5];
    metresPerUnit = 111_320 * Math.cos((lat * Math.PI) / 180);
  } else if (xyUnit === 'ft') metresPerUnit = 0.3048;
  else metresPerUnit = 1; // metres, or an unknown unit taken to be that of the values
  return { frame, stats, isGrid: surface.kind === 'grid', values, transform, xyUnit, geographic: !!crs?.geographic, metresPerUnit };
}

/** Plot coordinates of a located feature: cell centre on grids, the inverse transform of (x, y) otherwise. */
export function plotOf(sd: SurfaceDisplay, loc: { col: number | null; row: number | null; x: number; y: number }): [number, number] {
  if (sd.isGrid && loc.col !== null && loc.row !== null) return [loc.col + 0.5, loc.row + 0.5];
  return mapToPlot(sd.transform, loc.x, loc.y);
}

export interface SurfaceLayer {
  layer: RasterLayer;
  legend: LegendRamp;
  ramp: Ramp;
  lo: number;
  hi: number;
  notes: string[];
}

/**
 * The surface coloured by its value. Terrain gets analytic hillshading (sun from the north-west at
 * 45°, vertical exaggeration chosen so that the steeper slopes read; stated in the notes).
 */
export function surfaceLayer(sd: SurfaceDisplay, opts: { domain: 'terrain' | 'energy'; label: string; underWater?: boolean }): SurfaceLayer {
  const { frame, stats } = sd;
  const [lo, hi] = finiteRange(stats.mean);
  const rs = opts.domain === 'energy' ? RAMPS.energy : opts.underWater ? RAMPS.terrainUnderWater : RAMPS.terrain;
  const ramp = makeRamp(rs.name, rs.lo, rs.hi);
  const notes: string[] = [];
  let shade: Float32Array | null = null;
  if (opts.domain === 'terrain' && sd.metresPerUnit !== null && northUp(sd.transform)) {
    const dx = Math.abs(sd.transform[1]) * frame.factor * sd.metresPerUnit;
    const dy = Math.abs(sd.transform[5]) * frame.factor * (sd.geographic ? 110_574 : sd.metresPerUnit);
    const zf = autoZFactor(stats.mean, frame.dw, frame.dh, dx, dy);
    shade = hillshade(stats.mean, frame.dw, frame.dh, dx, dy, { azimuth: 315, altitude: 45, zFactor: zf, rowsSouth: sd.transform[5] < 0 });
    notes.push(`hillshade: sun azimuth 315°, altitude 45°, vertical exaggeration ×${fmtNum(zf, 2)}`);
  }
  const rgba = colourise(stats.mean, ramp, lo, hi, { shade, shadeStrength: opts.underWater ? 1.1 : 0.9 });
  const href = pngDataUri(encodePng(rgba, frame.dw, frame.dh, 4));
  return {
    layer: { id: 'surface', label: opts.label, href, visible: true },
    legend: { label: opts.label, ramp, lo, hi },
    ramp, lo, hi, notes,
  };
}

export function surfaceContours(sd: SurfaceDisplay, target = 12): ContourSet {
  return contourLines(sd.stats.mean, sd.frame.dw, sd.frame.dh, sd.frame.factor, target);
}

/**
 * Decimals worth printing for values of this surface: float32 data carry about 7 significant
 * digits, float64 about 15 (12 shown), counted at the largest magnitude present. Differences of
 * values (persistence, depth) are printed with the same decimals, so no storage noise shows.
 */
export function valueDecimals(values: ArrayLike<number>, lo: number, hi: number): number {
  const sig = values instanceof Float32Array ? 7 : 12;
  const mag = Math.max(Math.abs(lo), Math.abs(hi));
  const int = mag >= 1 ? Math.floor(Math.log10(mag)) + 1 : 0;
  return Math.max(0, Math.min(12, sig - int));
}

/** A number rounded to `decimals` places, trailing zeros dropped, with a true minus sign. */
export function fmtDec(x: number | null | undefined, decimals: number): string {
  if (x === null || x === undefined) return '—';
  if (x === Infinity) return '∞';
  if (x === -Infinity) return '−∞';
  if (!Number.isFinite(x)) return '—';
  const r = Number(x.toFixed(decimals));
  return (Object.is(r, -0) ? '0' : String(r)).replace('-', '−');
}

/** Compress a typed array for the page (deflate-raw, base64); the page inflates it with DecompressionStream. */
export function packArray(a: Float32Array | Int32Array): string {
  // float bits compress little whatever the effort: the fastest level loses almost nothing
  return deflateRawSync(new Uint8Array(a.buffer, a.byteOffset, a.byteLength), { level: 1 }).toString('base64');
}

/** Pointer read-out data for the surface: exact cell values at full resolution, or each block's range. */
export function surfaceHover(sd: SurfaceDisplay, label: string, unit: string): HoverLayer {
  if (sd.frame.factor === 1) return { label, unit, mode: 'exact', b64: packArray(Float32Array.from(sd.stats.mean)) };
  return { label, unit, mode: 'range', b64: `${packArray(sd.stats.min)},${packArray(sd.stats.max)}` };
}

export function displayNotes(sd: SurfaceDisplay, surface: Grid | Mesh, contours: ContourSet | null, valueUnit: string): string[] {
  const notes: string[] = [];
  if (!sd.isGrid) notes.push(`scattered samples shown interpolated linearly on their Delaunay triangles (${sd.frame.width} × ${sd.frame.height} display cells)`);
  else if (sd.frame.factor > 1) notes.push(`display: blocks of ${sd.frame.factor} × ${sd.frame.factor} cells (${sd.frame.dw} × ${sd.frame.dh}), coloured by their mean; features at full resolution`);
  else notes.push(`display: one pixel per cell (${surface.kind === 'grid' ? `${surface.width} × ${surface.height}` : ''})`);
  if (contours && contours.lines.length) notes.push(`contours every ${fmtNum(contours.levels.step)}${valueUnit ? ' ' + valueUnit : ''} (thicker every ${fmtNum(contours.levels.step * contours.levels.indexEvery)})`);
  else if (contours?.omitted) notes.push(`contours left out: even ${contours.levels.levels.length} level${contours.levels.levels.length === 1 ? '' : 's'} would need ${contours.omitted.points} vertices at display resolution (cap ${contours.omitted.cap}); the surface is rougher than the display`);
  return notes;
}

const CONNECTIVITY_TEXT: Record<string, string> = {
  '8': '8 (sublevel sets 8-connected, superlevel sets 4-connected)',
  '6': '6 (triangulated: neighbours (±1,0), (0,±1), (+1,+1), (−1,−1))',
  '4': '4 (sublevel sets 4-connected, superlevel sets 8-connected)',
};

const BOUNDARY_TEXT: Record<string, string> = {
  open: 'open (water leaves at the edge and at nodata: one outside vertex at −∞)',
  closed: 'closed (the edge is a wall)',
  periodic: 'periodic (both axes wrap: a torus)',
  'periodic-x': 'periodic-x (columns wrap: a cylinder)',
  'periodic-y': 'periodic-y (rows wrap: a cylinder)',
};

export interface CommonHeaderInput {
  input: string | null;
  surface: SurfaceInfo;
  connectivity: number | null;
  boundary: string;
  euler: EulerInfo;
  sill: string;
}

/** Header rows every report has: input, size, CRS, connectivity, boundary, Euler check, version. */
export function commonHeader(r: CommonHeaderInput, parameters: string, commandLine: string): HeaderRow[] {
  const s = r.surface;
  const size = s.kind === 'grid'
    ? `${s.width} × ${s.height} cells (${s.validCells} with values)${s.cellSize ? `, cell ${fmtNum(s.cellSize[0])} × ${fmtNum(s.cellSize[1])}` : ''}`
    : `${s.points} scattered samples, Delaunay triangulation`;
  const crs = s.crs ? `${s.crs.name ?? (s.crs.epsg ? `EPSG:${s.crs.epsg}` : 'unnamed')}${s.crs.geographic ? ' (longitude/latitude)' : ''}` : 'none (coordinates as given)';
  const e = r.euler;
  const sum = e.pits - e.passes + e.peaks;
  const sx = e.simplices.map((c, i) => (i === 0 ? String(c) : `${i % 2 ? '−' : '+'} ${c}`)).join(' ');
  const euler = `pits − passes + peaks = ${e.pits} − ${e.passes} + ${e.peaks} = ${sum}${e.outsidePit ? ' (the outside counted as a pit)' : ''}; `
    + `χ = ${e.characteristic} by counting simplices (${sx})`;
  return [
    { label: 'Input', value: r.input ?? '(in memory)', mono: true },
    { label: 'Size', value: size },
    { label: 'CRS', value: crs },
    { label: 'Connectivity', value: r.connectivity === null ? 'Delaunay triangulation' : CONNECTIVITY_TEXT[String(r.connectivity)] ?? String(r.connectivity) },
    { label: 'Boundary', value: BOUNDARY_TEXT[r.boundary] ?? r.boundary },
    { label: 'Euler check', value: euler, status: e.holds ? 'ok' : 'fail' },
    { label: 'Parameters', value: parameters },
    { label: 'Command', value: commandLine, mono: true },
    { label: 'sill version', value: r.sill },
  ];
}

/** What the pointer read-out under the map shows (for the page's notes). */
export function readoutNote(sd: SurfaceDisplay): string {
  if (!sd.isGrid) return 'The read-out under the map gives the interpolated value under the pointer.';
  return sd.frame.factor > 1
    ? `The read-out under the map gives the range of the ${sd.frame.factor} × ${sd.frame.factor} cells under the pointer; tooltips of features give their full-resolution values.`
    : 'The read-out under the map gives the exact value of the cell under the pointer.';
}

/** The screening caution every terrain report carries. */
export const TERRAIN_CAUTION = [
  'These results are screening information. They do not replace hydraulic modelling, surveyed data or a licensed engineer\'s judgement.',
  'Local codes and floodplain rules govern any decision.',
];

/** Quote a command-line argument for a POSIX shell when needed. */
export function shellQuote(s: string): string {
  return /^[\w@%+=:,./-]+$/.test(s) ? s : `'${s.replace(/'/g, `'\\''`)}'`;
}
