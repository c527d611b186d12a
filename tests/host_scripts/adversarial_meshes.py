"""Scenario: install and enable the zip, then run every operator of the add-on on
invented adversarial meshes held by the host as they are (no ``Mesh.validate``, so zero-
area faces, repeated corners, duplicate faces and non-finite positions stay in), and
report what the host says before, after and after an undo.

Each mesh carries every kind of data the add-on must keep: a UV map, a point colour, a
corner colour, a generic point float and face integer, a vertex group, two material
slots, smooth flags, seams and sharp edges, and a shape key.  For each (mesh, operator)
the scenario records the result, the operator's report lines (the host prints reports
in background mode; they are captured at the file-descriptor level), whether an
exception escaped, a byte-for-byte comparison of every array before and after, the
positions/faces/layer names for the test's own checks, and whether an undo gives back
the bytes of before.  Usage: python adversarial_meshes.py ZIP"""

import ctypes
import math
import os
import sys
import tempfile
import traceback
from itertools import pairwise

import bpy
import numpy as np
from common import EXTENSION, install_and_enable, report
from invented_meshes import rotation
from scene_setup import clear_scene, raw_arrays, repair_flag_layers, select_only

F32_ULP_HALF = 2.0 ** -24          # spacing of float32 values in [0.5, 1) (IEEE 754)
OPERATORS = ("object_remesh", "edit_remesh", "flip", "select_thin")
REPORT_PREFIXES = ("Info: ", "Warning: ", "Error: ")


# ---------------------------------------------------------------- invented meshes
def grid_panel(nx, ny, size=1.0):
    """nx x ny quads in z = 0, counter-clockwise from +z; vertex (i, j) is j(nx+1)+i."""
    verts = [(i * size, j * size, 0.0) for j in range(ny + 1) for i in range(nx + 1)]
    faces = []
    for j in range(ny):
        for i in range(nx):
            a = j * (nx + 1) + i
            faces.append([a, a + 1, a + nx + 2, a + nx + 1])
    return np.array(verts, dtype=np.float64), faces


def sliver_panel():
    """A 3 x 2 quad panel whose lower right quad is a fan of five slivers from its lower
    left corner to points on the panel's right border (open, flat, no T-junction)."""
    verts, faces = grid_panel(3, 2)
    verts = list(map(tuple, verts))
    rim = [3]
    for y in (0.1, 0.25, 0.5, 0.8):
        rim.append(len(verts))
        verts.append((3.0, y, 0.0))
    rim.append(7)
    faces = [f for f in faces if f != [2, 3, 7, 6]]
    faces += [[2, p, q] for p, q in pairwise(rim)] + [[2, 7, 6]]
    return np.array(verts), faces


def zero_area():
    """The sliver panel plus a triangle hanging off a border vertex along the border's
    line (three collinear corners: zero area), and a quad whose corners coincide in
    pairs (two vertices at one position, two at another)."""
    verts, faces = sliver_panel()
    n = len(verts)
    verts = np.vstack((verts, [(4.0, 0.0, 0.0), (5.0, 0.0, 0.0), (-1.0, 2.0, 0.0),
                               (-1.0, 2.0, 0.0), (-1.0, 1.0, 0.0), (-1.0, 1.0, 0.0)]))
    return verts, faces + [[3, n, n + 1], [n + 2, n + 4, n + 5, n + 3]]


def repeated_vertex():
    """The sliver panel whose first quad lists a corner twice ([a, b, b, c, d]) and whose
    upper middle quad visits a corner twice ([a, b, c, a, d])."""
    verts, faces = sliver_panel()
    faces = [list(f) for f in faces]
    a, b, c, d = faces[0]
    faces[0] = [a, b, b, c, d]
    a, b, c, d = faces[4]
    faces[4] = [a, b, c, a, d]
    return verts, faces


