"""Study folders never lose a user's files, and manifests cannot be turned against them.

Fault tests, one per finding: crafted manifest names, --overwrite on what is not a study,
concurrent writers, tampered manifests, interrupts during placement, unwritable places.
"""

import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

import tandem
import tandem.study.folders
from tandem.cli.app import app
from tandem.core import files
from tandem.study.sources import load_scenario
from tandem.study.scenario import manifest_checksum
from tandem.study.run import run_study
from tandem.study.folders import study_rows_equal, write_study

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]

TINY = """
title = "Tiny safety study"
question = "Does the folder survive?"

[spectrum]
source = "{source}"

[candidates]
front = {fronts}
back = ["silicon"]

[sweep]
front_gap_step_eV = 0.25
thickness_points = 6
"""


def tiny(folder: Path, source="am1.5g", fronts='["perovskite-wide"]') -> Path:
    path = folder / "tiny.toml"
    path.write_text(TINY.format(source=source, fronts=fronts))
    return path


@pytest.fixture
def study_folder(tmp_path):
    """A fresh study folder written by the tool, and its scenario."""
    path = tiny(tmp_path)
    out = write_study(run_study(load_scenario(path)), tmp_path / "study", figures=False)
    return path, out


def cli(*args):
    return runner.invoke(app, [str(a) for a in args])


def one_line_exit_2(res):
    assert res.exit_code == 2, res.output
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.output
    return res.stderr


# --- 1. a crafted manifest writes nowhere ------------------------------------------------

@pytest.mark.parametrize("bad_key", ["../../../../tmp/victim", "/tmp/victim", "a/b", "..", ".hidden"])
def test_manifest_absorber_names_are_never_paths(study_folder, tmp_path, bad_key):
    _, out = study_folder
    manifest = json.loads((out / "manifest.json").read_text())
    absorbers = manifest["inputs"]["absorbers"]
    absorbers[bad_key] = absorbers.pop("silicon")
    manifest["inputs"]["candidates"]["back"] = [bad_key]
    manifest["integrity"]["manifest_sha256"] = manifest_checksum(manifest)  # even "signed"
    crafted = tmp_path / "crafted.json"
    crafted.write_text(json.dumps(manifest))
    victim = Path("/tmp/victim.toml")
    victim.unlink(missing_ok=True)
    err = one_line_exit_2(cli("study", crafted, "--out", tmp_path / "o", "--accept-edited"))
    assert "not a plain name" in err
    assert not victim.exists() and not (tmp_path / "o").exists()


def test_manifest_table_and_scenario_names_are_never_paths(study_folder, tmp_path):
    _, out = study_folder
    manifest = json.loads((out / "manifest.json").read_text())
    manifest["inputs"]["scenario"]["name"] = "../../escape"
    crafted = tmp_path / "crafted.json"
    crafted.write_text(json.dumps(manifest))
    assert "plain 'name'" in one_line_exit_2(cli("study", crafted, "--accept-edited"))
    manifest = json.loads((out / "manifest.json").read_text())
    manifest["inputs"]["absorbers"]["silicon"]["table"] = {"name": "../../escape.csv", "text": "1,2"}
    crafted.write_text(json.dumps(manifest))
    err = one_line_exit_2(cli("study", crafted, "--out", tmp_path / "o2", "--accept-edited"))
    assert "not a plain file name" in err
    assert not (tmp_path.parent / "escape.csv").exists()


# --- 2. --overwrite replaces only a study folder ----------------------------------------

def test_overwrite_refuses_a_foreign_folder(study_folder, tmp_path):
    path, _ = study_folder
    thesis = tmp_path / "thesis"
    thesis.mkdir()
    (thesis / "chapter1.tex").write_text("data")
    err = one_line_exit_2(cli("study", path, "--out", thesis, "--overwrite", "-q"))
    assert "not a tandem study folder" in err
    assert (thesis / "chapter1.tex").read_text() == "data"


