/**
 * `sill runoff` on the command line (the built binary): the JSON contract (DESIGN §4), the files of
 * -o and how they read back, the runoff options, and bad input (exit 2, one line, nothing written).
 * Outside sources: conservation of mass (input = ponded + outflow) in every run; GDAL
 * (python3-gdal) reading the GeoTIFFs and OGR measuring the pond polygons — live, skipped when not
 * installed.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { readFileSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { sill, tempDir, itRejects } from './run.js';
import { PYTHON as PY, runs } from '../prereq.js';
import { larkmoorDem } from '../../src/demo/generate.js';
import { writeGeoTiff, readGeoTiff } from '../../src/io/index.js';

const hasGdal = runs('gdal');

let dir: string;
let dem: string;
const W = 320, H = 240;

/** Conservation of mass in every run: input = ponded + outflow, to 1e-9 relative. */
function balanced(rep: { water: { input: number; ponded: number; outflow: number; balanceError: number } }): void {
  const w = rep.water;
  expect(Math.abs(w.input - w.ponded - w.outflow)).toBeLessThanOrEqual(1e-9 * w.input);
  expect(w.balanceError).toBeLessThanOrEqual(1e-9);
}

beforeAll(async () => {
  dir = tempDir('sill-runoff-');
  const d = larkmoorDem();
  const v = d.grid.values.slice();
  for (const [c, r] of [[0, 100], [0, 101], [150, 30], [151, 30]]) v[r * W + c] = NaN;
  dem = join(dir, 'larkmoor.tif');
  await writeGeoTiff(dem, { ...d.grid, values: v, nodata: -9999 });
  const t = d.grid.transform;
  // runoff rasters: 40 mm everywhere on the DEM's grid (in mm), a coarser one (10 m cells) covering the west half, one far away, one negative
  await writeGeoTiff(join(dir, 'rain-mm.tif'), { width: W, height: H, values: new Float32Array(W * H).fill(40), transform: t, crs: d.grid.crs, nodata: -9999 });
  await writeGeoTiff(join(dir, 'rain-coarse.tif'), { width: W / 4, height: H / 2, values: new Float32Array((W / 4) * (H / 2)).fill(0.04), transform: [t[0], 10, 0, t[3], 0, -10], crs: d.grid.crs, nodata: -9999 });
  await writeGeoTiff(join(dir, 'rain-far.tif'), { width: 10, height: 10, values: new Float32Array(100).fill(0.04), transform: [t[0] + 1e5, 5, 0, t[3], 0, -5], crs: d.grid.crs, nodata: -9999 });
  const neg = new Float32Array(W * H).fill(0.01);
  neg[7 * W + 11] = -0.02;
  await writeGeoTiff(join(dir, 'rain-neg.tif'), { width: W, height: H, values: neg, transform: t, crs: d.grid.crs, nodata: -9999 });
});

