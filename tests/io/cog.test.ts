/**
 * Cloud Optimized GeoTIFF output of writeGeoTiff, checked from outside: GDAL (python3-gdal)
 * reports the tiling, compression, predictor and overview levels and reads the values; GDAL's
 * own COG validator accepts the files; overviews equal GDAL's `gdaladdo` on a plain copy where
 * every level halves exactly, and NumPy block means that skip nodata where sizes are odd.
 * Byte identity across thread counts and a fast-check round trip through sill's reader.
 */
import { afterAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { writeGeoTiff, type RasterToWrite, type RasterValues } from '../../src/io/geotiff-write.js';
import { readGeoTiff } from '../../src/io/geotiff-read.js';
import { runs, skipNote } from '../prereq.js';
import { mismatches, PYTHON, tempDir } from './helpers.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

/** A wavy surface with nodata holes: values that compress unevenly and average non-trivially. */
function surface<T extends RasterValues>(Ctor: new (n: number) => T, w: number, h: number, f: (c: number, r: number) => number, hole: number): T {
  const v = new Ctor(w * h);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const i = r * w + c;
      v[i] = (i * 2654435761) % 997 < 997 * 0.07 ? hole : f(c, r);
    }
  }
  return v;
}

interface Case {
  raster: RasterToWrite;
  /** How the overviews are checked: gdaladdo on a plain copy (sizes halve exactly) or NumPy block means. */
  check: 'gdaladdo' | 'blocks';
  mode: 'average' | 'nearest';
  dtype: string;
  bigTiff?: boolean;
}

const wave = (c: number, r: number) => 300 + 120 * Math.sin(c / 37) * Math.cos(r / 53) + ((c * 7 + r * 13) % 17) * 0.0625 + c * 1e-3;
const t: RasterToWrite['transform'] = [512000, 5, 0, 5874000, 0, -5];
const crs = { epsg: 32633 };

const cases: Record<string, Case> = {
  // even at every level: GDAL's own overviews of the same values are the reference
  'depth-f32-1536x1024.tif': {
    raster: { width: 1536, height: 1024, values: surface(Float32Array, 1536, 1024, wave, NaN), transform: t, crs, nodata: -9999 },
    check: 'gdaladdo', mode: 'average', dtype: 'float32',
  },
  'labels-i32-1536x1024.tif': {
    raster: { width: 1536, height: 1024, values: surface(Int32Array, 1536, 1024, (c, r) => 1 + (c >> 5) + 64 * (r >> 4), -1), transform: t, crs, nodata: -1 },
    check: 'gdaladdo', mode: 'nearest', dtype: 'int32',
  },
  // odd sizes: block means of the valid cells (the last row and column of blocks are cut)
  'level-f64-1100x1030.tif': {
    raster: { width: 1100, height: 1030, values: surface(Float64Array, 1100, 1030, wave, NaN), transform: [10, 0.001, 0, 50, 0, -0.001], crs: { epsg: 4326, geographic: true }, nodata: NaN },
    check: 'blocks', mode: 'average', dtype: 'float64',
  },
  'u16-average-1025x1023.tif': {
    raster: { width: 1025, height: 1023, values: surface(Uint16Array, 1025, 1023, (c, r) => Math.round(wave(c, r) * 100), 65535), transform: t, crs, nodata: 65535 },
    check: 'blocks', mode: 'average', dtype: 'uint16',
  },
  'i16-nearest-777x1299.tif': {
    raster: { width: 777, height: 1299, values: surface(Int16Array, 777, 1299, (c, r) => (c * 31 + r * 17) % 30000 - 15000, -32768), transform: t, crs, nodata: -32768 },
    check: 'blocks', mode: 'nearest', dtype: 'int16',
  },
  'u8-single-tile-300x200.tif': {
    raster: { width: 300, height: 200, values: surface(Uint8Array, 300, 200, (c, r) => (c + r) % 250, 255), transform: t, crs: null, nodata: 255 },
    check: 'blocks', mode: 'nearest', dtype: 'uint8',
  },
  'bigtiff-f32-700x600.tif': {
    raster: { width: 700, height: 600, values: surface(Float32Array, 700, 600, wave, NaN), transform: t, crs, nodata: -9999 },
    check: 'blocks', mode: 'average', dtype: 'float32', bigTiff: true,
  },
};

