"""`python -m engine.demo`: the engine on invented data, with before/after figures.

Scenario: a warehouse floor panel (a 30 x 18 outline with a loading-bay notch)
with four square pillars, modelled the way many tools leave it: every face a
fan of sliver triangles from one corner.  The demo shows

1. the fan's smallest angle, then Lawson flips (`engine.legalize`) on the same
   points and edges - no vertex added;
2. a constrained Delaunay triangulation (`engine.triangulate`) of the outline
   and pillar loops with the even-odd fill, checked exactly;
   The hatch of step 1 is an ellipse exported as a fan from one vertex.
3. refinement to a 30 degree smallest angle (`engine.refine`);
4. the main job on a tilted machined plate, a closed solid with two bolt
   holes: its flat regions found and remeshed (`engine.remesh_flat_regions`),
   with the solid still closed and its volume unchanged.
"""

import sys
import time

import numpy as np

from . import legalize, quality, refine, remesh_flat_regions, triangulate
from .validate import check_triangulation


def floor_panel():
    """Loops (outline first, counter-clockwise; pillars clockwise), densely
    sampled along the walls the way a CAD export would."""
    def wall(a, b, pieces):
        a, b = np.asarray(a, float), np.asarray(b, float)
        return [a + (b - a) * k / pieces for k in range(pieces)]

    corners = [(0, 0), (30, 0), (30, 18), (18, 18), (18, 14), (12, 14), (12, 18), (0, 18)]
    outline = []
    for i, a in enumerate(corners):
        b = corners[(i + 1) % len(corners)]
        outline += wall(a, b, max(1, int(np.hypot(b[0] - a[0], b[1] - a[1]) / 1.5)))
    pillars = []
    for cx, cy in [(6, 5), (14, 5), (22, 5), (24, 12)]:
        h = 0.6
        sq = [(cx - h, cy - h), (cx - h, cy + h), (cx + h, cy + h), (cx + h, cy - h)]
        loop = []
        for i, a in enumerate(sq):
            loop += wall(a, sq[(i + 1) % 4], 2)
        pillars.append(loop)
    return [np.array(outline)] + [np.array(p) for p in pillars]


def loops_to_arrays(loops):
    points, segments, offset = [], [], 0
    for loop in loops:
        n = len(loop)
        points.append(loop)
        i = np.arange(n)
        segments.append(np.column_stack((offset + i, offset + (i + 1) % n)))
        offset += n
    return np.vstack(points), np.vstack(segments)


def fan_of_convex_hull(points):
    """Sliver fan of a convex polygon (points in order) from its first point."""
    n = len(points)
    return np.array([(0, i, i + 1) for i in range(1, n - 1)])


def machined_plate(width=12.0, depth=8.0, thickness=1.0, holes=((3, 4), (9, 4))):
    """A plate with two square bolt holes as a closed polygon mesh, top and
    bottom exported as sliver-rich triangles, tilted in space.
    Returns (vertices, faces, volume)."""
    def loop(corners, pieces):
        return np.array([np.add(a, np.subtract(corners[(i + 1) % len(corners)], a) * k / pieces)
                         for i, a in enumerate(corners) for k in range(pieces)])

    loops = [loop([(0, 0), (width, 0), (width, depth), (0, depth)], 6)]
    loops += [loop([(x - .5, y - .5), (x - .5, y + .5), (x + .5, y + .5), (x + .5, y - .5)], 2)
              for x, y in holes]
    pts, segs = loops_to_arrays(loops)
    tri = triangulate(pts, segs)
    n = len(pts)
    verts = np.vstack((np.column_stack((pts, np.zeros(n))),
                       np.column_stack((pts, np.full(n, thickness)))))
    faces = [[n + a, n + b, n + c] for a, b, c in tri.triangles.tolist()]
    faces += [[a, c, b] for a, b, c in tri.triangles.tolist()]
    faces += [[a, b, n + b, n + a] for a, b in segs.tolist()]
    angle = 0.6
    turn = np.array([[1, 0, 0], [0, np.cos(angle), -np.sin(angle)],
                     [0, np.sin(angle), np.cos(angle)]])
    return verts @ turn.T + (4.0, -2.0, 1.5), faces, tri.area() * thickness


