"""Host mesh <-> arrays: read a mesh in bulk, and write an edit back with all its data.

Reading copies everything the edit needs with ``foreach_get``: positions, the
face/corner/edge topology, every attribute (UV maps, colours, generic attributes,
flags), shape keys, and the vertex-group weights of the vertices that new vertices
are interpolated from.

Writing (:func:`commit`) changes the topology through bmesh (which carries every
layer of the elements that stay, vertex groups and shape keys included), then
overwrites each attribute and shape key of the whole mesh with arrays computed by
:mod:`transfer` (kept elements keep their values, new ones use the engine's weights),
checks the written corners against the plan, and restores the mesh from a backup if
anything goes wrong on the way.  Nothing is written before the plan is complete.
"""

from dataclasses import dataclass, field
from itertools import pairwise

import bmesh
import bpy
import numpy as np

from . import transfer
from .transfer import ALL, MIX, PICK

# data type -> (foreach key, components, numpy dtype, how new values are made)
KINDS = {
    "FLOAT": ("value", 1, np.float32, MIX),
    "FLOAT2": ("vector", 2, np.float32, MIX),
    "FLOAT_VECTOR": ("vector", 3, np.float32, MIX),
    "FLOAT_COLOR": ("color", 4, np.float32, MIX),
    "BYTE_COLOR": ("color_srgb", 4, np.float32, MIX),
    "INT": ("value", 1, np.int32, PICK),
    "INT8": ("value", 1, np.int32, PICK),
    "INT32_2D": ("value", 2, np.int32, PICK),
    "INT16_2D": ("value", 2, np.int32, PICK),
    "BOOLEAN": ("value", 1, bool, ALL),
    "QUATERNION": ("value", 4, np.float32, PICK),
    "FLOAT4X4": ("value", 16, np.float32, PICK),
}
TOPOLOGY = {"position", ".edge_verts", ".corner_vert", ".corner_edge"}
# selection, hiding and the smooth flag go through the element flags (FLAGS below), not
# as attributes: their layers may be absent (all default), and bmesh gives new faces
# flat shading while an absent "sharp_face" means smooth
FLAG_LAYERS = {".select_vert", ".select_edge", ".select_poly", ".hide_vert", ".hide_edge",
               ".hide_poly", "sharp_face"}
FLAGS = (("vertices", "select"), ("vertices", "hide"), ("edges", "select"),
         ("edges", "hide"), ("polygons", "select"), ("polygons", "hide"),
         ("polygons", "use_smooth"))
FLAG_LAYER = {("vertices", "select"): ".select_vert", ("vertices", "hide"): ".hide_vert",
              ("edges", "select"): ".select_edge", ("edges", "hide"): ".hide_edge",
              ("polygons", "select"): ".select_poly", ("polygons", "hide"): ".hide_poly",
              ("polygons", "use_smooth"): "sharp_face"}


def flag_usable(mesh, collection, flag):
    """False when the layer behind a selection/hiding flag exists with a type other than
    booleans (Blender 5.0.1's ``Mesh.update(calc_edges=True)`` can leave such a
    ".select_edge"; writing the flag through it corrupts memory, so it is left alone)."""
    layer = mesh.attributes.get(FLAG_LAYER[collection, flag])
    return layer is None or layer.data_type == 'BOOLEAN'
# face data that never merges across an edge (besides non-internal face attributes)
INTERNAL_FACE_DATA = {".sculpt_face_set"}
# corner data excluded from the region breaks: custom normals are stored relative to
# each corner fan's own space, so their raw values differ without any visible seam
NOT_A_BREAK = {"custom_normal"}


def _byte_colour_key():
    rna = bpy.types.ByteColorAttributeValue.bl_rna
    return "color_srgb" if "color_srgb" in rna.properties else "color"


@dataclass
class Attribute:
    name: str
    domain: str
    data_type: str
    key: str
    mode: str
    values: np.ndarray            # (domain size, components) or (domain size,)


