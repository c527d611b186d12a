"""The remesh and flip operators in the real host (``bpy`` from the package registry),
on invented meshes, in Object Mode and in multi-object Edit Mode.

One host process (tests/host_scripts/remesh_ops.py) installs the built zip, runs every
case and reports what the host's own mesh API says before and after.  The checks
below use outside facts, computed here with numpy from those reports:

* a closed surface has every edge in exactly two faces, and a consistently oriented
  one uses every directed edge once (the definition of a closed oriented 2-manifold);
* the volume of a closed solid is the flux of the position field through its surface
  (divergence theorem: V = 1/6 sum over triangles of p0 . (p1 x p2)); the plate's
  exact volume is its outline area times its thickness;
* Euler's formula for a connected planar surface with b boundary loops:
  V - E + F = 2 - b;
* an edge between two triangles is locally Delaunay exactly when the two angles
  opposite it sum to at most 180 degrees, and Delaunay triangulations maximise the
  smallest angle (de Berg, Cheong, van Kreveld, Overmars, "Computational Geometry",
  3rd ed., Lemma 9.4 and Theorem 9.9);
* barycentric combinations reproduce affine functions exactly (definition of an
  affine map), so every attribute defined affine in position must still equal its
  formula at every vertex and corner, new ones included;
* the host's own ``Mesh.validate`` finds nothing to fix.
"""

import importlib.util
import math
from pathlib import Path

import numpy as np
import pytest

from addon import build
from tests.test_host_extension import run_host

SCRIPTS = Path(__file__).resolve().parent / "host_scripts"
_spec = importlib.util.spec_from_file_location("invented_meshes", SCRIPTS / "invented_meshes.py")
shapes = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(shapes)

EXACT = 2e-5        # float32 storage of values of size ~10
# the host stores positions as float32 (relative spacing 6e-8): a new vertex lies on its
# face's plane up to that rounding, which moves a volume by about 1e-8 relative
VOLUME_REL = 1e-6
BYTE = 1.0 / 255 + 1e-6


@pytest.fixture(scope="module")
def facts(tmp_path_factory):
    zip_path = build.build(tmp_path_factory.mktemp("dist"))
    found, _ = run_host("remesh_ops.py", tmp_path_factory.mktemp("host"), zip_path)
    assert found["install"] == ["FINISHED"]
    return found


# ---------------------------------------------------------------- numpy facts
def undirected_counts(faces):
    counts = {}
    for f in faces:
        for a, b in zip(f, f[1:] + f[:1]):
            key = (min(a, b), max(a, b))
            counts[key] = counts.get(key, 0) + 1
    return counts


def directed_counts(faces):
    counts = {}
    for f in faces:
        for a, b in zip(f, f[1:] + f[:1]):
            counts[a, b] = counts.get((a, b), 0) + 1
    return counts


def assert_closed_and_oriented(state):
    faces = state["faces"]
    assert set(undirected_counts(faces).values()) == {2}
    assert set(directed_counts(faces).values()) == {1}


def volume(state):
    """Divergence theorem over a fan triangulation of every face."""
    p = np.asarray(state["positions"])
    total = 0.0
    for f in state["faces"]:
        for k in range(1, len(f) - 1):
            total += p[f[0]] @ np.cross(p[f[k]], p[f[k + 1]])
    return total / 6.0


def world(state):
    m = np.asarray(state["matrix"])
    return np.asarray(state["positions"]) @ m[:3, :3].T + m[:3, 3]


def corner_angles(points):
    """Angles (degrees) at each corner of a polygon given by its points, by arccos of
    normalised dot products."""
    p = np.asarray(points)
    out = []
    for k in range(len(p)):
        u, w = p[(k + 1) % len(p)] - p[k], p[k - 1] - p[k]
        c = u @ w / (np.linalg.norm(u) * np.linalg.norm(w))
        out.append(math.degrees(math.acos(max(-1.0, min(1.0, c)))))
    return out


