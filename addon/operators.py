"""Operators: read the host mesh in bulk, measure or remesh with the engine, write back.

``mesh.remesh_flat_regions`` / ``object.remesh_flat_regions`` and
``mesh.flip_to_better_angles`` share one flow (:func:`run_job`): read every mesh,
plan every edit with the engine (nothing is written yet; an exception here cancels
the run with the mesh untouched), then write all edits (a failing write restores
every mesh already written), report one line and store the figures on the scene.
In Edit Mode the run leaves Edit Mode (which writes the edit mesh into the mesh), reads
and writes in Object Mode, and enters Edit Mode again with the same objects.
"""

import time

import bmesh
import bpy
import numpy as np
from bpy.props import BoolProperty, EnumProperty, FloatProperty
from mathutils.bvhtree import BVHTree

from . import jobs, mesh_bridge, presets
from .measure import thin_triangle_mask
from .properties import FLIP_SETTINGS, REMESH_SETTINGS, SCENE_PROPERTY, annotate, fill_from_scene


def read_mesh_arrays(mesh):
    """Bulk copies (``foreach_get``) of a mesh: positions (N, 3) float64, face first
    corner and corner count (F,), corner vertex index (C,), face hidden flag (F,)."""
    positions = np.empty(3 * len(mesh.vertices), dtype=np.float32)
    mesh.vertices.foreach_get("co", positions)
    count = len(mesh.polygons)
    loop_starts = np.empty(count, dtype=np.int32)
    loop_totals = np.empty(count, dtype=np.int32)
    hidden = np.empty(count, dtype=bool)
    mesh.polygons.foreach_get("loop_start", loop_starts)
    mesh.polygons.foreach_get("loop_total", loop_totals)
    mesh.polygons.foreach_get("hide", hidden)
    corner_verts = np.empty(len(mesh.loops), dtype=np.int32)
    mesh.loops.foreach_get("vertex_index", corner_verts)
    return (positions.reshape(-1, 3).astype(np.float64), loop_starts, loop_totals,
            corner_verts, hidden)


def clear_selection(bm, mesh):
    """Deselect every element of the edit mesh `bm` that `mesh` (just synced from it with
    ``update_from_editmode``) reports selected; unselected elements are not visited."""
    for elements, items in ((bm.faces, mesh.polygons), (bm.edges, mesh.edges),
                            (bm.verts, mesh.vertices)):
        flags = np.empty(len(items), dtype=bool)
        items.foreach_get("select", flags)
        elements.ensure_lookup_table()
        for index in np.flatnonzero(flags).tolist():
            elements[index].select = False
    bm.select_history.clear()


def edit_meshes(context):
    """The mesh objects in Edit Mode, one per mesh datablock."""
    return [ob for ob in context.objects_in_mode_unique_data if ob.type == 'MESH']


class MESH_OT_select_thin_triangles(bpy.types.Operator):
    """Select the triangles whose smallest angle is below a threshold (switches to face \
select mode so exactly those faces are selected)"""

    bl_idname = "mesh.select_thin_triangles"
    bl_label = "Select Thin Triangles"
    bl_options = {'REGISTER', 'UNDO'}  # noqa: RUF012 (the host reads a set)

    min_angle: FloatProperty(
        name="Minimum Angle",
        description="Select the triangles with a corner angle below this, in degrees",
        default=20.0, min=0.0, max=60.0, precision=2,
    )
    extend: BoolProperty(
        name="Extend",
        description="Add to the current selection instead of replacing it",
        default=False,
    )

    @classmethod
    def poll(cls, context):
        return context.mode == 'EDIT_MESH'

    def execute(self, context):
        objects = edit_meshes(context)
        arrays = []
        for ob in objects:
            ob.update_from_editmode()  # the bulk arrays must see the edit mesh
            arrays.append(read_mesh_arrays(ob.data))
            positions, _starts, totals, corner_verts, _hidden = arrays[-1]
            try:
                jobs.check_finite(positions)   # no angle to measure
                jobs.check_faces_distinct(totals, corner_verts, len(positions))
            except ValueError as exc:   # refuse, change nothing
                self.report({'WARNING'}, f"{self.bl_label}: nothing changed ({ob.name}: {exc})")
                return {'CANCELLED'}
        context.tool_settings.mesh_select_mode = (False, False, True)
        total = 0
        for ob, (positions, starts, totals, corner_verts, hidden) in zip(objects, arrays):
            thin = np.flatnonzero(thin_triangle_mask(positions, starts, totals,
                                                     corner_verts, self.min_angle, hidden))
            bm = bmesh.from_edit_mesh(ob.data)
            bm.select_mode = {'FACE'}
            if not self.extend:
                clear_selection(bm, ob.data)
            bm.faces.ensure_lookup_table()
            faces = bm.faces
            for index in thin.tolist():
                faces[index].select_set(True)
            bm.select_flush_mode()
            bmesh.update_edit_mesh(ob.data, loop_triangles=False, destructive=False)
            total += len(thin)
        self.report({'INFO'}, f"Selected {total} triangles with a corner under "
                              f"{self.min_angle:g}° on {len(objects)} mesh(es)")
        return {'FINISHED'}


