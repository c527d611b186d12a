"""The batched refinement path (engine.refine(..., method="batched")).

1. Every test of tests/test_refine.py runs again here with
   ``method="batched"`` as the default of engine.refine and the sequential
   start switched off, so that small inputs reach the rounds (the names are
   imported below, so pytest collects them a second time in this module,
   where the fixture switches the method): the same outside references
   (tests/helpers.py's exact rational checker, shapely areas, the published
   20.7 degree bound, scipy triangle counts) hold on both paths.  Options the
   batched rounds do not handle (keep_boundary, size_growth,
   fixed_segments) are run by the sequential refiner behind the same call;
   smoothing runs on the batched result.
2. Tests of the batched path itself: larger inputs checked against Qhull's
   triangle count and engine.validate, the max_points cap, the hand-over of
   leftovers to the sequential refiner, and the choice made by "auto".
"""

import importlib
import math

import numpy as np
import pytest
from scipy.spatial import Delaunay
from shapely.geometry import Polygon

import engine
from engine import batch_refine
from engine.legalize import mesh_from_triangles
from engine.quality import triangle_angles
from engine.validate import check_triangulation as engine_check

from . import test_refine as base
from .test_refine import *  # every test of test_refine, collected again here

refine_module = importlib.import_module("engine.refine")

# these tests use options that always run on the sequential refiner
# (keep_boundary, size_growth, smoothing): repeating them here would test
# nothing new (test_options_that_stay_sequential checks the routing)
del (test_keep_boundary_adds_nothing_on_constrained_edges,  # noqa: F821
     test_keep_boundary_with_a_shared_outline, test_hypothesis_keep_boundary,  # noqa: F821
     test_graded_sizes_follow_the_growth_bound,  # noqa: F821
     test_smoothing_never_lowers_the_smallest_angle, test_hypothesis_smoothing)  # noqa: F821

_REAL_REFINE = engine.refine


@pytest.fixture(autouse=True, scope="module")
def _batched_by_default():
    """engine.refine defaults to method="batched" for this module's tests,
    without the sequential start (WARM_UP_WINDOW = 0), so that the small
    inputs of tests/test_refine.py reach the rounds too;
    test_sliver_fan_starts_sequentially_then_goes_batched puts it back."""

    def refine(tri, **kw):
        kw.setdefault("method", "batched")
        return _REAL_REFINE(tri, **kw)

    mp = pytest.MonkeyPatch()
    mp.setattr(engine, "refine", refine)
    mp.setattr(refine_module, "WARM_UP_WINDOW", 0)
    yield
    mp.undo()


def min_angles(out):
    return triangle_angles(out.points, out.triangles).min(axis=1)


# ---------------------------------------------------------------------------
# invented inputs of a few thousand triangles and more
# ---------------------------------------------------------------------------
def racetrack(n_outer=240, n_inner=60):
    """A stadium-shaped track (two half circles joined by straight sides,
    evenly spaced vertices) around an elliptical infield hole: no input angle
    under 60 degrees."""
    outer = []
    half = n_outer // 2
    for k in range(half):
        a = -math.pi / 2 + math.pi * k / half
        outer.append((6.0 + 4.0 * math.cos(a), 4.0 * math.sin(a)))
    for k in range(half):
        a = math.pi / 2 + math.pi * k / half
        outer.append((-6.0 + 4.0 * math.cos(a), 4.0 * math.sin(a)))
    inner = [(7.0 * math.cos(-2 * math.pi * k / n_inner), 2.0 * math.sin(-2 * math.pi * k / n_inner))
             for k in range(n_inner)]
    return [outer, inner]


@pytest.mark.parametrize("angle", [base.GUARANTEE, 30.0, 33.0])
def test_racetrack_both_paths(angle):
    loops = racetrack()
    pts, segs, tri = base.setup(loops)
    outs = {m: _REAL_REFINE(tri, min_angle=angle, max_area=0.05, method=m)
            for m in ("batched", "sequential")}
    for m, out in outs.items():
        assert out.complete, (m, out.stop_reason)
        base.check_valid(out, pts, segs, loops)
        assert min_angles(out).min() >= angle
        base.check_sizes(out, max_area=0.05)
        assert engine_check(out, segs) == []
    assert outs["batched"].stats["method"] == "batched"
    assert outs["batched"].stats["batched_rounds"] > 1
    # the rounds insert about as many points as one-at-a-time refinement
    nb = outs["batched"].stats["added_points"]
    ns = outs["sequential"].stats["added_points"]
    assert 0.8 * ns <= nb <= 1.2 * ns


