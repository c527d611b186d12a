"""Locating points of a flat region's plane in its original faces.

New interior vertices of a remeshed region take their position and
attribute weights from the original face triangle that holds them (so they
lie on that face and affine data come out exact).  :class:`FaceLocator`
finds that triangle: a walk in the mesh of the face triangles, points in
Hilbert order so each walk starts where the previous ended (N. Amenta,
S. Choi and G. Rote, "Incremental constructions con BRIO", SoCG 2003, for
the order; O. Devillers, S. Pion and M. Teillaud, "Walking in a
triangulation", IJFCS 13(2), 2002, for the walk), then one vectorised exact
check that each point is inside; points outside every face (rounding at the
outline) take the nearest triangle.
"""

import numpy as np

from .legalize import mesh_from_triangles
from .ordering import hilbert_keys
from .predicates import orient2d, orient2d_many


class PlaneProjection:
    """Plane coordinates of a region's vertices (sorted ids `vids`)."""

    def __init__(self, vids, verts, origin, e1, e2):
        self.vids = vids
        rel = verts[vids] - origin
        self.xy = np.column_stack((rel @ e1, rel @ e2))

    def many(self, vids):
        """Coordinates of an integer array of vertex ids: shape + (2,)."""
        vids = np.asarray(vids, dtype=np.int64)
        return self.xy[np.searchsorted(self.vids, vids)]

    def __getitem__(self, v):
        x, y = self.xy[int(np.searchsorted(self.vids, v))].tolist()
        return x, y


class FaceLocator:
    """Finds the original face triangle containing a point of the plane."""

    def __init__(self, face_tris, tri_corners, proj):
        self.corner_table = tri_corners
        verts, local = np.unique(face_tris, return_inverse=True)
        self.pts = proj.many(verts)
        tris = local.reshape(-1, 3).astype(np.int64)
        self.tris = tris
        p = self.pts[tris]
        area2 = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                 - (p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0]))
        self.good = np.flatnonzero(area2 > 0)
        self.mesh = None
        self.mesh_slot = None
        if len(self.good):
            try:
                self.mesh = mesh_from_triangles(self.pts, tris[self.good])
            except ValueError:
                self.mesh = None

    def locate_many(self, points):
        """Containing original face triangle (index into the face triangles)
        and clamped barycentric weights for many points."""
        pts = np.asarray(points, dtype=np.float64).reshape(-1, 2)
        if self.mesh is not None and len(pts):
            return self._walk_many(pts)
        tri_of = np.full(len(pts), -1, dtype=np.int64)
        bary = np.zeros((len(pts), 3))
        for i in range(len(pts)):
            tri_of[i], bary[i] = self._locate_one(*pts[i])
        return tri_of, bary

    def _walk_many(self, pts):
        """Locate points in Hilbert order, each walk starting where the
        previous one ended (few steps between neighbouring points)."""
        q = len(pts)
        order = np.argsort(hilbert_keys(pts), kind="stable")
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        slot = _visibility_walks(mesh, pts, order)
        # the walk stops at the mesh's open border for a point outside it:
        # keep only the slots that hold their point (exact signs)
        corner = np.asarray(tv, dtype=np.int64).reshape(-1, 3)[slot]
        vxy = np.column_stack((np.asarray(x), np.asarray(y)))
        inside = np.ones(q, dtype=bool)
        for k in range(3):
            inside &= orient2d_many(vxy[corner[:, (k + 1) % 3]], vxy[corner[:, (k + 2) % 3]],
                                    pts) >= 0
        fallback = np.flatnonzero(~inside).tolist()
        slot = np.where(inside, self.good[slot], -1)
        ok = slot >= 0
        tri_of = slot.copy()
        bary = np.zeros((q, 3))
        w = np.clip(_barycentric_many(self.pts[self.tris[tri_of[ok]]], pts[ok]), 0.0, None)
        bary[ok] = w / w.sum(axis=1, keepdims=True)
        for i in fallback:
            tri_of[i], bary[i] = self._locate_one(*pts[i])
        return tri_of, bary

    def _locate_one(self, px, py):
        t = None
        if self.mesh is not None:
            s = self.mesh.locate(px, py)
            if self._inside(s, px, py):
                t = int(self.good[s])
        if t is None:
            t = self._nearest(px, py)
        return t, self._barycentric(t, px, py)

    def _inside(self, s, px, py):
        tv, x, y = self.mesh.tv, self.mesh.x, self.mesh.y
        for k in range(3):
            u, v = tv[3 * s + (k + 1) % 3], tv[3 * s + (k + 2) % 3]
            if orient2d(x[u], y[u], x[v], y[v], px, py) < 0:
                return False
        return True

    def _barycentric(self, t, px, py):
        a, b, c = self.pts[self.tris[t]]
        det = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
        if det == 0:
            return (1.0, 0.0, 0.0)
        wb = ((px - a[0]) * (c[1] - a[1]) - (py - a[1]) * (c[0] - a[0])) / det
        wc = ((b[0] - a[0]) * (py - a[1]) - (b[1] - a[1]) * (px - a[0])) / det
        w = np.clip(np.array([1.0 - wb - wc, wb, wc]), 0.0, None)
        w /= w.sum()
        return tuple(float(v) for v in w)

    def _nearest(self, px, py):
        """The good triangle whose barycentric coordinates are least negative."""
        idx = self.good if len(self.good) else np.arange(len(self.tris))
        w = _barycentric_many(self.pts[self.tris[idx]], np.array([[px, py]]))
        worst = w.min(axis=1)
        return int(idx[int(np.argmax(worst))])


