"""Shared test settings.

Hypothesis runs derandomized (a fixed seed derived from each test) so that the
suite is repeatable; a failure found once is found again.

The shared helpers (comtrade_cases, sigtools, faultwaves, locate_models, the
phase-domain network data) are imported by bare name.  pyproject.toml puts their
folders on pytest's ``pythonpath``; they go on ``sys.path`` here as well, so
that collection does not depend on that setting being read (another rootdir or
configuration file) or on the import mode.
"""

import sys
from pathlib import Path

from hypothesis import HealthCheck, settings

_HERE = Path(__file__).resolve().parent
for _sub in ("records", "signals", "locate", "network"):
    _p = str(_HERE / _sub)
    if _p not in sys.path:
        sys.path.insert(0, _p)

settings.register_profile(
    "eventlab",
    derandomize=True,
    deadline=None,
    max_examples=60,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("eventlab")
