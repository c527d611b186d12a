"""Scenario helper of tests/test_host_batch.py: write the invented meshes as mesh files
with the host's own exporters.  Usage: python batch_inputs.py FOLDER

* plate.stl: the closed tilted plate with two bolt holes (quads and slivers; the
  exporter triangulates);
* soup.ply: the same plate as a triangle soup (every triangle with its own three
  vertices, as STL files hold them), so the batch command has vertices to weld;
* floor.obj: the open navmesh floor with three pillars.
Reports the invented meshes' own figures (the exact volume, the soup's corner count and
distinct positions) for the test to compare with."""

import sys
from pathlib import Path

import bpy
import numpy as np
from common import report
from invented_meshes import navmesh_floor, tilted_solid_plate
from scene_setup import clear_scene, link


def export(path):
    kind = path.suffix
    if kind == ".stl":
        bpy.ops.wm.stl_export(filepath=str(path), export_selected_objects=False)
    elif kind == ".ply":
        bpy.ops.wm.ply_export(filepath=str(path), export_selected_objects=False,
                              export_normals=False, export_uv=False, export_colors='NONE',
                              ascii_format=False)
    else:
        bpy.ops.wm.obj_export(filepath=str(path), export_selected_objects=False,
                              export_materials=False, export_uv=False, export_normals=False)


def main(folder):
    folder = Path(folder)
    bpy.ops.wm.read_factory_settings(use_empty=True)
    facts = {}
    verts, faces, volume = tilted_solid_plate()
    facts["plate_volume"] = float(volume)

    clear_scene()
    link("Plate", verts, faces)
    export(folder / "plate.stl")

    triangles = [[f[0], f[k], f[k + 1]] for f in faces for k in range(1, len(f) - 1)]
    corners = np.asarray(verts)[np.asarray(triangles).reshape(-1)].astype(np.float32)
    clear_scene()
    link("Soup", corners.astype(np.float64), np.arange(len(corners)).reshape(-1, 3).tolist())
    export(folder / "soup.ply")
    facts["soup_corners"] = len(corners)
    facts["soup_positions"] = len(np.unique(corners, axis=0))

    clear_scene()
    floor_verts, floor_faces = navmesh_floor()
    link("Floor", floor_verts, floor_faces)
    export(folder / "floor.obj")
    facts["floor_faces"] = len(floor_faces)
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
