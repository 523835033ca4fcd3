"""Exact (Bose–Einstein) emission of step absorbers: closed forms against quadrature, the
published full-concentration limit, and the bound qV < E_g at any concentration."""

import math

import numpy as np
import pytest
from hypothesis import example, given, settings, strategies as st
from scipy import integrate, optimize

import tandem
import tandem.design.maps
from tandem.core.units import BB_FLUX_PREFACTOR, K_B_EV, Q, SUN_DILUTION
from tandem.physics import stack as stack_module
from tandem.physics.emission import _moments_scalar, bose_moments, emission_current

FULL = 1 / SUN_DILUTION  # the thermodynamic maximum concentration, about 46,239 suns


def quad(f, lo, hi):
    """scipy's adaptive quadrature, split at lo + 1 so the peak near the lower end is resolved."""
    mid = lo + 1.0
    return (integrate.quad(f, lo, mid, epsabs=0, epsrel=1e-13, limit=400)[0]
            + integrate.quad(f, mid, hi, epsabs=0, epsrel=1e-13, limit=400)[0])


@pytest.mark.parametrize("a", [1e-9, 1e-3, 0.2, 0.99, 1.0, 1.7, 6.0, 25.0])
def test_moments_match_quadrature(a):
    # Reference: scipy.integrate.quad of s^m/(e^s − 1) from a to infinity (m = 0, 1, 2)
    # the plain-float form the searches use for one point must agree too
    for m, (got, single) in enumerate(zip(bose_moments(a), _moments_scalar(a))):
        ref = quad(lambda s: s**m * math.exp(-s) / -math.expm1(-s), a, np.inf)
        assert float(got) == pytest.approx(ref, rel=1e-12)
        assert single == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("gap, upper, volts", [(1.12, np.inf, [0.0, 0.7, 1.05, 1.1199]),
                                               (0.94, 1.73, [0.3, 0.9, 0.9399])])
def test_emission_current_matches_the_generalised_planck_law(gap, upper, volts):
    # Reference: q·2π/(h³c²)·∫ E²/(e^{(E−qV)/kT} − 1) dE (Würfel 1982) by scipy quad over the band
    kt = K_B_EV * 300.0
    for v in volts:
        def planck(e):
            return Q * BB_FLUX_PREFACTOR * e * e * math.exp(-(e - v) / kt) / -math.expm1(-(e - v) / kt)
        ref = quad(planck, gap, min(upper, gap + 4.0))
        assert float(emission_current(v, gap, 300.0, upper)) == pytest.approx(ref, rel=1e-10)
    assert float(emission_current(gap, gap, 300.0)) == np.inf


def exact_single_junction(flux, gap, temperature):
    """Independent maximum power with the exact law: J(V) = J_L − [J_em(V) − J_em(0)], each
    J_em by quadrature; V·J(V) maximised by scipy's bounded search [W/m², V_oc]."""
    kt = K_B_EV * temperature
    jl = float(tandem.step_photocurrent(flux, gap))

    def emitted(v):
        return quad(lambda e: Q * BB_FLUX_PREFACTOR * e * e / math.expm1((e - v) / kt), gap, gap + 4.0)

    dark = emitted(0.0)
    voc = optimize.brentq(lambda v: jl - emitted(v) + dark, 0.0, gap * (1 - 1e-12), xtol=1e-14)
    res = optimize.minimize_scalar(lambda v: -v * (jl - emitted(v) + dark), bounds=(0.5 * voc, voc),
                                   method="bounded", options={"xatol": 1e-10})
    return -res.fun, voc


@pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")
@pytest.mark.parametrize("concentration, voc_tolerance", [(1.0, 3.5e-6), (1000.0, 1e-8), (FULL, 1e-8)])
def test_single_junction_matches_an_independent_exact_calculation(concentration, voc_tolerance):
    # at one sun the Boltzmann closed forms are kept (stack.EXACT_EMISSION_BELOW): Voc within
    # their stated 3.5 µV; under concentration the exact law is solved
    flux = tandem.blackbody_sun(6000.0, concentration=concentration).photon_flux()
    perf = tandem.step_stack(flux, np.array([1.1]), 300.0)
    power, voc = exact_single_junction(flux, 1.1, 300.0)
    assert float(perf.p_2t) == pytest.approx(power, rel=1e-7)
    assert float(perf.voc[0]) == pytest.approx(voc, abs=voc_tolerance)
    assert float(perf.voc[0]) < 1.1


def test_full_concentration_limit_and_how_boltzmann_differs():
    # De Vos, J. Phys. D 13 (1980) 839: 40.7–40.8 % near 1.1 eV at full concentration (6000 K
    # sun, 300 K cell; recalled). With the exact law we find 40.74 % at 1.1 eV and Voc within
    # microvolts of the gap (the Boltzmann diode puts it above: 1.145 V). The Boltzmann power
    # is slightly higher (it under-counts the emission near the gap) but close: the difference
    # De Vos's figure cannot resolve.
    flux = tandem.blackbody_sun(6000.0, concentration=FULL).photon_flux()
    exact = tandem.step_stack(flux, np.array([1.1]), 300.0)
    boltzmann = stack_module.evaluate_stack(exact.j_light, exact.j0_radiative, 300.0, flux.irradiance)
    assert 100 * float(exact.efficiency_2t) == pytest.approx(40.75, abs=0.1)
    assert float(boltzmann.voc[0]) > 1.1 > float(exact.voc[0]) > 1.1 - 1e-4
    assert 0 < float(boltzmann.p_2t - exact.p_2t) / float(exact.p_2t) < 2e-3


