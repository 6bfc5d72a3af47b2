"""Shared test settings.

Property tests run a fixed, reproducible set of examples (``derandomize``) and
skip hypothesis's speed health checks: CI runs on a shared 2-core machine,
where a slow moment is not a fault of the code under test. Set
``HYPOTHESIS_PROFILE=explore`` to draw fresh random examples locally.
"""
import os

from hypothesis import HealthCheck, settings

settings.register_profile(
    "ci",
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
    print_blob=True,
)
settings.register_profile("explore", deadline=None, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
