#!/usr/bin/python3
"""Regenerate the raster fixtures under fixtures/io/ and GDAL's reading of them.

Run with Debian's Python (needs python3-gdal and python3-numpy):

    /usr/bin/python3 tests/reference/make_geotiff_fixtures.py

Every GeoTIFF here is written by GDAL from small synthetic arrays made below (ramps
and smooth functions of our own, with a few cells set to nodata). After writing, each
file is opened again with GDAL and what GDAL reports (geotransform, EPSG code, nodata
value, mask and values) is stored in fixtures/io/expected.json. The TypeScript tests
compare sill's reader with that record, so GDAL is the outside reference.

Two .npy files are written by numpy (numpy.save / numpy.lib.format.write_array), with
the arrays numpy reads back from them, as the outside reference for the .npy reader.
"""
import json
import math
import os
import sys

import numpy as np
from osgeo import gdal, osr

gdal.UseExceptions()

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.normpath(os.path.join(HERE, '..', '..', 'fixtures', 'io'))

W, H = 33, 17  # wide enough for several 16×16 tiles and several 4-row strips
GT_MAIN = (512345.5, 2.5, 0.0, 4198765.25, 0.0, -2.5)

GDT = {
    'Byte': gdal.GDT_Byte,
    'Int8': gdal.GDT_Byte,  # GDAL 3.6 has no Int8 type: a signed byte is Byte + PIXELTYPE=SIGNEDBYTE
    'UInt16': gdal.GDT_UInt16,
    'Int16': gdal.GDT_Int16,
    'UInt32': gdal.GDT_UInt32,
    'Int32': gdal.GDT_Int32,
    'Float32': gdal.GDT_Float32,
    'Float64': gdal.GDT_Float64,
    'CInt16': gdal.GDT_CInt16,
}

NODATA = {
    'Byte': 255,
    'Int8': 127,  # the same byte read signed or unsigned, so GDAL 3.6's mask (which compares raw bytes) agrees
    'UInt16': 65535,
    'Int16': -32768,
    'UInt32': 4294967295,
    'Int32': -2147483648,
    'Float32': -9999.0,
    'Float64': -1e300,
}


def ramp(h, w):
    r, c = np.mgrid[0:h, 0:w]
    return r * 5 + c * 3  # 0 … 176 on 17×33


def make_array(dtype, h=H, w=W):
    """A synthetic array for each sample type, using most of the type's range."""
    b = ramp(h, w).astype(np.float64)
    r, c = np.mgrid[0:h, 0:w]
    if dtype == 'Byte':
        a = b.astype(np.uint8)
    elif dtype == 'Int8':
        a = (b - 100).astype(np.int8)
    elif dtype == 'UInt16':
        a = (b * 300).astype(np.uint16)
    elif dtype == 'Int16':
        a = ((b - 100) * 300).astype(np.int16)
    elif dtype == 'UInt32':
        a = (b * 20_000_000 + 7).astype(np.uint32)  # above the Int32 range
    elif dtype == 'Int32':
        a = ((b - 100) * 19_000_000 + 3).astype(np.int32)
    elif dtype == 'Float32':
        a = ((b - 100) * 0.37 + 0.001 * r * c).astype(np.float32)
    elif dtype == 'Float64':
        a = (1000.0 * np.sin(r * 0.3) * np.cos(c * 0.2) + r / 3.0 + c * 1e-9).astype(np.float64)
    else:
        raise ValueError(dtype)
    return a


def set_nodata_cells(a, value):
    a[2, 3] = value
    a[-1, -1] = value  # last cell: in a partial tile / the short last strip
    return a


def srs_wkt(epsg):
    s = osr.SpatialReference()
    s.ImportFromEPSG(epsg)
    return s.ExportToWkt()


