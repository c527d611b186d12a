"""Adversarial inputs for the engine: generators and hypothesis strategies.

Every input here is invented and built in code.  The generators return plain
numpy arrays and Python lists, never engine objects, so the tests can check
the engine's answers against facts computed without it.

Families (each generator names where the idea comes from):

* near-collinear floating-point grids around (0.5, 0.5) with far points on
  y = x (Kettner, Mehlhorn, Pion, Schirra, Yap 2008, classroom examples of
  robustness problems; values as recalled from the paper);
* cocircular integer grids: every unit cell of an integer grid has four
  cocircular corners, and integer points on circles of Pythagorean radii
  (5, 25, 65, 325: sums of two squares in several ways) are many-fold
  cocircular (common practice for degenerate Delaunay input);
* nearly parallel crossing segments: slopes a few ulps apart cross at points
  that are not floats (IEEE 754: the crossing must be rounded);
* tiny features at coordinates offset by 1e6: at 1e6 the spacing of doubles
  is 2**-33 ~ 1.16e-10 (IEEE 754 fact), so a 1e-3 feature spans only
  ~1e7 representable steps;
* whole inputs scaled by 1e-9 and 1e9 (scaling by a power of ten is not
  exact in binary floating point; IEEE 754 fact);
* duplicate and near-duplicate points (one ulp apart: numpy.nextafter);
* self-intersecting and bow-tie outlines; holes touching the outline;
* zero-area, repeated-vertex, bow-tie and non-manifold faces in 3D meshes;
  float32-rounded solids (what an STL file stores); NaN and inf;
* inputs that need more points than the cap.

Hypothesis strategies at the end: point sets, segment sets, polygons with
holes, 3D flat-region meshes.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import strategies as st

from .scenes import rotation

ULP_HALF = 2.0 ** -53          # spacing of doubles in [0.5, 1) (IEEE 754 binary64)


# ==========================================================================
# 2D generators
# ==========================================================================
def kettner_grid(n_i, n_j, unit=ULP_HALF, far=((12.0, 12.0), (24.0, 24.0))):
    """Points (0.5 + i*unit, 0.5 + j*unit), 0 <= i < n_i, 0 <= j < n_j, plus
    the far points on y = x.  Source: Kettner et al. 2008 (the grid of
    orientation tests around (0.5, 0.5) against (12, 12) and (24, 24))."""
    pts = [(0.5 + i * unit, 0.5 + j * unit) for i in range(n_i) for j in range(n_j)]
    pts.extend(far)
    return np.array(pts, dtype=np.float64)


def kettner_diagonal(count, unit=ULP_HALF):
    """Points exactly on y = x next to (0.5, 0.5) plus the far points: all
    collinear, exactly (Kettner et al. 2008 use this line; 0.5 + k*2**-53
    is a double for small k, IEEE 754)."""
    pts = [(0.5 + k * unit, 0.5 + k * unit) for k in range(count)]
    return np.array(pts + [(12.0, 12.0), (24.0, 24.0)], dtype=np.float64)


def integer_grid(nx, ny, step=1.0):
    """An nx x ny integer grid: the four corners of every cell are cocircular
    (common practice: the classic degenerate Delaunay input)."""
    xs, ys = np.meshgrid(np.arange(nx, dtype=np.float64) * step,
                         np.arange(ny, dtype=np.float64) * step)
    return np.column_stack((xs.ravel(), ys.ravel()))


def pythagorean_circle(radius):
    """All integer points (x, y) with x^2 + y^2 = radius^2 (exact integers,
    so every point is exactly on the circle: many-fold cocircular)."""
    r = int(radius)
    pts = []
    for x in range(-r, r + 1):
        y2 = r * r - x * x
        y = math.isqrt(y2)
        if y * y == y2:
            pts.append((x, y))
            if y:
                pts.append((x, -y))
    return np.array(sorted(set(pts)), dtype=np.float64)


def cocircular_rings(radii=(5, 25, 65), center=True):
    """Concentric Pythagorean circles (integer points), optionally with the
    centre: every ring is cocircular and shares the centre with the others."""
    parts = [pythagorean_circle(r) for r in radii]
    if center:
        parts.append(np.zeros((1, 2)))
    return np.unique(np.vstack(parts), axis=0)


def nearly_parallel_fan(count=8, length=1.0, ulps=1):
    """`count` segments through (roughly) the middle of [0, length]^2 whose
    slopes differ by a few ulps: each pair crosses at a point that is not a
    float and at an angle of ~1e-16 radians (IEEE 754: the crossing must be
    rounded).  Returns (points, segments)."""
    pts, segs = [], []
    y0 = 0.5 * length
    for k in range(count):
        d = k * ulps
        a = (0.0, np.nextafter(y0, math.inf) if d == 0 else y0 + d * y0 * 2.0 ** -52)
        b = (length, y0 - d * y0 * 2.0 ** -52)
        segs.append((len(pts), len(pts) + 1))
        pts += [a, b]
    # frame points so the hull is fat
    pts += [(0.0, 0.0), (length, 0.0), (length, length), (0.0, length)]
    return np.array(pts, dtype=np.float64), np.array(segs, dtype=np.int64)


def nearly_parallel_pair(eps):
    """Two segments from x = 0 to x = 1: (0, 0)-(1, eps) and (0, eps)-(1, 0),
    crossing at (1/2, eps/2) under an angle of about 2*eps radians; plus an
    apex so the hull is fat.  Returns (points, segments)."""
    pts = np.array([(0.0, 0.0), (1.0, eps), (0.0, eps), (1.0, 0.0), (0.5, 1.0)])
    return pts, np.array([(0, 1), (2, 3)], dtype=np.int64)


def comb_outline(teeth=6, tooth=1e-3, gap=1e-3, depth=5e-3, base=2e-3):
    """A comb: a base strip with `teeth` thin teeth, CCW.  Sizes default to
    millimetre features (the 'tiny features' of a scene in metres)."""
    pts = [(0.0, 0.0)]
    width = teeth * tooth + (teeth + 1) * gap
    pts.append((width, 0.0))
    pts.append((width, base))
    x = width - gap
    for _ in range(teeth):
        pts += [(x, base), (x, base + depth), (x - tooth, base + depth), (x - tooth, base)]
        x -= tooth + gap
    pts.append((0.0, base))
    out = []
    for p in pts:                      # drop repeats where the gap is at the end
        if not out or out[-1] != p:
            out.append(p)
    return out


def comb_with_slot(offset=(0.0, 0.0), scale=1.0):
    """The comb with a thin slot (a hole) in its base, moved by `offset`
    after scaling by `scale`: loops [outer CCW, hole CW]."""
    outer = comb_outline()
    width = max(x for x, _ in outer)
    hole = [(0.2 * width, 0.8e-3), (0.2 * width, 1.2e-3), (0.8 * width, 1.2e-3),
            (0.8 * width, 0.8e-3)]
    ox, oy = offset
    return [[(ox + scale * x, oy + scale * y) for x, y in loop] for loop in (outer, hole)]


def loops_to_input(loops):
    """Closed vertex loops -> (points (N, 2), segments (N, 2))."""
    pts, segs = [], []
    for loop in loops:
        base = len(pts)
        m = len(loop)
        pts.extend(loop)
        segs.extend((base + i, base + (i + 1) % m) for i in range(m))
    return np.array(pts, dtype=np.float64).reshape(-1, 2), \
        np.array(segs, dtype=np.int64).reshape(-1, 2)


def bowtie():
    """A bow-tie (figure of two triangles meeting at a crossing)."""
    return [[(0.0, 0.0), (2.0, 2.0), (2.0, 0.0), (0.0, 2.0)]]


def pentagram(radius=10.0):
    """A five-pointed star drawn in one stroke: the inner pentagon has
    winding number 2 (even-odd drops it, nonzero keeps it)."""
    pts = [(radius * math.cos(math.pi / 2 + 4 * math.pi * k / 5),
            radius * math.sin(math.pi / 2 + 4 * math.pi * k / 5)) for k in range(5)]
    return [pts]


def figure_eight():
    """A loop that crosses itself once; its two lobes wind in opposite
    directions."""
    return [[(0.0, 0.0), (4.0, 4.0), (8.0, 0.0), (8.0, 4.0), (4.0, 0.0), (0.0, 4.0)]]


def retraced_square():
    """A square outline traversed twice (repeated vertices and overlapping
    segments): winding number 2 inside."""
    sq = [(0.0, 0.0), (3.0, 0.0), (3.0, 3.0), (0.0, 3.0)]
    return [sq + sq]


def hole_touching_outline_at_vertex():
    """A square with a square hole whose corner IS an outline corner."""
    outer = [(0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)]
    hole = [(0.0, 0.0), (1.0, 2.0), (2.0, 2.0), (2.0, 1.0)]   # clockwise
    return [outer, hole]


def hole_touching_outline_on_edge():
    """A square with a triangular hole whose corner lies inside an outline
    edge (the outline edge must be split there)."""
    outer = [(0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)]
    hole = [(2.0, 0.0), (1.0, 1.5), (3.0, 1.5)]
    return [outer, hole]


def hole_sharing_outline_edge():
    """A hole whose edge overlaps part of an outline edge (collinear
    overlapping segments)."""
    outer = [(0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)]
    hole = [(1.0, 0.0), (1.0, 1.0), (3.0, 1.0), (3.0, 0.0)]
    return [outer, hole]


def with_duplicates(points, copies=2, near=True):
    """Every point repeated `copies` times, plus (near=True) for each point
    its one-ulp neighbours in +x, +y and +x+y (numpy.nextafter)."""
    pts = np.asarray(points, dtype=np.float64)
    parts = [pts] * copies
    if near:
        up = np.full_like(pts[:, 0], math.inf)
        parts += [np.column_stack((np.nextafter(pts[:, 0], up), pts[:, 1])),
                  np.column_stack((pts[:, 0], np.nextafter(pts[:, 1], up))),
                  np.column_stack((np.nextafter(pts[:, 0], up), np.nextafter(pts[:, 1], up)))]
    return np.vstack(parts)


def with_non_finite(points, value, row=1, col=0):
    pts = np.array(points, dtype=np.float64, copy=True)
    pts[row, col] = value
    return pts


def transform2(points, scale=1.0, offset=(0.0, 0.0)):
    return np.asarray(points, dtype=np.float64) * scale + np.asarray(offset, dtype=np.float64)


def many_points_domain():
    """A 1 x 1 square whose refinement to max_area 1e-5 needs ~1e5 points:
    far more than the caps the tests set."""
    return [[(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)]]


# ==========================================================================
# 3D generators (vertices (N, 3) float64, faces as lists of index lists)
# ==========================================================================
def tilt(vertices, angles=(0.3, -0.5, 0.8), shift=(5.0, -3.0, 2.0)):
    return np.asarray(vertices, np.float64) @ rotation(*angles).T + np.asarray(shift, np.float64)


def grid_panel(nx, ny, size=1.0):
    """Flat nx x ny quads in z = 0, CCW seen from +z; vertex (i, j) has
    index j * (nx + 1) + i; face (i, j) has index j * nx + i."""
    verts = [(i * size, j * size, 0.0) for j in range(ny + 1) for i in range(nx + 1)]
    faces = []
    for j in range(ny):
        for i in range(nx):
            a = j * (nx + 1) + i
            faces.append([a, a + 1, a + nx + 2, a + nx + 1])
    return np.array(verts, np.float64), faces


def merge(*meshes):
    verts, faces, off = [], [], 0
    for v, f in meshes:
        verts.append(np.asarray(v, np.float64))
        faces += [[off + i for i in face] for face in f]
        off += len(v)
    return np.vstack(verts), faces


def box(sx=3.0, sy=2.0, sz=1.0, n=(3, 2, 2), triangles=False, seed=None, jitter=0.0):
    """A closed box [0, sx] x [0, sy] x [0, sz] whose six sides are grids of
    quads (n[0] x n[1] x n[2] cells), outward-facing, welded.  With
    `triangles` each quad is split along a random diagonal (seeded); with
    `jitter` > 0 grid vertices strictly inside a side move within that side
    (its plane is unchanged).  Volume sx*sy*sz."""
    rng = np.random.default_rng(seed)
    nx, ny, nz = n
    index = {}
    verts = []

    def vid(i, j, k):
        key = (i, j, k)
        if key not in index:
            index[key] = len(verts)
            verts.append([sx * i / nx, sy * j / ny, sz * k / nz])
        return index[key]

    faces = []
    # each side: fixed axis, value, the two running axes (a, b) with a x b outward
    sides = [(0, 0, 2, 1), (0, nx, 1, 2), (1, 0, 0, 2), (1, ny, 2, 0), (2, 0, 1, 0), (2, nz, 0, 1)]
    counts = (nx, ny, nz)
    for axis, value, a, b in sides:
        for p in range(counts[a]):
            for q in range(counts[b]):
                cell = []
                for dp, dq in ((0, 0), (1, 0), (1, 1), (0, 1)):
                    key = [0, 0, 0]
                    key[axis] = value
                    key[a] = p + dp
                    key[b] = q + dq
                    cell.append(vid(*key))
                if triangles:
                    if rng.random() < 0.5:
                        faces += [[cell[0], cell[1], cell[2]], [cell[0], cell[2], cell[3]]]
                    else:
                        faces += [[cell[0], cell[1], cell[3]], [cell[1], cell[2], cell[3]]]
                else:
                    faces.append(cell)
    verts = np.array(verts, np.float64)
    if jitter:
        for (i, j, k), v in index.items():
            inside = [0 < i < nx, 0 < j < ny, 0 < k < nz]
            on_side = [i in (0, nx), j in (0, ny), k in (0, nz)]
            if sum(on_side) == 1:          # strictly inside one side
                for ax, (ins, cells, size) in enumerate(zip(inside, counts, (sx, sy, sz))):
                    if ins:
                        verts[v, ax] += (rng.random() - 0.5) * jitter * size / cells
    return verts, faces


def closed_plate(width=12.0, depth=8.0, thickness=1.0):
    """A closed rectangular plate with one square through hole, all faces
    quads (no triangulation needed): the top and bottom are rings of 8
    quads around the hole.  Volume = (width*depth - 4) * thickness."""
    xs = [0.0, width / 2 - 1, width / 2 + 1, width]
    ys = [0.0, depth / 2 - 1, depth / 2 + 1, depth]
    verts, index = [], {}

    def vid(i, j, k):
        if (i, j, k) not in index:
            index[(i, j, k)] = len(verts)
            verts.append((xs[i], ys[j], k * thickness))
        return index[(i, j, k)]

    faces = []
    for i in range(3):
        for j in range(3):
            if (i, j) == (1, 1):
                continue
            faces.append([vid(i, j, 1), vid(i + 1, j, 1), vid(i + 1, j + 1, 1), vid(i, j + 1, 1)])
            faces.append([vid(i, j, 0), vid(i, j + 1, 0), vid(i + 1, j + 1, 0), vid(i + 1, j, 0)])
    outer = [(0, 0), (1, 0), (2, 0), (3, 0), (3, 1), (3, 2), (3, 3), (2, 3), (1, 3), (0, 3),
             (0, 2), (0, 1)]
    for (i0, j0), (i1, j1) in zip(outer, outer[1:] + outer[:1]):
        faces.append([vid(i0, j0, 0), vid(i1, j1, 0), vid(i1, j1, 1), vid(i0, j0, 1)])
    hole = [(1, 1), (1, 2), (2, 2), (2, 1)]          # clockwise seen from +z: walls face in
    for (i0, j0), (i1, j1) in zip(hole, hole[1:] + hole[:1]):
        faces.append([vid(i0, j0, 0), vid(i1, j1, 0), vid(i1, j1, 1), vid(i0, j0, 1)])
    return np.array(verts, np.float64), faces, (width * depth - 4.0) * thickness


def panel_with_zero_area_face():
    """A 3 x 2 quad panel plus a collinear triangle hanging off a border
    edge's line (zero area)."""
    v, f = grid_panel(3, 2)
    v = np.vstack((v, [(4.0, 0.0, 0.0), (5.0, 0.0, 0.0)]))
    return v, f + [[3, 12, 13]]


