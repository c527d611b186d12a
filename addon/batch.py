"""Headless batch command: remesh the flat regions of mesh files without a screen.

    python -m addon.batch INPUT -o OUTPUT [--min-angle A] [--max-edge-length L]
        [--keep-boundary] [--flat-angle D] [--report FILE.json] [--picture FILE.svg]
        [--preset NAME] [--merge-distance L] [--straighten-tolerance L] [--smoothing]
        [--keep-inner-vertices] [--point-limit N] [--output-format FMT] [--jobs N]
        [--host-log FILE]
    python -m addon.batch --demo [DIR]

Inside a full Blender instead of the ``bpy`` module (the options after ``--``):

    blender --background --factory-startup --python addon/batch.py -- INPUT -o OUTPUT ...

STL, OBJ, PLY and .blend files are read and written with the host's own importers and
exporters (``bpy.ops.wm.*_import`` / ``*_export``, ``open_mainfile`` /
``save_as_mainfile``).  Each mesh is first welded (``bmesh.ops.remove_doubles``, an STL
shares no vertex), then remeshed exactly as the add-on's operators do it
(:func:`jobs.remesh_plan` on world positions, written back with
:func:`operators.write_all`), so closed solids stay closed and keep their volume.

INPUT may be a folder or a glob pattern: then OUTPUT is a folder and every file runs in
its own worker process (``bpy`` is one per process), ``--jobs`` at a time; a bad file is
reported and skipped, and a summary table ends the run.  The exit code is 0 when every
file went through, 1 when any failed.
"""

if __name__ == "__main__" and not __package__:
    # run as a script (blender -b -P addon/batch.py -- ...): load it as a package module
    import pathlib
    import sys

    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
    from addon.batch import main

    raise SystemExit(main())

import argparse
import glob
import json
import math
import os
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np

FORMATS = (".stl", ".obj", ".ply", ".blend")
GLOB_CHARS = "*?["
DEMO_DIR = "demo-output"
# the add-on's own defaults (addon/properties.py) for what the command does not set
DEFAULTS = {"min_angle": 30.0, "max_edge_length": 0.0, "flat_angle": 1.0,
            "keep_boundary": False, "smoothing": False, "straight_run_tolerance": 0.0,
            "keep_interior_vertices": False, "point_limit": 200000}
MERGE_DISTANCE = 1e-5


class FileProblem(Exception):
    """A problem with one file, said in one line."""


# ---------------------------------------------------------------- command line
def parser():
    p = argparse.ArgumentParser(
        prog="python -m addon.batch",
        description="Re-triangulate the flat regions of STL, OBJ, PLY or .blend files "
                    "into well-shaped triangles (outline vertices stay where they are).")
    p.add_argument("input", nargs="?", help="a mesh file, a folder or a glob pattern")
    p.add_argument("-o", "--output",
                   help="the result file (its extension picks the format), or a folder "
                        "when INPUT is a folder or a pattern")
    p.add_argument("--min-angle", type=float, metavar="A",
                   help="smallest corner angle wanted in new triangles, degrees (default 30)")
    p.add_argument("--max-edge-length", type=float, metavar="L",
                   help="longest edge of new triangles, scene units (0 = no limit, default)")
    p.add_argument("--keep-boundary", action="store_true", default=None,
                   help="add no vertex on any region outline (faces outside stay as they are)")
    p.add_argument("--flat-angle", type=float, metavar="D",
                   help="faces whose normals differ by at most D degrees form one flat "
                        "region (default 1)")
    p.add_argument("--report", metavar="FILE.json", help="write the figures as JSON")
    p.add_argument("--picture", metavar="FILE.svg",
                   help="write an SVG of the largest changed region before and after "
                        "(in folder mode: a folder for one picture per file)")
    p.add_argument("--preset", choices=("print", "navmesh", "even"),
                   help="start from a trade preset (lengths scale with the model); the "
                        "options above override it")
    p.add_argument("--merge-distance", type=float, metavar="L", default=MERGE_DISTANCE,
                   help="weld vertices closer than this first, scene units "
                        f"(default {MERGE_DISTANCE:g}; 0 welds only identical positions)")
    p.add_argument("--straighten-tolerance", type=float, metavar="L",
                   help="drop outline vertices within L units of a straight run where "
                        "every face using them changes (0 = keep all, default)")
    p.add_argument("--smoothing", action="store_true", default=None,
                   help="move new inner vertices to widen angles")
    p.add_argument("--keep-inner-vertices", action="store_true", default=None,
                   help="keep the original vertices inside flat regions")
    p.add_argument("--point-limit", type=int, metavar="N",
                   help="most new vertices per region (0 = no limit, default 200000)")
    p.add_argument("--output-format", choices=[f[1:] for f in FORMATS],
                   help="folder mode: the format of the results (default: as the input)")
    p.add_argument("--jobs", type=int, metavar="N",
                   help="folder mode: worker processes at a time (default: the cores)")
    p.add_argument("--host-log", metavar="FILE",
                   help="keep the host's own messages in FILE (default: discarded)")
    p.add_argument("--demo", nargs="?", const=DEMO_DIR, metavar="DIR",
                   help=f"build the invented demo scene, remesh it and write the results "
                        f"into DIR (default {DEMO_DIR})")
    return p


