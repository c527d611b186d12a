"""The project's goal beyond the published bounds: smallest angle >= 35 degrees
on ordinary inputs (no input angle under 60 degrees) with refinement plus
smoothing.

Outside reference for why this is a goal and not a guarantee: Ruppert's
algorithm with Shewchuk's analysis guarantees about 20.7 degrees
(arcsin(1/(2 sqrt 2))); in practice it terminates up to about 33-34 degrees
(Shewchuk 2002, value from memory).  The checks below are exact (tests/helpers.py)
and areas come from shapely/GEOS.
"""

import pytest

import engine
from engine.quality import triangle_angles

from .test_refine import SCENARIOS, area_of, check_valid, setup


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_scenarios_reach_35_degrees_with_smoothing(name):
    loops = SCENARIOS[name]()
    pts, segs, tri = setup(loops)
    out = engine.refine(tri, min_angle=35.0, smoothing=True, max_points=50_000)
    assert out.complete, out.stop_reason
    check_valid(out, pts, segs, loops)
    smallest = float(triangle_angles(out.points, out.triangles).min())
    assert smallest >= 35.0, f"{name}: smallest angle {smallest:.2f} below 35"
    assert out.area() == pytest.approx(area_of(loops), rel=1e-9)


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_smoothing_never_lowers_the_smallest_angle_at_35(name):
    loops = SCENARIOS[name]()
    _, _, tri = setup(loops)
    plain = engine.refine(tri, min_angle=35.0, max_points=50_000)
    smooth = engine.refine(tri, min_angle=35.0, smoothing=True, max_points=50_000)
    a0 = float(triangle_angles(plain.points, plain.triangles).min())
    a1 = float(triangle_angles(smooth.points, smooth.triangles).min())
    assert a1 >= a0 - 1e-9
