"""Size fields for refinement, sampled on a background grid of about
128 x 128 cells.

* SizeGrid: the graded size of refine(size_growth=g), h(x) = min over input
  vertices v of (s_v + g |x - v|), never over-estimated.
* RelaxGrid: the band around long fixed edges (keep_boundary, fixed_segments)
  where size limits relax, r(x) = max over those edges e of (|e| - g dist(x, e)).
"""

import math

import numpy as np

from .mesh import DEAD


class SizeGrid:
    """Graded size h(x) = min_v (s_v + g |x - v|) sampled on a grid of about
    128 x 128 cells over the mesh; size_at returns a value never above h."""

    def __init__(self, mesh, n0, growth, max_edge):
        xs = np.asarray(mesh.x[:n0])
        ys = np.asarray(mesh.y[:n0])
        tv = np.asarray(mesh.tv, dtype=np.int64).reshape(-1, 3)
        tv = tv[tv[:, 0] != DEAD]
        used = np.unique(tv)
        # s_v: the shortest edge at each input vertex
        a = tv.ravel()
        b = tv[:, [1, 2, 0]].ravel()
        length = np.hypot(xs[a] - xs[b], ys[a] - ys[b])
        s = np.full(n0, np.inf)
        np.minimum.at(s, a, length)
        np.minimum.at(s, b, length)
        vx, vy, sv = xs[used], ys[used], s[used]
        GX, GY = _grid_frame(self, vx, vy)
        node = np.full(GX.shape, np.inf)
        # exact h at the grid nodes, in chunks of input vertices
        for i in range(0, len(vx), 256):
            d = np.hypot(GX[..., None] - vx[i:i + 256], GY[..., None] - vy[i:i + 256])
            np.minimum(node, (sv[i:i + 256] + growth * d).min(axis=2), out=node)
        # a point of a cell is within cell*sqrt(2) of each corner
        low = np.minimum(np.minimum(node[:-1, :-1], node[1:, :-1]),
                         np.minimum(node[:-1, 1:], node[1:, 1:]))
        low = low - growth * self.cell * math.sqrt(2.0)
        floor = float(sv.min())
        low = np.maximum(low, floor)
        if max_edge is not None:
            low = np.minimum(low, max_edge)
        self.values = low.tolist()
        self.floor = floor

    def size_at(self, px, py):
        return _grid_value(self, px, py)


# how fast the relaxed size shrinks away from a long fixed edge (units per unit)
RELAX_GROWTH = 0.5


class RelaxGrid:
    """r(x) = max over long fixed edges e of (|e| - g * dist(x, e)), sampled
    on a grid of about 128 x 128 cells; size_at gives the largest value over
    the cell's corners plus the Lipschitz slack (a generous bound: it only
    waives size limits, never angle limits)."""

    def __init__(self, mesh, edges, growth):
        GX, GY = _grid_frame(self, np.asarray(mesh.x), np.asarray(mesh.y))
        node = np.full(GX.shape, -np.inf)
        for i in range(0, len(edges), 128):
            e = edges[i:i + 128]
            ax, ay, bx, by = (e[:, k] for k in range(4))
            dx, dy = bx - ax, by - ay
            length2 = dx * dx + dy * dy
            t = ((GX[..., None] - ax) * dx + (GY[..., None] - ay) * dy) / length2
            t = np.clip(t, 0.0, 1.0)
            dist = np.hypot(GX[..., None] - (ax + t * dx), GY[..., None] - (ay + t * dy))
            np.maximum(node, (np.sqrt(length2) - growth * dist).max(axis=2), out=node)
        high = np.maximum(np.maximum(node[:-1, :-1], node[1:, :-1]),
                          np.maximum(node[:-1, 1:], node[1:, 1:]))
        high = high + growth * self.cell * math.sqrt(2.0)
        self.values = np.maximum(high, 0.0).tolist()

    def size_at(self, px, py):
        return _grid_value(self, px, py)


def _grid_frame(grid, xs, ys, cells=128):
    """Set grid.x0, y0, cell, nx, ny for about cells x cells square cells over
    the points; return the node coordinates (ny + 1, nx + 1) as GX, GY."""
    x0, x1 = float(xs.min()), float(xs.max())
    y0, y1 = float(ys.min()), float(ys.max())
    grid.cell = (max(x1 - x0, y1 - y0) or 1.0) / cells
    grid.x0, grid.y0 = x0, y0
    grid.nx = int(math.ceil((x1 - x0) / grid.cell)) + 1
    grid.ny = int(math.ceil((y1 - y0) / grid.cell)) + 1
    return np.meshgrid(x0 + grid.cell * np.arange(grid.nx + 1),
                       y0 + grid.cell * np.arange(grid.ny + 1))


def _grid_value(grid, px, py):
    """grid.values of the cell holding (px, py), clamped to the grid."""
    i = min(max(int((px - grid.x0) / grid.cell), 0), grid.nx - 1)
    j = min(max(int((py - grid.y0) / grid.cell), 0), grid.ny - 1)
    return grid.values[j][i]