def test_convex_region_matches_qhull_at_size():
    # a convex region without interior segments: the refined mesh is the
    # Delaunay triangulation of its points, so Qhull finds the same number
    # of triangles and the same area (Euler: T = 2n - h - 2)
    rng = np.random.default_rng(11)
    pts = np.vstack([[(0, 0), (30, 0), (30, 20), (0, 20)], rng.uniform(1, 19, (200, 2))])
    tri = engine.triangulate(pts)
    out = engine.refine(tri, min_angle=30.0, max_area=0.05)
    assert out.stats["method"] == "batched" and len(out.triangles) > 10000
    assert engine_check(out) == []
    ref = Delaunay(out.points)
    assert len(ref.simplices) == len(out.triangles)
    assert math.isclose(out.area(), 600.0, rel_tol=1e-12)
    assert min_angles(out).min() >= 30.0
    assert np.all(out.neighbors.max(axis=1) < len(out.triangles))


@pytest.mark.parametrize("cap", [0, 1, 137, 2000])
def test_point_cap_is_exact(cap):
    loops = racetrack()
    pts, segs, tri = base.setup(loops)
    out = engine.refine(tri, min_angle=30.0, max_area=0.01, max_points=cap)
    assert out.complete is False and "max_points" in out.stop_reason
    assert len(out.points) - len(pts) == cap
    base.check_valid(out, pts, segs, loops)


def test_leftovers_go_to_the_sequential_refiner(monkeypatch):
    # force every proposal of the rounds onto the sequential tail after the
    # first rounds: the result must be as valid and as good as ever
    loops = base.floor_plan()
    pts, segs, tri = base.setup(loops)
    real_round = batch_refine._Rounds._round

    def round_then_give_up(self, todo, budget):
        if self.rounds >= 3:
            t = np.unique(todo)
            self.tail.extend(self._triangle_ids(t))
            return t[:0], 0
        return real_round(self, todo, budget)

    monkeypatch.setattr(batch_refine._Rounds, "_round", round_then_give_up)
    out = _REAL_REFINE(tri, min_angle=32.0, max_area=0.3, method="batched")
    assert out.stats["sequential_tail"] > 0
    assert out.complete
    base.check_valid(out, pts, segs, loops)
    assert min_angles(out).min() >= 32.0
    base.check_sizes(out, max_area=0.3)


def test_auto_picks_the_path_by_size():
    loops = racetrack()
    _, _, tri = base.setup(loops)
    small = _REAL_REFINE(tri, min_angle=30.0)
    assert "batched_rounds" not in small.stats
    area = abs(tri.area())
    big = _REAL_REFINE(tri, min_angle=30.0, max_area=area / 20_000)
    assert big.stats["method"] == "batched"
    with pytest.raises(ValueError):
        _REAL_REFINE(tri, method="parallel")


@pytest.mark.parametrize("option", [dict(keep_boundary=True), dict(size_growth=0.3),
                                    dict(smoothing=True), dict(fixed_segments=[[0, 1]])])
def test_options_that_stay_sequential(option):
    # options the rounds do not handle run on the sequential refiner even
    # with method="batched", with its results (exact checker, shapely area)
    loops = base.floor_plan()
    pts, segs, tri = base.setup(loops)
    out = _REAL_REFINE(tri, min_angle=30.0, max_area=0.5, method="batched", **option)
    assert "batched_rounds" not in out.stats
    base.check_valid(out, pts, segs, loops)
    if "keep_boundary" in option:
        assert out.stats["segment_splits"] == 0


def test_same_result_twice():
    loops = base.gear()
    _, _, tri = base.setup(loops)
    a = engine.refine(tri, min_angle=30.0, max_area=0.2)
    b = engine.refine(tri, min_angle=30.0, max_area=0.2)
    assert np.array_equal(a.points, b.points) and np.array_equal(a.triangles, b.triangles)


