#!/usr/bin/python3
"""
Helper of bench/compare-fill.mjs: time scikit-image's reconstruction by erosion (the fully
filled DEM) on a float32 terrain, with the grid frame as seed and a 3×3 footprint.

    /usr/bin/python3 bench/compare-fill.py TERRAIN.f32 SIZE OUT.f32 [REPEAT]

Prints one JSON line: skimage version, best wall-clock and CPU milliseconds, peak RSS.
"""
import json
import resource
import sys
import time

import numpy as np
import skimage
from skimage.morphology import reconstruction


def main():
    path, size, out = sys.argv[1], int(sys.argv[2]), sys.argv[3]
    repeat = int(sys.argv[4]) if len(sys.argv) > 4 else 1
    z = np.fromfile(path, dtype=np.float32).reshape(size, size)
    best = None
    best_cpu = None
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        seed = np.full_like(z, z.max())
        seed[0, :] = z[0, :]
        seed[-1, :] = z[-1, :]
        seed[:, 0] = z[:, 0]
        seed[:, -1] = z[:, -1]
        filled = reconstruction(seed, z, method='erosion', footprint=np.ones((3, 3)))
        ms, cpu = (time.perf_counter() - t0) * 1000, (time.process_time() - c0) * 1000
        best = ms if best is None else min(best, ms)
        best_cpu = cpu if best_cpu is None else min(best_cpu, cpu)
    filled.astype(np.float32).tofile(out)
    print(json.dumps({
        'skimage': skimage.__version__, 'numpy': np.__version__, 'ms': best, 'cpuMs': best_cpu, 'repeat': repeat,
        'maxRss': resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024,
    }))


if __name__ == '__main__':
    main()