def panel_with_sliver_inside():
    """Two triangles and a zero-area 'sliver' face between them: vertex 4
    lies on the segment 1-3 (a T-junction in the input)."""
    v = np.array([(0, 0, 0), (2, 0, 0), (2, 2, 0), (0, 2, 0), (1, 1, 0)], np.float64)
    return v, [[0, 1, 4, 3], [1, 2, 3, 4], [1, 3, 4]]


def panel_with_repeated_vertex_faces():
    """A 3 x 3 panel whose first quad repeats a corner ([a, b, b, c, d]) and
    whose centre quad visits a vertex twice ([a, b, c, a, d]: a bow-tie
    through a shared corner is impossible here, so a 'spike')."""
    v, f = grid_panel(3, 3)
    f = [list(x) for x in f]
    a, b, c, d = f[0]
    f[0] = [a, b, b, c, d]
    return v, f


def bowtie_face_panel():
    """A panel quad plus a bow-tie quad (corners of a square listed in
    crossing order) sharing an edge with it."""
    v = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (2, 0, 0), (2, 1, 0)], np.float64)
    return v, [[0, 1, 2, 3], [1, 4, 2, 5]]


def finned_panel(fins=1):
    """Two coplanar 2 x 1 panels sharing the edge x = 0, with `fins` quads
    standing on that same edge: 2 + fins faces share it (non-manifold)."""
    v, f = grid_panel(4, 1)
    v = v - np.array([2.0, 0.0, 0.0])           # shared edge: vertices 2 and 7
    for k in range(fins):
        ang = math.pi / 2 + k * 0.4
        top = len(v)
        v = np.vstack((v, [(math.cos(ang), 0.0, math.sin(ang)),
                           (math.cos(ang), 1.0, math.sin(ang))]))
        f = f + [[7, 2, top, top + 1]]
    return v, f


