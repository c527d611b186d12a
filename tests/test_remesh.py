"""Remeshing the flat regions of 3D polygon meshes (engine.remesh).

Every scene is invented and built in code (tests/scenes.py): a tilted
machined plate with bolt holes, a navmesh floor with pillars, panels with a
hexagonal boss, an L bracket, a UV seam or a standing fin, a faceted tube,
a flattened paper fan, a warped sheet-metal quad.  Each check names the
outside fact it relies on in a comment.  Nothing here compares against a
stored engine result: expected values come from the construction of the
scene or from an independent computation in this file.
"""

import re
from collections import Counter, defaultdict

import numpy as np
import pytest
import shapely
from hypothesis import given, settings, strategies as st
from scipy.spatial import cKDTree

from engine.polygons import PolygonList
from engine.remesh import remesh_flat_regions

from . import scenes

# plate parameters, passed explicitly so the expected corners are known
PLATE = dict(width=12.0, depth=8.0, thickness=1.0, holes=((3, 4), (9, 4)), hole_size=1.0,
             pieces=6)
MIN_ANGLE = 30.0
REL = 1e-9          # "exact to rounding" tolerance used throughout (relative to scene size)


# --------------------------------------------------------------------------
# independent geometric helpers (numpy only; nothing from the engine)
# --------------------------------------------------------------------------
def size_of(vertices):
    """Bounding-box diagonal: the scale for relative tolerances."""
    return float(np.linalg.norm(np.ptp(np.asarray(vertices, float), axis=0)))


def face_lists(polys):
    return [polys.face(f).tolist() for f in range(len(polys))]


def polygon_normal(points):
    """Newell-style vector sum of fan cross products: for a planar polygon its
    direction is the normal and its length twice the area (standard vector
    area of a polygon, from memory)."""
    p = np.asarray(points, float)
    total = np.zeros(3)
    for k in range(1, len(p) - 1):
        total += np.cross(p[k] - p[0], p[k + 1] - p[0])
    return total


def corner_angles(points, normal=None):
    """Interior angles (degrees) at every corner of a planar polygon; with a
    normal, reflex corners come out above 180 (signed angle in the plane)."""
    p = np.asarray(points, float)
    n = polygon_normal(p) if normal is None else np.asarray(normal, float)
    n = n / np.linalg.norm(n)
    out = []
    for i in range(len(p)):
        a, b = p[i - 1] - p[i], p[(i + 1) % len(p)] - p[i]
        s = np.dot(np.cross(b, a), n)
        ang = np.degrees(np.arctan2(s, np.dot(a, b)))
        out.append(ang % 360.0)
    return out


def check_closed_manifold(polys):
    """Closed oriented 2-manifold facts (from memory): every edge lies in
    exactly two faces, and with consistent orientation each directed edge
    appears exactly once (its twin runs the other way)."""
    counts = scenes.edge_face_counts(polys)
    bad = {e: n for e, n in counts.items() if n != 2}
    assert not bad, f"edges not in exactly two faces: {sorted(bad.items())[:8]}"
    directed = Counter()
    for face in face_lists(polys):
        for i in range(len(face)):
            directed[(face[i], face[(i + 1) % len(face)])] += 1
    twice = [e for e, n in directed.items() if n != 1 or directed[(e[1], e[0])] != 1]
    assert not twice, f"directed edges without a single opposite twin: {twice[:8]}"


def euler_characteristic(polys):
    """V - E + F over the used vertices (Euler-Poincare formula; a closed
    orientable surface of genus g has 2 - 2g, from memory)."""
    used = np.unique(polys.corners)
    return len(used) - len(scenes.edge_face_counts(polys)) + len(polys)


def check_no_duplicate_positions(vertices, polys, size):
    """No two vertices used by faces lie within REL * size of each other."""
    used = np.unique(polys.corners)
    pairs = cKDTree(vertices[used]).query_pairs(REL * size)
    dups = [(int(used[a]), int(used[b])) for a, b in list(pairs)[:5]]
    assert not pairs, f"duplicate vertex positions: {dups}"


