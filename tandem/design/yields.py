"""Energy yield over a period: which front gap and thickness give the most kWh.

For every front gap × front thickness the stack is evaluated at every time step of a
:class:`~tandem.design.sky.SpectralSeries`, at that step's cell temperature (gaps shifted by each
absorber's temperature coefficient). Steps are grouped into cell-temperature bins so that
optics are computed once per bin and J0 at three temperatures per bin (interpolated to
each step); the spectra are held in a reduced basis (:meth:`~tandem.design.sky.SpectralSeries.
photon_basis`) whose rank is set by a photocurrent error bound, so photocurrents for all
steps of a bin are two small matrix products.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
import pandas as pd

from tandem.physics import detailed_balance as db
from tandem.design.matching import (Conditions, StackDesign, design_bulk, evaluate_design,
                                    rear_absorptance, stack_integrands, stack_performance)
from tandem.core.errors import TandemInputError
from tandem.design.sky import FluxBasis, SpectralSeries
from tandem.physics.spectra import PhotonFlux, reference_flux_on, trapezoid_weights
from tandem.physics.stack import IDEAL, Electrical, evaluate_stack
from tandem.core.units import Q


@dataclass(frozen=True)
class HourlyDesign:
    """One design step by step: power and photocurrents at each time step."""

    times: pd.DatetimeIndex
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
    basis_rank: int = 0  #: rank of the spectra's reduced basis (:class:`~tandem.design.sky.FluxBasis`)
    basis_bound: float = 0.0  #: its largest relative photocurrent error bound per step

    @property
    def optimum(self) -> tuple[int, int]:
        i, j = np.unravel_index(int(np.nanargmax(self.energy_2t)), self.energy_2t.shape)
        return int(i), int(j)

    @property
    def optimum_4t(self) -> tuple[int, int]:
        i, j = np.unravel_index(int(np.nanargmax(self.energy_4t)), self.energy_4t.shape)
        return int(i), int(j)

    @property
    def am15_optimum(self) -> tuple[int, int]:
        i, j = np.unravel_index(int(np.nanargmax(self.efficiency_am15_2t)), self.energy_2t.shape)
        return int(i), int(j)


#: Cell temperatures per bin at which J0 is computed; it is interpolated between them.
J0_NODES = 3


def _bins(series: SpectralSeries, width_K):
    """Steps grouped in ``width_K`` bins of cell temperature.

    Yields (mean temperature, step indices, each step's temperature).
    """
    t = np.asarray(series.cell_temperature_K)
    labels = np.round(t / width_K)
    for label in np.unique(labels):
        idx = np.flatnonzero(labels == label)
        yield float(t[idx].mean()), idx, t[idx]


def _j0_nodes(t_cell):
    """Chebyshev temperatures spanning the bin's steps, and the Lagrange weights (n_h, m)
    that interpolate a function of 1/T at each step from them.

    ln J0 is nearly linear in 1/T (J0 ∝ T³·e^(−Eg/kT) for a step absorber), so three nodes
    over a 2 K bin interpolate it to ~1e-12 (tested against J0 at each step's temperature).
    """
    lo, hi = float(t_cell.min()), float(t_cell.max())
    if hi - lo < 1e-9:
        return np.array([lo]), np.ones((t_cell.size, 1))
    k = np.arange(J0_NODES)
    nodes = 0.5 * (lo + hi) + 0.5 * (hi - lo) * np.cos((2 * k + 1) * np.pi / (2 * J0_NODES))
    x, xn = 1.0 / t_cell, 1.0 / nodes
    weights = np.ones((t_cell.size, J0_NODES))
    for j in range(J0_NODES):
        for m in range(J0_NODES):
            if m != j:
                weights[:, j] *= (x - xn[m]) / (xn[j] - xn[m])
    return nodes, weights


def _interpolate_j0(j0_nodes, weights):
    """J0 at each step (..., n_h) from J0 at the nodes (..., m): ln J0 interpolated where
    positive (J0 is zero only where a subcell absorbs nothing; kept zero there)."""
    positive = np.all(j0_nodes > 0, axis=-1, keepdims=True)
    logs = np.log(np.where(positive, j0_nodes, 1.0))
    return np.where(positive, np.exp(logs @ weights.T), 0.0)


def _bin_performance(design, flux: FluxBasis, weights_e, step_bin, gap, thickness, back_d,
                     ideality, electrical, rear=None, open_share=0.0):
    """The stack over the steps of one temperature bin, for one gap and thicknesses (n_d,).

    The gaps are shifted to the bin's mean temperature; J0 and the diodes use each step's
    own temperature. Photocurrents are two small products through the reduced basis:
    (n_d × nE)·(nE × r), then (n_d × r)·(r × n_h). Returns (performance with arrays
    (n_d, n_h), J_L (n_d, n_h, 2)).
    """
    t_bin, idx, t_cell = step_bin
    parts = stack_integrands(design, flux.energy, gap, back_d, None, t_bin)
    absorbed, transmitted = parts.transfer(thickness)
    fw, bw = weights_e * parts.front_weight, weights_e * parts.back_weight
    coeff = flux.coefficients(idx).T  # (r, n_h)
    jl = np.stack([(absorbed @ (flux.basis * fw).T) @ coeff,
                   (transmitted @ (flux.basis * bw).T) @ coeff], axis=-1)
    nodes, lagrange = _j0_nodes(t_cell)
    bb = db.blackbody_photon_flux(flux.energy, nodes[:, None])  # (m, nE)
    j0 = np.stack([_interpolate_j0(absorbed @ (bb * fw).T, lagrange),
                   _interpolate_j0(transmitted @ (bb * bw).T, lagrange)], axis=-1)
    reference = None
    if ideality != 1.0:  # the non-radiative diode fixed under AM1.5G, 1 sun, at every step
        phi = reference_flux_on(flux.energy).flux
        reference = np.stack([absorbed @ (phi * fw), transmitted @ (phi * bw)], axis=-1)
        reference = np.broadcast_to(reference[:, None, :], jl.shape)
    bulk = design_bulk(design, gap, np.asarray(thickness, dtype=float)[:, None], back_d, t_cell)
    if rear is None:
        return evaluate_design(design, jl, j0, t_cell, 1.0, ideality, electrical, reference,
                               bulk), jl
    # bifacial: the back subcell also takes light at its rear, and by reciprocity emits there.
    # That emission is radiative: the back's J0 becomes J0,front/ERE + J0,rear, passed on as
    # J0,rad = J0,front + J0,rear with the ERE that gives exactly that sum.
    ar = weights_e * rear_absorptance(design, flux.energy, back_d, t_bin)
    jl[..., 1] += rear[idx] * ((ar @ flux.basis.T) @ coeff)
    j0_rear = open_share * _interpolate_j0((bb @ ar)[None, :], lagrange)
    ere = np.empty(j0.shape)
    ere[..., 0] = design.front.ere
    total = j0[..., 1] / design.back.ere + j0_rear
    j0[..., 1] += j0_rear
    ere[..., 1] = j0[..., 1] / total
    perf = evaluate_stack(jl, j0, t_cell, 1.0, ere, ideality, electrical,
                          design.front.refractive_index, reference, bulk)
    return perf, jl


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
    flux = series.photon_basis()
    w = trapezoid_weights(flux.energy) * Q
    e2 = np.zeros((gaps.size, thicknesses.size))
    e4 = np.zeros_like(e2)
    bins = list(_bins(series, bin_K))
    total, done = len(bins) * gaps.size, 0
    for step_bin in bins:
        hours = series.step_hours[step_bin[1]]
        for i, gap in enumerate(gaps):
            perf, _ = _bin_performance(design, flux, w, step_bin, gap, thicknesses,
                                       back_thickness_nm, ideality, electrical, series.rear_ratio,
                                       series.bifaciality)
            e2[i] += perf.p_2t @ hours / 1000.0
            e4[i] += perf.p_4t @ hours / 1000.0
            done += 1
            if progress:
                progress(done, total)
    cond = Conditions(reference, 298.15, ideality, electrical)
    am15 = np.array([stack_performance(design, cond, g, thicknesses, back_thickness_nm).efficiency_2t
                     for g in gaps])
    return YieldSweep(gaps, thicknesses, e2, e4, series.insolation_kWh_m2, series, design,
                      float(back_thickness_nm), am15, flux.rank, flux.bound)


def hourly(design: StackDesign, series: SpectralSeries, gap: float, thickness: float,
           back_thickness_nm: float, ideality: float = 1.0, electrical: Electrical = IDEAL,
           bin_K: float = 2.0) -> HourlyDesign:
    """One design at every time step of the series."""
    with _one_blas_thread():
        return _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
                       bin_K)


def _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
            bin_K) -> HourlyDesign:
    flux = series.photon_basis()
    w = trapezoid_weights(flux.energy) * Q
    n = series.times.size
    out = {k: np.zeros(n) for k in ("p2", "p4", "jf", "jb")}
    for step_bin in _bins(series, bin_K):
        idx = step_bin[1]
        perf, jl = _bin_performance(design, flux, w, step_bin, gap,
                                    np.array([thickness]), back_thickness_nm, ideality, electrical,
                                    series.rear_ratio, series.bifaciality)
        out["p2"][idx], out["p4"][idx] = perf.p_2t[0], perf.p_4t[0]
        out["jf"][idx], out["jb"][idx] = jl[0, :, 0], jl[0, :, 1]
    return HourlyDesign(series.times, out["p2"], out["p4"], out["jf"], out["jb"],
                        series.step_irradiance,
                        series.cell_temperature_K, series.step_hours)
