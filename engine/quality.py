"""Triangle shape figures: smallest and largest angles and their histogram."""

from dataclasses import dataclass

import numpy as np

BIN_WIDTH = 5.0


@dataclass
class Quality:
    """Angle figures of a set of triangles, in degrees.

    min_angle, max_angle   smallest / largest angle over all triangles
    triangle_min_angles    (T,) smallest angle of each triangle
    histogram              counts of triangle_min_angles per 5-degree bin
    bin_edges              the bins' edges: 0, 5, ..., 60
    """

    min_angle: float
    max_angle: float
    triangle_min_angles: np.ndarray
    histogram: np.ndarray
    bin_edges: np.ndarray

    def count_below(self, threshold):
        """Number of triangles whose smallest angle is below `threshold` degrees."""
        return int((self.triangle_min_angles < threshold).sum())

    @property
    def triangle_count(self):
        return len(self.triangle_min_angles)


def triangle_angles(points, triangles):
    """(T, 3) angles in degrees at each corner (atan2 of cross and dot: accurate
    for slivers)."""
    p = np.asarray(points, dtype=np.float64)[np.asarray(triangles, dtype=np.int64)]
    angles = np.empty(p.shape[:2])
    for k in range(3):
        a = p[:, (k + 1) % 3] - p[:, k]
        b = p[:, (k + 2) % 3] - p[:, k]
        cross = np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0])
        dot = (a * b).sum(axis=1)
        angles[:, k] = np.degrees(np.arctan2(cross, dot))
    return angles


def quality(points, triangles):
    """Angle figures (:class:`Quality`) of `triangles` over `points`."""
    tris = np.asarray(triangles, dtype=np.int64).reshape(-1, 3)
    edges = np.arange(0.0, 60.0 + BIN_WIDTH, BIN_WIDTH)
    if len(tris) == 0:
        return Quality(float("nan"), float("nan"), np.zeros(0), np.zeros(len(edges) - 1, int),
                       edges)
    angles = triangle_angles(points, tris)
    mins = angles.min(axis=1)
    hist, _ = np.histogram(np.clip(mins, 0.0, 60.0), bins=edges)
    return Quality(float(mins.min()), float(angles.max()), mins, hist, edges)
