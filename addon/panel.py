"""The "Remesh" tab of the 3D View sidebar and the Select menu entry."""

import bpy

from .operators import MESH_OT_select_thin_triangles
from .properties import SCENE_PROPERTY, SETTING_GROUPS


def draw_actions(layout, settings):
    """The buttons.  TODO(remesh operators): add the remesh and flip buttons here."""
    col = layout.column(align=True)
    op = col.operator(MESH_OT_select_thin_triangles.bl_idname, icon='RESTRICT_SELECT_OFF')
    op.min_angle = settings.min_angle


class VIEW3D_PT_flat_region_remesh(bpy.types.Panel):
    """Settings and actions of Flat Region Remesh"""

    bl_space_type = 'VIEW_3D'
    bl_region_type = 'UI'
    bl_category = "Remesh"
    bl_label = "Flat Region Remesh"

    def draw(self, context):
        settings = getattr(context.scene, SCENE_PROPERTY)
        layout = self.layout
        layout.use_property_split = True
        layout.use_property_decorate = False
        for heading, names in SETTING_GROUPS:
            box = layout.box()
            box.label(text=heading)
            for name in names:
                box.prop(settings, name)
        draw_actions(layout, settings)


def draw_select_menu_entry(menu, context):
    """Entry in the Edit Mode Select menu."""
    menu.layout.operator(MESH_OT_select_thin_triangles.bl_idname)


CLASSES = (VIEW3D_PT_flat_region_remesh,)
MENU_ENTRIES = (("VIEW3D_MT_select_edit_mesh", draw_select_menu_entry),)
