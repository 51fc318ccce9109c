#!/usr/bin/python3
"""Reference persistence pairs for sill, computed with GUDHI.

For each small synthetic grid this script builds, explicitly, the simplicial
complex that sill analyses (see DESIGN.md section 3: connectivity 4/6/8,
boundary open/closed/periodic/periodic-x/periodic-y, nodata removal), puts the
lower-star filtration on it, runs GUDHI's persistent homology and writes the
finite pairs of dimension 0 and 1 (positive persistence only) plus the number
of essential classes per dimension to fixtures/reference/gudhi-pairs.json.

The TypeScript tests read that JSON (no Python needed in CI).

Regenerate with (Debian's Python, packages python3-gudhi / python3-numpy):

    /usr/bin/python3 tests/reference/gudhi_pairs.py

Complexes (vertex id of cell (col,row) is row*width + col):
  * connectivity 8: flag complex of the king-move graph (built with
    SimplexTree.expansion and cross-checked against explicitly listed cliques).
  * connectivity 6: Freudenthal triangulation, neighbours (+-1,0), (0,+-1),
    (+1,+1), (-1,-1); triangles {(c,r),(c+1,r),(c+1,r+1)} and
    {(c,r),(c,r+1),(c+1,r+1)}.
  * connectivity 4: cubical complex (4-neighbour edges, fully valid 2x2 blocks
    as squares) with each square subdivided by a centre vertex whose value is
    the max of its corners (centre-corner edges, centre+side triangles).
  * open boundary: the grid padded with a frame of outlet cells; nodata cells
    are outlets too; all outlets (value min-1) are coned off by one outside
    vertex (value min-1) — the cone over the outlet subcomplex G, homotopy
    equivalent to identifying every outlet with the outside vertex.
  * periodic / periodic-x / periodic-y: neighbours and 2x2 blocks wrap.
Every simplex gets the max of its vertex values (lower star).
"""

import itertools
import json
import math
import os
import sys

import numpy as np
import gudhi

FIELD = 11  # coefficient field Z/11 (GUDHI default)

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(REPO, "fixtures", "reference", "gudhi-pairs.json")

BOUNDARIES = ("open", "closed", "periodic", "periodic-x", "periodic-y")


# ---------------------------------------------------------------------------
# complex construction
# ---------------------------------------------------------------------------

class Grid:
    def __init__(self, width, height, values, boundary):
        assert len(values) == width * height
        self.w = width
        self.h = height
        self.values = values
        self.wrap_x = boundary in ("periodic", "periodic-x")
        self.wrap_y = boundary in ("periodic", "periodic-y")
        if self.wrap_x:
            assert width >= 4, "wrapped dimension must be >= 4"
        if self.wrap_y:
            assert height >= 4, "wrapped dimension must be >= 4"

    def valid(self, i):
        return self.values[i] is not None

    def locate(self, c, r):
        """Vertex id of (c, r) after wrapping, or None if off-grid (no nodata test)."""
        if self.wrap_x:
            c %= self.w
        if self.wrap_y:
            r %= self.h
        if c < 0 or c >= self.w or r < 0 or r >= self.h:
            return None
        return r * self.w + c

    def cell(self, c, r):
        """Vertex id of a valid cell at (c, r) (wrapped), else None."""
        i = self.locate(c, r)
        if i is None or not self.valid(i):
            return None
        return i

    def block_origins(self):
        """Top-left corners of all 2x2 blocks (wrapping where periodic)."""
        cols = range(self.w) if self.wrap_x else range(self.w - 1)
        rows = range(self.h) if self.wrap_y else range(self.h - 1)
        for r in rows:
            for c in cols:
                yield c, r

    def valid_cells(self):
        return [i for i in range(self.w * self.h) if self.valid(i)]


FORWARD = {
    4: ((1, 0), (0, 1)),
    6: ((1, 0), (0, 1), (1, 1)),
    8: ((1, 0), (0, 1), (1, 1), (-1, 1)),
}

RING = {
    4: tuple((dc, dr) for dr in (-1, 0, 1) for dc in (-1, 0, 1) if (dc, dr) != (0, 0)),
    8: tuple((dc, dr) for dr in (-1, 0, 1) for dc in (-1, 0, 1) if (dc, dr) != (0, 0)),
    6: ((1, 0), (-1, 0), (0, 1), (0, -1), (1, 1), (-1, -1)),
}