def create(name, bands, gdt, options, gt=GT_MAIN, epsg=32633, nodata=None, metadata=None,
           band_metadata=None, projection_wkt=None):
    path = os.path.join(OUT, name)
    if os.path.exists(path):
        os.remove(path)
    h, w = bands[0].shape
    drv = gdal.GetDriverByName('GTiff')
    ds = drv.Create(path, w, h, len(bands), gdt, options=options)
    if metadata:
        for k, v in metadata.items():
            ds.SetMetadataItem(k, v)
    if gt is not None:
        ds.SetGeoTransform(gt)
    if projection_wkt is not None:
        ds.SetProjection(projection_wkt)
    elif epsg is not None:
        ds.SetProjection(srs_wkt(epsg))
    for i, arr in enumerate(bands):
        band = ds.GetRasterBand(i + 1)
        if nodata is not None:
            band.SetNoDataValue(nodata)
        if arr.dtype == np.int8:
            arr = arr.view(np.uint8)
        band.WriteArray(arr)
    ds.FlushCache()
    ds = None
    aux = path + '.aux.xml'
    if os.path.exists(aux):
        os.remove(aux)
    return path


def json_number(v):
    if isinstance(v, float) and (math.isnan(v) or math.isinf(v)):
        return None if math.isnan(v) else ('Infinity' if v > 0 else '-Infinity')
    return v


def gdal_reading(path):
    """What GDAL reports for a file: geotransform, EPSG, per band nodata, mask and values."""
    ds = gdal.Open(path)
    srs = ds.GetSpatialRef()
    epsg = None
    geographic = None
    if srs is not None:
        code = srs.GetAuthorityCode(None)
        epsg = int(code) if code is not None else None
        geographic = bool(srs.IsGeographic())
    info = {
        'width': ds.RasterXSize,
        'height': ds.RasterYSize,
        'geotransform': list(ds.GetGeoTransform()),
        'epsg': epsg,
        'geographic': geographic,
        'areaOrPoint': ds.GetMetadataItem('AREA_OR_POINT'),
        'compression': ds.GetMetadataItem('COMPRESSION', 'IMAGE_STRUCTURE'),
        'interleave': ds.GetMetadataItem('INTERLEAVE', 'IMAGE_STRUCTURE'),
        'bands': [],
    }
    for i in range(ds.RasterCount):
        band = ds.GetRasterBand(i + 1)
        dtype = gdal.GetDataTypeName(band.DataType)
        pixeltype = band.GetMetadataItem('PIXELTYPE', 'IMAGE_STRUCTURE')
        nbits = band.GetMetadataItem('NBITS', 'IMAGE_STRUCTURE')
        arr = band.ReadAsArray()
        if pixeltype == 'SIGNEDBYTE':
            arr = arr.view(np.int8)  # GDAL 3.6 returns the raw bytes; the band is declared signed
        mask = band.GetMaskBand().ReadAsArray()
        values = []
        for v, m in zip(arr.ravel().tolist(), mask.ravel().tolist()):
            if m == 0:
                values.append(None)
            else:
                values.append(json_number(float(v)))
        nd = band.GetNoDataValue()
        info['bands'].append({
            'dataType': dtype,
            'pixelType': pixeltype,
            'nbits': int(nbits) if nbits else None,
            'blockSize': list(band.GetBlockSize()),
            'nodata': ('nan' if nd is not None and math.isnan(nd) else json_number(nd)),
            'values': values,
        })
    ds = None
    return info


