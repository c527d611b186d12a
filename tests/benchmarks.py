"""Speed benchmarks for the geometry engine.

Run from the repository root:

    python -m tests.benchmarks                 # all cases, full sizes
    python -m tests.benchmarks --quick         # smaller sizes, smoke run
    python -m tests.benchmarks --cases delaunay-10k,cdt-outline-20k --repeat 5
    python -m tests.benchmarks --list-cases

Speed is always shown as a ratio measured in the same process and on the
same input against a general-purpose reference library (scipy's Delaunay,
which wraps Qhull; shapely's constrained Delaunay, which wraps GEOS).
Nothing here asserts on wall-clock time; the table says PASS or MISS
against the bar an issue set, and FAIL when our output does not validate
(a wrong fast answer is never reported as a win).

Adding a case: write a function ``case_xxx(ctx) -> Row`` and decorate it
with ``@register("name", bar=..., repeat=..., about=...)``.  Use
``ctx.time_best`` / ``ctx.peak_memory`` for measurement and
``check_triangulation`` for validation, then return ``ctx.row(...)``.
"""

from __future__ import annotations

import argparse
import gc
import multiprocessing
import os
import resource
import sys
import time
import tracemalloc
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

# --------------------------------------------------------------------------
# registry
# --------------------------------------------------------------------------


@dataclass
class CaseSpec:
    name: str
    func: Callable[["Context"], "Row"]
    bar: float | None  # max allowed ratio ours/reference, None = report only
    repeat: int  # default best-of-K
    about: str


CASES: dict[str, CaseSpec] = {}


def register(name: str, *, bar: float | None = None, repeat: int = 3, about: str = ""):
    """Decorator adding a benchmark case to the registry."""

    def deco(func):
        if name in CASES:
            raise ValueError(f"duplicate benchmark case {name!r}")
        CASES[name] = CaseSpec(name, func, bar, repeat, about)
        return func

    return deco


# --------------------------------------------------------------------------
# result rows and run context
# --------------------------------------------------------------------------


@dataclass
class Row:
    case: str
    size: str
    ours_s: float | None
    ref_s: float | None
    reference: str
    bar: float | None
    peak_mib: float | None = None
    valid: bool = True
    check: str = ""
    notes: list[str] = field(default_factory=list)
    error: str | None = None

    @property
    def ratio(self) -> float | None:
        if self.ours_s is None or not self.ref_s:
            return None
        return self.ours_s / self.ref_s

    @property
    def verdict(self) -> str:
        if self.error is not None:
            return "ERROR"
        if not self.valid:
            return "FAIL"
        if self.bar is None or self.ratio is None:
            return "-"
        return "PASS" if self.ratio <= self.bar else "MISS"


class Context:
    """What a case function gets: options, the engine, measurement helpers."""

    def __init__(self, spec: CaseSpec, args, engine):
        self.spec = spec
        self.quick: bool = args.quick
        self.seed: int = args.seed
        self.repeat: int = args.repeat if args.repeat else spec.repeat
        self.memory: str = args.memory
        self.engine = engine

    def rng(self, salt: int = 0) -> np.random.Generator:
        return np.random.default_rng([self.seed, salt])

    def time_best(self, fn: Callable[[], object]):
        """Best wall time of ``self.repeat`` calls; returns (seconds, last result).

        The garbage collector stays enabled (that is how the code runs in
        real use); a collection is forced before each call so that garbage
        from an earlier call is not charged to the next one.
        """
        best = float("inf")
        result = None
        for _ in range(max(1, self.repeat)):
            result = None
            gc.collect()
            t0 = time.perf_counter()
            result = fn()
            dt = time.perf_counter() - t0
            best = min(best, dt)
        return best, result

    def peak_memory(self, fn: Callable[[], object]) -> float | None:
        """Peak memory of one extra, untimed call of ``fn``, in MiB.

        ``rss``: run it in a forked child process and report the growth of
        the child's resident set (getrusage ru_maxrss minus the resident size
        at the start of the child); cheap, counts everything, including
        allocator slack.  ``tracemalloc``: peak traced allocation (Python
        objects and numpy buffers) in this process; more precise about what
        the code asks for, but slows pure-Python code several times over.
        """
        if self.memory == "none":
            return None
        if self.memory == "rss":
            return _peak_rss_in_child(fn)
        gc.collect()
        tracemalloc.start()
        try:
            tracemalloc.reset_peak()
            base = tracemalloc.get_traced_memory()[0]
            out = fn()
            peak = tracemalloc.get_traced_memory()[1]
            del out
        finally:
            tracemalloc.stop()
        return (peak - base) / 2**20

    def row(self, **kw) -> Row:
        kw.setdefault("case", self.spec.name)
        kw.setdefault("bar", self.spec.bar)
        return Row(**kw)