/** Little-endian raw bytes of the values as the file holds them (NaN written as the nodata value). */
function rawBytes(r: RasterToWrite): Buffer {
  const v = r.values.slice() as RasterValues;
  if ((v instanceof Float32Array || v instanceof Float64Array) && r.nodata !== null && !Number.isNaN(r.nodata)) {
    for (let i = 0; i < v.length; i++) if (v[i] !== v[i]) v[i] = r.nodata;
  }
  return Buffer.from(v.buffer, v.byteOffset, v.byteLength);
}

const hasGdal = runs('gdal');

// For each file: GDAL's structure report, its reading of every level, and the reference overviews.
const GDAL_CHECK = `
import json, subprocess, sys
import numpy as np
from osgeo import gdal
gdal.UseExceptions()
path, plain, raw, dtype, check, mode = sys.argv[1:7]
ds = gdal.Open(path)
b = ds.GetRasterBand(1)
info = gdal.Info(ds, format='json')
band = info['bands'][0]
st = ds.GetMetadata('IMAGE_STRUCTURE')
want = np.fromfile(raw, dtype=np.dtype(dtype).newbyteorder('<')).reshape(ds.RasterYSize, ds.RasterXSize)
got = b.ReadAsArray()
same = lambda a, c: bool(a.shape == c.shape and np.array_equal(a, c, equal_nan=(a.dtype.kind == 'f')))
nd = b.GetNoDataValue()
out = {
    'block': band['block'], 'compression': st.get('COMPRESSION'), 'predictor': st.get('PREDICTOR'),
    'overviews': [[o['size'][0], o['size'][1]] for o in band.get('overviews', [])],
    'bigtiff': open(path, 'rb').read(4)[2] == 43,
    'valuesEqual': same(got, want), 'nodata': None if nd is None else (str(nd) if nd != nd else nd),
}
levels = [b.GetOverview(k).ReadAsArray() for k in range(b.GetOverviewCount())]
if check == 'gdaladdo':
    factors = [str(2 ** (k + 1)) for k in range(len(levels))]
    subprocess.run(['gdaladdo', '-q', '-r', mode, plain] + factors, check=True)
    pds = gdal.Open(plain)   # keep the dataset alive while its band is used
    p = pds.GetRasterBand(1)
    ref = [p.GetOverview(k).ReadAsArray() for k in range(p.GetOverviewCount())]
else:
    ref = []
    prev = want
    for o in levels:
        h, w = prev.shape
        H, W = (h + 1) // 2, (w + 1) // 2
        if mode == 'nearest':
            cur = prev[::2, ::2]
        else:
            pad = np.full((2 * H, 2 * W), np.nan)
            pad[:h, :w] = prev
            valid = ~np.isnan(pad) & (pad != (np.nan if nd is None else nd))
            s = np.zeros((H, W)); n = np.zeros((H, W))
            for dy, dx in ((0, 0), (0, 1), (1, 0), (1, 1)):   # the writer's order: top-left, top-right, bottom-left, bottom-right
                s = s + np.where(valid[dy::2, dx::2], pad[dy::2, dx::2], 0)
                n = n + valid[dy::2, dx::2]
            mean = s / np.maximum(n, 1)
            if prev.dtype.kind in 'iu':
                mean = np.floor(mean + 0.5)
            fillv = nd if nd is not None else np.nan
            cur = np.where(n > 0, mean, fillv).astype(prev.dtype)
        ref.append(cur)
        prev = cur
out['overviewsEqual'] = [same(a, c) for a, c in zip(levels, ref)]
out['referenceLevels'] = len(ref)
print(json.dumps(out))
`;

