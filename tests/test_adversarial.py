"""Adversarial and fuzz suite for the engine: the failure contract, proven.

The contract (issue 8, engine part):

* engine.triangulate / engine.legalize: either a result that passes the
  exact validity checks - engine.validate.check_triangulation AND the
  independent exact checker in tests/helpers.py (strictly counter-clockwise
  triangles, local constrained Delaunay, constraints covered, area kept) -
  or a ValueError whose message names the problem;
* engine.refine always stops: the point cap (max_points) is honoured, and a
  capped run says so (complete=False, stop_reason naming max_points); so does
  a run left above a hard size limit (max_area, max_edge);
* engine.remesh_flat_regions never raises for one bad region (it skips it
  with a reason) and returns a MeshEdit whose applied mesh has no new
  T-junction, keeps every original vertex position bit for bit, and keeps
  a closed input closed (every edge in exactly two faces) with the same
  signed volume.

Adversarial inputs come from tests/adversarial.py (invented data).  Each
check names its outside source in a comment.  No timing assertions.

Fuzzing: the hypothesis tests at the end use the project's profiles
(tests/conftest.py: 40 examples by default).  FRR_LONG_FUZZ=1 runs at least
10,000 cases per strategy (FRR_FUZZ_EXAMPLES=N overrides the count).
"""

from __future__ import annotations

import math
import os
import re
from collections import defaultdict
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings

import engine
from engine.mesh_edit import MeshEdit
from engine.validate import check_triangulation as engine_check

from . import adversarial as A
from . import helpers as H
from . import scenes

# --------------------------------------------------------------------------
# example counts: the conftest profile (40) normally; the long run (issue 8)
# needs at least 10,000 cases per strategy
# --------------------------------------------------------------------------
_LONG = os.environ.get("FRR_LONG_FUZZ") == "1"
_EXAMPLES = int(os.environ.get("FRR_FUZZ_EXAMPLES", "10000" if _LONG else "0")) or None
FUZZ = settings(max_examples=_EXAMPLES) if _EXAMPLES else settings()
# the 3D strategy is the slowest: a smaller default keeps the normal run short
FUZZ_3D = settings(max_examples=_EXAMPLES) if _EXAMPLES else settings(max_examples=25)

# words a ValueError message must contain to "name the problem"
NON_FINITE = r"finite|nan|inf"
DEGENERATE_POINTS = r"collinear|distinct"

REL = 1e-9      # relative tolerance for positions computed in floating point


# ==========================================================================
# contract checkers
# ==========================================================================
def call_engine(func, *args, **kw):
    """Call the engine; any exception other than ValueError breaks the
    contract ("a result or a ValueError"), reported as a clear failure with
    the exception's text."""
    try:
        return func(*args, **kw)
    except ValueError:
        raise
    except Exception as exc:      # noqa: BLE001 - that is the point
        pytest.fail(f"contract broken: {func.__name__} raised {type(exc).__name__} "
                    f"(not ValueError): {exc}", pytrace=False)


def expect_value_error(pattern, func, *args, **kw):
    """The call must raise ValueError whose message matches `pattern`
    (case-insensitive) - "a ValueError whose message names the problem"."""
    with pytest.raises(ValueError) as info:
        call_engine(func, *args, **kw)
    msg = str(info.value)
    assert re.search(pattern, msg, flags=re.IGNORECASE), \
        f"ValueError does not name the problem ({pattern!r}): {msg!r}"
    return msg


def check_engine_validator(tri, segments=None, points_used=False):
    """The engine's own exact validator reports no problem."""
    problems = engine_check(tri, segments, points_used=points_used)
    assert problems == [], f"engine.validate: {problems}"


def ulp_scale_features(points):
    """True when two distinct points of a result lie within 1e-8 of the
    coordinate scale of each other: the independent checker's path
    conditions use a 1e-9 relative tolerance and cannot tell such features
    apart (helpers.check_segments docstring), so only its coverage and exact
    split conditions apply (strict=False)."""
    from scipy.spatial import cKDTree
    p = np.unique(np.asarray(points, np.float64), axis=0)
    if len(p) < 2:
        return False
    scale = max(float(np.abs(p).max()), float(np.ptp(p, axis=0).max()))
    return bool(cKDTree(p).query_pairs(1e-8 * scale))


def hull_area_reference(points):
    """Convex hull area: the exact shoelace area of the exact hull
    (helpers.strict_hull, Andrew's monotone chain), cross-checked against
    shapely/GEOS to 1e-12 of the bounding-box area whenever GEOS returns a
    valid convex polygon holding every point (checked exactly).  GEOS works
    in floating point: for nearly collinear points it may return a line, or
    (seen at 1e-9 scale) a self-intersecting 'hull' or a valid polygon that
    folds back along the points; those answers are not a reference."""
    from shapely.geometry import MultiPoint
    pts = np.asarray(points, np.float64)
    E = H.ExactPoints(pts)
    hull = H.strict_hull(E, range(E.n))
    fan = [(hull[0], hull[i], hull[i + 1]) for i in range(1, len(hull) - 1)]
    exact = float(E.twice_area(fan) / 2) if fan else 0.0
    geos = MultiPoint([tuple(p) for p in pts]).convex_hull
    if geos.geom_type == "Polygon" and geos.is_valid and _holds_all_convexly(geos, pts):
        span = np.ptp(pts, axis=0)
        assert abs(geos.area - exact) <= 1e-12 * float(span[0] * span[1]) \
            or math.isclose(geos.area, exact, rel_tol=1e-12), (geos.area, exact)
    return exact


def _holds_all_convexly(polygon, pts):
    """Exact (fractions): every point lies on the inner side of, or on, the
    line of every edge of the polygon's outer ring; then the ring is convex
    (each edge line supports it) and holds all points: a convex hull."""
    ring = [tuple(map(Fraction, c)) for c in polygon.exterior.coords]
    fpts = [tuple(map(Fraction, p)) for p in np.asarray(pts).tolist()]
    twice = sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(ring, ring[1:]))
    side = 1 if twice > 0 else -1
    for (x0, y0), (x1, y1) in zip(ring, ring[1:]):
        dx, dy = x1 - x0, y1 - y0
        if any(side * (dx * (py - y0) - dy * (px - x0)) < 0 for px, py in fpts):
            return False
    return True


def first_copies_only(points, segments):
    """The segments with every repeat of an earlier segment (the same two
    points after duplicate merging, either direction) made zero-length.
    The engine names the first copy as the source of shared pieces (its
    documented rule); the independent checker ignores zero-length segments,
    so it then checks each distinct segment once, under the index the
    engine reports."""
    if segments is None:
        return None
    segs = np.asarray(segments, np.int64).reshape(-1, 2)
    first = H.first_copy_map(points)
    seen = set()
    out = segs.copy()
    for i, (a, b) in enumerate(segs.tolist()):
        key = tuple(sorted((int(first[a]), int(first[b]))))
        if key in seen:
            out[i] = (a, a)
        seen.add(key)
    return out


