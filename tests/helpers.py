"""Independent checks for triangulations returned by ``engine``.

Nothing here calls into ``engine``: the tests use these functions so that they
do not have to trust the engine's own validator.

Exactness
---------
Every float is a dyadic rational, so ``fractions.Fraction(x)`` represents it
exactly.  For speed, ``ExactPoints`` converts all coordinates with ``Fraction``
and then multiplies them by their common power-of-two denominator, giving
plain Python integers.  The orientation and in-circle determinants below are
then evaluated in exact integer arithmetic; scaling all coordinates by the
same positive number does not change any sign, so the results are exactly
the signs that ``Fraction`` arithmetic on the original floats would give.
"""

from __future__ import annotations

import math
from collections import defaultdict, deque
from fractions import Fraction

import numpy as np
import shapely
from shapely.geometry import MultiPoint, Polygon

# Tolerance for points the engine *adds* (segment intersections): their true
# position is generally not representable in floating point, so the brief
# allows them to sit within 1e-9 (relative) of the segments they split.
ADDED_POINT_REL_TOL = 1e-9
AREA_REL_TOL = 1e-9


# --------------------------------------------------------------------------
# exact arithmetic
# --------------------------------------------------------------------------
class ExactPoints:
    """Coordinates as exact integers over a shared power-of-two denominator."""

    def __init__(self, points):
        pts = np.asarray(points, dtype=np.float64).reshape(-1, 2)
        fracs = [(Fraction(float(x)), Fraction(float(y))) for x, y in pts]
        den = 1
        for fx, fy in fracs:
            # denominators of floats are powers of two, so the largest one is
            # a common multiple of all of them
            den = max(den, fx.denominator, fy.denominator)
        self.den = den
        self.x = [int(fx * den) for fx, _ in fracs]
        self.y = [int(fy * den) for _, fy in fracs]
        self.n = len(fracs)

    def key(self, i):
        return (self.x[i], self.y[i])

    def orient(self, a, b, c):
        """Exact sign source: > 0 iff a, b, c turn counter-clockwise."""
        x, y = self.x, self.y
        return (x[b] - x[a]) * (y[c] - y[a]) - (y[b] - y[a]) * (x[c] - x[a])

    def incircle(self, a, b, c, d):
        """> 0 iff d lies strictly inside the circle through CCW a, b, c."""
        x, y = self.x, self.y
        adx, ady = x[a] - x[d], y[a] - y[d]
        bdx, bdy = x[b] - x[d], y[b] - y[d]
        cdx, cdy = x[c] - x[d], y[c] - y[d]
        return ((adx * adx + ady * ady) * (bdx * cdy - cdx * bdy)
                + (bdx * bdx + bdy * bdy) * (cdx * ady - adx * cdy)
                + (cdx * cdx + cdy * cdy) * (adx * bdy - bdx * ady))

    def on_closed_segment(self, a, b, p):
        """Exact: p lies on the closed segment ab."""
        if self.orient(a, b, p) != 0:
            return False
        x, y = self.x, self.y
        return (min(x[a], x[b]) <= x[p] <= max(x[a], x[b])
                and min(y[a], y[b]) <= y[p] <= max(y[a], y[b]))

    def twice_area(self, triangles):
        """Exact doubled signed area of a set of triangles, as a Fraction."""
        s = 0
        for a, b, c in triangles:
            s += self.orient(int(a), int(b), int(c))
        return Fraction(s, self.den * self.den)


def exact_orient_sign(ax, ay, bx, by, cx, cy):
    """Sign of orient2d evaluated with Fractions (reference for predicates)."""
    ax, ay, bx, by, cx, cy = map(Fraction, (ax, ay, bx, by, cx, cy))
    d = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
    return (d > 0) - (d < 0)


def exact_incircle_sign(ax, ay, bx, by, cx, cy, dx, dy):
    """Sign of the in-circle determinant evaluated with Fractions."""
    ax, ay, bx, by, cx, cy, dx, dy = map(
        Fraction, (ax, ay, bx, by, cx, cy, dx, dy))
    adx, ady = ax - dx, ay - dy
    bdx, bdy = bx - dx, by - dy
    cdx, cdy = cx - dx, cy - dy
    d = ((adx * adx + ady * ady) * (bdx * cdy - cdx * bdy)
         + (bdx * bdx + bdy * bdy) * (cdx * ady - adx * cdy)
         + (cdx * cdx + cdy * cdy) * (adx * bdy - bdx * ady))
    return (d > 0) - (d < 0)


