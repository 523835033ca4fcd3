"""Loss breakdown: the parts add up to the incident power, and the intrinsic losses follow
the published analysis (Hirst & Ekins-Daukes, Prog. Photovolt. 19 (2011) 286)."""

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

import tandem
from tandem.physics.stack import Electrical
from tandem.core.units import K_B_EV, SUN_DILUTION

BB = tandem.Light(source="blackbody", sun_temperature_K=6000.0)


def steps(breakdown):
    return {s.name: s.power_W_m2 for s in breakdown.steps}


def test_single_junction_at_1_34_eV_follows_the_published_breakdown():
    """Radiative limit, 1.34 eV, 6000 K blackbody sun, cell 300 K. Hirst & Ekins-Daukes 2011
    (values recalled): below-gap and thermalisation losses dominate; the Carnot loss per
    carrier is Eg·T_c/T_s and the Boltzmann loss kT·ln(Ω_emit/Ω_sun) (their equations);
    the output is the De Vos (1980) limit, about 31 %."""
    r = tandem.limit([1.34], BB, tandem.OperatingPoint(temperature_K=300.0))
    b = r.loss_breakdown()
    parts = steps(b)
    assert sum(parts.values()) == pytest.approx(b.incident_W_m2, rel=1e-12)
    largest = sorted(parts, key=parts.get, reverse=True)[:3]
    assert set(largest) == {"below the gaps", "thermalisation", "output"}
    carriers = float(r.design.performance.j_own[0])  # A/m², i.e. carriers × q
    assert parts["Carnot"] / carriers == pytest.approx(1.34 * 300.0 / 6000.0, rel=1e-12)
    assert parts["Boltzmann"] / carriers == pytest.approx(K_B_EV * 300 * np.log(1 / SUN_DILUTION),
                                                          rel=1e-12)
    assert parts["Boltzmann"] / carriers == pytest.approx(0.2776, abs=5e-4)  # eV per carrier
    assert 100 * parts["output"] / b.incident_W_m2 == pytest.approx(31.0, abs=0.3)
    # concentration lowers only the Boltzmann loss per carrier, by kT·ln X (Hirst 2011)
    c = tandem.limit([1.34], tandem.Light(source="blackbody", sun_temperature_K=6000.0,
                                          concentration=1000.0),
                     tandem.OperatingPoint(temperature_K=300.0))
    per = steps(c.loss_breakdown())["Boltzmann"] / float(c.design.performance.j_own[0])
    assert per == pytest.approx(K_B_EV * 300 * np.log(1 / (1000 * SUN_DILUTION)), rel=1e-12)


def test_a_two_terminal_stack_is_broken_down_at_its_own_operating_point():
    r = tandem.limit([1.90, 1.12], operating=tandem.OperatingPoint(terminals=2))
    b = r.loss_breakdown()
    parts = steps(b)
    p = r.design.performance
    assert b.mismatch_W_m2 == pytest.approx(float(p.p_4t - p.p_2t))
    assert b.mismatch_W_m2 > 0.01 * b.incident_W_m2
    assert parts["output"] == pytest.approx(float(p.p_2t), rel=1e-12)
    # the back has spare photocurrent: at the series current it runs near open circuit and
    # emits its excess, so its emission exceeds the four-terminal breakdown's
    four = tandem.limit([1.90, 1.12], operating=tandem.OperatingPoint(terminals=4)).loss_breakdown()
    assert parts["emission"] > steps(four)["emission"]
    assert steps(four)["output"] - parts["output"] == pytest.approx(b.mismatch_W_m2, rel=1e-9)


def test_resistive_losses_are_closed_forms_at_the_operating_point():
    rs, rsh = 2.0, 300.0
    el = Electrical(series_resistance_ohm_cm2=rs, shunt_resistance_ohm_cm2=rsh)
    for terminals in (2, 4):
        r = tandem.limit([1.73, 1.12], operating=tandem.OperatingPoint(terminals=terminals,
                                                                      electrical=el))
        p, parts = r.design.performance, steps(r.loss_breakdown())
        if terminals == 2:  # J²·R_s once for the chain; each junction's shunt at V_j
            j = float(p.j_2t)
            assert parts["series resistance"] == pytest.approx(j * j * rs * 1e-4, rel=1e-12)
            shunt = sum(g * v / (rsh * 1e-4) for g, v in zip((1.73, 1.12), p.v_2t_sub))
        else:  # each circuit carries R_s/2
            assert parts["series resistance"] == pytest.approx(
                float(np.sum(p.j_own**2)) * rs / 2 * 1e-4, rel=1e-12)
            v_j = p.v_own + p.j_own * rs / 2 * 1e-4
            shunt = sum(g * v / (rsh * 1e-4) for g, v in zip((1.73, 1.12), v_j))
        assert parts["shunt"] == pytest.approx(float(shunt), rel=1e-12)


