#!/usr/bin/python3
"""Reference persistence pairs of 3-D grids for sill, computed with GUDHI.

For each small synthetic 3-D grid this script builds, explicitly and
independently of sill's code, the simplicial complex sill analyses
(docs/grids3d.md), gives it the lower-star filtration, runs GUDHI's persistent
homology and writes the finite pairs of dimensions 0, 1 and 2 (positive
persistence only), the Euler characteristic and the simplex counts to
fixtures/reference/gudhi-pairs3.json. The TypeScript tests read that file; when
GUDHI is installed they also run this script's --cases mode live on random grids.

Regenerate with Debian's Python (python3-gudhi, python3-numpy):

    /usr/bin/python3 tests/reference/gudhi_pairs3.py

Point (x, y, z) has id x + nx*(y + ny*z). Complexes:
  * connectivity 14: the Freudenthal (Kuhn) triangulation: every unit cube is
    cut into the 6 tetrahedra {p, p+e_a, p+e_a+e_b, p+(1,1,1)} for the 6 orders
    (a, b, c) of the axes; a simplex is kept when all its points are valid (its
    faces follow). Built from the tetrahedra, not from a graph.
  * connectivity 26: the flag complex of the 26-neighbour graph, built with
    SimplexTree.expansion and checked against the list of all subsets of valid
    points of every 2x2x2 block. Without nodata on a closed or periodic box it
    is also checked with GUDHI's (Periodic)CubicalComplex on one top cell per
    point (nerve theorem: the union of closed cubes has the same homotopy type).
  * open boundary: a layer of outlet points beyond every face of a
    non-periodic axis; nodata points are outlets too; all outlets get the value
    min - 1 and the outlet subcomplex is coned off by an outside vertex of that
    value. Pairs born at that value are left out.
  * periodic axes wrap (at least 4 points each).
Every simplex gets the max of its vertex values.
"""

import itertools
import json
import math
import os
import sys

import numpy as np
import gudhi

FIELD = 11
HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(REPO, "fixtures", "reference", "gudhi-pairs3.json")


class Grid3:
    def __init__(self, nx, ny, nz, values, wrap):
        assert len(values) == nx * ny * nz
        self.n = (nx, ny, nz)
        self.values = values
        self.wrap = wrap
        for a in range(3):
            if wrap[a]:
                assert self.n[a] >= 4

    def locate(self, p):
        q = list(p)
        for a in range(3):
            if self.wrap[a]:
                q[a] %= self.n[a]
            elif q[a] < 0 or q[a] >= self.n[a]:
                return None
        return q[0] + self.n[0] * (q[1] + self.n[1] * q[2])

    def valid_id(self, p):
        i = self.locate(p)
        if i is None or self.values[i] is None:
            return None
        return i

    def anchors(self):
        rng = [range(self.n[a]) if self.wrap[a] else range(self.n[a] - 1) for a in range(3)]
        for z in rng[2]:
            for y in rng[1]:
                for x in rng[0]:
                    yield (x, y, z)


def add(p, d):
    return (p[0] + d[0], p[1] + d[1], p[2] + d[2])


def kuhn_simplices(g):
    out = set()
    for i, v in enumerate(g.values):
        if v is not None:
            out.add((i,))
    for p in g.anchors():
        for perm in itertools.permutations(range(3)):
            pts = [p]
            cur = list(p)
            for a in perm:
                cur[a] += 1
                pts.append(tuple(cur))
            ids = [g.valid_id(q) for q in pts]
            valid = [i for i in ids if i is not None]
            for k in range(1, len(valid) + 1):
                for sub in itertools.combinations(sorted(valid), k):
                    out.add(sub)
    return out


NB26 = [d for d in itertools.product((-1, 0, 1), repeat=3) if d != (0, 0, 0)]


def block_simplices(g):
    out = set()
    for i, v in enumerate(g.values):
        if v is not None:
            out.add((i,))
    for p in g.anchors():
        ids = [g.valid_id(add(p, d)) for d in itertools.product((0, 1), repeat=3)]
        valid = sorted(set(i for i in ids if i is not None))
        for k in range(1, len(valid) + 1):
            for sub in itertools.combinations(valid, k):
                out.add(sub)
    return out


def closed_simplices(g, conn):
    return kuhn_simplices(g) if conn == 14 else block_simplices(g)


