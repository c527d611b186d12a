"""Delaunay refinement in array rounds: the batched path behind
:func:`engine.refine` (``method="batched"``).

It follows the rules of the sequential refiner in :mod:`engine.refine`
(Ruppert's algorithm with Shewchuk's lenses, concentric shells and
small-angle rules, Ungor's off-centers) but applies them to many bad
triangles at once, each round being a fixed number of whole-array (numpy)
operations instead of one Python-level insertion per point.

Methods (published; the names are theirs):

* Delaunay refinement: J. Ruppert, "A Delaunay refinement algorithm for
  quality 2-dimensional mesh generation", J. Algorithms 18(3), 1995;
  J. R. Shewchuk, "Delaunay refinement algorithms for triangular mesh
  generation", Comput. Geom. 22(1-3), 2002 (diametral lenses, concentric
  shells, triangles inside small input angles left alone); A. Ungor,
  "Off-centers: a new type of Steiner points for computing size-optimal
  quality-guaranteed Delaunay triangulations", LATIN 2004 / Comput. Geom.
  42(2), 2009.
* Parallel Delaunay refinement by independent cavities: A. N. Chernikov and
  N. P. Chrisochoides, "Generalized Delaunay mesh refinement: from scalar to
  parallel", Proc. 15th International Meshing Roundtable, 2006, and "Three-
  dimensional Delaunay refinement for multi-core processors", Proc. ICS 2008:
  points whose Bowyer-Watson cavities share no triangle can be inserted at
  the same time.  D. A. Spielman, S.-H. Teng and A. Ungor, "Parallel Delaunay
  refinement: algorithms and analyses", IJCGA 17(1), 2007: in each round
  every bad triangle proposes its point and an independent subset of the
  proposals is inserted, the worst triangles winning conflicts.
* Cavities and their filling: A. Bowyer and D. F. Watson, The Computer
  Journal 24(2), 1981, restricted to triangles reached without crossing a
  constrained edge (constrained Delaunay insertion).  Edges between the
  cavities of one round are made locally Delaunay again by rounds of
  non-conflicting Lawson flips (C. L. Lawson, 1977) claimed with
  ``np.minimum.at``, as in :mod:`engine.bulk_delaunay`.

One round
---------
1. The triangles changed by the last round (and those still waiting) are
   measured at once: sin^2 of the smallest angle, area, longest edge; each
   constrained or border edge is tested against the apex of the triangle
   beside it (lens or circle).
2. Every bad triangle computes its off-center or circumcenter; a vectorised
   straight-line walk from its centroid finds the triangle holding the point
   or the segment in the way (which is then split instead, subject to the
   small-angle rules).
3. Cavities of all proposed points and of all segment splits (midpoint or
   concentric shell) grow in lock-step, one layer of exact incircle tests per
   step.  A point whose cavity is bounded by a segment it encroaches upon is
   dropped and that segment split instead.  Every cavity is checked exactly
   to be star-shaped from its point.
   Before the walk, a cheap cut keeps the proposals cheap: a bad triangle
   goes on only when it wins the claims on itself and its three neighbours
   (an independent set at distance two in the dual graph); the others wait
   for a later round, which saves walking and growing cavities that would
   lose anyway.
4. Each proposal claims the triangles of its cavity with its priority:
   segment splits first, then skinny triangles, then triangles that are only
   too large, at random within each class (with a smooth order, such as
   worst first, the local minima that win are rare; random priorities make
   about one proposal in the size of a cavity win).  Claims are repeated a
   few times as in Luby's maximal independent set algorithm (M. Luby, "A
   simple parallel algorithm for the maximal independent set problem", SIAM
   J. Comput. 15(4), 1986): winners take their cavities, proposals touching
   them drop out, the rest claim again.  All winners are filled as fans at
   once (old-corner to new-corner maps keep the neighbour pointers of
   touching cavities right), then Lawson flips on the cavity borders restore
   the constrained Delaunay property.  The worst-first order of the
   sequential refiner is thus kept only between the classes; the number of
   points stays about the same (see tests/test_batch_refine.py).

Every orientation and incircle decision is an exact sign
(:func:`engine.bulk_delaunay.orient_sign` / ``incircle_sign``: float filter,
then error-free transformations, then exact integers for the few left).

Proposals the rounds cannot handle (a cavity that is not star-shaped, a walk
that fails) are left to the sequential refiner at the end, which then works
on the same mesh and keeps every guarantee.

The sequential refiner also starts the work (``_Refiner.run(warm_up=True)``):
the first points in long slivers (a finely divided outline triangulated
without interior points) have cavities of hundreds of triangles, and a round
inserts about one point per cavity-sized patch of bad triangles; once the
cavities hold fewer than ``WARM_UP_CAVITY`` triangles on average, the rounds
take over.
"""

import math

import numpy as np

from .bulk_delaunay import claim_flips, incircle_sign, orient_sign
from .mesh import DEAD
from .predicates import point_on_left
from .triangulation import Triangulation

_BIG = np.iinfo(np.int64).max
_NXT = np.array([1, 2, 0], dtype=np.int64)
_PRV = np.array([2, 0, 1], dtype=np.int64)
_BFS_LEVELS = 400          # a cavity deeper than this goes to the sequential tail
_SQRT_HALF = 0.5 * math.sqrt(2.0)


def _nxt(c):
    return c + np.where(c % 3 == 2, -2, 1)


def _prv(c):
    return c + np.where(c % 3 == 0, 2, -1)


def supports(keep_boundary=False, size_growth=None, fixed_segments=None, smoothing=False):
    """True when the batched rounds support these options (the others run
    on the sequential refiner)."""
    return (not keep_boundary and size_growth is None and not smoothing
            and (fixed_segments is None or len(fixed_segments) == 0))


def estimated_triangles(tri, max_area=None, max_edge=None):
    """A rough size of the refined mesh, used to choose the path."""
    est = 3.0 * len(tri.triangles)
    area = abs(tri.area())
    if max_area is not None:
        est = max(est, 2.0 * area / max_area)
    if max_edge is not None:
        est = max(est, 2.0 * area / (0.4330127018922193 * max_edge * max_edge))
    return est


