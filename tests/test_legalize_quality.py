"""Edge flipping (engine.legalize) and mesh quality (engine.quality).

Outside references used here:
* Lawson's flip algorithm (Lawson 1977): flipping non-locally-Delaunay edges
  of any triangulation of a point set terminates in the Delaunay
  triangulation - compared with scipy.spatial.Delaunay (Qhull);
* the 60/120 degree rhombus (common practice): split along the long
  diagonal its triangles have angles 30/30/120, along the short one they
  are equilateral;
* angles recomputed independently with numpy (atan2 of cross and dot);
* shapely/GEOS areas and constrained Delaunay triangle count;
* exact rational arithmetic (tests/helpers.py).
"""

import math

import numpy as np
import pytest
import shapely
from hypothesis import assume, given, strategies as st
from scipy.spatial import Delaunay
from shapely.geometry import Polygon

import engine

from . import helpers as H


def _legalize(points, triangles, fixed=None):
    pts = np.asarray(points, dtype=np.float64)
    tris = np.asarray(triangles, dtype=np.int64)
    if fixed is None:
        return engine.legalize(pts, tris)
    return engine.legalize(pts, tris, fixed=np.asarray(fixed, dtype=np.int64).reshape(-1, 2))


class _Tri:
    """Minimal stand-in so the helpers' checks apply to bare triangle arrays."""

    def __init__(self, points, triangles):
        self.points = np.asarray(points, dtype=np.float64)
        self.triangles = np.asarray(triangles)


def check_legal(points, before, after, fixed=()):
    """Exact: CCW, consistent manifold, same vertices and triangle count,
    same area, every non-fixed interior edge locally Delaunay."""
    after = np.asarray(after)
    assert after.ndim == 2 and after.shape[1] == 3
    assert len(after) == len(before)  # a flip keeps the triangle count
    assert set(after.ravel().tolist()) == set(np.asarray(before).ravel().tolist())
    t = _Tri(points, after)
    E = H.check_ccw(t)
    em = H.check_manifold(after)
    assert E.twice_area(after) == E.twice_area(H.ccw(before, points))
    bad = H.delaunay_violations(E, after, fixed, em)
    assert not bad, f"{len(bad)} illegal edges remain, e.g. {bad[:5]}"
    # boundary edges never change under flips
    b0 = {e for e, u in H.edge_map(H.ccw(before, points)).items() if len(u) == 1}
    b1 = {e for e, u in em.items() if len(u) == 1}
    assert b0 == b1
    return E


# ---------------------------------------------------------------------------
# 5. rhombus: one flip turns 30-degree triangles into equilateral ones
# ---------------------------------------------------------------------------
RHOMBUS = np.array([(0.0, 0.0), (1.0, 0.0), (1.5, math.sqrt(3) / 2), (0.5, math.sqrt(3) / 2)])


def test_rhombus_quality_and_single_flip():
    # Common practice: a rhombus with 60/120 degree angles split along its
    # long diagonal (0-2) gives two 30-30-120 triangles; Lawson's flip
    # replaces the diagonal by the short one (1-3), two equilateral triangles.
    long_split = np.array([(0, 1, 2), (0, 2, 3)])
    q = engine.quality(RHOMBUS, long_split)
    assert math.isclose(q.min_angle, 30.0, abs_tol=1e-9)
    assert math.isclose(q.max_angle, 120.0, abs_tol=1e-9)
    assert np.allclose(q.triangle_min_angles, [30.0, 30.0], atol=1e-9)
    assert q.count_below(31.0) == 2 and q.count_below(29.0) == 0
    tris, flips = _legalize(RHOMBUS, long_split)
    assert flips == 1
    assert H.triangle_set(tris) == {(0, 1, 3), (1, 2, 3)}
    check_legal(RHOMBUS, long_split, tris)
    q2 = engine.quality(RHOMBUS, tris)
    assert math.isclose(q2.min_angle, 60.0, abs_tol=1e-9)
    assert math.isclose(q2.max_angle, 60.0, abs_tol=1e-9)
    assert q2.count_below(59.0) == 0
    # already legal: nothing to do
    again, flips2 = _legalize(RHOMBUS, tris)
    assert flips2 == 0 and H.triangle_set(again) == H.triangle_set(tris)


