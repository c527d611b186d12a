"""Constraint insertion on crossing segments that nearly coincide (issue 8):
the cases the adversarial fuzzing found, kept as regular tests.

Each check uses the contract checkers of tests/test_adversarial.py (the
engine's exact validator AND the independent exact checker of
tests/helpers.py: strictly counter-clockwise triangles, local constrained
Delaunay, every segment covered, a point exactly on a segment splits it,
Euler's formula T = 2n - h - 2, hull area against shapely/GEOS) and names its
outside source beside it.
"""

import random
from fractions import Fraction

import numpy as np
import pytest

import engine
from engine.triangulation import Triangulation
from engine.validate import check_triangulation as engine_check

from . import helpers as H
from .test_adversarial import expect_triangulate_contract, expect_valid_triangulation


def points_on_a_third(xs, scale):
    """Points (x, x/3) scaled: x/3 is rounded (IEEE 754), so the points lie
    within an ulp of one line, mostly not exactly on it."""
    return np.array([(float(x), float(x) / 3.0) for x in xs]) * scale


# --------------------------------------------------------------------------
# nearly collinear overlapping segments that cross within rounding
# --------------------------------------------------------------------------
def test_nearly_collinear_crossings_at_1e8_scale():
    # ten points (x, x/3) at 1e-8 scale (IEEE 754 rounding puts them an ulp
    # or so around one line) with four overlapping segments along it that
    # cross each other within rounding; point 6 repeats point 5.  Was refused
    # with a ValueError.  Not exactly collinear (helpers.all_collinear, exact),
    # so the contract asks for a valid result: exact checks, Euler's formula,
    # hull area (exact, cross-checked with shapely/GEOS)
    pts = np.array([[4.2000000000000006e-08, 1.4000000000000001e-08],
                    [-1.6e-08, -5.333333333333333e-09],
                    [2.8000000000000003e-08, 9.333333333333334e-09],
                    [2.2000000000000002e-08, 7.333333333333334e-09],
                    [3.8e-08, 1.2666666666666668e-08], [6.000000000000001e-09, 2e-09],
                    [6.000000000000001e-09, 2e-09],
                    [-7.000000000000001e-09, -2.3333333333333335e-09],
                    [-4.6e-08, -1.5333333333333335e-08], [3.4e-08, 1.1333333333333334e-08]])
    segs = np.array([[2, 5], [4, 6], [0, 7], [2, 3]])
    assert not H.all_collinear(pts)
    expect_triangulate_contract(pts, segs, fill="hull")


def test_point_on_a_segment_splits_it_after_a_rounded_crossing():
    # at 1e6 (IEEE 754 spacing 2^-33 there) segment (1, 2) is crossed by the
    # others; input point 6 lies exactly on it (exact orientation, helpers).
    # A point on a segment splits it (the definition of a CDT, common
    # practice): both checkers require 6 on the chain of pieces of (1, 2)
    pts = np.array([[999999.994, 999999.998], [999999.972, 999999.9906666667],
                    [1000000.045, 1000000.015], [1000000.009, 1000000.003],
                    [999999.999, 999999.9996666666], [999999.979, 999999.993],
                    [999999.998, 999999.9993333333], [999999.955, 1000000.0003333336]])
    segs = np.array([[5, 3], [4, 0], [1, 2]])
    E = H.ExactPoints(pts)
    assert E.on_closed_segment(1, 2, 6)
    tri = expect_triangulate_contract(pts, segs, fill="hull")
    pieces = {tuple(s) for s in tri.segments.tolist()}
    assert any(6 in s for s in pieces), "point 6 is on no piece"


