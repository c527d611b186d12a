"""Remeshing the flat regions of a 3D polygon mesh: `remesh_flat_regions`.

Data flow (see DEVELOPERS.md):

1. check the arrays; build the edge table (:mod:`engine.flat_regions`);
2. find flat regions (normals within ``flat_angle``, vertices within
   ``flat_distance`` of the plane; never across break, border, non-manifold
   or mask edges);
3. for each region: its border edges (outer and inner loops at once, as
   directed segments), projection to an orthonormal frame on the plane,
   :func:`engine.triangulate` (nonzero fill of the loops), checks (no
   self-crossing, area equal to the faces' area), :func:`engine.refine`;
4. back to 3D: input vertices keep their index and position; a point added
   on a border edge lies on that original edge (weights over its two ends);
   an interior point is the barycentric combination of the original face
   triangle that contains it (so it lies on that face, and affine data are
   reproduced exactly);
5. watertight: every point added on an original edge is also inserted into
   every other face that uses that edge (faces outside the changed set grow
   by a vertex; a new triangle of another region is split again), so no
   T-junction, open edge or duplicate vertex appears.

A region that cannot be remeshed is skipped with a reason and left as it
was; one bad region never stops the others.
"""

import math

import numpy as np

from .cdt import triangulate
from .flat_regions import FLOAT64_NOISE, EdgeTable, find_regions, newell_normals, rounding_unit
from .edit_store import FaceStore, TriangleBlock, VertexStore
from .face_locator import FaceLocator, PlaneProjection
from .mesh_edit import MeshEdit, RegionReport
from .polygons import check_mesh, corner_ranges
from .quality import quality
from .straighten import straight_run_vertices

try:  # refinement lives in its own module
    from .refine import refine as _refine
except ImportError:  # pragma: no cover - only while refinement is missing
    _refine = None


class RegionSkipped(Exception):
    """A region cannot be remeshed; the message is the reason."""


def remesh_flat_regions(vertices, faces, *, face_mask=None, flat_angle=1.0, flat_distance=None,
                        min_angle=30.0, max_edge=None, max_area=None, keep_boundary=False,
                        break_edges=None, keep_interior_vertices=False, smoothing=False,
                        size_growth=None, max_points=None, straighten_tolerance=None,
                        coordinate_precision="auto"):
    """Find the flat regions of a polygon mesh and re-triangulate them.

    vertices        (N, 3) positions.
    faces           polygons: a PolygonList (corners + offsets), an (F, k)
                    array or a list of vertex-index lists (n-gons allowed).
    face_mask       (F,) bools or a list of face indices that may change
                    (default: all).
    flat_angle      degrees: largest normal difference inside a region.
    flat_distance   largest distance of a vertex from the region's plane, in
                    mesh units (default: 1e-4 of the region's size plus a
                    rounding floor, see coordinate_precision).
    coordinate_precision  "float32" when the coordinates were stored in
                    single precision (STL files, host meshes, even after a
                    float64 transform), "float64", or "auto": float32 when
                    every coordinate is exactly a float32 value.  Sets the
                    rounding floor of flatness tests and which thin faces
                    count as rounding noise.
    min_angle, max_edge, max_area, smoothing, size_growth, max_points:
                    passed to :func:`engine.refine` (degrees / mesh units /
                    square units / points refinement adds in each region;
                    points a neighbouring region puts on a shared edge come
                    on top).
    keep_boundary   True: no border edge of any region changes.
    break_edges     (K, 2) vertex pairs no region may cross (seams, sharp
                    edges, material borders: the caller decides).
    keep_interior_vertices  True: keep the original vertices inside regions
                    (by default they are dropped unless on a break edge or
                    used by a face outside the region).
    straighten_tolerance  distance: drop border vertices that lie on a
                    straight run within it, where every face using them is
                    changed (navmesh outlines); None keeps them all.

    Returns a :class:`engine.mesh_edit.MeshEdit`."""
    verts, polys = check_mesh(vertices, faces)
    mask = _face_mask(face_mask, len(polys))
    if not (0.0 <= float(flat_angle) < 90.0):
        raise ValueError(f"flat_angle must be in [0, 90) degrees, got {flat_angle}")
    if flat_distance is not None and not (float(flat_distance) >= 0.0):
        raise ValueError(f"flat_distance must be >= 0, got {flat_distance}")
    edges = EdgeTable(polys, len(verts))
    break_ids = _break_edge_ids(break_edges, edges, len(verts))
    regions, region_of_face = find_regions(
        verts, polys, face_mask=mask, flat_angle=float(flat_angle),
        flat_distance=None if flat_distance is None else float(flat_distance),
        break_edge_ids=break_ids, edges=edges, coordinate_precision=coordinate_precision)
    unit = rounding_unit(verts, coordinate_precision)
    options = dict(min_angle=min_angle, max_edge=max_edge, max_area=max_area,
                   keep_boundary=bool(keep_boundary), smoothing=smoothing,
                   size_growth=size_growth, max_points=max_points)
    dropped_border = set()
    if straighten_tolerance is not None and not keep_boundary:
        # a border vertex may go only if every region using it will change:
        # check the regions with the vertices gone, until the choice settles
        usable = list(range(len(regions)))
        for _ in range(6):
            probe = _EditBuilder(verts, polys, edges, break_ids, bool(keep_interior_vertices),
                                 straighten=float(straighten_tolerance), noise_unit=unit)
            probe.dropped_border = dropped_border
            usable = [rid for rid in usable if probe.precheck(regions[rid])]
            again = straight_run_vertices(
                verts, polys, edges, region_of_face, regions, break_ids,
                float(straighten_tolerance), usable_regions=usable)
            if again == dropped_border:
                break
            dropped_border = again
        else:
            dropped_border = set()

    def run(presplit):
        builder = _EditBuilder(verts, polys, edges, break_ids, bool(keep_interior_vertices),
                               presplit=presplit, straighten=straighten_tolerance or 0.0,
                               noise_unit=unit)
        builder.dropped_border = dropped_border
        for rid in sorted(range(len(regions)), key=lambda r: builder.region_area(regions[r])):
            builder.remesh_region(rid, regions[rid], options)
        return builder

    # Edges shared by two changed regions must carry the same points on both
    # sides.  A first pass lets every region split them as it likes (each
    # seeing the points of those before it); the second pass gives every
    # region the union of those points, fixed, so no region has to accept a
    # point it did not plan for and none is split again afterwards.
    first = run(None)
    shared = first.shared_splits()
    if not shared or keep_boundary:
        return first.finish()
    return run(shared).finish()


