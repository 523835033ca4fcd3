"""Error statements reached by the test suite: the share, and each one never reached.

An error statement is a ``raise`` or a call of a one-line refusal helper (``_fail``,
``Checker.fail``, ``_refuse_*``) in ``tandem/``. The suite runs under coverage (two processes,
as CI runs it); the figure printed is what issue 23 asks to keep at 95 % or more.

    pip install coverage pytest-cov        # development tools, not dependencies
    python tests/benchmarks/error_coverage.py
    python tests/benchmarks/error_coverage.py --data .coverage   # reuse an earlier run
"""

from __future__ import annotations

import argparse
import ast
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
HELPERS = {"_fail", "fail"}


def error_lines(path: Path) -> list[tuple[int, str]]:
    """(line, text) of every error statement in one module."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Raise):
            found.append(node.lineno)
        elif isinstance(node, ast.Expr) and isinstance(node.value, ast.Call):
            func = node.value.func
            name = func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", "")
            if name in HELPERS or name.startswith("_refuse"):
                found.append(node.lineno)
    lines = path.read_text(encoding="utf-8").splitlines()
    return [(n, lines[n - 1].strip()) for n in sorted(set(found))]


def run_suite(data_file: Path) -> None:
    env = dict(os.environ, COVERAGE_FILE=str(data_file))
    cmd = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "--cov=tandem",
           "--cov-report=", "tests"]
    subprocess.run(cmd, cwd=ROOT, env=env, check=False)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--data", type=Path, help="a coverage data file from an earlier run")
    args = parser.parse_args()
    import coverage

    with tempfile.TemporaryDirectory() as tmp:
        data_file = args.data or Path(tmp) / ".coverage"
        if args.data is None:
            run_suite(data_file)
        cov = coverage.Coverage(data_file=str(data_file))
        cov.load()
        data = cov.get_data()
        executed = {Path(f).resolve(): set(data.lines(f) or ()) for f in data.measured_files()}
    total, missed = 0, []
    for path in sorted((ROOT / "tandem").rglob("*.py")):
        ran = executed.get(path.resolve(), set())
        for line, text in error_lines(path):
            total += 1
            if line not in ran:
                missed.append(f"{path.relative_to(ROOT)}:{line}: {text}")
    reached = total - len(missed)
    print("\n".join(missed))
    print(f"error statements reached by the tests: {reached} of {total} "
          f"({100 * reached / max(total, 1):.1f} %)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
