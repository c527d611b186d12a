"""PENDING (issue 8): inputs on which the engine still breaks its contract,
found by the adversarial fuzzing at the end of the 2026-12-01 session.  Not
collected by pytest (no test_ prefix).  Fix each bug, then add the case to
tests/test_adversarial.py (constraint insertion cases:
tests/test_adversarial_segments.py) with the contract checks used there.

Each entry: what goes wrong, the call, and the data.
"""

OPEN_CASES = [
    dict(problem="refine leaves 2 unconstrained edges not locally Delaunay when max_points "
                 "stops it (a pentagon with two triangular holes, nonzero fill, "
                 "min_angle=35, off_centers=False, caps 69-76, 87-90, 99-104); also one "
                 "completed run at 1e6 with min_angle=0, encroachment='circle'",
         call="engine.refine(tri, min_angle=35, off_centers=False, max_points=cap)"),
    dict(problem="crack at a fold when max_points stops a region: the fin's new face "
                 "[11, 10, 30] skips split point 22 on edge 10-11",
         call="v, f = adversarial.grid_panel(3, 3); v = vstack((v, v[10] + (0, 0, 1), "
              "v[11] + (0, 0, 1))); f += [[11, 10, 16, 17]]; "
              "engine.remesh_flat_regions(v, f, max_area=0.008, max_points=10)"),
    dict(problem="new T-junction at 1e-9 scale: an interior point lands within one ulp of "
                 "the fold edge of a finned panel (the same mesh at unit size passes)",
         call="the finned panel of the case above scaled by 1e-9, default options"),
    dict(problem="a perpendicular millimetre fin at 1e6 joins the panel's region: the "
                 "float32 noise floor (~0.48 there) is larger than the feature, so the "
                 "vector area changes; float64 input should keep the fin",
         call="engine.remesh_flat_regions(panel_with_fin_at_1e6)"),
    dict(problem="snap rounding at 1e6 (rings near 1e6, a nearly parallel pair): segment "
                 "(28, 30) not covered / a piece off its segment; the route of (6, 7) "
                 "misses the hot pixel of a crossing on it, so the untangling pass "
                 "routes through a far end (found by the long segment-set fuzzing)",
         call="engine.triangulate(pts, segs, fill='hull')",
         pts=[[999999.984, 999999.937], [999999.937, 999999.984], [999999.937, 1000000.016],
              [999999.94, 999999.975], [999999.94, 1000000.025], [999999.944, 999999.967],
              [999999.944, 1000000.033], [1000000.033, 999999.944], [999999.948, 1000000.039],
              [999999.961, 999999.948], [999999.961, 1000000.052], [999999.967, 999999.944],
              [999999.967, 1000000.056], [1000000.052, 999999.961], [999999.975, 1000000.06],
              [999999.935, 1000000.0], [999999.984, 1000000.063], [1000000.0, 999999.935],
              [1000000.0, 1000000.065], [1000000.016, 999999.937], [1000000.016, 1000000.063],
              [1000000.025, 999999.94], [1000000.025, 1000000.06], [999999.948, 999999.961],
              [1000000.033, 1000000.056], [1000000.039, 999999.948],
              [1000000.039, 1000000.052], [1000000.056, 1000000.033],
              [1000000.056, 999999.967], [1000000.052, 1000000.039], [999999.975, 999999.94],
              [1000000.06, 999999.975], [1000000.06, 1000000.025], [1000000.063, 999999.984],
              [1000000.063, 1000000.016], [1000000.065, 1000000.0], [999999.935, 1000000.0],
              [999999.935, 1000000.0], [999999.935, 1000000.0], [999999.935, 1000000.0],
              [999999.9349999999, 1000000.0], [999999.9349999999, 1000000.0],
              [999999.9349999999, 1000000.0]],
         segs=[[0, 28], [6, 7], [28, 30]]),
]
