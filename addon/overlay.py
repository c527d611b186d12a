"""The angle overlay: faces of the edited (or selected) meshes coloured by their smallest
corner angle in the 3D View, with a small readout of the figures and a colour legend.

What is drawn is the mesh as displayed (the evaluated object, so modifiers shown in
the viewport are included).  Drawing uses the host's ``gpu`` module (a flat-colour batch per object, drawn after
the scene with depth test) and ``blf`` for the text.  Handlers exist only while the
overlay is on, and only when there is a window to draw in: in background mode
:func:`enable` does nothing and returns False.  Geometry is cached per object and
dropped whenever the dependency graph reports a geometry change.
"""

import math

import bpy
import numpy as np

from . import measure, transfer
from .properties import SCENE_PROPERTY

_handles = []
_cache = {}
_errors = []


def available():
    """True when there is a window to draw in (never in background mode)."""
    wm = getattr(bpy.context, "window_manager", None)
    return not bpy.app.background and wm is not None and len(wm.windows) > 0


def is_enabled():
    return bool(_handles)


def enable():
    """Add the draw handlers; returns False (and adds nothing) without a window."""
    if _handles:
        return True
    if not available():
        return False
    space = bpy.types.SpaceView3D
    _handles.append(space.draw_handler_add(_draw_faces, (), 'WINDOW', 'POST_VIEW'))
    _handles.append(space.draw_handler_add(_draw_readout, (), 'WINDOW', 'POST_PIXEL'))
    if _on_depsgraph_update not in bpy.app.handlers.depsgraph_update_post:
        bpy.app.handlers.depsgraph_update_post.append(_on_depsgraph_update)
    _tag_redraw()
    return True


def disable():
    """Remove every handler and cached batch (safe to call when already off)."""
    while _handles:
        bpy.types.SpaceView3D.draw_handler_remove(_handles.pop(), 'WINDOW')
    if _on_depsgraph_update in bpy.app.handlers.depsgraph_update_post:
        bpy.app.handlers.depsgraph_update_post.remove(_on_depsgraph_update)
    _cache.clear()
    _tag_redraw()


def _tag_redraw():
    wm = getattr(bpy.context, "window_manager", None)
    for window in getattr(wm, "windows", []):
        for area in window.screen.areas:
            if area.type == 'VIEW_3D':
                area.tag_redraw()


@bpy.app.handlers.persistent
def _on_depsgraph_update(_scene, depsgraph):
    if any(update.is_updated_geometry for update in depsgraph.updates):
        _cache.clear()


def mesh_quality(ob, depsgraph=None):
    """What the overlay draws for one mesh object, from its geometry as displayed (the
    evaluated object: the edit mesh in Edit Mode, modifiers included): world-space
    triangle corners (3T, 3), their colours (3T, 4), each face's smallest corner angle
    and corner count."""
    depsgraph = depsgraph or bpy.context.evaluated_depsgraph_get()
    evaluated = ob.evaluated_get(depsgraph)
    mesh = evaluated.to_mesh()
    try:
        nv, nf, nc = len(mesh.vertices), len(mesh.polygons), len(mesh.loops)
        co = np.empty(3 * nv, dtype=np.float32)
        mesh.vertices.foreach_get("co", co)
        starts = np.empty(nf, dtype=np.int32)
        totals = np.empty(nf, dtype=np.int32)
        corner_verts = np.empty(nc, dtype=np.int32)
        mesh.polygons.foreach_get("loop_start", starts)
        mesh.polygons.foreach_get("loop_total", totals)
        mesh.loops.foreach_get("vertex_index", corner_verts)
        mesh.calc_loop_triangles()
        nt = len(mesh.loop_triangles)
        tri = np.empty(3 * nt, dtype=np.int32)
        poly = np.empty(nt, dtype=np.int32)
        mesh.loop_triangles.foreach_get("vertices", tri)
        mesh.loop_triangles.foreach_get("polygon_index", poly)
    finally:
        evaluated.to_mesh_clear()
    m = np.array(ob.matrix_world, dtype=np.float64)
    world = co.reshape(-1, 3).astype(np.float64) @ m[:3, :3].T + m[:3, 3]
    angles = transfer.face_smallest_angles(world, starts, totals, corner_verts)
    corners = world[tri.reshape(-1, 3)]
    normal = np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0])
    length = np.linalg.norm(normal, axis=1, keepdims=True)
    normal = np.divide(normal, length, out=np.zeros_like(normal), where=length > 0)
    extent = float(np.linalg.norm(world.max(axis=0) - world.min(axis=0))) if nv else 1.0
    lifted = corners + normal[:, None, :] * (1e-4 * max(extent, 1e-6))
    colours = np.repeat(measure.angle_colours(angles[poly]), 3, axis=0)
    return {"coords": lifted.reshape(-1, 3).astype(np.float32),
            "colours": colours.astype(np.float32),
            "face_angles": angles, "totals": totals}


