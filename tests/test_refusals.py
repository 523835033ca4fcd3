"""Every refusal of a malformed input file, one case each: the file is a bundled one with one
edit, and loading it must end in one line that names the field (and, where the rule gives
one, the fix). Each case's expected words come from the rule it checks: the field, and what
is wrong with it."""

from pathlib import Path

import pytest

import tandem
import tandem.core.files
from tandem.core.errors import TandemInputError

ABSORBERS = tandem.core.files.bundled_dir("absorbers")


def _edited(tmp_path: Path, source: Path, edits, name: str | None = None) -> Path:
    """``source``'s text with each (old, new) replaced once; old must be there."""
    text = source.read_text(encoding="utf-8")
    for old, new in edits:
        assert old in text, f"{old!r} is not in {source.name}"
        text = text.replace(old, new, 1)
    out = tmp_path / (name or source.name)
    out.write_text(text, encoding="utf-8")
    return out


def _refused(load, path, field: str, words: str) -> str:
    with pytest.raises(TandemInputError) as err:
        load(path)
    message = str(err.value)
    assert "\n" not in message, message
    assert field in message and words in message, message
    return message


PEROVSKITE, ORGANIC, SILICON, DYE = "perovskite-wide", "organic-wide", "silicon", "dye-sensitized"
SOURCES_TAIL = ()  # no edit: the file is cut at [sources]

ABSORBER_CASES = [
    (PEROVSKITE, [("temperature_coefficient_meV_per_K = 0.25",
                   "temperature_coefficient_meV_per_K = 1e300")],
     "gap.temperature_coefficient_meV_per_K", "outside −2 to 2 meV/K"),
    # a gap is either fixed or a relation
    (PEROVSKITE, [("[gap]\n", "[gap]\nvalue_eV = 1.7\n")], "gap.value_eV", "both given"),
    (PEROVSKITE, [('relation = "polynomial"', 'relation = "spline"')], "gap.relation",
     "is not known"),
    (PEROVSKITE, [('composition = "bromide fraction x"\n', "")], "gap.composition", "is missing"),
    (PEROVSKITE, [("composition_range = [0.0, 0.6]", "composition_range = [0.6, 0.0]")],
     "gap.composition_range", "low < high"),
    (PEROVSKITE, [("composition_default = 0.25", "composition_default = 0.9")],
     "gap.composition_default", "outside composition_range"),
    (PEROVSKITE, [("coefficients_eV = [1.57, 0.39, 0.33]", "coefficients_eV = [0.5, -2.0]")],
     "gap.coefficients_eV", "≤ 0 eV"),
    (ORGANIC, [("[gap]\n", "[gap]\nvalue_eV = 0.0\n#")], "gap.value_eV", "must be positive"),
    # the absorption edge
    (PEROVSKITE, [("urbach_energy_meV = 15\n", "")], "absorption.urbach_energy_meV",
     "is missing"),
    (PEROVSKITE, [("[absorption]\n", "[absorption]\ntail_cutoff_below_gap_eV = 2.5\n")],
     "absorption.tail_cutoff_below_gap_eV", "below 0 eV"),
    (PEROVSKITE, [("[absorption]\n", "[absorption]\ndefect_floor_per_cm = 1.0\n")],
     "absorption.defect_floor_per_cm", "needs tail_cutoff_below_gap_eV"),
    (DYE, [("bands = [\n  {centre_eV = 2.32", "# {centre_eV = 2.32"),
           ("  {centre_eV = 3.18", "# {centre_eV = 3.18"), ("]\n\n[optics]", "\n[optics]")],
     "absorption.bands", "is missing"),
    (DYE, [("[absorption]\n", "[absorption]\nstrength_per_cm = 1e4\n")],
     "absorption.strength_per_cm", "is not read by model 'bands'"),
    (DYE, [("{centre_eV = 2.32, width_eV = 0.25, peak_per_cm = 3.0e3}", "{centre_eV = 2.32}")],
     "absorption.bands[1]", "must have centre_eV, width_eV and peak_per_cm"),
    (DYE, [("peak_per_cm = 3.5e3", "peak_per_cm = -1.0")], "absorption.bands[2].peak_per_cm",
     "is outside"),
    (SILICON, [('database = "main/Si/Green-2008"\n', "")], "absorption.database", "is missing"),
    (SILICON, [('database = "main/Si/Green-2008"', 'database = "main/Si/Nobody-1900"')],
     "absorption.database", "Nobody-1900"),
    # optics, electrical, thickness, sources
    (SILICON, [("ere = 0.006 ", "ere = 1e-320 ")], "electrical.ere", "outside 1e-12–1"),
    (ORGANIC, [('[optics]\nrefractive_index = 1.9\nlight_trapping = "double-pass"\n', "")],
     "optics", "is missing"),
    (SILICON, [('auger = "richter-2012"', 'auger = "richter-2099"')], "recombination.auger",
     "is not known"),
    (ORGANIC, [("refractive_index = 1.9", "refractive_index = 0.5")],
     "optics.refractive_index", "below 1"),
    (ORGANIC, [('light_trapping = "double-pass"', 'light_trapping = "triple-pass"')],
     "optics.light_trapping", "is not known"),
    (PEROVSKITE, [("nonradiative_voc_loss_V = 0.15", "gap_voltage_offset_V = 5.0")],
     "electrical.gap_voltage_offset_V", "is outside 0 to"),
    (SILICON, [("ere = 0.006 ", "gap_voltage_offset_V = 0.4 ")],
     "electrical.gap_voltage_offset_V", "[recombination] section"),
    (PEROVSKITE, [("default_nm = 500\n", "")], "thickness.default_nm", "is missing"),
    (PEROVSKITE, [("range_nm = [100, 1500]", "range_nm = [100, 500, 1500]")],
     "thickness.range_nm", "two values"),
    (PEROVSKITE, [("range_nm = [100, 1500]", "range_nm = [0, 1500]")], "thickness.range_nm",
     "starts at 0"),
    (PEROVSKITE, [("default_nm = 500", "default_nm = 2000")], "thickness.default_nm",
     "outside the range"),
    (PEROVSKITE, SOURCES_TAIL, "sources", "is empty"),
    # bulk recombination
    (SILICON, [("intrinsic_density_per_cm3 = 9.65e9\n", "")],
     "recombination.intrinsic_density_per_cm3", "is missing"),
    (SILICON, [("intrinsic_density_temperature_K = 300\n",
                "intrinsic_density_temperature_K = 300\ndoping_per_cm3 = 1e25\n")],
     "recombination.doping_per_cm3", "outside 0–1e21"),
    (SILICON, [("intrinsic_density_temperature_K = 300\n",
                'intrinsic_density_temperature_K = 300\ndoping_type = "n"\n')],
     "recombination.doping_type", "undoped"),
]