def command_line(argv):
    """Our arguments: those after ``--`` inside a full Blender, else argv[1:]."""
    if argv is not None:
        return list(argv)
    if "--" in sys.argv:
        return sys.argv[sys.argv.index("--") + 1:]
    return sys.argv[1:]


def settings(args, size=None):
    """Remesh settings: the add-on's defaults, a preset (lengths for a model of the given
    size), then the options given."""
    from . import presets

    out = dict(DEFAULTS)
    if args.preset:
        key = {"print": "PRINT", "navmesh": "NAVMESH", "even": "EVEN"}[args.preset]
        out.update(presets.PRESETS[key].values(size or presets.DEFAULT_SIZE))
    given = {"min_angle": args.min_angle, "max_edge_length": args.max_edge_length,
             "flat_angle": args.flat_angle, "keep_boundary": args.keep_boundary,
             "smoothing": args.smoothing, "straight_run_tolerance": args.straighten_tolerance,
             "keep_interior_vertices": args.keep_inner_vertices,
             "point_limit": args.point_limit}
    out.update({k: v for k, v in given.items() if v is not None})
    return out


def check_options(args):
    """A usage problem in one line, or None."""
    checks = ((args.min_angle, "--min-angle", 0.0, 59.0),
              (args.flat_angle, "--flat-angle", 0.0, 89.0),
              (args.max_edge_length, "--max-edge-length", 0.0, math.inf),
              (args.merge_distance, "--merge-distance", 0.0, math.inf),
              (args.straighten_tolerance, "--straighten-tolerance", 0.0, math.inf))
    for value, name, lo, hi in checks:
        if value is not None and not (lo <= value <= hi):
            return f"{name} must be between {lo:g} and {hi:g}, got {value:g}"
    if args.point_limit is not None and args.point_limit < 0:
        return "--point-limit must be 0 or more"
    if args.jobs is not None and args.jobs < 1:
        return "--jobs must be 1 or more"
    return None


# ---------------------------------------------------------------- quiet host
class Streams:
    """Where our own lines go (the real stdout and stderr, also after :func:`quiet_host`)."""

    out = None
    err = None


def say(text):
    (Streams.out or sys.stdout).write(text + "\n")
    (Streams.out or sys.stdout).flush()


def complain(text):
    (Streams.err or sys.stderr).write(text + "\n")
    (Streams.err or sys.stderr).flush()


def quiet_host(log=None):
    """Send everything the host prints (Python and C level, stdout and stderr) to a log
    (default: discarded) while :func:`say` and :func:`complain` still reach the real
    stdout and stderr.  It stays in place until the process ends, so messages the host
    flushes at exit land in the log too."""
    if Streams.out is not None:
        return
    sys.stdout.flush()
    sys.stderr.flush()
    real_out, real_err = os.dup(1), os.dup(2)
    target = os.open(log or os.devnull, os.O_WRONLY | os.O_CREAT | os.O_APPEND, 0o644)
    os.dup2(target, 1)
    os.dup2(target, 2)
    os.close(target)
    Streams.out = os.fdopen(real_out, "w", buffering=1, encoding="utf-8")
    Streams.err = os.fdopen(real_err, "w", buffering=1, encoding="utf-8")
    sys.stdout = os.fdopen(os.dup(1), "w", buffering=1, encoding="utf-8")
    sys.stderr = os.fdopen(os.dup(2), "w", buffering=1, encoding="utf-8")


def import_host():
    try:
        import bpy
    except ImportError:
        raise FileProblem("the host module `bpy` is not installed in this Python "
                          "(pip install -e '.[host]', Python 3.11), or run the command "
                          "inside Blender: blender -b -P addon/batch.py -- ...") from None
    return bpy


