"""The mutable triangulation that every engine algorithm works on.

Storage is flat Python lists (fast to index from Python loops), three entries
per triangle slot ``t`` at ``3t, 3t+1, 3t+2`` ("corners"):

* ``tv[c]``  vertex of corner ``c`` (counter-clockwise within the triangle);
  ``GHOST`` (-1) is the vertex at infinity, ``DEAD`` (-2) marks a free slot;
* ``tn[c]``  the corner of the neighbouring triangle that faces corner ``c``
  across the edge opposite ``c`` (so ``tn[tn[c]] == c``), or -1 when the mesh
  has an open border (only meshes built by :meth:`Mesh.from_triangles`);
* ``tc[c]``  1 when the edge opposite ``c`` is a constraint, else 0.

Meshes built by incremental insertion are closed with *ghost triangles*: each
convex-hull edge ``a -> b`` (interior on its left) has a ghost ``(b, a, GHOST)``
on its outer side, so point location, cavity search and hull growth need no
special cases (the "vertex at infinity" of Shewchuk's Triangle and of CGAL).

Point insertion is the Bowyer-Watson cavity method (A. Bowyer, "Computing
Dirichlet tessellations", and D. F. Watson, "Computing the n-dimensional
Delaunay tessellation ...", both The Computer Journal 24(2), 1981), restricted
to triangles visible from the new point across non-constrained edges, which
keeps a constrained Delaunay triangulation constrained Delaunay.  Point
location is the remembering stochastic walk (O. Devillers, S. Pion, M.
Teillaud, "Walking in a triangulation", IJFCS 13(2), 2002).  Edge flips and
their legalisation follow C. L. Lawson, "Software for C1 surface
interpolation", Mathematical Software III, 1977.

Every geometric decision goes through the exact-sign predicates of
:mod:`engine.predicates` (float filter, exact fallback), inlined in the hot loops.
"""

from array import array

import numpy as np

from .predicates import (CCW_BOUND, INCIRCLE_LOOSE, incircle, incircle_exact,
                         orient2d, orient2d_exact)

GHOST = -1
DEAD = -2
NEXT = (1, 2, 0)
PREV = (2, 0, 1)
# (corner, offset of the edge's first vertex, offset of its second), three rotations
_WALK_ORDERS = tuple(tuple((k, NEXT[k], PREV[k]) for k in (r, NEXT[r], PREV[r]))
                     for r in range(3))


def int_array(values):
    """A list of Python ints as an int64 numpy array (much faster than np.asarray)."""
    return np.frombuffer(array("q", values), dtype=np.int64)


def next_corner(c):
    return c + 1 if c % 3 != 2 else c - 2


def prev_corner(c):
    return c - 1 if c % 3 != 0 else c + 2