def expect_valid_triangulation(points, segments=None, *, holes=None, fill=None, area=None,
                               strict=True, cover="all"):
    """triangulate must succeed and pass both exact checkers.  fill='hull'
    (the default without segments): area = exact convex hull area (checked
    against shapely/GEOS) and Euler's formula T = 2n - h - 2 (helpers).
    Other fills: the caller's expected area (shapely/GEOS fill-rule faces)."""
    tri = call_engine(engine.triangulate, points, segments, holes=holes, fill=fill)
    actual_fill = fill or ("even-odd" if segments is not None and len(segments) else "hull")
    check_engine_validator(tri, segments, points_used=(actual_fill == "hull" and holes is None))
    if actual_fill == "hull" and holes is None and area is None:
        area = hull_area_reference(points)
    H.check_triangulation(tri, points, first_copies_only(points, segments),
                          fill=actual_fill, area=area,
                          strict=strict and not ulp_scale_features(tri.points), cover=cover)
    return tri


def expect_triangulate_contract(points, segments=None, *, fill=None, strict=True):
    """Valid input (finite, three distinct non-collinear points - decided
    exactly by helpers.all_collinear) must triangulate validly; degenerate
    input must raise ValueError naming it."""
    pts = np.asarray(points, dtype=np.float64)
    if not np.isfinite(pts).all():
        return expect_value_error(NON_FINITE, engine.triangulate, pts, segments, fill=fill)
    if H.all_collinear(pts):
        return expect_value_error(DEGENERATE_POINTS, engine.triangulate, pts, segments,
                                  fill=fill)
    return expect_valid_triangulation(pts, segments, fill=fill, strict=strict)


def expect_refine_contract(tri, points, segments, *, fill, area, strict=True, cover="all",
                           **options):
    """refine stops; points added <= max_points; complete/stop_reason are
    consistent; the result passes both exact checkers with the same area;
    the input triangulation is not changed; keep_boundary adds no point on
    a constrained or border edge; a completed run honours max_area (its
    docstring: a hard limit)."""
    before = (tri.points.copy(), tri.triangles.copy(), tri.segments.copy())
    out = call_engine(engine.refine, tri, **options)
    assert np.array_equal(tri.points, before[0]) and np.array_equal(tri.triangles, before[1]) \
        and np.array_equal(tri.segments, before[2]), "refine changed its input"
    added = len(out.points) - len(tri.points)
    cap = options.get("max_points")
    if cap is not None:
        assert 0 <= added <= cap, f"{added} points added with max_points={cap}"
    assert isinstance(out.complete, bool)
    if out.complete:
        assert out.stop_reason == "", out.stop_reason
    elif out.stopped_by == "size_limit":
        # max_area / max_edge are hard limits: a run may miss them only next
        # to segment pieces it could not split, and must say so
        assert out.stats["frozen_segments"] > 0, out.stop_reason
        assert "above the size limits" in out.stop_reason, out.stop_reason
    else:
        assert out.stopped_by == "point_cap", out.stopped_by
        assert re.search(r"max_points", out.stop_reason), \
            f"capped run without a reason naming the cap: {out.stop_reason!r}"
    assert np.array_equal(out.points[:len(tri.points)], tri.points)
    check_engine_validator(out, segments)
    H.check_triangulation(out, points, first_copies_only(points, segments), fill=fill, area=area,
                          strict=strict and not ulp_scale_features(out.points),
                          cover=cover, euler=False)
    if options.get("keep_boundary"):
        # the border of the region and every constrained edge stay as they
        # were: the same undirected boundary edges, the same segments
        assert _boundary_edges(out.triangles) == _boundary_edges(tri.triangles)
        assert H.undirected(out.segments) == H.undirected(tri.segments)
    if out.complete and options.get("max_area") is not None and \
            not options.get("keep_boundary"):
        # (with keep_boundary the limits hold as far as the fixed edges allow:
        # refine's docstring)
        # the refiner measures areas in floating point: a triangle within
        # rounding of the limit (1e-12 relative) counts as meeting it
        E = H.ExactPoints(out.points)
        limit = Fraction(options["max_area"]) * 2 * E.den * E.den * (1 + Fraction(1, 10 ** 12))
        worst = max(E.orient(a, b, c) for a, b, c in out.triangles.tolist())
        assert worst <= limit, "a triangle is larger than max_area"
    return out


def _boundary_edges(triangles):
    em = H.edge_map(triangles)
    return {e for e, uses in em.items() if len(uses) == 1}


# ---------------------------------------------------------------- 3D checks
def bbox_size(vertices):
    v = np.asarray(vertices, np.float64)
    return float(np.linalg.norm(np.ptp(v, axis=0))) if len(v) else 0.0


def newell(points):
    """Vector area of a polygon (Newell's method; its length is twice the
    area of a planar polygon - Tampieri, Graphics Gems III, from memory),
    computed about the polygon's first corner to limit cancellation."""
    p = np.asarray(points, np.float64)
    p = p - p[0]
    return 0.5 * np.cross(p, np.roll(p, -1, axis=0)).sum(axis=0)


def face_warp(points):
    """Largest distance of a face's corners from the plane through their
    centroid with the face's Newell normal (0 for a planar face)."""
    p = np.asarray(points, np.float64)
    nv = newell(p)
    length = float(np.linalg.norm(nv))
    if length == 0:
        return 0.0
    return float(np.abs((p - p.mean(axis=0)) @ (nv / length)).max())


def face_lists(polys):
    return [polys.face(f).tolist() for f in range(len(polys))]


def edge_counts(faces):
    """{(lo, hi): number of face sides on that edge} (repeated corners make
    zero-length sides, counted on (v, v))."""
    counts = defaultdict(int)
    for face in faces:
        for i in range(len(face)):
            a, b = face[i], face[(i + 1) % len(face)]
            counts[(min(a, b), max(a, b))] += 1
    return counts


def is_closed(faces):
    """Closed oriented 2-manifold (common practice; as in tests/test_remesh.py):
    every edge in exactly two faces, which run it in opposite directions;
    no face repeats a vertex."""
    counts = edge_counts(faces)
    directed = defaultdict(int)
    for f in faces:
        for i in range(len(f)):
            directed[(f[i], f[(i + 1) % len(f)])] += 1
    return bool(counts) and all(n == 2 for n in counts.values()) \
        and all(n == 1 and directed[(b, a)] == 1 for (a, b), n in directed.items()) \
        and all(len(set(f)) == len(f) for f in faces)


def signed_volume(vertices, faces):
    """Divergence theorem: V = sum over fan triangles of a.(b x c)/6, taken
    about the bounding-box centre (a closed surface's volume does not depend
    on the origin; the shift only limits cancellation far from 0)."""
    v = np.asarray(vertices, np.float64)
    c = 0.5 * (v.min(axis=0) + v.max(axis=0))
    total = 0.0
    for face in faces:
        p = v[face] - c
        for k in range(1, len(face) - 1):
            total += float(np.dot(p[0], np.cross(p[k], p[k + 1]))) / 6.0
    return total


