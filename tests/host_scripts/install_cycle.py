"""Scenario: install the built zip, enable it, look at what got registered, disable it,
look again.  Usage: python install_cycle.py ZIP"""

import os
import sys

import bpy
from common import EXTENSION, disable, extension_modules, install_and_enable, report

TYPE_NAMES = ("MESH_OT_select_thin_triangles", "MESH_OT_remesh_flat_regions",
              "OBJECT_OT_remesh_flat_regions", "MESH_OT_flip_to_better_angles",
              "SCENE_OT_flat_region_remesh_preset", "VIEW3D_OT_flat_region_remesh_overlay",
              "VIEW3D_PT_flat_region_remesh")
MENUS = ("VIEW3D_MT_select_edit_mesh", "VIEW3D_MT_edit_mesh_faces",
         "VIEW3D_MT_edit_mesh_context_menu")
OPERATORS = (("mesh", "select_thin_triangles"), ("mesh", "remesh_flat_regions"),
             ("object", "remesh_flat_regions"), ("mesh", "flip_to_better_angles"),
             ("scene", "flat_region_remesh_preset"), ("view3d", "flat_region_remesh_overlay"))


class Recorder:
    """Stands in for a UI layout; records what a panel draws."""

    def __init__(self, log):
        self.log = log

    def __getattr__(self, name):
        if name in ("box", "column", "row", "split"):
            return lambda *a, **k: self
        if name == "prop":
            return lambda data, prop, **k: self.log.append(("prop", prop))
        if name == "operator":
            def operator(idname, **k):
                self.log.append(("operator", idname))
                return type("Props", (), {})()
            return operator
        return lambda *a, **k: None


def menu_entries(menu_name):
    menu = getattr(bpy.types, menu_name)
    draw_funcs = menu._dyn_ui_initialize() if menu.is_extended() else []
    return [f"{f.__module__}.{f.__name__}" for f in draw_funcs
            if f.__module__.startswith(EXTENSION)]


def registered(classes):
    """What the host reports as registered for the extension."""
    return {
        "enabled": EXTENSION in bpy.context.preferences.addons,
        "classes": [cls.__name__ for cls in classes if cls.is_registered],
        "types": [name for name in TYPE_NAMES if hasattr(bpy.types, name)],
        "operators": [f"{cat}.{name}" for cat, name in OPERATORS
                      if name in dir(getattr(bpy.ops, cat))],
        "scene_property": "flat_region_remesh" in bpy.types.Scene.bl_rna.properties,
        "menu_entries": {name: menu_entries(name) for name in MENUS},
        "handlers": [f.__module__ for f in bpy.app.handlers.depsgraph_update_post
                     if f.__module__.startswith(EXTENSION)],
    }


def describe(rna, skip=("rna_type", "name")):
    return {p.identifier: {"type": p.type, "unit": getattr(p, "unit", None),
                           "description": p.description, "name": p.name}
            for p in rna.properties if p.identifier not in skip}


def settings_facts():
    rna = bpy.types.Scene.bl_rna.properties["flat_region_remesh"].fixed_type
    props = describe(rna, skip=("rna_type", "name", "last_run"))
    settings = bpy.context.scene.flat_region_remesh
    defaults = {name: getattr(settings, name) for name in props}
    return props, defaults


def main(zip_path):
    facts = {"user_extensions": bpy.utils.user_resource('EXTENSIONS'),
             "install": install_and_enable(zip_path)}
    pkg_dir = os.path.join(facts["user_extensions"], "user_default", "flat_region_remesh")
    facts["installed_files"] = sorted(
        os.path.relpath(os.path.join(d, f), pkg_dir)
        for d, _, files in os.walk(pkg_dir) for f in files if not f.endswith(".pyc"))
    classes = sys.modules[EXTENSION + ".registration"].CLASSES
    facts["after_enable"] = registered(classes)
    facts["modules"] = extension_modules()
    facts["top_level_engine_imported"] = "engine" in sys.modules
    facts["settings"], facts["defaults"] = settings_facts()
    panel = bpy.types.VIEW3D_PT_flat_region_remesh
    facts["panel"] = {"space": panel.bl_space_type, "region": panel.bl_region_type,
                      "category": panel.bl_category}
    log = []
    panel.draw(type("PanelStandIn", (), {"layout": Recorder(log)})(), bpy.context)
    facts["panel_draws"] = log
    facts["operators"] = {}
    for cat, name in OPERATORS:
        op = getattr(getattr(bpy.ops, cat), name)
        rna = op.get_rna_type()
        facts["operators"][f"{cat}.{name}"] = {
            "options": sorted(op.bl_options),
            "description": rna.description,
            "properties": describe(rna, skip=("rna_type",))}
    last = bpy.types.Scene.bl_rna.properties["flat_region_remesh"].fixed_type
    facts["last_run"] = describe(last.properties["last_run"].fixed_type)
    facts["disable"] = disable()
    facts["after_disable"] = registered(classes)
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
