"""Hostile inputs to the newer features, written as a hostile user would try them: layer-stack
files, measured EQE files, regions and their scheduler addresses, hostile environments and a
full disk. Each ends in one line starting "error:", exit code 2, no traceback, and nothing
written (consistency tests of the door; the older commands' cases are in test_hostile.py)."""

from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

from references import mirror_stack
from tandem.cli.app import main

ROOT = Path(__file__).resolve().parents[1]
PAIR = (ROOT / "stacks" / "organic-pair.toml").read_text()
WAFER = (ROOT / "stacks" / "wide-gap-on-silicon-wafer.toml").read_text()
RECOMBINATION = 'name = "recombination layer"\nthickness_nm = 5\nnk = [1.9, 0.05]'
FRONT = 'thickness_nm = [40, 300]\nrole = "front"'
WAFER_BACK = 'thickness_nm = 160000\nrole = "back"\ncoherent = false'


#: Stack files, each with one thing wrong: name → (base text, old, new); the base is the
#: bundled organic pair (P) or the wafer stack (W).
STACK_EDITS = {
    "thickness-text": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", '= "5"')),
    "thickness-with-unit": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", '= "5nm"')),
    "thickness-zero": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", "= 0")),
    "thickness-huge": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", "= 1e308")),
    "thickness-bool": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", "= true")),
    "thickness-one-of-range": ("P", FRONT, FRONT.replace("[40, 300]", "[40]")),
    "thickness-empty-range": ("P", FRONT, FRONT.replace("[40, 300]", "[]")),
    "thickness-flat-range": ("P", FRONT, FRONT.replace("[40, 300]", "[40, 40]")),
    "thickness-negative-range": ("P", FRONT, FRONT.replace("[40, 300]", "[-40, 300]")),
    "thickness-text-range": ("P", FRONT, FRONT.replace("[40, 300]", '["thin", "thick"]')),
    "thickness-inf-range": ("P", FRONT, FRONT.replace("[40, 300]", "[40, inf]")),
    "thickness-table": ("P", RECOMBINATION, RECOMBINATION.replace("= 5", "= {nm = 5}")),
    "points-one": ("P", "points = 5", "points = 1"),
    "points-zero": ("P", "points = 5", "points = 0"),
    "points-fraction": ("P", "points = 5", "points = 7.5"),
    "points-text": ("P", "points = 5", 'points = "many"'),
    "points-negative": ("P", "points = 5", "points = -5"),
    "points-unswept": ("P", RECOMBINATION, RECOMBINATION + "\npoints = 5"),
    "nk-one-number": ("P", "nk = [1.9, 0.05]", "nk = [1.9]"),
    "nk-three-numbers": ("P", "nk = [1.9, 0.05]", "nk = [1.9, 0.05, 0.1]"),
    "nk-text-pair": ("P", "nk = [1.9, 0.05]", 'nk = ["a", "b"]'),
    "nk-zero-index": ("P", "nk = [1.9, 0.05]", "nk = [0, 0]"),
    "nk-negative-index": ("P", "nk = [1.9, 0.05]", "nk = [-1.9, 0.05]"),
    "nk-nan": ("P", "nk = [1.9, 0.05]", "nk = [nan, 0.05]"),
    "nk-huge-k": ("P", "nk = [1.9, 0.05]", "nk = [1.9, 1e300]"),
    "nk-bool": ("P", "nk = [1.9, 0.05]", "nk = true"),
    "nk-table": ("P", "nk = [1.9, 0.05]", "nk = {n = 1.9}"),
    "nk-empty-database": ("P", "nk = [1.9, 0.05]", 'nk = "database:"'),
    "nk-database-climbing": ("P", "nk = [1.9, 0.05]", 'nk = "database:main/../../../etc/passwd"'),
    "nk-absolute-path": ("P", "nk = [1.9, 0.05]", 'nk = "/etc/passwd"'),
    "nk-climbing-path": ("P", "nk = [1.9, 0.05]", 'nk = "../../outside.csv"'),
    "nk-csv-missing": ("P", "nk = [1.9, 0.05]", 'nk = "nowhere.csv"'),
    "nk-csv-one-column": ("P", "nk = [1.9, 0.05]", 'nk = "one-column.csv"'),
    "nk-csv-empty": ("P", "nk = [1.9, 0.05]", 'nk = "empty.csv"'),
    "nk-csv-negative-k": ("P", "nk = [1.9, 0.05]", 'nk = "negative-k.csv"'),
    "nk-csv-outside-light": ("P", "nk = [1.9, 0.05]", 'nk = "far-infrared.csv"'),
    "nk-csv-four-columns": ("P", "nk = [1.9, 0.05]", 'nk = "four-columns.csv"'),
    "nk-csv-repeated": ("P", "nk = [1.9, 0.05]", 'nk = "repeated.csv"'),
    "name-number": ("P", 'name = "recombination layer"', "name = 5"),
    "name-empty": ("P", 'name = "recombination layer"', 'name = ""'),
    "absorber-unknown": ("P", 'absorber = "organic-narrow"', 'absorber = "unobtainium"'),
    "absorber-climbing": ("P", 'absorber = "organic-narrow"', 'absorber = "../../etc/passwd"'),
    "role-number": ("P", 'role = "back"', "role = 5"),
    "role-capitals": ("P", 'role = "back"', 'role = "Back"'),
    "coherent-number": ("P", RECOMBINATION, RECOMBINATION + "\ncoherent = 1"),
    "ambient-zero": ("P", 'title = "', 'ambient_index = 0\ntitle = "'),
    "ambient-negative": ("P", 'title = "', 'ambient_index = -1\ntitle = "'),
    "ambient-text": ("P", 'title = "', 'ambient_index = "air"\ntitle = "'),
    "exit-nan": ("P", 'title = "', 'exit_index = nan\ntitle = "'),
    "spread-negative": ("P", RECOMBINATION, RECOMBINATION + "\nthickness_spread_nm = -5"),
    "spread-huge": ("P", RECOMBINATION, RECOMBINATION + "\nthickness_spread_nm = 1e6"),
    "layer-not-table": ("P", 'title = "', 'layer = ["a"]\ntitle = "'),
    "duplicate-key": ("P", RECOMBINATION, RECOMBINATION + "\nthickness_nm = 6"),
    "rear-reflectance-above-one": ("W", WAFER_BACK, WAFER_BACK + "\nrear_reflectance = 2"),
    "rear-reflectance-text": ("W", WAFER_BACK, WAFER_BACK + '\nrear_reflectance = "mirror"'),
    "trapping-number": ("W", WAFER_BACK, WAFER_BACK + "\nlight_trapping = 4"),
    "wafer-swept-too-wide": ("W", "thickness_nm = 160000", "thickness_nm = [1, 1e9]"),
    "front-texture-unknown": ("W", WAFER_BACK, WAFER_BACK + '\nfront_texture = "fuzzy"'),
}

