"""Shared test configuration.

Hypothesis profiles: "default" keeps property tests quick (40 examples);
setting the environment variable FRR_LONG_FUZZ=1 selects the "long" profile
with many more examples for an occasional deep fuzzing run.
"""

import os
import sys

from hypothesis import HealthCheck, settings

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

_common = dict(
    deadline=None,
    database=None,  # keep the work tree clean; failures print a reproducer
    print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)
settings.register_profile("default", max_examples=40, **_common)
settings.register_profile("long", max_examples=2000, **_common)
settings.load_profile("long" if os.environ.get("FRR_LONG_FUZZ") == "1" else "default")


import pytest  # noqa: E402


@pytest.fixture(params=["sequential", "bulk"])
def delaunay_path(request, monkeypatch):
    """Run a test once per Delaunay path: one point at a time, and the numpy
    bulk builder (forced even for tiny inputs).  Modules opt in with
    ``pytestmark = pytest.mark.usefixtures("delaunay_path")``."""
    import engine.delaunay

    monkeypatch.setattr(engine.delaunay, "BULK_THRESHOLD",
                        3 if request.param == "bulk" else 10 ** 12)
    return request.param
