"""The package's type annotations hold: mypy (settings in pyproject.toml) finds no error.

The package ships ``py.typed``, so users' type checkers read these annotations; a wrong one
misleads them. mypy is a general-purpose outside checker (consistency, not physics).
"""

import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_mypy_finds_no_error_in_the_package():
    mypy = shutil.which("mypy", path=str(Path(sys.executable).parent)) or shutil.which("mypy")
    assert mypy, "mypy is one of the test extras: pip install '.[test]'"
    out = subprocess.run([mypy, "--no-error-summary", "--cache-dir", str(ROOT / ".mypy_cache")],
                         capture_output=True, text=True, cwd=ROOT, timeout=600)
    assert out.returncode == 0, out.stdout[-4000:] + out.stderr[-2000:]
    assert (ROOT / "tandem" / "py.typed").is_file()
