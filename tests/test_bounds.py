"""Physical bounds as properties: no option or combination may break thermodynamics.

Consistency tests (hypothesis): over random gaps, EREs, ideality factors, temperatures,
concentrations, rear emission, luminescent coupling, resistances and absorber thicknesses:
(a) no efficiency exceeds the four-terminal detailed-balance limit of the same gaps under the
same spectrum and temperature (Shockley & Queisser 1961; De Vos 1980: the radiative,
front-only-emission limit is the upper bound); (b) each subcell's Voc is below its gap;
(c) without resistances 2T ≤ 4T; (d) no subcell current exceeds the incident photon current
above its gap; (e) every photon is accounted for once.
"""

import functools

import numpy as np
import pytest
from hypothesis import settings, assume, given
from hypothesis import strategies as st

import tandem
import tandem.core.units
import tandem.physics.checks
from tandem.design.matching import Conditions, StackDesign, stack_light, stack_performance
from tandem.physics.stack import Electrical
from tandem.core.units import Q

from references import global_4t_limit

RTOL = 1e-9

gap_pairs = st.tuples(st.floats(0.9, 3.0), st.floats(0.5, 2.9)).filter(lambda g: g[0] > g[1] + 0.05)
eres = st.floats(-8, 0).map(lambda x: 10.0**x)
idealities = st.sampled_from([1.0]) | st.floats(0.5, 5.0)
temperatures = st.floats(250.0, 400.0)
electricals = st.builds(
    Electrical,
    coupling=st.sampled_from([0.0]) | st.floats(0.0, 1.0),
    series_resistance_ohm_cm2=st.sampled_from([0.0]) | st.floats(0.0, 5.0),
    shunt_resistance_ohm_cm2=st.sampled_from([np.inf]) | st.floats(10.0, 1e5),
    rear_emission=st.booleans(),
)


@functools.lru_cache(maxsize=8)
def spectrum(kind: str, concentration: float):
    if kind == "blackbody":
        return tandem.blackbody_sun(6000.0, concentration).photon_flux()
    return tandem.load_spectrum(kind, concentration=concentration).photon_flux()


spectra = st.sampled_from([("am1.5g", 1.0), ("am1.5g", 100.0), ("am1.5d", 1.0), ("am0", 1.0),
                           ("blackbody", 1.0), ("blackbody", 1000.0)])


def photon_current_between(flux, lo, hi=np.inf):
    # the spectrum's photons in the band, exact on the wavelength side (checked against a
    # closed-form integral of ASTM G173-03 in tests/test_spectra.py)
    return Q * (flux.count_above(lo) - (0.0 if np.isinf(hi) else flux.count_above(hi)))


