"""Luminescent coupling and resistances: limiting cases and independent checks."""

import math

import numpy as np
import pytest
from scipy import optimize

import tandem
import tandem.core.units
from tandem.physics.stack import Electrical

T = 300.0


def step(am15g, gaps, electrical=Electrical(), ere=1.0):
    return tandem.step_stack(am15g, np.array(gaps), T, ere, 1.0, electrical)


@pytest.mark.parametrize("gaps", [(1.73, 1.12), (1.6, 1.12), (1.95, 1.0), (1.34,)])
def test_off_by_default_and_limits_equal_plain_engine(am15g, gaps):
    plain = step(am15g, gaps)
    off = step(am15g, gaps, Electrical(0.0, 0.0, math.inf))
    assert off.p_2t == plain.p_2t and np.all(off.p_own == plain.p_own)
    # the resistive solver itself, with negligible resistances, converges to the same point
    tiny = step(am15g, gaps, Electrical(0.0, 1e-9, 1e12))
    assert tiny.p_2t == pytest.approx(plain.p_2t, rel=1e-7)
    assert tiny.p_4t == pytest.approx(plain.p_4t, rel=1e-7)


def test_single_junction_with_resistances_matches_implicit_solution(am15g):
    # Reference: the implicit diode equation J = J_L − J0(e^{(V+JRs)/vt} − 1) − (V+JRs)/Rsh
    # solved with scipy.optimize.brentq at each V, maximised with minimize_scalar.
    rs_cm2, rsh_cm2 = 2.0, 500.0
    perf = step(am15g, (1.34,), Electrical(0.0, rs_cm2, rsh_cm2))
    jl, j0 = float(perf.j_light[0]), float(perf.j0[0])
    vt, rs, rsh = tandem.core.units.K_B_EV * T, rs_cm2 * 1e-4, rsh_cm2 * 1e-4

    def current(v):
        f = lambda j: jl - j0 * math.expm1((v + j * rs) / vt) - (v + j * rs) / rsh - j
        return optimize.brentq(f, -jl, 2 * jl, xtol=1e-14)

    res = optimize.minimize_scalar(lambda v: -v * current(v), bounds=(0.5, 1.1), method="bounded",
                                   options={"xatol": 1e-10})
    assert float(perf.p_2t) == pytest.approx(-res.fun, rel=1e-7)
    assert float(perf.p_2t) < float(step(am15g, (1.34,)).p_2t)


def test_luminescent_coupling_recycles_the_rear_emission_once(am15g):
    # Consistency with the published picture (Steiner & Geisz, Appl. Phys. Lett. 100 (2012)
    # 251106; recalled from memory): coupling hands the back cell part of the front cell's
    # emission towards it. That emission is a loss of the front whether or not it is
    # collected, so the fair baseline is the rear-emitting front without coupling: coupling
    # raises the series current of a back-limited stack (the front has excess current and
    # sits near open circuit, where it emits most) and barely helps a front-limited one.
    rear = Electrical(rear_emission=True)
    back_limited = (1.60, 1.12)
    lost, coupled = step(am15g, back_limited, rear), step(am15g, back_limited, Electrical(1.0))
    assert lost.j_light[0] > lost.j_light[1]  # front has the excess
    assert coupled.j_2t > lost.j_2t * 1.01
    assert coupled.p_2t > lost.p_2t
    front_limited = (1.90, 1.12)
    lost, coupled = step(am15g, front_limited, rear), step(am15g, front_limited, Electrical(1.0))
    assert lost.j_light[0] < lost.j_light[1]
    gain = 100 * (coupled.efficiency_2t - lost.efficiency_2t)
    assert 0 <= gain < 0.1
    # photons counted once: nothing the coupling does lifts a stack above the published
    # front-only four-terminal limit of its gaps (De Vos 1980 convention)
    for gaps in [(1.73, 0.94), (1.70, 1.12), (1.60, 1.12), (1.90, 1.12)]:
        limit_4t = step(am15g, gaps).p_4t
        c = step(am15g, gaps, Electrical(1.0))
        assert c.p_4t < limit_4t and c.p_2t < limit_4t
        assert c.p_2t <= c.p_4t * (1 + 1e-12)


