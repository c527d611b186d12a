"""Flat Region Remesh geometry engine: pure Python + numpy, no host imports.

Public API:
    triangulate(points, segments=None, *, holes=None, fill=None) -> Triangulation
    legalize(points, triangles, *, fixed=None) -> (triangles, flips)
    quality(points, triangles) -> Quality
    refine(tri, *, min_angle=30.0, max_area=None, max_edge=None, keep_boundary=False,
           max_points=None, ...) -> Triangulation
    remesh_flat_regions(vertices, faces, *, face_mask=None, flat_angle=1.0, ...) -> MeshEdit
"""

from .cdt import triangulate
from .legalize import legalize
from .quality import Quality, quality
from .mesh_edit import MeshEdit, RegionReport
from .polygons import PolygonList
from .refine import refine
from .remesh import remesh_flat_regions
from .triangulation import Triangulation

__all__ = ["triangulate", "legalize", "refine", "quality", "remesh_flat_regions", "Quality",
           "Triangulation", "MeshEdit", "RegionReport", "PolygonList"]
__version__ = "0.1.0"
