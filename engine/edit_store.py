"""Growing stores for what a remesh adds: new vertices and new faces, with
their interpolation weights, kept either one by one (points on region
borders, faces split at border points) or in numpy blocks (the bulk of a
region's interior), and turned into the compressed rows of
:class:`engine.mesh_edit.MeshEdit` at the end.

A weight row is a list of pairs (original index, weight).  A block keeps up
to three pairs per row in padded arrays ``index (K, 3)``, ``weight (K, 3)``
and ``count (K,)``; the unused slots are ignored.
"""

from bisect import bisect_right

import numpy as np

from .polygons import PolygonList


def rows_to_arrays(rows):
    """Compressed arrays (starts, indices, values) of weight rows given as
    lists of pairs."""
    sizes = [len(r) for r in rows]
    starts = np.zeros(len(rows) + 1, dtype=np.int64)
    np.cumsum(sizes, out=starts[1:])
    flat = [p for r in rows for p in r]
    indices = np.fromiter((p[0] for p in flat), dtype=np.int64, count=len(flat))
    values = np.fromiter((p[1] for p in flat), dtype=np.float64, count=len(flat))
    return starts, indices, values


def padded_to_arrays(index, weight, count):
    """Compressed arrays of padded rows (see the module docstring)."""
    count = np.asarray(count, dtype=np.int64)
    keep = np.arange(index.shape[1]) < count[:, None]
    starts = np.zeros(len(count) + 1, dtype=np.int64)
    np.cumsum(count, out=starts[1:])
    return starts, index[keep].astype(np.int64), weight[keep].astype(np.float64)


def join_rows(parts):
    """One set of compressed arrays from several, in order."""
    if not parts:
        return (np.zeros(1, dtype=np.int64), np.zeros(0, dtype=np.int64),
                np.zeros(0, dtype=np.float64))
    starts, offset = [np.zeros(1, dtype=np.int64)], 0
    for s, i, _v in parts:
        starts.append(s[1:] + offset)
        offset += len(i)
    return (np.concatenate(starts), np.concatenate([p[1] for p in parts]),
            np.concatenate([p[2] for p in parts]))


class VertexStore:
    """New vertices (numbered from `first`, the original vertex count) with
    their position, vertex weight row, source face and source edge."""

    def __init__(self, first):
        self.first = first
        self.count = 0
        self._starts = []      # first vertex id of each chunk
        self._chunks = []      # ["one", positions, rows, faces, edges] or ["block", ...]

    def add(self, pos, pairs, face, edge):
        """One vertex; returns its id."""
        if not self._chunks or self._chunks[-1][0] != "one":
            self._starts.append(self.first + self.count)
            self._chunks.append(["one", [], [], [], []])
        chunk = self._chunks[-1]
        merged = {}
        for v, w in pairs:
            merged[v] = merged.get(v, 0.0) + w
        chunk[1].append(np.asarray(pos, dtype=np.float64))
        chunk[2].append(list(merged.items()))
        chunk[3].append(face)
        chunk[4].append(edge)
        self.count += 1
        return self.first + self.count - 1

    def add_block(self, pos, index, weight, faces):
        """K interior vertices at once: positions (K, 3), three original
        vertices and weights each (K, 3), source faces (K,); returns the ids."""
        k = len(pos)
        ids = np.arange(self.first + self.count, self.first + self.count + k, dtype=np.int64)
        if k:
            self._starts.append(self.first + self.count)
            self._chunks.append(["block", np.asarray(pos, dtype=np.float64),
                                 np.asarray(index, dtype=np.int64),
                                 np.asarray(weight, dtype=np.float64),
                                 np.asarray(faces, dtype=np.int64)])
            self.count += k
        return ids

    def _find(self, vid):
        j = bisect_right(self._starts, vid) - 1
        return self._chunks[j], vid - self._starts[j]

    def position(self, vid):
        chunk, k = self._find(vid)
        return chunk[1][k]

    def face(self, vid):
        chunk, k = self._find(vid)
        return int(chunk[3][k]) if chunk[0] == "one" else int(chunk[4][k])

    def arrays(self):
        """(positions (M, 3), weight starts, indices, values, faces (M,), edges (M, 2))."""
        pos, rows, faces, edges = [], [], [], []
        for chunk in self._chunks:
            if chunk[0] == "one":
                pos.append(np.array(chunk[1], dtype=np.float64).reshape(-1, 3))
                rows.append(rows_to_arrays(chunk[2]))
                faces.append(np.array(chunk[3], dtype=np.int64))
                edges.append(np.array(chunk[4], dtype=np.int64).reshape(-1, 2))
            else:
                _, p, index, weight, face = chunk
                pos.append(p)
                rows.append(padded_to_arrays(index, weight, np.full(len(p), 3)))
                faces.append(face)
                edges.append(np.full((len(p), 2), -1, dtype=np.int64))
        if not pos:
            return (np.zeros((0, 3)),) + join_rows([]) + (np.zeros(0, dtype=np.int64),
                                                          np.zeros((0, 2), dtype=np.int64))
        return ((np.concatenate(pos),) + join_rows(rows)
                + (np.concatenate(faces), np.concatenate(edges)))