def _visibility_walks(mesh, pts, order):
    """Slot of a triangle of `mesh` (open borders, no ghosts) holding each
    point, the points taken in `order`, each walk starting where the last one
    ended.  A visibility walk (Devillers, Pion and Teillaud 2002) that
    rotates the edge it tests first, a deterministic stand-in for their
    stochastic walk, with each edge's line equation computed once.  The signs
    are floating-point and a walk that reaches the step limit just ends: the
    caller checks every result exactly and locates the misses again."""
    tv = np.asarray(mesh.tv, dtype=np.int64)
    xy = np.column_stack((mesh.x, mesh.y))
    c = np.arange(len(tv))
    a = xy[tv[c - c % 3 + (c % 3 + 1) % 3]]
    b = xy[tv[c - c % 3 + (c % 3 + 2) % 3]]
    # orient2d(a, b, p) = A * px + B * py + C: > 0 when p lies left of a -> b,
    # inside the (counter-clockwise) triangle of corner c
    line_a = (a[:, 1] - b[:, 1]).tolist()
    line_b = (b[:, 0] - a[:, 0]).tolist()
    line_c = (a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]).tolist()
    tn = mesh.tn
    xs, ys = pts[:, 0].tolist(), pts[:, 1].tolist()
    slot = [0] * len(xs)
    limit = 4 * len(tn) + 100
    t = 0
    turn = 0
    for i in order.tolist():
        px = xs[i]
        py = ys[i]
        for _ in range(limit):
            base = 3 * t
            turn = 0 if turn == 2 else turn + 1
            c = base + turn
            if line_a[c] * px + line_b[c] * py + line_c[c] < 0.0 and tn[c] >= 0:
                t = tn[c] // 3
                continue
            c = base + (0 if turn == 2 else turn + 1)
            if line_a[c] * px + line_b[c] * py + line_c[c] < 0.0 and tn[c] >= 0:
                t = tn[c] // 3
                continue
            c = base + (2 if turn == 0 else turn - 1)
            if line_a[c] * px + line_b[c] * py + line_c[c] < 0.0 and tn[c] >= 0:
                t = tn[c] // 3
                continue
            break
        slot[i] = t
    return np.asarray(slot, dtype=np.int64)


def _barycentric_many(corners, points):
    """(K, 3) barycentric coordinates of points (K, 2) (or one point, broadcast)
    in triangles corners (K, 3, 2); degenerate triangles give huge values."""
    a, b, c = corners[:, 0], corners[:, 1], corners[:, 2]
    p = np.broadcast_to(points, a.shape)
    det = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    det = np.where(det == 0, 1e-300, det)
    wb = ((p[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1])
          - (p[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])) / det
    wc = ((b[:, 0] - a[:, 0]) * (p[:, 1] - a[:, 1])
          - (b[:, 1] - a[:, 1]) * (p[:, 0] - a[:, 0])) / det
    return np.column_stack((1.0 - wb - wc, wb, wc))
