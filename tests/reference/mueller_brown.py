#!/usr/bin/python3
"""Stationary points of the Müller–Brown potential, found with SciPy's root finder.

Müller & Brown, Theor. Chim. Acta 53, 75 (1979), define

    V(x, y) = sum_k A_k exp(a_k (x - x0_k)^2 + b_k (x - x0_k)(y - y0_k) + c_k (y - y0_k)^2)

with the four parameter sets below. This script solves grad V = 0 with
scipy.optimize.root (method 'hybr', analytic gradient and Hessian as Jacobian)
from a 60 x 60 lattice of starting points covering the window, keeps the distinct
converged roots inside the window, classifies them by the eigenvalues of the
analytic Hessian (numpy.linalg.eigvalsh) and writes
fixtures/chem/mueller-brown.json with the SciPy and NumPy versions.

It also records the CODATA constants as SciPy tabulates them (scipy.constants),
for the unit-conversion checks.

Run with Debian's Python: /usr/bin/python3 tests/reference/mueller_brown.py
"""
import json
import os
import sys

import numpy as np
import scipy
from scipy import constants, optimize

A = np.array([-200.0, -100.0, -170.0, 15.0])
a = np.array([-1.0, -1.0, -6.5, 0.7])
b = np.array([0.0, 0.0, 11.0, 0.6])
c = np.array([-10.0, -10.0, -6.5, 0.7])
x0 = np.array([1.0, 0.0, -0.5, -1.0])
y0 = np.array([0.0, 0.5, 1.5, 1.0])

WINDOW = {"x": [-1.5, 1.2], "y": [-0.5, 2.0]}


def terms(p):
    dx, dy = p[0] - x0, p[1] - y0
    e = A * np.exp(a * dx * dx + b * dx * dy + c * dy * dy)
    gx = 2 * a * dx + b * dy  # d(exponent)/dx
    gy = b * dx + 2 * c * dy
    return e, gx, gy


def energy(p):
    return float(np.sum(terms(p)[0]))


def gradient(p):
    e, gx, gy = terms(p)
    return np.array([np.sum(e * gx), np.sum(e * gy)])


def hessian(p):
    e, gx, gy = terms(p)
    hxx = np.sum(e * (gx * gx + 2 * a))
    hxy = np.sum(e * (gx * gy + b))
    hyy = np.sum(e * (gy * gy + 2 * c))
    return np.array([[hxx, hxy], [hxy, hyy]])


def main():
    np.seterr(over="ignore")  # starting points far out overflow exp; those roots are discarded
    roots = []
    for sx in np.linspace(*WINDOW["x"], 60):
        for sy in np.linspace(*WINDOW["y"], 60):
            sol = optimize.root(gradient, [sx, sy], jac=hessian, method="hybr", options={"xtol": 1e-14})
            if not sol.success:
                continue
            p = sol.x
            if not (WINDOW["x"][0] <= p[0] <= WINDOW["x"][1] and WINDOW["y"][0] <= p[1] <= WINDOW["y"][1]):
                continue
            if np.linalg.norm(gradient(p)) > 1e-8:
                continue
            if any(np.hypot(*(p - q)) < 1e-6 for q in roots):
                continue
            roots.append(p)
    points = []
    for p in roots:
        H = hessian(p)
        ev = np.linalg.eigvalsh(H)
        neg = int(np.sum(ev < 0))
        kind = {0: "minimum", 1: "saddle", 2: "maximum"}[neg]
        points.append({
            "kind": kind,
            "x": float(p[0]), "y": float(p[1]),
            "energy": energy(p),
            "gradientNorm": float(np.linalg.norm(gradient(p))),
            "hessian": [[float(H[0, 0]), float(H[0, 1])], [float(H[1, 0]), float(H[1, 1])]],
            "hessianEigenvalues": [float(ev[0]), float(ev[1])],
        })
    points.sort(key=lambda q: (q["kind"], q["energy"]))
    codata = {
        "edition": "CODATA 2018 (scipy.constants %s)" % scipy.__version__,
        "h": constants.h,
        "k_B": constants.k,
        "N_A": constants.N_A,
        "e": constants.e,
        "R": constants.R,
        "hartree": constants.physical_constants["Hartree energy"][0],
        "calorie_th": constants.calorie,
    }
    # Eyring prefactor k_B T / h at 298.15 K from the same constants
    codata["eyringPrefactor298_15"] = constants.k * 298.15 / constants.h
    out = {
        "source": "Müller & Brown, Theor. Chim. Acta 53, 75 (1979); stationary points by scipy.optimize.root (hybr) on the analytic gradient",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "python": sys.version.split()[0],
        "parameters": {"A": A.tolist(), "a": a.tolist(), "b": b.tolist(), "c": c.tolist(), "x0": x0.tolist(), "y0": y0.tolist()},
        "window": WINDOW,
        "stationaryPoints": points,
        "codata": codata,
    }
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "..", "..", "fixtures", "chem", "mueller-brown.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    for q in points:
        print("%-8s x=%+.6f y=%+.6f E=%+.6f eig=%s" % (q["kind"], q["x"], q["y"], q["energy"], q["hessianEigenvalues"]))
    print("wrote", os.path.normpath(path))


if __name__ == "__main__":
    main()