def host_message(exc):
    """The host's error text in one line, without its 'Error: ' prefix."""
    text = " ".join(str(exc).split())
    return text.removeprefix("Error: ")


# ---------------------------------------------------------------- reading and writing
def suffix(path):
    return Path(path).suffix.lower()


def check_input(path):
    path = Path(path)
    if not path.exists():
        raise FileProblem("no such file")
    if path.is_dir():
        raise FileProblem("is a folder (give -o a folder to remesh every file in it)")
    if suffix(path) not in FORMATS:
        raise FileProblem(f"unknown format {path.suffix or '(no extension)'!r} "
                          f"(read: {', '.join(FORMATS)})")
    if not os.access(path, os.R_OK):
        raise FileProblem("cannot read the file (permission denied)")
    if path.stat().st_size == 0:
        raise FileProblem("empty file")
    if suffix(path) == ".stl":
        check_stl(path)
    elif suffix(path) == ".obj":
        check_obj(path)


STL_HEADER = 84          # binary STL: 80-byte header, uint32 triangle count
STL_TRIANGLE = 50        # normal, three corners (12 float32) and a uint16


def check_stl(path):
    """The host's STL importer reads what it can and says nothing about the rest, so the
    layout is checked first: a binary file is exactly 84 + 50 x its triangle count
    bytes; anything else must be ASCII ("solid" ...) with three numbers per vertex."""
    size = path.stat().st_size
    with open(path, "rb") as f:
        head = f.read(STL_HEADER)
    if len(head) == STL_HEADER:
        count = int.from_bytes(head[80:84], "little")
        if size == STL_HEADER + STL_TRIANGLE * count:
            layout = np.dtype([("normal", "<f4", 3), ("corners", "<f4", (3, 3)),
                               ("extra", "<u2")])
            corners = np.fromfile(path, dtype=layout, count=count, offset=STL_HEADER)["corners"]
            bad = np.flatnonzero(~np.isfinite(corners).all(axis=(1, 2)))
            if len(bad):   # the host's importer would quietly turn them into zeros
                raise FileProblem(f"binary STL triangle {int(bad[0]) + 1}: a corner is not "
                                  f"finite (NaN or inf)")
            return
    if not head.lstrip().lower().startswith(b"solid"):
        if len(head) < STL_HEADER:
            raise FileProblem(f"truncated binary STL ({size} bytes, the header alone is "
                              f"{STL_HEADER})")
        raise FileProblem(f"not a readable STL file: its binary header says {count} "
                          f"triangle(s), {STL_HEADER + STL_TRIANGLE * count} bytes, but the "
                          f"file has {size} bytes")
    with open(path, encoding="ascii", errors="replace") as f:
        for number, line in enumerate(f, 1):
            words = line.split()
            if words and words[0].lower() == "vertex":
                check_numbers(words[1:], f"ASCII STL line {number}: a vertex")


def check_numbers(words, what):
    """Three finite numbers, or a FileProblem naming `what` (the host's importers turn
    NaN and inf into zeros without a word)."""
    try:
        values = [float(w) for w in words]
    except ValueError:
        values = []
    if len(values) != 3:
        raise FileProblem(f"{what} needs three numbers, got {' '.join(words)[:40]!r}")
    if not all(map(math.isfinite, values)):
        raise FileProblem(f"{what} is not finite (NaN or inf): {' '.join(words)[:40]}")


def check_obj(path):
    """Every face corner must name a vertex defined before it (OBJ indices count from 1;
    negative ones count back from the last vertex); the host's importer drops faces
    that do not, silently."""
    vertices = 0
    with open(path, encoding="utf-8", errors="replace") as f:
        for number, line in enumerate(f, 1):
            words = line.split()
            if not words:
                continue
            if words[0] == "v":
                vertices += 1
                check_numbers(words[1:4], f"OBJ line {number}: a vertex")
            elif words[0] == "f":
                for corner in words[1:]:
                    try:
                        index = int(corner.split("/")[0])
                    except ValueError:
                        raise FileProblem(f"OBJ line {number}: face corner {corner!r} is not "
                                          f"a vertex number") from None
                    if not (1 <= index <= vertices or -vertices <= index <= -1):
                        raise FileProblem(f"OBJ line {number}: face corner {index} is out of "
                                          f"range ({vertices} vertices so far)")


