"""Scenario: failures leave meshes as they were, undo restores, the overlay stays out of
background mode, presets set the settings.  Usage: python safety.py ZIP"""

import sys

import bpy
from common import EXTENSION, install_and_enable, report
from scene_setup import (
    add_floor,
    add_panel,
    add_plate,
    clear_scene,
    mesh_state,
    raw_arrays,
    select_faces,
    select_only,
)


def settings():
    s = bpy.context.scene.flat_region_remesh
    return {name: getattr(s, name) for name in (
        "min_angle", "max_edge_length", "smoothing", "flat_angle", "keep_boundary",
        "straight_run_tolerance", "keep_interior_vertices")}


def to_edit(objects):
    select_only(objects)
    bpy.context.tool_settings.mesh_select_mode = (False, False, True)
    bpy.ops.object.mode_set(mode='EDIT')


def to_object():
    bpy.ops.object.mode_set(mode='OBJECT')


def main(zip_path):
    facts = {"install": install_and_enable(zip_path)}
    bridge = sys.modules[EXTENSION + ".mesh_bridge"]
    overlay = sys.modules[EXTENSION + ".overlay"]

    # 1. the engine refuses a mesh with a NaN position: cancelled, bytes unchanged
    #    (the panel's Basis shape key holds the NaN too, as Edit Mode reads the key)
    clear_scene()
    panel = add_panel()
    panel.data.vertices[5].co = (float("nan"), 0.0, 0.0)
    panel.data.shape_keys.key_blocks["Basis"].data[5].co = (float("nan"), 0.0, 0.0)
    raw = raw_arrays(panel)
    select_only([panel])
    nan = facts["nan"] = {"object": sorted(bpy.ops.object.remesh_flat_regions())}
    nan["object_same"] = raw_arrays(panel) == raw
    nan["summary"] = bpy.context.scene.flat_region_remesh.last_run.summary
    select_faces(panel, range(len(panel.data.polygons)))
    to_edit([panel])
    to_object()                 # one round trip first: Edit Mode rewrites some layers
    raw = raw_arrays(panel)
    to_edit([panel])
    nan["edit"] = sorted(bpy.ops.mesh.remesh_flat_regions())
    nan["edit_mode_after"] = bpy.context.mode
    to_object()
    nan["edit_same"] = raw_arrays(panel) == raw

    # 2. writing fails on the second mesh: the first is restored too
    clear_scene()
    panel = add_panel()
    plate, _ = add_plate()
    before = {"panel": mesh_state(panel, full=True), "plate": mesh_state(plate)}
    original = bridge._write_data
    calls = []

    def failing(mesh, *args, **kwargs):
        calls.append(mesh.name)
        original(mesh, *args, **kwargs)          # the write happens, then it fails
        if len(calls) == 2:
            raise RuntimeError("injected write failure")

    bridge._write_data = failing
    select_only([panel, plate])
    rollback = facts["rollback"] = {"result": sorted(bpy.ops.object.remesh_flat_regions())}
    bridge._write_data = original
    rollback["calls"] = calls
    rollback["panel_same"] = mesh_state(panel, full=True) == before["panel"]
    rollback["plate_same"] = mesh_state(plate) == before["plate"]
    rollback["summary_unchanged"] = bpy.context.scene.flat_region_remesh.last_run.summary

    # 3. undo in Object Mode restores every array
    clear_scene()
    panel = add_panel()
    select_only([panel])
    bpy.ops.ed.undo_push(message="panel built")
    before = mesh_state(panel, full=True)
    undo = facts["undo_object"] = {"result": sorted(bpy.ops.object.remesh_flat_regions())}
    # in background mode operators push no undo step of their own; the UI pushes one
    # after every REGISTER + UNDO operator, which this stands in for
    bpy.ops.ed.undo_push(message="remeshed")
    panel = bpy.data.objects["panel"]
    undo["changed"] = len(panel.data.vertices) != len(before["positions"])
    bpy.ops.ed.undo()
    panel = bpy.data.objects["panel"]
    undo["restored"] = mesh_state(panel, full=True) == before

    # 4. undo in Edit Mode (flip, then remesh; two undo steps back)
    clear_scene()
    plate, _ = add_plate()
    select_faces(plate, range(len(plate.data.polygons)))
    to_edit([plate])
    bpy.ops.ed.undo_push(message="edit mode entered")
    to_object()
    before = mesh_state(plate)
    to_edit([plate])
    undo = facts["undo_edit"] = {"flip": sorted(bpy.ops.mesh.flip_to_better_angles())}
    bpy.ops.ed.undo_push(message="flipped")
    undo["remesh"] = sorted(bpy.ops.mesh.remesh_flat_regions())
    bpy.ops.ed.undo_push(message="remeshed")
    to_object()
    plate = bpy.data.objects["plate"]
    undo["changed"] = len(plate.data.polygons) != len(before["faces"])
    to_edit([plate])
    bpy.ops.ed.undo()
    bpy.ops.ed.undo()
    undo["mode"] = bpy.context.mode
    to_object()
    plate = bpy.data.objects["plate"]
    undo["restored"] = mesh_state(plate) == before

    # 5. the overlay in background mode: no window, so no handler, no crash
    ov = facts["overlay"] = {"available": overlay.available(),
                             "poll": bpy.ops.view3d.flat_region_remesh_overlay.poll(),
                             "enable": overlay.enable(), "enabled": overlay.is_enabled(),
                             "handlers": len(overlay._handles),
                             "depsgraph_handler": overlay._on_depsgraph_update in
                             bpy.app.handlers.depsgraph_update_post}
    clear_scene()
    plate, _ = add_plate()
    quality = overlay.mesh_quality(plate)
    ov["object_face_angles"] = quality["face_angles"].tolist()
    ov["object_coords"] = len(quality["coords"])
    ov["state"] = mesh_state(plate)
    # the draw callbacks themselves never raise, even without a drawing context
    raised = []
    for callback in (overlay._draw_faces, overlay._draw_readout):
        try:
            callback()
        except Exception as exc:  # noqa: BLE001
            raised.append(repr(exc))
    ov["draw_raised"] = raised
    to_edit([plate])
    bpy.ops.mesh.select_all(action='SELECT')
    bpy.ops.mesh.subdivide()              # edit-mesh change, not yet in the mesh data
    ov["edit_faces_seen"] = len(overlay.mesh_quality(plate)["face_angles"])
    to_object()
    ov["edit_faces_real"] = len(plate.data.polygons)
    overlay.disable()                     # harmless when off

    # 6. presets
    clear_scene()
    floor = add_floor()
    select_only([floor])
    facts["presets"] = {"size": max(floor.dimensions)}
    for key in ("PRINT", "NAVMESH", "EVEN"):
        result = sorted(bpy.ops.scene.flat_region_remesh_preset(preset=key))
        facts["presets"][key] = {"result": result, "settings": settings()}

    # 7. scene settings are the operators' defaults; explicit properties win
    s = bpy.context.scene.flat_region_remesh
    s.max_edge_length = 0.9
    s.min_angle = 20.0
    s.straight_run_tolerance = 0.0
    bpy.ops.object.remesh_flat_regions()
    last = bpy.context.scene.flat_region_remesh.last_run
    facts["scene_defaults"] = {"summary": last.summary, "positions": mesh_state(floor)}
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
