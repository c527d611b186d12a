"""The result of remeshing flat regions: what changes in the host's mesh.

A :class:`MeshEdit` never moves an original vertex.  It lists the original
faces to remove, the new vertices to append (after the N originals, in
order), the faces to add, and for every new vertex and every corner of a new
face the weights that interpolate any attribute from the original data:

* per-vertex data (positions, shape keys, vertex groups, point colours):
  ``vertex_weights`` of new vertex k are pairs (original vertex, weight),
  all taken from one original face (or one original edge for points added
  on region borders), so affine data come out exact;
* per-corner data (UV maps, corner colours): ``corner_weights`` of each
  corner of a new face are pairs (original corner, weight) taken from one
  original face.

Weights are stored in compressed rows: ``*_starts`` (K + 1,) offsets into
``*_indices`` and ``*_values``.
"""

from dataclasses import dataclass, field

import numpy as np

from .polygons import PolygonList


@dataclass
class RegionReport:
    """What happened to one flat region."""

    region: int
    faces: int
    status: str                  # "changed" or "skipped"
    reason: str = ""
    triangles_before: int = 0
    triangles_after: int = 0
    min_angle_before: float = float("nan")
    min_angle_after: float = float("nan")
    added_points: int = 0
    complete: bool = True        # False: stopped by the point cap, or size limits not met
    stopped_by: str = ""         # "" when complete, "point_cap" or "size_limit"
    face_ids: list = field(default_factory=list)   # the original faces of the region
    normal: tuple = (0.0, 0.0, 1.0)                # unit normal of its plane

    def as_dict(self):
        """Plain JSON-ready figures (no face list)."""
        return {"region": self.region, "faces": self.faces, "status": self.status,
                "reason": self.reason, "triangles_before": self.triangles_before,
                "triangles_after": self.triangles_after,
                "min_angle_before": _finite(self.min_angle_before),
                "min_angle_after": _finite(self.min_angle_after),
                "added_points": self.added_points, "complete": self.complete,
                "stopped_by": self.stopped_by}


def _finite(value):
    return None if value != value else round(float(value), 6)


@dataclass
class MeshEdit:
    vertex_count: int
    replaced_faces: np.ndarray
    new_vertices: np.ndarray
    vertex_weight_starts: np.ndarray
    vertex_weight_indices: np.ndarray
    vertex_weight_values: np.ndarray
    vertex_source_face: np.ndarray
    vertex_source_edge: np.ndarray
    faces: PolygonList
    face_source: np.ndarray
    face_region: np.ndarray          # (F',) region of each new face, -1 for grown faces
    corner_weight_starts: np.ndarray
    corner_weight_indices: np.ndarray
    corner_weight_values: np.ndarray
    dropped_vertices: np.ndarray
    regions: list = field(default_factory=list)

    @property
    def changed(self):
        return len(self.replaced_faces) > 0

    def interpolate_vertex_values(self, values):
        """Values of a per-vertex attribute (N, ...) at the new vertices."""
        values = np.asarray(values)
        return _weighted(values, self.vertex_weight_starts, self.vertex_weight_indices,
                         self.vertex_weight_values)

    def interpolate_corner_values(self, values):
        """Values of a per-corner attribute (C, ...) at every corner of the new faces."""
        values = np.asarray(values)
        return _weighted(values, self.corner_weight_starts, self.corner_weight_indices,
                         self.corner_weight_values)

    def apply(self, vertices, faces, compact=True):
        """The edited mesh as (vertices (N', 3), PolygonList, old_to_new vertex map).

        With compact=True dropped vertices are removed and the others renumbered
        (old_to_new[v] == -1 for a dropped vertex); original vertices keep their
        relative order and positions."""
        verts = np.vstack((np.asarray(vertices, dtype=np.float64), self.new_vertices))
        polys = PolygonList.from_faces(faces)
        keep = np.ones(len(polys), dtype=bool)
        keep[self.replaced_faces] = False
        kept_faces = [polys.face(f) for f in np.flatnonzero(keep)]
        all_faces = kept_faces + [self.faces.face(f) for f in range(len(self.faces))]
        result = PolygonList.from_faces(all_faces)
        mapping = np.arange(len(verts))
        if compact and len(self.dropped_vertices):
            alive = np.ones(len(verts), dtype=bool)
            alive[self.dropped_vertices] = False
            mapping = np.where(alive, np.cumsum(alive) - 1, -1)
            verts = verts[alive]
            result = PolygonList(mapping[result.corners], result.starts)
        return verts, result, mapping


def _weighted(values, starts, indices, weights):
    out_shape = (len(starts) - 1,) + values.shape[1:]
    if len(indices) == 0:
        return np.zeros(out_shape, dtype=np.float64)
    contrib = values[indices].astype(np.float64)
    contrib *= weights.reshape((-1,) + (1,) * (values.ndim - 1))
    rows = np.repeat(np.arange(len(starts) - 1), np.diff(starts))
    out = np.zeros(out_shape, dtype=np.float64)
    np.add.at(out, rows, contrib)
    return out