#: Whole stack files that are wrong as files
STACK_FILES = {
    "empty.toml": b"",
    "binary.toml": bytes(range(256)),
    "latin1.toml": PAIR.replace("Glass", "Gl\u00e4ss").encode("latin-1"),
    "only-title.toml": b'title = "nothing"\n',
    "no-absorbers.toml": b'title = "x"\n[[layer]]\nname = "glass"\nthickness_nm = 1e6\nnk = 1.5\n'
                         b"coherent = false\n",
    "mirror-100.toml": mirror_stack(100).encode(),  # 203 layers: about 4 GiB, refused without --large
}


def stack_text(base: str, old: str, new: str) -> str:
    text = PAIR if base == "P" else WAFER
    assert old in text, old
    return text.replace(old, new, 1)


STACK_CASES = [("match", "--stack", f"{name}.toml") for name in STACK_EDITS] + [
    ("match", "--stack", name) for name in STACK_FILES] + [
    ("match", "--stack", "folder"), ("spread", "--stack", "mirror-100.toml"),
    ("spread", "--stack", "nk-nan.toml"), ("spread", "--stack", "organic-pair", "--samples", "0"),
    ("yield", "--stack", "nk-nan.toml", "--latitude", "40", "--longitude", "0"),
    ("yield", "--stack", "organic-pair", "--latitude", "40", "--longitude", "0",
     "--front-gaps", "1.7"),
    ("region", "--stack", "nk-nan.toml", "--latitudes", "0:0:1", "--longitudes", "0:0:1"),
    ("match", "--stack", "organic-pair", "--budget", "budget.xlsx"),
    ("match", "--stack", "organic-pair", "--budget", "nodir/budget.csv"),
    ("match", "--stack", "organic-pair", "--terminals", "4"),
    ("match", "--stack", "organic-pair", "--reflectance", "0.05"),
]