def pinched_panel():
    """A 3 x 3 panel without its corner quad (0, 0) and its centre quad
    (1, 1): the centre hole touches the notch at vertex (1, 1), so the
    region's outline passes that vertex twice."""
    v, f = grid_panel(3, 3)
    return v, [x for i, x in enumerate(f) if i not in (0, 4)]


def diagonal_touching_quads():
    """Two quads of one plane meeting only at a corner (a bow-tie of faces)."""
    v = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (2, 1, 0), (2, 2, 0), (1, 2, 0)],
                 np.float64)
    return v, [[0, 1, 2, 3], [2, 4, 5, 6]]


def duplicate_faces_panel(reverse=False):
    """A 2 x 2 panel with its first quad listed twice (reversed: a
    two-sided 'fold')."""
    v, f = grid_panel(2, 2)
    twin = f[0][::-1] if reverse else list(f[0])
    return v, f + [twin]


def unwelded_panel():
    """Two 2 x 2 panels side by side whose shared edge is not welded: the
    right panel has its own copies of the three seam vertices."""
    left = grid_panel(2, 2)
    right = (grid_panel(2, 2)[0] + np.array([2.0, 0.0, 0.0]), grid_panel(2, 2)[1])
    return merge(left, right)


def t_junction_panel():
    """Input with a T-junction: a 2 x 1 panel whose right quad has a vertex
    in the middle of the shared edge that the left quad does not have."""
    v = np.array([(0, 0, 0), (1, 0, 0), (2, 0, 0), (0, 1, 0), (1, 1, 0), (2, 1, 0),
                  (1, 0.5, 0)], np.float64)
    return v, [[0, 1, 4, 3], [1, 2, 5, 4, 6]]


