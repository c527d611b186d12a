"""Locating points of a region's plane in its original face triangles
(engine.face_locator), the step that gives new vertices their attribute weights.

Outside reference: shapely/GEOS (``STRtree`` query with the ``covers``
predicate) says which triangles hold each point; exact rational arithmetic
(Python's fractions) checks the barycentric weights.
"""

import math
from fractions import Fraction

import numpy as np
import shapely

from engine.face_locator import FaceLocator, PlaneProjection


def sliver_fan(count):
    """An invented panel outline: an elliptical `count`-gon cut into a fan of
    slivers from its vertex 0 (the shape a CAD export leaves)."""
    t = 2 * np.pi * np.arange(count) / count
    verts = np.column_stack((np.cos(t), 0.6 * np.sin(t), np.zeros(count)))
    tris = np.array([[0, k, k + 1] for k in range(1, count - 1)], dtype=np.int64)
    return verts, tris


def locator_for(verts, tris):
    ids = np.arange(len(verts))
    proj = PlaneProjection(ids, verts, np.zeros(3), np.array([1.0, 0, 0]),
                           np.array([0, 1.0, 0]))
    corners = np.arange(3 * len(tris)).reshape(-1, 3)
    return FaceLocator(tris, corners, proj), proj.xy


def test_points_in_a_sliver_fan_land_in_a_triangle_that_covers_them():
    verts, tris = sliver_fan(400)
    locator, xy = locator_for(verts, tris)
    rng = np.random.default_rng(3)
    inside = rng.uniform(-1, 1, (6000, 2)) * [1.0, 0.6]
    inside = inside[(inside[:, 0] ** 2 + (inside[:, 1] / 0.6) ** 2) < 0.95]
    # points on the fan's diagonals and at its vertices: several triangles hold them
    on_edges = 0.5 * (xy[0] + xy[tris[:, 2]])
    pts = np.vstack((inside, on_edges, xy[5:40]))
    tri_of, bary = locator.locate_many(pts)
    tree = shapely.STRtree([shapely.Polygon(xy[t]) for t in tris])
    point_idx, tri_idx = tree.query(shapely.points(pts), predicate="covered_by")
    holders = {}
    for p, t in zip(point_idx.tolist(), tri_idx.tolist()):
        holders.setdefault(p, set()).add(t)
    assert len(holders) == len(pts)
    for i, t in enumerate(tri_of.tolist()):
        assert t in holders[i], (i, pts[i], t, holders[i])
    assert np.all(bary >= 0) and np.allclose(bary.sum(axis=1), 1.0, rtol=0, atol=1e-12)


def test_weights_rebuild_the_point():
    # barycentric weights, rebuilt exactly in rationals, give back the point
    # (up to the rounding of the weights themselves)
    verts, tris = sliver_fan(60)
    locator, xy = locator_for(verts, tris)
    rng = np.random.default_rng(8)
    pts = rng.uniform(-0.7, 0.7, (300, 2)) * [1.0, 0.6]
    tri_of, bary = locator.locate_many(pts)
    for p, t, w in zip(pts.tolist(), tri_of.tolist(), bary.tolist()):
        corners = xy[tris[t]].tolist()
        x = sum(Fraction(wk) * Fraction(c[0]) for wk, c in zip(w, corners))
        y = sum(Fraction(wk) * Fraction(c[1]) for wk, c in zip(w, corners))
        assert math.hypot(float(x) - p[0], float(y) - p[1]) < 1e-12
