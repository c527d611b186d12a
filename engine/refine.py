"""Delaunay refinement: add Steiner points until every triangle has a minimum
angle and respects size limits, keeping the mesh constrained Delaunay.

Methods (published; the names are theirs):

* Ruppert's algorithm: J. Ruppert, "A Delaunay refinement algorithm for
  quality 2-dimensional mesh generation", Journal of Algorithms 18(3), 1995.
  Encroached segments are split first; then bad triangles are fixed by
  inserting a point inside their circumcircle, unless that point encroaches
  upon a segment, in which case the segment is split instead.
* Shewchuk's improvements: J. R. Shewchuk, "Delaunay refinement algorithms
  for triangular mesh generation", Computational Geometry: Theory and
  Applications 22(1-3), 2002, and "Mesh generation for domains with small
  angles", Proc. 16th ACM Symposium on Computational Geometry, 2000:
  bad triangles are processed worst first; a segment is encroached when a
  vertex lies in its diametral lens (here: sees the segment under an angle of
  at least 180 - 2 * max(min_angle, 5) degrees, and never less than 90; the
  5-degree floor keeps size-only runs from placing points a rounding error
  away from a segment) instead of
  its diametral circle; segments with exactly one input endpoint are split
  on concentric shells (at a power-of-two distance from that endpoint) so
  that segments meeting at a small input angle are split at matching
  radii and stop encroaching upon each other; skinny triangles that sit
  inside a small input angle are not attacked, and a segment near such an
  angle is not split into pieces shorter than the shortest edge of the
  skinny triangle that asked for the split.
* Off-centers: A. Ungor, "Off-centers: a new type of Steiner points for
  computing size-optimal quality-guaranteed Delaunay triangulations",
  LATIN 2004 (LNCS 2976), and Computational Geometry 42(2), 2009.  A bad
  triangle with shortest edge pq gets the point on the bisector of pq that
  makes an isosceles triangle with apex angle just above min_angle when that
  point is nearer to pq than the circumcenter: fewer points, same bounds.
* Smoothing: the optimal Delaunay triangulation update of L. Chen and J. Xu,
  "Optimal Delaunay triangulations", Journal of Computational Mathematics
  22(2), 2004, as used by P. Alliez, D. Cohen-Steiner, M. Yvinec and
  M. Desbrun, "Variational tetrahedral meshing", ACM Transactions on
  Graphics 24(3), 2005: an interior Steiner vertex moves to the
  area-weighted mean of the circumcenters of its triangles.  A move is kept
  only when the smallest angle of the vertex's triangles grows, and Lawson
  flips restore the constrained Delaunay property after each move.

Published bounds: with diametral circles (or lenses) Ruppert's algorithm
with Shewchuk's analysis terminates for min_angle up to about 20.7 degrees
(arcsin(1 / (2 sqrt 2))) on inputs without angles under 60 degrees; in
practice it terminates up to about 33-34 degrees.  Larger requests are
accepted and run until the point limit.

Graded sizes (a design of this module): with ``size_growth=g`` every triangle
must have its longest edge below h(x) at its centroid, where
h(x) = min over input vertices v of (s_v + g * |x - v|) and s_v is the length
of the shortest edge at v in the input triangulation (a stand-in for the local
feature size).  h grows by at most g per unit of distance, so the mesh is
fine near small features and coarsens at a bounded rate away from them.  h
is sampled on a background grid (exact values at the grid nodes, the
minimum over a cell's four corners minus the Lipschitz slack, so the grid
never allows more than h).

Robustness: every orientation and incircle decision uses the exact-sign
predicates of :mod:`engine.predicates`.  A split point is computed in floats
and may be a hair off its segment; it is inserted combinatorially on the
segment (both triangles beside the segment are removed together), and the
insertion is refused and the segment frozen when the new triangles would
not all be strictly counter-clockwise.
"""

import heapq
import math
from collections import deque

import numpy as np

from .cdt import mesh_to_triangulation
from .legalize import illegal_corners, mesh_from_triangles
from .mesh import DEAD
from .predicates import (CCW_BOUND, INCIRCLE_LOOSE, incircle_exact, orient2d, orient2d_exact,
                         point_on_left)
from .quality import quality
from .smoothing import SmoothingSteps
from .size_fields import RELAX_GROWTH, RelaxGrid, SizeGrid
from .triangulation import Triangulation

# the published Ruppert/Shewchuk guarantee, arcsin(1 / (2 sqrt 2)) in degrees
GUARANTEED_ANGLE = math.degrees(math.asin(1.0 / (2.0 * math.sqrt(2.0))))
# an input angle below this makes its vertex the apex of a segment cluster
SMALL_INPUT_ANGLE = 60.0
# without max_points the number of added points is capped at this
DEFAULT_POINT_CAP = 2_000_000
# smallest lens angle (degrees) used for encroachment, whatever min_angle is
LENS_FLOOR = 5.0
# method="auto" takes the batched path from this expected output size
BATCHED_FROM = 3_000
# the batched path starts once the sequential insertions' cavities hold
# fewer triangles than this on average (over WARM_UP_WINDOW points): a
# round inserts about one point per cavity-sized patch of bad triangles,
# so while cavities are large (the first points in long slivers) one point
# at a time is cheaper
WARM_UP_CAVITY = 8.0
WARM_UP_WINDOW = 64

_NEXT = (1, 2, 0)
_PREV = (2, 0, 1)


def _next(c):
    return c + 1 if c % 3 != 2 else c - 2


def _prev(c):
    return c - 1 if c % 3 != 0 else c + 2


def _check_options(min_angle, max_area, max_edge, max_points, encroachment, size_growth,
                   smoothing_passes):
    try:
        min_angle = float(min_angle)
    except (TypeError, ValueError):
        raise ValueError(f"min_angle must be a number of degrees, got {min_angle!r}") from None
    if not (0.0 <= min_angle < 60.0):
        raise ValueError(f"min_angle must be in [0, 60) degrees, got {min_angle}")
    for name, val in (("max_area", max_area), ("max_edge", max_edge),
                      ("size_growth", size_growth)):
        if val is not None and not (isinstance(val, (int, float)) and math.isfinite(val)
                                    and val > 0):
            raise ValueError(f"{name} must be a positive number or None, got {val!r}")
    if max_points is not None and (not isinstance(max_points, (int, np.integer))
                                   or max_points < 0):
        raise ValueError(f"max_points must be a non-negative integer or None, got {max_points!r}")
    if encroachment not in ("lens", "circle"):
        raise ValueError(f"encroachment must be 'lens' or 'circle', got {encroachment!r}")
    if not isinstance(smoothing_passes, (int, np.integer)) or smoothing_passes < 0:
        raise ValueError(f"smoothing_passes must be a non-negative integer, got "
                         f"{smoothing_passes!r}")
    return min_angle


