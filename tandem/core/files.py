"""Where bundled data lives, and writing outputs whole or not at all."""

from __future__ import annotations

import contextlib
import json
import os
import shutil
import tempfile
from pathlib import Path
from typing import Any, Callable

from tandem.core.errors import TandemInputError

_PACKAGE = Path(__file__).resolve().parents[1]


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


#: The stamp every file tandem writes carries (figure metadata, Parquet schema metadata).
STAMP = "tandem"


def written_by_tandem(path: Path) -> bool:
    """Whether an existing file is recognisably one tandem wrote (so --overwrite may replace it).

    Figures carry the stamp in their metadata (PNG 'Software', SVG and PDF 'Creator'), Parquet
    in its schema metadata, JSON in a ``written_by`` key, NetCDF in a ``written_by``
    attribute; a CSV is recognised by tandem's own header line.
    """
    path = Path(path)
    if not path.is_file() or path.is_symlink():
        return False
    suffix = path.suffix.lower()
    try:
        if suffix == ".parquet":
            import pyarrow.parquet as pq

            meta = pq.read_schema(path).metadata or {}
            return meta.get(b"written_by") == STAMP.encode()
        head = path.read_bytes()[: 1 << 20]
    except (OSError, ValueError, Exception):  # an unreadable file is not ours
        return False
    if suffix == ".png":
        return b"Software\x00" + STAMP.encode() in head
    if suffix in (".svg", ".pdf"):
        return STAMP.encode() in head and (b"<svg" in head or head.startswith(b"%PDF"))
    if suffix == ".csv":
        return head.startswith((b'"front_gap_eV","back_gap_eV"', b'"name","latitude","longitude"'))
    if suffix == ".json":
        try:
            return json.loads(head).get("written_by") == STAMP
        except (ValueError, AttributeError):
            return False
    if suffix == ".nc":  # NetCDF-3: attributes sit in the header
        return head.startswith(b"CDF") and b"written_by" in head and STAMP.encode() in head
    return False


def check_new_output(path: str | Path, overwrite: bool = False) -> Path:
    """Refuse to replace an existing file unless ``overwrite`` and tandem wrote it; the
    folder must exist."""
    path = Path(path)
    if path.exists() and not overwrite:
        raise TandemInputError(f"output '{path}' exists; choose another name or pass --overwrite")
    if os.path.lexists(path) and not written_by_tandem(path):
        raise TandemInputError(f"'{path}' was not written by tandem; --overwrite replaces only "
                               "tandem's own outputs: move it or choose another name")
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
            fd, name = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=path.suffix, dir=path.parent)
            os.close(fd)
            temps[path] = Path(name)
            try:
                write(temps[path])
            except OSError as exc:  # a full disk: name the output, not its temporary
                raise OSError(exc.errno, exc.strerror or str(exc), str(path)) from exc
            publish_mode(temps[path])
        for path, done in temps.items():
            os.replace(done, path)
    finally:
        for leftover in temps.values():
            leftover.unlink(missing_ok=True)
    return list(targets)


# --------------------------------------------------------------------------------------
# Output folders placed atomically: the old one or the new one, never neither
# --------------------------------------------------------------------------------------

_TMP_TAG = ".tandem-tmp-"
_LOCK_TAG = ".tandem-lock"
_RENAME_NOREPLACE, _RENAME_EXCHANGE = 1, 2


def _renameat2(src: Path, dst: Path, flags: int) -> bool:
    """Linux renameat2(2) with ``flags``; False where the system or file system lacks it."""
    import ctypes
    import errno

    try:
        libc = ctypes.CDLL(None, use_errno=True)
        call = libc.renameat2
    except (OSError, AttributeError):
        return False
    call.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    at_fdcwd = -100
    if call(at_fdcwd, os.fsencode(src), at_fdcwd, os.fsencode(dst), flags) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP):
        return False
    raise OSError(code, os.strerror(code), str(dst))


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _owner_pid(name: str) -> int | None:
    """The process id written into a temporary or lock name by :func:`place_folder`."""
    tail = name.split(_TMP_TAG, 1)[-1] if _TMP_TAG in name else ""
    try:
        return int(tail.split("-", 1)[0])
    except ValueError:
        return None


