"""Adversarial cases of issue 8 for refinement and flat-region remeshing,
found by the fuzzing and now fixed.

Each input was found by the hypothesis strategies of tests/adversarial.py
(invented data) or built from its generators; the checks are the contract
checkers of tests/test_adversarial.py (the exact validity checks of
tests/helpers.py, the remesh contract's mesh facts), and each names its
outside source beside it.  No timing assertions.
"""

from __future__ import annotations

import importlib
from collections import Counter

import numpy as np
import pytest

import engine
from engine.flat_regions import find_regions
from engine.polygons import PolygonList

from . import adversarial as A
from . import helpers as H
from .test_adversarial import expect_refine_contract, expect_remesh_contract

# --------------------------------------------------------------------------
# refinement: a split point rounded off its segment
# --------------------------------------------------------------------------
# a pentagon (radii 5..10) with two triangular holes: one whose corner is
# the rounded midpoint of the outline edge 0-1 ("on_edge"), one whose corner
# is the outline vertex 0 ("at_vertex"); found by the strategy
# polygons_with_holes (unit scale)
PENTAGON_TWO_HOLES = [
    [(4.93568276641831, 0.7993970410761501), (0.9051910671553087, 5.8471088499664345),
     (-4.045084971874736, 2.9389262614623664), (-4.045084971874738, -2.938926261462365),
     (1.5450849718747361, -4.755282581475768)],
    [(2.9204369167868096, 3.3232529455212925), (1.1602184583934048, 1.6616264727606462),
     (1.4602184583934048, 1.3616264727606462)],
    [(4.93568276641831, 0.7993970410761501), (2.474273106567324, 0.31975881643046006),
     (1.974273106567324, 0.8197588164304601)],
]

# a millimetre pentagon at (1e6, 1e6) with the same "on_edge" hole listed
# twice (found by the same strategy, unit scale, then scaled by 1e-3 and
# moved by 1e6 as its "1e-3@1e6" variant does); at 1e6 the double spacing is
# 2^-33 ~ 1.2e-10 (IEEE 754), so split points are rounded off their segments
MILLIMETRE_PENTAGON_AT_1E6 = [
    [(1000000.0028455564, 1000000.0041113027), (1000000.0, 1000000.0094741115),
     (999999.9913608563, 1000000.0028070279), (999999.9966206673, 999999.9961423182),
     (1000000.0048177068, 999999.9922763946)],
    [(1000000.0014227781, 1000000.006792707), (1000000.000411389, 1000000.0033963536),
     (1000000.0007113891, 1000000.0030963535)],
    [(1000000.0014227781, 1000000.006792707), (1000000.000411389, 1000000.0033963536),
     (1000000.0007113891, 1000000.0030963535)],
]


@pytest.mark.parametrize("cap", [61, 62, 65, 72, 75, 88, 94, 104])
def test_refine_stopped_by_the_cap_stays_constrained_delaunay(cap):
    # min_angle=35 cannot be reached (above ~34 degrees refinement usually
    # does not finish; Shewchuk 2002, from memory), so max_points stops the
    # run; the capped result must still pass both exact checkers: the
    # engine's validator and the independent one of tests/helpers.py (CCW,
    # locally constrained Delaunay by exact incircle, every segment covered,
    # area = the nonzero-rule area from shapely/GEOS, helpers.fill_rule_area)
    loops = PENTAGON_TWO_HOLES
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs, fill="nonzero")
    out = expect_refine_contract(tri, pts, segs, fill="nonzero",
                                 area=H.fill_rule_area(loops, "nonzero"), cover="kept",
                                 min_angle=35.0, off_centers=False, max_points=cap)
    assert out.complete is False