def test_validator_reports_a_chain_that_skips_a_point_on_the_segment():
    # a hand-made result: input segment A-B is covered by the chain A-W-B
    # through an added point W 1e-12 above it, while input point P = (1, 0)
    # lies exactly on A-B and is not on the chain.  A point on a segment
    # splits it (CDT definition, common practice): engine.validate and the
    # independent checker (helpers) must both report it
    pts = np.array([(0.0, 0.0), (2.0, 0.0), (1.0, 0.0), (1.0, 1.0), (1.0, -1.0),
                    (1.0, 1e-12)])
    tris = np.array([(0, 2, 5), (2, 1, 5), (0, 5, 3), (5, 1, 3), (0, 4, 2), (2, 4, 1)])
    E = H.ExactPoints(pts)
    assert all(E.orient(*t) > 0 for t in tris.tolist())      # counter-clockwise, exactly
    em = H.edge_map(tris)
    nb = np.full((len(tris), 3), -1, np.int64)
    for t, tri_v in enumerate(tris.tolist()):
        for k in range(3):
            u, v = tri_v[(k + 1) % 3], tri_v[(k + 2) % 3]
            nb[t, k] = next((s for s, _ in em[(min(u, v), max(u, v))] if s != t), -1)
    tri = Triangulation(points=pts, triangles=tris, neighbors=nb,
                        segments=np.array([(0, 5), (1, 5)]), segment_source=np.array([0, 0]),
                        merged_into=np.arange(5))
    segs = np.array([(0, 1)])
    problems = engine_check(tri, segs)
    assert any("input point 2 lies on input segment 0" in p for p in problems), problems
    with pytest.raises(AssertionError, match="do not split it"):
        H.check_segments(tri, pts[:5], segs)


# --------------------------------------------------------------------------
# 20 points on y = x/3 at 1e9 with crossing segments (was a RecursionError,
# then a ValueError)
# --------------------------------------------------------------------------
@pytest.mark.parametrize("xs, segs", [
    ([-2, -36, 36, -12, -38, 4, -19, 14, 21, -24, -8, -7, 15, 50, 0, 24, 11, -37, -34, 33],
     [(14, 16), (17, 18), (16, 17), (0, 9), (5, 6), (11, 12), (16, 10), (3, 13)]),
    ([4, 44, 34, 22, -46, -3, 3, 1, -14, 46, 35, -48, -39, -50, -1, -16, 9, 50, 31, 45],
     [(15, 10), (12, 14), (3, 15), (11, 4), (13, 4), (0, 5), (8, 11), (4, 18)]),
    ([50, -43, -4, 8, -8, 28, 42, -5, -22, 31, -49, 12, -46, -29, -18, 20, -45, -21, 47, -40],
     [(5, 1), (16, 6), (6, 14), (9, 7), (15, 16), (11, 10)]),
])
def test_twenty_points_on_a_third_at_1e9_with_crossing_segments(xs, segs):
    # (x, x/3) * 1e9 for 20 integers x (IEEE 754 rounding twice: not exactly
    # collinear, decided by helpers.all_collinear); the segments overlap and
    # cross within rounding.  Valid input: a valid result (exact checks,
    # Euler's formula, hull area); strict=False because the features are an
    # ulp apart (helpers.check_segments docstring)
    pts = points_on_a_third(xs, 1e9)
    assert not H.all_collinear(pts)
    expect_triangulate_contract(pts, np.array(segs), fill="hull", strict=False)


@pytest.mark.parametrize("seed", range(12))
def test_segments_along_a_third_at_three_scales(seed):
    # the same family drawn from a fixed seed (deterministic invented data) at
    # 1e-8, 1 and 1e9: a valid result or, only for exactly collinear input
    # (helpers.all_collinear), a ValueError naming it
    rng = random.Random(seed)
    xs = rng.sample(range(-50, 51), 20)
    segs = np.array([(rng.randrange(20), rng.randrange(20)) for _ in range(8)])
    for scale in (1e-8, 1.0, 1e9):
        expect_triangulate_contract(points_on_a_third(xs, scale), segs, fill="hull",
                                    strict=False)


def test_crossings_share_one_vertex_per_rounded_point():
    # three segments through one point that is not a double: (0,0)-(3,1),
    # (0,1)-(3,0) and (1.5, 0)-(1.5, 1) all pass through (1.5, 0.5)
    # exactly, which IS a double (IEEE 754), so one shared vertex and no other
    # added point; exact checks as above
    pts = np.array([(0.0, 0.0), (3.0, 1.0), (0.0, 1.0), (3.0, 0.0), (1.5, 0.0), (1.5, 1.0)])
    segs = np.array([(0, 1), (2, 3), (4, 5)])
    tri = expect_valid_triangulation(pts, segs, fill="hull")
    assert len(tri.points) == len(pts) + 1
    assert tri.points[-1].tolist() == [1.5, 0.5]
    assert tri.stats["added_points"] == 1