class Mesh:
    """A triangulation in flat lists; see the module docstring for the layout."""

    def __init__(self, xs, ys):
        self.x = xs
        self.y = ys
        self.tv = []
        self.tn = []
        self.tc = []
        self.free = []
        self.vt = [-1] * len(xs)
        self.mark = []
        self.stamp = 2
        self.last = 0
        self.walk_counter = 0
        # constraint metadata: (lo, hi) -> [source segment, net direction lo->hi, count]
        self.constraint_info = {}
        self.scratch = []

    # ------------------------------------------------------------------ basics
    def add_vertex(self, px, py):
        self.x.append(px)
        self.y.append(py)
        self.vt.append(-1)
        return len(self.x) - 1

    def new_slot(self):
        if self.free:
            return self.free.pop()
        t = len(self.mark)
        self.tv.extend((DEAD, DEAD, DEAD))
        self.tn.extend((-1, -1, -1))
        self.tc.extend((0, 0, 0))
        self.mark.append(0)
        return t

    def is_ghost(self, t):
        b = 3 * t
        tv = self.tv
        return tv[b] == GHOST or tv[b + 1] == GHOST or tv[b + 2] == GHOST

    def is_live_real(self, t):
        b = 3 * t
        tv = self.tv
        return tv[b] >= 0 and tv[b + 1] >= 0 and tv[b + 2] >= 0

    def triangle_count(self):
        return len(self.mark)

    def real_triangles(self):
        """Slots of live, non-ghost triangles."""
        tv = self.tv
        return [t for t in range(len(self.mark))
                if tv[3 * t] >= 0 and tv[3 * t + 1] >= 0 and tv[3 * t + 2] >= 0]

    def new_stamp(self):
        self.stamp += 2
        return self.stamp

    # ------------------------------------------------------------ construction
    def start(self, a, b, c):
        """Create the first triangle a, b, c (counter-clockwise) and its three ghosts."""
        x, y = self.x, self.y
        if orient2d(x[a], y[a], x[b], y[b], x[c], y[c]) < 0:
            b, c = c, b
        t0, g1, g2, g3 = (self.new_slot() for _ in range(4))
        tv, tn = self.tv, self.tn
        tv[3 * t0:3 * t0 + 3] = [a, b, c]
        tv[3 * g1:3 * g1 + 3] = [b, a, GHOST]   # outside edge a-b
        tv[3 * g2:3 * g2 + 3] = [c, b, GHOST]   # outside edge b-c
        tv[3 * g3:3 * g3 + 3] = [a, c, GHOST]   # outside edge c-a
        pairs = [
            (3 * t0 + 2, 3 * g1 + 2), (3 * t0 + 0, 3 * g2 + 2), (3 * t0 + 1, 3 * g3 + 2),
            (3 * g1 + 0, 3 * g3 + 1), (3 * g1 + 1, 3 * g2 + 0), (3 * g2 + 1, 3 * g3 + 0),
        ]
        for p, q in pairs:
            tn[p] = q
            tn[q] = p
        self.vt[a] = 3 * t0
        self.vt[b] = 3 * t0 + 1
        self.vt[c] = 3 * t0 + 2
        self.last = t0

    # ---------------------------------------------------------- point location
    def locate(self, px, py, start=None):
        """Triangle containing (px, py) (possibly on its border), or a ghost
        triangle whose outer half-plane holds it when it is outside the hull.

        Raises RuntimeError if the walk cannot finish (a corrupt mesh)."""
        tv, tn, x, y = self.tv, self.tn, self.x, self.y
        t = self.last if start is None else start
        if tv[3 * t] == DEAD:
            t = self._any_real()
        elif tv[3 * t] < 0 or tv[3 * t + 1] < 0 or tv[3 * t + 2] < 0:
            t = self._real_neighbor_of_ghost(t)
        counter = self.walk_counter
        limit = 4 * len(self.mark) + 100
        for _ in range(limit):
            b = 3 * t
            if tv[b] < 0 or tv[b + 1] < 0 or tv[b + 2] < 0:
                self.walk_counter = counter
                return t
            counter += 1
            for k, ia, ic in _WALK_ORDERS[counter % 3]:
                a = tv[b + ia]
                c = tv[b + ic]
                ax = x[a]
                ay = y[a]
                cx = x[c]
                cy = y[c]
                left = (ax - px) * (cy - py)
                right = (ay - py) * (cx - px)
                det = left - right
                if det < 0.0:
                    if -det <= CCW_BOUND * (abs(left) + abs(right)):
                        if orient2d_exact(ax, ay, cx, cy, px, py) >= 0:
                            continue
                elif det > CCW_BOUND * (abs(left) + abs(right)):
                    continue
                elif orient2d_exact(ax, ay, cx, cy, px, py) >= 0:
                    continue
                nb = tn[b + k]
                if nb < 0:       # open border of a mesh without ghosts
                    continue
                t = nb // 3
                break
            else:
                self.walk_counter = counter
                self.last = t
                return t
        raise RuntimeError("point location did not terminate (corrupt mesh)")

    def _any_real(self):
        for t in range(len(self.mark)):
            if self.is_live_real(t):
                return t
        raise RuntimeError("mesh has no triangle")

    def _real_neighbor_of_ghost(self, t):
        tv, tn = self.tv, self.tn
        for k in range(3):
            if tv[3 * t + k] == GHOST:
                nb = tn[3 * t + k]
                if nb >= 0 and self.is_live_real(nb // 3):
                    return nb // 3
        return self._any_real()

    # -------------------------------------------------------- conflict tests
    def in_conflict(self, t, px, py):
        """True when (px, py) lies strictly inside the circumcircle of t (for a
        ghost: strictly outside its hull edge, or on the open hull edge)."""
        tv, x, y = self.tv, self.x, self.y
        b = 3 * t
        a, bb, c = tv[b], tv[b + 1], tv[b + 2]
        if a < 0 or bb < 0 or c < 0:
            if a == GHOST:
                a, bb = bb, c
            elif bb == GHOST:
                a, bb = c, a
            o = orient2d(x[a], y[a], x[bb], y[bb], px, py)
            if o > 0:
                return True
            if o < 0:
                return False
            # collinear with the hull edge: in conflict when on the open edge
            ax, ay, bx, by = x[a], y[a], x[bb], y[bb]
            return min(ax, bx) <= px <= max(ax, bx) and min(ay, by) <= py <= max(ay, by) \
                and (px, py) != (ax, ay) and (px, py) != (bx, by)
        return incircle(x[a], y[a], x[bb], y[bb], x[c], y[c], px, py) > 0

    # -------------------------------------------------------------- insertion
    def insert_vertex(self, p, t0):
        """Insert existing vertex index p, lying in triangle t0 (from locate),
        by the Bowyer-Watson cavity.  Returns a triangle incident to p.

        Precondition: the mesh is (constrained) Delaunay, p coincides with no
        vertex and lies on no constrained edge.  For other meshes use
        :meth:`insert_vertex_flipping`."""
        tv, tn, tc, mark, x, y = self.tv, self.tn, self.tc, self.mark, self.x, self.y
        px, py = x[p], y[p]
        self.stamp += 2
        inside = self.stamp
        outside = inside + 1
        mark[t0] = inside
        cavity = [t0]
        stack = [t0]
        boundary = []          # corners of cavity triangles that face the cavity border
        pop, push, keep, border = stack.pop, stack.append, cavity.append, boundary.append
        while stack:
            t = pop()
            b = 3 * t
            for c in (b, b + 1, b + 2):
                oc = tn[c]
                u = oc // 3
                m = mark[u]
                if m == inside:
                    continue
                if m == outside or tc[c]:
                    border(c)
                    continue
                ub = 3 * u
                va, vb, vc = tv[ub], tv[ub + 1], tv[ub + 2]
                if va >= 0 and vb >= 0 and vc >= 0:
                    adx = x[va] - px
                    ady = y[va] - py
                    bdx = x[vb] - px
                    bdy = y[vb] - py
                    cdx = x[vc] - px
                    cdy = y[vc] - py
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
                    # |bc1| + |bc2| <= (blift + clift) / 2 and so on (AM-GM), so this
                    # abs-free bound is at least Shewchuk's permanent bound
                    bound = INCIRCLE_LOOSE * (alift * blift + blift * clift + clift * alift)
                    if det > bound:
                        hit = True
                    elif det < -bound:
                        hit = False
                    else:
                        hit = incircle_exact(x[va], y[va], x[vb], y[vb], x[vc], y[vc], px, py) > 0
                else:
                    hit = self.in_conflict(u, px, py)
                if hit:
                    mark[u] = inside
                    keep(u)
                    push(u)
                else:
                    mark[u] = outside
                    border(c)
        # fan from p to the cavity border (reusing the cavity slots)
        extra = len(boundary) - len(cavity)
        if extra > 0:
            free = self.free
            for _ in range(extra):
                if free:
                    cavity.append(free.pop())
                else:
                    cavity.append(len(mark))
                    mark.append(0)
                    tv.extend((DEAD, DEAD, DEAD))
                    tn.extend((-1, -1, -1))
                    tc.extend((0, 0, 0))
        elif extra < 0:      # not possible for a disk-shaped cavity; kept for safety
            return self._fill_generic(p, cavity, boundary)
        vt = self.vt
        # triangle base by the vertex its border edge starts at; the ghost
        # vertex (-1) uses the extra last entry
        starting = self.scratch
        if len(starting) <= len(x):
            starting.extend([0] * (len(x) + 1 - len(starting)))
            starting[-1] = 0
        ends = []
        for i in range(len(boundary)):
            c = boundary[i]
            k = c % 3
            b = c - k
            if k == 0:
                u = tv[b + 1]
                v = tv[b + 2]
            elif k == 1:
                u = tv[b + 2]
                v = tv[b]
            else:
                u = tv[b]
                v = tv[b + 1]
            oc = tn[c]
            flag = tc[c]
            ends.append((u, v, oc, flag))
        for i in range(len(boundary)):
            u, v, oc, flag = ends[i]
            t = cavity[i]
            b = 3 * t
            tv[b] = u
            tv[b + 1] = v
            tv[b + 2] = p
            tn[b + 2] = oc
            tn[oc] = b + 2
            tc[b] = 0
            tc[b + 1] = 0
            tc[b + 2] = flag
            starting[u] = b
            if u >= 0:
                vt[u] = b
        last = -1
        for i in range(len(boundary)):
            b = 3 * cavity[i]
            b2 = starting[ends[i][1]]
            tn[b] = b2 + 1
            tn[b2 + 1] = b
            if last < 0 and ends[i][0] >= 0 and ends[i][1] >= 0:
                last = cavity[i]
        self.last = last
        vt[p] = 3 * last + 2
        return last

    def _fill_generic(self, p, cavity, boundary):
        self.fill_cavity(p, cavity, boundary)
        return self.last

    def fill_cavity(self, p, cavity, boundary):
        """Replace the triangles `cavity` by the fan from vertex p to the
        cavity border, given as the corners (of cavity triangles) facing each
        border edge.  Returns the new triangle slots; slot i is the triangle
        (u, v, p) built on border corner i, p at position 2."""
        tv, tn, tc = self.tv, self.tn, self.tc
        edges = []
        for c in boundary:
            k = c % 3
            b = c - k
            if k == 0:
                u, v = tv[b + 1], tv[b + 2]
            elif k == 1:
                u, v = tv[b + 2], tv[b]
            else:
                u, v = tv[b], tv[b + 1]
            edges.append((u, v, tn[c], tc[c]))
        slots = list(cavity)
        while len(slots) < len(edges):
            slots.append(self.new_slot())
        for t in slots[len(edges):]:
            self.release(t)
        del slots[len(edges):]
        vt = self.vt
        starting = {}
        for i in range(len(edges)):
            u, v, oc, flag = edges[i]
            t = slots[i]
            b = 3 * t
            tv[b] = u
            tv[b + 1] = v
            tv[b + 2] = p
            tn[b] = -1
            tn[b + 1] = -1
            tn[b + 2] = oc
            if oc >= 0:
                tn[oc] = b + 2
            tc[b] = 0
            tc[b + 1] = 0
            tc[b + 2] = flag
            starting[u] = t
            if u >= 0:
                vt[u] = b
        for i in range(len(edges)):
            t = slots[i]
            t2 = starting.get(edges[i][1])
            if t2 is None:          # open border: the fan is cut here
                tn[3 * t] = -1
                continue
            tn[3 * t] = 3 * t2 + 1
            tn[3 * t2 + 1] = 3 * t
        for i in range(len(edges)):
            if edges[i][0] >= 0 and edges[i][1] >= 0:
                self.last = slots[i]
                vt[p] = 3 * slots[i] + 2
                break
        else:
            vt[p] = 3 * slots[0] + 2
        return slots

    def position_in(self, t, px, py):
        """Where (px, py) sits in triangle t that contains it: ("inside",),
        ("edge", corner opposite that edge) or ("vertex", v)."""
        tv, x, y = self.tv, self.x, self.y
        b = 3 * t
        zero = []
        for k in range(3):
            u, v = tv[b + NEXT[k]], tv[b + PREV[k]]
            if u < 0 or v < 0:
                continue
            if orient2d(x[u], y[u], x[v], y[v], px, py) == 0:
                zero.append(b + k)
        if not zero:
            return ("inside",)
        if len(zero) == 1:
            return ("edge", zero[0])
        for k in range(3):
            v = tv[b + k]
            if v >= 0 and x[v] == px and y[v] == py:
                return ("vertex", v)
        return ("edge", zero[0])

    def insert_vertex_flipping(self, p, t):
        """Insert vertex p lying in real triangle t (on its border allowed, but
        not on a constrained edge) by a 1-to-3 or 2-to-4 split, then restore
        the constrained Delaunay property with Lawson flips.  Works on any
        valid triangulation.  Returns the number of flips."""
        x, y = self.x, self.y
        where = self.position_in(t, x[p], y[p])
        if where[0] == "vertex":
            raise ValueError("vertex coincides with an existing one")
        cavity = [t]
        if where[0] == "edge":
            oc = self.tn[where[1]]
            if oc >= 0:
                cavity.append(oc // 3)
        skip = where[1] if where[0] == "edge" else -1
        boundary = [c for s in cavity for c in (3 * s, 3 * s + 1, 3 * s + 2)
                    if c != skip and (self.tn[c] < 0 or self.tn[c] // 3 not in cavity)]
        slots = self.fill_cavity(p, cavity, boundary)
        return self.legalize_corners([3 * s + 2 for s in slots])

    def release(self, t):
        b = 3 * t
        self.tv[b:b + 3] = [DEAD, DEAD, DEAD]
        self.tn[b:b + 3] = [-1, -1, -1]
        self.tc[b:b + 3] = [0, 0, 0]
        self.free.append(t)

    # ------------------------------------------------------------- adjacency
    def corner_of_vertex(self, v):
        """A corner holding vertex v (scans when the cached one is stale)."""
        c = self.vt[v]
        if c >= 0 and self.tv[c] == v:
            return c
        tv = self.tv
        for c in range(len(tv)):
            if tv[c] == v:
                self.vt[v] = c
                return c
        return -1

    def corners_around(self, v):
        """Corners holding v, counter-clockwise around it (ghosts included).

        For a mesh with open borders the fan may be cut; then it is returned
        from one border to the other."""
        tn = self.tn
        c0 = self.corner_of_vertex(v)
        if c0 < 0:
            return []
        out = [c0]
        c = c0
        while True:
            nb = tn[next_corner(c)]
            if nb < 0:
                break
            c = next_corner(nb)
            if c == c0:
                return out
            out.append(c)
        # open fan: walk the other way from c0 and prepend
        c = c0
        before = []
        while True:
            nb = tn[prev_corner(c)]
            if nb < 0:
                break
            c = prev_corner(nb)
            before.append(c)
        before.reverse()
        return before + out

    def edge_corner_fast(self, u, v):
        """Corner opposite edge {u, v} (either direction) in a closed mesh,
        found by turning around u; -1 when there is no such edge.  Falls back
        to :meth:`find_edge` for meshes with open borders."""
        tv, tn = self.tv, self.tn
        c0 = self.corner_of_vertex(u)
        if c0 < 0:
            return -1
        c = c0
        for _ in range(100000):
            k = c % 3
            b = c - k
            if k == 0:
                n1, n2 = b + 1, b + 2
            elif k == 1:
                n1, n2 = b + 2, b
            else:
                n1, n2 = b, b + 1
            if tv[n1] == v:
                return n2
            if tv[n2] == v:
                return n1
            nb = tn[n1]
            if nb < 0:
                return self.find_edge(u, v)
            c = nb + 1 if nb % 3 != 2 else nb - 2
            if c == c0:
                return -1
        return self.find_edge(u, v)

    def edge_corner(self, u, v):
        """Corner opposite the directed edge u -> v in the triangle holding it, or -1."""
        tv = self.tv
        for c in self.corners_around(u):
            if tv[next_corner(c)] == v:
                return prev_corner(c)
        return -1

    def find_edge(self, u, v):
        """Corner opposite edge {u, v} in either direction, or -1."""
        c = self.edge_corner(u, v)
        if c < 0:
            c = self.edge_corner(v, u)
        return c

    # ------------------------------------------------------------------ flips
    def flip(self, c):
        """Flip the edge opposite corner c.  With t = (p, a, b) holding c at p
        and its neighbour u = (q, b, a), the result is t = (p, a, q) and
        u = (q, b, p).  Returns the corners (in the new triangles) of the four
        outer edges."""
        tv, tn, tc, vt = self.tv, self.tn, self.tc, self.vt
        oc = tn[c]
        ca, cb = next_corner(c), prev_corner(c)
        oa, ob = prev_corner(oc), next_corner(oc)
        p, a, b, q = tv[c], tv[ca], tv[cb], tv[oc]
        n_bp, n_pa = tn[ca], tn[cb]
        n_aq, n_qb = tn[ob], tn[oa]
        f_bp, f_pa = tc[ca], tc[cb]
        f_aq, f_qb = tc[ob], tc[oa]
        t = c // 3
        u = oc // 3
        bt, bu = 3 * t, 3 * u
        tv[bt], tv[bt + 1], tv[bt + 2] = p, a, q
        tv[bu], tv[bu + 1], tv[bu + 2] = q, b, p
        tn[bt] = n_aq
        tc[bt] = f_aq
        tn[bt + 1] = bu + 1
        tn[bu + 1] = bt + 1
        tc[bt + 1] = 0
        tc[bu + 1] = 0
        tn[bt + 2] = n_pa
        tc[bt + 2] = f_pa
        tn[bu] = n_bp
        tc[bu] = f_bp
        tn[bu + 2] = n_qb
        tc[bu + 2] = f_qb
        if n_aq >= 0:
            tn[n_aq] = bt
        if n_pa >= 0:
            tn[n_pa] = bt + 2
        if n_bp >= 0:
            tn[n_bp] = bu
        if n_qb >= 0:
            tn[n_qb] = bu + 2
        if p >= 0:
            vt[p] = bt
        if a >= 0:
            vt[a] = bt + 1
        if q >= 0:
            vt[q] = bt + 2
        if b >= 0:
            vt[b] = bu + 1
        return bt, bt + 2, bu, bu + 2

    def edge_is_illegal(self, c):
        """True when the edge opposite corner c is flippable and fails the
        incircle test (both triangles real, edge not constrained)."""
        tn, tv, x, y = self.tn, self.tv, self.x, self.y
        oc = tn[c]
        if oc < 0 or self.tc[c]:
            return False
        b = c - c % 3
        p0, p1, p2 = tv[b], tv[b + 1], tv[b + 2]
        q = tv[oc]
        if p0 < 0 or p1 < 0 or p2 < 0 or q < 0:
            return False
        return incircle(x[p0], y[p0], x[p1], y[p1], x[p2], y[p2], x[q], y[q]) > 0

    def legalize_corners(self, corners):
        """Lawson's flip algorithm from the given suspect corners; returns flips made."""
        stack = list(corners)
        flips = 0
        is_illegal, flip = self.edge_is_illegal, self.flip
        while stack:
            c = stack.pop()
            if self.tv[c] == DEAD or not is_illegal(c):
                continue
            stack.extend(flip(c))
            flips += 1
        return flips

    def legalize_edges(self, pairs):
        """Lawson's flip algorithm from suspect edges given as vertex pairs
        (robust to flips that move edges between corners); returns flips made."""
        stack = []
        for u, v in pairs:
            c = self.edge_corner_fast(u, v)
            if c >= 0:
                stack.append(c)
        return self.legalize_corners(stack)

    # ----------------------------------------------------------- constraints
    def set_constraint(self, c, on=True):
        """Mark (or unmark) the edge opposite corner c on both of its sides."""
        val = 1 if on else 0
        self.tc[c] = val
        oc = self.tn[c]
        if oc >= 0:
            self.tc[oc] = val

    def add_constraint_info(self, u, v, source, net, count):
        """Record that segment `source` covers edge u -> v `count` times with
        signed direction count `net` (along u -> v)."""
        key = (u, v) if u < v else (v, u)
        signed = net if u < v else -net
        rec = self.constraint_info.get(key)
        if rec is None:
            self.constraint_info[key] = [source, signed, count]
        else:
            rec[0] = min(rec[0], source)
            rec[1] += signed
            rec[2] += count

    def edge_endpoints(self, c):
        """The directed edge (u, v) opposite corner c."""
        tv = self.tv
        return tv[next_corner(c)], tv[prev_corner(c)]
