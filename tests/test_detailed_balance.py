"""The detailed-balance engine against published limits and general-purpose libraries.

Published values (cited beside each check):
- Rühle, Solar Energy 130 (2016) 139, doi:10.1016/j.solener.2016.02.015: AM1.5G, 300 K,
  single-junction maximum 33.7 % at 1.34 eV.
- De Vos, J. Phys. D 13 (1980) 839, doi:10.1088/0022-3727/13/5/018: 6000 K blackbody sun,
  300 K cell: 31.0 % near 1.3 eV at one sun; 40.7–40.8 % near 1.1 eV at full concentration.
"""

import numpy as np
import pytest
from scipy import integrate, optimize

import tandem
import tandem.core.units
from tandem.core.units import K_B_EV, SUN_DILUTION


def best_single_junction(flux, gaps, temperature=300.0):
    perf = tandem.step_stack(flux, gaps[:, None], temperature)
    i = int(np.argmax(perf.efficiency_2t))
    return gaps[i], 100 * perf.efficiency_2t[i]


def test_ruhle_2016_am15g_single_junction(am15g):
    # Rühle 2016, Table 1: 33.7 % at 1.34 eV (AM1.5G, 300 K); tolerance 0.1 % absolute.
    gap, eff = best_single_junction(am15g, np.arange(1.10, 1.60, 0.002))
    assert eff == pytest.approx(33.7, abs=0.1)
    assert gap == pytest.approx(1.34, abs=0.015)
    at_134 = tandem.step_stack(am15g, np.array([[1.34]]), 300.0).efficiency_2t[0]
    assert 100 * at_134 == pytest.approx(33.7, abs=0.1)


def test_de_vos_1980_blackbody_one_sun():
    # De Vos 1980: 31.0 % near 1.3 eV, 6000 K sun, 300 K cell, one sun; 0.15 % absolute.
    flux = tandem.blackbody_sun(6000.0).photon_flux()
    gap, eff = best_single_junction(flux, np.arange(1.0, 1.6, 0.005))
    assert eff == pytest.approx(31.0, abs=0.15)
    assert gap == pytest.approx(1.3, abs=0.05)


def test_de_vos_1980_blackbody_full_concentration():
    # De Vos 1980: 40.7–40.8 % near 1.1 eV at X = 1/f; 0.15 % absolute around 40.75 %.
    # The exact (Bose–Einstein) emission, as the step engine uses near the gap (test_emission).
    flux = tandem.blackbody_sun(6000.0, concentration=1 / SUN_DILUTION).photon_flux()
    gap, eff = best_single_junction(flux, np.arange(0.9, 1.4, 0.005))
    assert eff == pytest.approx(40.75, abs=0.15)
    assert gap == pytest.approx(1.1, abs=0.05)


@pytest.mark.parametrize("gap", [0.7, 1.12, 1.6, 2.2])
def test_step_dark_current_matches_quadrature(gap):
    # Reference: scipy.integrate.quad of the blackbody photon flux (general-purpose library).
    ref, _ = integrate.quad(lambda e: tandem.blackbody_photon_flux(e, 300.0), gap, gap + 3.0,
                            epsabs=0, epsrel=1e-12, limit=200)
    got = tandem.step_radiative_dark_current(gap, 300.0) / tandem.core.units.Q
    assert got == pytest.approx(ref, rel=1e-9)


def test_general_dark_current_agrees_with_step(am15g):
    energy = np.linspace(1.0, 4.0, 300_001)
    step = (energy >= 1.4).astype(float)
    assert tandem.radiative_dark_current(energy, step, 300.0) == pytest.approx(
        tandem.step_radiative_dark_current(1.4, 300.0), rel=2e-3)


def test_photocurrent_of_step_array_agrees_with_cumulative(am15g):
    # A gap on a grid point: numpy's trapezoid over the points above the gap agrees to the
    # energy-side trapezoid rule's error (the tool counts the spectrum's photons exactly on
    # the wavelength side: tests/test_spectra.py).
    i = 1000
    on_grid = tandem.core.units.Q * np.trapezoid(am15g.flux[i:], am15g.energy[i:])
    assert float(tandem.step_photocurrent(am15g, am15g.energy[i])) == pytest.approx(on_grid, rel=1e-5)
    # flux_above on arrays is that trapezoid rule, exactly at grid points
    assert tandem.core.units.Q * float(tandem.flux_above(am15g.energy, am15g.flux, am15g.energy[i])) \
        == pytest.approx(on_grid, rel=1e-12)
    # Between grid points, the general photocurrent of a step array on a refined grid agrees.
    gap = 0.5 * (am15g.energy[i] + am15g.energy[i + 1])
    fine = np.linspace(am15g.energy[0], am15g.energy[-1], 2_000_001)
    flux = np.interp(fine, am15g.energy, am15g.flux)
    assert tandem.photocurrent(fine, flux, fine >= gap) == pytest.approx(
        float(tandem.step_photocurrent(am15g, gap)), rel=1e-5)


def test_single_mpp_closed_form_matches_numerical_maximum():
    # Reference: scipy.optimize.minimize_scalar on P(V) = V J(V).
    jl, j0, t = 300.0, 1e-17, 300.0
    j_mp, v_mp, p_mp = tandem.single_junction_mpp(jl, j0, t)
    res = optimize.minimize_scalar(lambda v: -v * tandem.diode_current(v, jl, j0, t),
                                   bounds=(0, 1.5), method="bounded",
                                   options={"xatol": 1e-12})
    assert v_mp == pytest.approx(res.x, abs=1e-6)
    assert p_mp == pytest.approx(-res.fun, rel=1e-10)


