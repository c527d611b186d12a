"""Carrying mesh data through an edit, on bulk arrays (numpy only, no host import).

The host module :mod:`mesh_bridge` copies the mesh out with ``foreach_get``, lets the
engine decide the edit, then uses these functions to work out

* which edges must break regions because the data of the two faces differ there
  (a UV map or colour that jumps, a different material or face flag);
* the value of every attribute on every element of the edited mesh: kept elements
  keep their value, new vertices and corners are weighted sums over original ones
  (the engine's weights), new faces copy their source face, and edge pieces copy
  the original edge they lie on.

Terms: *engine ids* number the vertices of the edit: 0..N-1 the originals, N.. the
new ones in the engine's order.  *Final* indices are those of the host mesh after
the edit has been written.
"""

import numpy as np

# How an attribute's values at a new element come from the weighted sources:
#   "mix"  weighted sum (continuous data: floats, vectors, colours, UVs);
#   "pick" the value of the source with the largest weight (integers, matrices);
#   "all"  true only when every source with a weight is true (flags, pins).
MIX, PICK, ALL = "mix", "pick", "all"


def next_corners(loop_starts, loop_totals):
    """(C,) the next corner around the same face, for each corner."""
    starts = np.asarray(loop_starts, dtype=np.int64)
    totals = np.asarray(loop_totals, dtype=np.int64)
    count = int(totals.sum())
    nxt = np.arange(count, dtype=np.int64) + 1
    if count:
        nxt[starts + totals - 1] = starts
    return nxt


def face_of_corners(loop_totals):
    """(C,) the face owning each corner."""
    totals = np.asarray(loop_totals, dtype=np.int64)
    return np.repeat(np.arange(len(totals)), totals)


def corner_pairs(corner_edges, corner_verts, nxt):
    """Edges used by exactly two corners, with the corners matched by vertex.

    Returns (edge ids (P,), corners (P, 4)): for each such edge u-v the corners
    at u and at v in the first face, then at u and at v in the second face."""
    corner_edges = np.asarray(corner_edges, dtype=np.int64)
    corner_verts = np.asarray(corner_verts, dtype=np.int64)
    if len(corner_edges) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros((0, 4), dtype=np.int64)
    order = np.argsort(corner_edges, kind="stable")
    sorted_edges = corner_edges[order]
    first = np.ones(len(order), dtype=bool)
    first[1:] = sorted_edges[1:] != sorted_edges[:-1]
    starts = np.flatnonzero(first)
    counts = np.diff(np.append(starts, len(order)))
    two = starts[counts == 2]
    c1, c2 = order[two], order[two + 1]
    same_direction = corner_verts[c1] == corner_verts[c2]
    b_at_u = np.where(same_direction, c2, nxt[c2])
    b_at_v = np.where(same_direction, nxt[c2], c2)
    return sorted_edges[two], np.column_stack((c1, nxt[c1], b_at_u, b_at_v))


def _rows_differ(values, a, b):
    va, vb = values[a], values[b]
    diff = va != vb
    return diff.reshape(len(a), -1).any(axis=1) if diff.ndim > 1 else diff


def corner_data_breaks(pairs, corner_values):
    """(P,) True where any per-corner array differs across the edge at either end."""
    out = np.zeros(len(pairs), dtype=bool)
    for values in corner_values:
        values = np.asarray(values)
        out |= _rows_differ(values, pairs[:, 0], pairs[:, 2])
        out |= _rows_differ(values, pairs[:, 1], pairs[:, 3])
    return out


def face_data_breaks(pairs, face_of_corner, face_values):
    """(P,) True where any per-face array differs between the edge's two faces."""
    out = np.zeros(len(pairs), dtype=bool)
    fa, fb = face_of_corner[pairs[:, 0]], face_of_corner[pairs[:, 2]]
    for values in face_values:
        out |= _rows_differ(np.asarray(values), fa, fb)
    return out


def combine(values, starts, indices, weights, mode):
    """Values at new elements from weighted rows over source elements.

    values (S, ...) source values; rows k = indices/weights[starts[k]:starts[k+1]].
    mode MIX, PICK or ALL (see the module constants).  Returns (K, ...) in the
    values' dtype (MIX results are computed in float64 and then cast)."""
    values = np.asarray(values)
    starts = np.asarray(starts, dtype=np.int64)
    indices = np.asarray(indices, dtype=np.int64)
    weights = np.asarray(weights, dtype=np.float64)
    rows = len(starts) - 1
    out = np.zeros((rows,) + values.shape[1:], dtype=values.dtype)
    if rows == 0 or len(indices) == 0:
        return out
    sizes = np.diff(starts)
    row_of = np.repeat(np.arange(rows), sizes)
    filled = sizes > 0
    if mode == MIX:
        acc = np.zeros((rows,) + values.shape[1:], dtype=np.float64)
        contrib = values[indices].astype(np.float64)
        contrib *= weights.reshape((-1,) + (1,) * (values.ndim - 1))
        np.add.at(acc, row_of, contrib)
        if np.issubdtype(values.dtype, np.integer):
            acc = np.rint(acc)
        out[:] = acc.astype(values.dtype)
        return out
    if mode == PICK:
        # per row, the entry with the largest weight (the first of equal ones)
        order = np.lexsort((-weights, row_of))
        firsts = starts[:-1][filled]
        out[filled] = values[indices[order[firsts]]]
        return out
    if mode == ALL:
        truth = values[indices].astype(bool)
        truth |= (weights <= 0.0).reshape((-1,) + (1,) * (values.ndim - 1))
        result = np.logical_and.reduceat(truth, starts[:-1][filled], axis=0)
        out[filled] = result.astype(values.dtype)
        return out
    raise ValueError(f"unknown mode {mode!r}")


