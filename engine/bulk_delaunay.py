"""Delaunay triangulation of a point set built with numpy array rounds.

:func:`bulk_delaunay` returns the same ghost-closed :class:`~engine.mesh.Mesh`
as :func:`engine.delaunay.build_delaunay` (same contract: every point of
`indices` used, triangles strictly counter-clockwise, every edge locally
Delaunay, a ghost triangle ``(b, a, GHOST)`` outside each hull edge
``a -> b``), but does the bulk of the work as whole-array operations instead
of one Python-level insertion per point.

Method
------
1. Convex hull of the points by a vectorised quickhull (W. F. Eddy, "A new
   convex hull algorithm for planar sets", ACM TOMS 3(4), 1977; C. B. Barber,
   D. P. Dobkin, H. Huhdanpaa, "The quickhull algorithm for convex hulls", ACM
   TOMS 22(4), 1996): all hull edges of one level are split at once; the
   result is checked exactly for strict convexity.
2. The hull polygon (strictly convex vertices only) is triangulated as a fan
   from its first vertex and closed with ghost triangles; every other point is
   located in the fan by an angular binary search around the fan apex, all
   points at once.  From here on the hull never changes, so ghost triangles
   are never split or flipped.
3. Rounds of data-parallel insertion and flipping in the style of the GPU
   Delaunay algorithms (G. Rong, T.-S. Tan, T.-T. Cao, Stephanus, "Computing
   two-dimensional Delaunay triangulation using graphics hardware", Proc.
   I3D 2008; M. Qi, T.-T. Cao, T.-S. Tan, "Computing 2D constrained Delaunay
   triangulation using the GPU", Proc. I3D 2012): every triangle that holds a
   waiting point strictly inside takes the one with the smallest random key
   (a randomised insertion order per triangle; 1-to-3 split, all splits of a
   round at once); the waiting points of split triangles move to one of the
   three children by two or three orientation tests.  Then rounds of Lawson
   flips (C. L. Lawson, "Software for C1 surface interpolation", Mathematical
   Software III, 1977) on all suspect edges at once: the illegal ones claim
   their two triangles with ``np.minimum.at`` (the smallest edge id wins, so
   each round flips at least one edge and no triangle twice), the winners
   flip, and their waiting points move across the new diagonal.  Simultaneous
   splits and flips keep neighbour pointers consistent through an old-corner
   -> new-corner map that every changed triangle writes before the pointers
   are rewritten.  Suspect edges are those of changed triangles, so when no
   suspect edge is illegal the whole triangulation is Delaunay.  Only a few
   flip rounds run after each insertion round; the remaining suspects are
   carried into the next round (Lawson's algorithm ends in the Delaunay
   triangulation from any triangulation, so insertion need not wait for it),
   and a final flush empties them.  Long flip cascades then share rounds with
   the insertions instead of running one flip per round at the end.
   The points are relabelled along a Hilbert curve (:mod:`engine.ordering`)
   so that neighbouring array entries touch nearby memory.
4. Points that never became strictly interior to a triangle (they lie on an
   edge that stays Delaunay, e.g. collinear hull points or grid points) are
   inserted at the end by the sequential Bowyer-Watson code
   (:meth:`engine.mesh.Mesh.insert_vertex`), valid because the mesh is
   Delaunay by then.

Predicates
----------
Every geometric decision is an exact sign.  The float filter is stage A of
J. R. Shewchuk, "Adaptive Precision Floating-Point Arithmetic and Fast Robust
Geometric Predicates", DCG 18, 1997 (constants from :mod:`engine.predicates`).
Entries it cannot decide go through a second vectorised stage: the same
determinant with every operation checked by error-free transformations
(T. J. Dekker, "A floating-point technique for extending the available
precision", Numer. Math. 18, 1971; D. E. Knuth, TAOCP vol. 2, TwoSum); when no
operation rounded, the float sign is exact (this settles integer grids and
other small-integer-like inputs, where ties are common).  The few entries left
use the exact Python-integer predicates of :mod:`engine.predicates`.
"""

import numpy as np

from .mesh import GHOST, Mesh
from .ordering import hilbert_keys
from .predicates import CCW_BOUND, INCIRCLE_BOUND, incircle_exact, orient2d_exact

_SPLITTER = 134217729.0            # 2**27 + 1 (Dekker's split)
_TINY = 2.0 ** -900                # below this a product may have underflowed
_HUGE = 2.0 ** 900                 # above this the split may overflow
_BIG = np.iinfo(np.int64).max