def test_no_crossing_means_no_snapping():
    # a segment passing within half an ulp of an input point but not through
    # it, with no crossing anywhere: the exact CDT keeps the segment as one
    # edge (exact orientation says the point is off it, helpers)
    pts = np.array([(0.0, 0.0), (1.0, 1.0), (0.5, 0.5000000000000001), (1.0, 0.0), (0.0, 1.0)])
    segs = np.array([(0, 1)])
    E = H.ExactPoints(pts)
    assert E.orient(0, 1, 2) != 0
    tri = expect_valid_triangulation(pts, segs, fill="hull")
    assert tri.segments.tolist() == [[0, 1]]
    assert tri.stats["added_points"] == 0
    assert engine.triangulate(pts, segs).stats["added_points"] == 0


# --------------------------------------------------------------------------
# found by the long segment-set fuzzing: the pixels of doubles grow with
# magnitude, so a fragment between a large pixel and small ones could still
# cross another fragment (engine/snap_rounding.py docstring)
# --------------------------------------------------------------------------
_LINE = [[-38.0, -12.666666666666666], [-19.0, -6.333333333333333], [12.0, 4.0],
         [-3.0, -1.0], [13.0, 4.333333333333333], [-38.0, -12.666666666666666],
         [8.0, 2.6666666666666665], [-34.0, -11.333333333333334], [0.0, 0.0],
         [1.0, 0.3333333333333333], [2.0, 0.6666666666666666],
         [-38.0, -12.666666666666664], [-38.0, -12.666666666666666],
         [-1.0, -0.3333333333333333], [-38.0, -12.666666666666666],
         [-38.0, -12.666666666666666], [-38.00000000000001, -12.666666666666666]]


@pytest.mark.parametrize("last", [[-1.0, -0.3333333333333333], [19.0, 6.333333333333333]],
                         ids=["uncovered", "refused"])
def test_fragments_between_pixels_of_different_sizes(last):
    # points (x, x/3) for integers x from -38 to 19 (IEEE 754 rounding; pixel
    # sizes from 2^-54 to 2^-49 along the line) with one-ulp neighbours of
    # (-38, -38/3) and three overlapping segments along the line that cross
    # once.  Was an uncovered segment (independent checker) and a refusal
    # (ValueError).  Exact checks, Euler's formula, hull area (GEOS);
    # strict=False: features an ulp apart (helpers.check_segments docstring)
    pts = np.array(_LINE[:13] + [last] + _LINE[14:])
    segs = np.array([(0, 6), (0, 13), (2, 7)])
    expect_triangulate_contract(pts, segs, fill="hull", strict=False)


# --------------------------------------------------------------------------
# a crossing exactly halfway between doubles in both coordinates: it lies on
# a pixel corner, and rounding (IEEE 754, round half to even) gives it to one
# pixel, which both of its segments must then pass through
# --------------------------------------------------------------------------
def test_crossing_on_a_pixel_corner_at_unit_scale():
    # y = x and x + y = 2 + 2^-52 cross at (1 + 2^-53, 1 + 2^-53) (exact,
    # fractions below): halfway between the doubles 1 and 1 + 2^-52 in both
    # coordinates, so it rounds to (1, 1), the even significand (IEEE 754
    # round half to even).  The second segment only touches the corner of
    # that pixel.  Was a piece off its segment (independent checker).  Both
    # segments pass through the one added point (1, 1); exact checks,
    # Euler's formula, hull area (GEOS)
    e = 2.0 ** -52
    pts = np.array([(0.0, 0.0), (2.0, 2.0), (e, 2.0), (2.0, e), (2.0, 0.0), (0.0, 2.0)])
    segs = np.array([(0, 1), (2, 3)])
    half = Fraction(1, 2 ** 53)
    corner = 1 + half
    assert corner + corner == 2 + Fraction(e)           # on x + y = 2 + 2^-52
    assert float(corner) == 1.0 and corner - 1 == (1 + 2 * half) - corner   # a tie
    tri = expect_triangulate_contract(pts, segs, fill="hull")
    assert tri.points[len(pts):].tolist() == [[1.0, 1.0]]
    assert sorted(tri.segments.tolist()) == [[0, 6], [1, 6], [2, 6], [3, 6]]


