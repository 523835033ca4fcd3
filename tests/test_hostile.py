"""Hostile inputs across every command: one clear line, exit code 2, no traceback, nothing
written (consistency tests of the door; each case is a finding or a neighbour of one)."""

import errno
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from tandem.cli.app import app

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]
SILICON = (ROOT / "absorbers" / "silicon.toml").read_text()
PVK = (ROOT / "absorbers" / "perovskite-wide.toml").read_text()
G = ["--front-gaps", "1.7:1.7:0.01", "--points", "10"]

STACK = (ROOT / "stacks" / "all-thin-film-pair.toml").read_text()
#: Broken stack files: each one field wrong (name → (old, new) in the bundled pair).
STACK_FAULTS = {
    "two-fronts": ('role = "back"', 'role = "front"'),
    "no-back": ('role = "back"', 'role = "parasitic"'),
    "coherent-glass": ("coherent = false", "coherent = true"),
    "negative": ("thickness_nm = 120", "thickness_nm = -120"),
    "reversed-range": ("thickness_nm = [150, 1200]", "thickness_nm = [1200, 150]"),
    "outside-absorber": ("thickness_nm = [150, 1200]", "thickness_nm = [150, 12000]"),
    "typo-key": ("coherent = false", "coherant = false"),
    "unknown-db": ('"database:main/Ag/Johnson"', '"database:main/Ag/Nobody"'),
    "missing-csv": ('"database:main/Ag/Johnson"', '"ag.csv"'),
    "bad-csv": ('"database:main/Ag/Johnson"', '"bad.csv"'),
    "negative-k": ("nk = [2.0, 0.05]", "nk = [2.0, -0.05]"),
    "nk-and-absorber": ('absorber = "perovskite-snpb"', 'absorber = "perovskite-snpb"\nnk = 2.0'),
    "gap-outside": ('absorber = "perovskite-wide"', 'absorber = "perovskite-wide"\ngap_eV = 2.5'),
    "no-title": ("title = ", "heading = "),
    "wafer-trapping-front": ('role = "front"', 'role = "front"\nlight_trapping = "lambertian"'),
    "nan-thickness": ("thickness_nm = 120", "thickness_nm = nan"),
    "inf-index": ("nk = 1.52", "nk = inf"),
    "huge-points": ("thickness_nm = [150, 1200]", "thickness_nm = [150, 1200]\npoints = 1e9"),
}

