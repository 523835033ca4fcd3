"""The Python API is the command line's own: same numbers, same options, notebook-safe figures,
runnable examples and docstrings (consistency tests)."""

import doctest
import importlib
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.cli.options import SHARED

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]


def cli_json(*args):
    res = runner.invoke(app, [str(a) for a in args] + ["--json"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


JOBS = {
    "limit": (lambda: tandem.limit([1.73, 1.12], operating=tandem.OperatingPoint(
        temperature_K=300, ere=(0.01,), ideality=1.5)),
        ["limit", "1.73", "1.12", "--temperature", "300", "--ere", "0.01", "--ideality", "1.5"]),
    "match": (lambda: tandem.match("perovskite-wide", "silicon", operating=tandem.OperatingPoint(
        reflectance=0.03, temperature_K=310), sweep=tandem.Sweep(front_gaps_eV=[1.68, 1.71, 1.74],
                                                                 thickness_points=30)),
        ["match", "perovskite-wide", "silicon", "--reflectance", "0.03", "--temperature", "310",
         "--front-gaps", "1.68:1.74:0.03", "--points", "30", "-q"]),
    "map": (lambda: tandem.gap_map(operating=tandem.OperatingPoint(terminals=4),
                                   front_gaps_eV=tandem.gap_range(1.5, 2.0, 0.05), back_gaps_eV=tandem.gap_range(0.9, 1.3, 0.05)),
            ["map", "--front", "1.5:2.0:0.05", "--back", "0.9:1.3:0.05", "-t", "4", "-q"]),
    "spread": (lambda: tandem.fabrication_spread("gainp", "gaas", samples=200, seed=3,
                                                  target_pct=30.0),
                ["spread", "gainp", "gaas", "--samples", "200", "--seed", "3", "--target", "30"]),
}


@pytest.mark.parametrize("job", sorted(JOBS))
def test_command_and_function_give_identical_numbers(job, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # map writes its files here
    python, args = JOBS[job]
    ours = json.loads(json.dumps(python().summary()))
    theirs = cli_json(*args)
    theirs.pop("outputs", None)
    assert ours == theirs


def test_yield_command_and_function_agree(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    site = tandem.Site("site", 40.0, -105.0, 0.0, 30.0, 180.0, "Etc/GMT+7")
    from tandem.jobs.energy_yield import site_series

    series = site_series(site, period="day:2026-06-21", step_minutes=60)
    ours = tandem.energy_yield("perovskite-wide", "silicon", series,
                               front_thicknesses_nm=np.geomspace(100, 1500, 4)).summary()
    theirs = cli_json("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude",
                      "-105", "--timezone", "Etc/GMT+7", "--period", "day:2026-06-21",
                      "--points", "4", "-q")
    assert theirs["energy_optimum"] == json.loads(json.dumps(ours["energy_optimum"]))


def test_every_computing_command_takes_the_shared_options():
    import typer.main

    click_app = typer.main.get_command(app)
    for name in ("limit", "match", "map", "yield", "spread"):
        params = {p.name for p in click_app.commands[name].params}
        assert set(SHARED) <= params, (name, set(SHARED) - params)


def test_plots_return_figures_and_leave_the_backend_alone():
    import matplotlib
    import matplotlib.pyplot as plt
    from matplotlib.figure import Figure

    before, open_figures = matplotlib.get_backend(), plt.get_fignums()
    results = [tandem.limit([1.73, 1.12]),
               tandem.match("organic-wide", "organic-narrow", sweep=tandem.Sweep(thickness_points=10)),
               tandem.gap_map(front_gaps_eV=[1.6, 1.7, 1.8, 1.9], back_gaps_eV=[0.9, 1.0, 1.1, 1.2]),
               tandem.fabrication_spread("gainp", "gaas", samples=50)]
    for r in results:
        fig = r.plot()
        assert isinstance(fig, Figure)
        fig2, ax = plt.subplots()  # into a notebook's own axes
        assert r.plot(ax=ax) is fig2
        plt.close(fig2)
    assert matplotlib.get_backend() == before and plt.get_fignums() == open_figures


def test_datasets_carry_units_and_conditions():
    ds = tandem.gap_map(front_gaps_eV=[1.6, 1.7, 1.8, 1.9], back_gaps_eV=[0.9, 1.0, 1.1, 1.2]).to_dataset()
    assert ds["front_gap"].attrs["units"] == "eV" and ds["efficiency_2t"].attrs["units"] == "%"
    assert float(ds.temperature) == 298.15 and ds.temperature.attrs["units"] == "K"
    assert int(ds.terminals) == 2 and "AM1.5G" in str(ds.spectrum.values)
    assert ds.attrs["Conventions"] == "CF-1.8" and ds.attrs["tandem_version"] == tandem.__version__
    assert all("long_name" in v.attrs for v in ds.variables.values())


def test_two_runs_concatenate_along_what_differs_between_them(tmp_path):
    # the conditions are scalar coordinates: xarray stacks two maps along temperature and
    # keeps both (as attributes, a concatenation kept the first run's and lost the other's);
    # the same through NetCDF files read back
    import xarray as xr

    gaps = dict(front_gaps_eV=[1.6, 1.7, 1.8], back_gaps_eV=[0.9, 1.0, 1.1])
    maps = [tandem.gap_map(**gaps, operating=tandem.OperatingPoint(temperature_K=t)).to_dataset()
            for t in (300.0, 330.0)]
    for i, ds in enumerate(maps):
        ds.to_netcdf(tmp_path / f"map{i}.nc", engine="scipy")
    read = [xr.open_dataset(tmp_path / f"map{i}.nc", engine="scipy") for i in range(2)]
    for pair in (maps, read):
        both = xr.concat(pair, dim="temperature")
        assert list(both.temperature.values) == [300.0, 330.0]
        hot = both.efficiency_2t.sel(temperature=330.0).values
        np.testing.assert_array_equal(hot, maps[1].efficiency_2t.values)
        assert np.all(hot < both.efficiency_2t.sel(temperature=300.0).values)  # warmer: less
    for ds in read:
        ds.close()


def test_yield_dataset_has_the_optimum_along_time_in_utc(tmp_path):
    import pandas as pd
    import pvlib
    import xarray as xr

    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    y = tandem.energy_yield("perovskite-wide", "silicon",
                            tandem.site_series(site, period="day:2026-06-21", step_minutes=15),
                            front_gaps_eV=[1.72], front_thicknesses_nm=[500.0, 1000.0])
    ds = y.to_dataset()
    assert ds.power_2t.dims == ("time",) and ds.power_2t.attrs["units"] == "W/m2"
    assert ds.attrs["site_time_zone"] == "Etc/GMT-1"
    # the day's energy is the step sum of the optimum's power (W·h/m² -> kWh/m²)
    i, j = y.sweep.optimum
    assert float((ds.power_2t * ds.step_length).sum()) / 1000 == pytest.approx(
        float(ds.energy_2t[i, j]), rel=1e-12)
    # times are UTC: the irradiance peaks at solar noon, which pvlib's SPA puts near 12:14 UTC
    # at 3° W on 21 June (a south-facing plane is brightest at transit within a step)
    transit = pvlib.solarposition.sun_rise_set_transit_spa(
        pd.DatetimeIndex([pd.Timestamp("2026-06-21", tz="UTC")]), 38.5, -3.0)["transit"].iloc[0]
    peak = pd.Timestamp(ds.time.values[int(np.argmax(ds.irradiance.values))], tz="UTC")
    assert abs((peak - transit).total_seconds()) <= 15 * 60
    ds.to_netcdf(tmp_path / "y.nc", engine="scipy")
    back = xr.open_dataset(tmp_path / "y.nc", engine="scipy")
    assert back.time.values[0] == ds.time.values[0] and back.power_2t.size == ds.power_2t.size
    back.close()


def test_results_without_a_grid_give_datasets_along_their_rows():
    lim = tandem.limit([1.73, 1.12])
    ds = lim.to_dataset()
    assert ds.voc.attrs["units"] == "V" and ds.jsc.attrs["units"] == "mA/cm2"
    back = lim.summary()["subcells"][1]
    assert float(ds.voc.sel(subcell="back")) == back["voc_V"]
    assert ds.attrs["efficiency_pct"] == lim.summary()["efficiency_pct"]
    spread = tandem.fabrication_spread("gainp", "gaas", samples=40)
    sd = spread.to_dataset()
    assert sd.sizes["sample"] == 40
    assert float(sd.efficiency_2t.mean()) == pytest.approx(sd.attrs["mean_pct"], abs=1e-4)


def test_public_api_is_written_out():
    text = (ROOT / "tandem" / "__init__.py").read_text()
    assert "dir()" not in text.split("__all__ =")[1].splitlines()[0]
    for name in tandem.__all__:
        assert getattr(tandem, name) is not None


@pytest.mark.parametrize("module", ["tandem.jobs.inputs", "tandem.jobs.limit", "tandem.jobs.match", "tandem.jobs.stack_match", "tandem.jobs.eqe", "tandem.jobs.gap_map", "tandem.jobs.energy_yield", "tandem.jobs.spread", "tandem.physics.detailed_balance",
                                    "tandem.physics.spectra", "tandem.physics.stack", "tandem.optics.absorbers",
                                    "tandem.design.sky", "tandem.design.weather", "tandem.design.series",
                                    "tandem.output.report", "tandem.core.errors",
                                    "tandem.design.layerstack"])
def test_docstring_examples_run(module):
    result = doctest.testmod(importlib.import_module(module),
                             optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 0 and result.failed == 0


@pytest.mark.parametrize("script", sorted(p.name for p in (ROOT / "examples").glob("*.py")))
def test_examples_run(script, tmp_path):
    out = subprocess.run([sys.executable, str(ROOT / "examples" / script), str(tmp_path / "f.png")],
                         capture_output=True, text=True, timeout=300, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() and (tmp_path / "f.png").stat().st_size > 10_000


def test_docs_python_api_runs_as_printed(tmp_path, monkeypatch):
    text = (ROOT / "docs" / "python-api.md").read_text()
    block = text.split("# Python API", 1)[1].split("```python\n", 1)[1].split("```", 1)[0]
    monkeypatch.chdir(tmp_path)
    namespace: dict = {}
    exec(compile(block, "docs/python-api.md", "exec"), namespace)
    assert round(namespace["r"].summary()["efficiency_pct"], 2) == 45.04
    assert (tmp_path / "gap-map.nc").stat().st_size > 10_000
    assert len(namespace["region"].records) == 2 and (tmp_path / "region-out" / "sites.sqlite").is_file()


def test_one_reader_for_every_two_column_file(tmp_path):
    # finding: a semicolon file loaded as a spectrum but was refused as a reflectance
    from tandem.optics.losses import loss_on_grid

    path = tmp_path / "r.csv"
    path.write_text("wavelength;fraction\n300;0.05\n1200;0.02\n")
    energy = np.array([1.5, 2.5])
    assert np.all((loss_on_grid(str(path), energy, "reflectance") > 0.02))
    path.write_text("300;0.05\n1200;1.2\n")
    with pytest.raises(tandem.TandemInputError, match="row 2: fraction 1.2 must be below 1"):
        loss_on_grid(str(path), energy, "reflectance")


def test_a_front_layer_passes_light_once():
    # finding: Absorber.layer() gave a front cell the back-mirror trapping of its file
    pvk = tandem.load_absorber("perovskite-wide")  # double-pass in its file
    e = np.array([1.62, 1.7])
    front = pvk.layer(e, 300.0, position="front").absorptance()
    back = pvk.layer(e, 300.0).absorptance()
    assert np.all(front < back)
    np.testing.assert_allclose(front, -np.expm1(-pvk.alpha(e) * 300e-7))


def test_every_public_name_has_a_docstring_with_an_example():
    import inspect

    for name in tandem.__all__:
        obj = getattr(tandem, name)
        if inspect.isfunction(obj) or inspect.isclass(obj):
            doc = inspect.getdoc(obj) or ""
            assert "Examples" in doc and ">>>" in doc, name


SCHEMA_RUNS = {
    "limit": ["limit", "1.73", "1.12", "--ideality", "2", "--ere", "0.1"],
    "match": ["match", "gainp", "gaas", "--points", "10", "-q"],
    "map": ["map", "--front", "1.6:1.9:0.1", "--back", "0.9:1.2:0.1", "-q"],
    "yield": ["yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "-105",
              "--period", "day:2026-06-21", "--points", "3", "-q"],
    "spread": ["spread", "gainp", "gaas", "--samples", "30"],
    "study": ["study", "--out", "s", "-q", "--no-figures"],
    "match-stack": ["match", "--stack", "all-thin-film-pair", "--points", "20", "-q"],
    "eqe": ["eqe", str(ROOT / "tests" / "data" / "front-eqe.csv"),
            str(ROOT / "tests" / "data" / "back-eqe.csv"), "--voc", "1.2,0.7"],
    "region": ["region", "perovskite-wide", "silicon", "--latitudes", "20:40:20", "--longitudes",
               "0:0:1", "--period", "day:2026-06-21", "--points", "3", "--workers", "1", "-q"],
}


@pytest.mark.parametrize("command", sorted(SCHEMA_RUNS))
def test_json_output_follows_its_schema(command, tmp_path, monkeypatch):
    # one unit per key name across commands, ranges as numbers, integer months
    import jsonschema

    monkeypatch.chdir(tmp_path)
    schema = json.loads((ROOT / "tandem" / "schemas" / f"{command}.json").read_text())
    jsonschema.validate(cli_json(*SCHEMA_RUNS[command]), schema)


# ---- one meaning for every gaps input (issue: a list given to Sweep was read as a range) ----

def test_sweep_takes_the_gaps_themselves():
    # before: Sweep(front_gaps_eV=[1.68, 1.70, 1.72]).gaps() silently returned [1.68]
    assert tandem.Sweep(front_gaps_eV=[1.68, 1.70, 1.72]).gaps().tolist() == [1.68, 1.70, 1.72]
    assert tandem.Sweep(front_gaps_eV=1.7).gaps().tolist() == [1.7]
    assert tandem.Sweep(front_gaps_eV=tandem.gap_range(1.68, 1.76, 0.04)).gaps().tolist() == \
        pytest.approx([1.68, 1.72, 1.76], abs=1e-12)


def test_a_range_triple_given_as_gaps_is_refused_with_the_helper_named():
    with pytest.raises(tandem.TandemInputError, match="gap_range"):
        tandem.Sweep(front_gaps_eV=(1.68, 1.76, 0.02))
    with pytest.raises(tandem.TandemInputError, match="positive"):
        tandem.gap_map(front_gaps_eV=[1.6, float("nan")])


def test_gap_map_and_yield_read_gaps_alike():
    m = tandem.gap_map(front_gaps_eV=[1.70, 1.75], back_gaps_eV=[1.12])
    assert m.gap_map.front_gaps.tolist() == [1.70, 1.75] and m.gap_map.back_gaps.tolist() == [1.12]


@pytest.mark.parametrize("call", [
    lambda: tandem.limit(1.34, tandem.OperatingPoint()),
    lambda: tandem.match("perovskite-wide", "silicon", "am1.5g"),
    lambda: tandem.gap_map(tandem.OperatingPoint()),
    lambda: tandem.fabrication_spread("perovskite-wide", "silicon", tandem.OperatingPoint()),
    lambda: tandem.match_stack("organic-pair", tandem.OperatingPoint()),
    lambda: tandem.fabrication_spread_stack("organic-pair", light=tandem.OperatingPoint()),
])
def test_a_typed_input_of_the_wrong_kind_is_one_line(call):
    # an OperatingPoint passed where the Light goes (by position) once ended in an
    # AttributeError deep in the job
    with pytest.raises(tandem.TandemInputError, match=r"not a tandem\.(Light|OperatingPoint); pass"):
        call()


def test_the_absorber_listing_names_each_bundled_stack_as_parsed():
    # the listing reads stack files as text (fast); it must say what the parser reads
    import json

    from typer.testing import CliRunner

    from tandem.cli.app import app

    listed = json.loads(CliRunner().invoke(app, ["absorbers", "--json"]).stdout)["stacks"]
    for entry in listed:
        stack = tandem.load_stack(entry["name"])
        assert entry["title"] == stack.title and entry["layers"] == [x.name for x in stack.layers]
    assert {e["name"] for e in listed} == set(tandem.bundled_stacks())