def check_no_t_junctions(vertices, polys, size):
    """Geometric T-junction test: no used vertex lies strictly inside an edge
    it is not an end of (distance to the segment within REL * size and its
    projection strictly between the ends)."""
    used = np.unique(polys.corners)
    q = vertices[used]
    edges = np.array(sorted(scenes.edge_face_counts(polys)), dtype=np.int64)
    found = []
    for chunk in np.array_split(edges, max(1, len(edges) // 256)):
        a, b = vertices[chunk[:, 0]], vertices[chunk[:, 1]]
        d = b - a
        dd = (d * d).sum(axis=1)
        rel = q[None, :, :] - a[:, None, :]
        t = (rel * d[:, None, :]).sum(axis=2) / dd[:, None]
        off = rel - t[:, :, None] * d[:, None, :]
        dist = np.sqrt((off * off).sum(axis=2))
        hit = (dist <= REL * size) & (t > REL) & (t < 1 - REL)
        hit &= used[None, :] != chunk[:, :1]
        hit &= used[None, :] != chunk[:, 1:]
        for e, v in zip(*np.nonzero(hit)):
            found.append((tuple(chunk[e]), int(used[v])))
    assert not found, f"vertices inside other edges (T-junctions): {found[:5]}"


def check_bit_identical(vertices, result_vertices, mapping):
    """Every original vertex that survives keeps its exact float64 bits."""
    n = len(vertices)
    alive = mapping[:n] >= 0
    before = np.ascontiguousarray(vertices[alive]).view(np.int64)
    after = np.ascontiguousarray(result_vertices[mapping[:n][alive]]).view(np.int64)
    assert np.array_equal(before, after), "an original vertex moved"


def edges_of(polys):
    return set(scenes.edge_face_counts(polys))


def chain_covers(polys, vertices, a, b, size):
    """The segment a-b is present in the result as one edge or as a chain of
    edges whose vertices all lie on the segment (split points allowed)."""
    pa, pb = vertices[a], vertices[b]
    d = pb - pa

    def on_segment(v):
        rel = vertices[v] - pa
        t = rel @ d / (d @ d)
        return -REL <= t <= 1 + REL and np.linalg.norm(rel - t * d) <= REL * size

    adj = defaultdict(set)
    for u, w in edges_of(polys):
        if on_segment(u) and on_segment(w):
            adj[u].add(w)
            adj[w].add(u)
    seen, stack = {a}, [a]
    while stack:
        u = stack.pop()
        for w in adj[u] - seen:
            seen.add(w)
            stack.append(w)
    return b in seen


def region_labels(groups, face_count):
    label = np.full(face_count, -1, dtype=np.int64)
    for r, g in enumerate(groups):
        label[g] = r
    return label


def outline_corner_angles(vertices, faces, group):
    """For one region: {border vertex: interior angle of the region there},
    the sum of the region faces' corner angles at that vertex (computed from
    the input, each face's angle measured in its own plane)."""
    border = Counter()
    for f in group:
        face = faces[f]
        for i in range(len(face)):
            a, b = face[i], face[(i + 1) % len(face)]
            border[(min(a, b), max(a, b))] += 1
    border_vertices = {v for e, n in border.items() if n == 1 for v in e}
    total = defaultdict(float)
    for f in group:
        face = faces[f]
        for v, ang in zip(face, corner_angles(vertices[face])):
            total[v] += ang
    return {v: total[v] for v in border_vertices}


# --------------------------------------------------------------------------
# the plate, remeshed once per option set (cached: the engine is deterministic)
# --------------------------------------------------------------------------
_CACHE = {}


def plate():
    if "plate" not in _CACHE:
        v, f, volume = scenes.plate_with_holes(tilt=True, **PLATE)
        flat, f2, _ = scenes.plate_with_holes(tilt=False, **PLATE)
        assert f2 == f
        groups = scenes.axis_plane_regions(flat, f)
        _CACHE["plate"] = (v, f, volume, flat, groups)
    return _CACHE["plate"]


PLATE_OPTIONS = {
    "default": dict(),
    "straighten": dict(straighten_tolerance=1e-6),
    "keep_boundary": dict(keep_boundary=True),
}


def plate_edit(name):
    key = ("plate_edit", name)
    if key not in _CACHE:
        v, f, *_ = plate()
        _CACHE[key] = remesh_flat_regions(v, f, min_angle=MIN_ANGLE, **PLATE_OPTIONS[name])
    return _CACHE[key]


@pytest.fixture(params=sorted(PLATE_OPTIONS))
def plate_case(request):
    v, f, volume, flat, groups = plate()
    return request.param, v, f, volume, groups, plate_edit(request.param)


# --------------------------------------------------------------------------
# 1 + 2. the tilted closed plate with holes
# --------------------------------------------------------------------------
def test_plate_scene_is_what_the_tests_assume():
    # the input itself: closed 2-manifold, genus 2 (two through holes, so
    # Euler characteristic 2 - 2*2 = -2), volume = footprint area x thickness
    # where the footprint is shapely's polygon area of the outline minus holes
    v, f, volume, flat, groups = plate()
    polys = PolygonList.from_faces(f)
    check_closed_manifold(polys)
    assert euler_characteristic(polys) == -2
    h = PLATE["hole_size"] / 2
    footprint = shapely.Polygon(
        [(0, 0), (PLATE["width"], 0), (PLATE["width"], PLATE["depth"]), (0, PLATE["depth"])],
        [[(x - h, y - h), (x + h, y - h), (x + h, y + h), (x - h, y + h)]
         for x, y in PLATE["holes"]])
    assert scenes.closed_mesh_volume(v, polys) == pytest.approx(
        footprint.area * PLATE["thickness"], rel=REL)
    # top, bottom, four outer walls, four walls per hole
    assert len(groups) == 2 + 4 + 4 * len(PLATE["holes"])


def test_plate_every_region_found_and_changed(plate_case):
    # one region per plane-and-connected-component of the construction
    name, v, f, volume, groups, edit = plate_case
    assert sorted(r.faces for r in edit.regions) == sorted(len(g) for g in groups)
    assert [r.status for r in edit.regions] == ["changed"] * len(groups), \
        [(r.status, r.reason) for r in edit.regions]


def test_plate_stays_closed_with_the_same_topology(plate_case):
    # closed oriented 2-manifold facts and Euler-Poincare (genus unchanged)
    name, v, f, volume, groups, edit = plate_case
    verts, polys, mapping = edit.apply(v, f)
    assert (polys.corners >= 0).all(), "a face uses a dropped vertex"
    check_closed_manifold(polys)
    assert euler_characteristic(polys) == euler_characteristic(PolygonList.from_faces(f))


def test_plate_volume_unchanged(plate_case):
    # divergence theorem: signed volume of a closed mesh = sum of a.(b x c)/6
    # over its (fan-triangulated) faces; flat remeshing must not change it
    name, v, f, volume, groups, edit = plate_case
    before = scenes.closed_mesh_volume(v, PolygonList.from_faces(f))
    verts, polys, _ = edit.apply(v, f)
    after = scenes.closed_mesh_volume(verts, polys)
    assert after == pytest.approx(before, rel=REL)


def test_plate_original_vertices_bit_identical(plate_case):
    # the contract: original vertices keep their exact position; with
    # nothing dropped they also keep their index
    name, v, f, volume, groups, edit = plate_case
    verts, polys, mapping = edit.apply(v, f)
    check_bit_identical(v, verts, mapping)
    if len(edit.dropped_vertices) == 0:
        assert np.array_equal(mapping[:len(v)], np.arange(len(v)))
        # every plate vertex is on some region outline, so all stay in use
        assert set(np.unique(polys.corners[polys.corners < len(v)]).tolist()) == set(range(len(v)))


def test_plate_new_vertices_on_their_region_plane(plate_case):
    # every vertex of a new face lies on the plane of the face it came from
    # (plane from the source face's original corners, vector-area normal);
    # the faces of a region are exactly coplanar by construction (rigid motion
    # rounding aside), so 1e-9 of the plate's size is ample
    name, v, f, volume, groups, edit = plate_case
    allv = np.vstack((v, edit.new_vertices))
    size = size_of(v)
    worst = 0.0
    for k in range(len(edit.faces)):
        src = f[int(edit.face_source[k])]
        n = polygon_normal(v[src])
        n /= np.linalg.norm(n)
        d = np.abs((allv[edit.faces.face(k)] - v[src].mean(axis=0)) @ n)
        worst = max(worst, float(d.max()))
    assert worst <= REL * size
    # and every new vertex is used by some new face
    used = set(edit.faces.corners.tolist())
    unused = [len(v) + i for i in range(len(edit.new_vertices)) if len(v) + i not in used]
    assert not unused, f"new vertices used by no face: {unused[:10]}"


def test_plate_no_duplicates_no_t_junctions(plate_case):
    name, v, f, volume, groups, edit = plate_case
    verts, polys, _ = edit.apply(v, f)
    size = size_of(v)
    check_no_duplicate_positions(verts, polys, size)
    check_no_t_junctions(verts, polys, size)


@pytest.mark.parametrize("name", ["default", "straighten"])
def test_plate_smallest_angle_of_changed_regions(name):
    # the angle bound the refinement promises (min_angle = 30 degrees), over
    # every new face of a changed region, except triangles touching an
    # original outline corner whose interior angle in the region is already
    # below min_angle (computed from the input); for a new n-gon, corners
    # where it is straight (180 degrees, a split point) are not angles
    v, f, volume, flat, groups = plate()
    edit = plate_edit(name)
    assert all(r.status == "changed" for r in edit.regions)
    exempt = set()
    for g in groups:
        exempt |= {x for x, ang in outline_corner_angles(v, f, g).items() if ang < MIN_ANGLE}
    allv = np.vstack((v, edit.new_vertices))
    bad = []
    for k in range(len(edit.faces)):
        face = edit.faces.face(k).tolist()
        if exempt & set(face):
            continue
        normal = polygon_normal(v[f[int(edit.face_source[k])]])
        angles = [a for a in corner_angles(allv[face], normal) if abs(a - 180.0) > 1e-6]
        if min(angles) < MIN_ANGLE - 1e-9:
            bad.append((k, face, round(min(angles), 2)))
    assert not bad, f"{len(bad)} new faces below {MIN_ANGLE} degrees, e.g. {bad[:4]}"


def test_straighten_drops_exactly_the_straight_run_vertices():
    # plate outline vertices that are not corners of the outline or of a hole
    # lie on straight rim runs (construction): all of them, and only them,
    # are dropped, and no face of the result uses them
    v, f, volume, flat, groups = plate()
    edit = plate_edit("straighten")
    h = PLATE["hole_size"] / 2
    corners = {(0.0, 0.0), (PLATE["width"], 0.0), (PLATE["width"], PLATE["depth"]),
               (0.0, PLATE["depth"])}
    for x, y in PLATE["holes"]:
        corners |= {(x + sx * h, y + sy * h) for sx in (-1, 1) for sy in (-1, 1)}
    on_runs = {i for i, p in enumerate(flat) if (float(p[0]), float(p[1])) not in corners}
    assert set(edit.dropped_vertices.tolist()) == on_runs
    verts, polys, mapping = edit.apply(v, f)
    assert (mapping[sorted(on_runs)] == -1).all()
    kept_corners = sorted(set(range(len(v))) - on_runs)
    assert (mapping[kept_corners] >= 0).all()
    assert set(mapping[kept_corners].tolist()) <= set(polys.corners.tolist())


def test_keep_boundary_leaves_every_region_border_edge():
    # keep_boundary=True: the edges between different regions (construction)
    # are exactly the same vertex pairs before and after; so no point was
    # added on any of them
    v, f, volume, flat, groups = plate()
    edit = plate_edit("keep_boundary")
    verts, polys, _ = edit.apply(v, f, compact=False)
    label_in = region_labels(groups, len(f))
    kept = np.setdiff1d(np.arange(len(f)), edit.replaced_faces)
    labels_out = np.concatenate((label_in[kept], label_in[edit.face_source]))

    def border_edges(face_list, labels):
        users = defaultdict(set)
        for face, lab in zip(face_list, labels):
            for i in range(len(face)):
                a, b = face[i], face[(i + 1) % len(face)]
                users[(min(a, b), max(a, b))].add(int(lab))
        return {e for e, labs in users.items() if len(labs) > 1}

    before = border_edges(f, label_in)
    after = border_edges(face_lists(polys), labels_out)
    assert before and after == before


@pytest.mark.parametrize("keep_boundary", [True, False])
def test_face_mask_only_masked_faces_change(keep_boundary):
    # only the plate's top may change.  keep_boundary=True: every other face
    # is identical in the result.  keep_boundary=False: the issue lets a face
    # outside the changed set gain the split points on its edges (and nothing
    # else: same original vertices in the same cyclic order, each added point
    # strictly inside the edge it was inserted in).  Either way the plate
    # stays closed and its volume (divergence theorem) is unchanged.
    v, f, volume, flat, groups = plate()
    top = max(groups, key=lambda g: (len(g), flat[f[g[0]][0], 2]))
    assert all(flat[x, 2] == PLATE["thickness"] for x in f[top[0]])
    mask = np.zeros(len(f), dtype=bool)
    mask[top] = True
    edit = remesh_flat_regions(v, f, face_mask=mask, keep_boundary=keep_boundary)
    assert [r.status for r in edit.regions] == ["changed"] and edit.regions[0].faces == len(top)
    verts, polys, _ = edit.apply(v, f, compact=False)
    size = size_of(v)
    outside = set(range(len(f))) - set(top)
    replaced_outside = set(edit.replaced_faces.tolist()) & outside
    if keep_boundary:
        assert not replaced_outside
    else:
        for k in np.flatnonzero(np.isin(edit.face_source, sorted(outside))):
            src = f[int(edit.face_source[k])]
            face = edit.faces.face(k).tolist()
            originals = [x for x in face if x < len(v)]
            i = originals.index(src[0])
            assert originals[i:] + originals[:i] == src, "an outside face changed its corners"
            for j, x in enumerate(face):
                if x >= len(v):
                    a = next(y for y in face[j::-1] + face[::-1] if y < len(v))
                    b = next(y for y in face[j:] + face if y < len(v))
                    p, pa, pb = verts[x], verts[a], verts[b]
                    t = (p - pa) @ (pb - pa) / ((pb - pa) @ (pb - pa))
                    assert 0 < t < 1 and np.linalg.norm(pa + t * (pb - pa) - p) <= REL * size
        assert Counter(edit.face_source[np.isin(edit.face_source, sorted(outside))].tolist()) \
            == Counter(sorted(replaced_outside))
    # faces that were not replaced are in the result verbatim (apply keeps
    # them first, in their order)
    kept = [f[i] for i in range(len(f)) if i not in set(edit.replaced_faces.tolist())]
    assert face_lists(polys)[:len(kept)] == kept
    check_closed_manifold(polys)
    assert scenes.closed_mesh_volume(verts, polys) == pytest.approx(
        scenes.closed_mesh_volume(v, PolygonList.from_faces(f)), rel=REL)
    check_no_t_junctions(verts, polys, size)


# --------------------------------------------------------------------------
# 3. attribute exactness
# --------------------------------------------------------------------------
def _panel(name):
    key = ("panel", name)
    if key in _CACHE:
        return _CACHE[key]
    if name == "hex_boss_seam":
        # the hexagon's outline is a UV seam: two regions, two UV charts
        flat, faces = scenes.hex_boss_panel()
        v = scenes.tilt(flat)
        seam = [(k, (k + 1) % 6) for k in range(6)]
        edit = remesh_flat_regions(v, faces, break_edges=seam, max_area=0.05)
        groups = [[0], list(range(1, 7))]
    elif name == "l_bracket":
        flat, faces = scenes.l_bracket_panel()
        v = scenes.tilt(flat)
        edit = remesh_flat_regions(v, faces, max_area=0.02)
        groups = [[0, 1, 2]]
    else:
        v, faces, _, _, groups = plate()
        edit = plate_edit(name)
    _CACHE[key] = (v, faces, groups, edit)
    return _CACHE[key]


ATTRIBUTE_CASES = ["default", "straighten", "keep_boundary", "hex_boss_seam", "l_bracket"]


@pytest.mark.parametrize("case", ATTRIBUTE_CASES)
def test_weights_are_partitions_of_unity_from_one_source(case):
    # affine invariance of barycentric interpolation needs weights summing to
    # one; the contract: a new vertex's weights are over one original
    # face (or the two ends of the edge it splits), a corner's over corners of
    # faces of the same flat region (one UV chart)
    v, faces, groups, edit = _panel(case)
    polys = PolygonList.from_faces(faces)
    assert len(edit.new_vertices) > 0
    vs, vi, vw = edit.vertex_weight_starts, edit.vertex_weight_indices, edit.vertex_weight_values
    assert len(vs) == len(edit.new_vertices) + 1
    assert np.allclose(np.add.reduceat(vw, vs[:-1]), 1.0, rtol=0, atol=1e-12)
    for k in range(len(edit.new_vertices)):
        idx = set(vi[vs[k]:vs[k + 1]].tolist())
        f = int(edit.vertex_source_face[k])
        allowed = set(polys.face(f).tolist()) if f >= 0 \
            else set(edit.vertex_source_edge[k].tolist())
        assert idx <= allowed, (k, idx, allowed)
    cs, ci, cw = edit.corner_weight_starts, edit.corner_weight_indices, edit.corner_weight_values
    assert len(cs) == len(edit.faces.corners) + 1
    assert np.allclose(np.add.reduceat(cw, cs[:-1]), 1.0, rtol=0, atol=1e-12)
    label = region_labels(groups, len(faces))
    face_of_corner = polys.face_of_corner()
    face_of_new_corner = edit.faces.face_of_corner()
    for j in range(len(edit.faces.corners)):
        regions = set(label[face_of_corner[ci[cs[j]:cs[j + 1]]]].tolist())
        assert regions == {int(label[edit.face_source[face_of_new_corner[j]]])}, j


@pytest.mark.parametrize("case", ATTRIBUTE_CASES)
@settings(max_examples=10)
@given(seed=st.integers(0, 2**32 - 1))
def test_affine_attributes_are_reproduced(case, seed):
    # affine invariance of barycentric interpolation: a per-vertex field
    # f(p) = A p + b and per-corner fields affine in the corner's position -
    # one map per flat region, as a box-projected UV map has one chart per
    # side - are reproduced at every new vertex and every new corner to
    # rounding (1e-9 of the field's magnitude)
    v, faces, groups, edit = _panel(case)
    polys = PolygonList.from_faces(faces)
    rng = np.random.default_rng(seed)
    k = 3
    A, b = rng.normal(size=(k, 3)), rng.normal(size=k) * 10
    vertex_field = v @ A.T + b
    got = edit.interpolate_vertex_values(vertex_field)
    want = edit.new_vertices @ A.T + b
    scale = float(np.abs(vertex_field).max())
    assert np.abs(got - want).max(initial=0.0) <= REL * scale

    maps = [(rng.normal(size=(2, 3)), rng.normal(size=2)) for _ in groups]
    label = region_labels(groups, len(faces))
    corner_region = label[polys.face_of_corner()]
    corner_field = np.empty((len(polys.corners), 2))
    for r, (B, d) in enumerate(maps):
        sel = corner_region == r
        corner_field[sel] = v[polys.corners[sel]] @ B.T + d
    got = edit.interpolate_corner_values(corner_field)
    allv = np.vstack((v, edit.new_vertices))
    new_region = label[edit.face_source[edit.faces.face_of_corner()]]
    want = np.empty_like(got)
    for r, (B, d) in enumerate(maps):
        sel = new_region == r
        want[sel] = allv[edit.faces.corners[sel]] @ B.T + d
    scale = float(np.abs(corner_field).max())
    assert np.abs(got - want).max() <= REL * scale


def test_interpolation_keeps_extra_value_dimensions():
    # a (C, 2, 2) per-corner array (two UV layers) and an (N,) per-vertex
    # array come back with the same trailing shape
    v, faces, groups, edit = _panel("hex_boss_seam")
    polys = PolygonList.from_faces(faces)
    uv2 = np.stack([v[polys.corners][:, :2], v[polys.corners][:, 1:]], axis=1)
    out = edit.interpolate_corner_values(uv2)
    assert out.shape == (len(edit.faces.corners), 2, 2)
    allv = np.vstack((v, edit.new_vertices))[edit.faces.corners]
    assert np.allclose(out[:, 0], allv[:, :2], rtol=0, atol=REL * size_of(v))
    w = edit.interpolate_vertex_values(v[:, 2])
    assert w.shape == (len(edit.new_vertices),)
    assert np.allclose(w, edit.new_vertices[:, 2], rtol=0, atol=REL * size_of(v))


# --------------------------------------------------------------------------
# 4. region finding
# --------------------------------------------------------------------------
@pytest.mark.parametrize("pieces", [6, 24])
def test_float32_noise_still_finds_each_plane(pieces):
    # IEEE 754 single precision: rounding to float32 moves each coordinate by
    # at most 2^-24 of its magnitude (round to nearest).  With that noise the
    # default tolerances still find top, bottom and every wall as separate
    # regions (face counts from the exact construction) and remesh them all.
    opts = dict(PLATE, pieces=pieces)
    v, f, _ = scenes.plate_with_holes(tilt=True, **opts)
    flat, _, _ = scenes.plate_with_holes(tilt=False, **opts)
    v32 = v.astype(np.float32).astype(np.float64)
    noise = np.abs(v32 - v)
    assert noise.max() > 0 and (noise <= 2.0 ** -24 * np.abs(v)).all()
    groups = scenes.axis_plane_regions(flat, f)
    edit = remesh_flat_regions(v32, f)
    assert sorted(r.faces for r in edit.regions) == sorted(len(g) for g in groups)
    assert all(r.status == "changed" for r in edit.regions), \
        [(r.faces, r.reason) for r in edit.regions if r.status != "changed"]
    verts, polys, _ = edit.apply(v32, f)
    check_closed_manifold(polys)
    # volume: the rounded faces are no longer exactly coplanar, so the new
    # surface of a region may differ from the old one by the noise.  Every
    # original vertex is within sqrt(3) * delta of its exact plane (delta =
    # 2^-24 * largest coordinate, the float32 rounding bound), and every new
    # vertex is a convex combination of original ones, so both surfaces lie
    # in a slab of thickness 2 * sqrt(3) * delta around the plane with the
    # same border: the divergence-theorem volume changes by at most the total
    # surface area times that thickness.
    delta = 2.0 ** -24 * float(np.abs(v).max())
    polys_in = PolygonList.from_faces(f)
    surface = sum(np.linalg.norm(polygon_normal(v32[face])) / 2 for face in face_lists(polys_in))
    bound = surface * 2 * np.sqrt(3) * delta
    change = scenes.closed_mesh_volume(verts, polys) - scenes.closed_mesh_volume(v32, polys_in)
    assert abs(change) <= bound


def sliver_seam_panel():
    """A 2 x 2 flat panel as an STL exporter leaves it: the right half has a
    vertex m in the middle of the seam, the left half does not, and a
    zero-area sliver (top, bottom, m) closes the T-junction."""
    pts = [(0, 0), (1, 0), (1, 2), (0, 2), (2, 0), (2, 2), (1, 1)]
    v = np.array([(x, y, 0.0) for x, y in pts])
    f = [[0, 1, 2], [0, 2, 3], [2, 1, 6], [1, 4, 6], [6, 4, 5], [6, 5, 2]]
    return v, f


@pytest.mark.parametrize("variant", ["exact", "tilted", "float32"])
def test_zero_area_sliver_does_not_split_a_flat_panel(variant):
    # the panel is one plane and one connected manifold piece (construction),
    # so it is one flat region; the sliver has no normal of its own (zero
    # area, or only rounding noise), and the engine's documented rule is that
    # such faces join on the distance test alone.  The issue also requires
    # float32 (STL) input to keep its flat regions with default tolerances.
    v, f = sliver_seam_panel()
    if variant != "exact":
        v = scenes.tilt(3.0 * v)
    if variant == "float32":
        v = v.astype(np.float32).astype(np.float64)
    edit = remesh_flat_regions(v, f)
    assert [(r.faces, r.status) for r in edit.regions] == [(len(f), "changed")], \
        [(r.faces, r.status, r.reason) for r in edit.regions]


def break_line_panel():
    """A 4 x 3 grid of unit quads, tilted; break edges along the grid line x = 2."""
    flat, faces = scenes.grid_panel(4, 3)
    line = [(j * 5 + 2, (j + 1) * 5 + 2) for j in range(3)]
    return flat, scenes.tilt(flat), faces, line


def test_break_edges_split_a_panel_and_stay_in_the_result():
    # a line of break edges across the panel (a material change) makes two
    # regions of 6 quads each; every break edge is still present (whole, or
    # as a chain of collinear pieces) and no new face reaches across the line
    flat, v, faces, line = break_line_panel()
    edit = remesh_flat_regions(v, faces, break_edges=line, max_area=0.1)
    assert sorted((r.faces, r.status) for r in edit.regions) == [(6, "changed"), (6, "changed")]
    verts, polys, _ = edit.apply(v, faces, compact=False)
    size = size_of(v)
    for a, b in line:
        assert chain_covers(polys, verts, a, b, size), f"break edge {(a, b)} lost"
    # back to the panel's own coordinates (inverse rigid motion) to see sides
    local = (verts - scenes.PLATE_SHIFT) @ scenes.rotation()
    for k in range(len(edit.faces)):
        xs = local[edit.faces.face(k), 0]
        assert xs.max() <= 2 + REL * size or xs.min() >= 2 - REL * size, \
            f"new face {k} crosses the break line: x in [{xs.min()}, {xs.max()}]"
    check_no_t_junctions(verts, polys, size)


def test_break_edges_ending_inside_a_panel_are_kept():
    # a UV seam cut part-way into the panel separates nothing: one region,
    # but the seam edges stay (whole or split) and the seam's inner vertices
    # are not dropped (the issue: interior vertices go unless on a break edge)
    flat, v, faces, line = break_line_panel()
    seam = line[:2]
    edit = remesh_flat_regions(v, faces, break_edges=seam)
    assert [(r.faces, r.status) for r in edit.regions] == [(len(faces), "changed")]
    verts, polys, mapping = edit.apply(v, faces, compact=False)
    for a, b in seam:
        assert chain_covers(polys, verts, a, b, size_of(v)), f"seam edge {(a, b)} lost"
    seam_vertices = {x for e in seam for x in e}
    assert not seam_vertices & set(edit.dropped_vertices.tolist())
    assert seam_vertices <= set(polys.corners.tolist())
    # interior vertices off the seam are dropped by default: the panel's
    # interior grid vertices minus the seam's
    interior = {j * 5 + i for j in range(1, 3) for i in range(1, 4)}
    assert set(edit.dropped_vertices.tolist()) == interior - seam_vertices


def test_navmesh_floor_keeps_its_pillar_holes():
    # shapely/GEOS area of the floor polygon with the pillar squares as holes;
    # the result has the same area, 1 + 3 border loops, and no face covers a
    # pillar centre
    width, depth, pillars = 20.0, 14.0, ((5, 5), (12, 9), (15, 4))
    v, f, _ = scenes.navmesh_floor(width=width, depth=depth, pillars=pillars)
    edit = remesh_flat_regions(v, f)
    assert [r.status for r in edit.regions] == ["changed"]
    verts, polys, _ = edit.apply(v, f)
    floor = shapely.Polygon(
        [(0, 0), (width, 0), (width, depth), (0, depth)],
        [[(x - .5, y - .5), (x + .5, y - .5), (x + .5, y + .5), (x - .5, y + .5)]
         for x, y in pillars])
    faces = face_lists(polys)
    area = sum(shapely.Polygon(verts[face, :2]).area for face in faces)
    assert area == pytest.approx(floor.area, rel=REL)
    assert np.all(verts[:, 2] == 0.0)
    # border loops: edges used once, followed around
    border = [e for e, n in scenes.edge_face_counts(polys).items() if n == 1]
    adj = defaultdict(list)
    for a, b in border:
        adj[a].append(b)
        adj[b].append(a)
    assert all(len(n) == 2 for n in adj.values())
    loops, seen = 0, set()
    for s in adj:
        if s in seen:
            continue
        loops += 1
        stack = [s]
        while stack:
            u = stack.pop()
            if u not in seen:
                seen.add(u)
                stack += adj[u]
    assert loops == 1 + len(pillars)
    cover = shapely.union_all([shapely.Polygon(verts[face, :2]) for face in faces])
    for x, y in pillars:
        assert not cover.contains(shapely.Point(x, y))
    check_no_t_junctions(verts, polys, size_of(v))
    check_no_duplicate_positions(verts, polys, size_of(v))


def finned_panel():
    """Two coplanar 2-quad panels meeting along one edge, with a fin standing
    on that same edge: three faces share it (non-manifold)."""
    flat, faces = scenes.grid_panel(4, 1)
    flat = flat - np.array([2.0, 0.0, 0.0])          # shared edge at x = 0: vertices 2, 7
    flat = np.vstack((flat, [(0.0, 0.0, 1.0), (0.0, 1.0, 1.0)]))
    faces = faces + [[7, 2, 10, 11]]
    return flat, scenes.tilt(flat), faces


def test_non_manifold_edge_is_not_crossed():
    # the two panels are coplanar and share an edge, but that edge has three
    # faces: regions never cross it, so left and right are separate regions
    flat, v, faces = finned_panel()
    assert Counter(scenes.edge_face_counts(PolygonList.from_faces(faces)).values())[3] == 1
    edit = remesh_flat_regions(v, faces, max_area=0.05)
    assert sorted((r.faces, r.status) for r in edit.regions) == \
        [(1, "changed"), (2, "changed"), (2, "changed")]
    verts, polys, _ = edit.apply(v, faces, compact=False)
    local = (verts - scenes.PLATE_SHIFT) @ scenes.rotation()
    size = size_of(v)
    for k in range(len(edit.faces)):
        src = int(edit.face_source[k])
        xs = local[edit.faces.face(k), 0]
        if src in (0, 1):
            assert xs.max() <= REL * size, f"a left-panel face reaches x = {xs.max()}"
        elif src in (2, 3):
            assert xs.min() >= -REL * size, f"a right-panel face reaches x = {xs.min()}"
    # the three-face edge is still there, split or not, with three faces on
    # each of its pieces
    assert chain_covers(polys, verts, 2, 7, size)
    counts = scenes.edge_face_counts(polys)
    pieces = [e for e in counts if np.abs(local[list(e)][:, 0]).max() <= REL * size
              and np.abs(local[list(e)][:, 2]).max() <= REL * size]
    assert pieces and all(counts[e] == 3 for e in pieces)


def test_cylinder_band_regions_follow_the_flat_angle():
    # a 64-facet tube: neighbouring facets' normals differ by 360/64 = 5.625
    # degrees (geometry of the regular polygon).  flat_angle=1: one region per
    # facet strip.  flat_angle=10 with a distance tolerance large enough for
    # a crease (the rule needs both tests): strips join, a region
    # never splits a strip, and since strips two apart differ by 11.25 > 10
    # degrees from the seed, no region holds more than 3 strips.
    facets, rows = 64, 3
    v, f = scenes.cylinder_band(facets=facets, rows=rows)
    sharp = remesh_flat_regions(v, f, flat_angle=1.0)
    assert sorted(r.faces for r in sharp.regions) == [rows] * facets
    joined = remesh_flat_regions(v, f, flat_angle=10.0, flat_distance=0.1)
    counts = [r.faces for r in joined.regions]
    assert sum(counts) == len(f)
    assert len(counts) < facets
    assert all(c % rows == 0 and c // rows <= 3 for c in counts), counts
    # with the default (relative, 1e-4 of the region's size) distance
    # tolerance a 5.6 degree crease across a 0.49 wide facet is far from
    # flat, so nothing joins even at flat_angle=10
    default = remesh_flat_regions(v, f, flat_angle=10.0)
    assert sorted(r.faces for r in default.regions) == [rows] * facets


# --------------------------------------------------------------------------
# 5. skip reasons
# --------------------------------------------------------------------------
def _good_panel(offset):
    flat, faces = scenes.grid_panel(2, 2)
    return flat + np.asarray(offset, float), faces


def _check_skip(v, faces, bad_faces, reason_pattern, **options):
    """The region made of `bad_faces` is skipped with a reason matching the
    pattern and left untouched; the good 2 x 2 panel (4 faces, the last ones)
    is changed in the same call; the mesh of the result stays valid."""
    edit = remesh_flat_regions(v, faces, **options)
    bad_reports = [r for r in edit.regions if r.faces == len(bad_faces)]
    good_reports = [r for r in edit.regions if r.faces == 4]
    assert len(good_reports) == 1 and good_reports[0].status == "changed"
    assert bad_reports and all(r.status == "skipped" for r in bad_reports), \
        [(r.faces, r.status, r.reason) for r in edit.regions]
    for r in bad_reports:
        assert r.reason and re.search(reason_pattern, r.reason, flags=re.IGNORECASE), r.reason
    assert not set(bad_faces) & set(edit.replaced_faces.tolist())
    verts, polys, _ = edit.apply(v, faces, compact=False)
    result = face_lists(polys)
    for fi in bad_faces:
        assert faces[fi] in result
    assert set(edit.replaced_faces.tolist()) == set(range(len(faces) - 4, len(faces)))
    return edit


def test_self_intersecting_outline_is_skipped():
    # a paper fan folded past a full turn and pressed flat: five coplanar
    # blades facing the same way around one centre, the last lying over the
    # first, so the region's outline crosses itself in its plane
    fan = scenes.overwrapped_fan()
    v, faces = scenes.merge_meshes(fan, _good_panel((10.0, 0.0, 0.0)))
    v = scenes.tilt(v)
    _check_skip(v, faces, list(range(len(fan[1]))), r"self[- ]?intersect")


def test_region_not_flat_within_flat_distance_is_skipped():
    # a warped sheet-metal quad: one corner lifted 0.1 out of the plane of
    # the other three; with flat_distance=0.01 it is not flat (its corners are
    # 0.025 from the best plane through them: +-h/4 for a single lifted corner)
    warped = (np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0.1), (0, 1, 0)], float) + [0, 5, 0],
              [[0, 1, 2, 3]])
    v, faces = scenes.merge_meshes(warped, _good_panel((10.0, 0.0, 0.0)))
    _check_skip(scenes.tilt(v), faces, [0], r"not flat", flat_distance=0.01)