def test_rear_emission_costs_kt_ln_one_plus_n_squared(am15g):
    # A front cell emitting into a medium of index n as well as through its front face has
    # (1 + n²) times the radiative dark current: ΔVoc = kT·ln(1 + n²) (published rear-emission
    # penalty of radiative-limit stacks; recalled from memory). The back cell is unchanged.
    for n in (1.0, 2.5, 3.5):
        plain = tandem.step_stack(am15g, np.array([1.73, 1.12]), T)
        rear = tandem.step_stack(am15g, np.array([1.73, 1.12]), T, 1.0, 1.0,
                                 Electrical(rear_emission=True), front_index=n)
        drop = float(plain.voc[0] - rear.voc[0])
        assert drop == pytest.approx(tandem.core.units.K_B_EV * T * math.log(1 + n * n), rel=1e-6)
        assert rear.voc[1] == plain.voc[1]


def test_coupling_follows_the_front_radiative_share(am15g):
    # Coupling passes on radiative emission only: a non-radiative front (tiny ERE) hands the
    # back almost nothing, so the coupled stack equals the rear-emitting one
    gaps, ere = (1.60, 1.12), np.array([1e-9, 1.0])
    dark = step(am15g, gaps, Electrical(1.0), ere=ere)
    lost = step(am15g, gaps, Electrical(rear_emission=True), ere=ere)
    assert dark.p_2t == pytest.approx(lost.p_2t, rel=1e-6)


def test_bad_electrical_values_refused():
    with pytest.raises(tandem.TandemInputError, match="coupling 1.5"):
        Electrical(1.5)
    with pytest.raises(tandem.TandemInputError, match="series resistance -1"):
        Electrical(0.0, -1.0)
    with pytest.raises(tandem.TandemInputError, match="shunt resistance 0"):
        Electrical(0.0, 0.0, 0.0)


# --- terminal J–V with resistances: an independent scipy solution of the implicit equations ---


def implicit_junction_voltage(j, jl, j0, vt, rsh):
    """V_j with J = J_L − J0(e^{V_j/vt} − 1) − V_j/R_sh (scipy.optimize.brentq)."""
    f = lambda v: jl - j0 * math.expm1(v / vt) - v / rsh - j
    return optimize.brentq(f, min(0.0, (jl - j) * rsh) - 1.0, 3.0, xtol=1e-15)


@pytest.mark.parametrize("rs, rsh", [(0.0, 10.0), (1000.0, math.inf), (0.0, 1.0), (0.0, 3.0),
                                     (5.0, 50.0)])
def test_single_junction_terminal_values_with_resistances(am15g, rs, rsh):
    perf = step(am15g, (1.34,), Electrical(0.0, rs, rsh))
    jl, j0 = float(perf.j_light[0]), float(perf.j0[0])
    vt, rs_m2, rsh_m2 = tandem.core.units.K_B_EV * T, rs * 1e-4, rsh * 1e-4
    if math.isinf(rsh):
        voc = vt * math.log1p(jl / j0)
        jsc = optimize.brentq(lambda j: vt * math.log1p((jl - j) / j0) - j * rs_m2, 0, jl,
                              xtol=1e-14)
        terminal = lambda j: vt * math.log1p((jl - j) / j0) - j * rs_m2
    else:
        terminal = lambda j: implicit_junction_voltage(j, jl, j0, vt, rsh_m2) - j * rs_m2
        voc = terminal(0.0)
        jsc = optimize.brentq(terminal, 0.0, 1.01 * jl, xtol=1e-14)
    best = optimize.minimize_scalar(lambda j: -j * terminal(j), bounds=(0.0, jsc),
                                    method="bounded", options={"xatol": 1e-12})
    assert float(perf.voc[0]) == pytest.approx(voc, rel=1e-9)
    assert float(perf.jsc[0]) == pytest.approx(jsc, rel=1e-9)
    assert float(perf.p_2t) == pytest.approx(-best.fun, rel=1e-7)
    assert float(perf.ff_2t) == pytest.approx(-best.fun / (voc * jsc), rel=1e-7)
    # the values the engine printed before terminal values (diode Voc 1.0817 V, J_L, FF 8 %)
    # are gone: a 10 Ω·cm² shunt makes an ohmic cell, Voc 0.350 V and FF 25 %
    if (rs, rsh) == (0.0, 10.0):
        assert round(float(perf.voc[0]), 3) == 0.350 and round(100 * float(perf.ff_2t), 1) == 25.0


