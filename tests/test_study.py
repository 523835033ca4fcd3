"""Scenario files and study folders: round trip, malformed files, table formats, figures."""

import json
import re
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.study.sources import bundled_scenarios, load_scenario
from tandem.study.run import run_study
from tandem.study.folders import study_rows_equal, write_study

ROOT = Path(__file__).resolve().parents[1]

runner = CliRunner()

SMALL = """
# test scenario: two pairs, coarse sweep
title = "Small test study"
question = "Which of two fronts suits silicon?"

[spectrum]
source = "am1.5g"
temperature_K = 300

[stack]
reflectance = 0.02

[candidates]
front = ["perovskite-wide", "gainp"]
back = ["silicon"]

[sweep]
front_gap_step_eV = 0.05
thickness_points = 20

[map]
front_gap_range_eV = [1.5, 2.0, 0.05]
back_gap_range_eV = [0.9, 1.3, 0.05]

[report]
tolerance_pct = 1.0
"""


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    folder = tmp_path_factory.mktemp("scenario")
    path = folder / "small.toml"
    path.write_text(SMALL)
    scenario = load_scenario(path)
    study = run_study(scenario)
    out = write_study(study, folder / "out")
    return scenario, study, out


def test_at_least_three_bundled_scenarios_each_say_their_question():
    names = bundled_scenarios()
    assert len(names) >= 3
    for name, path in names.items():
        text = path.read_text()
        assert text.lstrip().startswith("# Question:")
        load_scenario(name)  # resolves every absorber and checks every field


def test_round_trip_through_manifest_reproduces_table(small):
    scenario, study, out = small
    again = run_study(load_scenario(out / "manifest.json"))
    assert study_rows_equal(study.rows, again.rows)
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["record"]["spectrum"]["integrated_W_m2"] == pytest.approx(1000.37, abs=0.01)
    assert set(manifest["inputs"]["absorbers"]) == {"perovskite-wide", "gainp", "silicon"}
    assert manifest["record"]["packages"]["numpy"]
    assert len(manifest["integrity"]["inputs_sha256"]) == 64
    # the written CSV is the same table
    csv = pd.read_csv(out / "design-table.csv")
    assert list(csv["front"]) == [r["front"] for r in study.rows]


def test_markdown_table_parses(small):
    _, study, out = small
    lines = [l for l in (out / "design-table.md").read_text().splitlines() if l.startswith("|")]
    widths = {l.count("|") for l in lines}
    assert len(widths) == 1 and len(lines) == 2 + len(study.rows)
    assert re.fullmatch(r"\|(---\|)+", lines[1])
    assert "not certified measurements" in (out / "design-table.md").read_text()


def test_latex_table_rows_balanced(small):
    _, study, out = small
    tex = (out / "design-table.tex").read_text()
    tabulars = re.findall(r"\\begin\{tabular\}\{([lrc]+)\}(.*?)\\end\{tabular\}", tex, re.S)
    assert len(tabulars) == 2  # two parts, each fitting a portrait page
    for spec, body in tabulars:
        assert len(spec) <= 11 and "\\toprule" in body and "\\bottomrule" in body  # booktabs
        rows = [r for r in body.split("\\midrule")[1].split("\\bottomrule")[0].split(r"\\")
                if r.strip()]
        assert len(rows) == len(study.rows)
        for row in rows + [body.split("\\toprule")[1].split("\\midrule")[0]]:
            assert row.count("&") == len(spec) - 1
            assert not re.search(r"(?<!\\)[%_#]", row)  # specials escaped
    assert "window from" in tex and tex.count(r"\begin{") == tex.count(r"\end{")


def test_figures_are_real_images(small):
    _, study, out = small
    pngs = sorted((out / "figures").glob("*.png"))
    assert {p.name for p in pngs} >= {"match-perovskite-wide-over-silicon.png", "gap-map.png"}
    for p in pngs:
        data = p.read_bytes()
        assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 30_000
        width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
        assert width > 600 and height > 400


