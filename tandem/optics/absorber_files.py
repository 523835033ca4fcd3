"""Absorber descriptions: one TOML file each, validated strictly, resolved to optics.

The schema (documented in the README) is ours. Every field is checked; an unknown key, a
missing field or a physically impossible value raises :class:`TandemInputError` naming the
file, the field and the fix in one line.
"""

from __future__ import annotations

import difflib
import functools
import math
import tomllib
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.files import bundled_dir
from tandem.core.units import HC_EV_NM, K_B_EV, T_STC
from tandem.optics.absorbers import EDGE_MODELS, MAX_UNCUT_URBACH_EV, Absorber, GapRelation
from tandem.optics.absorptance import (
    LIGHT_TRAPPING,
    BandEdge,
    ParametricEdge,
    TabulatedEdge,
)
from tandem.optics.database import database_alpha
from tandem.physics.spectra import read_two_columns

# --------------------------------------------------------------------------------------
# Schema
# --------------------------------------------------------------------------------------

# section -> {key: (kind, required)}; kinds: str, num, list, bool
SCHEMA: dict[str, dict[str, tuple[str, bool]]] = {
    "": {"name": ("str", True), "description": ("str", True)},
    "gap": {
        "value_eV": ("num", False),
        "relation": ("str", False),
        "coefficients_eV": ("numlist", False),
        "composition": ("str", False),
        "composition_range": ("numlist", False),
        "composition_default": ("num", False),
        "temperature_coefficient_meV_per_K": ("num", False),
    },
    "absorption": {
        "model": ("str", True),
        "urbach_energy_meV": ("num", False),
        "defect_floor_per_cm": ("num", False),
        "tail_cutoff_below_gap_eV": ("num", False),
        "bands": ("bandlist", False),
        "alpha_at_gap_per_cm": ("num", False),
        "strength_per_cm": ("num", False),
        "table": ("str", False),
        "table_axis": ("str", False),
        "database": ("str", False),
    },
    "optics": {"refractive_index": ("num", True), "light_trapping": ("str", True)},
    "electrical": {
        "ere": ("num", False),
        "voc_deficit_V": ("num", False),
        "collection_length_nm": ("num", False),
    },
    "thickness": {
        "default_nm": ("num", False),
        "range_nm": ("numlist", False),
        "default_um": ("num", False),
        "range_um": ("numlist", False),
    },
    "sources": {},  # free keys: field -> citation
}