# --------------------------------------------------------------------------
# exact-sign predicates on arrays
# --------------------------------------------------------------------------
def _prod(a, b):
    """a * b and a mask of the entries where it was computed without rounding."""
    x = a * b
    c = _SPLITTER * a
    ahi = c - (c - a)
    alo = a - ahi
    c = _SPLITTER * b
    bhi = c - (c - b)
    blo = b - bhi
    err = alo * blo - (((x - ahi * bhi) - alo * bhi) - ahi * blo)
    ax = np.abs(x)
    ok = (err == 0.0) & (((ax >= _TINY) & (ax <= _HUGE)) | (a == 0.0) | (b == 0.0))
    return x, ok


def _sum(a, b):
    """a + b and a mask of the entries where it was computed without rounding."""
    s = a + b
    bb = s - a
    err = (a - (s - bb)) + (b - bb)
    return s, (err == 0.0) & np.isfinite(s)


def _orient_settle(ax, ay, bx, by, cx, cy):
    """Exact signs for the entries the float filter could not decide."""
    acx, k1 = _sum(ax, -cx)
    bcy, k2 = _sum(by, -cy)
    acy, k3 = _sum(ay, -cy)
    bcx, k4 = _sum(bx, -cx)
    left, k5 = _prod(acx, bcy)
    right, k6 = _prod(acy, bcx)
    exact = k1 & k2 & k3 & k4 & k5 & k6
    out = np.sign(left - right)
    for i in np.flatnonzero(~exact).tolist():
        out[i] = orient2d_exact(ax[i], ay[i], bx[i], by[i], cx[i], cy[i])
    return out


def orient_sign(ax, ay, bx, by, cx, cy):
    """Exact sign (-1.0, 0.0, 1.0) of orient2d for equal-length float arrays."""
    left = (ax - cx) * (by - cy)
    right = (ay - cy) * (bx - cx)
    det = left - right
    out = np.sign(det)
    unsure = ~(np.abs(det) > CCW_BOUND * (np.abs(left) + np.abs(right)))
    if unsure.any():
        u = np.flatnonzero(unsure)
        out[u] = _orient_settle(ax[u], ay[u], bx[u], by[u], cx[u], cy[u])
    return out


def _incircle_settle(ax, ay, bx, by, cx, cy, dx, dy):
    oks = []

    def s(a, b):
        v, ok = _sum(a, b)
        oks.append(ok)
        return v

    def p(a, b):
        v, ok = _prod(a, b)
        oks.append(ok)
        return v

    adx, ady = s(ax, -dx), s(ay, -dy)
    bdx, bdy = s(bx, -dx), s(by, -dy)
    cdx, cdy = s(cx, -dx), s(cy, -dy)
    bc = s(p(bdx, cdy), -p(cdx, bdy))
    ca = s(p(cdx, ady), -p(adx, cdy))
    ab = s(p(adx, bdy), -p(bdx, ady))
    alift = s(p(adx, adx), p(ady, ady))
    blift = s(p(bdx, bdx), p(bdy, bdy))
    clift = s(p(cdx, cdx), p(cdy, cdy))
    det = s(s(p(alift, bc), p(blift, ca)), p(clift, ab))
    exact = np.logical_and.reduce(oks)
    out = np.sign(det)
    for i in np.flatnonzero(~exact).tolist():
        out[i] = incircle_exact(ax[i], ay[i], bx[i], by[i], cx[i], cy[i], dx[i], dy[i])
    return out


def claim_flips(corner, opposite, claim, dedup):
    """Non-conflicting flips among the edges facing `corner` (opposite
    corners `opposite`): each edge claims its two triangles with its id (the
    smaller corner, ``np.minimum.at``); an edge that holds both wins.  An edge
    listed from both sides is kept once.  `claim` (per triangle, _BIG when
    free) is left free again; `dedup` (per corner) is scratch.  Returns
    (winner rows, loser rows, triangles of `corner`, triangles of `opposite`)."""
    eid = np.minimum(corner, opposite)
    t = corner // 3
    u = opposite // 3
    np.minimum.at(claim, t, eid)
    np.minimum.at(claim, u, eid)
    win = (claim[t] == eid) & (claim[u] == eid)
    claim[t] = _BIG
    claim[u] = _BIG
    w = np.flatnonzero(win)
    dedup[eid[w]] = w
    w = w[dedup[eid[w]] == w]
    return w, np.flatnonzero(~win), t, u


