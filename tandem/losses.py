"""Flat or spectral optical losses (reflectance, parasitic absorption) on the energy grid."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .errors import TandemInputError
from .units import HC_EV_NM


def loss_on_grid(value: str | float, energy_eV, what: str):
    """A loss fraction: a number in [0, 1), or a CSV of wavelength [nm], fraction.

    A spectral loss is interpolated linearly in wavelength onto the grid and held at its
    end values outside the file's range.
    """
    text = str(value).strip()
    try:
        number = float(text)
    except ValueError:
        number = None
    if number is not None:
        if not (math.isfinite(number) and 0 <= number < 1):
            raise TandemInputError(f"{what} {number:g}: give a fraction in [0, 1) or a CSV file "
                                   "of wavelength [nm], fraction")
        return number
    path = Path(text)
    if not path.is_file():
        raise TandemInputError(f"{what} '{text}' is neither a number nor an existing CSV file; "
                               "give a fraction such as 0.03 or a file of wavelength [nm], fraction")
    try:
        data = np.loadtxt(path, delimiter=",", comments="#", ndmin=2,
                          skiprows=0 if path.read_text().lstrip()[:1].isdigit() else 1)
    except ValueError as exc:
        raise TandemInputError(f"{what} file '{path}': not two numeric columns ({exc}); write "
                               "wavelength [nm], fraction per line") from None
    if data.shape[1] != 2 or data.shape[0] < 2:
        raise TandemInputError(f"{what} file '{path}': needs two columns and at least two rows")
    wl, frac = data[:, 0], data[:, 1]
    if np.any(np.diff(wl) <= 0) or np.any(wl <= 0):
        raise TandemInputError(f"{what} file '{path}': wavelengths must be positive and rising")
    if not (np.all(np.isfinite(frac)) and np.all((frac >= 0) & (frac < 1))):
        raise TandemInputError(f"{what} file '{path}': fractions must lie in [0, 1)")
    return np.interp(HC_EV_NM / np.asarray(energy_eV), wl, frac)