@pytest.mark.parametrize("tilted", [False, True], ids=["axis_aligned", "tilted"])
@pytest.mark.parametrize("shape", ["collinear_triangle", "collapsed_quad"])
def test_zero_area_region_is_skipped(shape, tilted):
    # a face of zero area on its own (three collinear corners; a quad whose
    # corners pairwise coincide) is a degenerate region; tilting it in space
    # (a rigid motion, so still zero area up to rounding) must not change that
    if shape == "collinear_triangle":
        bad = (np.array([(0, 0, 0), (1, 0, 0), (2, 0, 0)], float), [[0, 1, 2]])
    else:
        bad = (np.array([(0, 0, 0), (1, 0, 0), (1, 0, 0), (0, 0, 0)], float), [[0, 1, 2, 3]])
    v, faces = scenes.merge_meshes(bad, _good_panel((10.0, 0.0, 0.0)))
    _check_skip(scenes.tilt(v) if tilted else v, faces, [0], r"degenerate")


def test_skipped_region_next_to_a_changed_one_only_gains_split_points():
    # a warped quad (skipped: not flat within flat_distance) attached to a
    # flat 2 x 2 panel that is changed: the watertight rule lets the
    # skipped face gain the panel's split points on the shared edge, nothing
    # else; the result has no T-junction and no open edge beyond the outline
    flat, faces = scenes.grid_panel(3, 2)
    flat = flat.copy()
    flat[3, 2] = 0.15          # lift the outer corner of the last quad of the first row
    v = scenes.tilt(flat)
    edit = remesh_flat_regions(v, faces, flat_distance=0.01, max_area=0.05)
    statuses = sorted((r.faces, r.status) for r in edit.regions)
    assert {s for _, s in statuses} == {"changed", "skipped"}, statuses
    verts, polys, _ = edit.apply(v, faces, compact=False)
    skipped_faces = {2}          # the quad with the lifted corners
    for k in np.flatnonzero(np.isin(edit.face_source, sorted(skipped_faces))):
        face = edit.faces.face(k).tolist()
        src = faces[int(edit.face_source[k])]
        originals = [x for x in face if x < len(v)]
        i = originals.index(src[0])
        assert originals[i:] + originals[:i] == src
    border_before = {e for e, n in scenes.edge_face_counts(PolygonList.from_faces(faces)).items()
                     if n == 1}
    size = size_of(v)
    for e, n in scenes.edge_face_counts(polys).items():
        assert n in (1, 2)
        if n == 1:
            assert any(_on_segment(verts, e, a, b, size) for a, b in border_before), \
                f"edge {e} is open inside the panel"
    check_no_t_junctions(verts, polys, size)


