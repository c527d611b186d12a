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
]
