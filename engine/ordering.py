"""Insertion order for incremental Delaunay: BRIO rounds sorted along a Hilbert curve.

Biased randomized insertion order (BRIO): N. Amenta, S. Choi, G. Rote,
"Incremental constructions con BRIO", Proc. 19th ACM Symposium on
Computational Geometry, 2003.  Points are split into rounds of doubling size
at random (which keeps the expected-time bound of a random order) and each
round is sorted along a Hilbert curve, so consecutive points are close and
the walking point location takes few steps.
"""

import numpy as np

HILBERT_LEVELS = 16


def hilbert_keys(points, levels=HILBERT_LEVELS):
    """Hilbert curve index of each point on a 2**levels grid over the bounding box."""
    pts = np.asarray(points, dtype=np.float64)
    lo = pts.min(axis=0)
    span = float((pts.max(axis=0) - lo).max())
    side = 1 << levels
    if span <= 0.0:
        return np.zeros(len(pts), dtype=np.int64)
    grid = np.clip(((pts - lo) / span * (side - 1)).astype(np.int64), 0, side - 1)
    x = grid[:, 0].copy()
    y = grid[:, 1].copy()
    key = np.zeros(len(pts), dtype=np.int64)
    s = side >> 1
    while s > 0:
        rx = (x & s) > 0
        ry = (y & s) > 0
        key += s * s * ((3 * rx) ^ ry)
        # rotate the quadrant so the curve stays continuous
        flip = ~ry
        swap_and_mirror = flip & rx
        x = np.where(swap_and_mirror, side - 1 - x, x)
        y = np.where(swap_and_mirror, side - 1 - y, y)
        x, y = np.where(flip, y, x), np.where(flip, x, y)
        s >>= 1
    return key


def brio_order(points, seed=0):
    """Indices of `points` in BRIO order (rounds of doubling size, each Hilbert-sorted)."""
    pts = np.asarray(points, dtype=np.float64)
    n = len(pts)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    rng = np.random.default_rng(seed)
    # round r holds each point with probability 1/2 for the last round, 1/4 before, ...
    rounds_count = max(1, int(np.ceil(np.log2(max(n, 2)))))
    draws = rng.random(n)
    round_of = np.minimum(
        (rounds_count - 1) + np.floor(np.log2(np.maximum(draws, 1e-300))).astype(np.int64),
        rounds_count - 1)
    round_of = np.maximum(round_of, 0)
    keys = hilbert_keys(pts)
    return np.lexsort((keys, round_of))