def _without_free_slots(mesh):
    """Corner arrays (vertex, facing corner, constrained flag) of the live
    triangles of `mesh`, renumbered without its free slots (which the
    sequential refiner may leave)."""
    tv = np.asarray(mesh.tv, dtype=np.int64)
    tn = np.asarray(mesh.tn, dtype=np.int64)
    tc = np.asarray(mesh.tc, dtype=np.int64)
    live = tv.reshape(-1, 3)[:, 0] != DEAD
    if live.all():
        return tv, tn, tc
    new_slot = np.cumsum(live) - 1
    keep = np.repeat(live, 3)
    tv, tn, tc = tv[keep], tn[keep], tc[keep]
    tn = np.where(tn >= 0, 3 * new_slot[tn // 3] + tn % 3, tn)
    return tv, tn, tc


class _Rounds:
    """Array state of the refinement: corners V (vertex), N (facing corner
    of the neighbour, -1 on the border), CS (0 for a free edge, else 2 + the
    segment source of a constrained edge), vertex coordinates X, Y, and for
    Steiner points on segments the input endpoints OA, OB of their segment.
    Triangle slots are never freed (every fan has more triangles than its
    cavity), so slots 0 .. ntri-1 are the mesh."""

    def __init__(self, ref):
        self.ref = ref
        mesh = ref.mesh
        self.n0 = ref.n0
        tv, tn, tc = _without_free_slots(mesh)
        T = len(tv) // 3
        nv = len(mesh.x)
        self.nv = nv
        self.ntri = T
        self._alloc_vertices(max(2 * nv, 1024))
        self.X[:nv] = mesh.x
        self.Y[:nv] = mesh.y
        self._alloc_triangles(max(2 * T, 1024))
        self.V[:3 * T] = tv
        self.N[:3 * T] = tn
        # CS: 0 for a free edge, else 2 + the segment source (which may be -1)
        cs = np.zeros(3 * T, dtype=np.int64)
        con = np.flatnonzero(tc)
        if len(con):
            info = mesh.constraint_info
            u = tv[_nxt(con)]
            v = tv[_prv(con)]
            lo = np.minimum(u, v).tolist()
            hi = np.maximum(u, v).tolist()
            cs[con] = [info[(a, b)][0] + 2 if (a, b) in info else 1 for a, b in zip(lo, hi)]
        self.CS[:3 * T] = cs
        for w, (a, b) in ref.seg_origin.items():
            self.OA[w] = a
            self.OB[w] = b
        small = np.zeros(self.n0 + 1, dtype=bool)
        if ref.small_apex:
            small[list(ref.small_apex)] = True
        self.small = small
        self.frozen = set(ref.unsplittable)
        self.frozen_keys = self._keys_of(self.frozen)
        self.sin2 = ref.sin2_bound
        self.area2 = ref.area2_limit
        self.edge2 = ref.edge2_limit
        self.enc_cos2 = ref.enc_cos2
        self.off = ref.off_centers
        self.off_factor = ref.off_factor
        self.min_len = ref.min_len
        self.stats = ref.stats
        self.tail = []
        self.claim_iterations = 4
        self.prefilter = True
        self.rng = np.random.default_rng(20240607)
        self.rounds = 0
        self.flips = 0
        self.flip_rounds = 0

    # ------------------------------------------------------------ storage
    def _alloc_vertices(self, cap):
        old = getattr(self, "X", None)
        X = np.zeros(cap)
        Y = np.zeros(cap)
        OA = np.full(cap, -1, dtype=np.int64)
        OB = np.full(cap, -1, dtype=np.int64)
        if old is not None:
            n = self.nv
            X[:n] = self.X[:n]
            Y[:n] = self.Y[:n]
            OA[:n] = self.OA[:n]
            OB[:n] = self.OB[:n]
        self.X, self.Y, self.OA, self.OB = X, Y, OA, OB
        self.vcap = cap

    def _alloc_triangles(self, cap):
        old = getattr(self, "V", None)
        V = np.full(3 * cap, DEAD, dtype=np.int64)
        N = np.full(3 * cap, -1, dtype=np.int64)
        CS = np.zeros(3 * cap, dtype=np.int64)
        if old is not None:
            m = 3 * self.ntri
            V[:m] = self.V[:m]
            N[:m] = self.N[:m]
            CS[:m] = self.CS[:m]
        self.V, self.N, self.CS = V, N, CS
        self.rm = np.arange(3 * cap, dtype=np.int64)
        self.dedup = np.zeros(3 * cap, dtype=np.int64)
        self.claim = np.full(cap, _BIG, dtype=np.int64)
        self.changed = np.zeros(cap, dtype=bool)
        self.owned = np.zeros(cap, dtype=bool)
        self.tcap = cap

    def _ensure(self, more_vertices, more_triangles):
        if self.nv + more_vertices > self.vcap:
            self._alloc_vertices(max(2 * self.vcap, self.nv + more_vertices + 16))
        if self.ntri + more_triangles > self.tcap:
            self._alloc_triangles(max(2 * self.tcap, self.ntri + more_triangles + 16))

    def _keys_of(self, pairs):
        if not pairs:
            return np.zeros(0, dtype=np.int64)
        arr = np.array(sorted(pairs), dtype=np.int64)
        return np.sort(arr[:, 0] * (1 << 31) + arr[:, 1])

    # ------------------------------------------------------------ helpers
    def _blocking(self, c):
        return (self.N[c] < 0) | (self.CS[c] > 0)

    def _encroach(self, u, v, qx, qy):
        """Point q encroaches upon edge u-v (lens or circle, as the sequential path)."""
        X, Y = self.X, self.Y
        ax = X[u] - qx
        ay = Y[u] - qy
        bx = X[v] - qx
        by = Y[v] - qy
        dot = ax * bx + ay * by
        return (dot < 0.0) & (dot * dot >= self.enc_cos2 * (ax * ax + ay * ay)
                              * (bx * bx + by * by))

    def _origin(self, u, v):
        OA, OB, n0 = self.OA, self.OB, self.n0
        oa = u.copy()
        ob = v.copy()
        su = u >= n0
        sv = (~su) & (v >= n0)
        w = np.where(su, u, v)
        has = (su | sv) & (OA[w] >= 0)
        oa[has] = OA[w[has]]
        ob[has] = OB[w[has]]
        return oa, ob

    def _is_small(self, o):
        n0 = self.n0
        return (o < n0) & self.small[np.minimum(o, n0)]

    def _split_position(self, u, v):
        """Split points of pieces u-v (shells when exactly one end is an
        input vertex, else midpoints) and the shorter piece's length."""
        X, Y, n0 = self.X, self.Y, self.n0
        dx = X[v] - X[u]
        dy = Y[v] - Y[u]
        length = np.hypot(dx, dy)
        px = X[u] + 0.5 * dx
        py = Y[u] + 0.5 * dy
        shorter = 0.5 * length
        shell = (u < n0) != (v < n0)
        if shell.any():
            s = np.flatnonzero(shell)
            uu, vv, L = u[s], v[s], length[s]
            a = np.where(uu < n0, uu, vv)
            b = np.where(uu < n0, vv, uu)
            m, e = np.frexp(L / 2.0)
            d = np.where(m >= _SQRT_HALF, np.ldexp(1.0, e), np.ldexp(1.0, e - 1))
            d = np.where(d > 2.0 * L / 3.0, 0.5 * d, np.where(d < L / 3.0, 2.0 * d, d))
            t = d / L
            px[s] = X[a] + t * (X[b] - X[a])
            py[s] = Y[a] + t * (Y[b] - Y[a])
            shorter[s] = np.minimum(d, L - d)
        return px, py, shorter

    def _edge_key(self, u, v):
        return np.minimum(u, v) * (1 << 31) + np.maximum(u, v)

    def _may_split(self, u, v, lmin):
        """Vectorised _Refiner._may_split; lmin NaN means None."""
        ok = np.ones(len(u), dtype=bool)
        if len(self.frozen_keys):
            ok &= ~np.isin(self._edge_key(u, v), self.frozen_keys)
        has = ~np.isnan(lmin)
        if has.any():
            h = np.flatnonzero(has & ok)
            if len(h):
                oa, ob = self._origin(u[h], v[h])
                cl = self._is_small(oa) | self._is_small(ob)
                if cl.any():
                    hc = h[cl]
                    _, _, shorter = self._split_position(u[hc], v[hc])
                    rej = shorter < lmin[hc]
                    ok[hc[rej]] = False
                    self.stats["rejected_near_small_angle"] += int(rej.sum())
        return ok

    def _freeze(self, keys_uv):
        new = [k for k in keys_uv if k not in self.frozen]
        if new:
            self.frozen.update(new)
            self.stats["frozen_segments"] += len(new)
            self.frozen_keys = self._keys_of(self.frozen)

    # ------------------------------------------------------------ the walk
    def _walk(self, t, px, py):
        """Straight-line walk from the centroid of t towards p (vectorised
        _Refiner._walk).  Returns (kind, where): kind 0 = p in triangle
        `where`, 1 = a constrained or border edge is in the way (`where` is
        the corner facing it), 2 = failed."""
        V, N, X, Y = self.V, self.N, self.X, self.Y
        m = len(t)
        kind = np.full(m, 2, dtype=np.int64)
        where = np.full(m, -1, dtype=np.int64)
        b = 3 * t
        vv = [V[b], V[b + 1], V[b + 2]]
        sx = (X[vv[0]] + X[vv[1]] + X[vv[2]]) / 3.0
        sy = (Y[vv[0]] + Y[vv[1]] + Y[vv[2]]) / 3.0
        undecided = np.ones(m, dtype=bool)
        inside = np.ones(m, dtype=bool)
        for k in range(3):
            e1 = vv[(k + 1) % 3]
            e2 = vv[(k + 2) % 3]
            u = np.flatnonzero(undecided)
            if not len(u):
                break
            os_ = orient_sign(X[e1[u]], Y[e1[u]], X[e2[u]], Y[e2[u]], sx[u], sy[u])
            fail = u[os_ <= 0]
            undecided[fail] = False
            u = u[os_ > 0]
            o = orient_sign(X[e1[u]], Y[e1[u]], X[e2[u]], Y[e2[u]], px[u], py[u])
            inside[u[o < 0]] = False
            z = u[o == 0]
            if len(z):
                cz = b[z] + k
                blk = z[self._blocking(cz)]
                kind[blk] = 1
                where[blk] = b[blk] + k
                undecided[blk] = False
        ins = np.flatnonzero(undecided & inside)
        kind[ins] = 0
        where[ins] = t[ins]
        rest = np.flatnonzero(undecided & ~inside)
        if not len(rest):
            return kind, where
        # the exit edge of t: e1 on the right of s->p (or on it), e2 on its left
        c = np.full(len(rest), -1, dtype=np.int64)
        br = b[rest]
        for k in range(3):
            open_ = np.flatnonzero(c < 0)
            if not len(open_):
                break
            r = rest[open_]
            e1 = vv[(k + 1) % 3][r]
            e2 = vv[(k + 2) % 3][r]
            o1 = orient_sign(sx[r], sy[r], px[r], py[r], X[e1], Y[e1])
            o2 = orient_sign(sx[r], sy[r], px[r], py[r], X[e2], Y[e2])
            hit = (o1 <= 0) & (o2 > 0)
            c[open_[hit]] = br[open_[hit]] + k
        ok = c >= 0
        rest = rest[ok]
        c = c[ok]
        steps = 0
        limit = 4 * self.ntri + 16
        while len(rest) and steps < limit:
            steps += 1
            blk = self._blocking(c)
            if blk.any():
                kind[rest[blk]] = 1
                where[rest[blk]] = c[blk]
                rest = rest[~blk]
                c = c[~blk]
                if not len(rest):
                    break
            oc = N[c]
            o = V[oc]
            d = orient_sign(sx[rest], sy[rest], px[rest], py[rest], X[o], Y[o])
            c2 = np.where(d > 0, _nxt(oc), _prv(oc))
            f1 = V[_nxt(c2)]
            f2 = V[_prv(c2)]
            side = orient_sign(X[f1], Y[f1], X[f2], Y[f2], px[rest], py[rest])
            done_in = (side > 0) | ((side == 0) & ~self._blocking(c2))
            done_cross = (side == 0) & self._blocking(c2)
            kind[rest[done_in]] = 0
            where[rest[done_in]] = oc[done_in] // 3
            kind[rest[done_cross]] = 1
            where[rest[done_cross]] = c2[done_cross]
            go = side < 0
            rest = rest[go]
            c = c2[go]
        return kind, where

    # ------------------------------------------------------------ cavities
    def _cavities(self, px, py, seed_cand, seed_tri, start_cand, start_corner):
        """Bowyer-Watson cavities of the points (px, py) grown in lock-step
        from the seed triangles (already in the cavity) through the start
        corners (edges to test), never across a constrained or border edge.

        Returns (cav_cand, cav_tri, bnd_cand, bnd_corner, blocked, invalid)
        with `blocked` marking boundary corners on constrained or border
        edges and `invalid` the candidates whose search did not finish."""
        V, N, CS, X, Y = self.V, self.N, self.CS, self.X, self.Y
        cav_c = [seed_cand]
        cav_t = [seed_tri]
        bnd_c = []
        bnd_k = []
        bnd_b = []
        fc = start_cand
        fk = start_corner
        levels = 0
        invalid = np.zeros(len(px), dtype=bool)
        while len(fc):
            levels += 1
            if levels > _BFS_LEVELS:
                invalid[fc] = True
                break
            oc = N[fk]
            blk = (oc < 0) | (CS[fk] > 0)
            if blk.any():
                bnd_c.append(fc[blk])
                bnd_k.append(fk[blk])
                bnd_b.append(np.ones(int(blk.sum()), dtype=bool))
                keep = ~blk
                fc, fk, oc = fc[keep], fk[keep], oc[keep]
            if not len(fc):
                break
            u3 = oc - oc % 3
            va = V[u3]
            vb = V[u3 + 1]
            vc = V[u3 + 2]
            ic = incircle_sign(X[va], Y[va], X[vb], Y[vb], X[vc], Y[vc], px[fc], py[fc])
            inn = ic > 0
            out = ~inn
            if out.any():
                bnd_c.append(fc[out])
                bnd_k.append(fk[out])
                bnd_b.append(np.zeros(int(out.sum()), dtype=bool))
            if not inn.any():
                break
            ci = fc[inn]
            oi = oc[inn]
            cav_c.append(ci)
            cav_t.append(oi // 3)
            fc = np.concatenate((ci, ci))
            fk = np.concatenate((_nxt(oi), _prv(oi)))
        cav_c = np.concatenate(cav_c)
        cav_t = np.concatenate(cav_t)
        if bnd_c:
            bc = np.concatenate(bnd_c)
            bk = np.concatenate(bnd_k)
            bb = np.concatenate(bnd_b)
        else:
            bc = bk = np.zeros(0, dtype=np.int64)
            bb = np.zeros(0, dtype=bool)
        return cav_c, cav_t, bc, bk, bb, invalid

    def _check_cavities(self, px, py, cav_c, cav_t, bc, bk, ncand):
        """Candidates whose cavity is not a proper star around their point:
        a triangle reached twice, a border edge not strictly turned towards
        the point, or a vertex starting two border edges."""
        V, X, Y = self.V, self.X, self.Y
        bad = np.zeros(ncand, dtype=bool)
        key = cav_c * self.tcap + cav_t
        order = np.argsort(key, kind="stable")
        sk = key[order]
        dup = np.flatnonzero(sk[1:] == sk[:-1])
        if len(dup):
            bad[cav_c[order[dup]]] = True
        u = V[_nxt(bk)]
        v = V[_prv(bk)]
        o = orient_sign(X[u], Y[u], X[v], Y[v], px[bc], py[bc])
        bad[bc[o <= 0]] = True
        key = bc * (self.nv + 1) + u
        sk = np.sort(key)
        dup = np.flatnonzero(sk[1:] == sk[:-1])
        if len(dup):
            bad[sk[dup] // (self.nv + 1)] = True
        return bad

    # ------------------------------------------------------------ one round
    def run(self, cap):
        """Rounds until no bad triangle and no encroached segment is left,
        or `cap` points are added.  Returns the number of points added."""
        added = 0
        idle = 0
        todo = np.arange(self.ntri, dtype=np.int64)
        while len(todo):
            if added >= cap:
                break
            if idle >= 4:
                # no progress (should not happen): the sequential refiner
                # takes what is left
                self.tail.extend(self._triangle_ids(np.unique(todo)))
                todo = todo[:0]
                break
            todo, n = self._round(todo, cap - added)
            idle = idle + 1 if n == 0 else 0
            added += n
            self.rounds += 1
        self.todo = todo
        return added

    def _round(self, todo, budget):
        V, N, X, Y = self.V, self.N, self.X, self.Y
        mark = self.changed
        mark[todo] = True
        t = np.flatnonzero(mark[:self.ntri])
        mark[t] = False
        b = 3 * t
        i0, i1, i2 = V[b], V[b + 1], V[b + 2]
        ax, ay, bx, by, cx, cy = X[i0], Y[i0], X[i1], Y[i1], X[i2], Y[i2]
        l0 = (bx - cx) ** 2 + (by - cy) ** 2
        l1 = (cx - ax) ** 2 + (cy - ay) ** 2
        l2 = (ax - bx) ** 2 + (ay - by) ** 2
        area2 = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
        lo = np.minimum(np.minimum(l0, l1), l2)
        hi = np.maximum(np.maximum(l0, l1), l2)
        with np.errstate(divide="ignore", invalid="ignore"):
            s2 = area2 * area2 * lo / (l0 * l1 * l2)
        skinny = s2 < self.sin2
        size_bad = (area2 > self.area2) | (hi > self.edge2)
        bad = skinny | size_bad

        # --- segments encroached by the apex of a triangle beside them
        seg_c = []
        seg_l = []
        for k in range(3):
            c = b + k
            blk = self._blocking(c)
            if blk.any():
                cc = c[blk]
                enc = self._encroach(V[_nxt(cc)], V[_prv(cc)], X[V[cc]], Y[V[cc]])
                if enc.any():
                    seg_c.append(cc[enc])
                    seg_l.append(np.full(int(enc.sum()), np.nan))
        encroacher = np.zeros(len(t), dtype=bool)
        if seg_c:
            cc = np.concatenate(seg_c)
            if len(self.frozen_keys):
                # a frozen segment is never split: nothing to wait for
                cc = cc[~np.isin(self._edge_key(V[_nxt(cc)], V[_prv(cc)]), self.frozen_keys)]
                seg_c = [cc]
                seg_l = [np.full(len(cc), np.nan)]
            encroacher[np.isin(t, cc // 3)] = True

        keep_next = encroacher.copy()       # triangles to look at again next round
        sel = np.flatnonzero(bad)
        if self.prefilter and len(sel) > 64:
            # cheap first cut: a bad triangle goes on only when it has the
            # best (random within class) priority among the bad triangles of
            # its edge-neighbourhood; the others wait for a later round
            ts = t[sel]
            cls = np.where(skinny[sel], 0.0, 1.0) + 0.5 * self.rng.random(len(sel))
            pr = np.empty(len(sel), dtype=np.int64)
            pr[np.argsort(cls, kind="stable")] = np.arange(len(sel), dtype=np.int64)
            nb = N[np.concatenate((3 * ts, 3 * ts + 1, 3 * ts + 2))]
            who = np.concatenate((pr, pr, pr, pr))
            tri4 = np.concatenate((ts, np.where(nb >= 0, nb // 3, np.concatenate((ts, ts, ts)))))
            claim, owned = self.claim, self.owned
            idx4 = np.concatenate((np.arange(len(sel)),) * 4)
            go = np.zeros(len(sel), dtype=bool)
            active = np.ones(len(sel), dtype=bool)
            for _ in range(self.claim_iterations):
                np.minimum.at(claim, tri4, who)
                lost = claim[tri4] != who
                claim[tri4] = _BIG
                new = active.copy()
                new[idx4[lost]] = False
                if not new.any():
                    break
                go |= new
                mine = new[idx4]
                owned[tri4[mine]] = True
                active[idx4[owned[tri4]]] = False
                keep = active[idx4]
                if not keep.any():
                    break
                tri4, who, idx4 = tri4[keep], who[keep], idx4[keep]
            owned[t] = False
            owned[np.where(nb >= 0, nb // 3, 0)] = False
            keep_next[sel[~go]] = True
            sel = sel[go]
        point_parts = None
        if len(sel):
            point_parts = self._propose(t, sel, s2, skinny, size_bad, area2, hi, l0, l1, l2,
                                        keep_next, seg_c, seg_l)
        # --- segment split proposals
        seg_parts = None
        if seg_c:
            seg_parts = self._propose_splits(np.concatenate(seg_c), np.concatenate(seg_l))
        # --- claims, fill, flips
        n_added, dirty = self._insert(point_parts, seg_parts, budget)
        nxt = np.concatenate((t[keep_next], dirty))
        return nxt, n_added

    def _propose(self, t, sel, s2, skinny, size_bad, area2, hi, l0, l1, l2, keep_next,
                 seg_c, seg_l):
        """Points of the bad triangles t[sel]; returns the point proposals
        (with their cavities) and adds segment requests to seg_c / seg_l."""
        V, X, Y = self.V, self.X, self.Y
        stats = self.stats
        ts = t[sel]
        b = 3 * ts
        i0, i1, i2 = V[b], V[b + 1], V[b + 2]
        ax, ay, bx, by, cx, cy = X[i0], Y[i0], X[i1], Y[i1], X[i2], Y[i2]
        sk = skinny[sel]
        sb = size_bad[sel]
        key = np.where(sk, s2[sel], 0.0)
        big = ~sk
        if big.any():
            ratio = np.ones(len(sel))
            a2 = area2[sel]
            h2 = hi[sel]
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.where(a2 > self.area2, self.area2 / a2, ratio)
                ratio = np.where(h2 > self.edge2, np.minimum(ratio, self.edge2 / h2), ratio)
            key = np.where(big, 1.0 + ratio, key)
        dbx, dby = bx - ax, by - ay
        dcx, dcy = cx - ax, cy - ay
        d = 2.0 * (dbx * dcy - dby * dcx)
        okd = d > 0.0
        if not okd.all():
            stats["failed_insertions"] += int((~okd).sum())
        with np.errstate(divide="ignore", invalid="ignore"):
            bl = dbx * dbx + dby * dby
            cl = dcx * dcx + dcy * dcy
            px = ax + (dcy * bl - dby * cl) / d
            py = ay + (dbx * cl - dcx * bl) / d
        lmin = np.full(len(sel), np.nan)
        used_off = np.zeros(len(sel), dtype=bool)
        live = okd.copy()
        if sk.any():
            s = np.flatnonzero(sk & okd)
            L0, L1, L2 = l0[sel][s], l1[sel][s], l2[sel][s]
            # shortest edge (pv, qv), opposite vertex rv: the sequential tie order
            e0 = (L0 <= L1) & (L0 <= L2)
            e1 = ~e0 & (L1 <= L2)
            pv = np.where(e0, i1[s], np.where(e1, i2[s], i0[s]))
            qv = np.where(e0, i2[s], np.where(e1, i0[s], i1[s]))
            kopp = np.where(e0, 0, np.where(e1, 1, 2))
            lm = np.sqrt(np.where(e0, L0, np.where(e1, L1, L2)))
            lmin[s] = lm
            skip = ~sb[s] & self._skip_small_angle(ts[s], pv, qv, kopp)
            if skip.any():
                stats["skipped_small_angle"] += int(skip.sum())
                live[s[skip]] = False
            if self.off:
                mx = 0.5 * (X[pv] + X[qv])
                my = 0.5 * (Y[pv] + Y[qv])
                dist = np.hypot(px[s] - mx, py[s] - my)
                want = self.off_factor * lm
                f = np.where(dist > want, want / np.where(dist > 0, dist, 1.0), 1.0)
                uo = (dist > want) & ~skip
                px[s] = np.where(uo, mx + f * (px[s] - mx), px[s])
                py[s] = np.where(uo, my + f * (py[s] - my), py[s])
                used_off[s] = uo
        lmin_arg = np.where(sk & ~sb, lmin, np.nan)
        lv = np.flatnonzero(live)
        kind, where = self._walk(ts[lv], px[lv], py[lv])
        keep_next[sel[lv]] = True          # requeued unless dropped below
        # a segment in the way
        cr = np.flatnonzero(kind == 1)
        if len(cr):
            c = where[cr]
            ok = self._may_split(V[_nxt(c)], V[_prv(c)], lmin_arg[lv[cr]])
            seg_c.append(c[ok])
            seg_l.append(lmin_arg[lv[cr[ok]]])
            keep_next[sel[lv[cr[~ok]]]] = False
        fl = np.flatnonzero(kind == 2)
        if len(fl):
            stats["failed_insertions"] += len(fl)
            keep_next[sel[lv[fl]]] = False
        inn = np.flatnonzero(kind == 0)
        if not len(inn):
            return None
        idx = lv[inn]
        s_tri = where[inn]
        qx, qy = px[idx], py[idx]
        sb3 = 3 * s_tri
        same = np.zeros(len(idx), dtype=bool)
        for k in range(3):
            w = V[sb3 + k]
            same |= (X[w] == qx) & (Y[w] == qy)
        if same.any():
            keep_next[sel[idx[same]]] = False
            idx, s_tri, qx, qy, sb3 = (a[~same] for a in (idx, s_tri, qx, qy, sb3))
        m = len(idx)
        if not m:
            return None
        cand = np.arange(m, dtype=np.int64)
        start_c = np.concatenate((cand, cand, cand))
        start_k = np.concatenate((sb3, sb3 + 1, sb3 + 2))
        cav_c, cav_t, bc, bk, bb, invalid = self._cavities(qx, qy, cand, s_tri, start_c, start_k)
        bad = invalid | self._check_cavities(qx, qy, cav_c, cav_t, bc, bk, m)
        # blocked border edges the point encroaches upon: split them instead
        drop = np.zeros(m, dtype=bool)
        if bb.any():
            kb = np.flatnonzero(bb)
            cb, kk = bc[kb], bk[kb]
            u = V[_nxt(kk)]
            v = V[_prv(kk)]
            enc = self._encroach(u, v, qx[cb], qy[cb])
            if enc.any():
                ce, ke = cb[enc], kk[enc]
                drop[ce] = True
                ok = self._may_split(V[_nxt(ke)], V[_prv(ke)], lmin_arg[idx[ce]])
                seg_c.append(ke[ok])
                seg_l.append(lmin_arg[idx[ce[ok]]])
                did = np.zeros(m, dtype=bool)
                did[ce[ok]] = True
                # every encroached edge refused: the point is rejected
                keep_next[sel[idx[drop & ~did]]] = False
        tail = bad & ~drop
        if tail.any():
            self.tail.extend(self._triangle_ids(t[sel[idx[tail]]]))
            keep_next[sel[idx[tail]]] = False
        ok = ~(bad | drop)
        return dict(px=qx, py=qy, ok=ok, cav_c=cav_c, cav_t=cav_t, bc=bc, bk=bk,
                    prio=key[idx], off=used_off[idx], seg=None)

    def _triangle_ids(self, ts):
        V = self.V
        return [(int(x), int(V[3 * x]), int(V[3 * x + 1]), int(V[3 * x + 2])) for x in ts]

    def _skip_small_angle(self, ts, pv, qv, kopp):
        """Vectorised _Refiner._skip_small_angle."""
        X, Y, OA, OB, n0 = self.X, self.Y, self.OA, self.OB, self.n0
        b = 3 * ts
        skip = self._blocking(b + _NXT[kopp]) & self._blocking(b + _PRV[kopp])
        cand = np.flatnonzero(~skip & (pv >= n0) & (qv >= n0))
        if len(cand):
            a = pv[cand]
            q = qv[cand]
            a0, a1, b0, b1 = OA[a], OB[a], OA[q], OB[q]
            have = (a0 >= 0) & (b0 >= 0)
            same = ((a0 == b0) & (a1 == b1)) | ((a0 == b1) & (a1 == b0))
            base = have & ~same
            hit = np.zeros(len(cand), dtype=bool)
            for apex in (a0, a1):
                common = base & ((apex == b0) | (apex == b1)) & self._is_small(apex)
                if common.any():
                    ap = np.where(common, apex, 0)
                    ra = np.hypot(X[a] - X[ap], Y[a] - Y[ap])
                    rb = np.hypot(X[q] - X[ap], Y[q] - Y[ap])
                    hit |= common & (np.abs(ra - rb) <= 0.02 * np.maximum(ra, rb))
            skip[cand[hit]] = True
        return skip

    def _propose_splits(self, c, lmin):
        """Split proposals for the segments opposite corners c (one per
        segment), with their cavities."""
        V, N = self.V, self.N
        u = V[_nxt(c)]
        v = V[_prv(c)]
        key = self._edge_key(u, v)
        _, first = np.unique(key, return_index=True)
        c = c[first]
        u, v, key = u[first], v[first], key[first]
        if len(self.frozen_keys):
            live = ~np.isin(key, self.frozen_keys)
            c, u, v = c[live], u[live], v[live]
        if not len(c):
            return None
        px, py, shorter = self._split_position(u, v)
        X, Y = self.X, self.Y
        degenerate = (shorter < self.min_len) | ((px == X[u]) & (py == Y[u])) | \
            ((px == X[v]) & (py == Y[v]))
        if degenerate.any():
            self._freeze(list(zip(np.minimum(u, v)[degenerate].tolist(),
                                  np.maximum(u, v)[degenerate].tolist())))
            keep = ~degenerate
            c, u, v, px, py = c[keep], u[keep], v[keep], px[keep], py[keep]
        m = len(c)
        if not m:
            return None
        oc = N[c]
        two = oc >= 0
        # a border piece's point rounded out of the region (right of u -> v;
        # the triangle of corner c lies on the left) goes one grid step back
        # in, as in the sequential refiner (engine.predicates.point_on_left)
        out = np.flatnonzero(~two & (orient_sign(X[u], Y[u], X[v], Y[v], px, py) < 0))
        if len(out):
            px, py = px.copy(), py.copy()
            for i in out.tolist():
                px[i], py[i] = point_on_left(float(X[u[i]]), float(Y[u[i]]), float(X[v[i]]),
                                             float(Y[v[i]]), float(px[i]), float(py[i]))
        cand = np.arange(m, dtype=np.int64)
        seed_c = np.concatenate((cand, cand[two]))
        seed_t = np.concatenate((c // 3, oc[two] // 3))
        start_c = np.concatenate((cand, cand, cand[two], cand[two]))
        start_k = np.concatenate((_nxt(c), _prv(c), _nxt(oc[two]), _prv(oc[two])))
        cav_c, cav_t, bc, bk, _, invalid = self._cavities(px, py, seed_c, seed_t,
                                                          start_c, start_k)
        bad = invalid | self._check_cavities(px, py, cav_c, cav_t, bc, bk, m)
        if bad.any():
            self._freeze(list(zip(np.minimum(u, v)[bad].tolist(),
                                  np.maximum(u, v)[bad].tolist())))
        oa, ob = self._origin(u, v)
        return dict(px=px, py=py, ok=~bad, cav_c=cav_c, cav_t=cav_t, bc=bc, bk=bk,
                    prio=np.full(m, -1.0), off=np.zeros(m, dtype=bool),
                    seg=dict(c=c, u=u, v=v, cs=self.CS[c], oa=oa, ob=ob))

    # ------------------------------------------------------------ insertion
    def _insert(self, pp, sp, budget):
        """Claim, fill and legalise.  Returns (points added, changed slots)."""
        parts = [x for x in (sp, pp) if x is not None]
        if not parts:
            return 0, np.zeros(0, dtype=np.int64)
        # one candidate list: segment splits first, then points
        offs = []
        total = 0
        for part in parts:
            offs.append(total)
            total += len(part["px"])
        px = np.concatenate([p["px"] for p in parts])
        py = np.concatenate([p["py"] for p in parts])
        ok = np.concatenate([p["ok"] for p in parts])
        prio_f = np.concatenate([p["prio"] for p in parts])
        off = np.concatenate([p["off"] for p in parts])
        cav_c = np.concatenate([p["cav_c"] + o for p, o in zip(parts, offs)])
        cav_t = np.concatenate([p["cav_t"] for p in parts])
        bc = np.concatenate([p["bc"] + o for p, o in zip(parts, offs)])
        bk = np.concatenate([p["bk"] for p in parts])
        is_seg = np.zeros(total, dtype=bool)
        if sp is not None:
            is_seg[:len(sp["px"])] = True
        # priorities: segment splits, then skinny triangles, then large ones;
        # random within each class (local minima of a smooth order are rare)
        cls = np.where(prio_f < 0.0, 0.0, np.where(prio_f < 1.0, 1.0, 2.0))
        cls = cls + 0.5 * self.rng.random(total)
        order = np.argsort(cls, kind="stable")
        prio = np.empty(total, dtype=np.int64)
        prio[order] = np.arange(total, dtype=np.int64)
        # Luby-style rounds of claims: winners take their cavities, the
        # candidates touching them drop out, the others claim again
        claim, owned = self.claim, self.owned
        active = ok.copy()
        win = np.zeros(total, dtype=bool)
        live = active[cav_c]
        lc, lt = cav_c[live], cav_t[live]
        for _ in range(self.claim_iterations):
            if not len(lc):
                break
            np.minimum.at(claim, lt, prio[lc])
            lost = claim[lt] != prio[lc]
            claim[lt] = _BIG
            new = active.copy()
            new[lc[lost]] = False
            nw_ = np.flatnonzero(new)
            if not len(nw_):
                break
            win[nw_] = True
            active[nw_] = False
            mine = new[lc]
            owned[lt[mine]] = True
            hit = owned[lt]
            active[lc[hit]] = False
            keep = active[lc]
            lc, lt = lc[keep], lt[keep]
        owned[cav_t[win[cav_c]]] = False
        w = np.flatnonzero(win)
        if len(w) > budget:
            w = w[np.argsort(prio[w], kind="stable")[:budget]]
            win[:] = False
            win[w] = True
        if not len(w):
            return 0, np.zeros(0, dtype=np.int64)
        # winners' cavities and borders, grouped by candidate
        sel = win[cav_c]
        wc, wt = cav_c[sel], cav_t[sel]
        o = np.argsort(wc, kind="stable")
        wc, wt = wc[o], wt[o]
        sel = win[bc]
        fc, fk = bc[sel], bk[sel]
        o = np.argsort(fc, kind="stable")
        fc, fk = fc[o], fk[o]
        K = np.bincount(wc, minlength=total)
        B = np.bincount(fc, minlength=total)
        extra = B - K
        if (extra[w] < 1).any():
            raise RuntimeError("a cavity border is shorter than its triangle count")
        nw = len(w)
        self._ensure(nw, int(extra[w].sum()))
        V, N, CS, X, Y, rm = self.V, self.N, self.CS, self.X, self.Y, self.rm
        kstart = np.zeros(total + 1, dtype=np.int64)
        np.cumsum(K, out=kstart[1:])
        bstart = np.zeros(total + 1, dtype=np.int64)
        np.cumsum(B, out=bstart[1:])
        ebase = np.zeros(total + 1, dtype=np.int64)
        ew = np.zeros(total, dtype=np.int64)
        ew[w] = extra[w]
        np.cumsum(ew, out=ebase[1:])
        j = np.arange(len(fc), dtype=np.int64) - bstart[fc]
        Kf = K[fc]
        reuse = j < Kf
        slot = np.empty(len(fc), dtype=np.int64)
        slot[reuse] = wt[kstart[fc[reuse]] + j[reuse]]
        nr = ~reuse
        slot[nr] = self.ntri + ebase[fc[nr]] + (j[nr] - Kf[nr])
        # new vertices
        vid = np.full(total, -1, dtype=np.int64)
        vid[w] = self.nv + np.arange(nw, dtype=np.int64)
        X[vid[w]] = px[w]
        Y[vid[w]] = py[w]
        p = vid[fc]
        u = V[_nxt(fk)]
        v = V[_prv(fk)]
        outer = N[fk]
        cs = CS[fk]
        new_c = 3 * slot + 2
        rm[fk] = new_c
        m = np.where(outer >= 0, rm[np.maximum(outer, 0)], -1)
        rm[fk] = fk
        # write the fans
        b3 = 3 * slot
        V[b3] = u
        V[b3 + 1] = v
        V[b3 + 2] = p
        N[new_c] = m
        has = m >= 0
        N[m[has]] = new_c[has]
        CS[new_c] = cs
        CS[b3] = 0
        CS[b3 + 1] = 0
        # links inside each fan: (cand, start vertex) -> slot
        span = self.nv + nw + 1
        key_u = fc * span + u
        ko = np.argsort(key_u)
        sku = key_u[ko]
        want = fc * span + v               # the fan triangle starting at v
        pos = np.minimum(np.searchsorted(sku, want), len(sku) - 1)
        found = sku[pos] == want
        partner = np.where(found, slot[ko[pos]], -1)
        N[b3] = np.where(found, 3 * partner + 1, -1)
        want = fc * span + u               # the fan triangle ending at u
        key_v = fc * span + v
        ko2 = np.argsort(key_v)
        skv = key_v[ko2]
        pos = np.minimum(np.searchsorted(skv, want), len(skv) - 1)
        found2 = skv[pos] == want
        partner2 = np.where(found2, slot[ko2[pos]], -1)
        N[b3 + 1] = np.where(found2, 3 * partner2, -1)
        # segment splits: the two halves stay constrained; origins recorded
        n_seg = 0
        if sp is not None:
            ns = len(sp["px"])
            sw = w[w < ns]
            n_seg = len(sw)
            if n_seg:
                seg = sp["seg"]
                self.OA[vid[sw]] = seg["oa"][sw]
                self.OB[vid[sw]] = seg["ob"][sw]
                src = np.zeros(total, dtype=np.int64)
                src[sw] = seg["cs"][sw]
                ea = np.full(total, -1, dtype=np.int64)
                eb = np.full(total, -1, dtype=np.int64)
                ea[sw] = seg["u"][sw]
                eb[sw] = seg["v"][sw]
                sf = src[fc]
                hit_v = (sf > 0) & ((v == ea[fc]) | (v == eb[fc]))
                hit_u = (sf > 0) & ((u == ea[fc]) | (u == eb[fc]))
                CS[b3[hit_v]] = sf[hit_v]
                CS[b3[hit_u] + 1] = sf[hit_u]
                self.stats["segment_splits"] += n_seg
        pw = w[~is_seg[w]]
        self.stats["steiner_points"] += len(pw)
        n_off = int(off[pw].sum())
        self.stats["off_centers"] += n_off
        self.stats["circumcenters"] += len(pw) - n_off
        self.nv += nw
        self.ntri += int(extra[w].sum())
        # a split point rounded off its segment may lie outside the
        # circumcircle of a triangle the split removes: its fan's own edges
        # are suspect too (engine.refine._Refiner._legalize_fan)
        fan = b3[is_seg[fc]]
        flipped = self._legalize(np.concatenate((new_c, fan, fan + 1)))
        return nw, np.concatenate((slot, flipped))

    # ------------------------------------------------------------ flips
    def _legalize(self, sus):
        """Lawson flips from the suspect corners until every unconstrained
        edge among them is locally Delaunay; returns the flipped slots."""
        V, N, CS, X, Y = self.V, self.N, self.CS, self.X, self.Y
        claim, changed, rm, dedup = self.claim, self.changed, self.rm, self.dedup
        out = []
        while len(sus):
            self.flip_rounds += 1
            sus = sus[(N[sus] >= 0) & (CS[sus] == 0)]
            if not len(sus):
                break
            oc = N[sus]
            k3 = sus % 3
            base = sus - k3
            ca = base + _NXT[k3]
            cb = base + _PRV[k3]
            p = V[sus]
            a = V[ca]
            b = V[cb]
            q = V[oc]
            ic = incircle_sign(X[p], Y[p], X[a], Y[a], X[b], Y[b], X[q], Y[q])
            bad = np.flatnonzero(ic > 0)
            if not len(bad):
                break
            sus, oc, ca, cb, p, a, b, q = (x[bad] for x in (sus, oc, ca, cb, p, a, b, q))
            wi, lose, t, u = claim_flips(sus, oc, claim, dedup)
            oc, ca, cb, p, a, b, q, t, u = (x[wi] for x in (oc, ca, cb, p, a, b, q, t, u))
            self.flips += len(wi)
            oc3 = oc % 3
            obase = oc - oc3
            oa = obase + _PRV[oc3]
            ob = obase + _NXT[oc3]
            n_bp = N[ca]
            n_pa = N[cb]
            n_aq = N[ob]
            n_qb = N[oa]
            s_bp = CS[ca]
            s_pa = CS[cb]
            s_aq = CS[ob]
            s_qb = CS[oa]
            bt = 3 * t
            bu = 3 * u
            rm[cb] = bt + 2
            rm[ca] = bu
            rm[ob] = bt
            rm[oa] = bu + 2
            m_aq = np.where(n_aq >= 0, rm[np.maximum(n_aq, 0)], -1)
            m_pa = np.where(n_pa >= 0, rm[np.maximum(n_pa, 0)], -1)
            m_bp = np.where(n_bp >= 0, rm[np.maximum(n_bp, 0)], -1)
            m_qb = np.where(n_qb >= 0, rm[np.maximum(n_qb, 0)], -1)
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
            for corner, m_ in ((bt, m_aq), (bt + 2, m_pa), (bu, m_bp), (bu + 2, m_qb)):
                N[corner] = m_
                h = m_ >= 0
                N[m_[h]] = corner[h]
            N[bt + 1] = bu + 1
            N[bu + 1] = bt + 1
            CS[bt] = s_aq
            CS[bt + 2] = s_pa
            CS[bu] = s_bp
            CS[bu + 2] = s_qb
            CS[bt + 1] = 0
            CS[bu + 1] = 0
            out.append(t)
            out.append(u)
            changed[t] = True
            changed[u] = True
            ls = sus[lose]
            if len(ls):
                lt = N[ls] // 3
                ls = ls[~(changed[ls // 3] | changed[lt])]
            changed[t] = False
            changed[u] = False
            sus = np.concatenate((ls, bt, bt + 2, bu, bu + 2))
        if out:
            return np.concatenate(out)
        return np.zeros(0, dtype=np.int64)

    # ------------------------------------------------------------ output
    def load_into(self, ref):
        """Write the array state into the sequential refiner's Mesh."""
        mesh = ref.mesh
        nv, T = self.nv, self.ntri
        mesh.x = self.X[:nv].tolist()
        mesh.y = self.Y[:nv].tolist()
        V = self.V[:3 * T]
        mesh.tv = V.tolist()
        mesh.tn = self.N[:3 * T].tolist()
        cs = self.CS[:3 * T]
        mesh.tc = (cs > 0).astype(np.int64).tolist()
        mesh.mark = [0] * T
        mesh.free = []
        vt = np.full(nv, -1, dtype=np.int64)
        vt[V] = np.arange(3 * T, dtype=np.int64)
        mesh.vt = vt.tolist()
        mesh.last = 0
        con = np.flatnonzero(cs)
        u = V[_nxt(con)]
        v = V[_prv(con)]
        info = {}
        for a, b_, s in zip(np.minimum(u, v).tolist(), np.maximum(u, v).tolist(),
                            (cs[con] - 2).tolist()):
            info[(a, b_)] = [s, 1, 1]
        mesh.constraint_info = info
        seg = np.flatnonzero(self.OA[:nv] >= 0)
        ref.seg_origin = dict(zip(seg.tolist(), zip(self.OA[seg].tolist(),
                                                     self.OB[seg].tolist())))
        ref.unsplittable |= self.frozen

    def triangulation(self, merged_into):
        nv, T = self.nv, self.ntri
        V = self.V[:3 * T]
        triangles = V.reshape(-1, 3).copy()
        nb = self.N[:3 * T].reshape(-1, 3)
        neighbors = np.where(nb >= 0, nb // 3, -1)
        cs = self.CS[:3 * T]
        con = np.flatnonzero(cs)
        u = V[_nxt(con)]
        v = V[_prv(con)]
        keys = np.column_stack((np.minimum(u, v), np.maximum(u, v)))
        if len(keys):
            flat = keys[:, 0] * nv + keys[:, 1]
            _, first = np.unique(flat, return_index=True)
            keys = keys[first]
            source = cs[con[first]] - 2
        else:
            keys = np.zeros((0, 2), dtype=np.int64)
            source = np.zeros(0, dtype=np.int64)
        points = np.column_stack((self.X[:nv], self.Y[:nv]))
        return Triangulation(points=points, triangles=triangles, neighbors=neighbors,
                             segments=keys.reshape(-1, 2), segment_source=source,
                             merged_into=np.asarray(merged_into, dtype=np.int64))


def refine_batched(tri, ref, smoothing=False, smoothing_passes=4):
    """Run the refinement prepared in the sequential refiner `ref` (a
    engine.refine._Refiner) with array rounds; the few proposals the rounds
    cannot place, and smoothing when asked, go to `ref` on the same mesh."""
    warm_up = len(ref.mesh.x) - ref.start        # points the sequential start added
    if not ref.complete or not (ref.heap or ref.big or ref.segq):
        # the sequential start did all the work (or reached the point cap)
        if smoothing and smoothing_passes:
            ref.smooth(smoothing_passes)
        out = ref.result(tri)
        out.stats.update(method="batched", warm_up_points=warm_up, batched_rounds=0,
                         batched_flips=0, batched_flip_rounds=0, batched_points=0,
                         sequential_tail=0)
        return out
    ref.heap.clear()                            # the rounds measure every triangle
    ref.big.clear()
    ref.segq.clear()
    rounds = _Rounds(ref)
    cap = ref.cap - warm_up
    added = rounds.run(cap)
    stats = ref.stats
    pending = len(rounds.todo)
    tail = [x for x in rounds.tail]
    need_tail = bool(tail) or smoothing
    if pending and added >= cap:
        ref.complete = False
        ref.stopped_by = "point_cap"
        ref.stop_reason = (f"max_points reached: {ref.cap} points added, {pending} triangles "
                           "still queued")
        need_tail = need_tail and smoothing
        tail = []
    stats.update(warm_up_points=warm_up, batched_rounds=rounds.rounds, batched_flips=rounds.flips,
                 batched_flip_rounds=rounds.flip_rounds, batched_points=added,
                 sequential_tail=len(tail), method="batched")
    if not need_tail:
        out = rounds.triangulation(tri.merged_into)
        return ref.finish(tri, out)
    rounds.load_into(ref)
    if tail:
        _run_tail(ref, [x for x in tail], cap - added)
    if smoothing and smoothing_passes:
        ref.smooth(smoothing_passes)
    out = ref.result(tri)
    out.stats["method"] = "batched"
    return out


def _run_tail(ref, tail, cap):
    """The sequential refiner's main loop (engine.refine._Refiner.drain)
    started from the given triangles instead of a scan of the whole mesh."""
    mesh = ref.mesh
    tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
    for t, a, b, c in tail:
        if tv[3 * t] == a and tv[3 * t + 1] == b and tv[3 * t + 2] == c:
            ref._push_if_bad(t)
            for k in range(3):
                corner = 3 * t + k
                if (tc[corner] or tn[corner] < 0) and ref._edge_encroached(corner):
                    ref.segq.append((tv[3 * t + (k + 1) % 3], tv[3 * t + (k + 2) % 3]))
    ref.drain(cap, where=" in the tail")
