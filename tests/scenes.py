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


# --------------------------------------------------------------------------
# scenes for the flat-region remesh tests (invented)
# --------------------------------------------------------------------------
PLATE_SHIFT = np.array([5.0, -3.0, 2.0])


def tilt(points):
    """The rigid motion plate_with_holes applies (rotation(), then PLATE_SHIFT)."""
    return np.asarray(points, float) @ rotation().T + PLATE_SHIFT


def axis_plane_regions(flat_vertices, faces):
    """Independent region grouping for scenes built from axis-aligned faces
    (before tilting): faces join when all their corners share the same
    coordinate on the same axis, their outward sides agree, and they share an
    edge used by exactly two faces.  Returns a list of face-index lists."""
    v = np.asarray(flat_vertices, float)
    polys = [list(f) for f in faces]

    def key(face):
        p = v[face]
        for axis in range(3):
            if np.all(p[:, axis] == p[0, axis]):
                q = np.delete(p, axis, axis=1)
                area2 = sum(q[i - 1, 0] * q[i, 1] - q[i, 0] * q[i - 1, 1] for i in range(len(q)))
                # the cyclic order (axis+1, axis+2) gives the sign of the normal
                if axis == 1:
                    area2 = -area2
                return (axis, float(p[0, axis]), area2 > 0)
        raise ValueError("face not axis-aligned")

    keys = [key(f) for f in polys]
    users = {}
    for fi, f in enumerate(polys):
        for i in range(len(f)):
            a, b = f[i], f[(i + 1) % len(f)]
            users.setdefault((min(a, b), max(a, b)), []).append(fi)
    parent = list(range(len(polys)))

    def find(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x
    for fs in users.values():
        if len(fs) == 2 and keys[fs[0]] == keys[fs[1]]:
            parent[find(fs[0])] = find(fs[1])
    groups = {}
    for fi in range(len(polys)):
        groups.setdefault(find(fi), []).append(fi)
    return sorted(groups.values())


def grid_panel(nx, ny, size=1.0):
    """A flat nx x ny panel of square quads in z = 0 (CCW seen from +z).
    Vertex (i, j) has index j * (nx + 1) + i."""
    verts = [(i * size, j * size, 0.0) for j in range(ny + 1) for i in range(nx + 1)]
    faces = []
    for j in range(ny):
        for i in range(nx):
            a = j * (nx + 1) + i
            faces.append([a, a + 1, a + nx + 2, a + nx + 1])
    return np.array(verts, float), faces


def hex_boss_panel():
    """A flat panel around a hexagonal boss: a hexagon face ringed by six quads
    (the outer ring turned 10 degrees), in z = 0."""
    inner = [(math.cos(math.radians(60 * k)), math.sin(math.radians(60 * k))) for k in range(6)]
    outer = [(2.5 * math.cos(math.radians(60 * k + 10)), 2.5 * math.sin(math.radians(60 * k + 10)))
             for k in range(6)]
    verts = [(x, y, 0.0) for x, y in inner + outer]
    faces = [list(range(6))]
    for k in range(6):
        k1 = (k + 1) % 6
        faces.append([k, 6 + k, 6 + k1, k1])
    return np.array(verts, float), faces


def l_bracket_panel():
    """A flat L-shaped bracket: an L-shaped hexagon face (listed from a corner
    that does not see the whole face) with a quad on each arm, in z = 0."""
    pts = [(2, 0), (2, 1), (1, 1), (1, 2), (0, 2), (0, 0),      # 0..5: the L
           (3, 0), (3, 1), (1, 3), (0, 3)]                     # 6..9: the arms' ends
    verts = [(float(x), float(y), 0.0) for x, y in pts]
    faces = [[0, 1, 2, 3, 4, 5], [0, 6, 7, 1], [4, 3, 8, 9]]
    return np.array(verts, float), faces


def overwrapped_fan(center=(0.0, 0.0), step_degrees=80.0, blades=5, radius=2.0):
    """A paper fan pressed flat after being folded past a full turn: `blades`
    triangles around one centre vertex, each spanning step_degrees, all in
    z = 0 and facing +z; the last blade lies over the first, so the outline
    of the fan crosses itself.  Rim radii alternate so no rim points coincide."""
    cx, cy = center
    verts = [(cx, cy, 0.0)]
    for k in range(blades + 1):
        r = radius * (1.0 if k % 2 == 0 else 0.8)
        a = math.radians(step_degrees * k)
        verts.append((cx + r * math.cos(a), cy + r * math.sin(a), 0.0))
    faces = [[0, 1 + k, 2 + k] for k in range(blades)]
    return np.array(verts, float), faces


def cylinder_band(facets=64, rows=3, radius=5.0, height=2.0):
    """An open tube: `facets` flat strips around the z axis, each strip cut
    into `rows` quads (outward normals).  Face index = facet * rows + row."""
    verts = []
    for k in range(facets):
        a = 2 * math.pi * k / facets
        for r in range(rows + 1):
            verts.append((radius * math.cos(a), radius * math.sin(a), height * r / rows))
    faces = []
    for k in range(facets):
        k1 = (k + 1) % facets
        for r in range(rows):
            a, b = k * (rows + 1) + r, k1 * (rows + 1) + r
            faces.append([a, b, b + 1, a + 1])
    return np.array(verts, float), faces


def merge_meshes(*meshes):
    """Put several (vertices, faces) meshes into one (indices shifted)."""
    verts, faces, off = [], [], 0
    for v, f in meshes:
        verts.append(np.asarray(v, float))
        faces += [[off + i for i in face] for face in f]
        off += len(v)
    return np.vstack(verts), faces