def face_key(points):
    """A face as its corner positions, the same for any starting corner."""
    rows = [tuple(map(float, p)) for p in points]
    k = rows.index(min(rows))
    return tuple(rows[k:] + rows[:k])


def changed_faces(before, after):
    """Faces (as position lists) only in before, and only in after."""
    pb, pa = np.asarray(before["positions"]), np.asarray(after["positions"])
    kb = {face_key(pb[f]): f for f in before["faces"]}
    ka = {face_key(pa[f]): f for f in after["faces"]}
    return ([pb[kb[k]] for k in kb.keys() - ka.keys()],
            [pa[ka[k]] for k in ka.keys() - kb.keys()])


def position_set(state):
    return {tuple(p) for p in state["positions"]}


def assert_originals_kept(before, after):
    """Original vertices are never moved: each is in the result with its exact position
    or was removed; a removed one did not shape the surface (all its faces lie in one
    plane)."""
    kept = position_set(after)
    p = np.asarray(before["positions"])
    removed = [i for i, q in enumerate(before["positions"]) if tuple(q) not in kept]
    for i in removed:
        ring = [f for f in before["faces"] if i in f]
        normals = []
        for f in ring:
            n = sum(np.cross(p[f[k]] - p[f[0]], p[f[k + 1]] - p[f[0]])
                    for k in range(1, len(f) - 1))
            normals.append(n / np.linalg.norm(n))
        assert all(abs(a @ b) > 1 - 1e-4 for a in normals for b in normals), i
    return removed


def assert_report_recount(run, before, after):
    """The one-line report's triangle counts and smallest angles, recounted from the
    faces that changed."""
    gone, new = changed_faces(
        {**before, "positions": world(before).tolist()},
        {**after, "positions": world(after).tolist()})
    last = run["last"]
    assert last["triangles_before"] == sum(len(f) - 2 for f in gone)
    assert last["triangles_after"] == sum(len(f) - 2 for f in new)
    assert last["min_angle_before"] == pytest.approx(
        min(min(corner_angles(f)) for f in gone), abs=1e-3)
    assert last["min_angle_after"] == pytest.approx(
        min(min(corner_angles(f)) for f in new), abs=1e-3)
    assert f"triangles {last['triangles_before']} → {last['triangles_after']}" in \
        last["summary"]
    # no degenerate face is ever written (the add-on masks out such engine results)
    assert min(min(corner_angles(f)) for f in new) > 1e-3


def surface_area(state):
    p = world(state)
    total = 0.0
    for f in state["faces"]:
        total += np.linalg.norm(sum(np.cross(p[f[k]] - p[f[0]], p[f[k + 1]] - p[f[0]])
                                    for k in range(1, len(f) - 1))) / 2
    return total


def boundary_loops(state):
    edges = [e for e, c in undirected_counts(state["faces"]).items() if c == 1]
    nxt = {}
    for a, b in edges:
        nxt.setdefault(a, []).append(b)
        nxt.setdefault(b, []).append(a)
    seen, loops = set(), 0
    for v in nxt:
        if v in seen:
            continue
        loops += 1
        stack = [v]
        while stack:
            x = stack.pop()
            if x not in seen:
                seen.add(x)
                stack.extend(nxt[x])
    return loops


def euler(state):
    edges = undirected_counts(state["faces"])
    used = {v for f in state["faces"] for v in f}
    return len(used) - len(edges) + len(state["faces"])


# ---------------------------------------------------------------- plate
def test_operators_poll_by_mode(facts):
    assert facts["poll"] == {"object_op_in_object_mode": True,
                             "mesh_op_in_object_mode": False,
                             "flip_in_object_mode": False}


