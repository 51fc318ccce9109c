/**
 * `ponds MOSAIC` tile by tile (src/cli/tiled.ts) against the same command on the mosaic assembled
 * in memory: every file both write is compared — the per-tile rasters and the VRTs byte for byte,
 * pour-points.geojson byte for byte, depressions.csv and report.json value for value (sums of
 * real numbers, which the tiled run adds in another order, to a relative 1e-12 as docs/tiles.md
 * allows); what the tiled run does not compute is null or empty there and listed in `notComputed`.
 *
 * Tiles: fixtures/mosaic (cut by GDAL's gdal_translate -srcwin, stitched by gdalbuildvrt:
 * tests/reference/make_mosaic_fixtures.py), and a larger mosaic with nodata holes cut here by GDAL.
 * The in-memory mosaic run itself equals GDAL's single grid and scikit-image (tests/cli/mosaic.test.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { sill, tempDir, listFiles } from './run.js';
import { MANIFEST } from '../../src/io/outdir.js';
import { PYTHON, runs, skipNote } from '../prereq.js';

const FIX = fileURLToPath(new URL('../../fixtures/mosaic/', import.meta.url));
const f = (p: string) => join(FIX, p);
const hasGdal = runs('gdal');
const TILED_KEYS = ['tiled', 'notComputed'];
const RASTERS = ['filled', 'depth', 'labels'];

let dir: string;
beforeAll(() => { dir = tempDir('sill-tiled-'); });
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(args: string[], env?: Record<string, string>): { code: number; stdout: string; stderr: string } {
  const r = sill(args, { env });
  expect(r.code, r.stderr).toBe(0);
  return r;
}

/** a and b equal, numbers to a relative 1e-12 (0 with 0); the path of the first difference, or null. */
function near(a: unknown, b: unknown, path = ''): string | null {
  if (typeof a === 'number' && typeof b === 'number') {
    return a === b || Math.abs(a - b) <= 1e-12 * Math.max(Math.abs(a), Math.abs(b)) ? null : `${path}: ${a} vs ${b}`;
  }
  if (a === null || b === null || typeof a !== 'object' || typeof b !== 'object') return a === b ? null : `${path}: ${JSON.stringify(a)} vs ${JSON.stringify(b)}`;
  if (Array.isArray(a) !== Array.isArray(b)) return `${path}: array vs object`;
  const ka = Object.keys(a).sort(), kb = Object.keys(b).sort();
  if (ka.join() !== kb.join()) return `${path}: keys ${ka} vs ${kb}`;
  for (const k of ka) {
    const d = near((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`);
    if (d) return d;
  }
  return null;
}

const NOT_COMPUTED_RECORD = ['catchmentCells', 'catchmentArea', 'perimeter', 'majorAxis', 'minorAxis', 'orientation', 'elongation', 'boxRatio', 'catchmentRatio'];
const NOT_COMPUTED_CSV = /^(catchment_|perimeter_|major_axis_|minor_axis_|orientation_deg|elongation|box_ratio)/;

/**
 * The tiled run `t` against the in-memory run `m` (both of the same mosaic and options): the files
 * the tiled run writes are a subset of the in-memory run's and equal to them; what it leaves out is
 * listed in notComputed. Returns the tiled report.
 */
function compareRuns(m: string, t: string): Record<string, unknown> {
  const tf = listFiles(t).filter((x) => x !== MANIFEST), mf = new Set(listFiles(m));
  for (const x of tf) expect(mf.has(x), `${x} is written by the in-memory run too`).toBe(true);
  expect(tf.filter((x) => x.endsWith('.tif')).length).toBe([...mf].filter((x) => /^(filled|depth|labels)\//.test(x)).length);
  // rasters, VRTs and pour points: byte for byte
  for (const x of tf) {
    if (x.endsWith('.tif') || x.endsWith('.vrt') || x === 'pour-points.geojson') expect(readFileSync(join(t, x)).equals(readFileSync(join(m, x))), x).toBe(true);
  }
  // depressions.csv: every column the tiled run computes, values to a relative 1e-12; the others empty
  const rows = (p: string) => readFileSync(join(p, 'depressions.csv'), 'utf8').trim().split('\n').map((l) => l.split(','));
  const a = rows(m), b = rows(t);
  expect(b[0]).toEqual(a[0]);
  expect(b.length).toBe(a.length);
  for (let i = 1; i < a.length; i++) {
    for (let j = 0; j < a[0].length; j++) {
      if (NOT_COMPUTED_CSV.test(a[0][j])) { expect(b[i][j], `${a[0][j]} of row ${i}`).toBe(''); continue; }
      const x = Number(a[i][j]), y = Number(b[i][j]);
      if (a[i][j] === b[i][j]) continue;
      expect(Number.isFinite(x) && Math.abs(x - y) <= 1e-12 * Math.abs(x), `${a[0][j]} of row ${i}: ${a[i][j]} vs ${b[i][j]}`).toBe(true);
    }
  }
  // report.json: the keys the tiled run computes equal the in-memory run's
  const rm = JSON.parse(readFileSync(join(m, 'report.json'), 'utf8')), rt = JSON.parse(readFileSync(join(t, 'report.json'), 'utf8'));
  expect(rm.mosaic.assembled).toBe(true);
  expect(rt.mosaic.assembled).toBe(false);
  expect(rt.notComputed.map((n: { what: string }) => n.what)).toEqual(['catchments', 'depression outlines', 'spill paths', 'shape attributes', 'results.gpkg']);
  for (const n of rt.notComputed as { files: string[] }[]) for (const file of n.files) expect(existsSync(join(t, file.replace(/\/$/, ''))), file).toBe(false);
  expect(rt.totals.offMap).toBe(null);
  expect(rt.totals.catchments).toBe(null);
  expect(rt.outlines).toBe(undefined);
  const tiledReport = { ...rt };
  for (const r of [rm, rt]) {
    delete r.mosaic.assembled;
    for (const k of [...TILED_KEYS, 'outlines']) delete r[k];
    for (const k of ['offMap', 'walledIn', 'catchments']) delete r.totals[k];
    for (const d of r.depressions) {
      for (const k of NOT_COMPUTED_RECORD) { if (r === rt) expect(d[k], k).toBe(null); delete d[k]; }
    }
  }
  expect(near(rt, rm)).toBe(null);
  return tiledReport;
}

/** Every file of two result folders byte for byte, the manifests (run id, time) and `skip` left out. */
function sameFiles(a: string, b: string, skip: string[] = []): void {
  const fa = listFiles(a).filter((x) => x !== MANIFEST && !skip.includes(x));
  expect(listFiles(b).filter((x) => x !== MANIFEST && !skip.includes(x))).toEqual(fa);
  for (const x of fa) expect(readFileSync(join(a, x)).equals(readFileSync(join(b, x))), x).toBe(true);
}

describe('ponds tile by tile equals ponds on the assembled mosaic (GDAL-cut fixture tiles: shared edges, abutting tiles, a gap)', () => {
  let mem: string, t1: string;
  beforeAll(() => {
    mem = join(dir, 'mem'); t1 = join(dir, 't1');
    run(['ponds', f('tiles.vrt'), '-o', mem, '--quiet']);
    run(['ponds', f('tiles.vrt'), '-o', t1, '--tiled', '--workers', '1', '--quiet']);
  });

  it('every file both write is equal; what the tiled run leaves out is listed in report.json', () => {
    const rep = compareRuns(mem, t1);
    expect(rep.tiled).toMatchObject({ why: 'asked', windows: 5 });
    expect(listFiles(t1).filter((x) => !x.includes('/'))).toEqual(
      ['.sill-manifest.json', 'depressions.csv', 'depth.vrt', 'filled.vrt', 'labels.vrt', 'pour-points.geojson', 'report.json']);
  });

  it('--workers 2 writes the same bytes as --workers 1; --label-level top and --nodata-as wall too', () => {
    const t2 = join(dir, 't2');
    run(['ponds', f('tiles'), '-o', t2, '--tiled', '--workers', '2', '--quiet']);
    sameFiles(t1, t2, ['report.json']);
    const r1 = JSON.parse(readFileSync(join(t1, 'report.json'), 'utf8')), r2 = JSON.parse(readFileSync(join(t2, 'report.json'), 'utf8'));
    r1.mosaic = r2.mosaic = r1.input = r2.input = null; // the folder vs the VRT
    expect(r2).toEqual(r1);
    for (const extra of [['--label-level', 'top', '--nodata-as', 'wall', '--connectivity', '4']]) {
      const m = join(dir, `mem${extra.join('')}`), a = join(dir, `w1${extra.join('')}`), b = join(dir, `w2${extra.join('')}`);
      run(['ponds', f('tiles.vrt'), '-o', m, '--quiet', ...extra]);
      run(['ponds', f('tiles.vrt'), '-o', a, '--tiled', '--workers', '1', '--quiet', ...extra]);
      run(['ponds', f('tiles.vrt'), '-o', b, '--tiled', '--workers', '2', '--quiet', ...extra]);
      compareRuns(m, a);
      sameFiles(a, b);
    }
  });

  it('a mosaic beyond the memory budget runs tile by tile on its own: one line on stderr, the same files', () => {
    const out = join(dir, 'budget');
    const r = run(['ponds', f('tiles.vrt'), '-o', out], { SILL_MEMORY_BYTES: String(64 * 2 ** 20) });
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/tiles\.vrt: analysed tile by tile \(the assembled mosaic would not fit the memory budget\); not computed: catchments, depression outlines, spill paths, shape attributes, results\.gpkg/);
    expect(r.stdout).toMatch(/^mosaic +5 tiles from a VRT, analysed tile by tile$/m);
    sameFiles(t1, out, ['report.json']);
    expect(JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')).tiled.why).toBe('memory');
    // --json without -o: the same report on stdout
    const j = run(['ponds', f('tiles.vrt'), '--json'], { SILL_MEMORY_BYTES: String(64 * 2 ** 20) });
    const rep = JSON.parse(j.stdout), want = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    expect(rep.depressions).toEqual(want.depressions);
    expect(rep.totals).toEqual(want.totals);
  });

  it('--run-dir keeps the stage files there; the labels are removed once written; the result is the same', () => {
    const out = join(dir, 'rundir-out'), rd = join(dir, 'rundir');
    run(['ponds', f('tiles.vrt'), '-o', out, '--tiled', '--run-dir', rd, '--quiet']);
    sameFiles(t1, out);
    expect(readdirSync(rd).sort()).toEqual([0, 1, 2, 3, 4].map((t) => `pass1-${t}.run`));
    // without --run-dir nothing is left beside the output folder
    expect(readdirSync(dir).filter((x) => x.startsWith('.sill'))).toEqual([]);
  });

  it.skipIf(!hasGdal)(`GDAL reads filled.vrt, depth.vrt and labels.vrt of the tiled run: size, transform, CRS, nodata, type and values of the in-memory run's${skipNote('gdal')}`, () => {
    // Source: GDAL's VRT driver (python3-gdal) reads both runs' VRTs
    const script = `
import json, sys
import numpy as np
from osgeo import gdal
gdal.UseExceptions()
out = {}
for name in ['filled', 'depth', 'labels']:
    a = gdal.Open(sys.argv[1] + '/' + name + '.vrt'); b = gdal.Open(sys.argv[2] + '/' + name + '.vrt')
    x = a.GetRasterBand(1).ReadAsArray(); y = b.GetRasterBand(1).ReadAsArray()
    out[name] = [[a.RasterXSize, a.RasterYSize], list(a.GetGeoTransform()), a.GetSpatialRef().GetAuthorityCode(None), a.GetRasterBand(1).GetNoDataValue(), gdal.GetDataTypeName(a.GetRasterBand(1).DataType),
                 [b.RasterXSize, b.RasterYSize], list(b.GetGeoTransform()), b.GetSpatialRef().GetAuthorityCode(None), b.GetRasterBand(1).GetNoDataValue(), gdal.GetDataTypeName(b.GetRasterBand(1).DataType),
                 int((~((x == y) | (np.isnan(x) & np.isnan(y)))).sum())]
print(json.dumps(out))
`;
    const py = spawnSync(PYTHON, ['-c', script, t1, mem], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const res = JSON.parse(py.stdout);
    for (const name of RASTERS) {
      const [size, gt, epsg, nd, type, size2, gt2, epsg2, nd2, type2, differ] = res[name];
      expect(size, name).toEqual([48, 40]);
      expect([size, gt, epsg, nd, type]).toEqual([size2, gt2, epsg2, nd2, type2]);
      expect(epsg).toBe('32633');
      expect(differ, name).toBe(0);
    }
  });
});

describe('bad input and failures of a tiled run: one line, nothing written', () => {
  it('options the tiled run cannot honour, and --tiled on one file, are refused before any work (exit 2)', () => {
    for (const [args, msg] of [
      [['--report'], /--report is not available tile by tile \(--tiled\): the report page draws the whole grid/],
      [['--stage-volume', '1'], /--stage-volume is not available tile by tile/],
      [['--workers', '0'], /--workers/],
    ] as [string[], RegExp][]) {
      const out = join(dir, `refused${args[0]}`);
      const r = sill(['ponds', f('tiles.vrt'), '--tiled', '-o', out, ...args]);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(msg);
      expect(existsSync(out)).toBe(false);
    }
    const r = sill(['ponds', f('single.tif'), '--tiled', '-o', join(dir, 'refused-single')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--tiled applies to a mosaic/);
  });

  it('a tile that cannot be decoded: exit 2, one line naming it, no output folder and no staging folder left', () => {
    const tiles = join(dir, 'damaged-tiles');
    cpSync(f('tiles'), tiles, { recursive: true });
    // the last tile's compressed strip overwritten: the header reads, the cells do not
    const e = join(tiles, 'e.tif'), b = readFileSync(e);
    b.fill(0x5a, b.length - 200, b.length - 20);
    writeFileSync(e, b);
    const parent = join(dir, 'damaged'), out = join(parent, 'out');
    mkdirSync(parent);
    for (const w of ['2']) {
      const r = sill(['ponds', tiles, '--tiled', '--workers', w, '-o', out]);
      expect(r.code).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(/e\.tif is truncated or damaged/);
      expect(readdirSync(parent)).toEqual([]);
    }
  });

  it('a run folder that cannot be written: exit 1, one line, no output folder', () => {
    const rd = join(dir, 'blocked-run');
    mkdirSync(join(rd, 'pass1-0.run', 'in-the-way'), { recursive: true });
    const parent = join(dir, 'blocked'), out = join(parent, 'out');
    mkdirSync(parent);
    const r = sill(['ponds', f('tiles.vrt'), '--tiled', '--workers', '1', '--run-dir', rd, '-o', out]);
    expect(r.code).toBe(1);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/cannot use the run folder .*blocked-run: .*pass1-0\.run.*; nothing in .*out was changed/);
    expect(readdirSync(parent)).toEqual([]);
  });
});

describe.skipIf(!hasGdal)(`a larger mosaic cut by GDAL: nodata holes on the seams, 3 × 3 tiles sharing edges and abutting${skipNote('gdal')}`, () => {
  it('tile by tile (2 workers) equals the in-memory mosaic run, with default options and with filters', () => {
    const src = join(dir, 'big');
    mkdirSync(src);
    // Source: GDAL — gdal_translate -srcwin cuts the tiles, gdalbuildvrt stitches them (invented terrain, seeded noise rounded to 0.05 for ties)
    const script = `
import sys, os, subprocess
import numpy as np
from osgeo import gdal, osr
gdal.UseExceptions()
d = sys.argv[1]
W, H = 150, 120
rng = np.random.default_rng(7)
r, c = np.mgrid[0:H, 0:W]
z = 80 + 6 * np.sin(c / 13.0) * np.cos(r / 17.0) + 2 * np.sin(c / 5.0 + r / 7.0) + np.round(rng.random((H, W)) / 0.05) * 0.05
z[40:47, 48:53] = -9999; z[70:80, 100:106] = -9999; z[10, 30:60] = -9999
s = osr.SpatialReference(); s.ImportFromEPSG(32633)
ds = gdal.GetDriverByName('GTiff').Create(d + '/dem.tif', W, H, 1, gdal.GDT_Float32)
ds.SetGeoTransform((400000.0, 2.0, 0.0, 5600000.0, 0.0, -2.0)); ds.SetProjection(s.ExportToWkt())
b = ds.GetRasterBand(1); b.SetNoDataValue(-9999); b.WriteArray(z.astype(np.float32)); ds = None
os.mkdir(d + '/tiles')
# columns 0-50 | 50-100 share column 50; 100-150 abuts; rows 0-45 | 45-90 share row 45; 90-120 abuts
cols = [(0, 51), (50, 50), (100, 50)]; rows = [(0, 46), (45, 45), (90, 30)]
for i, (y0, h) in enumerate(rows):
    for j, (x0, w) in enumerate(cols):
        subprocess.run(['gdal_translate', '-q', '-srcwin', str(x0), str(y0), str(w), str(h), '-co', 'COMPRESS=DEFLATE', d + '/dem.tif', '%s/tiles/t%d%d.tif' % (d, i, j)], check=True)
subprocess.run(['gdalbuildvrt', '-q', d + '/tiles.vrt'] + sorted(d + '/tiles/' + n for n in os.listdir(d + '/tiles')), check=True)
`;
    const py = spawnSync(PYTHON, ['-c', script, src], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const vrt = join(src, 'tiles.vrt');
    const m = join(dir, 'big-mem'), b = join(dir, 'big-w2');
    run(['ponds', vrt, '-o', m, '--quiet']);
    run(['ponds', vrt, '-o', b, '--tiled', '--workers', '2', '--quiet']);
    const rep = compareRuns(m, b) as { counts: { depressions: number }; tiled: { windows: number } };
    expect(rep.counts.depressions).toBeGreaterThan(50);
    expect(rep.tiled.windows).toBe(9);
    // filters, 6-connectivity, walls and a vertical unit: the same options on both paths
    const opts = ['--connectivity', '6', '--min-depth', '0.1', '--fill-only-below', '40', '--z-units', 'ft', '--nodata-as', 'wall'];
    const m2 = join(dir, 'big-mem-opts'), c = join(dir, 'big-tiled-opts');
    run(['ponds', vrt, '-o', m2, '--quiet', ...opts]);
    run(['ponds', vrt, '-o', c, '--tiled', '--workers', '2', '--quiet', ...opts]);
    compareRuns(m2, c);
  });
});