def edge_sources(final_edges_engine, original_edges, vertex_source_edge, vertex_count):
    """For each edge of the edited mesh, the original edge it is a piece of, or -1.

    final_edges_engine (E', 2) the edges' ends as engine ids; original_edges (E, 2)
    original vertex pairs; vertex_source_edge (M, 2) for each new vertex the
    original vertex pair of the edge it was put on ((-1, -1) for inner points);
    vertex_count N.  An edge counts as a piece of original edge lo-hi when both its
    ends lie on lo-hi: each end is lo, hi, or a new vertex put on lo-hi."""
    n = int(vertex_count)
    fe = np.asarray(final_edges_engine, dtype=np.int64).reshape(-1, 2)
    oe = np.asarray(original_edges, dtype=np.int64).reshape(-1, 2)
    vse = np.asarray(vertex_source_edge, dtype=np.int64).reshape(-1, 2)
    okey = np.minimum(oe[:, 0], oe[:, 1]) * n + np.maximum(oe[:, 0], oe[:, 1])
    order = np.argsort(okey, kind="stable")
    sorted_keys = okey[order]

    def lookup(lo, hi, valid):
        key = lo * n + hi
        pos = np.clip(np.searchsorted(sorted_keys, key), 0, max(len(sorted_keys) - 1, 0))
        if len(sorted_keys) == 0:
            return np.full(len(key), -1, dtype=np.int64)
        hit = valid & (sorted_keys[pos] == key)
        return np.where(hit, order[pos], -1)

    a, b = fe[:, 0], fe[:, 1]
    a_new, b_new = a >= n, b >= n
    # carrier edge (lo, hi) of each end that is a new vertex, else (-1, -1)
    padded = np.vstack((vse, [[-1, -1]]))          # row -1: "no carrier"
    carrier_a = padded[np.where(a_new, a - n, -1)]
    carrier_b = padded[np.where(b_new, b - n, -1)]
    lo = np.full(len(fe), -1, dtype=np.int64)
    hi = np.full(len(fe), -1, dtype=np.int64)
    valid = np.zeros(len(fe), dtype=bool)
    both_old = ~a_new & ~b_new
    lo[both_old] = np.minimum(a, b)[both_old]
    hi[both_old] = np.maximum(a, b)[both_old]
    valid |= both_old
    # one new end on lo-hi, the other end lo or hi
    for new_end, other, carrier in ((a_new & ~b_new, b, carrier_a),
                                    (b_new & ~a_new, a, carrier_b)):
        on = new_end & (carrier[:, 0] >= 0) & ((other == carrier[:, 0]) |
                                               (other == carrier[:, 1]))
        lo[on], hi[on] = carrier[on, 0], carrier[on, 1]
        valid |= on
    both_new = a_new & b_new & (carrier_a[:, 0] >= 0) & (carrier_a == carrier_b).all(axis=1)
    lo[both_new], hi[both_new] = carrier_a[both_new, 0], carrier_a[both_new, 1]
    valid |= both_new
    return lookup(np.minimum(lo, hi), np.maximum(lo, hi), valid)


def corner_angles(positions, loop_starts, loop_totals, corner_verts):
    """(C,) the interior angle at each face corner in degrees (between the edges to
    the previous and the next corner; 0 where an edge has no length)."""
    p = np.asarray(positions, dtype=np.float64)
    cv = np.asarray(corner_verts, dtype=np.int64)
    nxt = next_corners(loop_starts, loop_totals)
    prev = np.empty_like(nxt)
    prev[nxt] = np.arange(len(nxt))
    here = p[cv]
    u = p[cv[nxt]] - here
    w = p[cv[prev]] - here
    cross = np.linalg.norm(np.cross(u, w), axis=1)
    dot = (u * w).sum(axis=1)
    return np.degrees(np.arctan2(cross, dot))


def face_smallest_angles(positions, loop_starts, loop_totals, corner_verts):
    """(F,) each face's smallest corner angle in degrees (a triangle's smallest angle)."""
    totals = np.asarray(loop_totals, dtype=np.int64)
    if len(totals) == 0:
        return np.zeros(0)
    angles = corner_angles(positions, loop_starts, totals, corner_verts)
    return np.minimum.reduceat(angles, np.asarray(loop_starts, dtype=np.int64))