def clean_stale(target: Path) -> list[Path]:
    """Remove hidden temporary folders of ``target`` left by runs that were killed.

    Only folders named by :func:`place_folder` for this target and whose process is gone
    are removed; returns what was removed.
    """
    removed = []
    prefix = f".{target.name}{_TMP_TAG}"
    for entry in target.parent.glob(f"{prefix}*"):
        pid = _owner_pid(entry.name)
        if pid is not None and not _alive(pid) and entry.is_dir() and not entry.is_symlink():
            shutil.rmtree(entry, ignore_errors=True)
            removed.append(entry)
    return removed


class _FolderLock:
    """An exclusive lock beside the target (O_CREAT | O_EXCL), released on exit.

    A lock left by a killed run (its process is gone) is taken over.
    """

    def __init__(self, target: Path):
        self.path = target.parent / f".{target.name}{_LOCK_TAG}"
        self.target = target

    def __enter__(self):
        for _ in range(2):
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
            except FileExistsError:
                try:
                    pid = int(self.path.read_text().strip() or "0")
                except (OSError, ValueError):
                    pid = 0
                if pid and _alive(pid):
                    raise TandemInputError(
                        f"another tandem run (process {pid}) is writing '{self.target}'; wait for "
                        "it to finish or choose another --out") from None
                self.path.unlink(missing_ok=True)
                continue
            with os.fdopen(fd, "w") as fh:
                fh.write(str(os.getpid()))
            return self
        raise TandemInputError(f"cannot lock '{self.target}' for writing; try again")

    def __exit__(self, *exc):
        self.path.unlink(missing_ok=True)


class _SignalsHeld:
    """Hold SIGINT, SIGTERM and SIGHUP back during a few renames, then deliver them.

    A Python-level handler that only records the signal (a mask set in one thread would not
    do: any thread, e.g. a BLAS worker, may receive a process-wide signal); on exit the old
    handlers return and each recorded signal is raised again, so an interrupt is never lost
    and never lands between two renames.
    """

    SIGNALS = ("SIGINT", "SIGTERM", "SIGHUP")

    def __enter__(self):
        import signal
        import threading

        self.caught: list[int] = []
        self.previous: dict[int, Any] = {}
        if threading.current_thread() is threading.main_thread():
            for name in self.SIGNALS:
                sig = getattr(signal, name, None)
                if sig is not None:
                    self.previous[sig] = signal.signal(sig, lambda s, _f: self.caught.append(s))
        return self

    def __exit__(self, *exc):
        import signal

        for sig, handler in self.previous.items():
            signal.signal(sig, handler)
        for sig in dict.fromkeys(self.caught):
            signal.raise_signal(sig)


def check_output_folder(target: str | Path) -> Path:
    """The target as an absolute path, once its parent is known to exist and take files.

    Called before any computation, so that an unwritable place costs nothing.
    """
    target = Path(os.path.abspath(target))
    if len(target.name.encode()) > 200:
        raise TandemInputError(f"output name '{target.name[:40]}…' is {len(target.name)} characters "
                               "long; give a name under 200 characters")
    parent = target.parent
    if not parent.is_dir():
        raise TandemInputError(f"folder '{parent}' does not exist; create it first or write "
                               f"'{target.name}' somewhere that exists")
    try:
        probe = tempfile.mkdtemp(prefix=f".{target.name[:40]}.probe-", dir=parent)
        os.rmdir(probe)
    except OSError as exc:
        raise TandemInputError(f"cannot write in '{parent}' ({exc.strerror or exc}); choose "
                               "another --out") from None
    return target


