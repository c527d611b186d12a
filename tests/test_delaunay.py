"""Unconstrained Delaunay triangulation (fill='hull', no segments).

Outside references used here:
* scipy.spatial.Delaunay (Qhull) for random point sets in general position;
* Euler's formula T = 2n - h - 2 for a triangulated point set;
* shapely/GEOS convex hull area;
* Kettner, Mehlhorn, Pion, Schirra, Yap (2008), "Classroom examples of
  robustness problems in geometric computations" (near-collinear float grids);
* exact rational arithmetic (tests/helpers.py) for CCW and Delaunay checks.
"""

import math

import numpy as np
import pytest
from hypothesis import assume, given, strategies as st
from scipy.spatial import Delaunay

import engine
from engine import predicates

from . import helpers as H

# every test here runs on both Delaunay paths (sequential and numpy bulk)
pytestmark = pytest.mark.usefixtures("delaunay_path")


def _tri(points, **kw):
    return engine.triangulate(np.asarray(points, dtype=np.float64), **kw)


# ---------------------------------------------------------------------------
# 1. agreement with Qhull on random points in general position
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("seed,n", [(0, 50), (1, 200), (2, 700), (3, 1500), (4, 3000)])
def test_matches_qhull_random_uniform(seed, n):
    # Source: scipy.spatial.Delaunay (Qhull).  Random float points are in
    # general position with probability ~1, where the Delaunay triangulation
    # is unique, so both must produce the same set of triangles.
    rng = np.random.default_rng(seed)
    pts = rng.random((n, 2)) * [7.0, 3.0] - [2.0, 1.0]
    tri = _tri(pts)
    H.check_triangulation(tri, pts)  # exact CCW, exact Delaunay, Euler, area
    ref = Delaunay(pts)
    assert len(ref.coplanar) == 0  # Qhull used every point
    assert H.triangle_set(tri.triangles) == H.triangle_set(ref.simplices)


@pytest.mark.parametrize("seed", [10, 11])
def test_matches_qhull_clustered(seed):
    # Source: scipy.spatial.Delaunay (Qhull).  Gaussian clusters of very
    # different scales (still general position) stress sliver triangles.
    rng = np.random.default_rng(seed)
    parts = [rng.normal(0, 1e-3, (150, 2)) + [5, 5],
             rng.normal(0, 1.0, (150, 2)),
             rng.normal(0, 50.0, (100, 2))]
    pts = np.vstack(parts)
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    ref = Delaunay(pts)
    assert len(ref.coplanar) == 0
    assert H.triangle_set(tri.triangles) == H.triangle_set(ref.simplices)


# ---------------------------------------------------------------------------
# 2. degenerate (cocircular / collinear) inputs: exact validity + Euler
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("nx,ny", [(2, 2), (5, 3), (20, 20), (45, 40)])
def test_integer_grid(nx, ny):
    # Integer grids are massively cocircular, so the Delaunay triangulation
    # is not unique and Qhull (floating point) is not a reliable reference;
    # check exact validity and Euler's formula T = 2n - h - 2 instead
    # (h counts the collinear points on the hull boundary too).
    xs, ys = np.meshgrid(np.arange(nx, dtype=float), np.arange(ny, dtype=float))
    pts = np.column_stack([xs.ravel(), ys.ravel()])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    n, h = nx * ny, 2 * (nx + ny) - 4
    # closed form for a full grid (Euler, common practice): 2(nx-1)(ny-1)
    assert len(tri.triangles) == 2 * n - h - 2 == 2 * (nx - 1) * (ny - 1)


def test_regular_polygon_with_center():
    # 64 float points on a circle plus the centre: nearly cocircular, every
    # in-circle decision on the rim is a near-tie (common practice stress
    # case).  Exact checks decide validity; Euler gives the count.
    k = 64
    a = 2 * np.pi * np.arange(k) / k
    pts = np.vstack([np.column_stack([np.cos(a), np.sin(a)]) * 3.0, [[0.0, 0.0]]])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)


