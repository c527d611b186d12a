"""Invented test scenes: polygon meshes built in code.

plate_with_holes: a machined plate (a closed solid) with square bolt holes,
its top and bottom faces triangulated as the sliver-rich triangulations CAD
exports leave, then tilted in space.
"""

import math

import numpy as np

import engine


def _wall(a, b, pieces):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return [a + (b - a) * k / pieces for k in range(pieces)]


def _loop(corners, pieces):
    out = []
    for i, a in enumerate(corners):
        out += _wall(a, corners[(i + 1) % len(corners)], pieces)
    return np.array(out)


def rotation(ax=0.3, ay=-0.5, az=0.8):
    cx, sx, cy, sy, cz, sz = (math.cos(ax), math.sin(ax), math.cos(ay), math.sin(ay),
                              math.cos(az), math.sin(az))
    rx = np.array([[1, 0, 0], [0, cx, -sx], [0, sx, cx]])
    ry = np.array([[cy, 0, sy], [0, 1, 0], [-sy, 0, cy]])
    rz = np.array([[cz, -sz, 0], [sz, cz, 0], [0, 0, 1]])
    return rz @ ry @ rx


def plate_with_holes(width=12.0, depth=8.0, thickness=1.0, holes=((3, 4), (9, 4)),
                     hole_size=1.0, pieces=6, tilt=True):
    """(vertices (N, 3), faces list, expected volume).  Faces are CCW seen
    from outside.  The plate's top/bottom come from a CDT of the densely
    sampled outline (slivers along the long walls)."""
    outline = _loop([(0, 0), (width, 0), (width, depth), (0, depth)], pieces)
    loops = [outline]
    for hx, hy in holes:
        h = hole_size / 2
        loops.append(_loop([(hx - h, hy - h), (hx - h, hy + h), (hx + h, hy + h),
                            (hx + h, hy - h)], 2))
    pts = np.vstack(loops)
    segs, off = [], 0
    for lp in loops:
        n = len(lp)
        segs += [(off + i, off + (i + 1) % n) for i in range(n)]
        off += n
    tri = engine.triangulate(pts, np.array(segs))
    n = len(pts)
    assert len(tri.points) == n
    bottom = np.column_stack((pts, np.zeros(n)))
    top = np.column_stack((pts, np.full(n, thickness)))
    verts = np.vstack((bottom, top))
    faces = []
    for a, b, c in tri.triangles.tolist():
        faces.append([n + a, n + b, n + c])        # top, normal +z
        faces.append([a, c, b])                    # bottom, normal -z
    for a, b in segs:                              # walls: outward for CCW outline
        faces.append([a, b, n + b, n + a])
    volume = tri.area() * thickness
    if tilt:
        verts = verts @ rotation().T + np.array([5.0, -3.0, 2.0])
    return verts, faces, volume


def navmesh_floor(width=20.0, depth=14.0, pillars=((5, 5), (12, 9), (15, 4)), pieces=8):
    """An open floor (z = 0) with square pillar holes, triangulated into slivers."""
    outline = _loop([(0, 0), (width, 0), (width, depth), (0, depth)], pieces)
    loops = [outline]
    for px, py in pillars:
        loops.append(_loop([(px - 0.5, py - 0.5), (px - 0.5, py + 0.5), (px + 0.5, py + 0.5),
                            (px + 0.5, py - 0.5)], 1))
    pts = np.vstack(loops)
    segs, off = [], 0
    for lp in loops:
        n = len(lp)
        segs += [(off + i, off + (i + 1) % n) for i in range(n)]
        off += n
    tri = engine.triangulate(pts, np.array(segs))
    verts = np.column_stack((tri.points, np.zeros(len(tri.points))))
    return verts, tri.triangles.tolist(), tri.area()


def closed_mesh_volume(vertices, polys):
    """Signed volume by the divergence theorem (fan-triangulated faces)."""
    v = np.asarray(vertices, float)
    total = 0.0
    for f in range(len(polys)):
        face = polys.face(f)
        a = v[face[0]]
        for k in range(1, len(face) - 1):
            total += np.dot(a, np.cross(v[face[k]], v[face[k + 1]])) / 6.0
    return total


def edge_face_counts(polys):
    """{(lo, hi): number of faces using the edge}."""
    counts = {}
    for f in range(len(polys)):
        face = polys.face(f).tolist()
        for i in range(len(face)):
            a, b = face[i], face[(i + 1) % len(face)]
            key = (min(a, b), max(a, b))
            counts[key] = counts.get(key, 0) + 1
    return counts
