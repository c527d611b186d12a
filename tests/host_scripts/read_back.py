"""Scenario helper of tests/test_host_batch.py: read mesh files back with the host's own
importers (``.blend`` with ``open_mainfile``) and report every mesh object's world
positions and faces.  Usage: python read_back.py FILE [FILE ...]"""

import sys
from pathlib import Path

import bpy
import numpy as np
from common import report


def load(path):
    kind = path.suffix.lower()
    if kind == ".blend":
        bpy.ops.wm.open_mainfile(filepath=str(path), load_ui=False)
        return
    bpy.ops.wm.read_factory_settings(use_empty=True)
    if kind == ".stl":
        bpy.ops.wm.stl_import(filepath=str(path))
    elif kind == ".ply":
        bpy.ops.wm.ply_import(filepath=str(path), merge_verts=True)
    else:
        bpy.ops.wm.obj_import(filepath=str(path))


def objects():
    out = []
    for ob in sorted(bpy.context.scene.objects, key=lambda o: o.name):
        if ob.type != 'MESH':
            continue
        me = ob.data
        m = np.array(ob.matrix_world)
        co = np.empty(3 * len(me.vertices), dtype=np.float32)
        me.vertices.foreach_get("co", co)
        world = co.reshape(-1, 3).astype(np.float64) @ m[:3, :3].T + m[:3, 3]
        out.append({"name": ob.name, "positions": world.tolist(),
                    "faces": [list(p.vertices) for p in me.polygons]})
    return out


def main(paths):
    facts = {}
    for path in map(Path, paths):
        load(path)
        facts[path.name] = objects()
    report(facts)


if __name__ == "__main__":
    main(sys.argv[1:])
