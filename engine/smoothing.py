"""Smoothing of refined meshes: the optimal Delaunay triangulation update.

L. Chen and J. Xu, "Optimal Delaunay triangulations", Journal of
Computational Mathematics 22(2), 2004, as used by P. Alliez, D. Cohen-Steiner,
M. Yvinec and M. Desbrun, "Variational tetrahedral meshing", ACM Transactions
on Graphics 24(3), 2005: an interior Steiner vertex moves to the area-weighted
mean of the circumcenters of its triangles.  A move is kept only when the
smallest angle of the vertex's triangles grows and no size limit breaks, and
Lawson flips restore the constrained Delaunay property after each move.

The steps are methods of the refiner (engine.refine._Refiner), which mixes
this class in; they use its mesh, limits and size test.
"""

import math

import numpy as np

from .mesh import DEAD
from .predicates import orient2d
from .quality import quality


def _next(c):
    return c + 1 if c % 3 != 2 else c - 2


def _prev(c):
    return c - 1 if c % 3 != 0 else c + 2


class SmoothingSteps:
    """Smoothing methods of the refiner."""

    def smooth(self, passes):
        """Optimal-Delaunay smoothing of interior Steiner vertices; a move is
        kept only when it raises the smallest angle around the vertex; Lawson
        flips follow every kept move."""
        before = self._min_angle_now()
        moved = 0
        movable = self._movable_vertices()
        for _ in range(passes):
            moved_now = 0
            for v in movable:
                if self._smooth_vertex(v):
                    moved_now += 1
            moved += moved_now
            if not moved_now:
                break
        self.stats["smoothing_moves"] = moved
        self.stats["smoothing_min_angle_before"] = before
        self.stats["smoothing_min_angle_after"] = self._min_angle_now()

    def _boundary_vertices(self):
        """Vertices of constrained or border edges."""
        mesh = self.mesh
        tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
        fixed = set()
        for c in range(len(tv)):
            if tv[c] == DEAD:
                continue
            if tc[c] or tn[c] < 0:
                fixed.add(tv[_next(c)])
                fixed.add(tv[_prev(c)])
        return fixed

    def _movable_vertices(self):
        fixed = self._boundary_vertices()
        mesh = self.mesh
        return [v for v in range(self.n0, len(mesh.x)) if v not in fixed and mesh.vt[v] >= 0]

    def _min_angle_now(self):
        tris = self._live_triangles()
        if not len(tris):
            return float("nan")
        pts = np.column_stack((np.asarray(self.mesh.x), np.asarray(self.mesh.y)))
        return quality(pts, tris).min_angle

    def _live_triangles(self):
        tv = np.asarray(self.mesh.tv, dtype=np.int64).reshape(-1, 3)
        return tv[tv[:, 0] != DEAD]

    def _star(self, v):
        """Corners at v in a closed fan, or None when the fan is open."""
        mesh = self.mesh
        tn = mesh.tn
        c0 = mesh.corner_of_vertex(v)
        if c0 < 0:
            return None
        out = [c0]
        c = c0
        for _ in range(1000):
            nb = tn[_next(c)]
            if nb < 0:
                return None
            c = _next(nb)
            if c == c0:
                return out
            out.append(c)
        return None

    def _star_min_sin2(self, star, v, px, py):
        """Smallest sin^2(angle) over the triangles of the star with v placed at
        p; -1 when one of them is not strictly counter-clockwise or breaks a
        size limit."""
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        worst = 2.0
        grid = self.grid
        for c in star:
            a, b = tv[_next(c)], tv[_prev(c)]
            ax, ay, bx, by = x[a], y[a], x[b], y[b]
            if orient2d(px, py, ax, ay, bx, by) <= 0:
                return -1.0
            l0 = (ax - bx) ** 2 + (ay - by) ** 2
            l1 = (bx - px) ** 2 + (by - py) ** 2
            l2 = (px - ax) ** 2 + (py - ay) ** 2
            area2 = (ax - px) * (by - py) - (ay - py) * (bx - px)
            hi = max(l0, l1, l2)
            if area2 > self.area2_limit or hi > self.edge2_limit:
                return -1.0
            if grid is not None:
                h = grid.size_at((px + ax + bx) / 3.0, (py + ay + by) / 3.0)
                if hi > h * h:
                    return -1.0
            s2 = area2 * area2 * min(l0, l1, l2) / (l0 * l1 * l2)
            if s2 < worst:
                worst = s2
        return worst

    def _smooth_vertex(self, v):
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        star = self._star(v)
        if star is None:
            return False
        vx, vy = x[v], y[v]
        current = self._star_min_sin2(star, v, vx, vy)
        if current < 0.0:
            return False        # breaks a limit where it stands: leave it
        if current >= self.sin2_bound * 1.6 and current > 0.6:
            return False        # already well shaped: leave it
        # optimal Delaunay update: area-weighted circumcenters
        sw = sx = sy = 0.0
        for c in star:
            a, b = tv[_next(c)], tv[_prev(c)]
            ax, ay, bx, by = x[a] - vx, y[a] - vy, x[b] - vx, y[b] - vy
            d = 2.0 * (ax * by - ay * bx)
            if d <= 0.0:
                return False
            al = ax * ax + ay * ay
            bl = bx * bx + by * by
            ux = (by * al - ay * bl) / d
            uy = (ax * bl - bx * al) / d
            w = 0.5 * d
            sw += w
            sx += w * ux
            sy += w * uy
        if sw <= 0.0:
            return False
        tx, ty = vx + sx / sw, vy + sy / sw
        for f in (1.0, 0.5, 0.25):
            nx = vx + f * (tx - vx)
            ny = vy + f * (ty - vy)
            if (nx, ny) == (vx, vy):
                break
            if self._star_min_sin2(star, v, nx, ny) > current:
                x[v] = nx
                y[v] = ny
                mesh.legalize_corners([c2 for c in star for c2 in (c, _next(c), _prev(c))])
                if self._size_kept_near(v):
                    return True
                # the flips made a triangle too large: move back (the
                # constrained Delaunay triangulation of the old positions returns)
                x[v] = vx
                y[v] = vy
                after = self._star(v) or star
                mesh.legalize_corners([c2 for c in after for c2 in (c, _next(c), _prev(c))])
                return False
        return False

    def _size_kept_near(self, v):
        """No triangle around v or around its neighbours breaks a size limit."""
        if self.area2_limit == math.inf and self.edge2_limit == math.inf and self.grid is None:
            return True
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        star = self._star(v)
        if star is None:
            return True
        vertices = {v} | {tv[_next(c)] for c in star}
        for w in vertices:
            for c in mesh.corners_around(w):
                b = c - c % 3
                a0, a1, a2 = tv[b], tv[b + 1], tv[b + 2]
                if self._size_bad(x[a0], y[a0], x[a1], y[a1], x[a2], y[a2]):
                    return False
        return True

