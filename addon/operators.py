"""Operators: read the host mesh in bulk, measure or remesh with the engine, write back.

Planned operators plug in at the TODO hooks at the end of this module.
"""

import bmesh
import bpy
import numpy as np
from bpy.props import BoolProperty, FloatProperty

from .measure import thin_triangle_mask


def read_mesh_arrays(mesh):
    """Bulk copies (``foreach_get``) of a mesh: positions (N, 3) float64, face first
    corner and corner count (F,), corner vertex index (C,), face hidden flag (F,)."""
    positions = np.empty(3 * len(mesh.vertices), dtype=np.float32)
    mesh.vertices.foreach_get("co", positions)
    count = len(mesh.polygons)
    loop_starts = np.empty(count, dtype=np.int32)
    loop_totals = np.empty(count, dtype=np.int32)
    hidden = np.empty(count, dtype=bool)
    mesh.polygons.foreach_get("loop_start", loop_starts)
    mesh.polygons.foreach_get("loop_total", loop_totals)
    mesh.polygons.foreach_get("hide", hidden)
    corner_verts = np.empty(len(mesh.loops), dtype=np.int32)
    mesh.loops.foreach_get("vertex_index", corner_verts)
    return (positions.reshape(-1, 3).astype(np.float64), loop_starts, loop_totals,
            corner_verts, hidden)


def clear_selection(bm, mesh):
    """Deselect every element of the edit mesh `bm` that `mesh` (just synced from it with
    ``update_from_editmode``) reports selected; unselected elements are not visited."""
    for elements, items in ((bm.faces, mesh.polygons), (bm.edges, mesh.edges),
                            (bm.verts, mesh.vertices)):
        flags = np.empty(len(items), dtype=bool)
        items.foreach_get("select", flags)
        elements.ensure_lookup_table()
        for index in np.flatnonzero(flags).tolist():
            elements[index].select = False
    bm.select_history.clear()


def edit_meshes(context):
    """The mesh objects in Edit Mode, one per mesh datablock."""
    return [ob for ob in context.objects_in_mode_unique_data if ob.type == 'MESH']


class MESH_OT_select_thin_triangles(bpy.types.Operator):
    """Select the triangles whose smallest angle is below a threshold (switches to face \
select mode so exactly those faces are selected)"""

    bl_idname = "mesh.select_thin_triangles"
    bl_label = "Select Thin Triangles"
    bl_options = {'REGISTER', 'UNDO'}  # noqa: RUF012 (the host reads a set)

    min_angle: FloatProperty(
        name="Minimum Angle",
        description="Select the triangles with a corner angle below this, in degrees",
        default=20.0, min=0.0, max=60.0, precision=2,
    )
    extend: BoolProperty(
        name="Extend",
        description="Add to the current selection instead of replacing it",
        default=False,
    )

    @classmethod
    def poll(cls, context):
        return context.mode == 'EDIT_MESH'

    def execute(self, context):
        context.tool_settings.mesh_select_mode = (False, False, True)
        total = 0
        objects = edit_meshes(context)
        for ob in objects:
            ob.update_from_editmode()  # the bulk arrays must see the edit mesh
            positions, starts, totals, corner_verts, hidden = read_mesh_arrays(ob.data)
            thin = np.flatnonzero(thin_triangle_mask(positions, starts, totals,
                                                     corner_verts, self.min_angle, hidden))
            bm = bmesh.from_edit_mesh(ob.data)
            bm.select_mode = {'FACE'}
            if not self.extend:
                clear_selection(bm, ob.data)
            bm.faces.ensure_lookup_table()
            faces = bm.faces
            for index in thin.tolist():
                faces[index].select_set(True)
            bm.select_flush_mode()
            bmesh.update_edit_mesh(ob.data, loop_triangles=False, destructive=False)
            total += len(thin)
        self.report({'INFO'}, f"Selected {total} triangles with a corner under "
                              f"{self.min_angle:g}° on {len(objects)} mesh(es)")
        return {'FINISHED'}


# TODO(remesh_flat_regions, edit mode): operator `mesh.remesh_flat_regions` on the selected
#   faces of every object in Edit Mode, once `engine.remesh_flat_regions` exists (issue 4):
#   read_mesh_arrays() -> engine -> write back through bmesh/foreach_set -> one-line report;
#   defaults from scene.flat_region_remesh (properties.SETTING_GROUPS); REGISTER + UNDO.
# TODO(remesh_flat_regions, object mode): operator `object.remesh_flat_regions`, the same on
#   every selected mesh object in Object Mode.
# TODO(flip_to_better_angles): operator `mesh.flip_to_better_angles`, `engine.legalize` on
#   the selected triangles that are flat within tolerance; adds no vertex.
# Each new class goes into registration.CLASSES and gets a button in panel.draw_actions().

CLASSES = (MESH_OT_select_thin_triangles,)
