"""Structure: the modules form layers with no cycle, and the command line stays thin."""

import ast
import subprocess
import sys
from pathlib import Path

import tomllib

PACKAGE = Path(__file__).resolve().parents[1] / "tandem"

#: physics ← optics ← design ← workflows ← CLI (0 is shared plumbing)
LAYERS = {
    "units": 0, "errors": 0, "files": 0, "thinfilm": 2,
    "detailed_balance": 1, "spectra": 1, "stack": 1,
    "optics": 2, "absorbers": 2, "losses": 2,
    "design": 3, "breakdown": 3, "eqe": 3, "layerstack": 3, "maps": 3, "scatter": 3, "sky": 3, "yields": 3,
    "inputs": 4, "workflows": 4, "region": 4, "study": 4, "report": 4, "plots": 4,
    "cli": 5, "cli_options": 5, "cli_render": 5, "cli_region": 5, "cli_eqe": 5, "__main__": 5,
}


def imports_of(path: Path) -> set[str]:
    """Sibling modules a module imports anywhere (top level or inside functions)."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom):
            if node.level == 1:
                if node.module:
                    found.add(node.module.split(".")[0])
                else:
                    found.update(a.name for a in node.names)
            elif node.module and node.module.startswith("tandem."):
                found.add(node.module.split(".")[1])
            elif node.module == "tandem":
                found.update(a.name for a in node.names if a.name in LAYERS)
        elif isinstance(node, ast.Import):
            found.update(a.name.split(".")[1] for a in node.names if a.name.startswith("tandem."))
    return found & set(LAYERS)


def graph():
    return {p.stem: imports_of(p) for p in PACKAGE.glob("*.py") if p.stem != "__init__"}


def test_every_module_has_a_layer():
    assert set(graph()) <= set(LAYERS), set(graph()) - set(LAYERS)


def test_no_module_imports_a_higher_layer():
    upward = [(m, d) for m, deps in graph().items() for d in deps if LAYERS[d] > LAYERS[m]]
    assert not upward, upward


def test_no_import_cycle():
    g = graph()
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


def test_the_command_line_is_thin():
    assert len((PACKAGE / "cli.py").read_text().splitlines()) < 500
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
