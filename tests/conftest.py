"""Shared test settings.

Hypothesis runs derandomized (a fixed seed derived from each test) so that the
suite is repeatable; a failure found once is found again.

The test folders are packages: the shared helpers (comtrade_cases, sigtools,
faultwaves, locate_models, the phase-domain network data) are imported
relatively, which works in every pytest import mode and from any directory.
"""

from hypothesis import HealthCheck, settings

settings.register_profile(
    "eventlab",
    derandomize=True,
    deadline=None,
    max_examples=60,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("eventlab")
