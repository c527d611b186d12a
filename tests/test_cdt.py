"""Constrained triangulation: segments, fill rules, holes.

Outside references used here:
* shapely/GEOS polygon areas and ``shapely.constrained_delaunay_triangles``;
* the triangle count of a triangulated polygon with holes,
  T = V + 2*H - 2 (V vertices, H holes, no added points) - a consequence of
  Euler's formula, stated e.g. in de Berg et al., "Computational Geometry"
  (exercise in ch. 3; reference from memory);
* Euler's formula T = 2n - h - 2 for fill='hull';
* Kettner et al. 2008 near-collinear grids;
* exact rational arithmetic (tests/helpers.py).
"""

import math

import numpy as np
import pytest
import shapely
from hypothesis import assume, given, strategies as st
from shapely.geometry import Polygon

import engine

from . import helpers as H

# every test here runs on both Delaunay paths (sequential and numpy bulk)
pytestmark = pytest.mark.usefixtures("delaunay_path")


def _f(a):
    return np.asarray(a, dtype=np.float64)


def _i(a):
    return np.asarray(a, dtype=np.int64).reshape(-1, 2)


# ---------------------------------------------------------------------------
# invented polygon scenarios
# ---------------------------------------------------------------------------
def floor_with_pillars():
    """A floor outline with an alcove cut out and three square pillars."""
    outer = [(0, 0), (20, 0), (20, 12), (9, 12), (9, 9), (0, 9)]
    holes = [H.square(4.0, 4.5, 0.5, ccw_dir=False),
             H.square(12.0, 4.0, 0.6, ccw_dir=False),
             H.square(16.0, 8.0, 0.5, ccw_dir=False)]
    # seeds for fill='hull': one per pillar plus the notch outside the outline
    seeds = [(4.0, 4.5), (12.0, 4.0), (16.0, 8.0), (7.0, 10.0)]
    return outer, holes, seeds


def bracket_with_slots():
    """An L-shaped bracket with two slots."""
    outer = [(0, 0), (10, 0), (10, 3), (3, 3), (3, 8), (0, 8)]
    holes = [[(4, 1), (4, 2), (8, 2), (8, 1)],
             [(1, 4), (1, 7), (2, 7), (2, 4)]]
    seeds = [(6.0, 1.5), (1.5, 5.5), (4.0, 4.0)]
    return outer, holes, seeds


def gear_with_bore(teeth=12):
    """A gear-like star outline with a round bore (16-gon)."""
    outer = []
    for k in range(2 * teeth):
        a = math.pi * k / teeth
        r = 10.0 if k % 2 == 0 else 8.0
        outer.append((r * math.cos(a), r * math.sin(a)))
    bore = [(3.0 * math.cos(-2 * math.pi * k / 16), 3.0 * math.sin(-2 * math.pi * k / 16))
            for k in range(16)]
    seeds = [(0.0, 0.0)]
    for k in range(1, 2 * teeth, 2):  # notches between teeth, at the valleys
        a = math.pi * k / teeth
        seeds.append((9.0 * math.cos(a), 9.0 * math.sin(a)))
    return outer, [bore], seeds