def test_lake_with_islands_against_shapely():
    # a jittered shore with islands (as in the benchmark, smaller): the area
    # equals shapely's polygon area and every input segment is covered
    rng = np.random.default_rng(5)
    n = 300
    th = np.arange(n) * 2 * np.pi / n
    r = 10 + rng.uniform(-0.15, 0.15, n)
    outer = list(zip(r * np.cos(th), r * np.sin(th)))
    isl = []
    for cx, cy in ((4, 4), (-4, 4), (-4, -4), (4, -4)):
        m = 40
        ph = -np.arange(m) * 2 * np.pi / m
        isl.append(list(zip(cx + 1.5 * np.cos(ph), cy + 1.5 * np.sin(ph))))
    loops = [outer] + isl
    assert Polygon(loops[0], loops[1:]).is_valid
    pts, segs, tri = base.setup(loops)
    out = engine.refine(tri, min_angle=30.0, max_area=0.02)
    assert out.stats["method"] == "batched"
    base.check_valid(out, pts, segs, loops)
    mins = min_angles(out)
    assert (mins >= 30.0).mean() >= 0.999


def test_sliver_fan_starts_sequentially_then_goes_batched(monkeypatch):
    # an ellipse outlined by 600 close vertices: its constrained Delaunay
    # triangulation is all long slivers, whose first insertions have cavities
    # of hundreds of triangles.  The sequential refiner takes those, the rounds
    # the rest; the result holds the same outside checks as the sequential
    # path (tests/helpers.py's exact checker, shapely's area) and about as
    # many points
    monkeypatch.setattr(refine_module, "WARM_UP_WINDOW", 64)
    th = 2 * np.pi * np.arange(600) / 600
    loops = [list(zip(np.cos(th), 0.6 * np.sin(th)))]
    pts, segs, tri = base.setup(loops)
    outs = {m: _REAL_REFINE(tri, min_angle=30.0, max_edge=0.05, method=m)
            for m in ("batched", "sequential")}
    batched = outs["batched"]
    assert batched.stats["warm_up_points"] >= 64
    assert batched.stats["batched_rounds"] > 1 and batched.stats["batched_points"] > 0
    for out in outs.values():
        assert out.complete
        base.check_valid(out, pts, segs, loops)
        assert min_angles(out).min() >= 30.0
        base.check_sizes(out, max_edge=0.05)
    ns = outs["sequential"].stats["added_points"]
    assert 0.8 * ns <= batched.stats["added_points"] <= 1.25 * ns


def test_free_slots_of_the_sequential_start_are_dropped():
    # the sequential refiner may leave free slots behind; the rounds number
    # the live triangles afresh: the same triangles in the same order, and
    # every neighbour link pairs two corners facing the same edge
    _, _, tri = base.setup(racetrack(40, 12))
    mesh = mesh_from_triangles(tri.points, tri.triangles)
    gone = [3, 10, 11]
    for t in gone:
        for c in range(3 * t, 3 * t + 3):
            if mesh.tn[c] >= 0:
                mesh.tn[mesh.tn[c]] = -1
        mesh.release(t)
    tv, tn, tc = batch_refine._without_free_slots(mesh)
    kept = np.delete(np.asarray(mesh_from_triangles(tri.points, tri.triangles).tv).reshape(-1, 3),
                     gone, axis=0)
    assert np.array_equal(tv.reshape(-1, 3), kept)
    assert len(tn) == len(tc) == len(tv)
    linked = np.flatnonzero(tn >= 0)
    assert len(linked) > 0 and np.array_equal(tn[tn[linked]], linked)
    nxt = linked - linked % 3 + (linked % 3 + 1) % 3
    prv = linked - linked % 3 + (linked % 3 + 2) % 3
    o = tn[linked]
    o_nxt = o - o % 3 + (o % 3 + 1) % 3
    o_prv = o - o % 3 + (o % 3 + 2) % 3
    assert np.array_equal(tv[nxt], tv[o_prv]) and np.array_equal(tv[prv], tv[o_nxt])
