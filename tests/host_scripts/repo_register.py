"""Scenario: the add-on imported from the repository (not from the zip) registers in the
real host, reaches the repository's top-level engine, and unregisters cleanly.
Usage: python repo_register.py REPO_ROOT"""

import sys

import bpy
from common import report


def main(root):
    sys.path.insert(0, root)
    import addon

    addon.register()
    from addon import engine_link, registration

    facts = {
        "engine_module": engine_link.engine.__name__,
        "engine_file": engine_link.engine.__file__,
        "registered": [cls.__name__ for cls in registration.CLASSES if cls.is_registered],
        "scene_property": "flat_region_remesh" in bpy.types.Scene.bl_rna.properties,
    }
    bpy.ops.mesh.primitive_circle_add(vertices=24, fill_type='TRIFAN')
    bpy.ops.object.mode_set(mode='EDIT')
    facts["select"] = sorted(bpy.ops.mesh.select_thin_triangles(min_angle=20.0))
    bpy.ops.object.mode_set(mode='OBJECT')
    me = bpy.context.object.data
    facts["circle_selected"] = sum(p.select for p in me.polygons)
    facts["circle_faces"] = len(me.polygons)
    addon.unregister()
    facts["after_unregister"] = [cls.__name__ for cls in registration.CLASSES
                                 if cls.is_registered]
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1])
