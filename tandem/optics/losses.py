"""Flat or spectral optical losses (reflectance, parasitic absorption) on the energy grid."""

from __future__ import annotations

import math

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.physics.columns import read_two_columns
from tandem.core.units import HC_EV_NM


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
    data = read_two_columns(text, what, "wavelength [nm]", "fraction", y_min=0.0, y_below=1.0)
    return np.interp(HC_EV_NM / np.asarray(energy_eV), data[:, 0], data[:, 1])
