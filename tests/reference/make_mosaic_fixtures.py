#!/usr/bin/python3
"""
Mosaic fixtures cut and assembled by GDAL, and the filled-DEM reference from scikit-image.

A small DEM (48 × 40 float32 cells, EPSG:32633, 5 m cells, nodata -9999; invented test terrain:
smooth hills and hollows plus seeded noise rounded to 0.1, so there are ties) is cut into five
tiles with gdal_translate -srcwin: tiles that share an edge row or column, tiles that abut, and
a gap no tile covers. gdalbuildvrt builds tiles.vrt; gdal_translate of that VRT gives single.tif,
the same cells as one grid (GDAL's VRT driver fills the gap with nodata) — what sill's mosaic
runs are compared with. filled-reference.json is scikit-image's reconstruction by erosion of the
mosaic read through GDAL's VRT driver (the open boundary: a frame of outlets around the grid, and
nodata cells as outlets; 3 × 3 footprint, connectivity 8), as tests/reference/fill_reference.py
does for single grids. bad/ holds tiles that break one rule each, and VRTs with elements sill
refuses.

Writes fixtures/mosaic/. Run with Debian's Python:
    /usr/bin/python3 tests/reference/make_mosaic_fixtures.py
"""
import json
import os
import shutil

import numpy as np
import skimage
from osgeo import gdal, osr
from skimage.morphology import reconstruction

gdal.UseExceptions()

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, '..', '..', 'fixtures', 'mosaic')
W, H = 48, 40
GT = (512000.0, 5.0, 0.0, 5874000.0, 0.0, -5.0)
ND = -9999.0

# (name, xoff, yoff, xsize, ysize): a|b share column 24; a, b, c and d share row 20; c|d abut;
# cells 20–27 × 30–39 are a gap.
TILES = [
    ('a', 0, 0, 25, 21),
    ('b', 24, 0, 24, 21),
    ('c', 0, 20, 20, 20),
    ('d', 20, 20, 28, 10),
    ('e', 28, 30, 20, 10),
]


def srs(epsg):
    s = osr.SpatialReference()
    s.ImportFromEPSG(epsg)
    return s.ExportToWkt()


def terrain():
    rng = np.random.default_rng(20261202)
    r, c = np.mgrid[0:H, 0:W].astype(np.float64)
    z = 50 + 6 * np.sin(c / 5.0) * np.cos(r / 7.0) + 2 * np.sin(c / 3.0 + r / 4.0) + rng.uniform(0, 0.3, (H, W))
    z = np.round(z, 1).astype(np.float32)
    z[30, 5] = ND
    z[10, 40] = ND
    z[14:16, 22:24] = ND
    return z


def write(path, a, gt=GT, epsg=32633, nodata=ND, dtype=gdal.GDT_Float32, options=('COMPRESS=DEFLATE',)):
    ds = gdal.GetDriverByName('GTiff').Create(path, a.shape[1], a.shape[0], 1, dtype, list(options))
    ds.SetGeoTransform(gt)
    ds.SetProjection(srs(epsg))
    b = ds.GetRasterBand(1)
    b.SetNoDataValue(nodata)
    b.WriteArray(a)
    ds = None


def cut(src, dst, x, y, w, h, extra=()):
    gdal.Translate(dst, src, srcWin=[x, y, w, h], creationOptions=['COMPRESS=DEFLATE'], options=list(extra))


