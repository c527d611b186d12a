"""The geometry engine, wherever it travels: the subpackage ``engine`` beside these
modules inside the extension zip (relative import), else the repository's top-level
``engine`` package.  Every add-on module reaches the engine through this module."""

from importlib.util import find_spec

if find_spec(f"{__package__}.engine") is not None:
    from . import engine
    from .engine.flat_regions import EdgeTable, find_regions
    from .engine.quality import triangle_angles
else:
    import engine
    from engine.flat_regions import EdgeTable, find_regions
    from engine.quality import triangle_angles

__all__ = ["EdgeTable", "engine", "find_regions", "triangle_angles"]
