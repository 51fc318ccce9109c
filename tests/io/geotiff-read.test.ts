import { describe, expect, it } from 'vitest';
import { fromFile } from 'geotiff';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parallelDecodingAvailable, readGeoTiff } from '../../src/io/geotiff-read.js';
import { InputError } from '../../src/errors.js';
import { expected, fixture, mismatches, recordedNodata, sillValue } from './helpers.js';

// Every fixture was written by GDAL from synthetic arrays and read back by GDAL
// (tests/reference/make_geotiff_fixtures.py); expected.json holds GDAL's reading.
const files = Object.entries(expected.files).filter(([name]) => !name.includes('inf.tif'));

describe(`GeoTIFF fixtures as GDAL ${expected.gdalVersion} reads them`, () => {
  it('covers every layout the reader must handle', () => {
    const names = Object.keys(expected.files);
    for (const t of ['byte', 'int8', 'uint16', 'int16', 'uint32', 'int32', 'float32', 'float64']) {
      expect(names).toContain(`${t}-strip-none.tif`);
      expect(names).toContain(`${t}-tile-deflate.tif`);
    }
    const comps = new Set(names.map((n) => expected.files[n].compression));
    expect([...comps].sort()).toEqual(['DEFLATE', 'LZW', 'PACKBITS', null]);
  });

  for (const [name, gdal] of files) {
    it(`${name}: size, transform, CRS, nodata and values`, async () => {
      const g = await readGeoTiff(fixture(name));
      const b = gdal.bands[0];
      expect([g.width, g.height]).toEqual([gdal.width, gdal.height]); // size as reported by GDAL RasterXSize/RasterYSize
      expect(g.transform).toEqual(gdal.geotransform); // transform as reported by GDAL GetGeoTransform()
      expect(g.crs?.epsg ?? null).toEqual(gdal.epsg); // EPSG as reported by GDAL GetSpatialRef().GetAuthorityCode(None)
      if (gdal.geographic !== null) expect(g.crs?.geographic).toBe(gdal.geographic); // GDAL IsGeographic()
      expect(g.nodata).toEqual(recordedNodata(b.nodata)); // nodata as reported by GDAL GetNoDataValue()
      // values as read by GDAL ReadAsArray(), nodata cells from GDAL's mask band
      expect(mismatches(g.values, b.values.map(sillValue))).toEqual([]);
      const wide = (b.dataType === 'Int32' || b.dataType === 'UInt32' || b.dataType === 'Float64');
      expect(g.values).toBeInstanceOf(wide ? Float64Array : Float32Array);
    });
  }

  it('reads bands 2 and 3 of pixel- and band-interleaved files', async () => {
    for (const name of ['bands3-pixel.tif', 'bands3-band.tif']) {
      const gdal = expected.files[name];
      expect(gdal.interleave).toBe(name.includes('pixel') ? 'PIXEL' : 'BAND'); // layout as reported by GDAL
      for (const band of [2, 3]) {
        const g = await readGeoTiff(fixture(name), { band });
        // values of that band as read by GDAL GetRasterBand(band).ReadAsArray()
        expect(mismatches(g.values, gdal.bands[band - 1].values.map(sillValue))).toEqual([]);
      }
    }
  });

  it('refuses a band that does not exist', async () => {
    await expect(readGeoTiff(fixture('bands3-pixel.tif'), { band: 4 })).rejects.toThrow(/has 3 bands; band 4 does not exist/);
    await expect(readGeoTiff(fixture('bands3-pixel.tif'), { band: 0 })).rejects.toBeInstanceOf(InputError);
  });

  it('shifts a PixelIsPoint tiepoint by half a cell, as GDAL does', async () => {
    for (const name of ['pixelispoint.tif', 'pixelispoint-rotated.tif']) {
      const gdal = expected.files[name];
      expect(gdal.areaOrPoint).toBe('Point'); // GDAL reports AREA_OR_POINT=Point for this file
      const g = await readGeoTiff(fixture(name));
      expect(g.transform).toEqual(gdal.geotransform); // corner-based transform as reported by GDAL GetGeoTransform()
      // The stored model origin is the centre of the first cell, half a cell away from GDAL's corner.
      const image = await (await fromFile(fixture(name))).getImage();
      const [ox, oy] = image.getOrigin();
      expect(ox).not.toBe(gdal.geotransform[0]);
      expect(oy).not.toBe(gdal.geotransform[3]);
    }
  });

  it('reads a geographic CRS with degrees as the unit', async () => {
    const g = await readGeoTiff(fixture('epsg4326.tif'));
    expect(g.crs).toMatchObject({ epsg: 4326, geographic: true, linearUnit: 'degree' }); // EPSG 4326 as reported by GDAL
    const p = await readGeoTiff(fixture('float32-strip-none.tif'));
    expect(p.crs).toMatchObject({ epsg: 32633, geographic: false, linearUnit: 'metre' }); // EPSG 32633 (UTM 33N, metres) as reported by GDAL
  });

  it('a user nodata value replaces the file’s', async () => {
    const name = 'int16-strip-none.tif';
    const gdal = expected.files[name].bands[0];
    const fileNodata = recordedNodata(gdal.nodata)!;
    const raw = gdal.values.map((v) => (v === null ? fileNodata : sillValue(v))); // GDAL's values, nodata cells holding GDAL's nodata value
    const chosen = raw[7];
    const g = await readGeoTiff(fixture(name), { nodata: chosen });
    expect(g.nodata).toBe(chosen);
    const want = raw.map((v) => (v === chosen ? NaN : v));
    expect(mismatches(g.values, want)).toEqual([]);
    expect(want.filter((v) => v === fileNodata).length).toBe(2); // the file's nodata cells are ordinary values now
  });

  it('compares float32 cells with a user nodata value rounded to float32', async () => {
    // GDAL masks the float32(0.1) cells of float32-nodata-inexact.tif whose nodata tag is the double 0.1
    // (expected.json); a user value is matched the same way.
    const gdal = expected.files['float32-nodata-inexact.tif'].bands[0];
    expect(gdal.values[0]).toBeNull();
    const name = 'float32-strip-none.tif';
    const v = sillValue(expected.files[name].bands[0].values[40]) as number; // a float32 value as read by GDAL
    const g = await readGeoTiff(fixture(name), { nodata: v + 4 * Number.EPSILON * Math.abs(v) }); // same float32, another double
    expect(Number.isNaN(g.values[40])).toBe(true);
    expect(g.validCount()).toBe(g.size - 1); // the user value replaces the file’s -9999
  });
});