def near_duplicate_vertex_panel():
    """A 2 x 2 panel whose centre vertex has a twin one ulp away in x used
    by two of the four quads (an unwelded, nearly coincident vertex)."""
    v, f = grid_panel(2, 2)
    twin = v[4].copy()
    twin[0] = np.nextafter(twin[0], math.inf)
    v = np.vstack((v, twin))
    f = [list(x) for x in f]
    f[2] = [9 if x == 4 else x for x in f[2]]
    f[3] = [9 if x == 4 else x for x in f[3]]
    return v, f


# ==========================================================================
# hypothesis strategies
# ==========================================================================
SCALES = [("unit", 1.0, (0.0, 0.0)), ("1e-9", 1e-9, (0.0, 0.0)), ("1e9", 1e9, (0.0, 0.0)),
          ("1e-3@1e6", 1e-3, (1e6, 1e6))]


@st.composite
def point_sets(draw):
    """Adversarial 2D point sets: (name, points, fine) where `fine` marks
    sets whose features are only ulps apart (for the checker's tolerance).

    A family (integer grid, Kettner grid, Pythagorean rings, random
    floats, a line with one point an ulp off it), then a scale/offset, then
    duplicates and one-ulp neighbours of some points."""
    family = draw(st.sampled_from(["grid", "kettner", "rings", "floats", "line"]))
    fine = False
    if family == "grid":
        nx, ny = draw(st.integers(1, 9)), draw(st.integers(1, 9))
        pts = integer_grid(nx, ny)
        keep = draw(st.lists(st.booleans(), min_size=len(pts), max_size=len(pts)))
        pts = pts[np.array(keep, bool)] if sum(keep) >= 1 else pts
    elif family == "kettner":
        ij = draw(st.lists(st.tuples(st.integers(0, 63), st.integers(0, 63)),
                           min_size=1, max_size=30, unique=True))
        far = draw(st.lists(st.sampled_from([(12.0, 12.0), (24.0, 24.0), (0.5, 24.0),
                                             (24.0, 0.5)]), max_size=4, unique=True))
        pts = np.array([(0.5 + i * ULP_HALF, 0.5 + j * ULP_HALF) for i, j in ij] + far,
                       dtype=np.float64)
        fine = True
    elif family == "rings":
        radii = draw(st.lists(st.sampled_from([5, 25, 65]), min_size=1, max_size=3, unique=True))
        pts = cocircular_rings(radii, center=draw(st.booleans()))
    elif family == "floats":
        # magnitudes below 1e-40 become 0: the engine documents that its float
        # filters assume coordinate differences above ~1e-70 (no underflow;
        # DEVELOPERS.md), and a one-ulp neighbour of 1e-40 is ~1e-56 away
        coord = st.floats(-1.0, 1.0, allow_nan=False, allow_infinity=False, width=64).map(
            lambda x: x if abs(x) >= 1e-40 else 0.0)
        pts = np.array(draw(st.lists(st.tuples(coord, coord), min_size=1, max_size=30)),
                       dtype=np.float64)
    else:  # a line y = x/3 (not exact in floats) with points on it and one off
        xs = draw(st.lists(st.integers(-50, 50), min_size=2, max_size=20, unique=True))
        pts = np.array([(float(x), float(x) / 3.0) for x in xs], dtype=np.float64)
        if draw(st.booleans()):
            i = draw(st.integers(0, len(pts) - 1))
            extra = pts[i].copy()
            if extra[1] != 0.0:         # the neighbour of 0 is subnormal (see above)
                extra[1] = np.nextafter(extra[1], math.inf)
                pts = np.vstack((pts, extra))
        fine = True
    name, scale, offset = draw(st.sampled_from(SCALES if family != "kettner" else SCALES[:3]))
    pts = transform2(pts, scale, offset)
    if name == "1e-3@1e6":
        fine = True
    # duplicates and one-ulp neighbours of a few points
    n = len(pts)
    dups = draw(st.lists(st.integers(0, n - 1), max_size=4))
    nears = draw(st.lists(st.tuples(st.integers(0, n - 1), st.sampled_from([0, 1])), max_size=3))
    extra = [pts[i] for i in dups]
    for i, axis in nears:
        q = pts[i].copy()
        if q[axis] == 0.0:
            continue        # its neighbour would be subnormal (see above)
        q[axis] = np.nextafter(q[axis], -math.inf)
        extra.append(q)
        fine = True
    if extra:
        pts = np.vstack((pts, np.array(extra)))
    order = draw(st.permutations(range(len(pts))))
    # plain lists: a failing example then prints with every digit (repr)
    return f"{family}/{name}", pts[list(order)].tolist(), fine