@pytest.mark.parametrize("base, edits, field, words", ABSORBER_CASES,
                         ids=[f"{c[0]}:{c[2]}:{c[3]}" for c in ABSORBER_CASES])
def test_a_malformed_absorber_file_is_one_line(tmp_path, base, edits, field, words):
    source = ABSORBERS / f"{base}.toml"
    if edits is SOURCES_TAIL:
        path = tmp_path / source.name
        path.write_text(source.read_text(encoding="utf-8").split("[sources]")[0] + "[sources]\n",
                        encoding="utf-8")
    else:
        path = _edited(tmp_path, source, edits)
    _refused(tandem.load_absorber, path, field, words)


def _table_absorber(tmp_path: Path, model_lines: str, csv: str | None = None,
                    csv_name: str = "alpha.csv") -> Path:
    """The organic-wide file with its parametric edge replaced by ``model_lines``, and a
    data file beside it."""
    if csv is not None:
        (tmp_path / csv_name).write_text(csv, encoding="utf-8")
    return _edited(tmp_path, ABSORBERS / f"{ORGANIC}.toml", [(
        'model = "direct"\nurbach_energy_meV = 22\nalpha_at_gap_per_cm = 2.0e4\n'
        "strength_per_cm = 1.2e5\n", f"urbach_energy_meV = 22\n{model_lines}\n")],
        name="film.toml")


ALPHA_TABLE = "wavelength_nm,alpha_per_cm\n500,1e5\n600,5e4\n700,1e4\n"

TABLE_CASES = [
    ('model = "table"', ALPHA_TABLE, "absorption.table", "is missing"),
    ('model = "table"\ntable = "alpha.csv"\ntable_axis = "frequency_Hz"', ALPHA_TABLE,
     "absorption.table_axis", "is not known"),
    ('model = "table"\ntable = "elsewhere.csv"', ALPHA_TABLE, "absorption.table",
     "not found next to the absorber file"),
    ('model = "table"\ntable = "alpha.csv"', "energy_eV,alpha_per_cm\n1.8,1e4\n2.0,5e4\n",
     "absorption.table", "table_axis = \"energy_eV\""),
    ('model = "table"\ntable = "alpha.csv"\ntable_axis = "energy_eV"',
     "energy_eV,alpha_per_cm\n1.8,1e4\n2.0,5e4\n2.0,6e4\n", "absorption table",
     "energy 2 eV appears in more than one row"),
    ('model = "nk"', "500,2.0,0.1\n600,2.0,0.05\n", "absorption.nk_table", "is missing"),
    ('model = "table"\ntable = "alpha.csv"\ntable_axis = "energy_eV"', ALPHA_TABLE,
     "absorption.table", "remove table_axis"),
]


@pytest.mark.parametrize("model_lines, csv, field, words", TABLE_CASES,
                         ids=[f"{c[2]}:{c[3]}" for c in TABLE_CASES])
