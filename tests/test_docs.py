"""What a reader trusts: the README stays short and every command in it runs as printed; the
documentation builds with Sphinx without a single warning."""

import shlex
import subprocess
import sys
from pathlib import Path

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


def test_the_readme_is_short_and_its_commands_run_as_printed(tmp_path):
    assert len((ROOT / "README.md").read_text().splitlines()) < 300
    commands = readme_commands()
    assert len(commands) >= 6
    for folder in ("absorbers", "tests", "scenarios", "stacks"):  # a clone's working copy
        (tmp_path / folder).symlink_to(ROOT / folder)
    for command in commands:
        argv = shlex.split(command)
        argv = ([sys.executable, "-m", "tandem", *argv[1:]] if argv[0] == "tandem" else argv)
        done = subprocess.run(argv, cwd=tmp_path, capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, f"{command}\n{done.stdout[-2000:]}\n{done.stderr[-2000:]}"
    assert (tmp_path / "my-film.png").stat().st_size > 10_000
    assert (tmp_path / "proposal-study" / "design-table.csv").is_file()


def test_the_docs_build_without_warnings(tmp_path):
    done = subprocess.run([sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-b",
                           "html", str(ROOT / "docs"), str(tmp_path / "html"),
                           "-d", str(tmp_path / "doctrees")],
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr[-3000:]
    for page in ("index", "commands", "file-formats", "python-api", "reference", "model",
                 "performance", "checked-against"):
        assert (tmp_path / "html" / f"{page}.html").stat().st_size > 5_000
