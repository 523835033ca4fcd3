"""The study manifest: inputs as data, versions, checksums (what re-runs the study).
"""

from __future__ import annotations

from typing import Any

import platform
from datetime import datetime, timezone
from importlib import metadata

from tandem.output.report import CAUTION
from tandem.study.run import StudyResult
from tandem.study.scenario import (
    MANIFEST_FORMAT,
    PACKAGES,
    canonical_json,
    manifest_checksum,
    sha256_text,
)


def manifest(study: StudyResult, figures: bool = True, figure_files=()) -> dict:
    """The study's manifest: every input as data, a record of the result, and checksums.

    ``inputs`` holds everything that changes a number (scenario text, absorber files and their
    tables, the spectrum, weather and measured-spectra files), so the study re-runs from the
    manifest alone; ``integrity`` holds the SHA-256 of the inputs and of the whole manifest.
    """
    from tandem import __version__
    from tandem.output.report import absorber_summary

    sc = study.scenario
    absorbers = {a.key: a for a in sc.fronts + sc.backs}
    inputs = {
        "scenario": {"name": sc.key, "text": sc.text},
        "absorbers": {k: sc.absorber_records[k] for k in sorted(sc.absorber_records)},
        "candidates": {"front": [a.key for a in sc.fronts], "back": [a.key for a in sc.backs],
                       **({"stacks": list(sc.stack_records)} if sc.stack_records else {})},
        **({"stacks": sc.stack_records} if sc.stack_records else {}),
        "files": {k: (sc.files or {}).get(k) for k in ("spectrum", "weather", "spectra_folder")},
    }
    versions: dict[str, str | None] = {}
    for pkg in PACKAGES:
        try:
            versions[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            versions[pkg] = None
    out: dict[str, Any] = {
        "format": MANIFEST_FORMAT,
        "tool": {"name": "tandem", "version": __version__},
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "integrity": {"inputs_sha256": sha256_text(canonical_json(inputs)), "manifest_sha256": ""},
        "edited_from": (None if sc.edited_from is None else
                        {"manifest_sha256": sc.edited_from,
                         "note": "re-run of a manifest that was edited after it was written"}),
        "inputs": inputs,
        "record": {
            "scenario_file": str(sc.path),
            "absorbers_resolved": {k: absorber_summary(a) for k, a in absorbers.items()},
            "spectrum": {"name": study.spectrum_name, "notes": list(study.spectrum_notes),
                         "integrated_W_m2": round(study.irradiance, 4),
                         "energy_range_eV": [round(v, 4) for v in study.energy_range_eV]},
            "temperature_K": sc.temperature_K,
            "terminals": sc.terminals,
            "skipped_pairs": study.skipped,
            "sky": study.sky,
            "figures_written": bool(figures),
            # the files in figures/ this study wrote: --overwrite replaces these and no others
            "figure_files": sorted(figure_files),
            "python": platform.python_version(),
            "packages": versions,
        },
        "caution": CAUTION,
    }
    out["integrity"]["manifest_sha256"] = manifest_checksum(out)
    return out


#: What 'tandem study' writes into a study folder, and nothing else.
