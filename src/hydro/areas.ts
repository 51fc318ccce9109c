/**
 * Cell areas and the units of ponding results.
 *
 * - Projected CRS: every cell is the parallelogram spanned by the two columns of the
 *   geotransform's 2×2 part, so its area is |dx·dy − rx·ry| in CRS units² (rotated and
 *   non-square cells included), converted to m² with the CRS's linear unit.
 * - Geographic CRS (degrees): the cell between latitudes φ1, φ2 and a longitude step Δλ on
 *   the WGS84 ellipsoid has the area Δλ·|S(φ2) − S(φ1)|, with S(φ) the area of the zone from
 *   the equator to φ per radian of longitude (closed form below; the tests compare it with
 *   GeographicLib polygon areas). One value per row.
 * - No CRS: areas in map units² of the transform (cells when the transform is the identity),
 *   unless the user names the horizontal unit.
 * Elevations and depths stay in the DEM's vertical unit; volumes are area × depth with the
 * vertical unit converted to metres by the z factor.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';

/** WGS84 defining constants (semi-major axis in m, flattening). */
export const WGS84_A = 6378137;
export const WGS84_F = 1 / 298.257223563;

const E2 = WGS84_F * (2 - WGS84_F);
const E = Math.sqrt(E2);
const B = WGS84_A * (1 - WGS84_F);

/**
 * Area (m²) of the zone of the WGS84 ellipsoid between the equator and latitude φ (radians),
 * per radian of longitude: (b²/2)·[sinφ/(1 − e² sin²φ) + atanh(e·sinφ)/e].
 */
export function zoneArea(phi: number): number {
  const s = Math.sin(phi);
  return (B * B / 2) * (s / (1 - E2 * s * s) + Math.atanh(E * s) / E);
}

/** Area (m²) of the WGS84 cell between latitudes lat1, lat2 and spanning dLon, all in degrees. */
export function ellipsoidalCellArea(lat1: number, lat2: number, dLon: number): number {
  const d = Math.PI / 180;
  return Math.abs(dLon * d) * Math.abs(zoneArea(lat2 * d) - zoneArea(lat1 * d));
}

/** Horizontal units the user may name for an input without a CRS, and their size in metres. */
export const XY_UNITS: Record<string, number> = { m: 1, ft: 0.3048, 'us-ft': 1200 / 3937, km: 1000 };
/** Vertical units for --z-units and their size in metres. */
export const Z_UNITS: Record<string, number> = { m: 1, ft: 0.3048, 'us-ft': 1200 / 3937, cm: 0.01, mm: 0.001 };

const LINEAR_UNIT_METRES: Record<string, number> = {
  metre: 1, meter: 1, foot: 0.3048, 'US survey foot': 1200 / 3937, kilometre: 1000, 'nautical mile': 1852,
};
const LINEAR_UNIT_TOKEN: Record<string, string> = {
  metre: 'm', meter: 'm', foot: 'ft', 'US survey foot': 'us-ft', kilometre: 'km',
};

export interface UnitOptions {
  /** Horizontal unit of an input without a CRS: 'm', 'ft', 'us-ft', 'km' or 'deg' (longitude/latitude on WGS84). */
  xyUnits?: string;
  /** Vertical unit of the values: a key of Z_UNITS. Default metre (assumed and stated). */
  zUnits?: string;
  /** Factor taking the values to metres (instead of zUnits). */
  zFactor?: number;
}

export interface CellAreas {
  /** Area of each row's cells, in `units.area`; length = grid height. */
  rowArea: Float64Array;
  /** True when every cell has the same area (projected or no CRS). */
  uniform: boolean;
  /** Metres per vertical unit of the values (1 when the unit is unknown and no factor given). */
  zFactor: number;
  units: PondsUnits;
}