describe('sill runoff (command line)', () => {
  it('--json prints the report with the contract keys, and nothing else on stdout', () => {
    const r = sill(['runoff', dem, '--depth', '40mm', '--json']);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    const rep = JSON.parse(r.stdout);
    expect(rep.schema).toBe('sill/runoff@1');
    expect(rep.surface).toMatchObject({ width: W, height: H, validCells: W * H - 4, crs: { epsg: 32633 }, cellSize: [5, 5] });
    expect(rep.connectivity).toBe(8);
    expect(rep.boundary).toBe('open');
    expect(rep.euler).toMatchObject({ holds: true });
    expect(rep.caution).toMatch(/screening/i);
    expect(rep.caution).toMatch(/infiltration/);
    expect(rep.runoff).toMatchObject({ mode: 'uniform', depth: 0.04, depthText: '40mm', cells: W * H - 4 });
    expect(Object.keys(rep.water)).toEqual(expect.arrayContaining(['input', 'ponded', 'outflow', 'balanceError']));
    // 40 mm on (76 800 − 4) cells of 25 m²
    expect(rep.water.input).toBeCloseTo(0.04 * 25 * (W * H - 4), 6);
    balanced(rep);
    expect(rep.water.ponded).toBeGreaterThan(0);
    expect(rep.water.outflow).toBeGreaterThan(0);
    expect(rep.depressions.length).toBe(rep.counts.depressions);
    expect(rep.counts.full + rep.counts.partial + rep.counts.dry).toBe(rep.counts.depressions);
    for (const d of rep.depressions) {
      expect(Object.keys(d)).toEqual(expect.arrayContaining(['id', 'parent', 'pitValue', 'spillValue', 'volume', 'received', 'waterVolume', 'passedOn', 'waterLevel', 'state']));
      expect(d.waterVolume).toBeLessThanOrEqual(d.volume * (1 + 1e-12));
      if (d.waterLevel !== null) expect(d.waterLevel).toBeGreaterThan(d.pitValue);
    }
    const held = rep.ponds.reduce((s: number, p: { volume: number }) => s + p.volume, 0);
    expect(Math.abs(held - rep.water.ponded)).toBeLessThanOrEqual(1e-9 * rep.water.input);
  });

  it('-o writes the rasters, ponds, table and report; the rasters read back with the level, depth and water of the report', async () => {
    const out = join(dir, 'out');
    const r = sill(['runoff', dem, '--depth', '40mm', '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'ponds.geojson', 'report.json', 'results.gpkg', 'runoff.csv', 'water-depth.tif', 'water-level.tif']);
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    balanced(rep);
    const z = await readGeoTiff(dem), lv = await readGeoTiff(join(out, 'water-level.tif')), dp = await readGeoTiff(join(out, 'water-depth.tif'));
    let sum = 0, wet = 0;
    for (let i = 0; i < W * H; i++) {
      if (Number.isNaN(z.values[i])) { expect(Number.isNaN(dp.values[i])).toBe(true); continue; }
      const d = dp.values[i];
      if (Number.isNaN(lv.values[i])) { expect(d).toBe(0); continue; }
      wet++;
      expect(d).toBeGreaterThan(0);
      expect(lv.values[i] - z.values[i]).toBeCloseTo(d, 4);
      sum += d;
    }
    expect(wet).toBe(rep.totals.wetCells);
    // Σ depth × 25 m² over the float32 raster = the ponded water, to float32 precision
    expect(Math.abs(sum * 25 - rep.water.ponded) / rep.water.ponded).toBeLessThan(1e-5);
    const csv = readFileSync(join(out, 'runoff.csv'), 'utf8').trim().split('\n');
    expect(csv[0]).toMatch(/^id,parent,level,kind,pit_value_m,spill_value_m,into,capacity_m3,received_m3,stored_m3,passed_on_m3,water_level_m,state,/);
    expect(csv).toHaveLength(rep.depressions.length + 1);
    const gj = JSON.parse(readFileSync(join(out, 'ponds.geojson'), 'utf8'));
    expect(gj.crs.properties.name).toBe('urn:ogc:def:crs:EPSG::32633');
    expect(gj.features).toHaveLength(rep.counts.ponds);
    expect(gj.caution).toMatch(/screening/i);
    for (const f of gj.features) expect(f.properties).toMatchObject({ kind: 'pond', volume: expect.any(Number), level: expect.any(Number) });
    // polygons only: every pond has its outline
    for (const f of gj.features) expect(['Polygon', 'MultiPolygon']).toContain(f.geometry.type);
    expect(rep.outlines).toEqual({ features: rep.counts.ponds, note: expect.stringMatching(/all/) });
    if (!hasGdal) return;
    // Source: GDAL (python3-gdal) reading sill's files; OGR's polygon areas
    const script = `
import json, sys, subprocess
from osgeo import gdal, ogr
gdal.UseExceptions()
out = {}
for name in ('water-level', 'water-depth'):
    ds = gdal.Open(sys.argv[1] + '/' + name + '.tif')
    b = ds.GetRasterBand(1)
    a = b.ReadAsArray()
    nd = b.GetNoDataValue()
    out[name] = {'gt': list(ds.GetGeoTransform()), 'epsg': int(ds.GetSpatialRef().GetAuthorityCode(None)), 'nodata': nd,
                 'sum': float(a[a != nd].sum()), 'count': int((a != nd).sum())}
v = ogr.Open(sys.argv[1] + '/ponds.geojson')
l = v.GetLayer(0)
areas = {}
invalid = 0
for f in l:
    g = f.GetGeometryRef()
    if g is not None:
        areas[f.GetField('id')] = g.GetArea()
        if not g.IsValid(): invalid += 1
out['areas'] = areas
out['invalid'] = invalid
p = subprocess.run(['ogr2ogr', '-f', 'GPKG', sys.argv[1] + '/../ponds-check.gpkg', sys.argv[1] + '/ponds.geojson'], capture_output=True, text=True)
out['ogr2ogr'] = [p.returncode, p.stderr]
out['epsg'] = int(l.GetSpatialRef().GetAuthorityCode(None))
print(json.dumps(out))
`;
    const py = spawnSync(PY, ['-c', script, out], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const g = JSON.parse(py.stdout);
    for (const name of ['water-level', 'water-depth']) {
      expect(g[name].gt).toEqual([512000, 5, 0, 5874000, 0, -5]);
      expect(g[name].epsg).toBe(32633);
      expect(g[name].nodata).toBe(-9999);
    }
    expect(g['water-level'].count).toBe(rep.totals.wetCells);
    expect(g['water-depth'].count).toBe(W * H - 4);
    expect(Math.abs(g['water-depth'].sum * 25 - rep.water.ponded) / rep.water.ponded).toBeLessThan(1e-5);
    expect(g.epsg).toBe(32633);
    for (const p of rep.ponds) expect(g.areas[String(p.id)]).toBeCloseTo(p.area, 6);
    // GEOS (through OGR): every pond polygon valid; ogr2ogr converts the file to GeoPackage without a warning
    expect(g.invalid).toBe(0);
    expect(g.ogr2ogr).toEqual([0, '']);
  });

  it('--depth-raster on the DEM grid (in mm) gives the uniform result; a raster on another grid is resampled with a warning', () => {
    const a = JSON.parse(sill(['runoff', dem, '--depth', '40mm', '--json']).stdout);
    const r = sill(['runoff', dem, '--depth-raster', join(dir, 'rain-mm.tif'), '--depth-units', 'mm', '--json']);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    const b = JSON.parse(r.stdout);
    balanced(b);
    expect(b.runoff).toMatchObject({ mode: 'raster', raster: { unit: 'mm', resampled: false } });
    expect(b.water.ponded).toBeCloseTo(a.water.ponded, 6);
    expect(b.water.outflow).toBeCloseTo(a.water.outflow, 6);
    const c = sill(['runoff', dem, '--depth-raster', join(dir, 'rain-coarse.tif'), '--json']);
    expect(c.code).toBe(0);
    expect(c.stderr).toMatch(/^sill: warning: --depth-raster .*rain-coarse.tif is not on the DEM's grid .* resampled to the DEM's cells by nearest neighbour, and \d+ DEM cells outside it get none\n$/);
    const rc = JSON.parse(c.stdout);
    balanced(rc);
    expect(rc.runoff.raster.resampled).toBe(true);
    expect(rc.warnings).toHaveLength(1);
    // the coarse raster covers the west half (80 × 10 m = 800 m of the DEM's 1600 m): half the cells get water
    expect(rc.runoff.cells).toBe(W * H / 2 - 4);
  });

  it('--initial-level: starting from the water a run left, with no more runoff, nothing moves', () => {
    const out = join(dir, 'out-init');
    expect(sill(['runoff', dem, '--depth', '25mm', '-o', out, '--quiet']).code).toBe(0);
    const first = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    const r = sill(['runoff', dem, '--depth', '0mm', '--initial-level', join(out, 'water-level.tif'), '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    balanced(rep);
    expect(rep.runoff.initialLevel).toMatchObject({ wetCells: first.totals.wetCells });
    // the levels went through float32: the same water to float32 precision
    expect(Math.abs(rep.water.initial - first.water.ponded) / first.water.ponded).toBeLessThan(1e-5);
    expect(rep.water.outflow).toBeLessThan(1e-6 * first.water.ponded);
    expect(rep.counts.ponds).toBe(first.counts.ponds);
  });

  it('--stage-volume writes the table of a depression (ids as in sill ponds); the summary names the water and the caution', () => {
    const out = join(dir, 'out-stage');
    const r = sill(['runoff', dem, '--depth', '2in', '-o', out, '--stage-volume', '1']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/runoff\s+2in over every valid cell/);
    expect(r.stdout).toMatch(/water\s+input [\d.]+ m³\n\s+ponded [\d.]+ m³, outflow [\d.]+ m³/);
    expect(r.stdout).toMatch(/balance\s+input − ponded − outflow = .* relative error/);
    expect(r.stdout).toMatch(/depressions\s+\d+: \d+ full, \d+ partly filled, \d+ dry/);
    expect(r.stdout).toMatch(/largest ponds:\n  pond 1: /);
    expect(r.stdout).toMatch(/caution\s+Screening information/);
    expect(r.stdout).toMatch(/Euler .* holds/);
    const stage = readFileSync(join(out, 'stage-volume-1.csv'), 'utf8').trim().split('\n');
    expect(stage[0]).toBe('level_m,area_m2,volume_m3,cells');
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    const last = stage[stage.length - 1].split(',').map(Number);
    expect(last[0]).toBeCloseTo(rep.depressions[0].spillValue, 4);
    expect(last[2]).toBeCloseTo(rep.depressions[0].volume, 3);
    // the same depressions as sill ponds, by id
    const ponds = JSON.parse(sill(['ponds', dem, '--json']).stdout);
    expect(rep.depressions.map((d: { spillValue: number; volume: number }) => [d.spillValue, d.volume])).toEqual(ponds.depressions.map((d: { spillValue: number; volume: number }) => [d.spillValue, d.volume]));
  });

  it('--report writes report.html and the figures', () => {
    const out = join(dir, 'out-report');
    const r = sill(['runoff', dem, '--depth', '40mm', '-o', out, '--report', '--quiet']);
    expect(r.code).toBe(0);
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'map.svg', 'ponds.geojson', 'report.html', 'report.json', 'results.gpkg', 'runoff.csv', 'tree.svg', 'water-depth.tif', 'water-level.tif']);
    const html = readFileSync(join(out, 'report.html'), 'utf8');
    expect(html).toMatch(/Screening information/);
    expect(html).toContain('sill runoff');
    expect(html).toContain('--depth 40mm');
  });

  describe('bad input: exit 2, one line on stderr, nothing written', () => {
    const cases: [string, () => string[], RegExp][] = [
      ['no runoff given', () => ['runoff', dem], /say how much runoff to route: --depth D/],
      ['both depth and raster', () => ['runoff', dem, '--depth', '1mm', '--depth-raster', join(dir, 'rain-mm.tif')], /either --depth or --depth-raster/],
      ['negative depth', () => ['runoff', dem, '--depth=-5mm'], /cannot be negative/],
      ['depth without a unit', () => ['runoff', dem, '--depth', '25'], /give the unit/],
      ['unknown unit', () => ['runoff', dem, '--depth', '25 furlongs'], /unknown unit 'furlongs'/],
      ['unparseable depth', () => ['runoff', dem, '--depth', 'lots'], /not a depth with a unit/],
      ['non-finite depth', () => ['runoff', dem, '--depth', '1e999mm'], /not a finite depth/],
      ['bad raster unit', () => ['runoff', dem, '--depth-raster', join(dir, 'rain-mm.tif'), '--depth-units', 'cubits'], /--depth-units must be one of/],
      ['raster unit without a raster', () => ['runoff', dem, '--depth', '4mm', '--depth-units', 'mm'], /--depth-units names the unit of --depth-raster/],
      ['raster with no overlap', () => ['runoff', dem, '--depth-raster', join(dir, 'rain-far.tif')], /does not overlap the DEM/],
      ['negative runoff in the raster', () => ['runoff', dem, '--depth-raster', join(dir, 'rain-neg.tif')], /cell \(col 11, row 7\) holds a negative runoff depth/],
      ['missing raster', () => ['runoff', dem, '--depth-raster', join(dir, 'nope.tif')], /cannot read/],
      ['closed boundary', () => ['runoff', dem, '--depth', '4mm', '--boundary', 'closed'], /--boundary open/],
      ['persistence filter', () => ['runoff', dem, '--depth', '4mm', '--min-persistence', '1'], /--min-persistence does not apply/],
      ['--stage-volume of no depression', () => ['runoff', dem, '--depth', '4mm', '--stage-volume', '99999'], /--stage-volume 99999/],
    ];
    itRejects(cases, () => dir);
  });

  it('sill demo routes 40 mm over the demo DEM, with a report', () => {
    const out = join(dir, 'demo');
    const r = sill(['demo', '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(readFileSync(join(out, 'larkmoor-runoff', 'report.json'), 'utf8'));
    expect(rep.schema).toBe('sill/runoff@1');
    expect(rep.runoff.depthText).toBe('40mm');
    balanced(rep);
    expect(existsSync(join(out, 'larkmoor-runoff', 'report.html'))).toBe(true);
  });
});