@pytest.mark.parametrize("method", ["sequential", "batched"])
@pytest.mark.parametrize("cap", [69, 81, 20000])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_refine_segment_splits_at_1e6_stay_constrained_delaunay(fill, cap, method):
    # min_angle=0 with Ruppert's diametral circles: only encroached segments
    # are split, and with the large cap the run completes; every split point
    # at 1e6 is rounded to the double grid there (IEEE 754), and the result
    # must pass both exact checkers with the fill rule's area (shapely/GEOS),
    # on the sequential and the batched path alike.  strict=False: features
    # are ulps apart next to the coordinates (helpers docstring)
    loops = MILLIMETRE_PENTAGON_AT_1E6
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs, fill=fill)
    out = expect_refine_contract(tri, pts, segs, fill=fill, area=H.fill_rule_area(loops, fill),
                                 cover="kept", strict=False, min_angle=0.0,
                                 encroachment="circle", max_points=cap, method=method)
    assert out.stats["segment_splits"] > 0
    if cap == 20000:
        assert out.complete is True


# a pentagon (radius 5) with a triangular hole whose corner is outline
# vertex 0, so the region pinches there into two fans; found by the strategy
# polygons_with_holes ("at_vertex", unit scale) with a size limit
PENTAGON_HOLE_AT_VERTEX = [
    [(5.0, 0.0), (3.061616997868383e-16, 5.0), (-4.045084971874736, 2.9389262614623664),
     (-4.045084971874738, -2.938926261462365), (1.5450849718747361, -4.755282581475768)],
    [(5.0, 0.0), (2.5, 0.0), (2.0, 0.5)],
]


def refine_to_fiftieths(loops, fill, method):
    """Size-only refinement (min_angle 0, max_area a fiftieth of the area)
    under the refine contract (both exact checkers, the fill rule's area from
    shapely/GEOS, max_area checked exactly when complete)."""
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs, fill=fill)
    return expect_refine_contract(tri, pts, segs, fill=fill, area=H.fill_rule_area(loops, fill),
                                  cover="kept", min_angle=0.0, off_centers=False,
                                  max_area=abs(tri.area()) / 50, method=method)


@pytest.mark.parametrize("method", ["sequential", "batched"])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_size_limit_holds_next_to_a_pinched_vertex(fill, method):
    # a triangle at the pinched vertex asked to split the outline piece it
    # encroaches upon; the search for that edge turned around the vertex's
    # other fan only, the split was dropped and a triangle 2.7 times over
    # max_area stayed in a run reported complete.  A completed run honours
    # max_area (refine's docstring: a hard limit; expect_refine_contract
    # checks it in exact arithmetic) and passes both exact checkers with the
    # fill rule's area from shapely/GEOS
    out = refine_to_fiftieths(PENTAGON_HOLE_AT_VERTEX, fill, method)
    assert out.complete is True


# the same pentagon with a hole whose corner is the midpoint of the outline
# edge 0-1 as rounded: (2.5, 2.5) lies a rounding error off that edge, and
# the edge's own midpoint rounds onto it ("on_edge", unit scale)
PENTAGON_HOLE_ON_EDGE = [
    PENTAGON_HOLE_AT_VERTEX[0],
    [(2.5, 2.5), (0.95, 1.25), (1.25, 0.95)],
]


@pytest.mark.parametrize("method", ["sequential", "batched"])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_size_limit_next_to_a_vertex_within_rounding_of_the_outline(fill, method):
    # splitting outline edge 0-1 at its midpoint would put a point on the
    # hole's corner, which lies a rounding error off that edge; the edge used
    # to be frozen whole, leaving a triangle over max_area in a run reported
    # complete.  Now the split takes a spare point a third of the way along;
    # the piece that still holds the corner within rounding cannot be split
    # (any point on it folds the sliver between them), so the run meets
    # max_area or says it could not (complete=False, the limit named, at most
    # one triangle over), and both exact checkers pass with shapely/GEOS's
    # area
    out = refine_to_fiftieths(PENTAGON_HOLE_ON_EDGE, fill, method)
    if not out.complete:
        assert out.stop_reason.startswith("1 triangle(s) above the size limits")