class Checker:
    """Strict checks of a parsed TOML file against a schema; every failure is one line."""

    def __init__(self, path: Path, data: dict, schema=None, label: str = "absorber file",
                 required_sections=("gap", "absorption", "optics", "electrical", "thickness",
                                    "sources"), free_sections=("sources",)):
        self.path = path
        self.data = data
        self.schema = SCHEMA if schema is None else schema
        self.label = label
        self.required_sections = required_sections
        self.free_sections = free_sections

    def fail(self, field_name: str, problem: str, fix: str) -> None:
        raise TandemInputError(f"{self.label} '{self.path}': field '{field_name}' {problem}; {fix}")

    def check_keys(self) -> None:
        schema = self.schema
        for key, value in self.data.items():
            if key in schema and key:
                if not isinstance(value, dict):
                    self.fail(key, "must be a [section]", f"write it as [{key}] with its keys below")
                if key in self.free_sections:
                    continue
                for sub in value:
                    if sub not in schema[key]:
                        hint = difflib.get_close_matches(sub, schema[key], n=1)
                        fix = f"did you mean '{hint[0]}'?" if hint else \
                            f"allowed keys: {', '.join(schema[key])}"
                        self.fail(f"{key}.{sub}", "is not a known key", fix)
            elif key not in schema[""]:
                hint = difflib.get_close_matches(key, list(schema) + list(schema[""]), n=1)
                fix = f"did you mean '{hint[0]}'?" if hint else "remove it"
                self.fail(key, "is not a known key", fix)
        for section in self.required_sections:
            if section not in self.data:
                self.fail(section, "is missing", f"add a [{section}] section (see the README)")
        for section, keys in schema.items():
            for key, (kind, required) in keys.items():
                where = self.data if not section else self.data.get(section, {})
                name = f"{section}.{key}" if section else key
                if key not in where:
                    present = not section or section in self.data
                    if required and present:
                        self.fail(name, "is missing", "add it (see the README)")
                    continue
                self.check_kind(name, where[key], kind)

    def check_kind(self, name: str, value, kind: str) -> None:
        if kind == "str" and not isinstance(value, str):
            self.fail(name, f"= {value!r} must be text", "put it in quotes")
        if kind == "num":
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                self.fail(name, f"= {value!r} must be a finite number", "give a number")
        if kind == "bool" and not isinstance(value, bool):
            self.fail(name, f"= {value!r} must be true or false", "write true or false")
        if kind == "strlist":
            if not (isinstance(value, list) and value and all(isinstance(v, str) for v in value)):
                self.fail(name, f"= {value!r} must be a list of names", 'write e.g. ["silicon"]')
        if kind == "numlist":
            if not (isinstance(value, list) and value and all(
                    isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
                    for v in value)):
                self.fail(name, f"= {value!r} must be a list of numbers", "write e.g. [1.0, 2.0]")

    def get(self, section: str, key: str, default=None):
        return self.data.get(section, {}).get(key, default)

    def positive(self, section: str, key: str, unit: str, default=None, low=None, high=None):
        """A positive value, inside [low, high] where the physics bounds it."""
        value = self.get(section, key, default)
        if value is not None and not value > 0:
            self.fail(f"{section}.{key}", f"= {value:g} must be positive", f"give it in {unit}")
        if value is not None and ((low is not None and value < low)
                                  or (high is not None and value > high)):
            span = f"{low:g}–{high:g}" if low is not None else f"up to {high:g}"
            self.fail(f"{section}.{key}", f"= {value:g} is outside {span}", f"give it in {unit}")
        return value


def read_toml(path: Path, label: str = "absorber file",
               hint: str = "or a bundled name (see 'tandem absorbers')") -> dict:
    if not path.is_file():
        raise TandemInputError(f"{label} '{path}' not found; give a path to a .toml file {hint}")
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise TandemInputError(f"{label} '{path}': not valid TOML ({exc}); fix the syntax") from None
    except RecursionError:
        raise TandemInputError(f"{label} '{path}': nested too deeply to be a description; "
                               "flatten it") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise TandemInputError(f"{label} '{path}' cannot be read ({exc})") from None


