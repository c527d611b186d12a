"""The result type shared by triangulation and refinement."""

from dataclasses import dataclass, field

import numpy as np


@dataclass
class Triangulation:
    """A planar triangulation as numpy arrays.

    points          (P, 2) float64: the N input points in input order, then
                    added points (segment crossings, Steiner points).
    triangles       (T, 3) int64, counter-clockwise.
    neighbors       (T, 3) int64: neighbors[t, k] is the triangle across the
                    edge opposite vertex k, -1 on the border of the kept region.
    segments        (S, 2) int64: constrained edges as they stand (pieces of
                    split input segments included).
    segment_source  (S,) int64: the input segment each piece came from (the
                    lowest index when collinear input segments overlap).
    merged_into     (N,) int64: the row each input point was merged into; a
                    row equal to its own index is used, others are later
                    copies of a duplicate point and no triangle uses them.
    complete        False when a limit stopped the work early (see stop_reason).
    stopped_by      "" when complete, "point_cap" (max_points reached) or
                    "size_limit" (triangles left above max_area / max_edge).
    stop_reason     why it stopped early, "" when complete.
    stats           free-form figures about the run (counts, flips, ...).
    """

    points: np.ndarray
    triangles: np.ndarray
    neighbors: np.ndarray
    segments: np.ndarray
    segment_source: np.ndarray
    merged_into: np.ndarray
    complete: bool = True
    stopped_by: str = ""
    stop_reason: str = ""
    stats: dict = field(default_factory=dict)

    @property
    def input_count(self):
        """Number of input points (the first rows of `points`)."""
        return len(self.merged_into)

    def area(self):
        """Total area of the triangles."""
        p = self.points[self.triangles]
        e1 = p[:, 1] - p[:, 0]
        e2 = p[:, 2] - p[:, 0]
        return float(0.5 * (e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]).sum())