def grid_edges(g, conn):
    edges = set()
    for i in g.valid_cells():
        c, r = i % g.w, i // g.w
        for dc, dr in FORWARD[conn]:
            j = g.cell(c + dc, r + dr)
            if j is not None and j != i:
                edges.add(tuple(sorted((i, j))))
    return edges


def faces_closed(simplices):
    s = set(simplices)
    for sigma in s:
        if len(sigma) > 1:
            for tau in itertools.combinations(sigma, len(sigma) - 1):
                if tau not in s:
                    return False
    return True


def build_simplices(g, conn, boundary):
    """Return (set of sorted vertex tuples, vertex values dict, omega id or None).

    Open boundary: the grid is padded with a frame of outlet cells, nodata cells
    become outlets too, every outlet gets the value min-1 (standing for -inf),
    and the outlet subcomplex G is coned off by an outside vertex omega (also
    min-1). P with cone(G) is homotopy equivalent to P/G at every level: all
    outlets identified to one outside vertex.
    """
    if boundary == "open":
        lo = min(g.values[i] for i in g.valid_cells()) - 1
        pw, ph = g.w + 2, g.h + 2
        padded = [lo] * (pw * ph)
        ghosts = set()
        for r in range(ph):
            for c in range(pw):
                inside = 1 <= c <= g.w and 1 <= r <= g.h
                v = g.values[(r - 1) * g.w + (c - 1)] if inside else None
                if v is None:
                    ghosts.add(r * pw + c)
                else:
                    padded[r * pw + c] = v
        pg = Grid(pw, ph, padded, "closed")
        simplices, vals, _ = build_simplices(pg, conn, "closed")
        if conn == 4:
            # the centre vertex of a square whose 4 corners are outlets is an outlet too
            for c, r in pg.block_origins():
                corners = (r * pw + c, r * pw + c + 1, (r + 1) * pw + c, (r + 1) * pw + c + 1)
                if all(v in ghosts for v in corners):
                    ghosts.add(pw * ph + r * pw + c)
        big = 2 * pw * ph + 1
        omega = big
        vals[omega] = lo
        cone = [tuple(sorted(s_ + (omega,))) for s_ in simplices
                if all(v in ghosts for v in s_)]
        simplices.add((omega,))
        simplices |= set(cone)
        assert faces_closed(simplices), "complex not closed under faces"
        return simplices, vals, omega
    n = g.w * g.h
    vals = {i: g.values[i] for i in g.valid_cells()}
    simplices = set((i,) for i in vals)
    edges = grid_edges(g, conn)
    simplices |= edges
    omega = None
    square_simplices = []  # (corners, simplices of the subdivided square) for conn 4

    if conn == 8:
        for c, r in g.block_origins():
            block = [g.cell(c, r), g.cell(c + 1, r), g.cell(c, r + 1), g.cell(c + 1, r + 1)]
            block = [v for v in block if v is not None]
            for k in (3, 4):
                for sub in itertools.combinations(sorted(block), k):
                    simplices.add(sub)
    elif conn == 6:
        for c, r in g.block_origins():
            a, b = g.cell(c, r), g.cell(c + 1, r)
            e, d = g.cell(c, r + 1), g.cell(c + 1, r + 1)
            for tri in ((a, b, d), (a, e, d)):
                if None not in tri:
                    simplices.add(tuple(sorted(tri)))
    elif conn == 4:
        for c, r in g.block_origins():
            a, b = g.cell(c, r), g.cell(c + 1, r)
            e, d = g.cell(c, r + 1), g.cell(c + 1, r + 1)
            if None in (a, b, d, e):
                continue
            centre = n + r * g.w + c
            vals[centre] = max(vals[a], vals[b], vals[d], vals[e])
            sq = [(centre,)]
            for corner in (a, b, d, e):
                sq.append(tuple(sorted((centre, corner))))
            for s0, s1 in ((a, b), (b, d), (d, e), (e, a)):
                sq.append(tuple(sorted((centre, s0, s1))))
            simplices |= set(sq)
            square_simplices.append(((a, b, d, e), sq))
    else:
        raise ValueError(conn)

    assert faces_closed(simplices), "complex not closed under faces"
    return simplices, vals, omega