def parse_absorber(path: Path) -> Absorber:
    """Read and validate one absorber file.

    Examples
    --------
    >>> from tandem import bundled_absorbers, parse_absorber
    >>> parse_absorber(bundled_absorbers()['gaas']).gap_eV
    1.424
    """
    path = Path(path)
    c = Checker(path, read_toml(path))
    c.check_keys()

    # --- gap: fixed or a relation -------------------------------------------------------
    value = c.get("gap", "value_eV")
    coeffs = c.get("gap", "coefficients_eV")
    relation = None
    if (value is None) == (coeffs is None):
        c.fail("gap.value_eV", "and gap.coefficients_eV are both given or both missing",
               "give value_eV for a fixed gap, or relation = 'polynomial' with coefficients_eV, "
               "composition, composition_range and composition_default")
    if coeffs is not None:
        if c.get("gap", "relation") not in ("polynomial", "quadratic", "linear"):
            c.fail("gap.relation", f"= {c.get('gap', 'relation')!r} is not known",
                   "use 'polynomial' (Eg = c0 + c1·x + c2·x² + …)")
        for key in ("composition", "composition_range", "composition_default"):
            if c.get("gap", key) is None:
                c.fail(f"gap.{key}", "is missing", "a tunable gap needs composition, "
                       "composition_range and composition_default")
        rng = c.get("gap", "composition_range")
        if len(rng) != 2 or rng[0] >= rng[1]:
            c.fail("gap.composition_range", f"= {rng} must be [low, high] with low < high",
                   "swap or fix the two values")
        x0 = c.get("gap", "composition_default")
        if not rng[0] <= x0 <= rng[1]:
            c.fail("gap.composition_default", f"= {x0:g} lies outside composition_range {rng}",
                   "choose a default inside the range")
        relation = GapRelation(tuple(float(v) for v in coeffs), c.get("gap", "composition"),
                               (float(rng[0]), float(rng[1])), float(x0))
        gaps = relation.gap(np.linspace(rng[0], rng[1], 101))
        if not np.all(gaps > 0):
            c.fail("gap.coefficients_eV", "give a gap ≤ 0 eV inside composition_range",
                   "check the coefficients (eV) and the range")
        value = float(relation.gap(x0))
    elif not value > 0:
        c.fail("gap.value_eV", f"= {value:g} must be positive", "give the band gap in eV")
    tc = c.get("gap", "temperature_coefficient_meV_per_K")

    # --- absorption edge ---------------------------------------------------------------
    model = c.get("absorption", "model")
    if model not in EDGE_MODELS:
        c.fail("absorption.model", f"= {model!r} is not known", f"use one of {', '.join(EDGE_MODELS)}")
    if c.get("absorption", "urbach_energy_meV") is None:
        c.fail("absorption.urbach_energy_meV", "is missing", "give the tail's slope in meV "
               "(typically 5–50)")
    eu = (c.positive("absorption", "urbach_energy_meV", "meV (typically 5–50)", low=1.0,
                     high=300.0) or 0.0) / 1000.0
    floor = c.positive("absorption", "defect_floor_per_cm", "cm^-1", low=1e-6, high=1e4) or 0.0
    cutoff = c.positive("absorption", "tail_cutoff_below_gap_eV", "eV below the gap", low=0.01,
                        high=3.0)
    if cutoff is not None and cutoff >= value:
        c.fail("absorption.tail_cutoff_below_gap_eV", f"= {cutoff:g} eV reaches below 0 eV",
               f"give less than the gap ({value:g} eV)")
    if eu > MAX_UNCUT_URBACH_EV and cutoff is None:
        c.fail("absorption.urbach_energy_meV", f"= {1000 * eu:g} meV is above 25 meV (about kT) "
               "with no tail cutoff: the radiative dark current would grow into the tail without "
               "bound", "add tail_cutoff_below_gap_eV (where the film stops absorbing)")
    if floor and cutoff is None:
        c.fail("absorption.defect_floor_per_cm", "needs tail_cutoff_below_gap_eV",
               "a floor absorbs down to 0 eV otherwise; give where the defect absorption ends")
    if model == "bands":
        if relation is not None:
            c.fail("gap.coefficients_eV", "cannot move absorption bands",
                   "use a fixed value_eV (the band's onset) with model = 'bands'")
        edge: BandEdge | ParametricEdge | TabulatedEdge = _band_edge(c, eu, value)
    elif model in ("direct", "indirect"):
        for key in ("alpha_at_gap_per_cm", "strength_per_cm"):
            if c.get("absorption", key) is None:
                c.fail(f"absorption.{key}", "is missing",
                       f"a {model} edge needs alpha_at_gap_per_cm and strength_per_cm (cm^-1)")
            c.positive("absorption", key, "cm^-1", low=1e-3, high=1e8)
        edge = ParametricEdge(model, eu, float(c.get("absorption", "alpha_at_gap_per_cm")),
                              float(c.get("absorption", "strength_per_cm")))
    else:
        if relation is not None:
            c.fail("gap.coefficients_eV", f"cannot move a '{model}' edge",
                   "use a fixed value_eV with tabulated data, or a direct/indirect edge model")
        edge = _tabulated_edge(c, model, eu)

    # --- optics, electrical, thickness -------------------------------------------------
    n = c.positive("optics", "refractive_index", "as a number (e.g. 3.6 for silicon)", high=10.0)
    if n < 1:
        c.fail("optics.refractive_index", f"= {n:g} is below 1", "give the real part of the index (≥ 1)")
    trapping = c.get("optics", "light_trapping")
    if trapping not in LIGHT_TRAPPING:
        c.fail("optics.light_trapping", f"= {trapping!r} is not known", f"use one of {', '.join(LIGHT_TRAPPING)}")
    ere, deficit = c.get("electrical", "ere"), c.get("electrical", "voc_deficit_V")
    if (ere is None) == (deficit is None):
        c.fail("electrical.ere", "and electrical.voc_deficit_V are both given or both missing",
               "give one: ere in (0, 1], or the non-radiative Voc deficit in V")
    if ere is not None:
        if not 0 < ere <= 1:
            c.fail("electrical.ere", f"= {ere:g} is outside (0, 1]", "give a fraction, 1 = radiative limit")
        origin = "given"
    else:
        if not 0 <= deficit < 0.8 * value:
            c.fail("electrical.voc_deficit_V", f"= {deficit:g} V is outside 0 to {0.8 * value:.2f} V",
                   "give the non-radiative loss in V, well below the gap")
        # Rau 2007: ΔVoc,nr = −(kT/q) ln ERE, at the standard 298.15 K
        ere = math.exp(-deficit / (K_B_EV * T_STC))
        origin = f"from a non-radiative Voc deficit of {deficit:g} V at 298.15 K"
    lc = c.positive("electrical", "collection_length_nm", "nm", low=1.0, high=1e8)

    default, rng = c.get("thickness", "default_nm"), c.get("thickness", "range_nm")
    if default is None and c.get("thickness", "default_um") is not None:
        default = c.get("thickness", "default_um") * 1000.0
    if rng is None and c.get("thickness", "range_um") is not None:
        rng = [v * 1000.0 for v in c.get("thickness", "range_um")]
    if default is None or rng is None:
        c.fail("thickness.default_nm", "or thickness.range_nm is missing",
               "give default_nm and range_nm (or default_um and range_um for wafers)")
    if len(rng) != 2:
        c.fail("thickness.range_nm", f"= {rng} must have two values", "write [thinnest, thickest]")
    if not rng[0] > 0:
        c.fail("thickness.range_nm", f"starts at {rng[0]:g}", "thicknesses must be positive")
    if not (0.1 <= rng[0] and rng[1] <= 1e7):
        c.fail("thickness.range_nm", f"= {rng} goes beyond 0.1 nm – 10 mm",
               "give thicknesses a device can have")
    if rng[0] >= rng[1]:
        c.fail("thickness.range_nm", f"= {rng} is reversed or empty", "write [thinnest, thickest]")
    if not rng[0] <= default <= rng[1]:
        c.fail("thickness.default_nm", f"= {default:g} lies outside the range {rng}",
               "choose a default inside the range")

    sources = c.data.get("sources", {})
    if not sources:
        c.fail("sources", "is empty", "name where each number comes from (mark values recalled from memory)")
    return Absorber(
        key=path.stem, path=path, name=c.get("", "name") or c.data["name"],
        description=c.data["description"], gap_eV=float(value), relation=relation, edge=edge,
        edge_model=model, refractive_index=float(n), light_trapping=trapping, ere=float(ere),
        ere_origin=origin, collection_length_nm=None if lc is None else float(lc),
        thickness_nm=float(default), thickness_range_nm=(float(rng[0]), float(rng[1])),
        gap_temperature_coefficient_eV_K=None if tc is None else tc / 1000.0,
        sources={str(k): str(v) for k, v in sources.items()},
        defect_floor_per_cm=float(floor), tail_cutoff_below_gap_eV=cutoff,
    )


