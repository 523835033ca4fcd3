"""A region's folder: what may be written into it, its site records (each with the digest of
its own numbers, so an edited record is computed again) and what tandem clears on
``--overwrite``. Used by :func:`tandem.jobs.region.run_region`."""

from __future__ import annotations

import hashlib
import json
import os
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

    for path in list((folder / "sites").glob("*.json")) + [folder / n for n in REGION_FILES]:
        if written_by_tandem(path):
            path.unlink()


REGION_FILES = ("region.nc", "region.csv", "region.png", "region.json")


def _read_record(folder: Path, spec, job) -> dict | None:
    """A site's record (``spec``: a SiteSpec) if its inputs match ``job`` (a RegionJob) and its
    numbers their digest, else None (computed again)."""
    path = folder / "sites" / f"{spec.name}.json"
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if record.get("fingerprint") != job.fingerprint(spec):
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
