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


def boundary_edges(faces):
    """Directed edges a -> b used by exactly one face, in that face's direction."""
    count = {}
    for face in faces:
        for a, b in zip(face, face[1:] + face[:1]):
            key = (min(a, b), max(a, b))
            count[key] = count.get(key, 0) + 1
    return [(a, b) for face in faces for a, b in zip(face, face[1:] + face[:1])
            if count[(min(a, b), max(a, b))] == 1]


def solid_from_sheet(verts, faces, thickness):
    """Extrude a flat sheet (z = 0, faces counter-clockwise from +z) into a closed
    solid: the sheet as the top at z = thickness, a reversed copy as the bottom, and
    one quad wall on every outline edge (outer outline and hole outlines alike)."""
    n = len(verts)
    top = verts + (0.0, 0.0, thickness)
    solid = np.vstack((verts, top))
    out = [[v + n for v in face] for face in faces]                 # top
    out += [list(reversed(face)) for face in faces]                 # bottom
    out += [[b + n, a + n, a, b] for a, b in boundary_edges(faces)]  # walls, outward
    return solid, out


PLATE_THICKNESS = 0.25


def plate_sheet():
    """The flat outline of the plate (before tilting): 4 x 2 with two bolt holes."""
    xs = [0.0, 0.05, 0.6, 0.65, 1.5, 2.4, 2.45, 3.0, 3.02, 4.0]
    ys = [0.0, 0.3, 0.35, 1.0, 1.65, 1.7, 2.0]
    holes = {(2, 2), (6, 3)}
    verts, faces = grid_sheet(xs, ys, holes=holes, fan_cell=(8, 2), fan_points=6)
    area = (xs[-1] - xs[0]) * (ys[-1] - ys[0]) - sum(
        (xs[i + 1] - xs[i]) * (ys[j + 1] - ys[j]) for i, j in holes)
    return verts, faces, area


PLATE_ROTATION = rotation(0.4, -0.7, 0.3)
PLATE_OFFSET = np.array([1.0, 2.0, 3.0])


def tilted_solid_plate():
    """A closed solid plate (thickness PLATE_THICKNESS) with two through holes and a
    sliver fan on its top, bottom and side, tilted and lifted off the origin.
    Returns (vertices, faces, exact volume = outline area x thickness)."""
    verts, faces, area = plate_sheet()
    solid, out = solid_from_sheet(verts, faces, PLATE_THICKNESS)
    return solid @ PLATE_ROTATION.T + PLATE_OFFSET, out, area * PLATE_THICKNESS


# ---------------------------------------------------------------- the attribute panel
PANEL_XS = [0.0, 0.5, 0.52, 1.2, 2.0, 2.05, 2.8, 3.5]
PANEL_YS = [0.0, 0.4, 0.45, 1.1, 1.8, 2.2]
PANEL_SEAM_X = 2.0                 # a grid line marked as UV seam: two UV islands
PANEL_LIFTED = (2, 3)              # grid vertex lifted off the plane (a warped spot)
PANEL_LIFT = 0.04
PANEL_ROTATION = rotation(0.3, 0.5, -0.2)
PANEL_OFFSET = np.array([0.5, -1.0, 2.0])


def panel_sheet():
    verts, faces = grid_sheet(PANEL_XS, PANEL_YS, holes=set(), fan_cell=(6, 1),
                              fan_points=5)
    i, j = PANEL_LIFTED
    verts[j * len(PANEL_XS) + i, 2] = PANEL_LIFT
    return verts, faces


def open_panel():
    """An open, tilted panel (mesh-local positions, faces)."""
    verts, faces = panel_sheet()
    return verts @ PANEL_ROTATION.T + PANEL_OFFSET, faces


def panel_coordinates(positions):
    """(u, w, h): a position in the panel's own frame (the inverse of open_panel)."""
    return (np.asarray(positions, dtype=np.float64) - PANEL_OFFSET) @ PANEL_ROTATION


# The fields below are affine in (u, w, h), hence affine in position.
def uv_island(u, w, h, island):
    if island == 0:
        return np.stack((0.2 + 0.15 * u - 0.05 * w + 0.3 * h, 0.1 + 0.02 * u + 0.3 * w), -1)
    return np.stack((0.9 - 0.1 * u + 0.04 * w, 0.3 + 0.25 * w + 0.03 * u + 0.2 * h), -1)


def uv_detail(u, w, h):
    return np.stack((0.5 * u + 0.1 * h, 0.5 * w - 0.05 * u), -1)


def tint(u, w, h):                      # point colour, linear floats
    one = np.ones_like(u)
    return np.stack((0.2 + 0.1 * u, 0.3 + 0.2 * w, 0.5 + 0.05 * u + 2.0 * h, one), -1)


def paint(u, w, h):                     # corner colour, sRGB bytes / 255
    one = np.ones_like(u)
    return np.stack((0.1 + 0.2 * u, 0.8 - 0.3 * w, 0.5 + 0.02 * u, one), -1)


def group_weight(u, w, h):
    return 0.1 + 0.2 * u + 0.5 * h


def group_falloff(u, w, h):
    return 0.9 - 0.3 * w + 0.01 * u


def height_field(u, w, h):              # generic float attribute on points
    return 2.0 * u - 3.0 * w + 5.0 * h + 1.0


def lift_offset(u, w, h):               # shape key "Lift": along the panel normal
    return np.stack((0 * u, 0 * u, 0.1 + 0.05 * u - 0.02 * w), -1) @ PANEL_ROTATION.T


def shear_offset(u, w, h):              # shape key "Shear": sideways, grows with w
    return np.stack((0.2 * w, 0 * u, 0 * u), -1) @ PANEL_ROTATION.T