def _resident_bytes() -> int:
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")


def _rss_child(fn, conn) -> None:
    try:
        gc.collect()
        base = _resident_bytes()
        out = fn()
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # KiB on Linux
        del out
        conn.send((peak - base) / 2**20)
    except BaseException as exc:  # report, never hang the parent
        conn.send(f"{type(exc).__name__}: {exc}")
    finally:
        conn.close()


def _peak_rss_in_child(fn) -> float | None:
    """Run fn in a forked child; peak RSS growth in MiB (None if unavailable)."""
    if not os.path.exists("/proc/self/statm") or "fork" not in multiprocessing.get_all_start_methods():
        return None
    mp = multiprocessing.get_context("fork")
    recv, send = mp.Pipe(duplex=False)
    proc = mp.Process(target=_rss_child, args=(fn, send))
    proc.start()
    send.close()
    try:
        value = recv.recv()
    except EOFError:
        value = None
    proc.join()
    if isinstance(value, str):
        raise RuntimeError(f"memory run failed: {value}")
    return value


# --------------------------------------------------------------------------
# cheap validation of our output
# --------------------------------------------------------------------------

_EPS = np.finfo(np.float64).eps / 2  # unit roundoff 2**-53
_INCIRCLE_ERRBOUND = (10.0 + 96.0 * _EPS) * _EPS


def _edge_keys(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    return a.astype(np.int64) * np.int64(n) + b.astype(np.int64)


def triangle_areas(points: np.ndarray, tris: np.ndarray) -> np.ndarray:
    """Signed doubled areas (positive for CCW) with numpy floats."""
    a = points[tris[:, 0]]
    b = points[tris[:, 1]]
    c = points[tris[:, 2]]
    return (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])