EQE_OK = "wavelength_nm,eqe\n" + "".join(f"{w},0.8\n" for w in range(300, 1201, 20))
#: Measured EQE files, each wrong in one way (used as the front's, the back's a good one)
EQE_FILES = {
    "eqe-empty.csv": "",
    "eqe-header-only.csv": "wavelength_nm,eqe\n",
    "eqe-one-row.csv": "wavelength_nm,eqe\n500,0.8\n",
    "eqe-text.csv": "wavelength_nm,eqe\n400,high\n500,low\n",
    "eqe-negative.csv": "wavelength_nm,eqe\n400,-0.2\n500,0.8\n600,0.8\n",
    "eqe-over-100.csv": "wavelength_nm,eqe\n400,150\n500,80\n600,80\n",
    "eqe-nan.csv": "wavelength_nm,eqe\n400,nan\n500,0.8\n600,0.8\n",
    "eqe-inf.csv": "wavelength_nm,eqe\n400,inf\n500,0.8\n600,0.8\n",
    "eqe-conflicting.csv": "wavelength_nm,eqe\n400,0.8\n400,0.2\n500,0.8\n",
    "eqe-repeated.csv": "wavelength_nm,eqe\n400,0.8\n500,0.8\n500,0.8\n600,0.8\n",
    "eqe-zero-wavelength.csv": "wavelength_nm,eqe\n0,0.8\n500,0.8\n600,0.8\n",
    "eqe-negative-wavelength.csv": "wavelength_nm,eqe\n-400,0.8\n500,0.8\n600,0.8\n",
    "eqe-far-infrared.csv": "wavelength_nm,eqe\n50000,0.8\n60000,0.8\n70000,0.8\n",
    "eqe-one-column.csv": "eqe\n0.8\n0.8\n0.8\n",
    "eqe-all-zero.csv": "wavelength_nm,eqe\n400,0\n500,0\n600,0\n",
    "eqe-semicolons.csv": "wavelength_nm;eqe\n400;0,8\n500;0,8\n",
}
EQE_BINARY = {"eqe-binary.csv": bytes(range(256)),
              "eqe-latin1.csv": "longueur d'onde (\u00b5m),eqe\n0.4,0.8\n".encode("latin-1")}

EQE_CASES = [("eqe", name, "eqe-ok.csv") for name in [*EQE_FILES, *EQE_BINARY]] + [
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--voc", "-1,1"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--voc", "1.1"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--voc", "1.1,0.7,0.5"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--voc", "1100mV,700mV"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--temperature", "25"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--spectrum", "nowhere.csv"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--front-thickness", "-1um"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--front-absorber", "unobtainium"),
    ("eqe", "eqe-ok.csv", "eqe-ok.csv", "--plot", "nodir/eqe.png"),
    ("eqe", "eqe-ok.csv"), ("eqe", "folder", "eqe-ok.csv"),
]