def t_junctions(vertices, faces, skip_faces=(), rel=REL):
    """Geometric T-junctions (common practice; the test of
    tests/test_remesh.py): (vertex x, edge (a, b)) where a used vertex x lies
    within rel * size of the inside of edge a-b, strictly between its ends,
    and the mesh also has an edge from x to a vertex on the closed segment
    a-b: the line is split at x on one side but not on the other (a crack).
    A vertex of one sheet merely lying on an edge of another sheet that
    overlaps it (duplicate faces) is not a junction of the two, and a face
    with side a-b and corner x is a flat (zero-area) face, not a junction.
    Edges of faces in `skip_faces` (zero-area faces) are not tested."""
    v = np.asarray(vertices, np.float64)
    size = bbox_size(v[sorted({x for f in faces for x in f})]) if faces else 0.0
    if size == 0.0:
        return set()
    used = np.array(sorted({x for f in faces for x in f}), dtype=np.int64)
    edges = sorted({e for k, f in enumerate(faces) if k not in skip_faces
                    for e in edge_counts([f]) if e[0] != e[1]})
    if not edges:
        return set()
    edges = np.array(edges, dtype=np.int64)
    q = v[used]
    found = set()
    for chunk in np.array_split(edges, max(1, len(edges) // 128)):
        a, b = v[chunk[:, 0]], v[chunk[:, 1]]
        d = b - a
        dd = (d * d).sum(axis=1)
        ok = dd > 0
        chunk, a, d, dd = chunk[ok], a[ok], d[ok], dd[ok]
        if not len(chunk):
            continue
        rel_pos = q[None, :, :] - a[:, None, :]
        t = (rel_pos * d[:, None, :]).sum(axis=2) / dd[:, None]
        off = rel_pos - t[:, :, None] * d[:, None, :]
        dist = np.sqrt((off * off).sum(axis=2))
        hit = (dist <= rel * size) & (t > rel) & (t < 1 - rel)
        hit &= used[None, :] != chunk[:, :1]
        hit &= used[None, :] != chunk[:, 1:]
        for e, k in zip(*np.nonzero(hit)):
            found.add((int(used[k]), (int(chunk[e, 0]), int(chunk[e, 1]))))
    if not found:
        return found
    nbrs = defaultdict(set)
    for f in faces:
        for (p, q) in edge_counts([f]):
            nbrs[p].add(q)
            nbrs[q].add(p)
    size_tol = rel * size

    def on_closed(y, a, b):
        pa, pb, py = v[a], v[b], v[y]
        d = pb - pa
        t = float((py - pa) @ d / (d @ d))
        return -rel <= t <= 1 + rel and float(np.linalg.norm(pa + t * d - py)) <= size_tol

    in_one_face = set()          # x is a corner of a face that has a-b as a side
    for f in faces:
        fs = set(f)
        sides = set(edge_counts([f]))
        in_one_face |= {(x, e) for x, e in found if x in fs and e in sides}
    return {(x, (a, b)) for x, (a, b) in found
            if (x, (a, b)) not in in_one_face
            and any(y != x and on_closed(y, a, b) for y in nbrs[x])}


def zero_area_faces(vertices, faces):
    """Faces whose vector area is nil next to their size (<= 1e-12 of the
    squared diagonal, the engine-independent version of 'no area')."""
    v = np.asarray(vertices, np.float64)
    out = set()
    for k, f in enumerate(faces):
        p = v[f]
        s = bbox_size(p)
        if np.linalg.norm(newell(p)) <= 1e-12 * s * s or len(set(f)) < 3:
            out.add(k)
    return out


def expect_remesh_contract(vertices, faces, **options):
    """Run remesh_flat_regions and check the engine's 3D contract; return
    the MeshEdit.  Each check names its source."""
    v = np.asarray(vertices, np.float64)
    faces = [list(map(int, f)) for f in faces]
    n = len(v)
    edit = call_engine(engine.remesh_flat_regions, v, faces, **options)
    assert isinstance(edit, MeshEdit)
    # --- reports: every region changed or skipped with a reason; a capped
    # region says why (the issue's wording: "skips it with a reason")
    for r in edit.regions:
        assert r.status in ("changed", "skipped"), r.status
        if r.status == "skipped":
            assert r.reason.strip(), f"region {r.region} skipped without a reason"
        if not r.complete:
            assert r.stopped_by in ("point_cap", "size_limit"), r.stopped_by
            assert re.search(r"max_points|above the size limits", r.reason), \
                f"incomplete region without a reason: {r.reason!r}"
    cap = options.get("max_points")
    for r in edit.regions:
        # a region's own added points are capped (split points that earlier
        # regions put on its border are inputs to it, not counted)
        assert r.added_points >= 0
        if cap is not None:
            assert r.added_points <= cap, \
                f"region {r.region}: {r.added_points} points added with max_points={cap}"
    # --- array facts
    assert len(np.unique(edit.replaced_faces)) == len(edit.replaced_faces)
    if len(edit.replaced_faces):
        assert edit.replaced_faces.min() >= 0 and edit.replaced_faces.max() < len(faces)
    total = n + len(edit.new_vertices)
    assert np.all(np.isfinite(edit.new_vertices)), "a new vertex is not finite"
    if len(edit.faces.corners):
        assert edit.faces.corners.min() >= 0 and edit.faces.corners.max() < total
    assert (edit.faces.sizes >= 3).all(), "a new face has fewer than three corners"
    for k in range(len(edit.faces)):
        face = edit.faces.face(k).tolist()
        src = faces[int(edit.face_source[k])]
        originals = [x for x in face if x < n]
        grown = sorted(originals) == sorted(src) and _same_cycle(originals, src)
        if not grown:
            assert len(set(face)) == len(face), f"new face {k} repeats a vertex: {face}"
    # --- apply: original vertices keep their exact float64 bits (issue's
    # contract), no face uses a dropped vertex
    verts, polys, mapping = edit.apply(v, faces)
    alive = mapping[:n] >= 0
    assert np.array_equal(np.ascontiguousarray(v[alive]).view(np.int64),
                          np.ascontiguousarray(verts[mapping[:n][alive]]).view(np.int64)), \
        "an original vertex moved"
    assert (polys.corners >= 0).all(), "a face uses a dropped vertex"
    # --- split points: every face using an original edge carries every
    # point added on it (topological T-junction test; the issue's
    # watertight rule)
    full_v, full_polys, _ = edit.apply(v, faces, compact=False)
    out_faces = face_lists(full_polys)
    _check_split_points_everywhere(edit, out_faces, n)
    # --- geometric T-junctions: none that the input did not already have
    degenerate_in = zero_area_faces(v, faces)     # no plane of their own
    # (zero-area faces' own edges excepted: a vertex on them is the input's
    # degeneracy).  Faces listed twice (same corners) are two sheets lying
    # on each other: each sheet is tested with the rest of the mesh.
    replaced = set(edit.replaced_faces.tolist())
    kept = [f for f in range(len(faces)) if f not in replaced]
    source_of_out = kept + [int(s) for s in edit.face_source]
    twins = defaultdict(list)
    for k, f in enumerate(faces):
        twins[frozenset(f)].append(k)
    groups = [g for g in twins.values() if len(g) > 1]
    for pick in range(max((len(g) for g in groups), default=1)):
        other_sheets = {k for g in groups for j, k in enumerate(g) if j != min(pick, len(g) - 1)}
        keep_in = [f for k, f in enumerate(faces) if k not in other_sheets]
        skip_in = {i for i, k in enumerate(k for k in range(len(faces)) if k not in other_sheets)
                   if k in degenerate_in}
        keep_out = [(f, s) for f, s in zip(out_faces, source_of_out) if s not in other_sheets]
        skip_out = {i for i, (_f, s) in enumerate(keep_out) if s in degenerate_in}
        before = t_junctions(v, keep_in, skip_faces=skip_in)
        after = t_junctions(full_v, [f for f, _s in keep_out], skip_faces=skip_out)
        old_t_vertices = {x for x, _ in before}
        new = [(x, e) for x, e in after if x >= n or x not in old_t_vertices]
        assert not new, f"new T-junctions (vertex, edge): {sorted(new)[:5]}"
    # --- new faces lie on the plane of the face they came from, within the
    # documented flatness tolerance (engine docstring: flat_distance, by
    # default 1e-4 of the region's size plus a float32 rounding floor of
    # 4 * 2^-23 * the largest coordinate; the mesh's size bounds the region's)
    size = bbox_size(v)
    spacing = float(np.abs(v).max()) * 2.0 ** -52     # IEEE 754 double spacing there
    flat = options.get("flat_distance")
    limit = (flat if flat is not None else 1e-4 * size + 4 * 2.0 ** -23 * float(np.abs(v).max()))
    limit = limit * (1 + 1e-6) + REL * size
    h_new = 0.0
    for k in range(len(edit.faces)):
        if int(edit.face_source[k]) in degenerate_in:
            continue
        src = faces[int(edit.face_source[k])]
        p = v[src]
        nv = newell(p)
        nv = nv / np.linalg.norm(nv)
        d = np.abs((full_v[edit.faces.face(k)] - p.mean(axis=0)) @ nv).max()
        h_new = max(h_new, float(d))
    assert h_new <= limit, f"a new face is {h_new} off its source face's plane (> {limit})"
    # --- closed stays closed, same signed volume (divergence theorem); the
    # volume of a surface whose faces are warped (float32 rounding) is only
    # defined to within (warp x area), so the tolerance adds the measured
    # warp of the input faces and the distance of new faces from their
    # source planes
    if is_closed(faces):
        assert is_closed(face_lists(polys)), "a closed input is no longer closed"
        vol0 = signed_volume(v, faces)
        vol1 = signed_volume(verts, face_lists(polys))
        area = sum(float(np.linalg.norm(newell(v[f]))) for f in faces)
        h_old = max(face_warp(v[f]) for f in faces)
        tol = 2.0 * (h_old + h_new + 8 * spacing) * area + REL * size * area
        assert abs(vol1 - vol0) <= tol, f"volume {vol0!r} -> {vol1!r} (tolerance {tol:.3g})"
    # --- the mesh's vector area is fixed by its border alone (Stokes'
    # theorem: sum of face vector areas = 1/2 of the border's closed integral
    # of r x dr); remeshing adds points on straight edges only, so it holds
    # unless straightening moved the border
    if options.get("straighten_tolerance") is None:
        va0 = sum((newell(v[f]) for f in faces), np.zeros(3))
        out = face_lists(polys)
        va1 = sum((newell(verts[f]) for f in out), np.zeros(3))
        scale = sum(float(np.linalg.norm(newell(v[f]))) for f in faces) + 1e-300
        # every new position is rounded to the double grid at the mesh's
        # magnitude (IEEE 754: spacing |x| * 2^-52), which moves each face's
        # vector area by up to (spacing x perimeter)
        perimeter = sum(float(np.linalg.norm(verts[f] - verts[np.roll(f, -1)], axis=1).sum())
                        for f in out)
        assert np.linalg.norm(va1 - va0) <= 1e-9 * scale + 8 * spacing * perimeter, \
            f"vector area changed: {va0} -> {va1}"
    return edit


def _same_cycle(seq, ref):
    """seq is ref rotated (the same cyclic order)."""
    if len(seq) != len(ref):
        return False
    if not seq:
        return True
    for i in range(len(ref)):
        if ref[i:] + ref[:i] == seq:
            return True
    return False


def _check_split_points_everywhere(edit, out_faces, n):
    """New vertices placed on an original edge (or straightened chord)
    (lo, hi) at parameter t; no face side between two points of that edge
    may skip a split point lying strictly between them."""
    starts, idx, w = edit.vertex_weight_starts, edit.vertex_weight_indices, \
        edit.vertex_weight_values
    on_edge = defaultdict(list)          # (lo, hi) -> [(t, vertex)]
    param = {}
    for k in range(len(edit.new_vertices)):
        if int(edit.vertex_source_face[k]) != -1:
            continue
        lo, hi = (int(x) for x in edit.vertex_source_edge[k])
        if lo < 0:
            continue
        rows = slice(starts[k], starts[k + 1])
        pairs = dict(zip(idx[rows].tolist(), w[rows].tolist()))
        key = (min(lo, hi), max(lo, hi))
        t = pairs.get(key[1], 0.0)
        on_edge[key].append((t, n + k))
        param[(n + k, key)] = t
    for key, pts in on_edge.items():
        param[(key[0], key)] = 0.0
        param[(key[1], key)] = 1.0
    bad = []
    for face in out_faces:
        for i in range(len(face)):
            a, b = face[i], face[(i + 1) % len(face)]
            for key in _edges_holding(a, b, param, on_edge):
                ta, tb = param[(a, key)], param[(b, key)]
                lo_t, hi_t = min(ta, tb), max(ta, tb)
                between = [x for t, x in on_edge[key] if lo_t < t < hi_t]
                if between:
                    bad.append((face, (a, b), key, between))
    assert not bad, f"a face side skips split points of its edge: {bad[:3]}"


def _edges_holding(a, b, param, on_edge):
    keys = []
    for key in on_edge:
        if (a, key) in param and (b, key) in param:
            keys.append(key)
    return keys


# ==========================================================================
# 1. triangulate: adversarial point sets
# ==========================================================================
def test_kettner_grid_near_collinear_points():
    # Kettner et al. 2008: 16 x 16 floats around (0.5, 0.5), one ulp apart,
    # with the far points (12, 12) and (24, 24) on y = x; exact checks
    # (helpers: CCW, Delaunay, all points used, Euler's formula, hull area)
    pts = A.kettner_grid(16, 16)
    expect_triangulate_contract(pts, strict=False)


def test_kettner_grid_large_enough_for_the_bulk_builder():
    # the same grid with 45 x 45 = 2025 + 2 points: above the size where the
    # engine switches to its numpy bulk Delaunay (1500 points, git log);
    # exact checks as above
    pts = A.kettner_grid(45, 45)
    expect_triangulate_contract(pts, strict=False)


@pytest.mark.parametrize("count", [3, 20])
def test_kettner_diagonal_is_collinear_and_refused(count):
    # Kettner et al. 2008: the points lie exactly on y = x (0.5 + k*2^-53 is
    # a double, IEEE 754), confirmed exactly by helpers.all_collinear
    pts = A.kettner_diagonal(count)
    assert H.all_collinear(pts)
    expect_value_error(DEGENERATE_POINTS, engine.triangulate, pts)


@pytest.mark.parametrize("unit", [2.0 ** -53, 2.0 ** -52, 2.0 ** -40])
def test_kettner_grid_with_crossing_segments(unit):
    # Kettner et al. 2008 grid with segments from the grid to the far points
    # and across it: crossings are not floats and get rounded (IEEE 754);
    # strict=False because features are ulps apart (helpers docstring)
    pts = np.vstack([A.kettner_grid(8, 8, unit=unit), [(7.0, 0.0), (0.0, 30.0)]])
    n = len(pts)
    segs = np.array([(0, n - 3), (7, n - 4), (63, 56), (n - 2, n - 1), (9, 54)], np.int64)
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


@pytest.mark.parametrize("size", [12, 40])
def test_cocircular_integer_grid(size):
    # every cell's four corners are cocircular (common practice); 40 x 40 =
    # 1600 points also takes the bulk path.  Euler: T = 2n - h - 2.
    pts = A.integer_grid(size, size)
    tri = expect_triangulate_contract(pts)
    h = 4 * (size - 1)                       # hull boundary points of a square grid
    assert len(tri.triangles) == 2 * size * size - h - 2


@pytest.mark.parametrize("radii", [(5,), (5, 25, 65), (325,)])
def test_cocircular_pythagorean_rings(radii):
    # integer points on circles of radius 5, 25, 65, 325 (radii that are
    # sums of two squares in several ways, so each circle holds many lattice
    # points): each ring is exactly cocircular, checked below in integers
    pts = A.cocircular_rings(radii, center=True)
    for r in radii:
        ring = A.pythagorean_circle(r)
        assert np.all(ring[:, 0] ** 2 + ring[:, 1] ** 2 == r * r)
    expect_triangulate_contract(pts)


def test_cocircular_ring_with_diameters_as_segments():
    # a 12-point Pythagorean ring (r = 5) with every diameter as a segment:
    # all diameters cross at the centre, which is not an input point here,
    # so the crossings must create it exactly (0, 0) is a float)
    pts = A.pythagorean_circle(5)
    order = np.argsort(np.arctan2(pts[:, 1], pts[:, 0]))
    pts = pts[order]
    m = len(pts)
    segs = np.array([(i, i + m // 2) for i in range(m // 2)], np.int64)
    tri = expect_valid_triangulation(pts, segs, fill="hull")
    assert np.any(np.all(tri.points[m:] == 0.0, axis=1)), "no crossing point at the centre"


@pytest.mark.parametrize("eps", [1e-8, 1e-12, 1e-15, 2.0 ** -60, 5e-324])
def test_nearly_parallel_crossing_pair(eps):
    # two segments crossing at an angle of ~2*eps radians; eps = 5e-324 is
    # the smallest subnormal (IEEE 754).  The crossing (1/2, eps/2) must be
    # inserted (or the segments found to touch); exact checks with the
    # 1e-9 tolerance for the added point (helpers)
    pts, segs = A.nearly_parallel_pair(eps)
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


@pytest.mark.parametrize("ulps", [1, 3])
def test_nearly_parallel_fan(ulps):
    # eight segments whose slopes differ by a few ulps, all crossing near
    # the centre (IEEE 754: the crossings are rounded); exact checks
    pts, segs = A.nearly_parallel_fan(8, ulps=ulps)
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


@pytest.mark.parametrize("scale, offset", [(1.0, (1e6, 1e6)), (1e-3, (1e6, -1e6)),
                                           (1e-9, (0.0, 0.0)), (1e9, (0.0, 0.0))],
                         ids=["mm@1e6", "um@1e6", "x1e-9", "x1e9"])
def test_tiny_features_offset_and_scaled(scale, offset):
    # the comb (millimetre teeth) with a slot, at 1e6 (IEEE 754: double
    # spacing 2^-33 there) or scaled by 1e-9 / 1e9 (not exact in binary):
    # area from shapely/GEOS of the polygon with its hole, exact checks
    loops = A.comb_with_slot(offset=offset, scale=scale)
    pts, segs = A.loops_to_input(loops)
    # at 1e6 the checker's 1e-9 relative tolerance is 1e-3 absolute: as wide
    # as the teeth, so its path conditions cannot tell edges apart there
    # (helpers.check_segments docstring); coverage is still checked
    expect_valid_triangulation(pts, segs, area=H.polygon_area(loops[0], loops[1:]),
                               strict=offset == (0.0, 0.0))


@pytest.mark.parametrize("scale", [1e-9, 1e9, 1e-60, 1e60])
def test_scaled_grids_and_rings(scale):
    # whole inputs scaled (IEEE 754: x * 1e-9 is rounded; 1e-60 is inside the
    # documented range, DEVELOPERS.md: differences above ~1e-70)
    for pts in (A.integer_grid(7, 5), A.cocircular_rings((5, 25))):
        expect_triangulate_contract(A.transform2(pts, scale))


def test_duplicate_and_near_duplicate_points():
    # every point of a 5 x 5 grid three times plus its one-ulp neighbours
    # (numpy.nextafter): duplicates merge to the first copy (helpers check
    # merged_into); near-duplicates are distinct points and all used
    pts = A.with_duplicates(A.integer_grid(5, 5) + 0.5, copies=3, near=True)
    expect_triangulate_contract(pts, strict=False)


def test_near_duplicates_with_segments_between_them():
    # segments joining a point to its one-ulp neighbour, and across
    pts = A.with_duplicates(A.integer_grid(3, 3) + 0.25, copies=1, near=True)
    n = 9
    segs = np.array([(0, n), (0, 2 * n), (4, 3 * n + 4), (n + 1, 2 * n + 7), (0, 8)], np.int64)
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


def test_three_nearly_parallel_segments():
    # minimal form of the fan above: three segments from x = 0 to x = 1
    # whose ends are 1 to 4 ulps above / below y = 0.5 (IEEE 754 spacing
    # 2^-53 / 2^-54 there), crossing pairwise near x = 0.5.  A valid input:
    # the contract allows a valid result, or at most a ValueError
    pts = np.array([[0.0, 0.5000000000000001], [1.0, 0.5],
                    [0.0, 0.5000000000000003], [1.0, 0.49999999999999967],
                    [0.0, 0.5000000000000004], [1.0, 0.49999999999999956]])
    segs = np.array([[0, 1], [2, 3], [4, 5]])
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


def test_crossing_rounded_onto_a_nearby_input_point():
    # the segment (1.25 + 2^-52, 0.25)-(1.25, 2.25 + 2^-51) crosses the
    # diagonal y = x at a point that is not a double; the diagonal passes
    # exactly through the input point (1.25 + 2^-52, 1.25 + 2^-52), which
    # lies within an ulp of the first segment but not on it (exact
    # orientation, helpers).  Whatever the engine does there, its result
    # must pass its own validator and the independent checker
    pts = np.array([[0.25, 0.25], [2.25, 2.25], [1.2500000000000002, 0.25],
                    [1.25, 2.2500000000000004], [1.2500000000000002, 1.2500000000000002]])
    segs = np.array([[2, 3], [0, 1]])
    E = H.ExactPoints(pts)
    assert E.orient(2, 3, 4) != 0 and E.orient(0, 1, 4) == 0
    expect_valid_triangulation(pts, segs, fill="hull", strict=False)


@pytest.mark.parametrize("shape", ["bowtie", "pentagram", "figure_eight", "retraced_square"])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_self_intersecting_outlines(shape, fill):
    # self-intersecting and bow-tie outlines: kept area = the fill rule's
    # area of the arrangement (shapely/GEOS node + polygonize, winding by
    # the crossing rule; helpers.fill_rule_area)
    loops = getattr(A, shape)()
    pts, segs = A.loops_to_input(loops)
    expected = H.fill_rule_area(loops, fill)
    expect_valid_triangulation(pts, segs, fill=fill, area=expected, cover="kept")


@pytest.mark.parametrize("shape", ["hole_touching_outline_at_vertex",
                                   "hole_touching_outline_on_edge",
                                   "hole_sharing_outline_edge"])
@pytest.mark.parametrize("fill", ["even-odd", "nonzero"])
def test_holes_touching_the_outline(shape, fill):
    # holes that touch the outline at a vertex, inside an edge, or along a
    # shared stretch; area from shapely/GEOS (helpers.fill_rule_area)
    loops = getattr(A, shape)()
    pts, segs = A.loops_to_input(loops)
    expected = H.fill_rule_area(loops, fill)
    expect_valid_triangulation(pts, segs, fill=fill, area=expected, cover="kept")


@pytest.mark.parametrize("pts", [
    [(0.0, 0.0), (1.0, 1.0), (2.0, 2.0), (3.0, 3.0)],
    [(1.0, 2.0)] * 5,
    [(0.0, 0.0), (0.0, 0.0), (5.0, 1.0)],
    [(float(x), float(x) / 3.0) for x in range(0, 30, 3)],
], ids=["line", "one_point", "two_points", "x_over_3"])
def test_zero_area_point_sets(pts):
    # zero area: collinear or fewer than three distinct points.  x/3 is
    # rounded (IEEE 754), so those may or may not be exactly collinear:
    # helpers.all_collinear decides exactly which answer is due
    expect_triangulate_contract(np.array(pts))


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_non_finite_points_and_holes(bad):
    # NaN and inf (IEEE 754 special values) in points or hole seeds
    sq = np.array([(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)])
    segs = np.array([(0, 1), (1, 2), (2, 3), (3, 0)])
    expect_value_error(NON_FINITE, engine.triangulate, A.with_non_finite(sq, bad, 2, 1), segs)
    expect_value_error(NON_FINITE, engine.triangulate, sq, segs, holes=np.array([(bad, 0.5)]))


def test_huge_coordinates_whose_squares_overflow():
    # IEEE 754: the largest double is ~1.8e308, so the incircle terms
    # (fourth powers) of coordinates near 1e150 overflow to inf while areas
    # (squares, ~1e301) do not; the predicates must still give exact signs.
    # Twelve cocircular points and their centre, scaled.
    pts = A.transform2(A.cocircular_rings((5,)), 1e150)
    expect_triangulate_contract(pts)


# ==========================================================================
# 2. legalize: adversarial triangulations
# ==========================================================================
@pytest.mark.parametrize("case", ["kettner", "grid", "rings"])
def test_legalize_degenerate_point_sets(case):
    # a deliberately non-Delaunay sweep triangulation (helpers) of a Kettner
    # et al. 2008 grid, a cocircular grid and Pythagorean rings; Lawson
    # (1977): flipping ends in a Delaunay triangulation of the same points -
    # exact local Delaunay test, same triangle count (Euler), same area
    pts = {"kettner": A.kettner_grid(6, 6), "grid": A.integer_grid(6, 6),
           "rings": A.cocircular_rings((5, 25))}[case]
    tris = H.sweep_triangulation(pts)
    out, flips = engine.legalize(pts, tris)
    E = H.ExactPoints(pts)
    assert len(out) == len(tris)
    assert all(E.orient(a, b, c) > 0 for a, b, c in out.tolist())
    assert E.twice_area(out) == E.twice_area(H.ccw(tris, pts))
    assert H.delaunay_violations(E, out) == []
    assert flips >= 0


@pytest.mark.parametrize("triangles, pattern", [
    ([(0, 1, 2), (0, 2, 3), (0, 1, 4)], r"zero area"),         # 0, 1, 4 collinear
    ([(0, 1, 1)], r"repeats a vertex"),
    ([(0, 1, 2), (0, 1, 3), (1, 0, 5)], r"non-manifold|more than two"),
    ([(0, 1, 9)], r"range"),
], ids=["zero_area", "repeated_vertex", "non_manifold", "index"])
def test_legalize_bad_triangles_raise(triangles, pattern):
    # zero-area, repeated-vertex and non-manifold triangle sets, and an
    # index out of range: ValueError naming the problem (issue 8 contract)
    pts = np.array([(0, 0), (2, 0), (2, 2), (0, 2), (4, 0), (1, -1)], np.float64)
    expect_value_error(pattern, engine.legalize, pts, np.array(triangles))


def test_legalize_non_finite_points_raise():
    pts = np.array([(0, 0), (1, 0), (math.nan, 1)], np.float64)
    expect_value_error(NON_FINITE, engine.legalize, pts, np.array([(0, 1, 2)]))


# ==========================================================================
# 3. refine: always stops, cap honoured, result valid
# ==========================================================================
@pytest.mark.parametrize("cap", [0, 1, 7, 150])
def test_refine_inputs_needing_more_points_than_the_cap(cap):
    # a unit square at max_area 1e-5 needs ~1e5 triangles (area / max_area,
    # arithmetic), far above every cap here: the run must stop at the cap
    # and say so
    loops = A.many_points_domain()
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs)
    out = expect_refine_contract(tri, pts, segs, fill="even-odd", area=1.0,
                                 min_angle=30.0, max_area=1e-5, max_points=cap)
    assert out.complete is False
    assert len(out.points) - len(pts) <= cap


@pytest.mark.parametrize("cap", [1, 3, 10])
def test_refine_cap_on_a_thin_strip(cap):
    # a 10 x 0.01 strip: its long sides are encroached at once, so the run
    # splits segments from the first step on; the cap still bounds the
    # number of added points, and the reason reports the true count
    pts = np.array([(0.0, 0.0), (10.0, 0.0), (10.0, 0.01), (0.0, 0.01)])
    segs = np.array([(0, 1), (1, 2), (2, 3), (3, 0)])
    tri = engine.triangulate(pts, segs)
    out = expect_refine_contract(tri, pts, segs, fill="even-odd", area=0.1,
                                 min_angle=20.0, max_points=cap)
    added = len(out.points) - len(pts)
    if not out.complete:
        m = re.search(r"(\d+) points added", out.stop_reason)
        assert m is None or int(m.group(1)) == added, (out.stop_reason, added)


def test_refine_millimetre_triangle_at_1e6():
    # a triangle with slanted millimetre edges at (1e6, 1e6): split points
    # on its edges are rounded to the double grid there (IEEE 754 spacing
    # 2^-33 ~ 1.2e-10), i.e. ~1e-8 of an edge's length; the result must
    # still pass the engine's validator and the independent checker
    pts = np.array([(1e6, 1e6), (1e6 + 0.004, 1e6 + 0.001), (1e6 + 0.001, 1e6 + 0.003)])
    segs = np.array([(0, 1), (1, 2), (2, 0)])
    tri = engine.triangulate(pts, segs)
    expect_refine_contract(tri, pts, segs, fill="even-odd", area=H.polygon_area(pts),
                           strict=False, min_angle=30.0, max_area=1e-7, max_points=5000)


@pytest.mark.parametrize("angle", [45.0, 59.0])
def test_refine_unreachable_angle_stops_at_the_cap(angle):
    # above ~34 degrees refinement usually cannot finish (Shewchuk 2002,
    # from memory); the cap must end it with the reason set
    loops = [[(0.0, 0.0), (3.0, 0.0), (3.0, 1.0), (0.0, 1.0)]]
    pts, segs = A.loops_to_input(loops)
    tri = engine.triangulate(pts, segs)
    expect_refine_contract(tri, pts, segs, fill="even-odd", area=3.0, min_angle=angle,
                           max_points=400)


def _adversarial_refine_inputs():
    kp = A.kettner_grid(6, 6)
    n = len(kp)
    yield "kettner", kp, np.array([(0, n - 1), (5, 30), (n - 2, 35)], np.int64), "hull", False
    yield "grid", A.integer_grid(8, 8), np.array([(0, 63), (7, 56)], np.int64), "hull", True
    pp, ps = A.nearly_parallel_fan(6)
    yield "parallel", pp, ps, "hull", False
    for label, scale, offset in (("mm@1e6", 1.0, (1e6, 1e6)), ("x1e-9", 1e-9, (0, 0)),
                                 ("x1e9", 1e9, (0, 0))):
        loops = A.comb_with_slot(offset=offset, scale=scale)
        cp, cs = A.loops_to_input(loops)
        yield f"comb-{label}", cp, cs, "even-odd", offset == (0, 0)
    for shape in ("pentagram", "hole_touching_outline_at_vertex", "hole_sharing_outline_edge"):
        loops = getattr(A, shape)()
        sp, ss = A.loops_to_input(loops)
        yield shape, sp, ss, "nonzero", True


@pytest.mark.parametrize("name, pts, segs, fill, strict",
                         list(_adversarial_refine_inputs()),
                         ids=[c[0] for c in _adversarial_refine_inputs()])
@pytest.mark.parametrize("keep_boundary", [False, True])
def test_refine_adversarial_triangulations(name, pts, segs, fill, strict, keep_boundary):
    # refinement of ulp-scale grids, cocircular grids, nearly parallel
    # crossings, tiny features at 1e6 and scaled inputs, self-intersecting
    # outlines and holes touching the outline: it stops within the cap and
    # the result passes both exact checkers with the same area (exact area
    # of the input triangulation, which the exact checkers accepted first)
    tri = engine.triangulate(pts, segs, fill=fill)
    area = float(H.ExactPoints(tri.points).twice_area(tri.triangles) / 2)
    expect_refine_contract(tri, pts, segs, fill=fill, area=area, strict=strict, cover="kept",
                           min_angle=30.0, max_points=1500, keep_boundary=keep_boundary)


@pytest.mark.parametrize("options, pattern", [
    (dict(max_points=-1), r"max_points"),
    (dict(max_points=2.5), r"max_points"),
    (dict(min_angle=math.nan), r"min_angle"),
    (dict(max_area=math.inf), r"max_area"),
    (dict(max_edge=math.nan), r"max_edge"),
    (dict(min_angle=60.0), r"min_angle"),
], ids=["cap_negative", "cap_float", "angle_nan", "area_inf", "edge_nan", "angle_60"])
def test_refine_bad_options_raise(options, pattern):
    # NaN and inf (IEEE 754) and out-of-range limits: ValueError naming the
    # option (issue 8 contract)
    pts, segs = A.loops_to_input(A.many_points_domain())
    tri = engine.triangulate(pts, segs)
    expect_value_error(pattern, engine.refine, tri, **options)


# ==========================================================================
# 4. remesh_flat_regions: adversarial meshes
# ==========================================================================
def _good_panel(offset=(10.0, 0.0, 0.0)):
    v, f = A.grid_panel(2, 2)
    return v + np.asarray(offset, np.float64), f


def _with_good_panel(mesh, tilted=True):
    v, f = A.merge(mesh, _good_panel())
    return (A.tilt(v) if tilted else v), f


def _good_panel_changed(edit, faces):
    # the good 2 x 2 panel (the last four faces) is remeshed in the same call
    last4 = set(range(len(faces) - 4, len(faces)))
    assert last4 <= set(edit.replaced_faces.tolist()), "the good panel was not changed"


ADVERSARIAL_MESHES = {
    "zero_area_face": A.panel_with_zero_area_face,
    "sliver_inside": A.panel_with_sliver_inside,
    "repeated_vertex": A.panel_with_repeated_vertex_faces,
    "bowtie_face": A.bowtie_face_panel,
    "fin": lambda: A.finned_panel(1),
    "two_fins": lambda: A.finned_panel(2),
    "pinched_hole": A.pinched_panel,
    "diagonal_quads": A.diagonal_touching_quads,
    "duplicate_face": A.duplicate_faces_panel,
    "reversed_duplicate_face": lambda: A.duplicate_faces_panel(reverse=True),
    "unwelded_seam": A.unwelded_panel,
    "t_junction": A.t_junction_panel,
    "near_duplicate_vertex": A.near_duplicate_vertex_panel,
}


@pytest.mark.parametrize("keep_boundary", [False, True])
@pytest.mark.parametrize("name", sorted(ADVERSARIAL_MESHES))
def test_remesh_adversarial_faces_next_to_a_good_panel(name, keep_boundary):
    # zero-area, repeated-vertex, bow-tie and non-manifold faces, holes
    # touching the outline, duplicates, seams: no exception, every region
    # changed or skipped with a reason, the contract's mesh facts, and the
    # good panel in the same call is still remeshed ("one bad region never
    # stops the others")
    v, f = _with_good_panel(ADVERSARIAL_MESHES[name]())
    edit = expect_remesh_contract(v, f, max_area=0.05, keep_boundary=keep_boundary,
                                  max_points=500)
    _good_panel_changed(edit, f)


@pytest.mark.parametrize("variant", ["float64", "float32"])
@pytest.mark.parametrize("solid", ["plate_with_holes", "box", "closed_plate"])
def test_remesh_float32_rounded_solids(solid, variant):
    # float32-rounded solids (what an STL file stores; 24-bit significand,
    # IEEE 754): the closed mesh stays closed with the same signed volume
    # (divergence theorem), original vertices bit-identical, no T-junction
    if solid == "plate_with_holes":
        v, f, _ = scenes.plate_with_holes()
    elif solid == "box":
        v, f = A.box(3.0, 2.0, 1.0, n=(3, 2, 2), triangles=True, seed=5, jitter=0.5)
        v = A.tilt(v)
    else:
        v, f, _ = A.closed_plate()
        v = A.tilt(v)
    if variant == "float32":
        v = v.astype(np.float32).astype(np.float64)
    assert is_closed(f)
    edit = expect_remesh_contract(v, f, max_area=0.5)
    assert any(r.status == "changed" for r in edit.regions), \
        [(r.status, r.reason) for r in edit.regions]


@pytest.mark.parametrize("n", [(3, 1, 1), (2, 2, 2)])
def test_remesh_straighten_on_a_float32_box(n):
    # a closed box whose sides are cut into quads, moved rigidly and rounded
    # to float32 (an STL file), remeshed with straighten_tolerance: the rim
    # vertices on straight runs may go only where every face using them
    # changes; whatever is skipped, the box stays closed with its volume
    v, f = A.box(3.0, 2.0, 1.0, n=n)
    v = A.tilt(v).astype(np.float32).astype(np.float64)
    assert is_closed(f)
    expect_remesh_contract(v, f, straighten_tolerance=1e-3)


@pytest.mark.parametrize("scale, offset, flat_distance", [
    (1e-9, 0.0, None), (1e9, 0.0, None), (1e-3, 1e6, None), (1e-3, 1e6, 1e-7),
], ids=["x1e-9", "x1e9", "mm@1e6_default", "mm@1e6_explicit"])
def test_remesh_scaled_and_offset_solids(scale, offset, flat_distance):
    # whole solids scaled by 1e-9 and 1e9, and millimetre-sized at 1e6
    # (IEEE 754 spacing 2^-33 ~ 1.2e-10 there): contract facts, volume kept
    v, f, _ = scenes.plate_with_holes()
    v = v * scale + offset
    expect_remesh_contract(v, f, flat_distance=flat_distance)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_remesh_non_finite_vertices_raise(bad):
    # NaN / inf coordinates are whole-input errors: ValueError naming them
    v, f = A.grid_panel(2, 2)
    v[4, 2] = bad
    expect_value_error(NON_FINITE, engine.remesh_flat_regions, v, f)


@pytest.mark.parametrize("cap", [0, 3, 40])
def test_remesh_cap_is_reported(cap):
    # a panel that needs far more points than the cap (max_area tiny): every
    # region stops, says so, and the mesh facts of the contract hold
    v, f = A.grid_panel(4, 4)
    edit = expect_remesh_contract(A.tilt(v), f, max_area=1e-4, max_points=cap)
    assert edit.regions and all(not r.complete for r in edit.regions)
    assert all(r.added_points <= cap for r in edit.regions)


@pytest.mark.parametrize("options", [
    dict(straighten_tolerance=1e-6), dict(smoothing=True), dict(keep_interior_vertices=True),
    dict(min_angle=0.0), dict(flat_angle=89.0, flat_distance=10.0),
], ids=["straighten", "smoothing", "keep_interior", "no_angle", "everything_flat"])
def test_remesh_plate_options_keep_the_contract(options):
    # the invented plate with holes under each option (and a tolerance so
    # large that the whole solid is 'one flat region': it must be skipped,
    # not flattened); the mesh facts of the contract hold every time
    v, f, _ = scenes.plate_with_holes()
    expect_remesh_contract(v, f, max_points=2000, **options)


# ==========================================================================
# 5. hypothesis: the five strategies (long run: FRR_LONG_FUZZ=1)
# ==========================================================================
@FUZZ
@given(A.point_sets())
def test_fuzz_point_sets(case):
    # point sets: valid triangulation (exact checks, Euler, hull area via
    # shapely/GEOS) or ValueError when exactly collinear / too few points
    name, pts, fine = case
    expect_triangulate_contract(np.array(pts, dtype=np.float64).reshape(-1, 2),
                                strict=not fine)


@FUZZ
@given(A.segment_sets())
def test_fuzz_segment_sets(case):
    # segment sets (crossing, overlapping, zero-length, nearly parallel):
    # fill='hull', exact checks and coverage of every segment
    name, pts, segs, fine = case
    expect_triangulate_contract(np.array(pts, dtype=np.float64),
                                np.array(segs, dtype=np.int64).reshape(-1, 2),
                                fill="hull", strict=not fine)


def refine_polygons_on_both_fills(case, options):
    """Triangulate a polygons_with_holes case under both fill rules (area =
    shapely/GEOS fill-rule area) and refine each with `options`; the option
    "size_parts" (None or N) becomes max_area = area / N."""
    name, loops = case
    pts, segs = A.loops_to_input(loops)
    fine = name.endswith("1e-3@1e6")
    options = dict(options)
    parts = options.pop("size_parts")
    for fill in ("even-odd", "nonzero"):
        expected = H.fill_rule_area(loops, fill)
        tri = expect_valid_triangulation(pts, segs, fill=fill, area=expected, cover="kept",
                                         strict=not fine)
        if len(tri.triangles):
            if parts is not None:
                options["max_area"] = abs(tri.area()) / parts
            expect_refine_contract(tri, pts, segs, fill=fill, area=expected, cover="kept",
                                   strict=not fine, **options)


@FUZZ
@given(A.polygons_with_holes(), A.refine_options())
def test_fuzz_polygons_with_holes_and_refine(case, options):
    # polygons with holes (inside, touching the outline, bow-tie, same
    # direction), both fill rules: area = shapely/GEOS fill-rule area; then
    # refinement with a small cap, on either path, sometimes with a size
    # limit: stops, honours the cap, stays valid, a completed run honours
    # max_area
    refine_polygons_on_both_fills(case, options)


@FUZZ
@given(A.polygons_with_holes(), A.size_options())
def test_fuzz_polygons_refined_to_a_size(case, options):
    # the same polygons refined to a size limit (50 to 4,000 parts of the
    # area) on either path, the batched rounds included: a completed run
    # honours max_area, an incomplete one names the cap or the limit, and
    # the result passes both exact checkers with shapely/GEOS's area
    refine_polygons_on_both_fills(case, options)


@FUZZ_3D
@given(A.flat_meshes())
def test_fuzz_flat_region_meshes(case):
    # 3D flat-region meshes (closed boxes and plates, open panels with holes,
    # zero-area, repeated-vertex, non-manifold and duplicate faces; tilted,
    # scaled, at 1e6, float32): the whole remesh contract
    name, v, f, options = case
    expect_remesh_contract(np.array(v, dtype=np.float64), f, **options)
