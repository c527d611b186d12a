"""Fill rules with walls that touch loops at both ends (chords) and nested loops.

Outside reference: shapely/GEOS polygon areas of the same invented shapes.
"""

import numpy as np
import pytest
import shapely

import engine
from engine.validate import check_triangulation

# every test here runs on both Delaunay paths (sequential and numpy bulk)
pytestmark = pytest.mark.usefixtures("delaunay_path")


def _loops(loops, extra=()):
    points, segments, offset = [], [], 0
    for loop in loops:
        n = len(loop)
        points += loop
        segments += [(offset + i, offset + (i + 1) % n) for i in range(n)]
        offset += n
    for a, b in extra:
        points += [a, b]
        segments.append((offset, offset + 1))
        offset += 2
    return np.array(points, float), np.array(segments)


def test_room_with_wall_across_is_one_region():
    # an office floor 8 x 5 with a partition wall from the south wall to the
    # north wall: the partition is a constraint, the fill is the whole floor
    # (area checked against shapely/GEOS)
    floor = [(0, 0), (8, 0), (8, 5), (0, 5)]
    pts, segs = _loops([floor], extra=[((3, 0), (3, 5))])
    tri = engine.triangulate(pts, segs)
    assert tri.area() == pytest.approx(shapely.Polygon(floor).area, rel=1e-12)
    assert check_triangulation(tri, segs) == []
    assert {(4, 5)} <= set(map(tuple, np.sort(tri.segments, axis=1).tolist()))


def test_diagonal_brace_inside_a_panel():
    # a square panel with a diagonal brace from corner to corner
    panel = [(0, 0), (4, 0), (4, 4), (0, 4)]
    pts = np.array(panel, float)
    segs = np.array([(0, 1), (1, 2), (2, 3), (3, 0), (0, 2)])
    for fill in ("even-odd",):
        tri = engine.triangulate(pts, segs, fill=fill)
        assert tri.area() == pytest.approx(16.0, rel=1e-12)   # shapely: Polygon(panel).area
        assert check_triangulation(tri, segs) == []


def test_courtyard_ring_even_odd_and_nonzero():
    # a building outline with an inner courtyard drawn in the same direction:
    # even-odd leaves a ring, nonzero keeps everything (shapely areas)
    outer = [(0, 0), (10, 0), (10, 10), (0, 10)]
    inner = [(3, 3), (7, 3), (7, 7), (3, 7)]
    pts, segs = _loops([outer, inner])
    ring = shapely.Polygon(outer, [inner]).area
    full = shapely.Polygon(outer).area
    assert engine.triangulate(pts, segs, fill="even-odd").area() == pytest.approx(ring)
    assert engine.triangulate(pts, segs, fill="nonzero").area() == pytest.approx(full)


def test_nonzero_with_inconsistent_directions_is_reported():
    # a square whose sides are given in mixed directions has no winding number
    pts = np.array([(0, 0), (1, 0), (1, 1), (0, 1)], float)
    segs = np.array([(0, 1), (2, 1), (2, 3), (3, 0)])
    with pytest.raises(ValueError, match="nonzero"):
        engine.triangulate(pts, segs, fill="nonzero")
