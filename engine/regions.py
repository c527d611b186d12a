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

import numpy as np

from .mesh import int_array

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
    if not odd:
        return
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


def components(mesh):
    """Label every live triangle slot (ghosts included) by its connected
    component across edges that are not constraints; returns (labels array
    over slots, live mask).  Vectorised hooking and pointer jumping in the
    manner of Shiloach and Vishkin (J. Algorithms 3(1), 1982)."""
    tv = int_array(mesh.tv).reshape(-1, 3)
    tn = int_array(mesh.tn)
    tc = int_array(mesh.tc)
    slots = len(tv)
    live = tv[:, 0] != -2
    real = (tv >= 0).all(axis=1)
    label = np.arange(slots, dtype=np.int64)
    corner = np.flatnonzero((tc == 0) & (tn >= 0) & np.repeat(live, 3))
    a = corner // 3
    b = tn[corner] // 3
    keep = (a < b) & (real[a] == real[b])    # hull edges separate real from ghost
    a, b = a[keep], b[keep]
    while True:
        la, lb = label[a], label[b]
        differ = la != lb
        if not differ.any():
            break
        hi = np.maximum(la[differ], lb[differ])
        lo = np.minimum(la[differ], lb[differ])
        np.minimum.at(label, hi, lo)
        while True:                      # pointer jumping to the roots
            nxt = label[label]
            if np.array_equal(nxt, label):
                break
            label = nxt
    return label, live


def kept_triangles(mesh, fill, hole_points=()):
    """Slots of the real triangles the fill rule and hole seeds keep.

    Raises ValueError when the segment loops give no consistent fill (for
    example a "nonzero" fill whose loops are not consistently directed)."""
    tv_list, tn_list = mesh.tv, mesh.tn
    tv = int_array(tv_list).reshape(-1, 3)
    real = (tv >= 0).all(axis=1)
    ghost = (tv[:, 0] != -2) & ~real
    label, _live = components(mesh)
    if fill == "hull":
        keep_label = None
    else:
        weights = _bounding_weights(mesh, fill)
        nonzero = fill == "nonzero"
        # component adjacency across constraints, with the change of winding
        tc = int_array(mesh.tc)
        tn = int_array(tn_list)
        real3 = np.repeat(real, 3)
        cons = np.flatnonzero(((tc != 0) | (real3 != real3[np.maximum(tn, 0) // 3 * 3]))
                              & (tn >= 0) & np.repeat(real | ghost, 3))
        flat = tv.ravel()
        k = cons % 3
        base = cons - k
        p = flat[base + (k + 1) % 3]
        q = flat[base + (k + 2) % 3]
        lo, hi = np.minimum(p, q), np.maximum(p, q)
        wt = np.zeros(len(cons), dtype=np.int64)
        if weights:
            keys = np.array(list(weights.keys()), dtype=np.int64).reshape(-1, 2)
            vals = np.array(list(weights.values()), dtype=np.int64)
            width = int(max(keys.max(), flat.max())) + 2
            codes = keys[:, 0] * width + keys[:, 1]
            order = np.argsort(codes)
            codes, vals = codes[order], vals[order]
            query = lo * width + hi
            pos = np.minimum(np.searchsorted(codes, query), len(codes) - 1)
            hit = (codes[pos] == query) & (tc[cons] != 0)
            wt = np.where(hit, vals[pos], 0)
        if nonzero:
            delta = -np.where(p < q, wt, -wt)        # leaving the left side of p -> q
        else:
            delta = (wt != 0).astype(np.int64)
        la = label[cons // 3]
        lb = label[tn[cons] // 3]
        table, first = np.unique(np.column_stack((la, lb, delta)), axis=0, return_index=True)
        links = {}
        for (a, b, d), i in zip(table.tolist(), first.tolist()):
            links.setdefault(a, []).append((b, d, int(p[i]), int(q[i])))
        value = {}
        queue = deque()
        for lab in np.unique(label[ghost]).tolist():
            value[lab] = 0
            queue.append(lab)
        conflict = None
        while queue:
            lab = queue.popleft()
            w = value[lab]
            for other, delta, p, q in links.get(lab, ()):
                nw = (w + delta) % 2 if not nonzero else w + delta
                old = value.get(other)
                if old is None:
                    value[other] = nw
                    queue.append(other)
                elif old != nw and conflict is None:
                    conflict = (p, q)
        if conflict is not None:
            p, q = conflict
            raise ValueError(
                f"segments do not enclose consistent regions under the '{fill}' fill "
                f"(check near the edge between points at ({mesh.x[p]}, {mesh.y[p]}) and "
                f"({mesh.x[q]}, {mesh.y[q]})): loops must be closed"
                + (" and consistently directed" if fill == "nonzero" else "")
                + ", or use fill='hull' with hole seeds")
        keep_label = {lab for lab, w in value.items() if w != 0}
    kept_mask = real.copy()
    if keep_label is not None:
        kept_mask &= np.isin(label, np.fromiter(keep_label, dtype=np.int64, count=len(keep_label)))
    for hx, hy in hole_points:
        t = mesh.locate(hx, hy)
        if kept_mask[t]:
            kept_mask &= label != label[t]
    return np.flatnonzero(kept_mask).tolist()
