"""Bad input: engine.triangulate raises ValueError naming the problem.

Contract of the project (see the brief of the engine API); the message
patterns are loose, lowercase, and matched case-insensitively.
"""

import numpy as np
import pytest

import engine

from . import helpers as H

# every test here runs on both Delaunay paths (sequential and numpy bulk)
pytestmark = pytest.mark.usefixtures("delaunay_path")

SQUARE = np.array([(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)])


def _raises(pattern, *args, **kw):
    with pytest.raises(ValueError, match=f"(?i){pattern}"):
        engine.triangulate(*args, **kw)


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
@pytest.mark.parametrize("where", [(0, 0), (2, 1)])
def test_non_finite_coordinates(bad, where):
    pts = SQUARE.copy()
    pts[where] = bad
    _raises("nan|finite|inf", pts)


@pytest.mark.parametrize("pts", [
    np.zeros((5, 3)),            # three columns
    np.zeros(8),                 # flat vector
    np.zeros((2, 2, 2)),         # 3-D array
    np.zeros((0, 2)),            # no points (shape or "fewer than three")
])
def test_wrong_point_shape(pts):
    _raises("shape|fewer|distinct|at least|empty", pts)


@pytest.mark.parametrize("segs", [
    np.array([0, 1, 2]),         # flat
    np.array([[0, 1, 2]]),       # three columns
    np.zeros((1, 2, 2), dtype=int),
])
def test_wrong_segment_shape(segs):
    _raises("shape", SQUARE, segs)


@pytest.mark.parametrize("segs", [[(0, 4)], [(7, 1)], [(0, -1)], [(-5, 2)]])
def test_segment_index_out_of_range(segs):
    _raises("range|index|bounds", SQUARE, np.array(segs, dtype=np.int64))


def test_non_integer_segment_indices():
    # 1.5 is not an index: refuse rather than truncate silently.
    _raises("integer|index|shape|type", SQUARE, np.array([(0.0, 1.5)]))


@pytest.mark.parametrize("holes", [np.array([0.5, 0.5, 0.5]), np.zeros((2, 3))])
def test_wrong_hole_shape(holes):
    _raises("shape|hole", SQUARE, np.array([(0, 1), (1, 2), (2, 3), (3, 0)]), holes=holes)


def test_non_finite_hole_seed():
    _raises("nan|finite|inf|hole", SQUARE, np.array([(0, 1), (1, 2), (2, 3), (3, 0)]),
            holes=np.array([(np.nan, 0.5)]))


def test_unknown_fill_rule():
    _raises("fill", SQUARE, fill="sideways")


@pytest.mark.parametrize("pts", [
    [(0, 0), (1, 1)],                                  # two points
    [(0, 0), (1, 1), (2, 2)],                          # three collinear
    [(0, 0), (1, 1), (1, 1), (0, 0), (1, 1)],          # two distinct points
    [(0.5, 0.5)] * 6,                                  # one distinct point
    [(0.5 + i * 2.0 ** -53, 0.5 + i * 2.0 ** -53) for i in range(20)]
    + [(12.0, 12.0), (24.0, 24.0)],                    # Kettner et al. 2008: exactly on y = x
])
def test_degenerate_point_sets(pts):
    arr = np.array(pts, dtype=np.float64)
    assert H.all_collinear(arr)  # exact confirmation that the case is degenerate
    _raises("collinear|distinct|fewer|at least", arr)


def test_almost_collinear_is_fine():
    # One point a single ulp off the line y = x (Kettner et al. 2008 grid):
    # not degenerate, so it must triangulate (exactly checked).
    pts = np.array([(0.5, 0.5), (0.5 + 2.0 ** -53, 0.5), (12.0, 12.0), (24.0, 24.0)])
    assert not H.all_collinear(pts)
    tri = engine.triangulate(pts)
    H.check_triangulation(tri, pts)


def test_zero_length_segments_do_not_raise():
    segs = np.array([(0, 0), (2, 2), (1, 3)])
    tri = engine.triangulate(SQUARE, segs, fill="hull")
    H.check_triangulation(tri, SQUARE, segs, fill="hull")
    assert H.undirected(tri.segments) == {(1, 3)}


def test_empty_segments_and_holes_are_fine():
    tri = engine.triangulate(SQUARE, np.zeros((0, 2), dtype=np.int64),
                             holes=np.zeros((0, 2)), fill="hull")
    H.check_triangulation(tri, SQUARE, fill="hull")
    assert len(tri.triangles) == 2


def test_inputs_not_modified():
    # The caller's arrays are left untouched (common practice for a library).
    pts = np.array([(0.0, 0.0), (2.0, 2.0), (0.0, 2.0), (2.0, 0.0), (1.0, 0.5)])
    segs = np.array([(0, 1), (2, 3)])
    p0, s0 = pts.copy(), segs.copy()
    engine.triangulate(pts, segs, fill="hull")
    assert np.array_equal(pts, p0) and np.array_equal(segs, s0)


def test_lists_accepted():
    # Plain Python sequences are array-like input (common practice).
    tri = engine.triangulate([[0, 0], [1, 0], [0, 1]], [[0, 1]], fill="hull")
    H.check_triangulation(tri, np.array([[0, 0], [1, 0], [0, 1]], float), [[0, 1]])