describe('infinite cells', () => {
  const cellOf = (name: string, value: 'Infinity' | '-Infinity') => {
    const gdal = expected.files[name];
    const i = gdal.bands[0].values.indexOf(value); // position of the infinity as read by GDAL
    return { col: i % gdal.width, row: Math.floor(i / gdal.width), i };
  };

  it('are an error naming the file and the first offending cell', async () => {
    const { col, row } = cellOf('float32-posinf.tif', 'Infinity');
    const err = await readGeoTiff(fixture('float32-posinf.tif')).catch((e) => e);
    expect(err).toBeInstanceOf(InputError);
    expect(err.message).toContain('float32-posinf.tif');
    expect(err.message).toContain(`(col ${col}, row ${row})`);
    const n = cellOf('float64-neginf.tif', '-Infinity');
    await expect(readGeoTiff(fixture('float64-neginf.tif'))).rejects.toThrow(`(col ${n.col}, row ${n.row}) is -Infinity`);
  });

  it('are nodata when the nodata option is that infinity', async () => {
    const { i } = cellOf('float32-posinf.tif', 'Infinity');
    const g = await readGeoTiff(fixture('float32-posinf.tif'), { nodata: Infinity });
    const want = expected.files['float32-posinf.tif'].bands[0].values.map(sillValue).map((v) => (v === Infinity ? NaN : v));
    expect(Number.isNaN(g.values[i])).toBe(true);
    expect(mismatches(g.values, want)).toEqual([]); // other cells as read by GDAL
    await expect(readGeoTiff(fixture('float64-neginf.tif'), { nodata: Infinity })).rejects.toThrow(/-Infinity/);
    const h = await readGeoTiff(fixture('float64-neginf.tif'), { nodata: -Infinity });
    expect(h.validCount()).toBe(h.size - 1);
  });
});

describe('layouts sill does not read', () => {
  it('complex samples', async () => {
    expect(expected.unsupported['complex-cint16.tif'].dataType).toBe('CInt16'); // GDAL's data type for this file
    await expect(readGeoTiff(fixture('complex-cint16.tif'))).rejects.toThrow(/complex integer samples.*convert/);
  });

  it('1-bit samples', async () => {
    expect(expected.unsupported['onebit.tif'].nbits).toBe(1); // GDAL reports NBITS=1 for this file
    await expect(readGeoTiff(fixture('onebit.tif'))).rejects.toThrow(/1-bit unsigned integer samples/);
  });
});

// Files of fixtures/io/blocks/ hold 8–32 KiB per strip or tile (LZW through 12-bit codes and
// table clears, predictors over long rows, big-endian samples, pixel-interleaved bands); GDAL
// wrote them and recorded the SHA-256 of each band as its ReadAsArray() returns it
// (tests/reference/make_block_fixtures.py).
const BLOCKS = fileURLToPath(new URL('../../fixtures/io/blocks/', import.meta.url));
const blocks: {
  gdalVersion: string;
  files: Record<string, { compression: string | null; predictor: string | null; bands: { dataType: string; sha256: string }[] }>;
} = JSON.parse(readFileSync(join(BLOCKS, 'expected.json'), 'utf8'));

