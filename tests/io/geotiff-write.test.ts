import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { writeGeoTiff, cogLevels, cogMayExceed4GiB, type RasterToWrite } from '../../src/io/geotiff-write.js';
import { readGeoTiff } from '../../src/io/geotiff-read.js';
import { hasGdal, mismatches, PYTHON, tempDir } from './helpers.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

/** Small rasters of every array type, with NaN cells in the float ones and varied georeferencing. */
function samples(): Record<string, RasterToWrite> {
  const w = 7;
  const h = 5;
  const f32 = new Float32Array(w * h).map((_, i) => Math.sin(i) * 100 + 0.125);
  f32[3] = NaN;
  const f64 = new Float64Array(w * h).map((_, i) => Math.cos(i * 0.7) * 1e5 + i / 3);
  f64[w * h - 1] = NaN;
  return {
    'f32.tif': { width: w, height: h, values: f32, transform: [512345.5, 2.5, 0, 4198765.25, 0, -2.5], crs: { epsg: 32633 }, nodata: -9999 },
    'f64-rotated-geographic.tif': {
      width: w, height: h, values: f64, transform: [12.25, 0.01, 0.002, 48.5, -0.001, -0.01], crs: { epsg: 4326, geographic: true }, nodata: -1e300,
    },
    'f32-nan-nodata.tif': { width: w, height: h, values: f32.slice(), transform: [0, 1, 0, 0, 0, 1], crs: null, nodata: NaN },
    'u8.tif': { width: w, height: h, values: new Uint8Array(w * h).map((_, i) => i * 7), transform: [100, 10, 0, 900, 0, -10], crs: { epsg: 3857 }, nodata: 0 },
    // nodata 13 is the same byte read signed or unsigned: GDAL 3.6 masks signed-byte bands by the raw byte.
    'i8.tif': { width: w, height: h, values: new Int8Array(w * h).map((_, i) => i * 7 - 120), transform: [100, 10, 0, 900, 0, -10], crs: { epsg: 32633 }, nodata: 13 },
    'i16.tif': { width: w, height: h, values: new Int16Array(w * h).map((_, i) => i * 900 - 15000), transform: [-50, 0.5, 0, 60, 0, -0.25], crs: { epsg: 25832 }, nodata: -15000 },
    'u16.tif': { width: w, height: h, values: new Uint16Array(w * h).map((_, i) => i * 1800), transform: [1, 2, 0, 3, 0, -4], crs: null, nodata: null },
    'i32.tif': { width: w, height: h, values: new Int32Array(w * h).map((_, i) => (i - 17) * 60_000_000), transform: [1, 2, 0, 3, 0, -4], crs: { epsg: 4326, geographic: true }, nodata: -2147483648 },
    'u32.tif': { width: w, height: h, values: new Uint32Array(w * h).map((_, i) => i * 120_000_000), transform: [1, 2, 0, 3, 0, 4], crs: { epsg: 32633 }, nodata: 4294967295 },
  };
}

/** What the file should read back as: the written values with nodata cells as NaN. */
function expectedValues(r: RasterToWrite): number[] {
  const nd = r.nodata;
  const f32 = r.values instanceof Float32Array;
  return Array.from(r.values, (v) => (v !== v || (nd !== null && v === (f32 ? Math.fround(nd) : nd)) ? NaN : v));
}