def check_triangulation(
    points,
    tris,
    *,
    expected_triangles: int | None = None,
    expected_area: float | None = None,
    expected_points: int | None = None,
    required_edges=None,
    delaunay: bool = True,
    area_rtol: float = 1e-9,
) -> tuple[bool, list[str]]:
    """Validate a triangulation cheaply with vectorised numpy.

    Checks: index range, no degenerate triangles, all CCW (float orientation
    > 0), every directed edge used once (consistent orientation, at most two
    triangles per edge), triangle count, total area, required (constrained)
    edges present, and, if ``delaunay``, the local Delaunay property on every
    interior edge that is not a required edge (float in-circle test with a
    forward error bound, so only certain violations are counted).

    Returns (ok, messages); messages describe failures, or summarise success.
    """
    problems: list[str] = []
    pts = np.asarray(points, dtype=np.float64)
    tris = np.asarray(tris)
    if pts.ndim != 2 or pts.shape[1] != 2:
        return False, [f"points shape {pts.shape}, want (P,2)"]
    if tris.ndim != 2 or tris.shape[1] != 3:
        return False, [f"triangles shape {tris.shape}, want (T,3)"]
    n = len(pts)
    t = len(tris)
    if expected_points is not None and n != expected_points:
        problems.append(f"{n} output points, expected {expected_points}")
    if t == 0:
        return False, problems + ["no triangles"]
    tris = tris.astype(np.int64, copy=False)
    if tris.min() < 0 or tris.max() >= n:
        return False, problems + ["triangle index out of range"]
    if expected_triangles is not None and t != expected_triangles:
        problems.append(f"{t} triangles, expected {expected_triangles}")

    orient = triangle_areas(pts, tris)
    bad = int(np.count_nonzero(~(orient > 0)))
    if bad:
        problems.append(f"{bad} triangles not strictly CCW")

    if expected_area is not None:
        area = 0.5 * float(orient.sum())
        if not np.isclose(area, expected_area, rtol=area_rtol, atol=0.0):
            problems.append(f"area {area:.12g}, expected {expected_area:.12g}")

    # directed edges (a->b) with opposite vertex c
    a = tris.ravel()
    b = tris[:, [1, 2, 0]].ravel()
    c = tris[:, [2, 0, 1]].ravel()
    directed = _edge_keys(a, b, n)
    if len(np.unique(directed)) != len(directed):
        problems.append("a directed edge is used twice (overlap or flipped triangle)")

    lo = np.minimum(a, b)
    hi = np.maximum(a, b)
    undirected = _edge_keys(lo, hi, n)

    if required_edges is not None:
        req = np.asarray(required_edges, dtype=np.int64).reshape(-1, 2)
        if len(req):
            rkeys = _edge_keys(req.min(axis=1), req.max(axis=1), n)
            missing = int(np.count_nonzero(~np.isin(rkeys, undirected)))
            if missing:
                problems.append(f"{missing} constrained edges missing")
    else:
        rkeys = None

    if delaunay and not problems:
        order = np.argsort(undirected, kind="stable")
        sk = undirected[order]
        first = np.flatnonzero(sk[:-1] == sk[1:])  # pairs of twins
        i1 = order[first]
        i2 = order[first + 1]
        if rkeys is not None and len(rkeys):
            free = ~np.isin(undirected[i1], rkeys)
            i1, i2 = i1[free], i2[free]
        # triangle (a, b, c) is CCW; d is the apex of the twin triangle
        pa, pb, pc, pd = pts[a[i1]], pts[b[i1]], pts[c[i1]], pts[c[i2]]
        adx, ady = pa[:, 0] - pd[:, 0], pa[:, 1] - pd[:, 1]
        bdx, bdy = pb[:, 0] - pd[:, 0], pb[:, 1] - pd[:, 1]
        cdx, cdy = pc[:, 0] - pd[:, 0], pc[:, 1] - pd[:, 1]
        alift = adx * adx + ady * ady
        blift = bdx * bdx + bdy * bdy
        clift = cdx * cdx + cdy * cdy
        bc = bdx * cdy - cdx * bdy
        ca = cdx * ady - adx * cdy
        ab = adx * bdy - bdx * ady
        det = alift * bc + blift * ca + clift * ab
        perm = (
            (np.abs(bdx * cdy) + np.abs(cdx * bdy)) * alift
            + (np.abs(cdx * ady) + np.abs(adx * cdy)) * blift
            + (np.abs(adx * bdy) + np.abs(bdx * ady)) * clift
        )
        viol = int(np.count_nonzero(det > _INCIRCLE_ERRBOUND * perm))
        if viol:
            problems.append(f"{viol} edges not locally Delaunay")

    if problems:
        return False, problems
    summary = f"{t} tris CCW"
    if delaunay:
        summary += ", Delaunay"
    return True, [summary]


def _triangulation_arrays(result):
    """(points, triangles) from an engine Triangulation."""
    return np.asarray(result.points), np.asarray(result.triangles)


# --------------------------------------------------------------------------
# invented input data
# --------------------------------------------------------------------------


def uniform_points(rng: np.random.Generator, n: int) -> np.ndarray:
    """n uniform random points in the unit square."""
    return rng.random((n, 2))