# a millimetre heptagon at (1e6, 1e6) with a thin hole touching the middle of
# an outline edge and a second hole at an outline vertex ("on_edge+at_vertex",
# then "1e-3@1e6"; found by the strategy polygons_with_holes)
HEPTAGON_THIN_HOLE_AT_1E6 = [
    [(1000000.005, 1000000.0), (1000000.003117449, 1000000.0039091574),
     (999999.9950120816, 1000000.0062546518), (999999.9926544697, 1000000.003537421),
     (999999.9954951557, 999999.9978305813), (999999.9988873954, 999999.9951253604),
     (1000000.003117449, 999999.9960908426)],
    [(999999.9938332756, 1000000.0048960363), (999999.9966166378, 1000000.0024480182),
     (999999.9969166379, 1000000.0021480182)],
    [(1000000.005, 1000000.0), (1000000.0025, 1000000.0), (1000000.002, 1000000.0005)],
]


@pytest.mark.parametrize("method", ["sequential", "batched"])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_split_points_at_1e6_stay_on_their_side_of_a_thin_hole(fill, method):
    # the hole's two sides leave its corner a few degrees apart and are split
    # on the same concentric shells; a hundred ulps from the corner (the
    # double spacing at 1e6 is 2^-33, IEEE 754) a split point of one side,
    # rounded to the grid, fell out of the region onto the other side's
    # split point: two vertices at one place.  A border piece's point rounded
    # out of the region is not taken; both exact checkers pass with
    # shapely/GEOS's area (strict=False: features are ulps apart)
    loops = HEPTAGON_THIN_HOLE_AT_1E6
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs, fill=fill)
    out = expect_refine_contract(tri, pts, segs, fill=fill, area=H.fill_rule_area(loops, fill),
                                 cover="kept", strict=False, min_angle=20.0, max_points=61,
                                 off_centers=False, method=method)
    assert out.stats["segment_splits"] > 0


def test_a_run_that_cannot_meet_the_size_limit_is_not_complete(monkeypatch):
    # max_area is a hard limit (refine's docstring): when no segment may be
    # split (every split refused, as for pieces too short to split), the
    # triangles along the outline stay too large, and the run must say so
    def refuse_split(self, c):
        tv = self.mesh.tv
        u, v = tv[c - c % 3 + (c % 3 + 1) % 3], tv[c - c % 3 + (c % 3 + 2) % 3]
        self._freeze((min(u, v), max(u, v)))
        return False

    monkeypatch.setattr(importlib.import_module("engine.refine")._Refiner, "_split_segment",
                        refuse_split)
    loops = [[(0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)]]
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs)
    out = engine.refine(tri, min_angle=0.0, max_area=0.05, method="sequential")
    assert out.complete is False
    assert "above the size limits" in out.stop_reason


@pytest.mark.parametrize("turn", [0.0, 0.7, 1.9, 3.3, 4.4, 5.6])
@pytest.mark.parametrize("reverse_hole", [False, True])
def test_small_angle_in_either_fan_of_a_pinched_vertex(turn, reverse_hole):
    # a 10 x 10 floor with a triangular pit touching its corner (10, 0): the
    # pit's sides leave the corner at 100 and 110 degrees, so the corner's
    # two sectors measure 10 and 70 degrees (the outline sides run at 90 and
    # 180).  The 10 degree sector makes it a small-angle apex whichever fan
    # the search starts in (rotations and the listing order move it); every
    # other vertex sees at least 60 degrees (the floor's corners 90, the pit's
    # corners are reflex from the floor), so exactly one apex is reported
    c, s = np.cos(np.radians([100.0, 110.0])), np.sin(np.radians([100.0, 110.0]))
    pit = [(10.0, 0.0), (10.0 + 6.0 * c[1], 6.0 * s[1]), (10.0 + 4.0 * c[0], 4.0 * s[0])]
    if reverse_hole:
        pit = pit[::-1]
    rot = np.array([[np.cos(turn), -np.sin(turn)], [np.sin(turn), np.cos(turn)]])
    loops = [[tuple(rot @ p) for p in [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]],
             [tuple(rot @ p) for p in pit]]
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs)
    out = engine.refine(tri, min_angle=25.0, method="sequential")
    assert out.stats["small_input_angle_vertices"] == 1