CASES = [
    # limit: gaps, spectra, electrical options, light
    ("limit", "-1"), ("limit", "0"), ("limit", "nan"), ("limit", "inf"), ("limit", "1e300"),
    ("limit", "1.7", "1.7"), ("limit", "1.1", "1.7"), ("limit", "1", "2", "3"), ("limit", "5"),
    ("limit", "4.42"), ("limit", "0.2"), ("limit", "1.34", "--ere", "0"),
    ("limit", "1.34", "--ere", "1.5"), ("limit", "1.34", "--ere", "1e-320"),
    ("limit", "1.34", "--ere", "abc"), ("limit", "1.73", "1.12", "--ere", "0.1,0.1,0.1"),
    ("limit", "1.34", "--ideality", "0"), ("limit", "1.34", "--ideality", "1e300"),
    ("limit", "1.34", "--ideality", "nan"), ("limit", "1.34", "--temperature", "25"),
    ("limit", "1.34", "--temperature", "-3"), ("limit", "1.34", "--temperature", "1e9"),
    ("limit", "1.34", "--temperature", "300F"), ("limit", "1.34", "--temperature", "warm"),
    ("limit", "1.34", "--temperature", "nanK"), ("limit", "1.34", "-t", "3"),
    ("limit", "1.34", "-s", "am9"), ("limit", "1.34", "-s", "nowhere.csv"),
    ("limit", "1.34", "--concentration", "0"), ("limit", "1.34", "--concentration", "1e308"),
    ("limit", "1.34", "--concentration", "-5"), ("limit", "1.34", "--irradiance", "1e308"),
    ("limit", "1.34", "--irradiance", "1e-320"), ("limit", "1.34", "--irradiance", "0"),
    ("limit", "1.34", "-s", "blackbody", "--sun-temperature", "1"),
    ("limit", "1.34", "-s", "blackbody", "--sun-temperature", "1e300"),
    ("limit", "1.34", "-s", "blackbody", "--concentration", "1e6"),
    ("limit", "1.1", "-s", "blackbody", "--concentration", "46239"),  # above 1/f
    ("limit", "1.34", "--coupling", "2"), ("limit", "1.34", "--coupling", "-1"),
    ("limit", "1.34", "--series-resistance", "-1"), ("limit", "1.34", "--series-resistance", "inf"),
    ("limit", "1.34", "--shunt-resistance", "0"), ("limit", "1.34", "--front-index", "0.5"),
    ("limit", "1.34", "--front-index", "100"), ("limit", "1.34", "--reflectance", "1"),
    ("limit", "1.34", "--reflectance", "-0.1"), ("limit", "1.34", "--reflectance", "r.csv"),
    ("limit", "1.34", "--plot", "out.xyz"), ("limit", "1.34", "--plot", "nodir/out.png"),
    ("limit", "1.34", "-s", "blinding.csv"), ("limit", "1.34", "-s", "starless.csv"),
    ("match", "perovskite-wide", "silicon", "--back-thickness", "1e308um", "--front-gaps", "1.7"),
    # absorbers
    ("absorbers", "unobtainium"), ("absorbers", "nowhere.toml"), ("absorbers", "x" * 300),
    ("absorbers", "silicon", "--plot", "a.bmp"),
    # match: thicknesses, gaps, ranges, losses, options
    ("match", "perovskite-wide", "silicon", "--back-thickness", "160", *G),
    ("match", "perovskite-wide", "silicon", "--back-thickness", "5000um", *G),
    ("match", "perovskite-wide", "silicon", "--back-thickness", "-1um", *G),
    ("match", "perovskite-wide", "silicon", "--back-thickness", "abc", *G),
    ("match", "perovskite-wide", "silicon", "--front-thickness", "5um:20um", "--front-gaps", "1.7"),
    ("match", "perovskite-wide", "silicon", "--front-thickness", "500:100", "--front-gaps", "1.7"),
    ("match", "perovskite-wide", "silicon", "--front-thickness", "1e-300:1e300"),
    ("match", "perovskite-wide", "silicon", "--front-gaps", "1.55:1.55:0.01"),
    ("match", "perovskite-wide", "silicon", "--front-gaps", "1.6:2.3:1e-9"),
    ("match", "perovskite-wide", "silicon", "--front-gaps", "1.6:inf:0.01"),
    ("match", "perovskite-wide", "silicon", "--front-gaps", "a:b:c"),
    ("match", "perovskite-wide", "silicon", "--points", "2", "--front-gaps", "1.7"),
    ("match", "perovskite-wide", "silicon", "--points", "10000000", "--front-gaps", "1.7"),
    ("match", "perovskite-wide", "silicon", "--top", "0", *G),
    ("match", "perovskite-wide", "silicon", "--reflectance", "1.5", *G),
    ("match", "perovskite-wide", "silicon", "--reflectance", "nowhere.csv", *G),
    ("match", "perovskite-wide", "silicon", "--temperature", "25", *G),
    ("match", "perovskite-wide", "silicon", "--ere", "2", *G),
    ("match", "perovskite-wide", "silicon", "--plot", "x.txt", *G),
    ("match", "unobtainium", "silicon"), ("match", "silicon"),
    ("match", "bad-alpha.toml", "silicon", *G), ("match", "bad-deficit.toml", "silicon", *G),
    ("match", "bad-urbach.toml", "silicon", *G), ("match", "bad-index.toml", "silicon", *G),
    ("match", "bad-range.toml", "silicon", *G), ("match", "nested.toml", "silicon", *G),
    ("match", "latin1.toml", "silicon", *G),
    # map
    ("map", "--front", "1.4:1.0:0.01"), ("map", "--front", "1.4:2.3:0"), ("map", "--front", "x"),
    ("map", "--front", "1:3:0.0001", "--back", "0.5:1.5:0.0001"), ("map", "--back", "-1"),
    ("map", "--front", "1.4:inf:0.01"), ("map", "-t", "5"), ("map", "--ere", "0"),
    ("map", "-o", ""), ("map", "-o", "nodir/m"), ("map", "--front-absorber", "silicon"),
    ("map", "--tolerance", "-1", "--front", "1.6:1.8:0.1", "--back", "1.1:1.2:0.1"),
    ("map", "--mark", "unobtainium", "--front", "1.6:1.8:0.1", "--back", "1.1:1.2:0.1"),
    ("map", "--reflectance", "r.csv", "--front", "1.6:1.8:0.1", "--back", "1.1:1.2:0.1"),
    # study
    ("study", "unobtainium"), ("study", "nowhere.toml"), ("study", "latin1.toml"),
    ("study", "nested.toml"), ("study", "nowhere/manifest.json"), ("study", "notjson.json"),
    ("study", "--out", "/proc/x"), ("study", "--out", "no/such/dir"),
    ("study", "markup.toml", "--out", "o"),
    # yield
    ("yield", "perovskite-wide", "silicon"), ("yield", "--latitude", "40"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "100", "--longitude", "0"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--period", "week:2026"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--period", "year:9999"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--period", "day:0000-01-01"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--period", "day:2026-02-30"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0", "--step", "0"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0", "--step", "1"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--ambient", "20"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--timezone", "Mars/Olympus"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--weather", "nowhere.epw"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--weather", "huge.epw", "--period", "day:2026-06-21"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--spectra", "nowhere"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--points", "1"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0",
     "--front-gaps", "1.6:1.9:0.00001"),
    ("yield", "perovskite-wide", "silicon", "--latitude", "40", "--longitude", "0", "-o", ""),
    ("yield", "--scenario", "unobtainium"),
    # spread
    ("spread", "perovskite-wide", "silicon", "--gap", "1.2"),
    ("spread", "perovskite-wide", "silicon", "--gap-sigma", "inf"),
    ("spread", "perovskite-wide", "silicon", "--gap-sigma", "-1"),
    ("spread", "perovskite-wide", "silicon", "--thickness-sigma", "1e9"),
    ("spread", "perovskite-wide", "silicon", "--samples", "0"),
    ("spread", "perovskite-wide", "silicon", "--samples", "100000000"),
    ("spread", "perovskite-wide", "silicon", "--seed", "-1"),
    ("spread", "perovskite-wide", "silicon", "--thickness", "0"),
    ("spread", "perovskite-wide", "silicon", "--thickness", "16000"),
    ("spread", "perovskite-wide", "silicon", "--plot", "s.gif"),
    ("spread", "perovskite-wide", "silicon", "--target", "nan"),
    # layer stacks
    ("match", "--stack", "unobtainium"), ("match", "--stack", "nowhere.toml"),
    ("match", "--stack", "organic-pair", "organic-wide", "organic-narrow"),
    ("match", "--stack", "organic-pair", "--front-gaps", "1.7"),
    # options a stack does not use are refused, never ignored (--losses was ignored before)
    ("match", "--stack", "organic-pair", "--losses", "l.png"),
    ("match", "--stack", "organic-pair", "--top", "3"),
    ("match", "--stack", "organic-pair", "--tolerance", "2"),
    ("match", "--stack", "organic-pair", "--reflectance", "0.02"),
    ("match", "--stack", "organic-pair", "--points", "3"),
    ("match", "--stack", "organic-pair", "--plot", "p.gif"),
    ("match", "perovskite-wide"),
    *[("match", "--stack", f"{name}.toml") for name in STACK_FAULTS],
    # regions
    ("region", "perovskite-wide", "silicon", "--sites", "nowhere.csv"),
    ("region", "perovskite-wide", "silicon"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:60:10"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:95:10", "--longitudes", "0:0:1"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:60:0", "--longitudes", "0:0:1"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "-89:89:0.01", "--longitudes", "-180:180:0.01"),
    ("region", "perovskite-wide", "silicon", "--sites", "r.csv"),
    ("region", "perovskite-wide", "silicon", "--sites", "notjson.json", "--workers", "0"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--tilt", "steep"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--albedo", "2"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--bifacial", "--gcr", "1.5"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--period", "year:20266"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--front-gaps", "1.2:1.3:0.05"),
    ("region", "perovskite-wide", "silicon", "--sites", "latin1-sites.csv"),
    ("region", "perovskite-wide", "silicon", "--sites", "nan-sites.csv"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "nan:1:1", "--longitudes", "0:0:1"),
    ("region", "perovskite-wide", "silicon", "--latitudes", "0:0:1", "--longitudes", "0:0:1",
     "--bifacial", "--bifaciality", "inf"),
    ("eqe", "eqe.csv", "eqe.csv", "--voc", "nan,inf"),
    # measured EQE
    ("eqe", "nowhere.csv", "r.csv"), ("eqe", "r.csv", "r.csv", "--voc", "a,b"),
    ("eqe", "eqe.csv", "eqe.csv", "--voc", "5,5"), ("eqe", "ambiguous.csv", "eqe.csv"),
    ("eqe", "eqe.csv", "eqe.csv", "--back-absorber", "unobtainium", "--back-thickness", "400nm"),
    ("eqe", "eqe.csv", "eqe.csv", "--back-absorber", "silicon"),
    ("eqe", "eqe.csv", "eqe.csv", "--back-absorber", "silicon", "--back-thickness", "160"),
    ("eqe", "eqe.csv", "eqe.csv", "--plot", "x.bmp"),
    # the framework itself
    ("nosuchcommand",), ("limit",), ("limit", "abc"), ("match", "--nosuchoption"),
]


def inputs(folder: Path) -> None:
    """Hostile input files, written before each case."""
    (folder / "bad-alpha.toml").write_text(PVK.replace("strength_per_cm = 8.0e4", "strength_per_cm = 1e308"))
    (folder / "bad-deficit.toml").write_text(PVK.replace("nonradiative_voc_loss_V = 0.15", "nonradiative_voc_loss_V = 1e6"))
    (folder / "bad-urbach.toml").write_text(PVK.replace("urbach_energy_meV = 15", "urbach_energy_meV = 1e-300"))
    (folder / "bad-index.toml").write_text(PVK.replace("refractive_index = 2.5", "refractive_index = 1e300"))
    (folder / "bad-range.toml").write_text(PVK.replace("range_nm = [100, 1500]", "range_nm = [1e-300, 1e300]"))
    (folder / "nested.toml").write_text("a = " + "[" * 5000 + "]" * 5000 + "\n")
    (folder / "latin1.toml").write_bytes(PVK.replace("halide", "halide caf\u00e9").encode("latin-1"))
    (folder / "markup[x].toml").write_text(PVK.replace('name = "wide-gap halide perovskite"',
                                                      'name = "[/x] [bold]oops"'))
    (folder / "markup.toml").write_text('title = "[/x]"\nquestion = "[bold]?"\n[spectrum]\n'
                                        'source = "am1.5g"\n[candidates]\nfront = ["gainp"]\n'
                                        'back = ["nowhere"]\n')
    (folder / "notjson.json").write_text("{not json")
    for name, (old, new) in STACK_FAULTS.items():
        assert old in STACK, name
        (folder / f"{name}.toml").write_text(STACK.replace(old, new, 1))
    (folder / "bad.csv").write_text("wavelength,n,k\n400,0.1,abc\n")
    (folder / "eqe.csv").write_text("wavelength,eqe\n" + "".join(f"{w},0.8\n" for w in range(300, 1201, 20)))
    (folder / "ambiguous.csv").write_text("wavelength,eqe\n300,2.5\n900,2.0\n")
    (folder / "latin1-sites.csv").write_bytes("name,latitude,longitude\nCaf\u00e9,40,0\n".encode("latin-1"))
    (folder / "nan-sites.csv").write_text("name,latitude,longitude\nsite,nan,0\n")
    (folder / "r.csv").write_text("300,0.1\n1000,0.1\n")
    (folder / "blinding.csv").write_text("wavelength_nm,irradiance\n300,1e300\n1200,1e300\n")
    (folder / "starless.csv").write_text("wavelength_nm,irradiance\n300,1e-300\n1200,1e-300\n")
    epw = ["LOCATION,Test,,,,0,40,0,0,0"] + ["X"] * 7
    epw += [f"2026,1,1,{h},0,?,0,0,0,0,0,0,0,0,1e300,1e300,1e300,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0"
            for h in range(1, 25)]
    (folder / "huge.epw").write_text("\n".join(epw) + "\n")


# a numpy warning would print lines of its own before the one-line error
@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("args", CASES, ids=[" ".join(c)[:60] for c in CASES])
def test_hostile_input_is_one_line_and_exit_2(args, tmp_path, monkeypatch):
    inputs(tmp_path)
    monkeypatch.chdir(tmp_path)
    before = set(tmp_path.iterdir())
    res = runner.invoke(app, list(args))
    if res.exit_code != 2 and res.exception is not None and not isinstance(res.exception, SystemExit):
        raise res.exception
    assert res.exit_code == 2, (res.exit_code, res.output[-600:])
    if "Usage:" not in res.stderr:  # framework errors: checked through the real entry point below
        lines = [l for l in res.stderr.strip().splitlines() if l.strip()]
        assert len(lines) == 1 and lines[0].startswith("error:"), res.stderr
    assert "Traceback" not in res.output
    assert set(tmp_path.iterdir()) == before, "something was written"


def test_case_count():
    assert len(CASES) >= 100


@pytest.mark.parametrize("args", [("nosuchcommand",), ("limit",), ("limit", "abc"),
                                  ("match", "--nosuchoption"), ("yield", "--points", "x")])
def test_framework_errors_are_one_line_too(args, tmp_path):
    out = subprocess.run([sys.executable, "-m", "tandem", *args], capture_output=True, text=True,
                         cwd=tmp_path, timeout=120)
    assert out.returncode == 2
    lines = [l for l in out.stderr.strip().splitlines() if l.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:"), out.stderr


def test_names_are_printed_as_text_never_as_markup(tmp_path, monkeypatch):
    inputs(tmp_path)
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["match", "markup[x].toml", "silicon", *G])
    assert res.exit_code == 0, res.output
    assert "[/x] [bold]oops" in res.stdout


def test_a_spectrum_of_millions_of_rows_is_refused_before_parsing(tmp_path):
    import tandem

    path = tmp_path / "huge.csv"
    path.write_text("".join(f"{300 + i * 1e-4:.4f},1\n" for i in range(1_000_001)))
    with pytest.raises(tandem.TandemInputError, match="1,000,001 lines; give at most 1,000,000"):
        tandem.read_spectrum_csv(path)


@pytest.mark.parametrize("name", ["photo.png", "drawing.svg", "gap-map.csv", "gap-map.parquet"])
def test_overwrite_replaces_only_what_tandem_wrote(name, tmp_path, monkeypatch):
    # house rule: --overwrite only ever replaces what the tool itself wrote
    monkeypatch.chdir(tmp_path)
    user_file = tmp_path / name
    user_file.write_bytes(b"the user's own bytes")
    if name.endswith((".png", ".svg")):
        args = ["limit", "1.34", "--plot", name, "--overwrite"]
    else:
        args = ["map", "--front", "1.6:1.8:0.1", "--back", "1.0:1.2:0.1", "-q", "--overwrite"]
    res = runner.invoke(app, args)
    assert res.exit_code == 2 and "was not written by tandem" in res.stderr
    assert user_file.read_bytes() == b"the user's own bytes"
    # the tool's own outputs are replaced
    user_file.unlink()
    assert runner.invoke(app, args).exit_code == 0
    assert runner.invoke(app, args).exit_code == 0


@pytest.mark.parametrize("encoding", ["ascii", "latin-1"])
def test_an_output_that_cannot_encode_units_gets_replacements_not_a_traceback(encoding):
    # µ, ², – and box lines in an ASCII or Latin-1 pipe once raised UnicodeEncodeError half-way
    # through a table
    import os
    import subprocess
    import sys

    env = dict(os.environ, PYTHONIOENCODING=encoding)
    done = subprocess.run([sys.executable, "-m", "tandem", "absorbers"], capture_output=True,
                          env=env, timeout=120)
    assert done.returncode == 0, done.stderr.decode(encoding, "replace")[-2000:]
    assert b"Traceback" not in done.stderr and b"silicon" in done.stdout


def test_a_closed_stdout_ends_quietly():
    # started with stdout closed (`>&-`), Python has no sys.stdout at all: the console setup
    # once raised AttributeError at import
    import shlex
    import subprocess
    import sys

    command = f"{shlex.quote(sys.executable)} -m tandem limit 1.34 >&-"
    done = subprocess.run(["bash", "-c", command], stderr=subprocess.PIPE, timeout=120)
    assert b"Traceback" not in done.stderr, done.stderr[-2000:]


def test_names_with_terminal_codes_or_emoji_codes_print_as_text(tmp_path):
    # an absorber name holding ESC, BEL and ':x:' once reached the terminal raw (colours,
    # a bell, an emoji); now every control character shows as \xNN and ':x:' stays ':x:'
    text = (Path(__file__).resolve().parents[1] / "absorbers" / "cdte.toml").read_text()
    lines = [line if not line.startswith("name = ") else
             'name = "evil\\u001b[31mRED\\u0007 :x: film"' for line in text.splitlines()]
    path = tmp_path / "evil.toml"
    path.write_text("\n".join(lines) + "\n")
    res = CliRunner().invoke(app, ["absorbers", str(path)])
    assert res.exit_code == 0, res.output
    assert "\x1b" not in res.output and "\x07" not in res.output
    assert "evil\\x1b[31mRED\\x07 :x: film" in res.output


def test_two_outputs_of_one_command_may_not_share_a_file(tmp_path, monkeypatch):
    # `--plot same.png --losses same.png` once wrote the plot, then failed on the waterfall
    monkeypatch.chdir(tmp_path)
    res = CliRunner().invoke(app, ["limit", "1.34", "--plot", "same.png", "--losses", "./same.png"])
    assert res.exit_code == 2 and "are the same file" in res.output
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("args", [("match", "perovskite-wide", "x" * 300),
                                  ("match", "--stack", "x" * 300),
                                  ("yield", "--scenario", "x" * 300),
                                  ("study", "x" * 300)])
def test_a_name_too_long_to_look_up_is_one_line_that_says_so(args, tmp_path, monkeypatch):
    # the file system refuses a 300-character name (ENAMETOOLONG) while the tool only looks it
    # up: one line saying it cannot be used (not 'cannot write': nothing was being written)
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, list(args))
    assert res.exit_code == 2, res.output[-600:]
    lines = [line for line in res.stderr.strip().splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:"), res.stderr
    assert "cannot write" not in res.stderr
    assert not list(tmp_path.iterdir())


def test_a_full_disk_is_still_a_failed_write():
    from tandem.core.errors import os_error_line

    assert os_error_line(OSError(errno.ENOSPC, "No space left on device", "t.csv")) == \
        "cannot write 't.csv': No space left on device"
    assert os_error_line(OSError(errno.ENAMETOOLONG, "File name too long", "x")).startswith(
        "cannot use 'x'")