def _objects(context):
    if context.mode == 'EDIT_MESH':
        return [ob for ob in context.objects_in_mode if ob.type == 'MESH']
    return [ob for ob in context.view_layer.objects.selected
            if ob.type == 'MESH' and ob.visible_get()]


def _entry(ob):
    key = (ob.name_full, ob.mode, tuple(round(v, 9) for row in ob.matrix_world for v in row))
    entry = _cache.get(key)
    if entry is None:
        for old in [k for k in _cache if k[0] == ob.name_full]:
            del _cache[old]
        entry = _cache[key] = mesh_quality(ob)
    return entry


def _report(exc):
    if not _errors:
        print(f"Flat Region Remesh overlay: {type(exc).__name__}: {exc}")
    _errors.append(exc)


def _restore_gpu_state():
    import gpu

    try:
        gpu.state.depth_mask_set(True)
        gpu.state.depth_test_set('NONE')
        gpu.state.blend_set('NONE')
    except Exception as exc:  # noqa: BLE001 (no drawing context)
        _report(exc)


def _draw_faces():
    import gpu
    from gpu_extras.batch import batch_for_shader

    try:
        shader = gpu.shader.from_builtin('FLAT_COLOR')
        gpu.state.blend_set('ALPHA')
        gpu.state.depth_test_set('LESS_EQUAL')
        gpu.state.depth_mask_set(False)
        for ob in _objects(bpy.context):
            entry = _entry(ob)
            if len(entry["coords"]) == 0:
                continue
            if "batch" not in entry:
                entry["batch"] = batch_for_shader(shader, 'TRIS', {
                    "pos": entry["coords"], "color": entry["colours"]})
            entry["batch"].draw(shader)
    except Exception as exc:  # noqa: BLE001 (a drawing problem must not stop the viewport)
        _report(exc)
    finally:
        _restore_gpu_state()


def readout_lines(figures, name):
    smallest = figures["smallest"]
    angle = "-" if not math.isfinite(smallest) else f"{smallest:.1f}°"
    return [f"{name}: {figures['faces']} faces, {figures['triangles']} triangles",
            f"smallest angle {angle}",
            f"{figures['under']} triangle(s) under {figures['threshold']:g}°"]


def _draw_readout():
    import blf
    import gpu
    from gpu_extras.batch import batch_for_shader

    try:
        context = bpy.context
        ob = context.active_object
        if ob is None or ob.type != 'MESH' or ob not in _objects(context):
            return
        settings = getattr(context.scene, SCENE_PROPERTY, None)
        threshold = settings.min_angle if settings is not None else 30.0
        entry = _entry(ob)
        figures = measure.overlay_figures(entry["face_angles"], entry["totals"], threshold)
        font, x, y = 0, 24, context.region.height - 80
        blf.size(font, 13)
        blf.enable(font, blf.SHADOW)
        blf.shadow(font, 3, 0.0, 0.0, 0.0, 0.8)
        blf.color(font, 0.95, 0.95, 0.95, 1.0)
        for line in readout_lines(figures, ob.name):
            blf.position(font, x, y, 0)
            blf.draw(font, line)
            y -= 18
        blf.disable(font, blf.SHADOW)
        # legend: one swatch per ramp stop, its angle beside it
        shader = gpu.shader.from_builtin('UNIFORM_COLOR')
        gpu.state.blend_set('ALPHA')
        y -= 6
        for stop, rgb in measure.RAMP:
            quad = [(x, y), (x + 14, y), (x + 14, y + 12), (x, y + 12)]
            batch = batch_for_shader(shader, 'TRIS', {"pos": quad},
                                     indices=((0, 1, 2), (0, 2, 3)))
            shader.uniform_float("color", (*rgb, 0.9))
            batch.draw(shader)
            blf.position(font, x + 20, y + 1, 0)
            blf.draw(font, f"{stop:g}°")
            x += 58
    except Exception as exc:  # noqa: BLE001
        _report(exc)
    finally:
        _restore_gpu_state()


class VIEW3D_OT_flat_region_remesh_overlay(bpy.types.Operator):
    """Show or hide the angle overlay: faces coloured by their smallest corner angle \
(degrees) and a readout of the figures"""

    bl_idname = "view3d.flat_region_remesh_overlay"
    bl_label = "Angle Overlay"

    @classmethod
    def poll(cls, context):
        return available()

    def execute(self, context):
        if is_enabled():
            disable()
            self.report({'INFO'}, "Angle overlay off")
        elif enable():
            self.report({'INFO'}, "Angle overlay on")
        else:
            self.report({'WARNING'}, "No window to draw the angle overlay in")
            return {'CANCELLED'}
        return {'FINISHED'}


CLASSES = (VIEW3D_OT_flat_region_remesh_overlay,)