def sign(v):
    return int(v > 0) - int(v < 0)


# --------------------------------------------------------------------------
# point-set facts
# --------------------------------------------------------------------------
def distinct_indices(points):
    """Indices of the first copy of each distinct point, in input order."""
    seen = {}
    keep = []
    for i, (x, y) in enumerate(np.asarray(points, dtype=np.float64)):
        k = (float(x), float(y))
        if k not in seen:
            seen[k] = i
            keep.append(i)
    return keep


def first_copy_map(points):
    """For every row, the index of the first row with identical coordinates."""
    seen = {}
    out = []
    for i, (x, y) in enumerate(np.asarray(points, dtype=np.float64)):
        k = (float(x), float(y))
        seen.setdefault(k, i)
        out.append(seen[k])
    return np.array(out, dtype=np.int64)


def all_collinear(points):
    """Exact: True if the distinct points do not span a triangle."""
    idx = distinct_indices(points)
    if len(idx) < 3:
        return True
    E = ExactPoints(np.asarray(points, dtype=np.float64)[idx])
    a, b = 0, 1
    return all(E.orient(a, b, c) == 0 for c in range(2, E.n))


def strict_hull(E, idx):
    """Exact monotone chain (Andrew 1979): strict convex hull vertices, CCW."""
    pts = sorted(set(idx), key=lambda i: (E.x[i], E.y[i]))
    # drop exact duplicates
    uniq = []
    for i in pts:
        if not uniq or E.key(uniq[-1]) != E.key(i):
            uniq.append(i)
    if len(uniq) < 3:
        return uniq
    lower, upper = [], []
    for i in uniq:
        while len(lower) >= 2 and E.orient(lower[-2], lower[-1], i) <= 0:
            lower.pop()
        lower.append(i)
    for i in reversed(uniq):
        while len(upper) >= 2 and E.orient(upper[-2], upper[-1], i) <= 0:
            upper.pop()
        upper.append(i)
    return lower[:-1] + upper[:-1]


def hull_boundary_count(points, idx=None):
    """Exact number of distinct points on the convex hull boundary.

    Points lying in the relative interior of a hull edge are counted too, as
    Euler's formula for triangulated point sets requires.
    """
    E = ExactPoints(points)
    if idx is None:
        idx = range(E.n)
    idx = list(idx)
    hull = strict_hull(E, idx)
    seen = set()
    count = 0
    for i in idx:
        k = E.key(i)
        if k in seen:
            continue
        seen.add(k)
        for j in range(len(hull)):
            if E.on_closed_segment(hull[j], hull[(j + 1) % len(hull)], i):
                count += 1
                break
    return count


def euler_triangle_count(points, idx=None):
    """Euler's formula for a triangulated point set: T = 2n - h - 2.

    n = number of distinct points, h = number of them on the hull boundary
    (source: Euler's polyhedron formula V - E + F = 2 applied to the planar
    triangulation; e.g. de Berg et al., Computational Geometry, Thm 9.1 -
    theorem number from memory).
    """
    pts = np.asarray(points, dtype=np.float64)
    if idx is None:
        idx = range(len(pts))
    idx = list(idx)
    n = len({(float(pts[i, 0]), float(pts[i, 1])) for i in idx})
    h = hull_boundary_count(pts, idx)
    return 2 * n - h - 2


def convex_hull_area(points):
    """Area of the convex hull.

    Reference: shapely/GEOS convex hull.  GEOS evaluates areas in floating
    point and collapses hulls of nearly collinear points (e.g. the Kettner et
    al. 2008 grids) to a line of area 0, so the value used is the exact
    shoelace area of our own exact hull, and it must agree with GEOS to
    within 1e-12 of the bounding-box area.
    """
    pts = np.asarray(points, dtype=np.float64)
    E = ExactPoints(pts)
    hull = strict_hull(E, range(E.n))
    exact = 0.0
    if len(hull) >= 3:
        fan = [(hull[0], hull[i], hull[i + 1]) for i in range(1, len(hull) - 1)]
        exact = float(E.twice_area(fan) / 2)
    geos = MultiPoint([tuple(p) for p in pts]).convex_hull.area
    span = np.ptp(pts, axis=0)
    assert abs(geos - exact) <= 1e-12 * float(span[0] * span[1]) + 1e-300 \
        or math.isclose(geos, exact, rel_tol=1e-12), (geos, exact)
    return exact