def check_output(path):
    if suffix(path) not in FORMATS:
        raise FileProblem(f"unknown output format {Path(path).suffix or '(no extension)'!r} "
                          f"(write: {', '.join(FORMATS)})")


def empty_scene(bpy):
    bpy.ops.wm.read_factory_settings(use_empty=True)


def read_file(bpy, path):
    """Load `path` into an empty scene with the host's importer; the mesh objects."""
    path = str(Path(path).resolve())
    kind = suffix(path)
    try:
        if kind == ".blend":
            bpy.ops.wm.open_mainfile(filepath=path, load_ui=False, use_scripts=False)
        else:
            empty_scene(bpy)
            importer = {".stl": bpy.ops.wm.stl_import, ".obj": bpy.ops.wm.obj_import,
                        ".ply": bpy.ops.wm.ply_import}[kind]
            result = importer(filepath=path)
            if "FINISHED" not in result:
                raise FileProblem("cannot read the file (the importer gave up)")
    except RuntimeError as exc:
        raise FileProblem(f"cannot read the file ({host_message(exc)})") from None
    meshes = mesh_objects(bpy)
    if not meshes:
        raise FileProblem("no mesh inside (no object with faces)")
    return meshes


def mesh_objects(bpy):
    """Editable mesh objects with faces in the scene, one per mesh datablock."""
    seen, out = set(), []
    for ob in bpy.context.scene.objects:
        if ob.type != 'MESH' or ob.data.name_full in seen or len(ob.data.polygons) == 0:
            continue
        if ob.data.library is not None:
            continue
        seen.add(ob.data.name_full)
        out.append(ob)
    return out


