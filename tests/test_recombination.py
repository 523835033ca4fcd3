"""Intrinsic (Auger) recombination: the published silicon limit, closed forms, and bounds."""

import functools
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


SILICON_TEXT = (tandem.bundled_absorbers()["silicon"]).read_text()


def parse_absorber_text(folder, text):
    """An absorber file written from ``text`` into ``folder``, parsed."""
    path = folder / "si.toml"
    path.write_text(text)
    return tandem.parse_absorber(path)


def test_recombination_section_is_checked(tmp_path):
    si = SILICON_TEXT
    parse = functools.partial(parse_absorber_text, tmp_path)

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


# --- defect (Shockley–Read–Hall) recombination, bulk and surfaces ----------------------------

def srh_rate(n_i, doping, n_type, v, vt, tau, s, width_cm):
    """The textbook SRH rate per area, written independently: mid-gap level (n1 = p1 = n_i),
    τ_n0 = τ_p0 = τ in a bulk of width W, velocity S at each of two surfaces (Shockley & Read,
    Phys. Rev. 87 (1952) 835; Stevenson & Keyes, Physica 20 (1954) 1041) [cm⁻² s⁻¹]."""
    majority = doping / 2 + math.sqrt(doping**2 / 4 + n_i**2)
    n0, p0 = (majority, n_i**2 / majority) if n_type else (n_i**2 / majority, majority)
    # (n0 + Δn)(p0 + Δn) = n_i²·e^{qV/kT}, with n0·p0 = n_i²
    excess = n_i**2 * math.expm1(v / vt)  # n·p − n_i²
    b = n0 + p0
    dn = 2 * excess / (b + math.sqrt(b * b + 4 * excess))  # the root without cancellation
    n, p = n0 + dn, p0 + dn
    bulk = excess / (tau * (n + n_i) + tau * (p + n_i))
    surface = excess / ((n + n_i) / s + (p + n_i) / s) if s > 0 else 0.0
    return width_cm * bulk + 2 * surface


def srh_only(n_i, doping, n_type, tau, s, width_um):
    spec = BulkSpec(None, n_i, 300.0, doping, n_type, tau, s)
    return stack_bulk([spec], [width_um * 1000.0], [1.12], [1.12], 300.0)


def test_srh_at_low_injection_is_the_effective_lifetime():
    # A p-type wafer at low injection: J = q·W·Δn/τ_eff with 1/τ_eff = 1/τ_b + 2S/W, the
    # common-practice combination of bulk and surface lifetimes (Sproul, J. Appl. Phys. 76
    # (1994) 2851, recalled: exact for S·W/D ≪ 1, which the flat-density model assumes)
    n_i, na, tau, s, w_um = 1e10, 1e16, 1e-3, 10.0, 150.0
    vt = K_B_EV * 300.0
    j = float(np.ravel(srh_only(n_i, na, False, tau, s, w_um).current(0.45, vt))[0])
    dn = n_i**2 * math.expm1(0.45 / vt) / na  # minority excess at low injection
    w = w_um * 1e-4
    tau_eff = 1 / (1 / tau + 2 * s / w)
    assert j == pytest.approx(1.602176634e-19 * w * dn / tau_eff * 1e4, rel=1e-4)


def test_srh_in_an_undoped_bulk_is_an_ideality_two_diode():
    # n = p = n_i·e^{qV/2kT} exactly, so J = q·(W/τ + 2S)·n_i·(e^{qV/2kT} − 1)/2: the
    # Sah–Noyce–Shockley ideality-2 recombination current (Proc. IRE 45 (1957) 1228)
    n_i, tau, s, w_um = 1e10, 1e-4, 5.0, 100.0
    vt = K_B_EV * 300.0
    v = np.array([0.50, 0.60])
    j = np.ravel(srh_only(n_i, 0.0, True, tau, s, w_um).current(v, vt))
    expected = 1.602176634e-19 * (w_um * 1e-4 / tau + 2 * s) * n_i * np.expm1(v / (2 * vt)) / 2 * 1e4
    assert j == pytest.approx(expected, rel=1e-12)
    assert math.log(j[1] / j[0]) / 0.10 * vt == pytest.approx(0.5, rel=1e-3)