def polygon_area(outer, holes=()):
    """Area of a polygon with holes, via shapely/GEOS (outside reference)."""
    return Polygon(outer, list(holes)).area


def loops_to_input(loops):
    """Turn a list of closed vertex loops into (points, segments) arrays."""
    pts, segs = [], []
    for loop in loops:
        base = len(pts)
        m = len(loop)
        pts.extend(loop)
        segs.extend((base + i, base + (i + 1) % m) for i in range(m))
    return np.array(pts, dtype=np.float64), np.array(segs, dtype=np.int64)


def ccw(triangles, points):
    """Reorder triangle vertices counter-clockwise (exactly)."""
    E = ExactPoints(points)
    out = np.array(triangles, dtype=np.int64).copy()
    for t in range(len(out)):
        a, b, c = out[t]
        if E.orient(int(a), int(b), int(c)) < 0:
            out[t, 1], out[t, 2] = c, b
    return out


def triangle_set(triangles):
    return {tuple(sorted(int(v) for v in t)) for t in np.asarray(triangles)}


def edge_map(triangles):
    """Undirected edge -> list of (triangle, opposite-vertex position)."""
    em = defaultdict(list)
    for t, tri in enumerate(np.asarray(triangles)):
        for k in range(3):
            a, b = int(tri[(k + 1) % 3]), int(tri[(k + 2) % 3])
            em[(min(a, b), max(a, b))].append((t, k))
    return em


def undirected(edges):
    return {(min(int(a), int(b)), max(int(a), int(b)))
            for a, b in np.asarray(edges, dtype=np.int64).reshape(-1, 2)}


# --------------------------------------------------------------------------
# checks (each raises AssertionError with a useful message)
# --------------------------------------------------------------------------
def check_shapes(tri, points_in):
    pts_in = np.asarray(points_in, dtype=np.float64)
    N = len(pts_in)
    P = tri.points
    assert isinstance(P, np.ndarray) and P.dtype == np.float64
    assert P.ndim == 2 and P.shape[1] == 2 and P.shape[0] >= N
    assert np.all(np.isfinite(P))
    # contract: first N rows are the input points, unchanged, in input order
    assert np.array_equal(P[:N], pts_in), "input points were moved/reordered"
    T = np.asarray(tri.triangles)
    assert T.ndim == 2 and T.shape[1] == 3 and np.issubdtype(T.dtype, np.integer)
    if len(T):
        assert T.min() >= 0 and T.max() < len(P)
        assert np.all((T[:, 0] != T[:, 1]) & (T[:, 1] != T[:, 2]) & (T[:, 0] != T[:, 2]))
    nb = np.asarray(tri.neighbors)
    assert nb.shape == T.shape and np.issubdtype(nb.dtype, np.integer)
    S = np.asarray(tri.segments)
    assert S.ndim == 2 and S.shape[1] == 2 and np.issubdtype(S.dtype, np.integer) \
        or S.size == 0
    src = np.asarray(tri.segment_source)
    assert src.shape == (len(S),)
    mi = np.asarray(tri.merged_into)
    assert mi.shape == (N,) and np.issubdtype(mi.dtype, np.integer)


def check_ccw(tri, E=None):
    """Every triangle strictly counter-clockwise, exactly."""
    if E is None:
        E = ExactPoints(tri.points)
    bad = [t for t, (a, b, c) in enumerate(np.asarray(tri.triangles).tolist())
           if E.orient(a, b, c) <= 0]
    assert not bad, f"{len(bad)} triangles not strictly CCW, e.g. " \
        f"{[np.asarray(tri.triangles)[t].tolist() for t in bad[:3]]}"
    return E


def check_manifold(triangles):
    """Each undirected edge is used by at most two triangles, in opposite
    directions (consistently oriented 2-manifold with boundary)."""
    em = edge_map(triangles)
    T = np.asarray(triangles)
    for e, uses in em.items():
        assert len(uses) <= 2, f"edge {e} shared by {len(uses)} triangles"
        if len(uses) == 2:
            (t1, k1), (t2, k2) = uses
            d1 = (int(T[t1][(k1 + 1) % 3]), int(T[t1][(k1 + 2) % 3]))
            d2 = (int(T[t2][(k2 + 1) % 3]), int(T[t2][(k2 + 2) % 3]))
            assert d1 == d2[::-1], f"edge {e} used twice in the same direction"
    return em