# --------------------------------------------------------------------------
# remeshing: a fin standing on an edge inside a region
# --------------------------------------------------------------------------
def panel_with_inner_fin(height=1.0):
    """A 3 x 3 quad panel (tests/adversarial.grid_panel) with a fin quad
    standing on its inner edge 10-11: the panel's region surrounds that edge,
    which three faces share (a fold, non-manifold)."""
    v, f = A.grid_panel(3, 3)
    v = np.vstack((v, v[10] + (0.0, 0.0, height), v[11] + (0.0, 0.0, height)))
    return v, [list(x) for x in f] + [[11, 10, 16, 17]]


def _fold_pieces_keep_three_faces(edit, v, f, a, b):
    """Every piece of the fold edge a-b in the edited mesh is used by three
    faces (the panel on both sides and the fin): the fold is still closed
    (manifold-with-fold edge counting; common practice)."""
    verts, polys, _mapping = edit.apply(v, f, compact=False)
    counts = Counter()
    for k in range(len(polys)):
        face = polys.face(k).tolist()
        for i in range(len(face)):
            p, q = face[i], face[(i + 1) % len(face)]
            counts[(min(p, q), max(p, q))] += 1
    pa, pb = verts[a], verts[b]
    d = pb - pa
    size = float(np.linalg.norm(np.ptp(verts, axis=0)))
    on_line = []
    for x in range(len(verts)):
        t = float((verts[x] - pa) @ d / (d @ d))
        if -1e-12 <= t <= 1 + 1e-12 and \
                np.linalg.norm(pa + t * d - verts[x]) <= 1e-9 * size:
            on_line.append((t, x))
    chain = [x for _t, x in sorted(on_line)]
    assert chain[0] == a and chain[-1] == b
    for p, q in zip(chain, chain[1:]):
        assert counts[(min(p, q), max(p, q))] == 3, (p, q, counts[(min(p, q), max(p, q))])


@pytest.mark.parametrize("tilted", [False, True])
def test_fold_inside_a_capped_region_has_no_crack(tilted):
    # pending case "crack at a fold when max_points stops a region": the fin
    # splits the fold edge 10-11; the panel around it must carry the same
    # split points (no face side skips one: the contract's watertight rule,
    # and no new geometric T-junction)
    v, f = panel_with_inner_fin()
    if tilted:
        v = A.tilt(v)
    edit = expect_remesh_contract(v, f, max_area=0.008, max_points=10)
    assert any(not r.complete for r in edit.regions)
    _fold_pieces_keep_three_faces(edit, v, f, 10, 11)


@pytest.mark.parametrize("scale", [1e-9, 1.0, 1e9])
def test_fold_inside_a_region_scaled(scale):
    # pending case "new T-junction at 1e-9 scale": the same finned panel,
    # tilted and scaled (x * 1e-9 is rounded; IEEE 754), remeshed to a size
    # limit: the contract's mesh facts (no new T-junction, closed fold)
    v, f = panel_with_inner_fin()
    v = A.tilt(v) * scale
    edit = expect_remesh_contract(v, f, max_area=0.05 * scale * scale)
    assert all(r.status == "changed" for r in edit.regions)
    _fold_pieces_keep_three_faces(edit, v, f, 10, 11)


# --------------------------------------------------------------------------
# remeshing: a millimetre fin at 1e6
# --------------------------------------------------------------------------
def panel_with_border_fin(height=1e-3, offset=1e6):
    """A 3 x 3 unit-quad panel with a fin quad of the given height standing
    perpendicular on its border edge 0-1, the whole moved by `offset`."""
    v, f = A.grid_panel(3, 3)
    v = np.vstack((v, v[0] + (0.0, 0.0, height), v[1] + (0.0, 0.0, height)))
    return v + offset, [list(x) for x in f] + [[1, 0, 16, 17]]


