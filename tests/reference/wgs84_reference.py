#!/usr/bin/python3
"""
Reference longitude/latitude of projected points, computed by GDAL/OSR (PROJ with the EPSG
database), for the projected CRSs that `sill ponds --wgs84` reprojects.

Writes fixtures/hydro/wgs84-reference.json. Run with Debian's Python:
    /usr/bin/python3 tests/reference/wgs84_reference.py
"""
import json
import os

from osgeo import gdal, osr

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, '..', '..', 'fixtures', 'hydro', 'wgs84-reference.json')

# (EPSG, points in that CRS) — points inside each CRS's area of use
CASES = [
    (32633, [(512000, 5874000), (300000, 4000000), (700000, 6900000)]),
    (32618, [(583960, 4507523), (400000, 5000000)]),
    (32755, [(334000, 6252000), (600000, 7000000)]),
    (32701, [(500000, 9000000)]),
    (25832, [(691000, 5335000), (400000, 6100000)]),
    (26915, [(480000, 4980000), (600000, 3500000)]),
    (3857, [(1689000, 6985000), (-8237000, 4970000), (16137000, -4553000)]),
    (3035, [(4321000, 3210000), (3500000, 2100000), (5000000, 4000000)]),
    (2154, [(652000, 6862000), (900000, 6300000)]),
]


def main():
    wgs = osr.SpatialReference()
    wgs.ImportFromEPSG(4326)
    wgs.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
    out = []
    for epsg, pts in CASES:
        src = osr.SpatialReference()
        src.ImportFromEPSG(epsg)
        src.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
        ct = osr.CoordinateTransformation(src, wgs)
        for x, y in pts:
            lon, lat, _ = ct.TransformPoint(float(x), float(y))
            out.append({'epsg': epsg, 'x': x, 'y': y, 'lon': lon, 'lat': lat})
            print(f'EPSG:{epsg} ({x}, {y}) -> ({lon:.9f}, {lat:.9f})')
    doc = {
        'generator': 'tests/reference/wgs84_reference.py',
        'gdal_version': gdal.__version__,
        'proj_version': '.'.join(str(v) for v in (osr.GetPROJVersionMajor(), osr.GetPROJVersionMinor(), osr.GetPROJVersionMicro())),
        'points': out,
    }
    with open(OUT, 'w') as fh:
        json.dump(doc, fh, indent=1)
        fh.write('\n')


if __name__ == '__main__':
    main()
