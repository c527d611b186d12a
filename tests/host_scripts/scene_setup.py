"""Host-side helpers of the operator scenarios: put the invented meshes into the scene
(with the panel's attributes, vertex groups, shape keys, materials, seams and sharp
edges) and read back what the host's mesh API reports."""

import bpy
import numpy as np
from invented_meshes import (
    PANEL_SEAM_X,
    PANEL_XS,
    PANEL_YS,
    boundary_edges,
    group_falloff,
    group_weight,
    height_field,
    lift_offset,
    navmesh_floor,
    open_panel,
    paint,
    panel_coordinates,
    panel_sheet,
    shear_offset,
    tilted_solid_plate,
    tint,
    uv_detail,
    uv_island,
)
from mathutils import Matrix

PANEL_MATRIX = Matrix.Translation((0.3, 0.2, -0.5)) @ Matrix.Scale(1.5, 4)


def clear_scene():
    if bpy.context.object is not None and bpy.context.object.mode != 'OBJECT':
        bpy.ops.object.mode_set(mode='OBJECT')
    for ob in list(bpy.data.objects):
        bpy.data.objects.remove(ob)
    for me in list(bpy.data.meshes):
        bpy.data.meshes.remove(me)


def repair_flag_layers(mesh):
    """Blender 5.0.1's from_pydata (Mesh.update(calc_edges=True)) leaves ".select_edge"
    as a 2-integer layer, and writing edge selection through it crashes; such a layer
    is removed (the host recreates it as booleans on the next selection write)."""
    for name in (".select_edge", ".hide_edge"):
        layer = mesh.attributes.get(name)
        if layer is not None and layer.data_type != 'BOOLEAN':
            mesh.attributes.remove(layer)


def link(name, verts, faces):
    mesh = bpy.data.meshes.new(name)
    mesh.from_pydata(np.asarray(verts).tolist(), [], [list(f) for f in faces])
    repair_flag_layers(mesh)
    mesh.validate()
    ob = bpy.data.objects.new(name, mesh)
    bpy.context.scene.collection.objects.link(ob)
    return ob


def select_only(objects, active=None):
    for ob in bpy.context.scene.objects:
        ob.select_set(ob in objects)
    bpy.context.view_layer.objects.active = active or objects[0]


def select_faces(ob, chosen):
    """Face selection (Object Mode), with its vertices and edges."""
    me = ob.data
    face_sel = np.zeros(len(me.polygons), dtype=bool)
    face_sel[list(chosen)] = True
    me.polygons.foreach_set("select", face_sel)
    vert_sel = np.zeros(len(me.vertices), dtype=bool)
    edge_sel = np.zeros(len(me.edges), dtype=bool)
    for f in chosen:
        poly = me.polygons[f]
        vert_sel[list(poly.vertices)] = True
        edge_sel[[me.loops[c].edge_index for c in poly.loop_indices]] = True
    me.vertices.foreach_set("select", vert_sel)
    me.edges.foreach_set("select", edge_sel)


def add_plate():
    verts, faces, volume = tilted_solid_plate()
    return link("plate", verts, faces), volume


def add_floor():
    return link("floor", *navmesh_floor())


def add_panel():
    """The open panel with two UV maps (one with a seam between two islands), a point
    and a corner colour, two vertex groups, a generic point float and face int, two
    materials, two shape keys, seams and sharp outline edges; all data affine in
    position (per UV island)."""
    verts, faces = open_panel()
    ob = link("panel", verts, faces)
    ob.matrix_world = PANEL_MATRIX
    me = ob.data
    sheet, _ = panel_sheet()
    u, w, h = panel_coordinates(verts).T
    corner_verts = np.array([v for f in faces for v in f])
    face_island = np.array([int(sheet[f, 0].mean() > PANEL_SEAM_X) for f in faces])
    corner_island = np.repeat(face_island, [len(f) for f in faces])
    cu, cw, ch = u[corner_verts], w[corner_verts], h[corner_verts]
    uv = np.where(corner_island[:, None] == 0, uv_island(cu, cw, ch, 0),
                  uv_island(cu, cw, ch, 1))
    me.uv_layers.new(name="UVMap").data.foreach_set("uv", uv.astype(np.float32).ravel())
    me.uv_layers.new(name="Detail").data.foreach_set(
        "uv", uv_detail(cu, cw, ch).astype(np.float32).ravel())
    me.color_attributes.new("tint", 'FLOAT_COLOR', 'POINT').data.foreach_set(
        "color", tint(u, w, h).astype(np.float32).ravel())
    me.color_attributes.new("paint", 'BYTE_COLOR', 'CORNER').data.foreach_set(
        "color_srgb", paint(cu, cw, ch).astype(np.float32).ravel())
    me.attributes.new("height_field", 'FLOAT', 'POINT').data.foreach_set(
        "value", height_field(u, w, h).astype(np.float32))
    me.attributes.new("face_tag", 'INT', 'FACE').data.foreach_set(
        "value", np.full(len(faces), 7, dtype=np.int32))
    for name, field in (("Weight", group_weight), ("Falloff", group_falloff)):
        group = ob.vertex_groups.new(name=name)
        for i, value in enumerate(field(u, w, h).tolist()):
            group.add([i], value, 'REPLACE')
    for name in ("stone", "moss"):
        me.materials.append(bpy.data.materials.new(name))
    me.polygons.foreach_set("material_index", face_island.astype(np.int32))
    me.polygons.foreach_set("use_smooth", np.ones(len(faces), dtype=bool))
    edges = np.empty(2 * len(me.edges), dtype=np.int32)
    me.edges.foreach_get("vertices", edges)
    edges = edges.reshape(-1, 2)
    on_seam = np.isclose(sheet[edges, 0], PANEL_SEAM_X).all(axis=1)
    me.edges.foreach_set("use_seam", on_seam)
    outline = {(min(a, b), max(a, b)) for a, b in boundary_edges([list(f) for f in faces])}
    me.edges.foreach_set("use_edge_sharp", np.array(
        [(min(a, b), max(a, b)) in outline for a, b in edges.tolist()]))
    ob.shape_key_add(name="Basis")
    for name, offset in (("Lift", lift_offset), ("Shear", shear_offset)):
        key = ob.shape_key_add(name=name, from_mix=False)
        key.data.foreach_set("co", (verts + offset(u, w, h)).astype(np.float32).ravel())
    return ob


