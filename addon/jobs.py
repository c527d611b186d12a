"""What each operator asks of the engine, on bulk arrays (numpy + engine, no host import).

* :func:`remesh_plan`: one ``engine.remesh_flat_regions`` call per mesh;
* :func:`flip_plan`: the flat regions of the selected triangles, then
  ``engine.legalize`` on each with its outline and break edges fixed; the result is
  an ``engine.MeshEdit`` too (no new vertex, one weight per corner), so both
  operators write back through the same path;
* :class:`Figures`: the one-line report and the panel's figures.

Positions handed to the engine are in world space (the object's matrix applied), so
angles, lengths and tolerances are what the user sees in the scene.  The host stores
positions in single precision, so the engine is told so (its rounding floor stays the
float32 one after the float64 object transform).
"""

import dataclasses
import math
from collections import Counter
from dataclasses import dataclass, field

import numpy as np

from . import transfer
from .engine_link import EdgeTable, engine, find_regions
from .transfer import MIX

HOST_PRECISION = "float32"      # the host keeps vertex positions in single precision


@dataclass
class Figures:
    """Figures of one run over all its meshes."""

    meshes: int = 0
    regions_changed: int = 0
    regions_skipped: int = 0
    reasons: Counter = field(default_factory=Counter)
    triangles_before: int = 0
    triangles_after: int = 0
    min_angle_before: float = math.inf
    min_angle_after: float = math.inf
    added_vertices: int = 0
    flips: int = 0
    incomplete: int = 0         # regions stopped at the point limit
    over_size: int = 0          # regions left with triangles over a size limit
    engine_seconds: float = 0.0

    def add_regions(self, reports):
        for report in reports:
            if report.status == "changed":
                self.regions_changed += 1
                if report.stopped_by == "size_limit":
                    self.over_size += 1
                elif not report.complete:
                    self.incomplete += 1
            elif report.status == "skipped":
                self.regions_skipped += 1
                self.reasons[short_reason(report.reason)] += 1

    def add_faces(self, before, after):
        """before/after: (triangle count, smallest corner angle) of the changed faces."""
        self.triangles_before += before[0]
        self.triangles_after += after[0]
        self.min_angle_before = min(self.min_angle_before, before[1])
        self.min_angle_after = min(self.min_angle_after, after[1])

    def reason_text(self):
        return ", ".join(f"{count} {reason}" for reason, count in self.reasons.most_common())

    def angle_text(self, value):
        return "-" if not math.isfinite(value) else f"{value:.1f}°"

    def line(self, kind="remesh"):
        """The one-line report of a "remesh" or "flip" run."""
        if kind == "flip":
            text = (f"Flipped {self.flips} edge(s) in {self.regions_changed} region(s) on "
                    f"{self.meshes} mesh(es)")
        else:
            text = f"Remeshed {self.regions_changed} region(s) on {self.meshes} mesh(es)"
            if self.added_vertices:
                text += f", {self.added_vertices} new vertices"
        text += f"; skipped {self.regions_skipped}"
        if self.regions_skipped:
            text += f" ({self.reason_text()})"
        if self.incomplete:
            text += f"; {self.incomplete} stopped at the point limit"
        if self.over_size:
            text += f"; {self.over_size} left above the size limit"
        text += (f"; triangles {self.triangles_before} → {self.triangles_after}"
                 f"; smallest angle {self.angle_text(self.min_angle_before)} → "
                 f"{self.angle_text(self.min_angle_after)}")
        return text


def short_reason(reason):
    """The reason without its figures: 'not flat within tolerance (deviation ...)'
    -> 'not flat within tolerance'."""
    return reason.split(" (")[0].split(":")[0].strip() or "unknown"


def polygons(data):
    return engine.PolygonList(data.corner_verts, data.face_starts)


def face_figures(positions, loop_starts, loop_totals, corner_verts, faces):
    """(triangle count, smallest corner angle) of the listed faces; a face of k
    corners counts as k - 2 triangles."""
    faces = np.asarray(faces, dtype=np.int64)
    if len(faces) == 0:
        return 0, math.inf
    totals = np.asarray(loop_totals, dtype=np.int64)[faces]
    corners = _ranges(np.asarray(loop_starts, dtype=np.int64)[faces], totals)
    starts = np.cumsum(totals) - totals
    angles = transfer.face_smallest_angles(positions, starts, totals,
                                           np.asarray(corner_verts)[corners])
    return int((totals - 2).sum()), float(angles.min())


def _ranges(starts, sizes):
    total = int(np.sum(sizes))
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    offsets = np.cumsum(sizes) - sizes
    return np.repeat(starts - offsets, sizes) + np.arange(total)