describe('writeGeoTiff', () => {
  const rasters = samples();

  for (const layout of ['cog', 'strips'] as const) {
    it(`round-trips values, transform, CRS and nodata through readGeoTiff (${layout})`, async () => {
      for (const [name, r] of Object.entries(rasters)) {
        const path = join(dir, `${layout}-${name}`);
        await writeGeoTiff(path, r, { layout });
        const g = await readGeoTiff(path);
        // readGeoTiff itself agrees with GDAL on every fixture layout (geotiff-read.test.ts)
        expect([g.width, g.height]).toEqual([r.width, r.height]);
        expect(g.transform).toEqual(r.transform);
        expect(g.crs?.epsg).toBe(r.crs?.epsg);
        if (r.crs) expect(g.crs?.geographic).toBe(r.crs.geographic === true);
        expect(g.nodata).toEqual(r.nodata);
        expect(mismatches(g.values, expectedValues(r)), name).toEqual([]);
      }
    });
  }

  it('leaves no temporary file behind', () => {
    expect(readdirSync(dir).filter((f) => f.endsWith('.tmp'))).toEqual([]);
  });

  it('removes the temporary file and writes nothing when writing fails at the start', async () => {
    class Failing extends Float32Array {
      override get buffer(): never {
        throw new Error('simulated failure while reading values');
      }
    }
    const values = new Failing(12);
    const target = join(dir, 'failed.tif');
    await expect(
      writeGeoTiff(target, { width: 4, height: 3, values, transform: [0, 1, 0, 3, 0, -1], crs: null, nodata: null }),
    ).rejects.toThrow('simulated failure');
    expect(existsSync(target)).toBe(false);
    expect(readdirSync(dir).filter((f) => f.includes('failed.tif'))).toEqual([]);
  });

  it('removes the temporary file when writing fails midway, with tiles in flight on worker threads', async () => {
    let calls = 0;
    class FailingLater extends Float32Array {
      override subarray(begin?: number, end?: number): Float32Array<ArrayBuffer> {
        if (++calls === 2) throw new Error('simulated failure in the second band');
        return super.subarray(begin, end);
      }
    }
    const w = 1100, h = 1030; // several tiles: encoded by the worker pool, full-resolution bands copied to shared memory
    const values = new FailingLater(w * h).map((_, i) => i % 1000);
    const target = join(dir, 'failed-later.tif');
    await expect(
      writeGeoTiff(target, { width: w, height: h, values, transform: [0, 1, 0, 3, 0, -1], crs: null, nodata: null }, { threads: 2 }),
    ).rejects.toThrow('simulated failure in the second band');
    expect(calls).toBe(2);
    expect(existsSync(target)).toBe(false);
    expect(readdirSync(dir).filter((f) => f.includes('failed-later.tif'))).toEqual([]);
  });

  it('reports a folder that cannot be written to', async () => {
    const r = rasters['u8.tif'];
    await expect(writeGeoTiff(join(dir, 'no', 'such', 'folder', 'x.tif'), r)).rejects.toThrow(/cannot write .*x\.tif: /);
  });

  it('plans a BigTIFF when the compressed file may pass 4 GiB', () => {
    // zlib's worst case for incompressible data is a little above the input size: a raster whose
    // raw tiles come near 4 GiB must be a BigTIFF; one well below must not.
    const header = 4096;
    expect(cogMayExceed4GiB(cogLevels(30000, 30000, true), 8, header)).toBe(true); // 7.2 GB of float64
    expect(cogMayExceed4GiB(cogLevels(32000, 32000, true), 4, header)).toBe(true); // 4.1 GB of float32 + overviews
    expect(cogMayExceed4GiB(cogLevels(25000, 25000, true), 4, header)).toBe(false); // 2.5 GB + 0.9 GB of overviews (padded tiles)
    expect(cogMayExceed4GiB(cogLevels(31000, 31000, false), 4, header)).toBe(false); // 3.9 GB, no overviews
    expect(cogMayExceed4GiB(cogLevels(10000, 10000, true), 4, header)).toBe(false);
  });

  it('lays out the overviews: halving (rounded up) until one tile holds the image', () => {
    const sizes = (w: number, h: number) => cogLevels(w, h, true).map((l) => [l.width, l.height]);
    expect(sizes(2000, 2000)).toEqual([[2000, 2000], [1000, 1000], [500, 500]]);
    expect(sizes(1100, 1030)).toEqual([[1100, 1030], [550, 515], [275, 258]]);
    expect(sizes(512, 512)).toEqual([[512, 512]]);
    expect(sizes(513, 3)).toEqual([[513, 3], [257, 2]]);
    expect(cogLevels(4000, 4000, false)).toHaveLength(1);
  });

  it('refuses malformed rasters', async () => {
    const bad = { width: 3, height: 2, values: new Float32Array(5), transform: [0, 1, 0, 0, 0, -1] as RasterToWrite['transform'], crs: null, nodata: null };
    await expect(writeGeoTiff(join(dir, 'bad.tif'), bad)).rejects.toThrow(/needs 6 values, got 5/);
    await expect(writeGeoTiff(join(dir, 'bad.tif'), { ...bad, values: new Float32Array(6), transform: [0, 1, 0, 0, 0, 0] })).rejects.toThrow(/singular/);
  });
});

// Live check: GDAL opens what writeGeoTiff wrote.
const GDAL_READ = `
import json, math, sys
import numpy as np
from osgeo import gdal
gdal.UseExceptions()
out = {}
for path in sys.argv[1:]:
    ds = gdal.Open(path)
    band = ds.GetRasterBand(1)
    arr = band.ReadAsArray()
    if band.GetMetadataItem('PIXELTYPE', 'IMAGE_STRUCTURE') == 'SIGNEDBYTE':
        arr = arr.view(np.int8)
    mask = band.GetMaskBand().ReadAsArray()
    srs = ds.GetSpatialRef()
    nd = band.GetNoDataValue()
    out[path] = {
        'geotransform': list(ds.GetGeoTransform()),
        'epsg': int(srs.GetAuthorityCode(None)) if srs is not None and srs.GetAuthorityCode(None) else None,
        'geographic': bool(srs.IsGeographic()) if srs is not None else None,
        'nodata': None if nd is None else ('nan' if math.isnan(nd) else nd),
        'values': [None if m == 0 or math.isnan(float(v)) else float(v) for v, m in zip(arr.ravel().tolist(), mask.ravel().tolist())],
    }
print(json.dumps(out))
`;

describe.skipIf(!hasGdal)(
  `GDAL reads files written by writeGeoTiff${hasGdal ? '' : ' (skipped: /usr/bin/python3 with osgeo.gdal is not installed)'}`,
  () => {
    it.each(['cog', 'strips'] as const)('with the same transform, EPSG code, nodata and values (%s)', async (layout) => {
      const rasters = samples();
      const paths = Object.keys(rasters).map((n) => join(dir, `gdal-${layout}-${n}`));
      await Promise.all(Object.values(rasters).map((r, i) => writeGeoTiff(paths[i], r, { layout })));
      const run = spawnSync(PYTHON, ['-c', GDAL_READ, ...paths], { encoding: 'utf8' });
      expect(run.status, run.stderr).toBe(0);
      const seen = JSON.parse(run.stdout);
      Object.values(rasters).forEach((r, i) => {
        const g = seen[paths[i]];
        expect(g.geotransform).toEqual(r.transform); // as reported by GDAL GetGeoTransform()
        expect(g.epsg).toBe(r.crs?.epsg ?? null); // as reported by GDAL GetSpatialRef().GetAuthorityCode(None)
        if (r.crs) expect(g.geographic).toBe(r.crs.geographic === true); // GDAL IsGeographic()
        expect(g.nodata).toEqual(r.nodata === null ? null : Number.isNaN(r.nodata) ? 'nan' : r.nodata); // GDAL GetNoDataValue()
        const want = expectedValues(r).map((v) => (Number.isNaN(v) ? null : v));
        expect(g.values, paths[i]).toEqual(want); // GDAL ReadAsArray() with GDAL's mask band
      });
    });
  },
);