def test_refuses_to_overwrite_and_leaves_folder(small, tmp_path):
    # its own folder: the module's shared study folder stays as the other tests expect it
    scenario, study, _ = small
    out = write_study(study, tmp_path / "own", figures=False)
    before = (out / "design-table.csv").read_bytes()
    with pytest.raises(tandem.TandemInputError, match="exists; choose another --out or pass --overwrite"):
        write_study(study, out)
    assert (out / "design-table.csv").read_bytes() == before
    assert write_study(study, out, overwrite=True, figures=False) == out
    assert not (out / "figures").exists()  # replaced whole, not merged


def test_manifest_records_whether_figures_were_written(small, tmp_path):
    _, study, with_figures = small
    without = write_study(study, tmp_path / "bare", figures=False)
    read = [json.loads((f / "manifest.json").read_text())["record"]["figures_written"]
            for f in (with_figures, without)]
    assert read == [True, False]


BAD = [
    ('title = "Small test study"\n', "", "'title' is missing"),
    ('source = "am1.5g"', 'source = "am9"', "field 'spectrum' cannot be used"),
    ("temperature_K = 300", "temperature_K = -3", "spectrum.temperature_K -3 K"),
    ('front = ["perovskite-wide", "gainp"]', 'front = ["perovskite-wide", "unobtainium"]',
     "'candidates.front' names 'unobtainium'"),
    ("[stack]\nreflectance = 0.02", "[stack]\nreflectance = 1.5", "'stack.reflectance' = 1.5"),
    ("[stack]", "[stack]\nterminals = 5", "'stack.terminals' = 5 is not 2, 3 or 4"),
    ("thickness_points = 20", "thickness_points = 2", "'sweep.thickness_points'"),
    ("front_gap_range_eV = [1.5, 2.0, 0.05]", "front_gap_range_eV = [2.0, 1.5, 0.05]",
     "'map.front_gap_range_eV'"),
    ("front_gap_range_eV = [1.5, 2.0, 0.05]", "front_gap_range_eV = [1.5, 2.0, 1e-7]",
     "'map.front_gap_range_eV' = [1.5, 2.0, 1e-07] has 5,000,001 points; give a coarser step"),
    # the key an earlier release read as [low, high, step] is refused with its new name
    ("front_gap_range_eV = [1.5, 2.0, 0.05]", "front_gaps_eV = [1.5, 2.0, 0.05]",
     "'map.front_gaps_eV' is now called map.front_gap_range_eV"),
    ("[report]", "[report]\ncolour = 1", "'report.colour' is not a known key"),
    ("[candidates]", "[candidate]", "'candidate' is not a known key"),
    # half a row was accepted (and rounded down)
    ("[report]", "[report]\ntop = 0.5", "'report.top' = 0.5 is not a whole number of rows"),
    # a map beyond memory (about 300 bytes a pair, as the map command measures it)
    ("front_gap_range_eV = [1.5, 2.0, 0.05]\nback_gap_range_eV = [0.9, 1.3, 0.05]",
     "front_gap_range_eV = [1.4, 2.3, 0.0002]\nback_gap_range_eV = [0.8, 1.5, 0.0002]",
     "'map' has 15,758,001 gap pairs: about 134 s and 4.6 GiB"),
    # the middle contact belongs to three terminals; layer stacks rank by two or four
    ("[report]", "[electrical]\nmiddle_resistance_ohm_cm2 = 2\n[report]",
     "'electrical.middle_resistance_ohm_cm2' applies to three terminals"),
    ("reflectance = 0.02\n\n[candidates]", "reflectance = 0.02\nterminals = 3\n\n[candidates]\n"
     "stacks = [\"organic-pair\"]", "'candidates.stacks' are ranked by 2 or 4 terminals"),
]


