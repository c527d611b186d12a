"""Exact validity checks for a Triangulation (used by tests, fuzzing and callers
who want proof rather than trust).

check_triangulation(tri, segments=None, points_used=False) returns a list of
problems (empty when valid):

* every triangle strictly counter-clockwise (exact orientation);
* neighbours consistent: across edge k of t lies a triangle holding the same
  edge reversed, and -1 only where no kept triangle does;
* every edge that is not a constraint and has triangles on both sides is
  locally Delaunay (exact incircle <= 0);
* every input segment (after duplicate merging) that touches the kept region
  is covered by a chain of output segments whose vertices lie on it exactly
  or within 1e-9 of its length from it (crossings are rounded to doubles and
  may land on, or be routed through, a vertex that close), and, when the
  chain runs end to end, through every used input point exactly on it;
* with points_used=True, every distinct input point is a triangle vertex.
"""

import numpy as np

from .predicates import incircle_many, orient2d_many


def _edge_table(triangles):
    t_count = len(triangles)
    u = triangles[:, [1, 2, 0]].ravel()
    v = triangles[:, [2, 0, 1]].ravel()
    return u, v, np.arange(3 * t_count)


def check_triangulation(tri, segments=None, points_used=False):
    problems = []
    pts = tri.points
    tris = np.asarray(tri.triangles, dtype=np.int64)
    if len(tris) == 0:
        return problems
    o = orient2d_many(pts[tris[:, 0]], pts[tris[:, 1]], pts[tris[:, 2]])
    bad = np.flatnonzero(o <= 0)
    if len(bad):
        problems.append(f"{len(bad)} triangles not strictly counter-clockwise (first {bad[0]})")
    u, v, corner = _edge_table(tris)
    nb = np.asarray(tri.neighbors, dtype=np.int64).ravel()
    # directed edge lookup
    key = {}
    for c, a, b in zip(corner.tolist(), u.tolist(), v.tolist()):
        if (a, b) in key:
            problems.append(f"directed edge {a}->{b} appears twice (overlapping triangles)")
        key[(a, b)] = c
    opposite = np.array([key.get((b, a), -1) for a, b in zip(u.tolist(), v.tolist())],
                        dtype=np.int64)
    expect = np.where(opposite >= 0, opposite // 3, -1)
    wrong = np.flatnonzero(expect != nb)
    if len(wrong):
        problems.append(f"{len(wrong)} neighbor entries inconsistent (first corner {wrong[0]})")
    constrained = set(map(tuple, np.sort(np.asarray(tri.segments, dtype=np.int64), axis=1).tolist()))
    inner = np.flatnonzero(opposite >= 0)
    if len(inner):
        lo = np.minimum(u[inner], v[inner])
        hi = np.maximum(u[inner], v[inner])
        free = np.array([(a, b) not in constrained for a, b in zip(lo.tolist(), hi.tolist())],
                        dtype=bool)
        cs = inner[free]
        if len(cs):
            t = cs // 3
            apex = tris.ravel()[opposite[cs]]
            d = incircle_many(pts[tris[t, 0]], pts[tris[t, 1]], pts[tris[t, 2]], pts[apex])
            nd = np.flatnonzero(d > 0)
            if len(nd):
                problems.append(f"{len(nd)} unconstrained edges not locally Delaunay")
    if segments is not None and len(segments):
        problems.extend(_check_coverage(tri, np.asarray(segments, dtype=np.int64)))
    if points_used:
        distinct = np.flatnonzero(tri.merged_into == np.arange(len(tri.merged_into)))
        used = np.zeros(len(pts), dtype=bool)
        used[tris.ravel()] = True
        missing = distinct[~used[distinct]]
        if len(missing):
            problems.append(f"{len(missing)} distinct input points unused (first {missing[0]})")
    return problems


def _check_coverage(tri, segments):
    from .predicates import orient2d
    problems = []
    pts = tri.points
    n_input = len(tri.merged_into)
    seg_set = set(map(tuple, np.sort(np.asarray(tri.segments), axis=1).tolist()))
    seg_vertices = np.unique(np.asarray(tri.segments).ravel())
    adjacency = {}
    for p, q in np.asarray(tri.segments).tolist():
        adjacency.setdefault(p, []).append(q)
        adjacency.setdefault(q, []).append(p)
    used = np.zeros(len(pts), dtype=bool)
    used[np.asarray(tri.triangles).ravel()] = True
    inputs = np.flatnonzero((tri.merged_into == np.arange(n_input)) & used[:n_input])
    for i, (a, b) in enumerate(tri.merged_into[segments].tolist()):
        if a == b:
            continue
        if (min(a, b), max(a, b)) in seg_set:
            continue
        ax, ay = pts[a]
        bx, by = pts[b]
        length2 = (bx - ax) ** 2 + (by - ay) ** 2
        chain = []
        for w in seg_vertices.tolist():
            wx, wy = pts[w]
            t = ((wx - ax) * (bx - ax) + (wy - ay) * (by - ay)) / length2
            if not (-1e-12 <= t <= 1 + 1e-12):
                continue
            # exactly on it, or (a crossing rounded onto a vertex) within
            # 1e-9 of its length from it
            dist = abs((bx - ax) * (wy - ay) - (by - ay) * (wx - ax)) / length2
            on = dist <= 1e-9 or (w < n_input and orient2d(ax, ay, bx, by, wx, wy) == 0)
            if on:
                chain.append((t, w))
        near = {w for _, w in chain} | {a, b}
        # a chain of output segments through vertices on (or, for crossing
        # points, within rounding of) the input segment joins a to b
        seen = {a}
        stack = [a]
        while stack:
            p = stack.pop()
            for q in adjacency.get(p, ()):
                if q in near and q not in seen:
                    seen.add(q)
                    stack.append(q)
        if b in seen:
            # a point lying exactly on a segment splits it: the chain passes
            # through every used input point on it
            missing = [w for w in _input_points_on(pts, a, b, inputs) if w not in seen]
            if missing:
                problems.append(f"input point {missing[0]} lies on input segment {i} "
                                f"({a}-{b}) but does not split it")
            continue
        # otherwise every gap of the chain must lie outside the kept region
        # (part of a segment can run outside it, e.g. along a hole that
        # touches the outline)
        order = [w for _, w in sorted(chain + [(0.0, a), (1.0, b)])]
        for p, q in zip(order, order[1:]):
            if p == q or (min(p, q), max(p, q)) in seg_set:
                continue
            mid = 0.5 * (pts[p] + pts[q])
            if _inside_any(pts, np.asarray(tri.triangles), mid):
                problems.append(f"input segment {i} ({a}-{b}) is not covered by output "
                                f"segments between points {p} and {q}")
                break
    return problems


def _input_points_on(pts, a, b, candidates):
    """The points of `candidates` lying exactly on segment a-b, ends excluded."""
    lo = np.minimum(pts[a], pts[b])
    hi = np.maximum(pts[a], pts[b])
    c = candidates[np.all((pts[candidates] >= lo) & (pts[candidates] <= hi), axis=1)]
    c = c[np.any(pts[c] != pts[a], axis=1) & np.any(pts[c] != pts[b], axis=1)]
    if len(c) == 0:
        return []
    o = orient2d_many(np.broadcast_to(pts[a], (len(c), 2)), np.broadcast_to(pts[b], (len(c), 2)),
                      pts[c])
    return c[o == 0].tolist()


def _inside_any(pts, tris, point):
    """True when point lies strictly inside some triangle (float test with a
    relative margin: used only to tell a gap outside the region from one inside)."""
    p = pts[tris]
    scale = float(np.abs(p).max()) or 1.0
    eps = 1e-12 * scale * scale
    inside = np.ones(len(tris), dtype=bool)
    for k in range(3):
        a = p[:, (k + 1) % 3]
        b = p[:, (k + 2) % 3]
        o = (a[:, 0] - point[0]) * (b[:, 1] - point[1]) - (a[:, 1] - point[1]) * (b[:, 0] - point[0])
        inside &= o > eps
    return bool(inside.any())