def check_neighbors(tri, em=None):
    """neighbors[t, k] is the triangle across the edge opposite vertex k."""
    if em is None:
        em = edge_map(tri.triangles)
    nb = np.asarray(tri.neighbors)
    for e, uses in em.items():
        if len(uses) == 1:
            t, k = uses[0]
            assert nb[t, k] == -1, f"boundary edge {e}: neighbor {nb[t, k]} != -1"
        else:
            (t1, k1), (t2, k2) = uses
            assert nb[t1, k1] == t2 and nb[t2, k2] == t1, \
                f"edge {e}: neighbors {nb[t1, k1]}, {nb[t2, k2]} != {t2}, {t1}"


def delaunay_violations(E, triangles, constrained=(), em=None):
    """Interior, unconstrained edges that are not locally Delaunay (exact).

    Local Delaunay test (common practice; Lawson 1977 / Delaunay lemma): for
    the edge shared by CCW triangle (a, b, c) and a neighbour with apex d,
    d must not lie strictly inside the circle through a, b, c.
    """
    if em is None:
        em = edge_map(triangles)
    T = np.asarray(triangles).tolist()
    cons = undirected(constrained) if len(constrained) else set()
    bad = []
    for e, uses in em.items():
        if len(uses) != 2 or e in cons:
            continue
        (t1, k1), (t2, k2) = uses
        a, b, c = T[t1]
        d = T[t2][k2]
        if E.incircle(a, b, c, d) > 0:
            bad.append(e)
    return bad


def check_delaunay(tri, E, constrained=(), em=None):
    bad = delaunay_violations(E, tri.triangles, constrained, em)
    assert not bad, f"{len(bad)} edges not locally Delaunay, e.g. {bad[:5]}"


def check_merged_into(tri, points_in):
    """Duplicates point at the first copy; no triangle uses later copies;
    the vertices the triangles use have pairwise distinct coordinates."""
    pts_in = np.asarray(points_in, dtype=np.float64)
    N = len(pts_in)
    mi = np.asarray(tri.merged_into)
    expect = first_copy_map(pts_in)
    assert np.array_equal(mi, expect), \
        f"merged_into {mi.tolist()} != first-copy map {expect.tolist()}"
    used = set(np.asarray(tri.triangles).ravel().tolist())
    later = {i for i in range(N) if mi[i] != i}
    assert not (used & later), f"triangles use merged copies {sorted(used & later)[:5]}"
    coords = {}
    for v in used:
        k = (float(tri.points[v, 0]), float(tri.points[v, 1]))
        assert k not in coords, f"vertices {coords[k]} and {v} coincide at {k}"
        coords[k] = v


def check_all_used(tri, points_in):
    """fill='hull': every distinct input point is a vertex of some triangle."""
    N = len(points_in)
    mi = np.asarray(tri.merged_into)
    used = set(np.asarray(tri.triangles).ravel().tolist())
    missing = [i for i in range(N) if mi[i] == i and i not in used]
    assert not missing, f"{len(missing)} input points unused, e.g. {missing[:5]}"


def _near_segment(P, a, b, p, tol=ADDED_POINT_REL_TOL):
    """Float test for an added point: within tol (relative) of segment ab."""
    A, B, Q = (np.asarray(P[i], dtype=np.float64) for i in (a, b, p))
    d = B - A
    L = math.hypot(d[0], d[1])
    scale = max(L, float(np.max(np.abs(np.stack([A, B])))), 1e-300)
    # distance from the line and from the interval, relative to the scale
    w = Q - A
    t = float(np.dot(w, d)) / (L * L)
    closest = A + min(max(t, 0.0), 1.0) * d
    return math.hypot(*(Q - closest)) <= tol * scale


def _segments_cross(E, ends):
    """Exact: two of the segments (vertex pairs) cross at one interior point."""
    segs = [(a, b) for a, b in ends if a != b]
    for i, (a, b) in enumerate(segs):
        for c, d in segs[i + 1:]:
            if (sign(E.orient(a, b, c)) * sign(E.orient(a, b, d)) < 0
                    and sign(E.orient(c, d, a)) * sign(E.orient(c, d, b)) < 0):
                return True
    return False


