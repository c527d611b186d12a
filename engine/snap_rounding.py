"""Snap rounding of crossing segments onto the grid of doubles.

When input segments cross, their crossing points are generally not doubles.
Rounding each crossing and re-inserting the pieces through it moves those
pieces a hair off their segments, where they can cross other pieces again,
and so on.  Snap rounding settles this once for the whole segment set:

* a *hot pixel* is the set of real points that round to one pair of doubles
  (a small rectangle of about one ulp, half-open by the ties-to-even rule,
  so the pixels tile the plane) around every distinct
  input point and around the rounded exact crossing of every pair of
  segments that cross inside both;
* every segment is replaced by the polyline through the centres (the doubles
  themselves) of all hot pixels it meets, in order along it.

On a uniform grid the polylines ("fragments") cross no more except at shared
vertices (J. D. Hobby, "Practical segment intersection with finite precision
output", Computational Geometry 13(4), 1999; L. J. Guibas and D. H. Marimont,
"Rounding arrangements dynamically", IJCGA 8(2), 1998).  The pixels of
doubles grow with magnitude, so a fragment between a large pixel and a small
one can still swing past a small pixel its segment missed; a last pass
routes one fragment of each crossing pair through an end of the other, the
choice that stays nearest to the input segments, until no two cross
(checked exactly).  Every fragment vertex found by the pixels lies within
one ulp of its segment; those of the last pass are the ends its pixels just
missed, so they are as close in practice.

Decisions are exact: crossings with exact orientation signs and Fractions,
"segment meets pixel" with exact rational pixel bounds; numpy prefilters
keep the exact work to the few candidates within a few ulps.
"""

import math
from fractions import Fraction

import numpy as np

from .predicates import orient2d_many

# candidate pairs are built in chunks of at most this many entries
_CHUNK = 1 << 20


def _pairs_by_x(lo_x, hi_x):
    """Index pairs (i, j), i != j, of intervals [lo_x, hi_x] that overlap."""
    order = np.argsort(lo_x, kind="stable")
    s_lo = lo_x[order]
    end = np.searchsorted(s_lo, hi_x[order], side="right")
    start = np.arange(1, len(order) + 1)
    counts = np.maximum(end - start, 0)
    out_i, out_j = [], []
    for rows, offs in _chunked_pairs(counts):
        out_i.append(order[rows])
        out_j.append(order[start[rows] + offs])
    if not out_i:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    return np.concatenate(out_i), np.concatenate(out_j)


def _chunked_pairs(counts):
    """For rows with counts[i] partners each: (row of each pair, offset of the
    pair within its row), in chunks of about _CHUNK pairs (bounded memory)."""
    first = 0
    while first < len(counts):
        csum = np.cumsum(counts[first:])
        last = first + max(1, int(np.searchsorted(csum, _CHUNK, side="right")))
        c = counts[first:last]
        total = int(c.sum())
        if total:
            yield (np.repeat(np.arange(first, last), c),
                   np.arange(total) - np.repeat(np.cumsum(c) - c, c))
        first = last


def _crossings(x, y, seg):
    """Exact crossing points (Fraction pairs) of segment pairs whose
    interiors cross at one point (collinear overlaps and touching ends give
    no new point: their ends are input points)."""
    out = []
    for p, q in _crossing_pairs(x, y, seg):
        a, b = seg[p]
        c, d = seg[q]
        axf, ayf, bxf, byf = (Fraction(v) for v in (x[a], y[a], x[b], y[b]))
        cxf, cyf, dxf, dyf = (Fraction(v) for v in (x[c], y[c], x[d], y[d]))
        denom = (bxf - axf) * (dyf - cyf) - (byf - ayf) * (dxf - cxf)
        s = ((cxf - axf) * (dyf - cyf) - (cyf - ayf) * (dxf - cxf)) / denom
        out.append((axf + s * (bxf - axf), ayf + s * (byf - ayf)))
    return out


def _crossing_pairs(x, y, seg):
    """Row pairs (p, q) of `seg` whose interiors cross at one point (exact signs)."""
    ax, ay = x[seg[:, 0]], y[seg[:, 0]]
    bx, by = x[seg[:, 1]], y[seg[:, 1]]
    i, j = _pairs_by_x(np.minimum(ax, bx), np.maximum(ax, bx))
    if len(i) == 0:
        return []
    keep = (np.minimum(ay[i], by[i]) <= np.maximum(ay[j], by[j])) & \
           (np.minimum(ay[j], by[j]) <= np.maximum(ay[i], by[i]))
    i, j = i[keep], j[keep]
    if len(i) == 0:
        return []
    pa = np.column_stack((ax, ay))
    pb = np.column_stack((bx, by))
    o1 = np.sign(orient2d_many(pa[i], pb[i], pa[j]))
    o2 = np.sign(orient2d_many(pa[i], pb[i], pb[j]))
    keep = o1 * o2 < 0
    i, j = i[keep], j[keep]
    if len(i) == 0:
        return []
    o3 = np.sign(orient2d_many(pa[j], pb[j], pa[i]))
    o4 = np.sign(orient2d_many(pa[j], pb[j], pb[i]))
    keep = o3 * o4 < 0
    return list(zip(i[keep].tolist(), j[keep].tolist()))