def test_object_mode_plate_stays_closed_with_its_volume(facts):
    case = facts["plate_object"]
    before, after = case["before"], case["after"]
    assert case["result"] == ["FINISHED"] and case["mode_after"] == "OBJECT"
    assert_closed_and_oriented(before)
    assert_closed_and_oriented(after)
    assert volume(before) == pytest.approx(facts["plate_volume"], rel=1e-6)
    assert volume(after) == pytest.approx(volume(before), rel=VOLUME_REL)
    assert not after["validate_changed"]
    assert_originals_kept(before, after)
    assert len(after["faces"]) > len(before["faces"])
    assert case["last"]["regions_changed"] > 0 and case["last"]["regions_skipped"] == 0
    assert_report_recount(case, before, after)


def test_flip_on_plate_keeps_vertices_and_reaches_delaunay(facts):
    case = facts["plate_flip"]
    before, after = case["before"], case["after"]
    assert case["result"] == ["FINISHED"] and case["mode_after"] == "EDIT_MESH"
    assert after["positions"] == before["positions"]        # no vertex added or moved
    assert len(after["faces"]) == len(before["faces"])
    assert_closed_and_oriented(after)
    assert volume(after) == pytest.approx(volume(before), rel=VOLUME_REL)
    quads = sorted(tuple(f) for f in before["faces"] if len(f) > 3)
    assert sorted(tuple(f) for f in after["faces"] if len(f) > 3) == quads
    assert case["last"]["flips"] > 0
    assert case["last"]["summary"].startswith(f"Flipped {case['last']['flips']} edge(s)")
    p = np.asarray(after["positions"])
    tris = [f for f in after["faces"] if len(f) == 3]

    def normal(f):
        n = np.cross(p[f[1]] - p[f[0]], p[f[2]] - p[f[0]])
        return n / np.linalg.norm(n)

    by_edge = {}
    for f in tris:
        for k in range(3):
            a, b = f[k], f[(k + 1) % 3]
            by_edge.setdefault((min(a, b), max(a, b)), []).append((f, f[(k + 2) % 3]))
    checked = 0
    for (a, b), pair in by_edge.items():
        if len(pair) != 2 or normal(pair[0][0]) @ normal(pair[1][0]) < 1 - 1e-9:
            continue
        opposite = 0.0
        for _f, c in pair:
            u, w = p[a] - p[c], p[b] - p[c]
            opposite += math.degrees(math.acos(u @ w / np.linalg.norm(u) / np.linalg.norm(w)))
        assert opposite <= 180.0 + 1e-6, (a, b)
        checked += 1
    assert checked > 20
    # Delaunay maximises the smallest angle: no changed region got worse
    last = case["last"]
    assert last["min_angle_after"] >= last["min_angle_before"] - 1e-9


def test_multi_object_edit_mode_keeps_the_outline_and_unselected_faces(facts):
    case = facts["multi"]
    assert case["result"] == ["FINISHED"] and case["mode_after"] == "EDIT_MESH"
    assert case["in_mode"] == ["floor", "plate"]           # both back in Edit Mode
    assert case["last"]["meshes"] == 2
    before, after = case["plate_before"], case["plate_after"]
    assert_closed_and_oriented(after)
    assert volume(after) == pytest.approx(volume(before), rel=VOLUME_REL)
    assert_originals_kept(before, after)
    # keep_boundary: no point on any region outline, so unselected faces are untouched
    pb = np.asarray(before["positions"])
    after_keys = {face_key(np.asarray(after["positions"])[f]) for f in after["faces"]}
    chosen = set(case["plate_chosen"])
    for i, f in enumerate(before["faces"]):
        if i not in chosen:
            assert face_key(pb[f]) in after_keys, i
    fb, fa = case["floor_before"], case["floor_after"]
    assert surface_area(fa) == pytest.approx(surface_area(fb), rel=VOLUME_REL)
    assert boundary_loops(fa) == boundary_loops(fb) == 4      # outline + three pillars
    assert euler(fa) == euler(fb) == 2 - 4
    assert_originals_kept(fb, fa)
    assert fa["faces"] != fb["faces"]