REGION = ("region", "perovskite-wide", "silicon")
ONE = ("--latitudes", "40:40:1", "--longitudes", "0:0:1")
SITES = {
    "sites-no-latitude.csv": "name,longitude\na,0\n",
    "sites-duplicate.csv": "name,latitude,longitude\na,40,0\na,41,0\n",
    "sites-climbing-name.csv": "name,latitude,longitude\n../../escape,40,0\n",
    "sites-slash-name.csv": "name,latitude,longitude\na/b,40,0\n",
    "sites-empty-name.csv": "name,latitude,longitude\n,40,0\n",
    "sites-latitude-91.csv": "name,latitude,longitude\na,91,0\n",
    "sites-longitude-181.csv": "name,latitude,longitude\na,40,181\n",
    "sites-text-latitude.csv": "name,latitude,longitude\na,north,0\n",
    "sites-empty.csv": "",
    "sites-header-only.csv": "name,latitude,longitude\n",
    "sites-short-row.csv": "name,latitude,longitude\na,40\n",
    "sites-inf.csv": "name,latitude,longitude\na,inf,0\n",
    "sites.json": "[1, 2, 3]",
    "sites.txt": "name latitude longitude\na 40 0\n",
}
REGION_CASES = [(*REGION, "--sites", name) for name in SITES] + [
    (*REGION, *ONE, "--workers", "-1"), (*REGION, *ONE, "--workers", "many"),
    (*REGION, *ONE, "--workers", "1024"), (*REGION, *ONE, "--step", "0"),
    (*REGION, *ONE, "--step", "-60"), (*REGION, *ONE, "--step", "1e9"),
    (*REGION, *ONE, "--period", "year"), (*REGION, *ONE, "--period", "decade:2020"),
    (*REGION, *ONE, "--out", "a-file.txt"), (*REGION, *ONE, "--out", ""),
    (*REGION, *ONE, "--out", "nodir/r"), (*REGION, *ONE, "--bifacial", "--row-height", "-1"),
    (*REGION, *ONE, "--bifacial", "--pitch", "0"), (*REGION, *ONE, "--bifacial", "--gcr", "0"),
    (*REGION, *ONE, "--tilt", "100"), (*REGION, *ONE, "--albedo", "-0.1"),
    (*REGION, *ONE, "--front-gaps", "a:b:c"), (*REGION, *ONE, "--points", "1"),
    (*REGION, *ONE, "--temperature", "25"), (*REGION, *ONE, "--back-thickness", "160"),
    (*REGION, "--latitudes", "40:30:1", "--longitudes", "0:0:1"),
    (*REGION, "--latitudes", "40:40:1"), (*REGION, *ONE, "--sites", "sites-duplicate.csv"),
    (*REGION, "--scenario", "unobtainium", *ONE), (*REGION, *ONE, "--out", " "),
    ("study", "--out", ""), ("map", "-o", " "),
]
SCHEDULERS = ["http://127.0.0.1:8786", "not a url", "inproc://x", "tcp://", "tcp://host",
              "tcp://127.0.0.1:99999", "tcp://127.0.0.1:1/path", "udp://127.0.0.1:8786",
              "tcp://[::1", ":8786", "tcp://127.0.0.1:-1", "tcp://user@127.0.0.1:8786",
              "ws://127.0.0.1:8786", "tcp://127.0.0.1:8786?x=1", "tcp://127.0.0.1:8786#frag"]
SCHEDULER_CASES = [(*REGION, *ONE, "--period", "day:2026-06-21", "--scheduler", s)
                   for s in SCHEDULERS]

CASES = STACK_CASES + EQE_CASES + REGION_CASES + SCHEDULER_CASES


def write_inputs(folder: Path) -> None:
    for name, (base, old, new) in STACK_EDITS.items():
        (folder / f"{name}.toml").write_text(stack_text(base, old, new))
    for name, data in STACK_FILES.items():
        (folder / name).write_bytes(data)
    (folder / "folder").mkdir()
    (folder / "one-column.csv").write_text("wavelength_nm\n400\n500\n")
    (folder / "empty.csv").write_text("")
    (folder / "negative-k.csv").write_text("wavelength_nm,n,k\n300,1.9,-0.1\n1200,1.9,-0.1\n")
    (folder / "far-infrared.csv").write_text("wavelength_nm,n,k\n50000,1.9,0\n60000,1.9,0\n")
    (folder / "four-columns.csv").write_text("wavelength_nm,n,k,x\n300,1.9,0.1,7\n1200,1.9,0.1,7\n")
    (folder / "repeated.csv").write_text("wavelength_nm,n,k\n300,1.9,0.1\n300,2.0,0.1\n1200,1.9,0\n")
    (folder / "eqe-ok.csv").write_text(EQE_OK)
    for name, text in EQE_FILES.items():
        (folder / name).write_text(text)
    for name, data in EQE_BINARY.items():
        (folder / name).write_bytes(data)
    for name, text in SITES.items():
        (folder / name).write_text(text)
    (folder / "a-file.txt").write_text("the user's own notes")


def case_id(args: tuple) -> str:
    """A case's command with the shared site options left out (ids stay short and unique)."""
    return " ".join(a for a in args if a not in ONE and a not in REGION[1:])[:80]


