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
from .flat_regions import EdgeTable, find_regions, newell_normals
from .legalize import mesh_from_triangles
from .mesh_edit import MeshEdit, RegionReport, WeightRows
from .polygons import PolygonList, check_mesh
from .predicates import orient2d
from .quality import quality
from .ordering import hilbert_keys
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
                        size_growth=None, max_points=None, straighten_tolerance=None):
    """Find the flat regions of a polygon mesh and re-triangulate them.

    vertices        (N, 3) positions.
    faces           polygons: a PolygonList (corners + offsets), an (F, k)
                    array or a list of vertex-index lists (n-gons allowed).
    face_mask       (F,) bools or a list of face indices that may change
                    (default: all).
    flat_angle      degrees: largest normal difference inside a region.
    flat_distance   largest distance of a vertex from the region's plane, in
                    mesh units (default: 1e-4 of the region's size plus a
                    rounding floor: float32 spacing when every coordinate is
                    a float32 value, else float64 spacing).
    min_angle, max_edge, max_area, smoothing, size_growth, max_points:
                    passed to :func:`engine.refine` (degrees / mesh units /
                    square units / points per region).
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
        break_edge_ids=break_ids, edges=edges)
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
                                 straighten=float(straighten_tolerance))
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
                               presplit=presplit, straighten=straighten_tolerance or 0.0)
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
                 straighten=0.0):
        self.verts = verts
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
        self.new_positions = []
        self.vweights = []           # per new vertex: [(original vertex, w)]
        self.vcorner = []            # per new interior vertex: [(original corner, w)] or None
        self.vface = []
        self.vedge = []
        self.on_edge = {}            # new vertex -> (edge id, t from lo to hi)
        self.edge_splits = {}        # edge id -> [(t, new vertex)]
        self.new_faces = []          # lists of vertex ids
        self.new_face_region = []    # report index of the region each came from
        self.presplit = presplit or {}   # edge key -> parameters of points it must carry
        self.region_keys = []        # per changed region: its outline edge keys
        self.split_counts = []       # per changed region: points on each key when it was done
        self.new_face_source = []
        self.new_corner_weights = []  # per new face: per corner [(original corner, w)]
        self.replaced = set()
        self.dropped = set()
        self.dropped_border = set()
        self.reports = []

    # ------------------------------------------------------------ vertices
    def position(self, vid):
        return self.verts[vid] if vid < self.n else self.new_positions[vid - self.n]

    def _add_vertex(self, pos, weights, corner_weights, face, edge):
        vid = self.n + len(self.new_positions)
        self.new_positions.append(np.asarray(pos, dtype=np.float64))
        merged = {}
        for v, w in weights:
            merged[v] = merged.get(v, 0.0) + w
        self.vweights.append(list(merged.items()))
        self.vcorner.append(corner_weights)
        self.vface.append(face)
        self.vedge.append(edge)
        return vid

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
        vid = self._add_vertex(pos, [(lo, 1.0 - t), (hi, t)], None, -1, (lo, hi))
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
        if region.deviation > region.tolerance * 1.000001:
            raise RegionSkipped(f"not flat within tolerance (deviation {region.deviation:.3g} "
                                f"> {region.tolerance:.3g})")
        corners = np.concatenate([np.arange(polys.starts[f], polys.starts[f + 1]) for f in faces])
        cv = polys.corners
        edge_ids = edges.edge_of_corner[corners]
        uniq, counts = np.unique(edge_ids, return_counts=True)
        count_of = dict(zip(uniq.tolist(), counts.tolist()))
        if max(counts) > 2:
            raise RegionSkipped("non-manifold edge inside the region")
        border = []          # directed (u, v, edge id, corner at u)
        inner = []           # edges kept inside: (u, v, edge id, corner at u)
        region_vertices = set(cv[corners].tolist())
        corner_of_edge = {}
        uses_of_edge = np.diff(edges.corner_starts)
        for c, e in zip(corners.tolist(), edge_ids.tolist()):
            u, v = int(cv[c]), int(cv[nxt[c]])
            if count_of[e] == 1:
                border.append((u, v, e, c))
            elif e not in corner_of_edge and (e in self.break_ids or uses_of_edge[e] > 2):
                # a break edge, or a fold where faces outside the region
                # (a fin) meet the region's inside: kept, split alike on all sides
                inner.append((u, v, e, c))
            corner_of_edge.setdefault(e, (c, int(nxt[c]), u, v))
        if not border:
            raise RegionSkipped("the region has no border (a closed flat surface)")
        border_vertices = {u for u, _, _, _ in border} | {v for _, v, _, _ in border}
        dropping = self.dropped_border & border_vertices
        inner_vertices = {u for u, _, _, _ in inner} | {v for _, v, _, _ in inner}
        interior = region_vertices - border_vertices
        uses = {}
        for c in corners.tolist():
            uses[int(cv[c])] = uses.get(int(cv[c]), 0) + 1
        kept_interior = sorted(v for v in interior if self.keep_interior or v in inner_vertices
                               or uses[v] < self.faces_using_vertex[v])
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
        face_tris, face_tri_corners = self._face_triangles(faces)
        all_v = np.array(sorted(region_vertices))
        proj = {int(v): ((self.verts[v] - origin) @ e1, (self.verts[v] - origin) @ e2)
                for v in all_v}
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
        n_in = len(point_ids)
        locator = _FaceLocator(face_tris, face_tri_corners, proj)
        polys_face_of = self.face_of_corner
        vid_of = list(point_ids)
        piece_edges = {}
        for (p, q), s in zip(refined.segments.tolist(), refined.segment_source.tolist()):
            for x in (p, q):
                if x >= n_in:
                    piece_edges[x] = segment_edge[s]
        out_pts = refined.points
        vertex_corner = {}
        free = [i for i in range(n_in, len(out_pts)) if i not in piece_edges]
        tri_of, bary = locator.locate_many(out_pts[free]) if free else (None, None)
        where = {i: k for k, i in enumerate(free)}
        tri_corner = locator.tri_corners
        for i in range(n_in, len(out_pts)):
            if i in piece_edges:
                px, py = out_pts[i]
                vid = self._point_on_edges(piece_edges[i], px, py, proj)
            else:
                k = where[i]
                c0, c1, c2, f = tri_corner[tri_of[k]]
                w0, w1, w2 = bary[k].tolist()
                v0, v1, v2 = int(cv[c0]), int(cv[c1]), int(cv[c2])
                pos = w0 * self.verts[v0] + w1 * self.verts[v1] + w2 * self.verts[v2]
                cpairs = [(c0, w0), (c1, w1), (c2, w2)]
                vid = self._add_vertex(pos, [(v0, w0), (v1, w1), (v2, w2)], cpairs, f, (-1, -1))
                vertex_corner[vid] = cpairs
            vid_of.append(vid)
        region_corner_at = {}       # vertex -> its corner in the largest face using it
        face_corner = {}
        face_area = self.face_areas
        for c in corners.tolist():
            v = int(cv[c])
            g = int(polys_face_of[c])
            best = region_corner_at.get(v)
            if best is None or face_area[g] > face_area[polys_face_of[best]]:
                region_corner_at[v] = c
            face_corner[(g, v)] = c
        # a new triangle's source face: the face holding one of its new
        # interior vertices, else the largest region face at one of its
        # corners (regions never cross a change of face data, so any of them
        # carries the same; the largest has the best-defined plane, where a
        # sliver's normal may be rounding noise)
        default_face = max(faces, key=lambda g: face_area[g])
        for (a, b, c) in refined.triangles.tolist():
            ids = [vid_of[a], vid_of[b], vid_of[c]]
            f = -1
            for x in ids:
                if x in vertex_corner:
                    f = self.vface[x - self.n]
                    break
            if f < 0:
                for x in ids:
                    if x < self.n and x in region_corner_at:
                        g = int(polys_face_of[region_corner_at[x]])
                        if f < 0 or face_area[g] > face_area[f]:
                            f = g
                if f < 0:
                    f = default_face
            weights = []
            for x in ids:
                if x < self.n:
                    weights.append([(face_corner.get((f, x), region_corner_at.get(x)), 1.0)])
                elif x in vertex_corner:
                    weights.append(vertex_corner[x])
                elif x in self.on_edge:
                    e, t = self.on_edge[x]
                    lo, hi = self._ends(e)
                    if e in corner_of_edge:       # the region face holding that edge
                        ca, cb, ua, _ub = corner_of_edge[e]
                        c_lo, c_hi = (ca, cb) if ua == lo else (cb, ca)
                    else:                         # a chord: corners at its two ends
                        c_lo, c_hi = region_corner_at[lo], region_corner_at[hi]
                    weights.append([(c_lo, 1.0 - t), (c_hi, t)])
                else:   # a new vertex of an earlier region inside this one: impossible
                    raise RegionSkipped("internal: vertex without source")
            self.new_faces.append(ids)
            self.new_face_region.append(len(self.reports))
            self.new_face_source.append(f)
            self.new_corner_weights.append(weights)
        self.replaced.update(faces)
        keys_here = set()
        for keys in segment_edge:
            keys_here.update(keys)
        self.region_keys.append(keys_here)
        self.split_counts.append({k: len(self.edge_splits.get(k, ())) for k in keys_here})
        self.dropped.update(v for v in interior if v not in set(kept_interior))
        self.dropped.update(dropping)
        after = quality(refined.points, refined.triangles)
        return RegionReport(
            region=rid, faces=len(faces), status="changed",
            triangles_before=int(len(face_tris)), triangles_after=int(len(refined.triangles)),
            min_angle_before=before, min_angle_after=after.min_angle,
            added_points=int(len(out_pts) - n_in), complete=bool(refined.complete),
            reason=refined.stop_reason)

    def region_area(self, region):
        if self.face_areas is None:
            self.face_areas = 0.5 * np.linalg.norm(newell_normals(self.verts, self.polys), axis=1)
        return float(self.face_areas[region.faces].sum())

    def _degenerate(self, faces):
        """True when the faces' total area is nil next to their extent."""
        if self.face_areas is None:
            self.face_areas = 0.5 * np.linalg.norm(newell_normals(self.verts, self.polys), axis=1)
        polys = self.polys
        corners = np.concatenate([polys.corners[polys.starts[f]:polys.starts[f + 1]]
                                  for f in faces])
        span = float(np.ptp(self.verts[corners], axis=0).max())
        return float(self.face_areas[faces].sum()) <= 1e-12 * span * span

    def _final_figures(self, out_faces, out_region, new_positions):
        """Triangle counts and smallest angles of each changed region as
        written (after points from neighbouring regions were added)."""
        if not out_faces:
            return
        allv = np.vstack((self.verts, new_positions.reshape(-1, 3)))
        sizes = np.array([len(f) for f in out_faces])
        corners = np.fromiter((v for f in out_faces for v in f), dtype=np.int64,
                              count=int(sizes.sum()))
        starts = np.concatenate(([0], np.cumsum(sizes)))
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
        """u, (points added on edge e by earlier regions, in order), v."""
        if e in self.presplit and e not in self.edge_splits:
            for t in self.presplit[e]:
                self._add_edge_point(e, t)
        splits = self.edge_splits.get(e)
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
        """Triangles (vertex ids) covering the original faces, and their corners."""
        polys, cv = self.polys, self.polys.corners
        tris, tri_corners = [], []
        for f in faces:
            cs = list(range(polys.starts[f], polys.starts[f + 1]))
            for k in range(1, len(cs) - 1):           # fan; see _FaceLocator for n-gons
                tri_corners.append((cs[0], cs[k], cs[k + 1], f))
                tris.append((int(cv[cs[0]]), int(cv[cs[k]]), int(cv[cs[k + 1]])))
        return tris, tri_corners

    @staticmethod
    def _projected_area(face_tris, proj):
        total = 0.0
        for a, b, c in face_tris:
            (ax, ay), (bx, by), (cx, cy) = proj[a], proj[b], proj[c]
            total += 0.5 * ((bx - ax) * (cy - ay) - (by - ay) * (cx - ax))
        return total

    @staticmethod
    def _quality_before(face_tris, proj):
        pts = np.array([proj[v] for tri in face_tris for v in tri]).reshape(-1, 2)
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
        out_faces, out_source, out_weights = [], [], []
        for f in sorted(grown):
            cs = list(range(polys.starts[f], polys.starts[f + 1]))
            ids = [int(cv[c]) for c in cs]
            weights = [[(c, 1.0)] for c in cs]
            new_ids, new_w, _ = self._insert_splits(ids, weights)
            out_faces.append(new_ids)
            out_source.append(f)
            out_weights.append(new_w)
            self.replaced.add(f)
        out_region = [-1] * len(out_faces)
        changed_index = {}
        for i, report in enumerate(self.reports):
            if report.status == "changed":
                changed_index[i] = len(changed_index)
        # a region needs points inserted only where a later region split one
        # of its edges further
        stale = {}
        for i, k in changed_index.items():
            counts = self.split_counts[k]
            stale[i] = any(len(self.edge_splits.get(key, ())) != n for key, n in counts.items())
        for ids, f, weights, rid in zip(self.new_faces, self.new_face_source,
                                        self.new_corner_weights, self.new_face_region):
            if not stale.get(rid, True):
                out_faces.append(ids)
                out_source.append(f)
                out_weights.append(weights)
                out_region.append(rid)
                continue
            new_ids, new_w, slots = self._insert_splits(ids, weights)
            if len(new_ids) == 3:
                out_faces.append(new_ids)
                out_source.append(f)
                out_weights.append(new_w)
                out_region.append(rid)
                continue
            for tri_ids, tri_w in _fan_from_clear_corner(new_ids, new_w, slots):
                out_faces.append(tri_ids)
                out_source.append(f)
                out_weights.append(tri_w)
                out_region.append(rid)
        vrows, crows = WeightRows(), WeightRows()
        for pairs in self.vweights:
            vrows.add(pairs)
        for weights in out_weights:
            for pairs in weights:
                crows.add(pairs)
        vs, vi, vv = vrows.arrays()
        cs_, ci, cw = crows.arrays()
        used = np.zeros(self.n, dtype=bool)
        keep = np.ones(len(polys), dtype=bool)
        keep[list(self.replaced)] = False
        used[cv[np.repeat(keep, polys.sizes)]] = True
        for ids in out_faces:
            for x in ids:
                if x < self.n:
                    used[x] = True
        dropped = np.array(sorted(v for v in self.dropped if not used[v]), dtype=np.int64)
        new_positions = np.array(self.new_positions, dtype=np.float64).reshape(-1, 3)
        self._final_figures(out_faces, out_region, new_positions)
        return MeshEdit(
            vertex_count=self.n,
            replaced_faces=np.array(sorted(self.replaced), dtype=np.int64),
            new_vertices=new_positions,
            vertex_weight_starts=vs, vertex_weight_indices=vi, vertex_weight_values=vv,
            vertex_source_face=np.array(self.vface, dtype=np.int64),
            vertex_source_edge=np.array(self.vedge, dtype=np.int64).reshape(-1, 2),
            faces=PolygonList.from_faces(out_faces),
            face_source=np.array(out_source, dtype=np.int64),
            face_region=np.array([self.reports[r].region if r >= 0 else -1 for r in out_region],
                                 dtype=np.int64),
            corner_weight_starts=cs_, corner_weight_indices=ci, corner_weight_values=cw,
            dropped_vertices=dropped,
            regions=sorted(self.reports, key=lambda r: r.region))

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
            inside = [(t, vid) for t, vid in self.edge_splits[e]
                      if min(ta, tb) < t < max(ta, tb)]
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


