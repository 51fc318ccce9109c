#!/usr/bin/python3
"""
Reference filled DEMs from scikit-image's morphological reconstruction by erosion.

For each small synthetic DEM, the fully filled surface is the reconstruction by erosion of
the DEM from a seed that equals the DEM on the outlets and the maximum elsewhere: every cell
ends at the lowest level from which water can reach an outlet. The outlets are modelled the
way sill's open boundary defines them: a frame of cells around the grid, and (for
nodata 'outlet') the nodata cells, all given a value below every valid cell and seeded. For
nodata 'wall' the nodata cells are given a value above every valid cell and not seeded.
The footprint gives the neighbours: 3×3 for connectivity 8, the cross for 4, and the six
neighbours (±1,0), (0,±1), (+1,+1), (−1,−1) in (column, row) for 6.

Writes fixtures/hydro/fill-reference.json. Run with Debian's Python:
    /usr/bin/python3 tests/reference/fill_reference.py
"""
import json
import os
import sys

import numpy as np
import skimage
from skimage.morphology import reconstruction

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, '..', '..', 'fixtures', 'hydro', 'fill-reference.json')

FOOTPRINTS = {
    8: np.ones((3, 3), dtype=bool),
    4: np.array([[0, 1, 0], [1, 1, 1], [0, 1, 0]], dtype=bool),
    # rows are the row offset −1, 0, +1 and columns the column offset: (dcol, drow) = (+1, +1) and (−1, −1) are in
    6: np.array([[1, 1, 0], [1, 1, 1], [0, 1, 1]], dtype=bool),
}


def filled_reference(z, connectivity, nodata_as):
    """z: 2-D float64 array with NaN for nodata."""
    valid = ~np.isnan(z)
    lo = np.nanmin(z) - 1.0
    hi = np.nanmax(z) + 1.0
    h, w = z.shape
    mask = np.full((h + 2, w + 2), lo)
    inner = np.where(valid, z, lo if nodata_as == 'outlet' else hi)
    mask[1:-1, 1:-1] = inner
    outlet = np.ones_like(mask, dtype=bool)
    outlet[1:-1, 1:-1] = ~valid if nodata_as == 'outlet' else False
    seed = np.where(outlet, mask, hi)
    rec = reconstruction(seed, mask, method='erosion', footprint=FOOTPRINTS[connectivity])
    f = rec[1:-1, 1:-1]
    return np.where(valid, f, np.nan)


def to_list(a):
    out = []
    for v in a.ravel():
        if np.isnan(v):
            out.append(None)
        elif float(v).is_integer():
            out.append(int(v))
        else:
            out.append(float(v))
    return out


def smooth_noise(rng, w, h, bumps, depth):
    yy, xx = np.mgrid[0:h, 0:w]
    z = 0.02 * xx + 0.01 * yy
    for _ in range(bumps):
        cx, cy = rng.uniform(0, w), rng.uniform(0, h)
        s = rng.uniform(1.0, 3.5)
        a = rng.uniform(-depth, depth)
        z += a * np.exp(-((xx - cx) ** 2 + (yy - cy) ** 2) / (2 * s * s))
    return z


def cases():
    out = []
    rng = np.random.RandomState(20261201)

    # float32 values: smooth bumps and pits
    z = smooth_noise(rng, 17, 13, 30, 2.0).astype(np.float32).astype(np.float64)
    out.append(('float32-bumps-c8', z, 8, 'outlet', 'float32'))

    # integers with plateaus (3×3 flat blocks) and ties
    z = rng.randint(0, 7, size=(4, 5)).repeat(3, axis=0).repeat(3, axis=1).astype(np.float64)[:11, :14]
    z += (rng.uniform(size=z.shape) < 0.08) * rng.choice([-1, 1], size=z.shape)
    out.append(('int-plateaus-c8', z, 8, 'outlet', 'float64'))

    # random small integers: many ties, for every connectivity
    z = rng.randint(0, 6, size=(12, 15)).astype(np.float64)
    for c in (8, 4, 6):
        out.append((f'int-ties-c{c}', z.copy(), c, 'outlet', 'float64'))

    # nodata: an edge cell, a corner, an interior L-shaped hole and a single interior cell
    z = smooth_noise(rng, 16, 14, 35, 2.5).astype(np.float32).astype(np.float64)
    z[0, 5] = np.nan
    z[13, 15] = np.nan
    z[5, 6] = z[6, 6] = z[7, 6] = z[7, 7] = np.nan
    z[10, 11] = np.nan
    for mode in ('outlet', 'wall'):
        for c in (8, 4):
            out.append((f'nodata-{mode}-c{c}', z.copy(), c, mode, 'float32'))

    # two bowls joined by a saddle, inside a rim, with a flat floor in one of them (float64)
    yy, xx = np.mgrid[0:21, 0:31]
    r1 = np.hypot(xx - 9, yy - 10) / 7.0
    r2 = np.hypot(xx - 21, yy - 10) / 6.0
    z = np.minimum(3 * r1 ** 2, 2 + 2 * r2 ** 2)
    z = np.minimum(z, 6.0)
    z[9:12, 8:11] = 0.0
    out.append(('bowls-c8', z, 8, 'outlet', 'float64'))

    # a larger rough surface
    z = np.cumsum(np.cumsum(rng.normal(size=(48, 64)), axis=0), axis=1) * 0.1
    z = np.round(z.astype(np.float32), 2).astype(np.float32).astype(np.float64)
    out.append(('rough-c8', z, 8, 'outlet', 'float32'))
    return out


def main():
    results = []
    for name, z, conn, mode, dtype in cases():
        f = filled_reference(z, conn, mode)
        valid = ~np.isnan(z)
        depth = np.where(valid, f - z, 0.0)
        assert np.all(depth >= 0)
        results.append({
            'name': name,
            'width': int(z.shape[1]),
            'height': int(z.shape[0]),
            'dtype': dtype,
            'connectivity': conn,
            'nodataAs': mode,
            'values': to_list(z),
            'filled': to_list(f),
            'sumDepth': float(depth.sum()),
            'raisedCells': int((depth > 0).sum()),
        })
        print(f'{name}: {z.shape[1]}×{z.shape[0]}, connectivity {conn}, nodata {mode}, '
              f'{int((depth > 0).sum())} cells raised, Σ depth {depth.sum():.6g}')
    doc = {
        'generator': 'tests/reference/fill_reference.py',
        'skimage_version': skimage.__version__,
        'numpy_version': np.__version__,
        'python_version': sys.version.split()[0],
        'method': "skimage.morphology.reconstruction(seed, mask, method='erosion', footprint) with outlets seeded",
        'cases': results,
    }
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, 'w') as fh:
        json.dump(doc, fh, separators=(',', ':'))
        fh.write('\n')


if __name__ == '__main__':
    main()