@pytest.mark.parametrize("old, new, message", BAD)
def test_malformed_scenario_one_line(tmp_path, old, new, message):
    assert old in SMALL
    path = tmp_path / "bad.toml"
    path.write_text(SMALL.replace(old, new))
    res = runner.invoke(app, ["study", str(path), "--out", str(tmp_path / "o")])
    assert res.exit_code == 2, res.output
    line = res.stderr.strip()
    assert len(line.splitlines()) == 1 and message in line
    assert "scenario file" in line or "spectrum" in line
    assert not (tmp_path / "o").exists()


def test_default_study_runs_from_the_cli(tmp_path):
    res = runner.invoke(app, ["study", "--out", str(tmp_path / "s"), "-q"])
    assert res.exit_code == 0, res.output
    assert "limits the current" in res.stdout and "not certified measurements" in res.stdout
    assert (tmp_path / "s" / "manifest.json").is_file()
    res = runner.invoke(app, ["study", "--out", str(tmp_path / "s")])
    assert res.exit_code == 2 and "--overwrite" in res.stderr


# --------------------------------------------------------------------------------------
# variants and loss breakdowns
# --------------------------------------------------------------------------------------


def test_variants_add_one_column_group_each_equal_to_a_run_under_that_variant(tmp_path):
    """A [[variants]] entry gives the same best design as the scenario rewritten with that
    change (consistency), in its own column group."""
    from tandem.study.tables import columns
    from tandem.study.sources import load_scenario
    from tandem.study.run import run_study

    text = (ROOT / "scenarios" / "thin-film-silicon-pair.toml").read_text()
    text = text.replace("thickness_points = 80", "thickness_points = 20")
    path = tmp_path / "v.toml"
    path.write_text(text)
    study = run_study(load_scenario(path))
    labels = [c.label for c in columns(study)]
    assert "50C: front gap [eV]" in labels and "5pct-reflection: 2T [%]" in labels
    hot = tmp_path / "hot.toml"
    hot.write_text(text.split("[[variants]]")[0].replace("temperature_K = 298.15",
                                                         "temperature_K = 323.15"))
    direct = run_study(load_scenario(hot)).rows[0]
    row = study.rows[0]
    assert row["variant1_efficiency_2t_pct"] == direct["efficiency_2t_pct"]
    assert row["variant1_front_thickness_nm"] == direct["front_thickness_nm"]
    assert row["variant1_efficiency_2t_pct"] < row["efficiency_2t_pct"]  # heat costs efficiency


@pytest.mark.parametrize("change, message", [
    ('name = "50C"\ntemperature_K = 323.15', 'name = "50C"\ntemperature_K = 50'),
    ('name = "50C"', 'name = "5pct-reflection"'),
    ('reflectance = 0.05', 'reflectance = 5'),
    ('name = "50C"', 'name = "50C"\ncolour = "red"'),
])
def test_bad_variants_are_one_line(change, message, tmp_path):
    from tandem.study.sources import load_scenario

    text = (ROOT / "scenarios" / "thin-film-silicon-pair.toml").read_text()
    path = tmp_path / "bad.toml"
    path.write_text(text.replace(change, message, 1))
    with pytest.raises(tandem.TandemInputError, match=r"variants\[\d\]"):
        load_scenario(path)


def test_the_study_writes_each_designs_loss_breakdown(small):
    import pandas as pd

    _, study, out = small
    table = pd.read_csv(out / "loss-breakdown.csv")
    for (front, back), part in table.groupby(["front", "back"]):
        assert part["share_pct"].sum() == pytest.approx(100.0, abs=1e-3)
        assert (out / "figures" / f"losses-{front}-over-{back}.png").stat().st_size > 10_000


def test_study_figures_and_captions_name_the_absorbers_not_their_file_keys(small):
    import re

    _, study, out = small
    report = (out / "report.html").read_text(encoding="utf-8")
    captions = re.findall(r"<figcaption>(.*?)\(<code>", report)
    for (front, back), r in study.results.items():
        title = f"{r.design.front.name} over {r.design.back.name}"
        assert sum(title in c for c in captions) == 2  # its match and its loss waterfall
        assert not any(f"{front} over {back}" in c for c in captions)


