"""`tandem absorbers` and `tandem match` through typer's runner."""

import json

import pytest
from typer.testing import CliRunner

import tandem
import tandem.core.files
from tandem.cli.app import app

runner = CliRunner()
CDTE = (tandem.core.files.bundled_dir("absorbers") / "cdte.toml").read_text()


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def test_absorbers_lists_all_bundled():
    res = run("absorbers")
    assert res.exit_code == 0
    for name in tandem.bundled_absorbers():
        assert name in res.stdout


def test_absorber_show_json_and_plot(tmp_path):
    res = run("absorbers", "silicon", "--json")
    data = json.loads(res.stdout)
    assert data["gap_eV"] == 1.12 and "Green" in data["sources"]["absorption"]
    png = tmp_path / "si.png"
    assert run("absorbers", "silicon", "--plot", png).exit_code == 0
    assert png.read_bytes()[:4] == b"\x89PNG" and png.stat().st_size > 10_000


@pytest.mark.parametrize("edit, field, fix", [
    (lambda t: t.replace('name = "cadmium telluride"\n', ""), "'name' is missing", "add it"),
    (lambda t: t.replace("urbach_energy_meV = 10", "urbach_energy_meV = -5"),
     "'absorption.urbach_energy_meV' = -5 must be positive", "meV"),
    (lambda t: t.replace("range_nm = [800, 8000]", "range_nm = [8000, 800]"),
     "'thickness.range_nm' = [8000, 800] is reversed", "thinnest, thickest"),
    (lambda t: t.replace("[optics]", "[optics]\ncolour = 'black'"),
     "'optics.colour' is not a known key", "allowed keys"),
    (lambda t: t.replace("urbach_energy_meV", "urbach_energy_mev"),
     "'absorption.urbach_energy_mev' is not a known key", "did you mean 'urbach_energy_meV'"),
    (lambda t: t.replace("ere = 1.0e-4", "ere = 3"), "'electrical.ere' = 3 is outside 1e-12–1", "fraction"),
    (lambda t: t.replace("[sources]", "[sources]\n[extra]"), "'extra' is not a known key", "remove it"),
    (lambda t: t.replace("value_eV = 1.50", "value_eV = 'wide'"), "'gap.value_eV'", "give a number"),
    (lambda t: t.replace('model = "direct"', 'model = "magic"'), "'absorption.model'", "use one of"),
    (lambda t: t + "\n[[broken", "not valid TOML", "fix the syntax"),
])
def test_bad_absorber_file_one_line(tmp_path, edit, field, fix):
    path = tmp_path / "film.toml"
    path.write_text(edit(CDTE))
    res = run("absorbers", path)
    assert res.exit_code == 2, res.output
    line = res.stderr.strip()
    assert len(line.splitlines()) == 1 and "Traceback" not in res.output
    assert str(path) in line and field in line and fix in line


def test_missing_absorber_file():
    res = run("absorbers", "nowhere.toml")
    assert res.exit_code == 2 and "not found" in res.stderr


@pytest.fixture(scope="module")
def pvk_si_json():
    res = run("match", "perovskite-wide", "silicon", "--front-gaps", "1.62:1.74:0.04",
              "--points", "40", "--json")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def test_match_json_keys(pvk_si_json):
    data = pvk_si_json
    for key in ("front", "back", "configurations", "matched_front_thickness_nm", "note", "order"):
        assert key in data
    row = data["configurations"][0]
    for key in ("front_gap_eV", "front_thickness_nm", "back_thickness_um", "efficiency_2t_pct",
                "efficiency_4t_pct", "jsc_front_mA_cm2", "jsc_back_mA_cm2", "mismatch_pct",
                "limiting_subcell"):
        assert key in row
    effs = [c["efficiency_2t_pct"] for c in data["configurations"]]
    assert effs == sorted(effs, reverse=True)
    assert data["order"]["recommended_front"] == "perovskite-wide"
    assert all(c["efficiency_4t_pct"] >= c["efficiency_2t_pct"] - 1e-6 for c in data["configurations"])


