"""A region's folder: what may be written into it, its store of site records (each with the
digest of its own numbers, so an edited record is computed again) and what tandem clears on
``--overwrite``. Used by :func:`tandem.jobs.region.run_region`.

The records live in one SQLite file (``sites.sqlite``), a row a site, written in its own
transaction as the site finishes. Why SQLite and not Zarr or NetCDF-4 appended in chunks: a
transaction makes each record whole or absent after any crash, kill or full disk, with no
count of committed rows to keep beside the arrays; it ships with Python (no dependency for a
store); and a record is a small nested mapping (notes, out-of-range phrases, a design grid)
that fits a row better than a set of columns. 100,000 sites are one file, not 100,000. The
analysis dataset (``region.nc``, CF conventions) is still written from the store at the end.
"""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
from contextlib import closing
from pathlib import Path

from tandem.core.files import STAMP, write_whole

REGION_FORMAT = "tandem-region/1"


def region_folder_reason(folder: Path, job, overwrite: bool = False) -> str | None:
    """None if ``folder`` may be used, else why not: it is new, or a region folder tandem
    wrote for the same job (a resumed run), or for another job with ``overwrite``."""
    marker = folder / "region.json"
    if not os.path.lexists(folder):
        return None
    if not folder.is_dir() or folder.is_symlink():
        return f"'{folder}' is not a folder; choose another --out"
    try:
        meta = json.loads(marker.read_text(encoding="utf-8"))
        ok = meta.get("format") == REGION_FORMAT and meta.get("written_by") == STAMP
    except (OSError, ValueError, AttributeError):
        ok, meta = False, {}
    if not ok:
        return (f"'{folder}' exists and is not a region folder tandem wrote; choose another --out "
                "(tandem writes into, resumes and replaces only its own region folders)")
    if meta.get("job") != job.job_fingerprint() and not overwrite:
        return (f"region folder '{folder}' holds a region with other inputs; choose another "
                "--out, or pass --overwrite to replace it")
    return None


def _clear_region_folder(folder: Path) -> None:
    """Remove what tandem wrote in a region folder (and nothing else)."""
    from tandem.core.files import written_by_tandem

    # sites/NAME.json: the records of tandem 0.3.0 and before, one file a site
    legacy = sorted((folder / "sites").glob("*.json")) if (folder / "sites").is_dir() else []
    for path in [folder / n for n in REGION_FILES] + legacy:
        if written_by_tandem(path):
            path.unlink()
    if legacy and not any((folder / "sites").iterdir()):
        (folder / "sites").rmdir()
    store = folder / STORE
    if store_is_ours(store):
        for path in (store, store.with_name(STORE + "-wal"), store.with_name(STORE + "-shm")):
            path.unlink(missing_ok=True)


REGION_FILES = ("region.nc", "region.csv", "region.png", "region.json")
STORE = "sites.sqlite"


def _peek(path: Path, query: str):
    """The first row of ``query`` on the store at ``path``, opened read-only; None where there
    is no such file (or a link) or it cannot answer (not a store, damaged)."""
    if not path.is_file() or path.is_symlink():
        return None
    try:
        with closing(sqlite3.connect(f"file:{path}?mode=ro", uri=True)) as db:
            return db.execute(query).fetchone()
    except sqlite3.Error:
        return None


def store_is_ours(path: Path) -> bool:
    """Whether ``path`` is a site store tandem made (its ``meta`` table holds the stamp)."""
    row = _peek(path, "SELECT value FROM meta WHERE key = 'written_by'")
    return row is not None and row[0] == STAMP


def stored_count(folder: Path) -> int:
    """How many site records the folder's store holds (0 without a readable store)."""
    row = _peek(folder / STORE, "SELECT count(*) FROM site")
    return 0 if row is None else int(row[0])


def open_store(folder: Path) -> sqlite3.Connection:
    """The folder's site store, made on first use: a row a site (name, the fingerprint of its
    inputs, its record as JSON, the record's digest)."""
    try:
        db = sqlite3.connect(folder / STORE, isolation_level=None, check_same_thread=False)
        # write-ahead log: a commit appends (no rewrite of the file), readers never block it;
        # NORMAL: a power cut may lose the last commits, never leave a half record
        db.execute("PRAGMA journal_mode = WAL")
        db.execute("PRAGMA synchronous = NORMAL")
        db.execute("CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
        db.execute("CREATE TABLE IF NOT EXISTS site (name TEXT PRIMARY KEY, fingerprint TEXT "
                   "NOT NULL, record TEXT NOT NULL, digest TEXT NOT NULL)")
        db.execute("INSERT OR REPLACE INTO meta VALUES ('written_by', ?), ('format', ?)",
                   (STAMP, REGION_FORMAT))
    except sqlite3.Error as exc:  # a full disk, a damaged file
        from tandem.core.errors import TandemInputError

        raise TandemInputError(f"region folder '{folder}': its {STORE} cannot be opened ({exc}); "
                               "free some space, or choose another --out") from None
    return db


def store_record(db: sqlite3.Connection, name: str, record: dict) -> None:
    """One site's record (with its ``fingerprint`` and ``digest``), in a transaction of its own."""
    try:
        db.execute("INSERT OR REPLACE INTO site VALUES (?, ?, ?, ?)",
                   (name, record["fingerprint"], json.dumps(record), record["digest"]))
    except sqlite3.Error as exc:  # a full disk, a lost folder: the records before are whole
        from tandem.core.errors import TandemInputError

        raise TandemInputError(f"cannot store site '{name}' in the region's {STORE} ({exc}); "
                               "the sites stored before it are kept: free some space and run "
                               "the same command again (it reuses them)") from None


def _read_record(db: sqlite3.Connection, spec, job) -> dict | None:
    """A site's record (``spec``: a SiteSpec) if its inputs match ``job`` (a RegionJob) and its
    numbers their digest, else None (computed again)."""
    try:
        row = db.execute("SELECT record FROM site WHERE name = ?", (spec.name,)).fetchone()
        record = json.loads(row[0]) if row else None
    except (sqlite3.Error, ValueError):
        return None
    if not isinstance(record, dict) or record.get("fingerprint") != job.fingerprint(spec):
        return None  # inputs changed: computed again
    if record.pop("digest", None) != _digest(record):
        return None  # edited or damaged since it was written: computed again
    return record


def _digest(record: dict) -> str:
    """SHA-256 of a site record's numbers and inputs (its ``digest`` key aside)."""
    text = json.dumps({k: v for k, v in record.items() if k != "digest"}, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()


def _write_json(path: Path, payload: dict) -> None:
    def write(tmp: Path) -> None:
        tmp.write_text(json.dumps(payload, indent=1) + "\n", encoding="utf-8")

    write_whole(path, write, overwrite=True)