def non_manifold():
    """Two coplanar sliver panels sharing the edge x = 0 with a fin standing on it: three
    faces on that edge (and on its neighbour, where a second fin leans)."""
    left, lf = sliver_panel()
    right = left * (-1.0, 1.0, 1.0)              # mirrored: reverse the faces
    n = len(left)
    verts = np.vstack((left, right))
    faces = [list(f) for f in lf] + [[n + v for v in reversed(f)] for f in lf]
    # weld the mirrored copy's x = 0 column onto the original's
    column = {n + v: v for v in range(n) if left[v, 0] == 0.0}
    faces = [[column.get(v, v) for v in f] for f in faces]
    top = len(verts)
    verts = np.vstack((verts, [(0.0, 0.0, 1.0), (0.0, 1.0, 1.0), (0.7, 1.0, 0.7),
                               (0.7, 2.0, 0.7)]))
    faces += [[0, 4, top + 1, top], [4, 8, top + 3, top + 2]]
    return verts, faces


def duplicate_faces():
    """The sliver panel with one quad listed twice and one sliver listed reversed."""
    verts, faces = sliver_panel()
    return verts, faces + [list(faces[1]), list(reversed(faces[6]))]


def loose_parts():
    """The sliver panel plus two loose edges (a chain) and two loose vertices."""
    verts, faces = sliver_panel()
    n = len(verts)
    verts = np.vstack((verts, [(0, 0, 2), (1, 0, 2), (2, 0.5, 2), (5, 5, 5), (6, 6, 6)]))
    return verts, faces, [(n, n + 1), (n + 1, n + 2)]


def fan_box():
    """A closed 3 x 2 x 1 box whose top is a fan of slivers from one corner to points
    clustered on the top's front edge, the front side an n-gon through those points;
    tilted off the axes (the host stores the float32 rounding of every position)."""
    xs = [0.0, 0.01, 0.03, 0.07, 1.5, 2.9, 2.95, 3.0]
    corners = [(0, 0, 0), (3, 0, 0), (3, 2, 0), (0, 2, 0), (0, 0, 1), (3, 0, 1), (3, 2, 1),
               (0, 2, 1)]
    verts = [tuple(map(float, c)) for c in corners]
    rim = [4]
    for x in xs[1:-1]:
        rim.append(len(verts))
        verts.append((x, 0.0, 1.0))
    rim.append(5)
    faces = [[0, 3, 2, 1],                          # bottom, outward -z
             [1, 2, 6, 5], [2, 3, 7, 6], [3, 0, 4, 7],
             [0, 1] + rim[::-1]]                    # front (y = 0) through the rim
    faces += [[7, p, q] for p, q in pairwise(rim)] + [[7, 5, 6]]   # top fan
    verts = np.array(verts) @ rotation(0.4, -0.7, 0.3).T + (1.0, 2.0, 3.0)
    return verts, faces


def tiny_at_offset():
    """At 1e6 the float32 spacing is 0.0625 (IEEE 754): a sliver panel of 1 mm cells
    collapses onto a few points there, while the unit-size one beside it keeps its
    shape to a float32 step."""
    small, sf = sliver_panel()
    unit, uf = sliver_panel()
    offset = np.array([1e6, 1e6, 1e6])
    verts = np.vstack((small * 1e-3 + offset, unit + offset + (10.0, 0.0, 0.0)))
    return verts, [list(f) for f in sf] + [[len(small) + v for v in f] for f in uf]


def scaled(factor):
    def build():
        verts, faces = sliver_panel()
        return verts @ rotation(0.3, 0.5, -0.2).T * factor, faces
    return build


def kettner_fan():
    """A fan from (0, 3) to a zigzag chain of points (0.5 + i u, 0.5 + j u), u the float32
    step near 0.5, followed by (12, 12) and (24, 24): every rim point lies within a few
    steps of the line y = x (the orientation grid of Kettner, Mehlhorn, Pion, Schirra,
    Yap 2008, here at float32 resolution, exactly stored by the host)."""
    chain = []
    for i in range(4):
        for j in (range(4) if i % 2 == 0 else reversed(range(4))):
            chain.append((0.5 + i * F32_ULP_HALF, 0.5 + j * F32_ULP_HALF, 0.0))
    chain += [(12.0, 12.0, 0.0), (24.0, 24.0, 0.0)]
    verts = np.array([(0.0, 3.0, 0.0)] + chain)
    faces = [[0, k, k + 1] for k in range(1, len(chain))]
    return verts, faces