@dataclass
class MeshData:
    """Bulk copy of a mesh (local coordinates, float64 positions)."""

    positions: np.ndarray         # (N, 3)
    loop_starts: np.ndarray       # (F,)
    loop_totals: np.ndarray       # (F,)
    corner_verts: np.ndarray      # (C,)
    corner_edges: np.ndarray      # (C,)
    edge_verts: np.ndarray        # (E, 2)
    face_hidden: np.ndarray
    face_selected: np.ndarray
    face_material: np.ndarray
    edge_seam: np.ndarray
    edge_sharp: np.ndarray
    attributes: list = field(default_factory=list)
    flags: dict = field(default_factory=dict)        # (collection, flag) -> bools
    shape_keys: list = field(default_factory=list)     # [(name, (N, 3) float32)]
    has_vertex_groups: bool = False

    @property
    def vertex_count(self):
        return len(self.positions)

    @property
    def face_starts(self):
        """(F + 1,) face offsets (the engine's PolygonList layout)."""
        return np.append(self.loop_starts, len(self.corner_verts)).astype(np.int64)


def _get(collection, key, count, dtype, comps=1):
    buf = np.empty(count * comps, dtype=dtype)
    if count:
        collection.foreach_get(key, buf)
    return buf if comps == 1 else buf.reshape(count, comps)


def read_mesh(mesh, vertex_groups=0):
    """A :class:`MeshData` of `mesh` (Object Mode data; sync Edit Mode first)."""
    nv, ne, nf, nc = len(mesh.vertices), len(mesh.edges), len(mesh.polygons), len(mesh.loops)
    data = MeshData(
        positions=_get(mesh.vertices, "co", nv, np.float32, 3).astype(np.float64),
        loop_starts=_get(mesh.polygons, "loop_start", nf, np.int32).astype(np.int64),
        loop_totals=_get(mesh.polygons, "loop_total", nf, np.int32).astype(np.int64),
        corner_verts=_get(mesh.loops, "vertex_index", nc, np.int32).astype(np.int64),
        corner_edges=_get(mesh.loops, "edge_index", nc, np.int32).astype(np.int64),
        edge_verts=_get(mesh.edges, "vertices", ne, np.int32, 2).astype(np.int64),
        face_hidden=_get(mesh.polygons, "hide", nf, bool),
        face_selected=_get(mesh.polygons, "select", nf, bool),
        face_material=_get(mesh.polygons, "material_index", nf, np.int32),
        edge_seam=_get(mesh.edges, "use_seam", ne, bool),
        edge_sharp=_get(mesh.edges, "use_edge_sharp", ne, bool),
        has_vertex_groups=vertex_groups > 0,
    )
    sizes = {"POINT": nv, "EDGE": ne, "FACE": nf, "CORNER": nc}
    for collection, flag in FLAGS:
        if flag_usable(mesh, collection, flag):
            items = getattr(mesh, collection)
            data.flags[collection, flag] = _get(items, flag, len(items), bool)
    byte_key = _byte_colour_key()
    # names first: reading data can reallocate layers, so the collection is not
    # iterated while reading
    listed = [(a.name, a.domain, a.data_type) for a in mesh.attributes]
    for name, domain, data_type in listed:
        if name in TOPOLOGY or name in FLAG_LAYERS or domain not in sizes \
                or data_type not in KINDS:
            continue
        attr = mesh.attributes.get(name)
        if attr is None or attr.domain != domain or attr.data_type != data_type:
            continue
        key, comps, dtype, mode = KINDS[attr.data_type]
        if attr.data_type == "BYTE_COLOR":
            key = byte_key
        values = _get(attr.data, key, sizes[attr.domain], dtype, comps)
        data.attributes.append(Attribute(attr.name, attr.domain, attr.data_type, key, mode,
                                         values))
    if mesh.shape_keys is not None:
        for block in mesh.shape_keys.key_blocks:
            data.shape_keys.append((block.name, _get(block.data, "co", nv, np.float32, 3)))
    return data