STACK_STUDY = """title = "Optics-lite pair against a real layer stack"
question = "How far does a real stack fall below the optics-lite design of the same absorbers?"

[spectrum]
source = "am1.5g"

[candidates]
front = ["perovskite-wide"]
back = ["silicon"]
stacks = ["all-thin-film-pair"]

[sweep]
thickness_points = 30
back_thickness_um = [160]
"""


def test_a_study_can_hold_layer_stacks_and_rerun_them_from_its_manifest(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(STACK_STUDY)
    study = run_study(load_scenario(path))
    row = next(r for r in study.rows if r.get("stack") == "all-thin-film-pair")
    direct = tandem.match_stack("all-thin-film-pair", points=30).summary()["best"]
    assert row["front_thickness_nm"] == direct["front_thickness_nm"]
    assert row["efficiency_2t_pct"] == direct["efficiency_2t_pct"]
    out = write_study(study, tmp_path / "out")
    assert (out / "figures" / "photons-all-thin-film-pair.png").stat().st_size > 10_000
    again = run_study(load_scenario(out / "manifest.json"))
    assert study_rows_equal(study.rows, again.rows)


def test_a_stack_reading_its_own_files_is_refused_in_a_study(tmp_path):
    stack = (ROOT / "stacks" / "all-thin-film-pair.toml").read_text()
    (tmp_path / "ag.csv").write_text("wavelength_nm,n,k\n300,0.1,1.5\n2000,0.5,12\n")
    (tmp_path / "mine.toml").write_text(stack.replace('"database:main/Ag/Johnson"', '"ag.csv"'))
    path = tmp_path / "s.toml"
    path.write_text(STACK_STUDY.replace('stacks = ["all-thin-film-pair"]', 'stacks = ["mine.toml"]'))
    with pytest.raises(tandem.TandemInputError, match="reads a file of its own"):
        load_scenario(path)


def test_a_stack_in_a_study_with_a_site_and_a_spread(tmp_path):
    # A stack row gets the same site energy and spread columns as a pair row, each equal to
    # the stack's own yield and spread jobs for its best design
    path = tmp_path / "s.toml"
    path.write_text(STACK_STUDY.replace('front = ["perovskite-wide"]', 'front = ["perovskite-wide"]')
                    .replace('stacks = ["all-thin-film-pair"]', 'stacks = ["organic-pair"]')
                    + '''
[site]
name = "Invented field"
latitude = 38.0
longitude = -4.0
timezone = "Etc/GMT-1"

[weather]
period = "day:2026-06-21"

[spread]
thickness_sigma_pct = 5
samples = 40
seed = 3
''')
    scenario = load_scenario(path)
    study = run_study(scenario)
    row = next(r for r in study.rows if r.get("stack") == "organic-pair")
    best = study.stacks["organic-pair"].best
    y = tandem.energy_yield_stack("organic-pair", scenario.series(), others=best.others,
                                  front_thicknesses_nm=[best.front_thickness_nm])
    assert row["energy_2t_kWh_m2"] == pytest.approx(float(y.sweep.energy_2t[0, 0]), abs=1e-3)
    s = tandem.fabrication_spread_stack("organic-pair", samples=40, seed=3, others=best.others,
                                        front_thickness_nm=best.front_thickness_nm)
    assert row["median_pct"] == s.summary()["median_pct"]


def test_one_back_thickness_list_serves_backs_of_different_ranges():
    # The bundled organic study lists 100–800 nm for an organic back (40–300 nm) and a tin-lead
    # perovskite (300–2000 nm): each back keeps the thicknesses in its own range, and says so
    study = run_study(load_scenario("low-cost-organic-pair"))
    backs = {r["back"]: r["back_thickness_um"] for r in study.rows}
    assert set(backs) == {"organic-narrow", "perovskite-snpb"}
    assert backs["organic-narrow"] <= 0.3 and backs["perovskite-snpb"] >= 0.3
    assert any("perovskite-snpb: back thickness 100, 150, 250 nm left out" in s for s in study.skipped)


def test_overwrite_never_deletes_a_figure_the_study_did_not_write(small, tmp_path):
    # a user's own PNG dropped into figures/ is not the study's: --overwrite refuses (it once
    # deleted it, since it looked at the file's suffix only); the study's own figures are listed
    # in its manifest
    import shutil

    _, study, _ = small
    out = write_study(study, tmp_path / "s")
    record = json.loads((out / "manifest.json").read_text())["record"]
    assert record["figure_files"] == sorted(p.name for p in (out / "figures").iterdir())
    mine = out / "figures" / "my-sketch.png"
    shutil.copy(out / "figures" / record["figure_files"][0], mine)
    with pytest.raises(tandem.TandemInputError, match="my-sketch.png', which 'tandem study' did not write"):
        write_study(study, out, overwrite=True)
    assert mine.is_file()
    mine.unlink()
    assert write_study(study, out, overwrite=True, figures=False) == out


def test_a_manifests_stack_text_never_names_a_file(tmp_path):
    # an edited manifest (checksums recomputed, or --accept-edited) whose stack text points an
    # n,k table at an absolute path once read that file from disk
    path = tmp_path / "s.toml"
    path.write_text(STACK_STUDY)
    study = run_study(load_scenario(path))
    out = write_study(study, tmp_path / "out", figures=False)
    (tmp_path / "secret.csv").write_text("wavelength_nm,n,k\n300,1.5,0\n2000,1.5,0\n")
    manifest = json.loads((out / "manifest.json").read_text())
    stack = manifest["inputs"]["stacks"]["all-thin-film-pair"]
    stack["text"] = stack["text"].replace('"database:main/Ag/Johnson"', f'"{tmp_path / "secret.csv"}"')
    (out / "manifest.json").write_text(json.dumps(manifest))
    from tandem.study.scenario import refuse_stack_files

    with pytest.raises(tandem.TandemInputError, match="reads a file of its own"):
        refuse_stack_files("all-thin-film-pair", stack["text"])
    with pytest.raises(tandem.TandemInputError, match="reads a file of its own"):
        run_study(load_scenario(out / "manifest.json", accept_edited=True))


def test_every_bundled_scenarios_candidates_can_all_be_swept():
    # each front and back of each bundled scenario has a front gap above some back's gap and at
    # least one of the listed back thicknesses in its range (one bundled study failed outright
    # on that before running a single pair); cheap: no sweep is run
    from tandem.study.run import back_thicknesses_for

    for name in bundled_scenarios():
        sc = load_scenario(name)
        backs = sc.sweep().back_thicknesses_nm
        for back in sc.backs:
            assert back_thicknesses_for(back, backs, []) != [], (name, back.key)
        for front in sc.fronts:
            assert any(front.gap_range_eV[1] > b.gap_eV for b in sc.backs), (name, front.key)


def test_a_three_terminal_study_ranks_by_its_own_column(tmp_path):
    text = SMALL.replace("reflectance = 0.02", "reflectance = 0.02\nterminals = 3").replace(
        "[report]", "[electrical]\nseries_resistance_ohm_cm2 = 1\nmiddle_resistance_ohm_cm2 = 5\n"
        "[report]")
    path = tmp_path / "three.toml"
    path.write_text(text)
    study = run_study(load_scenario(path))
    e3 = [r["efficiency_3t_pct"] for r in study.rows]
    assert e3 == sorted(e3, reverse=True)
    assert all(r["efficiency_2t_pct"] <= r["efficiency_3t_pct"] <= r["efficiency_4t_pct"]
               for r in study.rows)
    out = write_study(study, tmp_path / "out", figures=False)
    import pandas as pd

    assert "efficiency_3t_pct" in pd.read_csv(out / "design-table.csv").columns
    assert "3T [%]" in (out / "design-table.md").read_text()