def test_an_overwrite_that_will_be_refused_is_refused_before_the_work(tmp_path):
    """The reason a folder may not be replaced is told at once, not after the build (minutes
    for a large study); it is checked again at placement."""
    target = tmp_path / "out"
    target.mkdir()
    built = []
    with pytest.raises(tandem.TandemInputError, match="not yours to replace"):
        files.place_folder(target, built.append, overwrite=True,
                           replaceable=lambda t: "not yours to replace")
    assert built == [] and target.is_dir()
    assert files.place_folder(target, built.append, overwrite=True,
                              replaceable=lambda t: None) == target and len(built) == 1


def test_overwrite_refuses_a_study_folder_holding_a_users_file(study_folder):
    path, out = study_folder
    (out / "notes.txt").write_text("mine")
    err = one_line_exit_2(cli("study", path, "--out", out, "--overwrite", "-q"))
    assert "'notes.txt', which 'tandem study' did not write" in err
    assert (out / "notes.txt").read_text() == "mine"


def test_overwrite_refuses_the_working_directory_a_file_and_input_folders(study_folder, tmp_path,
                                                                         monkeypatch):
    path, out = study_folder
    monkeypatch.chdir(out)  # even a real study folder, when it is where the user stands
    assert "working directory" in one_line_exit_2(cli("study", path, "--out", ".", "--overwrite"))
    assert "working directory" in one_line_exit_2(cli("study", path, "--out", out, "--overwrite"))
    monkeypatch.chdir(tmp_path)
    notes = tmp_path / "notes.txt"
    notes.write_text("keep")
    assert "is a file" in one_line_exit_2(cli("study", path, "--out", notes, "--overwrite"))
    assert notes.read_text() == "keep"
    # a folder holding the scenario being run is never replaced, even if it looks like a study
    proj = tmp_path / "proj"
    (proj / "figures").mkdir(parents=True)
    scen = tiny(proj)
    for name in ("design-table.csv", "design-table.md", "design-table.tex", "manifest.json"):
        (proj / name).write_bytes((out / name).read_bytes())
    (proj / "tiny.toml").unlink()
    scen = tiny(proj)
    err = one_line_exit_2(cli("study", scen, "--out", proj, "--overwrite"))
    assert "an input of this run" in err or "did not write" in err
    assert scen.is_file()


def test_overwrite_replaces_a_study_folder_whole(study_folder):
    path, out = study_folder
    res = cli("study", path, "--out", out, "--overwrite", "-q")
    assert res.exit_code == 0, res.output
    assert json.loads((out / "manifest.json").read_text())["format"].startswith("tandem-study")
    assert (out / "figures").is_dir()  # the new study, whole


# --- 3. the guard is checked at placement -----------------------------------------------

def test_a_folder_created_during_the_run_is_not_replaced(tmp_path):
    target = tmp_path / "late"

    def build(tmp):
        (tmp / "manifest.json").write_text("{}")
        target.mkdir()  # the user makes the folder while the study computes
        (target / "precious.txt").write_text("mine")

    with pytest.raises(tandem.TandemInputError, match="exists .it may have appeared"):
        files.place_folder(target, build)
    assert (target / "precious.txt").read_text() == "mine"
    assert not list(tmp_path.glob(".late.tandem-tmp-*"))


def test_two_concurrent_writers_one_wins_the_other_is_told(tmp_path):
    scen = tiny(tmp_path)
    out = tmp_path / "same"
    cmd = [sys.executable, str(ROOT / "cli.py"), "study", str(scen), "--out", str(out), "-q",
           "--no-figures"]
    procs = [subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                              cwd=tmp_path) for _ in range(2)]
    results = [(p.wait(timeout=300), p.stderr.read()) for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 2], results
    loser = next(text for code, text in results if code == 2)
    assert "exists" in loser or "another tandem run" in loser
    assert len(loser.strip().splitlines()) == 1
    assert json.loads((out / "manifest.json").read_text())["format"].startswith("tandem-study")
    assert not list(tmp_path.glob(".same.tandem-*"))