# ---------------------------------------------------------------- the shared flow
def selected_meshes(context):
    """Selected mesh objects in Object Mode, one per mesh datablock."""
    seen, out = set(), []
    for ob in context.selected_objects:
        if ob.type == 'MESH' and ob.data.name_full not in seen:
            seen.add(ob.data.name_full)
            out.append(ob)
    return out


def editable(ob):
    return ob.data.library is None and getattr(ob.data, "is_editable", True)


class Planned:
    """One mesh's planned edit."""

    def __init__(self, ob, data, edit, new_positions, select_new):
        self.ob = ob
        self.data = data
        self.edit = edit
        self.new_positions = new_positions
        self.select_new = select_new
        self.group_rows = None
        if data.has_vertex_groups and len(edit.vertex_weight_indices):
            sources = np.unique(edit.vertex_weight_indices)
            self.group_rows = mesh_bridge.vertex_group_rows(ob.data, sources)


def _enter_edit_mode(objects):
    """Edit Mode again for exactly `objects` (other selected objects keep their flag)."""
    view_layer = bpy.context.view_layer
    others = [ob for ob in view_layer.objects if ob.select_get() and ob not in objects]
    for ob in others:
        ob.select_set(False)
    for ob in objects:
        ob.select_set(True)
    bpy.ops.object.mode_set(mode='EDIT')
    for ob in others:
        ob.select_set(True)


def write_all(plans):
    """Write every changed plan; on any failure restore the meshes written so far."""
    changed = [p for p in plans if p.edit.changed]
    backups = []
    try:
        for plan in changed:
            _, backup = mesh_bridge.commit(plan.ob.data, plan.data, plan.edit,
                                           plan.new_positions, plan.group_rows,
                                           plan.select_new)
            backups.append((plan.ob.data, backup))
    except Exception:
        for mesh, backup in reversed(backups):
            backup.restore(mesh)
        raise
    finally:
        for _, backup in backups:
            backup.free()


def store_figures(context, operator, figures, line, seconds):
    settings = getattr(context.scene, SCENE_PROPERTY, None)
    if settings is None:
        return
    last = settings.last_run
    last.operator = operator
    last.summary = line
    last.meshes = figures.meshes
    last.regions_changed = figures.regions_changed
    last.regions_skipped = figures.regions_skipped
    last.skip_reasons = figures.reason_text()
    last.triangles_before = figures.triangles_before
    last.triangles_after = figures.triangles_after
    last.min_angle_before = figures.min_angle_before if figures.triangles_before else -1.0
    last.min_angle_after = figures.min_angle_after if figures.triangles_after else -1.0
    last.flips = figures.flips
    last.added_vertices = figures.added_vertices
    last.seconds = seconds
    last.engine_seconds = figures.engine_seconds


