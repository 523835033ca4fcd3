"""Three-terminal stacks and voltage-matched strings, against independent optimisations.

References: scipy's optimisers on the closed-form ideal diode (Shockley), written here
independently of the engine; the ordering 2T ≤ 3T (series type) ≤ 4T follows from the
circuits (the middle contact open gives the series chain, free of it the two own circuits).
The lumped circuit (R_s/2 in each circuit, R_m in the middle contact, the middle current the
difference of the subcell currents in the series type and their sum in the reverse type)
follows Warren et al., Sustain. Energy Fuels 2 (2018) 1141 (recalled).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

import tandem
from tandem.core.units import K_B_EV
from tandem.physics.stack import OHM_CM2, Electrical

T = 300.0
VT = K_B_EV * T


@pytest.fixture(scope="module")
def flux():
    return tandem.reference_spectrum("am1.5g").photon_flux()


def _diode_voltage(j, jl, j0):
    return VT * np.log1p((jl - j) / j0)


def _reference_3t(jl, j0, r_s, r_m, reverse):
    """Maximum of V_f·J_f + V_b·J_b − (R_s/2)(J_f² + J_b²) − R_m·J_m² over both currents."""
    r = r_s / 2

    def negative_power(x):
        jf, jb = x
        jm = jf + jb if reverse else jf - jb
        return -(_diode_voltage(jf, jl[0], j0[0]) * jf + _diode_voltage(jb, jl[1], j0[1]) * jb
                 - r * (jf**2 + jb**2) - r_m * jm**2)

    bounds = [(0.0, jl[0] * (1 - 1e-12)), (0.0, jl[1] * (1 - 1e-12))]
    best = min((optimize.minimize(negative_power, x0, method="L-BFGS-B", bounds=bounds,
                                  options={"ftol": 1e-15, "gtol": 1e-12})
                for x0 in ([0.9 * jl[0], 0.9 * jl[1]], [0.5 * jl[0], 0.95 * jl[1]])),
               key=lambda res: res.fun)
    return -best.fun


@pytest.mark.parametrize("gaps", [(1.73, 0.94), (1.90, 1.12), (1.60, 1.12)])
@pytest.mark.parametrize("r_s, r_m", [(0.0, 1.0), (1.0, 1.0), (2.0, 20.0), (0.5, 300.0)])
@pytest.mark.parametrize("kind", ["s", "r"])
def test_three_terminal_power_equals_an_independent_optimisation(flux, gaps, r_s, r_m, kind):
    el = Electrical(series_resistance_ohm_cm2=r_s, middle_resistance_ohm_cm2=r_m,
                    middle_contact=kind)
    perf = tandem.step_stack(flux, np.array(gaps), T, electrical=el)
    expected = _reference_3t(perf.j_light, perf.j0, r_s * OHM_CM2, r_m * OHM_CM2, kind == "r")
    assert float(perf.p_3t) == pytest.approx(expected, rel=2e-9)
    # the loads' voltages times the subcell currents give that power
    assert float(np.sum(perf.v_3t * perf.j_3t)) == pytest.approx(float(perf.p_3t), rel=1e-12)


def test_the_middle_contact_carries_the_difference_or_the_sum(flux):
    """Reverse type costs more for the same contact: its middle current is the sum."""
    common = dict(series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=5.0)
    s = tandem.step_stack(flux, np.array([1.73, 0.94]), T, electrical=Electrical(**common))
    r = tandem.step_stack(flux, np.array([1.73, 0.94]), T,
                          electrical=Electrical(middle_contact="r", **common))
    assert float(r.p_3t) < float(s.p_3t) < float(s.p_4t)
    # load voltages: V_top = V_f − (R_s/2)·J_f − R_m·J_m, V_back = V_b − (R_s/2)·J_b ± R_m·J_m
    jf, jb = s.j_3t
    vf = _diode_voltage(jf, s.j_light[0], s.j0[0])
    jm = jf - jb
    assert float(s.v_3t[0]) == pytest.approx(float(vf - 0.5e-4 * jf - 5e-4 * jm), abs=1e-9)


def test_without_a_middle_resistance_three_terminals_reach_four(flux):
    """46.06 % at 1.73/0.94 eV, 300 K: the four-terminal optimum (this project's verified
    value, see tests/test_detailed_balance.py)."""
    perf = tandem.step_stack(flux, np.array([1.73, 0.94]), T)
    assert 100 * float(perf.efficiency_3t) == pytest.approx(46.06, abs=0.005)
    assert float(perf.p_3t) == float(perf.p_4t)


def test_a_series_type_with_a_closed_middle_contact_is_the_series_stack(flux):
    """R_m → ∞ forbids a middle current: J_f = J_b, the two-terminal operating point."""
    el = Electrical(series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=1e7)
    perf = tandem.step_stack(flux, np.array([1.73, 0.94]), T, electrical=el)
    assert float(perf.p_3t) == pytest.approx(float(perf.p_2t), rel=1e-5)
    assert float(perf.p_3t) >= float(perf.p_2t) * (1 - 1e-9)


def test_at_matched_maximum_power_currents_three_terminals_equal_two(flux):
    """Where both subcells' own maximum-power currents are equal, no current needs the middle
    contact: 2T = 3T = 4T whatever its resistance (series type)."""
    back = 1.12
    front = optimize.brentq(lambda g: np.subtract(*tandem.step_stack(
        flux, np.array([g, back]), T).j_own), 1.6, 1.9, xtol=1e-12)
    perf = tandem.step_stack(flux, np.array([front, back]), T,
                             electrical=Electrical(middle_resistance_ohm_cm2=50.0))
    assert float(perf.p_3t) == pytest.approx(float(perf.p_4t), rel=1e-9)
    assert float(perf.p_2t) == pytest.approx(float(perf.p_4t), rel=1e-7)


@settings(max_examples=40, deadline=None)
@given(front=st.floats(1.45, 2.2), back=st.floats(0.7, 1.35),
       r_s=st.floats(0.0, 5.0), r_m=st.floats(0.0, 200.0), kind=st.sampled_from("sr"),
       shunt=st.sampled_from([np.inf, 300.0, 30.0]))
def test_three_terminals_never_beat_four_and_the_series_type_never_loses_to_two(
        flux, front, back, r_s, r_m, kind, shunt):
    el = Electrical(series_resistance_ohm_cm2=r_s, middle_resistance_ohm_cm2=r_m,
                    middle_contact=kind, shunt_resistance_ohm_cm2=shunt)
    perf = tandem.step_stack(flux, np.array([front, back]), T, electrical=el)
    assert float(perf.p_3t) <= float(perf.p_4t) * (1 + 1e-9)
    if kind == "s":
        assert float(perf.p_3t) >= float(perf.p_2t) * (1 - 1e-7)
    # what the loads take is the power: the middle contact's drop moves power between the
    # circuits (a load may sit above its own subcell's junction voltage), never creates it
    assert float(np.sum(perf.v_3t * perf.j_3t)) == pytest.approx(float(perf.p_3t), rel=1e-9,
                                                               abs=1e-9)


def _reference_vm(jl, j0, r, ratio):
    """Strings at one voltage V: P = Σ J_i(V_i)·V_i with V_f = V/m, V_b = V/n; each cell's
    terminal current from its diode with R_s/2 by brentq, the voltage by a bounded search."""
    m, n = ratio

    def current(v, i):  # terminal voltage v: J = J_L − J0(e^{(v + J·r)/vt} − 1)
        plain = jl[i] - j0[i] * np.expm1(v / VT)
        if r == 0:
            return plain
        f = lambda j: jl[i] - j0[i] * np.expm1((v + j * r) / VT) - j  # noqa: E731
        return optimize.brentq(f, min(0.0, plain) - 1.0, jl[i], xtol=1e-14, rtol=1e-15)

    def negative(vs):
        return -(current(vs / m, 0) * vs / m + current(vs / n, 1) * vs / n)

    top = max(m * _diode_voltage(0.0, jl[0], j0[0]), n * _diode_voltage(0.0, jl[1], j0[1]))
    grid = np.linspace(0.1, top, 400)
    start = grid[np.argmin([negative(v) for v in grid])]
    res = optimize.minimize_scalar(negative, bounds=(start - top / 399, start + top / 399),
                                   method="bounded", options={"xatol": 1e-12})
    return -res.fun


@pytest.mark.parametrize("ratio", [(1, 1), (1, 2), (2, 3), (3, 5)])
@pytest.mark.parametrize("r_s", [0.0, 1.5])
def test_voltage_matched_strings_equal_an_independent_optimisation(flux, ratio, r_s):
    el = Electrical(series_resistance_ohm_cm2=r_s, string_ratios=(ratio, (2, 5)))
    perf = tandem.step_stack(flux, np.array([1.73, 0.94]), T, electrical=el)
    expected = _reference_vm(perf.j_light, perf.j0, r_s * OHM_CM2 / 2, ratio)
    assert float(perf.p_vm[0]) == pytest.approx(expected, rel=1e-9)
    assert float(perf.p_vm[0]) <= float(perf.p_4t) * (1 + 1e-12)
    m, n = ratio  # the string voltage is common: m·V_f = n·V_b
    assert m * float(perf.v_vm[0, 0]) == pytest.approx(n * float(perf.v_vm[0, 1]), rel=1e-9)
    alone = tandem.step_stack(flux, np.array([1.73, 0.94]), T, electrical=Electrical(
        series_resistance_ohm_cm2=r_s, string_ratios=((2, 5),)))
    assert float(perf.p_vm[1]) == float(alone.p_vm[0])  # each ratio its own, in order


def test_voltage_matching_reaches_four_terminals_when_the_voltages_are_in_the_ratio(flux):
    """Choose the front gap so that V_mp,f = 2·V_mp,b: then 1:2 strings lose nothing."""
    back = 0.94
    front = optimize.brentq(lambda g: (lambda p: p.v_own[0] - 2 * p.v_own[1])(
        tandem.step_stack(flux, np.array([g, back]), T)), 1.4, 2.4, xtol=1e-13)
    perf = tandem.step_stack(flux, np.array([front, back]), T,
                             electrical=Electrical(string_ratios=((1, 2),)))
    assert float(perf.p_vm[0]) == pytest.approx(float(perf.p_4t), rel=1e-10)
    other = tandem.step_stack(flux, np.array([front, back]), T,
                              electrical=Electrical(string_ratios=((2, 3),)))
    assert float(other.p_vm[0]) < float(perf.p_4t) * (1 - 1e-3)


@pytest.mark.parametrize("bad, message", [
    (dict(middle_contact="x"), "middle contact 'x'"),
    (dict(middle_resistance_ohm_cm2=-1.0), "middle-contact resistance -1"),
    (dict(middle_resistance_ohm_cm2=float("nan")), "middle-contact resistance nan"),
    (dict(middle_resistance_ohm_cm2=1e100), "a larger one carries no current"),
    (dict(string_ratios=((0, 2),)), "string ratio"),
    (dict(string_ratios=((1.5, 2),)), "string ratio"),
    (dict(string_ratios=((1, 2), (1, 2))), "each once"),
])
def test_bad_three_terminal_inputs_are_one_line(bad, message):
    with pytest.raises(tandem.TandemInputError, match=message):
        Electrical(**bad)
