/**
 * The GeoPackage writer (src/io/gpkg.ts), read from outside: GDAL's OGR and `ogr2ogr` (what a
 * GIS sees: layers, counts, geometry types, CRS, extent, the features themselves) and the system
 * SQLite through Python (the standard's rules that SQL can check: OGC 12-128r18 Requirements 1, 2,
 * 6, 7, 10–13 and the gpkg_rtree_index extension).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { existsSync, mkdtempSync, readFileSync } from 'node:fs';
import fc from 'fast-check';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { GeoPackageWriter, epsgWkt, srsFor, GPKG_APPLICATION_ID, GPKG_USER_VERSION, type GpkgLayerSpec, type GpkgLayers } from '../../src/io/gpkg.js';
import { openGeoPackage, gpkgWorkerScript } from '../../src/io/gpkg-thread.js';
import type { Crs } from '../../src/surface/grid.js';
import { PYTHON, runs, skipNote } from '../prereq.js';
import { readGpkg, ogr2ogrLayer } from './gpkg-gdal.js';

const hasGdal = runs('gdal');
let dir: string;
beforeAll(() => { dir = mkdtempSync(join(tmpdir(), 'sill-gpkg-')); });

const POINTS: GpkgLayerSpec = { name: 'pits', geometry: 'POINT', columns: [['name', 'TEXT'], ['value', 'REAL'], ['n', 'INTEGER'], ['ok', 'BOOLEAN']] };
const AREAS: GpkgLayerSpec = { name: 'wet-areas', geometry: 'MULTIPOLYGON', columns: [['label', 'TEXT'], ['area', 'REAL']] };
const LINES: GpkgLayerSpec = { name: 'paths', geometry: 'LINESTRING', columns: [['id', 'TEXT']] };

const square = (x: number, y: number, s: number): Float64Array => Float64Array.from([x, y, x + s, y, x + s, y + s, x, y + s, x, y]);
/** A ring's vertices in the opposite order (a hole). */
const reversed = (r: Float64Array): Float64Array => Float64Array.from({ length: r.length }, (_, k) => r[r.length - 2 - 2 * (k >> 1) + (k & 1)]);
const pts: [number, number, string, number, number, boolean][] = [
  [512000.5, 5874000.25, 'a', 1.5, 3, true], [512010, 5873990, 'b "quoted", comma', NaN, -7, false], [511990.125, 5874020, 'ü', -0.1, 0, true],
];
const polys: [number, Float64Array[][] | null, string, number][] = [
  [1, [[square(512000, 5873900, 50), reversed(square(512010, 5873910, 10))]], 'with a hole', 2400],
  [2, [[square(511900, 5873800, 20)], [square(512100, 5874100, 5)]], 'two parts', 425],
  [3, null, 'left out', NaN],
  [4, [], 'empty', 0],
];
const lines: [number, Float64Array][] = [[1, Float64Array.from([0, 0, 1, 1, 2, 0.5])], [2, Float64Array.from([-1, -1, 3, 4])]];

function writeSample(path: string, crs: Crs | null): void {
  const gp = new GeoPackageWriter(path, crs);
  const p = gp.layer(POINTS);
  pts.forEach(([x, y, name, v, n, ok], i) => p.point(i + 1, x, y, [name, v, n, ok]));
  const a = gp.layer(AREAS);
  for (const [fid, g, label, area] of polys) a.polygons(fid, g, [label, area]);
  const l = gp.layer(LINES);
  for (const [fid, xy] of lines) l.line(fid, xy, [`path ${fid}`]);
  gp.finish();
}

/** Flat rings as GeoJSON coordinates. */
const ring = (r: Float64Array): number[][] => Array.from({ length: r.length / 2 }, (_, k) => [r[2 * k], r[2 * k + 1]]);

