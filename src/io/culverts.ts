/**
 * Culvert files: lines across embankments through which water passes (culverts, pipes, breach
 * lines), given as GeoJSON (LineString features, or a MultiLineString with one line, in the DEM's
 * CRS: a `crs` member naming another EPSG code is refused; without one the DEM's CRS is assumed,
 * as GIS tools write layers) or as CSV with a header `x1,y1,x2,y2` and optional `invert` and `name`
 * columns. An optional invert elevation per line (property or column `invert`, the DEM's vertical
 * unit). Every vertex must lie on the grid. Bad files get one line naming the file, the line or
 * feature, and how to fix it.
 */
import { readFileSync } from 'node:fs';
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';

export interface CulvertSpec {
  /** The name given (`name` / `id`), or "culvert N" (1-based, in file order). */
  name: string;
  /** Vertices in map coordinates, x and y interleaved (at least two). */
  xy: number[];
  /** Invert elevation, or null to use the lower end's elevation. */
  invert: number | null;
}

/** Most lines one file may hold (a county's culvert inventory is thousands; this guards a mistaken file). */
export const MAX_CULVERTS = 100_000;

export function readCulverts(path: string, grid: Grid): CulvertSpec[] {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new InputError(`--culverts ${path}: cannot be read (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); give a GeoJSON or CSV file of culvert lines`);
  }
  const specs = /^\s*[{[]/.test(text) ? parseGeoJson(text, path, grid) : parseCsv(text, path);
  if (specs.length === 0) throw new InputError(`--culverts ${path}: holds no culvert lines; give LineString features (GeoJSON) or rows x1,y1,x2,y2 (CSV)`);
  if (specs.length > MAX_CULVERTS) throw new InputError(`--culverts ${path}: ${specs.length} lines, more than the ${MAX_CULVERTS} sill accepts in one file; split it`);
  for (const s of specs) checkOnGrid(s, grid, path);
  return specs;
}

function parseGeoJson(text: string, path: string, grid: Grid): CulvertSpec[] {
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (e) {
    throw new InputError(`--culverts ${path}: not valid JSON (${(e as Error).message}); give a GeoJSON FeatureCollection of LineStrings or a CSV file`);
  }
  const fc = doc as { type?: unknown; features?: unknown; crs?: { properties?: { name?: unknown } } };
  if (fc === null || typeof fc !== 'object' || fc.type !== 'FeatureCollection' || !Array.isArray(fc.features)) {
    throw new InputError(`--culverts ${path}: not a GeoJSON FeatureCollection; give one whose features are LineStrings`);
  }
  const crsName = fc.crs?.properties?.name;
  if (crsName !== undefined) {
    const m = /EPSG:(?::)?(\d+)$/i.exec(String(crsName)) ?? /EPSG::(\d+)$/i.exec(String(crsName));
    const epsg = m ? Number(m[1]) : null;
    if (epsg === null || grid.crs?.epsg !== epsg) {
      throw new InputError(`--culverts ${path}: its CRS is ${String(crsName)} but the DEM's is ${grid.crs?.epsg ? `EPSG:${grid.crs.epsg}` : 'not known'}; reproject the culverts into the DEM's CRS`);
    }
  }
  const out: CulvertSpec[] = [];
  (fc.features as unknown[]).forEach((f, k) => {
    const feat = f as { geometry?: { type?: unknown; coordinates?: unknown }; properties?: Record<string, unknown> | null; id?: unknown };
    const where = `feature ${k + 1}`;
    const g = feat?.geometry;
    let coords: unknown = null;
    if (g?.type === 'LineString') coords = g.coordinates;
    else if (g?.type === 'MultiLineString' && Array.isArray(g.coordinates) && g.coordinates.length === 1) coords = g.coordinates[0];
    else throw new InputError(`--culverts ${path}: ${where} is ${g?.type === undefined ? 'without a geometry' : `a ${String(g.type)}`}; each culvert must be a LineString (or a MultiLineString of one line)`);
    if (!Array.isArray(coords) || coords.length < 2) throw new InputError(`--culverts ${path}: ${where} needs at least two positions`);
    const xy: number[] = [];
    for (const p of coords) {
      if (!Array.isArray(p) || !Number.isFinite(p[0]) || !Number.isFinite(p[1])) throw new InputError(`--culverts ${path}: ${where} has a position that is not two finite numbers`);
      xy.push(p[0] as number, p[1] as number);
    }
    const props = feat.properties ?? {};
    const inv = props.invert;
    if (inv !== undefined && inv !== null && !(typeof inv === 'number' && Number.isFinite(inv))) {
      throw new InputError(`--culverts ${path}: ${where} has invert ${JSON.stringify(inv)}; give a number (elevation in the DEM's vertical unit) or leave it out`);
    }
    const name = props.name ?? props.id ?? feat.id;
    out.push({ name: name === undefined || name === null ? `culvert ${k + 1}` : String(name), xy, invert: typeof inv === 'number' ? inv : null });
  });
  return out;
}

function parseCsv(text: string, path: string): CulvertSpec[] {
  const lines = text.split(/\r?\n/);
  const head = lines[0].split(',').map((s) => s.trim().toLowerCase());
  const col = (n: string) => head.indexOf(n);
  const [x1, y1, x2, y2, inv, nm] = ['x1', 'y1', 'x2', 'y2', 'invert', 'name'].map(col);
  if (x1 < 0 || y1 < 0 || x2 < 0 || y2 < 0) {
    throw new InputError(`--culverts ${path}: the CSV header must name x1,y1,x2,y2 (and optionally invert, name); it is '${lines[0].slice(0, 60)}'`);
  }
  const out: CulvertSpec[] = [];
  for (let k = 1; k < lines.length; k++) {
    const line = lines[k].trim();
    if (line === '' || line.startsWith('#')) continue;
    const f = line.split(',').map((s) => s.trim());
    const num = (i: number, what: string): number => {
      const v = Number(f[i]);
      if (f[i] === undefined || f[i] === '' || !Number.isFinite(v)) throw new InputError(`--culverts ${path} line ${k + 1}: ${what} '${f[i] ?? ''}' is not a number`);
      return v;
    };
    const xy = [num(x1, 'x1'), num(y1, 'y1'), num(x2, 'x2'), num(y2, 'y2')];
    const invert = inv >= 0 && f[inv] !== undefined && f[inv] !== '' ? num(inv, 'invert') : null;
    out.push({ name: nm >= 0 && f[nm] ? f[nm] : `culvert ${out.length + 1}`, xy, invert });
  }
  return out;
}

/** Every vertex on the grid; coordinates that look like longitude/latitude on a projected DEM get a hint. */
function checkOnGrid(s: CulvertSpec, grid: Grid, path: string): void {
  for (let k = 0; k < s.xy.length; k += 2) {
    const [c, r] = cellOf(grid, s.xy[k], s.xy[k + 1]);
    if (!(c >= 0 && r >= 0 && c < grid.width && r < grid.height)) {
      const lonlat = !grid.crs?.geographic && Math.abs(s.xy[k]) <= 180 && Math.abs(s.xy[k + 1]) <= 90;
      throw new InputError(`--culverts ${path}: ${s.name} has the point (${s.xy[k]}, ${s.xy[k + 1]}) outside the DEM` +
        (lonlat ? '; it looks like longitude/latitude — give the culverts in the DEM\'s CRS' : '; give coordinates in the DEM\'s CRS, on the grid'));
    }
  }
}

/** Fractional (col, row) of a map point (the inverse of the geotransform). */
export function cellOf(g: Grid, x: number, y: number): [number, number] {
  const [x0, dx, rx, y0, ry, dy] = g.transform;
  const det = dx * dy - rx * ry;
  const u = x - x0, v = y - y0;
  return [Math.floor((u * dy - v * rx) / det), Math.floor((v * dx - u * ry) / det)];
}