# a quarter of the profile's examples: a third of them (concentrated light) solve the exact
# Bose–Einstein emission, seconds each with coupling; the thorough profile still runs 2,500
@settings(max_examples=max(50, settings.default.max_examples // 4))
@given(gaps=gap_pairs, ere_f=eres, ere_b=eres, ideality=idealities, temperature=temperatures,
       light=spectra, electrical=electricals, front_index=st.floats(1.0, 4.0))
def test_step_stacks_stay_inside_the_radiative_limit(gaps, ere_f, ere_b, ideality, temperature,
                                                    light, electrical, front_index):
    flux = spectrum(*light)
    perf = tandem.step_stack(flux, np.array(gaps), temperature, np.array([ere_f, ere_b]),
                             ideality, electrical, front_index)
    limit = tandem.step_stack(flux, np.array(gaps), temperature)
    assume(np.all(limit.j_light > 0))
    # (a) below the four-terminal radiative limit of the same gaps
    assert perf.p_2t <= limit.p_4t * (1 + RTOL)
    assert perf.p_4t <= limit.p_4t * (1 + RTOL)
    # (b) each subcell's voltage below its gap, at open circuit and at both operating points,
    # a coupled back cell pumped towards degeneracy included (the exact emission bounds it)
    assert np.all(perf.voc < np.array(gaps))
    assert np.all(perf.v_2t_sub < np.array(gaps)) and np.all(perf.v_own < np.array(gaps))
    # (c) series never beats independent operation, with resistances too (four terminals
    # share the stack's R_s between their circuits and can reproduce the series point)
    assert perf.p_2t <= perf.p_4t * (1 + RTOL)
    # (d) no subcell collects more than the photons above its gap (between the gaps for the
    # back), and without shunts the series current never exceeds the front's photocurrent (a
    # shunt lets the back drive current through a reverse-biased front, still from its photons)
    assert perf.j_light[0] <= photon_current_between(flux, gaps[0]) * (1 + RTOL)
    assert perf.j_light[1] <= photon_current_between(flux, gaps[1], gaps[0]) * (1 + RTOL)
    if not np.isfinite(electrical.shunt_resistance_ohm_cm2):
        assert perf.j_2t <= perf.j_light[0] * (1 + RTOL)
    # (e) the coupled back gains at most what the front lost: the two currents together never
    # exceed the photons above the back gap
    assert perf.j_2t <= photon_current_between(flux, gaps[1]) * (1 + RTOL)
    assert np.all(perf.p_own >= 0) and perf.p_2t >= 0


ABSORBER_PAIRS = [("perovskite-wide", "silicon"), ("gainp", "gaas"), ("perovskite-wide", "cigs"),
                  ("organic-wide", "organic-narrow"), ("cdte", "silicon"),
                  ("perovskite-wide", "perovskite-snpb")]


@functools.lru_cache(maxsize=16)
def absorber(name):
    return tandem.load_absorber(name)


@given(pair=st.sampled_from(ABSORBER_PAIRS), front_d=st.floats(20.0, 5000.0),
       back_d=st.floats(500.0, 300e3), temperature=st.floats(280.0, 360.0),
       ideality=idealities, electrical=electricals, reflectance=st.floats(0.0, 0.3),
       parasitic=st.floats(0.0, 0.2))
def test_absorber_stacks_stay_inside_the_radiative_limit(pair, front_d, back_d, temperature,
                                                        ideality, electrical, reflectance,
                                                        parasitic):
    flux = spectrum("am1.5g", 1.0)
    design = StackDesign(absorber(pair[0]), absorber(pair[1]), reflectance, parasitic, parasitic)
    cond = Conditions(flux, temperature, ideality, electrical)
    gap = design.front.gap_eV
    perf = stack_performance(design, cond, gap, front_d, back_d)
    bound = global_4t_limit(280.0)  # the radiative limit falls as the cell warms
    # (a) below the best radiative two-junction stack of any gaps (tails and trapping included)
    assert perf.efficiency_4t <= bound * (1 + RTOL)
    assert perf.efficiency_2t <= bound * (1 + RTOL)
    if not electrical.resistive:
        assert perf.efficiency_2t <= perf.efficiency_4t * (1 + RTOL)  # (c)
    # (b) Voc below the gap at the cell temperature
    shifted = np.array([gap + design.front.gap_shift_eV(temperature),
                        design.back.gap_eV + design.back.gap_shift_eV(temperature)])
    assert np.all(perf.voc < shifted)
    # (d, e) every photon once: the optics' shares add to one, and the two photocurrents
    # together never exceed the photons entering the stack
    light = stack_light(design, flux.energy, gap, front_d, back_d, temperature_K=temperature)
    total = (light.front_absorbed + light.back_absorbed + light.reflected + light.parasitic
             + light.transmitted)
    np.testing.assert_allclose(total, 1.0, rtol=0, atol=1e-12)
    entering = Q * np.trapezoid((1 - reflectance) * flux.flux, flux.energy)
    assert np.sum(perf.j_light) <= entering * (1 + RTOL)
    assert perf.j_2t <= entering * (1 + RTOL)


@given(rows=st.lists(st.tuples(st.floats(250.0, 4000.0), st.floats(0.0, 3.0)), min_size=2,
                     max_size=25, unique_by=lambda r: round(r[0], 3)))
def test_any_spectrum_grid_conserves_photons_and_power(rows):
    rows = sorted(rows)
    wl = np.array([r[0] for r in rows])
    irr = np.array([r[1] for r in rows])
    assume(np.all(np.diff(wl) > 1e-3) and np.trapezoid(irr, wl) > 1e-6)
    spec = tandem.Spectrum("random", wl, irr)
    flux = spec.photon_flux()
    # wavelength side, exact for the piecewise-linear spectrum; energy side, the engine's grid
    assert np.trapezoid(flux.flux, flux.energy) == pytest.approx(spec.photon_count, rel=1e-6)
    assert np.trapezoid(Q * flux.energy * flux.flux, flux.energy) == pytest.approx(
        spec.integrated_irradiance, rel=1e-6)
