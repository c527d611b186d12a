"""Scenario: install the built zip, enable it, look at what got registered, disable it,
look again.  Usage: python install_cycle.py ZIP"""

import os
import sys

import bpy
from common import EXTENSION, disable, extension_modules, install_and_enable, report

TYPE_NAMES = ("MESH_OT_select_thin_triangles", "VIEW3D_PT_flat_region_remesh")


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


def registered(classes):
    """What the host reports as registered for the extension."""
    menu = bpy.types.VIEW3D_MT_select_edit_mesh
    draw_funcs = menu._dyn_ui_initialize() if menu.is_extended() else []
    return {
        "enabled": EXTENSION in bpy.context.preferences.addons,
        "classes": [cls.__name__ for cls in classes if cls.is_registered],
        "types": [name for name in TYPE_NAMES if hasattr(bpy.types, name)],
        "operator": "select_thin_triangles" in dir(bpy.ops.mesh),
        "scene_property": "flat_region_remesh" in bpy.types.Scene.bl_rna.properties,
        "menu_entries": [f.__module__ for f in draw_funcs
                         if f.__module__.startswith(EXTENSION)],
    }


def settings_facts():
    rna = bpy.types.Scene.bl_rna.properties["flat_region_remesh"].fixed_type
    props = {p.identifier: {"type": p.type, "unit": getattr(p, "unit", None),
                            "description": p.description, "name": p.name}
             for p in rna.properties if p.identifier not in ("rna_type", "name")}
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
    op = bpy.ops.mesh.select_thin_triangles.get_rna_type()
    facts["operator"] = {
        "options": sorted(bpy.types.MESH_OT_select_thin_triangles.bl_options),
        "properties": {p.identifier: p.description for p in op.properties
                       if p.identifier != "rna_type"}}
    facts["disable"] = disable()
    facts["after_disable"] = registered(classes)
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
