/**
 * `survey`, `ponds` and `runoff` on a mosaic: a .vrt, a folder of tiles, or several GeoTIFF paths.
 *
 * Fixtures (tests/reference/make_mosaic_fixtures.py): GDAL cut fixtures/mosaic/dem.tif into tiles
 * with gdal_translate -srcwin (shared edge rows and columns, abutting tiles, a gap), built tiles.vrt
 * with gdalbuildvrt, and assembled the same cells into one grid, single.tif (gdal_translate of the
 * VRT). A run on the mosaic must equal the run on GDAL's single grid: report.json (but for the
 * `mosaic` and `input` keys) and every raster cell for cell.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { sill, tempDir, itRejects, listFiles } from './run.js';
import { readGeoTiff } from '../../src/io/geotiff-read.js';
import { openMosaic } from '../../src/io/mosaic.js';
import { PYTHON, runs, skipNote } from '../prereq.js';

const FIX = fileURLToPath(new URL('../../fixtures/mosaic/', import.meta.url));
const f = (p: string) => join(FIX, p);
const TILES = ['a', 'b', 'c', 'd', 'e'];
const TILE_PATHS = TILES.map((n) => f(`tiles/${n}.tif`));
const hasGdal = runs('gdal');
const hasSkimage = runs('skimage');

let dir: string;
beforeAll(() => { dir = tempDir('sill-mosaic-'); });
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** report.json without the keys that name the input. */
function reportOf(out: string): Record<string, unknown> {
  const r = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
  delete r.mosaic;
  delete r.input;
  return r;
}

function same(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let bad = 0;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i] && !(a[i] !== a[i] && b[i] !== b[i])) bad++;
  return bad + Math.abs(a.length - b.length);
}

/** Each per-tile raster of `out/name/` equals the same cells of the single-grid `ref/name.tif`, with the tile's own geotransform. */
async function checkTiles(out: string, ref: string, name: string): Promise<void> {
  const whole = await readGeoTiff(join(ref, `${name}.tif`));
  const m = await openMosaic([f('tiles.vrt')]);
  for (const t of m.tiles) {
    const g = await readGeoTiff(join(out, name, `${t.name}.tif`));
    expect([g.width, g.height]).toEqual([t.width, t.height]);
    expect(g.transform).toEqual((await readGeoTiff(t.path)).transform);
    expect(g.crs?.epsg).toBe(32633);
    const want = new Float64Array(t.width * t.height);
    for (let r = 0; r < t.height; r++) for (let c = 0; c < t.width; c++) want[r * t.width + c] = whole.values[(t.row0 + r) * whole.width + t.col0 + c];
    expect(same(g.values, want), `${name}/${t.name}.tif`).toBe(0);
  }
  // sill reads its own VRT back as a mosaic: the whole product, cell for cell
  const back = await openMosaic([join(out, `${name}.vrt`)]);
  expect(same(await back.readWindow({ col0: 0, row0: 0, width: back.width, height: back.height }), whole.values)).toBe(0);
}

/** GDAL (python3-gdal) reads `out/name.vrt` and `ref/name.tif`: size, geotransform, CRS, nodata, type and every value. */
function gdalCompare(out: string, ref: string, names: string[]): void {
  const script = `
import json, sys
import numpy as np
from osgeo import gdal
gdal.UseExceptions()
res = {}
for name in sys.argv[3:]:
    v = gdal.Open(sys.argv[1] + '/' + name + '.vrt'); s = gdal.Open(sys.argv[2] + '/' + name + '.tif')
    a = v.GetRasterBand(1).ReadAsArray(); b = s.GetRasterBand(1).ReadAsArray()
    res[name] = {'size': [v.RasterXSize, v.RasterYSize], 'refSize': [s.RasterXSize, s.RasterYSize],
                 'gt': list(v.GetGeoTransform()), 'refGt': list(s.GetGeoTransform()),
                 'epsg': v.GetSpatialRef().GetAuthorityCode(None), 'nodata': v.GetRasterBand(1).GetNoDataValue(), 'refNodata': s.GetRasterBand(1).GetNoDataValue(),
                 'type': gdal.GetDataTypeName(v.GetRasterBand(1).DataType), 'refType': gdal.GetDataTypeName(s.GetRasterBand(1).DataType),
                 'differ': int((~((a == b) | (np.isnan(a) & np.isnan(b)))).sum()), 'cells': int(a.size)}
print(json.dumps(res))
`;
  const py = spawnSync(PYTHON, ['-c', script, out, ref, ...names], { encoding: 'utf8' });
  expect(py.status, py.stderr).toBe(0);
  const res = JSON.parse(py.stdout);
  for (const name of names) {
    const g = res[name];
    expect(g.size, name).toEqual([48, 40]);
    expect(g.size).toEqual(g.refSize);
    expect(g.gt).toEqual(g.refGt);
    expect(g.epsg).toBe('32633');
    expect(g.nodata).toBe(g.refNodata);
    expect(g.type).toBe(g.refType);
    expect(g.cells).toBe(48 * 40);
    expect(g.differ, name).toBe(0);
  }
}