def test_snap_rounding_at_1e6_with_a_crossing_on_a_pixel_corner():
    # found by the long segment-set fuzzing (rings of 1e-3 at 1e6, IEEE 754
    # spacing 2^-33 there for both coordinates): segments (6, 7) and
    # (28, 30) cross exactly on a corner of the pixel of their rounded
    # crossing (a tie in x and in y, checked exactly below), so (6, 7) missed
    # the pixel of its own crossing; the untangling pass then routed a piece
    # through a far end and segment (28, 30) was left uncovered (independent
    # checker).  Exact checks, Euler's formula, hull area (GEOS); strict=False:
    # features an ulp apart (helpers.check_segments docstring)
    pts = np.array(_RINGS_AT_1E6)
    segs = np.array([(0, 28), (6, 7), (28, 30)])
    E = H.ExactPoints(pts)
    cx, cy = _exact_crossing(pts, (6, 7), (28, 30))
    for c in (cx, cy):
        assert 2 ** 19 <= c < 2 ** 20                 # doubles 2^-33 apart here (IEEE 754)
        assert (c * 2 ** 33).denominator == 2         # an odd multiple of 2^-34: a tie
    assert E.orient(6, 7, 28) * E.orient(6, 7, 30) < 0
    tri = expect_triangulate_contract(pts, segs, fill="hull", strict=False)
    rounded = [float(cx), float(cy)]
    w = tri.points.tolist().index(rounded)
    pieces = {tuple(s) for s in tri.segments.tolist()}
    assert any(w in s for s in pieces), "the rounded crossing is on no piece"


def _exact_crossing(pts, first, second):
    """Exact crossing of the lines through two point pairs (Cramer's rule
    in fractions)."""
    (ax, ay), (bx, by) = (map(Fraction, pts[i]) for i in first)
    (cx, cy), (dx, dy) = (map(Fraction, pts[i]) for i in second)
    denom = (bx - ax) * (dy - cy) - (by - ay) * (dx - cx)
    s = ((cx - ax) * (dy - cy) - (cy - ay) * (dx - cx)) / denom
    return ax + s * (bx - ax), ay + s * (by - ay)


_RINGS_AT_1E6 = [
    [999999.984, 999999.937], [999999.937, 999999.984], [999999.937, 1000000.016],
    [999999.94, 999999.975], [999999.94, 1000000.025], [999999.944, 999999.967],
    [999999.944, 1000000.033], [1000000.033, 999999.944], [999999.948, 1000000.039],
    [999999.961, 999999.948], [999999.961, 1000000.052], [999999.967, 999999.944],
    [999999.967, 1000000.056], [1000000.052, 999999.961], [999999.975, 1000000.06],
    [999999.935, 1000000.0], [999999.984, 1000000.063], [1000000.0, 999999.935],
    [1000000.0, 1000000.065], [1000000.016, 999999.937], [1000000.016, 1000000.063],
    [1000000.025, 999999.94], [1000000.025, 1000000.06], [999999.948, 999999.961],
    [1000000.033, 1000000.056], [1000000.039, 999999.948],
    [1000000.039, 1000000.052], [1000000.056, 1000000.033],
    [1000000.056, 999999.967], [1000000.052, 1000000.039], [999999.975, 999999.94],
    [1000000.06, 999999.975], [1000000.06, 1000000.025], [1000000.063, 999999.984],
    [1000000.063, 1000000.016], [1000000.065, 1000000.0], [999999.935, 1000000.0],
    [999999.935, 1000000.0], [999999.935, 1000000.0], [999999.935, 1000000.0],
    [999999.9349999999, 1000000.0], [999999.9349999999, 1000000.0],
    [999999.9349999999, 1000000.0]]


