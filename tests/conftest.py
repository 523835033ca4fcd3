import os

import pytest
from hypothesis import HealthCheck, settings

import tandem

# Property tests: a few hundred examples per property in CI; `--hypothesis-profile thorough`
# runs 10⁴ (the closing notes of physics changes report having run it).
settings.register_profile("ci", max_examples=200, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("thorough", max_examples=10_000, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


@pytest.fixture(scope="session")
def am15g():
    """ASTM G173-03 global tilt as photon flux."""
    return tandem.reference_spectrum("am1.5g").photon_flux()
