/**
 * The rasters of `sill ponds -o` and `sill runoff -o` are Cloud Optimized GeoTIFFs: GDAL's COG
 * validator (python3-gdal) accepts each, GDAL reports 512 × 512 tiles, DEFLATE, the predictor
 * and the overview levels, and GDAL reads values equal to the library's in-memory rasters.
 * The files are byte-identical with --threads 1 and --threads 2.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { sill, tempDir } from './run.js';
import { PYTHON, runs, skipNote } from '../prereq.js';
import { writeGeoTiff, readGeoTiff } from '../../src/io/index.js';
import { pondsReport } from '../../src/report/ponds.js';
import { runoffReport } from '../../src/report/runoff.js';
import type { Grid } from '../../src/surface/grid.js';

const hasGdal = runs('gdal');
const W = 640, H = 520; // larger than a tile: one overview level

let dir: string;
let dem: string;

beforeAll(async () => {
  dir = tempDir('sill-cog-');
  // an invented rolling surface with pits at many scales, and a patch of nodata
  const v = new Float32Array(W * H);
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) {
      const h = Math.imul(r * 7919 + c * 104729, 2654435761) >>> 0;
      v[r * W + c] = 200 + 8 * Math.sin(c / 23) * Math.cos(r / 31) + 3 * Math.sin((c + 2 * r) / 7) + (h % 1000) / 2000 + 0.01 * c;
    }
  }
  for (let r = 300; r < 320; r++) for (let c = 400; c < 430; c++) v[r * W + c] = NaN;
  dem = join(dir, 'terrain.tif');
  await writeGeoTiff(dem, { width: W, height: H, values: v, transform: [512000, 2, 0, 5874000, 0, -2], crs: { epsg: 32633 }, nodata: -9999 });
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const GDAL_CHECK = `
import json, subprocess, sys
import numpy as np
from osgeo import gdal
gdal.UseExceptions()
out = {}
for path, raw, dtype in zip(sys.argv[1::3], sys.argv[2::3], sys.argv[3::3]):
    ds = gdal.Open(path)
    b = ds.GetRasterBand(1)
    st = ds.GetMetadata('IMAGE_STRUCTURE')
    a = b.ReadAsArray()
    want = np.fromfile(raw, dtype=dtype).reshape(a.shape)
    nd = b.GetNoDataValue()
    if a.dtype.kind == 'f':
        want = np.where(np.isnan(want), nd, want).astype(a.dtype)
    v = subprocess.run([sys.executable, '-m', 'osgeo_utils.samples.validate_cloud_optimized_geotiff', path], capture_output=True, text=True)
    out[path.split('/')[-1]] = {
        'block': b.GetBlockSize(), 'compression': st.get('COMPRESSION'), 'predictor': st.get('PREDICTOR'),
        'overviews': [[b.GetOverview(k).XSize, b.GetOverview(k).YSize] for k in range(b.GetOverviewCount())],
        'equal': bool(np.array_equal(a, want)), 'validator': v.returncode, 'validatorSays': v.stdout.strip().splitlines()[0] if v.stdout.strip() else v.stderr,
    }
print(json.dumps(out))
`;

/** The values as raw bytes, and their NumPy type. */
function raw(path: string, values: Float32Array | Float64Array | Int32Array): [string, string] {
  writeFileSync(path, Buffer.from(values.buffer, values.byteOffset, values.byteLength));
  return [path, values instanceof Float32Array ? 'float32' : values instanceof Float64Array ? 'float64' : 'int32'];
}

describe('raster outputs as Cloud Optimized GeoTIFFs', () => {
  it('ponds and runoff: the same bytes with --threads 1 and --threads 2', () => {
    for (const [cmd, files, extra] of [
      ['ponds', ['filled.tif', 'depth.tif', 'labels.tif', 'catchments.tif'], []],
      ['runoff', ['water-level.tif', 'water-depth.tif'], ['--depth', '40mm']],
    ] as const) {
      const one = join(dir, `${cmd}-1`), two = join(dir, `${cmd}-2`);
      for (const [out, threads] of [[one, '1'], [two, '2']]) {
        const r = sill([cmd, dem, ...extra, '-o', out, '--threads', threads, '--quiet']);
        expect(r.code, r.stderr).toBe(0);
      }
      for (const f of files) expect(readFileSync(join(one, f)).equals(readFileSync(join(two, f))), `${cmd} ${f}`).toBe(true);
    }
  });

  it('--threads must be a whole number from 1 up', () => {
    const r = sill(['ponds', dem, '--threads', '0', '-o', join(dir, 'bad-threads')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--threads must be at least 1/);
  });

  it.skipIf(!hasGdal)(`GDAL: valid COGs, tiled, DEFLATE, overviews, values equal to the library's${skipNote('gdal')}`, async () => {
    const grid = (await readGeoTiff(dem)) as Grid;
    const PR = pondsReport(grid, { catchments: 'raster' }, dem).result;
    const P = PR.rasters;
    const R = runoffReport(grid, { depth: 0.04 }, dem).result.rasters;
    const args = [
      join(dir, 'ponds-2', 'filled.tif'), ...raw(join(dir, 'filled.raw'), P.filled),
      join(dir, 'ponds-2', 'depth.tif'), ...raw(join(dir, 'depth.raw'), P.depth),
      join(dir, 'ponds-2', 'labels.tif'), ...raw(join(dir, 'labels.raw'), P.labels),
      join(dir, 'ponds-2', 'catchments.tif'), ...raw(join(dir, 'catchments.raw'), PR.catchments!.labels!),
      join(dir, 'runoff-2', 'water-level.tif'), ...raw(join(dir, 'level.raw'), R.level),
      join(dir, 'runoff-2', 'water-depth.tif'), ...raw(join(dir, 'wdepth.raw'), R.depth),
    ];
    const py = spawnSync(PYTHON, ['-c', GDAL_CHECK, ...args], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const g = JSON.parse(py.stdout);
    for (const name of ['filled.tif', 'depth.tif', 'labels.tif', 'catchments.tif', 'water-level.tif', 'water-depth.tif']) {
      const f = g[name];
      // GDAL's COG validator (osgeo_utils.samples.validate_cloud_optimized_geotiff)
      expect(f.validator, `${name}: ${f.validatorSays}`).toBe(0);
      expect(f.validatorSays).toMatch(/is a valid cloud optimized GeoTIFF/);
      // GDAL GetBlockSize, IMAGE_STRUCTURE metadata, GetOverview sizes
      expect(f.block).toEqual([512, 512]);
      expect(f.compression).toBe('DEFLATE');
      expect(f.predictor).toBe(name === 'labels.tif' || name === 'catchments.tif' ? '2' : '3');
      expect(f.overviews).toEqual([[320, 260]]);
      // GDAL ReadAsArray = the library's raster (NaN written as the nodata value)
      expect(f.equal, name).toBe(true);
    }
  });
});
