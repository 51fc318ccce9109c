#!/usr/bin/python3
"""
Helper of bench/survey-process.mjs: the reference whole process for `sill survey --json` —
read a GeoTIFF with GDAL, then GUDHI's cubical persistence of its cells:
CubicalComplex(top_dimensional_cells=…).persistence().

    /usr/bin/python3 bench/survey-gudhi.py TERRAIN.tif

Prints one JSON line: versions, pair count, read and persistence seconds (timed inside; the
caller times the whole process).
"""
import json
import sys
import time

import gudhi
from osgeo import gdal


def main():
    t0 = time.perf_counter()
    ds = gdal.Open(sys.argv[1])
    cells = ds.GetRasterBand(1).ReadAsArray()
    t1 = time.perf_counter()
    pairs = gudhi.CubicalComplex(top_dimensional_cells=cells).persistence()
    t2 = time.perf_counter()
    print(json.dumps({'gudhi': gudhi.__version__, 'gdal': gdal.__version__, 'pairs': len(pairs), 'readS': t1 - t0, 'persistenceS': t2 - t1}))


if __name__ == '__main__':
    main()
