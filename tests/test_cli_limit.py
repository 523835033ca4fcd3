"""`tandem limit` through typer's runner: output keys, exit codes, one-line errors."""

import json

import pytest
from typer.testing import CliRunner

from tandem.cli.app import app

runner = CliRunner()


def run(*args):
    return runner.invoke(app, list(args))


def test_limit_json_keys_and_values():
    res = run("limit", "1.73", "1.12", "--temperature", "300", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    for key in ("efficiency_pct", "power_W_m2", "voc_V", "jsc_mA_cm2", "ff_pct", "terminals",
                "limiting_subcell", "mismatch_pct", "temperature_K", "irradiance_W_m2", "subcells"):
        assert key in data
    assert [s["gap_eV"] for s in data["subcells"]] == [1.73, 1.12]
    assert data["terminals"] == 2 and data["limiting_subcell"] == "front"
    # power / irradiance and the subcell shares agree with the headline efficiency
    assert data["efficiency_pct"] == pytest.approx(100 * data["power_W_m2"] / data["irradiance_W_m2"],
                                                   abs=1e-3)
    assert sum(s["efficiency_pct"] for s in data["subcells"]) == pytest.approx(
        data["efficiency_pct"], abs=1e-3)


def test_single_junction_json():
    data = json.loads(run("limit", "1.34", "--temperature", "300", "--json").stdout)
    assert data["limiting_subcell"] is None and data["mismatch_pct"] is None
    assert data["efficiency_pct"] == pytest.approx(33.7, abs=0.1)  # Rühle 2016


def test_four_terminal_at_least_two_terminal():
    two = json.loads(run("limit", "1.9", "1.0", "--json").stdout)
    four = json.loads(run("limit", "1.9", "1.0", "-t", "4", "--json").stdout)
    assert four["efficiency_pct"] > two["efficiency_pct"]
    assert four["voc_V"] is None


def test_table_output_names_limiting_subcell():
    res = run("limit", "1.73", "1.12")
    assert res.exit_code == 0
    assert "limiting subcell: front" in res.stdout
    assert "not certified measurements" in res.stdout


@pytest.mark.parametrize("args, message", [
    (["limit", "0"], "gap 0 eV: a band gap must be a positive energy"),
    (["limit", "5.0"], "outside the spectrum"),
    (["limit", "1.12", "1.73"], "order looks inverted"),
    (["limit", "1.73", "1.12", "--ere", "0"], "ERE 0 is outside 1e-12–1"),
    (["limit", "1.73", "1.12", "--ere", "1.5"], "ERE 1.5 is outside 1e-12–1"),
    (["limit", "1.73", "1.12", "--ere", "1e-20"], "ERE 1e-20 is outside 1e-12–1"),
    (["limit", "1.73", "1.12", "--ere", "0.1,0.1,0.1"], "ERE has 3 values"),
    (["limit", "1.73", "1.12", "--ere", "x"], "--ere 'x'"),
    (["limit", "1.73", "1.12", "-t", "5"], "--terminals '5': choose 2"),
    (["limit", "1.73", "1.12", "-s", "missing.csv"], "not found"),
    (["limit", "1.3", "-s", "blackbody", "--concentration", "1e6"],
     "thermodynamic maximum 46,238.8×"),
    # any sunlight, not only a blackbody: 1/f = (1 AU / R_sun)² ≈ 46,200 (étendue; the solid
    # angle of the sun, De Vos 1980)
    (["limit", "1.3", "--concentration", "1e6"], "thermodynamic maximum 46,238.8×"),
    (["limit", "1.3", "-s", "am1.5d", "--concentration", "50000"], "thermodynamic maximum"),
    (["limit", "1.3", "--temperature", "-4"], "temperature -4 K"),
])
def test_bad_input_one_line_exit_2(args, message):
    res = run(*args)
    assert res.exit_code == 2
    assert message in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1
    assert "Traceback" not in res.output


def test_bad_csv_names_row(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("400,1\n500,2\n450,1\n")
    res = run("limit", "1.73", "1.12", "-s", str(path))
    assert res.exit_code == 2
    assert "row 3" in res.stderr


def test_version():
    res = run("--version")
    assert res.exit_code == 0 and "tandem" in res.stdout


def test_electrical_options_move_the_result_the_right_way():
    base = json.loads(run("limit", "1.6", "1.12", "--temperature", "300", "--json").stdout)
    coupled = json.loads(run("limit", "1.6", "1.12", "--temperature", "300", "--coupling", "1",
                             "--json").stdout)
    resistive = json.loads(run("limit", "1.6", "1.12", "--temperature", "300",
                               "--series-resistance", "2", "--json").stdout)
    assert base["limiting_subcell"] == "back"  # the front has excess current to pass on
    assert coupled["efficiency_pct"] > base["efficiency_pct"] > resistive["efficiency_pct"]
    res = run("limit", "1.34", "--shunt-resistance", "0")
    assert res.exit_code == 2 and "shunt resistance 0" in res.stderr


def test_full_concentration_is_computed_below_the_gap():
    # De Vos 1980: 40.7–40.8 % near 1.1 eV at full concentration (recalled); the exact emission
    # keeps Voc below the gap, where the Boltzmann diode used to pass it and the command refused
    res = run("limit", "1.1", "-s", "blackbody", "--temperature", "300K", "--concentration",
              "46238.8", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["efficiency_pct"] == pytest.approx(40.75, abs=0.1)
    assert 1.099 < data["voc_V"] <= 1.1


def test_gaps_take_their_unit_and_refuse_a_wavelength_or_a_dash_range():
    # 1.7eV and 1700meV are the gap 1.7 eV; 700 nm is refused with its energy (hc/λ =
    # 1239.84 eV·nm / 700 nm = 1.771 eV, CODATA constants); '1.6-1.8' is told the range syntax
    plain = json.loads(run("limit", "1.7", "--json").stdout)["efficiency_pct"]
    for text in ("1.7eV", "1700meV"):
        assert json.loads(run("limit", text, "--json").stdout)["efficiency_pct"] == plain
    res = run("limit", "700nm")
    assert res.exit_code == 2 and "700 nm is 1.771 eV" in res.output
    res = run("match", "perovskite-wide", "silicon", "--front-gaps", "1.6-1.8")
    assert res.exit_code == 2 and "a range is LO:HI:STEP, e.g. 1.6:1.8:0.02" in res.output


def test_on_off_flags_show_no_value_placeholder_in_help():
    lines = run("match", "--help").output.splitlines()
    for flag in ("--json", "--quiet", "--wide", "--large"):
        shown = [line for line in lines if f"{flag} " in line]
        assert shown and not any("VALUE" in line or "<bool>" in line for line in shown), shown