def hole_touching():
    """A 3 x 3 panel without its corner quad and its centre quad (the hole touches the
    notch at one vertex), beside a single n-gon whose inner loop (a hole) touches its
    outline at one corner: the face visits that corner twice."""
    verts, faces = grid_panel(3, 3)
    faces = [f for i, f in enumerate(faces) if i not in (0, 4)]
    n = len(verts)
    ring = np.array([(5, 0, 0), (8, 0, 0), (8, 3, 0), (5, 3, 0), (6, 2, 0), (7, 1, 0)],
                    dtype=np.float64)
    verts = np.vstack((verts, ring))
    # outline counter-clockwise from (5, 0) back to it, then the triangular hole
    # (5, 0) -> (6, 2) -> (7, 1) clockwise
    keyhole = [n, n + 1, n + 2, n + 3, n, n + 4, n + 5]
    return verts, faces + [keyhole]


def non_finite(value):
    def build():
        verts, faces = sliver_panel()
        verts = verts.copy()
        verts[5, 1] = value
        return verts, faces
    return build


def empty():
    return np.zeros((0, 3)), []


MESHES = {
    "zero_area": zero_area,
    "repeated_vertex": repeated_vertex,
    "non_manifold": non_manifold,
    "duplicate_faces": duplicate_faces,
    "loose_parts": loose_parts,
    "fan_box": fan_box,
    "tiny_at_1e6": tiny_at_offset,
    "scaled_1e-9": scaled(1e-9),
    "scaled_1e9": scaled(1e9),
    "kettner_fan": kettner_fan,
    "hole_touching": hole_touching,
    "nan": non_finite(float("nan")),
    "inf": non_finite(float("inf")),
    "empty": empty,
    "no_selection": sliver_panel,
    "point_cap": fan_box,
}


def remesh_options(name, verts):
    """Options for the remesh operators: an edge-length limit of a quarter of the mesh
    size makes every flat region change; the point-cap case allows 3 new points."""
    finite = verts[np.isfinite(verts).all(axis=1)]
    size = float((finite.max(axis=0) - finite.min(axis=0)).max()) if len(finite) else 1.0
    options = {"max_edge_length": size / 4, "min_angle": 30.0}
    if name == "point_cap":
        options.update(max_edge_length=size / 40, point_limit=3)
    return options


# ---------------------------------------------------------------- building in the host
def boundary_edge_set(faces):
    count = {}
    for f in faces:
        for a, b in zip(f, f[1:] + f[:1]):
            key = (min(a, b), max(a, b))
            count[key] = count.get(key, 0) + 1
    return {e for e, c in count.items() if c == 1}


def build_object(name, verts, faces, loose=()):
    """The mesh as given (no validation), with every kind of data decorated on it."""
    me = bpy.data.meshes.new(name)
    me.from_pydata(np.asarray(verts, dtype=np.float64).tolist(), list(loose),
                   [list(f) for f in faces])
    repair_flag_layers(me)
    ob = bpy.data.objects.new(name, me)
    bpy.context.scene.collection.objects.link(ob)
    if len(me.vertices):
        decorate(ob)
    return ob


