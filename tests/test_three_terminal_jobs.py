"""Three terminals and voltage-matched strings through the jobs and the command line: the
numbers they print equal the engine's (itself checked against scipy in
tests/test_three_terminal.py), the loss breakdown adds up, and what a job cannot compute is
refused in one line."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.physics.stack import Electrical

runner = CliRunner()


@pytest.fixture(scope="module")
def flux():
    return tandem.reference_spectrum("am1.5g").photon_flux()


def _json(args):
    res = runner.invoke(app, args)
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_limit_with_three_terminals_prints_the_engines_numbers(flux):
    s = _json(["limit", "1.73", "0.94", "--terminals", "3", "--middle-resistance", "5",
               "--series-resistance", "1", "--string-ratio", "1:2", "--temperature", "300K",
               "--json"])
    el = Electrical(series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=5.0,
                    string_ratios=((1, 2),))
    perf = tandem.step_stack(flux, np.array([1.73, 0.94]), 300.0, electrical=el)
    assert s["efficiency_pct"] == s["efficiency_3t_pct"] == pytest.approx(
        100 * float(perf.efficiency_3t), abs=1e-4)
    assert s["efficiency_2t_pct"] < s["efficiency_pct"] < s["efficiency_4t_pct"]
    # each load's share adds to the stack; the series type's middle contact carries J_f − J_b
    assert sum(c["efficiency_pct"] for c in s["subcells"]) == pytest.approx(s["efficiency_pct"],
                                                                           abs=2e-4)
    t = s["three_terminal"]
    assert t["middle_current_mA_cm2"] == pytest.approx(
        t["front_current_mA_cm2"] - t["back_current_mA_cm2"], abs=2e-4)
    vm = s["voltage_matched"][0]
    assert vm["efficiency_pct"] == pytest.approx(100 * float(perf.p_vm[0]) / flux.irradiance, abs=1e-4)
    assert vm["string_V"] == pytest.approx(2 * vm["back_V"], abs=2e-4)  # 1 front = 2 backs


@settings(max_examples=25, deadline=None)
@given(r_s=st.floats(0.0, 3.0), r_m=st.floats(0.0, 50.0), kind=st.sampled_from("sr"),
       front=st.floats(1.5, 2.0), back=st.floats(0.8, 1.3))
def test_the_three_terminal_breakdown_adds_up_and_no_step_is_negative(flux, r_s, r_m, kind,
                                                                    front, back):
    el = Electrical(series_resistance_ohm_cm2=r_s, middle_resistance_ohm_cm2=r_m,
                    middle_contact=kind)
    r = tandem.limit([front, back], operating=tandem.OperatingPoint(terminals=3, electrical=el))
    b = r.loss_breakdown()
    steps = {s.name: s.power_W_m2 for s in b.steps}
    assert sum(steps.values()) == pytest.approx(b.incident_W_m2, rel=1e-9)  # output included
    assert steps["output"] == pytest.approx(r.design.power, rel=1e-9)
    assert all(v >= -1e-9 * b.incident_W_m2 for v in steps.values())
    jf, jb = r.design.performance.j_3t
    j_middle = jf + jb if kind == "r" else jf - jb
    assert steps["middle contact"] == pytest.approx(r_m * 1e-4 * j_middle**2, rel=1e-12, abs=1e-12)


def test_a_three_terminal_map_shows_what_three_terminals_recover(tmp_path):
    op = tandem.OperatingPoint(terminals=3, electrical=Electrical(
        series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=5.0))
    fronts, backs = tandem.gap_range(1.5, 1.9, 0.1), tandem.gap_range(0.9, 1.2, 0.1)
    m = tandem.gap_map(operating=op, front_gaps_eV=fronts, back_gaps_eV=backs)
    ds = m.to_dataset()
    e2, e3, e4 = (ds[f"efficiency_{k}t"].values for k in (2, 3, 4))
    assert np.all(e2 <= e3 + 1e-9) and np.all(e3 <= e4 + 1e-9)  # series type
    assert m.summary()["optimum"]["efficiency_pct"] == pytest.approx(np.nanmax(e3), abs=1e-4)
    assert "efficiency_3t_pct" in m.to_frame()
    free = tandem.gap_map(operating=tandem.OperatingPoint(terminals=3), front_gaps_eV=fronts,
                          back_gaps_eV=backs).to_dataset()
    assert np.array_equal(free["efficiency_3t"].values, free["efficiency_4t"].values,
                          equal_nan=True)
    fig = m.plot()  # one axes given: the map; the CLI's figure adds the gain panel
    assert fig.axes
    from tandem.output.plots import _map_axes_figure

    fig = _map_axes_figure(m.gap_map, 3, 1.0, ())
    labels = [a.get_ylabel() for a in fig.axes]
    assert "3T − 2T efficiency [% abs]" in labels and "3-terminal efficiency [%]" in labels


def test_a_yield_tables_each_connection_at_its_own_optimum():
    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    series = tandem.site_series(site, period="day:2026-06-21")
    op = tandem.OperatingPoint(terminals=3, electrical=Electrical(
        series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=3.0, string_ratios=((1, 2), (2, 3))))
    y = tandem.energy_yield("perovskite-wide", "silicon", series, op,
                            front_gaps_eV=[1.68, 1.76], front_thicknesses_nm=[500.0, 900.0])
    rows = {r["connection"]: r for r in y.summary()["connections"]}
    e = {k[:2]: rows[k]["energy_kWh_m2"] for k in rows}
    assert e["2T"] <= e["3T"] <= e["4T"] and rows["voltage-matched 1:2"]["energy_kWh_m2"] <= e["4T"]
    best = max(("1:2", "2:3"), key=lambda k: rows[f"voltage-matched {k}"]["energy_kWh_m2"])
    assert y.summary()["best_string_ratio"] == best
    # energy = Σ P·Δt over the steps, for the energy-optimal design hour by hour
    b = y.best
    assert float(y.sweep.energy_3t[y.sweep.optimum]) == pytest.approx(
        float(b.p_3t @ b.step_hours) / 1000, rel=1e-9)
    ds = y.to_dataset()
    assert "energy_3t" in ds and list(ds["string_ratio"].values) == ["1:2", "2:3"]
    assert "p_voltage_matched_2:3_W_m2" in y.to_frame()


@pytest.mark.parametrize("args, message", [
    (["match", "--stack", "organic-pair", "--terminals", "3"], "match --stack does not compute three"),
    (["match", "--stack", "organic-pair", "--terminals", "4"], "drop --terminals 4"),
    (["match", "perovskite-wide", "silicon", "--string-ratio", "1:2"], "voltage-matched"),
    (["spread", "perovskite-wide", "silicon", "--string-ratio", "1:2"], "spread does not compute"),
    (["map", "--string-ratio", "1:2", "--front-absorber", "perovskite-wide"], "give both a front"),
    (["limit", "1.73", "0.94", "--middle-resistance", "2"], "add --terminals 3"),
    (["limit", "1.73", "0.94", "--middle-contact", "r"], "add --terminals 3"),
    (["limit", "1.73", "0.94", "--terminals", "3", "--middle-contact", "x"], "middle contact 'x'"),
    (["limit", "1.3", "--terminals", "3"], "3 (middle contact, two gaps)"),
    (["limit", "1.3", "--string-ratio", "1:2"], "need two gaps"),
    (["limit", "1.73", "0.94", "--string-ratio", "0:2"], "string ratio"),
    (["limit", "1.73", "0.94", "--string-ratio", "1/2"], "--string-ratio '1/2'"),
    (["limit", "1.73", "0.94", "--string-ratio", "1:2,1:2"], "each once"),
])
def test_what_a_job_cannot_compute_is_one_line(args, message):
    res = runner.invoke(app, args)
    assert res.exit_code != 0
    assert message in res.output and "Traceback" not in res.output
    assert len(res.output.strip().splitlines()) == 1


def test_match_and_spread_rank_by_three_terminals():
    op = tandem.OperatingPoint(terminals=3, electrical=Electrical(
        series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=5.0))
    sweep = tandem.Sweep(front_gaps_eV=[1.70, 1.80], thickness_points=12)
    m = tandem.match("perovskite-wide", "silicon", operating=op, sweep=sweep)
    rows = m.summary()["configurations"]
    e3 = [r["efficiency_3t_pct"] for r in rows]
    assert e3 == sorted(e3, reverse=True)
    assert all(r["efficiency_2t_pct"] <= r["efficiency_3t_pct"] <= r["efficiency_4t_pct"]
               for r in rows)  # series type
    assert "efficiency_3t" in m.to_dataset()
    two = tandem.match("perovskite-wide", "silicon", sweep=sweep).summary()["configurations"]
    assert "efficiency_3t_pct" not in two[0]  # the column comes with the ranking
    s = tandem.fabrication_spread("perovskite-wide", "silicon", operating=op, samples=40,
                                  front_gap_eV=rows[0]["front_gap_eV"],
                                  front_thickness_nm=rows[0]["front_thickness_nm"])
    stats = s.summary()
    assert stats["nominal_pct"] == pytest.approx(rows[0]["efficiency_3t_pct"], abs=2e-4)
    assert "efficiency_3t_pct" in s.to_frame()


def test_yield_compares_the_connections_it_is_given(tmp_path):
    args = ["yield", "--latitude", "38.5", "--longitude", "-3", "--timezone", "Etc/GMT-1",
            "--period", "day:2026-06-21", "--front-gaps", "1.70:1.76:0.06", "--points", "2",
            "--series-resistance", "1", "--middle-resistance", "2", "--string-ratio", "1:2,2:5,1:3",
            "-o", str(tmp_path / "y"), "--json", "perovskite-wide", "silicon"]
    s = _json([*args, "--terminals", "2,3,4"])
    names = [r["connection"] for r in s["connections"]]
    assert names[:3] == ["2T (series)", "3T (middle contact)", "4T (independent)"]
    assert len(names) == 3 + 3 and s["best_string_ratio"] in {n.split()[-1] for n in names[3:]}
    energies = {r["connection"]: r["energy_kWh_m2"] for r in s["connections"]}
    assert energies[f"voltage-matched {s['best_string_ratio']}"] == max(
        v for k, v in energies.items() if k.startswith("voltage"))
    res = runner.invoke(app, ["limit", "1.73", "0.94", "--terminals", "2,3"])
    assert res.exit_code != 0 and "a list such as 2,3,4 is for yield and region" in res.output


def test_a_region_site_records_the_connections_of_its_yield():
    """A site's record equals the yield of the same day at its 2T energy optimum."""
    from tandem.jobs.region import SiteSpec, region_job, site_year

    op = tandem.OperatingPoint(terminals=3, electrical=Electrical(
        series_resistance_ohm_cm2=1.0, middle_resistance_ohm_cm2=2.0, string_ratios=((1, 2),)))
    job = region_job("perovskite-wide", "silicon", op, front_gaps_eV=[1.70, 1.76],
                     thickness_points=2, period="day:2026-06-21")
    record = site_year(SiteSpec("Porto Brisa", 38.7, -9.1, 50.0, "Etc/GMT-1"), job)
    assert (record["energy_2t_kWh_m2"] <= record["energy_3t_kWh_m2"]
            <= record["energy_4t_kWh_m2"])
    assert record["energy_voltage_matched_1:2_kWh_m2"] <= record["energy_4t_kWh_m2"]
    site = tandem.Site("Porto Brisa", 38.7, -9.1, 50.0, tilt_deg=38.7, timezone="Etc/GMT-1")
    y = tandem.energy_yield("perovskite-wide", "silicon",
                            tandem.site_series(site, period="day:2026-06-21"), op,
                            front_gaps_eV=[1.70, 1.76], front_thicknesses_nm=job.thicknesses_nm)
    i, j = y.sweep.optimum
    assert record["energy_3t_kWh_m2"] == pytest.approx(float(y.sweep.energy_3t[i, j]), rel=1e-9)


