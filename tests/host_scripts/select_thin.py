"""Scenario: install and enable the zip, put two invented meshes (a tilted plate with
bolt holes, a navmesh floor with pillars) into multi-object Edit Mode, run
mesh.select_thin_triangles and read back which faces the host says are selected.
The expected sets are computed by the test from the vertex positions reported here.
Usage: python select_thin.py ZIP"""

import sys

import bpy
import numpy as np
from common import install_and_enable, report
from invented_meshes import navmesh_floor, tilted_plate

HIDDEN = {"plate": [41, 42]}  # hidden faces (found thin by the test) stay unselected


def add_object(name, verts, faces):
    mesh = bpy.data.meshes.new(name)
    mesh.from_pydata(verts.tolist(), [], faces)
    mesh.validate()
    for index in HIDDEN.get(name, []):
        mesh.polygons[index].hide = True
    ob = bpy.data.objects.new(name, mesh)
    bpy.context.scene.collection.objects.link(ob)
    return ob


def mesh_state(ob):
    """Positions, faces and flags as the host's mesh API reports them (Object Mode)."""
    me = ob.data
    co = np.empty(3 * len(me.vertices), dtype=np.float32)
    me.vertices.foreach_get("co", co)
    sel = np.empty(len(me.polygons), dtype=bool)
    me.polygons.foreach_get("select", sel)
    vsel = np.empty(len(me.vertices), dtype=bool)
    me.vertices.foreach_get("select", vsel)
    return {"positions": co.reshape(-1, 3).astype(float).tolist(),
            "faces": [list(p.vertices) for p in me.polygons],
            "hidden": [p.index for p in me.polygons if p.hide],
            "selected": np.flatnonzero(sel).tolist(),
            "selected_vertices": np.flatnonzero(vsel).tolist()}


def run(objects, **props):
    bpy.ops.object.mode_set(mode='EDIT')
    result = bpy.ops.mesh.select_thin_triangles(**props)
    bpy.ops.object.mode_set(mode='OBJECT')
    return {"result": sorted(result), "objects": {ob.name: mesh_state(ob) for ob in objects}}


def main(zip_path):
    facts = {"install": install_and_enable(zip_path)}
    for ob in list(bpy.data.objects):
        bpy.data.objects.remove(ob)
    objects = [add_object("plate", *tilted_plate()), add_object("floor", *navmesh_floor())]
    for ob in objects:
        ob.select_set(True)
    bpy.context.view_layer.objects.active = objects[0]
    facts["poll_object_mode"] = bpy.ops.mesh.select_thin_triangles.poll()
    runs = facts["runs"] = {}
    runs["25"] = run(objects, min_angle=25.0)
    runs["12"] = run(objects, min_angle=12.0)
    # a quad picked by hand stays picked with extend; it and a lone vertex go without it
    objects[0].data.polygons[0].select = True
    runs["12_extend"] = run(objects, min_angle=12.0, extend=True)
    objects[1].data.vertices[0].select = True  # a lone vertex: cleared without extend
    runs["12_again"] = run(objects, min_angle=12.0)
    facts["select_mode"] = list(bpy.context.tool_settings.mesh_select_mode)
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