describe('ponds on a mosaic equals ponds on the single grid GDAL assembled', () => {
  let single: string;
  beforeAll(() => {
    single = join(dir, 'ponds-single');
    expect(sill(['ponds', f('single.tif'), '-o', single, '--quiet']).code).toBe(0);
  });
  const forms: [string, () => string[]][] = [
    ['the VRT', () => [f('tiles.vrt')]],
    ['the folder', () => [f('tiles')]],
    ['the paths', () => [...TILE_PATHS].reverse()],
  ];
  for (const [what, args] of forms) {
    it(`${what}: report.json, depressions.csv and .geojson equal; a GeoTIFF a tile and a VRT per raster, cell for cell`, async () => {
      const out = join(dir, `ponds-${what.replace(/\W+/g, '-')}`);
      const r = sill(['ponds', ...args(), '-o', out, '--quiet']);
      expect(r.code, r.stderr).toBe(0);
      expect(r.stderr).toBe('');
      expect(listFiles(out)).toEqual([
        '.sill-manifest.json', 'depressions.csv', 'depressions.geojson', 'pour-points.geojson', 'spill-paths.geojson', 'catchments.geojson', 'report.json', 'results.gpkg',
        ...['filled', 'depth', 'labels', 'catchments'].flatMap((p) => [...TILES.map((t) => `${p}/${t}.tif`), `${p}.vrt`]),
      ].sort());
      expect(reportOf(out)).toEqual(reportOf(single));
      expect(readFileSync(join(out, 'depressions.csv'), 'utf8')).toBe(readFileSync(join(single, 'depressions.csv'), 'utf8'));
      for (const file of ['depressions.geojson', 'pour-points.geojson', 'spill-paths.geojson']) expect(readFileSync(join(out, file), 'utf8'), file).toBe(readFileSync(join(single, file), 'utf8'));
      const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
      expect(rep.mosaic.tileCount).toBe(5);
      expect(rep.mosaic.tiles.map((t: { name: string; width: number; height: number }) => [t.name, t.width, t.height]))
        .toEqual([['a', 25, 21], ['b', 24, 21], ['c', 20, 20], ['d', 28, 10], ['e', 20, 10]]);
      for (const name of ['filled', 'depth', 'labels', 'catchments']) await checkTiles(out, single, name);
    });
  }

  it.skipIf(!hasGdal)(`GDAL reads filled.vrt, depth.vrt, labels.vrt and catchments.vrt back: size, transform, CRS, nodata, type and values of the single-grid run${skipNote('gdal')}`, () => {
    const out = join(dir, 'ponds-gdal');
    expect(sill(['ponds', f('tiles.vrt'), '-o', out, '--quiet']).code).toBe(0);
    // Source: GDAL's VRT driver (python3-gdal)
    gdalCompare(out, single, ['filled', 'depth', 'labels', 'catchments']);
  });

  it('filled DEM equals scikit-image reconstruction by erosion of the mosaic read through GDAL (committed reference)', async () => {
    const out = join(dir, 'ponds-sk');
    expect(sill(['ponds', f('tiles.vrt'), '-o', out, '--quiet']).code).toBe(0);
    // Source: skimage.morphology.reconstruction of tiles.vrt read by GDAL's VRT driver
    // (fixtures/mosaic/filled-reference.json, tests/reference/make_mosaic_fixtures.py; versions inside)
    const ref = JSON.parse(readFileSync(f('filled-reference.json'), 'utf8'));
    const m = await openMosaic([join(out, 'filled.vrt')]);
    const v = await m.readWindow({ col0: 0, row0: 0, width: 48, height: 40 });
    let bad = 0;
    for (let i = 0; i < v.length; i++) if (ref.filled[i] === null ? v[i] === v[i] : v[i] !== ref.filled[i]) bad++;
    expect(bad).toBe(0);
  });

  it.skipIf(!hasSkimage || !hasGdal)(`filled DEM equals scikit-image reconstruction by erosion of the mosaic (live)${skipNote('skimage')}`, () => {
    const out = join(dir, 'ponds-sk-live');
    expect(sill(['ponds', f('tiles'), '-o', out, '--quiet']).code).toBe(0);
    // Source: skimage.morphology.reconstruction, 3×3 footprint, frame and nodata seeded as outlets; both rasters read by GDAL's VRT driver
    const script = `
import sys, numpy as np
from osgeo import gdal
from skimage.morphology import reconstruction
z = gdal.Open(sys.argv[1]).ReadAsArray().astype(np.float64)
f = gdal.Open(sys.argv[2] + '/filled.vrt').ReadAsArray().astype(np.float64)
valid = z != -9999
lo, hi = z[valid].min() - 1, z[valid].max() + 1
m = np.full((z.shape[0] + 2, z.shape[1] + 2), lo); m[1:-1, 1:-1] = np.where(valid, z, lo)
seed = np.full_like(m, hi); seed[0, :] = m[0, :]; seed[-1, :] = m[-1, :]; seed[:, 0] = m[:, 0]; seed[:, -1] = m[:, -1]
seed[1:-1, 1:-1][~valid] = lo
ref = reconstruction(seed, m, method='erosion', footprint=np.ones((3, 3)))[1:-1, 1:-1]
print(int((np.float32(ref[valid]) != np.float32(f[valid])).sum()), int((f[~valid] != -9999).sum()))
`;
    const py = spawnSync(PYTHON, ['-c', script, f('tiles.vrt'), out], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    expect(py.stdout.trim()).toBe('0 0');
  });
});

describe('survey and runoff on a mosaic', () => {
  it('survey on the VRT: report.json equals the single grid\'s; --json carries the mosaic key', () => {
    const a = join(dir, 'survey-vrt'), b = join(dir, 'survey-single');
    expect(sill(['survey', f('tiles.vrt'), '-o', a, '--quiet']).code).toBe(0);
    expect(sill(['survey', f('single.tif'), '-o', b, '--quiet']).code).toBe(0);
    expect(reportOf(a)).toEqual(reportOf(b));
    for (const file of ['critical-points.csv', 'critical-points.geojson', 'merge-tree.json']) {
      expect(readFileSync(join(a, file), 'utf8'), file).toBe(readFileSync(join(b, file), 'utf8'));
    }
    const j = sill(['survey', f('tiles'), '--json']);
    expect(j.code).toBe(0);
    const rep = JSON.parse(j.stdout);
    expect(rep.mosaic.kind).toBe('folder');
    expect(rep.surface.width).toBe(48);
  });

  it('runoff on the folder: report.json and runoff.csv equal; water-level/ and water-depth/ per tile equal the single grid\'s rasters', async () => {
    const a = join(dir, 'runoff-folder'), b = join(dir, 'runoff-single');
    const ra = sill(['runoff', f('tiles'), '--depth', '30mm', '-o', a, '--quiet']);
    expect(ra.code, ra.stderr).toBe(0);
    expect(sill(['runoff', f('single.tif'), '--depth', '30mm', '-o', b, '--quiet']).code).toBe(0);
    expect(reportOf(a)).toEqual(reportOf(b));
    expect(readFileSync(join(a, 'runoff.csv'), 'utf8')).toBe(readFileSync(join(b, 'runoff.csv'), 'utf8'));
    for (const name of ['water-level', 'water-depth']) await checkTiles(a, b, name);
    if (hasGdal) gdalCompare(a, b, ['water-level', 'water-depth']); // Source: GDAL's VRT driver
  });

  it('--report on a mosaic works on the assembled grid and lists the VRTs', () => {
    const out = join(dir, 'report');
    const r = sill(['ponds', f('tiles.vrt'), '-o', out, '--report', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const html = readFileSync(join(out, 'report.html'), 'utf8');
    expect(html).toContain('filled.vrt');
    expect(existsSync(join(out, 'map.svg'))).toBe(true);
  });

  it('the summary names the per-tile folders with their counts', () => {
    const out = join(dir, 'summary');
    const r = sill(['ponds', f('tiles.vrt'), '-o', out]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^mosaic +5 tiles from a VRT, assembled into one grid in memory$/m);
    expect(r.stdout).toMatch(/files +.*catchments\/ \(5 files\) filled\/ \(5 files\) depth\/ \(5 files\) labels\/ \(5 files\) .*catchments\.vrt filled\.vrt depth\.vrt labels\.vrt/);
  });
});

describe('bad mosaics: one line, exit 2, nothing written', () => {
  const a = f('tiles/a.tif');
  itRejects([
    ['different CRS', () => ['ponds', a, f('bad/crs.tif')], /^sill: .*crs\.tif: its CRS EPSG:32634 differs from EPSG:32633/],
    ['different cell size', () => ['ponds', a, f('bad/cellsize.tif')], /cellsize\.tif: its cell size 10 × -10 differs/],
    ['different type', () => ['survey', a, f('bad/type.tif')], /type\.tif: its sample type Int16 differs from Float32/],
    ['half-cell offset', () => ['ponds', a, f('bad/halfcell.tif')], /halfcell\.tif: its origin .* lies 0\.5 cell across/],
    ['conflicting overlap', () => ['runoff', a, f('bad/conflict.tif'), '--depth', '1mm'],
      /tiles .*a\.tif and .*conflict\.tif overlap with different values: at cell \(24, 7\) of the mosaic, x 512122\.5, y 5873962\.5, a has 46\.4 and conflict has 46\.9 \(difference 0\.5\)/],
    ['unreadable tile', () => ['ponds', a, f('bad/truncated.tif')], /truncated\.tif is truncated or damaged/],
    ['VRT with scaling', () => ['ponds', f('bad/scaled.vrt')], /scaled\.vrt: scaling of source values .* is not supported/],
    ['VRT with resampling', () => ['ponds', f('bad/resampled.vrt')], /resampled\.vrt: a source resampled from 25×21 to 50×42 cells/],
    ['VRT with a derived band', () => ['survey', f('bad/derived.vrt')], /derived\.vrt: a VRTRasterBand of subClass VRTDerivedRasterBand/],
    ['text options on a mosaic', () => ['ponds', f('tiles'), '--spacing', '1,1'], /--spacing applies to text and \.npy input/],
  ], () => dir);

  it('a mosaic too large for memory when assembled: one line saying so (runoff; ponds runs tile by tile then, tests/cli/tiled.test.ts)', () => {
    const out = join(dir, 'budget');
    const r = sill(['runoff', f('tiles.vrt'), '--depth', '30mm', '-o', out], { env: { SILL_MEMORY_BYTES: String(64 * 2 ** 20) } });
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/tiles\.vrt: runoff on 1 920 cells needs about .* the mosaic's 5 tiles are assembled into one grid in memory for runoff/);
    expect(existsSync(out)).toBe(false);
  });

  it('a tile inside the output folder where a result goes is refused before any work', () => {
    const out = join(dir, 'inside');
    expect(sill(['ponds', f('tiles.vrt'), '-o', out, '--quiet']).code).toBe(0);
    mkdirSync(join(dir, 'elsewhere'));
    copyFileSync(f('tiles/a.tif'), join(dir, 'elsewhere', 'a.tif'));
    // the per-tile filled rasters of the last run as the tiles of a new run into the same folder
    const r = sill(['ponds', join(out, 'filled.vrt'), '-o', out]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/is inside the output folder .* where this run writes its filled/);
    expect(listFiles(join(out, 'filled'))).toEqual(TILES.map((t) => `${t}.tif`));
  });
});
