"""Finding the flat regions of a polygon mesh.

Face normals come from Newell's method (M. E. Newell, as presented by
F. Tampieri, "Newell's method for computing the plane equation of a polygon",
Graphics Gems III, 1992), which is exact for planar polygons and a
least-squares-like average for slightly warped ones; its length is twice the
polygon's area.

A region grows from its largest unvisited face across edges to neighbouring
faces whose normal is within ``flat_angle`` of both the neighbour's and the
region's normal and whose vertices all lie within ``flat_distance`` of the
seed's plane.  It never crosses a break edge, a border or non-manifold edge,
an edge where the two faces disagree in orientation, or the border of the
face mask.  Faces so thin that rounding noise dominates their normal (as
slivers from float32 STL files are) join on the distance test alone.

The default distance tolerance is relative to the region: 1e-4 of its
bounding-box diagonal, plus a floor for the rounding of the coordinates:
float32 rounding when every coordinate is a float32 value (an STL file, a
host that stores single precision), else float64 rounding (IEEE 754
spacing 2**-23 and 2**-52 relative to the largest coordinate).
"""

import math
from dataclasses import dataclass, field

import numpy as np

from .polygons import corner_ranges

# float32 / float64 spacing relative to magnitude (2**-23, 2**-52), times a
# small safety factor
FLOAT32_NOISE = 4.0 * 2.0 ** -23
FLOAT64_NOISE = 4.0 * 2.0 ** -52
RELATIVE_FLATNESS = 1e-4


@dataclass
class Region:
    """A set of faces that lie in one plane (within tolerance)."""

    faces: list
    normal: np.ndarray          # unit normal (area-weighted Newell sum)
    origin: np.ndarray          # a point on the plane (area-weighted centroid)
    tolerance: float            # the distance tolerance used
    deviation: float = 0.0      # largest vertex distance from the fitted plane
    inner_edges: list = field(default_factory=list)   # break edges inside the region
    noise_faces: frozenset = frozenset()   # faces whose normal is rounding noise


def newell_normals(vertices, polys):
    """(F, 3) Newell vectors (length = 2 x area for planar faces)."""
    v = vertices[polys.corners]
    w = vertices[polys.corners[polys.next_corner()]]
    terms = np.column_stack((
        (v[:, 1] - w[:, 1]) * (v[:, 2] + w[:, 2]),
        (v[:, 2] - w[:, 2]) * (v[:, 0] + w[:, 0]),
        (v[:, 0] - w[:, 0]) * (v[:, 1] + w[:, 1]),
    ))
    if len(polys.corners) == 0:
        return np.zeros((0, 3))
    return np.add.reduceat(terms, polys.starts[:-1], axis=0)


class EdgeTable:
    """Undirected edges of a polygon mesh and the corners that use them."""

    def __init__(self, polys, vertex_count):
        corners = np.arange(len(polys.corners))
        a = polys.corners
        b = polys.corners[polys.next_corner()]
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        code = lo * np.int64(vertex_count) + hi
        order = np.argsort(code, kind="stable")
        code_sorted = code[order]
        first = np.ones(len(order), dtype=bool)
        first[1:] = code_sorted[1:] != code_sorted[:-1]
        self.edge_of_corner = np.empty(len(order), dtype=np.int64)
        self.edge_of_corner[order] = np.cumsum(first) - 1
        starts = np.flatnonzero(first)
        self.edges = np.column_stack((lo[order][starts], hi[order][starts]))
        self.corner_order = corners[order]                # corners grouped by edge
        self.corner_starts = np.append(starts, len(order))
        self.face_of_corner = polys.face_of_corner()
        self.forward = a < b        # the corner's edge runs lo -> hi
        self.index = {(int(p), int(q)): i for i, (p, q) in enumerate(self.edges.tolist())}

    def __len__(self):
        return len(self.edges)

    def corners_of(self, e):
        return self.corner_order[self.corner_starts[e]:self.corner_starts[e + 1]]

    def lookup(self, u, v):
        return self.index.get((u, v) if u < v else (v, u), -1)


def face_adjacency(polys, edges, face_mask, break_edge_ids):
    """For each face, the (neighbour, edge) pairs a region may cross."""
    neighbours = [[] for _ in range(len(polys))]
    counts = np.diff(edges.corner_starts)
    for e in np.flatnonzero(counts == 2).tolist():
        if e in break_edge_ids:
            continue
        c1, c2 = edges.corners_of(e).tolist()
        f1, f2 = int(edges.face_of_corner[c1]), int(edges.face_of_corner[c2])
        if f1 == f2 or not (face_mask[f1] and face_mask[f2]):
            continue
        if edges.forward[c1] == edges.forward[c2]:
            continue            # the faces disagree in orientation
        neighbours[f1].append((f2, e))
        neighbours[f2].append((f1, e))
    return neighbours