def simplex_tree(g, conn, boundary):
    simplices, vals, omega = build_simplices(g, conn, boundary)
    st = gudhi.SimplexTree()
    if conn == 8:
        # flag complex: insert vertices and edges, expand, compare with the
        # explicitly listed cliques
        for s in sorted(simplices, key=len):
            if len(s) <= 2:
                st.insert(list(s), filtration=max(vals[v] for v in s))
        st.expansion(5)
        got = set(tuple(sorted(s)) for s, _ in st.get_simplices())
        assert got == simplices, "flag expansion differs from explicit cliques (%d vs %d)" % (
            len(got), len(simplices))
    else:
        for s in sorted(simplices, key=lambda s: (len(s), s)):
            st.insert(list(s), filtration=max(vals[v] for v in s))
    assert st.num_simplices() == len(simplices)
    # lower star: every simplex carries the max of its vertex values
    for s, f in st.get_simplices():
        assert f == max(vals[v] for v in s), (s, f)
    assert not st.make_filtration_non_decreasing()
    return st, simplices, vals, omega


# ---------------------------------------------------------------------------
# persistence
# ---------------------------------------------------------------------------

def num(x):
    """Integer-valued floats as ints (lossless), others unchanged."""
    x = float(x)
    if x.is_integer():
        return int(x)
    return x


def analyse(name, width, height, values, conn, boundary, expect_chi=None):
    g = Grid(width, height, values, boundary)
    st, simplices, vals, omega = simplex_tree(g, conn, boundary)
    counts = [0] * (st.dimension() + 1)
    for s in simplices:
        counts[len(s) - 1] += 1
    chi = sum((-1) ** d * k for d, k in enumerate(counts))

    st.compute_persistence(homology_coeff_field=FIELD, min_persistence=-1,
                           persistence_dim_max=True)
    omega_value = vals[omega] if omega is not None else None
    pairs = {}
    essential = {}
    for d in range(0, 3):
        iv = st.persistence_intervals_in_dimension(d)
        fin = []
        ess = 0
        for b, dth in (iv if len(iv) else []):
            if math.isinf(dth):
                ess += 1
                continue
            if dth - b <= 0:
                continue
            if omega_value is not None and b == omega_value:
                continue
            fin.append([num(b), num(dth)])
        fin.sort()
        pairs[d] = fin
        essential[str(d)] = ess
    for d in range(3, st.dimension() + 1):
        iv = st.persistence_intervals_in_dimension(d)
        assert len(iv) == 0 or all(dd - b <= 0 for b, dd in iv), "unexpected H%d" % d

    # the essential classes are the homology of the whole complex
    ess_chi = sum((-1) ** int(d) * k for d, k in essential.items())
    assert ess_chi == chi, (name, ess_chi, chi)
    if expect_chi is not None:
        assert chi == expect_chi, "%s: chi %d, expected %d" % (name, chi, expect_chi)

    return {
        "name": name,
        "width": width,
        "height": height,
        "values": [None if v is None else num(v) for v in values],
        "connectivity": conn,
        "boundary": boundary,
        "outsideValue": None if omega_value is None else num(omega_value),
        "pairs0": pairs[0],
        "pairs1": pairs[1],
        "pairs2": pairs[2],
        "essential": essential,
        "chi": chi,
        "simplexCounts": counts,
    }


# ---------------------------------------------------------------------------
# independent cross-check with GUDHI's cubical complexes
# ---------------------------------------------------------------------------
#
# connectivity 8: the union of the closed pixels whose value is <= t has, by
# the nerve theorem, the homotopy type of the flag complex of the king graph
# on those cells, so a (periodic) cubical complex with one top cell per grid
# cell gives the same persistence.
# connectivity 4: vertex-valued cubical complex, emulated with top cells on a
# refined grid (vertex, edge and square pixels, each carrying the max of the
# grid cells it touches).
# Open boundary (no nodata only): a frame of pixels at the outside value; the
# extra loop around the frame is born at the outside value and is filtered out
# together with everything else born there. For connectivity 8 the frame model
# lacks the corner triangles {outside, (1,0), (0,1)} of the flag complex, so
# it is compared with our complex minus those four triangles.
# Nodata cells become pixels with a huge value; pairs dying there are dropped.

