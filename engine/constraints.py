"""Inserting constraint segments into a Delaunay mesh (constrained Delaunay).

Each segment is recovered by walking from one endpoint towards the other
through the triangles it crosses, then flipping the crossed edges away
(S. W. Sloan, "A fast algorithm for generating constrained Delaunay
triangulations", Computers & Structures 47(3), 1993) and restoring the
constrained Delaunay property with Lawson flips around the new edges.

Special cases, all decided with exact predicates:

* a vertex lying on the segment splits it there (the pieces are inserted in turn);
* a segment overlapping an existing constraint just adds to that edge's record;
* a segment crossing an existing constraint: :func:`engine.cdt.triangulate`
  stops at the first one (``stop_at_crossing``) and inserts the snap-rounded
  segment set instead (:mod:`engine.snap_rounding`), whose fragments meet
  only at shared vertices.  Should a fragment still cross a constraint, the
  fallback below applies: the crossing point of the two
  input segments is computed exactly (fractions), rounded to the nearest
  double and becomes a new vertex; the old constraint is released, the vertex
  inserted, and both constraints are inserted again as pieces through it, so
  no constraint is ever lost even when rounding puts the vertex a hair off
  either line.  Segments meeting at one exact point share one vertex;
* pieces remember their input segment ("carrier"): an input vertex exactly on
  the carrier splits the piece even when the piece ends at a rounded crossing
  (not for snap-rounded fragments: such vertices are already on their route).
"""

from collections import deque
from fractions import Fraction

from .mesh import DEAD, GHOST, next_corner, prev_corner
from .predicates import orient2d


# re-inserting a constraint through a crossing may meet further crossings;
# beyond this nesting the input is refused instead of recursing on
MAX_NESTING = 48


class ConstraintError(RuntimeError):
    """Raised when a segment cannot be recovered (indicates a corrupt mesh)."""


class CrossingFound(Exception):
    """Raised by an inserter with stop_at_crossing=True on the first crossing:
    the caller then snap-rounds the whole segment set (engine.snap_rounding)."""


def _exact_crossing(mesh, first, second, strict=False):
    """Exact crossing point (two Fractions) of the lines through the vertex
    pairs `first` and `second`, or None when they are parallel (with
    strict=True also when it is not strictly inside both segments)."""
    x, y = mesh.x, mesh.y
    a, b = first
    c, d = second
    ax, ay, bx, by = map(Fraction, (x[a], y[a], x[b], y[b]))
    cx, cy, dx, dy = map(Fraction, (x[c], y[c], x[d], y[d]))
    denom = (bx - ax) * (dy - cy) - (by - ay) * (dx - cx)
    if denom == 0:
        return None
    s = ((cx - ax) * (dy - cy) - (cy - ay) * (dx - cx)) / denom
    if strict:
        r = ((cx - ax) * (by - ay) - (cy - ay) * (bx - ax)) / denom
        if not (0 < s < 1 and 0 < r < 1):
            return None
    return (ax + s * (bx - ax), ay + s * (by - ay))


