#!/usr/bin/python3
"""Densities of small sets of frames by NumPy's histogramdd and SciPy's gaussian_kde.

The checks of src/chem/samples.ts (tests/chem/samples.test.ts) bin the same frames and compare:

- histograms: numpy.histogramdd(frames, bins, range, density=True, weights) — unweighted and
  weighted (2 variables), a 3-variable one (the Grid3 builder), and a periodic one: the angles
  wrapped into [-180, 180) with numpy.mod before binning;
- kernel densities: scipy.stats.gaussian_kde evaluated at the bin centres. SciPy's kernel
  covariance is the frames' sample covariance (numpy.cov, ddof 1) times bw_method squared; sill's
  bandwidth is one standard deviation per axis. The frames are made symmetric about their mean in
  each variable (every (u, v) with (-u, v), (u, -v), (-u, -v)), so their covariance is diagonal and
  SciPy's factor f is the bandwidth f * std per axis, which the script records. For the periodic
  kernel the frames are given to SciPy with their images one period to each side along x (the
  images keep the covariance diagonal); the wrapped density in the window is 3 times SciPy's. A
  3-variable kernel density too (frames symmetric in every variable).

Run with Debian's Python: /usr/bin/python3 tests/reference/samples_reference.py
Output: fixtures/chem/samples-reference.json (with the NumPy and SciPy versions).
"""
import json
import os

import numpy as np
import scipy
from scipy import stats

OUT = os.path.join(os.path.dirname(__file__), "..", "..", "fixtures", "chem", "samples-reference.json")
rs = np.random.RandomState(20261202)


def centres(lo, hi, n):
    w = (hi - lo) / n
    return lo + (np.arange(n) + 0.5) * w


def hist_case(name, frames, bins, rng, weights=None):
    h, _ = np.histogramdd(frames, bins=bins, range=rng, density=True, weights=weights)
    # sill's bins: x fastest (index i + nx*(j + ny*k)); numpy's array is indexed [i, j, k]
    return {
        "name": name,
        "frames": frames.round(12).tolist(),
        "weights": None if weights is None else weights.round(12).tolist(),
        "bins": list(bins),
        "range": [list(r) for r in rng],
        "density": h.transpose().ravel().tolist(),
    }


cases = []
# 2 variables, unweighted, range of the data
f2 = np.column_stack([rs.normal(0.3, 1.0, 400), rs.normal(-1.0, 0.5, 400) + 0.2 * rs.standard_normal(400)])
rng2 = [(float(f2[:, 0].min()), float(f2[:, 0].max())), (float(f2[:, 1].min()), float(f2[:, 1].max()))]
cases.append(hist_case("2-D, range of the data", f2, (7, 5), rng2))
# 2 variables, weighted, a given range (frames outside are left out)
w2 = rs.uniform(0.1, 3.0, 400)
cases.append(hist_case("2-D weighted, given range", f2, (6, 8), [(-1.5, 2.0), (-2.0, 0.0)], w2))
# 3 variables
f3 = rs.normal(size=(600, 3)) * [1.0, 2.0, 0.5]
rng3 = [(float(f3[:, a].min()), float(f3[:, a].max())) for a in range(3)]
cases.append(hist_case("3-D, range of the data", f3, (4, 5, 3), rng3))
# periodic angles (degrees): frames beyond the period, wrapped into [-180, 180)
fp = np.column_stack([rs.uniform(-540, 540, 500), rs.normal(60, 50, 500)])
wrapped = fp.copy()
wrapped[:, 0] = np.mod(fp[:, 0] + 180.0, 360.0) - 180.0
c = hist_case("periodic x (degrees)", wrapped, (12, 6), [(-180.0, 180.0), (float(fp[:, 1].min()), float(fp[:, 1].max()))])
c["frames"] = fp.round(12).tolist()  # sill gets the unwrapped angles
cases.append(c)


def symmetric(n, sx, sy):
    u, v = rs.normal(0, sx, n), rs.normal(0, sy, n)
    return np.column_stack([np.concatenate([u, -u, u, -u]), np.concatenate([v, v, -v, -v])])


