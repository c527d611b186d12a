"""Constrained Delaunay triangulation (CDT) of points and segments: the public
:func:`triangulate`, its input checks and the conversion to arrays.

Pipeline: check and merge the input -> Delaunay of the distinct points
(:mod:`engine.delaunay`) -> insert the segments (:mod:`engine.constraints`;
when segments cross, the snap-rounded ones of :mod:`engine.snap_rounding`)
-> choose the kept triangles (:mod:`engine.regions`) -> arrays
(:class:`engine.triangulation.Triangulation`).  The CDT itself is the one of
L. P. Chew, "Constrained Delaunay triangulations", Algorithmica 4, 1989.
"""

import numpy as np

from .constraints import ConstraintError, CrossingFound, SegmentInserter
from .delaunay import build_delaunay
from .mesh import int_array
from .regions import FILL_RULES, kept_triangles
from .snap_rounding import snap_round
from .triangulation import Triangulation


def check_points(points, name="points"):
    """(N, 2) finite float64 array, or ValueError naming the problem."""
    try:
        arr = np.asarray(points, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name} must be an (N, 2) array of numbers: {exc}") from None
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise ValueError(f"{name} must have shape (N, 2), got {arr.shape}")
    bad = ~np.isfinite(arr).all(axis=1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"{name} row {i} is not finite (NaN or inf): {arr[i].tolist()}")
    return np.ascontiguousarray(arr)


def check_segments(segments, count, name="segments"):
    """(M, 2) int64 array of indices below `count`, or ValueError."""
    if segments is None:
        return np.zeros((0, 2), dtype=np.int64)
    arr = np.asarray(segments)
    if arr.size == 0:
        return np.zeros((0, 2), dtype=np.int64)
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise ValueError(f"{name} must have shape (M, 2), got {arr.shape}")
    if not np.issubdtype(arr.dtype, np.integer):
        if not np.issubdtype(arr.dtype, np.floating) or not np.all(np.mod(arr, 1) == 0):
            raise ValueError(f"{name} must hold integer point indices")
    arr = arr.astype(np.int64)
    bad = (arr < 0) | (arr >= count)
    if bad.any():
        i = int(np.flatnonzero(bad.any(axis=1))[0])
        raise ValueError(f"{name} row {i} has a point index out of range 0..{count - 1}: "
                         f"{arr[i].tolist()}")
    return arr


def merge_duplicates(pts):
    """merged_into[i]: the first row with exactly the same coordinates as row i."""
    n = len(pts)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    # exact equality of doubles (+0.0 and -0.0 are the same point)
    clean = pts + 0.0
    order = np.lexsort((clean[:, 1], clean[:, 0]))
    s = clean[order]
    new_group = np.ones(n, dtype=bool)
    new_group[1:] = (s[1:] != s[:-1]).any(axis=1)
    group = np.cumsum(new_group) - 1
    first = np.full(group[-1] + 1, n, dtype=np.int64)
    np.minimum.at(first, group, order)
    merged = np.empty(n, dtype=np.int64)
    merged[order] = first[group]
    return merged


def group_segments(mapped):
    """Collapse segments with the same two endpoints (either direction) into
    one: rows (a, b, first source, net direction count along a -> b, count),
    in input order; zero-length segments are dropped."""
    segs = np.asarray(mapped, dtype=np.int64).reshape(-1, 2)
    keep = np.flatnonzero(segs[:, 0] != segs[:, 1])
    if len(keep) == 0:
        return []
    s = segs[keep]
    lo, hi = s.min(axis=1), s.max(axis=1)
    code = lo * (int(hi.max()) + 1) + hi
    _, first, inverse = np.unique(code, return_index=True, return_inverse=True)
    inverse = inverse.ravel()
    rep = s[first]                                   # the first segment of each group
    same_dir = (s[:, 0] == rep[inverse, 0]).astype(np.int64) * 2 - 1
    net = np.zeros(len(first), dtype=np.int64)
    np.add.at(net, inverse, same_dir)
    count = np.bincount(inverse, minlength=len(first))
    order = np.argsort(first, kind="stable")
    return list(zip(rep[order, 0].tolist(), rep[order, 1].tolist(), keep[first[order]].tolist(),
                    net[order].tolist(), count[order].tolist()))