describe.skipIf(!hasGdal)(`GDAL reads sill's Cloud Optimized GeoTIFFs${skipNote('gdal')}`, () => {
  for (const [name, c] of Object.entries(cases)) {
    it(`${name}: tiled, DEFLATE + predictor, overviews (${c.mode}), valid COG, values equal`, async () => {
      const path = join(dir, name);
      const plain = join(dir, `plain-${name}`);
      const raw = join(dir, `${name}.raw`);
      await writeGeoTiff(path, c.raster, { overviews: c.mode, bigTiff: c.bigTiff });
      await writeGeoTiff(plain, c.raster, { layout: 'strips' });
      writeFileSync(raw, rawBytes(c.raster));
      const run = spawnSync(PYTHON, ['-c', GDAL_CHECK, path, plain, raw, c.dtype, c.check, c.mode], { encoding: 'utf8' });
      expect(run.status, run.stderr).toBe(0);
      const g = JSON.parse(run.stdout);
      const { width: w, height: h } = c.raster;
      // GDAL's gdal.Info: block size, IMAGE_STRUCTURE metadata, overview sizes
      expect(g.block).toEqual([512, 512]);
      expect(g.compression).toBe('DEFLATE');
      expect(g.predictor).toBe(c.dtype.startsWith('float') ? '3' : '2');
      const sizes: number[][] = [];
      for (let ww = w, hh = h; ww > 512 || hh > 512; ) {
        ww = Math.ceil(ww / 2); hh = Math.ceil(hh / 2);
        sizes.push([ww, hh]);
      }
      expect(g.overviews).toEqual(sizes);
      expect(g.bigtiff).toBe(c.bigTiff === true);
      // GDAL ReadAsArray of the full image = the values in memory, bit for bit
      expect(g.valuesEqual).toBe(true);
      // every overview equals the reference: gdaladdo -r average|nearest on a plain copy, or NumPy block means
      expect(g.referenceLevels).toBe(sizes.length);
      expect(g.overviewsEqual).toEqual(sizes.map(() => true));
      // GDAL's COG validator (osgeo_utils.samples.validate_cloud_optimized_geotiff, python3-gdal)
      const v = spawnSync(PYTHON, ['-m', 'osgeo_utils.samples.validate_cloud_optimized_geotiff', path], { encoding: 'utf8' });
      expect(v.stdout + v.stderr).toMatch(/is a valid cloud optimized GeoTIFF/);
      expect(v.stdout).not.toMatch(/warnings were found/);
      expect(v.status).toBe(0);
    });
  }
});

describe("sill's reader", () => {
  it('reads back the BigTIFF and a raster of partial tiles exactly', async () => {
    for (const name of ['bigtiff-f32-700x600.tif', 'level-f64-1100x1030.tif']) {
      const c = cases[name];
      const path = join(dir, `reader-${name}`);
      await writeGeoTiff(path, c.raster, { overviews: c.mode, bigTiff: c.bigTiff });
      if (c.bigTiff) expect(readFileSync(path).readUInt16LE(2)).toBe(43); // the BigTIFF version number
      const g = await readGeoTiff(path);
      const nd = c.raster.nodata;
      const want = Array.from(c.raster.values, (v) => (v !== v || (nd !== null && v === nd) ? NaN : v));
      expect(mismatches(g.values, want), name).toEqual([]);
      expect(g.transform).toEqual(c.raster.transform);
    }
  });
});

