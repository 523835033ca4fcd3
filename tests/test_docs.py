"""What a reader trusts: the README stays short and every command in it runs as printed; the
documentation builds with Sphinx without a single warning."""

import shlex
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def readme_commands() -> list[str]:
    """The `tandem` and `cp` lines of the README's bash blocks, comments dropped (the quick
    start's install lines are what `.ci/run` runs)."""
    text = (ROOT / "README.md").read_text()
    lines, inside = [], False
    for line in text.splitlines():
        if line.startswith("```"):
            inside = line.strip() == "```bash"
            continue
        if inside and line.startswith(("tandem ", "cp ")):
            lines.append(line.split(" # ")[0].strip())
    return lines


def readme_runs() -> list[list[str]]:
    """Each `tandem` line of the README with the `cp` lines before it (what it reads)."""
    runs, pending = [], []
    for command in readme_commands():
        pending.append(command)
        if command.startswith("tandem "):
            runs.append(pending)
            pending = []
    return runs


def test_the_readme_is_short_and_shows_its_commands():
    assert len((ROOT / "README.md").read_text().splitlines()) < 300
    assert len(readme_runs()) >= 6


#: what a README command must leave behind, beyond its exit code 0
WRITES = {"tandem match my-film.toml silicon --plot my-film.png": ("my-film.png", 10_000),
          "tandem study thin-film-silicon-pair --out proposal-study":
              ("proposal-study/design-table.csv", 100)}


@pytest.mark.parametrize("run", readme_runs(), ids=lambda run: run[-1])
def test_a_readme_command_runs_as_printed(run, tmp_path):
    """Each command in a fresh copy of a clone's working folder (one test each: the suite's
    processes share them)."""
    for folder in ("absorbers", "tests", "scenarios", "stacks"):  # a clone's working copy
        (tmp_path / folder).symlink_to(ROOT / folder)
    for command in run:
        argv = shlex.split(command)
        argv = ([sys.executable, "-m", "tandem", *argv[1:]] if argv[0] == "tandem" else argv)
        done = subprocess.run(argv, cwd=tmp_path, capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, f"{command}\n{done.stdout[-2000:]}\n{done.stderr[-2000:]}"
    if run[-1] in WRITES:
        name, size = WRITES[run[-1]]
        assert (tmp_path / name).stat().st_size > size


def test_every_readme_output_check_names_a_readme_command():
    assert set(WRITES) <= {run[-1] for run in readme_runs()}


def test_the_docs_build_without_warnings(tmp_path):
    done = subprocess.run([sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-b",
                           "html", str(ROOT / "docs"), str(tmp_path / "html"),
                           "-d", str(tmp_path / "doctrees")],
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr[-3000:]
    for page in ("index", "commands", "file-formats", "python-api", "reference", "model",
                 "performance", "checked-against"):
        assert (tmp_path / "html" / f"{page}.html").stat().st_size > 5_000