@pytest.mark.parametrize("tilted", [False, True])
def test_millimetre_fin_at_1e6_keeps_its_own_region(tilted):
    # the fin stands at 90 degrees to the panel (construction), far beyond
    # flat_angle=1; it is 1e-3 high, about 8e6 float64 steps at 1e6 (IEEE
    # 754 spacing 2^-33), so float64 input resolves it and it must stay a
    # region of its own; the remesh contract's facts hold (vector area fixed
    # by the border, Stokes' theorem, among them)
    v, f = panel_with_border_fin()
    if tilted:
        v = A.tilt(v - 1e6, shift=(0.0, 0.0, 0.0)) + 1e6
    assert not np.array_equal(v.astype(np.float32).astype(np.float64), v)
    edit = expect_remesh_contract(v, f)
    fin = len(f) - 1
    holding = [r for r in edit.regions if fin in r.face_ids]
    assert len(holding) == 1 and holding[0].face_ids == [fin], \
        [(r.face_ids, r.status) for r in edit.regions]


def test_millimetre_fin_at_1e6_rounded_to_float32():
    # the same mesh rounded to float32 (an STL file): at 1e6 the float32
    # spacing is 2^-4 = 0.0625 (IEEE 754), so the millimetre fin collapses
    # onto the panel; whatever the regions are then, the contract holds
    v, f = panel_with_border_fin()
    v = v.astype(np.float32).astype(np.float64)
    expect_remesh_contract(v, f)


# --------------------------------------------------------------------------
# remeshing: the source face of a new triangle
# --------------------------------------------------------------------------
def test_new_faces_do_not_take_a_sliver_as_their_source():
    # found by the strategy flat_meshes ("collinear_corner", "split_tri",
    # float32, x 1e-9): a tilted triangle and, on its edge 0-1, a zero-area
    # triangle whose middle corner 4 was rounded off the edge by float32
    # (IEEE 754: 24-bit significand), so its Newell normal is rounding
    # noise.  The new faces must lie on the plane of the face they name as
    # their source (the contract's plane check, Newell's method), so none
    # may name the sliver
    v = np.array([[4.999999969612645e-09, -3.000000026176508e-09, 1.999999943436137e-09],
                  [5.540302439044353e-09, -3.000000026176508e-09, 1.158529050471202e-09],
                  [4.999999969612645e-09, -1.999999943436137e-09, 1.999999943436137e-09],
                  [5.540302439044353e-09, -1.999999943436137e-09, 1.158529050471202e-09],
                  [5.270150982283894e-09, -3.000000026176508e-09, 1.5792644969536695e-09]])
    f = [[0, 4, 1], [0, 1, 3]]
    assert np.array_equal(v.astype(np.float32).astype(np.float64), v)
    edit = expect_remesh_contract(v, f, min_angle=0.0, max_points=0, flat_angle=0.5)
    assert len(edit.faces) and 0 not in edit.face_source.tolist()


# --------------------------------------------------------------------------
# flat regions: the rounding floor after a float64 transform
# --------------------------------------------------------------------------
def _tilted_panel_with_float32_sliver():
    """A tilted 1.3 x 1.7 quad near 1000 and, on its edge 0-1, a sliver
    whose middle corner is the edge's midpoint rounded to float32."""
    rot = np.array([[1, 0, 0], [0, 0.8, -0.6], [0, 0.6, 0.8]]) @ \
        np.array([[0.8, 0, -0.6], [0, 1, 0], [0.6, 0, 0.8]])
    square = np.array([[0, 0, 0], [1.3, 0, 0], [1.3, 1.7, 0], [0, 1.7, 0], [0.65, 0, 0]])
    v = (square @ rot.T + 1000.0).astype(np.float32).astype(np.float64)
    return v, [[0, 4, 1], [0, 1, 2, 3]]


def _region_faces(v, f, precision):
    regions, _ = find_regions(v, PolygonList.from_faces(f), face_mask=np.ones(len(f), bool),
                              flat_angle=1.0, flat_distance=None, break_edge_ids=set(),
                              coordinate_precision=precision)
    return sorted(r.faces for r in regions)