def _face_mask(face_mask, count):
    if face_mask is None:
        return np.ones(count, dtype=bool)
    arr = np.asarray(face_mask)
    if arr.dtype == bool:
        if arr.shape != (count,):
            raise ValueError(f"face_mask of bools must have shape ({count},), got {arr.shape}")
        return arr.copy()
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        raise ValueError("face_mask must be bools per face or a list of face indices")
    mask = np.zeros(count, dtype=bool)
    if arr.size:
        if arr.min() < 0 or arr.max() >= count:
            raise ValueError(f"face_mask has a face index out of range 0..{count - 1}")
        mask[arr.astype(np.int64)] = True
    return mask


def _break_edge_ids(break_edges, edges, vertex_count):
    if break_edges is None:
        return set()
    arr = np.asarray(break_edges)
    if arr.size == 0:
        return set()
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise ValueError(f"break_edges must have shape (K, 2), got {arr.shape}")
    if arr.min() < 0 or arr.max() >= vertex_count:
        raise ValueError(f"break_edges use a vertex index out of range 0..{vertex_count - 1}")
    ids = {edges.lookup(int(a), int(b)) for a, b in arr.tolist()}
    ids.discard(-1)
    return ids


def _frame(normal):
    """Orthonormal e1, e2 with e1 x e2 = normal."""
    n = normal / np.linalg.norm(normal)
    axis = np.zeros(3)
    axis[int(np.argmin(np.abs(n)))] = 1.0
    e1 = np.cross(n, axis)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    return e1, e2


