"""Scene settings of the add-on (``scene.flat_region_remesh``), shown in the sidebar.

Angles are plain degrees and lengths scene units, so scripts read the same numbers
the panel shows.  The remesh and flip operators carry the same properties (made by
the same functions below); any property a caller does not set takes the scene's
value, so the panel's settings are the operators' defaults and the redo panel
re-runs with what was used.
"""

import bpy
from bpy.props import BoolProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

SCENE_PROPERTY = "flat_region_remesh"

# Panel sections: (heading, setting names in drawing order).
SETTING_GROUPS = (
    ("Triangles", ("min_angle", "max_edge_length", "smoothing", "point_limit")),
    ("Regions", ("flat_angle", "break_at_seams", "break_at_sharp",
                 "break_at_material_borders")),
    ("Outline and vertices", ("keep_boundary", "straight_run_tolerance",
                              "keep_interior_vertices")),
)
REMESH_SETTINGS = tuple(name for _, names in SETTING_GROUPS for name in names)
FLIP_SETTINGS = ("flat_angle", "break_at_seams", "break_at_sharp", "break_at_material_borders")


def setting_properties():
    """Fresh property definitions of every setting (one call per class using them)."""
    return {
        "min_angle": FloatProperty(
            name="Minimum Angle",
            description="Smallest corner angle wanted in the new triangles, in degrees "
                        "(up to about 33 degrees is reached in practice)",
            default=30.0, min=0.0, max=59.0, soft_max=34.0, precision=1),
        "max_edge_length": FloatProperty(
            name="Max Edge Length",
            description="Longest edge allowed in the new triangles, in scene units "
                        "(0 = no limit)",
            default=0.0, min=0.0, subtype='DISTANCE', unit='LENGTH'),
        "smoothing": BoolProperty(
            name="Smooth Inner Vertices",
            description="Move the new inner vertices to widen their triangles' angles "
                        "(a few sweeps; outline vertices never move)",
            default=False),
        "point_limit": IntProperty(
            name="Point Limit",
            description="Most points refinement adds in each region, a count (points a "
                        "neighbouring region puts on a shared edge come on top); a region "
                        "that reaches it keeps what was done so far (0 = no limit)",
            default=200000, min=0, soft_max=1000000),
        "flat_angle": FloatProperty(
            name="Flat Angle",
            description="Neighbouring faces whose normals differ by at most this many "
                        "degrees belong to one flat region",
            default=1.0, min=0.0, max=89.0, soft_max=15.0, precision=2),
        "break_at_seams": BoolProperty(
            name="Split at UV Seams",
            description="No region crosses an edge marked as a UV seam (edges where a "
                        "UV map or colour jumps always split regions)",
            default=True),
        "break_at_sharp": BoolProperty(
            name="Split at Sharp Edges",
            description="No region crosses an edge marked sharp",
            default=True),
        "break_at_material_borders": BoolProperty(
            name="Split at Material Borders",
            description="No region crosses an edge between faces of different materials",
            default=True),
        "keep_boundary": BoolProperty(
            name="Keep Outline",
            description="Leave every outline edge of a region as it is: no vertex is "
                        "added on it, so faces outside the region never change",
            default=False),
        "straight_run_tolerance": FloatProperty(
            name="Straight-Run Tolerance",
            description="Outline vertices within this distance of the straight line "
                        "through their neighbours are dropped where no unchanged face "
                        "uses them, in scene units (0 = keep every outline vertex)",
            default=0.0, min=0.0, subtype='DISTANCE', unit='LENGTH'),
        "keep_interior_vertices": BoolProperty(
            name="Keep Inner Vertices",
            description="Keep the original vertices inside a flat region (by default "
                        "they are dropped, as they do not shape a flat surface)",
            default=False),
    }


def annotate(cls, names):
    """Give `cls` the setting properties `names` (before it is registered)."""
    props = setting_properties()
    cls.__annotations__ = {**getattr(cls, "__annotations__", {}),
                           **{name: props[name] for name in names}}
    return cls


def fill_from_scene(operator, context, names):
    """Properties the caller did not set take the scene's settings."""
    settings = getattr(context.scene, SCENE_PROPERTY, None)
    if settings is None:
        return
    for name in names:
        if not operator.properties.is_property_set(name):
            setattr(operator, name, getattr(settings, name))


class FlatRegionRemeshLastRun(bpy.types.PropertyGroup):
    """Figures of the last remesh or flip run, for the panel."""

    operator: StringProperty(name="Operator", description="The last run's operator")
    summary: StringProperty(name="Summary", description="The last run's one-line report")
    meshes: IntProperty(name="Meshes", description="Meshes worked on, a count")
    regions_changed: IntProperty(name="Regions Changed",
                                 description="Flat regions re-triangulated, a count")
    regions_skipped: IntProperty(name="Regions Skipped",
                                 description="Flat regions left as they were, a count")
    skip_reasons: StringProperty(name="Skip Reasons",
                                 description="Why regions were left as they were")
    triangles_before: IntProperty(name="Triangles Before",
                                  description="Triangles of the changed faces before")
    triangles_after: IntProperty(name="Triangles After",
                                 description="Triangles of the changed faces after")
    min_angle_before: FloatProperty(name="Smallest Angle Before",
                                    description="Smallest corner angle of the changed "
                                                "faces before, in degrees (-1 = none)",
                                    default=-1.0)
    min_angle_after: FloatProperty(name="Smallest Angle After",
                                   description="Smallest corner angle of the new faces, "
                                               "in degrees (-1 = none)", default=-1.0)
    flips: IntProperty(name="Flips", description="Edges flipped, a count")
    added_vertices: IntProperty(name="New Vertices", description="Vertices added, a count")
    seconds: FloatProperty(name="Time", description="Time of the whole run, in seconds")
    engine_seconds: FloatProperty(name="Engine Time",
                                  description="Time spent in the geometry engine, in seconds")


class FlatRegionRemeshSettings(bpy.types.PropertyGroup):
    """Settings for remeshing the flat regions of a mesh."""

    last_run: PointerProperty(type=FlatRegionRemeshLastRun)


annotate(FlatRegionRemeshSettings, REMESH_SETTINGS)

CLASSES = (FlatRegionRemeshLastRun, FlatRegionRemeshSettings)