@settings(max_examples=15, deadline=None)  # seconds each: the exact law, coupling nested
@given(gaps=st.tuples(st.floats(1.4, 2.6), st.floats(0.5, 1.3)),
       concentration=st.floats(1.0, FULL), coupling=st.sampled_from([0.0, 1.0]))
def test_no_voltage_reaches_a_gap_at_any_concentration(gaps, concentration, coupling):
    flux = tandem.blackbody_sun(6000.0, concentration=concentration).photon_flux()
    electrical = stack_module.Electrical(coupling=coupling)
    perf = tandem.step_stack(flux, np.array(gaps), 300.0, electrical=electrical)
    assert np.all(perf.voc < np.array(gaps)) and np.all(perf.v_2t_sub < np.array(gaps))
    assert np.all(perf.v_own < np.array(gaps))
    assert perf.p_2t <= perf.p_4t * (1 + 1e-9)


@settings(max_examples=15, deadline=None)
@example((2.1875, 0.703125), 340.0)  # 1.02e-6 relative with the threshold at 2e-4 (found by CI)
@given(gaps=st.tuples(st.floats(1.5, 2.4), st.floats(0.6, 1.4)), temperature=st.floats(260.0, 360.0))
def test_one_sun_keeps_the_boltzmann_forms_within_their_stated_error(gaps, temperature):
    # stack.EXACT_EMISSION_BELOW keeps the closed forms where the exact law moves Voc by under
    # 2 µV and the power by under 1e-6 relative: solve with the exact law everywhere, compare
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    fast = tandem.step_stack(flux, np.array(gaps), temperature)
    original = stack_module.EXACT_EMISSION_BELOW
    stack_module.EXACT_EMISSION_BELOW = 0.0
    try:
        exact = tandem.step_stack(flux, np.array(gaps), temperature)
    finally:
        stack_module.EXACT_EMISSION_BELOW = original
    assert np.all(np.abs(fast.voc - exact.voc) < 2e-6)
    assert float(fast.p_2t) == pytest.approx(float(exact.p_2t), rel=1e-6)
    assert float(fast.p_4t) == pytest.approx(float(exact.p_4t), rel=1e-6)
    assert np.all(exact.voc <= fast.voc + 1e-12)  # the exact law emits more: Voc only falls


def test_a_map_near_full_concentration_is_continuous():
    # every point computed (none blanked), equal to the stack evaluated alone, and no jumps:
    # neighbours 0.02 eV apart differ by far less than the map's range
    flux = tandem.blackbody_sun(6000.0, concentration=FULL).photon_flux()
    fronts, backs = np.arange(1.50, 1.90, 0.02), np.arange(0.80, 1.10, 0.02)
    gap_map = tandem.design.maps.step_gap_map(flux, fronts, backs, 300.0)
    e2 = 100 * gap_map.efficiency_2t
    assert np.all(np.isfinite(e2)) and np.all(np.isfinite(gap_map.voc_2t))
    assert np.max(np.abs(np.diff(e2, axis=0))) < 2.0 and np.max(np.abs(np.diff(e2, axis=1))) < 2.0
    alone = tandem.step_stack(flux, np.array([fronts[10], backs[10]]), 300.0)
    assert e2[10, 10] == pytest.approx(100 * float(alone.efficiency_2t), rel=1e-12)
    assert np.all(gap_map.voc_2t < fronts[:, None] + backs[None, :])


@pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")
def test_rear_emission_scales_the_exact_law_too():
    # a front cell emitting towards the back loses n² times its front-face emission (here by the
    # exact law, at 1000 blackbody suns): its Voc solves J_L = (1 + n²)·[J_em(V) − J_em(0)],
    # checked with scipy's brentq over the quadrature of Würfel's law
    flux = tandem.blackbody_sun(6000.0, concentration=1000.0).photon_flux()
    electrical = stack_module.Electrical(rear_emission=True)
    perf = tandem.step_stack(flux, np.array([1.8, 1.1]), 300.0, electrical=electrical,
                             front_index=3.5)
    assert perf.emission is not None and perf.emission.scale[0] == pytest.approx(1 + 3.5**2)
    kt = K_B_EV * 300.0
    jl = float(perf.j_light[0])

    def emitted(v):
        return quad(lambda e: Q * BB_FLUX_PREFACTOR * e * e / math.expm1((e - v) / kt), 1.8, 1.8 + 4.0)

    dark = emitted(0.0)
    voc = optimize.brentq(lambda v: jl - (1 + 3.5**2) * (emitted(v) - dark), 0.5, 1.8 * (1 - 1e-12),
                          xtol=1e-14)
    assert float(perf.voc[0]) == pytest.approx(voc, abs=1e-8)
