"""One path from inputs to every job: a scenario, the command line and the Python API build
the same typed inputs, and every option is applied or refused (never ignored).

Each test here failed on the layout before the jobs shared one translation (consistency
checks: the reference is the same calculation through the Python API).
"""

import dataclasses
import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.jobs.region import RegionJob, read_sites, region_job, run_region
from tandem.study.run import run_study
from tandem.study.sources import load_scenario

ROOFTOP = Path(__file__).resolve().parents[1] / "scenarios" / "perovskite-silicon-rooftop.toml"
runner = CliRunner()


def one_day_scenario(tmp_path, ideality: float) -> Path:
    """The bundled rooftop study over one clear day, small sweep, at ``ideality``."""
    text = ROOFTOP.read_text()
    text = text.replace('period = "year:2026"', 'period = "day:2026-06-21"')
    text = text.replace("thickness_points = 40", "thickness_points = 12")
    text = text.replace("front_gap_step_eV = 0.02", "front_gap_step_eV = 0.05")
    text = text.replace("[spread]", "[electrical]\nideality = %g\n\n[spread]" % ideality)
    text = text.replace("samples = 1000", "samples = 20")
    path = tmp_path / f"rooftop-n{ideality:g}.toml"
    path.write_text(text)
    return path


def test_study_energy_uses_the_scenario_ideality(tmp_path):
    # before: the study ranked at n = 2 but computed its energy at n = 1 (2.79 vs 2.52 kWh/m²)
    scenario = load_scenario(one_day_scenario(tmp_path, 2.0))
    assert scenario.operating().ideality == 2.0
    row = run_study(scenario).rows[0]
    operating = scenario.operating()
    y = tandem.energy_yield(scenario.fronts[0], scenario.backs[0], scenario.series(), operating,
                            front_gaps_eV=[row["front_gap_eV"]],
                            front_thicknesses_nm=[row["front_thickness_nm"]],
                            back_thickness_nm=1000 * row["back_thickness_um"])
    energy = y.summary()["energy_optimum"]["energy_2t_kWh_m2"]
    assert row["energy_2t_kWh_m2"] == pytest.approx(energy, abs=2e-3)
    at_n1 = tandem.energy_yield(scenario.fronts[0], scenario.backs[0], scenario.series(),
                                dataclasses.replace(operating, ideality=1.0),
                                front_gaps_eV=[row["front_gap_eV"]],
                                front_thicknesses_nm=[row["front_thickness_nm"]],
                                back_thickness_nm=1000 * row["back_thickness_um"])
    assert at_n1.summary()["energy_optimum"]["energy_2t_kWh_m2"] > energy + 0.05