def cubical_pairs(g, conn, boundary):
    valid = [v for v in g.values if v is not None]
    lo, big = min(valid) - 1, max(valid) + 1000
    w, h = g.w, g.h
    hole = lo if boundary == "open" else big  # open: nodata cells are outlets
    grid = [[hole if g.values[r * w + c] is None else g.values[r * w + c]
             for c in range(w)] for r in range(h)]
    if boundary == "open":
        grid = [[lo] * (w + 2)] + [[lo] + row + [lo] for row in grid] + [[lo] * (w + 2)]
        w, h = w + 2, h + 2
    wx, wy = g.wrap_x, g.wrap_y
    if conn == 8:
        cells, dw, dh = grid, w, h
    else:
        dw = 2 * w if wx else 2 * w - 1
        dh = 2 * h if wy else 2 * h - 1
        cells = [[max(grid[(j // 2 + dj) % h][(i // 2 + di) % w]
                      for dj in range(1 + j % 2) for di in range(1 + i % 2))
                  for i in range(dw)] for j in range(dh)]
    flat = [float(v) for row in cells for v in row]  # first dimension (x) fastest
    if wx or wy:
        cc = gudhi.PeriodicCubicalComplex(dimensions=[dw, dh], top_dimensional_cells=flat,
                                          periodic_dimensions=[wx, wy])
    else:
        cc = gudhi.CubicalComplex(dimensions=[dw, dh], top_dimensional_cells=flat)
    cc.compute_persistence(homology_coeff_field=FIELD, min_persistence=-1)
    out = {}
    for d in (0, 1):
        iv = cc.persistence_intervals_in_dimension(d)
        out[d] = sorted([num(b), num(e)] for b, e in (iv if len(iv) else [])
                        if not math.isinf(e) and e - b > 0 and b != lo and e != big)
    return out


def cross_check(case):
    conn, bnd = case["connectivity"], case["boundary"]
    if conn == 6:
        return None
    g = Grid(case["width"], case["height"], case["values"], bnd)
    cp = cubical_pairs(g, conn, bnd)
    mine = {0: case["pairs0"], 1: case["pairs1"]}
    ok = cp[0] == mine[0] and cp[1] == mine[1]
    assert ok, "cubical cross-check failed for %s: %s vs %s / %s vs %s" % (
        case["name"], cp[0], mine[0], cp[1], mine[1])
    return True


# ---------------------------------------------------------------------------
# test grids (our own synthetic arrays)
# ---------------------------------------------------------------------------

def random_ties(seed, w, h):
    rs = np.random.RandomState(seed)
    return [int(v) for v in rs.randint(0, 6, size=(h, w)).ravel()]


def plateaus(seed, w, h):
    """Coarse random 3x3 blocks (large flat areas) with a few single-cell bumps."""
    rs = np.random.RandomState(seed)
    coarse = rs.randint(0, 6, size=((h + 2) // 3, (w + 2) // 3))
    fine = np.kron(coarse, np.ones((3, 3), dtype=int))[:h, :w].copy()
    for _ in range(max(1, (w * h) // 20)):
        c, r = rs.randint(0, w), rs.randint(0, h)
        fine[r, c] += rs.choice([-1, 1])
    return [int(v) for v in fine.ravel()]


def with_nodata(seed, w, h, holes):
    vals = random_ties(seed, w, h)
    for c, r in holes:
        vals[r * w + c] = None
    return vals


# 10x9: an edge cell, a corner cell, an interior L-shaped hole and a single
# interior cell; their omega-adjacent rings touch each other and the grid edge.
HOLES_JOINED = ((0, 3), (9, 8), (4, 3), (5, 3), (4, 4), (7, 6))
# 12x12: an edge cell, a corner cell, an interior L-shaped hole and a single
# interior cell whose rings of neighbours are pairwise apart and apart from
# the edge ring. With an open boundary each interior hole adds an essential
# 1-cycle (outside -> grid edge -> hole -> outside), in both layouts.
HOLES_ISOLATED = ((0, 3), (11, 0), (4, 3), (5, 3), (4, 4), (8, 8))


def sinsin(n):
    vals = []
    for r in range(n):
        for c in range(n):
            x = 2 * math.pi * c / n
            y = 2 * math.pi * r / n
            vals.append(float(np.sin(x) * np.sin(y)))
    return vals


# Euler characteristic of the analysed complex: rectangle 1, rectangle with its
# outlets identified to one outside vertex (sphere) 2, torus and cylinder 0;
# each interior nodata hole lowers a closed rectangle by 1; with an open
# boundary every nodata region not touching the grid edge is an outlet region
# of its own, and identifying it with the others adds a loop (lowers chi by 1).
PLAIN_CHI = {"open": 2, "closed": 1, "periodic": 0, "periodic-x": 0, "periodic-y": 0}
NODATA_CHI = {("joined", "open"): 0, ("joined", "closed"): -1,
              ("isolated", "open"): 0, ("isolated", "closed"): -1}


def case_list():
    cases = []
    # sizes: width != height to catch row/column mix-ups; wrapped dims >= 4
    sizes = {"open": (9, 7), "closed": (8, 10), "periodic": (7, 6),
             "periodic-x": (6, 9), "periodic-y": (10, 5)}
    seed = 1000
    for conn in (8, 6, 4):
        for bnd in BOUNDARIES:
            w, h = sizes[bnd]
            seed += 1
            cases.append(("ties-c%d-%s" % (conn, bnd), w, h, random_ties(seed, w, h), conn, bnd,
                          PLAIN_CHI[bnd]))
            seed += 1
            pw, ph = w + 2, h + 1
            cases.append(("plateau-c%d-%s" % (conn, bnd), pw, ph, plateaus(seed, pw, ph), conn, bnd,
                          PLAIN_CHI[bnd]))
            if bnd in ("open", "closed"):
                seed += 1
                cases.append(("nodata-joined-c%d-%s" % (conn, bnd), 10, 9,
                              with_nodata(seed, 10, 9, HOLES_JOINED), conn, bnd,
                              NODATA_CHI["joined", bnd]))
                seed += 1
                cases.append(("nodata-isolated-c%d-%s" % (conn, bnd), 12, 12,
                              with_nodata(seed, 12, 12, HOLES_ISOLATED), conn, bnd,
                              NODATA_CHI["isolated", bnd]))
        # a constant grid: everything tied, no finite pair survives
        cases.append(("constant-c%d-open" % conn, 5, 4, [3] * 20, conn, "open", 2))
    for conn in (8, 6, 4):
        cases.append(("sinsin16-c%d-periodic" % conn, 16, 16, sinsin(16), conn, "periodic", 0))
    return cases


# ---------------------------------------------------------------------------
# output
# ---------------------------------------------------------------------------

def dumps_case(case):
    w = case["width"]
    lines = []
    for k, v in case.items():
        if k == "values":
            rows = [json.dumps(v[i:i + w], separators=(", ", ": "))[1:-1]
                    for i in range(0, len(v), w)]
            lines.append('    "values": [\n      ' + ",\n      ".join(rows) + "\n    ]")
        else:
            lines.append("    %s: %s" % (json.dumps(k), json.dumps(v, separators=(", ", ": "))))
    return "  {\n" + ",\n".join(lines) + "\n  }"


def main():
    results = []
    for name, w, h, values, conn, bnd, chi in case_list():
        res = analyse(name, w, h, values, conn, bnd, chi)
        results.append(res)
        xc = cross_check(res)
        print("%-28s %2dx%-2d c%d %-10s chi=%2d pairs0=%3d pairs1=%3d pairs2=%d essential=%s simplices=%s%s" % (
            name, w, h, conn, bnd, res["chi"], len(res["pairs0"]), len(res["pairs1"]),
            len(res["pairs2"]), "/".join(str(res["essential"][d]) for d in "012"),
            res["simplexCounts"], "" if xc is None else " cubical=ok"))
    head = {
        "generator": "tests/reference/gudhi_pairs.py",
        "gudhi_version": gudhi.__version__,
        "numpy_version": np.__version__,
        "coefficient_field": FIELD,
    }
    text = "{\n" + "".join("  %s: %s,\n" % (json.dumps(k), json.dumps(v)) for k, v in head.items())
    text += '  "cases": [\n' + ",\n".join(dumps_case(c) for c in results) + "\n  ]\n}\n"
    parsed = json.loads(text)
    assert parsed["cases"] == json.loads(json.dumps(results)), "serialisation round trip failed"
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        f.write(text)
    print("wrote %s (%d cases)" % (os.path.relpath(OUT, REPO), len(results)))


if __name__ == "__main__":
    sys.exit(main())
