"""PENDING (issue 8): inputs on which the engine still breaks its contract,
found by the adversarial fuzzing at the end of the 2026-12-01 session.  Not
collected by pytest (no test_ prefix).  Fix each bug, then add the case to
tests/test_adversarial.py with the contract checks used there.

Each entry: what goes wrong, the call, and the data.
"""

OPEN_CASES = [
    dict(problem="nearly collinear crossings at 1e-8 scale: refused with a ValueError "
                 "(was a hang); valid input should triangulate",
         call="engine.triangulate(pts, segs, fill='hull')",
         pts=[[4.2000000000000006e-08, 1.4000000000000001e-08],
              [-1.6e-08, -5.333333333333333e-09], [2.8000000000000003e-08, 9.333333333333334e-09],
              [2.2000000000000002e-08, 7.333333333333334e-09],
              [3.8e-08, 1.2666666666666668e-08], [6.000000000000001e-09, 2e-09],
              [6.000000000000001e-09, 2e-09], [-7.000000000000001e-09, -2.3333333333333335e-09],
              [-4.6e-08, -1.5333333333333335e-08], [3.4e-08, 1.1333333333333334e-08]],
         segs=[[2, 5], [4, 6], [0, 7], [2, 3]]),
    dict(problem="a point exactly on segment (1, 2) does not split it after a rounded "
                 "crossing (independent checker; engine.validate misses it)",
         call="engine.triangulate(pts, segs, fill='hull')",
         pts=[[999999.994, 999999.998], [999999.972, 999999.9906666667],
              [1000000.045, 1000000.015], [1000000.009, 1000000.003],
              [999999.999, 999999.9996666666], [999999.979, 999999.993],
              [999999.998, 999999.9993333333], [999999.955, 1000000.0003333336]],
         segs=[[5, 3], [4, 0], [1, 2]]),
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
    dict(problem="RecursionError at 1e9 scale for 20 points on y = x/3 with crossing "
                 "segments (nesting is now capped at MAX_NESTING; check the outcome)",
         call="engine.triangulate(points_on_a_line_scaled_1e9, crossing_segments)"),
]