def find_regions(vertices, polys, *, face_mask, flat_angle, flat_distance, break_edge_ids,
                 edges=None, coordinate_precision="auto"):
    """Group the masked faces into flat regions.  Returns (regions, region_of_face).
    coordinate_precision: see :func:`rounding_floor`."""
    edges = edges or EdgeTable(polys, len(vertices))
    newell = newell_normals(vertices, polys)
    length = np.linalg.norm(newell, axis=1)
    unit = np.where(length[:, None] > 0, newell / np.where(length > 0, length, 1.0)[:, None], 0.0)
    area = 0.5 * length
    neighbours = face_adjacency(polys, edges, face_mask, break_edge_ids)
    cos_limit = math.cos(math.radians(flat_angle))
    noise_floor = rounding_floor(vertices, coordinate_precision)
    starts, corners = polys.starts, polys.corners
    sizes = np.diff(starts)
    pos = vertices[corners]
    step = vertices[corners[polys.next_corner()]] - pos
    if len(corners):
        longest = np.maximum.reduceat(np.sqrt((step * step).sum(axis=1)), starts[:-1])
        face_lo = np.minimum.reduceat(pos, starts[:-1], axis=0)
        face_hi = np.maximum.reduceat(pos, starts[:-1], axis=0)
    else:
        longest, face_lo, face_hi = np.zeros(0), np.zeros((0, 3)), np.zeros((0, 3))
    # plain Python numbers for the growing loop (faces are small)
    corner_xyz = pos.tolist()
    start_list = starts.tolist()
    lo_list, hi_list, unit_list = face_lo.tolist(), face_hi.tolist(), unit.tolist()
    # faces whose normal is rounding noise (zero-area faces, float32 slivers)
    # join on the distance test alone
    height = 2.0 * area / np.maximum(longest, 1e-300)
    noisy = (length == 0) | (height <= 1000.0 * (noise_floor + 1e-300))
    region_of_face = np.full(len(polys), -1, dtype=np.int64)
    regions = []
    for seed in np.argsort(-area, kind="stable").tolist():
        if not face_mask[seed] or region_of_face[seed] >= 0:
            continue
        rid = len(regions)
        nx, ny, nz = unit_list[seed] if length[seed] > 0 else (0.0, 0.0, 1.0)
        normal = np.array([nx, ny, nz])
        ox, oy, oz = pos[start_list[seed]:start_list[seed + 1]].mean(axis=0).tolist()
        lo, hi = lo_list[seed], hi_list[seed]
        members = [seed]
        region_of_face[seed] = rid
        queue = [seed]
        while queue:
            f = queue.pop()
            for g, _e in neighbours[f]:
                if region_of_face[g] >= 0:
                    continue
                glo = [min(a, b) for a, b in zip(lo, lo_list[g])]
                ghi = [max(a, b) for a, b in zip(hi, hi_list[g])]
                tol = flat_distance if flat_distance is not None else \
                    RELATIVE_FLATNESS * math.dist(ghi, glo) + noise_floor
                dist = max(abs((x - ox) * nx + (y - oy) * ny + (z - oz) * nz)
                           for x, y, z in corner_xyz[start_list[g]:start_list[g + 1]])
                if dist > tol:
                    continue
                if not noisy[g]:
                    ux, uy, uz = unit_list[g]
                    facing = ux * nx + uy * ny + uz * nz
                    if facing <= 0:
                        continue            # coplanar but facing the other way
                    if facing < cos_limit:
                        continue
                    if not noisy[f]:
                        fx, fy, fz = unit_list[f]
                        if ux * fx + uy * fy + uz * fz < cos_limit:
                            continue
                region_of_face[g] = rid
                members.append(g)
                queue.append(g)
                lo, hi = glo, ghi
        total = newell[members].sum(axis=0)
        norm = np.linalg.norm(total)
        fitted = total / norm if norm > 0 else normal
        weights = area[members]
        member_ids = np.asarray(members, dtype=np.int64)
        member_corners = pos[corner_ranges(starts[member_ids], sizes[member_ids])]
        centroids = np.add.reduceat(member_corners, np.cumsum(sizes[member_ids])
                                    - sizes[member_ids], axis=0) / sizes[member_ids][:, None]
        origin_fit = (centroids * weights[:, None]).sum(axis=0) / weights.sum() \
            if weights.sum() > 0 else centroids.mean(axis=0)
        vids = np.unique(corners[corner_ranges(starts[member_ids], sizes[member_ids])])
        deviation = float(np.abs((vertices[vids] - origin_fit) @ fitted).max())
        tol = flat_distance if flat_distance is not None else \
            RELATIVE_FLATNESS * math.dist(hi, lo) + noise_floor
        regions.append(Region(faces=sorted(members), normal=fitted, origin=origin_fit,
                              tolerance=tol, deviation=deviation,
                              noise_faces=frozenset(member_ids[noisy[member_ids]].tolist())))
    return regions, region_of_face


PRECISIONS = ("auto", "float32", "float64")


def rounding_floor(vertices, precision="auto"):
    """Rounding noise of the coordinates: rounding_unit times the largest
    coordinate magnitude."""
    v = np.asarray(vertices, dtype=np.float64)
    return rounding_unit(v, precision) * float(np.abs(v).max(initial=0.0))


def rounding_unit(vertices, precision="auto"):
    """Rounding noise relative to a coordinate's magnitude (FLOAT32_NOISE or
    FLOAT64_NOISE).  precision "float32": the coordinates were stored in
    single precision (an STL file, a host's mesh, possibly moved by a float64
    transform since); "float64": double precision; "auto": float32 when every
    coordinate is exactly a float32 value, else float64 (a float64 mesh keeps
    features far below float32 resolution, e.g. a millimetre fin at 1e6)."""
    if precision not in PRECISIONS:
        raise ValueError(f"coordinate_precision must be one of {PRECISIONS}, got {precision!r}")
    if precision == "auto":
        v = np.asarray(vertices, dtype=np.float64)
        with np.errstate(over="ignore"):
            single = bool(np.array_equal(v.astype(np.float32).astype(np.float64), v))
    else:
        single = precision == "float32"
    return FLOAT32_NOISE if single else FLOAT64_NOISE