def write_file(bpy, path):
    """Write the scene with the host's exporter (every object, modifiers applied)."""
    path = Path(path).resolve()
    kind = suffix(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    try:
        if kind == ".blend":
            bpy.ops.wm.save_as_mainfile(filepath=str(path), check_existing=False, copy=True)
        else:
            exporter = {".stl": bpy.ops.wm.stl_export, ".obj": bpy.ops.wm.obj_export,
                        ".ply": bpy.ops.wm.ply_export}[kind]
            extra = {}
            if kind == ".obj":   # a material library only when there are materials
                extra["export_materials"] = any(
                    slot.material is not None for ob in bpy.context.scene.objects
                    for slot in getattr(ob, "material_slots", ()))
            exporter(filepath=str(path), check_existing=False, export_selected_objects=False,
                     **extra)
    except RuntimeError as exc:
        raise FileProblem(f"cannot write {path.name} ({host_message(exc)})") from None
    if not path.exists():
        raise FileProblem(f"cannot write {path.name} (the exporter wrote nothing)")


# ---------------------------------------------------------------- the job
def weld(ob, distance):
    """Merge vertices closer than `distance` (the host's remove_doubles); the count."""
    import bmesh

    mesh = ob.data
    bm = bmesh.new()
    try:
        bm.from_mesh(mesh)
        before = len(bm.verts)
        bmesh.ops.remove_doubles(bm, verts=bm.verts[:], dist=float(distance))
        merged = before - len(bm.verts)
        if merged:
            bm.to_mesh(mesh)
            mesh.update()
    finally:
        bm.free()
    return merged


def mesh_facts(world, loop_starts, loop_totals, corner_verts):
    """Closedness, volume and triangle figures of a polygon mesh (world positions)."""
    from .measure import smallest_angles

    starts = np.asarray(loop_starts, dtype=np.int64)
    totals = np.asarray(loop_totals, dtype=np.int64)
    cv = np.asarray(corner_verts, dtype=np.int64)
    nxt = np.arange(len(cv)) + 1
    if len(cv):
        nxt[starts + totals - 1] = starts
    a, b = cv, cv[nxt]
    keys = np.minimum(a, b) * (len(world) + 1) + np.maximum(a, b)
    _, counts = np.unique(keys, return_counts=True)
    closed = bool(len(counts)) and bool((counts == 2).all())
    # fan triangles of every face: (first corner, k, k + 1)
    owner = np.repeat(np.arange(len(totals)), np.maximum(totals - 2, 0))
    offset = np.arange(len(owner)) - np.repeat(np.cumsum(totals - 2) - (totals - 2),
                                               np.maximum(totals - 2, 0))
    first = cv[starts[owner]]
    tri = np.column_stack((first, cv[starts[owner] + offset + 1], cv[starts[owner] + offset + 2]))
    p = world[tri]
    volume = float(np.einsum("ij,ij->i", p[:, 0], np.cross(p[:, 1], p[:, 2])).sum() / 6.0)
    is_tri = totals == 3
    angles = smallest_angles(world, cv[starts[is_tri][:, None] + np.arange(3)])
    return {"vertices": len(world), "faces": len(totals),
            "triangles": int((totals - 2).sum()), "closed": closed,
            "volume": volume if closed else None,
            "smallest_triangle_angle": round(float(angles.min()), 6) if len(angles) else None}


def _rounded(value):
    return None if value is None or not math.isfinite(value) else round(float(value), 6)


def remesh_object(ob, options, merge_distance):
    """Weld, plan with the engine and write back one object, as the operators do.
    Returns (object report, picture candidate or None)."""
    from . import jobs, mesh_bridge, operators

    start = time.perf_counter()
    try:      # before welding: a weld merges a NaN position into a finite one
        jobs.check_finite(mesh_bridge.read_mesh(ob.data).positions)
    except ValueError as exc:
        raise FileProblem(f"cannot remesh object {ob.name!r} ({exc})") from None
    merged = weld(ob, merge_distance)
    data = mesh_bridge.read_mesh(ob.data, len(ob.vertex_groups))
    world = mesh_bridge.world_positions(data, ob.matrix_world)
    before = mesh_facts(world, data.loop_starts, data.loop_totals, data.corner_verts)
    breaks, _counts = mesh_bridge.break_edge_pairs(data)
    engine_start = time.perf_counter()
    try:
        edit = jobs.remesh_plan(data, world, ~data.face_hidden, breaks, **options)
    except (ValueError, RuntimeError) as exc:
        raise FileProblem(f"cannot remesh object {ob.name!r} ({exc})") from None
    engine_seconds = time.perf_counter() - engine_start
    figures = jobs.Figures()
    figures.add_regions(edit.regions)
    if edit.changed:
        figures.add_faces(*jobs.edit_figures(world, data, edit))
        figures.added_vertices += len(edit.new_vertices)
    picture = None
    changed = [r for r in edit.regions if r.status == "changed" and r.region >= 0]
    if changed:
        largest = max(changed, key=lambda r: (r.faces, r.triangles_after))
        picture = {"object": ob.name, "region": largest.region, "faces": largest.faces,
                   "world": world, "polygons": jobs.polygons(data), "edit": edit,
                   "report": largest}
    plan = operators.Planned(ob, data, edit, jobs.new_local_positions(data, edit), False)
    operators.write_all([plan])
    after_data = mesh_bridge.read_mesh(ob.data)
    after_world = mesh_bridge.world_positions(after_data, ob.matrix_world)
    after = mesh_facts(after_world, after_data.loop_starts, after_data.loop_totals,
                       after_data.corner_verts)
    regions = []
    for r in edit.regions:
        row = r.as_dict()
        row["normal"] = [round(float(v), 6) for v in r.normal]
        regions.append(row)
    report = {
        "name": ob.name,
        "vertices_merged": int(merged),
        "before": before,
        "after": after,
        "changed_faces": {
            "triangles_before": figures.triangles_before,
            "triangles_after": figures.triangles_after,
            "smallest_angle_before": _rounded(figures.min_angle_before),
            "smallest_angle_after": _rounded(figures.min_angle_after)},
        "regions_changed": figures.regions_changed,
        "regions_skipped": figures.regions_skipped,
        "regions_unchanged": sum(r.status == "unchanged" for r in edit.regions),
        "added_vertices": figures.added_vertices,
        "regions": regions,
        "skipped": [{"region": r.region, "faces": r.faces, "reason": r.reason}
                    for r in edit.regions if r.status == "skipped"],
        "summary": figures.line(),
        "engine_seconds": round(engine_seconds, 4),
        "seconds": round(time.perf_counter() - start, 4),
    }
    return report, picture


def remesh_scene(objects, args, source):
    """Remesh every object; the JSON-ready report and the picture candidate."""
    import bpy

    start = time.perf_counter()
    size = scene_size(objects)
    options = settings(args, size)
    reports, best = [], None
    for ob in objects:
        report, picture = remesh_object(ob, options, args.merge_distance)
        reports.append(report)
        if picture is not None and (best is None or picture["faces"] > best["faces"]):
            best = picture
    totals = {"objects": len(reports),
              "vertices_merged": sum(r["vertices_merged"] for r in reports),
              "regions_changed": sum(r["regions_changed"] for r in reports),
              "regions_skipped": sum(r["regions_skipped"] for r in reports),
              "triangles_before": sum(r["before"]["triangles"] for r in reports),
              "triangles_after": sum(r["after"]["triangles"] for r in reports)}
    for key in ("smallest_angle_before", "smallest_angle_after"):
        values = [r["changed_faces"][key] for r in reports if r["changed_faces"][key] is not None]
        totals[key] = min(values) if values else None
    report = {
        "input": str(source),
        "host": f"Blender {bpy.app.version_string}",
        "settings": {**options, "merge_distance": args.merge_distance,
                     "preset": args.preset},
        "objects": reports,
        "totals": totals,
        "picture": None if best is None else {"object": best["object"],
                                              "region": best["region"]},
        "seconds": round(time.perf_counter() - start, 4),
    }
    return report, best


def scene_size(objects):
    """Largest dimension of the objects' combined world bounding box (scene units)."""
    corners = []
    for ob in objects:
        m = np.array(ob.matrix_world)
        box = np.array([list(c) for c in ob.bound_box])
        corners.append(box @ m[:3, :3].T + m[:3, 3])
    if not corners:
        return None
    pts = np.vstack(corners)
    size = float((pts.max(axis=0) - pts.min(axis=0)).max())
    return size if size > 0 else None


def picture_svg(best, title, threshold):
    from .picture import before_after_svg, region_views

    before, after = region_views(best["world"], best["polygons"], best["edit"], best["region"])
    r = best["report"]
    figures = {"object": best["object"], "region": best["region"],
               "faces before": r.faces, "triangles after": r.triangles_after,
               "smallest angle before": f"{r.min_angle_before:.1f}°",
               "smallest angle after": f"{r.min_angle_after:.1f}°",
               "target": f"{threshold:g}°"}
    return before_after_svg(before, after, title, figures, threshold)


def write_text(path, text):
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise FileProblem(f"cannot write {path} ({exc.strerror or exc})") from None


def finish(report, best, args, title):
    if args.report:
        write_text(args.report, json.dumps(report, indent=1) + "\n")
    if args.picture:
        if best is None:   # still a valid picture: nothing changed
            from .picture import before_after_svg

            text = before_after_svg([], [], f"{title}: no region changed", {}, 30.0)
        else:
            text = picture_svg(best, title, report["settings"]["min_angle"])
        write_text(args.picture, text)


def run_file(args):
    """One file in this process (imports the host).  Returns the report."""
    source = Path(args.input)
    check_input(source)
    check_output(args.output)
    quiet_host(args.host_log)
    bpy = import_host()
    start = time.perf_counter()
    objects = read_file(bpy, source)
    report, best = remesh_scene(objects, args, source)
    write_file(bpy, args.output)
    report["output"] = str(args.output)
    report["seconds"] = round(time.perf_counter() - start, 4)
    finish(report, best, args, source.name)
    t = report["totals"]
    for ob in report["objects"]:
        if ob["before"]["closed"] and not ob["after"]["closed"]:
            complain(f"{source.name}: warning: {ob['name']} was closed and is no longer")
    say(f"{source.name}: {t['regions_changed']} region(s) remeshed, "
          f"{t['vertices_merged']} vertices welded, triangles {t['triangles_before']} → "
          f"{t['triangles_after']}, smallest angle {angle_text(t['smallest_angle_before'])} → "
          f"{angle_text(t['smallest_angle_after'])} (changed faces), "
          f"{report['seconds']:.1f} s → {args.output}")
    return report


def angle_text(value):
    return "-" if value is None else f"{value:.1f}°"


# ---------------------------------------------------------------- folder mode
def is_many(text):
    return Path(text).is_dir() or any(c in text for c in GLOB_CHARS)


def list_inputs(text):
    """The files of a folder (known formats only) or of a glob pattern (every match)."""
    if Path(text).is_dir():
        return sorted(p for p in Path(text).iterdir() if p.is_file() and suffix(p) in FORMATS)
    return sorted(Path(p) for p in glob.glob(text, recursive=True) if Path(p).is_file())


def output_names(files, folder, fmt):
    """One output path per input; names that would collide keep the input's extension
    in the stem."""
    out_ext = [f".{fmt}" if fmt else p.suffix.lower() for p in files]
    plain = [Path(folder) / (p.stem + ext) for p, ext in zip(files, out_ext)]
    seen = {}
    for path in plain:
        seen[path] = seen.get(path, 0) + 1
    return [Path(folder) / f"{p.stem}-{p.suffix.lstrip('.').lower()}{ext}" if seen[q] > 1 else q
            for p, q, ext in zip(files, plain, out_ext)]


def worker_command(args, source, target, report, picture):
    """The command for one file: this Python with ``-m addon.batch``, or, inside a full
    Blender, the same Blender in background mode running this file."""
    bpy = sys.modules.get("bpy")
    if bpy is not None and getattr(bpy.app, "binary_path", ""):
        head = [bpy.app.binary_path, "--background", "--factory-startup",
                "--python", str(Path(__file__).resolve()), "--"]
    else:
        head = [sys.executable, "-m", f"{__package__}.batch"]
    cmd = head + [str(source), "-o", str(target), "--report", str(report),
                  "--merge-distance", repr(args.merge_distance)]
    for flag, value in (("--min-angle", args.min_angle),
                        ("--max-edge-length", args.max_edge_length),
                        ("--flat-angle", args.flat_angle), ("--preset", args.preset),
                        ("--straighten-tolerance", args.straighten_tolerance),
                        ("--point-limit", args.point_limit), ("--host-log", args.host_log)):
        if value is not None:
            cmd += [flag, str(value)]
    for flag, value in (("--keep-boundary", args.keep_boundary), ("--smoothing", args.smoothing),
                        ("--keep-inner-vertices", args.keep_inner_vertices)):
        if value:
            cmd.append(flag)
    if picture is not None:
        cmd += ["--picture", str(picture)]
    return cmd


def run_one_worker(args, source, target, scratch, index):
    report_path = Path(scratch) / f"{index}.json"
    picture = Path(args.picture) / f"{target.stem}.svg" if args.picture else None
    env = dict(os.environ)
    root = str(Path(__file__).resolve().parents[1])
    env["PYTHONPATH"] = root + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    start = time.perf_counter()
    proc = subprocess.run(worker_command(args, source, target, report_path, picture),
                          capture_output=True, text=True, env=env, check=False)
    row = {"file": str(source), "output": str(target), "exit": proc.returncode,
           "seconds": round(time.perf_counter() - start, 3)}
    if proc.returncode == 0 and report_path.exists():
        row["status"] = "ok"
        row["report"] = json.loads(report_path.read_text(encoding="utf-8"))
    else:
        lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
        problem = lines[-1] if lines else f"worker ended with code {proc.returncode}"
        prefix = f"{source}: "
        row["status"] = "failed"
        row["problem"] = problem.removeprefix(prefix)
    return row


def summary_table(rows):
    head = ("file", "regions", "triangles", "smallest angle", "status")
    lines = []
    for row in rows:
        name = Path(row["file"]).name
        if row["status"] == "ok":
            t = row["report"]["totals"]
            angles = (f"{angle_text(t['smallest_angle_before'])} → "
                      f"{angle_text(t['smallest_angle_after'])}")
            lines.append((name, str(t["regions_changed"]),
                          f"{t['triangles_before']} → {t['triangles_after']}", angles, "ok"))
        else:
            lines.append((name, "-", "-", "-", f"failed: {row['problem']}"))
    widths = [max(len(h), *(len(r[k]) for r in lines)) for k, h in enumerate(head)]
    fmt = "  ".join(f"{{:<{w}}}" for w in widths[:-1]) + "  {}"
    out = [fmt.format(*head), fmt.format(*("-" * w for w in widths[:-1]), "-" * len(head[-1]))]
    out += [fmt.format(*r) for r in lines]
    return "\n".join(out)


def run_many(args):
    files = list_inputs(args.input)
    if not files:
        raise FileProblem("no mesh files found")
    if not args.output:
        raise FileProblem("give an output folder with -o")
    out_dir = Path(args.output)
    if out_dir.exists() and not out_dir.is_dir():
        raise FileProblem(f"the output {out_dir} is a file; folder mode needs a folder")
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise FileProblem(f"cannot make the output folder {out_dir} ({exc.strerror})") from None
    targets = output_names(files, out_dir, args.output_format)
    jobs = args.jobs or os.cpu_count() or 1
    start = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="frr-batch-") as scratch, \
            ThreadPoolExecutor(max_workers=jobs) as pool:
        futures = [pool.submit(run_one_worker, args, src, dst, scratch, k)
                   for k, (src, dst) in enumerate(zip(files, targets))]
        rows = []
        for future in futures:
            row = future.result()
            rows.append(row)
            if row["status"] != "ok":
                complain(f"{row['file']}: {row['problem']}")
    seconds = time.perf_counter() - start
    say(summary_table(rows))
    failed = sum(r["status"] != "ok" for r in rows)
    say(f"{len(rows) - failed} of {len(rows)} file(s) done, {failed} failed, "
          f"{jobs} worker(s), {seconds:.1f} s")
    if args.report:
        combined = {"files": [{k: v for k, v in r.items()} for r in rows],
                    "failed": failed, "jobs": jobs, "seconds": round(seconds, 3)}
        write_text(args.report, json.dumps(combined, indent=1) + "\n")
    return 1 if failed else 0