def test_nearly_collinear_points_whose_geos_hull_folds_back():
    # found by the long segment-set fuzzing: points (x, x/3) at 1e-9 (IEEE
    # 754 rounding: an ulp around one line) and two segments crossing at a
    # one-ulp angle (the fuzzer's nearly parallel pair).  The engine was
    # right; shapely/GEOS's floating-point convex hull folds back along the
    # line (GEOS 3.14: a valid polygon, not convex), so it is no reference
    # (hull_area_reference checks that exactly) and the exact hull
    # (helpers.strict_hull; every point inside or on it, checked with
    # fractions) gives the area.  Exact checks, Euler's formula;
    # strict=False: features an ulp apart
    pts = np.array(
        [[1e-09, 3.333333333333333e-10], [-3.2e-08, -1.0666666666666666e-08],
         [2e-09, 6.666666666666666e-10], [3.0000000000000004e-09, 1e-09],
         [4e-09, 1.3333333333333333e-09], [0.0, 0.0], [5e-09, 1.666666666666667e-09],
         [6.000000000000001e-09, 2e-09], [7.000000000000001e-09, 2.3333333333333335e-09],
         [8e-09, 2.6666666666666666e-09], [9.000000000000001e-09, 3.0000000000000004e-09],
         [1e-08, 3.333333333333334e-09], [1e-09, 3.3333333333333337e-10],
         [1e-09, 3.333333333333333e-10], [1e-09, 3.333333333333333e-10],
         [1e-09, 3.333333333333333e-10], [-3.2e-08, -3.6666666666666664e-09],
         [1e-08, -3.666666666666667e-09], [-3.2e-08, -3.666666666666667e-09],
         [1e-08, -3.6666666666666664e-09]])
    segs = np.array([(16, 17), (18, 19)])
    E = H.ExactPoints(pts)
    hull = H.strict_hull(E, range(E.n))
    ring = [tuple(map(Fraction, pts[i])) for i in hull]
    assert all((bx - ax) * (py - ay) - (by - ay) * (px - ax) >= 0
               for (ax, ay), (bx, by) in zip(ring, ring[1:] + ring[:1])
               for px, py in (tuple(map(Fraction, p)) for p in pts.tolist()))
    tri = expect_triangulate_contract(pts, segs, fill="hull", strict=False)
    assert len(tri.triangles)


# --------------------------------------------------------------------------
# found by the long segment-set fuzzing: the untangling pass routed a
# segment through a vertex far from it (the far end of a fragment it
# crossed), while routing the other segment through the near end already
# removed the crossing
# --------------------------------------------------------------------------
@pytest.mark.parametrize("pts, segs", [
    ([
     [1.8000000000000002e-08, 6.000000000000001e-09],
     [3.6000000000000005e-08, 1.2000000000000002e-08], [-1.6e-08, -5.333333333333333e-09],
     [3.2e-08, 1.0666666666666666e-08], [-3.5e-08, -1.1666666666666667e-08],
     [-1.7e-08, -5.666666666666667e-09], [5.0000000000000004e-08, 1.666666666666667e-08],
     [-2.1000000000000003e-08, -7.000000000000001e-09], [0.0, 0.0],
     [-1.1000000000000001e-08, -3.666666666666667e-09], [2.9e-08, 9.666666666666667e-09],
     [4.9e-08, 1.6333333333333334e-08], [1.8000000000000002e-08, 6.000000000000002e-09],
     [-2e-08, -6.666666666666668e-09], [-1.5000000000000002e-08, -5e-09],
     [1.4000000000000001e-08, 4.666666666666667e-09], [-1e-08, -3.333333333333334e-09],
     [-1.8000000000000002e-08, -6.000000000000001e-09], [-4e-09, -1.3333333333333333e-09],
     [-3.2e-08, -1.0666666666666666e-08], [-3.0000000000000004e-08, -1e-08],
     [-3.5e-08, 2.500000000000001e-09], [5.0000000000000004e-08, 2.500000000000002e-09],
     [-3.5e-08, 2.500000000000002e-09], [5.0000000000000004e-08, 2.500000000000001e-09]],
     [(21, 22), (23, 24), (0, 3), (2, 10), (8, 24)]),
    ([
     [-5000000000.0, -1666666666.6666667], [7000000000.0, 2333333333.3333335],
     [-12000000000.0, -4000000000.0], [1000000000.0, 333333333.3333333], [0.0, 0.0],
     [-1000000000.0, -333333333.3333333], [2000000000.0, 666666666.6666666],
     [3000000000.0, 1000000000.0], [18000000000.0, 6000000000.0],
     [4000000000.0, 1333333333.3333333], [6000000000.0, 2000000000.0],
     [5000000000.0, 1666666666.6666667], [8000000000.0, 2666666666.6666665],
     [9000000000.0, 3000000000.0], [10000000000.0, 3333333333.3333335],
     [11000000000.0, 3666666666.6666665], [12000000000.0, 4000000000.0],
     [13000000000.0, 4333333333.333333], [14000000000.0, 4666666666.666667],
     [15000000000.0, 5000000000.0], [1000000000.0, 333333333.3333334],
     [-12000000000.0, 1000000000.0], [18000000000.0, 1000000000.0000001],
     [-12000000000.0, 1000000000.0000001], [18000000000.0, 1000000000.0]],
     [(21, 22), (23, 24), (1, 2), (5, 22)]),
    ([
     [-5000000000.0, -1666666666.6666667], [6000000000.0, 2000000000.0],
     [-13000000000.0, -4333333333.333333], [1000000000.0, 333333333.3333333], [0.0, 0.0],
     [-1000000000.0, -333333333.3333333], [2000000000.0, 666666666.6666666],
     [3000000000.0, 1000000000.0], [4000000000.0, 1333333333.3333333],
     [5000000000.0, 1666666666.6666667], [7000000000.0, 2333333333.3333335],
     [8000000000.0, 2666666666.6666665], [21000000000.0, 7000000000.0],
     [9000000000.0, 3000000000.0], [12000000000.0, 4000000000.0],
     [10000000000.0, 3333333333.3333335], [11000000000.0, 3666666666.6666665],
     [13000000000.0, 4333333333.333333], [14000000000.0, 4666666666.666667],
     [15000000000.0, 5000000000.0], [1000000000.0, 333333333.3333334],
     [-13000000000.0, 1333333333.333333], [21000000000.0, 1333333333.3333333],
     [-13000000000.0, 1333333333.3333333], [21000000000.0, 1333333333.333333]],
     [(21, 22), (23, 24), (1, 2), (5, 22)]),
], ids=['line_1e-9', 'line_1e9_uncovered', 'line_1e9_off_segment'])
def test_untangling_keeps_pieces_near_their_segments(pts, segs):
    # points (x, x/3) at 1e-9 and 1e9 (IEEE 754 rounding: an ulp around one
    # line; near 0 the pixels of doubles are far smaller than elsewhere) with
    # the fuzzer's nearly parallel pair, a segment along the line and one
    # across it.  Were a constrained-looking edge left unconstrained, an
    # uncovered segment and a piece off its segment (independent checker).
    # Exact checks, Euler's formula, hull area (GEOS); strict=False:
    # features an ulp apart (helpers.check_segments docstring)
    expect_triangulate_contract(np.array(pts), np.array(segs), fill="hull", strict=False)