def _pixel(v):
    """The reals that round to the double v (round half to even), as
    (low, high, closed): exact bounds, the midpoints to v's neighbours, and
    whether both belong to it.  A tie goes to the neighbour with the even
    significand, so the two bounds are both in (v even) or both out (v odd);
    at a power of two both neighbours are odd."""
    f = Fraction(v)
    low = (f + Fraction(math.nextafter(v, -math.inf))) / 2
    high = (f + Fraction(math.nextafter(v, math.inf))) / 2
    return low, high, float(low) == v


def _meets_pixel(ax, ay, bx, by, px, py):
    """Exact: the closed segment a-b meets the hot pixel of (px, py), the
    reals that round to it.  These pixels tile the plane (half-open, ties to
    even), as snap rounding needs: a crossing that rounds to (px, py) lies
    in its pixel even when it is a tie, so both its segments meet it.

    A segment meets the open pixel, or touches its boundary only at a
    corner: its ends are doubles, never on a side, and it cannot run along
    a side (sides are not doubles).  A corner belongs to the pixel when
    both its coordinates round to (px, py)."""
    x0, x1, x_closed = _pixel(px)
    y0, y1, y_closed = _pixel(py)
    fax, fay, fbx, fby = Fraction(ax), Fraction(ay), Fraction(bx), Fraction(by)
    if max(fax, fbx) <= x0 or min(fax, fbx) >= x1 or max(fay, fby) <= y0 or min(fay, fby) >= y1:
        return False
    dx, dy = fbx - fax, fby - fay
    signs = set()
    for cx in (x0, x1):
        for cy in (y0, y1):
            s = dx * (cy - fay) - dy * (cx - fax)
            signs.add((s > 0) - (s < 0))
    if 1 in signs and -1 in signs:
        return True
    # the line through a-b touches the closed pixel at a corner at most; the
    # box test above put that corner strictly between a and b
    return 0 in signs and x_closed and y_closed


def _hot_candidates(x, y, seg, hot):
    """(segment row, hot point) pairs with the point within a few ulps of
    the segment (a float prefilter that never drops a true hit)."""
    hx, hy = x[hot], y[hot]
    order = np.argsort(hx, kind="stable")
    sx = hx[order]
    ax, ay = x[seg[:, 0]], y[seg[:, 0]]
    bx, by = x[seg[:, 1]], y[seg[:, 1]]
    lo_x, hi_x = np.minimum(ax, bx), np.maximum(ax, bx)
    lo_y, hi_y = np.minimum(ay, by), np.maximum(ay, by)
    pad_x = 4 * np.abs(np.spacing(np.maximum(np.abs(lo_x), np.abs(hi_x))))
    pad_y = 4 * np.abs(np.spacing(np.maximum(np.abs(lo_y), np.abs(hi_y))))
    begin = np.searchsorted(sx, lo_x - pad_x, side="left")
    end = np.searchsorted(sx, hi_x + pad_x, side="right")
    counts = end - begin
    out_r, out_p = [], []
    for r, offs in _chunked_pairs(counts):
        p = order[begin[r] + offs]
        px, py = hx[p], hy[p]
        ok = (py >= lo_y[r] - pad_y[r]) & (py <= hi_y[r] + pad_y[r])
        r, p, px, py = r[ok], p[ok], px[ok], py[ok]
        ok = (hot[p] != seg[r, 0]) & (hot[p] != seg[r, 1])
        r, p, px, py = r[ok], p[ok], px[ok], py[ok]
        dx, dy = bx[r] - ax[r], by[r] - ay[r]
        t1 = dx * (py - ay[r])
        t2 = dy * (px - ax[r])
        reach = (np.abs(np.spacing(px)) * np.abs(dy) + np.abs(np.spacing(py)) * np.abs(dx))
        ok = np.abs(t1 - t2) <= 1.01 * reach + 4e-15 * (np.abs(t1) + np.abs(t2))
        out_r.append(r[ok])
        out_p.append(hot[p[ok]])
    if not out_r:
        return []
    return list(zip(np.concatenate(out_r).tolist(), np.concatenate(out_p).tolist()))


