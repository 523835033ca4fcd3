"""Study folders: written whole or not at all, replacing only what tandem wrote.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.files import check_output_folder, place_folder
from tandem.design.matching import (
    tolerance_windows,
)
from tandem.study.manifest import manifest
from tandem.study.run import StudyResult
from tandem.study.sources import read_manifest
from tandem.study.tables import columns, latex_table, loss_table, markdown_table

STUDY_FILES = ("design-table.csv", "design-table.md", "design-table.tex", "loss-breakdown.csv",
               "report.html",
               "manifest.json")
FIGURE_SUFFIXES = (".png", ".svg")


def study_replace_reason(target: Path, protected=()) -> str | None:
    """None if ``target`` is a study folder that --overwrite may replace, else why not.

    Replaceable: a real folder holding a manifest that 'tandem study' wrote (its checksum
    verifies) and only the files a study writes; never a file, a link, the working directory
    or a folder above it, or a folder holding an input of the run.
    """
    target = Path(os.path.abspath(target))
    if target.is_symlink():
        return f"'{target}' is a link; --overwrite replaces only a study folder itself"
    if not target.is_dir():
        return (f"'{target}' is a file, not a study folder; --overwrite replaces only a folder "
                "written by 'tandem study'")
    real = target.resolve()
    cwd = Path.cwd().resolve()
    if real == cwd or real in cwd.parents:
        return (f"'{target}' is the working directory or holds it; --overwrite never replaces "
                "it: choose another --out")
    for p in protected:
        p = Path(p).resolve()
        if real == p or real in p.parents:
            return (f"'{target}' holds '{p}', an input of this run; --overwrite never replaces "
                    "it: choose another --out")
    manifest_path = target / "manifest.json"
    try:
        record = read_manifest(manifest_path)
    except TandemInputError:
        return (f"'{target}' is not a tandem study folder (no valid manifest.json); --overwrite "
                "replaces only folders written by 'tandem study'")
    # the figures the study recorded writing (folders from before that record: any figure)
    written = record.get("record", {}).get("figure_files")
    for entry in sorted(target.iterdir()):
        if entry.name == "figures" and entry.is_dir() and not entry.is_symlink():
            odd = [f for f in entry.iterdir() if f.suffix not in FIGURE_SUFFIXES or not f.is_file()
                   or (written is not None and f.name not in written)]
            if odd:
                return (f"'{target}' holds '{odd[0].relative_to(target)}', which 'tandem study' "
                        "did not write; move it or choose another --out")
        elif entry.name not in STUDY_FILES or not entry.is_file():
            return (f"'{target}' holds '{entry.name}', which 'tandem study' did not write; move it "
                    "or choose another --out")
    return None


def check_study_target(folder: str | Path, overwrite: bool, protected=()) -> Path:
    """Check, before any computation, that the study folder can be written (or replaced)."""
    target = check_output_folder(folder)
    if os.path.lexists(target):
        if not overwrite:
            raise TandemInputError(f"study folder '{target}' exists; choose another --out or pass "
                                   "--overwrite")
        reason = study_replace_reason(target, protected)
        if reason:
            raise TandemInputError(reason)
    return target


def write_study(study: StudyResult, folder: str | Path, overwrite: bool = False,
                figures: bool = True) -> Path:
    """Write the study folder whole, then put it in place atomically (see
    :func:`~tandem.core.files.place_folder`): an existing folder is replaced only with
    ``overwrite`` and only if it is a study folder (:func:`study_replace_reason`)."""
    import pandas as pd

    protected = study.scenario.input_paths
    check_study_target(folder, overwrite, protected)

    def build(tmp: Path) -> None:
        table = pd.DataFrame(study.rows)[[c.key for c in columns(study)]]
        table.to_csv(tmp / "design-table.csv", index=False, float_format="%.6g")
        breakdowns = loss_table(study)
        breakdowns.to_csv(tmp / "loss-breakdown.csv", index=False, float_format="%.6g")
        (tmp / "design-table.md").write_text(markdown_table(study), encoding="utf-8")
        (tmp / "design-table.tex").write_text(latex_table(study), encoding="utf-8")
        from tandem.study.html_report import html_report

        svgs: dict = {}
        if figures:  # matplotlib only then (half a second of imports)
            from tandem.output.plots import svg_copies

            with svg_copies() as svgs:  # the report inlines the figures as drawn for the folder
                _write_figures(study, tmp / "figures")
        written = sorted(p.name for p in (tmp / "figures").iterdir()) if figures else []
        record = manifest(study, figures, written)
        (tmp / "manifest.json").write_text(json.dumps(record, indent=2, ensure_ascii=False)
                                           + "\n", encoding="utf-8")
        name = Path(folder).name
        (tmp / "report.html").write_text(
            html_report(study, svgs, record, f"tandem study {name}/manifest.json --out {name}-again"),
            encoding="utf-8")

    return place_folder(folder, build, overwrite, lambda t: study_replace_reason(t, protected))


def _write_figures(study: StudyResult, folder: Path) -> None:
    from tandem.design.breakdown import match_breakdown
    from tandem.design.maps import step_gap_map
    from tandem.output.plots import breakdown_figure, map_figures, match_figure

    folder.mkdir()
    if study.results:  # the candidates side by side, before each pair's own figures
        from tandem.output.plots import draw_pair_comparison, save_figure

        save_figure(draw_pair_comparison(study.results, study.scenario.terminals),
                    folder / "compare-pairs.png", False)
    for (front, back), result in study.results.items():
        match_figure(result, folder / f"match-{front}-over-{back}.png",
                     tolerance=tolerance_windows(result, study.scenario.tolerance_pct))
        breakdown_figure(match_breakdown(result), folder / f"losses-{front}-over-{back}.png",
                         f"{result.design.title}: where the incident power goes")
    for key, m in study.stacks.items():
        from types import SimpleNamespace

        from tandem.output.stack_plots import stack_figure

        stack_figure(SimpleNamespace(match=m), folder / f"photons-{key}.png")
    axes = study.scenario.map_gaps()
    if axes is not None:
        fg, bg = axes
        flux = study.scenario.light().photon_flux()
        gap_map = step_gap_map(flux, fg, bg, study.scenario.temperature_K)
        # the chosen designs' gaps (each front at its best row's gap), not the files' defaults
        chosen: dict[tuple[str, str], float] = {}
        for row in study.rows:
            chosen.setdefault((row["front"], "front"), row["front_gap_eV"])
            chosen.setdefault((row["back"], "back"), row["back_gap_eV"])
        marks = [(key, gap, role) for (key, role), gap in chosen.items()]
        map_figures(gap_map, study.scenario.terminals, study.scenario.tolerance_pct, marks,
                    folder / "gap-map", note="radiative limit of step absorbers (ideal: not the "
                    "candidates' optics and losses, which the table holds); lines: the chosen "
                    "designs' gaps")


def study_rows_equal(a: list[dict], b: list[dict], tol: float = 1e-9) -> bool:
    """Two design tables agree (numbers to ``tol``): used to check a reproduced study."""
    if len(a) != len(b):
        return False
    for ra, rb in zip(a, b):
        for k in ra:
            x, y = ra[k], rb.get(k)
            if isinstance(x, float) and isinstance(y, float):
                if not np.isclose(x, y, rtol=tol, atol=tol):
                    return False
            elif x != y:
                return False
    return True
