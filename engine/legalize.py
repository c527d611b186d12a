"""Lawson's flip algorithm on an existing triangulation.

C. L. Lawson, "Software for C1 surface interpolation", in Mathematical
Software III (J. R. Rice, ed.), Academic Press, 1977: flipping every edge that
fails the incircle test, in any order, ends in the (constrained) Delaunay
triangulation of the same points, which maximises the smallest angle among
all triangulations with those edges fixed.  No point is added or moved.
"""

import numpy as np

from .bulk_delaunay import incircle_sign
from .cdt import check_points
from .mesh import DEAD, Mesh
from .predicates import orient2d_many


def check_triangles(triangles, count, name="triangles"):
    arr = np.asarray(triangles)
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ValueError(f"{name} must have shape (T, 3), got {arr.shape}")
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        raise ValueError(f"{name} must hold integer point indices")
    arr = arr.astype(np.int64)
    bad = (arr < 0) | (arr >= count)
    if bad.any():
        i = int(np.flatnonzero(bad.any(axis=1))[0])
        raise ValueError(f"{name} row {i} has a point index out of range 0..{count - 1}")
    return arr


def mesh_from_triangles(points, triangles):
    """A Mesh (open borders, no ghosts) over `points` holding `triangles`.

    Clockwise triangles are turned counter-clockwise; degenerate triangles,
    repeated vertices and edges shared by more than two triangles raise ValueError."""
    pts = check_points(points)
    tris = check_triangles(triangles, len(pts))
    if len(tris) == 0:
        raise ValueError("triangles is empty")
    same = (tris[:, 0] == tris[:, 1]) | (tris[:, 1] == tris[:, 2]) | (tris[:, 0] == tris[:, 2])
    if same.any():
        raise ValueError(f"triangle {int(np.flatnonzero(same)[0])} repeats a vertex")
    o = orient2d_many(pts[tris[:, 0]], pts[tris[:, 1]], pts[tris[:, 2]])
    if (o == 0).any():
        raise ValueError(f"triangle {int(np.flatnonzero(o == 0)[0])} has zero area")
    tris = tris.copy()
    cw = o < 0
    tris[cw] = tris[cw][:, ::-1]
    t_count = len(tris)
    # edge opposite corner k runs from vertex k+1 to k+2
    u = tris[:, [1, 2, 0]].ravel()
    v = tris[:, [2, 0, 1]].ravel()
    corner = np.arange(3 * t_count)
    lo, hi = np.minimum(u, v), np.maximum(u, v)
    order = np.lexsort((hi, lo))
    lo_s, hi_s = lo[order], hi[order]
    same_next = (lo_s[1:] == lo_s[:-1]) & (hi_s[1:] == hi_s[:-1])
    if (same_next[1:] & same_next[:-1]).any():
        raise ValueError("an edge is shared by more than two triangles (non-manifold)")
    tn = np.full(3 * t_count, -1, dtype=np.int64)
    pair = np.flatnonzero(same_next)
    a, b = corner[order[pair]], corner[order[pair + 1]]
    if (u[a] == u[b]).any():
        raise ValueError("two triangles sharing an edge have opposite orientations "
                         "(overlapping triangles)")
    tn[a] = b
    tn[b] = a
    mesh = Mesh(pts[:, 0].tolist(), pts[:, 1].tolist())
    mesh.tv = tris.ravel().tolist()
    mesh.tn = tn.tolist()
    mesh.tc = [0] * (3 * t_count)
    mesh.mark = [0] * t_count
    vt = [-1] * len(pts)
    for c, vert in enumerate(mesh.tv):
        vt[vert] = c
    mesh.vt = vt
    mesh.last = 0
    return mesh


def illegal_corners(mesh):
    """Corners (one per edge) whose edge is flippable and fails the exact
    incircle test, found for the whole mesh at once: the starting stack of
    Lawson's algorithm without a Python-level test of every edge."""
    tv = np.asarray(mesh.tv, dtype=np.int64)
    tn = np.asarray(mesh.tn, dtype=np.int64)
    tc = np.asarray(mesh.tc, dtype=np.int64)
    c = np.flatnonzero((tn > np.arange(len(tn))) & (tc == 0))
    b = c - c % 3
    p0, p1, p2, q = tv[b], tv[b + 1], tv[b + 2], tv[tn[c]]
    real = (p0 >= 0) & (p1 >= 0) & (p2 >= 0) & (q >= 0) & (p0 != DEAD)
    c, p0, p1, p2, q = c[real], p0[real], p1[real], p2[real], q[real]
    x = np.asarray(mesh.x, dtype=np.float64)
    y = np.asarray(mesh.y, dtype=np.float64)
    sign = incircle_sign(x[p0], y[p0], x[p1], y[p1], x[p2], y[p2], x[q], y[q])
    return c[sign > 0].tolist()


def legalize(points, triangles, *, fixed=None):
    """Flip illegal edges of a triangulation until every edge is locally
    Delaunay.  `fixed` (K, 2) point-index pairs are edges that never flip.

    Returns (triangles (T, 3) counter-clockwise, number of flips)."""
    mesh = mesh_from_triangles(points, triangles)
    if fixed is not None and len(fixed):
        fx = check_triangles(np.asarray(fixed).reshape(-1, 2).repeat(1, axis=0)[:, [0, 1, 1]],
                             len(mesh.x), "fixed")[:, :2]
        for a, b in fx.tolist():
            c = mesh.find_edge(a, b)
            if c >= 0:
                mesh.set_constraint(c, True)
    flips = mesh.legalize_corners(range(len(mesh.tv)))
    tris = np.asarray(mesh.tv, dtype=np.int64).reshape(-1, 3)
    return tris, flips
