#!/usr/bin/python3
"""Stationary points of the Wolfe–Quapp surface, found with SciPy's root finder.

The surface (as in Quapp's reaction-path papers) is

    W(x, y) = x^4 + y^4 - 2 x^2 - 4 y^2 + x y + 0.3 x + 0.1 y

This script solves grad W = 0 with scipy.optimize.root (method 'hybr', the analytic gradient
as the function and the analytic Hessian as its Jacobian) from a 50 x 50 lattice of starting
points over the window x, y in [-2, 2], keeps the distinct roots inside the window with
|grad W| < 1e-10, classifies them by the eigenvalues of the analytic Hessian
(numpy.linalg.eigvalsh) and writes fixtures/chem/wolfe-quapp.json with the SciPy and NumPy
versions.

Run with Debian's Python: /usr/bin/python3 tests/reference/wolfe_quapp.py
"""
import json
import os
import sys

import numpy as np
import scipy
from scipy import optimize

WINDOW = {"x": [-2.0, 2.0], "y": [-2.0, 2.0]}


def energy(p):
    x, y = p
    return float(x**4 + y**4 - 2 * x**2 - 4 * y**2 + x * y + 0.3 * x + 0.1 * y)


def gradient(p):
    x, y = p
    return np.array([4 * x**3 - 4 * x + y + 0.3, 4 * y**3 - 8 * y + x + 0.1])


def hessian(p):
    x, y = p
    return np.array([[12 * x**2 - 4, 1.0], [1.0, 12 * y**2 - 8]])


def main():
    roots = []
    for sx in np.linspace(*WINDOW["x"], 50):
        for sy in np.linspace(*WINDOW["y"], 50):
            sol = optimize.root(gradient, [sx, sy], jac=hessian, method="hybr", options={"xtol": 1e-14})
            if not sol.success:
                continue
            p = sol.x
            if not (WINDOW["x"][0] <= p[0] <= WINDOW["x"][1] and WINDOW["y"][0] <= p[1] <= WINDOW["y"][1]):
                continue
            if np.linalg.norm(gradient(p)) > 1e-10:
                continue
            if any(np.hypot(*(p - q)) < 1e-6 for q in roots):
                continue
            roots.append(p)
    points = []
    for p in roots:
        H = hessian(p)
        ev = np.linalg.eigvalsh(H)
        neg = int(np.sum(ev < 0))
        points.append({
            "kind": {0: "minimum", 1: "saddle", 2: "maximum"}[neg],
            "x": float(p[0]), "y": float(p[1]),
            "energy": energy(p),
            "gradientNorm": float(np.linalg.norm(gradient(p))),
            "hessian": [[float(H[0, 0]), float(H[0, 1])], [float(H[1, 0]), float(H[1, 1])]],
            "hessianEigenvalues": [float(ev[0]), float(ev[1])],
        })
    points.sort(key=lambda q: (q["kind"], q["energy"]))
    out = {
        "source": "Wolfe–Quapp surface W = x^4 + y^4 - 2x^2 - 4y^2 + xy + 0.3x + 0.1y; stationary points by scipy.optimize.root (hybr) on the analytic gradient",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "python": sys.version.split()[0],
        "window": WINDOW,
        "stationaryPoints": points,
    }
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "..", "..", "fixtures", "chem", "wolfe-quapp.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    for q in points:
        print("%-8s x=%+.6f y=%+.6f E=%+.6f eig=%s" % (q["kind"], q["x"], q["y"], q["energy"], q["hessianEigenvalues"]))
    print("wrote", os.path.normpath(path))


if __name__ == "__main__":
    main()
