"""PENDING (issue 8): inputs on which the engine still breaks its contract,
found by the adversarial fuzzing at the end of the 2026-12-01 session.  Not
collected by pytest (no test_ prefix).  Fix each bug, then add the case as a
regular test with the contract checks of tests/test_adversarial.py (the
refinement and remesh cases fixed so far are in tests/test_adversarial_remesh.py).

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
    dict(problem="RecursionError at 1e9 scale for 20 points on y = x/3 with crossing "
                 "segments (nesting is now capped at MAX_NESTING; check the outcome)",
         call="engine.triangulate(points_on_a_line_scaled_1e9, crossing_segments)"),
]