def yield_json(*args):
    res = runner.invoke(app, ["yield", *map(str, args), "--json", "-q"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_yield_scenario_takes_its_ideality_and_the_typed_step(tmp_path):
    path = one_day_scenario(tmp_path, 2.0)
    common = ["--scenario", path, "--front-gaps", "1.75", "--points", "2", "--overwrite"]
    hourly = yield_json(*common, "-o", tmp_path / "a")
    quarter = yield_json(*common, "--step", "15", "-o", tmp_path / "b")
    # before: --step was silently ignored beside --scenario (the 60-minute run again)
    assert quarter["steps"] > 3.5 * hourly["steps"]
    assert quarter["scenario_overrides"] == ["--step 15 replaces the scenario's step_minutes 60"]
    # before: the scenario's [electrical] ideality never reached yield --scenario
    scenario = load_scenario(path)
    api = tandem.energy_yield(scenario.fronts[0], scenario.backs[0], scenario.series(),
                              scenario.operating(), front_gaps_eV=[1.75],
                              front_thicknesses_nm=tandem.thickness_axis(
                                  *scenario.fronts[0].thickness_range_nm, 2),
                              back_thickness_nm=160e3, reference=scenario.light())
    assert hourly["energy_optimum"]["energy_2t_kWh_m2"] == pytest.approx(
        api.summary()["energy_optimum"]["energy_2t_kWh_m2"], rel=1e-12)
    # an option typed beside the scenario replaces its value, and says so
    n1 = yield_json(*common, "--ideality", "1", "-o", tmp_path / "c")
    assert n1["scenario_overrides"] == ["--ideality 1.0 replaces the scenario's ideality 2.0"]
    assert n1["energy_optimum"]["energy_2t_kWh_m2"] > hourly["energy_optimum"]["energy_2t_kWh_m2"]


@pytest.mark.parametrize("option", [["--tilt", "20"], ["--latitude", "10"], ["--timezone", "UTC"]])
def test_site_options_beside_a_scenario_are_refused(option, tmp_path):
    res = runner.invoke(app, ["yield", "--scenario", str(ROOFTOP), *option, "-o",
                              str(tmp_path / "y")])
    assert res.exit_code == 2 and "with --scenario" in res.output
    assert not list(tmp_path.iterdir())


def test_region_overwrite_recomputes_every_site(tmp_path):
    (tmp_path / "sites.csv").write_text("name,latitude,longitude\nA,35,-106\nB,40,-3\n")
    sites = read_sites(tmp_path / "sites.csv")
    job = region_job("perovskite-wide", "silicon", front_gaps_eV=[1.70, 1.75], thickness_points=2,
                     period="day:2026-06-21")
    assert isinstance(job, RegionJob)
    first = run_region(sites, job, tmp_path / "r", workers=1)
    assert first.computed == ["A", "B"]
    # before: the same job with --overwrite read the finished sites back
    again = run_region(sites, job, tmp_path / "r", workers=1, overwrite=True)
    assert again.computed == ["A", "B"] and again.reused == []
    resumed = run_region(sites, job, tmp_path / "r", workers=1)
    assert resumed.reused == ["A", "B"]


@pytest.mark.parametrize("kwargs, match", [
    ({"tilt": "steep"}, "tilt 'steep'"), ({"tilt": 95}, "0 to 90"), ({"albedo": 1.5}, "albedo"),
    ({"thickness_points": 1}, "2 to 100"), ({"front_gaps_eV": [1.7, 1.6]}, "increasing")])
def test_region_inputs_are_checked_in_the_library(kwargs, match):
    with pytest.raises(tandem.TandemInputError, match=match):
        region_job("perovskite-wide", "silicon", **kwargs)


def test_a_site_without_a_zone_keeps_its_own_standard_time():
    # the time-zone default lives with the site, not in the command line
    assert tandem.Site("s", latitude=40, longitude=-105).timezone == "Etc/GMT+7"
    assert tandem.Site("s", latitude=40, longitude=30, timezone="Etc/GMT-3").timezone == "Etc/GMT-3"


def test_a_spectrum_from_arrays_pandas_or_xarray_equals_the_same_csv(tmp_path):
    import numpy as np
    import pandas as pd
    import xarray as xr

    wl = np.linspace(300.0, 1200.0, 91)
    irr = 1.0 + 0.5 * np.sin(wl / 100.0)
    csv = tmp_path / "s.csv"
    csv.write_text("wavelength_nm,irradiance\n" + "".join(f"{float(a)!r},{float(b)!r}\n" for a, b in zip(wl, irr)))
    from_file = tandem.limit([1.7, 1.1], tandem.Light(source=str(csv))).efficiency
    lights = [tandem.Light.from_arrays(wl, irr),
              tandem.Light.from_series(pd.Series(irr, index=wl)),
              tandem.Light.from_series(xr.DataArray(irr, coords={"wavelength": wl},
                                                    dims="wavelength"))]
    for light in lights:
        assert tandem.limit([1.7, 1.1], light).efficiency == from_file
    with pytest.raises(tandem.TandemInputError, match="rising"):
        tandem.Light.from_arrays(wl[::-1], irr)
    with pytest.raises(tandem.TandemInputError, match="Light.from_arrays"):
        tandem.Light(source=wl)


def test_a_scalar_gap_is_a_single_junction():
    assert tandem.limit(1.34).efficiency == tandem.limit([1.34]).efficiency
    with pytest.raises(tandem.TandemInputError, match="one or two band gaps"):
        tandem.limit("1.3 eV")


def test_results_show_compactly_in_a_notebook():
    # before: a MatchStudy repr was tens of thousands of characters (every array)
    m = tandem.match("gainp", "gaas", sweep=tandem.Sweep(thickness_points=10))
    for result in (m, tandem.limit([1.73, 1.12]), tandem.gap_map(front_gaps_eV=[1.7, 1.8],
                                                                 back_gaps_eV=[1.1])):
        text, html = repr(result), result._repr_html_()
        assert text.startswith(f"<{type(result).__name__} ") and len(text) < 1000
        assert html.startswith("<table>") and "</table>" in html and len(html) < 5000


def region_json(tmp_path, *args):
    res = runner.invoke(app, ["region", *map(str, args), "--workers", "1", "--json", "-q",
                              "--overwrite"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_region_scenario_takes_its_inputs_and_names_what_it_does_not_use(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = one_day_scenario(tmp_path, 2.0)
    Path("sites.csv").write_text("name,latitude,longitude\nA,35,-106\n")
    sweep = ["--sites", "sites.csv", "--front-gaps", "1.75", "--points", "2"]
    via = region_json(tmp_path, "--scenario", path, *sweep, "--out", "a")
    scenario = load_scenario(path)
    # the same job through the Python API: the scenario's ideality, losses, period and light
    job = region_job(scenario.fronts[0], scenario.backs[0], scenario.operating(),
                     front_gaps_eV=[1.75], thickness_points=2, period="day:2026-06-21",
                     reference=scenario.light())
    assert job.operating.ideality == 2.0 and job.operating.reflectance > 0
    api = run_region(read_sites("sites.csv"), job, tmp_path / "b")
    assert via["sites"][0]["energy_2t_kWh_m2"] == pytest.approx(
        api.summary()["sites"][0]["energy_2t_kWh_m2"], rel=1e-12)
    assert scenario.region_job(front_gaps_eV=[1.75], thickness_points=2) == job
    # the scenario's single [site] is named as not used; a typed option replaces and says so
    assert len(via["scenario_overrides"]) == 1 and "[site] is for one site" in \
        via["scenario_overrides"][0]
    n1 = region_json(tmp_path, "--scenario", path, *sweep, "--ideality", "1", "--out", "c")
    assert "--ideality 1.0 replaces the scenario's ideality 2.0" in n1["scenario_overrides"]
    assert n1["sites"][0]["energy_2t_kWh_m2"] > via["sites"][0]["energy_2t_kWh_m2"]


def test_region_needs_absorbers_or_a_scenario(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["region", "--latitudes", "0:10:10", "--longitudes", "0:0:1"])
    assert res.exit_code == 2 and "give FRONT and BACK absorbers (or --stack FILE), or --scenario" in res.output
    assert not list(tmp_path.iterdir())