def _band_edge(c: Checker, urbach_eV: float, onset_eV: float) -> BandEdge:
    bands = c.get("absorption", "bands")
    if not bands:
        c.fail("absorption.bands", "is missing", "give bands = [{centre_eV = 2.3, width_eV = 0.25, "
               "peak_per_cm = 3e3}, ...]")
    out = []
    for i, band in enumerate(bands, 1):
        if not isinstance(band, dict) or set(band) != {"centre_eV", "width_eV", "peak_per_cm"}:
            c.fail(f"absorption.bands[{i}]", "must have centre_eV, width_eV and peak_per_cm",
                   "write {centre_eV = 2.3, width_eV = 0.25, peak_per_cm = 3e3}")
        for key, lo, hi in (("centre_eV", 0.2, 10.0), ("width_eV", 0.005, 3.0),
                            ("peak_per_cm", 1e-3, 1e8)):
            v = band[key]
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not lo <= v <= hi:
                c.fail(f"absorption.bands[{i}].{key}", f"= {v!r} is outside {lo:g}–{hi:g}",
                       "check the value and its unit")
        out.append((float(band["centre_eV"]), float(band["width_eV"]), float(band["peak_per_cm"])))
    return BandEdge(tuple(out), urbach_eV, onset_eV)


def _tabulated_edge(c: Checker, model: str, eu: float) -> TabulatedEdge:
    if model == "table":
        rel = c.get("absorption", "table")
        if rel is None:
            c.fail("absorption.table", "is missing", "give the CSV file with the α table")
        axis = c.get("absorption", "table_axis", "wavelength_nm")
        if axis not in ("wavelength_nm", "energy_eV"):
            c.fail("absorption.table_axis", f"= {axis!r} is not known", "use 'wavelength_nm' or 'energy_eV'")
        energy, alpha = _read_alpha_table(c, (c.path.parent / rel), axis)
        origin = f"table {rel}"
    else:
        entry = c.get("absorption", "database")
        if entry is None:
            c.fail("absorption.database", "is missing",
                   "give the refractive-index database entry as 'shelf/book/page', e.g. 'main/Si/Green-2008'")
        try:
            energy, alpha = database_alpha(entry)
        except TandemInputError as exc:
            c.fail("absorption.database", f"= {entry!r}: {exc}", "check the entry name")
        origin = f"refractive-index database {entry}"
    return TabulatedEdge(energy, alpha, eu, origin)