def edit_figures(world, data, edit):
    """Before/after figures of the faces an edit replaces and adds."""
    before = face_figures(world, data.loop_starts, data.loop_totals, data.corner_verts,
                          edit.replaced_faces)
    positions = np.vstack((world, np.asarray(edit.new_vertices).reshape(-1, 3)))
    sizes = np.diff(edit.faces.starts)
    after = face_figures(positions, edit.faces.starts[:-1], sizes, edit.faces.corners,
                         np.arange(len(sizes)))
    return before, after


def new_local_positions(data, edit):
    """Local positions of the new vertices: the engine's weights over the original
    local positions (the same affine combination as the world positions)."""
    return transfer.combine(data.positions, edit.vertex_weight_starts,
                            edit.vertex_weight_indices, edit.vertex_weight_values, MIX)


def check_finite(positions):
    """ValueError naming the first vertex whose position holds a NaN or an infinity."""
    bad = np.flatnonzero(~np.isfinite(positions).all(axis=1))
    if len(bad):
        raise ValueError(f"{len(bad)} vertex position(s) are not finite (NaN or inf), "
                         f"e.g. vertex {int(bad[0])}")


def check_editable(data, world):
    """ValueError when the host's edit structure (bmesh) cannot take the mesh safely:
    a non-finite position, or a face listing a vertex more than once (bmesh's edge
    cycles break on such faces; the host's own ``Mesh.validate`` removes them)."""
    check_finite(world)
    check_faces_distinct(data.loop_totals, data.corner_verts, data.vertex_count)


def check_faces_distinct(loop_totals, corner_verts, vertex_count):
    """ValueError when a face lists a vertex more than once (bmesh cannot take it:
    some hosts hang selecting such a face)."""
    totals = np.asarray(loop_totals, dtype=np.int64)
    face_of = np.repeat(np.arange(len(totals)), totals)
    keys = face_of * (vertex_count + 1) + np.asarray(corner_verts, dtype=np.int64)
    uniq, counts = np.unique(keys, return_counts=True)
    repeated = np.unique(uniq[counts > 1] // (vertex_count + 1))
    if len(repeated):
        raise ValueError(f"{len(repeated)} face(s) use a vertex more than once, e.g. face "
                         f"{int(repeated[0])} (clean the mesh up first)")


def duplicate_faces(data):
    """Every face with the same set of corners as another face, and one report per
    group of copies (the host keeps one face per corner set, so no copy is rebuilt)."""
    totals = np.asarray(data.loop_totals, dtype=np.int64)
    starts = np.asarray(data.loop_starts, dtype=np.int64)
    cv = np.asarray(data.corner_verts, dtype=np.int64)
    groups = {}
    if len(cv) and len(totals):
        # only faces agreeing in size, corner sum, smallest and largest corner can be
        # copies: compare just those corner by corner
        key = np.column_stack((totals, np.add.reduceat(cv, starts),
                               np.minimum.reduceat(cv, starts), np.maximum.reduceat(cv, starts)))
        _, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
        candidates = np.flatnonzero(counts.reshape(-1)[inverse.reshape(-1)] > 1)
        for f in candidates.tolist():
            s, t = int(starts[f]), int(totals[f])
            groups.setdefault(tuple(sorted(cv[s:s + t].tolist())), []).append(f)
    copies = [g for g in groups.values() if len(g) > 1]
    faces = np.array(sorted(f for g in copies for f in g), dtype=np.int64)
    reports = [engine.RegionReport(region=-1, faces=len(g), status="skipped",
                                   reason="duplicate faces (the same corners twice)",
                                   face_ids=list(g)) for g in copies]
    return faces, reports


def remesh_plan(data, world, face_mask, break_pairs, *, min_angle, max_edge_length,
                flat_angle, keep_boundary, smoothing, straight_run_tolerance,
                keep_interior_vertices, point_limit):
    """``engine.remesh_flat_regions`` on one mesh; returns the MeshEdit.

    Refused (ValueError) when :func:`check_editable` finds a problem or when points
    would be added on the edges of duplicate faces (the copies would become one face);
    otherwise duplicate faces are left out and reported as skipped.  Guard: a region
    whose result holds a zero-area triangle is masked out and the engine run again
    without it (at most twice); it is reported as skipped."""
    check_editable(data, world)
    breaks = np.asarray(break_pairs, dtype=np.int64).reshape(-1, 2)
    mask = np.asarray(face_mask, dtype=bool).copy()
    twins, excluded = duplicate_faces(data)
    excluded = [r for r in excluded if mask[r.face_ids].any()]
    mask[twins] = False
    for _attempt in range(3):
        edit = engine.remesh_flat_regions(
            world, polygons(data), face_mask=mask, flat_angle=float(flat_angle),
            min_angle=float(min_angle),
            max_edge=float(max_edge_length) if max_edge_length > 0 else None,
            keep_boundary=bool(keep_boundary), break_edges=breaks,
            keep_interior_vertices=bool(keep_interior_vertices), smoothing=bool(smoothing),
            max_points=int(point_limit) if point_limit > 0 else None,
            straighten_tolerance=float(straight_run_tolerance)
            if straight_run_tolerance > 0 else None,
            coordinate_precision=HOST_PRECISION)
        bad_sources = degenerate_sources(world, edit)
        if len(bad_sources) == 0:
            break
        region_faces = reported_faces(edit, bad_sources) or \
            regions_of(data, world, mask, breaks, flat_angle, bad_sources)
        for faces in region_faces:
            excluded.append(engine.RegionReport(
                region=-1, faces=len(faces), status="skipped",
                reason="degenerate result (a zero-area triangle)"))
            mask[faces] = False
    else:
        raise RuntimeError("the engine kept returning zero-area triangles")
    rebuilt = np.intersect1d(edit.replaced_faces, twins)
    if len(rebuilt):
        raise ValueError(f"{len(twins)} face(s) repeat the corners of another face, e.g. "
                         f"face {int(rebuilt[0])}, and points would be added on their "
                         f"edges (remove the copies first)")
    edit.regions = list(edit.regions) + excluded
    return edit


def degenerate_sources(world, edit, relative=1e-6):
    """Original faces whose new triangles include a degenerate one: twice its area below
    `relative` times its longest edge squared (a smallest angle under about 6e-5
    degrees; input slivers are far above that).  Measured on positions rounded to
    float32, as the host stores them: new points a few float64 steps from others
    would coincide there."""
    sizes = np.diff(edit.faces.starts)
    tri = np.flatnonzero(sizes == 3)
    if len(tri) == 0:
        return np.zeros(0, dtype=np.int64)
    positions = np.vstack((world, np.asarray(edit.new_vertices).reshape(-1, 3)))
    positions = positions.astype(np.float32).astype(np.float64)
    corners = edit.faces.corners[edit.faces.starts[tri][:, None] + np.arange(3)]
    p = positions[corners]
    cross = np.linalg.norm(np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]), axis=1)
    longest = np.max([np.linalg.norm(p[:, k] - p[:, (k + 1) % 3], axis=1) for k in range(3)],
                     axis=0)
    bad = cross <= relative * longest ** 2
    return np.unique(edit.face_source[tri[bad]])


