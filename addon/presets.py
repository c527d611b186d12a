"""Three starting points, one per trade, in plain words (numpy-free, no host import).

Lengths depend on the model, so a preset's lengths are fractions of the largest
dimension of the active object (in scene units), rounded to two significant digits;
without an active mesh it assumes a 10-unit model.
"""

import math
from dataclasses import dataclass

DEFAULT_SIZE = 10.0


@dataclass(frozen=True)
class Preset:
    label: str
    description: str
    settings: dict               # fixed values
    edge_fraction: float         # max edge length = this x model size (0 = no limit)
    straight_fraction: float = 0.0   # straight-run tolerance = this x model size

    def values(self, size):
        out = dict(self.settings)
        out["max_edge_length"] = round_length(self.edge_fraction * size)
        out["straight_run_tolerance"] = round_length(self.straight_fraction * size)
        return out


def round_length(value):
    """`value` rounded to two significant digits (0 stays 0)."""
    if value <= 0 or not math.isfinite(value):
        return 0.0
    digits = 1 - math.floor(math.log10(value))
    return round(value, digits)


PRESETS = {
    "PRINT": Preset(
        label="Print Cleanup",
        description="For 3D printing: keep every outline edge as it is (nothing outside "
                    "the flat parts changes) and aim high, 32 degrees smallest angle, "
                    "without a size limit",
        settings={"min_angle": 32.0, "keep_boundary": True, "flat_angle": 0.5, "smoothing": False,
                      "keep_interior_vertices": False},
        edge_fraction=0.0),
    "NAVMESH": Preset(
        label="Navmesh Floor",
        description="For walkable floors: limit edge length to a tenth of the model and "
                    "straighten outline runs (vertices within a thousandth of the model "
                    "of a straight wall go), 25 degrees smallest angle",
        settings={"min_angle": 25.0, "keep_boundary": False, "flat_angle": 2.0, "smoothing": False,
                      "keep_interior_vertices": False},
        edge_fraction=0.1, straight_fraction=0.001),
    "EVEN": Preset(
        label="Even Density",
        description="For deformation and baking: edges no longer than a twenty-fifth of "
                    "the model, inner vertices smoothed, 30 degrees smallest angle",
        settings={"min_angle": 30.0, "keep_boundary": False, "flat_angle": 1.0, "smoothing": True,
                      "keep_interior_vertices": False},
        edge_fraction=0.04),
}


def object_size(context):
    """Largest dimension (scene units) of the active mesh object, else DEFAULT_SIZE."""
    ob = getattr(context, "active_object", None)
    if ob is not None and ob.type == 'MESH':
        size = max(ob.dimensions)
        if size > 0:
            return float(size)
    return DEFAULT_SIZE

