"""Smallest corner angle of planar polygons (numpy only, no host import)."""

import numpy as np


def polygon_min_angles(polygons):
    """Smallest corner angle in degrees of each (k, 2) or (k, 3) polygon;
    straight corners (180 degrees, points added on an edge) are ignored."""
    out = np.empty(len(polygons))
    for i, poly in enumerate(polygons):
        p = np.asarray(poly, dtype=np.float64)
        a = np.roll(p, -1, axis=0) - p
        b = np.roll(p, 1, axis=0) - p
        if p.shape[1] == 2:
            cross = np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0])
        else:
            cross = np.linalg.norm(np.cross(a, b), axis=1)
        angle = np.degrees(np.arctan2(cross, (a * b).sum(axis=1)))
        angle = angle[angle < 179.999999]
        out[i] = angle.min() if len(angle) else 180.0
    return out
