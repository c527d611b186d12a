"""Scenario: install and enable the zip, then run the remesh and flip operators on the
invented meshes in Object Mode and in (multi-object) Edit Mode, and report what the
host's mesh API says before and after each run.  Usage: python remesh_ops.py ZIP"""

import sys

import bpy
import numpy as np
from common import install_and_enable, report
from invented_meshes import panel_coordinates
from scene_setup import (
    add_floor,
    add_panel,
    add_plate,
    clear_scene,
    mesh_state,
    select_faces,
    select_only,
)


def last_run():
    last = bpy.context.scene.flat_region_remesh.last_run
    return {name: getattr(last, name) for name in (
        "operator", "summary", "meshes", "regions_changed", "regions_skipped",
        "skip_reasons", "triangles_before", "triangles_after", "min_angle_before",
        "min_angle_after", "flips", "added_vertices")}


def edit_mode_run(objects, operator, **props):
    """Run `operator` in multi-object Edit Mode (face select mode, so the face selection
    set in Object Mode is exactly what the operator sees)."""
    select_only(objects)
    bpy.context.tool_settings.mesh_select_mode = (False, False, True)
    bpy.ops.object.mode_set(mode='EDIT')
    result = sorted(operator(**props))
    mode_after = bpy.context.mode
    in_mode = sorted(ob.name for ob in bpy.context.objects_in_mode)
    bpy.ops.object.mode_set(mode='OBJECT')
    return {"result": result, "mode_after": mode_after, "in_mode": in_mode,
            "last": last_run()}


def object_mode_run(objects, **props):
    select_only(objects)
    result = sorted(bpy.ops.object.remesh_flat_regions(**props))
    return {"result": result, "mode_after": bpy.context.mode, "last": last_run()}


def main(zip_path):
    facts = {"install": install_and_enable(zip_path)}
    ops = bpy.ops.mesh

    # 1. the closed plate in Object Mode, defaults
    clear_scene()
    plate, volume = add_plate()
    facts["plate_volume"] = volume
    facts["plate_object"] = {"before": mesh_state(plate)}
    select_only([plate])
    facts["poll"] = {"object_op_in_object_mode": bpy.ops.object.remesh_flat_regions.poll(),
                     "mesh_op_in_object_mode": ops.remesh_flat_regions.poll(),
                     "flip_in_object_mode": ops.flip_to_better_angles.poll()}
    facts["plate_object"].update(object_mode_run([plate]))
    facts["plate_object"]["after"] = mesh_state(plate)

    # 2. flips on the plate in Edit Mode (everything selected)
    clear_scene()
    plate, _ = add_plate()
    select_faces(plate, range(len(plate.data.polygons)))
    facts["plate_flip"] = {"before": mesh_state(plate)}
    facts["plate_flip"].update(edit_mode_run([plate], ops.flip_to_better_angles))
    facts["plate_flip"]["after"] = mesh_state(plate)

    # 3. the plate and the floor together in multi-object Edit Mode; on the plate only
    #    some faces are selected and the outline is kept
    clear_scene()
    plate, _ = add_plate()
    floor = add_floor()
    chosen = list(range(0, len(plate.data.polygons), 2))
    select_faces(plate, chosen)
    select_faces(floor, range(len(floor.data.polygons)))
    facts["multi"] = {"plate_before": mesh_state(plate), "floor_before": mesh_state(floor),
                      "plate_chosen": chosen}
    facts["multi"].update(edit_mode_run([plate, floor], ops.remesh_flat_regions,
                                        keep_boundary=True, min_angle=28.0))
    facts["multi"]["plate_after"] = mesh_state(plate)
    facts["multi"]["floor_after"] = mesh_state(floor)

    # 4. the navmesh floor in Object Mode: edge-length limit and straightened runs
    clear_scene()
    floor = add_floor()
    facts["floor"] = {"before": mesh_state(floor)}
    facts["floor"].update(object_mode_run([floor], max_edge_length=0.8,
                                          straight_run_tolerance=0.01, min_angle=25.0))
    facts["floor"]["after"] = mesh_state(floor)

    # 5. the attribute panel in Object Mode (defaults, an edge-length limit)
    clear_scene()
    panel = add_panel()
    facts["panel_object"] = {"before": mesh_state(panel, full=True)}
    facts["panel_object"].update(object_mode_run([panel], max_edge_length=0.5))
    facts["panel_object"]["after"] = mesh_state(panel, full=True)

    # 6. the panel in Edit Mode with every optional break off: only the data jumps
    #    (the UV islands) keep regions apart; faces left of u = 2.6 selected
    clear_scene()
    panel = add_panel()
    before = mesh_state(panel, full=True)
    u = panel_coordinates(np.array(before["positions"]))[:, 0]
    chosen = [i for i, f in enumerate(before["faces"]) if u[f].max() <= 2.8 + 1e-9]
    select_faces(panel, chosen)
    facts["panel_edit"] = {"before": mesh_state(panel, full=True), "chosen": chosen}
    facts["panel_edit"].update(edit_mode_run(
        [panel], ops.remesh_flat_regions, break_at_seams=False, break_at_sharp=False,
        break_at_material_borders=False, max_edge_length=0.5))
    facts["panel_edit"]["after"] = mesh_state(panel, full=True)
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
