"""The energy grid a spectrum's light is put on, and the photon counts that make it exact.

A spectrum is tabulated in wavelength and read as linear between its rows; the engine
integrates in energy. Here: the conversion, a grid fine enough that the energy-side
integrals conserve photons and power, the exact wavelength-side photon count of each
interval, and the dark continuation below a spectrum's last row.
"""

from __future__ import annotations

import math

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.units import HC_EV_NM, Q


def interval_photons(wavelength_nm, irradiance) -> np.ndarray:
    """Photons in each interval of a piecewise-linear spectrum, exactly [m⁻² s⁻¹].

    ∫ I(λ)·λ/(hc) dλ: the integrand is quadratic on each interval, so Simpson's rule is
    exact there.
    """
    wl, irr = np.asarray(wavelength_nm, float), np.asarray(irradiance, float)
    return photons_between(wl[:-1], wl[1:], irr[:-1], irr[1:])


def photons_between(lam0, lam1, irr0, irr1):
    """Photons between λ₀ and λ₁ with the irradiance linear in between [m⁻² s⁻¹]."""
    f0, f1 = irr0 * lam0, irr1 * lam1
    fm = 0.5 * (irr0 + irr1) * 0.5 * (lam0 + lam1)
    return (lam1 - lam0) / 6.0 * (f0 + 4.0 * fm + f1) / (HC_EV_NM * Q)


#: Lowest energy every photon-flux grid reaches [eV] (4,000 nm, where ASTM G173-03 ends): the
#: reciprocity dark current integrates emission over the grid, so a spectrum that stops
#: short (a spectrometer file ending at 1,050 nm) is continued down to here, dark.
EMISSION_FLOOR_EV = HC_EV_NM / 4000.0
#: Energy step of that dark continuation [eV]: fine against kT and Urbach tails (≥ 5 meV).
DARK_STEP_EV = 5e-4


def dark_below(energy, flux):
    """The grid continued from EMISSION_FLOOR_EV up to its first point with zero flux.

    The flux steps from zero to its first value over 10⁻¹² of that energy, so no photon is
    added (the sliver holds Φ₀·E₀·5×10⁻¹³).
    """
    e0 = float(energy[0])
    n = int(np.ceil((e0 - EMISSION_FLOOR_EV) / DARK_STEP_EV)) + 1
    dark = np.linspace(EMISSION_FLOOR_EV, e0, n)[:-1]
    dark = np.r_[dark[dark < e0 * (1 - 2e-12)], e0 * (1 - 1e-12)]
    return np.r_[dark, energy], np.r_[np.zeros(dark.size), flux]


def trapezoid_weights(energy_eV) -> np.ndarray:
    """w with Σ w_i y_i = numpy.trapezoid(y, energy) for any y on this grid [eV]."""
    e = np.asarray(energy_eV, dtype=float)
    w = np.zeros_like(e)
    step = np.diff(e)
    w[:-1] += 0.5 * step
    w[1:] += 0.5 * step
    return w


def to_energy(wavelength_nm, irradiance):
    """(ascending energy [eV], Φ(E) [m⁻² s⁻¹ eV⁻¹]) from I(λ); rows on the last axis."""
    energy = HC_EV_NM / wavelength_nm[::-1]
    # photons per nm: I / (E q); per eV: times |dλ/dE| = hc/E² [nm/eV]
    return energy, irradiance[..., ::-1] / (energy * Q) * HC_EV_NM / energy**2


def conserving_grid(wavelength_nm, irradiance, tolerance: float = 5e-7) -> np.ndarray:
    """A wavelength grid [nm] on which the energy-side integrals conserve photons and power.

    On a coarse wavelength grid the trapezoid rule in energy misses the photon count (two
    rows at 300 and 1000 nm overcount it 2.6-fold). Intervals wider than a relative step δ
    are split at points of the same piecewise-linear spectrum (so the wavelength-side
    integrals do not change), halving δ until the trapezoid integrals of Φ(E) and E·Φ(E)
    agree with the exact ones within ``tolerance``. ASTM G173-03 needs 259 extra points.
    """
    wl, irr = np.asarray(wavelength_nm, float), np.asarray(irradiance, float)
    photons, power = float(np.sum(interval_photons(wl, irr))), float(np.trapezoid(irr, wl))
    delta = math.inf
    for _ in range(40):
        grid = _refined(wl, delta)
        energy, flux = to_energy(grid, np.interp(grid, wl, irr))
        n_e = np.trapezoid(flux, energy)
        p_e = np.trapezoid(flux * energy * Q, energy)
        if abs(n_e / photons - 1) <= tolerance and abs(p_e / power - 1) <= tolerance:
            return grid
        delta = 4e-3 if math.isinf(delta) else delta / 2
        if grid.size > 2_000_000:
            break
    raise TandemInputError("spectrum: cannot be put on an energy grid that conserves its "
                           "photons; check its wavelengths")


def _refined(wavelength_nm, delta):
    """The grid with every interval split into ⌈ΔE/(E·δ)⌉ equal parts (in wavelength)."""
    if math.isinf(delta):
        return wavelength_nm
    wl = wavelength_nm
    relative = np.diff(wl) / wl[:-1]  # = ΔE/E at the interval's upper energy, to first order
    parts = np.maximum(np.ceil(relative / delta).astype(int), 1)
    if np.all(parts == 1):
        return wl
    interval = np.repeat(np.arange(parts.size), parts)
    first = np.repeat(np.cumsum(parts) - parts, parts)
    fraction = (np.arange(interval.size) - first) / parts[interval]
    return np.append(wl[interval] + fraction * np.diff(wl)[interval], wl[-1])