SCENARIOS = {
    "floor": floor_with_pillars,
    "bracket": bracket_with_slots,
    "gear": gear_with_bore,
}


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_polygon_with_holes_even_odd(name):
    outer, holes, _ = SCENARIOS[name]()
    pts, segs = H.loops_to_input([outer] + holes)
    tri = engine.triangulate(pts, segs)  # default fill with segments: even-odd
    poly = Polygon(outer, holes)
    # Source: shapely/GEOS polygon area.  Also exact CCW, exact constrained
    # Delaunay (every unconstrained interior edge locally Delaunay), every
    # loop edge covered.
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=poly.area)
    # no points added: the loops do not cross
    assert len(tri.points) == len(pts)
    # Theorem (polygon with holes, via Euler's formula): T = V + 2H - 2
    V, nh = len(pts), len(holes)
    assert len(tri.triangles) == V + 2 * nh - 2
    # Source: GEOS constrained Delaunay triangulation of the same polygon;
    # same vertices, so the same triangle count (its triangles may differ
    # where vertices are cocircular, e.g. square pillar corners).
    geos = shapely.constrained_delaunay_triangles(poly)
    assert len(geos.geoms) == len(tri.triangles)
    # every polygon vertex is used
    assert set(tri.triangles.ravel().tolist()) == set(range(len(pts)))


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_polygon_with_holes_nonzero(name):
    # Outline CCW, holes CW: winding number 1 inside the solid, 0 in holes,
    # so the nonzero rule gives the same region as even-odd (common practice).
    outer, holes, _ = SCENARIOS[name]()
    if Polygon(outer).exterior.is_ccw is False:
        outer = outer[::-1]
    holes = [h if not Polygon(h).exterior.is_ccw else h[::-1] for h in holes]
    pts, segs = H.loops_to_input([outer] + holes)
    tri = engine.triangulate(pts, segs, fill="nonzero")
    area = Polygon(outer, holes).area  # shapely/GEOS
    H.check_triangulation(tri, pts, segs, fill="nonzero", area=area)
    assert len(tri.triangles) == len(pts) + 2 * len(holes) - 2


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_polygon_holes_by_seed_points_hull_fill(name):
    # fill='hull' keeps the convex hull; hole seeds inside each hole loop and
    # in each notch between outline and hull remove exactly those regions,
    # leaving the polygon (area from shapely/GEOS).
    outer, holes, seeds = SCENARIOS[name]()
    pts, segs = H.loops_to_input([outer] + holes)
    tri = engine.triangulate(pts, segs, holes=_f(seeds), fill="hull")
    poly = Polygon(outer, holes)
    H.check_triangulation(tri, pts, segs, fill="seeded", area=poly.area)
    assert len(tri.triangles) == len(pts) + 2 * len(holes) - 2
    # without seeds the whole convex hull is kept (Euler's formula applies)
    full = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(full, pts, segs, fill="hull")


def test_seed_removes_island_even_odd():
    # A courtyard (hole) with a planter island inside it: even-odd keeps the
    # island; a seed point inside the island removes it (areas via shapely).
    outer = H.square(5.0, 5.0, 5.0)
    court = H.square(5.0, 5.0, 2.0, ccw_dir=False)
    island = H.square(5.0, 5.0, 0.5)
    pts, segs = H.loops_to_input([outer, court, island])
    ring = Polygon(outer, [court])
    with_island = ring.union(Polygon(island))
    tri = engine.triangulate(pts, segs)
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=with_island.area)
    tri = engine.triangulate(pts, segs, holes=_f([(5.0, 5.0)]))
    # the island's outline now lies wholly in removed regions, so it need
    # not appear among the output segments
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=ring.area, cover="kept")
    # a seed in an already-empty region (the courtyard) changes nothing
    tri = engine.triangulate(pts, segs, holes=_f([(3.5, 3.5)]), fill="even-odd")
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=with_island.area)


def test_geos_same_triangles_general_position():
    # Source: GEOS constrained Delaunay triangulation.  For a polygon whose
    # vertices are in general position (random radii / angles) the CDT is
    # unique, so the triangle sets must be identical.
    rng = np.random.default_rng(21)
    for trial in range(3):
        k = 30
        ang = 2 * np.pi * (np.arange(k) + rng.random(k) * 0.7) / k
        rad = 6.0 + 4.0 * rng.random(k)
        outer = [(float(r * math.cos(a)), float(r * math.sin(a))) for r, a in zip(rad, ang)]
        kh = 9
        angh = -2 * np.pi * (np.arange(kh) + rng.random(kh) * 0.4) / kh
        radh = 1.0 + rng.random(kh)
        hole = [(float(r * math.cos(a)) + 0.3, float(r * math.sin(a))) for r, a in zip(radh, angh)]
        pts, segs = H.loops_to_input([outer, hole])
        tri = engine.triangulate(pts, segs)
        poly = Polygon(outer, [hole])
        H.check_triangulation(tri, pts, segs, fill="even-odd", area=poly.area)
        lookup = {(float(x), float(y)): i for i, (x, y) in enumerate(pts)}
        geos = set()
        for g in shapely.constrained_delaunay_triangles(poly).geoms:
            c = list(g.exterior.coords)[:3]
            geos.add(tuple(sorted(lookup[(float(x), float(y))] for x, y in c)))
        assert H.triangle_set(tri.triangles) == geos, f"trial {trial}"