@st.composite
def segment_sets(draw):
    """A point set from :func:`point_sets` (at least 3 points) with random
    segments between its points - crossing, overlapping, zero-length, given
    twice - plus, sometimes, a nearly parallel crossing pair added through
    new points.  Returns (name, points, segments, fine)."""
    name, pts, fine = draw(point_sets())
    pts = np.array(pts, dtype=np.float64)
    if len(pts) < 3:
        pts = np.vstack((pts, pts[:1] + 1.0, pts[:1] + np.array([0.0, 2.0])))
    if draw(st.booleans()):
        # a nearly parallel crossing pair inside the bounding box
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        span = hi - lo
        if span.min() > 0:
            k = draw(st.integers(1, 4))
            y0 = lo[1] + 0.5 * span[1]
            ulp = np.spacing(y0) if y0 else np.spacing(span[1])
            a = (lo[0], y0)
            b = (hi[0], y0 + k * ulp)
            c = (lo[0], y0 + k * ulp)
            d = (hi[0], y0)
            base = len(pts)
            pts = np.vstack((pts, [a, b, c, d]))
            fine = True
            pre = [(base, base + 1), (base + 2, base + 3)]
        else:
            pre = []
    else:
        pre = []
    n = len(pts)
    segs = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=8))
    segs = pre + segs
    return name, pts.tolist(), segs, fine


