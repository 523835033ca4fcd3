"""Intrinsic (Auger) recombination: the published silicon limit, closed forms, and bounds."""

import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import optimize

import tandem
from tandem.optics.absorbers import absorbers_bulk
from tandem.core.errors import TandemInputError
from tandem.core.units import K_B_EV
from tandem.physics import detailed_balance as db
from tandem.physics.recombination import (AUGER_MODELS, BulkSpec, equilibrium_densities,
                                          intrinsic_density, stack_bulk)
from tandem.physics.junctions import junction_voltage
from tandem.physics.stack import evaluate_stack

T_25C = 298.15
RICHTER = AUGER_MODELS["richter-2012"]


def silicon_gaps(si, temperature_K):
    """The silicon file's gap where its n_i is stated and at ``temperature_K`` [eV]."""
    return (si.gap_eV + si.gap_shift_eV(si.bulk.n_i_temperature_K),
            si.gap_eV + si.gap_shift_eV(temperature_K))


def silicon_alone(am15g, thickness_um, ere=1.0, bulk=True):
    """A silicon single junction of the bundled description: Lambertian wafer, AM1.5G, 25 °C."""
    si = tandem.load_absorber("silicon")
    e = am15g.energy
    a = si.layer(e, thickness_um * 1000.0, shift_eV=si.gap_shift_eV(T_25C)).absorptance()
    jl = db.photocurrent(e, am15g.flux, a)
    j0 = db.radiative_dark_current(e, a, T_25C)
    b = absorbers_bulk([si], [None], [thickness_um * 1000.0], T_25C) if bulk else None
    return evaluate_stack(np.array([jl]), np.array([j0]), T_25C, am15g.irradiance, ere=ere, bulk=b)


def test_auger_limited_silicon_matches_the_published_limit(am15g):
    # Richter, Hermle & Glunz, IEEE J. Photovolt. 3 (2013) 1184 (values recalled from memory):
    # undoped, 110 µm, Lambertian light trapping, AM1.5G, 25 °C: 29.43 %, Voc 761 mV,
    # Jsc 43.31 mA/cm², FF 89.26 %, with n_i = 8.28e9 cm⁻³ at 25 °C. We reproduce the same
    # conditions with Green's (2008) absorption and the Tiedje–Yablonovitch Lambertian form;
    # they also model free-carrier absorption (about −0.2 mA/cm²) and band-gap narrowing
    # (a few mV), which we do not: hence the tolerances, stated per quantity.
    perf = silicon_alone(am15g, 110.0)
    si = tandem.load_absorber("silicon")
    n_i = intrinsic_density(si.bulk.n_i_cm3, si.bulk.n_i_temperature_K, *silicon_gaps(si, T_25C),
                            T_25C)
    assert n_i == pytest.approx(8.28e9, rel=0.01)
    assert 0.1 * float(perf.jsc[0]) == pytest.approx(43.31, abs=0.3)
    assert float(perf.voc[0]) == pytest.approx(0.761, abs=0.008)
    assert 100 * float(perf.ff_own[0]) == pytest.approx(89.26, abs=0.5)
    assert 100 * float(perf.efficiency_4t) == pytest.approx(29.43, abs=0.3)


def test_thickness_has_an_optimum_near_the_published_one(am15g):
    # Same source: the efficiency peaks near 110 µm; the radiative cell has no optimum below
    # the wafer range (it gains from every micrometre).
    res = optimize.minimize_scalar(lambda w: -float(silicon_alone(am15g, w).p_4t),
                                   bounds=(20.0, 300.0), method="bounded", options={"xatol": 1.0})
    assert 80.0 < res.x < 150.0
    radiative = [float(silicon_alone(am15g, w, bulk=False).p_4t) for w in (100, 200)]
    assert radiative[1] > radiative[0]


