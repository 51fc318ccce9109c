#!/usr/bin/python3
"""Stationary points of two analytic 3-D energy surfaces, found with SciPy's root finder.

1. "mb-z": the Müller–Brown potential (Müller & Brown, Theor. Chim. Acta 53, 75 (1979)) plus a
   harmonic third coordinate coupled to x:  W(x, y, z) = V(x, y) + K (z - C x)^2.
2. "gaussians": a sum of three 3-D Gaussian wells,
   G(r) = -sum_k A_k exp(-|r - c_k|^2 / (2 s_k^2)).

For each surface scipy.optimize.root (method 'hybr', the analytic gradient as the function and
the analytic Hessian as its Jacobian, xtol 1e-14) is started from a lattice of points over the
window; the distinct roots inside the window with |grad| < 1e-9 are kept (for the Gaussians, only
those below ENERGY_FLOOR, where the wells are) and classified by the eigenvalues of the analytic
Hessian (numpy.linalg.eigvalsh): 0 negative = minimum, 1 = saddle (transition state),
2 = saddle2, 3 = maximum. Writes fixtures/chem/stationary-3d.json with the SciPy and NumPy
versions. With --stdout the JSON goes to standard output instead, and --surface NAME keeps one
surface (the live check in the tests runs "--stdout --surface mb-z").

Run with Debian's Python: /usr/bin/python3 tests/reference/energy3d.py
"""
import json
import os
import sys

import numpy as np
import scipy
from scipy import optimize

# Müller–Brown parameters (the published ones)
A = np.array([-200.0, -100.0, -170.0, 15.0])
a = np.array([-1.0, -1.0, -6.5, 0.7])
b = np.array([0.0, 0.0, 11.0, 0.6])
c = np.array([-10.0, -10.0, -6.5, 0.7])
x0 = np.array([1.0, 0.0, -0.5, -1.0])
y0 = np.array([0.0, 0.5, 1.5, 1.0])
K, C = 40.0, 0.5
MB_WINDOW = [[-1.5, 1.2], [-0.5, 2.0], [-0.9, 0.7]]

# Gaussian wells: depth, centre, width
GA = np.array([10.0, 8.0, 9.0])
GC = np.array([[0.0, 0.0, 0.0], [1.6, 0.3, 0.2], [0.6, 1.5, -0.4]])
GS = np.array([0.6, 0.5, 0.55])
G_WINDOW = [[-1.2, 2.6], [-1.2, 2.6], [-1.4, 1.4]]
ENERGY_FLOOR = -0.5


def mb(p):
    dx, dy = p[0] - x0, p[1] - y0
    e = A * np.exp(a * dx * dx + b * dx * dy + c * dy * dy)
    gx = 2 * a * dx + b * dy
    gy = b * dx + 2 * c * dy
    v = np.sum(e) + K * (p[2] - C * p[0]) ** 2
    g = np.array([np.sum(e * gx) - 2 * K * C * (p[2] - C * p[0]), np.sum(e * gy), 2 * K * (p[2] - C * p[0])])
    hxx = np.sum(e * (gx * gx + 2 * a)) + 2 * K * C * C
    hxy = np.sum(e * (gx * gy + b))
    hyy = np.sum(e * (gy * gy + 2 * c))
    H = np.array([[hxx, hxy, -2 * K * C], [hxy, hyy, 0.0], [-2 * K * C, 0.0, 2 * K]])
    return v, g, H


def gauss(p):
    d = p[None, :] - GC
    r2 = np.sum(d * d, axis=1)
    e = -GA * np.exp(-r2 / (2 * GS * GS))
    v = np.sum(e)
    g = np.sum((e / (-GS * GS))[:, None] * d, axis=0)
    H = np.zeros((3, 3))
    for k in range(3):
        H += e[k] * (np.outer(d[k], d[k]) / GS[k] ** 4 - np.eye(3) / GS[k] ** 2)
    return v, g, H


KINDS = {0: "minimum", 1: "saddle", 2: "saddle2", 3: "maximum"}


def stationary(f, window, starts, floor=None):
    roots = []
    axes = [np.linspace(lo, hi, starts) for lo, hi in window]
    for sx in axes[0]:
        for sy in axes[1]:
            for sz in axes[2]:
                sol = optimize.root(lambda p: f(p)[1], [sx, sy, sz], jac=lambda p: f(p)[2], method="hybr", options={"xtol": 1e-14})
                if not sol.success:
                    continue
                p = sol.x
                if not all(lo <= p[d] <= hi for d, (lo, hi) in enumerate(window)):
                    continue
                v, g, H = f(p)
                if np.linalg.norm(g) > 1e-9 or (floor is not None and v > floor):
                    continue
                if any(np.linalg.norm(p - q) < 1e-6 for q in roots):
                    continue
                roots.append(p)
    points = []
    for p in roots:
        v, g, H = f(p)
        ev = np.linalg.eigvalsh(H)
        points.append({
            "kind": KINDS[int(np.sum(ev < 0))],
            "x": float(p[0]), "y": float(p[1]), "z": float(p[2]),
            "energy": float(v),
            "gradientNorm": float(np.linalg.norm(g)),
            "hessianEigenvalues": [float(e) for e in ev],
        })
    points.sort(key=lambda q: (q["kind"], q["energy"]))
    return points


def main():
    np.seterr(over="ignore", under="ignore")
    out = {
        "source": "stationary points by scipy.optimize.root (hybr) on the analytic gradient, classified by numpy.linalg.eigvalsh of the analytic Hessian",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "python": sys.version.split()[0],
        "surfaces": {
            "mb-z": {
                "formula": "V_MB(x, y) + K (z - C x)^2 (Müller & Brown, Theor. Chim. Acta 53, 75 (1979))",
                "K": K, "C": C, "window": MB_WINDOW,
                "stationaryPoints": lambda: stationary(mb, MB_WINDOW, 9),
            },
            "gaussians": {
                "formula": "-sum_k A_k exp(-|r - c_k|^2 / (2 s_k^2))",
                "A": GA.tolist(), "centres": GC.tolist(), "widths": GS.tolist(), "window": G_WINDOW,
                "energyFloor": ENERGY_FLOOR,
                "stationaryPoints": lambda: stationary(gauss, G_WINDOW, 9, ENERGY_FLOOR),
            },
        },
    }
    if "--surface" in sys.argv:
        keep = sys.argv[sys.argv.index("--surface") + 1]
        out["surfaces"] = {keep: out["surfaces"][keep]}
    for surface in out["surfaces"].values():
        surface["stationaryPoints"] = surface["stationaryPoints"]()
    text = json.dumps(out, indent=1) + "\n"
    if "--stdout" in sys.argv:
        sys.stdout.write(text)
        return
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "..", "..", "fixtures", "chem", "stationary-3d.json")
    with open(path, "w") as f:
        f.write(text)
    for name, s in out["surfaces"].items():
        for q in s["stationaryPoints"]:
            print("%-9s %-8s x=%+.6f y=%+.6f z=%+.6f E=%+.6f eig=%s" % (name, q["kind"], q["x"], q["y"], q["z"], q["energy"], [round(e, 3) for e in q["hessianEigenvalues"]]))
    print("wrote", os.path.normpath(path))


if __name__ == "__main__":
    main()