# --- 4. tampering is detected -------------------------------------------------------------

@pytest.mark.parametrize("edit", [
    lambda m: m["inputs"]["scenario"].update(text=m["inputs"]["scenario"]["text"].replace(
        'source = "am1.5g"', 'source = "am1.5g"\ntemperature_K = 330')),
    lambda m: m["inputs"]["absorbers"]["silicon"].update(
        text=m["inputs"]["absorbers"]["silicon"]["text"].replace("ere = 0.006", "ere = 0.6")),
    lambda m: m["integrity"].update(manifest_sha256="0" * 64),
    lambda m: m["integrity"].update(inputs_sha256=""),
    lambda m: m["record"].update(temperature_K=400),
    lambda m: m.update(terminals=4),
], ids=["scenario", "absorber-ere", "zeroed-hash", "empty-hash", "record", "extra-field"])
def test_an_edited_manifest_is_refused(study_folder, tmp_path, edit):
    _, out = study_folder
    manifest = json.loads((out / "manifest.json").read_text())
    edit(manifest)
    edited = tmp_path / "edited.json"
    edited.write_text(json.dumps(manifest))
    assert "checksum" in one_line_exit_2(cli("study", edited, "--out", tmp_path / "o"))
    assert not (tmp_path / "o").exists()


def test_a_missing_checksum_or_broken_structure_is_refused(study_folder, tmp_path):
    _, out = study_folder
    for edit in (lambda m: m.pop("integrity"), lambda m: m["inputs"].update(absorbers=[1, 2]),
                 lambda m: m["inputs"]["candidates"].update(back=["nowhere"]),
                 lambda m: m["inputs"].update(absorbers=7)):
        manifest = json.loads((out / "manifest.json").read_text())
        edit(manifest)
        edited = tmp_path / "broken.json"
        edited.write_text(json.dumps(manifest))
        one_line_exit_2(cli("study", edited, "--out", tmp_path / "o", "--accept-edited"))


def test_accept_edited_runs_the_edit_and_records_it(study_folder, tmp_path):
    _, out = study_folder
    manifest = json.loads((out / "manifest.json").read_text())
    scen = manifest["inputs"]["scenario"]
    scen["text"] = scen["text"].replace('source = "am1.5g"', 'source = "am1.5g"\ntemperature_K = 330')
    edited = tmp_path / "edited.json"
    edited.write_text(json.dumps(manifest))
    res = cli("study", edited, "--out", tmp_path / "o", "--accept-edited", "-q", "--no-figures")
    assert res.exit_code == 0, res.output
    new = json.loads((tmp_path / "o" / "manifest.json").read_text())
    assert new["edited_from"]["manifest_sha256"] == manifest["integrity"]["manifest_sha256"]
    assert new["record"]["temperature_K"] == 330
    # and the new manifest is itself whole and verifiable
    assert cli("study", tmp_path / "o" / "manifest.json", "--out", tmp_path / "o2", "-q",
               "--no-figures").exit_code == 0


# --- 5. manifests reproduce the study anywhere --------------------------------------------

def test_colliding_stems_get_unique_keys_and_reproduce(tmp_path):
    (tmp_path / "a").mkdir()
    text = tandem.load_absorber("perovskite-wide").path.read_text()
    (tmp_path / "a" / "perovskite-wide.toml").write_text(text.replace("nonradiative_voc_loss_V = 0.15",
                                                                      "nonradiative_voc_loss_V = 0.25"))
    scen = tiny(tmp_path, fronts='["perovskite-wide", "a/perovskite-wide.toml"]')
    study = run_study(load_scenario(scen))
    keys = sorted(r["front"] for r in study.rows)
    assert len(set(keys)) == 2 and keys[0] == "perovskite-wide"
    assert {r["front_file"] for r in study.rows} == {"perovskite-wide", "a/perovskite-wide.toml"}
    out = write_study(study, tmp_path / "s", figures=False)
    again = run_study(load_scenario(out / "manifest.json"))
    assert study_rows_equal(study.rows, again.rows)