@pytest.mark.parametrize("jl", [(216.7, 221.4), (250.0, 150.0), (200.0, 200.0)])
def test_series_mpp_matches_numerical_maximum(jl):
    # Reference: scipy.optimize.minimize_scalar on P(J) = J·ΣV_i(J).
    jl = np.array(jl)
    j0 = np.array([1e-25, 1e-15])
    j, v, p = tandem.series_mpp(jl, j0, 300.0)
    res = optimize.minimize_scalar(lambda x: -x * tandem.series_voltage(x, jl, j0, 300.0),
                                   bounds=(0, jl.min()), method="bounded",
                                   options={"xatol": 1e-10})
    assert p == pytest.approx(-res.fun, rel=1e-9)
    assert v == pytest.approx(float(tandem.series_voltage(j, jl, j0, 300.0)))


@pytest.fixture(scope="module")
def pair_grid(am15g):
    front, back = np.meshgrid(np.linspace(1.45, 2.3, 35), np.linspace(0.8, 1.4, 31), indexing="ij")
    return tandem.step_stack(am15g, np.stack([front, back], -1), 300.0), front, back


def test_four_terminal_never_below_two_terminal(pair_grid):
    perf, _, _ = pair_grid
    assert np.all(perf.p_4t >= perf.p_2t * (1 - 1e-12))
    assert np.any(perf.p_4t > perf.p_2t * 1.01)  # mismatched pairs do lose in series


def test_two_equals_four_terminal_when_currents_match(am15g):
    # For the front gap 1.73 eV find the back gap with equal photocurrents (brentq).
    def diff(back):
        return float(np.subtract(*tandem.step_stack(am15g, np.array([1.73, back]), 300.0).j_light))
    back = optimize.brentq(diff, 0.9, 1.3, xtol=1e-12)
    perf = tandem.step_stack(am15g, np.array([1.73, back]), 300.0)
    assert 100 * perf.efficiency_2t == pytest.approx(100 * perf.efficiency_4t, abs=0.05)


def test_photocurrent_never_exceeds_incident_photons(pair_grid, am15g):
    perf, _, _ = pair_grid
    incident = tandem.core.units.Q * np.trapezoid(am15g.flux, am15g.energy)
    assert np.all(perf.j_light.sum(-1) <= incident * (1 + 1e-12))


def test_ere_lowers_voc_by_kt_ln_ere(am15g):
    # Rau, Phys. Rev. B 76 (2007) 085303: ΔVoc = (kT/q) ln ERE.
    eres = np.array([1.0, 1e-2, 1e-4, 1e-6])
    perf = tandem.step_stack(am15g, np.full((4, 1), 1.34), 300.0, ere=eres[:, None])
    shift = perf.voc[:, 0] - perf.voc[0, 0]
    assert shift == pytest.approx(K_B_EV * 300.0 * np.log(eres), abs=1e-9)
    assert np.all(np.diff(perf.efficiency_2t) < 0)


def test_stack_limit_validation(am15g):
    with pytest.raises(tandem.TandemInputError, match="order looks inverted.*1.73/1.12 eV gives"):
        tandem.detailed_balance_limit([1.12, 1.73], am15g)
    with pytest.raises(tandem.TandemInputError, match=r"ERE 0 is outside 1e-12–1"):
        tandem.detailed_balance_limit([1.73, 1.12], am15g, ere=[0.0])
    with pytest.raises(tandem.TandemInputError, match="front gap -1 eV"):
        tandem.detailed_balance_limit([-1, 1.12], am15g)
    with pytest.raises(tandem.TandemInputError, match="outside the spectrum"):
        tandem.detailed_balance_limit([5.0], am15g)


def test_a_gap_between_grid_points_gets_its_partial_interval():
    # Calculus: for Φ(E) = c0 + c1·E, linear on every interval of any grid, the photons above
    # a gap are c0·(E_max − Eg) + c1·(E_max² − Eg²)/2 exactly, wherever the gap falls
    energy = np.array([0.5, 0.9, 1.3, 2.0, 3.1, 4.4])
    c0, c1 = 3e20, 5e20
    flux = c0 + c1 * energy
    gaps = np.array([0.5, 0.63, 1.12, 1.3, 1.77, 2.9, 4.4])
    exact = c0 * (energy[-1] - gaps) + c1 * (energy[-1] ** 2 - gaps**2) / 2
    np.testing.assert_allclose(tandem.flux_above(energy, flux, gaps), exact, rtol=1e-13, atol=0)


def test_exp_expm1_keeps_expm1s_digits_where_subtraction_would_cancel():
    # numpy's exp and expm1 as the reference: e^x − 1 from the exponential is used only where
    # it keeps its digits (|x| ≥ 0.5, at most a few ulp off); below, numpy's expm1 itself.
    from tandem.physics.detailed_balance import exp_expm1

    x = np.concatenate([np.geomspace(1e-300, 700, 4000), -np.geomspace(1e-300, 700, 4000),
                        [0.0, 0.5, -0.5, 0.4999999999, np.inf, -np.inf]])
    e, em1 = exp_expm1(x)
    np.testing.assert_array_equal(e, np.exp(x))
    np.testing.assert_allclose(em1, np.expm1(x), rtol=4e-16, atol=0)
    small = np.abs(x) < 0.5
    np.testing.assert_array_equal(em1[small], np.expm1(x[small]))
    assert exp_expm1(np.float64(1e-12))[1] == np.expm1(1e-12)  # one value
