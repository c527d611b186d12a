"""Every operator of the add-on on adversarial meshes in the real host (``bpy`` from the
package registry): each run either changes only what it reports or leaves every array of
the mesh byte for byte as it was, says one line, lets no exception escape, and an undo
gives back the bytes of before.

One host process (tests/host_scripts/adversarial_meshes.py) builds the invented meshes
without the host's own validation (so zero-area faces, repeated corners, duplicate and
non-manifold faces, loose parts, float32-collapsed features, huge and tiny scales,
nearly collinear rims, a hole touching an outline, NaN and inf positions and an empty
mesh stay in) and runs ``object.remesh_flat_regions``, ``mesh.remesh_flat_regions``,
``mesh.flip_to_better_angles`` and ``mesh.select_thin_triangles`` on each.  The checks
below use outside facts, computed here with numpy from what the host reports:

* a closed surface has every edge in exactly two faces, and a consistently oriented one
  uses every directed edge once (definition of a closed oriented 2-manifold);
* a T-junction is a vertex lying inside an edge that only one face uses (common
  practice: the crack it opens); a non-manifold edge is one used by three or more faces
  (definition);
* a k-cornered face counts as k - 2 triangles (polygon triangulation theorem);
* a triangle's angles are the arccos of normalised dot products; a triangle with a
  zero-length side has a zero angle (common practice);
* the host's own ``Mesh.validate`` finds nothing to fix in a result.
"""

import math
from collections import Counter

import numpy as np
import pytest

from addon import build
from tests.test_host_extension import run_host

MESHES = ("zero_area", "repeated_vertex", "non_manifold", "duplicate_faces", "loose_parts",
          "fan_box", "tiny_at_1e6", "scaled_1e-9", "scaled_1e9", "kettner_fan",
          "hole_touching", "nan", "inf", "empty", "no_selection", "point_cap")
OPERATORS = ("object_remesh", "edit_remesh", "flip", "select_thin")
LABELS = {"object_remesh": "Remesh Flat Regions", "edit_remesh": "Remesh Flat Regions",
          "flip": "Flip to Better Angles", "select_thin": "Select Thin Triangles"}
SELECTION_LAYERS = {"attr:.select_vert", "attr:.select_edge", "attr:.select_poly"}
THIN_ANGLE = 20.0           # the select_thin runs' threshold (degrees)
# meshes the remesh must change (so the checks on changed meshes are exercised)
MUST_CHANGE = ("zero_area", "non_manifold", "loose_parts", "fan_box", "tiny_at_1e6",
               "scaled_1e-9", "scaled_1e9", "point_cap")


@pytest.fixture(scope="module")
def facts(tmp_path_factory):
    zip_path = build.build(tmp_path_factory.mktemp("dist"))
    found, _ = run_host("adversarial_meshes.py", tmp_path_factory.mktemp("host"), zip_path)
    assert found["install"] == ["FINISHED"]
    return found


@pytest.fixture(scope="module")
def cases(facts):
    return facts["cases"]


ALL = [f"{m}/{op}" for m in MESHES for op in OPERATORS]


# ---------------------------------------------------------------- numpy facts
def edge_faces(state):
    """Undirected edge (by corner positions) -> number of faces using it, and directed
    edge -> count."""
    p = [tuple(q) for q in state["positions"]]
    undirected, directed = Counter(), Counter()
    for f in state["faces"]:
        for a, b in zip(f, f[1:] + f[:1]):
            undirected[frozenset((p[a], p[b]))] += 1
            directed[p[a], p[b]] += 1
    return undirected, directed


def is_closed(state):
    undirected, _ = edge_faces(state)
    return bool(undirected) and set(undirected.values()) == {2}


def is_oriented(state):
    _, directed = edge_faces(state)
    return set(directed.values()) == {1}


def inside_segment(points, a, b):
    """Mask of points strictly inside segment a-b, up to float32 rounding of positions of
    size |a|, |b| (relative spacing 2**-23, IEEE 754)."""
    a, b = np.asarray(a), np.asarray(b)
    d = b - a
    length = np.linalg.norm(d)
    if length == 0.0:
        return np.zeros(len(points), dtype=bool)
    tol = 8 * 2.0 ** -23 * (length + np.abs(a).max() + np.abs(b).max())
    rel = np.asarray(points) - a
    t = rel @ d / length ** 2
    dist = np.linalg.norm(rel - np.outer(t, d), axis=1)
    margin = tol / length
    return (dist <= tol) & (t > margin) & (t < 1 - margin)


def t_junctions(state):
    """Positions of vertices lying inside an edge used by exactly one face."""
    undirected, _ = edge_faces(state)
    used = sorted({v for f in state["faces"] for v in f})
    pts = np.asarray(state["positions"])[used] if used else np.zeros((0, 3))
    out = set()
    for edge, count in undirected.items():
        if count == 1 and len(edge) == 2:
            a, b = tuple(edge)
            out |= {tuple(q) for q in pts[inside_segment(pts, a, b)]}
    return out