def main():
    os.makedirs(OUT, exist_ok=True)
    for f in os.listdir(OUT):
        if f.endswith('.tif') or f.endswith('.npy') or f.endswith('.aux.xml'):
            os.remove(os.path.join(OUT, f))

    files = {}
    unsupported = {}

    def record(name):
        files[name] = gdal_reading(os.path.join(OUT, name))

    # 1. Every sample type, striped (4-row strips) uncompressed and tiled (16×16) with DEFLATE.
    for dt in ['Byte', 'Int8', 'UInt16', 'Int16', 'UInt32', 'Int32', 'Float32', 'Float64']:
        extra = ['PIXELTYPE=SIGNEDBYTE'] if dt == 'Int8' else []
        a = set_nodata_cells(make_array(dt), NODATA[dt])
        n1 = f'{dt.lower()}-strip-none.tif'
        create(n1, [a], GDT[dt], ['TILED=NO', 'BLOCKYSIZE=4', 'COMPRESS=NONE'] + extra, nodata=NODATA[dt])
        record(n1)
        n2 = f'{dt.lower()}-tile-deflate.tif'
        create(n2, [a], GDT[dt], ['TILED=YES', 'BLOCKXSIZE=16', 'BLOCKYSIZE=16', 'COMPRESS=DEFLATE'] + extra,
               nodata=NODATA[dt])
        record(n2)

    # 2. Every compression in both layouts, for one integer and one float type.
    for dt in ['Int16', 'Float32']:
        a = set_nodata_cells(make_array(dt), NODATA[dt])
        for comp in ['NONE', 'DEFLATE', 'LZW', 'PACKBITS']:
            for layout, opts in [('strip', ['TILED=NO', 'BLOCKYSIZE=4']),
                                 ('tile', ['TILED=YES', 'BLOCKXSIZE=16', 'BLOCKYSIZE=16'])]:
                name = f'{dt.lower()}-{layout}-{comp.lower()}.tif'
                if name in files:
                    continue
                create(name, [a], GDT[dt], opts + [f'COMPRESS={comp}'], nodata=NODATA[dt])
                record(name)

    # 3. Predictors as GDAL writes them for terrain (horizontal differencing, floating point).
    a = set_nodata_cells(make_array('Int16'), NODATA['Int16'])
    create('int16-strip-lzw-predictor2.tif', [a], gdal.GDT_Int16,
           ['BLOCKYSIZE=4', 'COMPRESS=LZW', 'PREDICTOR=2'], nodata=NODATA['Int16'])
    record('int16-strip-lzw-predictor2.tif')
    a = set_nodata_cells(make_array('Float32'), NODATA['Float32'])
    create('float32-tile-deflate-predictor3.tif', [a], gdal.GDT_Float32,
           ['TILED=YES', 'BLOCKXSIZE=16', 'BLOCKYSIZE=16', 'COMPRESS=DEFLATE', 'PREDICTOR=3'],
           nodata=NODATA['Float32'])
    record('float32-tile-deflate-predictor3.tif')

    # 4. BigTIFF.
    a = set_nodata_cells(make_array('Float32'), NODATA['Float32'])
    create('bigtiff-float32.tif', [a], gdal.GDT_Float32,
           ['BIGTIFF=YES', 'TILED=YES', 'BLOCKXSIZE=16', 'BLOCKYSIZE=16', 'COMPRESS=LZW'], nodata=NODATA['Float32'])
    record('bigtiff-float32.tif')

    # 5. Big-endian byte order, with enough strips that the offset arrays lie outside the header.
    a = set_nodata_cells(make_array('Float64'), NODATA['Float64'])
    create('float64-bigendian.tif', [a], gdal.GDT_Float64, ['ENDIANNESS=BIG', 'BLOCKYSIZE=1'],
           nodata=NODATA['Float64'])
    record('float64-bigendian.tif')
    tall = (np.arange(3 * 300, dtype=np.float64).reshape(300, 3) * 1.25 - 400.0)
    tall[150, 1] = NODATA['Float64']
    create('float64-bigendian-300strips.tif', [tall], gdal.GDT_Float64, ['ENDIANNESS=BIG', 'BLOCKYSIZE=1'],
           nodata=NODATA['Float64'])
    record('float64-bigendian-300strips.tif')

    # 6. Three bands, pixel-interleaved and band-interleaved (different values per band).
    b1 = make_array('Int16', 5, 7)
    b2 = (b1 * 2 + 1).astype(np.int16)
    b3 = (-b1 - 7).astype(np.int16)
    b2[1, 4] = -32768
    for il in ['PIXEL', 'BAND']:
        name = f'bands3-{il.lower()}.tif'
        create(name, [b1, b2, b3], gdal.GDT_Int16, [f'INTERLEAVE={il}'], gt=(1000.0, 10.0, 0.0, 2000.0, 0.0, -10.0),
               nodata=-32768)
        record(name)

    # 7. Rotated / sheared geotransform: GDAL stores it as ModelTransformation.
    a = make_array('Float32', 5, 7)
    create('rotated.tif', [a], gdal.GDT_Float32, [], gt=(300000.0, 8.660254037844387, -5.0, 5100000.0, -5.0, -8.660254037844387))
    record('rotated.tif')

    # 8. PixelIsPoint, with a north-up geotransform (tiepoint + scale) and with a rotated one.
    create('pixelispoint.tif', [a], gdal.GDT_Float32, [], gt=(440720.0, 60.0, 0.0, 3751320.0, 0.0, -60.0),
           metadata={'AREA_OR_POINT': 'Point'})
    record('pixelispoint.tif')
    create('pixelispoint-rotated.tif', [a], gdal.GDT_Float32, [], gt=(440720.0, 59.0, 3.0, 3751320.0, 4.0, -58.0),
           metadata={'AREA_OR_POINT': 'Point'})
    record('pixelispoint-rotated.tif')

    # 9. Geographic CRS (EPSG:4326), a CRS without an EPSG code, and no georeferencing at all.
    create('epsg4326.tif', [a], gdal.GDT_Float32, [], gt=(12.25, 0.01, 0.0, 48.5, 0.0, -0.01), epsg=4326)
    record('epsg4326.tif')
    custom = osr.SpatialReference()
    custom.ImportFromProj4('+proj=tmerc +lat_0=0 +lon_0=13.5 +k=0.9996 +x_0=500000 +y_0=0 '
                           '+ellps=GRS80 +units=m +no_defs')
    create('custom-crs.tif', [a], gdal.GDT_Float32, [], gt=(1000.0, 5.0, 0.0, 9000.0, 0.0, -5.0),
           projection_wkt=custom.ExportToWkt())
    record('custom-crs.tif')
    create('no-georef.tif', [a], gdal.GDT_Float32, [], gt=None, epsg=None)
    record('no-georef.tif')

    # 10. NaN as the nodata value, and a positive dy (south-up) grid.
    f = make_array('Float32', 5, 7)
    f[1, 2] = np.nan
    f[4, 6] = np.nan
    create('float32-nan-nodata.tif', [f], gdal.GDT_Float32, [], nodata=float('nan'))
    record('float32-nan-nodata.tif')
    # A Float32 nodata value that float32 cannot hold exactly (0.1): cells holding float32(0.1) are nodata.
    f = make_array('Float32', 5, 7)
    f[0, 0] = np.float32(0.1)
    f[3, 5] = np.float32(0.1)
    create('float32-nodata-inexact.tif', [f], gdal.GDT_Float32, [], nodata=0.1)
    record('float32-nodata-inexact.tif')
    create('south-up.tif', [make_array('Float64', 5, 7)], gdal.GDT_Float64, [], gt=(0.0, 1.5, 0.0, 100.0, 0.0, 2.0))
    record('south-up.tif')

    # 11. Half-precision floats (NBITS=16 on a Float32 band).
    create('float16.tif', [make_array('Float32', 5, 7)], gdal.GDT_Float32, ['NBITS=16'])
    record('float16.tif')

    # 12. Infinities: +inf at (col 4, row 1) and -inf at (col 0, row 3).
    g = make_array('Float32', 5, 7)
    g[1, 4] = np.inf
    create('float32-posinf.tif', [g], gdal.GDT_Float32, [])
    record('float32-posinf.tif')
    g = make_array('Float64', 5, 7)
    g[3, 0] = -np.inf
    create('float64-neginf.tif', [g], gdal.GDT_Float64, [])
    record('float64-neginf.tif')

    # 13. Layouts sill does not read: complex samples and 1-bit samples.
    c = np.zeros((5, 7), dtype=np.complex64)
    c.real = make_array('Int16', 5, 7)
    create('complex-cint16.tif', [c], gdal.GDT_CInt16, [])
    unsupported['complex-cint16.tif'] = {'dataType': gdal.GetDataTypeName(gdal.Open(os.path.join(OUT, 'complex-cint16.tif')).GetRasterBand(1).DataType)}
    bits = (make_array('Byte', 5, 7) % 2).astype(np.uint8)
    create('onebit.tif', [bits], gdal.GDT_Byte, ['NBITS=1'])
    ds = gdal.Open(os.path.join(OUT, 'onebit.tif'))
    unsupported['onebit.tif'] = {'nbits': int(ds.GetRasterBand(1).GetMetadataItem('NBITS', 'IMAGE_STRUCTURE'))}
    ds = None

    # 14. .npy files written by numpy, and what numpy reads back.
    npy = {}
    r, cc = np.mgrid[0:4, 0:6]
    a8 = (np.cos(r * 0.7) * 100.0 + cc * 0.125).astype('<f8')
    a8[2, 5] = np.nan
    np.save(os.path.join(OUT, 'numpy-f8-c.npy'), a8)
    back = np.load(os.path.join(OUT, 'numpy-f8-c.npy'))
    npy['numpy-f8-c.npy'] = {'shape': list(back.shape), 'dtype': back.dtype.str,
                             'fortran': bool(np.isfortran(back)),
                             'values': [json_number(float(v)) for v in back.ravel(order='C').tolist()]}
    r, cc = np.mgrid[0:5, 0:3]
    i2 = np.asfortranarray((r * 100 - cc * 7 - 150).astype('<i2'))
    with open(os.path.join(OUT, 'numpy-i2-fortran-v2.npy'), 'wb') as fh:
        np.lib.format.write_array(fh, i2, version=(2, 0))
    back = np.load(os.path.join(OUT, 'numpy-i2-fortran-v2.npy'))
    npy['numpy-i2-fortran-v2.npy'] = {'shape': list(back.shape), 'dtype': back.dtype.str,
                                      'fortran': bool(np.isfortran(back)), 'version': [2, 0],
                                      'values': [float(v) for v in back.ravel(order='C').tolist()]}

    sizes = {f: os.path.getsize(os.path.join(OUT, f)) for f in sorted(os.listdir(OUT)) if not f.endswith('.json')}
    too_big = {f: s for f, s in sizes.items() if s >= 20_000}
    if too_big:
        sys.exit(f'fixtures over 20 KB: {too_big}')

    expected = {
        'generator': 'tests/reference/make_geotiff_fixtures.py',
        'gdalVersion': gdal.__version__,
        'numpyVersion': np.__version__,
        'files': files,
        'unsupported': unsupported,
        'npy': npy,
    }
    # One line per file keeps the record readable in a diff.
    def dumps(v):
        return json.dumps(v, separators=(',', ':'), allow_nan=False)
    with open(os.path.join(OUT, 'expected.json'), 'w') as fh:
        fh.write('{\n')
        keys = list(expected.keys())
        for i, k in enumerate(keys):
            v = expected[k]
            end = ',\n' if i < len(keys) - 1 else '\n'
            if isinstance(v, dict):
                fh.write(f' {dumps(k)}: {{\n')
                sub = list(v.keys())
                for j, kk in enumerate(sub):
                    fh.write(f'  {dumps(kk)}: {dumps(v[kk])}' + (',\n' if j < len(sub) - 1 else '\n'))
                fh.write(' }' + end)
            else:
                fh.write(f' {dumps(k)}: {dumps(v)}' + end)
        fh.write('}\n')
    json.load(open(os.path.join(OUT, 'expected.json')))  # must parse
    print(f'wrote {len(files)} GeoTIFFs, {len(unsupported)} unsupported layouts, {len(npy)} .npy files to {OUT}')


if __name__ == '__main__':
    main()