def test_a_design_with_a_dark_subcell_shows_no_mismatch_or_2t_voc_and_ff():
    # silicon in front of the perovskite at its four-terminal best (300 um): the back gets
    # photons at 1e-14 of the front's, so the 2T stack gives nothing; its mismatch (10^15 %),
    # 2T Voc and FF (noise of the solver's rounding) are shown as none, not as numbers, while
    # a lit design keeps them
    from tandem.output.report import DARK_SHARE

    res = run("match", "perovskite-wide", "silicon", "-t", "4", "--front-gaps", "1.78:1.82:0.04",
              "--points", "20", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    dark = data["swapped"]["configurations"][0]
    assert dark["jsc_back_mA_cm2"] < DARK_SHARE * dark["jsc_front_mA_cm2"]
    assert dark["efficiency_2t_pct"] == 0.0 and dark["efficiency_4t_pct"] > 20
    assert dark["mismatch_pct"] is None and dark["voc_2t_V"] is None and dark["ff_2t_pct"] is None
    lit = data["configurations"][0]
    assert all(isinstance(lit[k], float) for k in ("mismatch_pct", "voc_2t_V", "ff_2t_pct"))


def test_match_inverted_order_shows_both(tmp_path):
    res = run("match", "silicon", "perovskite-wide", "--points", "20", "--front-thickness", "50um:200um")
    assert res.exit_code == 0, res.output
    assert "perovskite-wide goes in front" in res.stdout
    assert "the better order: perovskite-wide in front" in res.stdout


def test_match_plot_written_and_not_overwritten(tmp_path):
    png = tmp_path / "match.png"
    args = ["match", "organic-wide", "organic-narrow", "--points", "30", "-q", "--plot", png]
    assert run(*args).exit_code == 0
    assert png.read_bytes()[:4] == b"\x89PNG" and png.stat().st_size > 20_000
    before = png.read_bytes()
    res = run(*args)
    assert res.exit_code == 2 and "exists" in res.stderr and "--overwrite" in res.stderr
    assert png.read_bytes() == before
    assert run(*args, "--overwrite").exit_code == 0


@pytest.mark.parametrize("args, message", [
    (["match", "perovskite-wide", "silicon", "--back-thickness", "-5"], "must be positive"),
    (["match", "perovskite-wide", "silicon", "--front-thickness", "500:100"], "empty or reversed"),
    (["match", "perovskite-wide", "silicon", "--front-gaps", "4.6:4.7:0.05"], "outside the spectrum"),
    (["match", "silicon", "gaas", "--front-gaps", "1.2:1.3:0.05"], "gap is fixed by its"),
    (["match", "perovskite-wide", "silicon", "--reflectance", "1.5"], "reflectance 1.5"),
    (["match", "perovskite-wide", "silicn"], "did you mean silicon"),
    (["match", "perovskite-wide", "silicon", "--points", "2"], "thickness points 2"),
])
def test_match_bad_input(args, message):
    res = run(*args)
    assert res.exit_code == 2, res.output
    assert message in res.stderr and len(res.stderr.strip().splitlines()) == 1


def test_the_back_thickness_comes_back_in_the_tables_micrometres():
    # 1 µm = 1000 nm (SI): a back given in nm is 2.5 µm in the JSON, one given in µm is
    # printed as given in the table's "back µm" column
    few = ["--front-gaps", "1.70:1.74:0.02", "--points", "12"]  # the column, not the optimum
    res = runner.invoke(app, ["match", "perovskite-wide", "cigs", "--back-thickness", "2500nm",
                              "--json", *few])
    assert res.exit_code == 0, res.output
    assert {c["back_thickness_um"] for c in json.loads(res.stdout)["configurations"]} == {2.5}
    table = runner.invoke(app, ["match", "perovskite-wide", "cigs", "--back-thickness", "2.5um",
                                *few])
    header = next(line for line in table.stdout.splitlines() if "back µm" in line)
    column = [c.strip() for c in header.split("┃")].index("back µm")
    rows = [line.split("│") for line in table.stdout.splitlines() if line.startswith("│ 1 ")]
    assert rows and rows[0][column].strip() == "2.5"