def run_job(operator, context, objects, plan_one, edit_mode, kind):
    """Read, plan (engine), write, report.  plan_one(ob, data, figures) -> Planned;
    kind "remesh" or "flip" (the wording of the report)."""
    start = time.perf_counter()
    wm = context.window_manager
    wm.progress_begin(0, 2 * len(objects) + 1)
    figures = jobs.Figures()
    in_mode = list(context.objects_in_mode) if edit_mode else []
    planning = None      # the object being planned, named in a failure's report
    try:
        if edit_mode:   # the mesh API reads and writes bulk data in Object Mode
            bpy.ops.object.mode_set(mode='OBJECT')
        plans = []
        for step, ob in enumerate(objects):
            planning = ob.name
            data = mesh_bridge.read_mesh(ob.data, len(ob.vertex_groups))
            plans.append(plan_one(ob, data, figures))
            figures.meshes += 1
            wm.progress_update(step + 1)
        planning = None
        write_all(plans)
        wm.progress_update(2 * len(objects) + 1)
    except Exception as exc:  # noqa: BLE001 (any failure cancels with nothing changed)
        where = f"{planning}: " if planning else ""
        text = " ".join(str(exc).split())
        operator.report({'WARNING'}, f"{operator.bl_label}: nothing changed "
                                     f"({where}{type(exc).__name__}: {text})")
        return {'CANCELLED'}
    finally:
        if edit_mode:
            _enter_edit_mode(in_mode)
        wm.progress_end()
    line = figures.line(kind)
    operator.report({'INFO'}, line)
    store_figures(context, operator.bl_idname, figures, line, time.perf_counter() - start)
    return {'FINISHED'}


def _engine_timed(figures, fn, *args, **kwargs):
    start = time.perf_counter()
    try:
        return fn(*args, **kwargs)
    finally:
        figures.engine_seconds += time.perf_counter() - start


def _break_pairs(op, data):
    pairs, _counts = mesh_bridge.break_edge_pairs(
        data, seams=op.break_at_seams, sharp=op.break_at_sharp,
        material_borders=op.break_at_material_borders)
    return pairs


# ---------------------------------------------------------------- remesh
class RemeshFlatRegions:
    """Shared by the Edit Mode and Object Mode remesh operators."""

    bl_options = {'REGISTER', 'UNDO'}  # noqa: RUF012 (the host reads a set)
    edit_mode = False

    def plan(self, ob, data, figures):
        world = mesh_bridge.world_positions(data, ob.matrix_world)
        mask = ~data.face_hidden
        if self.edit_mode:
            mask &= data.face_selected
        options = {name: getattr(self, name) for name in (
            "min_angle", "max_edge_length", "flat_angle", "keep_boundary", "smoothing",
            "straight_run_tolerance", "keep_interior_vertices", "point_limit")}
        edit = _engine_timed(figures, jobs.remesh_plan, data, world, mask,
                             _break_pairs(self, data), **options)
        figures.add_regions(edit.regions)
        if edit.changed:
            figures.add_faces(*jobs.edit_figures(world, data, edit))
            figures.added_vertices += len(edit.new_vertices)
        return Planned(ob, data, edit, jobs.new_local_positions(data, edit), self.edit_mode)

    def execute(self, context):
        fill_from_scene(self, context, REMESH_SETTINGS)
        objects = self.targets(context)
        if not objects:
            self.report({'WARNING'}, "No editable mesh to remesh")
            return {'CANCELLED'}
        return run_job(self, context, objects, self.plan, self.edit_mode, "remesh")

    def draw(self, context):
        layout = self.layout
        layout.use_property_split = True
        for name in REMESH_SETTINGS:
            layout.prop(self, name)


class MESH_OT_remesh_flat_regions(RemeshFlatRegions, bpy.types.Operator):
    """Re-triangulate the flat regions of the selected faces into well-shaped \
triangles; outline vertices stay where they are"""

    bl_idname = "mesh.remesh_flat_regions"
    bl_label = "Remesh Flat Regions"
    edit_mode = True

    @classmethod
    def poll(cls, context):
        return context.mode == 'EDIT_MESH'

    @staticmethod
    def targets(context):
        return [ob for ob in edit_meshes(context) if editable(ob)]


