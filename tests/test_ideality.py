"""Ideality as a fixed device: the non-radiative diode of an n ≠ 1 cell is set where its ERE is
stated (AM1.5G, 1 sun) and kept under any other light, so Voc moves by n·kT/q·ln 10 per decade
of light where non-radiative recombination dominates (the diode law J = J0·e^{qV/nkT}; Rau,
Phys. Rev. B 76 (2007) 085303 for ERE and Voc at the reference).

Before, J0,nr was re-derived from the ERE under every illumination: an "n = 2" cell showed the
n = 1 slope of 59.5 mV per decade.
"""

import numpy as np
import pytest

import tandem
import tandem.design.maps
from tandem.core.units import K_B_EV

T = 300.0
DECADE = K_B_EV * T * np.log(10.0)  # kT/q·ln 10 [V]


def voc_at(concentration, ideality, gaps=(1.34,), ere=1e-6):
    r = tandem.limit(list(gaps), tandem.Light(concentration=concentration),
                     tandem.OperatingPoint(temperature_K=T, ere=(ere,) * len(gaps),
                                           ideality=ideality))
    return r


@pytest.mark.parametrize("ideality", [1.0, 1.5, 2.0])
def test_a_fixed_device_has_its_ideality_slope(ideality):
    v = [float(voc_at(c, ideality).design.performance.voc[0]) for c in (0.1, 1.0, 10.0)]
    assert np.diff(v) == pytest.approx([ideality * DECADE] * 2, rel=2e-3)


@pytest.mark.parametrize("ere", [1e-6, 0.3])
def test_at_the_reference_light_the_ere_holds_whatever_the_ideality(ere):
    # Rau 2007: Voc = Voc,rad + kT/q·ln ERE at the light where the ERE is stated; a high ERE
    # checks that the non-radiative diode carries only the other 1 − ERE of the recombination
    radiative = float(voc_at(1.0, 1.0, ere=1.0).design.performance.voc[0])
    for n in (1.0, 2.0, 3.0):
        v = float(voc_at(1.0, n, ere=ere).design.performance.voc[0])
        assert v == pytest.approx(radiative + K_B_EV * T * np.log(ere), abs=1e-6)


def test_the_map_match_and_limit_fix_the_same_device():
    # a 2T step map at 10 suns, n = 2: its Voc at a pair equals the limit's at that pair
    flux = tandem.load_spectrum("am1.5g", concentration=10.0).photon_flux()
    gap_map = tandem.design.maps.step_gap_map(flux, np.array([1.73]), np.array([1.12]), T,
                                              ere=(1e-6, 1e-6), ideality=2.0)
    lim = voc_at(10.0, 2.0, gaps=(1.73, 1.12))
    assert float(gap_map.voc_2t[0, 0]) == pytest.approx(float(lim.design.performance.voc_2t),
                                                        rel=1e-9)
    # the optics path (match): two n = 2 subcells at low ERE, ten times the light: the
    # stack's Voc rises by about 2 × 2·kT/q·ln 10
    op = tandem.OperatingPoint(temperature_K=T, ere=(1e-6, 1e-6), ideality=2.0)
    sweep = tandem.Sweep(front_gaps_eV=1.7, thickness_points=8)
    one = tandem.match("perovskite-wide", "silicon", tandem.Light(), op, sweep)
    ten = tandem.match("perovskite-wide", "silicon", tandem.Light(concentration=10.0), op, sweep)
    v1 = one.result.configurations[0].performance.voc_2t
    v10 = ten.result.configurations[0].performance.voc_2t
    assert float(v10 - v1) == pytest.approx(4 * DECADE, rel=5e-3)