# ---------------------------------------------------------------- floor
def test_navmesh_floor_limit_and_straight_runs(facts):
    case = facts["floor"]
    before, after = case["before"], case["after"]
    assert case["result"] == ["FINISHED"]
    assert surface_area(after) == pytest.approx(surface_area(before), rel=VOLUME_REL)
    assert boundary_loops(after) == 4 and euler(after) == -2
    _, new = changed_faces(before, after)
    longest = max(np.linalg.norm(f - np.roll(f, 1, axis=0), axis=1).max()
                  for f in new if len(f) == 3)
    assert longest <= 0.8 * (1 + 1e-6)      # float32 positions
    # the sliver fan's rim points sat on a straight wall: they are gone, while every
    # corner of the outline (a turn of more than 1 degree) stays
    removed = assert_originals_kept(before, after)
    xs = np.asarray(before["positions"])
    rim = [i for i in range(len(xs)) if xs[i][0] == 10.0 and 3.9 < xs[i][1] < 4.0]
    assert rim and set(rim) <= set(removed)
    assert outline_corners(after) == outline_corners(before)


def outline_corners(state):
    p = np.asarray(state["positions"])
    edges = [e for e, c in undirected_counts(state["faces"]).items() if c == 1]
    nbrs = {}
    for a, b in edges:
        nbrs.setdefault(a, []).append(b)
        nbrs.setdefault(b, []).append(a)
    out = set()
    for v, (a, b) in ((v, n) for v, n in nbrs.items() if len(n) == 2):
        u, w = p[a] - p[v], p[b] - p[v]
        angle = math.degrees(math.acos(np.clip(u @ w / np.linalg.norm(u) / np.linalg.norm(w),
                                               -1, 1)))
        if angle < 179.0:
            out.add(tuple(p[v]))
    return out


# ---------------------------------------------------------------- the attribute panel
def island_of_faces(state):
    u = shapes.panel_coordinates(state["positions"])[:, 0]
    return [int(np.mean(u[f]) > shapes.PANEL_SEAM_X) for f in state["faces"]]


def assert_panel_data_exact(state):
    """Every attribute equals its affine formula at every vertex and corner."""
    pos = np.asarray(state["positions"])
    u, w, h = shapes.panel_coordinates(pos).T
    assert np.abs(np.asarray(state["tint"]) - shapes.tint(u, w, h)).max() < EXACT
    assert np.abs(np.asarray(state["height_field"]) - shapes.height_field(u, w, h)).max() \
        < EXACT
    weights = np.array([[g["Weight"], g["Falloff"]] for g in state["groups"]])
    assert np.abs(weights[:, 0] - shapes.group_weight(u, w, h)).max() < EXACT
    assert np.abs(weights[:, 1] - shapes.group_falloff(u, w, h)).max() < EXACT
    keys = state["shape_keys"]
    assert np.abs(np.asarray(keys["Basis"]) - pos).max() == 0.0
    assert np.abs(np.asarray(keys["Lift"]) - pos - shapes.lift_offset(u, w, h)).max() < EXACT
    assert np.abs(np.asarray(keys["Shear"]) - pos - shapes.shear_offset(u, w, h)).max() \
        < EXACT
    corner_verts = np.array([v for f in state["faces"] for v in f])
    islands = np.repeat(island_of_faces(state), [len(f) for f in state["faces"]])
    cu, cw, ch = u[corner_verts], w[corner_verts], h[corner_verts]
    expected = np.where(islands[:, None] == 0, shapes.uv_island(cu, cw, ch, 0),
                        shapes.uv_island(cu, cw, ch, 1))
    assert np.abs(np.asarray(state["uv"]["UVMap"]) - expected).max() < EXACT
    assert np.abs(np.asarray(state["uv"]["Detail"]) - shapes.uv_detail(cu, cw, ch)).max() \
        < EXACT
    assert np.abs(np.asarray(state["paint"]) - shapes.paint(cu, cw, ch)).max() < BYTE
    assert set(state["face_tag"]) == {7} and all(state["smooth"])
    assert state["material"] == island_of_faces(state)


