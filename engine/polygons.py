"""Polygon meshes as flat arrays: the face list type of the 3D engine.

A :class:`PolygonList` stores faces the way host applications do: one array
of corner vertex indices and an offsets array, face f owning corners
``starts[f]:starts[f+1]``.  Corner indices (positions in ``corners``) are how
per-corner attributes such as UV maps are addressed.
"""

from dataclasses import dataclass

import numpy as np


@dataclass
class PolygonList:
    """Faces as corners (C,) vertex indices and starts (F + 1,) offsets."""

    corners: np.ndarray
    starts: np.ndarray

    def __post_init__(self):
        self.corners = np.asarray(self.corners, dtype=np.int64).ravel()
        self.starts = np.asarray(self.starts, dtype=np.int64).ravel()

    def __len__(self):
        return len(self.starts) - 1

    @property
    def sizes(self):
        return np.diff(self.starts)

    def face(self, f):
        return self.corners[self.starts[f]:self.starts[f + 1]]

    def face_of_corner(self):
        """(C,) the face owning each corner."""
        return np.repeat(np.arange(len(self)), self.sizes)

    def next_corner(self):
        """(C,) the next corner around the same face."""
        c = np.arange(len(self.corners)) + 1
        ends = self.starts[1:]
        c[ends - 1] = self.starts[:-1]
        return c

    def tolist(self):
        return [self.face(f).tolist() for f in range(len(self))]

    @classmethod
    def from_faces(cls, faces):
        """From a PolygonList, an (F, k) integer array or a sequence of sequences."""
        if isinstance(faces, PolygonList):
            return cls(faces.corners.copy(), faces.starts.copy())
        if isinstance(faces, np.ndarray) and faces.ndim == 2:
            f, k = faces.shape
            return cls(faces.ravel(), np.arange(f + 1) * k)
        sizes = [len(face) for face in faces]
        starts = np.concatenate(([0], np.cumsum(sizes))).astype(np.int64)
        corners = np.fromiter((v for face in faces for v in face), dtype=np.int64,
                              count=int(starts[-1]))
        return cls(corners, starts)


def check_mesh(vertices, faces):
    """Validated (N, 3) float64 vertices and PolygonList, or ValueError."""
    try:
        verts = np.asarray(vertices, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"vertices must be an (N, 3) array of numbers: {exc}") from None
    if verts.ndim != 2 or verts.shape[1] != 3:
        raise ValueError(f"vertices must have shape (N, 3), got {verts.shape}")
    bad = ~np.isfinite(verts).all(axis=1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"vertex {i} is not finite (NaN or inf): {verts[i].tolist()}")
    try:
        polys = PolygonList.from_faces(faces)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"faces must be polygons of vertex indices: {exc}") from None
    if len(polys.starts) < 1 or polys.starts[0] != 0 or (np.diff(polys.starts) < 0).any() \
            or polys.starts[-1] != len(polys.corners):
        raise ValueError("faces: offsets must start at 0, grow, and end at the corner count")
    if (polys.sizes < 3).any():
        f = int(np.flatnonzero(polys.sizes < 3)[0])
        raise ValueError(f"face {f} has fewer than three corners")
    if len(polys.corners) and (polys.corners.min() < 0 or polys.corners.max() >= len(verts)):
        raise ValueError(f"faces use a vertex index out of range 0..{len(verts) - 1}")
    return np.ascontiguousarray(verts), polys


def corner_ranges(starts, sizes):
    """Concatenated aranges [s, s + k) for each (s, k): the corner indices of
    faces given their starts and sizes."""
    sizes = np.asarray(sizes, dtype=np.int64)
    offsets = np.repeat(np.asarray(starts, dtype=np.int64) - np.cumsum(sizes) + sizes, sizes)
    return offsets + np.arange(int(sizes.sum()), dtype=np.int64)