def mark_existing_edges(mesh, inserter, rows):
    """Mark, in bulk, the segments that already are edges of the Delaunay
    mesh (most of them for densely sampled outlines); return the other rows."""
    if not rows:
        return rows
    seg = np.array([r[:2] for r in rows], dtype=np.int64)
    tv = int_array(mesh.tv)
    corners = np.arange(len(tv))
    k = corners % 3
    u = tv[corners - k + (k + 1) % 3]
    v = tv[corners - k + (k + 2) % 3]
    ok = (u >= 0) & (v >= 0)
    width = len(mesh.x) + 1
    codes = u[ok] * width + v[ok]
    order = np.argsort(codes)
    sorted_codes = codes[order]
    query = seg[:, 0] * width + seg[:, 1]
    pos = np.minimum(np.searchsorted(sorted_codes, query), len(sorted_codes) - 1)
    found = sorted_codes[pos] == query
    corner_of = corners[ok][order][pos].tolist()
    found = found.tolist()
    tc, tn = mesh.tc, mesh.tn
    info = mesh.constraint_info
    carrier = inserter.carrier
    rest = []
    for i, row in enumerate(rows):
        a, b, source, net, count = row
        carrier.setdefault(source, (a, b))
        if not found[i]:
            rest.append(row)
            continue
        c = corner_of[i]
        tc[c] = 1
        tc[tn[c]] = 1
        key = (a, b) if a < b else (b, a)
        info[key] = [source, net if a < b else -net, count]
    return rest


def triangulate(points, segments=None, *, holes=None, fill=None):
    """Constrained Delaunay triangulation of `points` with constraint `segments`.

    points    (N, 2) floats.
    segments  (M, 2) point indices; crossing segments are split at their
              crossing (a new point, rounded to doubles), a point on a segment
              splits it, overlapping collinear segments merge; zero-length ones
              are ignored.  When segments cross, they are snap-rounded: each
              also passes through every point (input or crossing) that lies
              within rounding (about an ulp) of it, so pieces stay within an
              ulp of their segment and never cross.
    holes     (H, 2) seed points: the region around each, bounded by
              segments, is removed.
    fill      "hull" keeps the convex hull; "even-odd" / "nonzero" keep the
              regions the closed segment loops enclose (nonzero counts segment
              directions).  Default "hull" without segments, "even-odd" with.

    Returns a :class:`Triangulation`; raises ValueError on bad input."""
    pts = check_points(points)
    n = len(pts)
    segs = check_segments(segments, n)
    hole_pts = check_points(holes, "holes") if holes is not None and len(holes) else \
        np.zeros((0, 2))
    if fill is None:
        fill = "even-odd" if len(segs) else "hull"
    if fill not in FILL_RULES:
        raise ValueError(f"fill must be one of {', '.join(FILL_RULES)}; got {fill!r}")
    if n < 3:
        raise ValueError(f"need at least three distinct, non-collinear points; got {n} points")
    merged = merge_duplicates(pts)
    distinct = np.flatnonzero(merged == np.arange(n))
    if len(distinct) < 3:
        raise ValueError("need at least three distinct, non-collinear points; "
                         f"got {len(distinct)} distinct points")
    xs = pts[:, 0].tolist()
    ys = pts[:, 1].tolist()
    rows = group_segments(merged[segs] if len(segs) else segs)
    distinct = distinct.tolist()
    mesh = build_delaunay(xs, ys, distinct)
    # segments that do not cross are recovered exactly as they are; at the
    # first crossing, start again with the snap-rounded segment set
    inserter = SegmentInserter(mesh, stop_at_crossing=True)
    try:
        _insert_rows(inserter, mark_existing_edges(mesh, inserter, rows))
        added = 0
    except CrossingFound:
        mesh, inserter, added = _snap_rounded(xs, ys, distinct, rows)
    kept = kept_triangles(mesh, fill, hole_pts.tolist())
    result = mesh_to_triangulation(mesh, kept, merged)
    result.stats["added_points"] = added + len(inserter.added)
    return result


