"""Register and unregister every host class, the scene settings and the menu entries;
unregistering also removes the overlay's draw and update handlers."""

import bpy

from . import operators, overlay, panel, properties

CLASSES = (*properties.CLASSES, *operators.CLASSES, *overlay.CLASSES, *panel.CLASSES)


def register():
    for cls in CLASSES:
        bpy.utils.register_class(cls)
    setattr(bpy.types.Scene, properties.SCENE_PROPERTY,
            bpy.props.PointerProperty(type=properties.FlatRegionRemeshSettings))
    for menu_name, draw in panel.MENU_ENTRIES:
        getattr(bpy.types, menu_name).append(draw)


def unregister():
    overlay.disable()
    for menu_name, draw in reversed(panel.MENU_ENTRIES):
        getattr(bpy.types, menu_name).remove(draw)
    delattr(bpy.types.Scene, properties.SCENE_PROPERTY)
    for cls in reversed(CLASSES):
        bpy.utils.unregister_class(cls)
