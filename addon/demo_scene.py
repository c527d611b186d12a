"""The invented demo scene of ``python -m addon.batch --demo`` (numpy + engine, no host import).

Two pieces, both made here in code and both the way exporters often leave them:

* a machined plate, 12 x 8 x 1 units, with four round bolt holes: a closed solid whose
  flat faces (top, bottom and the long side walls) are fans of sliver triangles from a
  few hole corners to densely sampled outline edges, stored as a triangle soup (every
  triangle with its own three vertices, as an STL file holds it);
* a navmesh floor, 20 x 14 units with a loading-bay notch and three square pillars,
  an open surface whose outline is sampled every half unit and triangulated the same
  sliver-rich way, stored with shared vertices.

Each builder returns (vertices (N, 3) float64, faces as lists of vertex indices).
"""

import numpy as np

from .engine_link import engine

PLATE_SIZE = (12.0, 8.0)
PLATE_THICKNESS = 1.0
BOLT_HOLES = ((2.0, 2.0), (10.0, 2.0), (2.0, 6.0), (10.0, 6.0))
BOLT_RADIUS = 0.6
BOLT_SIDES = 12
PLATE_OFFSET = (0.0, 0.0, 0.0)

FLOOR_CORNERS = ((0, 0), (20, 0), (20, 14), (13, 14), (13, 11), (7, 11), (7, 14), (0, 14))
FLOOR_PILLARS = ((5.0, 5.0), (10.0, 5.0), (15.0, 5.0))
FLOOR_PILLAR_HALF = 0.5
FLOOR_OFFSET = (16.0, -3.0, 0.0)


def _sampled_loop(corners, step):
    """Points along a closed polyline, every `step` units or closer, corners included."""
    out = []
    for i, a in enumerate(corners):
        a = np.asarray(a, dtype=np.float64)
        b = np.asarray(corners[(i + 1) % len(corners)], dtype=np.float64)
        pieces = max(1, int(np.ceil(np.linalg.norm(b - a) / step - 1e-9)))
        out += [a + (b - a) * k / pieces for k in range(pieces)]
    return np.array(out)


def _loops_to_segments(loops):
    points, segments, offset = [], [], 0
    for loop in loops:
        n = len(loop)
        idx = np.arange(n)
        points.append(loop)
        segments.append(np.column_stack((offset + idx, offset + (idx + 1) % n)))
        offset += n
    return np.vstack(points), np.vstack(segments)


def _sheet(loops):
    """Triangles (counter-clockwise) filling the loops with the even-odd rule, and no
    point added: with densely sampled straight walls and few hole corners this gives
    the fans of slivers an exporter leaves."""
    points, segments = _loops_to_segments(loops)
    tri = engine.triangulate(points, segments, fill="even-odd")
    return tri.points, tri.triangles, segments


def plate_sheet():
    """The plate's outline (sampled every 0.25 units along its walls) and bolt holes."""
    w, d = PLATE_SIZE
    outline = _sampled_loop([(0, 0), (w, 0), (w, d), (0, d)], 0.25)
    angles = np.linspace(0.0, 2.0 * np.pi, BOLT_SIDES, endpoint=False)
    holes = [np.column_stack((x + BOLT_RADIUS * np.cos(-angles), y + BOLT_RADIUS * np.sin(-angles)))
             for x, y in BOLT_HOLES]
    return _sheet([outline, *holes])


def machined_plate():
    """The closed plate as a triangle soup: (vertices, faces, exact volume).

    Top at z = thickness (counter-clockwise seen from above), bottom a reversed copy,
    and two triangles on every outline edge for the walls (outward)."""
    points, triangles, segments = plate_sheet()
    n = len(points)
    verts = np.vstack((np.column_stack((points, np.zeros(n))),
                       np.column_stack((points, np.full(n, PLATE_THICKNESS)))))
    tris = [[n + a, n + b, n + c] for a, b, c in triangles.tolist()]
    tris += [[a, c, b] for a, b, c in triangles.tolist()]
    for a, b in segments.tolist():
        tris += [[a, b, n + b], [a, n + b, n + a]]
    soup = verts[np.array(tris).reshape(-1)] + PLATE_OFFSET
    faces = np.arange(len(soup)).reshape(-1, 3).tolist()
    w, d = PLATE_SIZE
    area = w * d - len(BOLT_HOLES) * 0.5 * BOLT_SIDES * BOLT_RADIUS ** 2 * np.sin(
        2.0 * np.pi / BOLT_SIDES)
    return soup, faces, float(area * PLATE_THICKNESS)


def navmesh_floor():
    """The open floor with pillar holes: (vertices, faces)."""
    outline = _sampled_loop(FLOOR_CORNERS, 0.5)
    h = FLOOR_PILLAR_HALF
    pillars = [_sampled_loop([(x - h, y - h), (x - h, y + h), (x + h, y + h), (x + h, y - h)],
                             0.5) for x, y in FLOOR_PILLARS]
    points, triangles, _ = _sheet([outline, *pillars])
    verts = np.column_stack((points, np.zeros(len(points)))) + FLOOR_OFFSET
    return verts, triangles.tolist()


SCENE = (("Machined Plate", machined_plate), ("Navmesh Floor", navmesh_floor))


def scene_meshes():
    """[(object name, vertices, faces)] of the whole demo scene."""
    out = []
    for name, build in SCENE:
        verts, faces = build()[:2]
        out.append((name, verts, faces))
    return out