# a numpy warning would print lines of its own before the one-line error
@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("args", CASES, ids=[case_id(c) for c in CASES])
def test_a_hostile_input_to_a_newer_feature_is_one_line(args, tmp_path, monkeypatch, capsys):
    # through the console entry point itself (framework errors are one line there too)
    write_inputs(tmp_path)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(sys, "argv", ["tandem", *args])
    before = {p: p.stat().st_mtime_ns for p in tmp_path.rglob("*")}
    with pytest.raises(SystemExit) as ended:
        main()
    out, err = capsys.readouterr()
    assert ended.value.code == 2, (ended.value.code, (out + err)[-800:])
    lines = [line for line in err.strip().splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:"), err
    after = {p: p.stat().st_mtime_ns for p in tmp_path.rglob("*")}
    assert after == before, f"written or changed: {sorted(set(after) ^ set(before))}"


# --- hostile environments: a real process, as a shell starts it ---------------------------

def tandem_in_shell(command: str, cwd: Path, env: dict | None = None, timeout: float = 120):
    """``tandem ARGS`` run by bash (redirections and ulimits in ``command``, $TANDEM the
    interpreter and module)."""
    tandem = f"{shlex.quote(sys.executable)} -m tandem"
    return subprocess.run(["bash", "-c", command.replace("$TANDEM", tandem)], cwd=cwd,
                          capture_output=True, env={**os.environ, **(env or {})}, timeout=timeout)


ENVIRONMENTS = {
    "ascii output": {"PYTHONIOENCODING": "ascii"},
    "latin-1 output": {"PYTHONIOENCODING": "latin-1"},
    "C locale": {"LC_ALL": "C", "LANG": "C"},
    "no columns": {"COLUMNS": "0"},
    "columns not a number": {"COLUMNS": "wide"},
    "negative columns": {"COLUMNS": "-5"},
    "dumb terminal": {"TERM": "dumb"},
    "no colour": {"NO_COLOR": "1"},
    "forced colour": {"FORCE_COLOR": "1"},
    "no home": {"HOME": "/nonexistent"},
    "temporary folder missing": {"TMPDIR": "/nonexistent/tmp"},
    "matplotlib config unwritable": {"MPLCONFIGDIR": "/proc/forbidden"},
}


@pytest.mark.parametrize("name", ENVIRONMENTS)
def test_a_hostile_environment_still_gives_one_line_for_a_bad_input(name, tmp_path):
    # a thickness with a µ in its hint: the error line must survive any encoding
    done = tandem_in_shell("$TANDEM match perovskite-wide silicon --back-thickness 5000um "
                           "--front-gaps 1.7", tmp_path, ENVIRONMENTS[name])
    # colours are what FORCE_COLOR asks for; the line under them is what counts
    err = re.sub(r"\x1b\[[0-9;]*m", "", done.stderr.decode("utf-8", "replace"))
    assert done.returncode == 2, err[-1500:]
    lines = [line for line in err.strip().splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:"), err
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("name", ENVIRONMENTS)
def test_a_hostile_environment_still_runs_a_good_command(name, tmp_path):
    done = tandem_in_shell("$TANDEM limit 1.73 1.12 --plot l.png", tmp_path, ENVIRONMENTS[name])
    err = done.stderr.decode("utf-8", "replace")
    assert done.returncode == 0 and "Traceback" not in err, err[-1500:]
    assert (tmp_path / "l.png").stat().st_size > 1000


@pytest.mark.parametrize("command", [
    "$TANDEM limit 1.34 | head -c 1 > /dev/null",  # the reader leaves after one byte
    "$TANDEM absorbers | head -c 1 > /dev/null",
    "$TANDEM limit 1.34 --json | head -c 1 > /dev/null",
    "$TANDEM limit 1.34 <&-",  # no standard input
    "$TANDEM limit 1.34 2>&- >/dev/null",  # no standard error
])
def test_a_closed_or_broken_stream_ends_quietly(command, tmp_path):
    # quietly: nothing on stderr; exit 0, or 1 as the Python documentation advises for a
    # broken pipe (signal module, "Note on SIGPIPE"), or 141 where SIGPIPE ended it
    done = tandem_in_shell("set -o pipefail; " + command, tmp_path)
    err = done.stderr.decode("utf-8", "replace")
    assert not err.strip(), err[-1500:]
    assert done.returncode in (0, 1, 141), (done.returncode, err)


def test_an_output_to_a_full_device_is_one_line(tmp_path):
    # /dev/full: every write fails with ENOSPC
    done = tandem_in_shell("$TANDEM limit 1.34 > /dev/full", tmp_path)
    err = done.stderr.decode("utf-8", "replace")
    assert done.returncode == 2, (done.returncode, err[-1500:])
    lines = [line for line in err.strip().splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:") and "Traceback" not in err, err


# --- a full disk: files may grow to 2 KiB at most (``ulimit -f``; Python ignores SIGXFSZ,
# so a write past it fails with EFBIG as it would with ENOSPC) -------------------------------

FULL_DISK = {
    "limit figure": ("limit 1.73 1.12 --plot l.png", ["l.png"]),
    "limit waterfall": ("limit 1.73 1.12 --losses w.svg", ["w.svg"]),
    "map tables": ("map --front 1.5:2.0:0.005 --back 0.9:1.3:0.005 -o m -q", ["m.csv", "m.parquet",
                                                                               "m.png", "m.svg"]),
    "match figure": ("match perovskite-wide silicon --front-gaps 1.7 --points 10 --plot p.png -q",
                     ["p.png"]),
    "stack budget": ("match --stack organic-pair --points 8 --budget b.nc --plot s.png -q",
                     ["b.nc", "s.png"]),
    "spread figure": ("spread perovskite-wide silicon --samples 200 --plot s.png -q", ["s.png"]),
    "absorber figure": ("absorbers silicon --plot a.png", ["a.png"]),
    "study folder": ("study low-cost-organic-pair --out s -q", ["s"]),
    "region folder": ("region perovskite-wide silicon --latitudes 40:40:1 --longitudes 0:0:1 "
                      "--period day:2026-06-21 --points 4 --out r -q --workers 1", ["r"]),
}


def in_full_disk(args: str, folder: Path, kib: int = 2):
    import matplotlib.font_manager  # noqa: F401  (its font cache made here, not under the limit)

    return tandem_in_shell(f"ulimit -f {kib}; $TANDEM {args}", folder, timeout=300)


@pytest.mark.parametrize("name", FULL_DISK)
def test_a_full_disk_is_one_line_and_leaves_nothing_half_written(name, tmp_path):
    args, outputs = FULL_DISK[name]
    done = in_full_disk(args, tmp_path)
    err = done.stderr.decode("utf-8", "replace")
    assert done.returncode == 2, (done.returncode, err[-1500:])
    lines = [line for line in err.strip().splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:") and "Traceback" not in err, err
    left = [p.name for p in tmp_path.iterdir()]
    assert not any(out in left for out in outputs), f"left behind: {left}"
    assert not left, f"scratch files left behind: {left}"



def test_a_full_disk_keeps_a_regions_whole_site_records_for_the_rerun(tmp_path):
    # a region's sites are stored as they finish (each record small and whole); when its
    # tables cannot be written the line says which file, and that the sites are kept
    import json

    args = ("region perovskite-wide silicon --latitudes 40:41:1 --longitudes 0:0:1 --period "
            "day:2026-06-21 --points 4 --out r -q --workers 1")
    done = in_full_disk(args, tmp_path, kib=120)  # room for the store, not the 180 KiB figure
    err = done.stderr.decode("utf-8", "replace")
    lines = [line for line in err.strip().splitlines() if line.strip()]
    assert done.returncode == 2 and len(lines) == 1, err
    assert "cannot write" in err and "region." in err and "2 sites computed are kept" in err, err
    folder = tmp_path / "r"
    assert not [p.name for p in folder.iterdir() if p.name.startswith("region.") and
                p.name != "region.json"], list(folder.iterdir())
    assert not [p for p in folder.rglob(".*") if p.is_file()], "temporary files left behind"
    import sqlite3
    from contextlib import closing

    with closing(sqlite3.connect(folder / "sites.sqlite")) as db:
        records = [json.loads(text) for (text,) in db.execute("SELECT record FROM site")]
    assert len(records) == 2  # whole
    again = tandem_in_shell(f"$TANDEM {args} --json", tmp_path)
    assert again.returncode == 0, again.stderr.decode()[-1500:]
    summary = json.loads(again.stdout)
    assert len(summary["resumed"]) == 2 and not summary["computed"], summary