def world_positions(data, matrix):
    """(N, 3) float64 positions transformed by a 4 x 4 matrix (the object's)."""
    m = np.array(matrix, dtype=np.float64).reshape(4, 4)
    with np.errstate(invalid="ignore", over="ignore"):    # non-finite input is refused later
        return data.positions @ m[:3, :3].T + m[:3, 3]


def break_edge_pairs(data, seams=True, sharp=True, material_borders=True):
    """(K, 2) vertex pairs of the edges no region may cross, and a dict of counts.

    Always: edges where any per-corner attribute (UV map, corner colour, generic
    corner data) differs between the two faces at either end, or where face data
    (smooth flag, face attributes, face sets) differ.  Optionally: UV seams, sharp
    edges, material borders."""
    nxt = transfer.next_corners(data.loop_starts, data.loop_totals)
    edge_ids, pairs = transfer.corner_pairs(data.corner_edges, data.corner_verts, nxt)
    face_of = transfer.face_of_corners(data.loop_totals)
    corner_values = [a.values for a in data.attributes
                     if a.domain == "CORNER" and not a.name.startswith(".")
                     and a.name not in NOT_A_BREAK]
    face_values = [a.values for a in data.attributes
                   if a.domain == "FACE" and a.name != "material_index"
                   and (not a.name.startswith(".") or a.name in INTERNAL_FACE_DATA)]
    if ("polygons", "use_smooth") in data.flags:
        face_values.append(data.flags["polygons", "use_smooth"])
    flags = np.zeros(len(data.edge_verts), dtype=bool)
    counts = {}
    corner_jump = transfer.corner_data_breaks(pairs, corner_values)
    face_jump = transfer.face_data_breaks(pairs, face_of, face_values)
    counts["corner data"] = int(corner_jump.sum())
    counts["face data"] = int(face_jump.sum())
    flags[edge_ids[corner_jump | face_jump]] = True
    if seams:
        flags |= data.edge_seam
        counts["seams"] = int(data.edge_seam.sum())
    if sharp:
        flags |= data.edge_sharp
        counts["sharp"] = int(data.edge_sharp.sum())
    if material_borders:
        jump = transfer.face_data_breaks(pairs, face_of, [data.face_material])
        flags[edge_ids[jump]] = True
        counts["materials"] = int(jump.sum())
    return data.edge_verts[flags], counts


def vertex_group_rows(mesh, sources):
    """{original vertex: {group index: weight}} for the given vertices."""
    verts = mesh.vertices
    return {int(v): {g.group: g.weight for g in verts[int(v)].groups} for v in sources}