class _EditBuilder:
    """Accumulates the MeshEdit while regions are processed one by one."""

    def __init__(self, verts, polys, edges, break_ids, keep_interior, presplit=None,
                 straighten=0.0, noise_unit=FLOAT64_NOISE):
        self.verts = verts
        self.noise_unit = noise_unit     # rounding of a coordinate, relative to it
        self.polys = polys
        self.edges = edges
        self.break_ids = break_ids
        self.keep_interior = keep_interior
        self.n = len(verts)
        self.next_of = polys.next_corner()
        self.face_of_corner = polys.face_of_corner()
        self.face_areas = None
        self.straighten = float(straighten)
        self.faces_using_vertex = np.bincount(polys.corners, minlength=self.n)
        self.break_array = np.fromiter(break_ids, dtype=np.int64, count=len(break_ids))
        self.edge_uses = np.diff(edges.corner_starts)      # faces using each edge
        # per edge, how many faces run along it lo -> hi and hi -> lo
        forward = edges.forward.astype(np.int64)
        self.edge_forward = np.bincount(edges.edge_of_corner, weights=forward,
                                        minlength=len(edges)).astype(np.int64)
        self.edge_backward = np.bincount(edges.edge_of_corner, weights=1 - forward,
                                         minlength=len(edges)).astype(np.int64)
        self.vstore = VertexStore(self.n)   # the new vertices with their weights
        self.on_edge = {}            # new vertex -> (edge id, t from lo to hi)
        self.edge_splits = {}        # edge id -> [(t, new vertex)]
        self.region_blocks = []      # per changed region: (report index, TriangleBlock)
        self.presplit = presplit or {}   # edge key -> parameters of points it must carry
        self.region_keys = []        # per changed region: its outline edge keys
        self.split_counts = []       # per changed region: points on each key when it was done
        self.replaced = set()
        self.dropped = set()
        self.dropped_border = set()
        self.reports = []

    # ------------------------------------------------------------ vertices
    def position(self, vid):
        return self.verts[vid] if vid < self.n else self.vstore.position(vid)

    def _ends(self, key):
        """(lo, hi) of an outline edge key: an original edge id, or
        ("chord", lo, hi) for a straight run whose inner vertices were dropped."""
        if isinstance(key, tuple):
            return key[1], key[2]
        lo, hi = self.edges.edges[key]
        return int(lo), int(hi)

    def _add_edge_point(self, e, t):
        """A new vertex on outline edge e (see _ends) at parameter t (lo -> hi)."""
        lo, hi = self._ends(e)
        pos = self.verts[lo] + t * (self.verts[hi] - self.verts[lo])
        vid = self.vstore.add(pos, [(lo, 1.0 - t), (hi, t)], -1, (lo, hi))
        self.on_edge[vid] = (e, t)
        self.edge_splits.setdefault(e, []).append((t, vid))
        return vid

    # ------------------------------------------------------------- regions
    def remesh_region(self, rid, region, options):
        faces = region.faces
        try:
            report = self._remesh(rid, region, options)
        except RegionSkipped as why:
            report = RegionReport(region=rid, faces=len(faces), status="skipped",
                                  reason=str(why))
        except (ValueError, RuntimeError) as exc:
            report = RegionReport(region=rid, faces=len(faces), status="skipped",
                                  reason=f"degenerate: {exc}")
        report.face_ids = list(faces)
        report.normal = tuple(float(v) for v in region.normal)
        self.reports.append(report)

    def precheck(self, region):
        """True when the region passes the checks that come before refinement."""
        try:
            self._remesh(-1, region, None)
        except (RegionSkipped, ValueError, RuntimeError):
            return False
        return True

    def _remesh(self, rid, region, options):
        """Remesh one region (options None: only run the checks)."""
        polys, edges, nxt = self.polys, self.edges, self.next_of
        faces = region.faces
        if self._degenerate(faces):
            raise RegionSkipped("degenerate: the faces have no area")
        if len(region.noise_faces) == len(faces) and self._thinner_than_rounding(faces):
            # a zero-area face stored in single precision, say: nothing to remesh
            raise RegionSkipped("degenerate: the faces are thinner than the rounding "
                                "of their coordinates")
        if region.deviation > region.tolerance * 1.000001:
            raise RegionSkipped(f"not flat within tolerance (deviation {region.deviation:.3g} "
                                f"> {region.tolerance:.3g})")
        face_ids = np.asarray(faces, dtype=np.int64)
        corners = corner_ranges(polys.starts[face_ids], np.diff(polys.starts)[face_ids])
        cv = polys.corners
        edge_ids = edges.edge_of_corner[corners]
        uniq, first, counts = np.unique(edge_ids, return_index=True, return_counts=True)
        if counts.max() > 2:
            raise RegionSkipped("non-manifold edge inside the region")
        on_border = np.flatnonzero(counts[np.searchsorted(uniq, edge_ids)] == 1)
        # edges kept inside: break edges, and folds where faces outside the
        # region (a fin) meet its inside; split alike on all sides
        kept = (counts == 2) & (np.isin(uniq, self.break_array) | (self.edge_uses[uniq] > 2))
        inside = np.sort(first[kept])

        def directed(idx):       # (u, v, edge id, corner at u) for positions in `corners`
            cs = corners[idx]
            return list(zip(cv[cs].tolist(), cv[nxt[cs]].tolist(), edge_ids[idx].tolist(),
                            cs.tolist()))
        border = directed(on_border)
        inner = directed(inside)
        # the region face holding each outline or inner edge: its first corner there
        corner_of_edge = {e: (c, cn, u, v) for u, v, e, c, cn in zip(
            *zip(*(border + inner)), nxt[corners[np.concatenate((on_border, inside))]].tolist())}
        if not border:
            raise RegionSkipped("the region has no border (a closed flat surface)")
        border_corners = corners[on_border]
        border_edges = edge_ids[on_border]
        same_way = np.where(edges.forward[border_corners], self.edge_forward[border_edges],
                            self.edge_backward[border_edges])
        if (same_way > 1).any() and self._overlapped(border_corners[same_way > 1],
                                                     set(faces), region.normal):
            raise RegionSkipped("overlapping faces: another face lies over its outline "
                                "(the same edge, the same direction, the same side)")
        region_v, uses = np.unique(cv[corners], return_counts=True)
        region_vertices = set(region_v.tolist())
        border_vertices = {u for u, _, _, _ in border} | {v for _, v, _, _ in border}
        dropping = self.dropped_border & border_vertices
        inner_vertices = {u for u, _, _, _ in inner} | {v for _, v, _, _ in inner}
        interior = region_vertices - border_vertices
        shared = region_v[uses < self.faces_using_vertex[region_v]]
        keep = inner_vertices.union(shared.tolist())
        kept_interior = sorted(interior if self.keep_interior else interior & keep)
        # the outline: border edges split where earlier regions added points,
        # minus straight-run vertices being dropped
        point_ids = sorted(border_vertices - dropping) + kept_interior
        index = {v: i for i, v in enumerate(point_ids)}
        segments, segment_edge = [], []
        chains = self._outline_chains(border, dropping)
        for chain, edge_list in chains:
            for a, b in zip(chain, chain[1:]):
                for x in (a, b):
                    if x not in index:
                        index[x] = len(point_ids)
                        point_ids.append(x)
                segments.append((index[a], index[b]))
                segment_edge.append(edge_list)
        for u, v, e, _c in inner:
            chain = self._split_chain(u, v, e)
            for x in chain:
                if x not in index:
                    index[x] = len(point_ids)
                    point_ids.append(x)
            for a, b in zip(chain, chain[1:]):
                segments += [(index[a], index[b]), (index[b], index[a])]
                segment_edge += [[e], [e]]
        origin = region.origin
        e1, e2 = _frame(region.normal)
        pos3 = np.array([self.position(v) for v in point_ids])
        pts2 = np.column_stack(((pos3 - origin) @ e1, (pos3 - origin) @ e2))
        face_tris, face_tri_corners = self._face_triangles(face_ids)
        proj = PlaneProjection(region_v, self.verts, origin, e1, e2)
        tri = triangulate(pts2, np.array(segments, dtype=np.int64), fill="nonzero")
        if tri.stats.get("added_points", 0):
            raise RegionSkipped("self-intersecting outline")
        if (tri.merged_into != np.arange(len(pts2))).any():
            raise RegionSkipped("outline vertices coincide in the plane")
        face_area = self._projected_area(face_tris, proj)
        # straightened runs move the outline by up to the tolerance
        slack = 0.0
        if dropping:
            slack = self.straighten * sum(
                math.dist(pts2[index[c[0]]], pts2[index[c[-1]]]) for c, keys in chains
                if any(isinstance(k, tuple) for k in keys))
        if len(tri.triangles) == 0 or abs(tri.area() - face_area) > 1e-7 * max(face_area, 1e-300) \
                + 1e-12 * float(np.abs(pts2).max()) ** 2 + slack:
            raise RegionSkipped("outline does not match the faces (overlapping or folded faces)")
        if options is None:
            return None
        before = self._quality_before(face_tris, proj)
        refined = tri
        if _refine is not None:
            fixed = [segments[i] for i, keys in enumerate(segment_edge)
                     if any(k in self.presplit for k in keys)]
            refined = _refine(tri, fixed_segments=np.array(fixed, dtype=np.int64).reshape(-1, 2),
                              **{k: v for k, v in options.items() if v is not None})
        # ----- back to 3D
        vid_of, free, free_corners, free_weights = self._new_vertices(
            refined, point_ids, segment_edge, proj, face_tris, face_tri_corners)
        block = self._triangle_block(refined.triangles, vid_of, free, free_corners,
                                     free_weights, corners, corner_of_edge,
                                     region.noise_faces)
        self.region_blocks.append((len(self.reports), block))
        self.replaced.update(faces)
        keys_here = set()
        for keys in segment_edge:
            keys_here.update(keys)
        self.region_keys.append(keys_here)
        self.split_counts.append({k: self._split_total(k) for k in keys_here})
        self.dropped.update(interior.difference(kept_interior))
        self.dropped.update(dropping)
        after = quality(refined.points, refined.triangles)
        return RegionReport(
            region=rid, faces=len(faces), status="changed",
            triangles_before=int(len(face_tris)), triangles_after=int(len(refined.triangles)),
            min_angle_before=before, min_angle_after=after.min_angle,
            added_points=int(len(refined.points) - len(point_ids)),
            complete=bool(refined.complete),
            stopped_by=refined.stopped_by,
            reason=refined.stop_reason)

    def _overlapped(self, border_corners, region_faces, normal):
        """True when a face outside the region runs along one of these
        outline corners' edges in the same direction, nearly in the region's
        plane (within 10 degrees), and on the region's side of the edge: two
        sheets lying on each other.  (A coplanar face with flipped
        orientation runs the same way but lies on the other side.)"""
        edges, cv, nxt = self.edges, self.polys.corners, self.next_of
        n = np.asarray(normal, dtype=np.float64)
        n = n / np.linalg.norm(n)
        v = self.verts
        for c in border_corners.tolist():
            e = int(edges.edge_of_corner[c])
            u, w = v[cv[c]], v[cv[nxt[c]]]
            for c2 in edges.corners_of(e).tolist():
                g = int(edges.face_of_corner[c2])
                if g in region_faces or edges.forward[c2] != edges.forward[c]:
                    continue
                apex = v[cv[nxt[nxt[c2]]]]        # the vertex after the edge in face g
                side = float(np.cross(w - u, apex - u) @ n)
                span = float(np.linalg.norm(np.cross(w - u, apex - u)))
                if side > 0.9848 * span:           # cos 10 degrees
                    return True
        return False

    def _new_vertices(self, refined, point_ids, segment_edge, proj, face_tris,
                      face_tri_corners):
        """Vertex ids of the refined points: input points keep theirs; a point
        added on the outline goes on its original edge; the interior points
        (one numpy block) are barycentric combinations of the original face
        triangle holding them.  Returns (vid_of (M,), local indices of the
        interior points, their face triangle corners (K, 4: three corners and
        the face), their weights (K, 3))."""
        n_in = len(point_ids)
        pts = refined.points
        vid_of = np.empty(len(pts), dtype=np.int64)
        vid_of[:n_in] = point_ids
        seg, src = refined.segments, refined.segment_source
        on_outline = {}
        pick = np.flatnonzero((seg >= n_in).any(axis=1))
        for (p, q), s in zip(seg[pick].tolist(), src[pick].tolist()):
            for x in (p, q):
                if x >= n_in:
                    on_outline[x] = segment_edge[s]
        for i in sorted(on_outline):
            px, py = pts[i].tolist()
            vid_of[i] = self._point_on_edges(on_outline[i], px, py, proj)
        interior = np.ones(len(pts), dtype=bool)
        interior[:n_in] = False
        interior[list(on_outline)] = False
        free = np.flatnonzero(interior)
        if not len(free):
            return vid_of, free, np.zeros((0, 4), dtype=np.int64), np.zeros((0, 3))
        locator = FaceLocator(face_tris, face_tri_corners, proj)
        tri_of, bary = locator.locate_many(pts[free])
        tc = locator.corner_table[tri_of]
        vidx = self.polys.corners[tc[:, :3]]
        v = self.verts
        pos = (bary[:, 0:1] * v[vidx[:, 0]] + bary[:, 1:2] * v[vidx[:, 1]]
               + bary[:, 2:3] * v[vidx[:, 2]])
        vid_of[free] = self.vstore.add_block(pos, vidx, bary, tc[:, 3])
        return vid_of, free, tc, bary

    def _triangle_block(self, tris, vid_of, free, free_tc, free_w, corners, corner_of_edge,
                        noise_faces=frozenset()):
        """The region's new triangles with their source faces and corner
        weights.  A triangle's source face is the face holding one of its
        interior points, else the largest region face at one of its corners,
        else the region's largest face (regions never cross a change of face
        data, so any of them carries the same; the largest has the
        best-defined plane; faces whose normal is rounding noise, as float32
        slivers, are never chosen this way).
        An original vertex takes its corner in that face (else its corner in
        the largest region face using it), an interior point the three
        corners of its face triangle, a point on an original edge the
        corners at the ends of that edge."""
        n, cv, foc = self.n, self.polys.corners, self.face_of_corner
        area = self._face_areas()
        tris = np.asarray(tris, dtype=np.int64).reshape(-1, 3)
        m = len(vid_of)
        region_v = cv[corners]
        corner_area = area[foc[corners]]
        # per vertex, its corner in the largest face (the first such on ties)
        order = np.lexsort((np.arange(len(corners)), -corner_area, region_v))
        uniq_v, first = np.unique(region_v[order], return_index=True)
        first_corner = corners[order[first]]
        face_ids = foc[corners]
        default_face = int(face_ids[np.argmax(corner_area)])

        def region_corner_of(vids):
            at = np.minimum(np.searchsorted(uniq_v, vids), len(uniq_v) - 1)
            if len(vids) and (uniq_v[at] != vids).any():
                raise RegionSkipped("internal: vertex without source")
            return first_corner[at]

        orig_local = np.flatnonzero(vid_of < n)
        region_corner = np.full(m, -1, dtype=np.int64)
        region_corner[orig_local] = region_corner_of(vid_of[orig_local])
        face_of_orig = np.full(m, -1, dtype=np.int64)
        face_of_orig[orig_local] = foc[region_corner[orig_local]]
        face_of_free = np.full(m, -1, dtype=np.int64)
        face_of_free[free] = free_tc[:, 3]
        source = np.full(len(tris), default_face, dtype=np.int64)
        cand = face_of_orig[tris]           # the largest face at a corner (first on ties)
        if noise_faces:
            noise = np.fromiter(noise_faces, dtype=np.int64, count=len(noise_faces))
            cand = np.where(np.isin(cand, noise), -1, cand)
        cand_area = np.where(cand >= 0, area[np.maximum(cand, 0)], -1.0)
        col = np.argmax(cand_area, axis=1)
        ok = (cand >= 0).any(axis=1)
        source[ok] = cand[ok, col[ok]]
        cand = face_of_free[tris]           # an interior point's face wins
        has = cand >= 0
        ok = has.any(axis=1)
        source[ok] = cand[ok, has.argmax(axis=1)[ok]]
        local = tris.reshape(-1)
        vid = vid_of[local]
        face_rep = np.repeat(source, 3)
        index = np.zeros((len(local), 3), dtype=np.int64)
        weight = np.zeros((len(local), 3), dtype=np.float64)
        count = np.zeros(len(local), dtype=np.int64)
        # original vertices: their corner in the source face
        orig = vid < n
        keys = foc[corners].astype(np.int64) * n + region_v
        order = np.argsort(keys, kind="stable")
        sorted_keys = keys[order]
        wanted = face_rep[orig] * n + vid[orig]
        at = np.maximum(np.searchsorted(sorted_keys, wanted, side="right") - 1, 0)
        hit = sorted_keys[at] == wanted if len(sorted_keys) else np.zeros(len(wanted), bool)
        index[orig, 0] = np.where(hit, corners[order][at], region_corner[local[orig]])
        weight[orig, 0] = 1.0
        count[orig] = 1
        # interior points: the corners of their face triangle
        row_of_free = np.full(m, -1, dtype=np.int64)
        row_of_free[free] = np.arange(len(free))
        fr = row_of_free[local]
        is_free = fr >= 0
        index[is_free] = free_tc[fr[is_free], :3]
        weight[is_free] = free_w[fr[is_free]]
        count[is_free] = 3
        # points on original edges: the corners at the edge's two ends
        cache = {}
        for r in np.flatnonzero(~orig & ~is_free).tolist():
            x = int(vid[r])
            if x not in cache:
                on = self.on_edge.get(x)
                if on is None:   # a new vertex of an earlier region inside this one
                    raise RegionSkipped("internal: vertex without source")
                e, t = on
                lo, hi = self._ends(e)
                if e in corner_of_edge:       # the region face holding that edge
                    ca, cb, ua, _ub = corner_of_edge[e]
                    c_lo, c_hi = (ca, cb) if ua == lo else (cb, ca)
                else:                         # a chord: corners at its two ends
                    c_lo, c_hi = region_corner_of(np.array([lo, hi])).tolist()
                cache[x] = (c_lo, c_hi, 1.0 - t, t)
            c_lo, c_hi, w_lo, w_hi = cache[x]
            index[r, :2] = (c_lo, c_hi)
            weight[r, :2] = (w_lo, w_hi)
            count[r] = 2
        return TriangleBlock(vid_of[tris], source, index, weight, count)

    def region_area(self, region):
        return float(self._face_areas()[region.faces].sum())

    def _degenerate(self, faces):
        """True when the faces' total area is nil next to their extent."""
        polys = self.polys
        corners = np.concatenate([polys.corners[polys.starts[f]:polys.starts[f + 1]]
                                  for f in faces])
        span = float(np.ptp(self.verts[corners], axis=0).max())
        return float(self._face_areas()[faces].sum()) <= 1e-12 * span * span

    def _face_areas(self):
        """Area of every face (Newell), computed once."""
        if self.face_areas is None:
            self.face_areas = 0.5 * np.linalg.norm(newell_normals(self.verts, self.polys), axis=1)
        return self.face_areas

    def _thinner_than_rounding(self, faces):
        """True when every face's height (twice its area over its longest
        edge) is within the rounding of its own coordinates."""
        areas = self._face_areas()
        polys = self.polys
        for f in faces:
            pos = self.verts[polys.corners[polys.starts[f]:polys.starts[f + 1]]]
            longest = float(np.linalg.norm(pos - np.roll(pos, 1, axis=0), axis=1).max())
            height = 2.0 * float(areas[f]) / longest if longest > 0 else 0.0
            if height > self.noise_unit * float(np.abs(pos).max()):
                return False
        return True

    def _final_figures(self, out_faces, out_region, new_positions):
        """Triangle counts and smallest angles of each changed region as
        written (after points from neighbouring regions were added);
        out_faces a PolygonList, out_region the report index per face (-1
        for grown faces)."""
        if not len(out_faces):
            return
        allv = np.vstack((self.verts, new_positions.reshape(-1, 3)))
        sizes = out_faces.sizes
        corners, starts = out_faces.corners, out_faces.starts
        face_of = np.repeat(np.arange(len(out_faces)), sizes)
        pos = np.arange(len(corners))
        nxt = np.where(pos + 1 == starts[face_of + 1], starts[face_of], pos + 1)
        prv = np.where(pos == starts[face_of], starts[face_of + 1] - 1, pos - 1)
        a = allv[corners[nxt]] - allv[corners]
        b = allv[corners[prv]] - allv[corners]
        cross = np.linalg.norm(np.cross(a, b), axis=1)
        angle = np.degrees(np.arctan2(cross, (a * b).sum(axis=1)))
        angle = np.where(angle < 179.999999, angle, 180.0)   # straight corners of grown faces
        region = np.asarray(out_region, dtype=np.int64)
        face_min = np.minimum.reduceat(angle, starts[:-1])
        for rid in np.unique(region[region >= 0]).tolist():
            mine = region == rid
            report = self.reports[rid]
            report.triangles_after = int((sizes[mine] - 2).sum())
            report.min_angle_after = float(face_min[mine].min())

    def _outline_chains(self, border, dropping):
        """Border edges as chains of vertex ids (split points of earlier
        regions included), with straight-run vertices in `dropping` merged
        away.  Returns [(chain, [edge ids it covers])]."""
        if not dropping:
            return [(self._split_chain(u, v, e), [e]) for u, v, e, _ in border]
        start_at = {u: (u, v, e) for u, v, e, _ in border}
        done = set()
        chains = []
        for u, v, e, _ in border:
            if u in dropping or (u, v) in done:
                continue
            chain, covered = [u], []
            a, b, edge = u, v, e
            while True:
                done.add((a, b))
                piece = self._split_chain(a, b, edge)
                chain += piece[1:]
                covered.append(edge)
                if b not in dropping:
                    break
                a, b, edge = start_at[b]
            if len(covered) > 1:     # a merged straight run becomes one chord
                chord = ("chord", min(chain[0], chain[-1]), max(chain[0], chain[-1]))
                chain = self._split_chain(chain[0], chain[-1], chord)
                covered = [chord]
            chains.append((chain, covered))
        return chains

    def shared_splits(self):
        """Edge key -> parameters of all points on it, for edges on the
        outline of two or more changed regions."""
        count = {}
        for keys in self.region_keys:
            for k in keys:
                count[k] = count.get(k, 0) + 1
        return {k: sorted(t for t, _v in self.edge_splits.get(k, ()))
                for k, c in count.items() if c >= 2}

    def _split_chain(self, u, v, e):
        """u, (points added on edge e by earlier regions, in order), v.  An
        original edge also takes the points of a straightened neighbour's
        chord lying along it (same ends)."""
        if e in self.presplit and e not in self.edge_splits:
            for t in self.presplit[e]:
                self._add_edge_point(e, t)
        splits = self._points_on(e)
        if not splits:
            return [u, v]
        lo = self._ends(e)[0]
        inner = [vid for _t, vid in sorted(splits)]
        if u != lo:
            inner.reverse()
        return [u] + inner + [v]

    def _point_on_edges(self, edge_list, px, py, proj):
        """New vertex for a point added on the outline piece covering the
        original edges `edge_list`: on the nearest of them, at its parameter."""
        best = None
        for e in edge_list:
            lo, hi = self._ends(e)
            ax, ay = proj[lo]
            bx, by = proj[hi]
            dx, dy = bx - ax, by - ay
            t = ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy)
            t = float(min(max(t, 0.0), 1.0))
            d = math.hypot(ax + t * dx - px, ay + t * dy - py)
            if best is None or d < best[0]:
                best = (d, e, t)
        _, e, t = best
        if t <= 0.0 or t >= 1.0:
            raise RegionSkipped("a point was added on an outline vertex")
        return self._add_edge_point(e, t)

    def _face_triangles(self, faces):
        """Triangles covering the original faces (a fan from each face's first
        corner; see engine/face_locator.py for n-gons): vertex ids (T, 3) and corners
        plus face (T, 4)."""
        polys = self.polys
        start = polys.starts[faces]
        fan = np.maximum(np.diff(polys.starts)[faces] - 2, 0)
        first = np.repeat(start, fan)
        k = np.arange(int(fan.sum())) - np.repeat(np.cumsum(fan) - fan, fan) + 1
        tri_corners = np.column_stack((first, first + k, first + k + 1, np.repeat(faces, fan)))
        return polys.corners[tri_corners[:, :3]], tri_corners

    @staticmethod
    def _projected_area(face_tris, proj):
        p = proj.many(face_tris)
        return 0.5 * float(((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                            - (p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0])).sum())

    @staticmethod
    def _quality_before(face_tris, proj):
        pts = proj.many(face_tris).reshape(-1, 2)
        return quality(pts, np.arange(len(pts)).reshape(-1, 3)).min_angle

    # -------------------------------------------------------------- finish
    def finish(self):
        polys, edges, cv = self.polys, self.edges, self.polys.corners
        # grow unchanged faces that use a split edge
        grown = {}
        for e in self.edge_splits:
            if isinstance(e, tuple):
                continue            # chords only run between changed faces
            for c in edges.corners_of(e).tolist():
                f = int(edges.face_of_corner[c])
                if f not in self.replaced:
                    grown.setdefault(f, None)
        out = FaceStore()
        for f in sorted(grown):
            cs = list(range(polys.starts[f], polys.starts[f + 1]))
            ids = [int(cv[c]) for c in cs]
            weights = [[(c, 1.0)] for c in cs]
            new_ids, new_w, _ = self._insert_splits(ids, weights)
            out.add(new_ids, f, new_w, -1)
            self.replaced.add(f)
        # a region needs points inserted only where a later region split one
        # of its edges further
        changed = [i for i, report in enumerate(self.reports) if report.status == "changed"]
        for (rid, block), counts in zip(self.region_blocks, self.split_counts):
            stale = any(self._split_total(key) != k for key, k in counts.items())
            if not stale:
                out.add_block(block, rid)
                continue
            for ids, f, weights in block.as_lists():
                new_ids, new_w, slots = self._insert_splits(ids, weights)
                if len(new_ids) == 3:
                    out.add(new_ids, f, new_w, rid)
                    continue
                for tri_ids, tri_w in _fan_from_clear_corner(new_ids, new_w, slots):
                    out.add(tri_ids, f, tri_w, rid)
        assert [rid for rid, _ in self.region_blocks] == changed
        faces, face_source, out_region, cs_, ci, cw = out.arrays()
        new_positions, vs, vi, vv, vface, vedge = self.vstore.arrays()
        used = np.zeros(self.n, dtype=bool)
        keep = np.ones(len(polys), dtype=bool)
        keep[list(self.replaced)] = False
        used[cv[np.repeat(keep, polys.sizes)]] = True
        out_corners = faces.corners
        used[out_corners[out_corners < self.n]] = True
        dropped = np.array(sorted(v for v in self.dropped if not used[v]), dtype=np.int64)
        self._final_figures(faces, out_region, new_positions)
        # report index -> region id; the appended -1 maps grown faces (index -1)
        region_ids = np.array([r.region for r in self.reports] + [-1], dtype=np.int64)
        return MeshEdit(
            vertex_count=self.n,
            replaced_faces=np.array(sorted(self.replaced), dtype=np.int64),
            new_vertices=new_positions,
            vertex_weight_starts=vs, vertex_weight_indices=vi, vertex_weight_values=vv,
            vertex_source_face=vface,
            vertex_source_edge=vedge,
            faces=faces,
            face_source=face_source,
            face_region=region_ids[out_region],
            corner_weight_starts=cs_, corner_weight_indices=ci, corner_weight_values=cw,
            dropped_vertices=dropped,
            regions=sorted(self.reports, key=lambda r: r.region))

    def _split_total(self, key):
        return len(self._points_on(key))

    def _points_on(self, key):
        """[(t, vertex)] added on an outline key so far.  An original edge and
        a chord between the same two vertices (a straightened run of a
        neighbouring region lying along that edge) are one line: each
        carries the other's points too."""
        points = list(self.edge_splits.get(key, ()))
        lo, hi = self._ends(key)
        if isinstance(key, tuple):
            twin = self.edges.lookup(lo, hi)
            if twin >= 0:
                points += self.edge_splits.get(twin, ())
        else:
            points += self.edge_splits.get(("chord", lo, hi), ())
        return points

    def _param(self, x, e):
        lo, hi = self._ends(e)
        if x == lo:
            return 0.0
        if x == hi:
            return 1.0
        on = self.on_edge.get(x)
        if on is not None and on[0] == e:
            return on[1]
        return None

    def _edge_between(self, a, b):
        if a < self.n and b < self.n:
            e = self.edges.lookup(a, b)
            if e in self.edge_splits:
                return e
            chord = ("chord", min(a, b), max(a, b))
            return chord if chord in self.edge_splits else -1
        for x in (a, b):
            on = self.on_edge.get(x)
            if on is not None:
                return on[0]
        return -1

    def _insert_splits(self, ids, weights):
        """Insert the split points lying strictly inside each edge of a face."""
        out_ids, out_w, slots = [], [], []
        k = len(ids)
        for i in range(k):
            a, b = ids[i], ids[(i + 1) % k]
            slots.append(len(out_ids))
            out_ids.append(a)
            out_w.append(weights[i])
            e = self._edge_between(a, b)
            if e == -1:
                continue
            ta, tb = self._param(a, e), self._param(b, e)
            if ta is None or tb is None:
                continue
            points = self._points_on(e)
            inside = sorted({(t, vid) for t, vid in points if min(ta, tb) < t < max(ta, tb)})
            inside.sort(reverse=bool(ta > tb))
            for t, vid in inside:
                s = (t - ta) / (tb - ta)
                out_ids.append(vid)
                out_w.append(_blend(weights[i], weights[(i + 1) % k], s))
        return out_ids, out_w, slots


def _blend(first, second, s):
    merged = {}
    for c, w in first:
        merged[c] = merged.get(c, 0.0) + (1.0 - s) * w
    for c, w in second:
        merged[c] = merged.get(c, 0.0) + s * w
    return list(merged.items())


def _fan_from_clear_corner(ids, weights, corner_slots):
    """Split a triangle that received points on its edges (`corner_slots`:
    positions of its three corners in `ids`).  With points on one edge only,
    fan from the opposite corner; otherwise keep the convex polygon."""
    k = len(ids)
    gaps = [(corner_slots[(j + 1) % 3] - corner_slots[j]) % k - 1 for j in range(3)]
    if sum(1 for g in gaps if g > 0) != 1:
        return [(ids, weights)]
    j = next(j for j in range(3) if gaps[j] > 0)
    apex = corner_slots[(j + 2) % 3]
    run = [(corner_slots[j] + m) % k for m in range(gaps[j] + 2)]
    return [([ids[apex], ids[p], ids[q]], [weights[apex], weights[p], weights[q]])
            for p, q in zip(run, run[1:])]
