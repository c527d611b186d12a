"""The "Flat Regions" tab of the 3D View sidebar and the menu entries."""

import bpy

from . import overlay, presets
from .operators import (
    MESH_OT_flip_to_better_angles,
    MESH_OT_remesh_flat_regions,
    MESH_OT_select_thin_triangles,
    OBJECT_OT_remesh_flat_regions,
    SCENE_OT_flat_region_remesh_preset,
)
from .properties import SCENE_PROPERTY, SETTING_GROUPS


def draw_presets(layout):
    """One button per trade."""
    col = layout.column(align=True)
    col.label(text="Start from")
    row = col.row(align=True)
    for key, preset in presets.PRESETS.items():
        op = row.operator(SCENE_OT_flat_region_remesh_preset.bl_idname, text=preset.label)
        op.preset = key


def draw_actions(layout, settings, context):
    """The buttons: remesh (the one for the current mode), flip, select, overlay."""
    col = layout.column(align=True)
    if context.mode == 'EDIT_MESH':
        col.operator(MESH_OT_remesh_flat_regions.bl_idname, text="Remesh Selected Faces",
                     icon='MOD_TRIANGULATE')
        col.operator(MESH_OT_flip_to_better_angles.bl_idname, icon='UV_SYNC_SELECT')
        op = col.operator(MESH_OT_select_thin_triangles.bl_idname,
                          icon='RESTRICT_SELECT_OFF')
        op.min_angle = settings.min_angle
    else:
        col.operator(OBJECT_OT_remesh_flat_regions.bl_idname,
                     text="Remesh Selected Objects", icon='MOD_TRIANGULATE')
    layout.operator("view3d.flat_region_remesh_overlay", icon='OVERLAY',
                    depress=overlay.is_enabled())


def draw_last_run(layout, last):
    box = layout.box()
    box.label(text="Last run")
    if not last.operator:
        box.label(text="Nothing run yet")
        return
    col = box.column(align=True)
    col.label(text=f"Regions changed: {last.regions_changed}, skipped: "
                   f"{last.regions_skipped}")
    if last.skip_reasons:
        col.label(text=f"Skipped: {last.skip_reasons}")
    col.label(text=f"Triangles: {last.triangles_before} → {last.triangles_after}")

    def angle(value):
        return "-" if value < 0 else f"{value:.1f}°"

    col.label(text=f"Smallest angle: {angle(last.min_angle_before)} → "
                   f"{angle(last.min_angle_after)}")
    if last.flips:
        col.label(text=f"Edges flipped: {last.flips}")
    if last.added_vertices:
        col.label(text=f"New vertices: {last.added_vertices}")
    col.label(text=f"Time: {last.seconds:.2f} s (engine {last.engine_seconds:.2f} s)")


class VIEW3D_PT_flat_region_remesh(bpy.types.Panel):
    """Settings and actions of Flat Region Remesh"""

    bl_space_type = 'VIEW_3D'
    bl_region_type = 'UI'
    bl_category = "Flat Regions"
    bl_label = "Flat Region Remesh"

    def draw(self, context):
        settings = getattr(context.scene, SCENE_PROPERTY)
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False
        draw_presets(layout)
        for heading, names in SETTING_GROUPS:
            box = layout.box()
            box.label(text=heading)
            for name in names:
                box.prop(settings, name)
        draw_actions(layout, settings, context)
        draw_last_run(layout, settings.last_run)


def draw_select_menu_entry(menu, context):
    """Entry in the Edit Mode Select menu."""
    menu.layout.operator(MESH_OT_select_thin_triangles.bl_idname)


def draw_face_menu_entries(menu, context):
    """Entries in the Face menu and the face context menu."""
    layout = menu.layout
    layout.separator()
    layout.operator(MESH_OT_remesh_flat_regions.bl_idname)
    layout.operator(MESH_OT_flip_to_better_angles.bl_idname)
    layout.operator(MESH_OT_select_thin_triangles.bl_idname)


CLASSES = (VIEW3D_PT_flat_region_remesh,)
MENU_ENTRIES = (("VIEW3D_MT_select_edit_mesh", draw_select_menu_entry),
                ("VIEW3D_MT_edit_mesh_faces", draw_face_menu_entries),
                ("VIEW3D_MT_edit_mesh_context_menu", draw_face_menu_entries))
