"""Register and unregister every host class, the scene settings and the menu entries."""

import bpy

from . import operators, panel, properties

CLASSES = (properties.FlatRegionRemeshSettings, *operators.CLASSES, *panel.CLASSES)


def register():
    for cls in CLASSES:
        bpy.utils.register_class(cls)
    setattr(bpy.types.Scene, properties.SCENE_PROPERTY,
            bpy.props.PointerProperty(type=properties.FlatRegionRemeshSettings))
    for menu_name, draw in panel.MENU_ENTRIES:
        getattr(bpy.types, menu_name).append(draw)


def unregister():
    for menu_name, draw in reversed(panel.MENU_ENTRIES):
        getattr(bpy.types, menu_name).remove(draw)
    delattr(bpy.types.Scene, properties.SCENE_PROPERTY)
    for cls in reversed(CLASSES):
        bpy.utils.unregister_class(cls)
