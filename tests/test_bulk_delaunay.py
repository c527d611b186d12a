"""The array-round Delaunay builder (engine.bulk_delaunay).

Outside references used here:
* scipy.spatial.Delaunay (Qhull): the triangle set on random points in
  general position, where the Delaunay triangulation is unique;
* Euler's formula T = 2n - h - 2 with h counted by the exact hull of
  tests/helpers.py;
* exact validity: engine.validate.check_triangulation (exact CCW, neighbour
  consistency, exact local Delaunay, every point used) and exact-rational
  signs from tests/helpers.py;
* Kettner, Mehlhorn, Pion, Schirra, Yap (2008), "Classroom examples of
  robustness problems in geometric computations": the near-collinear float
  grid (0.5 + i*2^-53, 0.5 + j*2^-53) with far points (12, 12), (24, 24).

Besides geometry, the returned Mesh must keep the contract of
engine.delaunay.build_delaunay: tn an involution pairing reversed edges, a
ghost triangle outside every hull edge, the ghosts linked in one ring around
the ghost vertex, vt naming a corner of every vertex, constraint flags 0.
All point sets are invented here.
"""

import numpy as np
import pytest
from scipy.spatial import Delaunay

from engine.bulk_delaunay import bulk_delaunay, convex_hull, incircle_sign, orient_sign
from engine.delaunay import build_delaunay
from engine.mesh import DEAD, GHOST
from engine.triangulation import Triangulation
from engine.validate import check_triangulation

from . import helpers as H


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------
def _build(points, indices=None, **kw):
    pts = np.asarray(points, dtype=np.float64)
    if indices is None:
        indices = list(range(len(pts)))
    stats = {}
    mesh = bulk_delaunay(pts[:, 0].tolist(), pts[:, 1].tolist(), indices, stats=stats, **kw)
    return mesh, stats


def _real_triangles(mesh):
    tv = np.asarray(mesh.tv, dtype=np.int64).reshape(-1, 3)
    return tv[(tv >= 0).all(axis=1)]


def _tri_set(triangles):
    return {tuple(sorted(t)) for t in np.asarray(triangles).tolist()}