# ---------------------------------------------------------------------------
# 8. segment cases
# ---------------------------------------------------------------------------
def test_crossing_segments_x_shape():
    # Two diagonals of a square cross at (1, 1): one added point, 4 pieces,
    # two per source segment (common practice).
    pts = _f([(0, 0), (2, 2), (0, 2), (2, 0)])
    segs = _i([(0, 1), (2, 3)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 5
    assert tuple(tri.points[4]) == (1.0, 1.0)
    assert len(tri.segments) == 4
    assert sorted(tri.segment_source.tolist()) == [0, 0, 1, 1]
    for (a, b), s in zip(tri.segments.tolist(), tri.segment_source.tolist()):
        assert 4 in (a, b)
        other = a if b == 4 else b
        assert other in segs[s].tolist()
    assert len(tri.triangles) == 4  # Euler: 2*5 - 4 - 2
    assert math.isclose(H.ExactPoints(tri.points).twice_area(tri.triangles) / 2, 4.0)


def test_crossing_at_inexact_point():
    # y = 3x and x + 3y = 3 meet at (0.3, 0.9), which is not a float: the
    # added point may be rounded but must lie within 1e-9 of both segments.
    pts = _f([(0, 0), (1, 3), (0, 1), (3, 0), (3, 3)])
    segs = _i([(0, 1), (2, 3)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 6
    assert np.allclose(tri.points[5], (0.3, 0.9), rtol=0, atol=1e-12)
    assert len(tri.segments) == 4


def test_three_segments_through_one_point():
    # Three segments all passing through the origin (an asterisk): exactly
    # one added point, six pieces (common practice: one intersection point).
    pts = _f([(-1, 0), (1, 0), (0, -1), (0, 1), (-1, -1), (1, 1)])
    segs = _i([(0, 1), (2, 3), (4, 5)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 7
    assert tuple(tri.points[6]) == (0.0, 0.0)
    assert len(tri.segments) == 6
    assert sorted(tri.segment_source.tolist()) == [0, 0, 1, 1, 2, 2]


def test_three_segments_concurrent_at_inexact_point():
    # 3x + y = 6, x = 2y and x + 5y = 6 all pass through (12/7, 6/7), which
    # is not a float.  In exact arithmetic it is one intersection point, so
    # one point is added (rounded) and each segment is cut there into two
    # pieces; three points an ulp apart would leave a tiny triangle of
    # constraints (common practice: intersections are compared exactly).
    pts = _f([(0, 6), (2, 0), (0, 0), (6, 3), (1, 1), (6, 0)])
    segs = _i([(0, 1), (2, 3), (4, 5)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 7
    assert np.allclose(tri.points[6], (12 / 7, 6 / 7), rtol=1e-15, atol=0)
    assert len(tri.segments) == 6


def test_crossing_through_existing_point():
    # Two segments crossing exactly at an input point: no point is added,
    # the input point splits both (common practice).
    pts = _f([(0, 0), (2, 2), (0, 2), (2, 0), (1, 1)])
    segs = _i([(0, 1), (2, 3)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 5
    assert H.undirected(tri.segments) == {(0, 4), (1, 4), (2, 4), (3, 4)}


def test_point_on_segment_splits_it():
    pts = _f([(0, 0), (4, 0), (2, 0), (2, 3), (2, -3)])
    segs = _i([(0, 1)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 5
    assert H.undirected(tri.segments) == {(0, 2), (1, 2)}
    assert tri.segment_source.tolist() == [0, 0]


def test_collinear_overlapping_segments_merge():
    # [0,3] and [1,5] on the x axis overlap on [1,3]: the output has the
    # three pieces [0,1], [1,3], [3,5] once each (no duplicated edge).
    pts = _f([(0, 0), (3, 0), (1, 0), (5, 0), (2, 4), (2, -4)])
    segs = _i([(0, 1), (2, 3)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 6
    assert H.undirected(tri.segments) == {(0, 2), (1, 2), (1, 3)}
    src = dict(zip(map(tuple, np.sort(tri.segments, axis=1).tolist()),
                   tri.segment_source.tolist()))
    assert src[(0, 2)] == 0 and src[(1, 3)] == 1 and src[(1, 2)] in (0, 1)
    # identical segment given twice, once reversed
    segs2 = _i([(0, 1), (1, 0)])
    tri2 = engine.triangulate(pts, segs2, fill="hull")
    H.check_triangulation(tri2, pts, segs2, fill="hull")
    assert H.undirected(tri2.segments) == {(0, 2), (1, 2)}


def test_duplicate_points_merge():
    # Row 3 repeats row 1, row 5 repeats row 0: merged_into points at the
    # first copy, no triangle uses the later copies, and a segment naming a
    # later copy is attached to the kept one.
    pts = _f([(0, 0), (1, 0), (0, 1), (1, 0), (1, 1), (0, 0)])
    segs = _i([(2, 3), (5, 4)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert tri.merged_into.tolist() == [0, 1, 2, 1, 4, 0]
    used = set(tri.triangles.ravel().tolist())
    assert 3 not in used and 5 not in used
    # (0,1)-(1,0) and (0,0)-(1,1) cross at the added point (0.5, 0.5)
    assert len(tri.points) == 7 and tuple(tri.points[6]) == (0.5, 0.5)
    assert H.undirected(tri.segments) == {(2, 6), (1, 6), (0, 6), (4, 6)}
    assert len(tri.triangles) == 4  # 5 used points, 4 on the hull: Euler


def test_reversed_duplicate_segment_crossed():
    # The same segment given twice (once reversed) and crossed by another:
    # the duplicates merge, so there is exactly one crossing point and one
    # chain per segment (common practice).  4x + 5y = 20 meets y = 5x at
    # (20/29, 100/29), not a float, so both copies must use the same
    # rounded point rather than two points an ulp apart.
    pts = _f([(0, 4), (5, 0), (0, 0), (1, 5)])
    segs = _i([(0, 1), (2, 3), (3, 2)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == 5
    assert len(tri.segments) == 4
    # as two degenerate (zero-area, doubled) loops even-odd keeps nothing
    loops = [[(0, 4), (5, 0)], [(0, 0), (1, 5)]]
    pts2, segs2 = H.loops_to_input(loops)
    eo = engine.triangulate(pts2, segs2, fill="even-odd")
    assert len(eo.triangles) == 0


def test_point_on_segment_split_after_crossing():
    # (6, 6) lies exactly on the segment (8, 0)-(5, 9); that segment is also
    # crossed by (0, 0)-(8, 1) at (192/25, 24/25) (not a float).  The point
    # must still split the segment (contract: a point lying on a segment
    # splits it), whatever the order of the splits; with an extra segment
    # (5, 9)-(6, 6) overlapping it, the overlap merges into one chain.
    pts = _f([(0, 0), (8, 1), (5, 9), (6, 6), (8, 0)])
    for segs in ([(0, 1), (4, 2)], [(0, 1), (2, 3), (4, 2)], [(4, 2), (0, 1)]):
        segs = _i(segs)
        tri = engine.triangulate(pts, segs, fill="hull")
        H.check_triangulation(tri, pts, segs, fill="hull")
        assert len(tri.points) == 6
        assert (2, 3) in H.undirected(tri.segments)


def test_zero_length_segments_ignored():
    pts = _f([(0, 0), (1, 0), (0, 1), (1, 0)])
    segs = _i([(0, 0), (1, 3), (0, 1)])  # (1,3) is zero-length after merging
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert H.undirected(tri.segments) == {(0, 1)}
    assert tri.segment_source.tolist() == [2]


def test_nested_same_direction_squares_nonzero_vs_even_odd():
    # Two nested CCW squares: winding number 2 in the inner one, so the
    # nonzero rule keeps everything while even-odd leaves a ring (common
    # practice definitions of the two rules; areas via shapely/GEOS).
    outer, inner = H.square(2, 2, 2), H.square(2, 2, 1)
    pts, segs = H.loops_to_input([outer, inner])
    nz = engine.triangulate(pts, segs, fill="nonzero")
    H.check_triangulation(nz, pts, segs, fill="nonzero", area=Polygon(outer).area)
    eo = engine.triangulate(pts, segs, fill="even-odd")
    ring = Polygon(outer, [inner])
    H.check_triangulation(eo, pts, segs, fill="even-odd", area=ring.area)
    assert len(eo.triangles) == 8 + 2 - 2
    default = engine.triangulate(pts, segs)
    assert H.triangle_set(default.triangles) == H.triangle_set(eo.triangles)
    # reversing the inner square makes nonzero give the ring as well
    pts2, segs2 = H.loops_to_input([outer, inner[::-1]])
    nz2 = engine.triangulate(pts2, segs2, fill="nonzero")
    H.check_triangulation(nz2, pts2, segs2, fill="nonzero", area=ring.area)


def test_overlapping_squares_fill_rules():
    # Two overlapping CCW squares: their boundaries cross at two added
    # points.  Even-odd = symmetric difference, nonzero = union (areas via
    # shapely/GEOS; rule definitions are common practice).
    a, b = H.square(0, 0, 1), H.square(1, 0.5, 1)
    pts, segs = H.loops_to_input([a, b])
    pa, pb = Polygon(a), Polygon(b)
    eo = engine.triangulate(pts, segs, fill="even-odd")
    H.check_triangulation(eo, pts, segs, fill="even-odd",
                          area=pa.symmetric_difference(pb).area)
    assert len(eo.points) == len(pts) + 2
    nz = engine.triangulate(pts, segs, fill="nonzero")
    H.check_triangulation(nz, pts, segs, fill="nonzero", area=pa.union(pb).area)


def test_adjacent_rooms_share_a_wall():
    # Two rooms drawn as separate CCW loops sharing part of a wall.  The
    # shared wall is crossed twice (once per loop) so both rules keep both
    # rooms: even-odd parity 1 (3 crossings to the outside) and winding 1
    # (the wall is traversed in opposite directions).  Union area: shapely.
    room_a = [(0, 0), (4, 0), (4, 3), (0, 3)]
    room_b = [(4, -1), (7, -1), (7, 4), (4, 4)]
    pts, segs = H.loops_to_input([room_a, room_b])
    area = Polygon(room_a).union(Polygon(room_b)).area
    for fill in ("nonzero", "even-odd"):
        tri = engine.triangulate(pts, segs, fill=fill)
        H.check_triangulation(tri, pts, segs, fill=fill, area=area)


def test_dangling_wall_inside_floor():
    # A dangling segment (one free end) inside a closed outline stays as a
    # constraint and does not bound a region: area unchanged (shapely).
    outer = [(0, 0), (10, 0), (10, 6), (0, 6)]
    pts, segs = H.loops_to_input([outer])
    pts = np.vstack([pts, [(5.0, 0.0), (5.0, 3.5), (2.0, 3.0)]])
    segs = np.vstack([segs, [(4, 5), (5, 6)]])
    tri = engine.triangulate(pts, segs)
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=60.0)
    assert {(4, 5), (5, 6)} <= H.undirected(tri.segments)


def test_dangling_wall_through_outline():
    # A dangling segment that runs from inside the floor through its outline
    # to the outside: it is split where it crosses the outline; the inside
    # piece stays a constraint, the area stays the floor's (shapely), and
    # every output segment is an edge of a kept triangle (contract: the
    # segments as they stand in the output).
    outer = [(0, 0), (10, 0), (10, 6), (0, 6)]
    pts, segs = H.loops_to_input([outer])
    pts = np.vstack([pts, [(5.0, 3.0), (14.0, 3.0)]])
    segs = np.vstack([segs, [(4, 5)]])
    tri = engine.triangulate(pts, segs)
    H.check_triangulation(tri, pts, segs, fill="even-odd", area=Polygon(outer).area,
                          cover="kept")
    assert len(tri.points) == 7 and tuple(tri.points[6]) == (10.0, 3.0)
    assert (4, 6) in H.undirected(tri.segments)


def test_kettner_grid_with_constraint():
    # Source: Kettner et al. 2008 grid; the segment from (0.5, 0.5) to
    # (24, 24) passes exactly through every grid point with i == j and
    # through (12, 12), and within one ulp of many others.  Exactly-on
    # points must split it; off-line points must not be on it.
    pts = H.kettner_grid(range(12), range(12))
    n_grid = 144
    start, q, r = 0, n_grid, n_grid + 1
    segs = _i([(start, r)])
    tri = engine.triangulate(pts, segs, fill="hull")
    E = H.check_triangulation(tri, pts, segs, fill="hull")
    on_line = {i * 12 + i for i in range(12)} | {q, r}
    verts = set(tri.segments.ravel().tolist())
    assert verts == on_line
    assert len(tri.segments) == len(on_line) - 1
    # exact collinearity of every piece with the input segment
    for a, b in tri.segments.tolist():
        assert E.orient(start, r, a) == 0 and E.orient(start, r, b) == 0


def test_kettner_grid_crossing_constraints():
    # Source: Kettner et al. 2008 grid.  The diagonal constraint from
    # (0.5, 0.5) to (24, 24) runs through the ulp-sized grid and is crossed
    # by a constraint from (7, 0) to (0, 30) at (210/37, 210/37), which is
    # not a float: one added point within the 1e-9 tolerance, everything
    # else exact.  (A crossing *inside* the dense grid is avoided on
    # purpose: there every float is already an input point.)
    pts = np.vstack([H.kettner_grid(range(10), range(10)), [(7.0, 0.0), (0.0, 30.0)]])
    segs = _i([(0, 101), (102, 103)])
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")
    assert len(tri.points) == len(pts) + 1
    assert np.allclose(tri.points[-1], (210 / 37, 210 / 37), rtol=1e-12, atol=0)
    assert sorted(tri.segment_source.tolist()).count(1) == 2


@pytest.mark.parametrize("ij,segs", [
    # grid offsets (i, j) in ulps of 0.5; segments as index pairs
    ([(173, 78), (176, 201), (180, 131), (109, 31), (175, 184)], [(0, 4), (2, 3), (1, 0)]),
    ([(83, 25), (88, 52), (81, 137), (105, 163), "far24"], [(2, 4), (3, 0), (1, 3)]),
    ([(66, 112), (90, 39), "far12", "far24", "corner"], [(0, 2), (3, 0), (1, 4)]),
    ([(1, 4), (0, 1), (0, 3), "far24", "far12"], [(1, 3), (2, 4)]),
    ([(1, 1), (0, 1), (0, 3), "far24", "far12"], [(0, 2), (1, 4), (3, 1)]),
    ([(0, 1), (0, 3), (0, 0), "far24", "far12"], [(0, 3), (1, 4)]),
])
def test_kettner_grid_crossings_at_ulp_scale(ij, segs):
    # Source: Kettner et al. 2008 grid.  Segments between grid points cross
    # at points whose coordinates are not floats; near 0.5 the floats ARE
    # the grid (spacing 2^-53), so every rounded crossing lands on a grid
    # node an ulp or so off the lines.  The result must still be a valid
    # triangulation with every segment covered (strict=False: at this scale
    # a 1e-9 tolerance cannot tell the segments apart).
    named = {"far12": (12.0, 12.0), "far24": (24.0, 24.0), "corner": (0.5, 24.0)}
    u = 2.0 ** -53
    pts = _f([named[p] if isinstance(p, str) else (0.5 + p[0] * u, 0.5 + p[1] * u) for p in ij])
    segs = _i(segs)
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull", strict=False)


# ---------------------------------------------------------------------------
# 7. property tests
# ---------------------------------------------------------------------------
@st.composite
def points_and_segments(draw):
    pts = draw(st.lists(st.tuples(st.integers(0, 8), st.integers(0, 8)),
                        min_size=3, max_size=25))
    n = len(pts)
    segs = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)),
                         max_size=8))
    return np.array(pts, dtype=np.float64), np.array(segs, dtype=np.int64).reshape(-1, 2)


@given(points_and_segments())
def test_property_random_segments_hull(data):
    # Random (crossing, overlapping, zero-length) segments on an integer grid
    # with duplicate points, fill='hull'.  Exact: CCW, constrained Delaunay,
    # segment coverage; area = convex hull area (shapely/GEOS); Euler's
    # formula T = 2n - h - 2 over all used vertices (added points included).
    pts, segs = data
    assume(not H.all_collinear(pts))
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull")


@st.composite
def star_polygon(draw):
    # star-shaped outline around the origin: angles increase with gaps below
    # 2*pi/3 (k >= 6), radii in [5, 10]; every edge then stays >= 2.5 from
    # the origin, so a hole of radius <= 2 fits strictly inside.
    k = draw(st.integers(6, 20))
    u = draw(st.lists(st.floats(0, 0.8), min_size=k, max_size=k))
    r = draw(st.lists(st.floats(5, 10), min_size=k, max_size=k))
    outer = [(ri * math.cos(2 * math.pi * (i + ui) / k), ri * math.sin(2 * math.pi * (i + ui) / k))
             for i, (ui, ri) in enumerate(zip(u, r))]
    holes = []
    if draw(st.booleans()):
        kh = draw(st.integers(3, 8))
        uh = draw(st.lists(st.floats(0, 0.4), min_size=kh, max_size=kh))
        rh = draw(st.lists(st.floats(0.5, 2), min_size=kh, max_size=kh))
        holes.append([(ri * math.cos(-2 * math.pi * (i + ui) / kh),
                       ri * math.sin(-2 * math.pi * (i + ui) / kh))
                      for i, (ui, ri) in enumerate(zip(uh, rh))])
    return outer, holes


@given(star_polygon(), st.sampled_from(["even-odd", "nonzero"]))
def test_property_star_polygons(poly, fill):
    # Area = shapely/GEOS polygon area; T = V + 2H - 2 (polygon-with-holes
    # theorem); exact CCW and constrained Delaunay; boundary covered.
    outer, holes = poly
    pts, segs = H.loops_to_input([outer] + holes)
    assume(len(H.distinct_indices(pts)) == len(pts))
    shp = Polygon(outer, holes)
    assume(shp.is_valid)
    tri = engine.triangulate(pts, segs, fill=fill)
    H.check_triangulation(tri, pts, segs, fill=fill, area=shp.area)
    assert len(tri.triangles) == len(pts) + 2 * len(holes) - 2


@st.composite
def random_loops(draw):
    k = draw(st.integers(1, 3))
    loops = []
    for _ in range(k):
        m = draw(st.integers(3, 7))
        loops.append(draw(st.lists(st.tuples(st.integers(0, 10), st.integers(0, 10)),
                                   min_size=m, max_size=m)))
    return loops


@given(random_loops(), st.sampled_from(["even-odd", "nonzero"]))
def test_property_self_intersecting_loops(loops, fill):
    # Random closed loops on an integer grid: they self-intersect, overlap,
    # touch and repeat vertices.  Kept area must equal the fill-rule area of
    # the arrangement computed with shapely/GEOS (helpers.fill_rule_area);
    # exact CCW, constrained Delaunay, boundary made of segments.
    pts, segs = H.loops_to_input([[(float(x), float(y)) for x, y in l] for l in loops])
    assume(not H.all_collinear(pts))
    tri = engine.triangulate(pts, segs, fill=fill)
    expected = H.fill_rule_area(loops, fill)
    if expected == 0.0:
        assert len(tri.triangles) == 0
        return
    H.check_triangulation(tri, pts, segs, fill=fill, area=expected, cover="kept")


@given(points_and_segments(),
       st.lists(st.tuples(st.integers(0, 7), st.integers(0, 7)), min_size=1, max_size=3))
def test_property_hole_seeds_hull(data, seed_cells):
    # fill='hull' with hole seeds: the kept area is the hull minus the faces
    # of the segment arrangement that contain a seed (shapely/GEOS faces,
    # helpers.seeded_hull_area).  Seeds sit at irrational-looking offsets
    # inside grid cells so they are never on a segment.
    pts, segs = data
    assume(not H.all_collinear(pts))
    hull = shapely.MultiPoint([tuple(p) for p in pts]).convex_hull
    seeds = [(x + 0.3183098861837907, y + 0.2718281828459045) for x, y in seed_cells]
    seeds = [p for p in seeds if hull.contains(shapely.Point(p))
             and hull.exterior.distance(shapely.Point(p)) > 1e-6]
    assume(seeds)
    expected = H.seeded_hull_area(pts, segs, seeds)
    tri = engine.triangulate(pts, segs, holes=_f(seeds), fill="hull")
    if expected <= 1e-12:
        assert len(tri.triangles) == 0
        return
    H.check_triangulation(tri, pts, segs, fill="seeded", area=expected, cover="kept")


@st.composite
def kettner_points_and_segments(draw):
    ij = draw(st.lists(st.tuples(st.integers(0, 255), st.integers(0, 255)),
                       min_size=2, max_size=30, unique=True))
    u = 2.0 ** -53
    far = draw(st.lists(st.sampled_from([(12.0, 12.0), (24.0, 24.0), (0.5, 24.0), (24.0, 0.5)]),
                        max_size=4, unique=True))
    pts = np.array([(0.5 + i * u, 0.5 + j * u) for i, j in ij] + far, dtype=np.float64)
    n = len(pts)
    segs = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)),
                         min_size=1, max_size=5))
    return pts, np.array(segs, dtype=np.int64).reshape(-1, 2)


@given(kettner_points_and_segments())
def test_property_kettner_grid_segments(data):
    # Source: Kettner et al. 2008 near-collinear grid, now with random
    # constraints between grid points and the far points: valid exact
    # triangulation, all points used, Euler count, hull area, every segment
    # covered by pieces within tolerance, exactly-on points split segments.
    pts, segs = data
    assume(not H.all_collinear(pts))
    tri = engine.triangulate(pts, segs, fill="hull")
    H.check_triangulation(tri, pts, segs, fill="hull", strict=False)
