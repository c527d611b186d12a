"""Delaunay triangulation of a point set: the sequential builder, and the
choice between it and the numpy bulk builder (:mod:`engine.bulk_delaunay`).

Points are inserted one by one in BRIO order (:mod:`engine.ordering`) with
the Bowyer-Watson cavity (:meth:`engine.mesh.Mesh.insert_vertex`) after a
remembering stochastic walk from the previous point.  The result is a closed
:class:`~engine.mesh.Mesh` (ghost triangles outside the hull) ready for
constraint insertion and refinement.
"""

import numpy as np

from .mesh import Mesh
from .ordering import brio_order
from .predicates import orient2d


def _first_triangle(xs, ys, order):
    """Three indices from `order` spanning a non-degenerate triangle, chosen
    near the start of the order; None when every point is collinear."""
    a = order[0]
    ax, ay = xs[a], ys[a]
    b = None
    for i in order[1:]:
        if xs[i] != ax or ys[i] != ay:
            b = i
            break
    if b is None:
        return None
    bx, by = xs[b], ys[b]
    for i in order[1:]:
        if orient2d(ax, ay, bx, by, xs[i], ys[i]) != 0:
            return a, b, i
    return None


# from this many points on, the numpy bulk builder is faster
BULK_THRESHOLD = 1500


def build_delaunay(xs, ys, indices, seed=0, method="auto"):
    """Delaunay triangulation of the points `indices` (distinct, as a list)
    of the coordinate lists xs, ys.  Returns a Mesh over all of xs, ys (other
    points stay unused).  Raises ValueError when the points are collinear.

    method: "sequential" (one point at a time, below), "bulk" (numpy rounds,
    :mod:`engine.bulk_delaunay`) or "auto" (bulk from BULK_THRESHOLD points).
    Both give the same triangulation (up to ties between cocircular points)."""
    if method not in ("auto", "sequential", "bulk"):
        raise ValueError(f"method must be 'auto', 'sequential' or 'bulk', got {method!r}")
    if method == "bulk" or (method == "auto" and len(indices) >= BULK_THRESHOLD):
        from .bulk_delaunay import bulk_delaunay
        return bulk_delaunay(xs, ys, indices, seed=seed)
    idx = np.asarray(indices, dtype=np.int64)
    pts = np.column_stack((np.asarray(xs)[idx], np.asarray(ys)[idx]))
    order = idx[brio_order(pts, seed=seed)].tolist()
    first = _first_triangle(xs, ys, order)
    if first is None:
        raise ValueError("need at least three distinct, non-collinear points")
    mesh = Mesh(list(xs), list(ys))
    mesh.start(*first)
    skip = set(first)
    locate, insert = mesh.locate, mesh.insert_vertex
    x, y = mesh.x, mesh.y
    for p in order:
        if p in skip:
            continue
        t = locate(x[p], y[p])
        insert(p, t)
    return mesh