def snap_round(xs, ys, points, rows):
    """Snap-round the segments `rows` (a, b, ...) over the distinct points
    `points` (indices into xs, ys).  Appends the rounded crossing points that
    are new to xs, ys and returns (new point indices, routes) where
    routes[k] is the vertex list of row k from a to b."""
    x = np.asarray(xs, dtype=np.float64)
    y = np.asarray(ys, dtype=np.float64)
    seg = np.array([r[:2] for r in rows], dtype=np.int64).reshape(-1, 2)
    known = {(xs[v], ys[v]): v for v in points}
    added = []
    for cx, cy in _crossings(x, y, seg):
        key = (float(cx), float(cy))
        if key not in known:
            known[key] = len(xs)
            added.append(len(xs))
            xs.append(key[0])
            ys.append(key[1])
    if added:
        x = np.asarray(xs, dtype=np.float64)
        y = np.asarray(ys, dtype=np.float64)
    hot = np.fromiter(known.values(), dtype=np.int64, count=len(known))
    inner = [[] for _ in rows]
    for r, p in _hot_candidates(x, y, seg, hot):
        a, b = rows[r][0], rows[r][1]
        if (xs[p], ys[p]) in ((xs[a], ys[a]), (xs[b], ys[b])):
            continue
        if _meets_pixel(xs[a], ys[a], xs[b], ys[b], xs[p], ys[p]):
            inner[r].append(p)
    routes = []
    for (a, b, *_), mids in zip(rows, inner):
        mids.sort(key=_along(xs, ys, a, b))
        routes.append([a] + mids + [b])
    _untangle(xs, ys, rows, routes)
    return added, routes


def _along(xs, ys, a, b):
    """Sort key: exact position of a point's projection along a -> b."""
    fax, fay = Fraction(xs[a]), Fraction(ys[a])
    dx, dy = Fraction(xs[b]) - fax, Fraction(ys[b]) - fay
    return lambda p: (Fraction(xs[p]) - fax) * dx + (Fraction(ys[p]) - fay) * dy


def _untangle(xs, ys, rows, routes):
    """Route a fragment through an end of a fragment it still crosses until
    no two fragments cross (exact test).  Needed because the pixels of
    doubles grow with magnitude: a fragment between a large pixel and a small
    one can swing past a small pixel that its segment missed.

    Either fragment of a crossing pair can take either end of the other;
    the choice that stays nearest to the input segments is made (the end
    that the other segment's pixels missed is a hair from it; the far ends
    may be anywhere), and only one side of a pair changes per round, as that
    already removes the crossing.  Every round adds a vertex to a route and
    none is removed, so this ends."""
    for _ in range(64 * (len(rows) + 1)):
        owners = {}
        for r, route in enumerate(routes):
            for u, v in zip(route, route[1:]):
                owners.setdefault((u, v) if u < v else (v, u), []).append(r)
        keys = list(owners)
        x = np.asarray(xs, dtype=np.float64)
        y = np.asarray(ys, dtype=np.float64)
        frag = np.array(keys, dtype=np.int64).reshape(-1, 2)
        pairs = _crossing_pairs(x, y, frag)
        if not pairs:
            return
        options = []
        for f, g in pairs:
            best = min((_reroute_cost(xs, ys, rows, routes, owners[keys[f]], w), f, g, w)
                       for f, g in ((f, g), (g, f)) for w in keys[g])
            if best[0] < math.inf:
                options.append(best)
        changed = set()
        for _, f, g, w in sorted(options):
            if f in changed or g in changed:
                continue         # the next round checks this pair again
            changed.add(f)
            for r in owners[keys[f]]:
                a, b = rows[r][0], rows[r][1]
                routes[r] = [a] + sorted(routes[r][1:-1] + [w], key=_along(xs, ys, a, b)) + [b]
        if not changed:
            return           # left to the inserter's crossing fallback


def _reroute_cost(xs, ys, rows, routes, owner_rows, w):
    """How far routing the segments `owner_rows` also through vertex w moves
    them: the largest distance of w from one of them; inf when w is on a
    route already or not strictly between a segment's ends."""
    worst = 0.0
    for r in owner_rows:
        a, b = rows[r][0], rows[r][1]
        key = _along(xs, ys, a, b)
        if w in routes[r] or not key(a) < key(w) < key(b):
            return math.inf
        dx, dy = xs[b] - xs[a], ys[b] - ys[a]
        cross = abs(dx * (ys[w] - ys[a]) - dy * (xs[w] - xs[a]))
        worst = max(worst, cross / math.hypot(dx, dy))
    return worst