def jittered_circle(rng, n: int, radius: float, centre=(0.0, 0.0), clockwise=False) -> np.ndarray:
    """n vertices evenly spaced by angle on a circle, each moved radially by a
    uniform random amount in [-s, +s], s = one vertex spacing (2*pi*r/n).

    Only the radius is jittered, so the loop stays star-shaped around its
    centre and therefore simple.
    """
    theta = np.arange(n) * (2.0 * np.pi / n)
    if clockwise:
        theta = -theta
    spacing = 2.0 * np.pi * radius / n
    r = radius + rng.uniform(-spacing, spacing, n)
    return np.column_stack((centre[0] + r * np.cos(theta), centre[1] + r * np.sin(theta)))


def lake_shore(rng, n_shore: int, n_hole: int):
    """A roughly circular lake shore of radius 10 (CCW) with four clockwise
    islands of radius 1.5 centred at (+-4, +-4).

    Returns (shell, holes, points, segments) where points stacks the shell
    then the holes and segments closes every loop.
    """
    shell = jittered_circle(rng, n_shore, 10.0)
    holes = [
        jittered_circle(rng, n_hole, 1.5, centre=(cx, cy), clockwise=True)
        for cx, cy in ((4.0, 4.0), (-4.0, 4.0), (-4.0, -4.0), (4.0, -4.0))
    ]
    loops = [shell] + holes
    points = np.concatenate(loops)
    segs = []
    start = 0
    for loop in loops:
        k = len(loop)
        idx = np.arange(start, start + k)
        segs.append(np.column_stack((idx, np.roll(idx, -1))))
        start += k
    segments = np.concatenate(segs).astype(np.int64)
    return shell, holes, points, segments


# --------------------------------------------------------------------------
# cases
# --------------------------------------------------------------------------


def _delaunay_case(ctx: Context, n: int) -> Row:
    from scipy.spatial import Delaunay

    tri = ctx.engine.triangulate
    pts = uniform_points(ctx.rng(n), n)

    # warm-up on a tiny input so one-time costs (lazy imports, caches) are
    # not charged to a best-of-1 measurement
    small = uniform_points(ctx.rng(1), 50)
    tri(small)
    Delaunay(small)

    ref_s, ref = ctx.time_best(lambda: Delaunay(pts))
    ours_s, ours = ctx.time_best(lambda: tri(pts))

    hull_vertices = len(np.unique(ref.convex_hull))
    expected_t = 2 * n - 2 - hull_vertices
    # Qhull's simplices are not oriented consistently; use absolute areas
    ref_area = 0.5 * float(np.abs(triangle_areas(pts, ref.simplices)).sum())
    p, t = _triangulation_arrays(ours)
    ok, msgs = check_triangulation(
        p, t, expected_triangles=expected_t, expected_area=ref_area, expected_points=n
    )
    notes = [
        f"triangles: ours {len(t)}, Qhull {len(ref.simplices)}, "
        f"expected 2n-2-h = {expected_t} (h = {hull_vertices} hull vertices)"
    ]
    del ours, ref
    peak = ctx.peak_memory(lambda: tri(pts))
    return ctx.row(
        size=f"{n} pts",
        ours_s=ours_s,
        ref_s=ref_s,
        reference="scipy Delaunay (Qhull)",
        peak_mib=peak,
        valid=ok,
        check="; ".join(msgs),
        notes=notes,
    )


@register("delaunay-10k", bar=None, repeat=3, about="Delaunay of 10k uniform points vs scipy (Qhull)")
def case_delaunay_10k(ctx: Context) -> Row:
    return _delaunay_case(ctx, 2_000 if ctx.quick else 10_000)


@register("delaunay-100k", bar=8.0, repeat=1, about="Delaunay of 100k uniform points vs scipy (Qhull)")
def case_delaunay_100k(ctx: Context) -> Row:
    return _delaunay_case(ctx, 20_000 if ctx.quick else 100_000)