describe('GeoPackage writer', () => {
  it.skipIf(!hasGdal)(`a file with point, polygon and line layers: GDAL reads layers, counts, types, CRS and extents; SQL checks the standard's rules${skipNote('gdal')}`, () => {
    const path = join(dir, 'sample.gpkg');
    writeSample(path, { epsg: 32633, name: 'WGS 84 / UTM zone 33N' });
    const { layers, sql } = readGpkg(path);
    // Source: GDAL's OGR (python3-gdal)
    expect(layers.map((l) => l.name)).toEqual(['pits', 'wet-areas', 'paths']);
    expect(layers.map((l) => l.features)).toEqual([3, 4, 2]);
    expect(layers.map((l) => l.geometryType)).toEqual(['Point', 'Multi Polygon', 'Line String']);
    expect(layers.map((l) => l.epsg)).toEqual([32633, 32633, 32633]);
    expect(layers[0].fields).toEqual({ name: 'String', value: 'Real', n: 'Integer64', ok: 'Integer(Boolean)' });
    expect(layers[0].extent).toEqual([511990.125, 512010, 5873990, 5874020]);
    expect(layers[1].extent).toEqual([511900, 512105, 5873800, 5874105]);
    expect(layers[2].extent).toEqual([-1, 3, -1, 4]);
    expect(layers.map((l) => l.withGeometry)).toEqual([3, 2, 2]);
    // Source: OGC 12-128r18 checked by SQL through Python's sqlite3 (the system SQLite)
    expect(sql.header).toBe('SQLite format 3\u0000'); // Requirement 1
    expect(sql.applicationId).toBe(GPKG_APPLICATION_ID); // Requirement 2: 'GPKG'
    expect(sql.applicationId).toBe(Buffer.from('GPKG').readUInt32BE(0));
    expect(sql.userVersion).toBe(GPKG_USER_VERSION);
    expect(sql.integrity).toBe('ok'); // Requirement 6
    expect(sql.foreignKeys).toBe(0); // Requirement 7
    expect(sql.tables).toEqual(expect.arrayContaining(['gpkg_spatial_ref_sys', 'gpkg_contents', 'gpkg_geometry_columns', 'gpkg_extensions', 'pits', 'wet-areas', 'paths', 'rtree_pits_geom', 'rtree_wet-areas_geom', 'rtree_paths_geom']));
    // Requirement 11: WGS 84, undefined Cartesian, undefined geographic; Requirement 12: the layers' own
    const srs = Object.fromEntries(sql.srs.map((r) => [r.srs_id, r]));
    expect(Object.keys(srs).map(Number).sort((a, b) => a - b)).toEqual([-1, 0, 4326, 32633]);
    expect(srs[-1]).toMatchObject({ organization: 'NONE', organization_coordsys_id: -1, definition: 'undefined' });
    expect(srs[0]).toMatchObject({ organization: 'NONE', organization_coordsys_id: 0, definition: 'undefined' });
    expect(srs[4326]).toMatchObject({ organization: 'EPSG', organization_coordsys_id: 4326 });
    expect(srs[32633]).toMatchObject({ organization: 'EPSG', organization_coordsys_id: 32633, srs_name: 'WGS 84 / UTM zone 33N' });
    expect(srs[32633].definition).toMatch(/^PROJCS\["WGS 84 \/ UTM zone 33N"/);
    // Requirement 13 and the features clause: contents rows with extents, geometry columns
    expect(sql.contents.map((c) => [c.table_name, c.data_type, c.identifier, c.srs_id])).toEqual([['paths', 'features', 'paths', 32633], ['pits', 'features', 'pits', 32633], ['wet-areas', 'features', 'wet-areas', 32633]]);
    const pits = sql.contents.find((c) => c.table_name === 'pits')!;
    expect([pits.min_x, pits.min_y, pits.max_x, pits.max_y]).toEqual([511990.125, 5873990, 512010, 5874020]);
    expect(sql.geometryColumns.map((g) => [g.table_name, g.column_name, g.geometry_type_name, g.srs_id, g.z, g.m])).toEqual([
      ['paths', 'geom', 'LINESTRING', 32633, 0, 0], ['pits', 'geom', 'POINT', 32633, 0, 0], ['wet-areas', 'geom', 'MULTIPOLYGON', 32633, 0, 0],
    ]);
    // the gpkg_rtree_index extension: a row per layer, one index entry per non-empty geometry, the six triggers
    expect(sql.extensions).toEqual(['paths', 'pits', 'wet-areas'].map((t) => ({ table_name: t, column_name: 'geom', extension_name: 'gpkg_rtree_index', scope: 'write-only' })));
    expect(sql.rtree).toEqual({ pits: 3, 'wet-areas': 2, paths: 2 });
    expect(sql.rtreeCovers).toEqual(sql.rtree);
    for (const t of ['pits', 'wet-areas', 'paths']) {
      expect(sql.triggers[t]).toEqual(['delete', 'insert', 'update1', 'update2', 'update3', 'update4'].map((s) => `rtree_${t}_geom_${s}`));
    }
  });

  it.skipIf(!hasGdal)(`ogr2ogr converts each layer to GeoJSON with the coordinates and values written${skipNote('gdal')}`, () => {
    const path = join(dir, 'features.gpkg');
    writeSample(path, { epsg: 32633 });
    // Source: GDAL's ogr2ogr -f GeoJSON
    const p = ogr2ogrLayer(path, 'pits');
    expect(p.map((f) => f.id)).toEqual([1, 2, 3]);
    expect(p.map((f) => f.geometry)).toEqual(pts.map(([x, y]) => ({ type: 'Point', coordinates: [x, y] })));
    expect(p.map((f) => f.properties)).toEqual(pts.map(([, , name, v, n, ok]) => ({ name, value: Number.isNaN(v) ? null : v, n, ok })));
    const a = ogr2ogrLayer(path, 'wet-areas');
    expect(a.map((f) => f.id)).toEqual([1, 2, 3, 4]);
    expect(a[0].geometry).toEqual({ type: 'MultiPolygon', coordinates: [polys[0][1]![0].map(ring)] });
    expect(a[1].geometry).toEqual({ type: 'MultiPolygon', coordinates: polys[1][1]!.map((q) => q.map(ring)) });
    expect(a[2].geometry).toBeNull();
    expect(a[3].geometry).toEqual({ type: 'MultiPolygon', coordinates: [] });
    expect(a.map((f) => f.properties)).toEqual(polys.map(([, , label, area]) => ({ label, area: Number.isNaN(area) ? null : area })));
    const l = ogr2ogrLayer(path, 'paths');
    expect(l.map((f) => f.geometry)).toEqual(lines.map(([, xy]) => ({ type: 'LineString', coordinates: ring(xy) })));
  });

  it.skipIf(!hasGdal)(`the CRS rows: none (undefined Cartesian, −1), degrees without a code (undefined geographic, 0), EPSG:4326 (the required row), a code sill has no parameters for (resolved by GDAL from the code)${skipNote('gdal')}`, () => {
    const cases: [string, Crs | null, number, number | null][] = [
      ['none', null, -1, null], ['degrees', { geographic: true }, 0, null], ['wgs84', { epsg: 4326, geographic: true }, 4326, 4326], ['gk3', { epsg: 31467, name: 'DHDN / 3-degree Gauss-Kruger zone 3' }, 31467, 31467],
    ];
    for (const [name, crs, srsId, epsg] of cases) {
      const path = join(dir, `crs-${name}.gpkg`);
      writeSample(path, crs);
      const { layers, sql } = readGpkg(path);
      expect(sql.contents.every((c) => c.srs_id === srsId), name).toBe(true);
      expect(sql.geometryColumns.every((c) => c.srs_id === srsId), name).toBe(true);
      expect(sql.srs.map((r) => r.srs_id).sort((a, b) => a - b), name).toEqual([...new Set([-1, 0, 4326, srsId])].sort((a, b) => a - b));
      // Source: GDAL's OGR reading the layer's SRS
      expect(layers[0].epsg, name).toBe(epsg);
      if (srsId < 0) expect(layers[0].srsWkt, name).toMatch(/^LOCAL_CS\["Undefined Cartesian SRS"/);
      if (srsId === 0) expect(layers[0].srsWkt, name).toMatch(/Undefined geographic SRS/);
    }
    expect(srsFor({ epsg: 31467 }).definition).toBe('undefined');
  });

  it.skipIf(!hasGdal)(`the WKT sill writes for the EPSG codes it knows is the CRS GDAL builds from the code${skipNote('gdal')}`, () => {
    const codes = [4326, 32601, 32633, 32660, 32718, 25832, 26910, 3857, 3035, 2154];
    const script = String.raw`
import json, sys
from osgeo import osr
out = {}
for code, wkt in json.loads(sys.stdin.read()):
    a = osr.SpatialReference(); a.ImportFromWkt(wkt)
    b = osr.SpatialReference(); b.ImportFromEPSG(code)
    out[code] = bool(a.IsSame(b, ['IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES', 'CRITERION=EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS']))
print(json.dumps(out))
`;
    const r = spawnSync(PYTHON, ['-c', script], { input: JSON.stringify(codes.map((c) => [c, epsgWkt(c)])), encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    // Source: GDAL/PROJ's EPSG database (osr.ImportFromEPSG), compared by OSRIsSame
    expect(JSON.parse(r.stdout)).toEqual(Object.fromEntries(codes.map((c) => [c, true])));
    expect(epsgWkt(31467)).toBeNull();
  });

  it.skipIf(!hasGdal)(`more rows than one transaction holds (commits every 20 000): all of them in the file and its index${skipNote('gdal')}`, () => {
    const path = join(dir, 'many.gpkg');
    const gp = new GeoPackageWriter(path, null);
    const l = gp.layer({ name: 'many', geometry: 'POINT', columns: [['k', 'INTEGER']] });
    const n = 45_001;
    for (let k = 0; k < n; k++) l.point(k + 1, k % 300, Math.floor(k / 300), [k]);
    gp.finish();
    const { layers, sql } = readGpkg(path);
    expect(layers[0].features).toBe(n);
    expect(sql.rtree.many).toBe(n);
    expect(sql.rtreeCovers.many).toBe(n);
    expect(sql.integrity).toBe('ok');
    expect(layers[0].extent).toEqual([0, 299, 0, 150]);
  });

  it('abort() closes and deletes the file, also after a failure inside a layer', () => {
    const path = join(dir, 'aborted.gpkg');
    const gp = new GeoPackageWriter(path, null);
    const l = gp.layer(POINTS);
    l.point(1, 0, 0, ['a', 1, 1, true]);
    expect(() => l.point(1, 0, 0, ['again', 1, 1, true])).toThrow(/UNIQUE|PRIMARY KEY/);
    expect(existsSync(path)).toBe(true);
    gp.abort();
    expect(existsSync(path)).toBe(false);
    const gp2 = new GeoPackageWriter(path, null);
    gp2.layer(POINTS);
    expect(() => gp2.layer(POINTS)).toThrow(/already exists/);
    gp2.abort();
    expect(existsSync(path)).toBe(false);
  });
});

describe('GeoPackage written on a worker thread (src/io/gpkg-thread.ts)', () => {
  const when = new Date('2026-01-02T03:04:05.678Z');
  /** The sample's layers (and texts beyond the short-ASCII path) through either writer. */
  async function sample(path: string, thread: boolean, extra: (gp: GpkgLayers) => void = () => undefined): Promise<void> {
    const gp = openGeoPackage(path, { epsg: 32633 }, { lastChange: when, thread });
    const p = gp.layer(POINTS);
    pts.forEach(([x, y, name, v, n, ok], i) => p.point(i + 1, x, y, [name, v, n, ok]));
    p.point(9, 1, 2, ['a text longer than sixty-four characters, to take the general UTF-8 path — ✓', -0, 2 ** 53 + 2, false]);
    const a = gp.layer(AREAS);
    for (const [fid, g, label, area] of polys) a.polygons(fid, g, [label, area]);
    const l = gp.layer(LINES);
    for (const [fid, xy] of lines) l.line(fid, xy, [`path ${fid}`]);
    l.line(7, null, [null]);
    extra(gp);
    await gp.finish();
  }

  it('the worker script is built (a missing build must fail here, not fall back to one thread)', () => {
    expect(gpkgWorkerScript()).not.toBeNull();
  });

  it('the same bytes as the single-thread writer: point, polygon and line layers, and more rows than one transaction and one batch hold', async () => {
    const many = (gp: GpkgLayers) => {
      const m = gp.layer({ name: 'many', geometry: 'MULTILINESTRING', columns: [['k', 'INTEGER'], ['t', 'TEXT']] });
      const xy = Float64Array.from({ length: 40 }, (_, k) => k * 0.5), starts = Int32Array.from([0, 5, 12]);
      for (let k = 0; k < 20_005; k++) m.lines(k + 1, xy, starts, k % 4, 20, [k, k % 3 ? `row ${k}` : null]);
    };
    await sample(join(dir, 'one.gpkg'), false, many);
    await sample(join(dir, 'two.gpkg'), true, many);
    expect(readFileSync(join(dir, 'two.gpkg')).equals(readFileSync(join(dir, 'one.gpkg')))).toBe(true);
  });

  it('property: any rows of numbers (NaN, ±0, ±Infinity, subnormals, integers beyond 2^53), texts and booleans give the same bytes on either thread', async () => {
    const value = fc.oneof(fc.double(), fc.string({ unit: 'binary', maxLength: 80 }), fc.boolean(), fc.constant(null), fc.integer());
    const row = fc.tuple(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.double({ noNaN: true, noDefaultInfinity: true }), fc.array(value, { minLength: 3, maxLength: 3 }));
    let run = 0;
    await fc.assert(fc.asyncProperty(fc.array(row, { maxLength: 40 }), async (rows) => {
      const spec: GpkgLayerSpec = { name: 'rows', geometry: 'POINT', columns: [['a', 'REAL'], ['b', 'TEXT'], ['c', 'INTEGER']] };
      const paths = [join(dir, `p${run}-1.gpkg`), join(dir, `p${run++}-2.gpkg`)];
      for (const [i, thread] of [false, true].entries()) {
        const gp = openGeoPackage(paths[i], null, { lastChange: when, thread });
        const l = gp.layer(spec);
        rows.forEach(([x, y, v], k) => l.point(k + 1, x, y, v));
        await gp.finish();
      }
      expect(readFileSync(paths[1]).equals(readFileSync(paths[0]))).toBe(true);
    }), { numRuns: 12 });
  });

  it('a failure on the thread (a repeated fid) is thrown by finish() with SQLite\'s message, and the file is gone; abort() deletes the file', async () => {
    const path = join(dir, 'failed.gpkg');
    const gp = openGeoPackage(path, null, { thread: true });
    const l = gp.layer(POINTS);
    l.point(1, 0, 0, ['a', 1, 1, true]);
    l.point(1, 0, 0, ['again', 1, 1, true]);
    await expect(gp.finish()).rejects.toThrow(/UNIQUE|PRIMARY KEY/);
    expect(existsSync(path)).toBe(false);
    const gp2 = openGeoPackage(path, null, { thread: true });
    gp2.layer(POINTS).point(1, 0, 0, ['a', 1, 1, true]);
    await gp2.abort();
    expect(existsSync(path)).toBe(false);
  });
});