def _insert_rows(inserter, rows):
    for a, b, source, net, count in rows:
        try:
            inserter.insert(a, b, source, net, count)
        except ConstraintError as exc:
            # a safety net: snap-rounded fragments cross only at shared vertices
            raise ValueError(f"segment {source} ({a}-{b}) could not be inserted among "
                             f"nearly coincident crossings: {exc}") from None


def _snap_rounded(xs, ys, distinct, rows):
    """Mesh with the snap-rounded segments (engine.snap_rounding): the
    rounded crossings join the points, each segment becomes its fragments
    through the hot pixels it meets; returns (mesh, inserter, added count)."""
    xs, ys = list(xs), list(ys)
    added, routes = snap_round(xs, ys, distinct, rows)
    mesh = build_delaunay(xs, ys, distinct + added)
    inserter = SegmentInserter(mesh)
    inserter.split_on_carrier = False
    # fragments shared by several segments merge into one record, as
    # overlapping segments do: (lo, hi) -> [first source, net lo->hi, count]
    pieces = {}
    for (a, b, source, net, count), route in zip(rows, routes):
        inserter.carrier[source] = (a, b)
        for u, v in zip(route, route[1:]):
            key, signed = ((u, v), net) if u < v else ((v, u), -net)
            rec = pieces.get(key)
            if rec is None:
                pieces[key] = [source, signed, count]
            else:
                rec[0] = min(rec[0], source)
                rec[1] += signed
                rec[2] += count
    frag = [(lo, hi, src, net, count) for (lo, hi), (src, net, count) in pieces.items()]
    _insert_rows(inserter, mark_existing_edges(mesh, inserter, frag))
    return mesh, inserter, len(added)


def mesh_to_triangulation(mesh, kept, merged_into):
    """Arrays for the triangle slots `kept` of `mesh`."""
    tv, tn = mesh.tv, mesh.tn
    kept = np.asarray(kept, dtype=np.int64)
    slots = len(mesh.mark)
    tv_arr = int_array(tv).reshape(slots, 3)
    tn_arr = int_array(tn).reshape(slots, 3)
    new_index = np.full(slots + 1, -1, dtype=np.int64)
    new_index[kept] = np.arange(len(kept))
    triangles = tv_arr[kept]
    nb = tn_arr[kept]
    neighbors = np.where(nb >= 0, new_index[nb // 3], -1)
    # constrained edges next to a kept triangle
    tc_arr = int_array(mesh.tc).reshape(slots, 3)[kept] != 0
    rows, ks = np.nonzero(tc_arr)
    u = triangles[rows, (ks + 1) % 3]
    v = triangles[rows, (ks + 2) % 3]
    lo, hi = np.minimum(u, v), np.maximum(u, v)
    keys = np.unique(np.column_stack((lo, hi)), axis=0) if len(lo) else np.zeros((0, 2), np.int64)
    source = _segment_sources(mesh.constraint_info, keys)
    points = np.column_stack((np.asarray(mesh.x), np.asarray(mesh.y)))
    return Triangulation(points=points, triangles=triangles, neighbors=neighbors,
                         segments=keys.reshape(-1, 2), segment_source=source,
                         merged_into=np.asarray(merged_into, dtype=np.int64))


def _segment_sources(info, keys):
    """The recorded source segment of each (lo, hi) row of `keys`."""
    if len(keys) == 0:
        return np.zeros(0, dtype=np.int64)
    pairs = np.array(list(info.keys()), dtype=np.int64).reshape(-1, 2)
    sources = np.array([rec[0] for rec in info.values()], dtype=np.int64)
    width = int(max(pairs.max(), keys.max())) + 1
    codes = pairs[:, 0] * width + pairs[:, 1]
    order = np.argsort(codes)
    pos = np.searchsorted(codes[order], keys[:, 0] * width + keys[:, 1])
    return sources[order[pos]]
