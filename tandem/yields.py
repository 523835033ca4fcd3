"""Energy yield over a period: which front gap and thickness give the most kWh.

For every front gap × front thickness the stack is evaluated at every time step of a
:class:`~tandem.sky.SpectralSeries`, at that step's cell temperature (gaps shifted by each
absorber's temperature coefficient). Steps are grouped into cell-temperature bins so that
optics and J0 are computed once per bin; photocurrents for all steps of a bin are one
matrix product.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import detailed_balance as db
from .design import (Conditions, StackDesign, evaluate_design, stack_integrands,
                     stack_performance, trapezoid_weights)
from .errors import TandemInputError
from .sky import SpectralSeries
from .spectra import PhotonFlux
from .stack import IDEAL, Electrical
from .units import Q


@dataclass(frozen=True)
class HourlyDesign:
    """One design step by step: power and photocurrents at each time step."""

    times: object  #: DatetimeIndex
    p_2t: np.ndarray  #: [W/m²]
    p_4t: np.ndarray
    j_front: np.ndarray  #: [A/m²]
    j_back: np.ndarray
    irradiance: np.ndarray  #: [W/m²]
    cell_temperature_K: np.ndarray
    step_hours: np.ndarray


@dataclass(frozen=True)
class YieldSweep:
    gaps: np.ndarray  #: (n_g,) front gaps at 298.15 K [eV]
    thicknesses: np.ndarray  #: (n_d,) front thicknesses [nm]
    energy_2t: np.ndarray  #: (n_g, n_d) [kWh/m²]
    energy_4t: np.ndarray
    insolation: float  #: [kWh/m²]
    series: SpectralSeries
    design: StackDesign
    back_thickness_nm: float
    efficiency_am15_2t: np.ndarray  #: (n_g, n_d) under AM1.5G at 298.15 K, fraction

    @property
    def optimum(self) -> tuple[int, int]:
        return np.unravel_index(int(np.nanargmax(self.energy_2t)), self.energy_2t.shape)

    @property
    def optimum_4t(self) -> tuple[int, int]:
        return np.unravel_index(int(np.nanargmax(self.energy_4t)), self.energy_4t.shape)

    @property
    def am15_optimum(self) -> tuple[int, int]:
        return np.unravel_index(int(np.nanargmax(self.efficiency_am15_2t)), self.energy_2t.shape)


def _bins(series: SpectralSeries, energy, width_K):
    """Steps grouped in ``width_K`` bins of cell temperature.

    Yields (mean temperature, step indices, each step's temperature, blackbody rows (n_h, nE)
    at each step's own temperature).
    """
    t = np.asarray(series.cell_temperature_K)
    labels = np.round(t / width_K)
    for label in np.unique(labels):
        idx = np.flatnonzero(labels == label)
        yield float(t[idx].mean()), idx, t[idx], db.blackbody_photon_flux(energy, t[idx][:, None])


def _bin_performance(design, energy, weights_e, fluxes, step_bin, gap, thickness, back_d,
                     ideality, electrical):
    """The stack over the steps of one temperature bin, for one gap and thicknesses (n_d,).

    The gaps are shifted to the bin's mean temperature; J0 and the diodes use each step's
    own temperature. Returns (performance with arrays (n_d, n_h), J_L (n_d, n_h, 2)).
    """
    t_bin, idx, t_cell, bb = step_bin
    parts = stack_integrands(design, energy, gap, back_d, None, t_bin)
    absorbed, transmitted = parts.transfer(thickness)
    fw, bw = weights_e * parts.front_weight, weights_e * parts.back_weight
    rows = fluxes[idx]
    jl = np.stack([absorbed @ (rows * fw).T, transmitted @ (rows * bw).T], axis=-1)
    j0 = np.stack([absorbed @ (bb * fw).T, transmitted @ (bb * bw).T], axis=-1)
    cond = Conditions(None, float(t_bin), ideality, electrical)
    return evaluate_design(design, cond, jl, j0, t_cell, 1.0), jl


def yield_sweep(design: StackDesign, series: SpectralSeries, gaps, thicknesses,
                back_thickness_nm: float, reference: PhotonFlux, ideality: float = 1.0,
                electrical: Electrical = IDEAL, bin_K: float = 2.0,
                progress: Callable[[int, int], None] | None = None,
                allow_outside: bool = False) -> YieldSweep:
    """Energy over the series for every front gap × front thickness, 2T and 4T [kWh/m²]."""
    gaps = np.atleast_1d(np.asarray(gaps, dtype=float))
    thicknesses = np.atleast_1d(np.asarray(thicknesses, dtype=float))
    if not np.all(thicknesses > 0):
        raise TandemInputError("front thicknesses must be positive")
    for g in gaps:
        design.front.check_gap(float(g), allow_outside)
    for d in thicknesses:
        design.front.check_thickness(float(d), "front thickness", allow_outside)
    design.back.check_thickness(float(back_thickness_nm), "back thickness", allow_outside)
    with _one_blas_thread():
        return _yield_sweep(design, series, gaps, thicknesses, back_thickness_nm, reference,
                            ideality, electrical, bin_K, progress)


def _one_blas_thread():
    """The yield's many small matrix products (steps × energies) run fastest on one BLAS
    thread: two threads contend on two busy cores (measured: see DEVELOPERS.md)."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def _yield_sweep(design, series, gaps, thicknesses, back_thickness_nm, reference, ideality,
                 electrical, bin_K, progress) -> YieldSweep:
    energy, fluxes, _ = series.photon_fluxes()
    w = trapezoid_weights(energy) * Q
    e2 = np.zeros((gaps.size, thicknesses.size))
    e4 = np.zeros_like(e2)
    bins = list(_bins(series, energy, bin_K))
    total, done = len(bins) * gaps.size, 0
    for step_bin in bins:
        hours = series.step_hours[step_bin[1]]
        for i, gap in enumerate(gaps):
            perf, _ = _bin_performance(design, energy, w, fluxes, step_bin, gap, thicknesses,
                                       back_thickness_nm, ideality, electrical)
            e2[i] += perf.p_2t @ hours / 1000.0
            e4[i] += perf.p_4t @ hours / 1000.0
            done += 1
            if progress:
                progress(done, total)
    cond = Conditions(reference, 298.15, ideality, electrical)
    am15 = np.array([stack_performance(design, cond, g, thicknesses, back_thickness_nm).efficiency_2t
                     for g in gaps])
    return YieldSweep(gaps, thicknesses, e2, e4, series.insolation_kWh_m2, series, design,
                      float(back_thickness_nm), am15)


def hourly(design: StackDesign, series: SpectralSeries, gap: float, thickness: float,
           back_thickness_nm: float, ideality: float = 1.0, electrical: Electrical = IDEAL,
           bin_K: float = 2.0) -> HourlyDesign:
    """One design at every time step of the series."""
    with _one_blas_thread():
        return _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
                       bin_K)


def _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
            bin_K) -> HourlyDesign:
    energy, fluxes, power = series.photon_fluxes()
    w = trapezoid_weights(energy) * Q
    n = series.times.size
    out = {k: np.zeros(n) for k in ("p2", "p4", "jf", "jb")}
    for step_bin in _bins(series, energy, bin_K):
        idx = step_bin[1]
        perf, jl = _bin_performance(design, energy, w, fluxes, step_bin, gap,
                                    np.array([thickness]), back_thickness_nm, ideality, electrical)
        out["p2"][idx], out["p4"][idx] = perf.p_2t[0], perf.p_4t[0]
        out["jf"][idx], out["jb"][idx] = jl[0, :, 0], jl[0, :, 1]
    return HourlyDesign(series.times, out["p2"], out["p4"], out["jf"], out["jb"], power,
                        series.cell_temperature_K, series.step_hours)