def test_best_names_seven_simple_string_ratios():
    from tandem.cli.options import BEST_RATIOS, parse_string_ratios

    assert parse_string_ratios("best") == BEST_RATIOS and len(BEST_RATIOS) == 7
    assert parse_string_ratios("1:2, 2:3") == ((1, 2), (2, 3))
    assert all(1 <= n / m <= 3 for m, n in BEST_RATIOS)  # back cells per front cell


def test_a_map_of_string_ratios_names_where_each_wins():
    op = tandem.OperatingPoint(electrical=Electrical(string_ratios=((1, 2), (2, 3), (1, 1))))
    fronts, backs = tandem.gap_range(1.5, 2.1, 0.1), tandem.gap_range(0.9, 1.2, 0.1)
    m = tandem.gap_map(operating=op, front_gaps_eV=fronts, back_gaps_eV=backs)
    vm = m.gap_map.efficiency_vm
    assert vm.shape == (fronts.size, backs.size, 3)
    assert np.all(np.nan_to_num(vm) <= np.nan_to_num(m.gap_map.efficiency_4t)[..., None] + 1e-12)
    # each pair's value is the engine's for that pair (step_stack, its own evaluation)
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    i, j = 3, 1
    perf = tandem.step_stack(flux, np.array([fronts[i], backs[j]]), 298.15,
                             electrical=op.electrical)
    assert vm[i, j] == pytest.approx(np.asarray(perf.p_vm) / flux.irradiance, rel=1e-9)
    s = m.summary()
    assert set(s["voltage_matched_at_optimum_pct"]) == {"1:2", "2:3", "1:1"}
    assert "efficiency_voltage_matched_2:3_pct" in m.to_frame()
    from tandem.output.plots import _map_axes_figure

    fig = _map_axes_figure(m.gap_map, 2, 1.0, ())
    labels = [a.get_ylabel() for a in fig.axes]
    assert "best voltage-matched − 2T efficiency [% abs]" in labels
    named = {t.get_text() for a in fig.axes for t in a.texts}
    assert named & {"1:2", "2:3"}  # the ratios are named where they win


