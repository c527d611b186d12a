"""Flat Region Remesh geometry engine: pure Python + numpy, no host imports.

Public API:
    triangulate(points, segments=None, *, holes=None, fill=None) -> Triangulation
    legalize(points, triangles, *, fixed=None) -> (triangles, flips)
    quality(points, triangles) -> Quality
    refine(tri, *, min_angle=30.0, max_area=None, max_edge=None, keep_boundary=False,
           max_points=None, ...) -> Triangulation
"""

from .cdt import triangulate
from .legalize import legalize
from .quality import Quality, quality
from .refine import refine
from .triangulation import Triangulation

__all__ = ["triangulate", "legalize", "refine", "quality", "Quality", "Triangulation"]
__version__ = "0.1.0"