def grid_size():
    return len(PANEL_XS), len(PANEL_YS)


def _get(collection, key, dtype, comps=1):
    buf = np.empty(len(collection) * comps, dtype=dtype)
    if len(collection):
        collection.foreach_get(key, buf)
    return buf if comps == 1 else buf.reshape(-1, comps)


def mesh_state(ob, full=False):
    """What the host's mesh API reports (Object Mode): positions, faces, edges and their
    flags; with full=True also every attribute, vertex group and shape key."""
    me = ob.data
    state = {
        "positions": _get(me.vertices, "co", np.float32, 3).astype(float).tolist(),
        "faces": [list(p.vertices) for p in me.polygons],
        "edges": _get(me.edges, "vertices", np.int32, 2).tolist(),
        "seam": np.flatnonzero(_get(me.edges, "use_seam", bool)).tolist(),
        "sharp": np.flatnonzero(_get(me.edges, "use_edge_sharp", bool)).tolist(),
        "selected": np.flatnonzero(_get(me.polygons, "select", bool)).tolist(),
        "matrix": [list(row) for row in ob.matrix_world],
    }
    copy = me.copy()
    state["validate_changed"] = bool(copy.validate(verbose=False))
    bpy.data.meshes.remove(copy)
    if full:
        state["uv"] = {layer.name: _get(layer.data, "uv", np.float32, 2).astype(float).tolist()
                       for layer in me.uv_layers}
        state["tint"] = _get(me.color_attributes["tint"].data, "color", np.float32,
                             4).astype(float).tolist()
        state["paint"] = _get(me.color_attributes["paint"].data, "color_srgb", np.float32,
                              4).astype(float).tolist()
        state["height_field"] = _get(me.attributes["height_field"].data, "value",
                                     np.float32).astype(float).tolist()
        state["face_tag"] = _get(me.attributes["face_tag"].data, "value", np.int32).tolist()
        state["material"] = _get(me.polygons, "material_index", np.int32).tolist()
        state["smooth"] = _get(me.polygons, "use_smooth", bool).tolist()
        names = {g.index: g.name for g in ob.vertex_groups}
        state["groups"] = [{names[g.group]: g.weight for g in v.groups} for v in me.vertices]
        state["shape_keys"] = {kb.name: _get(kb.data, "co", np.float32, 3).astype(float).tolist()
                               for kb in me.shape_keys.key_blocks}
    return state


def raw_arrays(ob):
    """Every bulk array of the mesh as bytes (for byte-for-byte comparisons)."""
    me = ob.data
    out = {}
    for attr in me.attributes:
        key = {"FLOAT2": "vector", "FLOAT_VECTOR": "vector", "FLOAT_COLOR": "color",
               "BYTE_COLOR": "color"}.get(attr.data_type, "value")
        comps = {"FLOAT2": 2, "FLOAT_VECTOR": 3, "FLOAT_COLOR": 4, "BYTE_COLOR": 4,
                 "INT32_2D": 2}.get(attr.data_type, 1)
        dtype = {"BOOLEAN": bool, "INT": np.int32, "INT8": np.int32,
                 "INT32_2D": np.int32}.get(attr.data_type, np.float32)
        size = {"POINT": len(me.vertices), "EDGE": len(me.edges), "FACE": len(me.polygons),
                "CORNER": len(me.loops)}[attr.domain]
        buf = np.empty(size * comps, dtype=dtype)
        attr.data.foreach_get(key, buf)
        out[f"attr:{attr.name}"] = buf.tobytes().hex()
    for collection in ("vertices", "edges", "polygons", "loops"):
        out[f"count:{collection}"] = len(getattr(me, collection))
    if me.shape_keys is not None:
        for kb in me.shape_keys.key_blocks:
            out[f"key:{kb.name}"] = _get(kb.data, "co", np.float32, 3).tobytes().hex()
    out["groups"] = [[(g.group, g.weight) for g in v.groups] for v in me.vertices]
    return out