def incircle_sign(ax, ay, bx, by, cx, cy, dx, dy):
    """Exact sign of incircle(a, b, c, d) (> 0: d strictly inside the circle
    through counter-clockwise a, b, c) for equal-length float arrays."""
    adx = ax - dx
    ady = ay - dy
    bdx = bx - dx
    bdy = by - dy
    cdx = cx - dx
    cdy = cy - dy
    bc1 = bdx * cdy
    bc2 = cdx * bdy
    ca1 = cdx * ady
    ca2 = adx * cdy
    ab1 = adx * bdy
    ab2 = bdx * ady
    alift = adx * adx + ady * ady
    blift = bdx * bdx + bdy * bdy
    clift = cdx * cdx + cdy * cdy
    det = alift * (bc1 - bc2) + blift * (ca1 - ca2) + clift * (ab1 - ab2)
    permanent = ((np.abs(bc1) + np.abs(bc2)) * alift + (np.abs(ca1) + np.abs(ca2)) * blift
                 + (np.abs(ab1) + np.abs(ab2)) * clift)
    out = np.sign(det)
    unsure = ~(np.abs(det) > INCIRCLE_BOUND * permanent)
    if unsure.any():
        u = np.flatnonzero(unsure)
        out[u] = _incircle_settle(ax[u], ay[u], bx[u], by[u], cx[u], cy[u], dx[u], dy[u])
    return out


# --------------------------------------------------------------------------
# convex hull
# --------------------------------------------------------------------------
def _hull_scan(X, Y, cand):
    """Strictly convex hull (counter-clockwise, from the lexicographically
    smallest point) of the points `cand` by Andrew's monotone chain with exact
    orientation; the slow but sure path behind the vectorised quickhull."""
    from .predicates import orient2d
    pts = sorted(set(int(i) for i in cand), key=lambda i: (X[i], Y[i]))

    def chain(seq):
        out = []
        for i in seq:
            while len(out) >= 2 and orient2d(X[out[-2]], Y[out[-2]], X[out[-1]], Y[out[-1]],
                                             X[i], Y[i]) <= 0:
                out.pop()
            out.append(i)
        return out

    lower = chain(pts)
    upper = chain(pts[::-1])
    return np.array(lower[:-1] + upper[:-1], dtype=np.int64)


def convex_hull(X, Y):
    """Indices of the strictly convex hull vertices of the points (X, Y),
    counter-clockwise, starting at the lexicographically smallest point.
    Fewer than three vertices means every point is collinear."""
    n = len(X)
    lex = np.lexsort((Y, X))
    lo, hi = int(lex[0]), int(lex[-1])
    if lo == hi:
        return np.array([lo], dtype=np.int64)
    allp = np.arange(n, dtype=np.int64)
    o = orient_sign(np.full(n, X[lo]), np.full(n, Y[lo]), np.full(n, X[hi]), np.full(n, Y[hi]),
                    X, Y)
    cp = np.flatnonzero(o != 0)
    ce = (o[cp] > 0).astype(np.int64)          # 0: below lo->hi, 1: above
    ea = np.array([lo, hi], dtype=np.int64)
    eb = np.array([hi, lo], dtype=np.int64)
    found = [np.array([lo, hi], dtype=np.int64)]
    lower_mask = np.zeros(n, dtype=bool)
    lower_mask[cp[ce == 0]] = True
    del allp
    while len(cp):
        a = ea[ce]
        b = eb[ce]
        cross = (X[b] - X[a]) * (Y[cp] - Y[a]) - (Y[b] - Y[a]) * (X[cp] - X[a])
        order = np.lexsort((cross, ce))
        ces = ce[order]
        first = np.ones(len(order), dtype=bool)
        first[1:] = ces[1:] != ces[:-1]
        far = order[first]
        e_ids = ce[far]
        r = cp[far]
        found.append(r)
        jmap = np.full(len(ea), -1, dtype=np.int64)
        jmap[e_ids] = np.arange(len(e_ids))
        j = jmap[ce]
        rr = r[j]
        o1 = orient_sign(X[a], Y[a], X[rr], Y[rr], X[cp], Y[cp])
        out1 = o1 < 0
        rest = np.flatnonzero(~out1)
        out2 = np.zeros(len(cp), dtype=bool)
        if len(rest):
            o2 = orient_sign(X[rr[rest]], Y[rr[rest]], X[b[rest]], Y[b[rest]],
                             X[cp[rest]], Y[cp[rest]])
            out2[rest] = o2 < 0
        k = len(e_ids)
        na = np.empty(2 * k, dtype=np.int64)
        nb = np.empty(2 * k, dtype=np.int64)
        na[0::2] = ea[e_ids]
        na[1::2] = r
        nb[0::2] = r
        nb[1::2] = eb[e_ids]
        keep = out1 | out2
        ce = (2 * j + out2.astype(np.int64))[keep]
        cp = cp[keep]
        ea, eb = na, nb
    verts = np.unique(np.concatenate(found))
    if len(verts) < 3:
        return verts
    lower = verts[lower_mask[verts]]
    upper = verts[~lower_mask[verts] & (verts != lo) & (verts != hi)]
    lower = lower[np.lexsort((Y[lower], X[lower]))]
    upper = upper[np.lexsort((-Y[upper], -X[upper]))]
    hull = np.concatenate(([lo], lower, [hi], upper)).astype(np.int64)
    # exact strict-convexity check; a float near-tie in "farthest" can
    # leave a non-vertex behind, then redo the small set exactly
    prev = np.roll(hull, 1)
    nxt = np.roll(hull, -1)
    turn = orient_sign(X[prev], Y[prev], X[hull], Y[hull], X[nxt], Y[nxt])
    if not (turn > 0).all():
        hull = _hull_scan(X, Y, hull)
    return hull