# --------------------------------------------------------------------------
# found by the long segment-set fuzzing: no crossing at all, and a segment
# leaving another's end at an angle of 2e-12; the independent checker took
# it for a piece along the other (its 1e-9 tolerance is for rounded points)
# --------------------------------------------------------------------------
@pytest.mark.parametrize("segs", [[(0, 1), (0, 3)], [(0, 1), (0, 3), (1, 3)]],
                         ids=["two", "triangle"])
def test_segment_leaving_an_end_at_a_tiny_angle(segs):
    # point 1 is 1e-12 above segment (0, 3), not on it (exact orientation,
    # helpers), and no two segments cross (exact), so the result is the
    # exact CDT: one triangle with every segment an edge of its own (the
    # definition of a CDT, common practice); exact checks, Euler's formula,
    # hull area (GEOS)
    pts = np.array([[0.0, 0.0], [0.5, 1e-12], [0.0, 0.0], [1.0, 0.0]])
    E = H.ExactPoints(pts)
    assert E.orient(0, 3, 1) > 0
    tri = expect_triangulate_contract(pts, np.array(segs), fill="hull")
    assert sorted(tri.segments.tolist()) == sorted([sorted(s) for s in segs])
    assert tri.stats["added_points"] == 0


def test_checker_rejects_a_piece_through_an_input_point_off_the_segment():
    # a hand-made result without any crossing: input segment A-B is covered
    # by A-C-B, and input point C lies 1e-12 above A-B (exact orientation).
    # Nothing is rounded without a crossing, so a piece must lie exactly on
    # its segment (CDT definition, common practice): the independent checker
    # must report it (it took C as on A-B within its 1e-9 tolerance before)
    pts = np.array([(0.0, 0.0), (1.0, 0.0), (0.5, 1e-12), (0.5, -1.0), (0.5, 1.0)])
    tris = np.array([(0, 2, 4), (2, 1, 4), (0, 3, 2), (2, 3, 1)])
    E = H.ExactPoints(pts)
    assert all(E.orient(*t) > 0 for t in tris.tolist())      # counter-clockwise, exactly
    assert E.orient(0, 1, 2) > 0                              # C is off A-B
    em = H.edge_map(tris)
    nb = np.full((len(tris), 3), -1, np.int64)
    for t, tri_v in enumerate(tris.tolist()):
        for k in range(3):
            u, v = tri_v[(k + 1) % 3], tri_v[(k + 2) % 3]
            nb[t, k] = next((s for s, _ in em[(min(u, v), max(u, v))] if s != t), -1)
    tri = Triangulation(points=pts, triangles=tris, neighbors=nb,
                        segments=np.array([(0, 2), (1, 2)]), segment_source=np.array([0, 0]),
                        merged_into=np.arange(5))
    with pytest.raises(AssertionError, match="is not on input segment 0"):
        H.check_segments(tri, pts, np.array([(0, 1)]))