def check_segments(tri, points_in, segments_in, E=None, em=None, cover="all", strict=True):
    """Constrained edges against the input segments.

    * every output piece is a triangle edge, appears once, and its ends lie
      on the input segment named by its segment_source, within the 1e-9
      relative tolerance (a piece ending at a rounded crossing runs a hair
      off the segment, and an input point exactly on such a piece must
      split it, so it may sit a hair off the segment too).  Input points get
      the tolerance only when two input segments cross (exact test): without
      a crossing nothing is rounded, so they must lie exactly on it;
    * every triangle edge joining two input points exactly on an input
      segment is constrained (when the segment's pieces are exact);
    * the pieces of input segment s - those whose source is s, plus pieces
      of other segments with both ends on s within the tolerance (overlaps
      merge) - form disjoint simple paths (no parallel chains, no cycles,
      no branches);
    * cover='all': they form ONE path from one end of s to the other whose
      vertices advance along s (exact dot products), and every used input
      point lying exactly on s is one of its vertices ("a point lying on a
      segment splits it").  Use cover='kept' when some segments lie in
      removed regions.

    strict=False is for inputs whose features are only a few ulps apart
    (Kettner et al. 2008 grids), where "within the tolerance" cannot tell
    segments apart: the path conditions are replaced by plain coverage (a
    chain of pieces near s joins its ends) and the exact split condition.
    The same holds for one segment s whose pieces meet an input point near
    s but not on it (with crossings only; see above).
    """
    if E is None:
        E = ExactPoints(tri.points)
    if em is None:
        em = edge_map(tri.triangles)
    N = len(points_in)
    P = tri.points
    S = np.asarray(tri.segments, dtype=np.int64).reshape(-1, 2)
    src = np.asarray(tri.segment_source, dtype=np.int64).reshape(-1)
    segs_in = np.asarray(segments_in, dtype=np.int64).reshape(-1, 2)
    mi = np.asarray(tri.merged_into)

    keys = [(min(a, b), max(a, b)) for a, b in S.tolist()]
    assert len(set(keys)) == len(keys), "an output segment appears twice"
    for (a, b), k in zip(S.tolist(), keys):
        assert a != b, "zero-length output segment"
        assert k in em, f"output segment {(a, b)} is not a triangle edge"
    if len(src):
        assert src.min() >= 0 and src.max() < len(segs_in)
    ends = [(int(mi[a]), int(mi[b])) for a, b in segs_in.tolist()]
    sources = set(src.tolist())
    for s, (a, b) in enumerate(ends):
        if a == b:  # zero-length: ignored by contract
            assert s not in sources, f"zero-length segment {s} produced pieces"

    def exact_on(s, v):
        a, b = ends[s]
        return E.on_closed_segment(a, b, v)

    crossing = []        # computed on first need: do two input segments cross?

    def snapped():
        if not crossing:
            crossing.append(_segments_cross(E, ends))
        return crossing[0]

    def near(s, v):
        """v on s: exactly, or an added point within the tolerance, or (only
        when input segments cross, so that pieces are snap-rounded) an input
        point within the tolerance.  Without a crossing the result is the
        exact CDT, and the tolerance would take a segment leaving s at a tiny
        angle from its end for one along s."""
        a, b = ends[s]
        if exact_on(s, v):
            return True
        return (v >= N or snapped()) and _near_segment(P, a, b, v)

    for (u, w), s in zip(S.tolist(), src.tolist()):
        assert near(s, u) and near(s, w), \
            f"piece {(u, w)} is not on input segment {s} {segs_in[s].tolist()}"

    piece_keys = set(keys)
    by_source = defaultdict(list)
    for k, t in zip(keys, src.tolist()):
        by_source[t].append(k)
    for s, (a, b) in enumerate(ends):
        if a == b:
            continue
        # only where the pieces of s (its own and those of other segments
        # lying along it, as defined above) are exactly on it: a piece
        # through a rounded crossing may leave a sliver next to the exact line
        on_s = [e for t in by_source for e in by_source[t]
                if t == s or (near(s, e[0]) and near(s, e[1]))]
        if not all(exact_on(s, v) for e in on_s for v in e):
            continue
        xs = sorted((P[a, 0], P[b, 0]))
        ys = sorted((P[a, 1], P[b, 1]))
        for e in em:
            if e[0] >= N or e[1] >= N:
                continue
            if not all(xs[0] <= P[v, 0] <= xs[1] and ys[0] <= P[v, 1] <= ys[1] for v in e):
                continue
            if exact_on(s, e[0]) and exact_on(s, e[1]):
                assert e in piece_keys, \
                    f"triangle edge {e} lies on input segment {s} but is not constrained"

    used = set(np.asarray(tri.triangles).ravel().tolist())
    for s, (a, b) in enumerate(ends):
        if a == b:
            continue
        label = f"input segment {s} {tuple(segs_in[s].tolist())}"
        es = set(by_source[s])
        for t in by_source:
            if t != s:
                es |= {e for e in by_source[t] if near(s, e[0]) and near(s, e[1])}
        vs = {v for e in es for v in e}
        # an input point near s but not on it (possible only with crossings):
        # the tolerance cannot tell whether the pieces at it follow s or
        # leave it, so s gets the rules of strict=False
        unclear = any(v < N and not exact_on(s, v) for v in vs)
        if not strict or unclear:
            if cover != "all":
                continue
            adj = defaultdict(set)
            for u, w in es:
                adj[u].add(w)
                adj[w].add(u)
            seen, queue = {a}, deque([a])
            while queue:
                u = queue.popleft()
                for w in adj[u] - seen:
                    seen.add(w)
                    queue.append(w)
            assert b in seen, f"{label} is not covered by output pieces"
            on_pts = {v for v in range(N) if mi[v] == v and v in used and exact_on(s, v)}
            assert on_pts <= vs, \
                f"points {sorted(on_pts - vs)} lie exactly on {label} but do not split it"
            continue
        deg = defaultdict(int)
        for u, w in es:
            deg[u] += 1
            deg[w] += 1
        assert max(deg.values(), default=0) <= 2, f"pieces of {label} branch: {sorted(es)}"
        comp = {v: v for v in vs}

        def find(v):
            while comp[v] != v:
                comp[v] = comp[comp[v]]
                v = comp[v]
            return v
        for u, w in es:
            ru, rw = find(u), find(w)
            assert ru != rw, f"pieces of {label} form a cycle: {sorted(es)}"
            comp[ru] = rw
        if cover != "all":
            continue
        assert es, f"{label} is not covered by output pieces"
        assert len(es) == len(vs) - 1, f"pieces of {label} are not one path: {sorted(es)}"
        path_ends = {v for v in vs if deg[v] == 1}
        assert path_ends == {a, b}, \
            f"pieces of {label} do not run end to end (ends {sorted(path_ends)}): {sorted(es)}"
        nbr = defaultdict(list)
        for u, w in es:
            nbr[u].append(w)
            nbr[w].append(u)
        dx, dy = E.x[b] - E.x[a], E.y[b] - E.y[a]
        prev, cur, t_prev = None, a, None
        while True:
            t_cur = (E.x[cur] - E.x[a]) * dx + (E.y[cur] - E.y[a]) * dy  # exact
            assert t_prev is None or t_cur > t_prev, \
                f"pieces of {label} go backwards at vertex {cur}: {sorted(es)}"
            t_prev = t_cur
            nxt = [w for w in nbr[cur] if w != prev]
            if not nxt:
                break
            prev, cur = cur, nxt[0]
        assert cur == b
        on_pts = {v for v in range(N) if mi[v] == v and v in used and exact_on(s, v)}
        assert on_pts <= vs, \
            f"points {sorted(on_pts - vs)} lie exactly on {label} but do not split it"