@register(
    "cdt-outline-20k",
    bar=3.0,
    repeat=1,
    about="CDT of a 20k-vertex lake shore with four 1k-vertex islands vs shapely (GEOS)",
)
def case_cdt_outline_20k(ctx: Context) -> Row:
    return _cdt_case(ctx, *((4_000, 200) if ctx.quick else (20_000, 1_000)))


@register("delaunay-1m", bar=1.5, repeat=1,
          about="Delaunay of 1M uniform points vs scipy (Qhull); the vectorised path")
def case_delaunay_1m(ctx: Context) -> Row:
    return _delaunay_case(ctx, 100_000 if ctx.quick else 1_000_000)


@register("cdt-outline-100k", bar=1.0, repeat=1,
          about="CDT of a 100k-vertex lake shore with four 5k-vertex islands vs shapely (GEOS)")
def case_cdt_outline_100k(ctx: Context) -> Row:
    return _cdt_case(ctx, *((20_000, 1_000) if ctx.quick else (100_000, 5_000)))


def _cdt_case(ctx: Context, n_shore: int, n_hole: int) -> Row:
    import shapely

    shell, holes, pts, segs = lake_shore(ctx.rng(n_shore), n_shore, n_hole)
    n_v = len(pts)
    n_h = len(holes)
    expected_t = n_v + 2 * n_h - 2

    # polygon construction is input preparation, like building pts/segs
    poly = shapely.Polygon(shell, holes)
    if not poly.is_valid:
        raise RuntimeError("generated lake shore polygon is not valid")

    tri = ctx.engine.triangulate
    small_shell, small_holes, small_pts, small_segs = lake_shore(ctx.rng(1), 64, 16)
    tri(small_pts, small_segs)
    shapely.constrained_delaunay_triangles(shapely.Polygon(small_shell, small_holes))

    ref_s, ref = ctx.time_best(lambda: shapely.constrained_delaunay_triangles(poly))
    ours_s, ours = ctx.time_best(lambda: tri(pts, segs))

    ref_t = int(shapely.get_num_geometries(ref))
    p, t = _triangulation_arrays(ours)
    ok, msgs = check_triangulation(
        p,
        t,
        expected_triangles=expected_t,
        expected_area=float(poly.area),
        expected_points=n_v,
        required_edges=segs,
    )
    if ref_t != expected_t:
        # not our fault, but worth knowing: the comparison is then uneven
        msgs.append(f"note: GEOS gave {ref_t} triangles")
    same = "same" if ref_t == len(t) else "DIFFERENT"
    notes = [
        f"triangles: ours {len(t)}, GEOS {ref_t}, expected V+2H-2 = {expected_t} "
        f"(V = {n_v}, H = {n_h}) -> {same} count"
    ]
    del ours, ref
    peak = ctx.peak_memory(lambda: tri(pts, segs))
    return ctx.row(
        size=f"{n_v} v, {n_h} holes",
        ours_s=ours_s,
        ref_s=ref_s,
        reference="shapely CDT (GEOS)",
        peak_mib=peak,
        valid=ok and ref_t == len(t),
        check="; ".join(msgs),
        notes=notes,
    )


