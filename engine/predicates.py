"""Exact orientation and incircle tests with a floating-point filter.

Method: the semi-static error bounds of stage A of Shewchuk's adaptive
predicates (J. R. Shewchuk, "Adaptive Precision Floating-Point Arithmetic and
Fast Robust Geometric Predicates", Discrete & Computational Geometry 18,
1997).  When the float result is larger than its error bound its sign is
certain; otherwise the determinant is recomputed exactly with Python integers
(every double is an integer times a power of two, so a common power-of-two
scale turns the inputs into integers without rounding).

The scalar functions return a float whose *sign* is exact: positive means
counter-clockwise (``orient2d``) or "d strictly inside the circle through the
counter-clockwise a, b, c" (``incircle``).  The vectorised ``*_many`` versions
do the same for numpy arrays, running the exact fallback only on the few
uncertain entries.  The hot loops of the mesh code inline the float filter and
call ``orient2d_exact`` / ``incircle_exact`` directly when it is inconclusive.
"""

import math

import numpy as np

_EPS = 2.0 ** -53
CCW_BOUND = (3.0 + 16.0 * _EPS) * _EPS
INCIRCLE_BOUND = (10.0 + 96.0 * _EPS) * _EPS
# the same bound with slack for the rounding of an abs-free upper estimate of
# the permanent (see Mesh.insert_vertex)
INCIRCLE_LOOSE = INCIRCLE_BOUND * 1.0001


def _as_integers(values):
    """Scale doubles by one power of two so all become exact integers."""
    ratios = [float(v).as_integer_ratio() for v in values]
    denominator = max(d for _, d in ratios)
    return [n * (denominator // d) for n, d in ratios]


def _sign(value):
    return 1.0 if value > 0 else (-1.0 if value < 0 else 0.0)


def orient2d_exact(ax, ay, bx, by, cx, cy):
    """Exact sign (as -1.0, 0.0 or 1.0) of the orientation of a, b, c."""
    ax, ay, bx, by, cx, cy = _as_integers((ax, ay, bx, by, cx, cy))
    return _sign((ax - cx) * (by - cy) - (ay - cy) * (bx - cx))


def incircle_exact(ax, ay, bx, by, cx, cy, dx, dy):
    """Exact sign of the incircle determinant of a, b, c (CCW) and d."""
    ax, ay, bx, by, cx, cy, dx, dy = _as_integers((ax, ay, bx, by, cx, cy, dx, dy))
    adx, ady = ax - dx, ay - dy
    bdx, bdy = bx - dx, by - dy
    cdx, cdy = cx - dx, cy - dy
    det = ((adx * adx + ady * ady) * (bdx * cdy - cdx * bdy)
           + (bdx * bdx + bdy * bdy) * (cdx * ady - adx * cdy)
           + (cdx * cdx + cdy * cdy) * (adx * bdy - bdx * ady))
    return _sign(det)


def orient2d(ax, ay, bx, by, cx, cy):
    """Orientation of a, b, c: > 0 counter-clockwise, < 0 clockwise, 0 collinear."""
    detleft = (ax - cx) * (by - cy)
    detright = (ay - cy) * (bx - cx)
    det = detleft - detright
    if abs(det) > CCW_BOUND * (abs(detleft) + abs(detright)):
        return det
    return orient2d_exact(ax, ay, bx, by, cx, cy)


def incircle(ax, ay, bx, by, cx, cy, dx, dy):
    """> 0 when d lies strictly inside the circle through CCW a, b, c."""
    adx, ady = ax - dx, ay - dy
    bdx, bdy = bx - dx, by - dy
    cdx, cdy = cx - dx, cy - dy
    bc1, bc2 = bdx * cdy, cdx * bdy
    ca1, ca2 = cdx * ady, adx * cdy
    ab1, ab2 = adx * bdy, bdx * ady
    alift = adx * adx + ady * ady
    blift = bdx * bdx + bdy * bdy
    clift = cdx * cdx + cdy * cdy
    det = alift * (bc1 - bc2) + blift * (ca1 - ca2) + clift * (ab1 - ab2)
    permanent = ((abs(bc1) + abs(bc2)) * alift + (abs(ca1) + abs(ca2)) * blift
                 + (abs(ab1) + abs(ab2)) * clift)
    if abs(det) > INCIRCLE_BOUND * permanent:
        return det
    return incircle_exact(ax, ay, bx, by, cx, cy, dx, dy)


def orient2d_many(a, b, c):
    """Vectorised exact-sign orientation for (K, 2) arrays; returns (K,) floats."""
    a, b, c = (np.asarray(v, dtype=np.float64).reshape(-1, 2) for v in (a, b, c))
    with np.errstate(over="ignore", invalid="ignore"):   # overflow: decided exactly below
        detleft = (a[:, 0] - c[:, 0]) * (b[:, 1] - c[:, 1])
        detright = (a[:, 1] - c[:, 1]) * (b[:, 0] - c[:, 0])
        det = detleft - detright
        unsure = ~(np.abs(det) > CCW_BOUND * (np.abs(detleft) + np.abs(detright)))
    for i in np.flatnonzero(unsure):
        det[i] = orient2d_exact(a[i, 0], a[i, 1], b[i, 0], b[i, 1], c[i, 0], c[i, 1])
    return det


def incircle_many(a, b, c, d):
    """Vectorised exact-sign incircle for (K, 2) arrays; returns (K,) floats."""
    a, b, c, d = (np.asarray(v, dtype=np.float64).reshape(-1, 2) for v in (a, b, c, d))
    with np.errstate(over="ignore", invalid="ignore"):   # overflow: decided exactly below
        ad, bd, cd = a - d, b - d, c - d
        bc1, bc2 = bd[:, 0] * cd[:, 1], cd[:, 0] * bd[:, 1]
        ca1, ca2 = cd[:, 0] * ad[:, 1], ad[:, 0] * cd[:, 1]
        ab1, ab2 = ad[:, 0] * bd[:, 1], bd[:, 0] * ad[:, 1]
        alift = (ad * ad).sum(axis=1)
        blift = (bd * bd).sum(axis=1)
        clift = (cd * cd).sum(axis=1)
        det = alift * (bc1 - bc2) + blift * (ca1 - ca2) + clift * (ab1 - ab2)
        permanent = ((np.abs(bc1) + np.abs(bc2)) * alift + (np.abs(ca1) + np.abs(ca2)) * blift
                     + (np.abs(ab1) + np.abs(ab2)) * clift)
        unsure = ~(np.abs(det) > INCIRCLE_BOUND * permanent)
    for i in np.flatnonzero(unsure):
        det[i] = incircle_exact(a[i, 0], a[i, 1], b[i, 0], b[i, 1],
                                c[i, 0], c[i, 1], d[i, 0], d[i, 1])
    return det


def point_on_left(ax, ay, bx, by, px, py):
    """(px, py), or when it lies strictly right of a -> b (a point rounded
    off that line), the first of its neighbours on the grid of doubles (the
    four along the axes, then the four diagonal ones) that lies on the line
    or left of it (exact signs)."""
    if orient2d(ax, ay, bx, by, px, py) >= 0:
        return px, py
    up_x, down_x = math.nextafter(px, math.inf), math.nextafter(px, -math.inf)
    up_y, down_y = math.nextafter(py, math.inf), math.nextafter(py, -math.inf)
    for qx, qy in ((up_x, py), (down_x, py), (px, up_y), (px, down_y), (up_x, up_y),
                   (up_x, down_y), (down_x, up_y), (down_x, down_y)):
        if orient2d(ax, ay, bx, by, qx, qy) >= 0:
            return qx, qy
    return px, py