def test_cocircular_integer_points():
    # All 12 lattice points on the circle x^2 + y^2 = 25 are exactly
    # cocircular (Pythagorean triples 3-4-5; common practice).  Any
    # triangulation of the convex 12-gon is Delaunay; Euler: T = 2*12-12-2.
    circ = [(5, 0), (4, 3), (3, 4), (0, 5), (-3, 4), (-4, 3), (-5, 0),
            (-4, -3), (-3, -4), (0, -5), (3, -4), (4, -3)]
    pts = np.array(circ, dtype=float)
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    assert len(tri.triangles) == 10


def test_collinear_points_inside_and_on_hull():
    # Points on a line with two points off it: every point on the line must
    # be used and Euler's formula gives the count (common practice).
    line = [(float(i), 0.0) for i in range(10)]
    pts = np.array(line + [(4.5, 3.0), (4.5, -2.0)])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    assert len(tri.triangles) == 2 * 12 - 4 - 2
    # one-sided: all on a hull edge
    pts = np.array(line + [(4.5, 3.0)])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    assert len(tri.triangles) == 9  # fan over 9 collinear gaps (Euler: 22-11-2)


def test_duplicates_in_delaunay():
    # Duplicates are merged into their first copy (contract); the result is
    # the triangulation of the distinct points, compared with Qhull.
    rng = np.random.default_rng(5)
    base = rng.random((120, 2))
    pts = np.vstack([base, base[[3, 7, 7, 50]], base[:2]])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    ref = Delaunay(base)
    assert H.triangle_set(tri.triangles) == H.triangle_set(ref.simplices)
    assert tri.merged_into[120] == 3 and tri.merged_into[121] == 7
    assert tri.merged_into[122] == 7 and tri.merged_into[124] == 0


def test_large_offset_coordinates():
    # Points far from the origin: a small cloud around (1e6, -1e6).  The
    # triangulation is translation invariant (common practice), so Qhull on
    # the same points and our exact checks must agree.
    rng = np.random.default_rng(6)
    pts = rng.random((300, 2)) + [1.0e6, -1.0e6]
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    # Qhull on a centred copy; each subtraction is exact (Sterbenz lemma:
    # x - m is exact when m/2 <= x <= 2m), so it is the same point set moved
    ref = Delaunay(pts - pts.mean(axis=0))
    assert H.triangle_set(tri.triangles) == H.triangle_set(ref.simplices)


# ---------------------------------------------------------------------------
# 4. Kettner et al. 2008 classroom examples
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("i_values,j_values", [
    (range(16), range(16)),                      # 256 grid points, 1-ulp steps
    (range(0, 256, 17), range(0, 256, 17)),      # coarser sampling of the 256x256 grid
    (range(24), range(3)),                        # thin strip around y ~ x
])
def test_kettner_near_collinear_grid(i_values, j_values):
    # Source: Kettner, Mehlhorn, Pion, Schirra, Yap (2008): points
    # p = (0.5 + i*2^-53, 0.5 + j*2^-53) with q = (12, 12), r = (24, 24);
    # float orientation of (p, q, r) is wrong for many p.  The grid points
    # with i == j lie exactly on the line y = x through q and r.
    pts = H.kettner_grid(i_values, j_values)
    tri = _tri(pts)
    E = H.check_triangulation(tri, pts)
    # explicit restatement of the two key checks: strictly CCW (exact) and
    # every input point index appears in a triangle
    for a, b, c in tri.triangles.tolist():
        assert E.orient(a, b, c) > 0
    assert set(tri.triangles.ravel().tolist()) == set(range(len(pts)))


def test_kettner_full_grid():
    # Source: Kettner et al. 2008, the full example: all 256 x 256 points
    # p = (0.5 + i*2^-53, 0.5 + j*2^-53) plus (12, 12) and (24, 24).  Every
    # triangle strictly CCW (exact), every point used, Euler's formula for
    # the count, exact local Delaunay test on every edge.
    pts = H.kettner_grid(range(256), range(256))
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    assert len(np.unique(tri.triangles)) == len(pts)