def test_real_cells_show_optical_nonradiative_and_resistive_losses():
    m = tandem.match("perovskite-wide", "silicon",
                     operating=tandem.OperatingPoint(reflectance=0.03, ideality=1.5,
                                                     electrical=Electrical(
                                                         series_resistance_ohm_cm2=1.0,
                                                         shunt_resistance_ohm_cm2=2000.0)),
                     sweep=tandem.Sweep(front_gaps_eV=1.7, thickness_points=20))
    b = m.loss_breakdown()
    parts = steps(b)
    assert sum(parts.values()) == pytest.approx(b.incident_W_m2, rel=1e-12)
    for name in ("optical loss above the gaps", "non-radiative recombination",
                 "non-radiative voltage loss", "series resistance", "shunt"):
        assert parts[name] > 0.001 * b.incident_W_m2, name
    assert parts["output"] == pytest.approx(m.result.configurations[0].performance.p_2t, rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(front=st.floats(1.4, 2.3), back=st.floats(0.7, 1.3), ere=st.floats(-6, 0),
       ideality=st.sampled_from([1.0, 1.5, 2.0]), terminals=st.sampled_from([2, 4]),
       rs=st.sampled_from([0.0, 0.5, 3.0, 100.0]), rsh=st.sampled_from([np.inf, 1e4, 50.0, 2.0]),
       temperature=st.floats(260.0, 360.0))
@example(front=1.40625, back=0.75, ere=-6.0, ideality=2.0, terminals=2, rs=0.0, rsh=np.inf,
         temperature=342.0)  # the series search drove the back past its photocurrent
@example(front=1.4375, back=1.1875, ere=-6.0, ideality=1.5, terminals=2, rs=0.0, rsh=2.0,
         temperature=289.0)  # the back at −1.8 mV generates 1.1e-6 W/m² (found by CI)
def test_the_parts_always_add_up_and_losses_are_losses(front, back, ere, ideality, terminals, rs,
                                                      rsh, temperature):
    r = tandem.limit([front, back], operating=tandem.OperatingPoint(
        temperature_K=temperature, terminals=terminals, ere=(10.0**ere,), ideality=ideality,
        electrical=Electrical(series_resistance_ohm_cm2=rs, shunt_resistance_ohm_cm2=rsh)))
    b = r.loss_breakdown()
    parts = steps(b)
    assert sum(parts.values()) == pytest.approx(b.incident_W_m2, rel=1e-11)
    tol = 1e-9 * b.incident_W_m2
    perf = r.design.performance
    # every step is a loss at the connection's own operating point, resistances or not; a
    # junction its series partner drives into reverse bias generates carriers thermally, up
    # to its saturation current (the diode law, J0·(e^{qV/nkT} − 1) > −J0): emission and
    # non-radiative recombination may then fall below zero by at most Σ Eg,i·J0,i
    gaps = np.array([front, back])
    generation = {"emission": float(np.sum(gaps * perf.j0_radiative)),
                  "non-radiative recombination": float(np.sum(gaps * perf.j0_nonradiative))}
    for name, value in parts.items():
        assert value >= -tol - generation.get(name, 0.0), name
    assert perf.p_2t <= perf.p_4t * (1 + 1e-9)  # 2T ≤ 4T with resistances too
    if terminals == 2:
        assert b.mismatch_W_m2 >= -tol


@settings(max_examples=60, deadline=None)
@given(points=st.lists(st.tuples(st.floats(280.0, 2600.0), st.floats(0.01, 2.0)), min_size=3,
                       max_size=10, unique_by=lambda p: round(p[0])),
       gap=st.floats(1.0, 2.6))
@example(points=list(zip([520.2, 776.0, 1027.2, 1247.4, 1460.2, 1840.5, 1944.8, 2032.6, 2045.5,
                          2106.7], [1.48, 1.18, 0.45, 0.95, 1.87, 1.92, 0.16, 0.25, 0.13, 1.02])),
         gap=2.347231350776582)  # −1.9×10⁻⁵ of the incident power before the gaps were grid points
def test_thermalisation_is_never_negative_on_a_coarse_spectrum(points, gap):
    """A step absorber takes the photons above its gap on the exact partial interval, and so do
    the breakdown's shares: thermalisation Σ∫(E − Eg)·Φ·EQE dE ≥ 0 on any grid."""
    points = sorted(points)
    wl = np.array([p[0] for p in points])
    if np.any(np.diff(wl) < 1.0):
        return
    light = tandem.Light.from_arrays(wl, np.array([p[1] for p in points]))
    try:
        r = tandem.limit([gap], light)
    except tandem.TandemInputError:  # a gap outside this spectrum, or no light above it
        return
    b = r.loss_breakdown()
    assert steps(b)["thermalisation"] >= -1e-9 * b.incident_W_m2
    assert sum(steps(b).values()) == pytest.approx(b.incident_W_m2, rel=1e-11)


def test_the_sun_temperature_gains_are_named_and_closed_forms():
    """Under a diluted 6000 K blackbody a step absorber has J_L ∝ f·(kTs)³·B(Eg/kTs) and
    J0 ∝ (kTc)³·B(Eg/kTc), B(x) = ∫_x^∞ t²/(e^t − 1) dt, so per carrier the radiative deficit
    Eg − qVoc,rad is Carnot Eg·Tc/Ts + Boltzmann kTc·ln(1/f) (Hirst & Ekins-Daukes 2011) plus
    the hot-sun gain −kTc·ln(Ts/Tc) and the photon-spread gain
    Eg(1 − Tc/Ts) − kTc·[2·ln(Ts/Tc) + ln(B(Eg/kTs)/B(Eg/kTc))]; in the Boltzmann limit the
    latter is −kTc·ln(P(Ts)/P(Tc)), P(T) = Eg² + 2Eg·kT + 2(kT)². B by scipy's quad."""
    from scipy.integrate import quad

    def bose(x):
        return quad(lambda t: t * t * np.exp(-t) / -np.expm1(-t), x, np.inf, epsrel=1e-13)[0]

    tc, ts = 300.0, 6000.0
    kt, kts = K_B_EV * tc, K_B_EV * ts
    for gap in (1.0, 1.34, 2.0):
        r = tandem.limit([gap], BB, tandem.OperatingPoint(temperature_K=tc))
        parts = steps(r.loss_breakdown())
        j = float(r.design.performance.j_own[0])
        assert parts["hot-sun gain (negative: a gain)"] / j == pytest.approx(
            -kt * np.log(ts / tc), rel=1e-12)
        spread = gap * (1 - tc / ts) - kt * (2 * np.log(ts / tc)
                                             + np.log(bose(gap / kts) / bose(gap / kt)))
        assert parts["photon-spread gain (negative: a gain)"] / j == pytest.approx(spread, abs=2e-6)
        boltzmann_limit = -kt * np.log((gap**2 + 2 * gap * kts + 2 * kts**2)
                                       / (gap**2 + 2 * gap * kt + 2 * kt**2))
        assert spread == pytest.approx(boltzmann_limit, abs=2e-3)  # Bose terms of the sun


def test_the_printed_mismatch_is_the_four_terminal_gain(tmp_path):
    # The loss table's closing line: the same cells at four terminals give P_4T − P_2T more,
    # printed in W/m² and as a share of the incident light. The 2T and 4T limits themselves
    # are checked against scipy's searches (test_electrical); here, their printed difference.
    import json
    import re

    from typer.testing import CliRunner

    from tandem.cli.app import app

    runner = CliRunner()
    out = runner.invoke(app, ["limit", "1.9", "1.12", "--losses", str(tmp_path / "w.png")])
    assert out.exit_code == 0, out.output
    watts, share = map(float, re.search(r"give ([\d.]+) W/m² \(([\d.]+) %\) more", out.stdout).groups())
    numbers = json.loads(runner.invoke(app, ["limit", "1.9", "1.12", "--json"]).stdout)
    gain_pct = numbers["efficiency_4t_pct"] - numbers["efficiency_2t_pct"]
    assert share == pytest.approx(gain_pct, abs=0.006) and share > 5  # a badly matched pair
    assert watts == pytest.approx(gain_pct / 100 * numbers["irradiance_W_m2"], abs=0.006)