def _read_alpha_table(c: Checker, path: Path, axis: str):
    if not path.is_file():
        c.fail("absorption.table", f"= '{path.name}' not found next to the absorber file",
               "put the CSV beside the .toml or fix the path")
    x_name = "wavelength [nm]" if axis == "wavelength_nm" else "energy [eV]"
    data = read_two_columns(path, "absorption table", x_name, "alpha [cm^-1]", rising=False,
                            positive=True)
    x, alpha = data[:, 0], data[:, 1]
    energy = HC_EV_NM / x if axis == "wavelength_nm" else x
    order = np.argsort(energy)
    if np.any(np.diff(energy[order]) <= 0):
        c.fail("absorption.table", f"'{path.name}' repeats a point", "remove duplicate rows")
    return energy[order], alpha[order]


# --------------------------------------------------------------------------------------
# Finding absorbers
# --------------------------------------------------------------------------------------


def bundled_absorbers() -> dict[str, Path]:
    """Bundled absorber names (file stems) and their files.

    Examples
    --------
    >>> from tandem import bundled_absorbers
    >>> 'silicon' in bundled_absorbers()
    True
    """
    return {p.stem: p for p in sorted(bundled_dir("absorbers").glob("*.toml"))}


def load_absorber(name_or_path: str | Path) -> Absorber:
    """A bundled absorber by name, or a user's file by path.

    Examples
    --------
    >>> from tandem import load_absorber
    >>> load_absorber('perovskite-wide').tunable
    True
    """
    text = str(name_or_path)
    path = Path(text)
    if text.endswith(".toml") or path.is_file():
        return _parse_cached(path.resolve())
    bundled = bundled_absorbers()
    if text in bundled:
        return _parse_cached(bundled[text])
    close = difflib.get_close_matches(text, bundled, n=3)
    hint = f"did you mean {', '.join(close)}? " if close else ""
    raise TandemInputError(f"absorber '{text}' is neither a bundled name nor a .toml file; "
                           f"{hint}bundled: {', '.join(bundled)}")


@functools.lru_cache(maxsize=64)
def _cached(path: Path, mtime: float) -> Absorber:
    return parse_absorber(path)


def _parse_cached(path: Path) -> Absorber:
    mtime = path.stat().st_mtime if path.exists() else -1.0
    return _cached(path, mtime)