def test_strings_that_would_drive_a_back_past_its_gap_turn_away_from_it(flux):
    """2:3 strings of a 2.3 eV front put about 1.3 V on a 0.8 eV back: the back cannot hold
    it (its exact emission diverges at the gap), so the strings settle at a lower voltage."""
    el = Electrical(series_resistance_ohm_cm2=1.0, string_ratios=((2, 3), (1, 2)))
    perf = tandem.step_stack(flux, np.array([2.3, 0.8]), 298.15, electrical=el)
    assert np.all(np.isfinite(perf.p_vm)) and np.all(perf.p_vm > 0)
    assert np.all(perf.p_vm <= perf.p_4t * (1 + 1e-12))
    assert np.all(perf.v_vm[:, 1] < 0.8)  # no back above its gap


def test_a_yields_work_estimate_counts_what_its_connections_cost(monkeypatch):
    """The estimate scales by the measured cost (×1.7 with a middle contact, +0.8 a ratio):
    read back from the refusal of a run over a limit lowered for the test."""
    import re

    import tandem.jobs.common as common

    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    series = tandem.site_series(site, period="day:2026-06-21")
    monkeypatch.setattr(common, "LIMIT_SECONDS", 1e-9)

    def counted(electrical, terminals=2):
        op = tandem.OperatingPoint(terminals=terminals, electrical=electrical)
        with pytest.raises(tandem.TandemInputError) as refused:
            tandem.energy_yield("perovskite-wide", "silicon", series, op,
                                front_gaps_eV=[1.66, 1.7, 1.74, 1.78],
                                front_thicknesses_nm=np.geomspace(300.0, 1200.0, 10))
        return float(re.search(r"has ([\d,.]+) ", str(refused.value)).group(1).replace(",", ""))

    base = counted(Electrical())
    assert counted(Electrical(middle_resistance_ohm_cm2=2.0), 3) == pytest.approx(1.7 * base, rel=0.01)
    assert counted(Electrical(string_ratios=((1, 2), (2, 3)))) == pytest.approx(2.6 * base, rel=0.01)
    assert counted(Electrical(), 3) == base  # no middle-contact loss: 3T is 4T, free
    assert counted(Electrical(series_resistance_ohm_cm2=1.0)) == pytest.approx(1.25 * base, rel=0.01)
    # silicon's bulk (Auger) recombination: 4x a plain pair's cost (measured, see RATES)
    assert base == pytest.approx(4 * 4 * 10 * series.times.size, abs=0.5)  # 4 gaps × 10 nm