def decorate(ob):
    """Data affine in the normalised position (u, w, h in [0, 1] over the finite
    vertices' box), so it never splits a flat region by itself."""
    me = ob.data
    co = np.empty(3 * len(me.vertices), dtype=np.float32)
    me.vertices.foreach_get("co", co)
    p = co.reshape(-1, 3).astype(np.float64)
    finite = np.isfinite(p).all(axis=1)
    lo = p[finite].min(axis=0) if finite.any() else np.zeros(3)
    span = np.maximum(p[finite].max(axis=0) - lo, 1e-30) if finite.any() else np.ones(3)
    u, w, h = np.nan_to_num((p - lo) / span, nan=0.5, posinf=1.0, neginf=0.0).T
    corner = np.empty(len(me.loops), dtype=np.int32)
    me.loops.foreach_get("vertex_index", corner)
    cu, cw = u[corner], w[corner]
    me.uv_layers.new(name="UVMap").data.foreach_set(
        "uv", np.column_stack((0.1 + 0.8 * cu, 0.2 + 0.6 * cw)).astype(np.float32).ravel())
    me.color_attributes.new("tint", 'FLOAT_COLOR', 'POINT').data.foreach_set(
        "color", np.column_stack((u, w, 0.5 + 0.2 * h, np.ones_like(u)))
        .astype(np.float32).ravel())
    me.color_attributes.new("paint", 'BYTE_COLOR', 'CORNER').data.foreach_set(
        "color_srgb", np.column_stack((cu, 1 - cw, 0.5 * cu + 0.25, np.ones_like(cu)))
        .astype(np.float32).ravel())
    me.attributes.new("height_field", 'FLOAT', 'POINT').data.foreach_set(
        "value", (2.0 * u - 3.0 * w + h).astype(np.float32))
    me.attributes.new("face_tag", 'INT', 'FACE').data.foreach_set(
        "value", np.full(len(me.polygons), 7, dtype=np.int32))
    group = ob.vertex_groups.new(name="Weight")
    for i, value in enumerate((0.2 + 0.6 * u).tolist()):
        group.add([i], value, 'REPLACE')
    for mat in ("stone", "moss"):
        me.materials.append(bpy.data.materials.get(mat) or bpy.data.materials.new(mat))
    me.polygons.foreach_set("use_smooth", np.ones(len(me.polygons), dtype=bool))
    edges = np.empty(2 * len(me.edges), dtype=np.int32)
    me.edges.foreach_get("vertices", edges)
    edges = edges.reshape(-1, 2).tolist()
    outline = boundary_edge_set([list(f.vertices) for f in me.polygons])
    sharp = [(min(a, b), max(a, b)) in outline for a, b in edges]
    me.edges.foreach_set("use_edge_sharp", sharp)
    seam = [False] * len(edges)
    if any(sharp):
        seam[sharp.index(True)] = True           # one outline edge is a seam too
    me.edges.foreach_set("use_seam", seam)
    ob.shape_key_add(name="Basis")
    key = ob.shape_key_add(name="Lift", from_mix=False)
    lifted = p + np.column_stack((0.1 * u, 0 * u, 0.05 + 0.1 * w)) * span.max()
    key.data.foreach_set("co", lifted.astype(np.float32).ravel())


def select_all_faces(ob, on=True):
    me = ob.data
    for items in (me.vertices, me.edges, me.polygons):
        if len(items):
            items.foreach_set("select", np.full(len(items), on, dtype=bool))


# ---------------------------------------------------------------- what the host says
def full_raw(ob):
    """Every array of the mesh as bytes, plus the names around them."""
    out = raw_arrays(ob)
    me = ob.data
    out["materials"] = [m.name if m else None for m in me.materials]
    out["group_names"] = [g.name for g in ob.vertex_groups]
    out["uv_names"] = [layer.name for layer in me.uv_layers]
    out["key_names"] = [] if me.shape_keys is None else [
        kb.name for kb in me.shape_keys.key_blocks]
    return out


def _get(collection, key, dtype, comps=1):
    buf = np.empty(len(collection) * comps, dtype=dtype)
    if len(collection):
        collection.foreach_get(key, buf)
    return buf if comps == 1 else buf.reshape(-1, comps)