def _star_loop(draw, k, r_lo, r_hi, clockwise, center=(0.0, 0.0)):
    # angle offsets below 1e-6 become 0: a tiny offset would put a
    # coordinate near 1e-300 (even subnormal), below the coordinate
    # differences (~1e-70) the engine documents it supports (DEVELOPERS.md)
    u = draw(st.lists(st.floats(0.0, 0.8).map(lambda t: t if t >= 1e-6 else 0.0),
                      min_size=k, max_size=k))
    r = draw(st.lists(st.floats(r_lo, r_hi), min_size=k, max_size=k))
    sgn = -1.0 if clockwise else 1.0
    cx, cy = center
    return [(cx + ri * math.cos(sgn * 2 * math.pi * (i + ui) / k),
             cy + ri * math.sin(sgn * 2 * math.pi * (i + ui) / k))
            for i, (ui, ri) in enumerate(zip(u, r))]


@st.composite
def polygons_with_holes(draw):
    """A star-shaped outline (radii 5..10, so every edge stays >= 2.5 from
    the centre) with adversarial holes: a hole strictly inside; a hole
    whose vertex is an outline vertex; a hole whose vertex lies on an
    outline edge's midpoint (rounded); a bow-tie 'hole' that crosses
    itself; a hole listed in the same direction as the outline.  Then a
    scale/offset.  Returns (name, loops)."""
    k = draw(st.integers(5, 12))
    outer = _star_loop(draw, k, 5.0, 10.0, clockwise=False)
    loops = [outer]
    kinds = draw(st.lists(st.sampled_from(["inside", "at_vertex", "on_edge", "bowtie",
                                           "same_dir"]), max_size=2))
    for kind in kinds:
        if kind in ("inside", "same_dir"):
            hole = _star_loop(draw, draw(st.integers(3, 6)), 0.5, 2.0,
                              clockwise=(kind == "inside"))
        elif kind == "at_vertex":
            i = draw(st.integers(0, k - 1))
            vx, vy = outer[i]
            hole = [(vx, vy), (0.4 * vx + 0.5, 0.4 * vy), (0.4 * vx, 0.4 * vy + 0.5)]
        elif kind == "on_edge":
            i = draw(st.integers(0, k - 1))
            (ax, ay), (bx, by) = outer[i], outer[(i + 1) % k]
            mx, my = 0.5 * (ax + bx), 0.5 * (ay + by)
            hole = [(mx, my), (0.5 * mx - 0.3, 0.5 * my), (0.5 * mx, 0.5 * my - 0.3)]
        else:
            s = draw(st.floats(0.5, 2.0))
            hole = [(-s, -s), (s, s), (s, -s), (-s, s)]
        loops.append(hole)
    name, scale, offset = draw(st.sampled_from(SCALES))
    loops = [[(scale * x + offset[0], scale * y + offset[1]) for x, y in loop] for loop in loops]
    return f"{'+'.join(kinds) or 'plain'}/{name}", loops


