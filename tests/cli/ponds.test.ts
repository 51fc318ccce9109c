/**
 * `sill ponds` on the command line (the built binary): the JSON contract, the files of -o and
 * how GDAL reads them back, the options, and bad input (exit 2, one line, nothing written).
 * Outside sources: GDAL (python3-gdal) reading the GeoTIFFs and the GeoJSON, and scikit-image's
 * reconstruction by erosion for the filled DEM — both live, skipped when not installed
 * (the committed scikit-image references in tests/hydro run everywhere).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { sill, tempDir, itRejects } from './run.js';
import { PYTHON as PY, runs } from '../prereq.js';
import { larkmoorDem, larkmoorCulverts } from '../../src/demo/generate.js';
import { writeGeoTiff, readGeoTiff } from '../../src/io/index.js';
import { Grid } from '../../src/surface/grid.js';
import { pondsReport } from '../../src/report/ponds.js';
import { fractalTerrain } from '../../bench/lib/terrain.mjs';

const hasGdal = runs('gdal');
const hasSkimage = runs('skimage');

let dir: string;
let dem: string;

beforeAll(async () => {
  dir = tempDir('sill-ponds-');
  const d = larkmoorDem();
  // a few nodata cells: an edge notch and an interior void
  const v = d.grid.values.slice();
  for (const [c, r] of [[0, 100], [0, 101], [150, 30], [151, 30]]) v[r * d.grid.width + c] = NaN;
  dem = join(dir, 'larkmoor.tif');
  await writeGeoTiff(dem, { ...d.grid, values: v, nodata: -9999 });
  await writeGeoTiff(join(dir, 'flat.tif'), { width: 4, height: 3, values: new Float32Array(12).fill(7), transform: [0, 1, 0, 0, 0, -1], crs: null, nodata: -9999 });
  await writeGeoTiff(join(dir, 'empty.tif'), { width: 4, height: 3, values: new Float32Array(12).fill(-9999), transform: [0, 1, 0, 0, 0, -1], crs: null, nodata: -9999 });
  const g = new Float32Array(20).map((_, i) => (i % 7) + (i === 7 ? -5 : 0));
  await writeGeoTiff(join(dir, 'geo-bad.tif'), { width: 5, height: 4, values: g, transform: [512000, 5, 0, 5874000, 0, -5], crs: { epsg: 4326, geographic: true }, nodata: -9999 });
  await writeGeoTiff(join(dir, 'geo.tif'), { width: 5, height: 4, values: g, transform: [10, 0.01, 0, 50, 0, -0.01], crs: { epsg: 4326, geographic: true }, nodata: -9999 });
  writeFileSync(join(dir, 'matrix.txt'), ['5 5 5 5 5', '5 1 1 1 5', '5 1 0 1 3', '5 1 1 1 5', '5 5 5 5 5'].join('\n') + '\n');
});

describe('sill ponds (command line)', () => {
  it('--json prints the report with the contract keys, and nothing else on stdout', () => {
    const r = sill(['ponds', dem, '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.schema).toBe('sill/ponds@1');
    expect(rep.surface).toMatchObject({ width: 320, height: 240, validCells: 320 * 240 - 4, crs: { epsg: 32633 }, cellSize: [5, 5] });
    expect(rep.connectivity).toBe(8);
    expect(rep.boundary).toBe('open');
    expect(rep.euler).toMatchObject({ characteristic: expect.any(Number), holds: true });
    expect(Object.keys(rep.euler)).toEqual(expect.arrayContaining(['characteristic', 'pits', 'passes', 'peaks', 'holds']));
    expect(rep.caution).toMatch(/screening/i);
    expect(rep.units).toMatchObject({ area: 'm²', volume: 'm³', elevation: 'm' });
    expect(Object.keys(rep.totals)).toEqual(expect.arrayContaining(['depressions', 'volume', 'area']));
    expect(rep.totals.depressions).toBe(rep.depressions.length);
    expect(rep.depressions.length).toBeGreaterThan(10);
    for (const d of rep.depressions) {
      expect(Object.keys(d)).toEqual(expect.arrayContaining(['id', 'parent', 'children', 'pitValue', 'spillValue', 'pour', 'into', 'cells', 'area', 'volume', 'maxDepth']));
      expect(Object.keys(d.pour)).toEqual(expect.arrayContaining(['col', 'row', 'x', 'y']));
      expect(d.spillValue).toBeGreaterThan(d.pitValue);
    }
    const top = rep.depressions.filter((d: { parent: number | null }) => d.parent === null);
    expect(rep.totals.volume).toBeCloseTo(top.reduce((s: number, d: { volume: number }) => s + d.volume, 0), 6);
    expect(r.stderr).toBe('');
  });

  it('-o writes its files; GDAL reads the rasters back with the same transform, CRS, nodata and values', () => {
    const out = join(dir, 'out');
    const r = sill(['ponds', dem, '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'catchments.geojson', 'catchments.tif', 'depressions.csv', 'depressions.geojson', 'depth.tif', 'filled.tif', 'labels.tif', 'pour-points.geojson', 'report.json', 'results.gpkg', 'spill-paths.geojson']);
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    const csv = readFileSync(join(out, 'depressions.csv'), 'utf8').trim().split('\n');
    expect(csv[0]).toMatch(/^id,parent,/);
    expect(csv[0]).toMatch(/area_m2/);
    expect(csv[0]).toMatch(/volume_m3/);
    expect(csv[0]).toMatch(/spill_value_m/);
    expect(csv[0]).toMatch(/,catchment_cells,catchment_area_m2,perimeter_m,major_axis_m,minor_axis_m,orientation_deg,elongation,box_ratio,catchment_ratio$/);
    for (const d of rep.depressions) {
      expect(d.catchmentCells).toBeGreaterThanOrEqual(d.cells);
      expect(d.perimeter).toBeGreaterThan(0);
      expect(d.majorAxis).toBeGreaterThanOrEqual(d.minorAxis);
    }
    expect(csv).toHaveLength(rep.depressions.length + 1);
    const gj = JSON.parse(readFileSync(join(out, 'depressions.geojson'), 'utf8'));
    expect(gj.crs.properties.name).toBe('urn:ogc:def:crs:EPSG::32633');
    // one geometry type a file: the top-level depressions' polygons (the default --outlines top), the pour points apart
    const tops = rep.depressions.filter((d: { parent: number | null }) => d.parent === null).map((d: { id: number }) => d.id);
    expect(gj.features.map((f: { id: number }) => f.id)).toEqual(tops);
    for (const f of gj.features) expect(['Polygon', 'MultiPolygon']).toContain(f.geometry.type);
    expect(gj.caution).toMatch(/screening/i);
    expect(rep.outlines).toMatchObject({ levels: 'top', features: tops.length, depressions: rep.depressions.length });
    const pp = JSON.parse(readFileSync(join(out, 'pour-points.geojson'), 'utf8'));
    expect(pp.name).toBe('pour-points');
    expect(pp.crs.properties.name).toBe('urn:ogc:def:crs:EPSG::32633');
    expect(pp.features.map((f: { id: number }) => f.id)).toEqual(rep.depressions.map((d: { id: number }) => d.id));
    for (const f of pp.features) {
      expect(f.geometry.type).toBe('Point');
      const d = rep.depressions[f.id - 1];
      expect(f.geometry.coordinates).toEqual([d.pour.x, d.pour.y]);
      expect(f.properties).toMatchObject({ kind: 'pour point', id: d.id, pourCol: d.pour.col, pourRow: d.pour.row });
    }
    if (!hasGdal) return;
    // Source: GDAL (python3-gdal) reading sill's files
    const script = `
import json, sys
from osgeo import gdal, ogr
gdal.UseExceptions()
out = {}
for name in ('filled', 'depth', 'labels', 'catchments'):
    ds = gdal.Open(sys.argv[1] + '/' + name + '.tif')
    b = ds.GetRasterBand(1)
    srs = ds.GetSpatialRef()
    a = b.ReadAsArray()
    out[name] = {'gt': list(ds.GetGeoTransform()), 'epsg': int(srs.GetAuthorityCode(None)) if srs else None,
                 'nodata': b.GetNoDataValue(), 'type': gdal.GetDataTypeName(b.DataType), 'sum': float(a[a != b.GetNoDataValue()].sum()),
                 'count': int((a != b.GetNoDataValue()).sum()), 'sample': [float(a[r, c]) for r, c in ((120, 247), (0, 0), (100, 0))]}
v = ogr.Open(sys.argv[1] + '/depressions.geojson')
l = v.GetLayer(0)
area = 0.0
n = 0
for f in l:
    g = f.GetGeometryRef()
    if g.GetGeometryType() in (ogr.wkbPolygon, ogr.wkbMultiPolygon) and f.GetField('parent') is None:
        area += g.GetArea()
        n += 1
out['vector'] = {'epsg': int(l.GetSpatialRef().GetAuthorityCode(None)), 'topArea': area, 'top': n, 'features': l.GetFeatureCount()}
ds = gdal.Open(sys.argv[1] + '/catchments.tif')
import numpy as np
c = ds.GetRasterBand(1).ReadAsArray()
out['catchCells'] = {str(int(k)): int(n) for k, n in zip(*np.unique(c, return_counts=True))}
sds = ogr.Open(sys.argv[1] + '/spill-paths.geojson')  # keep the data source alive while its layer is read
s = sds.GetLayer(0)
out['paths'] = {'n': s.GetFeatureCount(), 'types': sorted({ogr.GeometryTypeToName(f.GetGeometryRef().GetGeometryType()) for f in s}), 'epsg': int(s.GetSpatialRef().GetAuthorityCode(None))}
s.ResetReading()
out['paths']['lengths'] = {str(f.GetField('from')): f.GetGeometryRef().Length() for f in s}
cds = ogr.Open(sys.argv[1] + '/catchments.geojson')  # keep the data source alive while its layer is read
cl = cds.GetLayer(0)
out['catchPolys'] = {str(f.GetField('id')): [f.GetGeometryRef().GetArea(), bool(f.GetGeometryRef().IsValid())] for f in cl}
pds = ogr.Open(sys.argv[1] + '/pour-points.geojson')  # kept: a layer dies with its data source
p = pds.GetLayer(0)
out['points'] = {'features': p.GetFeatureCount(), 'type': ogr.GeometryTypeToName(p.GetGeomType())}
print(json.dumps(out))
`;
    const py = spawnSync(PY, ['-c', script, out], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const g = JSON.parse(py.stdout);
    for (const name of ['filled', 'depth', 'labels', 'catchments']) {
      expect(g[name].gt).toEqual([512000, 5, 0, 5874000, 0, -5]);
      expect(g[name].epsg).toBe(32633);
      expect(g[name].count).toBe(320 * 240 - 4);
    }
    expect(g.filled.nodata).toBe(-9999);
    expect(g.depth.nodata).toBe(-9999);
    expect(g.labels.nodata).toBe(-1);
    expect(g.filled.type).toBe('Float32');
    expect(g.labels.type).toBe('Int32');
    expect(g.filled.sample[2]).toBe(-9999); // the nodata cell (col 0, row 100)
    expect(g.labels.sample[2]).toBe(-1);
    // Σ depth × 25 m² = the total volume; GDAL's sum of the float32 depths, so to float32 precision
    expect(g.depth.sum * 25).toBeCloseTo(rep.totals.volume, -1);
    expect(Math.abs(g.depth.sum * 25 - rep.totals.volume) / rep.totals.volume).toBeLessThan(1e-5);
    // OGR's polygon areas of the top-level depressions = their wet areas in the report
    const top = rep.depressions.filter((d: { parent: number | null }) => d.parent === null);
    expect(g.vector.epsg).toBe(32633);
    expect(g.vector.top).toBe(top.length);
    expect(g.vector.topArea).toBeCloseTo(rep.totals.area, 6);
    expect(g.vector.features).toBe(top.length);
    expect(g.points).toEqual({ features: rep.depressions.length, type: 'Point' });
    // catchments.tif (GDAL's cell counts per value) = the report's catchment cells of the leaf depressions
    // (innermost labels), and the rest drains off the map
    const leafCells = new Map<number, number>();
    for (const d of rep.depressions) if (d.children.length === 0) leafCells.set(d.id, d.catchmentCells);
    for (const [id, n] of leafCells) {
      const kids = rep.depressions.filter((e: { parent: number | null }) => e.parent === id);
      expect(kids).toHaveLength(0);
      expect(g.catchCells[String(id)] ?? 0).toBe(n);
    }
    expect(g.catchCells['0']).toBe(rep.totals.offMap.cells);
    expect(rep.totals.catchments.cells + rep.totals.offMap.cells + rep.totals.walledIn.cells).toBe(320 * 240 - 4);
    // catchments.geojson (the default --outlines level, top): GEOS finds each polygon valid, and OGR's area
    // of each equals the reported catchmentArea (cell edges: exact up to rounding)
    const topDeps = rep.depressions.filter((d: { parent: number | null }) => d.parent === null);
    expect(Object.keys(g.catchPolys)).toHaveLength(topDeps.length);
    for (const d of topDeps) {
      const [area, valid] = g.catchPolys[String(d.id)];
      expect(valid).toBe(true);
      expect(Math.abs(area - d.catchmentArea)).toBeLessThanOrEqual(1e-9 * d.catchmentArea);
    }
    // spill-paths.geojson: one MultiLineString per depression; OGR's length of each equals the reported one
    expect(g.paths.n).toBe(rep.depressions.length);
    expect(g.paths.types).toEqual(['Multi Line String']);
    expect(g.paths.epsg).toBe(32633);
    const sp = JSON.parse(readFileSync(join(out, 'spill-paths.geojson'), 'utf8'));
    for (const f of sp.features) {
      const len = g.paths.lengths[String(f.properties.from)];
      // the length sill reports leaves out the jumps between parts (across full lakes); OGR adds up the parts alone too
      expect(Math.abs(len - f.properties.length)).toBeLessThanOrEqual(1e-9 * Math.max(1, len));
      const into = rep.depressions[f.properties.from - 1].into;
      expect(f.properties.to).toBe(into);
      if (into === 'outside') expect(f.properties.arrives === 'outside' || typeof f.properties.arrives === 'number').toBe(true);
    }
  });

  it('--outlines leaf and all: the innermost depressions, or every one; a bad level is refused', () => {
    const leafOut = join(dir, 'out-leaf'), allOut = join(dir, 'out-all');
    const lr = sill(['ponds', dem, '-o', leafOut, '--outlines', 'leaf', '--json']);
    expect(lr.code, lr.stderr).toBe(0);
    const rep = JSON.parse(lr.stdout);
    const leaves = rep.depressions.filter((d: { children: number[] }) => d.children.length === 0).map((d: { id: number }) => d.id);
    expect(rep.outlines).toMatchObject({ levels: 'leaf', features: leaves.length });
    const lg = JSON.parse(readFileSync(join(leafOut, 'depressions.geojson'), 'utf8'));
    expect(lg.features.map((f: { id: number }) => f.id)).toEqual(leaves);
    expect(sill(['ponds', dem, '-o', allOut, '--outlines', 'all', '--quiet']).code).toBe(0);
    const ag = JSON.parse(readFileSync(join(allOut, 'depressions.geojson'), 'utf8'));
    expect(ag.features.map((f: { id: number }) => f.id)).toEqual(rep.depressions.map((d: { id: number }) => d.id));
    for (const f of ag.features) expect(f.properties.area).toBe(rep.depressions[f.id - 1].area);
    const bad = sill(['ponds', dem, '-o', join(dir, 'out-bad'), '--outlines', 'some']);
    expect(bad.code).toBe(2);
    expect(existsSync(join(dir, 'out-bad'))).toBe(false);
  });

  it.skipIf(!hasGdal)('on a rough terrain every vector file opens in OGR: valid polygons (GEOS), areas, one geometry type, GeoPackage without a warning (live)', async () => {
    // a rough terrain like the benchmark's (bench/lib/terrain.mjs), unfiltered: a deep hierarchy
    const size = 200;
    const tif = join(dir, 'rough.tif');
    await writeGeoTiff(tif, { width: size, height: size, values: fractalTerrain(size, { seed: 17 }), transform: [500000, 5, 0, 5800000, 0, -5], crs: { epsg: 32633, geographic: false }, nodata: -9999 });
    const out = join(dir, 'out-rough');
    const r = sill(['ponds', tif, '-o', out, '--outlines', 'all', '--wgs84', '--json']);
    expect(r.code, r.stderr).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.depressions.length).toBeGreaterThan(200);
    // Source: GDAL/OGR with GEOS — IsValid() (OGC Simple Features), GetArea(), ogr2ogr -f GPKG
    const script = `
import json, sys, subprocess
from osgeo import ogr, gdal
gdal.UseExceptions()
res = {}
for name in ('depressions', 'pour-points', 'depressions-wgs84', 'pour-points-wgs84'):
    path = sys.argv[1] + '/' + name + '.geojson'
    ds = ogr.Open(path)  # kept: a layer dies with its data source
    lay = ds.GetLayer(0)
    invalid, worst, types, areas = 0, 0.0, set(), {}
    for f in lay:
        g = f.GetGeometryRef()
        types.add(g.GetGeometryName())
        if not g.IsValid(): invalid += 1
        if name == 'depressions': areas[f.GetFID()] = g.GetArea()
    p = subprocess.run(['ogr2ogr', '-f', 'GPKG', sys.argv[1] + '/' + name + '.gpkg', path], capture_output=True, text=True)
    res[name] = {'n': lay.GetFeatureCount(), 'invalid': invalid, 'types': sorted(types), 'areas': areas, 'ogr2ogr': p.returncode, 'stderr': p.stderr}
print(json.dumps(res))
`;
    const py = spawnSync(PY, ['-c', script, out], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const g = JSON.parse(py.stdout);
    const n = rep.depressions.length;
    for (const name of ['depressions', 'pour-points', 'depressions-wgs84', 'pour-points-wgs84']) {
      expect(g[name].n).toBe(n);
      expect(g[name].invalid).toBe(0);
      expect(g[name].ogr2ogr).toBe(0);
      expect(g[name].stderr).toBe('');
    }
    expect(g['pour-points'].types).toEqual(['POINT']);
    expect(g.depressions.types).toEqual(['MULTIPOLYGON', 'POLYGON']);
    // OGR's area of each outline = the depression's area (projected grid), to 1e-9
    for (const d of rep.depressions) expect(Math.abs(g.depressions.areas[d.id] - d.area) / d.area).toBeLessThan(1e-9);
  });

  it.skipIf(!hasSkimage || !hasGdal)('filled.tif equals scikit-image reconstruction by erosion on the demo DEM (live)', () => {
    const out = join(dir, 'out-sk');
    expect(sill(['ponds', dem, '-o', out, '--quiet']).code).toBe(0);
    // Source: skimage.morphology.reconstruction, 3×3 footprint, grid frame and nodata seeded
    const script = `
import sys, numpy as np
from osgeo import gdal
from skimage.morphology import reconstruction
z = gdal.Open(sys.argv[1]).ReadAsArray().astype(np.float64)
f = gdal.Open(sys.argv[2] + '/filled.tif').ReadAsArray().astype(np.float64)
valid = z != -9999
lo, hi = z[valid].min() - 1, z[valid].max() + 1
m = np.full((z.shape[0] + 2, z.shape[1] + 2), lo); m[1:-1, 1:-1] = np.where(valid, z, lo)
seed = np.full_like(m, hi); seed[0, :] = m[0, :]; seed[-1, :] = m[-1, :]; seed[:, 0] = m[:, 0]; seed[:, -1] = m[:, -1]
seed[1:-1, 1:-1][~valid] = lo
ref = reconstruction(seed, m, method='erosion', footprint=np.ones((3, 3)))[1:-1, 1:-1]
print(int((ref[valid] != f[valid]).sum()))
`;
    if (!hasGdal) return;
    const py = spawnSync(PY, ['-c', script, dem, out], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    expect(Number(py.stdout.trim())).toBe(0);
  });

  it('options: filters, --label-level top, --fill-only-below, --stage-volume, --wgs84', async () => {
    const out = join(dir, 'out-opts');
    const r = sill(['ponds', dem, '-o', out, '--min-depth', '0.05', '--min-area', '100', '--label-level', 'top', '--fill-only-below', '5000', '--stage-volume', '1', '--wgs84', '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.filters).toMatchObject({ minDepth: 0.05, minArea: 100, fillOnlyBelow: 5000 });
    expect(rep.removed.filtered).toBeGreaterThan(0);
    for (const d of rep.depressions) { expect(d.maxDepth).toBeGreaterThanOrEqual(0.05); expect(d.area).toBeGreaterThanOrEqual(100); }
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'catchments.geojson', 'catchments.tif', 'depressions-wgs84.geojson', 'depressions.csv', 'depressions.geojson', 'depth.tif', 'filled.tif', 'labels.tif',
      'pour-points-wgs84.geojson', 'pour-points.geojson', 'report.json', 'results.gpkg', 'spill-paths.geojson', 'stage-volume-1.csv']);
    const labels = await readGeoTiff(join(out, 'labels.tif'));
    const ids = new Set<number>();
    for (const v of labels.values) if (v > 0) ids.add(v);
    const tops = new Set(rep.depressions.filter((d: { parent: number | null }) => d.parent === null).map((d: { id: number }) => d.id));
    for (const id of ids) expect(tops.has(id)).toBe(true);
    const stage = readFileSync(join(out, 'stage-volume-1.csv'), 'utf8').trim().split('\n');
    expect(stage[0]).toBe('level_m,area_m2,volume_m3,cells');
    const last = stage[stage.length - 1].split(',').map(Number);
    expect(last[0]).toBeCloseTo(rep.depressions[0].spillValue, 4);
    expect(last[2]).toBeCloseTo(rep.depressions[0].volume, 3);
    const w = JSON.parse(readFileSync(join(out, 'depressions-wgs84.geojson'), 'utf8'));
    expect(w.crs).toBeUndefined();
    for (const f of w.features) expect(['Polygon', 'MultiPolygon']).toContain(f.geometry.type);
    const wp = JSON.parse(readFileSync(join(out, 'pour-points-wgs84.geojson'), 'utf8'));
    expect(wp.crs).toBeUndefined();
    expect(wp.features).toHaveLength(rep.depressions.length);
    const [lon, lat] = wp.features[0].geometry.coordinates;
    expect(lon).toBeGreaterThan(15.1); expect(lon).toBeLessThan(15.3);
    expect(lat).toBeGreaterThan(52.9); expect(lat).toBeLessThan(53.1);
  });

  it('text matrix without a CRS: areas in map units, stated; a geographic grid measures m² on the ellipsoid', () => {
    const r = sill(['ponds', join(dir, 'matrix.txt'), '--origin', '0,0', '--spacing', '1,1', '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.units.area).toBe('map unit²');
    expect(rep.depressions).toHaveLength(1);
    expect(rep.depressions[0]).toMatchObject({ pitValue: 0, spillValue: 3, cells: 9, volume: 19, into: 'outside' });
    const g = sill(['ponds', join(dir, 'geo.tif'), '--json']);
    expect(g.code).toBe(0);
    expect(JSON.parse(g.stdout).cellArea.uniform).toBe(false);
  });

  it('the summary names the counts, totals, largest depressions and the caution', () => {
    const r = sill(['ponds', dem]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/depressions\s+\d+ \(\d+ leaf, \d+ merged; \d+ top-level\)/);
    expect(r.stdout).toMatch(/totals\s+[\d.]+ m³ over [\d.]+ m²/);
    expect(r.stdout).toMatch(/largest:\n  #\d+/);
    expect(r.stdout).toMatch(/pours at cell/);
    expect(r.stdout).toMatch(/Screening information/);
    expect(r.stdout).toMatch(/Euler .* holds/);
  });

  it('the library gives the same report as the command', async () => {
    const g = await readGeoTiff(dem);
    const { report } = pondsReport(g as Grid, {}, dem);
    const r = JSON.parse(sill(['ponds', dem, '--json']).stdout);
    expect(r.depressions).toEqual(JSON.parse(JSON.stringify(report.depressions)));
  });

  it('--culverts: the demo valley road culvert drains the reservoir behind the embankment; the report says what changed', () => {
    const csv = join(dir, 'culverts.csv');
    writeFileSync(csv, larkmoorCulverts());
    const plain = JSON.parse(sill(['ponds', dem, '--min-depth', '0.05', '--json']).stdout);
    const r = sill(['ponds', dem, '--min-depth', '0.05', '--culverts', csv, '--json']);
    expect(r.code, r.stderr).toBe(0);
    const rep = JSON.parse(r.stdout);
    const c = rep.culverts;
    expect(c.lines).toHaveLength(1);
    expect(c.lines[0]).toMatchObject({ name: 'valley road culvert', invertFrom: 'lower end', from: { col: 246, row: 127 }, to: { col: 254, row: 127 } });
    // the invert is the lower end's elevation, read from the DEM
    const g = larkmoorDem().grid;
    const zEnd = Math.min(g.values[127 * 320 + 246], g.values[127 * 320 + 254]);
    expect(c.lines[0].invert).toBeCloseTo(zEnd, 4);
    // every depression without the culvert is accounted for once, and those that changed are listed
    const e = c.effects;
    expect(e.unchanged + e.shrank + e.grew + e.merged + e.vanished).toBe(plain.depressions.length);
    expect(c.changed).toHaveLength(plain.depressions.length - e.unchanged);
    expect(e.vanished).toBeGreaterThan(0);
    // the reservoir behind the embankment (the largest depression without the culvert) is gone
    const largest = plain.depressions.reduce((a: { volume: number }, b: { volume: number }) => (b.volume > a.volume ? b : a));
    expect(c.changed.find((x: { before: number }) => x.before === largest.id)?.status).toBe('vanished');
    expect(rep.totals.volume).toBeLessThan(plain.totals.volume - 0.9 * largest.volume);
    // the summary line
    const s = sill(['ponds', dem, '--min-depth', '0.05', '--culverts', csv]);
    expect(s.stdout).toMatch(/culverts +1 line from .*culverts\.csv, \d+ cells lowered to their inverts; against the DEM without them: \d+ depressions vanished/);
  });

  it('--report draws the spill path of each marked depression on the map, keyed to its depression, as spill-paths.geojson has it, over the catchments', () => {
    const out = join(dir, 'with-report');
    const r = sill(['ponds', dem, '--min-depth', '0.05', '-o', out, '--report', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const svg = readFileSync(join(out, 'map.svg'), 'utf8');
    // and the top-level catchments as a layer of the map
    expect(svg).toMatch(/data-layer="catchments"/);
    const drawn = [...svg.matchAll(/<g class="pth" data-k="d(\d+)"><title>spill path of #(\d+): ([\d.]+) m down to ([^,<]+)/g)];
    expect(drawn.length).toBeGreaterThan(5);
    const sp = JSON.parse(readFileSync(join(out, 'spill-paths.geojson'), 'utf8'));
    const byId = new Map(sp.features.map((f: { properties: { from: number } }) => [f.properties.from, f.properties]));
    for (const [, key, id, len, to] of drawn) {
      expect(key).toBe(id); // a click on the line selects its depression
      const p = byId.get(Number(id)) as { length: number; arrives: number | string };
      expect(Math.abs(Number(len) - p.length)).toBeLessThanOrEqual(0.01 * p.length + 0.01);
      expect(to).toBe(p.arrives === 'outside' ? 'the map edge' : typeof p.arrives === 'number' ? `depression #${p.arrives}` : 'a pit of no reported depression');
    }
  });

  describe('bad input: exit 2, one line on stderr, nothing written', () => {
    const cases: [string, () => string[], RegExp][] = [
      ['missing file', () => ['ponds', join(dir, 'nope.tif')], /cannot read/],
      ['all nodata', () => ['ponds', join(dir, 'empty.tif')], /nodata/],
      ['entirely flat', () => ['ponds', join(dir, 'flat.tif')], /same value/],
      ['closed boundary', () => ['ponds', dem, '--boundary', 'closed'], /--boundary open/],
      ['negative filter', () => ['ponds', dem, '--min-depth', '-1'], /--min-depth/],
      ['bad nodata mode', () => ['ponds', dem, '--nodata-as', 'sea'], /nodata-as/],
      ['latitudes beyond ±90', () => ['ponds', join(dir, 'geo-bad.tif')], /beyond ±90/],
      ['unknown z unit', () => ['ponds', dem, '--z-units', 'yard'], /--z-units/],
      ['xy units contradict the CRS', () => ['ponds', dem, '--xy-units', 'deg'], /contradicts the CRS/],
      ['--wgs84 without a CRS', () => ['ponds', join(dir, 'matrix.txt'), '--origin', '0,0', '--spacing', '1,1', '--wgs84'], /--wgs84/],
      ['--stage-volume of no depression', () => ['ponds', dem, '--stage-volume', '99999'], /--stage-volume/],
      ['culverts outside the DEM', () => { writeFileSync(join(dir, 'far.csv'), 'x1,y1,x2,y2\n0,0,10,10\n'); return ['ponds', dem, '--culverts', join(dir, 'far.csv')]; }, /--culverts .*far\.csv: culvert 1 has the point \(0, 0\) outside the DEM/],
      ['an unreadable culvert file', () => ['ponds', dem, '--culverts', join(dir, 'no-such.csv')], /--culverts .*no-such\.csv: cannot be read/],
      ['scattered samples', () => { writeFileSync(join(dir, 'pts.txt'), 'x y z\n0 0 1\n1 0.3 2\n0.2 1 3\n1.4 1.1 0\n0.7 0.5 4\n'); return ['ponds', join(dir, 'pts.txt')]; }, /regular grid/],
    ];
    itRejects(cases, () => dir);
  });
});