def state(ob):
    """Positions (float32 as stored, given as floats), faces, edges, layer names."""
    me = ob.data
    return {
        "positions": _get(me.vertices, "co", np.float32, 3).astype(float).tolist(),
        "faces": [list(p.vertices) for p in me.polygons],
        "edges": _get(me.edges, "vertices", np.int32, 2).tolist(),
        "selected_faces": np.flatnonzero(_get(me.polygons, "select", bool)).tolist(),
        "hidden_faces": np.flatnonzero(_get(me.polygons, "hide", bool)).tolist(),
        "layers": sorted(f"{a.name}:{a.domain}:{a.data_type}" for a in me.attributes
                         if not a.name.startswith(".")),
        "groups": [g.name for g in ob.vertex_groups],
        "keys": [] if me.shape_keys is None else [kb.name for kb in me.shape_keys.key_blocks],
        "materials": [m.name if m else None for m in me.materials],
    }


def differing(before, after):
    return sorted(k for k in before.keys() | after.keys() if before.get(k) != after.get(k))


class Captured:
    """Everything written to file descriptors 1 and 2 while inside (the host prints an
    operator's reports there in background mode)."""

    libc = ctypes.CDLL(None)

    def __enter__(self):
        self._flush()
        self.saved = os.dup(1), os.dup(2)
        self.file = tempfile.TemporaryFile()
        os.dup2(self.file.fileno(), 1)
        os.dup2(self.file.fileno(), 2)
        return self

    def __exit__(self, *exc):
        self._flush()
        os.dup2(self.saved[0], 1)
        os.dup2(self.saved[1], 2)
        for fd in self.saved:
            os.close(fd)
        self.file.seek(0)
        self.text = self.file.read().decode("utf-8", "replace")
        self.file.close()
        return False

    def _flush(self):
        sys.stdout.flush()
        sys.stderr.flush()
        self.libc.fflush(None)


def call(operator, **props):
    """Run an operator; (result, report lines, escaped exception or None, other output)."""
    escaped = None
    result = []
    with Captured() as out:
        try:
            result = sorted(operator(**props))
        except Exception as exc:  # noqa: BLE001 (recorded: the test fails on it)
            escaped = f"{type(exc).__name__}: {exc}\n{traceback.format_exc()}"
    lines = [ln for ln in out.text.splitlines() if ln.strip()]
    reports = [ln for ln in lines if ln.startswith(REPORT_PREFIXES)]
    return result, reports, escaped, [ln for ln in lines if ln not in reports]


def last_run():
    last = bpy.context.scene.flat_region_remesh.last_run
    return {name: getattr(last, name) for name in (
        "operator", "summary", "regions_changed", "regions_skipped", "skip_reasons",
        "triangles_before", "triangles_after", "flips", "added_vertices")}


def reset_last_run():
    bpy.context.scene.flat_region_remesh.last_run.summary = ""


# ---------------------------------------------------------------- one case
def to_edit(ob):
    select_only([ob])
    bpy.context.tool_settings.mesh_select_mode = (False, False, True)
    bpy.ops.object.mode_set(mode='EDIT')


def to_object():
    bpy.ops.object.mode_set(mode='OBJECT')


