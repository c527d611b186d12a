"""Which triangles of a constrained triangulation are kept: fill rules and holes.

A flood fill starts from the ghost triangles (outside everything, winding 0)
and crosses one edge at a time.  Crossing a constraint that bounds regions
changes the winding number by the signed count of segments on it
("nonzero") or flips the parity by their count ("even-odd"); the point-in-
polygon rules of computer graphics (e.g. the SVG fill-rule property).

Only segments on closed loops bound regions: chains with a free end are pruned
first (repeatedly dropping edges at vertices of degree one), so they remain
constraints inside whatever region they cross.  For even-odd, walls that run
from one loop to another (chords, leaving vertices where an odd number of
segments meet) are found as shortest paths between those vertices and bound
nothing either.  Hole seeds remove the region
around them bounded by any constraint.
"""

import heapq
import math
from collections import defaultdict, deque

from .mesh import NEXT, PREV

FILL_RULES = ("hull", "even-odd", "nonzero")


def _bounding_weights(mesh, fill):
    """(lo, hi) -> weight of each constraint that bounds regions: the signed
    direction count along lo -> hi ("nonzero") or 1 for an odd count ("even-odd")."""
    weights = {}
    for key, (_source, net, count) in mesh.constraint_info.items():
        w = net if fill == "nonzero" else count % 2
        if w:
            weights[key] = w
    degree = defaultdict(int)
    for lo, hi in weights:
        degree[lo] += 1
        degree[hi] += 1
    by_vertex = defaultdict(list)
    for key in weights:
        by_vertex[key[0]].append(key)
        by_vertex[key[1]].append(key)
    queue = deque(v for v, d in degree.items() if d == 1)
    while queue:
        v = queue.popleft()
        if degree[v] != 1:
            continue
        for key in by_vertex[v]:
            if key in weights:
                del weights[key]
                degree[key[0]] -= 1
                degree[key[1]] -= 1
                other = key[1] if key[0] == v else key[0]
                if degree[other] == 1:
                    queue.append(other)
    if fill == "even-odd":
        _drop_chords(mesh, weights, degree, by_vertex)
    return weights


def _drop_chords(mesh, weights, degree, by_vertex):
    """Make every vertex of the bounding edges even (a union of closed loops):
    pair up the odd vertices along shortest paths (Euclidean length) and
    toggle those edges out.  A wall drawn across a room from wall to wall is
    the shortest way between its two ends, so it is the part dropped: it
    stays a constraint but bounds nothing."""
    x, y = mesh.x, mesh.y
    odd = {v for v, d in degree.items() if d % 2 == 1}
    graph = {v: [k for k in keys if k in weights] for v, keys in by_vertex.items()}
    toggled = set()
    while odd:
        source = odd.pop()
        dist = {source: 0.0}
        back = {}
        heap = [(0.0, source)]
        target = None
        while heap:
            d, v = heapq.heappop(heap)
            if d > dist[v]:
                continue
            if v in odd:
                target = v
                break
            for key in graph.get(v, ()):
                u = key[1] if key[0] == v else key[0]
                nd = d + math.hypot(x[u] - x[v], y[u] - y[v])
                if nd < dist.get(u, math.inf):
                    dist[u] = nd
                    back[u] = (v, key)
                    heapq.heappush(heap, (nd, u))
        if target is None:
            continue
        odd.discard(target)
        v = target
        while v != source:
            v, key = back[v]
            toggled ^= {key}
    for key in toggled:
        del weights[key]


def kept_triangles(mesh, fill, hole_points=()):
    """Slots of the real triangles the fill rule and hole seeds keep.

    Raises ValueError when the segment loops give no consistent fill (for
    example a "nonzero" fill whose loops are not consistently directed)."""
    tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
    real = mesh.real_triangles()
    if fill == "hull":
        kept = set(real)
    else:
        weights = _bounding_weights(mesh, fill)
        nonzero = fill == "nonzero"
        slots = len(mesh.mark)
        unset = -(1 << 62)
        value = [unset] * slots
        queue = []
        for t in range(slots):
            b = 3 * t
            if tv[b] != -2 and (tv[b] < 0 or tv[b + 1] < 0 or tv[b + 2] < 0):
                value[t] = 0
                queue.append(t)
        conflict = None
        head = 0
        while head < len(queue):
            t = queue[head]
            head += 1
            w = value[t]
            b = 3 * t
            for c in (b, b + 1, b + 2):
                oc = tn[c]
                if oc < 0:
                    continue
                u = oc // 3
                nw = w
                if tc[c]:
                    k = c - b
                    p, q = tv[b + NEXT[k]], tv[b + PREV[k]]
                    wt = weights.get((p, q) if p < q else (q, p), 0)
                    if wt:
                        if nonzero:
                            # leaving the left side of p -> q
                            nw = w - (wt if p < q else -wt)
                        else:
                            nw = w ^ 1
                old = value[u]
                if old == unset:
                    value[u] = nw
                    queue.append(u)
                elif old != nw and conflict is None:
                    k = c - b
                    conflict = (tv[b + NEXT[k]], tv[b + PREV[k]])
        if conflict is not None:
            p, q = conflict
            raise ValueError(
                f"segments do not enclose consistent regions under the '{fill}' fill "
                f"(check near the edge between points at ({mesh.x[p]}, {mesh.y[p]}) and "
                f"({mesh.x[q]}, {mesh.y[q]})): loops must be closed"
                + (" and consistently directed" if fill == "nonzero" else "")
                + ", or use fill='hull' with hole seeds")
        kept = {t for t in real if value[t] != 0 and value[t] != unset}
    for hx, hy in hole_points:
        t = mesh.locate(hx, hy)
        if t not in kept:
            continue
        stack = [t]
        kept.discard(t)
        while stack:
            s = stack.pop()
            for c in (3 * s, 3 * s + 1, 3 * s + 2):
                if tc[c] or tn[c] < 0:
                    continue
                u = tn[c] // 3
                if u in kept:
                    kept.discard(u)
                    stack.append(u)
    return sorted(kept)