def test_undoped_high_injection_follows_the_power_law_of_the_fit():
    # The fit's high-injection term: with n = p = Δn ≫ n_i, R = C·Δn^2.92, and n·p = n_i²e^{qV/kT}
    # gives Δn = n_i·e^{qV/2kT}, so J_A ∝ e^{1.46·qV/kT} (an ideality of 2/2.92 = 0.685).
    bulk = stack_bulk([BulkSpec(RICHTER, 1e10, 300.0)], [1e5], [1.12], [1.12], 300.0)
    vt = K_B_EV * 300.0
    v = np.array([0.60, 0.70])
    j = bulk.current(v, vt)
    slope = math.log(j[1] / j[0]) / 0.10 * vt
    assert slope == pytest.approx(1.46, rel=1e-3)
    # absolute value, the published form in full: q·W·(n·p − n_i²)·(2.5e-31·g_eeh·n0 +
    # 8.5e-32·g_ehh·p0 + 3.0e-29·Δn^0.92), n0 = p0 = n_i (g = 14 and 8.5 there), n = p = n_i·e^{qV/2kT}
    n = 1e10 * math.exp(0.70 / (2 * vt))
    bracket = 2.5e-31 * 14 * 1e10 + 8.5e-32 * 8.5 * 1e10 + 3.0e-29 * (n - 1e10) ** 0.92
    expected = 1.602176634e-19 * 1e-2 * (n * n - 1e20) * bracket * 1e4
    assert j[1] == pytest.approx(expected, rel=1e-9)


def test_doped_low_injection_is_linear_in_the_excess():
    # Low injection in n-type silicon: R = Δn·N_D·(2.5e-31·g_eeh·N_D), g_eeh from the fit, so
    # J_A ∝ e^{qV/kT} (ideality 1) — the classic doped-wafer Auger lifetime τ = 1/(C_n·N_D²).
    nd = 1e16
    bulk = stack_bulk([BulkSpec(RICHTER, 1e10, 300.0, nd, True)], [1e5], [1.12], [1.12], 300.0)
    vt = K_B_EV * 300.0
    j = np.ravel(bulk.current(np.array([0.40, 0.45]), vt))
    assert math.log(j[1] / j[0]) / 0.05 * vt == pytest.approx(1.0, rel=1e-3)
    g_eeh = 1 + 13 * (1 - math.tanh((nd / 3.3e17) ** 0.66))
    assert 4 < g_eeh < 14  # between the free-particle and the undoped enhancement
    # absolute value at low injection, the published form: n-type takes the e-e-h coefficient
    # 2.5e-31·g_eeh·N_D, p-type the e-h-h one 8.5e-32·g_ehh·N_A (W = 100 µm, n_i = 1e10)
    x = 0.40 / vt
    drive = 1e20 * math.expm1(x)  # n·p − n_i²
    assert j[0] == pytest.approx(1.602176634e-19 * 1e-2 * drive * 2.5e-31 * g_eeh * nd * 1e4,
                                 rel=1e-3)
    p_type = stack_bulk([BulkSpec(RICHTER, 1e10, 300.0, nd, False)], [1e5], [1.12], [1.12], 300.0)
    g_ehh = 1 + 7.5 * (1 - math.tanh((nd / 7.0e17) ** 0.63))
    assert float(np.ravel(p_type.current(np.array([0.40]), vt))[0]) == pytest.approx(
        1.602176634e-19 * 1e-2 * drive * 8.5e-32 * g_ehh * nd * 1e4, rel=1e-3)


@pytest.mark.parametrize("doping, n_type", [(0.0, True), (1e15, True), (3e16, False)])
def test_equilibrium_densities_are_neutral_and_in_mass_action(doping, n_type):
    n0, p0 = equilibrium_densities(1e10, doping, n_type)
    assert n0 * p0 == pytest.approx(1e20, rel=1e-12)
    assert (n0 - p0) * (1 if n_type else -1) == pytest.approx(doping, abs=1e-3 * 1e10)


def test_intrinsic_density_follows_the_published_temperature_law():
    # Misiakos & Tsamakis, J. Appl. Phys. 74 (1993) 3293 (recalled from memory):
    # n_i = 5.29e19·(T/300)^2.54·exp(−6726/T) cm⁻³, measured 78–340 K. Our T^{3/2} law with the
    # silicon file's linear gap shift follows it within a few per cent near room temperature.
    si = tandem.load_absorber("silicon")
    for t in (280.0, 300.0, 320.0, 340.0):
        ours = intrinsic_density(9.65e9, 300.0, *silicon_gaps(si, t), t)
        published = 5.29e19 * (t / 300) ** 2.54 * math.exp(-6726 / t)
        assert ours == pytest.approx(published, rel=0.06)