@register(
    "refine-outline-100k",
    bar=3.0,
    repeat=1,
    about="refinement to 30 degrees of a 2k-vertex lake shore with four islands to "
    "~100k triangles vs scipy Delaunay (Qhull) of the same output points",
)
def case_refine_outline_100k(ctx: Context) -> Row:
    import shapely
    from scipy.spatial import Delaunay

    n_shore, n_hole = 1_600, 100
    max_area = 0.05 if ctx.quick else 0.005
    shell, holes, pts, segs = lake_shore(ctx.rng(n_shore), n_shore, n_hole)
    poly = shapely.Polygon(shell, holes)
    if not poly.is_valid:
        raise RuntimeError("generated lake shore polygon is not valid")
    base = ctx.engine.triangulate(pts, segs)        # input preparation, not timed
    refine = ctx.engine.refine

    # warm-up on a tiny input
    small_shell, small_holes, small_pts, small_segs = lake_shore(ctx.rng(1), 64, 16)
    small = ctx.engine.triangulate(small_pts, small_segs)
    Delaunay(refine(small, min_angle=30.0).points)

    ours_s, out = ctx.time_best(lambda: refine(base, min_angle=30.0, max_area=max_area))
    ref_s, ref = ctx.time_best(lambda: Delaunay(out.points))

    p, t = _triangulation_arrays(out)
    ok, msgs = check_triangulation(p, t, expected_area=float(poly.area),
                                   required_edges=np.asarray(out.segments))
    q = ctx.engine.quality(p, t)
    if q.min_angle < 30.0:
        ok = False
        msgs.append(f"smallest angle {q.min_angle:.2f} < 30")
    if not out.complete:
        ok = False
        msgs.append(f"incomplete: {out.stop_reason}")
    plain = refine(base, min_angle=30.0, max_area=max_area, off_centers=False)
    loose = refine(base, min_angle=30.0)
    loose_plain = refine(base, min_angle=30.0, off_centers=False)
    added = out.stats["added_points"]
    notes = [
        f"{len(t)} triangles, {len(p)} points ({added} added), smallest angle "
        f"{q.min_angle:.2f} (before {out.stats['min_angle_before']:.2f}), "
        f"Qhull made {len(ref.simplices)} triangles of the same points",
        f"speed: {added / ours_s:,.0f} added points per second",
        f"Steiner points with / without off-centers: {added} / "
        f"{plain.stats['added_points']} with max_area={max_area}; "
        f"{loose.stats['added_points']} / {loose_plain.stats['added_points']} "
        "with the angle alone",
    ]
    del ref, plain, loose, loose_plain
    peak = ctx.peak_memory(lambda: refine(base, min_angle=30.0, max_area=max_area))
    return ctx.row(
        size=f"{len(pts)} v -> {len(t)} tris",
        ours_s=ours_s,
        ref_s=ref_s,
        reference="scipy Delaunay (Qhull) of the output points",
        peak_mib=peak,
        valid=ok,
        check="; ".join(msgs),
        notes=notes,
    )


def harbour(n_outer: int):
    """An invented harbour basin: a smooth wavy outline (radius 10 with two
    ripples, n_outer evenly spaced vertices) around six round islands and two
    rectangular piers (clockwise holes).  No input angle is under 60 degrees,
    so refinement to 30 degrees leaves no triangle below it.

    Returns (shell, holes, points, segments) like lake_shore."""
    th = np.arange(n_outer) * (2.0 * np.pi / n_outer)
    r = 10.0 * (1.0 + 0.08 * np.sin(3.0 * th) + 0.04 * np.cos(7.0 * th))
    shell = np.column_stack((r * np.cos(th), r * np.sin(th)))
    holes = []
    for cx, cy, rad, k in ((5.0, 0.0, 1.2, 160), (-5.0, 0.0, 1.2, 160), (0.0, 5.0, 0.8, 110),
                           (0.0, -5.5, 0.8, 110), (3.5, 4.0, 0.4, 60), (-3.5, -4.0, 0.4, 60)):
        ph = -np.arange(k) * (2.0 * np.pi / k)
        holes.append(np.column_stack((cx + rad * np.cos(ph), cy + rad * np.sin(ph))))
    for x0, y0, x1, y1 in ((-2.0, -1.5, 2.0, -1.0), (-0.5, 2.0, 0.5, 3.0)):
        holes.append(np.array([(x0, y0), (x0, y1), (x1, y1), (x1, y0)]))
    loops = [shell] + holes
    points = np.concatenate(loops)
    segs = []
    start = 0
    for loop in loops:
        k = len(loop)
        idx = np.arange(start, start + k)
        segs.append(np.column_stack((idx, np.roll(idx, -1))))
        start += k
    return shell, holes, points, np.concatenate(segs).astype(np.int64)


