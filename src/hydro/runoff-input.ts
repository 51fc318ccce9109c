/**
 * The water put on the DEM: a runoff depth with its unit ("25mm", "0.1 m", "2in"), and rasters
 * (runoff depth, initial water level) brought onto the DEM's grid — used as they are when they
 * share it, otherwise sampled at the DEM's cell centres (nearest cell), with a warning.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';

/** Length units accepted for runoff depths, in metres. */
export const DEPTH_UNITS: Record<string, number> = {
  mm: 0.001, cm: 0.01, dm: 0.1, m: 1, in: 0.0254, ft: 0.3048,
};

const UNIT_ALIASES: Record<string, string> = {
  millimetre: 'mm', millimetres: 'mm', millimeter: 'mm', millimeters: 'mm',
  centimetre: 'cm', centimetres: 'cm', centimeter: 'cm', centimeters: 'cm',
  metre: 'm', metres: 'm', meter: 'm', meters: 'm',
  inch: 'in', inches: 'in', foot: 'ft', feet: 'ft',
};

/** The canonical name of a length unit (mm, cm, dm, m, in, ft), or null. */
export function depthUnit(u: string): string | null {
  const t = u.trim().toLowerCase();
  if (DEPTH_UNITS[t] !== undefined) return t;
  return UNIT_ALIASES[t] ?? null;
}

const UNIT_LIST = 'mm, cm, m, in or ft';

/** Runoff depths accepted, in metres: above 0, from a nanometre to 10 km. */
export const MIN_DEPTH = 1e-9;
export const MAX_DEPTH = 10000;

/**
 * A runoff depth with its unit, in metres: "25mm", "0.1 m", "2in", "1.5 ft". The unit is required
 * (a bare number could be millimetres or metres). Refuses negative and non-finite depths.
 * @param name the option, for messages (e.g. '--depth')
 */
export function parseDepth(text: string, name = '--depth'): { metres: number; value: number; unit: string } {
  const m = /^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([A-Za-z]+)\s*$/.exec(text);
  if (!m) {
    if (/^\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*$/.test(text)) {
      throw new InputError(`${name} ${text}: give the unit with the number, e.g. ${name} ${text.trim()}mm or ${name} ${text.trim()}m (units: ${UNIT_LIST})`);
    }
    throw new InputError(`${name} '${text}' is not a depth with a unit; write it like 25mm, 0.1m or 2in (units: ${UNIT_LIST})`);
  }
  const unit = depthUnit(m[2]);
  if (unit === null) throw new InputError(`${name} ${text}: unknown unit '${m[2]}'; use ${UNIT_LIST}`);
  const value = Number(m[1]);
  if (!Number.isFinite(value)) throw new InputError(`${name} ${text} is not a finite depth; give a number like 25mm`);
  if (value < 0) throw new InputError(`${name} ${text}: a runoff depth cannot be negative; give a depth ≥ 0 (net runoff after losses)`);
  const metres = value * DEPTH_UNITS[unit];
  if (metres > MAX_DEPTH) throw new InputError(`${name} ${text} is more than ${MAX_DEPTH} m of runoff (deeper than any terrain is high); check the unit`);
  if (metres > 0 && metres < MIN_DEPTH) {
    throw new InputError(`${name} ${text} is below ${MIN_DEPTH} m (a nanometre): water that thin is lost in the float64 resolution of elevations; give 0 for no runoff, or a depth of at least 1e-6mm`);
  }
  return { metres, value, unit };
}

/** A raster brought onto the DEM's grid. */
export interface AlignedRaster {
  /** One value per DEM cell (NaN: nodata, or outside the raster). */
  values: Float32Array | Float64Array;
  /** Sampled at the DEM's cell centres because the grids differ. */
  resampled: boolean;
  /** Valid DEM cells left without a value (nodata in the raster, or outside it). */
  missing: number;
  /** Of those, the cells outside the raster's extent. */
  outside: number;
  /** A sentence for the user when the raster was resampled (or null). */
  warning: string | null;
}

function sameTransform(a: readonly number[], b: readonly number[]): boolean {
  const size = Math.max(Math.hypot(a[1], a[4]), Math.hypot(a[2], a[5]));
  const tol = 1e-6 * size;
  return [0, 3].every((i) => Math.abs(a[i] - b[i]) <= tol) && [1, 2, 4, 5].every((i) => Math.abs(a[i] - b[i]) <= 1e-9 * size);
}