def build(g, conn, open_):
    """(simplices, values, outside value or None)."""
    if not open_:
        vals = {i: v for i, v in enumerate(g.values) if v is not None}
        return closed_simplices(g, conn), vals, None
    valid = [v for v in g.values if v is not None]
    lo = min(valid) - 1
    pad = [0 if g.wrap[a] else 1 for a in range(3)]
    pn = tuple(g.n[a] + 2 * pad[a] for a in range(3))
    pvals = []
    ghosts = set()
    for z in range(pn[2]):
        for y in range(pn[1]):
            for x in range(pn[0]):
                q = (x - pad[0], y - pad[1], z - pad[2])
                inside = all(0 <= q[a] < g.n[a] for a in range(3))
                v = g.values[q[0] + g.n[0] * (q[1] + g.n[1] * q[2])] if inside else None
                i = len(pvals)
                if v is None:
                    ghosts.add(i)
                    pvals.append(lo)
                else:
                    pvals.append(v)
    pg = Grid3(pn[0], pn[1], pn[2], pvals, g.wrap)
    simplices = closed_simplices(pg, conn)
    vals = {i: v for i, v in enumerate(pvals)}
    omega = len(pvals)
    vals[omega] = lo
    cone = [tuple(sorted(s + (omega,))) for s in simplices if all(v in ghosts for v in s)]
    simplices.add((omega,))
    simplices |= set(cone)
    return simplices, vals, lo


def simplex_tree(g, conn, open_):
    simplices, vals, outside = build(g, conn, open_)
    st = gudhi.SimplexTree()
    if conn == 26 and not open_:
        for s in simplices:
            if len(s) <= 2:
                st.insert(list(s), filtration=max(vals[v] for v in s))
        st.expansion(8)
        got = set(tuple(sorted(s)) for s, _ in st.get_simplices())
        assert got == simplices, "flag expansion differs from the blocks' subsets"
    else:
        for s in sorted(simplices, key=lambda s: (len(s), s)):
            st.insert(list(s), filtration=max(vals[v] for v in s))
    assert st.num_simplices() == len(simplices)
    for s, f in st.get_simplices():
        assert f == max(vals[v] for v in s)
    return st, simplices, outside


def num(x):
    x = float(x)
    return int(x) if x.is_integer() else x


def analyse(name, nx, ny, nz, values, conn, boundary, periodic_axes, expect_chi=None):
    wrap = [True] * 3 if boundary == "periodic" else [a in periodic_axes for a in "xyz"]
    g = Grid3(nx, ny, nz, values, wrap)
    st, simplices, outside = simplex_tree(g, conn, boundary == "open")
    counts = [0] * (st.dimension() + 1)
    for s in simplices:
        counts[len(s) - 1] += 1
    chi = sum((-1) ** d * k for d, k in enumerate(counts))
    st.compute_persistence(homology_coeff_field=FIELD, min_persistence=-1, persistence_dim_max=True)
    pairs, essential = {}, {}
    for d in range(0, st.dimension() + 1):
        iv = st.persistence_intervals_in_dimension(d)
        fin, ess = [], 0
        for b, e in (iv if len(iv) else []):
            if math.isinf(e):
                ess += 1
                continue
            if e - b <= 0 or (outside is not None and b == outside):
                continue
            fin.append([num(b), num(e)])
        pairs[d] = sorted(fin)
        essential[d] = ess
        if d >= 3:
            assert not fin, "unexpected finite pairs in dimension %d" % d
    assert sum((-1) ** d * k for d, k in essential.items()) == chi
    if expect_chi is not None:
        assert chi == expect_chi, "%s: chi %d, expected %d" % (name, chi, expect_chi)
    res = {
        "name": name, "nx": nx, "ny": ny, "nz": nz,
        "values": [None if v is None else num(v) for v in values],
        "connectivity": conn, "boundary": boundary, "periodicAxes": periodic_axes,
        "outsideValue": None if outside is None else num(outside),
        "pairs0": pairs[0], "pairs1": pairs.get(1, []), "pairs2": pairs.get(2, []),
        "essential": [essential.get(d, 0) for d in range(4)],
        "chi": chi, "simplexCounts": counts,
    }
    if conn == 26 and boundary != "open" and all(v is not None for v in values):
        cubical_check(res, g)
        res["cubical"] = True
    return res


def cubical_check(res, g):
    nx, ny, nz = g.n
    flat = [float(v) for v in g.values]  # x fastest
    if any(g.wrap):
        cc = gudhi.PeriodicCubicalComplex(dimensions=[nx, ny, nz], top_dimensional_cells=flat,
                                          periodic_dimensions=list(g.wrap))
    else:
        cc = gudhi.CubicalComplex(dimensions=[nx, ny, nz], top_dimensional_cells=flat)
    cc.compute_persistence(homology_coeff_field=FIELD, min_persistence=-1)
    for d in (0, 1, 2):
        iv = cc.persistence_intervals_in_dimension(d)
        got = sorted([num(b), num(e)] for b, e in (iv if len(iv) else []) if not math.isinf(e) and e - b > 0)
        assert got == res["pairs%d" % d], "cubical check failed for %s dim %d" % (res["name"], d)


def random_ties(seed, n):
    rs = np.random.RandomState(seed)
    return [int(v) for v in rs.randint(0, 5, size=n)]