@register(
    "refine-1m",
    bar=1.5,
    repeat=1,
    about="refinement to 30 degrees of an invented 3k-vertex harbour outline with eight "
    "holes to ~1M triangles vs scipy Delaunay (Qhull) of the same output points",
)
def case_refine_1m(ctx: Context) -> Row:
    import shapely
    from scipy.spatial import Delaunay

    max_area = 0.005 if ctx.quick else 0.0005
    shell, holes, pts, segs = harbour(3_000)
    poly = shapely.Polygon(shell, holes)
    if not poly.is_valid:
        raise RuntimeError("generated harbour polygon is not valid")
    base = ctx.engine.triangulate(pts, segs)        # input preparation, not timed
    refine = ctx.engine.refine

    # warm-up on a tiny input
    small_shell, small_holes, small_pts, small_segs = lake_shore(ctx.rng(1), 64, 16)
    small = ctx.engine.triangulate(small_pts, small_segs)
    Delaunay(refine(small, min_angle=30.0, method="batched").points)

    ours_s, out = ctx.time_best(lambda: refine(base, min_angle=30.0, max_area=max_area))
    ref_s, ref = ctx.time_best(lambda: Delaunay(out.points))

    p, t = _triangulation_arrays(out)
    ok, msgs = check_triangulation(p, t, expected_area=float(poly.area),
                                   required_edges=np.asarray(out.segments))
    q = ctx.engine.quality(p, t)
    if q.min_angle < 30.0:
        ok = False
        msgs.append(f"smallest angle {q.min_angle:.2f} < 30")
    if not out.complete:
        ok = False
        msgs.append(f"incomplete: {out.stop_reason}")
    st = out.stats
    added = st["added_points"]
    notes = [
        f"{len(t)} triangles, {len(p)} points ({added} added), smallest angle "
        f"{q.min_angle:.2f} (before {st['min_angle_before']:.2f}), "
        f"Qhull made {len(ref.simplices)} triangles of the same points",
        f"path {st.get('method', 'sequential')}: {st.get('batched_rounds', 0)} rounds, "
        f"{st.get('batched_flips', 0)} flips, {st.get('sequential_tail', 0)} proposals left "
        f"to the sequential refiner; {added / ours_s:,.0f} added points per second",
    ]
    del ref
    peak = ctx.peak_memory(lambda: refine(base, min_angle=30.0, max_area=max_area))
    return ctx.row(
        size=f"{len(pts)} v -> {len(t)} tris",
        ours_s=ours_s,
        ref_s=ref_s,
        reference="scipy Delaunay (Qhull) of the output points",
        peak_mib=peak,
        valid=ok,
        check="; ".join(msgs),
        notes=notes,
    )


# --------------------------------------------------------------------------
# running and printing
# --------------------------------------------------------------------------


def _fmt_s(x):
    return "-" if x is None else f"{x:.4f}"


def _fmt_ratio(x):
    return "-" if x is None else f"{x:.2f}x"


def _fmt_bar(x):
    return "-" if x is None else f"<= {x:g}"


def _fmt_mib(x):
    return "-" if x is None else f"{x:.1f}"