def check_area(tri, expected, E=None, n_input=None, segments_in=None):
    """Triangle area equals the expected area (relative 1e-9).  When points
    were added (rounded crossings), each may sit up to the 1e-9 relative
    tolerance off its exact position, which can move the boundary of the
    region by that much: allow perimeter * 1e-9 * coordinate scale too.
    The same when input segments cross (exact test, `segments_in` given):
    their crossings may round onto input points, so pieces move without
    any added point."""
    if E is None:
        E = ExactPoints(tri.points)
    area = float(E.twice_area(tri.triangles)) / 2.0
    abs_tol = 1e-300
    P = np.asarray(tri.points)
    rounded = n_input is not None and len(P) > n_input
    if (not rounded and segments_in is not None and len(P)
            and not math.isclose(area, expected, rel_tol=AREA_REL_TOL, abs_tol=abs_tol)):
        mi = np.asarray(tri.merged_into)
        ends = [(int(mi[a]), int(mi[b]))
                for a, b in np.asarray(segments_in, np.int64).reshape(-1, 2).tolist()]
        rounded = _segments_cross(E, ends)
    if rounded and len(P):
        span = np.ptp(P, axis=0)
        abs_tol = ADDED_POINT_REL_TOL * float(np.max(np.abs(P))) * 2 * float(span.sum())
    assert math.isclose(area, expected, rel_tol=AREA_REL_TOL, abs_tol=abs_tol), \
        f"triangle area {area!r} != expected {expected!r}"
    return area