@st.composite
def refine_options(draw, cap_max=300):
    """Options for engine.refine with a small point cap (the run must stop),
    plus "size_parts": None, or the number of parts the region's area is cut
    into to give max_area (the test turns it into max_area)."""
    return dict(min_angle=draw(st.sampled_from([0.0, 20.0, 30.0, 35.0, 59.0])),
                max_points=draw(st.integers(0, cap_max)),
                keep_boundary=draw(st.booleans()),
                off_centers=draw(st.booleans()),
                encroachment=draw(st.sampled_from(["lens", "circle"])),
                size_parts=draw(st.sampled_from([None, None, 10, 50, 150])),
                method=draw(st.sampled_from(["auto", "sequential", "batched"])))


@st.composite
def size_options(draw):
    """Options for engine.refine driven by a size limit, large enough for the
    batched rounds to run: "size_parts" (the region's area over max_area, 50
    to 4,000), the path, and a cap that may or may not stop the run (always
    a cap: above ~21 degrees small input angles may keep refinement going)."""
    return dict(min_angle=draw(st.sampled_from([0.0, 20.0, 30.0, 33.0])),
                size_parts=draw(st.integers(50, 4000)),
                max_points=draw(st.sampled_from([300, 1000, 3000])),
                off_centers=draw(st.booleans()),
                encroachment=draw(st.sampled_from(["lens", "circle"])),
                method=draw(st.sampled_from(["auto", "sequential", "batched"])))