def test_float32_sliver_counts_as_rounding_noise_after_a_float64_transform():
    # the sliver's height (~1e-5) is below the float32 rounding of
    # coordinates near 1000 (IEEE 754 spacing 2^-14 ~ 6e-5), so its normal is
    # rounding noise and it joins the quad; after an object transform applied
    # in float64 (what a host does with its single-precision positions) the
    # coordinates are no longer float32 values, and only the caller can say
    # they were: coordinate_precision="float32" keeps the sliver in the quad
    v, f = _tilted_panel_with_float32_sliver()
    assert _region_faces(v, f, "auto") == [[0, 1]]
    assert _region_faces(v, f, "float64") == [[0], [1]]
    turn = np.array([[0.8, -0.6, 0.0], [0.6, 0.8, 0.0], [0.0, 0.0, 1.0]]) * 1.37
    moved = v @ turn.T + (0.123, 0.456, 0.789)
    assert _region_faces(moved, f, "auto") == [[0], [1]]
    assert _region_faces(moved, f, "float32") == [[0, 1]]
    expect_remesh_contract(moved, f, coordinate_precision="float32")


def test_coordinate_precision_must_be_known():
    v, f = _tilted_panel_with_float32_sliver()
    with pytest.raises(ValueError, match="coordinate_precision"):
        engine.remesh_flat_regions(v, f, coordinate_precision="half")


def test_empty_mesh_changes_nothing():
    # no faces, no regions: an empty edit (the host passes empty meshes on;
    # tests/test_host_adversarial.py checks the operators on them)
    edit = engine.remesh_flat_regions(np.zeros((0, 3)), [])
    assert not edit.changed and edit.regions == [] and len(edit.faces) == 0


def test_size_only_refinement_splits_segments_instead_of_hugging_them():
    # found by the strategy flat_meshes (a tilted unit-ish panel, size limit
    # only, capped): the circumcenter of a right triangle is the midpoint of
    # its hypotenuse (Thales' theorem), here an outline edge; rounded a hair
    # inside, it used to go in as a free point (a lens of angle 0 holds
    # nothing), making a triangle of about 1e-14 degrees and, in 3D, a vertex
    # on an edge it does not split.  The remesh contract (no new T-junction)
    # and a smallest angle far from zero must hold
    v = np.array([[5.0, -3.0, 2.0],
                  [5.402948414977843, -2.779868277618996, 1.111645003577727],
                  [5.914853806480765, -3.0693233259919572, 2.3977898807675584],
                  [6.317802221458607, -2.849191603610953, 1.5094348843452854]])
    edit = expect_remesh_contract(v, [[0, 1, 3, 2]], min_angle=0.0, max_points=13,
                                  flat_angle=0.5, max_area=0.05428993070361687)
    assert edit.regions[0].min_angle_after > 1.0


def test_region_of_one_single_precision_sliver_is_left_alone():
    # found by the strategy flat_meshes ("panel:zero_area/float32/1e-9"): a
    # nanometre panel whose zero-area face (3, 8, 9), vertex 8 the midpoint of
    # 3-9, was rounded to float32, leaving vertex 8 7e-18 off that edge (under
    # the float32 spacing there, IEEE 754).  Its own region was refined: a
    # split point of edge 3-9 landed a hair from vertex 8, and the mesh got a
    # new T-junction.  Such a region is skipped as degenerate; the remesh
    # contract (no new T-junction) holds
    v = np.array([
        [4.999999969612645e-09, -3.000000026176508e-09, 1.999999943436137e-09],
        [4.010007437216245e-09, -2.8588800216056143e-09, 1.999999943436137e-09],
        [3.0200149048198455e-09, -2.7177600170347205e-09, 1.999999943436137e-09],
        [2.0300225944680506e-09, -2.5766400124638267e-09, 1.999999943436137e-09],
        [4.858879965041751e-09, -3.989992336528303e-09, 1.999999943436137e-09],
        [3.8688874326453515e-09, -3.848872331957409e-09, 1.999999943436137e-09],
        [2.8788949002489517e-09, -3.7077525494311203e-09, 1.999999943436137e-09],
        [1.8889025898971568e-09, -3.5666325448602265e-09, 1.999999943436137e-09],
        [1.0400300620716507e-09, -2.435520007892933e-09, 1.999999943436137e-09],
        [5.003751579746307e-11, -2.294400003322039e-09, 1.999999943436137e-09]])
    faces = [[0, 1, 5, 4], [1, 2, 6, 5], [2, 3, 7, 6], [3, 8, 9]]
    edit = expect_remesh_contract(v, faces, min_angle=0.0, max_points=3, flat_angle=0.5)
    sliver = [r for r in edit.regions if r.face_ids == [3]]
    assert len(sliver) == 1 and sliver[0].status == "skipped"
    assert "degenerate" in sliver[0].reason
    assert 3 not in edit.replaced_faces.tolist()