def test_a_malformed_absorption_table_is_one_line(tmp_path, model_lines, csv, field, words):
    _refused(tandem.load_absorber, _table_absorber(tmp_path, model_lines, csv), field, words)


def test_a_good_table_absorber_loads(tmp_path):
    # the cases above are refused for their one edit, not because the template is broken
    a = tandem.load_absorber(_table_absorber(tmp_path, 'model = "table"\ntable = "alpha.csv"',
                                             ALPHA_TABLE))
    assert a.edge_model == "table"


STACKS = tandem.core.files.bundled_dir("stacks")
FRONT = 'absorber = "organic-wide"\nthickness_nm = [40, 300]\nrole = "front"'
BACK = 'absorber = "organic-narrow"\nthickness_nm = 120\nrole = "back"'
RECOMBINATION = 'name = "recombination layer"\nthickness_nm = 5\nnk = [1.9, 0.05]'

STACK_CASES = [
    ([('title = "Organic pair, inverted, on silver"\n', "")], "title", "is missing"),
    ([('title = "Organic pair, inverted, on silver"', "title = 5")], "title", "must be text"),
    ([('name = "MoO3 (front)"', 'name = "ZnO (front)"')], "layer.name", "repeats a name"),
    ([(FRONT, FRONT.replace('"front"', '"back"')), (BACK, BACK.replace('"back"', '"front"'))],
     "layer.role", "back absorber before the front one"),
    ([(BACK, BACK + "\ncoherent = false")], "layer 'narrow-gap blend'.coherent",
     "not the last layer"),
    ([(FRONT, FRONT + "\ncoherent = false")], "layer 'wide-gap blend'.coherent",
     "is false for the front absorber"),
    ([("thickness_nm = 110\n", "thickness_nm = [80, 140]\n"),
      ("thickness_nm = 10\n", "thickness_nm = [5, 15]\n")], "layer.thickness_nm",
     "sweeps 3 layers"),  # with the ZnO (front) range already in the file
    ([('name = "glass"\n', "")], "layer[1].name", "is missing"),
    ([(RECOMBINATION, RECOMBINATION + '\nrole = "middle"')], "layer 'recombination layer'.role",
     "is unknown"),
    ([(RECOMBINATION, RECOMBINATION + '\nrole = "front"')], "layer 'recombination layer'.role",
     "needs an absorber"),
    ([(RECOMBINATION, RECOMBINATION.replace("thickness_nm = 5\n", ""))],
     "layer 'recombination layer'.thickness_nm", "is missing"),
    ([(RECOMBINATION, RECOMBINATION.replace("thickness_nm = 5", "thickness_nm = [1, 2, 3]"))],
     "layer 'recombination layer'.thickness_nm", "[thin, thick]"),
    ([(RECOMBINATION, RECOMBINATION + '\ncoherent = "yes"')],
     "layer 'recombination layer'.coherent", "true or false"),
    ([(BACK, BACK + '\nlight_trapping = "sideways"')],
     "layer 'narrow-gap blend'.light_trapping", "is unknown"),
    ([('absorber = "organic-wide"', "absorber = 5")], "layer 'wide-gap blend'.absorber",
     "name or path"),
    ([(RECOMBINATION, RECOMBINATION + "\ngap_eV = 1.5")], "layer 'recombination layer'.gap_eV",
     "only for absorber layers"),
    ([("[sources]\n", "sources = 5\n[notes]\n")], "notes", "is not a known key"),
]


@pytest.mark.parametrize("edits, field, words", STACK_CASES,
                         ids=[f"{c[1]}:{c[2]}" for c in STACK_CASES])
def test_a_malformed_stack_file_is_one_line(tmp_path, edits, field, words):
    path = _edited(tmp_path, STACKS / "organic-pair.toml", edits, name="pair.toml")
    _refused(tandem.load_stack, path, field, words)


@pytest.mark.parametrize("text, field, words", [
    ('title = "x"\nlayer = 5\n', "layer", "list of [[layer]] tables"),
    ('title = "x"\nsources = "everywhere"\n[[layer]]\n' + FRONT.replace("absorber", 'name = "a"\nabsorber')
     + '\n[[layer]]\nname = "b"\n' + BACK, "sources", "[sources] table"),
])
def test_a_stack_file_of_the_wrong_shape_is_one_line(tmp_path, text, field, words):
    (tmp_path / "s.toml").write_text(text, encoding="utf-8")
    _refused(tandem.load_stack, tmp_path / "s.toml", field, words)


# --------------------------------------------------------------------------------------
# the Python API: each malformed argument is one line naming it
# --------------------------------------------------------------------------------------


