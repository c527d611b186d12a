"""Invented test meshes (numpy only): a tilted plate with bolt holes and a navmesh floor
with pillars, built from uneven grids so they hold quads, fair triangles, slivers and a
fan of slivers.  Each returns (vertices (N, 3) float64, faces as lists of indices)."""

from itertools import pairwise

import numpy as np


def rotation(ax, ay, az):
    """Rotation matrix from angles (radians) about x, then y, then z."""
    cx, sx, cy, sy, cz, sz = np.cos(ax), np.sin(ax), np.cos(ay), np.sin(ay), np.cos(az), np.sin(az)
    rx = np.array([[1, 0, 0], [0, cx, -sx], [0, sx, cx]])
    ry = np.array([[cy, 0, sy], [0, 1, 0], [-sy, 0, cy]])
    rz = np.array([[cz, -sz, 0], [sz, cz, 0], [0, 0, 1]])
    return rz @ ry @ rx


def grid_sheet(xs, ys, holes, fan_cell, fan_points):
    """A flat sheet on the grid xs * ys (z = 0).  Cells listed in `holes` are left out;
    the others become a quad or two triangles (either diagonal) by a fixed pattern, and
    `fan_cell`, which must touch the right border, a fan of `fan_points` + 1 slivers."""
    nx = len(xs)
    verts = [(x, y, 0.0) for y in ys for x in xs]
    faces = []
    for j in range(len(ys) - 1):
        for i in range(nx - 1):
            if (i, j) in holes:
                continue
            a, b = j * nx + i, j * nx + i + 1
            c, d = b + nx, a + nx
            if (i, j) == fan_cell:
                assert i == nx - 2, "the fan's extra vertices sit on the right border"
                rim = [b]
                for t in np.linspace(0.0, 1.0, fan_points + 2)[1:-1]:
                    rim.append(len(verts))
                    verts.append((xs[i + 1], ys[j] + t * (ys[j + 1] - ys[j]), 0.0))
                rim.append(c)
                faces += [[a, p, q] for p, q in pairwise(rim)] + [[a, c, d]]
                continue
            kind = (i + 2 * j) % 3
            if kind == 0:
                faces.append([a, b, c, d])
            elif kind == 1:
                faces += [[a, b, c], [a, c, d]]
            else:
                faces += [[a, b, d], [b, c, d]]
    return np.array(verts, dtype=np.float64), faces


def tilted_plate():
    """A 4 x 2 plate with two bolt holes, tilted and lifted off the origin."""
    xs = [0.0, 0.05, 0.6, 0.65, 1.5, 2.4, 2.45, 3.0, 3.02, 4.0]
    ys = [0.0, 0.3, 0.35, 1.0, 1.65, 1.7, 2.0]
    verts, faces = grid_sheet(xs, ys, holes={(2, 2), (6, 3)}, fan_cell=(8, 2), fan_points=6)
    return verts @ rotation(0.4, -0.7, 0.3).T + (1.0, 2.0, 3.0), faces


def navmesh_floor():
    """A 10 x 6 floor with three square pillars, at floor height 0.5."""
    xs = [0.0, 1.0, 1.8, 2.2, 4.0, 4.1, 4.5, 6.0, 7.5, 7.55, 10.0]
    ys = [0.0, 0.4, 2.0, 2.6, 3.9, 4.0, 6.0]
    verts, faces = grid_sheet(xs, ys, holes={(2, 2), (5, 3), (8, 1)}, fan_cell=(9, 4),
                              fan_points=4)
    return verts + (0.0, 0.0, 0.5), faces