class OBJECT_OT_remesh_flat_regions(RemeshFlatRegions, bpy.types.Operator):
    """Re-triangulate the flat regions of every selected mesh object into \
well-shaped triangles; outline vertices stay where they are"""

    bl_idname = "object.remesh_flat_regions"
    bl_label = "Remesh Flat Regions"
    edit_mode = False

    @classmethod
    def poll(cls, context):
        return context.mode == 'OBJECT' and any(
            ob.type == 'MESH' for ob in context.selected_objects)

    @staticmethod
    def targets(context):
        return [ob for ob in selected_meshes(context) if editable(ob)]


annotate(MESH_OT_remesh_flat_regions, REMESH_SETTINGS)
annotate(OBJECT_OT_remesh_flat_regions, REMESH_SETTINGS)


# ---------------------------------------------------------------- flips
def bvh_locator(points, triangles):
    """Query function: the triangle (of a flat 2D triangulation) containing each point,
    found with the host's BVH tree."""
    pts3 = [(float(x), float(y), 0.0) for x, y in np.asarray(points).tolist()]
    tree = BVHTree.FromPolygons(pts3, np.asarray(triangles).tolist(), all_triangles=True)

    def locate(queries):
        out = []
        for x, y in np.asarray(queries).tolist():
            hit = tree.find_nearest((x, y, 0.0))
            out.append(hit[2] if hit[2] is not None else 0)
        return out

    return locate


class MESH_OT_flip_to_better_angles(bpy.types.Operator):
    """Flip edges between the selected triangles where that widens the smallest \
angle (flat parts only; no vertex is added or moved)"""

    bl_idname = "mesh.flip_to_better_angles"
    bl_label = "Flip to Better Angles"
    bl_options = {'REGISTER', 'UNDO'}  # noqa: RUF012

    @classmethod
    def poll(cls, context):
        return context.mode == 'EDIT_MESH'

    def plan(self, ob, data, figures):
        world = mesh_bridge.world_positions(data, ob.matrix_world)
        mask = data.face_selected & ~data.face_hidden
        edit, flips = _engine_timed(figures, jobs.flip_plan, data, world, mask,
                                    _break_pairs(self, data), self.flat_angle, bvh_locator)
        figures.add_regions(edit.regions)
        figures.flips += flips
        if edit.changed:
            figures.add_faces(*jobs.edit_figures(world, data, edit))
        return Planned(ob, data, edit, np.zeros((0, 3)), True)

    def execute(self, context):
        fill_from_scene(self, context, FLIP_SETTINGS)
        objects = [ob for ob in edit_meshes(context) if editable(ob)]
        return run_job(self, context, objects, self.plan, True, "flip")


annotate(MESH_OT_flip_to_better_angles, FLIP_SETTINGS)


# ---------------------------------------------------------------- presets
class SCENE_OT_flat_region_remesh_preset(bpy.types.Operator):
    """Set the remesh settings for a common job"""

    bl_idname = "scene.flat_region_remesh_preset"
    bl_label = "Apply Trade Preset"
    bl_options = {'REGISTER', 'UNDO'}  # noqa: RUF012

    preset: EnumProperty(
        name="Preset",
        items=[(key, p.label, p.description) for key, p in presets.PRESETS.items()],
    )

    @classmethod
    def description(cls, context, properties):
        return presets.PRESETS[properties.preset].description

    def execute(self, context):
        settings = getattr(context.scene, SCENE_PROPERTY)
        size = presets.object_size(context)
        values = presets.PRESETS[self.preset].values(size)
        for name, value in values.items():
            setattr(settings, name, value)
        self.report({'INFO'}, f"Settings for {presets.PRESETS[self.preset].label.lower()}")
        return {'FINISHED'}


CLASSES = (MESH_OT_select_thin_triangles, MESH_OT_remesh_flat_regions,
           OBJECT_OT_remesh_flat_regions, MESH_OT_flip_to_better_angles,
           SCENE_OT_flat_region_remesh_preset)