def test_segment_leaving_an_end_at_a_tiny_angle_with_a_crossing_elsewhere():
    # found by the long segment-set fuzzing: as above, point 6 is 2.1e-35
    # above segment (0, 9) (exact orientation), and segment (1, 2) crosses
    # (0, 9) at (0.5, 0), a double (IEEE 754), so snap rounding runs; the
    # hot pixel of point 6 is far smaller than its distance to (0, 9)
    # (IEEE 754 spacing near 2.1e-35), so (0, 9) does not pass through it.
    # Exact checks, Euler's formula, hull area (GEOS); the crossing is the
    # one added point
    pts = np.array([[0.0, 0.0], [1.0, 1.0], [0.0, -1.0], [0.0, 0.0], [0.0, 0.0], [0.0, 0.0],
                    [0.25, 2.1018996115336126e-35], [0.0, 0.0], [0.0, 0.0], [1.0, 0.0],
                    [0.0, 0.0], [0.0, 0.0], [1.0, 1.0], [1.0, 1.0], [1.0, 1.0]])
    segs = np.array([(0, 6), (0, 9), (1, 2)])
    E = H.ExactPoints(pts)
    assert E.orient(0, 9, 6) > 0
    tri = expect_triangulate_contract(pts, segs, fill="hull")
    assert tri.points[len(pts):].tolist() == [[0.5, 0.0]]
    assert [0, 6] in tri.segments.tolist()


def test_hole_poking_half_an_ulp_out_of_the_outline_at_1e6():
    # found by the polygons-with-holes fuzzing: a millimetre outline at 1e6
    # (IEEE 754 spacing 2^-33 there) with a triangular hole whose vertex is
    # the rounded midpoint of an outline edge, half an ulp outside it (exact
    # orientation), so the hole's edges cross the outline.  The crossings
    # round onto that vertex: snap rounding moves the outline without adding
    # a point.  Area = shapely/GEOS fill-rule area (helpers.fill_rule_area)
    # within the rounding allowance of helpers.check_area; exact checks;
    # strict=False: features an ulp apart
    loops = [[(1000000.005, 1000000.0), (1000000.0042062677, 1000000.002703204),
              (1000000.0020770751, 1000000.00454816), (999999.9992884258, 1000000.0049491072),
              (999999.9967256964, 1000000.0037787479), (999999.9952025352, 1000000.0014086628),
              (999999.9952025352, 999999.9985913372), (999999.9967256964, 999999.9962212521),
              (999999.9992884258, 999999.9950508928), (1000000.0020770751, 999999.99545184),
              (1000000.0067164508, 999999.9980278721)],
             [(1000000.0046031339, 1000000.001351602), (1000000.0020015669, 1000000.0006758011),
              (1000000.0023015669, 1000000.000375801)],
             [(1000000.0043967629, 999999.9967398561), (1000000.0018983815, 999999.998369928),
              (1000000.0021983815, 999999.998069928)]]
    pts, segs = H.loops_to_input(loops)
    E = H.ExactPoints(pts)
    assert E.orient(0, 1, 11) < 0          # hole vertex 11 right of outline edge 0-1: outside
    for fill in ("even-odd", "nonzero"):
        tri = expect_valid_triangulation(pts, segs, fill=fill, area=H.fill_rule_area(loops, fill),
                                         cover="kept", strict=False)
        assert len(tri.points) == len(pts)