@st.composite
def flat_meshes(draw):
    """3D meshes made of flat regions, with adversarial details.

    Families: a closed box with jittered (in-plane) grid sides, quads or
    triangles; a closed plate with a through hole; an open grid panel with
    faces removed (holes, notches, holes touching the outline), a zero-area
    face, a repeated-vertex face, a non-manifold fin, a duplicate face.
    Then a rigid motion, a scale (1, 1e-9, 1e9, or 1e-3 moved to 1e6),
    optional float32 rounding, and random remesh options (with a small point
    cap).  Returns (name, vertices, faces, options)."""
    family = draw(st.sampled_from(["box", "plate", "panel"]))
    details = []
    if family == "box":
        n = (draw(st.integers(1, 3)), draw(st.integers(1, 3)), draw(st.integers(1, 2)))
        v, f = box(draw(st.floats(0.5, 4.0)), draw(st.floats(0.5, 4.0)), draw(st.floats(0.2, 2.0)),
                   n=n, triangles=draw(st.booleans()), seed=draw(st.integers(0, 2 ** 16)),
                   jitter=draw(st.sampled_from([0.0, 0.5])))
    elif family == "plate":
        v, f, _ = closed_plate(draw(st.floats(3.0, 12.0)), draw(st.floats(3.0, 8.0)),
                               draw(st.floats(0.1, 2.0)))
    else:
        nx, ny = draw(st.integers(1, 4)), draw(st.integers(1, 4))
        v, f = grid_panel(nx, ny)
        f = [list(x) for x in f]
        drop = draw(st.lists(st.integers(0, len(f) - 1), max_size=min(3, len(f) - 1),
                             unique=True))
        f = [x for i, x in enumerate(f) if i not in drop]
        if drop:
            details.append(f"drop{sorted(drop)}")
        extras = draw(st.lists(st.sampled_from(["zero_area", "repeat", "fin", "dup", "split_tri",
                                                "collinear_corner"]), max_size=2, unique=True))
        for kind in extras:
            details.append(kind)
            if kind == "zero_area":              # collinear triangle on a border line
                a = len(v)
                v = np.vstack((v, [(nx + 1.0, 0.0, 0.0), (nx + 2.0, 0.0, 0.0)]))
                f.append([nx, a, a + 1])
            elif kind == "repeat":
                g = list(f[0])
                f[0] = g[:1] + g[:1] + g[1:]
            elif kind == "fin" and f:
                g = f[-1]
                a, b = g[0], g[1]
                t = len(v)
                v = np.vstack((v, v[a] + [0, 0, 1.0], v[b] + [0, 0, 1.0]))
                f.append([b, a, t, t + 1])
            elif kind == "dup" and f:
                f.append(list(f[len(f) // 2]))
            elif kind == "split_tri" and f:    # a quad as two triangles
                g = f.pop(0)
                f += [[g[0], g[1], g[2]], [g[0], g[2], g[3]]]
            elif kind == "collinear_corner" and f:
                # a quad with an extra corner in the middle of its first
                # edge (the neighbour across that edge lacks it: T-junction)
                g = f[0]
                m = len(v)
                v = np.vstack((v, 0.5 * (v[g[0]] + v[g[1]])))
                f[0] = [g[0], m] + list(g[1:])
        if not f:
            f = [[0, 1, nx + 2]]
    if draw(st.booleans()):
        v = tilt(v, angles=(draw(st.floats(-3.0, 3.0)), draw(st.floats(-3.0, 3.0)),
                            draw(st.floats(-3.0, 3.0))))
    name, scale, offset = draw(st.sampled_from(SCALES))
    v = v * scale
    if offset != (0.0, 0.0):
        v = v + np.array([offset[0], offset[1], offset[0]])
    if draw(st.booleans()):
        v = v.astype(np.float32).astype(np.float64)
        details.append("float32")
    size = float(np.linalg.norm(np.ptp(v, axis=0)))
    options = dict(
        min_angle=draw(st.sampled_from([0.0, 20.0, 30.0])),
        max_points=draw(st.integers(0, 60)),
        keep_boundary=draw(st.booleans()),
        keep_interior_vertices=draw(st.booleans()),
        flat_angle=draw(st.sampled_from([0.5, 1.0, 10.0])),
    )
    if draw(st.booleans()):
        options["max_area"] = (size * draw(st.floats(0.02, 0.3))) ** 2
    if draw(st.booleans()):
        options["straighten_tolerance"] = size * 1e-6
    if draw(st.booleans()):
        options["smoothing"] = True
    if draw(st.booleans()) and len(f) > 1:
        g = f[draw(st.integers(0, len(f) - 1))]
        options["break_edges"] = [(g[0], g[1])]
    return f"{family}:{'/'.join(details)}/{name}", v.tolist(), f, options