function extentText(g: Grid): string {
  const xs = [g.x(-0.5, -0.5), g.x(g.width - 0.5, -0.5), g.x(-0.5, g.height - 0.5), g.x(g.width - 0.5, g.height - 0.5)];
  const ys = [g.y(-0.5, -0.5), g.y(g.width - 0.5, -0.5), g.y(-0.5, g.height - 0.5), g.y(g.width - 0.5, g.height - 0.5)];
  const f = (v: number) => Number(v.toPrecision(10)).toString();
  return `x ${f(Math.min(...xs))} … ${f(Math.max(...xs))}, y ${f(Math.min(...ys))} … ${f(Math.max(...ys))}`;
}

/**
 * Bring `src` onto the grid of `dem`. Same size and geotransform: used as it is. Otherwise each DEM
 * cell takes the value of the raster cell under its centre (nearest neighbour), NaN outside.
 * Refuses a raster in another CRS (sill does not reproject) and one that covers no DEM cell.
 * @param option  the option that named it ('--depth-raster'), for messages
 * @param source  its file name
 */
export function alignRaster(dem: Grid, src: Grid, option: string, source: string): AlignedRaster {
  const a = dem.crs, b = src.crs;
  if (a && b) {
    const differ = (a.epsg !== undefined && b.epsg !== undefined && a.epsg !== b.epsg) || !!a.geographic !== !!b.geographic;
    if (differ) {
      throw new InputError(`${option} ${source} is in ${b.epsg ? `EPSG:${b.epsg}` : b.name ?? 'another CRS'} but the DEM is in ${a.epsg ? `EPSG:${a.epsg}` : a.name ?? 'another CRS'}; warp it to the DEM's CRS first`);
    }
  }
  const W = dem.width, H = dem.height, n = W * H;
  const dv = dem.values;
  if (src.width === W && src.height === H && sameTransform(dem.transform, src.transform)) {
    let missing = 0;
    for (let i = 0; i < n; i++) { const z = dv[i]; const v = src.values[i]; if (z === z && v !== v) missing++; }
    return { values: src.values, resampled: false, missing, outside: 0, warning: null };
  }
  // inverse of the raster's geotransform: map (x, y) → its (col, row)
  const [x0, dx, rx, y0, ry, dy] = src.transform;
  const det = dx * dy - rx * ry;
  if (!(Math.abs(det) > 0) || !Number.isFinite(det)) throw new InputError(`${option} ${source}: its geotransform gives cells of zero size; fix the file's georeferencing`);
  const out = new Float64Array(n);
  const sw = src.width, sh = src.height, sv = src.values;
  let missing = 0, outside = 0, inside = 0;
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) {
      const i = r * W + c;
      if (dv[i] !== dv[i]) { out[i] = NaN; continue; }
      const X = dem.x(c, r) - x0, Y = dem.y(c, r) - y0;
      const col = Math.floor((dy * X - rx * Y) / det), row = Math.floor((dx * Y - ry * X) / det);
      if (col < 0 || row < 0 || col >= sw || row >= sh) { out[i] = NaN; missing++; outside++; continue; }
      inside++;
      const v = sv[row * sw + col];
      out[i] = v;
      if (v !== v) missing++;
    }
  }
  if (inside === 0) {
    throw new InputError(`${option} ${source} (${extentText(src)}) does not overlap the DEM (${extentText(dem)}); give a raster that covers the DEM, in the DEM's CRS`);
  }
  const cellOf = (g: Grid) => { const [p, q] = g.cellSize(); return `${Number(p.toPrecision(6))} × ${Number(q.toPrecision(6))}`; };
  const warning = `${option} ${source} is not on the DEM's grid (${sw} × ${sh} cells of ${cellOf(src)} against ${W} × ${H} of ${cellOf(dem)}); `
    + `it was resampled to the DEM's cells by nearest neighbour${outside > 0 ? `, and ${outside} DEM cells outside it get none` : ''}`;
  return { values: out, resampled: true, missing, outside, warning };
}

/** Refuse negative or infinite runoff depths (nodata is allowed: no runoff there). */
export function checkDepthRaster(src: Grid, option: string, source: string): void {
  const v = src.values, w = src.width;
  for (let i = 0; i < v.length; i++) {
    const x = v[i];
    if (x >= 0 && x < Infinity) continue;
    if (x !== x) continue;
    const col = i % w, row = (i - col) / w;
    if (x < 0 && Number.isFinite(x)) {
      throw new InputError(`${option} ${source}: cell (col ${col}, row ${row}) holds a negative runoff depth (${x}); runoff depths must be ≥ 0 — give net runoff, with nodata where there is none`);
    }
    throw new InputError(`${option} ${source}: cell (col ${col}, row ${row}) holds ${x}, not a finite runoff depth; fix the file or mark the cell as nodata`);
  }
}
