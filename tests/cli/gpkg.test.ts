/**
 * results.gpkg of every command with vector outputs (the built binary): one layer per vector
 * output, read back from outside — GDAL's OGR (layer names, counts, geometry types, CRS, extent),
 * GDAL's `ogr2ogr -f GeoJSON` (each feature's geometry and values equal sill's own GeoJSON or
 * CSV), the system SQLite through Python (integrity, application_id, user_version, the R-tree's
 * rows). --no-gpkg leaves it out; a failed run leaves no results.gpkg behind.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir } from './run.js';
import { runs, skipNote } from '../prereq.js';
import { larkmoorDem, dihedralScan } from '../../src/demo/generate.js';
import { writeGeoTiff } from '../../src/io/index.js';
import { readGeoTiff } from '../../src/io/index.js';
import { OutputFolder } from '../../src/io/outdir.js';
import { pondsReport } from '../../src/report/ponds.js';
import { writePondsFiles, PONDS_FILES } from '../../src/cli/ponds.js';
import { GPKG_APPLICATION_ID, GPKG_USER_VERSION } from '../../src/io/gpkg.js';
import { readGpkg, ogr2ogrLayer, asMultiPolygon, type GeoJsonFeature, type GpkgReading } from '../io/gpkg-gdal.js';

const hasGdal = runs('gdal');
const note = skipNote('gdal');
let dir: string;
let dem: string;
let scan: string;

beforeAll(async () => {
  dir = tempDir('sill-gpkg-cli-');
  const d = larkmoorDem();
  dem = join(dir, 'larkmoor.tif');
  await writeGeoTiff(dem, { ...d.grid, values: d.grid.values, nodata: -9999 });
  scan = join(dir, 'dihedral.txt');
  writeFileSync(scan, dihedralScan().text);
});

/** A layer's features from the GeoJSON file, as ogr2ogr would write them from the layer. */
const features = (path: string): GeoJsonFeature[] => JSON.parse(readFileSync(path, 'utf8')).features;

/** [minx, maxx, miny, maxy] over the coordinates of GeoJSON geometries (OGR's GetExtent order). */
function extentOf(fs: GeoJsonFeature[]): [number, number, number, number] {
  const e: [number, number, number, number] = [Infinity, -Infinity, Infinity, -Infinity];
  const walk = (c: unknown): void => {
    if (Array.isArray(c) && typeof c[0] === 'number') {
      e[0] = Math.min(e[0], c[0]); e[1] = Math.max(e[1], c[0]); e[2] = Math.min(e[2], c[1]); e[3] = Math.max(e[3], c[1]);
    } else if (Array.isArray(c)) c.forEach(walk);
  };
  for (const f of fs) if (f.geometry) walk(f.geometry.coordinates);
  return e;
}

/** The GeoPackage rules every results.gpkg keeps (OGC 12-128r18, by SQL through the system SQLite). */
function expectValid(g: GpkgReading, names: string[]): void {
  expect(g.layers.map((l) => l.name)).toEqual(names);
  expect(g.sql.header).toBe('SQLite format 3\u0000');
  expect(g.sql.applicationId).toBe(GPKG_APPLICATION_ID);
  expect(g.sql.userVersion).toBe(GPKG_USER_VERSION);
  expect(g.sql.integrity).toBe('ok');
  expect(g.sql.foreignKeys).toBe(0);
  expect(g.sql.tables).toEqual(expect.arrayContaining(['gpkg_spatial_ref_sys', 'gpkg_contents', 'gpkg_geometry_columns', 'gpkg_extensions']));
  expect(g.sql.srs.map((r) => r.srs_id)).toEqual(expect.arrayContaining([-1, 0, 4326]));
  expect(g.sql.contents.map((c) => c.table_name).sort()).toEqual([...names].sort());
  for (const l of g.layers) {
    // the R-tree holds one box per non-empty geometry, each holding that geometry's envelope
    expect(g.sql.rtree[l.name], l.name).toBe(l.withGeometry);
    expect(g.sql.rtreeCovers[l.name], l.name).toBe(l.withGeometry);
    expect(g.sql.extensions.filter((x) => x.table_name === l.name && x.extension_name === 'gpkg_rtree_index'), l.name).toHaveLength(1);
    expect(g.sql.triggers[l.name], l.name).toHaveLength(6);
  }
}

/**
 * GeoJSON properties as the GeoPackage holds them: `into` and `to` "outside" are NULL (the columns
 * are INTEGER), spill paths' `arrives` is text, −0 is 0 (SQLite keeps no sign on a zero).
 */
function asStored(p: Record<string, unknown>): Record<string, unknown> {
  const o: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(p)) o[k] = (k === 'into' || k === 'to') && v === 'outside' ? null : k === 'arrives' ? String(v) : v === 0 ? 0 : v;
  return o;
}

