"""Where bundled data lives, and writing outputs whole or not at all."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable

from .errors import TandemInputError

_PACKAGE = Path(__file__).resolve().parent


def bundled_dir(kind: str) -> Path:
    """The folder of bundled ``absorbers`` or ``scenarios``.

    Installed, they sit inside the package (``tandem/_bundled/<kind>``, see pyproject.toml);
    in a checkout, at the top of the repository.
    """
    installed = _PACKAGE / "_bundled" / kind
    return installed if installed.is_dir() else _PACKAGE.parent / kind


def _umask_mode(mode: int) -> int:
    """``mode`` as the user's umask would leave it (temporary files start private)."""
    mask = os.umask(0)
    os.umask(mask)
    return mode & ~mask


def publish_mode(path: Path) -> None:
    """Give a finished temporary file or folder the permissions a plain write would."""
    os.chmod(path, _umask_mode(0o777 if Path(path).is_dir() else 0o666))


def check_new_output(path: str | Path, overwrite: bool = False) -> Path:
    """Refuse to replace an existing file unless ``overwrite``; the folder must exist."""
    path = Path(path)
    if path.exists() and not overwrite:
        raise TandemInputError(f"output '{path}' exists; choose another name or pass --overwrite")
    if not path.parent.is_dir():
        raise TandemInputError(f"output folder '{path.parent}' does not exist; create it first")
    return path


def write_whole(path: str | Path, write: Callable[[Path], None], overwrite: bool = False) -> Path:
    """Call ``write(tmp)`` on a temporary file beside ``path``, then move it into place.

    A failure leaves nothing behind, so an output is either complete or absent.
    """
    return write_all_whole({path: write}, overwrite)[0]


def write_all_whole(writers: dict, overwrite: bool = False) -> list[Path]:
    """Write several files as one: every file to a temporary name first, then all renamed.

    ``writers`` maps each output path to a function writing that file. If any writer fails,
    no output appears and the temporary files are removed.
    """
    targets = {check_new_output(p, overwrite): w for p, w in writers.items()}
    temps: dict[Path, Path] = {}
    try:
        for path, write in targets.items():
            fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=path.suffix, dir=path.parent)
            os.close(fd)
            temps[path] = Path(tmp)
            write(temps[path])
            publish_mode(temps[path])
        for path, tmp in temps.items():
            os.replace(tmp, path)
    finally:
        for tmp in temps.values():
            tmp.unlink(missing_ok=True)
    return list(targets)
