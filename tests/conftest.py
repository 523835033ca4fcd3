import pytest

import tandem


@pytest.fixture(scope="session")
def am15g():
    """ASTM G173-03 global tilt as photon flux."""
    return tandem.reference_spectrum("am1.5g").photon_flux()