def test_rhombus_fixed_diagonal_is_kept():
    long_split = np.array([(0, 1, 2), (0, 2, 3)])
    tris, flips = _legalize(RHOMBUS, long_split, fixed=[(2, 0)])
    assert flips == 0
    assert H.triangle_set(tris) == {(0, 1, 2), (0, 2, 3)}
    H.check_ccw(_Tri(RHOMBUS, tris))


def test_input_orientation_is_normalised():
    # Clockwise input triangles: the result must still be CCW (contract).
    cw = np.array([(0, 2, 1), (0, 3, 2)])
    tris, flips = _legalize(RHOMBUS, cw)
    assert flips == 1
    H.check_ccw(_Tri(RHOMBUS, tris))


# ---------------------------------------------------------------------------
# 6. legalize against Qhull
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("seed,k", [(0, 12), (1, 80), (2, 300)])
def test_fan_on_convex_ellipse_points(seed, k):
    # Points in convex position on an ellipse (general position: no four
    # cocircular).  A fan from one vertex is a valid but poor triangulation;
    # Lawson's flips must reach the Delaunay triangulation (Qhull).
    rng = np.random.default_rng(seed)
    ang = np.sort(2 * np.pi * (np.arange(k) + 0.5 * rng.random(k)) / k)
    pts = np.column_stack([3.0 * np.cos(ang), 1.2 * np.sin(ang)])
    E = H.ExactPoints(pts)
    assert all(E.orient(i, (i + 1) % k, (i + 2) % k) > 0 for i in range(k))  # convex
    fan = np.array([(0, i, i + 1) for i in range(1, k - 1)])
    tris, flips = _legalize(pts, fan)
    check_legal(pts, fan, tris)
    assert H.triangle_set(tris) == H.triangle_set(Delaunay(pts).simplices)
    assert flips >= 1


@pytest.mark.parametrize("seed,n", [(3, 60), (4, 400), (5, 1500)])
def test_sweep_triangulation_random(seed, n):
    # A sweep triangulation (long thin triangles) legalised by flips equals
    # Qhull's Delaunay triangulation (Lawson 1977: flips reach the DT).
    rng = np.random.default_rng(seed)
    pts = rng.random((n, 2)) * [4.0, 1.0]
    sweep = H.sweep_triangulation(pts)
    check_legal_input = _Tri(pts, sweep)
    H.check_ccw(check_legal_input)  # our own builder is valid
    H.check_manifold(sweep)
    ref = Delaunay(pts)
    assert len(sweep) == len(ref.simplices)  # Euler: both triangulate the set
    tris, flips = _legalize(pts, sweep)
    check_legal(pts, sweep, tris)
    assert H.triangle_set(tris) == H.triangle_set(ref.simplices)
    assert flips > 0


def test_already_delaunay_needs_no_flip():
    # Qhull's Delaunay triangulation has no illegal edge (common practice),
    # so legalize must not flip anything.
    rng = np.random.default_rng(6)
    pts = rng.random((500, 2))
    ref = H.ccw(Delaunay(pts).simplices, pts)
    tris, flips = _legalize(pts, ref)
    assert flips == 0
    assert H.triangle_set(tris) == H.triangle_set(ref)


def test_fixed_edges_survive():
    # Fixed edges never flip; every other interior edge ends locally
    # Delaunay (checked exactly), i.e. a constrained Delaunay triangulation.
    rng = np.random.default_rng(7)
    pts = rng.random((300, 2))
    sweep = H.sweep_triangulation(pts)
    E = H.ExactPoints(pts)
    illegal = H.delaunay_violations(E, sweep)
    assert len(illegal) > 10
    pick = rng.choice(len(illegal), size=8, replace=False)
    fixed = np.array([illegal[i] for i in pick])
    fixed[::2] = fixed[::2, ::-1]  # direction must not matter
    tris, flips = _legalize(pts, sweep, fixed=fixed)
    check_legal(pts, sweep, tris, fixed=fixed)
    edges = set(H.edge_map(tris))
    assert H.undirected(fixed) <= edges
    # and they were really illegal: without fixing they disappear
    free, _ = _legalize(pts, sweep)
    assert not (H.undirected(fixed) & set(H.edge_map(free)))