def assert_seams_and_sharp_edges(state):
    """Seams are exactly the pieces of the seam line, sharp edges exactly the outline;
    no face lies on both sides of the seam."""
    u = shapes.panel_coordinates(state["positions"])[:, 0]
    edges = np.asarray(state["edges"])
    on_line = np.abs(u[edges] - shapes.PANEL_SEAM_X).max(axis=1) < 1e-5
    assert sorted(np.flatnonzero(on_line).tolist()) == state["seam"]
    outline = {e for e, c in undirected_counts(state["faces"]).items() if c == 1}
    sharp = {tuple(sorted(edges[i])) for i in state["sharp"]}
    assert sharp == outline
    for f in state["faces"]:
        side = u[f] - shapes.PANEL_SEAM_X
        assert side.max() < 1e-5 or side.min() > -1e-5, f


def test_panel_data_exact_before_any_run(facts):
    """The checks below are meaningful: the invented panel satisfies them as built."""
    assert_panel_data_exact(facts["panel_object"]["before"])
    assert_seams_and_sharp_edges(facts["panel_object"]["before"])


def test_panel_in_object_mode_carries_every_attribute(facts):
    case = facts["panel_object"]
    before, after = case["before"], case["after"]
    assert case["result"] == ["FINISHED"]
    assert len(after["positions"]) > len(before["positions"])
    assert_panel_data_exact(after)
    assert_seams_and_sharp_edges(after)
    assert_originals_kept(before, after)
    assert not after["validate_changed"]
    assert_report_recount(case, before, after)
    # the edge-length limit is in scene units: the object is scaled by 1.5
    _, new = changed_faces({**before, "positions": world(before).tolist()},
                           {**after, "positions": world(after).tolist()})
    tris = [f for f in new if len(f) == 3]
    assert max(np.linalg.norm(f - np.roll(f, 1, axis=0), axis=1).max() for f in tris) \
        <= 0.5 * (1 + 1e-6)
    # the warped spot is reported and left in place
    last = case["last"]
    assert last["regions_skipped"] >= 1 and "not flat within tolerance" in last["skip_reasons"]
    assert "skipped" in last["summary"] and "not flat within tolerance" in last["summary"]
    i, j = shapes.PANEL_LIFTED
    lifted = tuple(before["positions"][j * len(shapes.PANEL_XS) + i])
    assert lifted in position_set(after)


def test_panel_in_edit_mode_uv_jumps_alone_keep_islands_apart(facts):
    case = facts["panel_edit"]
    before, after = case["before"], case["after"]
    assert case["result"] == ["FINISHED"] and case["mode_after"] == "EDIT_MESH"
    assert case["last"]["regions_changed"] > 0
    assert_panel_data_exact(after)          # seams, sharp, materials off: UVs still split
    assert_seams_and_sharp_edges(after)
    assert_originals_kept(before, after)
    # faces outside the selection keep their corners (points may be added on their
    # edges, on the straight line between two corners)
    pa = np.asarray(after["positions"])
    index = {tuple(p): k for k, p in enumerate(after["positions"])}
    chosen = set(case["chosen"])
    for i, f in enumerate(before["faces"]):
        if i in chosen:
            continue
        ids = [index[tuple(before["positions"][v])] for v in f]
        assert any(is_grown(ids, g, pa) for g in after["faces"] if set(ids) <= set(g)), i
    # the new faces are selected
    _, new = changed_faces(before, after)
    selected = {face_key(pa[after["faces"][k]]) for k in after["selected"]}
    assert {face_key(f) for f in new} <= selected


