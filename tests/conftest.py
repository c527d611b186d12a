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