# --------------------------------------------------------------------------
# the builder
# --------------------------------------------------------------------------
class _Builder:
    def __init__(self, X, Y, keys):
        self.X = X
        self.Y = Y
        n = len(X)
        cap = 2 * n + 4
        self.cap = cap
        self.V = np.full(3 * cap, -3, dtype=np.int64)
        self.N = np.full(3 * cap, -1, dtype=np.int64)
        self.remap = np.arange(3 * cap, dtype=np.int64)
        self.owner = np.zeros(cap, dtype=np.int64)
        self.best = np.full(cap, _BIG, dtype=np.int64)
        self.claim = np.full(cap, _BIG, dtype=np.int64)
        self.changed = np.zeros(cap, dtype=bool)
        self.child = np.zeros(cap, dtype=np.int64)
        self.pair_p = np.zeros(cap, dtype=np.int64)
        self.pair_q = np.zeros(cap, dtype=np.int64)
        self.pair_t = np.zeros(cap, dtype=np.int64)
        self.pair_u = np.zeros(cap, dtype=np.int64)
        self.dedup = np.zeros(3 * cap, dtype=np.int64)
        self.ntri = 0
        self.keys = keys                 # random insertion priority of each point
        self.flips = 0
        self.rounds = 0
        self.flip_rounds = 0
        self.pending = np.zeros(0, dtype=np.int64)

    # ---------------------------------------------------------- geometry
    def orient(self, a, b, c):
        X, Y = self.X, self.Y
        return orient_sign(X[a], Y[a], X[b], Y[b], X[c], Y[c])

    def strictly_inside(self, t, q):
        V = self.V
        b = 3 * t
        v0, v1, v2 = V[b], V[b + 1], V[b + 2]
        return (self.orient(v0, v1, q) > 0) & (self.orient(v1, v2, q) > 0) \
            & (self.orient(v2, v0, q) > 0)

    # -------------------------------------------------------------- start
    def start(self, hull, rest):
        """Fan of the hull polygon from hull[0], ghosts, and the waiting points."""
        V, N = self.V, self.N
        h = len(hull)
        f = h - 2
        k = np.arange(1, h - 1)
        tri = np.empty((f, 3), dtype=np.int64)
        tri[:, 0] = hull[0]
        tri[:, 1] = hull[k]
        tri[:, 2] = hull[k + 1]
        nxt = np.roll(hull, -1)
        ghosts = np.empty((h, 3), dtype=np.int64)
        ghosts[:, 0] = nxt
        ghosts[:, 1] = hull
        ghosts[:, 2] = GHOST
        allt = np.concatenate((tri, ghosts))
        T = len(allt)
        V[:3 * T] = allt.ravel()
        # neighbours by matching directed edges u->v with v->u
        n = len(self.X)
        flat = allt.ravel()
        key_v = np.where(flat < 0, n, flat)
        corners = np.arange(3 * T)
        base = corners - corners % 3
        u = key_v[base + (corners % 3 + 1) % 3]
        v = key_v[base + (corners % 3 + 2) % 3]
        key = u * (n + 1) + v
        rkey = v * (n + 1) + u
        order = np.argsort(key)
        pos = np.searchsorted(key[order], rkey)
        N[:3 * T] = order[pos]
        self.ntri = T
        # locate the other points by angular binary search around hull[0]
        m = len(rest)
        lo = np.ones(m, dtype=np.int64)
        hi = np.full(m, h - 1, dtype=np.int64)
        apex = np.full(m, hull[0], dtype=np.int64)
        while True:
            open_ = np.flatnonzero(hi - lo > 1)
            if not len(open_):
                break
            mid = (lo[open_] + hi[open_]) // 2
            o = self.orient(apex[open_], hull[mid], rest[open_])
            left = o >= 0
            lo[open_[left]] = mid[left]
            hi[open_[~left]] = mid[~left]
        wt = lo - 1
        self.wq = rest
        self.wt = wt
        self.wk = self.keys[rest]
        self.ws = self.strictly_inside(wt, rest)
        # the fan is legalised together with the first insertions
        self.pending = np.arange(3 * f, dtype=np.int64)

    # -------------------------------------------------------------- rounds
    def insert_round(self):
        ws = self.ws
        cand = np.flatnonzero(ws)
        if not len(cand):
            return False
        self.rounds += 1
        wt, wq = self.wt, self.wq
        tt = wt[cand]
        # one point per triangle: the waiting one with the smallest random key
        key = self.wk[cand]
        best = self.best
        np.minimum.at(best, tt, key)
        chosen = cand[best[tt] == key]
        best[tt] = _BIG
        t = wt[chosen]
        p = wq[chosen]
        k = len(t)
        V, N, rm = self.V, self.N, self.remap
        b = 3 * t
        v0 = V[b]
        v1 = V[b + 1]
        v2 = V[b + 2]
        n0 = N[b]
        n1 = N[b + 1]
        n2 = N[b + 2]
        t1 = self.ntri + np.arange(k, dtype=np.int64)
        t2 = t1 + k
        self.ntri += 2 * k
        c1 = 3 * t1
        c2 = 3 * t2
        rm[b] = c1 + 2
        rm[b + 1] = c2 + 2
        m0 = rm[n0]
        m1 = rm[n1]
        m2 = rm[n2]
        rm[b] = b
        rm[b + 1] = b + 1
        V[b + 2] = p
        V[c1] = v1
        V[c1 + 1] = v2
        V[c1 + 2] = p
        V[c2] = v2
        V[c2 + 1] = v0
        V[c2 + 2] = p
        N[b] = c1 + 1
        N[c1 + 1] = b
        N[b + 1] = c2
        N[c2] = b + 1
        N[c1] = c2 + 1
        N[c2 + 1] = c1
        N[b + 2] = m2
        N[m2] = b + 2
        N[c1 + 2] = m0
        N[m0] = c1 + 2
        N[c2 + 2] = m1
        N[m1] = c2 + 2
        # waiting points of the split triangles move to a child
        keep = np.ones(len(wq), dtype=bool)
        keep[chosen] = False
        wq = wq[keep]
        wt = wt[keep]
        ws = ws[keep]
        self.wk = self.wk[keep]
        changed = self.changed
        changed[t] = True
        self.child[t] = t1
        mv = np.flatnonzero(changed[wt])
        pend = self.pending
        if len(pend):                      # suspects in split triangles are re-added below
            pend = pend[~changed[pend // 3]]
        changed[t] = False
        if len(mv):
            tt = wt[mv]
            q = wq[mv]
            bb = 3 * tt
            pp = V[bb + 2]
            w0 = V[bb]
            w1 = V[bb + 1]
            ch1 = self.child[tt]
            d0 = self.orient(pp, w0, q)
            d1 = self.orient(pp, w1, q)
            in0 = (d0 >= 0) & (d1 <= 0)
            strict = (d0 > 0) & (d1 < 0)
            newt = tt.copy()
            r = np.flatnonzero(~in0)
            if len(r):
                w2 = V[3 * ch1[r] + 1]
                d2 = self.orient(pp[r], w2, q[r])
                in1 = (d1[r] >= 0) & (d2 <= 0)
                newt[r] = np.where(in1, ch1[r], ch1[r] + k)
                strict[r] = np.where(in1, (d1[r] > 0) & (d2 < 0), (d2 > 0) & (d0[r] < 0))
            wasstrict = ws[mv]
            ns = strict & wasstrict
            redo = np.flatnonzero(~wasstrict)
            if len(redo):
                ns[redo] = self.strictly_inside(newt[redo], q[redo])
            wt[mv] = newt
            ws[mv] = ns
        self.wq, self.wt, self.ws = wq, wt, ws
        self.pending = self.legalize(np.concatenate((pend, b + 2, c1 + 2, c2 + 2)),
                                     self.flip_limit)
        return True

    def run(self):
        while True:
            if self.insert_round():
                continue
            if not len(self.pending):
                return
            self.pending = self.legalize(self.pending, None)

    def legalize(self, sus, limit):
        """Lawson flips from the suspect corners `sus`; stops after `limit`
        flip rounds (None: until no suspect is illegal) and returns the
        corners still to check."""
        V, N, X, Y = self.V, self.N, self.X, self.Y
        claim, changed, rm, dedup = self.claim, self.changed, self.remap, self.dedup
        done = 0
        while len(sus):
            if limit is not None and done >= limit:
                return sus
            done += 1
            self.flip_rounds += 1
            oc = N[sus]
            k3 = sus % 3
            base = sus - k3
            ca = base + (k3 + 1) % 3
            cb = base + (k3 + 2) % 3
            p = V[sus]
            a = V[ca]
            b = V[cb]
            q = V[oc]
            real = (p >= 0) & (a >= 0) & (b >= 0) & (q >= 0)
            if not real.all():
                r = np.flatnonzero(real)
                sus, oc, ca, cb, p, a, b, q = (v[r] for v in (sus, oc, ca, cb, p, a, b, q))
            if not len(sus):
                break
            ic = incircle_sign(X[p], Y[p], X[a], Y[a], X[b], Y[b], X[q], Y[q])
            bad = np.flatnonzero(ic > 0)
            if not len(bad):
                break
            sus, oc, ca, cb, p, a, b, q = (v[bad] for v in (sus, oc, ca, cb, p, a, b, q))
            w, lose, t, u = claim_flips(sus, oc, claim, dedup)
            c, oc, ca, cb, p, a, b, q, t, u = (v[w] for v in (sus, oc, ca, cb, p, a, b, q, t, u))
            self.flips += len(w)
            oc3 = oc % 3
            obase = oc - oc3
            oa = obase + (oc3 + 2) % 3
            ob = obase + (oc3 + 1) % 3
            n_bp = N[ca]
            n_pa = N[cb]
            n_aq = N[ob]
            n_qb = N[oa]
            bt = 3 * t
            bu = 3 * u
            rm[cb] = bt + 2
            rm[ca] = bu
            rm[ob] = bt
            rm[oa] = bu + 2
            m_aq = rm[n_aq]
            m_pa = rm[n_pa]
            m_bp = rm[n_bp]
            m_qb = rm[n_qb]
            rm[cb] = cb
            rm[ca] = ca
            rm[ob] = ob
            rm[oa] = oa
            V[bt] = p
            V[bt + 1] = a
            V[bt + 2] = q
            V[bu] = q
            V[bu + 1] = b
            V[bu + 2] = p
            N[bt] = m_aq
            N[m_aq] = bt
            N[bt + 2] = m_pa
            N[m_pa] = bt + 2
            N[bu] = m_bp
            N[m_bp] = bu
            N[bu + 2] = m_qb
            N[m_qb] = bu + 2
            N[bt + 1] = bu + 1
            N[bu + 1] = bt + 1
            # waiting points of flipped pairs: which side of the new diagonal q-p
            changed[t] = True
            changed[u] = True
            self.pair_p[t] = p
            self.pair_p[u] = p
            self.pair_q[t] = q
            self.pair_q[u] = q
            self.pair_t[t] = t
            self.pair_t[u] = t
            self.pair_u[t] = u
            self.pair_u[u] = u
            wt = self.wt
            if len(wt):
                mv = np.flatnonzero(changed[wt])
                if len(mv):
                    s = wt[mv]
                    x = self.wq[mv]
                    o = self.orient(self.pair_q[s], self.pair_p[s], x)
                    self.wt[mv] = np.where(o >= 0, self.pair_t[s], self.pair_u[s])
                    self.ws[mv] &= o != 0
                    redo = mv[~self.ws[mv] & (o != 0)]
                    if len(redo):
                        self.ws[redo] = self.strictly_inside(self.wt[redo], self.wq[redo])
            # next suspects: losers untouched by this round's flips, and the
            # four outer edges of every flipped pair
            ls = sus[lose]
            if len(ls):
                lt = N[ls] // 3       # pointers of untouched corners did not change
                ls = ls[~(changed[ls // 3] | changed[lt])]
            changed[t] = False
            changed[u] = False
            sus = np.concatenate((ls, bt, bt + 2, bu, bu + 2))
        return sus[:0]


def _to_mesh(xs, ys, idx, V, N, ntri):
    n_all = len(xs)
    T = ntri
    Vl = V[:3 * T]
    gv = np.where(Vl >= 0, idx[np.maximum(Vl, 0)], GHOST)
    mesh = Mesh(list(xs), list(ys))
    mesh.tv = gv.tolist()
    mesh.tn = N[:3 * T].tolist()
    mesh.tc = [0] * (3 * T)
    mesh.mark = [0] * T
    real = Vl >= 0
    vt = np.full(n_all, -1, dtype=np.int64)
    corners = np.flatnonzero(real)
    vt[gv[corners]] = corners
    mesh.vt = vt.tolist()
    rt = real.reshape(-1, 3).all(axis=1)
    mesh.last = int(np.argmax(rt))
    return mesh


# above this share of points on the convex hull the sequential builder is faster
HULL_SHARE_LIMIT = 0.25


def bulk_delaunay(xs, ys, indices, seed=0, stats=None, flip_limit=4):
    """Delaunay triangulation of the distinct points `indices` of the
    coordinate sequences xs, ys, built by array rounds.  Returns a ghost-closed
    Mesh over all of xs, ys, like :func:`engine.delaunay.build_delaunay`.
    Raises ValueError when the points are collinear.  When `stats` is a dict
    it receives counts (rounds, flips, points inserted sequentially)."""
    idx = np.asarray(indices, dtype=np.int64).ravel()
    ax = np.asarray(xs, dtype=np.float64)
    ay = np.asarray(ys, dtype=np.float64)
    X = np.ascontiguousarray(ax[idx])
    Y = np.ascontiguousarray(ay[idx])
    n = len(idx)
    if n < 3:
        raise ValueError("need at least three distinct, non-collinear points")
    # work on the points relabelled along a Hilbert curve: neighbouring
    # entries of every array then touch nearby memory
    order = np.argsort(hilbert_keys(np.column_stack((X, Y))), kind="stable")
    idx = idx[order]
    X = np.ascontiguousarray(X[order])
    Y = np.ascontiguousarray(Y[order])
    hull = convex_hull(X, Y)
    if len(hull) < 3:
        raise ValueError("need at least three distinct, non-collinear points")
    if len(hull) > HULL_SHARE_LIMIT * n:
        # mostly points in convex position (an outline of a convex shape):
        # the fan of the hull would have to be flipped almost entirely, which
        # one-at-a-time insertion avoids
        from .delaunay import build_delaunay
        return build_delaunay(xs, ys, indices, seed=seed, method="sequential")
    on_hull = np.zeros(n, dtype=bool)
    on_hull[hull] = True
    rest = np.flatnonzero(~on_hull)
    b = _Builder(X, Y, np.random.default_rng(seed).permutation(n).astype(np.int64))
    b.start(hull, rest)
    b.flip_limit = flip_limit
    b.run()
    # points left on edges: sequential insertion in Hilbert order (b.wq is
    # sorted), each walk starting from the slot the point was last seen in
    deferred = idx[b.wq].tolist()
    hints = b.wt.tolist()
    mesh = _to_mesh(xs, ys, idx, b.V, b.N, b.ntri)
    x, y = mesh.x, mesh.y
    locate, insert = mesh.locate, mesh.insert_vertex
    for p, t in zip(deferred, hints):
        insert(p, locate(x[p], y[p], t))
    if stats is not None:
        stats.update(rounds=b.rounds, flips=b.flips, flip_rounds=b.flip_rounds,
                     sequential=len(deferred), hull=len(hull))
    return mesh