class _FaceLocator:
    """Finds the original face triangle containing a point of the plane."""

    def __init__(self, face_tris, tri_corners, proj):
        self.tri_corners = tri_corners
        verts = sorted({v for t in face_tris for v in t})
        local = {v: i for i, v in enumerate(verts)}
        self.pts = np.array([proj[v] for v in verts], dtype=np.float64).reshape(-1, 2)
        tris = np.array([[local[v] for v in t] for t in face_tris], dtype=np.int64)
        self.tris = tris
        p = self.pts[tris]
        area2 = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                 - (p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0]))
        self.good = np.flatnonzero(area2 > 0)
        self.mesh = None
        self.mesh_slot = None
        if len(self.good):
            try:
                self.mesh = mesh_from_triangles(self.pts, tris[self.good])
            except ValueError:
                self.mesh = None

    def locate_many(self, points):
        """Containing original face triangle (index into the face triangles)
        and clamped barycentric weights for many points."""
        pts = np.asarray(points, dtype=np.float64).reshape(-1, 2)
        if self.mesh is not None and len(pts):
            return self._walk_many(pts)
        tri_of = np.full(len(pts), -1, dtype=np.int64)
        bary = np.zeros((len(pts), 3))
        for i in range(len(pts)):
            tri_of[i], bary[i] = self._locate_one(*pts[i])
        return tri_of, bary

    def _walk_many(self, pts):
        """Locate points in Hilbert order, each walk starting where the
        previous one ended (few steps between neighbouring points)."""
        q = len(pts)
        order = np.argsort(hilbert_keys(pts), kind="stable")
        mesh = self.mesh
        tv, x, y = mesh.tv, mesh.x, mesh.y
        good = self.good.tolist()
        slot = np.empty(q, dtype=np.int64)
        xs, ys = pts[:, 0].tolist(), pts[:, 1].tolist()
        fallback = []
        for i in order.tolist():
            px, py = xs[i], ys[i]
            s = mesh.locate(px, py)
            b = 3 * s
            a0, a1, a2 = tv[b], tv[b + 1], tv[b + 2]
            if (orient2d(x[a1], y[a1], x[a2], y[a2], px, py) < 0
                    or orient2d(x[a2], y[a2], x[a0], y[a0], px, py) < 0
                    or orient2d(x[a0], y[a0], x[a1], y[a1], px, py) < 0):
                fallback.append(i)
                slot[i] = -1
            else:
                slot[i] = good[s]
        ok = slot >= 0
        tri_of = slot.copy()
        bary = np.zeros((q, 3))
        w = np.clip(_barycentric_many(self.pts[self.tris[tri_of[ok]]], pts[ok]), 0.0, None)
        bary[ok] = w / w.sum(axis=1, keepdims=True)
        for i in fallback:
            tri_of[i], bary[i] = self._locate_one(*pts[i])
        return tri_of, bary

    def _locate_one(self, px, py):
        t = None
        if self.mesh is not None:
            s = self.mesh.locate(px, py)
            if self._inside(s, px, py):
                t = int(self.good[s])
        if t is None:
            t = self._nearest(px, py)
        return t, self._barycentric(t, px, py)

    def _inside(self, s, px, py):
        tv, x, y = self.mesh.tv, self.mesh.x, self.mesh.y
        for k in range(3):
            u, v = tv[3 * s + (k + 1) % 3], tv[3 * s + (k + 2) % 3]
            if orient2d(x[u], y[u], x[v], y[v], px, py) < 0:
                return False
        return True

    def _barycentric(self, t, px, py):
        a, b, c = self.pts[self.tris[t]]
        det = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
        if det == 0:
            return (1.0, 0.0, 0.0)
        wb = ((px - a[0]) * (c[1] - a[1]) - (py - a[1]) * (c[0] - a[0])) / det
        wc = ((b[0] - a[0]) * (py - a[1]) - (b[1] - a[1]) * (px - a[0])) / det
        w = np.clip(np.array([1.0 - wb - wc, wb, wc]), 0.0, None)
        w /= w.sum()
        return tuple(float(v) for v in w)

    def _nearest(self, px, py):
        """The good triangle whose barycentric coordinates are least negative."""
        idx = self.good if len(self.good) else np.arange(len(self.tris))
        w = _barycentric_many(self.pts[self.tris[idx]], np.array([[px, py]]))
        worst = w.min(axis=1)
        return int(idx[int(np.argmax(worst))])


def _barycentric_many(corners, points):
    """(K, 3) barycentric coordinates of points (K, 2) (or one point, broadcast)
    in triangles corners (K, 3, 2); degenerate triangles give huge values."""
    a, b, c = corners[:, 0], corners[:, 1], corners[:, 2]
    p = np.broadcast_to(points, a.shape)
    det = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    det = np.where(det == 0, 1e-300, det)
    wb = ((p[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (p[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])) / det
    wc = ((b[:, 0] - a[:, 0]) * (p[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (p[:, 0] - a[:, 0])) / det
    return np.column_stack((1.0 - wb - wc, wb, wc))