def _api_cases():
    import numpy as np

    from tandem.jobs.inputs import Light, OperatingPoint, Sweep, gap_values, thickness_axis
    from tandem.physics.spectra import (blackbody_sun, load_spectrum, scaled,
                                        scaled_to_irradiance, spectrum_from_arrays)

    am15 = tandem.reference_spectrum("am1.5g")
    wl = np.array([400.0, 500.0, 600.0])
    return [
        (lambda: spectrum_from_arrays(["a", "b"], [1.0, 2.0]), "spectrum", "give numbers"),
        (lambda: spectrum_from_arrays(wl, [1.0, 2.0]), "arrays", "equal length"),
        (lambda: spectrum_from_arrays(np.arange(1_000_001.0) + 300, np.ones(1_000_001)),
         "points", "at most 1,000,000"),
        (lambda: spectrum_from_arrays(wl, [1.0, np.nan, 1.0]), "value", "not finite"),
        (lambda: spectrum_from_arrays(wl, [1.0, -1.0, 1.0]), "irradiance", "negative"),
        (lambda: spectrum_from_arrays(wl, [0.0, 0.0, 0.0]), "irradiance", "zero everywhere"),
        (lambda: scaled(am15, -2.0, "test"), "scaling factor", "positive"),
        (lambda: scaled_to_irradiance(am15, -5.0), "irradiance target", "positive"),
        (lambda: load_spectrum("am1.5g", concentration=-1.0), "concentration", "positive"),
        (lambda: blackbody_sun(-5.0), "sun temperature", "positive temperature"),
        (lambda: am15.photon_flux().check_gap(-1.0, "front gap"), "front gap -1 eV",
         "positive energy"),
        (lambda: Light.from_series(5), "pandas Series", "xarray DataArray"),
        (lambda: OperatingPoint(terminals=5), "terminals 5", "choose 2"),
        (lambda: gap_values("abc"), "front gaps", "give gaps in eV"),
        (lambda: gap_values([[1.5, 1.6], [1.7, 1.8]]), "front gaps", "flat list"),
        (lambda: gap_values(np.linspace(1.0, 2.0, 20_002)), "20,002 gaps", "at most 20,001"),
        (lambda: thickness_axis(500, 100, 5), "front thickness range", "empty or reversed"),
        (lambda: thickness_axis("thick", 100, 5), "front thickness (thinnest)", "give a number"),
        (lambda: Sweep(front_gaps_eV=np.linspace(1.0, 2.0, 2002)), "2,002 gaps", "coarser step"),
        (lambda: Sweep(back_thicknesses_nm=[-5.0]), "back thickness -5", "positive"),
    ]


API_IDS = ["array text", "array lengths", "array size", "array nan", "array negative",
           "array zero", "scale factor", "scale target", "concentration", "sun temperature",
           "gap sign", "series type", "terminals", "gap text", "gap shape", "gap count",
           "thickness range", "thickness text", "sweep gaps", "back thickness"]


@pytest.mark.parametrize("k", range(len(API_IDS)), ids=API_IDS)
def test_a_malformed_api_argument_is_one_line(k):
    call, field, words = _api_cases()[k]
    _refused(lambda _: call(), None, field, words)


def test_a_two_dimensional_spectrum_dataarray_is_refused():
    xr = pytest.importorskip("xarray")
    import numpy as np

    from tandem.jobs.inputs import Light

    data = xr.DataArray(np.ones((2, 3)), dims=("time", "wavelength"))
    _refused(lambda _: Light.from_series(data), None, "DataArray", "one dimension")


def test_a_spectrum_file_of_zeros_is_one_line(tmp_path):
    (tmp_path / "dark.csv").write_text("wavelength_nm,irradiance\n400,0\n500,0\n600,0\n")
    _refused(tandem.read_spectrum_csv, tmp_path / "dark.csv", "dark.csv", "zero everywhere")


# --------------------------------------------------------------------------------------
# scenario files
# --------------------------------------------------------------------------------------

SCENARIOS = Path(tandem.core.files.bundled_dir("absorbers")).parent / "scenarios"
ORGANIC_STUDY = "low-cost-organic-pair.toml"