def refine(tri, *, min_angle=30.0, max_area=None, max_edge=None, keep_boundary=False,
           max_points=None, off_centers=True, encroachment="lens", size_growth=None,
           smoothing=False, smoothing_passes=4, fixed_segments=None, method="auto"):
    """Refine a :class:`Triangulation` (from :func:`engine.triangulate`) by
    adding Steiner points.  Returns a new Triangulation; the input is not changed.

    min_angle        smallest angle wanted, degrees in [0, 60).  Up to about
                     20.7 degrees termination is guaranteed for inputs without
                     angles under 60; up to about 33 it is reached in practice;
                     above that the run usually stops at the point limit.
    max_area         no triangle larger than this (hard limit, measured in
                     floating point: a run that cannot meet it, next to
                     segment pieces that cannot be split, ends with
                     complete=False and a stop_reason).
    max_edge         no triangle edge longer than this (hard limit, as above).
    keep_boundary    True: no point is added on any constrained edge or on the
                     border of the region, so the outline and every segment
                     stay exactly as they are; the angle and size limits then
                     hold away from them, as far as the fixed edges allow.
    max_points       cap on added points; when reached the result has
                     complete=False and a stop_reason.  Without it a cap of
                     DEFAULT_POINT_CAP applies.
    off_centers      True: Ungor's off-centers instead of circumcenters for
                     skinny triangles (fewer points).
    encroachment     "lens" (Shewchuk's diametral lenses, fewer points) or
                     "circle" (Ruppert's diametral circles).
    size_growth      graded sizes: edges near small features are about as long
                     as those features, and the allowed edge length grows by at
                     most this much per unit of distance (e.g. 0.25).
    smoothing        True: move interior Steiner points (optimal Delaunay
                     update), keeping a move only where it raises the local
                     smallest angle, then restore the Delaunay property.
    smoothing_passes number of sweeps over the vertices when smoothing.
    fixed_segments   (K, 2) point-index pairs: segments (or border edges) that
                     must not be split, as with keep_boundary but for these
                     edges only (e.g. an outline shared with a finished mesh).
    method           "sequential": one point at a time (the reference path);
                     "batched": array rounds of independent insertions
                     (:mod:`engine.batch_refine`), after one point at a time
                     while the cavities are large (WARM_UP_CAVITY);
                     keep_boundary, size_growth, fixed_segments and smoothing
                     run sequentially; "auto":
                     batched when the refined mesh is expected to have at
                     least BATCHED_FROM triangles and the options allow it.

    Border edges of the region that are not segments act as segments.  Added
    points come after the existing ones; pieces of split segments keep their
    segment_source.  stats holds before/after figures (smallest angle,
    counts of triangles and points, how many points of each kind)."""
    min_angle = _check_options(min_angle, max_area, max_edge, max_points, encroachment,
                               size_growth, smoothing_passes)
    if not isinstance(tri, Triangulation):
        raise ValueError("tri must be a Triangulation (as returned by engine.triangulate)")
    if len(tri.triangles) == 0:
        raise ValueError("the triangulation has no triangles")
    if method not in ("auto", "sequential", "batched"):
        raise ValueError(f"method must be 'auto', 'sequential' or 'batched', got {method!r}")
    from . import batch_refine
    batched = method != "sequential" and batch_refine.supports(
        keep_boundary, size_growth, fixed_segments, smoothing)
    if batched and method == "auto":
        batched = batch_refine.estimated_triangles(tri, max_area, max_edge) >= BATCHED_FROM
    ref = _Refiner(tri, min_angle, max_area, max_edge, bool(keep_boundary),
                   DEFAULT_POINT_CAP if max_points is None else int(max_points),
                   bool(off_centers), encroachment, size_growth)
    if fixed_segments is not None and len(fixed_segments):
        fixed = np.asarray(fixed_segments)
        if fixed.ndim != 2 or fixed.shape[1] != 2:
            raise ValueError(f"fixed_segments must have shape (K, 2), got {fixed.shape}")
        if fixed.min() < 0 or fixed.max() >= len(tri.points):
            raise ValueError("fixed_segments use a point index out of range")
        for a, b in fixed.astype(np.int64).tolist():
            key = (a, b) if a < b else (b, a)
            ref.unsplittable.add(key)
            ref.fixed_keys.add(key)
    if batched:
        ref.run(warm_up=True)
        return batch_refine.refine_batched(tri, ref, bool(smoothing), smoothing_passes)
    ref.prepare_relaxation()
    ref.run()
    if smoothing and smoothing_passes:
        ref.smooth(smoothing_passes)
    return ref.result(tri)


class _CornerFigures:
    """Per-corner and per-vertex figures of an open-bordered Mesh, in arrays:
    the vertex at each corner, which corners face a constrained or border
    edge, each corner's angle, and per vertex the number of constrained and
    of border edge ends and the sum of its corner angles."""

    def __init__(self, mesh):
        corner_v = np.asarray(mesh.tv, dtype=np.int64)
        facing = np.asarray(mesh.tn, dtype=np.int64)
        self.corner_v = corner_v
        self.live = live = corner_v != DEAD
        self.blocking = live & ((np.asarray(mesh.tc, dtype=np.int64) != 0) | (facing < 0))
        c = np.arange(len(corner_v))
        nxt_v = corner_v[c - c % 3 + (c % 3 + 1) % 3]
        prv_v = corner_v[c - c % 3 + (c % 3 + 2) % 3]
        n = len(mesh.x)

        def ends(mask):
            return (np.bincount(nxt_v[mask], minlength=n)
                    + np.bincount(prv_v[mask], minlength=n))
        self.count = ends(self.blocking)
        self.border_count = ends(live & (facing < 0))
        px, py = np.asarray(mesh.x), np.asarray(mesh.y)
        v0, a0, b0 = corner_v[live], nxt_v[live], prv_v[live]
        ux, uy = px[a0] - px[v0], py[a0] - py[v0]
        wx, wy = px[b0] - px[v0], py[b0] - py[v0]
        angle = np.zeros(len(corner_v))
        angle[live] = np.arctan2(np.abs(ux * wy - uy * wx), ux * wx + uy * wy)
        self.angle = angle.tolist()
        self.angle_sum = np.bincount(v0, weights=angle[live], minlength=n)