def _on_segment(verts, e, a, b, size):
    pa, pb = verts[a], verts[b]
    d = pb - pa
    for x in e:
        rel = verts[x] - pa
        t = rel @ d / (d @ d)
        if not (-REL <= t <= 1 + REL and np.linalg.norm(rel - t * d) <= REL * size):
            return False
    return True


# --------------------------------------------------------------------------
# 6. bad input
# --------------------------------------------------------------------------
_SQUARE = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0)], float)


@pytest.mark.parametrize("vertices, faces, options, match", [
    (np.array([(0, 0, 0), (1, 0, 0), (np.nan, 1, 0), (0, 1, 0)]), [[0, 1, 2, 3]], {}, "finite"),
    (np.array([(0, 0, 0), (1, 0, 0), (1, np.inf, 0), (0, 1, 0)]), [[0, 1, 2, 3]], {}, "finite"),
    (_SQUARE, [[0, 1, 2, 4]], {}, "range"),
    (_SQUARE, [[0, 1, 2, -1]], {}, "range"),
    (_SQUARE, [[0, 1, 2, 3], [0, 1]], {}, "three"),
    (_SQUARE, [[0, 1, 2, 3], []], {}, "three"),
    (_SQUARE[:, :2], [[0, 1, 2, 3]], {}, "shape"),
    (_SQUARE.ravel(), [[0, 1, 2, 3]], {}, "shape"),
    (_SQUARE, [[0, 1, 2, 3]], dict(face_mask=[True, False]), "face_mask"),
    (_SQUARE, [[0, 1, 2, 3]], dict(face_mask=[3]), "face_mask"),
    (_SQUARE, [[0, 1, 2, 3]], dict(face_mask=[0.5]), "face_mask"),
], ids=["nan", "inf", "index_too_big", "negative_index", "two_corners", "empty_face",
        "2d_vertices", "flat_vertex_array", "mask_length", "mask_index", "mask_floats"])
def test_bad_input_raises_value_error(vertices, faces, options, match):
    with pytest.raises(ValueError, match=match):
        remesh_flat_regions(vertices, faces, **options)
