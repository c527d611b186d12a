"""Triangle measures on bulk mesh arrays (numpy only, no host import).

The arrays are what ``foreach_get`` copies out of a host mesh: vertex positions,
each face's first corner and corner count, and each corner's vertex index.
"""

import numpy as np

from .engine_link import triangle_angles


def face_triangles(loop_starts, loop_totals, corner_verts):
    """Indices of the 3-sided faces and their (T, 3) vertex indices."""
    loop_starts = np.asarray(loop_starts, dtype=np.int64)
    loop_totals = np.asarray(loop_totals, dtype=np.int64)
    faces = np.flatnonzero(loop_totals == 3)
    corners = loop_starts[faces, None] + np.arange(3)
    return faces, np.asarray(corner_verts, dtype=np.int64)[corners]


def plane_coordinates(positions, triangles):
    """Each triangle laid into 2D coordinates of its own plane, lengths and angles kept:
    corner 0 at the origin, corner 1 on the +x axis, corner 2 at y >= 0.
    Returns ((3T, 2) points, (T, 3) triangles over them)."""
    p = np.asarray(positions, dtype=np.float64)[np.asarray(triangles, dtype=np.int64)]
    e1 = p[:, 1] - p[:, 0]
    e2 = p[:, 2] - p[:, 0]
    length = np.linalg.norm(e1, axis=1)
    axis = e1 / np.where(length > 0.0, length, 1.0)[:, None]
    flat = np.zeros((len(p), 3, 2))
    flat[:, 1, 0] = length
    flat[:, 2, 0] = (e2 * axis).sum(axis=1)
    flat[:, 2, 1] = np.linalg.norm(np.cross(axis, e2), axis=1)
    return flat.reshape(-1, 2), np.arange(3 * len(p)).reshape(-1, 3)


def smallest_angles(positions, triangles):
    """(T,) smallest corner angle of each 3D triangle in degrees (0 for degenerate ones),
    from :func:`engine.quality.triangle_angles` in each triangle's own plane."""
    if len(triangles) == 0:
        return np.zeros(0)
    points, tris = plane_coordinates(positions, triangles)
    return triangle_angles(points, tris).min(axis=1)


def thin_triangle_mask(positions, loop_starts, loop_totals, corner_verts, min_angle,
                       hidden=None):
    """Boolean mask over all faces: True for the visible triangles whose smallest angle is
    below ``min_angle`` degrees.  Faces with more than three corners are never thin."""
    mask = np.zeros(len(loop_totals), dtype=bool)
    faces, tris = face_triangles(loop_starts, loop_totals, corner_verts)
    mask[faces] = smallest_angles(positions, tris) < float(min_angle)
    if hidden is not None:
        mask &= ~np.asarray(hidden, dtype=bool)
    return mask


# The overlay's colour ramp: (smallest angle in degrees, RGB).  Below the first stop the
# first colour, above the last the last; linear in between.
RAMP = (
    (0.0, (0.80, 0.08, 0.40)),    # crimson: needles
    (10.0, (0.93, 0.42, 0.12)),   # burnt orange
    (20.0, (0.95, 0.80, 0.22)),   # amber
    (30.0, (0.47, 0.78, 0.36)),   # leaf green: the usual target
    (45.0, (0.22, 0.62, 0.72)),   # sea blue
    (60.0, (0.40, 0.42, 0.86)),   # periwinkle: equilateral
)


def angle_colours(angles, alpha=0.45):
    """(T, 4) RGBA of the ramp for each smallest angle (degrees)."""
    stops = np.array([s for s, _ in RAMP])
    rgb = np.array([c for _, c in RAMP])
    a = np.asarray(angles, dtype=np.float64)
    out = np.empty((len(a), 4))
    for k in range(3):
        out[:, k] = np.interp(a, stops, rgb[:, k])
    out[:, 3] = alpha
    return out


def overlay_figures(face_angles, loop_totals, threshold):
    """The readout: faces, triangles (a k-gon counts k - 2), smallest corner angle and
    the number of triangles (3-sided faces) whose smallest angle is under `threshold`."""
    face_angles = np.asarray(face_angles, dtype=np.float64)
    totals = np.asarray(loop_totals, dtype=np.int64)
    tri = totals == 3
    return {
        "faces": len(totals),
        "triangles": int((totals - 2).sum()),
        "smallest": float(face_angles.min()) if len(face_angles) else float("nan"),
        "under": int((face_angles[tri] < threshold).sum()),
        "threshold": float(threshold),
    }