class SegmentInserter:
    """Inserts segments into `mesh` one by one; records added vertices."""

    def __init__(self, mesh, stop_at_crossing=False):
        self.mesh = mesh
        self.stop_at_crossing = stop_at_crossing
        # snap-rounded fragments run a hair off their input segment: points
        # exactly on the input segment are already on their routes
        self.split_on_carrier = True
        self.added = []          # vertex indices created at crossings
        self.released = []       # edges whose constraint was released and re-inserted
        self.depth = 0
        self.budget = 0
        # source segment -> its two input endpoints: the exact line on which
        # input vertices split it, even for pieces that end at rounded crossings
        self.carrier = {}
        # exact crossing point -> the vertex that stands for it
        self.exact_vertex = {}

    # -------------------------------------------------------------- helpers
    def _orient(self, a, b, c):
        x, y = self.mesh.x, self.mesh.y
        return orient2d(x[a], y[a], x[b], y[b], x[c], y[c])

    def _between(self, a, b, c):
        """c, known collinear with a-b, lies strictly inside segment a-b."""
        x, y = self.mesh.x, self.mesh.y
        dot = (x[c] - x[a]) * (x[b] - x[a]) + (y[c] - y[a]) * (y[b] - y[a])
        if (x[c], y[c]) in ((x[a], y[a]), (x[b], y[b])):
            return False
        return dot > 0 and (abs(x[c] - x[a]) <= abs(x[b] - x[a])
                            and abs(y[c] - y[a]) <= abs(y[b] - y[a]))

    def _mark(self, a, b, source, net, count):
        mesh = self.mesh
        c = mesh.find_edge(a, b)
        if c < 0:
            raise ConstraintError(f"edge {a}-{b} missing after recovery")
        mesh.set_constraint(c, True)
        mesh.add_constraint_info(a, b, source, net, count)

    # ----------------------------------------------------------- main entry
    def insert(self, a, b, source, net=1, count=1):
        """Insert segment a -> b (vertex indices) as a constraint."""
        mesh = self.mesh
        if self.depth == 0 and source not in self.carrier:
            self.carrier[source] = (a, b)
        c = mesh.edge_corner_fast(a, b)
        if c >= 0:                       # the common case: already an edge
            mesh.set_constraint(c, True)
            mesh.add_constraint_info(a, b, source, net, count)
            return
        if self.depth == 0:
            # one budget for the segment and every constraint re-inserted
            # through its crossings, however deep
            self.budget = 256 + 16 * len(self.mesh.x)
        if self.depth > MAX_NESTING:
            raise ConstraintError("crossings nested too deep (nearly collinear segments "
                                  "crossing within rounding of each other)")
        self.depth += 1
        try:
            self._insert(a, b, source, net, count)
        finally:
            self.depth -= 1
        if self.depth == 0 and self.released:
            self._relegalize_released()

    def _relegalize_released(self):
        """An edge that lost its constraint may now fail the incircle test and,
        when the crossing vertex did not land on it, still exist: flip those."""
        mesh = self.mesh
        released, self.released = self.released, []
        mesh.legalize_edges(released)

    def _insert(self, a, b, source, net, count):
        work = [(a, b)]
        seen = set()
        # every round either finishes a piece, splits it at an existing
        # vertex, or adds one crossing vertex; bound the rounds generously
        limit = 64 + 8 * len(self.mesh.x)
        while work:
            limit -= 1
            self.budget -= 1
            if limit < 0 or self.budget < 0:
                raise ConstraintError(f"segment {a}-{b} could not be recovered")
            u, v = work.pop()
            if u == v:
                continue
            outcome = self._walk(u, v, self.carrier.get(source))
            kind = outcome[0]
            if kind == "edge":
                self._mark(u, v, source, net, count)
            elif kind == "vertex":            # a vertex w lies on u-v
                w = outcome[1]
                work.append((w, v))
                work.append((u, w))
            elif kind == "cross-constraint":  # u-v crosses constraint (c, d)
                if self.stop_at_crossing:
                    raise CrossingFound()
                c, d = outcome[1], outcome[2]
                key = (u, v, min(c, d), max(c, d))
                if key in seen:
                    # rounded crossings of nearly parallel segments can route
                    # two constraints round each other for ever: snap this
                    # piece to the end of c-d nearest the crossing instead
                    w = self._nearest_end(u, v, c, d)
                else:
                    seen.add(key)
                    w = self._split_constraint(u, v, c, d, source)
                work.append((w, v))
                work.append((u, w))
            else:                              # crossing free edges only
                crossed, end = outcome[1], outcome[2]
                self._flip_out(u, end, crossed)
                self._mark(u, end, source, net, count)
                if end != v:
                    work.append((end, v))

    def _nearest_end(self, u, v, c, d):
        """The end of c-d nearest to where u-v crosses it."""
        exact = _exact_crossing(self.mesh, (u, v), (c, d))
        if exact is None:
            return c
        x, y = self.mesh.x, self.mesh.y
        return min((c, d), key=lambda w: float((x[w] - exact[0]) ** 2 + (y[w] - exact[1]) ** 2))

    # ------------------------------------------------------------- the walk
    def _walk(self, a, b, carrier=None):
        """Follow a -> b.  Returns ("edge",), ("vertex", w),
        ("cross-constraint", c, d) or ("cross", crossed_edges, end_vertex).

        `carrier` (two vertex indices) is the input segment a-b is a piece
        of; a vertex exactly on it between a and b also splits the piece."""
        mesh = self.mesh
        tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
        orient = self._orient
        if not self.split_on_carrier or carrier == (a, b) or carrier == (b, a):
            carrier = None

        def on_carrier(w):
            return (carrier is not None and w not in carrier
                    and orient(carrier[0], carrier[1], w) == 0 and self._between(a, b, w))

        start = None
        for c in mesh.corners_around(a):
            v1, v2 = tv[next_corner(c)], tv[prev_corner(c)]
            if v1 == b or v2 == b:
                return ("edge",)
            if v1 == GHOST or v2 == GHOST:
                continue
            o1 = orient(a, v1, b)
            o2 = orient(a, v2, b)
            if (o1 == 0 and self._between(a, b, v1)) or on_carrier(v1):
                return ("vertex", v1)
            if (o2 == 0 and self._between(a, b, v2)) or on_carrier(v2):
                return ("vertex", v2)
            if o1 > 0 and o2 < 0:
                start = c
                break
        if start is None:
            raise ConstraintError(f"no triangle around vertex {a} faces vertex {b}")
        # the edge opposite `start` is crossed: v1 right of a->b, v2 left
        crossed = []
        c = start
        while True:
            v1, v2 = tv[next_corner(c)], tv[prev_corner(c)]
            if tc[c]:
                return ("cross-constraint", v1, v2)
            crossed.append((v1, v2))
            oc = tn[c]
            w = tv[oc]
            if w == b:
                return ("cross", crossed, b)
            if w == GHOST or w == DEAD:
                raise ConstraintError(f"segment {a}-{b} leaves the triangulation")
            o = orient(a, b, w)
            if o == 0:
                return ("cross", crossed, w)
            if on_carrier(w):
                return ("vertex", w)
            # the next crossed edge of triangle (w, v2, v1) = oc's triangle
            if o < 0:      # w on the right: crossed edge is w-v2, opposite v1
                c = prev_corner(oc)
            else:          # w on the left: crossed edge is v1-w, opposite v2
                c = next_corner(oc)

    # ----------------------------------------------------- edge recovery
    def _flip_out(self, a, b, crossed):
        """Sloan's flips: remove every edge crossing a-b, then legalise."""
        mesh = self.mesh
        tv = mesh.tv
        orient = self._orient
        queue = deque(crossed)
        fresh = []
        outer = []     # border edges of flipped quads: their triangles changed
        guard = 0
        max_guard = 50 * (len(crossed) + 4) ** 2
        while queue:
            guard += 1
            if guard > max_guard:
                raise ConstraintError(f"segment {a}-{b}: edge flips did not converge")
            e1, e2 = queue.popleft()
            c = mesh.find_edge(e1, e2)
            if c < 0:
                raise ConstraintError(f"crossed edge {e1}-{e2} vanished")
            oc = mesh.tn[c]
            p, q = tv[c], tv[oc]
            pa, pb = tv[next_corner(c)], tv[prev_corner(c)]
            # the quad p, pa, q, pb must be strictly convex to flip
            if orient(p, pa, q) <= 0 or orient(q, pb, p) <= 0:
                queue.append((e1, e2))
                continue
            outer.extend(((p, pa), (pa, q), (q, pb), (pb, p)))
            mesh.flip(c)
            if p in (a, b) or q in (a, b):
                fresh.append((p, q))
                continue
            sp, sq = orient(a, b, p), orient(a, b, q)
            if (sp > 0 > sq) or (sp < 0 < sq):
                queue.append((p, q))
            else:
                fresh.append((p, q))
        # restore the constrained Delaunay property around the new edges
        c = mesh.find_edge(a, b)
        mesh.set_constraint(c, True)   # protect a-b while legalising
        mesh.legalize_edges(fresh + outer)

    # ------------------------------------------------------- crossings
    def _split_constraint(self, a, b, c, d, source):
        """Add the crossing vertex of a-b (a piece of segment `source`) with
        constraint c-d and re-insert c-d through it.  Returns the vertex.

        The crossing is computed exactly on the two input segments (their
        carriers), so several segments through one point that is not a
        double share a single rounded vertex."""
        mesh = self.mesh
        key = (c, d) if c < d else (d, c)
        other = mesh.constraint_info[key][0]
        exact = _exact_crossing(mesh, self.carrier.get(source, (a, b)),
                                self.carrier.get(other, (c, d)), strict=True)
        if exact is None:
            # carriers parallel, or meeting only at an end: rounding of earlier
            # crossings made the pieces cross, so split where the pieces do
            exact = _exact_crossing(mesh, (a, b), (c, d))
        w = self.exact_vertex.get(exact)
        if w is not None and w in (c, d):
            return w               # the crossing is that end of c-d: route a-b through it
        rec_source, net, count = mesh.constraint_info.pop(key)
        corner = mesh.find_edge(c, d)
        mesh.set_constraint(corner, False)
        self.released.append((c, d))
        if w is None:
            px, py = float(exact[0]), float(exact[1])
            t = mesh.locate(px, py, corner // 3)
            if mesh.is_live_real(t):
                w = self.insert_point(px, py, start=t)
                self.exact_vertex.setdefault(exact, w)
            else:
                # rounding put the crossing outside the (very thin) hull: route
                # both constraints through the nearest of their four ends
                w = min((a, b, c, d), key=lambda v: (float(mesh.x[v] - exact[0]) ** 2
                                                     + float(mesh.y[v] - exact[1]) ** 2))
        lo, hi = key
        # pieces keep the old record, in the lo -> hi direction
        self.insert(lo, w, rec_source, net, count)
        self.insert(w, hi, rec_source, net, count)
        return w

    def insert_point(self, px, py, start=None):
        """Insert a new point, releasing and re-inserting any constraint it
        lies on.  Returns its vertex index (an existing one if it coincides)."""
        mesh = self.mesh
        x, y, tv = mesh.x, mesh.y, mesh.tv
        t = mesh.locate(px, py, start)
        if not mesh.is_live_real(t):
            raise ConstraintError("a crossing point fell outside the triangulation")
        for k in range(3):
            v = tv[3 * t + k]
            if v >= 0 and x[v] == px and y[v] == py:
                return v
        w = mesh.add_vertex(px, py)
        self.added.append(w)
        split = []
        if mesh.is_live_real(t):
            for k in range(3):
                c = 3 * t + k
                if not mesh.tc[c]:
                    continue
                u, v = mesh.edge_endpoints(c)
                if orient2d(x[u], y[u], x[v], y[v], px, py) == 0:
                    key = (u, v) if u < v else (v, u)
                    split.append((key, mesh.constraint_info.pop(key)))
                    mesh.set_constraint(c, False)
                    self.released.append(key)
        mesh.insert_vertex_flipping(w, t)
        for (lo, hi), (source, net, count) in split:
            self.insert(lo, w, source, net, count)
            self.insert(w, hi, source, net, count)
        return w