kde = []
# plain: symmetric frames about (0.5, -0.25)
fk = symmetric(50, 1.0, 0.6) + [0.5, -0.25]
f = 0.35
std = np.sqrt(np.diag(np.cov(fk.T)))
rngk = [(-3.0, 4.0), (-2.5, 2.0)]
binsk = (14, 9)
gx, gy = np.meshgrid(centres(*rngk[0], binsk[0]), centres(*rngk[1], binsk[1]))
pts = np.vstack([gx.ravel(), gy.ravel()])  # x fastest, as sill
d = stats.gaussian_kde(fk.T, bw_method=f)(pts)
kde.append({"name": "2-D kernel density", "frames": fk.round(12).tolist(), "bins": list(binsk), "range": [list(r) for r in rngk],
            "bwMethod": f, "covariance": np.cov(fk.T).tolist(), "bandwidth": (f * std).tolist(), "periodic": [False, False], "density": d.tolist()})
# periodic x: period 360, frames symmetric about (0, 20) in degrees
fq = symmetric(40, 40.0, 15.0) + [0.0, 20.0]
P = 360.0
aug = np.concatenate([fq, fq + [P, 0.0], fq - [P, 0.0]])
cov = np.cov(aug.T)
f = 0.08
bw = f * np.sqrt(np.diag(cov))
rngq = [(-180.0, 180.0), (0.0, 40.0)]
binsq = (24, 10)
gx, gy = np.meshgrid(centres(*rngq[0], binsq[0]), centres(*rngq[1], binsq[1]))
pts = np.vstack([gx.ravel(), gy.ravel()])
d = 3 * stats.gaussian_kde(aug.T, bw_method=f)(pts)
kde.append({"name": "periodic x kernel density", "frames": fq.round(12).tolist(), "bins": list(binsq), "range": [list(r) for r in rngq],
            "bwMethod": f, "covariance": cov.tolist(), "bandwidth": bw.tolist(), "periodic": [True, False], "density": d.tolist()})

# 3 variables: frames symmetric in each variable about (0, 1, -1) (all 8 sign combinations)
u, v, w = rs.normal(0, 1.0, 20), rs.normal(0, 0.5, 20), rs.normal(0, 2.0, 20)
f3k = np.array([[a * x, b * y, c * z] for a in (1, -1) for b in (1, -1) for c in (1, -1) for x, y, z in zip(u, v, w)]) + [0.0, 1.0, -1.0]
f = 0.4
cov3 = np.cov(f3k.T)
bw3 = f * np.sqrt(np.diag(cov3))
rng3k = [(-3.0, 3.0), (-0.5, 2.5), (-6.0, 4.0)]
bins3k = (8, 6, 5)
gx, gy, gz = np.meshgrid(centres(*rng3k[0], bins3k[0]), centres(*rng3k[1], bins3k[1]), centres(*rng3k[2], bins3k[2]), indexing="ij")
# x fastest: order the points by (z, y, x)
pts = np.vstack([gx.transpose(2, 1, 0).ravel(), gy.transpose(2, 1, 0).ravel(), gz.transpose(2, 1, 0).ravel()])
d = stats.gaussian_kde(f3k.T, bw_method=f)(pts)
kde.append({"name": "3-D kernel density", "frames": f3k.round(12).tolist(), "bins": list(bins3k), "range": [list(r) for r in rng3k],
            "bwMethod": f, "covariance": cov3.tolist(), "bandwidth": bw3.tolist(), "periodic": [False, False, False], "density": d.tolist()})

for k in kde:
    c = np.array(k["covariance"])
    assert np.all(np.abs(c - np.diag(np.diag(c))) < 1e-9 * np.max(np.diag(c))), k["name"]

# bootstrap summaries: the standard deviation (ddof 1) and the 2.5 / 97.5 percentiles (NumPy's default, linear)
vals = rs.gamma(2.0, 1.5, 37)
spread = {"values": vals.round(12).tolist(), "mean": float(vals.round(12).mean()), "se": float(vals.round(12).std(ddof=1)),
          "low": float(np.percentile(vals.round(12), 2.5)), "high": float(np.percentile(vals.round(12), 97.5))}

out = {"spread": spread, "numpy": np.__version__, "scipy": scipy.__version__, "histograms": cases, "kde": kde}
with open(OUT, "w") as fh:
    json.dump(out, fh, indent=1)
    fh.write("\n")
for c in cases:
    print(c["name"], c["bins"])
for k in kde:
    print(k["name"], k["bins"], "bandwidth", k["bandwidth"])