export interface PondsUnits {
  /** How horizontal sizes were measured, e.g. 'metre (EPSG:32633)', 'WGS84 ellipsoid (degrees)'. */
  horizontal: string;
  /** Unit of elevations and depths: the DEM's vertical unit. */
  elevation: string;
  /** Unit of areas in the report and tables. */
  area: string;
  /** Unit of volumes in the report and tables. */
  volume: string;
  /** Short tokens for table headers: elevation, area, volume. */
  tokens: { elevation: string; area: string; volume: string };
  /** Sentences stating assumptions (unit taken for granted, areas in cells, …). */
  notes: string[];
}

/**
 * Work out the cell areas and units of a grid. Refuses (InputError) a geographic grid whose
 * latitudes leave ±90° or whose transform is rotated, unit names it does not know, and units
 * that contradict the CRS.
 */
export function cellAreas(grid: Pick<Grid, 'transform' | 'width' | 'height' | 'crs'>, opts: UnitOptions = {}, source = 'input'): CellAreas {
  const notes: string[] = [];
  const [x0, dx, rx, y0, ry, dy] = grid.transform;
  const H = grid.height, W = grid.width;
  const crs = grid.crs;
  const rowArea = new Float64Array(H);

  // vertical
  if (opts.zUnits !== undefined && opts.zFactor !== undefined) {
    throw new InputError('give either --z-units or --z-factor, not both (--z-factor is the number of metres per vertical unit)');
  }
  let zFactor = 1, elevation = 'm', zToken = 'm';
  if (opts.zFactor !== undefined) {
    if (!(Number.isFinite(opts.zFactor) && opts.zFactor > 0)) throw new InputError(`--z-factor must be a positive number of metres per vertical unit, got ${opts.zFactor}`);
    zFactor = opts.zFactor;
    elevation = `DEM unit (× ${zFactor} = m)`;
    zToken = 'demunit';
  } else if (opts.zUnits !== undefined) {
    const f = Z_UNITS[opts.zUnits];
    if (f === undefined) throw new InputError(`--z-units must be one of ${Object.keys(Z_UNITS).join(', ')}, got '${opts.zUnits}'; use --z-factor for any other unit`);
    zFactor = f;
    elevation = opts.zUnits;
    zToken = opts.zUnits.replace('-', '');
  } else {
    notes.push('elevations are taken to be in metres (use --z-units or --z-factor if they are not)');
  }

  const xy = opts.xyUnits;
  if (xy !== undefined && xy !== 'deg' && XY_UNITS[xy] === undefined) {
    throw new InputError(`--xy-units must be one of ${[...Object.keys(XY_UNITS), 'deg'].join(', ')}, got '${xy}'`);
  }
  const geographic = crs ? !!crs.geographic : xy === 'deg';
  const crsName = crs ? (crs.name ?? (crs.epsg ? `EPSG:${crs.epsg}` : 'unnamed CRS')) : null;

  if (crs && xy !== undefined) {
    const stated = crs.geographic ? 'deg' : crs.linearUnit !== undefined ? LINEAR_UNIT_TOKEN[crs.linearUnit] ?? crs.linearUnit : undefined;
    if (stated !== undefined && stated !== xy) {
      throw new InputError(`--xy-units ${xy} contradicts the CRS of ${source} (${crsName}, ${crs.geographic ? 'degrees' : crs.linearUnit}); drop --xy-units`);
    }
    if (crs.geographic !== (xy === 'deg')) {
      throw new InputError(`--xy-units ${xy} contradicts the CRS of ${source} (${crsName} is ${crs.geographic ? 'geographic, in degrees' : 'projected'}); drop --xy-units`);
    }
  }

  let horizontal: string, area: string, areaToken: string, metric: boolean;
  if (geographic) {
    if (crs && crs.linearUnit !== undefined && crs.linearUnit !== 'degree') {
      throw new InputError(`${source}: the geographic CRS uses the angular unit '${crs.linearUnit}'; sill measures areas for degrees only — warp the DEM to degrees or to a projected CRS`);
    }
    if (rx !== 0 || ry !== 0) {
      throw new InputError(`${source}: the geographic grid is rotated (transform ${JSON.stringify(grid.transform)}); warp it to a north-up grid before measuring areas`);
    }
    const latA = y0, latB = y0 + H * dy;
    const lonA = x0, lonB = x0 + W * dx;
    const tol = 1e-9;
    if (Math.min(latA, latB) < -90 - tol || Math.max(latA, latB) > 90 + tol) {
      throw new InputError(`${source}: latitudes run from ${Math.min(latA, latB)} to ${Math.max(latA, latB)}, beyond ±90°, but the CRS is geographic (degrees); the coordinates look projected — check the CRS`);
    }
    if (Math.abs(lonB - lonA) > 360 + tol || Math.max(Math.abs(lonA), Math.abs(lonB)) > 540) {
      throw new InputError(`${source}: longitudes run from ${Math.min(lonA, lonB)} to ${Math.max(lonA, lonB)}, more than a full turn or beyond ±540°, but the CRS is geographic (degrees); the coordinates look projected — check the CRS`);
    }
    for (let r = 0; r < H; r++) {
      const a = Math.max(-90, Math.min(90, y0 + r * dy)), b = Math.max(-90, Math.min(90, y0 + (r + 1) * dy));
      rowArea[r] = ellipsoidalCellArea(a, b, dx);
    }
    horizontal = `degrees${crsName ? ` (${crsName})` : ' (--xy-units deg)'}; cell areas on the WGS84 ellipsoid, per row`;
    area = 'm²'; areaToken = 'm2'; metric = true;
  } else {
    const det = Math.abs(dx * dy - rx * ry);
    if (!(det > 0) || !Number.isFinite(det)) throw new InputError(`${source}: the geotransform ${JSON.stringify(grid.transform)} gives cells of zero or undefined area`);
    let toMetre: number | null = null;
    if (crs) {
      if (crs.linearUnit === undefined) {
        toMetre = xy !== undefined ? XY_UNITS[xy] : 1;
        if (xy === undefined) notes.push(`the CRS (${crsName}) does not name its linear unit; metres are assumed (use --xy-units if it is another unit)`);
        horizontal = `${xy ?? 'm'} (${crsName})`;
      } else {
        const f = LINEAR_UNIT_METRES[crs.linearUnit];
        if (f === undefined) throw new InputError(`${source}: the CRS (${crsName}) uses the linear unit '${crs.linearUnit}', which sill cannot convert to metres; reproject the DEM to a metre-based CRS`);
        toMetre = f;
        horizontal = `${crs.linearUnit} (${crsName})`;
      }
    } else if (xy !== undefined) {
      toMetre = XY_UNITS[xy];
      horizontal = `${xy} (no CRS; --xy-units)`;
    } else {
      horizontal = 'map units (no CRS)';
      const identity = dx === 1 && Math.abs(dy) === 1 && rx === 0 && ry === 0;
      notes.push(identity
        ? 'the input has no CRS and unit cells: areas are counted in cells and volumes in cells × vertical unit (use --xy-units to name the cell size unit)'
        : 'the input has no CRS: areas are in squared map units of its coordinates and volumes in map units² × vertical unit (use --xy-units to name the unit)');
    }
    rowArea.fill(toMetre === null ? det : det * toMetre * toMetre);
    metric = toMetre !== null;
    area = metric ? 'm²' : 'map unit²';
    areaToken = metric ? 'm2' : 'mapunit2';
  }
  const volume = metric ? 'm³' : `map unit² × m`;
  const volumeToken = metric ? 'm3' : 'mapunit2_m';
  return {
    rowArea,
    uniform: !geographic,
    zFactor,
    units: { horizontal, elevation, area, volume, tokens: { elevation: zToken, area: areaToken, volume: volumeToken }, notes },
  };
}
