"""Test-wide settings: property tests draw the same examples on every run (seeded randomness
only), so a CI run is reproducible; no deadline, since the 2-core CI machine may be loaded."""

from hypothesis import HealthCheck, settings

settings.register_profile(
    "jointwright", derandomize=True, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.load_profile("jointwright")