def is_grown(ids, face, p):
    """`face` is the polygon `ids` with zero or more points inserted on its edges."""
    k = face.index(ids[0])
    rolled = face[k:] + face[:k]
    slots = [rolled.index(v) for v in ids]
    if slots != sorted(slots):
        return False
    for s, (a, b) in enumerate(zip(ids, ids[1:] + ids[:1])):
        start, stop = slots[s], slots[s + 1] if s + 1 < len(slots) else len(rolled)
        for x in rolled[start + 1:stop]:
            d = np.linalg.norm(np.cross(p[b] - p[a], p[x] - p[a])) / np.linalg.norm(p[b] - p[a])
            if d > 1e-5:
                return False
    return True


# ---------------------------------------------------------------- safety (safety.py)
@pytest.fixture(scope="module")
def safety(tmp_path_factory):
    zip_path = build.build(tmp_path_factory.mktemp("dist"))
    found, _ = run_host("safety.py", tmp_path_factory.mktemp("host"), zip_path)
    assert found["install"] == ["FINISHED"]
    return found


def test_engine_failure_cancels_and_leaves_the_mesh_byte_for_byte(safety):
    nan = safety["nan"]
    assert nan["object"] == ["CANCELLED"] and nan["object_same"]
    assert nan["edit"] == ["CANCELLED"] and nan["edit_same"]
    assert nan["edit_mode_after"] == "EDIT_MESH"


def test_write_failure_restores_every_mesh(safety):
    rollback = safety["rollback"]
    assert rollback["result"] == ["CANCELLED"]
    assert rollback["calls"] == ["panel", "plate"]     # the first mesh had been written
    assert rollback["panel_same"] and rollback["plate_same"]


def test_undo_restores_everything(safety):
    for case in ("undo_object", "undo_edit"):
        undo = safety[case]
        assert undo["changed"] and undo["restored"], case
    assert safety["undo_object"]["result"] == ["FINISHED"]
    assert safety["undo_edit"]["flip"] == safety["undo_edit"]["remesh"] == ["FINISHED"]
    assert safety["undo_edit"]["mode"] == "EDIT_MESH"


def test_overlay_needs_a_window_and_measures_like_arccos(safety):
    ov = safety["overlay"]
    assert ov["available"] is False and ov["poll"] is False and ov["enable"] is False
    assert ov["enabled"] is False and ov["handlers"] == 0 and not ov["depsgraph_handler"]
    state = ov["state"]
    p = np.asarray(state["positions"])
    expected = [min(corner_angles(p[f])) for f in state["faces"]]
    assert np.allclose(ov["object_face_angles"], expected, atol=1e-4)
    assert ov["object_coords"] == 3 * sum(len(f) - 2 for f in state["faces"])
    assert ov["edit_faces_seen"] == ov["edit_faces_real"]   # the edit mesh, not stale data
    assert ov["draw_raised"] == []


def test_presets_for_the_three_trades(safety):
    presets = safety["presets"]
    size = presets["size"]
    assert size == pytest.approx(10.0)                   # the floor is 10 units long
    pr, nav, even = presets["PRINT"], presets["NAVMESH"], presets["EVEN"]
    assert pr["result"] == nav["result"] == even["result"] == ["FINISHED"]
    assert pr["settings"]["keep_boundary"] and pr["settings"]["min_angle"] >= 30.0
    assert pr["settings"]["max_edge_length"] == 0.0
    assert nav["settings"]["max_edge_length"] == pytest.approx(size / 10)
    assert nav["settings"]["straight_run_tolerance"] == pytest.approx(size / 1000)
    assert not nav["settings"]["keep_boundary"]
    assert even["settings"]["smoothing"]
    assert even["settings"]["max_edge_length"] == pytest.approx(size / 25)


def test_scene_settings_are_the_operator_defaults(safety):
    state = safety["scene_defaults"]["positions"]
    p = world(state)
    tris = [p[f] for f in state["faces"] if len(f) == 3]
    longest = max(np.linalg.norm(t - np.roll(t, 1, axis=0), axis=1).max() for t in tris)
    assert longest <= 0.9 * (1 + 1e-6)
    assert "Remeshed 1 region(s)" in safety["scene_defaults"]["summary"]