class TriangleBlock:
    """A region's new triangles: vertex ids (T, 3), source face (T,), and
    per corner (row 3t + k) a padded corner weight row."""

    def __init__(self, ids, source, index, weight, count):
        self.ids = ids
        self.source = source
        self.index = index
        self.weight = weight
        self.count = count

    def __len__(self):
        return len(self.ids)

    def as_lists(self):
        """[(ids, source face, [pairs per corner])] one triangle at a time."""
        idx, w, cnt = self.index.tolist(), self.weight.tolist(), self.count.tolist()
        out = []
        for t, (ids, f) in enumerate(zip(self.ids.tolist(), self.source.tolist())):
            corners = []
            for r in range(3 * t, 3 * t + 3):
                corners.append([(idx[r][j], w[r][j]) for j in range(cnt[r])])
            out.append((ids, f, corners))
        return out


class FaceStore:
    """The new faces in output order, from single faces and whole blocks."""

    def __init__(self):
        self._parts = []       # ["one", faces, sources, weight rows, regions] or ["block", ...]

    def add(self, ids, source, weights, region):
        if not self._parts or self._parts[-1][0] != "one":
            self._parts.append(["one", [], [], [], []])
        part = self._parts[-1]
        part[1].append(list(ids))
        part[2].append(source)
        part[3].extend(weights)
        part[4].append(region)

    def add_block(self, block, region):
        if len(block):
            self._parts.append(["block", block, region])

    def arrays(self):
        """(PolygonList, face sources, face regions, corner weight starts,
        indices, values)."""
        sizes, corners, sources, regions, rows = [], [], [], [], []
        for part in self._parts:
            if part[0] == "one":
                faces = part[1]
                sizes.append(np.array([len(f) for f in faces], dtype=np.int64))
                corners.append(np.fromiter((v for f in faces for v in f), dtype=np.int64,
                                           count=int(sizes[-1].sum())))
                sources.append(np.array(part[2], dtype=np.int64))
                regions.append(np.array(part[4], dtype=np.int64))
                rows.append(rows_to_arrays(part[3]))
            else:
                block, region = part[1], part[2]
                sizes.append(np.full(len(block), 3, dtype=np.int64))
                corners.append(block.ids.reshape(-1))
                sources.append(block.source)
                regions.append(np.full(len(block), region, dtype=np.int64))
                rows.append(padded_to_arrays(block.index, block.weight, block.count))
        if not sizes:
            empty = np.zeros(0, dtype=np.int64)
            return (PolygonList(empty, np.zeros(1, dtype=np.int64)), empty, empty) + join_rows([])
        sizes = np.concatenate(sizes)
        starts = np.zeros(len(sizes) + 1, dtype=np.int64)
        np.cumsum(sizes, out=starts[1:])
        return ((PolygonList(np.concatenate(corners), starts), np.concatenate(sources),
                 np.concatenate(regions)) + join_rows(rows))