SCENARIO_CASES = [
    ([("thickness_points = 80", "thickness_points = 80\nfront_gap_step_eV = 0.9")],
     "sweep.front_gap_step_eV", "outside (0, 0.5]"),
    ([("back_thickness_nm = [100, 150, 250, 500, 800]", "back_thickness_nm = [100, -5]")],
     "sweep.back_thickness_nm", "≤ 0"),
    ([("tolerance_pct = 0.5", "tolerance_pct = -1.0")], "report.tolerance_pct", "positive"),
    ([("[report]", "[site]\nlatitude = 95.0\nlongitude = 0.0\n\n[report]")], "site",
     "is not valid"),
    ([("question = ", "variants = 5\nquestion = ")], "variants", "list of [[variants]] tables"),
    ([("[report]", "".join(f'[[variants]]\nname = "v{i}"\ntemperature_K = 300\n' for i in range(9))
       + "\n[report]")], "variants", "has 9 entries"),
    ([("[report]", '[[variants]]\nname = "a/b"\n\n[report]')], "variants[1].name",
     "short name"),
    ([("[report]", '[[variants]]\nname = "hot"\nsource = "am2"\n\n[report]')],
     "variants[1].source", "not a reference spectrum"),
    ([("question = ", "sweep = 5\nquestion = "),
      ("[sweep]\nthickness_points = 80\nback_thickness_nm = [100, 150, 250, 500, 800]", "")],
     "sweep", "must be a [section]"),
    ([('title = "Low-cost organic pair"', "title = 5")], "title", "must be text"),
    ([('front = ["organic-wide"]', 'front = "organic-wide"')], "candidates.front",
     "list of names"),
    ([("back_thickness_nm = [100, 150, 250, 500, 800]", 'back_thickness_nm = ["thin"]')],
     "sweep.back_thickness_nm", "list of numbers"),
    ([("[report]", '[electrical]\nrear_emission = "yes"\n\n[report]')],
     "electrical.rear_emission", "true or false"),
    ([('title = "Low-cost organic pair"', 'title = "Low-cost organic pair" = 2')],
     "scenario file", "not valid TOML"),
]


@pytest.mark.parametrize("edits, field, words", SCENARIO_CASES,
                         ids=[f"{c[1]}:{c[2]}" for c in SCENARIO_CASES])
def test_a_malformed_scenario_is_one_line(tmp_path, edits, field, words):
    from tandem.study.sources import load_scenario

    path = _edited(tmp_path, SCENARIOS / ORGANIC_STUDY, edits, name="study.toml")
    _refused(load_scenario, path, field, words)


def test_a_scenario_without_a_site_has_no_site_series():
    from tandem.study.sources import load_scenario

    scenario = load_scenario(SCENARIOS / ORGANIC_STUDY)
    _refused(lambda _: scenario.site_series(), None, "has no [site]", "latitude and longitude")


# --------------------------------------------------------------------------------------
# weather as data and folders of measured spectra
# --------------------------------------------------------------------------------------


def _weather(**changes):
    import pandas as pd

    times = pd.date_range("2026-06-21 06:30", periods=12, freq="h", tz="Etc/GMT-1")
    data = pd.DataFrame({"ghi": 600.0, "dni": 700.0, "dhi": 100.0, "temp_air": 25.0,
                         "wind_speed": 2.0}, index=times)
    for key, value in changes.items():
        if value is None:
            data = data.drop(columns=key)
        else:
            data[key] = value
    return data


WEATHER_CASES = [
    (lambda: [1, 2, 3], "weather data", "DatetimeIndex"),
    (lambda: _weather().tz_localize(None), "weather data", "no time zone"),
    (lambda: _weather(dhi=None), "columns dhi are missing", "give ghi"),
    (lambda: _weather(temp_air=float("nan")), "weather data", "no usable irradiance"),
    (lambda: _weather(ghi=0.0, dni=0.0, dhi=0.0), "weather data", "no daylight irradiance"),
]


@pytest.mark.parametrize("k", range(len(WEATHER_CASES)),
                         ids=["not a frame", "no zone", "no dhi", "all nan", "dark"])
def test_malformed_weather_data_is_one_line(k):
    from tandem.design.sky import Site
    from tandem.design.weather import weather_frame_series

    make, field, words = WEATHER_CASES[k]
    site = Site("field", 38.5, -3.0, timezone="Etc/GMT-1")
    _refused(lambda _: weather_frame_series(site, make()), None, field, words)


@pytest.mark.parametrize("names, words", [
    ((), "has no .csv files"),
    (("noon.csv",), "has no time stamp"),
    (("2026-06-21T12-00.csv", "20260621T1200.csv"), "share a time stamp"),
])
def test_a_malformed_spectrum_folder_is_one_line(tmp_path, names, words):
    from tandem.design.sky import Site
    from tandem.design.weather import folder_series

    for name in names:
        (tmp_path / name).write_text("wavelength_nm,irradiance\n400,1.0\n800,1.0\n")
    _refused(lambda _: folder_series(Site(), tmp_path), None, "spectrum folder", words)


# --------------------------------------------------------------------------------------
# design and region functions called directly
# --------------------------------------------------------------------------------------


def _design_cases():
    from tandem.design.matching import (Conditions, StackDesign, front_gap_grid,
                                        match_currents)
    from tandem.jobs.region import grid_sites, region_job

    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"))
    cond = Conditions(tandem.reference_spectrum("am1.5g").photon_flux())
    return [
        (lambda: match_currents(design, cond, thickness_points=3), "thickness points 3",
         "between 5 and 5000"),
        (lambda: match_currents(design, cond, terminals=7), "terminals 7", "choose 2"),
        (lambda: match_currents(design, cond, front_thickness_range_nm=(900.0, 300.0)),
         "front thickness range 900-300 nm", "empty or reversed"),
        (lambda: front_gap_grid(design.front, -0.02), "gap step -0.02 eV", "positive step"),
        (lambda: region_job(None, None), "FRONT and BACK", "or a layer stack"),
        (lambda: region_job("perovskite-wide", "silicon", cover_index=5.0), "cover index 5",
         "from 1 (no cover) to 2.5"),
        (lambda: grid_sites((-80.0, 80.0, 0.2), (-180.0, 180.0, 0.4)), "the grid has 721,701 sites",
         "at most 100,000"),
    ]