def test_kettner_random_subsample():
    # Source: Kettner et al. 2008 (as above), a random 300-point subset of
    # the 256 x 256 grid plus the two far points.
    rng = np.random.default_rng(7)
    idx = rng.choice(256 * 256, size=300, replace=False)
    u = 2.0 ** -53
    pts = np.array([(0.5 + (k // 256) * u, 0.5 + (k % 256) * u) for k in idx]
                   + [(12.0, 12.0), (24.0, 24.0)])
    tri = _tri(pts)
    H.check_triangulation(tri, pts)
    assert set(tri.triangles.ravel().tolist()) == set(range(len(pts)))


def test_kettner_orient2d_signs_exact():
    # Source: Kettner et al. 2008 - the float orientation of p, q, r is
    # wrong on this grid; engine.predicates.orient2d must return the exact
    # sign (compared with Fraction arithmetic).  We check a 64 x 64 window
    # (4096 cases) including p on the line (sign 0).
    u = 2.0 ** -53
    wrong_float = 0
    for i in range(64):
        for j in range(64):
            px, py = 0.5 + i * u, 0.5 + j * u
            for (qx, qy), (rx, ry) in (((12.0, 12.0), (24.0, 24.0)),
                                       ((24.0, 24.0), (12.0, 12.0))):
                want = H.exact_orient_sign(px, py, qx, qy, rx, ry)
                got = predicates.orient2d(px, py, qx, qy, rx, ry)
                assert H.sign(got) == want, (i, j)
                naive = (qx - px) * (ry - py) - (qy - py) * (rx - px)
                wrong_float += H.sign(naive) != want
    # sanity: this really is a configuration where naive floats fail
    assert wrong_float > 0


def test_incircle_signs_exact_near_cocircular():
    # (3,4), (-4,3), (-3,-4) and (5,0) are exactly cocircular (radius 5,
    # Pythagorean triples; common practice).  Moving the fourth point by a
    # few ulps gives tiny determinants; the sign must match Fractions.
    a, b, c = (3.0, 4.0), (-4.0, 3.0), (-3.0, -4.0)
    assert H.exact_orient_sign(*a, *b, *c) > 0
    for k in range(-4, 5):
        for m in range(-4, 5):
            dx = 5.0 + k * 2.0 ** -50
            dy = 0.0 + m * 2.0 ** -60
            want = H.exact_incircle_sign(*a, *b, *c, dx, dy)
            got = predicates.incircle(*a, *b, *c, dx, dy)
            assert H.sign(got) == want, (k, m)
    assert H.sign(predicates.incircle(*a, *b, *c, 5.0, 0.0)) == 0
    assert predicates.incircle(*a, *b, *c, 0.0, 0.0) > 0
    assert predicates.incircle(*a, *b, *c, 6.0, 0.0) < 0


def test_orient2d_random_near_degenerate():
    # Common practice: points c = a + t*(b - a) rounded to floats are
    # nearly collinear with a, b; compare signs with Fraction arithmetic.
    rng = np.random.default_rng(8)
    for _ in range(2000):
        ax, ay, bx, by = rng.random(4) * 10 - 5
        t = rng.random() * 3 - 1
        cx, cy = ax + t * (bx - ax), ay + t * (by - ay)
        want = H.exact_orient_sign(ax, ay, bx, by, cx, cy)
        assert H.sign(predicates.orient2d(ax, ay, bx, by, cx, cy)) == want


# ---------------------------------------------------------------------------
# 7. property tests (hypothesis)
# ---------------------------------------------------------------------------
grid_points = st.lists(
    st.tuples(st.integers(0, 9), st.integers(0, 9)), min_size=3, max_size=45,
).map(lambda p: np.array(p, dtype=np.float64))

dyadic_points = st.lists(
    st.tuples(st.integers(-2 ** 24, 2 ** 24), st.integers(-2 ** 24, 2 ** 24)),
    min_size=3, max_size=60,
).map(lambda p: np.array(p, dtype=np.float64) / 2.0 ** 14)

near_line_points = st.lists(
    st.tuples(st.integers(0, 255), st.integers(0, 255)), min_size=1, max_size=40,
).map(lambda ij: np.array(
    # Kettner et al. 2008 grid points plus the far points (12,12), (24,24)
    [(0.5 + i * 2.0 ** -53, 0.5 + j * 2.0 ** -53) for i, j in ij]
    + [(12.0, 12.0), (24.0, 24.0)], dtype=np.float64))


@given(st.one_of(grid_points, dyadic_points, near_line_points))
def test_property_delaunay_hull(pts):
    # Properties (exact arithmetic): every triangle CCW, every interior edge
    # locally Delaunay (Delaunay lemma, common practice), neighbours
    # consistent, every distinct point used, Euler's formula T = 2n - h - 2,
    # and area = convex hull area from shapely/GEOS.
    assume(not H.all_collinear(pts))
    tri = _tri(pts)
    H.check_triangulation(tri, pts)


@given(grid_points)
def test_property_permutation_invariant_count(pts):
    # Euler's formula makes the triangle count independent of input order
    # (theorem), and the covered area is the hull area either way.
    assume(not H.all_collinear(pts))
    perm = np.random.default_rng(len(pts)).permutation(len(pts))
    t1 = _tri(pts)
    t2 = _tri(pts[perm])
    assert len(t1.triangles) == len(t2.triangles)
    H.check_triangulation(t2, pts[perm])


# ---------------------------------------------------------------------------
# the independent checkers themselves must reject broken results
# ---------------------------------------------------------------------------
def _fake(points, triangles, segments=(), source=(), merged=None):
    from types import SimpleNamespace
    pts = np.asarray(points, dtype=np.float64)
    tris = np.asarray(triangles, dtype=np.int64).reshape(-1, 3)
    em = H.edge_map(tris)
    nb = -np.ones_like(tris)
    for uses in em.values():
        if len(uses) == 2:
            (t1, k1), (t2, k2) = uses
            nb[t1, k1], nb[t2, k2] = t2, t1
    return SimpleNamespace(
        points=pts, triangles=tris, neighbors=nb,
        segments=np.asarray(segments, dtype=np.int64).reshape(-1, 2),
        segment_source=np.asarray(source, dtype=np.int64),
        merged_into=np.arange(len(pts)) if merged is None else np.asarray(merged))


def test_checkers_reject_broken_results():
    sq = np.array([(0.0, 0.0), (2.0, 0.0), (2.0, 1.0), (0.0, 1.0)])
    good = _fake(sq, [(0, 1, 2), (0, 2, 3)])
    H.check_triangulation(good, sq)  # a valid (cocircular) triangulation
    rh = np.array([(0.0, 0.0), (1.0, 0.0), (1.5, math.sqrt(3) / 2), (0.5, math.sqrt(3) / 2)])
    bad_cases = [
        (_fake(sq, [(0, 2, 1), (0, 2, 3)]), sq, None),      # clockwise triangle
        (_fake(sq, [(0, 1, 2)]), sq, None),                  # point unused, area short
        (_fake(rh, [(0, 1, 2), (0, 2, 3)]), rh, None),       # not Delaunay
        (_fake(sq, [(0, 1, 2), (0, 2, 3)]), sq, [(1, 3)]),   # segment missing
        (_fake(sq, [(0, 1, 2), (0, 2, 3), (0, 1, 2)]), sq, None),  # overlap
    ]
    for tri, pts, segs in bad_cases:
        with pytest.raises(AssertionError):
            H.check_triangulation(tri, pts, segs)
    # wrong neighbour table
    wrong = _fake(sq, [(0, 1, 2), (0, 2, 3)])
    wrong.neighbors[:] = -1
    with pytest.raises(AssertionError):
        H.check_triangulation(wrong, sq)
    # parallel chains for one segment (the point (1, 0) is on segment 0-1)
    line = np.array([(0.0, 0.0), (2.0, 0.0), (1.0, 0.0), (1.0, 1.0)])
    par = _fake(line, [(0, 2, 3), (2, 1, 3)], segments=[(0, 1)], source=[0])
    with pytest.raises(AssertionError):
        H.check_segments(par, line, [(0, 1)])


def test_euler_and_hull_helpers_on_known_sets():
    # Hand-counted cases for the exact hull helper (Euler: T = 2n - h - 2).
    sq_grid = np.array([(x, y) for x in range(3) for y in range(3)], dtype=float)
    assert H.hull_boundary_count(sq_grid) == 8
    assert H.euler_triangle_count(sq_grid) == 8
    tri_pts = np.array([(0, 0), (4, 0), (0, 4), (1, 1), (2, 0), (2, 2)], dtype=float)
    assert H.hull_boundary_count(tri_pts) == 5
    assert H.euler_triangle_count(tri_pts) == 5
    assert H.convex_hull_area(tri_pts) == 8.0