@settings(max_examples=60, deadline=None)
@given(v=st.floats(-0.5, 0.8), doping=st.sampled_from([0.0, 1e14, 1e16]), n_type=st.booleans(),
       tau=st.sampled_from([1e-6, 1e-3, math.inf]), s=st.sampled_from([0.0, 1.0, 1e4]),
       auger=st.booleans())
def test_bulk_current_and_slope_follow_the_textbook_rates(v, doping, n_type, tau, s, auger):
    # The engine's current against the independent SRH rate (plus the Auger form), and its
    # analytic slope against a central difference
    if doping == 0:
        n_type = True
    spec = BulkSpec(RICHTER if auger else None, 1e10, 300.0, doping, n_type, tau, s)
    bulk = stack_bulk([spec], [1e5], [1.12], [1.12], 300.0).subcell(0)
    vt = K_B_EV * 300.0
    expected = 1.602176634e-19 * 1e4 * srh_rate(1e10, doping, n_type, v, vt, tau, s, 1e-2)
    auger_only = float(stack_bulk([BulkSpec(RICHTER, 1e10, 300.0, doping, n_type)], [1e5], [1.12],
                                  [1.12], 300.0).subcell(0).current(v, vt)) if auger else 0.0
    j, slope = (float(x) for x in bulk.current_slope(v, vt))
    assert j == pytest.approx(expected + auger_only, rel=1e-9, abs=1e-30)
    assert float(bulk.current(v, vt)) == pytest.approx(j, rel=1e-12, abs=1e-30)
    if auger and abs(v) < 1e-3:
        return  # the fit's |Δn|^0.92 is not twice differentiable at 0: no difference quotient
    h = 1e-6
    numeric = (float(bulk.current(v + h, vt)) - float(bulk.current(v - h, vt))) / (2 * h)
    # the difference quotient is only as good as its rounding: ~eps·|J|/h
    assert slope == pytest.approx(numeric, rel=1e-5, abs=1e-10 * abs(j) / h + 1e-20)


@settings(max_examples=40, deadline=None)
@given(jl=st.floats(50.0, 600.0), current=st.floats(-100.0, 600.0),
       tau=st.sampled_from([1e-7, 1e-4]), s=st.sampled_from([0.0, 100.0]),
       doping=st.sampled_from([0.0, 1e16]))
def test_junction_voltage_with_srh_solves_the_balance(jl, current, tau, s, doping):
    # The balance J = J_L − J0·(e^{qV/kT} − 1) − J_SRH(V), solved by brentq on the textbook rate
    vt = K_B_EV * 300.0
    j0 = 1e-12
    bulk = srh_only(1e10, doping, False, tau, s, 150.0).subcell(0)
    v = float(junction_voltage(current, jl, j0, 0.0, 1.0, vt, True, math.inf, (bulk,)))
    if current >= jl:
        return  # beyond the photocurrent: the diode's own continuation

    def balance(x):
        return (jl - j0 * math.expm1(x / vt) - current
                - 1.602176634e-19 * 1e4 * srh_rate(1e10, doping, False, x, vt, tau, s, 150e-4))

    assert v == pytest.approx(optimize.brentq(balance, -5.0, 1.2, xtol=1e-13), abs=1e-9)