DESIGN_IDS = ["few points", "terminals", "reversed range", "gap step",
              "no pair", "cover index", "grid size"]


@pytest.mark.parametrize("k", range(len(DESIGN_IDS)), ids=DESIGN_IDS)
def test_a_malformed_design_or_region_argument_is_one_line(k):
    call, field, words = _design_cases()[k]
    _refused(lambda _: call(), None, field, words)


def test_a_site_list_past_the_limit_and_an_empty_region_are_one_line(tmp_path):
    from tandem.jobs.region import read_sites, region_job, run_region

    rows = "".join(f"s{i},10.0,20.0\n" for i in range(100_001))
    (tmp_path / "sites.csv").write_text("name,latitude,longitude\n" + rows)
    _refused(read_sites, tmp_path / "sites.csv", "100,001 sites", "at most 100,000")
    job = region_job("perovskite-wide", "silicon", front_gaps_eV=[1.70], thickness_points=2)
    _refused(lambda _: run_region([], job, tmp_path / "r"), None, "the region", "no sites")
    # a scheduler that is neither an address nor a client (from Python)
    from tandem.jobs.region import grid_sites

    one = grid_sites((30.0, 30.0, 1.0), (0.0, 0.0, 1.0))
    _refused(lambda _: run_region(one, job, tmp_path / "r", scheduler=8786), None,
             "scheduler 8786", "or a dask.distributed.Client")
    assert not (tmp_path / "r").exists()


# --------------------------------------------------------------------------------------
# command-line options: one line, exit 2, nothing written
# --------------------------------------------------------------------------------------


@pytest.mark.parametrize("args, words", [
    (["spread"], "give FRONT and BACK absorbers, or --stack FILE"),
    (["match", "perovskite-wide", "silicon", "--front-gaps", "1.6:1.7:0.01:5"], "give low:high"),
    (["limit", "1.7", "1.1", "--plot", "figs/.."], "give a file name"),
    (["region", "perovskite-wide", "silicon", "--latitudes", "30:40:5", "--longitudes", "0:10:5",
      "--workers", "0"], "--workers 0: give 1 to 1024"),
    # more local workers than cores: each holds a site-year's memory and adds no speed
    (["region", "perovskite-wide", "silicon", "--latitudes", "30:40:5", "--longitudes", "0:10:5",
      "--workers", "1024"], "more local workers than cores add only memory (about 350 MiB each)"),
    (["region", "perovskite-wide", "silicon", "--latitudes", "30:40", "--longitudes", "0:10:5"],
     "give LO:HI:STEP in degrees"),
], ids=["spread pair", "range", "file name", "workers", "workers over cores", "grid axis"])
def test_a_malformed_option_is_one_line_and_writes_nothing(tmp_path, monkeypatch, args, words):
    from typer.testing import CliRunner

    from tandem.cli.app import app

    monkeypatch.chdir(tmp_path)
    run = CliRunner().invoke(app, args)
    assert run.exit_code == 2, run.output
    lines = [x for x in run.output.strip().splitlines() if x.strip()]
    assert len(lines) == 1 and words in lines[0], run.output
    assert not any(tmp_path.iterdir())


# --------------------------------------------------------------------------------------
# internal contracts: a function handed a value outside its contract says which
# --------------------------------------------------------------------------------------


def test_internal_contracts_name_the_bad_argument():
    import numpy as np

    from tandem.optics.absorptance import absorptance
    from tandem.optics.thinfilm import Layer, stack_optics
    from tandem.optics.wafer import trace_wafer

    lam = np.array([600.0, 800.0])
    film = [Layer(np.array([2.0 + 0.1j, 2.0 + 0.1j]), 100.0)]
    with pytest.raises(ValueError, match="pol must be 's' or 'p', not 'x'"):
        stack_optics(film, 1.0, 1.5, lam, 0.0, "x")
    with pytest.raises(ValueError, match=r"depth profiles are for coherent layers, not layers \[0\]"):
        stack_optics([Layer(np.array([1.5, 1.5]), 1e6, False)], 1.0, 1.5, lam, depths={0: [1.0]})
    with pytest.raises(ValueError, match="rear must be one of"):
        trace_wafer([], 1.0, 3.6 + 1e-4j, 1e5, "mirror", np.ones(2), lam)
    with pytest.raises(ValueError, match="front must be one of"):
        trace_wafer([], 1.0, 3.6 + 1e-4j, 1e5, "lambertian", np.ones(2), lam, front="pyramids")
    with pytest.raises(ValueError, match="light trapping 'mirror' is not one of"):
        absorptance(1e3, 1e3, "mirror")


