#!/usr/bin/python3
"""Regenerate fixtures/io/blocks/: GeoTIFFs large enough to exercise the block decoders, and
GDAL's reading of them (fixtures/io/blocks/expected.json).

Run with Debian's Python (needs python3-gdal and python3-numpy):

    /usr/bin/python3 tests/reference/make_block_fixtures.py

The small fixtures of make_geotiff_fixtures.py hold a few hundred bytes per strip or tile:
too few for LZW codes to grow past 9 bits or for its table to fill and be cleared. Here each
strip or tile holds 8–32 KiB of samples that are half smooth and half noise (an invented
surface of our own, seeded), so LZW runs through 9- to 12-bit codes and several table
clears, DEFLATE through several blocks, and predictors 2 and 3 through long rows. GDAL
writes every file and reads it back; expected.json records, per file and band, the SHA-256
of the band as GDAL's ReadAsArray() returns it (little-endian samples, row-major), which the
tests compare with the hash of what sill reads (every value here is finite: no nodata).
"""
import hashlib
import json
import os

import numpy as np
from osgeo import gdal

gdal.UseExceptions()

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.normpath(os.path.join(HERE, '..', '..', 'fixtures', 'io', 'blocks'))
W, H = 130, 75  # not multiples of the block sizes: partial tiles and a short last strip


def surface(dtype, seed):
    rng = np.random.RandomState(seed)
    r, c = np.mgrid[0:H, 0:W]
    smooth = 300 * np.sin(r / 11.0) * np.cos(c / 7.0) + 2 * r + c
    noise = rng.uniform(-1000, 1000, size=(H, W))
    z = np.where(c < W // 2, smooth, noise)
    if np.issubdtype(dtype, np.integer):
        return np.round(z).astype(dtype)
    return z.astype(dtype)


# name, numpy type, GDAL type, bands, creation options
FILES = [
    ('f32-strip-lzw.tif', np.float32, gdal.GDT_Float32, 1, ['COMPRESS=LZW', 'BLOCKYSIZE=40']),
    ('f32-strip-lzw-pred2.tif', np.float32, gdal.GDT_Float32, 1, ['COMPRESS=LZW', 'PREDICTOR=2', 'BLOCKYSIZE=40']),
    ('f32-tile-lzw-pred3.tif', np.float32, gdal.GDT_Float32, 1, ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64', 'COMPRESS=LZW', 'PREDICTOR=3']),
    ('f32-tile-deflate-pred3.tif', np.float32, gdal.GDT_Float32, 1, ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64', 'COMPRESS=DEFLATE', 'PREDICTOR=3']),
    ('f32-strip-packbits.tif', np.float32, gdal.GDT_Float32, 1, ['COMPRESS=PACKBITS', 'BLOCKYSIZE=40']),
    ('f32-tile-none.tif', np.float32, gdal.GDT_Float32, 1, ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=32']),
    ('f64-strip-lzw-pred3-bigendian.tif', np.float64, gdal.GDT_Float64, 1, ['COMPRESS=LZW', 'PREDICTOR=3', 'BLOCKYSIZE=20', 'ENDIANNESS=BIG']),
    ('f64-tile-deflate-bigendian.tif', np.float64, gdal.GDT_Float64, 1, ['TILED=YES', 'BLOCKXSIZE=32', 'BLOCKYSIZE=32', 'COMPRESS=DEFLATE', 'ENDIANNESS=BIG']),
    ('i16-strip-lzw-pred2-bigendian.tif', np.int16, gdal.GDT_Int16, 1, ['COMPRESS=LZW', 'PREDICTOR=2', 'BLOCKYSIZE=60', 'ENDIANNESS=BIG']),
    ('u16-tile-packbits.tif', np.uint16, gdal.GDT_UInt16, 1, ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64', 'COMPRESS=PACKBITS']),
    ('i32-strip-deflate-pred2.tif', np.int32, gdal.GDT_Int32, 1, ['COMPRESS=DEFLATE', 'PREDICTOR=2', 'BLOCKYSIZE=30']),
    ('i16-pixel3-lzw-pred2.tif', np.int16, gdal.GDT_Int16, 3, ['COMPRESS=LZW', 'PREDICTOR=2', 'INTERLEAVE=PIXEL', 'BLOCKYSIZE=40']),
    ('f32-pixel3-tile-deflate-pred3.tif', np.float32, gdal.GDT_Float32, 3, ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64', 'COMPRESS=DEFLATE', 'PREDICTOR=3', 'INTERLEAVE=PIXEL']),
    ('u8-band3-strip-lzw.tif', np.uint8, gdal.GDT_Byte, 3, ['COMPRESS=LZW', 'INTERLEAVE=BAND', 'BLOCKYSIZE=75']),
]


def main():
    os.makedirs(OUT, exist_ok=True)
    drv = gdal.GetDriverByName('GTiff')
    record = {'gdalVersion': gdal.__version__, 'numpyVersion': np.__version__, 'width': W, 'height': H, 'files': {}}
    for k, (name, dtype, gdt, bands, opts) in enumerate(FILES):
        path = os.path.join(OUT, name)
        if os.path.exists(path):
            os.remove(path)
        ds = drv.Create(path, W, H, bands, gdt, opts)
        ds.SetGeoTransform((600000.0, 5.0, 0.0, 5200000.0, 0.0, -5.0))
        for b in range(bands):
            data = surface(dtype, 100 * k + b)
            if dtype == np.uint8:
                data = (surface(np.int16, 100 * k + b) % 256).astype(np.uint8)
            elif dtype == np.uint16:
                data = (surface(np.int32, 100 * k + b) + 40000).astype(np.uint16)
            ds.GetRasterBand(b + 1).WriteArray(data)
        ds = None
        ds = gdal.Open(path)
        hashes = []
        for b in range(bands):
            a = ds.GetRasterBand(b + 1).ReadAsArray()
            le = a.astype(a.dtype.newbyteorder('<'))
            hashes.append({'dataType': gdal.GetDataTypeName(ds.GetRasterBand(b + 1).DataType),
                           'sha256': hashlib.sha256(le.tobytes()).hexdigest()})
        md = ds.GetMetadata('IMAGE_STRUCTURE')
        record['files'][name] = {'compression': md.get('COMPRESSION'), 'predictor': md.get('PREDICTOR'),
                                 'interleave': md.get('INTERLEAVE'),
                                 'blockSize': ds.GetRasterBand(1).GetBlockSize(), 'bands': hashes}
        ds = None
        print(name, os.path.getsize(path), 'bytes')
    with open(os.path.join(OUT, 'expected.json'), 'w') as f:
        json.dump(record, f, indent=1)
        f.write('\n')


if __name__ == '__main__':
    main()