def main():
    if os.path.isdir(OUT):
        shutil.rmtree(OUT)
    os.makedirs(os.path.join(OUT, 'tiles'))
    os.makedirs(os.path.join(OUT, 'bad'))
    dem = os.path.join(OUT, 'dem.tif')
    write(dem, terrain())
    for name, x, y, w, h in TILES:
        cut(dem, os.path.join(OUT, 'tiles', name + '.tif'), x, y, w, h)
    here = os.getcwd()
    os.chdir(OUT)
    try:
        gdal.BuildVRT('tiles.vrt', [f'tiles/{t[0]}.tif' for t in TILES])
        gdal.Translate('single.tif', 'tiles.vrt', creationOptions=['COMPRESS=DEFLATE'])
    finally:
        os.chdir(here)

    # reference: reconstruction by erosion of the mosaic read through GDAL's VRT driver
    ds = gdal.Open(os.path.join(OUT, 'tiles.vrt'))
    z = ds.GetRasterBand(1).ReadAsArray().astype(np.float64)
    valid = z != ND
    lo, hi = z[valid].min() - 1, z[valid].max() + 1
    m = np.full((H + 2, W + 2), lo)
    m[1:-1, 1:-1] = np.where(valid, z, lo)
    seed = np.full_like(m, hi)
    seed[0, :] = m[0, :]
    seed[-1, :] = m[-1, :]
    seed[:, 0] = m[:, 0]
    seed[:, -1] = m[:, -1]
    seed[1:-1, 1:-1][~valid] = lo
    f = reconstruction(seed, m, method='erosion', footprint=np.ones((3, 3)))[1:-1, 1:-1]
    filled = [None if not valid.flat[k] else float(np.float32(f.flat[k])) for k in range(W * H)]
    with open(os.path.join(OUT, 'filled-reference.json'), 'w') as fh:
        json.dump({
            'source': 'skimage.morphology.reconstruction(method="erosion", footprint 3x3) of fixtures/mosaic/tiles.vrt read by GDAL; '
                      'frame and nodata cells seeded as outlets; values as float32',
            'versions': {'gdal': gdal.__version__, 'scikit-image': skimage.__version__, 'numpy': np.__version__},
            'width': W, 'height': H, 'filled': filled,
        }, fh)
        fh.write('\n')

    # bad tiles: each breaks one rule against tiles/a.tif (b's place is the one they take)
    b = os.path.join(OUT, 'tiles', 'b.tif')
    bad = lambda n: os.path.join(OUT, 'bad', n)
    bz = gdal.Open(b).ReadAsArray()
    bgt = (GT[0] + 24 * GT[1], GT[1], 0.0, GT[3], 0.0, GT[5])
    write(bad('crs.tif'), bz, gt=bgt, epsg=32634)
    write(bad('cellsize.tif'), bz, gt=(bgt[0], 10.0, 0.0, bgt[3], 0.0, -10.0))
    cut(b, bad('type.tif'), 0, 0, 24, 21, extra=['-ot', 'Int16'])
    write(bad('halfcell.tif'), bz, gt=(bgt[0] + 2.5, 5.0, 0.0, bgt[3], 0.0, -5.0))
    cz = bz.copy()
    cz[7, 0] += 0.5  # column 24 of the mosaic, shared with a
    write(bad('conflict.tif'), cz, gt=bgt)
    write(bad('truncated.tif'), bz, gt=bgt, options=())
    with open(bad('truncated.tif'), 'rb') as fh:
        data = fh.read()
    with open(bad('truncated.tif'), 'wb') as fh:
        fh.write(data[: len(data) // 2])

    vrt = open(os.path.join(OUT, 'tiles.vrt')).read().replace('relativeToVRT="1">tiles/', 'relativeToVRT="1">../tiles/')
    with open(bad('scaled.vrt'), 'w') as fh:
        fh.write(vrt.replace('<NODATA>-9999</NODATA>', '<NODATA>-9999</NODATA>\n      <ScaleRatio>2</ScaleRatio>', 1))
    with open(bad('resampled.vrt'), 'w') as fh:
        fh.write(vrt.replace('<DstRect xOff="0" yOff="0" xSize="25" ySize="21" />', '<DstRect xOff="0" yOff="0" xSize="50" ySize="42" />'))
    with open(bad('derived.vrt'), 'w') as fh:
        fh.write(vrt.replace('<VRTRasterBand dataType="Float32" band="1">', '<VRTRasterBand dataType="Float32" band="1" subClass="VRTDerivedRasterBand">'))


if __name__ == '__main__':
    main()