def place_folder(target: str | Path, build: Callable[[Path], None], overwrite: bool = False,
                 replaceable: Callable[[Path], str | None] | None = None) -> Path:
    """Build a folder with ``build(tmp)`` beside ``target``, then put it in place atomically.

    Parameters
    ----------
    target : path
        Where the folder goes.
    build : callable
        Writes the folder's contents into the (empty, private) temporary folder it is given.
    overwrite : bool
        Replace an existing target, if ``replaceable`` accepts it.
    replaceable : callable
        Returns None for a target that may be replaced, else the one-line reason it may not.

    Notes
    -----
    The existence check is made at the moment of placement, under a lock beside the target
    and with interrupts held back: a second writer, or a folder that appeared during the
    work, is refused with a clear error and loses nothing. A new target is placed with
    rename(2) that refuses an existing name (RENAME_NOREPLACE); an old one is swapped out
    in one step (RENAME_EXCHANGE) and deleted afterwards, so an interrupt at any moment
    leaves either the old or the new folder at ``target``. Hidden temporary folders of
    killed runs are removed by the next run on the same target.
    """
    target = check_output_folder(target)
    clean_stale(target)
    if overwrite and replaceable and os.path.lexists(target):
        reason = replaceable(target)
        if reason:  # told before the work, not after it (and checked again at placement)
            raise TandemInputError(reason)
    tmp = target.parent / f".{target.name}{_TMP_TAG}{os.getpid()}-{os.urandom(4).hex()}"
    tmp.mkdir(mode=0o700)
    try:
        build(tmp)
        for item in [tmp, *tmp.rglob("*")]:
            publish_mode(item)
        with _FolderLock(target), _SignalsHeld():
            if os.path.lexists(target):
                if not overwrite:
                    raise TandemInputError(f"'{target}' exists (it may have appeared while this "
                                           "run worked); choose another --out or pass --overwrite")
                reason = replaceable(target) if replaceable else "it is not a tandem output"
                if reason:
                    raise TandemInputError(reason)
                if not _renameat2(tmp, target, _RENAME_EXCHANGE):
                    _swap_by_two_renames(tmp, target)
            elif not _renameat2(tmp, target, _RENAME_NOREPLACE):
                if os.path.lexists(target):
                    raise TandemInputError(f"'{target}' appeared while this run worked; choose "
                                           "another --out")
                os.rename(tmp, target)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)  # the old folder after a swap, or a failed build
    return target


def _swap_by_two_renames(new: Path, target: Path) -> None:
    """Fallback where renameat2 is missing: old → aside, new → target, aside → new's name.

    Signals are held by the caller; only a kill -9 between the renames can leave the old
    folder aside (under the temporary name, where the next run's cleanup finds it).
    """
    aside = new.parent / f"{new.name}-old"
    os.rename(target, aside)
    try:
        os.rename(new, target)
    except OSError:
        os.rename(aside, target)
        raise
    shutil.rmtree(new, ignore_errors=True)
    os.rename(aside, new)


def write_parquet(frame, path) -> None:
    """A DataFrame as Parquet, stamped as tandem's own in its schema metadata."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame, preserve_index=False)
    meta = dict(table.schema.metadata or {})
    meta[b"written_by"] = STAMP.encode()
    pq.write_table(table.replace_schema_metadata(meta), str(path))


def write_netcdf(dataset, path) -> None:
    """An xarray Dataset as netCDF-3 (scipy's writer: no netCDF library needed)."""
    dataset.to_netcdf(path, engine="scipy")


def write_csv(frame, path) -> None:
    """A DataFrame as CSV through pyarrow's writer (about 10× faster than pandas on large
    grids), numbers at full precision."""
    import pyarrow as pa
    from pyarrow import csv

    csv.write_csv(pa.Table.from_pandas(frame, preserve_index=False), str(path))


LOCK_NAME = ".tandem-lock"


@contextlib.contextmanager
def folder_lock(folder: Path, what: str):
    """Hold ``folder``/.tandem-lock (this process's id) while writing into ``folder``: a
    second run finds it and is refused in one line; a lock whose process has ended (a killed
    run) is taken over. Removed on the way out, whatever happens."""
    lock = Path(folder) / LOCK_NAME
    for _ in range(3):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            try:
                pid = int(lock.read_text(encoding="utf-8").strip() or 0)
            except (OSError, ValueError):
                pid = 0
            if pid and pid != os.getpid() and _alive(pid):
                raise TandemInputError(f"{what} '{folder}' is being written by another tandem "
                                       f"run (process {pid}); wait for it to finish or choose "
                                       "another --out") from None
            lock.unlink(missing_ok=True)  # stale: its process has ended
            continue
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(str(os.getpid()))
        break
    else:
        raise TandemInputError(f"{what} '{folder}': could not take its lock; try again")
    try:
        yield
    finally:
        lock.unlink(missing_ok=True)