@settings(max_examples=60, deadline=None)
@given(jl=st.floats(50.0, 600.0), current=st.floats(-100.0, 600.0), width_um=st.floats(1.0, 500.0),
       doping=st.sampled_from([0.0, 1e14, 1e16]), r_shunt=st.sampled_from([math.inf, 0.01]))
def test_junction_voltage_with_a_bulk_solves_the_balance(jl, current, width_um, doping, r_shunt):
    # Reference: the same balance solved by scipy's brentq on the independent expression
    vt = K_B_EV * 300.0
    j0 = 1e-12
    bulk = stack_bulk([BulkSpec(RICHTER, 1e10, 300.0, doping, True)], [width_um * 1000.0], [1.12],
                      [1.12], 300.0).subcell(0)
    v = float(junction_voltage(current, jl, j0, 0.0, 1.0, vt, True, r_shunt, (bulk,)))
    if current >= jl and not math.isfinite(r_shunt):
        return  # beyond the photocurrent without a shunt: the diode's own continuation

    def balance(x):
        return (jl - j0 * math.expm1(x / vt) - float(bulk.current(x, vt))
                - (x / r_shunt if math.isfinite(r_shunt) else 0.0) - current)

    root = optimize.brentq(balance, -700.0, 1.2, xtol=1e-13)
    assert v == pytest.approx(root, abs=1e-9)


@settings(max_examples=25, deadline=None)
@given(w=st.floats(20.0, 300.0), ere=st.floats(1e-4, 1.0))
def test_auger_only_lowers_and_never_passes_the_gap(am15g, w, ere):
    with_bulk, without = silicon_alone(am15g, w, ere), silicon_alone(am15g, w, ere, bulk=False)
    assert float(with_bulk.voc[0]) < float(without.voc[0]) < 1.12
    assert float(with_bulk.p_4t) < float(without.p_4t)


def test_a_silicon_back_sweep_is_bounded_and_consistent(am15g):
    # In a stack: Auger lowers both connections, 2T ≤ 4T, and every breakdown step stays ≥ 0
    from tandem.design.matching import Conditions, StackDesign, stack_performance

    design = StackDesign(tandem.load_absorber("perovskite-wide"),
                                replace(tandem.load_absorber("silicon"), ere=1.0))
    cond = Conditions(am15g)
    perf = stack_performance(design, cond, 1.68, np.array([300.0, 500.0, 700.0]), 110e3)
    plain = stack_performance(replace(design, back=replace(design.back, bulk=None)), cond,
                                     1.68, np.array([300.0, 500.0, 700.0]), 110e3)
    assert np.all(perf.p_2t <= perf.p_4t * (1 + 1e-12))
    assert np.all(perf.p_4t < plain.p_4t) and np.all(perf.voc[:, 1] < plain.voc[:, 1])


def test_recombination_section_is_checked(tmp_path):
    si = (tandem.bundled_absorbers()["silicon"]).read_text()

    def parse(text):
        p = tmp_path / "si.toml"
        p.write_text(text)
        return tandem.parse_absorber(p)

    assert parse(si).bulk.model is RICHTER
    with pytest.raises(TandemInputError, match=r"recombination.auger.*richter-2012"):
        parse(si.replace('"richter-2012"', '"kerr"'))
    with pytest.raises(TandemInputError, match="recombination.doping_type"):
        parse(si.replace("intrinsic_density_temperature_K = 300",
                         "intrinsic_density_temperature_K = 300\ndoping_per_cm3 = 1e15"))
    with pytest.raises(TandemInputError, match="intrinsic_density_temperature_K"):
        parse(si.replace("intrinsic_density_temperature_K = 300", "intrinsic_density_temperature_K = 27"))
    with pytest.raises(TandemInputError, match="recombination.intrinsic_density_per_cm3.*missing"):
        parse(si.replace("intrinsic_density_per_cm3 = 9.65e9\n", ""))
    doped = parse(si.replace("intrinsic_density_temperature_K = 300",
                             "intrinsic_density_temperature_K = 300\ndoping_per_cm3 = 1e15\n"
                             "doping_type = \"p\""))
    assert doped.bulk.doping_cm3 == 1e15 and not doped.bulk.n_type