def test_absorber_and_stack_calls_outside_their_contract_are_refused():
    from tandem.design.layerstack import photon_budget

    si = tandem.load_absorber("silicon")
    with pytest.raises(TandemInputError, match="position 'middle': use 'front', 'back' or 'alone'"):
        si.layer([1.5, 2.0], position="middle")
    with pytest.raises(TandemInputError, match="give a positive"):
        si.check_thickness(-5.0, "back thickness")
    with pytest.raises(ValueError, match="one design at a time"):
        photon_budget(tandem.load_stack("organic-pair"), [1.5, 2.0], [100.0, 200.0],
                      depth_points=5)


def _more_cases():
    import matplotlib.pyplot as plt

    from tandem.design.matching import StackDesign
    from tandem.design.sky import Site, clear_sky_series, parse_period
    from tandem.design.yields import yield_sweep
    from tandem.output.plots import save_figure
    from tandem.jobs.inputs import OperatingPoint
    from tandem.optics.database import database_alpha, database_index
    from tandem.physics.checks import check_ere
    from tandem.physics.stack import Electrical, by_connection

    coupled = OperatingPoint(electrical=Electrical(coupling=0.5))
    polar = Site("polar", 85.0, 0.0, timezone="UTC")
    return [
        (lambda: database_alpha("main/Si"), "expected", "shelf/book/page"),
        (lambda: database_alpha("main/Si/Nobody-1900"), "not in the database", "Error"),
        (lambda: database_index("main-Si-Green"), "is not", "shelf/book/page"),
        # a name too long for the file system to look up a shipped copy by
        (lambda: database_alpha("main/" + "a" * 300 + "/p"), "not in the database", "Error"),
        (lambda: database_index("main/" + "a" * 300 + "/p"), "is not in the database", "Error"),
        (lambda: parse_period("day:2026-06", "UTC", 60), "a day is written", "YYYY-MM-DD"),
        (lambda: clear_sky_series(polar, parse_period("day:2026-12-21", "UTC", 60)),
         "the sun never rises", "over this period"),
        (lambda: check_ere([0.1, 0.2, 0.3], 2), "ERE has 3 values for 2 subcells", "one per subcell"),
        (lambda: tandem.limit([1.73, 1.12], operating=coupled).loss_breakdown(),
         "luminescent coupling", "drop --coupling"),
        (lambda: tandem.fabrication_spread_stack("organic-pair", thickness_sigma_pct=150.0),
         "thickness σ 150 %", "0 to 100 %"),
        (lambda: by_connection(3, 0.40, None, 0.45, "this result"), "this result",
         "no three-terminal values"),
        (lambda: yield_sweep(StackDesign(tandem.load_absorber("perovskite-wide"),
                                         tandem.load_absorber("cigs")),
                             clear_sky_series(Site("f", 38.0, -4.0, timezone="UTC"),
                                              parse_period("day:2026-06-21", "UTC", 60)),
                             [1.7], [-100.0], 2000.0, tandem.Light().photon_flux()),
         "front thicknesses", "must be positive"),
        (lambda: save_figure(plt.figure(), "/nonexistent-folder/f.png", False),
         "output folder '/nonexistent-folder'", "create it first"),
    ]


MORE_IDS = ["database shape", "database entry", "index shape", "period form", "polar night",
            "ere count", "breakdown coupling", "thickness sigma", "no 3T", "yield thickness",
            "figure folder"]


@pytest.mark.parametrize("k", range(len(MORE_IDS)), ids=MORE_IDS)
def test_further_malformed_arguments_are_one_line(k):
    call, field, words = _more_cases()[k]
    _refused(lambda _: call(), None, field, words)


def test_data_files_that_are_not_text_or_not_positive_are_one_line(tmp_path):
    from tandem.optics.database import NkTableError, read_nk_table

    (tmp_path / "nk.csv").write_text("500,2.0,0.1\n600,two,0.1\n")  # a word among numbers
    with pytest.raises(NkTableError, match="not three numeric columns"):
        read_nk_table(tmp_path / "nk.csv")
    from tandem.physics.columns import MAX_ROWS

    (tmp_path / "long.csv").write_text("500,2.0,0.1\n" * (MAX_ROWS + 1))
    with pytest.raises(NkTableError, match="1,000,001 lines"):
        read_nk_table(tmp_path / "long.csv")
    (tmp_path / "binary.csv").write_bytes(b"\xff\xfe\x00\x81" * 50)
    _refused(tandem.read_spectrum_csv, tmp_path / "binary.csv", "binary.csv", "cannot be read as text")
    alpha = _table_absorber(tmp_path, 'model = "table"\ntable = "alpha.csv"',
                            "wavelength_nm,alpha_per_cm\n500,1e5\n600,-5\n700,1e4\n")
    _refused(tandem.load_absorber, alpha, "alpha", "must be positive")



