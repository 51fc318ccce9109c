import { afterAll, describe, expect, it } from 'vitest';
import { copyFileSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { loadSurface, detectFormat } from '../../src/io/load.js';
import { readGeoTiff } from '../../src/io/geotiff-read.js';
import { writeGeoTiff } from '../../src/io/geotiff-write.js';
import { checkGridUsable } from '../../src/io/validate.js';
import { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { InputError } from '../../src/errors.js';
import { expected, fixture, mismatches, sillValue, tempDir } from './helpers.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

function put(name: string, data: string | Uint8Array): string {
  const p = join(dir, name);
  writeFileSync(p, data);
  return p;
}

async function inputError(p: Promise<unknown>): Promise<string> {
  const err = await p.then(
    () => null,
    (e) => e,
  );
  expect(err).toBeInstanceOf(InputError);
  return (err as Error).message;
}

/**
 * A classic little-endian TIFF header and directory claiming a float32 image of the given
 * size in one strip, with `dataBytes` bytes of data actually present.
 */
function tiffClaiming(width: number, height: number, dataBytes = 16): Uint8Array {
  const entries: [number, number, number][] = [
    [256, 4, width], [257, 4, height], [258, 3, 32], [259, 3, 1], [262, 3, 1],
    [273, 4, 0 /* set below */], [277, 3, 1], [278, 4, height], [279, 4, 0xffffffff], [339, 3, 3],
  ];
  const ifdBytes = 2 + entries.length * 12 + 4;
  const dataStart = 8 + ifdBytes;
  entries[5][2] = dataStart;
  const out = new Uint8Array(dataStart + dataBytes);
  const dv = new DataView(out.buffer);
  out.set([0x49, 0x49]);
  dv.setUint16(2, 42, true);
  dv.setUint32(4, 8, true);
  dv.setUint16(8, entries.length, true);
  entries.forEach(([tag, type, value], k) => {
    const at = 10 + 12 * k;
    dv.setUint16(at, tag, true);
    dv.setUint16(at + 2, type, true);
    dv.setUint32(at + 4, 1, true);
    if (type === 3) dv.setUint16(at + 8, value, true);
    else dv.setUint32(at + 8, value, true);
  });
  return out;
}

describe('loadSurface chooses the reader', () => {
  it('by magic bytes, whatever the extension', async () => {
    const tif = put('dem.dat', readFileSync(fixture('float32-strip-none.tif')));
    expect(await detectFormat(tif)).toBe('geotiff');
    const g = (await loadSurface(tif)) as Grid;
    const gdal = expected.files['float32-strip-none.tif'];
    expect(g.transform).toEqual(gdal.geotransform); // as reported by GDAL GetGeoTransform()
    expect(mismatches(g.values, gdal.bands[0].values.map(sillValue))).toEqual([]); // as read by GDAL

    const npy = put('array.bin', readFileSync(fixture('numpy-f8-c.npy')));
    expect(await detectFormat(npy)).toBe('npy');
    const a = (await loadSurface(npy, { origin: [5, 5], spacing: [1, -1] })) as Grid;
    expect(mismatches(a.values, expected.npy['numpy-f8-c.npy'].values.map(sillValue))).toEqual([]); // as numpy.load returns them
  });

  it('by extension, then text', async () => {
    expect(await detectFormat(fixture('bigtiff-float32.tif'))).toBe('geotiff');
    const txt = put('samples.xyz', '# x y z\n0.13 0.71 4.5\n2.9 0.05 3.25\n1.7 2.33 1\n3.61 3.02 2.75\n');
    expect(await detectFormat(txt)).toBe('text');
    expect(await loadSurface(txt)).toBeInstanceOf(Mesh);
    const grid = put('grid.csv', 'x,y,z\n0,0,1\n1,0,2\n0,1,3\n1,1,4\n');
    const g = (await loadSurface(grid)) as Grid;
    expect(Array.from(g.values)).toEqual([3, 4, 1, 2]);
  });

  it('passes band and nodata to the GeoTIFF reader', async () => {
    const g = (await loadSurface(fixture('bands3-band.tif'), { band: 2 })) as Grid;
    const want = await readGeoTiff(fixture('bands3-band.tif'), { band: 2 });
    expect(mismatches(g.values, want.values)).toEqual([]);
    expect(mismatches(g.values, expected.files['bands3-band.tif'].bands[1].values.map(sillValue))).toEqual([]); // GDAL's band 2
  });

  it('refuses options that do not apply to the file', async () => {
    expect(await inputError(loadSurface(fixture('int16-strip-none.tif'), { origin: [0, 0] }))).toMatch(/carries its own georeferencing/);
    expect(await inputError(loadSurface(fixture('numpy-f8-c.npy'), { columns: [1, 2, 3] }))).toMatch(/columns apply only to x y value text/);
    const txt = put('m.txt', '1 2\n3 4\n');
    expect(await inputError(loadSurface(txt, { band: 2 }))).toMatch(/band 2 applies only to GeoTIFF/);
  });
});

describe('unreadable and malformed input', () => {
  it('a missing file or a folder: "cannot read FILE: reason"', async () => {
    const missing = join(dir, 'nope.tif');
    expect(await inputError(loadSurface(missing))).toBe(`cannot read ${missing}: no such file or directory`);
    const folder = join(dir, 'folder.tif');
    mkdirSync(folder);
    expect(await inputError(loadSurface(folder))).toBe(`cannot read ${folder}: it is a directory, not a file`);
  });

  it('not a TIFF', async () => {
    const p = put('fake.tif', 'x y z\n1 2 3\n');
    expect(await inputError(loadSurface(p))).toMatch(/fake\.tif is not a TIFF file \(it does not start with the TIFF byte-order mark/);
    const b = put('blob.bin', new Uint8Array([1, 2, 0, 4, 5, 0, 7]));
    expect(await inputError(loadSurface(b))).toMatch(/blob\.bin is a binary file that is not a GeoTIFF or a \.npy array/);
  });

  it('truncated TIFFs of every kind (cut in half, and inside the header)', async () => {
    for (const name of ['float32-strip-none.tif', 'float64-tile-deflate.tif', 'int16-strip-lzw.tif', 'bigtiff-float32.tif', 'float64-bigendian-300strips.tif']) {
      const bytes = readFileSync(fixture(name));
      const half = put(`half-${name}`, bytes.subarray(0, Math.floor(bytes.length / 2)));
      expect(await inputError(loadSurface(half))).toMatch(/is truncated or damaged: .*copy, download or export the file again/);
    }
    const bytes = readFileSync(fixture('float32-strip-none.tif'));
    expect(await inputError(loadSurface(put('cut6.tif', bytes.subarray(0, 6))))).toMatch(/ends inside the TIFF header/);
    expect(await inputError(loadSurface(put('cut40.tif', bytes.subarray(0, 40))))).toMatch(/image directory ends at byte/);
  });

  it('a header claiming 200000 × 200000 cells is refused before any allocation', async () => {
    const p = put('huge.tif', tiffClaiming(200_000, 200_000));
    const t0 = performance.now();
    const msg = await inputError(loadSurface(p));
    expect(msg).toMatch(/200000×200000 is 4\.000e\+10 cells, more than the limit/);
    expect(performance.now() - t0).toBeLessThan(2000);
  });

  it('a header claiming more cells than the file holds is refused before allocating them', async () => {
    // 30000 × 30000 float32 would need 3.6 GB; the file has 16 bytes of data
    const p = put('big-claim.tif', tiffClaiming(30_000, 30_000));
    const before = process.memoryUsage().arrayBuffers;
    expect(await inputError(loadSurface(p))).toMatch(/is truncated or damaged: strip 1 of 1 ends at byte/);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(100 * 1024 * 1024);
  });
});

describe('grids too small or empty', () => {
  const base = { transform: [0, 1, 0, 0, 0, -1] as [number, number, number, number, number, number], crs: null };

  it('1×1, 1×N and N×1 grids: "needs at least 2 rows and 2 columns"', async () => {
    const one = join(dir, 'one.tif');
    await writeGeoTiff(one, { ...base, width: 1, height: 1, values: new Float32Array([5]), nodata: null });
    expect(await inputError(loadSurface(one))).toBe(`${one}: the grid is too small (1 column × 1 row); it needs at least 2 rows and 2 columns`);
    const row = put('row.txt', '1 2 3 4 5\n');
    expect(await inputError(loadSurface(row))).toMatch(/too small \(5 columns × 1 row\); it needs at least 2 rows and 2 columns/);
    const col = put('col.txt', '1\n2\n3\n');
    expect(await inputError(loadSurface(col))).toMatch(/too small \(1 column × 3 rows\)/);
    const line = put('line.xyz', '0 0 1\n1 0 2\n2 0 3\n');
    expect(await inputError(loadSurface(line))).toMatch(/too small \(3 columns × 1 row\)/);
  });

  it('grids without a valid cell', async () => {
    const empty = join(dir, 'empty.tif');
    await writeGeoTiff(empty, { ...base, width: 3, height: 2, values: new Float32Array(6).fill(NaN), nodata: -9999 });
    expect(await inputError(loadSurface(empty))).toBe(
      `${empty}: the grid is empty: all 3×2 cells are nodata (nodata value -9999); it needs at least one cell with a value — check the nodata value and the band`,
    );
    const txt = put('nan.txt', 'nan nan\nnan nan\n');
    expect(await inputError(loadSurface(txt))).toMatch(/the grid is empty/);
  });

  it('checkGridUsable accepts a 2×2 grid with one value', () => {
    const g = new Grid({ width: 2, height: 2, values: new Float64Array([NaN, NaN, 1, NaN]) });
    expect(() => checkGridUsable(g, 'g')).not.toThrow();
    expect(() => checkGridUsable(new Grid({ width: 2, height: 1, values: new Float64Array([1, 2]) }), 'g')).toThrow(InputError);
  });
});

describe('detectFormat', () => {
  it('uses a copied fixture regardless of name', async () => {
    const p = join(dir, 'copy.TIFF');
    copyFileSync(fixture('byte-strip-none.tif'), p);
    expect(await detectFormat(p)).toBe('geotiff');
  });
});