def test_narrow_strip_far_from_the_origin_object_is_remeshed():
    # a 10 x 0.3 strip of 12 triangles beside a quad a thousand units away,
    # stored in single precision: the strip's faces are 0.3 wide, far above
    # the float32 rounding of their own coordinates (2^-24 relative, IEEE
    # 754), so the strip is remeshed, not skipped as degenerate
    xs = np.linspace(0.0, 10.0, 7)
    strip = [(x, y, 5.0) for x in xs for y in (0.0, 0.3)]
    faces = []
    for i in range(6):
        a, b, c, d = 2 * i, 2 * i + 2, 2 * i + 3, 2 * i + 1
        faces += [[a, b, c], [a, c, d]]
    quad = [(1000.0, 0.0, 0.0), (1001.0, 0.0, 0.0), (1001.0, 1.0, 0.0), (1000.0, 1.0, 0.0)]
    v = np.array(strip + quad, dtype=np.float32).astype(np.float64)
    faces.append([14, 15, 16, 17])
    edit = expect_remesh_contract(v, faces, min_angle=20.0, max_points=200)
    strip_region = [r for r in edit.regions if r.faces == 12]
    assert len(strip_region) == 1 and strip_region[0].status == "changed"


# --------------------------------------------------------------------------
# overlapping sheets and flipped neighbours
# --------------------------------------------------------------------------
def test_overlapping_faces_are_left_alone():
    # found by the strategy flat_meshes ("dup" then "collinear_corner"): a
    # unit square listed twice, once with a collinear corner at the middle of
    # its lower edge.  The two faces lie on each other (each edge they share
    # is used twice in the same direction, and they are on the same side of
    # it), so neither can be remeshed without one sheet meeting the other's
    # new points; both are skipped with the reason, and the contract holds
    v = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0], [0.5, 0, 0]])
    f = [[0, 4, 1, 3, 2], [0, 1, 3, 2]]
    edit = expect_remesh_contract(v, f, min_angle=0.0, max_points=2, flat_angle=0.5,
                                  max_area=0.125)
    assert [r.status for r in edit.regions] == ["skipped", "skipped"]
    assert all("overlapping" in r.reason for r in edit.regions)


def test_flipped_coplanar_neighbour_is_not_an_overlap():
    # a 3 x 3 panel whose middle quad is listed with the opposite winding
    # (a common fault of imported meshes): its edges run the same way as the
    # neighbours' but it lies beside them, not over them, so the rest of the
    # panel is still remeshed (regions never cross the orientation change)
    v, f = A.grid_panel(3, 3)
    f = [list(x) for x in f]
    f[4] = f[4][::-1]
    edit = expect_remesh_contract(v, f, min_angle=30.0, max_area=0.05)
    changed = [r for r in edit.regions if r.status == "changed"]
    assert changed and all("overlapping" not in r.reason for r in edit.regions)


def test_straightened_run_along_a_fin_edge_shares_its_points():
    # found by the strategy flat_meshes ("fin" then "collinear_corner"): a
    # unit panel whose lower edge carries a collinear corner at its middle,
    # and a fin standing on the whole lower edge (an input T-junction).
    # Straightening drops the middle corner, so the panel's outline there is
    # a chord between the same two vertices as the fin's edge: points either
    # side puts on that line must be carried by both (watertight rule of
    # the remesh contract)
    v = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0], [0, 0, 1], [1, 0, 1],
                  [0.5, 0, 0]])
    f = [[0, 6, 1, 3, 2], [1, 0, 4, 5]]
    expect_remesh_contract(v, f, min_angle=0.0, max_points=3, flat_angle=0.5,
                           max_area=0.1875, straighten_tolerance=1.7320508075688771e-06)
