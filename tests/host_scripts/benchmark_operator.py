"""Benchmark (not a test): the Object Mode remesh operator on one flat region with 2000
outline vertices (an invented sliver fan: an elliptical 2000-gon cut into triangles
from one corner), refined to about 20k triangles with an edge-length limit.  Prints the total
operator time and the share spent outside the engine.

Usage (from the repository, with bpy installed):
    python tests/host_scripts/benchmark_operator.py [--repeat 3] [--max-edge 0.027]
"""

import argparse
import math
import sys
import time
from pathlib import Path

import bpy
import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def sliver_fan(count=2000, a=1.0, b=0.6):
    """A flat elliptical outline of `count` vertices, triangulated as a fan of slivers
    from vertex 0 (convex, so the fan covers it exactly once)."""
    t = np.linspace(0.0, 2.0 * math.pi, count, endpoint=False)
    verts = np.column_stack((a * np.cos(t), b * np.sin(t), np.zeros(count)))
    faces = [[0, k, k + 1] for k in range(1, count - 1)]
    return verts, faces


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--max-edge", type=float, default=0.027)
    args = parser.parse_args(argv)
    sys.path.insert(0, str(ROOT))
    import addon
    from addon import jobs

    addon.register()
    timings = {"engine": 0.0}
    original = jobs.remesh_plan

    def timed(*a, **k):
        start = time.perf_counter()
        try:
            return original(*a, **k)
        finally:
            timings["engine"] += time.perf_counter() - start

    jobs.remesh_plan = timed
    verts, faces = sliver_fan()
    rows = []
    for _ in range(args.repeat):
        for ob in list(bpy.data.objects):
            bpy.data.objects.remove(ob)
        mesh = bpy.data.meshes.new("fan")
        mesh.from_pydata(verts.tolist(), [], faces)
        ob = bpy.data.objects.new("fan", mesh)
        bpy.context.scene.collection.objects.link(ob)
        ob.select_set(True)
        bpy.context.view_layer.objects.active = ob
        timings["engine"] = 0.0
        start = time.perf_counter()
        result = bpy.ops.object.remesh_flat_regions(max_edge_length=args.max_edge)
        total = time.perf_counter() - start
        rows.append((total, timings["engine"], len(mesh.polygons), result))
    for total, engine, tris, result in rows:
        print(f"{sorted(result)} triangles {tris}: total {total:.3f} s, engine {engine:.3f} s, "
              f"outside the engine {total - engine:.3f} s ({100 * (total - engine) / total:.0f} %)")
    best = min(rows)
    print(f"best: total {best[0]:.3f} s, outside the engine {best[0] - best[1]:.3f} s")
    addon.unregister()


if __name__ == "__main__":
    main(sys.argv[sys.argv.index("--") + 1:] if "--" in sys.argv else sys.argv[1:])