describe('COG bytes do not depend on the threads', () => {
  it('1, 2 and 3 threads, and values already in shared memory, give the same file', async () => {
    const c = cases['depth-f32-1536x1024.tif'].raster;
    const labels = cases['labels-i32-1536x1024.tif'].raster;
    const sharedValues = new Float32Array(new SharedArrayBuffer(c.values.byteLength));
    sharedValues.set(c.values as Float32Array);
    for (const r of [c, labels]) {
      const files: Buffer[] = [];
      for (const threads of [1, 2, 3]) {
        const p = join(dir, `threads-${threads}.tif`);
        await writeGeoTiff(p, r, { threads });
        files.push(readFileSync(p));
      }
      if (r === c) {
        const p = join(dir, 'threads-shared.tif');
        await writeGeoTiff(p, { ...c, values: sharedValues }, { threads: 2 });
        files.push(readFileSync(p));
      }
      for (const f of files.slice(1)) expect(f.equals(files[0])).toBe(true);
    }
  });

  it('several rasters written at once come out as each written alone', async () => {
    const names = ['depth-f32-1536x1024.tif', 'labels-i32-1536x1024.tif', 'level-f64-1100x1030.tif'];
    await Promise.all(names.map((n) => writeGeoTiff(join(dir, `together-${n}`), cases[n].raster, { overviews: cases[n].mode, threads: 2 })));
    for (const n of names) {
      await writeGeoTiff(join(dir, `alone-${n}`), cases[n].raster, { overviews: cases[n].mode, threads: 1 });
      expect(readFileSync(join(dir, `together-${n}`)).equals(readFileSync(join(dir, `alone-${n}`)))).toBe(true);
    }
  });
});

/** Random rasters of every sample type, sizes across one and several tiles, NaN and nodata cells. */
const KINDS = ['f32', 'f64', 'i8', 'u8', 'i16', 'u16', 'i32', 'u32'] as const;
const CTORS: Record<(typeof KINDS)[number], new (n: number) => RasterValues> = {
  f32: Float32Array, f64: Float64Array, i8: Int8Array, u8: Uint8Array, i16: Int16Array, u16: Uint16Array, i32: Int32Array, u32: Uint32Array,
};
const RANGE: Record<string, [number, number]> = {
  i8: [-128, 127], u8: [0, 255], i16: [-32768, 32767], u16: [0, 65535], i32: [-2147483648, 2147483647], u32: [0, 4294967295],
};

describe('round trip through sill\'s reader (fast-check)', () => {
  it('every sample type, any size, values exact', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.constantFrom(...KINDS),
        fc.oneof(
          { arbitrary: fc.tuple(fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 40 })), weight: 3 },
          { arbitrary: fc.tuple(fc.integer({ min: 500, max: 800 }), fc.integer({ min: 1, max: 560 })), weight: 1 }, // several tiles, overviews
        ),
        fc.integer({ min: 0, max: 2 ** 31 - 1 }),
        fc.boolean(),
        fc.constantFrom('average', 'nearest') as fc.Arbitrary<'average' | 'nearest'>,
        async (kind, [w, h], seed, withNodata, overviews) => {
          const values = new CTORS[kind](w * h);
          let s = seed || 1;
          const next = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32);
          const float = kind === 'f32' || kind === 'f64';
          for (let i = 0; i < values.length; i++) {
            const u = next();
            if (float) values[i] = u < 0.05 ? NaN : u < 0.1 ? -0 : (next() - 0.5) * 10 ** Math.floor(next() * 12 - 4);
            else {
              const [lo, hi] = RANGE[kind];
              values[i] = u < 0.3 ? lo + ((i >> 3) % 7) : Math.floor(lo + next() * (hi - lo + 1));
            }
          }
          const nodata = withNodata ? (float ? -9999 : RANGE[kind][0]) : null;
          const r: RasterToWrite = { width: w, height: h, values, transform: [0, 1, 0, h, 0, -1], crs: null, nodata };
          const p = join(dir, `prop-${kind}.tif`);
          await writeGeoTiff(p, r, { overviews, threads: 1 + (seed % 2) });
          const g = await readGeoTiff(p);
          const want = Array.from(values, (v) => (v !== v || (nodata !== null && v === nodata) ? NaN : v));
          expect([g.width, g.height]).toEqual([w, h]);
          expect(mismatches(g.values, want)).toEqual([]);
        },
      ),
      { numRuns: 30 },
    );
  });
});