describe('results.gpkg', () => {
  it.skipIf(!hasGdal)(`ponds: layers depressions, pour-points and spill-paths equal depressions.geojson's polygons and points and spill-paths.geojson${note}`, () => {
    const out = join(dir, 'ponds');
    const r = sill(['ponds', dem, '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/results\.gpkg/);
    expect(readdirSync(out)).toContain('results.gpkg');
    // one geometry type a file: the polygons (the default --outlines level) and the pour points apart
    const polys = features(join(out, 'depressions.geojson'));
    const points = features(join(out, 'pour-points.geojson'));
    expect(polys.every((f) => f.properties.kind === 'depression')).toBe(true);
    expect(points.every((f) => f.properties.kind === 'pour point')).toBe(true);
    const g = readGpkg(join(out, 'results.gpkg'));
    // Source: GDAL's OGR and the system SQLite
    expectValid(g, ['depressions', 'pour-points', 'spill-paths', 'catchments']);
    const [dl, pl, sl] = g.layers;
    expect(dl).toMatchObject({ features: polys.length, geometryType: 'Multi Polygon', epsg: 32633 });
    expect(pl).toMatchObject({ features: points.length, geometryType: 'Point', epsg: 32633 });
    expect(polys.length).toBeGreaterThan(10);
    expect(dl.extent).toEqual(extentOf(polys));
    expect(pl.extent).toEqual(extentOf(points));
    expect(dl.fields).toMatchObject({ id: 'Integer64', parent: 'Integer64', into: 'Integer64', children: 'String', volume: 'Real', area: 'Real' });
    expect(pl.fields).toMatchObject({ toOutside: 'Integer(Boolean)', spillValue: 'Real' });
    // Source: GDAL's ogr2ogr -f GeoJSON, feature by feature (fid = depression id)
    const od = ogr2ogrLayer(join(out, 'results.gpkg'), 'depressions');
    const byId = new Map(polys.map((f) => [f.id, f]));
    expect(od.map((f) => f.id).sort((a, b) => a! - b!)).toEqual([...byId.keys()].sort((a, b) => a! - b!));
    for (const f of od) {
      const s = byId.get(f.id)!;
      expect(f.geometry).toEqual(asMultiPolygon(s.geometry));
      expect(f.properties).toEqual(asStored(s.properties));
    }
    const op = ogr2ogrLayer(join(out, 'results.gpkg'), 'pour-points');
    expect(op.map((f) => f.geometry)).toEqual(points.map((f) => f.geometry));
    expect(op.map((f) => f.properties)).toEqual(points.map((f) => asStored(f.properties)));
    expect(op.some((f) => f.properties.into === null) && op.some((f) => typeof f.properties.into === 'number')).toBe(true);
    const paths = features(join(out, 'spill-paths.geojson'));
    expect(sl).toMatchObject({ features: paths.length, geometryType: 'Multi Line String', epsg: 32633, extent: extentOf(paths) });
    const os = ogr2ogrLayer(join(out, 'results.gpkg'), 'spill-paths');
    expect(os.map((f) => f.id)).toEqual(paths.map((f) => f.id));
    expect(os.map((f) => f.geometry)).toEqual(paths.map((f) => f.geometry));
    expect(os.map((f) => f.properties)).toEqual(paths.map((f) => asStored(f.properties)));
  });

  it.skipIf(!hasGdal)(`runoff: layer ponds equals ponds.geojson${note}`, () => {
    const out = join(dir, 'runoff');
    const r = sill(['runoff', dem, '--depth', '40mm', '-o', out, '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const ponds = features(join(out, 'ponds.geojson'));
    const g = readGpkg(join(out, 'results.gpkg'));
    expectValid(g, ['ponds']);
    expect(g.layers[0]).toMatchObject({ features: ponds.length, geometryType: 'Multi Polygon', epsg: 32633, extent: extentOf(ponds) });
    expect(ponds.length).toBeGreaterThan(3);
    const o = ogr2ogrLayer(join(out, 'results.gpkg'), 'ponds');
    expect(o.map((f) => f.id)).toEqual(ponds.map((f) => f.id));
    expect(o.map((f) => f.geometry)).toEqual(ponds.map((f) => asMultiPolygon(f.geometry)));
    expect(o.map((f) => f.properties)).toEqual(ponds.map((f) => asStored(f.properties)));
  });

  it.skipIf(!hasGdal)(`survey: layer critical-points equals critical-points.geojson${note}`, () => {
    const out = join(dir, 'survey');
    const r = sill(['survey', dem, '--min-persistence', '0.5', '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/results\.gpkg/);
    const pts = features(join(out, 'critical-points.geojson'));
    const g = readGpkg(join(out, 'results.gpkg'));
    expectValid(g, ['critical-points']);
    expect(g.layers[0]).toMatchObject({ features: pts.length, geometryType: 'Point', epsg: 32633, extent: extentOf(pts) });
    const o = ogr2ogrLayer(join(out, 'results.gpkg'), 'critical-points');
    expect(o.map((f) => f.id)).toEqual(pts.map((f) => f.id! + 1));
    expect(o.map((f) => f.geometry)).toEqual(pts.map((f) => f.geometry));
    expect(o.map((f) => f.properties)).toEqual(pts.map((f) => asStored(f.properties)));
    expect(new Set(o.map((f) => f.properties.kind))).toEqual(new Set(['pit', 'pass', 'peak']));
  });

  it.skipIf(!hasGdal)(`barriers: layers minima, transition-states (points at the refined positions) and paths (lines through paths/ID.csv)${note}`, () => {
    const out = join(dir, 'barriers');
    const r = sill(['barriers', scan, '--units', 'kJ/mol', '--periodic', '-o', out, '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    const g = readGpkg(join(out, 'results.gpkg'));
    expectValid(g, ['minima', 'transition-states', 'paths']);
    const withPath = rep.transitionStates.filter((t: { path: unknown }) => t.path);
    expect(g.layers.map((l) => [l.features, l.geometryType, l.epsg])).toEqual([
      [rep.minima.length, 'Point', null], [rep.transitionStates.length, 'Point', null], [withPath.length, 'Line String', null],
    ]);
    expect(g.sql.contents.every((c) => c.srs_id === -1)).toBe(true);
    type Stationary = { id: string; x: number; y: number; energy: number; refined: { x: number; y: number; energy: number } | null };
    for (const [layer, rows] of [['minima', rep.minima], ['transition-states', rep.transitionStates]] as [string, Stationary[]][]) {
      const o = ogr2ogrLayer(join(out, 'results.gpkg'), layer);
      expect(o.map((f) => f.properties.id)).toEqual(rows.map((m) => m.id));
      expect(o.map((f) => f.geometry)).toEqual(rows.map((m) => ({ type: 'Point', coordinates: [m.refined?.x ?? m.x, m.refined?.y ?? m.y] })));
      expect(o.map((f) => f.properties.energy)).toEqual(rows.map((m) => m.refined?.energy ?? m.energy));
      expect(o.map((f) => f.properties.sampled_energy)).toEqual(rows.map((m) => m.energy));
    }
    const paths = ogr2ogrLayer(join(out, 'results.gpkg'), 'paths');
    expect(paths.length).toBeGreaterThan(0);
    for (const f of paths) {
      const csv = readFileSync(join(out, f.properties.file as string), 'utf8').trim().split('\n').slice(1).map((l) => l.split(',').map(Number));
      expect(f.geometry).toEqual({ type: 'LineString', coordinates: csv.map((c) => [c[1], c[2]]) });
      expect(f.properties.images).toBe(csv.length);
    }
  });

  it('--no-gpkg leaves results.gpkg out', () => {
    for (const [cmd, args] of [['ponds', [dem]], ['survey', [dem, '--min-persistence', '2']]] as const) {
      const out = join(dir, `no-gpkg-${cmd}`);
      const r = sill([cmd, ...args, '-o', out, '--no-gpkg']);
      expect(r.code, r.stderr).toBe(0);
      expect(readdirSync(out)).not.toContain('results.gpkg');
      expect(r.stdout).not.toMatch(/results\.gpkg/);
    }
  });

  it('a run that fails after writing results.gpkg leaves none behind: no new folder, no staging folder, an old result untouched', async () => {
    const g = await readGeoTiff(dem);
    const { result, report } = pondsReport(g, { connectivity: 8, boundary: 'open', nodataOutlet: true, catchments: 'raster' }, dem);
    // report.json cannot be written (a BigInt has no JSON form): the failure comes after results.gpkg
    (report as unknown as Record<string, unknown>).broken = 10n;
    const fresh = join(dir, 'failed-fresh');
    const out = new OutputFolder(fresh, { command: 'ponds', version: 'test', names: [...PONDS_FILES, 'results.gpkg'] });
    await expect(writePondsFiles(out, result, report, { project: null, threads: 1 })).rejects.toThrow(/BigInt/);
    expect(existsSync(fresh)).toBe(false);
    expect(readdirSync(dir).filter((n) => n.startsWith('.sill-staging-'))).toEqual([]);
    // into a folder holding an older result (written without the GeoPackage)
    const old = join(dir, 'failed-old');
    expect(sill(['ponds', dem, '-o', old, '--no-gpkg', '--quiet']).code).toBe(0);
    const before = readdirSync(old).sort();
    const out2 = new OutputFolder(old, { command: 'ponds', version: 'test', names: [...PONDS_FILES, 'results.gpkg'] });
    await expect(writePondsFiles(out2, result, report, { project: null, threads: 1 })).rejects.toThrow(/BigInt/);
    expect(readdirSync(old).sort()).toEqual(before);
    expect(before).not.toContain('results.gpkg');
    expect(readdirSync(dir).filter((n) => n.startsWith('.sill-staging-'))).toEqual([]);
  });
});
