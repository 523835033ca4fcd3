"""Tables in any terminal of 80 columns or more: every number and name a table prints appears
whole on one line, prose wraps at words only (a table too wide is split into several that repeat the row's name), and a
column that tells rows apart (a swept back thickness) is never dropped."""

import importlib
import io

import pytest
from rich.console import Console, Group
from typer.testing import CliRunner

from tandem.cli.app import app

MODULES = ("tandem.cli.options", "tandem.cli.app", "tandem.cli.render", "tandem.cli.energy_yield",
           "tandem.cli.region", "tandem.cli.eqe")

COMMANDS = {
    "limit": ["limit", "1.73", "0.94"],
    "match": ["match", "perovskite-wide", "silicon", "--back-thickness", "100um,160um",
              "--front-gaps", "1.68:1.70:0.02", "--points", "30", "-q"],
    "absorbers": ["absorbers"],
    "study": ["study", "low-cost-organic-pair", "--no-figures"],
    "spread": ["spread", "perovskite-wide", "silicon", "--samples", "50"],
    "eqe": ["eqe", "tests/data/front-eqe.csv", "tests/data/back-eqe.csv", "--voc", "1.22,0.70"],
    "yield": ["yield", "perovskite-wide", "silicon", "--latitude", "38", "--longitude", "-4",
              "--period", "day:2026-06-21", "--front-gaps", "1.7:1.7:0.1", "--points", "3",
              "--overwrite", "-q"],
}


def run_at(width, argv, tmp_path, monkeypatch):
    """The command's terminal output at ``width`` columns, and every cell its tables hold."""
    console = Console(width=width, force_terminal=True, color_system=None, file=io.StringIO())
    tables = []
    options = importlib.import_module("tandem.cli.options")
    original = options.render_table

    def recording(*args, **kwargs):
        made = original(*args, **kwargs)
        tables.extend(made.renderables if isinstance(made, Group) else [made])
        return made

    for name in MODULES:
        module = importlib.import_module(name)
        if hasattr(module, "out"):
            monkeypatch.setattr(module, "out", console)
        if hasattr(module, "render_table"):
            monkeypatch.setattr(module, "render_table", recording)
    result = CliRunner().invoke(app, argv)
    assert result.exit_code == 0, result.output
    cells = [str(c) for t in tables for column in t.columns for c in column._cells]
    return console.file.getvalue(), cells


@pytest.mark.parametrize("width", [80, 100, 120])
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_every_cell_is_printed_whole(command, width, tmp_path, monkeypatch):
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    monkeypatch.chdir(root if command == "eqe" else tmp_path)
    argv = COMMANDS[command] + (["--out", str(tmp_path / "s")] if command == "study" else [])
    text, cells = run_at(width, argv, tmp_path, monkeypatch)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width
    assert cells
    # a value (up to three words: a number with its unit, a name, a range) stands whole on
    # one line; prose (a description, a source) may wrap, at words only
    pieces = []
    for c in cells:
        words = c.split()
        pieces += [c.strip()] if 0 < len(words) <= 3 else words
    broken = [p for p in pieces if not any(f" {p} " in f" {line} " for line in lines)]
    assert not broken, (broken[:5], text[:3000])


def test_one_absorbers_fields_wrap_at_words_and_keep_its_path_whole(tmp_path, monkeypatch):
    # `tandem absorbers NAME` prints field: value lines (no Python reprs); its file path,
    # a name to copy, stands whole on a line even at 80 columns
    monkeypatch.chdir(tmp_path)
    text, _ = run_at(80, ["absorbers", "perovskite-wide"], tmp_path, monkeypatch)
    lines = text.splitlines()
    path = str(importlib.import_module("tandem").load_absorber("perovskite-wide").path)
    assert any(path in line for line in lines) and max(len(line) for line in lines) <= 80
    assert "None" not in text and "collection_length_nm: —" in text


def test_a_swept_back_thickness_is_kept_in_a_narrow_terminal(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    text, _ = run_at(80, COMMANDS["match"], tmp_path, monkeypatch)
    assert "back" in text and " 100 " in text and " 160 " in text
