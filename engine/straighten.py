"""Dropping needless border vertices on straight runs (navmesh outlines).

A border vertex may go when every face that uses it belongs to a region that
will be remeshed, exactly two border edges meet at it (a straight wall, not a
corner), it is on no break edge, and it lies within the tolerance of the line
that replaces the run.  Runs between vertices that must stay are simplified
with the Ramer-Douglas-Peucker algorithm (U. Ramer, "An iterative procedure
for the polygonal approximation of plane curves", Computer Graphics and Image
Processing 1(3), 1972; D. Douglas, T. Peucker, The Canadian Cartographer
10(2), 1973), which keeps every vertex farther than the tolerance from the
simplified line.
"""

import numpy as np


def straight_run_vertices(verts, polys, edges, region_of_face, regions, break_ids, tolerance,
                          usable_regions=None):
    """Original vertices to drop from region outlines."""
    if tolerance <= 0:
        return set()
    face_count = np.diff(edges.corner_starts)
    faces_of_edge = [edges.face_of_corner[edges.corners_of(e)] for e in range(len(edges))]
    usable = set(range(len(regions))) if usable_regions is None else set(usable_regions)
    border_edges = []
    for e in range(len(edges)):
        regs = region_of_face[faces_of_edge[e]]
        if face_count[e] == 1 or (face_count[e] == 2 and regs[0] != regs[1]) or e in break_ids:
            border_edges.append(e)
    # vertices whose every face is in a usable region
    ok_vertex = np.ones(len(verts), dtype=bool)
    face_ok = np.array([r >= 0 and int(r) in usable for r in region_of_face], dtype=bool)
    bad = polys.corners[~np.repeat(face_ok, polys.sizes)]
    ok_vertex[bad] = False
    for e in break_ids:
        ok_vertex[edges.edges[e]] = False
    neighbours = {}
    for e in border_edges:
        a, b = (int(v) for v in edges.edges[e])
        if face_count[e] > 2:
            ok_vertex[[a, b]] = False
        neighbours.setdefault(a, []).append(b)
        neighbours.setdefault(b, []).append(a)
    candidate = {v for v, nb in neighbours.items() if len(nb) == 2 and ok_vertex[v]}
    dropped = set()
    seen = set()
    for start in list(neighbours):
        if start in candidate or start in seen:
            continue
        for first in neighbours[start]:
            if first not in candidate or first in seen:
                continue
            run = [start, first]
            prev, cur = start, first
            while cur in candidate:
                seen.add(cur)
                a, b = neighbours[cur]
                nxt = b if a == prev else a
                run.append(nxt)
                prev, cur = cur, nxt
            keep = _douglas_peucker(verts[run], tolerance)
            dropped.update(v for v, k in zip(run, keep) if not k)
    # closed loops made only of candidates (a room outline, a pillar): anchor
    # them at their sharpest corner and at the vertex farthest from it
    for start in sorted(candidate - seen):
        if start in seen:
            continue
        loop = [start]
        prev, cur = start, neighbours[start][0]
        while cur != start:
            loop.append(cur)
            a, b = neighbours[cur]
            prev, cur = cur, (b if a == prev else a)
        seen.update(loop)
        pts = verts[loop]
        turn = np.linalg.norm(np.roll(pts, 1, axis=0) + np.roll(pts, -1, axis=0) - 2 * pts, axis=1)
        i = int(np.argmax(turn))
        loop = loop[i:] + loop[:i]
        pts = verts[loop]
        j = int(np.argmax(np.linalg.norm(pts - pts[0], axis=1)))
        first = loop[:j + 1]
        second = loop[j:] + loop[:1]
        keep1 = _douglas_peucker(verts[first], tolerance)
        keep2 = _douglas_peucker(verts[second], tolerance)
        if keep1.sum() + keep2.sum() - 2 < 3:
            continue
        dropped.update(v for v, k in zip(first, keep1) if not k)
        dropped.update(v for v, k in zip(second, keep2) if not k)
    return dropped


def _douglas_peucker(points, tolerance):
    """Boolean keep mask for a polyline; both ends are kept."""
    n = len(points)
    keep = np.zeros(n, dtype=bool)
    keep[0] = keep[-1] = True
    stack = [(0, n - 1)]
    while stack:
        i, j = stack.pop()
        if j <= i + 1:
            continue
        a, b = points[i], points[j]
        d = b - a
        length = np.linalg.norm(d)
        seg = points[i + 1:j] - a
        if length == 0:
            dist = np.linalg.norm(seg, axis=1)
        else:
            dist = np.linalg.norm(np.cross(seg, d / length), axis=1)
        k = int(np.argmax(dist))
        if dist[k] > tolerance:
            keep[i + 1 + k] = True
            stack += [(i, i + 1 + k), (i + 1 + k, j)]
    return keep