/** The band's values as GDAL's own sample type, little-endian: what the recorded hash covers. */
function gdalTyped(values: Float32Array | Float64Array, dataType: string): ArrayBufferView {
  switch (dataType) {
    case 'Byte': return Uint8Array.from(values);
    case 'Int16': return Int16Array.from(values);
    case 'UInt16': return Uint16Array.from(values);
    case 'Int32': return Int32Array.from(values);
    case 'UInt32': return Uint32Array.from(values);
    case 'Float32': return Float32Array.from(values);
    case 'Float64': return Float64Array.from(values);
    default: throw new Error(`no type ${dataType}`);
  }
}

function sha256(v: ArrayBufferView): string {
  return createHash('sha256').update(new Uint8Array(v.buffer, v.byteOffset, v.byteLength)).digest('hex');
}

function bytesOf(v: ArrayBufferView): Buffer {
  return Buffer.from(v.buffer, v.byteOffset, v.byteLength);
}

describe(`block decoders on larger files, as GDAL ${blocks.gdalVersion} reads them`, () => {
  for (const [name, gdal] of Object.entries(blocks.files)) {
    it(`${name} (${gdal.compression ?? 'uncompressed'}${gdal.predictor ? `, predictor ${gdal.predictor}` : ''})`, async () => {
      for (let band = 1; band <= gdal.bands.length; band++) {
        const g = await readGeoTiff(join(BLOCKS, name), { band, threads: 1 });
        // SHA-256 of the band as GDAL ReadAsArray() returns it (expected.json)
        expect(sha256(gdalTyped(g.values, gdal.bands[band - 1].dataType))).toBe(gdal.bands[band - 1].sha256);
      }
    });
  }
});

describe('parallel decoding', () => {
  it('is available (the worker is built: run npm run build before the tests)', () => {
    expect(parallelDecodingAvailable()).toBe(true);
  });

  // every fixture layout, every band: the values (bit for bit) or the error are the same on one thread and on three
  const cases: [string, number][] = [];
  for (const [name, gdal] of Object.entries(expected.files)) for (let b = 1; b <= gdal.bands.length; b++) cases.push([fixture(name), b]);
  for (const [name, gdal] of Object.entries(blocks.files)) for (let b = 1; b <= gdal.bands.length; b++) cases.push([join(BLOCKS, name), b]);
  it(`gives the same values as one thread on all ${cases.length} fixture bands`, async () => {
    for (const [path, band] of cases) {
      const one = await readGeoTiff(path, { band, threads: 1 }).catch((e: Error) => e);
      const many = await readGeoTiff(path, { band, threads: 3, parallelMinBytes: 0 }).catch((e: Error) => e);
      if (one instanceof Error) {
        expect(many, path).toBeInstanceOf(Error);
        expect((many as Error).message, path).toBe(one.message);
        continue;
      }
      expect(many, path).not.toBeInstanceOf(Error);
      const m = many as Awaited<ReturnType<typeof readGeoTiff>>;
      expect(m.values.constructor, path).toBe(one.values.constructor);
      expect(bytesOf(m.values).equals(bytesOf(one.values)), `${path} band ${band}`).toBe(true);
    }
  });

  it('names the same damaged block on one thread and on several', async () => {
    // a copy of a large LZW fixture whose second (last) strip is overwritten with codes that refer to undefined strings
    const src = readFileSync(join(BLOCKS, 'f32-strip-lzw.tif'));
    const first = (await readGeoTiff(join(BLOCKS, 'f32-strip-lzw.tif'), { threads: 1 })).values.length;
    expect(first).toBe(130 * 75);
    const dir = mkdtempSync(join(tmpdir(), 'sill-blocks-'));
    try {
      const tiff = await (await fromFile(join(BLOCKS, 'f32-strip-lzw.tif'))).getImage();
      const offsets = (await tiff.fileDirectory.loadValue(273)) as ArrayLike<number>; // StripOffsets
      const bad = Buffer.from(src);
      bad.fill(0xff, Number(offsets[1]) + 4, Number(offsets[1]) + 64); // 12-bit codes 4095 long before the table holds them
      const path = join(dir, 'damaged.tif');
      writeFileSync(path, bad);
      const one = await readGeoTiff(path, { threads: 1 }).catch((e: Error) => e);
      const many = await readGeoTiff(path, { threads: 2, parallelMinBytes: 0 }).catch((e: Error) => e);
      expect(one).toBeInstanceOf(InputError);
      expect((one as Error).message).toMatch(/is truncated or damaged: strip 2 of 2 cannot be decoded \(LZW data is damaged/);
      expect((many as Error).message).toBe((one as Error).message);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
