"""PENDING (issue 8): inputs on which the engine still breaks its contract,
found by the adversarial fuzzing at the end of the 2026-12-01 session.  Not
collected by pytest (no test_ prefix).  Fix each bug, then add the case as a
regular test with the contract checks of tests/test_adversarial.py (fixed
cases: tests/test_adversarial_segments.py for constraint insertion,
tests/test_adversarial_remesh.py for refinement and remesh).

Each entry: what goes wrong, the call, and the data.
"""

OPEN_CASES = [
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