def non_manifold_edges(state):
    undirected, _ = edge_faces(state)
    return [tuple(e) for e, c in undirected.items() if c > 2 and len(e) == 2]


def shared_positions(state):
    """Positions held by more than one vertex."""
    counts = Counter(tuple(q) for q in state["positions"])
    return {q for q, n in counts.items() if n > 1}


def face_keys(state):
    """Faces as tuples of corner positions, the same for any starting corner (a
    multiset, so duplicate faces count twice)."""
    p = [tuple(q) for q in state["positions"]]
    out = Counter()
    for f in state["faces"]:
        rows = [p[v] for v in f]
        k = rows.index(min(rows))
        out[tuple(rows[k:] + rows[:k])] += 1
    return out


def triangle_count(faces):
    return sum((len(f) - 2) * n for f, n in faces.items())


def kept_prefix(before, after):
    """Original vertices come first in the result in their order, each bit for bit;
    returns (indices of removed originals, count of kept ones)."""
    b, a = before["positions"], after["positions"]
    j, removed = 0, []
    for i, q in enumerate(b):
        if j < len(a) and a[j] == q:
            j += 1
        else:
            removed.append(i)
    return removed, j


def smallest_angle(points):
    """Smallest corner angle (degrees) of a triangle by arccos of normalised dot
    products; 0 when a side has zero length."""
    p = np.asarray(points)
    out = []
    for k in range(3):
        u, w = p[(k + 1) % 3] - p[k], p[k - 1] - p[k]
        nu, nw = np.linalg.norm(u), np.linalg.norm(w)
        if nu == 0.0 or nw == 0.0:
            return 0.0
        out.append(math.degrees(math.acos(max(-1.0, min(1.0, u @ w / (nu * nw))))))
    return min(out)


# ---------------------------------------------------------------- every case
def test_every_case_ran(cases):
    assert sorted(cases) == sorted(ALL)


@pytest.mark.parametrize("key", ALL)
def test_one_line_no_escape_and_undo_restores(cases, key):
    case = cases[key]
    op = case["operator"]
    assert case["escaped"] is None, case["escaped"]
    assert case["other_output"] == []                  # no warning, no traceback
    assert len(case["reports"]) == 1, case["reports"]
    assert case["result"] in (["FINISHED"], ["CANCELLED"])
    assert case["mode_after"] == ("OBJECT" if op == "object_remesh" else "EDIT_MESH")
    assert case["undo_differs"] == [], case["undo_differs"]
    line = case["reports"][0]
    if case["result"] == ["CANCELLED"]:
        name = key.split("/")[0]
        assert line.startswith(f"Warning: {LABELS[op]}: nothing changed ({name}: "), line
        assert case["changed_arrays"] == []           # byte for byte as it was
    else:
        assert line.startswith("Info: ")


@pytest.mark.parametrize("key", [k for k in ALL if "select_thin" not in k])
def test_remesh_and_flip_change_only_what_they_report(cases, key):
    case = cases[key]
    if case["result"] != ["FINISHED"]:
        return                                         # checked above: bytes unchanged
    last, before, after = case["last"], case["before"], case["after"]
    assert case["reports"][0] == f"Info: {last['summary']}"
    reported = last["flips"] if case["operator"] == "flip" else last["regions_changed"]
    if reported == 0:
        assert case["changed_arrays"] == []
        return
    # every layer, vertex group, shape key and material slot is still there
    assert set(before["layers"]) <= set(after["layers"])
    for name in ("groups", "keys", "materials"):
        assert after[name] == before[name]
    # original positions kept bit for bit; the count of new ones is the reported one
    removed, kept = kept_prefix(before, after)
    assert len(after["positions"]) - kept == last["added_vertices"]
    if case["operator"] == "flip":
        assert removed == [] and after["positions"] == before["positions"]
        assert len(after["faces"]) == len(before["faces"])
    gone = face_keys(before) - face_keys(after)
    new = face_keys(after) - face_keys(before)
    for i in removed:           # a removed vertex belonged only to replaced faces
        for f in before["faces"]:
            if i in f:
                assert gone[next(iter(face_keys({**before, "faces": [f]})))] > 0, (i, f)
    # the report's triangle counts recount from the faces that changed; a flip run
    # counts every triangle of a changed region, the unflipped ones too
    if case["operator"] == "flip":
        assert triangle_count(gone) == triangle_count(new) <= last["triangles_before"] \
            == last["triangles_after"]
        assert triangle_count(gone) > 0
    else:
        assert last["triangles_before"] == triangle_count(gone)
        assert last["triangles_after"] == triangle_count(new)
    # closed stays closed (and oriented); no new T-junction or non-manifold edge
    if is_closed(before):
        assert is_closed(after)
        if is_oriented(before):
            assert is_oriented(after)
    assert t_junctions(after) <= t_junctions(before)
    # no new vertex lands on the position of another one (float32 storage)
    assert shared_positions(after) <= shared_positions(before)
    old_nm = non_manifold_edges(before)
    for p, q in non_manifold_edges(after):
        assert any(inside_or_end(p, a, b) and inside_or_end(q, a, b) for a, b in old_nm), \
            (p, q)
    if not case["validate_before"]:
        assert not case["validate_changed"]