def test_legalize_polygon_fan_gives_constrained_delaunay():
    # An L-shaped bracket triangulated as a fan from its reflex corner.  The
    # region is not convex; boundary edges cannot flip, and every interior
    # edge that is not locally Delaunay lies in a convex quadrilateral
    # (common practice), so Lawson flips end in the constrained Delaunay
    # triangulation: same count as GEOS, area from shapely.
    outline = [(0, 0), (10, 0), (10, 3), (3, 3), (3, 8), (0, 8)]
    pts = np.array(outline, dtype=float)
    fan = np.array([(3, 4, 5), (3, 5, 0), (3, 0, 1), (3, 1, 2)])
    tris, _ = _legalize(pts, fan)
    E = check_legal(pts, fan, tris)
    poly = Polygon(outline)
    assert float(E.twice_area(tris)) / 2 == poly.area
    assert len(tris) == len(shapely.constrained_delaunay_triangles(poly).geoms)


@given(st.lists(st.tuples(st.integers(0, 12), st.integers(0, 12)),
                min_size=3, max_size=40, unique=True))
def test_property_legalize_sweep(pts):
    # Any triangulation (here: our sweep) legalised by Lawson flips is
    # Delaunay (exact check), with the same vertices, count and area.
    # Integer points are heavily cocircular, which exercises ties.
    pts = np.array(pts, dtype=np.float64)
    assume(not H.all_collinear(pts))
    sweep = H.sweep_triangulation(pts)
    tris, flips = _legalize(pts, sweep)
    check_legal(pts, sweep, tris)
    assert flips >= 0
    assert len(tris) == H.euler_triangle_count(pts)


# ---------------------------------------------------------------------------
# quality
# ---------------------------------------------------------------------------
def _angles(points, triangles):
    """Interior angles (degrees) per triangle, via atan2(|cross|, dot)."""
    P = np.asarray(points, dtype=np.float64)[np.asarray(triangles)]
    out = np.empty((len(P), 3))
    for k in range(3):
        a, b, c = P[:, k], P[:, (k + 1) % 3], P[:, (k + 2) % 3]
        u, v = b - a, c - a
        cross = np.abs(u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0])
        dot = (u * v).sum(axis=1)
        out[:, k] = np.degrees(np.arctan2(cross, dot))
    return out


def test_quality_against_independent_angles():
    rng = np.random.default_rng(9)
    pts = rng.random((400, 2))
    tris = H.ccw(Delaunay(pts).simplices, pts)
    q = engine.quality(pts, tris)
    ang = _angles(pts, tris)
    # interior angles of a triangle sum to 180 degrees (Euclid)
    assert np.allclose(ang.sum(axis=1), 180.0, atol=1e-9)
    mins = ang.min(axis=1)
    assert np.allclose(q.triangle_min_angles, mins, atol=1e-7)
    assert math.isclose(q.min_angle, mins.min(), abs_tol=1e-7)
    assert math.isclose(q.max_angle, ang.max(), abs_tol=1e-7)
    assert np.allclose(q.bin_edges, np.arange(0, 61, 5))
    assert len(q.histogram) == 12 and int(np.sum(q.histogram)) == len(tris)
    # per-triangle smallest angle falls in [5k, 5k+5); 60 in the last bin
    expect = np.bincount(np.minimum((mins // 5).astype(int), 11), minlength=12)
    assert np.array_equal(np.asarray(q.histogram), expect)
    for thr in (7.5, 12.5, 20.0 + 1e-3, 33.3):
        assert q.count_below(thr) == int(np.sum(mins < thr))


def test_quality_simple_shapes():
    # Right isosceles triangle: 45/45/90; equilateral: 60/60/60 (Euclid).
    pts = np.array([(0, 0), (1, 0), (0, 1), (2, 0), (1.5, math.sqrt(3) / 2)])
    q = engine.quality(pts, np.array([(0, 1, 2)]))
    assert math.isclose(q.min_angle, 45.0, abs_tol=1e-9)
    assert math.isclose(q.max_angle, 90.0, abs_tol=1e-9)
    assert q.histogram[9] == 1 and int(np.sum(q.histogram)) == 1
    q = engine.quality(pts, np.array([(1, 3, 4)]))
    assert math.isclose(q.min_angle, 60.0, abs_tol=1e-9)
    assert q.histogram[11] == 1
    # a sliver: smallest angle about atan(1e-3) degrees -> first bin
    sl = np.array([(0, 0), (1, 0), (0.5, 5e-4)])
    q = engine.quality(sl, np.array([(0, 1, 2)]))
    assert math.isclose(q.min_angle, math.degrees(math.atan(1e-3)), rel_tol=1e-9)
    assert q.histogram[0] == 1 and q.count_below(1.0) == 1