def check_boundary_constrained(tri, em):
    """For region fills (even-odd, nonzero) the kept region is bounded by
    segments: every edge with a triangle on one side only is constrained."""
    cons = undirected(tri.segments) if len(tri.segments) else set()
    loose = [e for e, u in em.items() if len(u) == 1 and e not in cons]
    assert not loose, f"boundary edges that are not segments: {loose[:5]}"


def check_triangulation(tri, points_in, segments_in=None, *, fill="hull",
                        area=None, euler=None, constrained_extra=(), cover="all",
                        strict=True):
    """Run every applicable independent check and return the ExactPoints.

    fill='hull'  -> all distinct input points used, area = convex hull area
                    (shapely), T = 2n - h - 2 (Euler) over the used vertices.
    area         -> expected area (e.g. shapely polygon area) for other fills.
    """
    check_shapes(tri, points_in)
    E = check_ccw(tri)
    em = check_manifold(tri.triangles)
    check_neighbors(tri, em)
    check_merged_into(tri, points_in)
    constrained = np.asarray(tri.segments, dtype=np.int64).reshape(-1, 2)
    if len(constrained_extra):
        constrained = np.vstack([constrained, np.asarray(constrained_extra).reshape(-1, 2)])
    check_delaunay(tri, E, constrained, em)
    if segments_in is not None and len(np.asarray(segments_in).reshape(-1, 2)):
        check_segments(tri, points_in, segments_in, E, em, cover=cover, strict=strict)
    else:
        assert len(np.asarray(tri.segments).reshape(-1, 2)) == 0
    if fill in ("even-odd", "nonzero"):
        check_boundary_constrained(tri, em)
    if fill == "hull":
        check_all_used(tri, points_in)
        if area is None:
            area = convex_hull_area(np.asarray(points_in, dtype=np.float64))
        used = sorted(set(np.asarray(tri.triangles).ravel().tolist()))
        if euler is None or euler:
            # Euler's formula T = 2n - h - 2 (see euler_triangle_count)
            expect_t = euler_triangle_count(tri.points, used)
            assert len(tri.triangles) == expect_t, \
                f"{len(tri.triangles)} triangles, Euler's formula says {expect_t}"
    if area is not None:
        check_area(tri, area, E, n_input=len(points_in), segments_in=segments_in)
    return E


# --------------------------------------------------------------------------
# test data builders (invented scenarios)
# --------------------------------------------------------------------------
def square(cx, cy, half, ccw_dir=True):
    loop = [(cx - half, cy - half), (cx + half, cy - half),
            (cx + half, cy + half), (cx - half, cy + half)]
    return loop if ccw_dir else loop[::-1]


def kettner_grid(i_values, j_values, unit=2.0 ** -53, far=((12.0, 12.0), (24.0, 24.0))):
    """Points p = (0.5 + i*unit, 0.5 + j*unit) plus far points on y = x.

    Source: Kettner, Mehlhorn, Pion, Schirra, Yap (2008), "Classroom examples
    of robustness problems in geometric computations", the near-collinear
    float grid around (0.5, 0.5) with far points (12, 12) and (24, 24)
    (values as recalled from the paper's first orientation example).
    """
    pts = [(0.5 + i * unit, 0.5 + j * unit) for i in i_values for j in j_values]
    pts.extend(far)
    return np.array(pts, dtype=np.float64)


