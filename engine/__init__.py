"""Flat Region Remesh geometry engine: pure Python + numpy, no host imports.

Public API:
    triangulate(points, segments=None, *, holes=None, fill=None) -> Triangulation
    legalize(points, triangles, *, fixed=None) -> (triangles, flips)
    quality(points, triangles) -> Quality
"""

from .cdt import triangulate
from .legalize import legalize
from .quality import Quality, quality
from .triangulation import Triangulation

__all__ = ["triangulate", "legalize", "quality", "Quality", "Triangulation"]
__version__ = "0.1.0"