def test_a_relative_spectrum_is_embedded_and_reruns_elsewhere(tmp_path):
    ref = tandem.reference_spectrum("am1.5g")
    csv = tmp_path / "sky.csv"
    csv.write_text("\n".join(f"{w},{0.9 * i}" for w, i in zip(ref.wavelength_nm, ref.irradiance)))
    study = run_study(load_scenario(tiny(tmp_path, source="sky.csv")))
    out = write_study(study, tmp_path / "s", figures=False)
    moved = tmp_path / "elsewhere"
    moved.mkdir()
    os.rename(out, moved / "s")
    csv.unlink()  # the original file is gone; the manifest carries it
    again = run_study(load_scenario(moved / "s" / "manifest.json"))
    assert study_rows_equal(study.rows, again.rows)


# --- 6. interrupts leave the old or the new study -----------------------------------------

@pytest.mark.parametrize("exchange", [True, False], ids=["renameat2", "two-renames"])
def test_an_interrupt_during_placement_leaves_a_whole_study(study_folder, monkeypatch, exchange):
    path, out = study_folder  # the old study was written without figures
    assert not (out / "figures").exists()
    # a background job (CI) may start with SIGINT ignored: give it Python's usual Ctrl-C handler
    previous = signal.signal(signal.SIGINT, signal.default_int_handler)
    real = files._renameat2

    def interrupted(src, dst, flags):
        os.kill(os.getpid(), signal.SIGINT)  # Ctrl-C arrives between the renames
        return real(src, dst, flags) if exchange else False

    monkeypatch.setattr(files, "_renameat2", interrupted)
    if not exchange:
        real_rename = os.rename

        def slow_rename(a, b):
            os.kill(os.getpid(), signal.SIGINT)
            return real_rename(a, b)

        monkeypatch.setattr(files.os, "rename", slow_rename)
    try:
        with pytest.raises(KeyboardInterrupt):  # delivered after placement, never swallowed
            write_study(run_study(load_scenario(path)), out, overwrite=True)
    finally:
        signal.signal(signal.SIGINT, previous)
    assert (out / "figures").is_dir() and (out / "manifest.json").is_file()  # the new one, whole
    assert not list(out.parent.glob(".study.tandem-*"))


def test_stale_temporary_folders_of_killed_runs_are_cleaned(study_folder):
    path, out = study_folder
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    stale = out.parent / f".study.tandem-tmp-{dead.pid}-deadbeef"
    stale.mkdir()
    (stale / "manifest.json").write_text("{}")
    live = out.parent / f".study.tandem-tmp-{os.getpid()}-cafe"  # a running writer's: kept
    live.mkdir()
    write_study(run_study(load_scenario(path)), out, overwrite=True, figures=False)
    assert not stale.exists() and live.exists()


# --- 7. file-system faults are one line -----------------------------------------------------

def test_an_unwritable_place_is_refused_before_computing(tmp_path):
    scen = tiny(tmp_path)
    err = one_line_exit_2(cli("study", scen, "--out", "/proc/tandem-study", "-q"))
    assert "cannot write in '/proc'" in err
    err = one_line_exit_2(cli("study", scen, "--out", tmp_path / "no" / "such" / "dir", "-q"))
    assert "does not exist" in err


def test_a_full_disk_during_writing_is_one_line_and_leaves_nothing(tmp_path, monkeypatch):
    import errno

    scen = tiny(tmp_path)

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device", "design-table.md")

    monkeypatch.setattr("tandem.study.folders.markdown_table", full)
    err = one_line_exit_2(cli("study", scen, "--out", tmp_path / "o", "-q"))
    assert "No space left on device" in err
    assert not (tmp_path / "o").exists() and not list(tmp_path.glob(".o.tandem-*"))
