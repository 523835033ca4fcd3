"""Physical constants in the units used inside tandem (see the nomenclature in DEVELOPERS.md).

The four defining constants are the exact values of the SI since 2019 (CODATA 2018), written
out so that a quick command need not import scipy; ``tests/test_units.py`` checks each against
``scipy.constants``.
"""

import math

_E = 1.602176634e-19  #: elementary charge [C], exact (CODATA 2018)
_H = 6.62607015e-34  #: Planck constant [J s], exact (CODATA 2018)
_C = 299792458.0  #: speed of light [m/s], exact
_K = 1.380649e-23  #: Boltzmann constant [J/K], exact (CODATA 2018)
_AU = 149597870700.0  #: astronomical unit [m], exact (IAU 2012)

Q = _E  #: elementary charge [C]; also J per eV
K_B_EV = _K / _E  #: Boltzmann constant [eV/K]
HC_EV_NM = _H * _C / _E * 1e9  #: h·c [eV·nm], ≈ 1239.84
T_STC = 298.15  #: standard-test-condition cell temperature [K]

#: Prefactor of the hemispherical blackbody photon flux per energy, 2π/(h³c²) with E in eV:
#: Φ_bb(E) = BB_FLUX_PREFACTOR · E² / (exp(E/kT) − 1)  [m⁻² s⁻¹ eV⁻¹]
BB_FLUX_PREFACTOR = 2 * math.pi * _E**3 / (_H**3 * _C**2)

#: Geometric dilution of the solar disc at one astronomical unit, (R_sun/d)²,
#: with the IAU nominal solar radius 6.957e8 m and d = 1 au (scipy.constants.au).
SUN_DILUTION = (6.957e8 / _AU) ** 2

MA_CM2_PER_A_M2 = 0.1  #: 1 A/m² = 0.1 mA/cm²


def length_text(nm: float) -> str:
    """A thickness or depth as a reader writes it: whole nm below 10 µm, µm (three significant
    digits) from there (a wafer's 160 µm, a half-depth of 13.4 µm, a film's 325 nm)."""
    return f"{nm / 1000:.3g} µm" if nm >= 10_000 else f"{nm:.0f} nm"