def check_mesh(mesh, points, indices=None):
    """Structural and exact geometric checks; returns the real triangles."""
    pts = np.asarray(points, dtype=np.float64)
    if indices is None:
        indices = list(range(len(pts)))
    tv = np.asarray(mesh.tv, dtype=np.int64)
    tn = np.asarray(mesh.tn, dtype=np.int64)
    T = len(mesh.mark)
    assert len(tv) == len(tn) == len(mesh.tc) == 3 * T
    assert not any(mesh.tc)
    live = tv.reshape(-1, 3)[:, 0] != DEAD
    assert set(mesh.free) == set(np.flatnonzero(~live).tolist())
    corners = np.flatnonzero(np.repeat(live, 3))
    # neighbour pointers: an involution between live corners of other slots,
    # and the two corners see the same edge in opposite directions
    opp = tn[corners]
    assert (opp >= 0).all()
    assert (tn[opp] == corners).all()
    assert (opp // 3 != corners // 3).all()
    assert live[opp // 3].all()

    def ends(c):
        base = c - c % 3
        return tv[base + (c % 3 + 1) % 3], tv[base + (c % 3 + 2) % 3]

    u, v = ends(corners)
    ou, ov = ends(opp)
    assert (u == ov).all() and (v == ou).all()
    # ghosts: exactly one ghost vertex each, linked in a single ring
    tri = tv.reshape(-1, 3)
    ghost_count = (tri == GHOST).sum(axis=1)
    assert ghost_count[live].max() <= 1
    ghosts = np.flatnonzero(live & (ghost_count == 1))
    hull_edges = []
    seen = set()
    g = int(ghosts[0])
    E = H.ExactPoints(pts)
    for _ in range(len(ghosts)):
        assert g not in seen
        seen.add(g)
        k = int(np.flatnonzero(tri[g] == GHOST)[0])
        b_, a_ = int(tri[g, (k + 1) % 3]), int(tri[g, (k + 2) % 3])
        # across the hull edge a -> b lies a real triangle
        across = tn[3 * g + k] // 3
        assert (tri[across] >= 0).all()
        hull_edges.append((a_, b_))
        g = int(tn[3 * g + (k + 2) % 3] // 3)     # across edge (GHOST, b): next hull edge
    assert g == int(ghosts[0]) and len(seen) == len(ghosts)
    for (a0, b0), (a1, b1) in zip(hull_edges, hull_edges[1:] + hull_edges[:1]):
        assert b0 == a1
        assert E.orient(a0, b0, b1) >= 0          # convex (collinear allowed)
    # vt names a corner of every used vertex
    real = _real_triangles(mesh)
    for p in indices:
        c = mesh.vt[p]
        assert c >= 0 and mesh.tv[c] == p
    assert mesh.is_live_real(mesh.last)
    # exact CCW, neighbours, local Delaunay, every point used (engine validator
    # on the sub-point-set)
    local = {p: i for i, p in enumerate(indices)}
    slot = np.full(T, -1, dtype=np.int64)
    real_slots = np.flatnonzero((tri >= 0).all(axis=1))
    slot[real_slots] = np.arange(len(real_slots))
    nb = slot[tn.reshape(-1, 3)[real_slots] // 3]
    sub = np.vectorize(local.__getitem__, otypes=[np.int64])(real) if len(real) else real
    assert set(np.unique(real).tolist()) == set(indices)
    result = Triangulation(points=pts[indices], triangles=sub, neighbors=nb,
                           segments=np.zeros((0, 2), dtype=np.int64),
                           segment_source=np.zeros(0, dtype=np.int64),
                           merged_into=np.arange(len(indices), dtype=np.int64))
    assert check_triangulation(result, points_used=True) == []
    # Euler: T = 2n - h - 2, h = points on the hull boundary (exact count)
    assert len(real) == H.euler_triangle_count(pts, indices)
    assert len(ghosts) == 2 * len(indices) - 2 - len(real)
    return real


# ---------------------------------------------------------------------------
# 1. agreement with Qhull in general position
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("seed,n", [(0, 100), (1, 1000), (2, 5000), (3, 20000), (4, 50000)])
def test_matches_qhull_uniform(seed, n):
    rng = np.random.default_rng(seed)
    pts = rng.random((n, 2)) * [3.0, 8.0] + [-1.0, 2.5]
    mesh, _ = _build(pts, seed=seed)
    real = check_mesh(mesh, pts) if n <= 20000 else _real_triangles(mesh)
    ref = Delaunay(pts)
    assert len(ref.coplanar) == 0
    assert _tri_set(real) == _tri_set(ref.simplices)


@pytest.mark.parametrize("seed", [7, 8])
def test_matches_qhull_clustered(seed):
    # Gaussian clusters of different scales.  Qhull rounds, so the ratio of
    # scales is kept moderate; with a 1e-3 cluster among spreads of 30 Qhull
    # already returns non-Delaunay quads that the exact check rejects
    rng = np.random.default_rng(seed)
    pts = np.vstack([rng.normal(0, 2e-2, (300, 2)) + [3, -2],
                     rng.normal(0, 1.0, (400, 2)),
                     rng.normal(0, 10.0, (200, 2)),
                     rng.normal(0, 5e-2, (300, 2)) + [25, 40]])
    mesh, _ = _build(pts, seed=seed)
    real = check_mesh(mesh, pts)
    ref = Delaunay(pts)
    assert len(ref.coplanar) == 0
    assert _tri_set(real) == _tri_set(ref.simplices)


def test_extreme_clusters_exact():
    # scales 1e-4 .. 1e2 side by side: Qhull drops points of the tiny
    # cluster as coplanar, so only exact validity and Euler are checked
    rng = np.random.default_rng(9)
    pts = np.vstack([rng.normal(0, 1e-4, (400, 2)) + [3, -2],
                     rng.normal(0, 1.0, (400, 2)),
                     rng.normal(0, 100.0, (200, 2)),
                     rng.normal(0, 1e-9, (100, 2)) + [250, 40]])
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_matches_qhull_jittered_circles():
    # many points near the hull: rings with a radial jitter
    rng = np.random.default_rng(21)
    rings = []
    for n, r, cx, cy in ((3000, 10.0, 0.0, 0.0), (400, 1.5, 4.0, 4.0), (400, 1.5, -4.0, 1.0)):
        th = np.arange(n) * (2 * np.pi / n)
        rr = r + rng.uniform(-1, 1, n) * (2 * np.pi * r / n)
        rings.append(np.column_stack((cx + rr * np.cos(th), cy + rr * np.sin(th))))
    pts = np.vstack(rings)
    mesh, _ = _build(pts)
    real = check_mesh(mesh, pts)
    assert _tri_set(real) == _tri_set(Delaunay(pts).simplices)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_same_as_sequential_builder(seed):
    rng = np.random.default_rng(100 + seed)
    pts = rng.random((1500, 2)) ** [1.0, 3.0]
    idx = list(range(len(pts)))
    seq = build_delaunay(pts[:, 0].tolist(), pts[:, 1].tolist(), idx, seed=seed)
    mesh, _ = _build(pts, seed=seed)
    check_mesh(mesh, pts)
    assert _tri_set(_real_triangles(mesh)) == _tri_set(_real_triangles(seq))


def test_subset_of_indices():
    # only the listed points are triangulated; the others stay unused
    rng = np.random.default_rng(31)
    pts = rng.random((3000, 2))
    idx = sorted(rng.choice(3000, 1200, replace=False).tolist())
    mesh, _ = _build(pts, idx)
    real = check_mesh(mesh, pts, idx)
    ref = Delaunay(pts[idx])
    back = np.asarray(idx)[ref.simplices]
    assert _tri_set(real) == _tri_set(back)
    unused = set(range(3000)) - set(idx)
    assert all(mesh.vt[p] == -1 for p in unused)


# ---------------------------------------------------------------------------
# 2. degenerate inputs: exact validity and Euler
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("nx,ny,shuffle", [(30, 30, False), (25, 41, True), (2, 50, True)])
def test_integer_grid(nx, ny, shuffle):
    # every unit square is cocircular, rows and columns collinear
    pts = np.array([(i, j) for i in range(nx) for j in range(ny)], dtype=np.float64)
    if shuffle:
        pts = pts[np.random.default_rng(nx * ny).permutation(len(pts))]
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_scaled_triangular_lattice():
    # a triangular lattice with tiny spacing far from the origin: six points
    # cocircular around every lattice point
    pts = np.array([(1e6 + (i + 0.5 * (j % 2)) * 2.0 ** -20, -3e5 + j * 0.75 * 2.0 ** -20)
                    for i in range(35) for j in range(35)], dtype=np.float64)
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_points_on_a_circle():
    # cocircular points (exact on the axes and diagonals) and the centre
    t = np.arange(48) * (2 * np.pi / 48)
    pts = np.vstack([np.column_stack((np.cos(t), np.sin(t))), [[0.0, 0.0]]])
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_kettner_near_collinear_grid():
    pts = H.kettner_grid(range(24), range(24))
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_kettner_grid_sparse_with_interior_far_points():
    pts = np.vstack([H.kettner_grid(range(0, 40, 3), range(0, 40, 5)),
                     [[0.25, 0.75], [30.0, -2.0]]])
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


def test_collinear_hull_sides():
    # many points on the sides of a triangle plus a few inside
    s = np.linspace(0.0, 1.0, 60)
    sides = np.vstack([np.column_stack((s, 0 * s)), np.column_stack((0 * s, s)),
                       np.column_stack((s, 1 - s))])
    inner = np.random.default_rng(4).random((80, 2)) * 0.45 + 0.05
    pts = np.unique(np.vstack([sides, inner]), axis=0)
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


# ---------------------------------------------------------------------------
# 3. tiny inputs and errors
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("n", range(3, 11))
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_tiny_random(n, seed):
    pts = np.random.default_rng(1000 * n + seed).integers(-4, 5, (n, 2)).astype(np.float64)
    pts = np.unique(pts, axis=0)
    if H.all_collinear(pts):
        with pytest.raises(ValueError, match="non-collinear"):
            _build(pts)
        return
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


@pytest.mark.parametrize("points", [
    [(0, 0), (1, 0), (0, 1)],
    [(0, 0), (1, 0), (1, 1), (0, 1)],
    [(0, 0), (2, 0), (1, 1), (1, 3)],
    [(0, 0), (4, 0), (2, 0), (2, 1)],
    [(0, 0), (1, 0), (2, 0), (3, 0), (1.5, -1e-300)],
])
def test_tiny_shapes(points):
    pts = np.asarray(points, dtype=np.float64)
    mesh, _ = _build(pts)
    check_mesh(mesh, pts)


@pytest.mark.parametrize("points", [
    [(0, 0), (1, 1)],
    [(0, 0), (1, 1), (2, 2)],
    [(0.125 * i - 3.0, 0.375 * i + 1.0) for i in range(9)],
    [(0.5 + i * 2.0 ** -53, 0.5 + i * 2.0 ** -53) for i in range(20)],
])
def test_collinear_raises(points):
    pts = np.asarray(points, dtype=np.float64)
    with pytest.raises(ValueError, match="need at least three distinct, non-collinear points"):
        _build(pts)


# ---------------------------------------------------------------------------
# 4. the mesh is usable downstream, and the pieces are right
# ---------------------------------------------------------------------------
def test_further_insertions_keep_it_delaunay():
    rng = np.random.default_rng(55)
    pts = rng.random((800, 2))
    mesh, _ = _build(pts)
    extra = rng.random((200, 2)) * 1.4 - 0.2        # some outside the hull
    for x, y in extra.tolist():
        p = mesh.add_vertex(x, y)
        mesh.insert_vertex(p, mesh.locate(x, y))
    allp = np.vstack([pts, extra])
    real = check_mesh(mesh, allp)
    assert _tri_set(real) == _tri_set(Delaunay(allp).simplices)


def test_convex_hull_exact():
    rng = np.random.default_rng(8)
    for pts in (rng.random((2000, 2)), H.kettner_grid(range(10), range(10)),
                np.array([(i, j) for i in range(9) for j in range(7)], dtype=np.float64)):
        E = H.ExactPoints(pts)
        expect = H.strict_hull(E, range(len(pts)))
        got = convex_hull(pts[:, 0].copy(), pts[:, 1].copy()).tolist()
        k = got.index(expect[0])
        assert got[k:] + got[:k] == expect


def test_array_predicates_match_exact_signs():
    rng = np.random.default_rng(12)
    # near-degenerate entries: points near a line and near a circle, tiny
    # perturbations, integer ties
    n = 400
    a = rng.random((n, 2))
    b = rng.random((n, 2))
    t = rng.random(n)
    c = a + (b - a) * t[:, None]
    c[::2] += rng.normal(0, 1e-17, (n // 2, 2))
    c[1::4] = np.round(c[1::4] * 8) / 8
    a[1::4] = np.round(a[1::4] * 8) / 8
    b[1::4] = np.round(b[1::4] * 8) / 8
    got = orient_sign(a[:, 0], a[:, 1], b[:, 0], b[:, 1], c[:, 0], c[:, 1])
    want = [H.exact_orient_sign(*a[i], *b[i], *c[i]) for i in range(n)]
    assert got.tolist() == want
    th = rng.random((n, 4)) * 2 * np.pi
    r = 1.0 + rng.normal(0, 1e-16, (n, 4)) * (rng.random((n, 1)) < 0.5)
    q = [np.column_stack((r[:, k] * np.cos(th[:, k]), r[:, k] * np.sin(th[:, k])))
         for k in range(4)]
    q[3][::3] = [1.0, 0.0]
    q[0][::3] = [0.0, 1.0]
    q[1][::3] = [-1.0, 0.0]
    q[2][::3] = [0.0, -1.0]
    o = np.sign(orient_sign(*q[0].T, *q[1].T, *q[2].T))
    q0 = np.where(o[:, None] < 0, q[1], q[0])       # make a, b, c counter-clockwise
    q1 = np.where(o[:, None] < 0, q[0], q[1])
    got = incircle_sign(*q0.T, *q1.T, *q[2].T, *q[3].T)
    want = [H.exact_incircle_sign(*q0[i], *q1[i], *q[2][i], *q[3][i]) for i in range(n)]
    assert got.tolist() == want


def test_seed_changes_nothing_in_general_position():
    rng = np.random.default_rng(77)
    pts = rng.random((3000, 2))
    sets = {frozenset(_tri_set(_real_triangles(_build(pts, seed=s)[0]))) for s in (0, 1, 2)}
    assert len(sets) == 1
