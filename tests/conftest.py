"""Test-run configuration shared by the whole suite.

Hypothesis profiles
-------------------
``ci`` (the default): hypothesis' own example counts, no per-example
deadline (the machine running the suite may be busy; speed targets live in
``bench/``, not in unit tests).

``long``: selected with the environment variable ``DXF2FRAME_LONG=1``;
more examples everywhere a test does not fix its own count, and the
hardening suites (``test_pipeline_properties.py``, ``test_mutation.py``)
switch to their long budgets::

    DXF2FRAME_LONG=1 pytest tests/test_pipeline_properties.py tests/test_mutation.py
"""
from __future__ import annotations

import os

from hypothesis import HealthCheck, settings

__all__ = ["LONG_RUN"]

#: True when the long (nightly) run was asked for
LONG_RUN = os.environ.get("DXF2FRAME_LONG", "") == "1"

settings.register_profile("ci", deadline=None, print_blob=True)
settings.register_profile(
    "long",
    deadline=None,
    print_blob=True,
    max_examples=500,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("long" if LONG_RUN else "ci")