def plateaus(seed, nx, ny, nz):
    rs = np.random.RandomState(seed)
    coarse = rs.randint(0, 5, size=((nz + 1) // 2, (ny + 1) // 2, (nx + 1) // 2))
    fine = np.kron(coarse, np.ones((2, 2, 2), dtype=int))[:nz, :ny, :nx].copy()
    for _ in range(max(1, nx * ny * nz // 15)):
        x, y, z = rs.randint(0, nx), rs.randint(0, ny), rs.randint(0, nz)
        fine[z, y, x] += rs.choice([-1, 1])
    return [int(v) for v in fine.ravel()]  # C order of (z, y, x): x fastest


def with_nodata(seed, nx, ny, nz, holes):
    vals = random_ties(seed, nx * ny * nz)
    for x, y, z in holes:
        vals[x + nx * (y + ny * z)] = None
    return vals


def sinsinsin(n):
    out = []
    for z in range(n):
        for y in range(n):
            for x in range(n):
                out.append(float(np.sin(2 * math.pi * x / n) * np.sin(2 * math.pi * y / n) * np.sin(2 * math.pi * z / n)))
    return out


# interior cavity, a face point, an edge point and a two-point interior hole
HOLES = ((2, 1, 1), (0, 1, 3), (5, 0, 0), (3, 3, 1), (3, 3, 2))

# boundary, periodic axes, sizes, expected chi without nodata
LAYOUTS = [
    ("closed", "", (5, 4, 6), 1),
    ("open", "", (6, 7, 5), 0),
    ("periodic", "xyz", (4, 5, 4), 0),
    ("closed", "xy", (4, 4, 3), 0),
    ("open", "z", (5, 6, 5), 1),
]


def case_list():
    cases = []
    seed = 3000
    for conn in (14, 26):
        for bnd, axes, (nx, ny, nz), chi in LAYOUTS:
            tag = bnd if not axes or bnd == "periodic" else "%s-%s" % (bnd, axes)
            seed += 1
            cases.append(("ties-c%d-%s" % (conn, tag), nx, ny, nz, random_ties(seed, nx * ny * nz), conn, bnd, axes, chi))
            seed += 1
            cases.append(("plateau-c%d-%s" % (conn, tag), nx, ny, nz, plateaus(seed, nx, ny, nz), conn, bnd, axes, chi))
        for bnd in ("open", "closed"):
            seed += 1
            # closed: the cavity (2,1,1) adds a 2-sphere and the hole (3,3,1)-(3,3,2) another: chi 3;
            # open: both are outlet regions apart from the outside: two loops, chi -2
            cases.append(("nodata-c%d-%s" % (conn, bnd), 6, 5, 5, with_nodata(seed, 6, 5, 5, HOLES), conn, bnd, "",
                          3 if bnd == "closed" else -2))
        cases.append(("constant-c%d-open" % conn, 3, 3, 3, [2] * 27, conn, "open", "", 0))
        cases.append(("sinsinsin6-c%d-periodic" % conn, 6, 6, 6, sinsinsin(6), conn, "periodic", "xyz", 0))
    return cases


def dumps_case(c):
    return "  " + json.dumps(c, separators=(", ", ": "))


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "--cases":
        # live mode: a JSON list of cases on stdin, their results as a JSON list on stdout
        out = [analyse(c["name"], c["nx"], c["ny"], c["nz"], c["values"], c["connectivity"], c["boundary"], c["periodicAxes"])
               for c in json.loads(sys.stdin.read())]
        print(json.dumps(out))
        return 0
    results = []
    for name, nx, ny, nz, values, conn, bnd, axes, chi in case_list():
        res = analyse(name, nx, ny, nz, values, conn, bnd, axes, chi)
        results.append(res)
        print("%-26s %dx%dx%d c%d %-8s %-3s chi=%2d pairs0=%3d pairs1=%3d pairs2=%3d%s" % (
            name, nx, ny, nz, conn, bnd, axes, res["chi"], len(res["pairs0"]), len(res["pairs1"]),
            len(res["pairs2"]), " cubical=ok" if res.get("cubical") else ""))
    head = {
        "generator": "tests/reference/gudhi_pairs3.py",
        "gudhi_version": gudhi.__version__,
        "numpy_version": np.__version__,
        "coefficient_field": FIELD,
    }
    text = "{\n" + "".join("  %s: %s,\n" % (json.dumps(k), json.dumps(v)) for k, v in head.items())
    text += '  "cases": [\n' + ",\n".join(dumps_case(c) for c in results) + "\n  ]\n}\n"
    assert json.loads(text)["cases"] == json.loads(json.dumps(results))
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        f.write(text)
    print("wrote %s (%d cases)" % (os.path.relpath(OUT, REPO), len(results)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