def _ranges(starts, sizes):
    """Concatenated arange(starts[i], starts[i] + sizes[i])."""
    starts = np.asarray(starts, dtype=np.int64)
    sizes = np.asarray(sizes, dtype=np.int64)
    total = int(sizes.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    offsets = np.cumsum(sizes) - sizes
    return np.repeat(starts - offsets, sizes) + np.arange(total)


def _set(collection, key, values):
    if len(collection):
        collection.foreach_set(key, np.ascontiguousarray(values).ravel())


class Backup:
    """A copy of a mesh's geometry and data taken before a commit."""

    def __init__(self, mesh, data):
        self.data = data
        self.layers = {a.name for a in mesh.attributes}
        self.bm = bmesh.new()
        self.bm.from_mesh(mesh)

    def restore(self, mesh):
        self.bm.to_mesh(mesh)
        # writing a bmesh adds flag layers (hiding, UV selection) the mesh did not have
        for name in [a.name for a in mesh.attributes if a.name not in self.layers]:
            layer = mesh.attributes.get(name)
            if layer is not None:
                mesh.attributes.remove(layer)
        for attr in self.data.attributes:
            target = mesh.attributes.get(attr.name)
            if target is None and not attr.name.startswith("."):
                # a user layer holding only defaults, which writing a bmesh drops
                target = mesh.attributes.new(attr.name, attr.data_type, attr.domain)
            if target is not None and target.domain == attr.domain:
                _set(target.data, attr.key, attr.values)
        for (collection, flag), values in self.data.flags.items():
            if not flag_usable(mesh, collection, flag):
                continue
            name = FLAG_LAYER[collection, flag]
            if name in self.layers and mesh.attributes.get(name) is None:
                # dropped as all False by the bmesh write; a new layer is all False too
                mesh.attributes.new(name, 'BOOLEAN', DOMAIN_OF[collection])
            _write_flag(mesh, collection, flag, values)   # no layer made needlessly
        if mesh.shape_keys is not None:
            for name, co in self.data.shape_keys:
                block = mesh.shape_keys.key_blocks.get(name)
                if block is not None and len(block.data) == len(co):
                    _set(block.data, "co", co)
        mesh.update()

    def free(self):
        if self.bm is not None:
            self.bm.free()
            self.bm = None


@dataclass
class Written:
    """Index maps of a commit: final index of each original vertex/face (-1 gone),
    of each new vertex and new face."""

    vertex_map: np.ndarray
    new_vertex_map: np.ndarray
    face_map: np.ndarray
    new_face_map: np.ndarray


def commit(mesh, data, edit, new_positions, group_rows=None, select_new=False):
    """Write `edit` (an engine MeshEdit over `data`'s vertices and faces) into `mesh`.

    new_positions (M, 3) local positions of the new vertices; group_rows from
    :func:`vertex_group_rows` for the vertices the new ones are weighted over.
    Returns (:class:`Written`, :class:`Backup`); on failure the mesh is restored and
    the exception re-raised.  The caller frees the backup (or restores with it).
    The new topology is built in a separate bmesh first: a failure there leaves the
    mesh untouched."""
    bm, written = _build(mesh, data, edit, new_positions, group_rows)
    backup = None
    try:
        backup = Backup(mesh, data)
        bm.to_mesh(mesh)
        _write_data(mesh, data, edit, written, select_new)
        mesh.update()
    except Exception:
        if backup is not None:
            backup.restore(mesh)
            backup.free()
        raise
    finally:
        bm.free()
    return written, backup


def _new_group_weights(edit, group_rows):
    """Per new vertex {group: weight}: the weighted sum over its sources that are in
    the group; a new vertex joins a group when any of its sources is in it."""
    out = []
    starts, idx, w = (edit.vertex_weight_starts, edit.vertex_weight_indices,
                      edit.vertex_weight_values)
    for k in range(len(starts) - 1):
        acc = {}
        for i, wt in zip(idx[starts[k]:starts[k + 1]].tolist(),
                         w[starts[k]:starts[k + 1]].tolist()):
            for g, gw in group_rows.get(i, {}).items():
                acc[g] = acc.get(g, 0.0) + wt * gw
        out.append(acc)
    return out


def _sort_kept_then_new(seq, old, new):
    """Order `seq` as: surviving `old` elements in their order, then `new` in order
    (bmesh reuses freed slots, so without this new elements land in the gaps).
    Returns the final index of each old element (-1 when gone) and of each new one.
    Sorting moves element data between slots, so Python references to elements are
    not valid afterwards."""
    seq.index_update()
    old_index = np.array([e.index if e.is_valid else -1 for e in old], dtype=np.int64)
    new_index = np.array([e.index for e in new], dtype=np.int64)
    survivors = old_index >= 0
    rank = np.empty(len(seq), dtype=np.int64)
    rank[old_index[survivors]] = np.arange(int(survivors.sum()))
    rank[new_index] = int(survivors.sum()) + np.arange(len(new_index))
    if not np.array_equal(rank, np.arange(len(seq))):
        ranks = rank.tolist()
        seq.sort(key=lambda e: ranks[e.index])
        seq.index_update()
    final_old = np.where(survivors, np.arange(len(old)), -1)
    final_old[survivors] = np.arange(int(survivors.sum()))
    return final_old, int(survivors.sum()) + np.arange(len(new_index))


def _build(mesh, data, edit, new_positions, group_rows):
    """The edited topology as a new bmesh (the mesh itself is not changed) and the
    index maps; the caller writes it and frees it."""
    n = data.vertex_count
    if edit.vertex_count != n or len(mesh.vertices) != n or len(mesh.polygons) != len(
            data.loop_starts):
        raise RuntimeError("the mesh changed since it was read")
    new_positions = np.asarray(new_positions, dtype=np.float64).reshape(-1, 3)
    new_corners = edit.faces.corners.tolist()
    new_starts = edit.faces.starts.tolist()
    bm = bmesh.new()
    try:
        bm.from_mesh(mesh)
        bm.verts.ensure_lookup_table()
        bm.faces.ensure_lookup_table()
        old_verts = bm.verts[:]
        old_faces = bm.faces[:]
        replaced = [old_faces[f] for f in edit.replaced_faces.tolist()]
        touched = {e for f in replaced for e in f.edges}
        if replaced:
            bmesh.ops.delete(bm, geom=replaced, context='FACES_ONLY')
        new_verts = [bm.verts.new(co) for co in new_positions.tolist()]
        everyone = old_verts + new_verts
        new_faces = [bm.faces.new([everyone[i] for i in new_corners[s:e]])
                     for s, e in pairwise(new_starts)]
        for e in touched:
            if e.is_valid and not e.link_faces:
                bm.edges.remove(e)
        for v in edit.dropped_vertices.tolist():
            vert = old_verts[v]
            if vert.is_valid and not vert.link_edges:
                bm.verts.remove(vert)
        if group_rows and len(new_verts):
            layer = bm.verts.layers.deform.verify()
            for vert, weights in zip(new_verts, _new_group_weights(edit, group_rows)):
                dv = vert[layer]
                for g, wt in weights.items():
                    dv[g] = min(max(wt, 0.0), 1.0)
        vertex_map, new_vertex_map = _sort_kept_then_new(bm.verts, old_verts, new_verts)
        face_map, new_face_map = _sort_kept_then_new(bm.faces, old_faces, new_faces)
    except Exception:
        bm.free()
        raise
    return bm, Written(vertex_map, new_vertex_map, face_map, new_face_map)


def _write_data(mesh, data, edit, written, select_new):
    """Topology check, then every attribute and shape key of the whole mesh."""
    n = data.vertex_count
    nv, ne, nf, nc = len(mesh.vertices), len(mesh.edges), len(mesh.polygons), len(mesh.loops)
    loop_starts = _get(mesh.polygons, "loop_start", nf, np.int32).astype(np.int64)
    corner_verts = _get(mesh.loops, "vertex_index", nc, np.int32).astype(np.int64)
    corner_edges = _get(mesh.loops, "edge_index", nc, np.int32).astype(np.int64)
    edge_verts = _get(mesh.edges, "vertices", ne, np.int32, 2).astype(np.int64)
    vmap, vnew, fmap, fnew = (written.vertex_map, written.new_vertex_map, written.face_map,
                              written.new_face_map)
    alive = np.flatnonzero(vmap >= 0)
    engine_id = np.full(nv, -1, dtype=np.int64)
    engine_id[vmap[alive]] = alive
    engine_id[vnew] = n + np.arange(len(vnew))
    if (engine_id < 0).any():
        raise RuntimeError("internal: a vertex of the written mesh has no source")
    # corners: kept faces keep their corners in order; new faces follow the plan
    kept = np.flatnonzero(fmap >= 0)
    kept_final = _ranges(loop_starts[fmap[kept]], data.loop_totals[kept])
    kept_orig = _ranges(data.loop_starts[kept], data.loop_totals[kept])
    new_sizes = np.diff(edit.faces.starts)
    new_final = _ranges(loop_starts[fnew], new_sizes)
    expected = np.empty(nc, dtype=np.int64)
    expected[kept_final] = data.corner_verts[kept_orig]
    expected[new_final] = edit.faces.corners
    if len(kept_final) + len(new_final) != nc or not np.array_equal(engine_id[corner_verts],
                                                                    expected):
        raise RuntimeError("internal: the written corners differ from the plan")
    edge_src = transfer.edge_sources(engine_id[edge_verts], data.edge_verts,
                                     edit.vertex_source_edge, n)
    has_src = edge_src >= 0
    sizes = {"POINT": nv, "EDGE": ne, "FACE": nf, "CORNER": nc}
    for attr in data.attributes:
        vals = attr.values
        out = np.zeros((sizes[attr.domain],) + vals.shape[1:], dtype=vals.dtype)
        if attr.domain == "POINT":
            out[vmap[alive]] = vals[alive]
            out[vnew] = transfer.combine(vals, edit.vertex_weight_starts,
                                         edit.vertex_weight_indices,
                                         edit.vertex_weight_values, attr.mode)
        elif attr.domain == "CORNER":
            out[kept_final] = vals[kept_orig]
            out[new_final] = transfer.combine(vals, edit.corner_weight_starts,
                                              edit.corner_weight_indices,
                                              edit.corner_weight_values, attr.mode)
        elif attr.domain == "FACE":
            out[fmap[kept]] = vals[kept]
            out[fnew] = vals[edit.face_source]
        else:
            out[has_src] = vals[edge_src[has_src]]
        target = mesh.attributes.get(attr.name)
        if target is None or target.domain != attr.domain or target.data_type != attr.data_type:
            if attr.name.startswith(".") and not out.any():
                continue      # an internal layer the mesh drops when it holds only defaults
            target = mesh.attributes.new(attr.name, attr.data_type, attr.domain)
        _set(target.data, attr.key, out)
    if mesh.shape_keys is not None:
        for name, co in data.shape_keys:
            block = mesh.shape_keys.key_blocks.get(name)
            if block is None:
                continue
            out = np.empty((nv, 3), dtype=np.float32)
            out[vmap[alive]] = co[alive]
            out[vnew] = transfer.combine(co, edit.vertex_weight_starts,
                                         edit.vertex_weight_indices,
                                         edit.vertex_weight_values, MIX)
            _set(block.data, "co", out)
    _write_flags(mesh, data, edit, written, edge_src, select_new,
                 corner_verts[new_final], corner_edges[new_final])


def _write_flags(mesh, data, edit, written, edge_src, select_new, new_corner_verts,
                 new_corner_edges):
    """Selection, hiding, smooth flag: kept elements keep theirs, edge pieces take their
    edge's, new faces their source face's; in Edit Mode runs the new faces, their edges
    and vertices are selected."""
    vmap, fmap, fnew = written.vertex_map, written.face_map, written.new_face_map
    alive, kept, has_src = np.flatnonzero(vmap >= 0), np.flatnonzero(fmap >= 0), edge_src >= 0
    for (collection, flag), values in data.flags.items():
        if not flag_usable(mesh, collection, flag):
            continue
        items = getattr(mesh, collection)
        out = np.zeros(len(items), dtype=bool)
        if collection == "vertices":
            out[vmap[alive]] = values[alive]
        elif collection == "edges":
            out[has_src] = values[edge_src[has_src]]
        else:
            out[fmap[kept]] = values[kept]
            out[fnew] = True if (select_new and flag == "select") \
                else values[edit.face_source]
        if select_new and flag == "select":
            if collection == "vertices":
                out[new_corner_verts] = True
            elif collection == "edges":
                out[new_corner_edges] = True
        _write_flag(mesh, collection, flag, out)


DOMAIN_OF = {"vertices": "POINT", "edges": "EDGE", "polygons": "FACE"}


def _write_flag(mesh, collection, flag, values):
    """Write a flag only where it differs from what is there, through its boolean
    layer (the element setters are slow in bulk); "use_smooth" is stored inverted as
    "sharp_face".  An absent layer means all False."""
    items = getattr(mesh, collection)
    if np.array_equal(_get(items, flag, len(items), bool), values):
        return
    name = FLAG_LAYER[collection, flag]
    stored = ~values if flag == "use_smooth" else values
    layer = mesh.attributes.get(name)
    if layer is None:
        layer = mesh.attributes.new(name, 'BOOLEAN', DOMAIN_OF[collection])
    if layer.data_type != 'BOOLEAN' or layer.domain != DOMAIN_OF[collection]:
        _set(items, flag, values)
        return
    _set(layer.data, "value", stored)