def reported_faces(edit, faces):
    """The original faces of the engine's regions holding `faces`, from the reports'
    face lists (None when the engine does not list them or a face is in none)."""
    wanted = {int(f) for f in faces}
    out = []
    for report in edit.regions:
        ids = getattr(report, "face_ids", None) or []
        if wanted & set(ids):
            out.append(np.asarray(ids, dtype=np.int64))
            wanted -= set(ids)
    return out if out and not wanted else None


def regions_of(data, world, mask, breaks, flat_angle, faces):
    """The flat regions (as face index arrays) containing `faces`, found as the engine
    finds them."""
    polys = polygons(data)
    edges = EdgeTable(polys, data.vertex_count)
    ids = {edges.lookup(int(a), int(b)) for a, b in breaks.tolist()}
    ids.discard(-1)
    regions, region_of_face = find_regions(world, polys, face_mask=mask,
                                           flat_angle=float(flat_angle), flat_distance=None,
                                           break_edge_ids=ids, edges=edges,
                                           coordinate_precision=HOST_PRECISION)
    wanted = sorted({int(region_of_face[f]) for f in faces if region_of_face[f] >= 0})
    if not wanted:     # grown faces outside every region: leave their neighbours out
        return [np.asarray(faces, dtype=np.int64)]
    return [np.asarray(regions[r].faces, dtype=np.int64) for r in wanted]


def plane_frame(normal):
    """Orthonormal e1, e2 with e1 x e2 along `normal`."""
    n = np.asarray(normal, dtype=np.float64)
    n = n / np.linalg.norm(n)
    axis = np.zeros(3)
    axis[int(np.argmin(np.abs(n)))] = 1.0
    e1 = np.cross(n, axis)
    e1 /= np.linalg.norm(e1)
    return e1, np.cross(n, e1)