@pytest.mark.parametrize("rs, rsh", [(2.0, 200.0), (0.0, 20.0), (10.0, math.inf)])
def test_series_stack_with_a_shunt_across_each_junction(am15g, rs, rsh):
    gaps = (1.73, 1.12)
    perf = step(am15g, gaps, Electrical(0.0, rs, rsh))
    jl, j0 = perf.j_light, perf.j0
    vt, rs_m2, rsh_m2 = tandem.core.units.K_B_EV * T, rs * 1e-4, rsh * 1e-4

    def junction(j, i):
        if math.isinf(rsh):
            y = jl[i] - j
            return vt * math.log1p(y / j0[i]) if y > 0 else vt * y / j0[i]
        return implicit_junction_voltage(j, jl[i], j0[i], vt, rsh_m2)

    terminal = lambda j: junction(j, 0) + junction(j, 1) - j * rs_m2
    jsc = optimize.brentq(terminal, 0.0, max(jl), xtol=1e-14)
    best = optimize.minimize_scalar(lambda j: -j * terminal(j), bounds=(0.0, jsc),
                                    method="bounded", options={"xatol": 1e-12})
    assert float(perf.p_2t) == pytest.approx(-best.fun, rel=1e-7)
    assert float(perf.voc_2t) == pytest.approx(terminal(0.0), rel=1e-9)
    assert float(perf.jsc_2t) == pytest.approx(jsc, rel=1e-9)
    assert float(perf.p_2t) <= float(perf.p_4t)


def test_the_maximum_search_places_a_diodes_maximum_power_point_as_scipy_does():
    # golden_maximum's 8 golden + 6 parabolic steps (Brent 1973, successive parabolic
    # interpolation) against scipy's bounded Brent search to its tightest tolerance, on 300
    # two-diode cells with series resistance: the power agrees to 1e-13 relative
    from scipy.optimize import minimize_scalar

    from tandem.physics import detailed_balance as db
    from tandem.physics.junctions import golden_maximum

    rng = np.random.default_rng(7)
    n = 300
    jl, a = rng.uniform(50, 500, n), 10 ** rng.uniform(-25, -8, n)
    b, r, vt = 10 ** rng.uniform(-12, -4, n), 10 ** rng.uniform(-6, -3.5, n), 0.0257

    def power(v):
        j = jl - a * np.expm1(v / vt) - b * np.expm1(v / (2 * vt))
        return j * (v - j * r)

    voc = db.two_diode_voltage(0.0, jl, a, b, 2.0, vt / tandem.core.units.K_B_EV)
    found = golden_maximum(power, np.zeros(n), voc)  # the steps every junction search takes
    for i in range(n):
        best = minimize_scalar(lambda v: -power(np.full(n, v))[i], bounds=(0.0, voc[i]),
                               method="bounded", options={"xatol": 1e-12})
        assert power(found)[i] >= -best.fun * (1 - 1e-13)
    # a parabola's vertex is found exactly, wherever it sits in the bracket
    centres = np.array([0.1, 0.37, 0.5, 0.93])
    x = golden_maximum(lambda v: -(v - centres) ** 2, np.zeros(4), np.ones(4), 8, 6)
    np.testing.assert_allclose(x, centres, rtol=0, atol=1e-12)


def test_the_parabolic_steps_keep_the_three_best_points_as_a_stable_sort_does():
    # The elementwise bookkeeping of golden_maximum's parabolic steps against numpy's stable
    # argsort of the four points (the new one last), dropping the lowest: ties (rounded
    # powers) and NaN (ranked below every number) included.
    from tandem.physics.junctions import _best_three, _rank, _sorted_three

    rng = np.random.default_rng(3)
    n = 4000
    p = np.round(rng.normal(size=(4, n)), 1)  # many ties
    p[rng.random((4, n)) < 0.05] = np.nan
    x = rng.random((4, n))
    points = _sorted_three([(x[i], p[i], _rank(p[i])) for i in range(3)])
    kept = _best_three(points, (x[3], p[3], _rank(p[3])))
    order = np.argsort(_rank(p), axis=0, kind="stable")[1:]
    for i in range(3):
        np.testing.assert_array_equal(kept[i][0], np.take_along_axis(x, order, 0)[i])
        np.testing.assert_array_equal(kept[i][1], np.take_along_axis(p, order, 0)[i])
    # and three alone, before any new point, come out in the stable order of the three
    order3 = np.argsort(_rank(p[:3]), axis=0, kind="stable")
    for i in range(3):
        np.testing.assert_array_equal(points[i][0], np.take_along_axis(x[:3], order3, 0)[i])