def run_case(name, op):
    clear_scene()
    built = MESHES[name]()
    verts, faces = built[0], built[1]
    ob = build_object(name, verts, faces, built[2] if len(built) > 2 else ())
    select_all_faces(ob, on=name != "no_selection")
    reset_last_run()
    remesh = remesh_options(name, np.asarray(verts, dtype=np.float64).reshape(-1, 3))
    case = {"operator": op, "options": remesh if "remesh" in op else {}}
    if op == "object_remesh":
        select_only([ob])
        bpy.ops.ed.undo_push(message="built")
        case["before"], raw = state(ob), full_raw(ob)
        case["validate_before"] = validate_changes(ob)
        run = call(bpy.ops.object.remesh_flat_regions, **remesh)
        case["mode_after"] = bpy.context.mode
        # in background mode the UI's undo push after a REGISTER + UNDO operator does
        # not happen; this stands in for it
        bpy.ops.ed.undo_push(message="ran")
        ob = bpy.data.objects[name]
    else:
        to_edit(ob)
        bpy.ops.ed.undo_push(message="edit mode entered")
        to_object()             # one round trip first: Edit Mode rewrites some layers
        case["before"], raw = state(ob), full_raw(ob)
        case["validate_before"] = validate_changes(ob)
        to_edit(ob)
        if op == "edit_remesh":
            run = call(bpy.ops.mesh.remesh_flat_regions, **remesh)
        elif op == "flip":
            run = call(bpy.ops.mesh.flip_to_better_angles)
        else:
            run = call(bpy.ops.mesh.select_thin_triangles, min_angle=20.0)
        case["mode_after"] = bpy.context.mode
        bpy.ops.ed.undo_push(message="ran")
        to_object()
    case["result"], case["reports"], case["escaped"], case["other_output"] = run
    case["after"] = state(ob)
    after_raw = full_raw(ob)
    case["changed_arrays"] = differing(raw, after_raw)
    case["last"] = last_run()
    case["validate_changed"] = validate_changes(ob)
    # undo: back to the bytes of before
    if op == "object_remesh":
        bpy.ops.ed.undo()
    else:
        to_edit(ob)
        bpy.ops.ed.undo()
        to_object()
    ob = bpy.data.objects[name]
    case["undo_differs"] = differing(raw, full_raw(ob))
    return case


def validate_changes(ob):
    """Whether the host's own Mesh.validate would fix anything in the geometry, run on
    a new mesh built from the positions, edges and faces.  (Not on ``Mesh.copy()``: a
    fresh copy shares its arrays with the original, and the host's validate edits them
    in place - Blender 5.0.1 zeroes NaN positions, 4.2 rewrites the corners of faces
    that repeat a vertex - so the original would change.)"""
    mesh = ob.data
    co = _get(mesh.vertices, "co", np.float32, 3)
    edges = _get(mesh.edges, "vertices", np.int32, 2)
    starts = _get(mesh.polygons, "loop_start", np.int32)
    totals = _get(mesh.polygons, "loop_total", np.int32)
    corners = _get(mesh.loops, "vertex_index", np.int32)
    corner_edges = _get(mesh.loops, "edge_index", np.int32)
    copy = bpy.data.meshes.new(mesh.name + "_validate")
    copy.vertices.add(len(co))
    copy.vertices.foreach_set("co", co.ravel())
    copy.edges.add(len(edges))
    copy.edges.foreach_set("vertices", edges.ravel())
    copy.loops.add(len(corners))
    copy.loops.foreach_set("vertex_index", corners)
    copy.loops.foreach_set("edge_index", corner_edges)
    copy.polygons.add(len(starts))
    copy.polygons.foreach_set("loop_start", starts)      # sizes follow from the starts
    with Captured():
        changed = bool(copy.validate(verbose=False))
    bpy.data.meshes.remove(copy)
    return changed


def write_failure():
    """The write fails after the new topology is in the mesh: the restored mesh must be
    byte for byte the one before (the fan box: closed, all its data)."""
    bridge = sys.modules[EXTENSION + ".mesh_bridge"]
    clear_scene()
    ob = build_object("fan_box", *fan_box())
    select_only([ob])
    raw = full_raw(ob)
    original = bridge._write_data

    def failing(*args, **kwargs):
        original(*args, **kwargs)
        raise RuntimeError("injected write failure")

    bridge._write_data = failing
    try:
        result, reports, escaped, other = call(bpy.ops.object.remesh_flat_regions,
                                               max_edge_length=0.5)
    finally:
        bridge._write_data = original
    return {"result": result, "reports": reports, "escaped": escaped, "other_output": other,
            "changed_arrays": differing(raw, full_raw(bpy.data.objects["fan_box"]))}


def main(zip_path):
    facts = {"install": install_and_enable(zip_path), "cases": {}}
    for name in MESHES:
        for op in OPERATORS:
            facts["cases"][f"{name}/{op}"] = run_case(name, op)
    facts["write_failure"] = write_failure()
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