def test_a_lifetime_in_a_front_absorber_lowers_a_stack_with_an_auger_back(am15g):
    # Different kinds of bulk recombination in one stack (SRH in front, Auger behind): both
    # connections fall, 2T ≤ 4T, and the front Voc drops by the textbook amount's order
    from tandem.design.matching import Conditions, StackDesign, stack_performance

    pk = tandem.load_absorber("perovskite-wide")
    srh = replace(pk, ere=1.0, bulk=BulkSpec(None, 1e5, 300.0, 0.0, True, 1e-6, 0.0))
    design = StackDesign(srh, tandem.load_absorber("silicon"))
    cond = Conditions(am15g)
    d = np.array([300.0, 500.0, 700.0])
    perf = stack_performance(design, cond, 1.68, d, 110e3)
    plain = stack_performance(replace(design, front=replace(srh, bulk=None)), cond, 1.68, d, 110e3)
    assert np.all(perf.p_2t <= perf.p_4t * (1 + 1e-12))
    assert np.all(perf.p_4t < plain.p_4t) and np.all(perf.voc[:, 0] < plain.voc[:, 0])


def test_srh_keys_are_checked(tmp_path):
    si = SILICON_TEXT
    parse = functools.partial(parse_absorber_text, tmp_path)

    srh = si.replace('auger = "richter-2012"', 'srh_lifetime_s = 1e-3\n'
                     'surface_recombination_velocity_cm_per_s = 2.5')
    spec = parse(srh).bulk
    assert spec.model is None and spec.srh_lifetime_s == 1e-3 and spec.surface_velocity_cm_s == 2.5
    assert "bulk lifetime 0.001 s, surfaces 2.5 cm/s each" in parse(srh).bulk_note()
    with pytest.raises(TandemInputError, match=r"srh_lifetime_s.*1e-3 for 1 ms"):
        parse(srh.replace("srh_lifetime_s = 1e-3", "srh_lifetime_s = 1000"))
    with pytest.raises(TandemInputError, match=r"surface_recombination_velocity_cm_per_s.*outside"):
        parse(srh.replace("= 2.5", "= -1"))
    with pytest.raises(TandemInputError, match=r"recombination.*states no recombination"):
        parse(si.replace('auger = "richter-2012"', ""))


@pytest.mark.parametrize("rs, rsh", [(100.0, math.inf), (0.0, 20.0), (2.0, 200.0)])
def test_a_chain_over_an_auger_limited_back_is_shorted_where_its_voltage_crosses_zero(rs, rsh):
    # Jsc of two terminals: the current where V_front(J) + V_back(J) − J·R_s = 0, each junction
    # voltage from its own current balance (diode, Auger bulk, shunt), all solved here by
    # scipy's brentq. With these resistances the chain's voltage at the largest photocurrent is
    # below zero, so the short circuit lies inside the range, not at its end.
    from tandem.physics.stack import Electrical

    vt = K_B_EV * T_25C
    jl, j0 = np.array([200.0, 190.0]), np.array([1e-19, 1e-10])
    bulk = stack_bulk([None, BulkSpec(RICHTER, 1e10, 300.0, 1e15, True)], [500.0, 160e3],
                      [1.7, 1.12], [1.7, 1.12], T_25C)
    perf = evaluate_stack(jl[None], j0[None], T_25C, 1000.0,
                          electrical=Electrical(0.0, rs, rsh), bulk=bulk)
    g_shunt = 0.0 if math.isinf(rsh) else 1.0 / (rsh * 1e-4)
    back_terms = bulk.subcell(1)

    def junction(j, i):
        def balance(v):
            extra = float(back_terms.current(v, vt)) if i == 1 else 0.0
            return jl[i] - j0[i] * math.expm1(v / vt) - extra - v * g_shunt - j
        return optimize.brentq(balance, -50.0, 1.5, xtol=1e-15, rtol=1e-15)

    def terminal(j):
        return junction(j, 0) + junction(j, 1) - j * rs * 1e-4

    j_high = jl.max() if g_shunt else jl.min()
    assert terminal(j_high * (1 - 1e-12)) < 0  # the crossing is inside (0, j_high)
    jsc = optimize.brentq(terminal, 0.0, j_high * (1 - 1e-12), xtol=1e-13, rtol=1e-14)
    assert float(perf.jsc_2t[0]) == pytest.approx(jsc, rel=1e-9)
    assert float(perf.voc_2t[0]) == pytest.approx(terminal(0.0), rel=1e-9)
