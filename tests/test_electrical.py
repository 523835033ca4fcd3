"""Luminescent coupling and resistances: limiting cases and independent checks."""

import math

import numpy as np
import pytest
from scipy import optimize

import tandem
from tandem.stack import Electrical

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
    vt, rs, rsh = tandem.units.K_B_EV * T, rs_cm2 * 1e-4, rsh_cm2 * 1e-4

    def current(v):
        f = lambda j: jl - j0 * math.expm1((v + j * rs) / vt) - (v + j * rs) / rsh - j
        return optimize.brentq(f, -jl, 2 * jl, xtol=1e-14)

    res = optimize.minimize_scalar(lambda v: -v * current(v), bounds=(0.5, 1.1), method="bounded",
                                   options={"xatol": 1e-10})
    assert float(perf.p_2t) == pytest.approx(-res.fun, rel=1e-7)
    assert float(perf.p_2t) < float(step(am15g, (1.34,)).p_2t)


def test_luminescent_coupling_helps_a_back_limited_stack(am15g):
    # Published analyses (Steiner & Geisz, Appl. Phys. Lett. 100 (2012) 251106; recalled
    # from memory): radiative coupling passes the top cell's excess current to the bottom
    # cell, raising the series current when the bottom (back) cell limits; when the top
    # (front) cell limits, its recombination at the operating point is small and so is
    # the gain. Full coupling with ERE = 1 is the radiative limit of that effect.
    back_limited = (1.60, 1.12)
    plain, coupled = step(am15g, back_limited), step(am15g, back_limited, Electrical(1.0))
    assert plain.j_light[0] > plain.j_light[1]  # front has the excess
    assert coupled.j_2t > plain.j_2t * 1.02
    assert coupled.p_2t > plain.p_2t
    front_limited = (1.90, 1.12)
    plain, coupled = step(am15g, front_limited), step(am15g, front_limited, Electrical(1.0))
    assert plain.j_light[0] < plain.j_light[1]
    gain = 100 * (coupled.efficiency_2t - plain.efficiency_2t)
    assert 0 <= gain < 0.1
    # coupling scales with the front's ERE: none at all when the front is non-radiative
    dark = step(am15g, back_limited, Electrical(1.0), ere=np.array([1e-9, 1.0]))
    assert dark.p_2t == pytest.approx(step(am15g, back_limited, ere=np.array([1e-9, 1.0])).p_2t,
                                      rel=1e-6)


def test_bad_electrical_values_refused():
    with pytest.raises(tandem.TandemInputError, match="coupling 1.5"):
        Electrical(1.5)
    with pytest.raises(tandem.TandemInputError, match="series resistance -1"):
        Electrical(0.0, -1.0)
    with pytest.raises(tandem.TandemInputError, match="shunt resistance 0"):
        Electrical(0.0, 0.0, 0.0)