class _Refiner(SmoothingSteps):
    """The refinement state: an open-bordered Mesh over the kept region plus
    the queues of encroached segments and bad triangles."""

    def __init__(self, tri, min_angle, max_area, max_edge, keep_boundary, cap, off_centers,
                 encroachment, size_growth):
        pts = np.asarray(tri.points, dtype=np.float64)
        self.n0 = len(pts)
        mesh = mesh_from_triangles(pts, np.asarray(tri.triangles, dtype=np.int64))
        self.mesh = mesh
        self.min_angle = min_angle
        self.keep_boundary = keep_boundary
        self.cap = cap
        self.off_centers = off_centers and min_angle > 0.0
        s = math.sin(math.radians(min_angle))
        self.sin2_bound = s * s
        # off-center distance from the shortest edge's midpoint, in units of
        # that edge: isosceles triangle with apex angle slightly above min_angle
        apex = math.radians(min(min_angle * 1.04 + 0.5, 59.0)) if min_angle > 0 else 0.0
        self.off_factor = 0.5 / math.tan(0.5 * apex) if min_angle > 0 else math.inf
        # encroachment: the angle under which a vertex sees a segment; the
        # lens never shrinks below that of LENS_FLOOR degrees, so a size-only
        # run (min_angle 0) still splits a segment rather than putting a
        # point a rounding error away from it
        if encroachment == "lens":
            enc_angle = max(90.0, 180.0 - 2.0 * max(min_angle, LENS_FLOOR))
        else:
            enc_angle = 90.0
        self.enc_cos2 = math.cos(math.radians(enc_angle)) ** 2 if enc_angle > 90.0 else 0.0
        self.area2_limit = 2.0 * max_area if max_area is not None else math.inf
        self.edge2_limit = max_edge * max_edge if max_edge is not None else math.inf
        self.max_edge = max_edge
        bbox = np.ptp(pts[np.unique(np.asarray(tri.triangles).ravel())], axis=0)
        scale = float(np.hypot(*bbox)) or 1.0
        self.min_len = 1e-11 * scale
        self.stats = dict(steiner_points=0, off_centers=0, circumcenters=0, segment_splits=0,
                          skipped_small_angle=0, rejected_near_small_angle=0,
                          failed_insertions=0, fallback_points=0, frozen_segments=0,
                          unfixable_fixed_boundary=0)
        self.unsplittable = set()
        self.start = len(pts)
        self.fixed_keys = set()         # fixed_segments: never split, like keep_boundary
        self.fixed_vertices = None      # keep_boundary: vertices of fixed edges (lazy)
        self.seg_origin = {}          # Steiner vertex on a segment -> input endpoints (A, B)
        self.heap = []               # skinny triangles, worst first
        self.big = deque()           # triangles only too large, oldest first
        self.segq = []
        self.cavity_triangles = 0       # triangles removed by the insertions so far
        self.complete = True
        self.stopped_by = ""            # why not complete: "point_cap" or "size_limit"
        self.stop_reason = ""
        self._mark_constraints(tri)
        # the input need not be constrained Delaunay: make it so (no point moves)
        mesh.legalize_corners(illegal_corners(mesh))
        figures = _CornerFigures(mesh)
        self.small_apex = self._small_angle_apexes(figures)
        # vertices where the region pinches (a hole touching the outline):
        # their triangles form more than one fan
        self.pinched = set(np.flatnonzero(figures.border_count > 2).tolist())
        self.grid = SizeGrid(mesh, self.n0, size_growth, max_edge) if size_growth else None
        self.relax = None

    def prepare_relaxation(self):
        """With fixed edges (keep_boundary or fixed_segments) longer than the
        size limits allow, relax the limits in a graded band around them: the
        triangle standing on a fixed edge of length L is as large as L, and
        sizes may shrink by RELAX_GROWTH per unit of distance from there.
        Without the band, refinement would pack slivers against the edge."""
        if self.area2_limit == math.inf and self.edge2_limit == math.inf:
            return
        target = math.sqrt(self.edge2_limit) if self.edge2_limit < math.inf else math.inf
        if self.area2_limit < math.inf:
            target = min(target, math.sqrt(self.area2_limit / 0.8660254037844386))
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        fixed = []
        for c in range(len(tv)):
            if tv[c] == DEAD or not (tc[c] or tn[c] < 0) or (tn[c] >= 0 and tn[c] < c):
                continue
            u, v = tv[_next(c)], tv[_prev(c)]
            key = (u, v) if u < v else (v, u)
            if not (self.keep_boundary or key in self.unsplittable):
                continue
            if math.hypot(x[u] - x[v], y[u] - y[v]) > target:
                fixed.append((x[u], y[u], x[v], y[v]))
        if fixed:
            self.relax = RelaxGrid(mesh, np.array(fixed), RELAX_GROWTH)

    # ------------------------------------------------------------ set-up
    def _mark_constraints(self, tri):
        mesh = self.mesh
        segs = np.asarray(tri.segments, dtype=np.int64).reshape(-1, 2)
        if not len(segs):
            return
        src = np.asarray(tri.segment_source, dtype=np.int64).reshape(-1)
        tv = np.asarray(mesh.tv, dtype=np.int64)
        n = len(mesh.x)
        corners = np.arange(len(tv))
        base = corners - corners % 3
        u = tv[base + (corners % 3 + 1) % 3]
        v = tv[base + (corners % 3 + 2) % 3]
        keys = np.minimum(u, v) * n + np.maximum(u, v)
        order = np.argsort(keys, kind="stable")
        skeys = keys[order]
        lo, hi = segs.min(axis=1), segs.max(axis=1)
        want = lo * n + hi
        pos = np.searchsorted(skeys, want)
        pos = np.minimum(pos, len(skeys) - 1)
        found = skeys[pos] == want
        if not found.all():
            i = int(np.flatnonzero(~found)[0])
            raise ValueError(f"segment {segs[i].tolist()} is not an edge of the triangles")
        for (a, b), c, s in zip(np.column_stack((lo, hi)).tolist(), order[pos].tolist(),
                                src.tolist()):
            mesh.set_constraint(c, True)
            mesh.constraint_info[(a, b)] = [s, 1, 1]

    def _small_angle_apexes(self, fig):
        """Input vertices where two constrained edges (segments or border)
        bound a sector of the mesh with an angle under SMALL_INPUT_ANGLE
        (`fig`: the mesh's _CornerFigures)."""
        mesh = self.mesh
        tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
        limit = math.radians(SMALL_INPUT_ANGLE)
        # a vertex whose only constrained edges are its two border edges has
        # one sector, the sum of its corner angles (every vertex of a plain
        # outline: found at once)
        simple = (fig.count == 2) & (fig.border_count == 2)
        apexes = set(np.flatnonzero(simple & (fig.angle_sum < limit)).tolist())
        # the others (segments at the vertex, or two fans at a vertex where a
        # hole touches the outline): walk each sector counter-clockwise from
        # the constrained edge that opens it to the one that closes it
        others = np.zeros(len(fig.count), dtype=bool)
        others[np.flatnonzero((fig.count >= 2) & ~simple)] = True
        corner = np.arange(len(fig.corner_v))
        opens = fig.live & fig.blocking[corner - corner % 3 + (corner % 3 + 2) % 3]
        angle = fig.angle
        for c in np.flatnonzero(opens & others[np.maximum(fig.corner_v, 0)]).tolist():
            v = tv[c]
            sector = 0.0
            for _ in range(len(tv)):
                sector += angle[c]
                n = _next(c)
                if tc[n] or tn[n] < 0:
                    break
                c = _next(tn[n])
            if sector < limit:
                apexes.add(v)
        return apexes

    # ------------------------------------------------------------ queries
    def _edge_corner(self, u, v):
        """Corner opposite edge {u, v} (in a triangle holding it), or -1.
        The search turns around one end; an end where the region pinches has
        several fans, so the other end is tried too, and a scan settles an
        edge between two such vertices."""
        c = self._edge_corner_around(u, v)
        if c < 0 and u in self.pinched:
            c = self._edge_corner_around(v, u)
            if c < 0 and v in self.pinched:
                c = self._edge_corner_by_scan(u, v)
        return c

    def _edge_corner_by_scan(self, u, v):
        tv = self.mesh.tv
        for c in range(len(tv)):
            if tv[c] == DEAD:
                continue
            a, b = tv[_next(c)], tv[_prev(c)]
            if (a == u and b == v) or (a == v and b == u):
                return c
        return -1

    def _edge_corner_around(self, u, v):
        """_edge_corner by turning around u from its cached corner."""
        mesh = self.mesh
        tv, tn, vt = mesh.tv, mesh.tn, mesh.vt
        c0 = vt[u]
        if c0 < 0 or tv[c0] != u:
            c0 = mesh.corner_of_vertex(u)
            if c0 < 0:
                return -1
        c = c0
        while True:                 # counter-clockwise around u
            n1 = _next(c)
            n2 = _prev(c)
            if tv[n1] == v:
                return n2
            if tv[n2] == v:
                return n1
            nb = tn[n1]
            if nb < 0:
                break
            c = _next(nb)
            if c == c0:
                return -1
        c = c0
        while True:                 # clockwise, after meeting the border
            nb = tn[_prev(c)]
            if nb < 0:
                return -1
            c = _prev(nb)
            n1 = _next(c)
            n2 = _prev(c)
            if tv[n1] == v:
                return n2
            if tv[n2] == v:
                return n1
            if c == c0:
                return -1

    def _is_blocking(self, c):
        return self.mesh.tc[c] or self.mesh.tn[c] < 0

    def _encroaches(self, a, b, q):
        """Vertex/point q (coordinates) encroaches upon segment a-b (vertex ids)."""
        x, y = self.mesh.x, self.mesh.y
        qx, qy = q
        ax, ay = x[a] - qx, y[a] - qy
        bx, by = x[b] - qx, y[b] - qy
        dot = ax * bx + ay * by
        if dot >= 0.0:
            return False
        return dot * dot >= self.enc_cos2 * (ax * ax + ay * ay) * (bx * bx + by * by)

    def _edge_encroached(self, c):
        """The segment opposite corner c is encroached by an apex beside it."""
        mesh = self.mesh
        tv, tn, x, y = mesh.tv, mesh.tn, mesh.x, mesh.y
        u, v = tv[_next(c)], tv[_prev(c)]
        w = tv[c]
        if self._encroaches(u, v, (x[w], y[w])):
            return True
        oc = tn[c]
        if oc >= 0:
            w = tv[oc]
            return self._encroaches(u, v, (x[w], y[w]))
        return False

    def _origin(self, u, v):
        """The input endpoints of the segment (or border edge) that piece u-v is on."""
        n0 = self.n0
        if u >= n0:
            return self.seg_origin.get(u, (u, v))
        if v >= n0:
            return self.seg_origin.get(v, (u, v))
        return (u, v)

    def _split_position(self, u, v):
        """Split point of piece u-v: concentric shells when exactly one end is
        an input vertex, else the midpoint.  Returns (x, y, shorter piece length)."""
        x, y = self.mesh.x, self.mesh.y
        n0 = self.n0
        dx, dy = x[v] - x[u], y[v] - y[u]
        length = math.hypot(dx, dy)
        if (u < n0) != (v < n0):
            a, b = (u, v) if u < n0 else (v, u)
            # the power of two in [length / 3, 2 length / 3] nearest length / 2
            m, e = math.frexp(length / 2.0)        # length/2 = m * 2**e, m in [0.5, 1)
            d = math.ldexp(1.0, e) if m >= 0.5 * math.sqrt(2.0) else math.ldexp(1.0, e - 1)
            if d > 2.0 * length / 3.0:
                d *= 0.5
            elif d < length / 3.0:
                d *= 2.0
            t = d / length
            px = x[a] + t * (x[b] - x[a])
            py = y[a] + t * (y[b] - y[a])
            return px, py, min(d, length - d)
        return x[u] + 0.5 * dx, y[u] + 0.5 * dy, 0.5 * length

    def _in_cluster(self, u, v):
        a, b = self._origin(u, v)
        return a in self.small_apex or b in self.small_apex

    def _may_split(self, u, v, lmin):
        """May piece u-v be split on behalf of a skinny triangle whose shortest
        edge is lmin (None: on behalf of a vertex or a size limit)?"""
        if self.keep_boundary:
            return False
        key = (u, v) if u < v else (v, u)
        if key in self.unsplittable:
            return False
        if lmin is not None and self._in_cluster(u, v):
            _, _, shorter = self._split_position(u, v)
            if shorter < lmin:
                self.stats["rejected_near_small_angle"] += 1
                return False
        return True

    # ------------------------------------------------------- triangle figures
    def _push_if_bad(self, t):
        """Queue triangle slot t when it is skinny or too large."""
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        b = 3 * t
        a0, a1, a2 = tv[b], tv[b + 1], tv[b + 2]
        ax, ay, bx, by, cx, cy = x[a0], y[a0], x[a1], y[a1], x[a2], y[a2]
        key = self._badness(ax, ay, bx, by, cx, cy)
        if key is not None:
            self._queue(key, t, a0, a1, a2)

    def _queue(self, key, t, a, b, c):
        if key < 1.0:
            heapq.heappush(self.heap, (key, t, a, b, c))
        else:
            self.big.append((key, t, a, b, c))

    def _badness(self, ax, ay, bx, by, cx, cy):
        """Priority key (smaller first) for a bad triangle, None for a good one:
        sin^2 of the smallest angle when skinny, else 1 + (limit / size)."""
        l0 = (bx - cx) ** 2 + (by - cy) ** 2
        l1 = (cx - ax) ** 2 + (cy - ay) ** 2
        l2 = (ax - bx) ** 2 + (ay - by) ** 2
        area2 = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
        lo = min(l0, l1, l2)
        hi = max(l0, l1, l2)
        s2 = area2 * area2 * lo / (l0 * l1 * l2)
        if s2 < self.sin2_bound:
            return s2
        ratio = 1.0
        area2_limit, edge2_limit = self.area2_limit, self.edge2_limit
        if self.relax is not None and (area2 > area2_limit or hi > edge2_limit):
            r = self.relax.size_at((ax + bx + cx) / 3.0, (ay + by + cy) / 3.0)
            edge2_limit = max(edge2_limit, r * r)
            area2_limit = max(area2_limit, 0.8660254037844386 * r * r)
        if area2 > area2_limit:
            ratio = area2_limit / area2
        if hi > edge2_limit:
            ratio = min(ratio, edge2_limit / hi)
        if self.grid is not None:
            h = self.grid.size_at((ax + bx + cx) / 3.0, (ay + by + cy) / 3.0)
            if hi > h * h:
                ratio = min(ratio, h * h / hi)
        if ratio < 1.0:
            return 1.0 + ratio
        return None

    def _size_bad(self, ax, ay, bx, by, cx, cy):
        """The triangle breaks a size limit (area, edge or graded size)."""
        area2 = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
        hi = max((bx - cx) ** 2 + (by - cy) ** 2, (cx - ax) ** 2 + (cy - ay) ** 2,
                 (ax - bx) ** 2 + (ay - by) ** 2)
        area2_limit, edge2_limit = self.area2_limit, self.edge2_limit
        if self.relax is not None and (area2 > area2_limit or hi > edge2_limit):
            r = self.relax.size_at((ax + bx + cx) / 3.0, (ay + by + cy) / 3.0)
            edge2_limit = max(edge2_limit, r * r)
            area2_limit = max(area2_limit, 0.8660254037844386 * r * r)
        if area2 > area2_limit:
            return True
        if hi > edge2_limit:
            return True
        if self.grid is not None:
            h = self.grid.size_at((ax + bx + cx) / 3.0, (ay + by + cy) / 3.0)
            return hi > h * h
        return False

    # ------------------------------------------------------------ the walk
    def _walk(self, t, px, py):
        """Walk on the straight line from the centroid of t towards p.
        Returns ("in", slot), ("cross", corner of the blocking edge) or ("fail",)."""
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        b = 3 * t
        v0, v1, v2 = tv[b], tv[b + 1], tv[b + 2]
        sx = (x[v0] + x[v1] + x[v2]) / 3.0
        sy = (y[v0] + y[v1] + y[v2]) / 3.0
        inside = True
        for k in range(3):
            e1, e2 = tv[b + _NEXT[k]], tv[b + _PREV[k]]
            if orient2d(x[e1], y[e1], x[e2], y[e2], sx, sy) <= 0:
                return ("fail",)
            o = orient2d(x[e1], y[e1], x[e2], y[e2], px, py)
            if o < 0:
                inside = False
            elif o == 0 and (tc[b + k] or tn[b + k] < 0):
                return ("cross", b + k)
        if inside:
            return ("in", t)
        c = -1
        for k in range(3):
            e1, e2 = tv[b + _NEXT[k]], tv[b + _PREV[k]]
            if orient2d(sx, sy, px, py, x[e1], y[e1]) <= 0 < orient2d(sx, sy, px, py,
                                                                      x[e2], y[e2]):
                c = b + k
                break
        if c < 0:
            return ("fail",)
        for _ in range(4 * len(mesh.mark) + 16):
            if tc[c] or tn[c] < 0:
                return ("cross", c)
            oc = tn[c]
            o = tv[oc]
            if orient2d(sx, sy, px, py, x[o], y[o]) > 0:
                c2 = _next(oc)          # exit through edge (e1, o)
            else:
                c2 = _prev(oc)          # exit through edge (o, e2)
            f1, f2 = tv[_next(c2)], tv[_prev(c2)]
            side = orient2d(x[f1], y[f1], x[f2], y[f2], px, py)
            if side > 0:
                return ("in", oc // 3)
            if side == 0:
                if tc[c2] or tn[c2] < 0:
                    return ("cross", c2)
                return ("in", oc // 3)
            c = c2
        return ("fail",)

    # ---------------------------------------------------- cavity and insertion
    def _cavity(self, px, py, seeds, skip=-1, check_star=True):
        """Bowyer-Watson conflict region of point p grown from the triangles
        `seeds` without crossing constraints or the border.  Returns
        (cavity slots, border corners, blocked corners) or None when the region
        is not star-shaped from p (then nothing may be inserted).  The check
        is skipped (check_star=False) only for a point strictly inside one
        seed when no constraint bounds the region: then Delaunay's lemma
        makes the region star-shaped."""
        mesh = self.mesh
        tv, tn, tc, mark, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.mark, mesh.x, mesh.y
        mesh.stamp += 2
        inside = mesh.stamp
        outside = inside + 1
        for t in seeds:
            mark[t] = inside
        cavity = list(seeds)
        stack = list(seeds)
        boundary = []
        blocked = []
        push = stack.append
        keep = cavity.append
        border = boundary.append
        loose = INCIRCLE_LOOSE
        while stack:
            t = stack.pop()
            c = 3 * t - 1
            for _ in range(3):
                c += 1
                oc = tn[c]
                if oc < 0 or tc[c]:
                    border(c)
                    blocked.append(c)
                    continue
                u = oc // 3
                m = mark[u]
                if m == inside:
                    continue
                if m == outside:
                    border(c)
                    continue
                ub = 3 * u
                va = tv[ub]
                vb = tv[ub + 1]
                vc = tv[ub + 2]
                adx = x[va] - px
                ady = y[va] - py
                bdx = x[vb] - px
                bdy = y[vb] - py
                cdx = x[vc] - px
                cdy = y[vc] - py
                alift = adx * adx + ady * ady
                blift = bdx * bdx + bdy * bdy
                clift = cdx * cdx + cdy * cdy
                det = (alift * (bdx * cdy - cdx * bdy) + blift * (cdx * ady - adx * cdy)
                       + clift * (adx * bdy - bdx * ady))
                bound = loose * (alift * blift + blift * clift + clift * alift)
                if det > bound or (det >= -bound and incircle_exact(
                        x[va], y[va], x[vb], y[vb], x[vc], y[vc], px, py) > 0):
                    mark[u] = inside
                    keep(u)
                    push(u)
                else:
                    mark[u] = outside
                    border(c)
        if skip >= 0:
            boundary.remove(skip)
            blocked.remove(skip)
        if check_star or blocked:
            # star-shaped check: p strictly left of every border edge
            for c in boundary:
                k = c % 3
                b = c - k
                e1 = tv[b + _NEXT[k]]
                e2 = tv[b + _PREV[k]]
                ax, ay, bx, by = x[e1], y[e1], x[e2], y[e2]
                left = (ax - px) * (by - py)
                right = (ay - py) * (bx - px)
                det = left - right
                if det <= CCW_BOUND * (abs(left) + abs(right)):
                    if det < -CCW_BOUND * (abs(left) + abs(right)) or \
                            orient2d_exact(ax, ay, bx, by, px, py) <= 0:
                        return cavity, None, blocked
        return cavity, boundary, blocked

    def _fill(self, p, cavity, boundary):
        """Replace the cavity by the fan from vertex p to its border corners,
        queue the new triangles that are bad, and return the new slots
        (triangle i = (u_i, v_i, p))."""
        mesh = self.mesh
        tv, tn, tc, vt, mark, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.vt, mesh.mark, mesh.x, mesh.y
        ends = []
        for c in boundary:
            k = c % 3
            b = c - k
            if k == 0:
                ends.append((tv[b + 1], tv[b + 2], tn[c], tc[c]))
            elif k == 1:
                ends.append((tv[b + 2], tv[b], tn[c], tc[c]))
            else:
                ends.append((tv[b], tv[b + 1], tn[c], tc[c]))
        slots = cavity
        n = len(ends)
        self.cavity_triangles += len(slots)
        extra = n - len(slots)
        if extra > 0:
            free = mesh.free
            for _ in range(extra):
                if free:
                    slots.append(free.pop())
                else:
                    slots.append(len(mark))
                    mark.append(0)
                    tv.extend((DEAD, DEAD, DEAD))
                    tn.extend((-1, -1, -1))
                    tc.extend((0, 0, 0))
        elif extra < 0:
            for t in slots[n:]:
                mesh.release(t)
            del slots[n:]
        starting = {}
        px = x[p]
        py = y[p]
        sin2_bound = self.sin2_bound
        area2_limit = self.area2_limit
        edge2_limit = self.edge2_limit
        grid = self.grid
        heap = self.heap
        big = self.big
        heappush = heapq.heappush
        for i in range(n):
            u, v, oc, flag = ends[i]
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
            starting[u] = b
            vt[u] = b
            # quality of the new triangle (u, v, p)
            ax = x[u]
            ay = y[u]
            bx = x[v]
            by = y[v]
            l0 = (bx - px) * (bx - px) + (by - py) * (by - py)
            l1 = (px - ax) * (px - ax) + (py - ay) * (py - ay)
            l2 = (ax - bx) * (ax - bx) + (ay - by) * (ay - by)
            area2 = (bx - ax) * (py - ay) - (by - ay) * (px - ax)
            if l0 < l1:
                lo = l0
                hi = l1
            else:
                lo = l1
                hi = l0
            if l2 < lo:
                lo = l2
            elif l2 > hi:
                hi = l2
            s2 = area2 * area2 * lo / (l0 * l1 * l2)
            if s2 < sin2_bound:
                heappush(heap, (s2, t, u, v, p))
                continue
            ratio = 1.0
            if area2 > area2_limit:
                ratio = area2_limit / area2
            if hi > edge2_limit and edge2_limit / hi < ratio:
                ratio = edge2_limit / hi
            if grid is not None:
                h = grid.size_at((ax + bx + px) / 3.0, (ay + by + py) / 3.0)
                if hi > h * h and h * h / hi < ratio:
                    ratio = h * h / hi
            if ratio < 1.0:
                big.append((1.0 + ratio, t, u, v, p))
        for i in range(n):
            b = 3 * slots[i]
            b2 = starting.get(ends[i][1])
            if b2 is not None:
                tn[b] = b2 + 1
                tn[b2 + 1] = b
        vt[p] = 3 * slots[0] + 2
        mesh.last = slots[0]
        return slots

    def _after_insert(self, p, slots, halves=()):
        """Queue the segments the new vertex (or a neighbour of a new segment
        piece) encroaches upon."""
        if self.keep_boundary:
            return
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        pq = (x[p], y[p])
        for t in slots:
            b = 3 * t
            u, v = tv[b], tv[b + 1]
            if (tc[b + 2] or tn[b + 2] < 0) and self._encroaches(u, v, pq):
                self.segq.append((u, v))
            if halves:
                if v in halves and self._encroaches(v, p, (x[u], y[u])):
                    self.segq.append((v, p))
                if u in halves and self._encroaches(p, u, (x[v], y[v])):
                    self.segq.append((p, u))

    def _insert_free(self, px, py, t0, lmin):
        """Insert a Steiner point in triangle t0 (found by the walk) unless it
        encroaches upon segments; then split those instead.  Returns
        "inserted", "split" (segments were split), or "rejected"."""
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        b = 3 * t0
        w = tv[b]
        if x[w] == px and y[w] == py:
            return "rejected"
        w = tv[b + 1]
        if x[w] == px and y[w] == py:
            return "rejected"
        w = tv[b + 2]
        if x[w] == px and y[w] == py:
            return "rejected"
        cavity, boundary, blocked = self._cavity(px, py, [t0], check_star=False)
        if blocked and self.keep_boundary and lmin is not None:
            # a skinny triangle's point inside a fixed edge's lens would make
            # slivers along that edge: try points nearer the triangle instead
            # (only fixed edges long next to the triangle: short ones are harmless)
            for c in blocked:
                k = c % 3
                u, v = tv[c - k + _NEXT[k]], tv[c - k + _PREV[k]]
                if (x[u] - x[v]) ** 2 + (y[u] - y[v]) ** 2 > 16.0 * lmin * lmin and \
                        self._encroaches(u, v, (px, py)):
                    return "encroaches fixed"
        if blocked and not self.keep_boundary:
            enc = []
            for c in blocked:
                k = c % 3
                u, v = tv[c - k + _NEXT[k]], tv[c - k + _PREV[k]]
                if self._encroaches(u, v, (px, py)):
                    enc.append((u, v))
            if enc:
                todo = [(u, v) for u, v in enc if self._may_split(u, v, lmin)]
                if not todo:
                    if lmin is not None and any(((u, v) if u < v else (v, u)) in self.fixed_keys
                                                for u, v in enc):
                        return "encroaches fixed"
                    return "rejected"
                did = False
                for u, v in todo:
                    if len(mesh.x) - self.start >= self.cap:
                        break           # the point cap is exact
                    c = self._edge_corner(u, v)
                    if c >= 0 and self._split_segment(c):
                        did = True
                return "split" if did else "rejected"
        if boundary is None:
            # the conflict region wraps around a constraint (a segment with a
            # free end): insert by splitting t0 and flipping instead
            return self._insert_by_flips(px, py, t0)
        # (the segments on the cavity border were just found not encroached)
        p = len(x)
        x.append(px)
        y.append(py)
        mesh.vt.append(-1)
        self._fill(p, cavity, boundary)
        return "inserted"

    def _insert_by_flips(self, px, py, t0):
        """Insert p (inside t0, on no constrained edge) by a 1-to-3 or 2-to-4
        split and Lawson flips; every triangle made contains p."""
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        b = 3 * t0
        for k in range(3):
            c = b + k
            if tc[c] or tn[c] < 0:
                e1, e2 = tv[b + _NEXT[k]], tv[b + _PREV[k]]
                if orient2d(x[e1], y[e1], x[e2], y[e2], px, py) <= 0:
                    return "rejected"
        p = mesh.add_vertex(px, py)
        try:
            mesh.insert_vertex_flipping(p, t0)
        except ValueError:
            x.pop()
            y.pop()
            mesh.vt.pop()
            return "rejected"
        slots = sorted({c // 3 for c in mesh.corners_around(p)})
        self.cavity_triangles += max(len(slots) - 2, 1)   # as many as a cavity would hold
        for t in slots:
            self._push_if_bad(t)
        self._after_insert_all(p, slots)
        return "inserted"

    def _after_insert_all(self, p, slots):
        """Segment checks for triangles around a vertex inserted by flips."""
        if self.keep_boundary:
            return
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        for t in slots:
            for c in (3 * t, 3 * t + 1, 3 * t + 2):
                if tc[c] or tn[c] < 0:
                    k = c % 3
                    u, v = tv[c - k + _NEXT[k]], tv[c - k + _PREV[k]]
                    w = tv[c]
                    if self._encroaches(u, v, (x[w], y[w])):
                        self.segq.append((u, v))

    def _split_segment(self, c):
        """Split the constrained (or border) edge opposite corner c.  Returns
        True when split, False when it is frozen (too short or unsafe)."""
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        u, v = tv[_next(c)], tv[_prev(c)]
        key = (u, v) if u < v else (v, u)
        if key in self.unsplittable or self.keep_boundary:
            return False
        px, py, shorter = self._split_position(u, v)
        if shorter < self.min_len:
            self._freeze(key)
            return False
        oc = tn[c]
        seeds = [c // 3] if oc < 0 else [c // 3, oc // 3]
        constrained = tc[c]
        tc[c] = 0
        if oc >= 0:
            tc[oc] = 0
        found = None
        # the split point, or a spare a third of the way from either end when
        # a vertex sits on it or next to it (an input vertex a rounding error
        # off the segment): the cavity must be star-shaped from the point
        for px, py in ((px, py), self._along(u, v, 1.0 / 3.0), self._along(u, v, 2.0 / 3.0)):
            if (px, py) in ((x[u], y[u]), (x[v], y[v])):
                continue
            if oc < 0:
                # a border piece's point rounded out of the region goes one
                # grid step back in (else it may land on a boundary an ulp
                # away, beyond a thin hole, which no cavity test sees)
                px, py = point_on_left(x[u], y[u], x[v], y[v], px, py)
            found = self._cavity(px, py, seeds, skip=c if oc < 0 else -1)
            if found[1] is not None:
                break
        if found is None or found[1] is None:
            tc[c] = constrained
            if oc >= 0:
                tc[oc] = constrained
            self._freeze(key)
            return False
        cavity, boundary, _ = found
        info = mesh.constraint_info.pop(key, None) if constrained else None
        origin = self._origin(u, v)
        p = mesh.add_vertex(px, py)
        self.seg_origin[p] = origin
        slots = self._fill(p, cavity, boundary)
        if constrained:
            for t in slots:
                b = 3 * t
                if tv[b + 1] == u or tv[b + 1] == v:
                    mesh.set_constraint(b, True)
                if tv[b] == u or tv[b] == v:
                    mesh.set_constraint(b + 1, True)
            lo, hi = key
            source, net, count = info if info is not None else (-1, 1, 1)
            mesh.add_constraint_info(lo, p, source, net, count)
            mesh.add_constraint_info(p, hi, source, net, count)
        self.stats["segment_splits"] += 1
        self._after_insert(p, slots, halves=(u, v))
        if orient2d(x[u], y[u], x[v], y[v], px, py) != 0:
            self._legalize_fan(slots)
        return True

    def _along(self, u, v, t):
        x, y = self.mesh.x, self.mesh.y
        return x[u] + t * (x[v] - x[u]), y[u] + t * (y[v] - y[u])

    def _legalize_fan(self, slots):
        """Lawson flips over every edge of the triangles `slots`.  A split
        point rounded off its segment may lie outside the circumcircle of a
        triangle beside the segment, which the split removes all the same:
        the fan may then hold edges that are not locally Delaunay."""
        mesh = self.mesh
        tv, tn = mesh.tv, mesh.tn
        is_illegal, flip = mesh.edge_is_illegal, mesh.flip
        stack = [3 * t + k for t in slots for k in (0, 1, 2)]
        touched = set()
        while stack:
            c = stack.pop()
            if tv[c] == DEAD or not is_illegal(c):
                continue
            touched.add(c // 3)
            touched.add(tn[c] // 3)
            stack.extend(flip(c))
        if touched:
            slots = sorted(touched)
            for t in slots:
                self._push_if_bad(t)
            self._after_insert_all(-1, slots)

    def _freeze(self, key):
        if key not in self.unsplittable:
            self.unsplittable.add(key)
            self.stats["frozen_segments"] += 1

    # ------------------------------------------------------- fixing triangles
    def _skip_small_angle(self, t, a, b, opp):
        """True for a skinny triangle that sits inside a small input angle:
        its smallest angle (at `opp`, facing the shortest edge a-b) lies
        between two constrained edges, or a and b lie at the same distance
        from a cluster apex on two of its segments (concentric shells)."""
        mesh = self.mesh
        tv = mesh.tv
        base = 3 * t
        k = [tv[base], tv[base + 1], tv[base + 2]].index(opp)
        if self._is_blocking(base + _NEXT[k]) and self._is_blocking(base + _PREV[k]):
            return True
        n0 = self.n0
        if a < n0 or b < n0:
            return False
        oa = self.seg_origin.get(a)
        ob = self.seg_origin.get(b)
        if oa is None or ob is None or set(oa) == set(ob):
            return False
        x, y = mesh.x, mesh.y
        for apex in set(oa) & set(ob):
            if apex not in self.small_apex:
                continue
            ra = math.hypot(x[a] - x[apex], y[a] - y[apex])
            rb = math.hypot(x[b] - x[apex], y[b] - y[apex])
            if abs(ra - rb) <= 0.02 * max(ra, rb):
                return True
        return False

    def _fix_triangle(self, t, key):
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        b = 3 * t
        i0, i1, i2 = tv[b], tv[b + 1], tv[b + 2]
        ax, ay, bx, by, cx, cy = x[i0], y[i0], x[i1], y[i1], x[i2], y[i2]
        skinny = key < 1.0
        # circumcenter
        dbx, dby = bx - ax, by - ay
        dcx, dcy = cx - ax, cy - ay
        d = 2.0 * (dbx * dcy - dby * dcx)
        if d <= 0.0:
            self.stats["failed_insertions"] += 1
            return
        bl = dbx * dbx + dby * dby
        cl = dcx * dcx + dcy * dcy
        px = ax + (dcy * bl - dby * cl) / d
        py = ay + (dbx * cl - dcx * bl) / d
        used_off = False
        lmin = None
        size_bad = True
        if self.keep_boundary and self._fixed_edge_too_long(t):
            # no triangle on this fixed edge can meet the size limits: only
            # its shape can be improved
            if not skinny:
                self.stats["unfixable_fixed_boundary"] += 1
                return
            size_bad = False
        if skinny:
            size_bad = size_bad and self._size_bad(ax, ay, bx, by, cx, cy)
            # shortest edge (pv, qv), opposite vertex rv
            l0 = (bx - cx) ** 2 + (by - cy) ** 2
            l1 = cl
            l2 = bl
            if l0 <= l1 and l0 <= l2:
                pv, qv, rv, lmin2 = i1, i2, i0, l0
            elif l1 <= l2:
                pv, qv, rv, lmin2 = i2, i0, i1, l1
            else:
                pv, qv, rv, lmin2 = i0, i1, i2, l2
            lmin = math.sqrt(lmin2)
            if not size_bad and self._skip_small_angle(t, pv, qv, rv):
                self.stats["skipped_small_angle"] += 1
                return
            if self.off_centers:
                mx = 0.5 * (x[pv] + x[qv])
                my = 0.5 * (y[pv] + y[qv])
                dist = math.hypot(px - mx, py - my)
                want = self.off_factor * lmin
                if dist > want:
                    f = want / dist
                    px = mx + f * (px - mx)
                    py = my + f * (py - my)
                    used_off = True
        # fast path: p strictly inside t (float orientations beyond their error bound)
        walk = None
        d1l = (ax - px) * (by - py)
        d1r = (ay - py) * (bx - px)
        if d1l - d1r > CCW_BOUND * (abs(d1l) + abs(d1r)):
            d2l = (bx - px) * (cy - py)
            d2r = (by - py) * (cx - px)
            if d2l - d2r > CCW_BOUND * (abs(d2l) + abs(d2r)):
                d3l = (cx - px) * (ay - py)
                d3r = (cy - py) * (ax - px)
                if d3l - d3r > CCW_BOUND * (abs(d3l) + abs(d3r)):
                    walk = ("in", t)
        if walk is None:
            walk = self._walk(t, px, py)
        lmin_arg = lmin if (skinny and not size_bad) else None
        if walk[0] == "cross":
            c = walk[1]
            k = c % 3
            u, v = tv[c - k + _NEXT[k]], tv[c - k + _PREV[k]]
            if not self.keep_boundary and self._may_split(u, v, lmin_arg):
                if self._split_segment(c):
                    self._requeue(t, key, i0, i1, i2)
                return
            if self.keep_boundary or ((u, v) if u < v else (v, u)) in self.fixed_keys:
                if lmin is None:
                    lmin = math.sqrt(min(bl, cl, (bx - cx) ** 2 + (by - cy) ** 2))
                self._fallback(t, key, px, py, lmin)
            return
        if walk[0] == "fail":
            self.stats["failed_insertions"] += 1
            return
        outcome = self._insert_free(px, py, walk[1], lmin_arg)
        if outcome == "inserted":
            self.stats["steiner_points"] += 1
            self.stats["off_centers" if used_off else "circumcenters"] += 1
        elif outcome == "split":
            self._requeue(t, key, i0, i1, i2)
        elif outcome == "encroaches fixed":
            self._fallback(t, key, px, py, lmin)
        else:
            self.stats["failed_insertions"] += 1

    def _fixed_edge_too_long(self, t):
        """keep_boundary: t has a fixed edge on which even an equilateral
        triangle would break a size limit."""
        mesh = self.mesh
        tv, tn, tc, x, y = mesh.tv, mesh.tn, mesh.tc, mesh.x, mesh.y
        for c in (3 * t, 3 * t + 1, 3 * t + 2):
            if not (tc[c] or tn[c] < 0):
                continue
            k = c % 3
            u, v = tv[c - k + _NEXT[k]], tv[c - k + _PREV[k]]
            l2 = (x[u] - x[v]) ** 2 + (y[u] - y[v]) ** 2
            if l2 > self.edge2_limit or 0.8660254037844386 * l2 > self.area2_limit:
                return True
            if self.grid is not None:
                h = self.grid.size_at(0.5 * (x[u] + x[v]), 0.5 * (y[u] + y[v]))
                if l2 > h * h:
                    return True
        return False

    def _requeue(self, t, key, a, b, c):
        tv = self.mesh.tv
        if tv[3 * t] == a and tv[3 * t + 1] == b and tv[3 * t + 2] == c:
            self._queue(key, t, a, b, c)

    def _fallback(self, t, key, px, py, lmin):
        """keep_boundary: the wanted point lies beyond a fixed edge.  Try points
        nearer the triangle (between its centroid and the wanted point) that
        keep a fair distance from every vertex of their cavity."""
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        b = 3 * t
        if self.fixed_vertices is None:
            if self.keep_boundary:
                self.fixed_vertices = self._boundary_vertices()
            else:
                self.fixed_vertices = {v for key in self.fixed_keys for v in key}
        fixed = self.fixed_vertices
        if tv[b] in fixed or tv[b + 1] in fixed or tv[b + 2] in fixed:
            # a triangle at the fixed boundary is left as the boundary allows
            self.stats["unfixable_fixed_boundary"] += 1
            return
        sx = (x[tv[b]] + x[tv[b + 1]] + x[tv[b + 2]]) / 3.0
        sy = (y[tv[b]] + y[tv[b + 1]] + y[tv[b + 2]]) / 3.0
        for f in (0.5, 0.25):
            qx = sx + f * (px - sx)
            qy = sy + f * (py - sy)
            walk = self._walk(t, qx, qy)
            if walk[0] != "in":
                continue
            found = self._cavity(qx, qy, [walk[1]])
            if found[1] is None:
                continue
            cavity, boundary, _ = found
            near = min(math.hypot(x[tv[c - c % 3 + _NEXT[c % 3]]] - qx,
                                  y[tv[c - c % 3 + _NEXT[c % 3]]] - qy) for c in boundary)
            if near < 0.5 * lmin:
                continue
            if any(self._encroaches(tv[c - c % 3 + _NEXT[c % 3]], tv[c - c % 3 + _PREV[c % 3]],
                                    (qx, qy)) for c in found[2]):
                continue
            p = mesh.add_vertex(qx, qy)
            slots = self._fill(p, cavity, boundary)
            self._after_insert(p, slots)
            self.stats["fallback_points"] += 1
            self.stats["steiner_points"] += 1
            return
        self.stats["unfixable_fixed_boundary"] += 1

    # ------------------------------------------------------------ main loop
    def run(self, warm_up=False):
        """Queue every bad triangle and encroached segment, then work the
        queues.  warm_up=True: stop as soon as the cavities have become small
        (see WARM_UP_CAVITY); the batched path takes over from there."""
        mesh = self.mesh
        tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
        if not self.keep_boundary:
            for c in range(len(tv)):
                if tv[c] != DEAD and (tc[c] or tn[c] < 0) and (tn[c] < 0 or c < tn[c]):
                    if self._edge_encroached(c):
                        self.segq.append((tv[_next(c)], tv[_prev(c)]))
        for t in range(len(mesh.mark)):
            if tv[3 * t] != DEAD:
                self._push_if_bad(t)
        self.start = len(mesh.x)
        if warm_up and WARM_UP_WINDOW <= 0:
            return              # no sequential start: the rounds take it all
        self.drain(self.cap, warm_up=warm_up)

    def drain(self, cap, where="", warm_up=False):
        """Work the queues (encroached segments first, then skinny triangles
        worst first, then too-large ones) until they are empty or `cap`
        points were added by this call (`where` names the stage in the
        stop reason).  warm_up=True: also stop, queues left as they are, when
        the last WARM_UP_WINDOW insertions removed fewer than WARM_UP_CAVITY
        triangles each on average."""
        mesh = self.mesh
        tv, tn, tc = mesh.tv, mesh.tn, mesh.tc
        start = len(mesh.x)
        heap, segq, big = self.heap, self.segq, self.big
        fix = self._fix_triangle
        heappop = heapq.heappop
        popleft = big.popleft
        check_at = start + WARM_UP_WINDOW if warm_up else math.inf
        removed = self.cavity_triangles
        while True:
            if len(mesh.x) - start >= cap and (segq or heap or big):
                self.complete = False
                self.stopped_by = "point_cap"
                self.stop_reason = (f"max_points reached: {len(mesh.x) - start} points added"
                                    f"{where}, {len(heap) + len(big)} triangles and "
                                    f"{len(segq)} segments still queued")
                break
            if len(mesh.x) >= check_at:
                if self.cavity_triangles - removed < WARM_UP_CAVITY * (len(mesh.x) - check_at
                                                                       + WARM_UP_WINDOW):
                    break
                check_at = len(mesh.x) + WARM_UP_WINDOW
                removed = self.cavity_triangles
            if segq:
                u, v = segq.pop()
                c = self._edge_corner(u, v)
                if c < 0 or not (tc[c] or tn[c] < 0):
                    continue
                if self._edge_encroached(c):
                    self._split_segment(c)
                continue
            if heap:
                key, t, a, b, c = heappop(heap)
            elif big:
                key, t, a, b, c = popleft()
            else:
                break
            base = 3 * t
            if tv[base] != a or tv[base + 1] != b or tv[base + 2] != c:
                continue
            fix(t, key)

    # ------------------------------------------------------------ output
    def result(self, tri):
        """The refined Triangulation with its figures (see finish)."""
        mesh = self.mesh
        live = [t for t in range(len(mesh.mark)) if mesh.tv[3 * t] != DEAD]
        return self.finish(tri, mesh_to_triangulation(mesh, live, tri.merged_into))

    def _over_size_limits(self, out):
        """How many triangles of out break max_area or max_edge (the same
        float tests as the refinement); 0 when the limits may relax (kept
        outline or fixed segments)."""
        if self.keep_boundary or self.fixed_keys or len(out.triangles) == 0 or (
                self.area2_limit == math.inf and self.edge2_limit == math.inf):
            return 0
        p = np.asarray(out.points, dtype=np.float64)[np.asarray(out.triangles)]
        e = p[:, [2, 0, 1]] - p[:, [1, 2, 0]]
        area2 = e[:, 2, 0] * (-e[:, 1, 1]) - e[:, 2, 1] * (-e[:, 1, 0])
        longest = (e * e).sum(axis=2).max(axis=1)
        return int(((area2 > self.area2_limit) | (longest > self.edge2_limit)).sum())

    def finish(self, tri, out):
        """Set the completion flag, stop reason and before/after figures on out."""
        out.complete = self.complete
        out.stopped_by = self.stopped_by
        out.stop_reason = self.stop_reason
        over = self._over_size_limits(out)
        if over and out.complete:
            # the limits are hard: a run that could not meet them is not
            # complete (segment pieces next to them could not be split)
            out.complete = False
            out.stopped_by = "size_limit"
            out.stop_reason = f"{over} triangle(s) above the size limits"
            frozen = self.stats["frozen_segments"]
            if frozen:
                out.stop_reason += (f" next to {frozen} segment piece(s) that could not be "
                                    "split (too short, or a vertex within rounding of them)")
        q0 = quality(tri.points, tri.triangles)
        q1 = quality(out.points, out.triangles)
        stats = dict(self.stats)
        stats.update(
            min_angle_requested=self.min_angle,
            min_angle_before=q0.min_angle,
            min_angle_after=q1.min_angle,
            triangles_before=int(len(tri.triangles)),
            triangles_after=int(len(out.triangles)),
            points_before=int(len(tri.points)),
            points_after=int(len(out.points)),
            added_points=int(len(out.points) - len(tri.points)),
            below_min_angle_before=q0.count_below(self.min_angle),
            below_min_angle_after=q1.count_below(self.min_angle),
            small_input_angle_vertices=len(self.small_apex),
        )
        out.stats = stats
        return out