def flip_plan(data, world, face_mask, break_pairs, flat_angle, locator):
    """Lawson flips on the flat regions of the masked triangles.

    locator(points (P, 2), triangles (T, 3)) returns a function mapping (K, 2) query
    points to the index of the triangle containing each (the host passes one built on
    its own BVH tree).  Returns (MeshEdit, flip count)."""
    check_editable(data, world)
    polys = polygons(data)
    n = data.vertex_count
    mask = np.asarray(face_mask, dtype=bool) & (data.loop_totals == 3)
    twins, twin_reports = duplicate_faces(data)
    twin_reports = [r for r in twin_reports if mask[r.face_ids].any()]
    mask[twins] = False
    edges = EdgeTable(polys, n)
    break_ids = {edges.lookup(int(a), int(b)) for a, b in np.asarray(break_pairs).tolist()}
    break_ids.discard(-1)
    regions, _ = find_regions(world, polys, face_mask=mask, flat_angle=float(flat_angle),
                              flat_distance=None, break_edge_ids=break_ids, edges=edges,
                              coordinate_precision=HOST_PRECISION)
    starts, cv = data.loop_starts, data.corner_verts
    replaced, new_faces, sources, corner_rows, reports = [], [], [], [], []
    regions_of_new = []
    total_flips = 0
    for rid, region in enumerate(regions):
        faces = np.asarray(region.faces, dtype=np.int64)
        report = engine.RegionReport(region=rid, faces=len(faces), status="unchanged",
                                     triangles_before=len(faces), triangles_after=len(faces))
        reports.append(report)
        if len(faces) < 2:
            continue
        if region.deviation > region.tolerance * 1.000001:
            report.status = "skipped"
            report.reason = (f"not flat within tolerance (deviation {region.deviation:.3g} > "
                             f"{region.tolerance:.3g})")
            continue
        corners = starts[faces][:, None] + np.arange(3)
        tri_v = cv[corners]
        ids, local = np.unique(tri_v, return_inverse=True)
        local = local.reshape(-1, 3)
        e1, e2 = plane_frame(region.normal)
        rel = world[ids] - region.origin
        pts = np.column_stack((rel @ e1, rel @ e2))
        edge_of = edges.edge_of_corner[corners.ravel()]
        uniq, counts = np.unique(edge_of, return_counts=True)
        fixed_ids = uniq[(counts == 1) | np.isin(uniq, list(break_ids))]
        lookup = {int(v): i for i, v in enumerate(ids.tolist())}
        fixed = np.array([[lookup[int(a)], lookup[int(b)]] for a, b in edges.edges[fixed_ids]],
                         dtype=np.int64).reshape(-1, 2)
        try:
            tris, flips = engine.legalize(pts, local, fixed=fixed)
        except ValueError as exc:
            report.status = "skipped"
            report.reason = f"degenerate: {exc}"
            continue
        report.min_angle_before = float(engine.quality(pts, local).min_angle)
        report.min_angle_after = float(engine.quality(pts, tris).min_angle)
        if flips == 0:
            continue
        report.status = "changed"
        total_flips += flips
        locate = locator(pts, local)
        source = np.asarray(locate(pts[tris].mean(axis=1)), dtype=np.int64)
        any_corner = {}
        for c, v in zip(corners.ravel().tolist(), tri_v.ravel().tolist()):
            any_corner.setdefault(v, c)
        for tri, s in zip(tris.tolist(), source.tolist()):
            verts = [int(ids[i]) for i in tri]
            own = dict(zip(tri_v[s].tolist(), corners[s].tolist()))
            new_faces.append(verts)
            sources.append(int(faces[s]))
            regions_of_new.append(rid)
            corner_rows.append([own.get(v, any_corner[v]) for v in verts])
        replaced.extend(faces.tolist())
    flat_rows = [c for row in corner_rows for c in row]
    values = {
        "vertex_count": n,
        "replaced_faces": np.array(sorted(replaced), dtype=np.int64),
        "new_vertices": np.zeros((0, 3)),
        "vertex_weight_starts": np.zeros(1, dtype=np.int64),
        "vertex_weight_indices": np.zeros(0, dtype=np.int64),
        "vertex_weight_values": np.zeros(0),
        "vertex_source_face": np.zeros(0, dtype=np.int64),
        "vertex_source_edge": np.zeros((0, 2), dtype=np.int64),
        "faces": engine.PolygonList(np.array(new_faces, dtype=np.int64).reshape(-1),
                                 np.arange(len(new_faces) + 1) * 3),
        "face_source": np.array(sources, dtype=np.int64),
        "face_region": np.array(regions_of_new, dtype=np.int64),
        "corner_weight_starts": np.arange(len(flat_rows) + 1, dtype=np.int64),
        "corner_weight_indices": np.array(flat_rows, dtype=np.int64),
        "corner_weight_values": np.ones(len(flat_rows)),
        "dropped_vertices": np.zeros(0, dtype=np.int64),
        "regions": reports + twin_reports}
    # the engine's MeshEdit may grow fields; fill the ones it has
    names = {f.name for f in dataclasses.fields(engine.MeshEdit)}
    edit = engine.MeshEdit(**{k: v for k, v in values.items() if k in names})
    return edit, total_flips
