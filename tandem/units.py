"""Physical constants in the units used inside tandem (see the nomenclature in DEVELOPERS.md).

All come from CODATA 2018 through ``scipy.constants``; none is retyped.
"""

from scipy import constants as _c

Q = _c.e  #: elementary charge [C]; also J per eV
K_B_EV = _c.k / _c.e  #: Boltzmann constant [eV/K]
HC_EV_NM = _c.h * _c.c / _c.e * 1e9  #: h·c [eV·nm], ≈ 1239.84
T_STC = 298.15  #: standard-test-condition cell temperature [K]

#: Prefactor of the hemispherical blackbody photon flux per energy, 2π/(h³c²) with E in eV:
#: Φ_bb(E) = BB_FLUX_PREFACTOR · E² / (exp(E/kT) − 1)  [m⁻² s⁻¹ eV⁻¹]
BB_FLUX_PREFACTOR = 2 * _c.pi * _c.e**3 / (_c.h**3 * _c.c**2)

#: Geometric dilution of the solar disc at one astronomical unit, (R_sun/d)²,
#: with the IAU nominal solar radius 6.957e8 m and d = 1 au (scipy.constants.au).
SUN_DILUTION = (6.957e8 / _c.au) ** 2

MA_CM2_PER_A_M2 = 0.1  #: 1 A/m² = 0.1 mA/cm²