# ---------------------------------------------------------------- demo
def add_object(bpy, name, verts, faces):
    mesh = bpy.data.meshes.new(name)
    mesh.from_pydata(np.asarray(verts).tolist(), [], [list(f) for f in faces])
    # Blender 5.0.1's from_pydata may leave ".select_edge" as a non-boolean layer
    for layer_name in (".select_edge", ".hide_edge"):
        layer = mesh.attributes.get(layer_name)
        if layer is not None and layer.data_type != 'BOOLEAN':
            mesh.attributes.remove(layer)
    mesh.validate()
    ob = bpy.data.objects.new(name, mesh)
    bpy.context.scene.collection.objects.link(ob)
    return ob


def run_demo(args):
    from . import demo_scene

    folder = Path(args.demo)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise FileProblem(f"cannot make the folder ({exc.strerror})") from None
    quiet_host(args.host_log)
    bpy = import_host()
    empty_scene(bpy)
    start = time.perf_counter()
    objects = [add_object(bpy, name, v, f) for name, v, f in demo_scene.scene_meshes()]
    write_file(bpy, folder / "demo-input.stl")
    report, best = remesh_scene(objects, args, "invented demo scene")
    paths = {"blend": folder / "demo-result.blend", "stl": folder / "demo-result.stl",
             "report": folder / "demo-report.json", "picture": folder / "demo-picture.svg"}
    write_file(bpy, paths["stl"])
    write_file(bpy, paths["blend"])
    report["output"] = [str(paths["blend"]), str(paths["stl"])]
    report["seconds"] = round(time.perf_counter() - start, 4)
    args.report, args.picture = paths["report"], paths["picture"]
    finish(report, best, args, "Demo: the largest remeshed region")
    say("Flat Region Remesh demo: an invented machined plate (closed, four bolt holes, "
          "sliver fans) and a navmesh floor with three pillars")
    for ob in report["objects"]:
        b, a, c = ob["before"], ob["after"], ob["changed_faces"]
        say(f"  {ob['name']}: {ob['vertices_merged']} vertices welded; "
            f"{ob['regions_changed']} flat region(s) remeshed, {ob['regions_skipped']} "
            f"skipped; triangles {b['triangles']} → {a['triangles']}; smallest angle "
            f"{angle_text(c['smallest_angle_before'])} → "
            f"{angle_text(c['smallest_angle_after'])}")
        if b["closed"]:
            after = "-" if a["volume"] is None else f"{a['volume']:.6f}"
            say(f"    closed before and {'after' if a['closed'] else 'NOT after'}; volume "
                f"{b['volume']:.6f} → {after}")
    say(f"  {report['seconds']:.1f} s; written: "
        + ", ".join(str(p) for p in (folder / "demo-input.stl", *paths.values())))
    return 0


# ---------------------------------------------------------------- entry point
def main(argv=None):
    args = parser().parse_args(command_line(argv))
    problem = check_options(args)
    if problem:
        complain(f"addon.batch: {problem}")
        return 2
    label = args.demo if args.demo is not None else args.input
    try:
        if args.demo is not None:
            return run_demo(args)
        if not args.input or not args.output:
            complain("addon.batch: give INPUT and -o OUTPUT (or --demo [DIR])")
            return 2
        if is_many(args.input):
            return run_many(args)
        run_file(args)
        return 0
    except FileProblem as exc:
        complain(f"{label}: {exc}")
        return 1
    except KeyboardInterrupt:
        complain(f"{label}: interrupted")
        return 130
    except Exception as exc:  # noqa: BLE001 (one line, no traceback, for any failure)
        complain(f"{label}: failed ({type(exc).__name__}: {' '.join(str(exc).split())})")
        return 1


if __name__ == "__main__":
    sys.exit(main())