def print_table(rows: list[Row], memory: str, out=sys.stdout) -> None:
    mem_head = "peak MiB" if memory == "none" else "peak MiB*"
    head = ["case", "size", "ours s", "ref s", "ours/ref", "bar", "result", mem_head, "reference", "check"]
    body = [
        [
            r.case,
            r.size,
            _fmt_s(r.ours_s),
            _fmt_s(r.ref_s),
            _fmt_ratio(r.ratio),
            _fmt_bar(r.bar),
            r.verdict,
            _fmt_mib(r.peak_mib),
            r.reference,
            r.error if r.error is not None else r.check,
        ]
        for r in rows
    ]
    widths = [max(len(str(x)) for x in col) for col in zip(head, *body)]
    right = {2, 3, 4, 7}

    def line(cells):
        parts = []
        for i, (cell, w) in enumerate(zip(cells, widths)):
            cell = str(cell)
            parts.append(cell.rjust(w) if i in right else cell.ljust(w))
        return "  ".join(parts).rstrip()

    print(line(head), file=out)
    print("  ".join("-" * w for w in widths), file=out)
    for cells in body:
        print(line(cells), file=out)
    print(file=out)
    for r in rows:
        for note in r.notes:
            print(f"{r.case}: {note}", file=out)
    if memory == "rss":
        print(
            "* peak MiB: growth of resident memory (getrusage ru_maxrss minus RSS at\n"
            "  start) during one extra, untimed run of our engine in a forked child\n"
            "  process; the reference libraries' memory is not measured.",
            file=out,
        )
    if memory == "tracemalloc":
        print(
            "* peak MiB: tracemalloc peak (Python objects + numpy buffers) of one extra,\n"
            "  untimed run of our engine; reference libraries allocate outside Python and\n"
            "  are not measured.",
            file=out,
        )
    print(
        "times: best of K wall-clock runs (time.perf_counter) in this process on the\n"
        "same input; ratio = ours / reference; PASS/MISS against the issue's bar,\n"
        "FAIL = our output did not validate, ERROR = a case raised.",
        file=out,
    )


def parse_args(argv=None):
    p = argparse.ArgumentParser(
        prog="python -m tests.benchmarks",
        description="Time the engine against reference libraries and print ratios.",
    )
    p.add_argument(
        "--cases",
        default="",
        help="comma-separated case names to run (default: all); see --list-cases",
    )
    p.add_argument(
        "--repeat",
        type=int,
        default=0,
        metavar="K",
        help="report the best of K runs (default: per case, 3 for small, 1 for big)",
    )
    p.add_argument("--quick", action="store_true", help="use smaller inputs for a smoke run")
    p.add_argument("--seed", type=int, default=12345, help="random seed for the generated inputs")
    p.add_argument(
        "--memory",
        choices=("rss", "tracemalloc", "none"),
        default="rss",
        help="how to measure peak memory of our run: rss = resident-set growth in a "
        "forked child (default, cheap), tracemalloc = traced allocations (slow), none",
    )
    p.add_argument("--list-cases", action="store_true", help="list the cases and exit")
    return p.parse_args(argv)


def main(argv=None) -> int:
    args = parse_args(argv)
    if args.list_cases:
        for spec in CASES.values():
            print(f"{spec.name:20s} bar {_fmt_bar(spec.bar):6s} repeat {spec.repeat}  {spec.about}")
        return 0
    if args.repeat < 0:
        print("--repeat must be >= 1", file=sys.stderr)
        return 2

    names = [s.strip() for s in args.cases.split(",") if s.strip()] or list(CASES)
    unknown = [nm for nm in names if nm not in CASES]
    if unknown:
        print(f"unknown case(s): {', '.join(unknown)}; known: {', '.join(CASES)}", file=sys.stderr)
        return 2

    try:
        import engine
    except Exception as exc:  # the engine is developed alongside
        print(f"cannot import engine: {exc!r}", file=sys.stderr)
        return 2

    print(
        f"python {sys.version.split()[0]}, numpy {np.__version__}, seed {args.seed}"
        + (", QUICK sizes (bars apply to full sizes only)" if args.quick else "")
    )
    print()
    rows: list[Row] = []
    for nm in names:
        spec = CASES[nm]
        ctx = Context(spec, args, engine)
        try:
            row = spec.func(ctx)
        except Exception as exc:
            row = ctx.row(size="", ours_s=None, ref_s=None, reference="", error=f"{type(exc).__name__}: {exc}")
        rows.append(row)
        gc.collect()
    print_table(rows, args.memory)
    bad = any(r.verdict in ("FAIL", "ERROR") for r in rows)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