def inside_or_end(p, a, b):
    return p in (a, b) or bool(inside_segment([p], a, b)[0])


@pytest.mark.parametrize("mesh", MUST_CHANGE)
def test_remesh_changes_the_flat_regions_of_sound_parts(cases, mesh):
    for op in ("object_remesh", "edit_remesh"):
        case = cases[f"{mesh}/{op}"]
        assert case["result"] == ["FINISHED"], case["reports"]
        assert case["last"]["regions_changed"] > 0
        assert case["changed_arrays"]


@pytest.mark.parametrize("key", [k for k in ALL if "select_thin" in k])
def test_select_thin_changes_only_the_selection(cases, key):
    case = cases[key]
    if case["result"] != ["FINISHED"]:
        return
    assert set(case["changed_arrays"]) <= SELECTION_LAYERS
    after = case["after"]
    p = np.asarray(after["positions"])
    hidden = set(after["hidden_faces"])
    thin = [i for i, f in enumerate(after["faces"])
            if len(f) == 3 and i not in hidden and smallest_angle(p[f]) < THIN_ANGLE]
    assert after["selected_faces"] == thin
    assert case["reports"][0].startswith(f"Info: Selected {len(thin)} triangles")


# ---------------------------------------------------------------- named outcomes
@pytest.mark.parametrize("mesh", ["nan", "inf"])
def test_non_finite_positions_are_refused_by_every_operator(cases, mesh):
    for op in OPERATORS:
        case = cases[f"{mesh}/{op}"]
        assert case["result"] == ["CANCELLED"], (op, case["reports"])
        assert "not finite (NaN or inf), e.g. vertex 5" in case["reports"][0]
        assert case["changed_arrays"] == []


@pytest.mark.parametrize("mesh", ["repeated_vertex", "hole_touching"])
def test_faces_repeating_a_vertex_are_refused_before_any_edit(cases, mesh):
    # (bpy 4.2 hangs deselecting such a face through bmesh: select_thin refuses too)
    for op in ("object_remesh", "edit_remesh", "flip", "select_thin"):
        case = cases[f"{mesh}/{op}"]
        assert case["result"] == ["CANCELLED"]
        assert "use a vertex more than once" in case["reports"][0]


def test_duplicate_faces_left_out_or_refused(cases):
    for op in ("object_remesh", "edit_remesh"):
        case = cases[f"duplicate_faces/{op}"]
        assert case["result"] == ["CANCELLED"]
        assert "repeat the corners of another face" in case["reports"][0]
    flip = cases["duplicate_faces/flip"]
    assert flip["result"] == ["FINISHED"] and "duplicate faces" in flip["last"]["skip_reasons"]
    assert flip["last"]["flips"] > 0


def test_empty_mesh_and_empty_selection_change_nothing(cases):
    for op in OPERATORS:
        assert cases[f"empty/{op}"]["result"] == ["FINISHED"]
        assert cases[f"empty/{op}"]["changed_arrays"] == []
    for op in ("edit_remesh", "flip"):
        case = cases[f"no_selection/{op}"]
        assert case["result"] == ["FINISHED"] and case["changed_arrays"] == []
        assert case["last"]["regions_changed"] == 0
    # Object Mode works on every face, selected or not
    assert cases["no_selection/object_remesh"]["last"]["regions_changed"] > 0


def test_point_cap_is_reported(cases):
    for op in ("object_remesh", "edit_remesh"):
        case = cases[f"point_cap/{op}"]
        assert case["result"] == ["FINISHED"]
        assert "6 stopped at the point limit" in case["last"]["summary"]   # 6 box sides


def test_nearly_collinear_fan_is_skipped_rather_than_collapsed(cases):
    """The remeshed fan would hold new points within a float32 step of others (they
    would share a position in the host): the region is reported skipped and the mesh
    stays byte for byte as it was."""
    for op in ("object_remesh", "edit_remesh"):
        case = cases[f"kettner_fan/{op}"]
        assert case["result"] == ["FINISHED"]
        assert case["last"]["regions_changed"] == 0
        assert "degenerate result" in case["last"]["skip_reasons"]
        assert case["changed_arrays"] == []


def test_failed_write_restores_every_byte(facts):
    """A write that fails after the new topology is in the mesh: cancelled, one line,
    and the mesh restored byte for byte (no layer added on the way)."""
    case = facts["write_failure"]
    assert case["escaped"] is None and case["other_output"] == []
    assert case["result"] == ["CANCELLED"]
    assert len(case["reports"]) == 1
    assert "nothing changed (RuntimeError: injected write failure)" in case["reports"][0]
    assert case["changed_arrays"] == [], " ".join(case["changed_arrays"])

