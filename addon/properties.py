"""Scene settings of the add-on (``scene.flat_region_remesh``), shown in the sidebar.

Angles are plain degrees and lengths scene units, so scripts read the same numbers
the panel shows.  The remesh operators (still to come) take these as their defaults.
"""

import bpy
from bpy.props import BoolProperty, FloatProperty, IntProperty

SCENE_PROPERTY = "flat_region_remesh"

# Panel sections: (heading, setting names in drawing order).
SETTING_GROUPS = (
    ("Triangles", ("min_angle", "max_edge_length", "smoothing_passes")),
    ("Regions", ("flat_angle", "break_at_seams", "break_at_sharp",
                 "break_at_material_borders")),
    ("Outline and vertices", ("keep_boundary", "straight_run_tolerance",
                              "keep_interior_vertices")),
)


class FlatRegionRemeshSettings(bpy.types.PropertyGroup):
    """Settings for remeshing the flat regions of a mesh."""

    min_angle: FloatProperty(
        name="Minimum Angle",
        description="Smallest corner angle wanted in the new triangles, in degrees "
                    "(up to about 33 degrees is reached in practice)",
        default=30.0, min=0.0, max=59.0, soft_max=34.0, precision=1,
    )
    max_edge_length: FloatProperty(
        name="Max Edge Length",
        description="Longest edge allowed in the new triangles, in scene units "
                    "(0 = no limit)",
        default=0.0, min=0.0, subtype='DISTANCE', unit='LENGTH',
    )
    smoothing_passes: IntProperty(
        name="Smoothing Passes",
        description="Sweeps that move new inner vertices to widen their triangles' "
                    "angles, a count (0 = no smoothing)",
        default=0, min=0, max=100, soft_max=20,
    )
    flat_angle: FloatProperty(
        name="Flat Angle",
        description="Neighbouring faces whose normals differ by at most this many "
                    "degrees belong to one flat region",
        default=1.0, min=0.0, max=89.0, soft_max=15.0, precision=2,
    )
    break_at_seams: BoolProperty(
        name="Split at UV Seams",
        description="No region crosses an edge marked as a UV seam",
        default=True,
    )
    break_at_sharp: BoolProperty(
        name="Split at Sharp Edges",
        description="No region crosses an edge marked sharp",
        default=True,
    )
    break_at_material_borders: BoolProperty(
        name="Split at Material Borders",
        description="No region crosses an edge between faces of different materials",
        default=True,
    )
    keep_boundary: BoolProperty(
        name="Keep Outline",
        description="Leave every outline edge of a region as it is: no vertex is added "
                    "on it, so faces outside the region never change",
        default=False,
    )
    straight_run_tolerance: FloatProperty(
        name="Straight-Run Tolerance",
        description="Outline vertices within this distance of the straight line "
                    "through their neighbours are dropped where no unchanged face uses "
                    "them, in scene units (0 = keep every outline vertex)",
        default=0.0, min=0.0, subtype='DISTANCE', unit='LENGTH',
    )
    keep_interior_vertices: BoolProperty(
        name="Keep Inner Vertices",
        description="Keep the original vertices inside a flat region (by default they "
                    "are dropped, as they do not shape a flat surface)",
        default=False,
    )
