"""Shared test settings.

Hypothesis runs derandomized (a fixed seed derived from each test) so that the
suite is repeatable; a failure found once is found again.
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
