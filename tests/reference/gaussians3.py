#!/usr/bin/python3
"""Stationary points of an analytic 3-D surface, found with SciPy, for sill's 3-D survey tests.

    V(x, y, z) = B * (x^2 + y^2 + z^2) - sum_k A_k * exp(-|r - c_k|^2 / (2 s_k^2))

three Gaussian wells of our own choosing in a harmonic bowl (the bowl keeps every stationary point
inside the box [-L, L]^3 and makes V rise towards its faces). scipy.optimize.root solves grad V = 0
from a lattice of starting points; the distinct solutions are classified by the signs of the
Hessian's eigenvalues (numpy.linalg.eigvalsh): the Morse index is the number of negative ones.
The dimension-0 persistence pairs follow by the elder rule
from which minima each index-1 saddle joins. Output: fixtures/reference/gaussians3.json. Regenerate with

    /usr/bin/python3 tests/reference/gaussians3.py
"""
import itertools
import json
import os

import numpy as np
import scipy
from scipy.optimize import minimize, root

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(REPO, "fixtures", "reference", "gaussians3.json")

B = 0.05
L = 3.0
WELLS = [  # (A, cx, cy, cz, s)
    (2.0, -1.2, -0.8, 0.1, 0.7),
    (1.6, 1.3, -0.6, -0.2, 0.6),
    (1.8, 0.1, 1.3, 0.3, 0.65),
]


def value(r):
    x = np.asarray(r, dtype=float)
    v = B * np.dot(x, x)
    for a, cx, cy, cz, s in WELLS:
        d = x - np.array([cx, cy, cz])
        v -= a * np.exp(-np.dot(d, d) / (2 * s * s))
    return v


def grad(r):
    x = np.asarray(r, dtype=float)
    g = 2 * B * x
    for a, cx, cy, cz, s in WELLS:
        d = x - np.array([cx, cy, cz])
        g += a * np.exp(-np.dot(d, d) / (2 * s * s)) * d / (s * s)
    return g


def hessian(r):
    x = np.asarray(r, dtype=float)
    h = 2 * B * np.eye(3)
    for a, cx, cy, cz, s in WELLS:
        d = x - np.array([cx, cy, cz])
        e = a * np.exp(-np.dot(d, d) / (2 * s * s))
        h += e * (np.eye(3) / (s * s) - np.outer(d, d) / s ** 4)
    return h


def main():
    found = []
    starts = np.linspace(-2.6, 2.6, 14)
    for p in itertools.product(starts, repeat=3):
        sol = root(grad, np.array(p), jac=hessian, method="hybr", tol=1e-13)
        if not sol.success:
            continue
        r = sol.x
        if np.max(np.abs(r)) > L or np.linalg.norm(grad(r)) > 1e-9:
            continue
        if any(np.linalg.norm(r - q) < 1e-5 for q, _, _ in found):
            continue
        ev = np.linalg.eigvalsh(hessian(r))
        assert np.min(np.abs(ev)) > 1e-6, "degenerate stationary point"
        found.append((r, value(r), int(np.sum(ev < 0))))
    found.sort(key=lambda t: (t[2], t[1]))
    points = [{"x": float(r[0]), "y": float(r[1]), "z": float(r[2]), "value": float(v), "index": k} for r, v, k in found]
    counts = [sum(1 for p in points if p["index"] == k) for k in range(4)]
    # Morse relation on the box whose faces V rises towards (a ball): c0 - c1 + c2 - c3 = 1
    assert counts[0] - counts[1] + counts[2] - counts[3] == 1, counts
    # dimension-0 persistence pairs by the elder rule over the join of the minima: each index-1
    # saddle connects the two minima that local minimisation (scipy.optimize.minimize, BFGS)
    # reaches from either side of it along its descent direction
    minima = [q for q in found if q[2] == 0]
    def basin(r):
        m = minimize(value, r, jac=grad, method="BFGS", options={"gtol": 1e-10}).x
        return min(range(len(minima)), key=lambda k: np.linalg.norm(minima[k][0] - m))
    comp = list(range(len(minima)))
    def find(k):
        while comp[k] != k:
            k = comp[k]
        return k
    pairs0 = []
    for r, v, k in sorted((q for q in found if q[2] == 1), key=lambda q: q[1]):
        w, vec = np.linalg.eigh(hessian(r))
        down = vec[:, 0]
        a, b = find(basin(r + 0.05 * down)), find(basin(r - 0.05 * down))
        if a == b:
            continue
        young, old = (a, b) if minima[a][1] > minima[b][1] else (b, a)
        pairs0.append([float(minima[young][1]), float(v)])
        comp[young] = old
    out = {
        "generator": "tests/reference/gaussians3.py",
        "scipy_version": scipy.__version__,
        "numpy_version": np.__version__,
        "bowl": B, "half_width": L,
        "wells": [{"depth": a, "centre": [cx, cy, cz], "width": s} for a, cx, cy, cz, s in WELLS],
        "countsByIndex": counts,
        "stationaryPoints": points,
        "pairs0": pairs0,
    }
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print("counts by index", counts, "pairs0", pairs0)
    for p in points:
        print(p)


if __name__ == "__main__":
    main()