def _closed(polys):
    counts = {}
    for f in range(len(polys)):
        face = polys.face(f).tolist()
        for a, b in zip(face, face[1:] + face[:1]):
            counts[(min(a, b), max(a, b))] = counts.get((min(a, b), max(a, b)), 0) + 1
    return set(counts.values()) == {2}


def _volume(verts, polys):
    total = 0.0
    for f in range(len(polys)):
        face = polys.face(f)
        for k in range(1, len(face) - 1):
            total += np.dot(verts[face[0]], np.cross(verts[face[k]], verts[face[k + 1]])) / 6
    return total


def describe(name, points, triangles):
    q = quality(points, triangles)
    print(f"  {name:<34} {len(triangles):6d} triangles   smallest angle {q.min_angle:6.2f} deg"
          f"   under 20 deg: {q.count_below(20.0)}")
    return q


def main(argv=None):
    print("Flat Region Remesh engine demo (invented floor panel with four pillars)\n")
    loops = floor_panel()
    points, segments = loops_to_arrays(loops)

    print("1. A sliver fan improved by Lawson flips (no vertex added)")
    # an elliptic inspection hatch in the panel, exported as a fan from one vertex
    angle = np.linspace(0.0, 2.0 * np.pi, 40, endpoint=False)
    bay = np.column_stack((24.0 + 4.0 * np.cos(angle), 9.0 + 2.5 * np.sin(angle)))
    fan = fan_of_convex_hull(bay)
    before = describe("fan from one vertex", bay, fan)
    improved, flips = legalize(bay, fan)
    after = describe(f"after {flips} Lawson flips", bay, improved)

    print("\n2. Constrained Delaunay triangulation of the whole panel")
    start = time.perf_counter()
    tri = triangulate(points, segments)
    elapsed = time.perf_counter() - start
    describe("outline + 4 pillar holes (even-odd)", tri.points, tri.triangles)
    problems = check_triangulation(tri, segments, points_used=False)
    print(f"  exact check: {'valid' if not problems else problems}   area {tri.area():.3f}"
          f" (expected {30 * 18 - 6 * 4 - 4 * 1.2 ** 2:.3f})   {elapsed * 1000:.1f} ms")

    print("\n3. Refinement to a 30 degree smallest angle")
    start = time.perf_counter()
    better = refine(tri, min_angle=30.0)
    elapsed = time.perf_counter() - start
    describe(f"refined (+{len(better.points) - len(tri.points)} points)",
             better.points, better.triangles)
    print(f"  {elapsed * 1000:.1f} ms")
    print("\n4. The main job: flat regions of a tilted machined plate (a closed solid)")
    verts, faces, volume = machined_plate()
    start = time.perf_counter()
    edit = remesh_flat_regions(verts, faces, min_angle=30.0, straighten_tolerance=1e-9)
    elapsed = time.perf_counter() - start
    new_verts, new_faces, _ = edit.apply(verts, faces)
    changed = [r for r in edit.regions if r.status == "changed"]
    skipped = [r for r in edit.regions if r.status != "changed"]
    closed = _closed(new_faces)
    vol_after = _volume(new_verts, new_faces)
    worst_before = min(r.min_angle_before for r in edit.regions)
    worst_after = min(r.min_angle_after for r in changed) if changed else float("nan")
    print(f"  {len(edit.regions)} flat regions: {len(changed)} changed, {len(skipped)} skipped")
    print(f"  faces {len(faces)} -> {len(new_faces)}   smallest angle {worst_before:.2f} -> "
          f"{worst_after:.2f} deg   {elapsed * 1000:.0f} ms")
    print(f"  closed solid: {'yes' if closed else 'NO'}   volume {volume:.6f} -> {vol_after:.6f}")
    ok = not problems and after.min_angle >= before.min_angle and closed \
        and abs(vol_after - volume) <= 1e-9 * volume
    print("\nDone." if ok else "\nSomething is wrong: see above.")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