def test_an_edge_model_registered_with_a_foreign_data_key_is_refused():
    from tandem.optics.edges import ParametricEdge, register_edge_model

    with pytest.raises(ValueError, match="data_file_key 'table' is not one of its keys"):
        register_edge_model("test-only", ParametricEdge, lambda c, u, g: None,
                            {"strength_per_cm": "num"}, data_file_key="table")


def test_a_series_without_its_parts_has_no_parts_basis(tmp_path):
    from tandem.design.sky import Site
    from tandem.design.weather import folder_series

    (tmp_path / "2026-06-21T12-00.csv").write_text("wavelength_nm,irradiance\n400,1.0\n800,1.0\n")
    series = folder_series(Site(), tmp_path)  # measured spectra: no direct/diffuse split
    assert not series.has_parts
    with pytest.raises(ValueError, match="does not know its direct and diffuse parts"):
        series.parts_basis()


def test_an_unreadable_or_deep_study_input_is_one_line(tmp_path):
    from tandem.study.scenario import read_text_file
    from tandem.study.sources import read_manifest

    _refused(lambda p: read_text_file(p, "weather file"), tmp_path / "missing.csv",
             "weather file", "cannot be read")
    (tmp_path / "manifest.json").write_text("[" * 100_000 + "]" * 100_000)
    _refused(read_manifest, tmp_path / "manifest.json", "manifest", "nested too deeply")


def test_a_study_whose_pairs_are_all_inverted_is_one_line(tmp_path):
    from tandem.study.run import run_study
    from tandem.study.sources import load_scenario

    path = _edited(tmp_path, SCENARIOS / ORGANIC_STUDY,
                   [('front = ["organic-wide"]', 'front = ["organic-narrow"]'),
                    ('back = ["organic-narrow", "perovskite-snpb"]', 'back = ["organic-wide"]')],
                   name="inverted.toml")
    _refused(lambda p: run_study(load_scenario(p)), path, "no candidate pair", "front gap above")


def test_a_reference_spectrum_without_pvlib_is_one_line(monkeypatch):
    import importlib.util

    from tandem.physics.spectra import astm_g173_table

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name == "pvlib" else real(name, *a))
    astm_g173_table.cache_clear()  # read afresh, without pvlib; the next caller reads it again
    try:
        _refused(lambda _: astm_g173_table(), None, "comes with pvlib", "install")
    finally:
        astm_g173_table.cache_clear()


@pytest.mark.parametrize("name, words", [
    ("nodir/figure.png", "does not exist"),
    ("x" * 240 + ".png", "give a name under 200 characters"),
])
def test_an_output_name_that_cannot_be_written_is_one_line(tmp_path, monkeypatch, name, words):
    from typer.testing import CliRunner

    from tandem.cli.app import app

    monkeypatch.chdir(tmp_path)
    run = CliRunner().invoke(app, ["limit", "1.7", "1.1", "--plot", name])
    assert run.exit_code == 2 and words in run.output, run.output
    assert len(run.output.strip().splitlines()) == 1
    assert not any(tmp_path.iterdir())


def _pvlib_tmy3(tmp_path: Path) -> None:
    import shutil

    import pvlib

    shutil.copy(Path(pvlib.__file__).parent / "data" / "723170TYA.CSV", tmp_path / "w.csv")


@pytest.mark.parametrize("block, field, words", [
    ('[weather]\nfile = "w.csv"\n', "weather", "needs a [site] section"),
    ('[site]\nlatitude = 35.2\nlongitude = -106.4\n\n[weather]\nfile = "missing.csv"\n',
     "weather", "names a file that cannot be used"),
], ids=["weather without a site", "missing weather file"])
def test_a_scenarios_weather_that_cannot_be_used_is_one_line(tmp_path, block, field, words):
    from tandem.study.sources import load_scenario

    _pvlib_tmy3(tmp_path)
    path = _edited(tmp_path, SCENARIOS / ORGANIC_STUDY, [("[report]", block + "\n[report]")],
                   name="weather.toml")
    _refused(load_scenario, path, field, words)


def test_a_period_for_a_scenario_that_reads_weather_is_one_line(tmp_path):
    from tandem.study.sources import load_scenario

    _pvlib_tmy3(tmp_path)
    path = _edited(tmp_path, SCENARIOS / ORGANIC_STUDY, [("[report]", '[site]\nlatitude = 35.2\n'
                   'longitude = -106.4\ntimezone = "Etc/GMT+7"\n\n[weather]\nfile = "w.csv"\n\n'
                   "[report]")], name="weather.toml")
    scenario = load_scenario(path)
    _refused(lambda _: scenario.site_series("day:2026-06-21"), None, "reads measured weather",
             "drop the period")