def sweep_triangulation(points):
    """A deliberately non-Delaunay triangulation: insert points in x order and
    connect each to the hull edges it sees (incremental sweep, exact tests).
    Requires distinct points, not all collinear; returns CCW triangles."""
    pts = np.asarray(points, dtype=np.float64)
    E = ExactPoints(pts)
    order = sorted(range(len(pts)), key=lambda i: (E.x[i], E.y[i]))
    # start with the first non-degenerate triangle in sweep order
    a, b = order[0], order[1]
    k = 2
    collinear = [a, b]
    while E.orient(a, b, order[k]) == 0:
        collinear.append(order[k])
        k += 1
    c = order[k]
    tris = []
    # fan the initial collinear run to c
    for u, v in zip(collinear, collinear[1:]):
        tris.append((u, v, c) if E.orient(u, v, c) > 0 else (v, u, c))
    # CCW hull as a list
    if E.orient(collinear[0], collinear[-1], c) > 0:
        hull = collinear + [c]
    else:
        hull = [collinear[0], c] + collinear[:0:-1]
    for p in order[k + 1:]:
        m = len(hull)
        vis = [E.orient(hull[i], hull[(i + 1) % m], p) < 0 for i in range(m)]
        assert any(vis)
        # rotate so the visible run is contiguous from index 0
        start = next(i for i in range(m) if vis[i] and not vis[i - 1])
        hull = hull[start:] + hull[:start]
        vis = vis[start:] + vis[:start]
        run = 0
        while run < m and vis[run]:
            tris.append((hull[(run + 1) % m], hull[run], p))
            run += 1
        hull = [hull[0], p] + hull[run:]
    return np.array(tris, dtype=np.int64)


def fill_rule_area(loops, rule):
    """Area kept by the even-odd or nonzero rule for closed vertex loops.

    Reference: shapely/GEOS nodes the loop edges (shapely.node) and builds
    the faces of the arrangement (shapely.polygonize).  For each face, the
    winding number of an interior point (shapely point_on_surface) is the
    signed count of loop edges crossing a rightward ray (standard crossing
    rule, common practice); even-odd keeps odd winding, nonzero keeps
    nonzero winding.
    """
    lines = []
    for loop in loops:
        m = len(loop)
        for i in range(m):
            a, b = tuple(map(float, loop[i])), tuple(map(float, loop[(i + 1) % m]))
            if a != b:
                lines.append(shapely.LineString([a, b]))
    if not lines:
        return 0.0
    noded = shapely.node(shapely.MultiLineString(lines))
    faces = shapely.get_parts(shapely.polygonize(shapely.get_parts(noded)))
    total = 0.0
    for face in faces:
        if face.area == 0:
            continue
        p = face.point_on_surface()
        px, py = p.x, p.y
        w = 0
        for loop in loops:
            m = len(loop)
            for i in range(m):
                (ax, ay), (bx, by) = loop[i], loop[(i + 1) % m]
                if ay <= py < by and (bx - ax) * (py - ay) - (by - ay) * (px - ax) > 0:
                    w += 1
                elif by <= py < ay and (bx - ax) * (py - ay) - (by - ay) * (px - ax) < 0:
                    w -= 1
        if (rule == "even-odd" and w % 2) or (rule == "nonzero" and w != 0):
            total += face.area
    return total


def seeded_hull_area(points, segments, seeds):
    """Area kept by fill='hull' when the faces containing seed points are
    removed.  Reference: shapely/GEOS nodes the segments together with the
    convex hull boundary (shapely.node) and builds the faces
    (shapely.polygonize; dangling segments do not split faces); every face
    that contains a seed is subtracted from the hull area."""
    pts = np.asarray(points, dtype=np.float64)
    hull = MultiPoint([tuple(p) for p in pts]).convex_hull
    lines = [hull.exterior]
    for a, b in np.asarray(segments, dtype=np.int64).reshape(-1, 2):
        if tuple(pts[a]) != tuple(pts[b]):
            lines.append(shapely.LineString([pts[a], pts[b]]))
    noded = shapely.node(shapely.GeometryCollection(lines))
    faces = shapely.get_parts(shapely.polygonize(shapely.get_parts(noded)))
    removed = 0.0
    for face in faces:
        if any(face.contains(shapely.Point(sx, sy)) for sx, sy in seeds):
            removed += face.area
    return convex_hull_area(pts) - removed
