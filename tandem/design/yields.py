"""Energy yield over a period: which front gap and thickness give the most kWh.

For every front gap × front thickness the stack is evaluated at every time step of a
:class:`~tandem.design.series.SpectralSeries`, at that step's cell temperature (gaps shifted by each
absorber's temperature coefficient). Steps are grouped into cell-temperature bins so that
optics are computed once per bin and J0 at three temperatures per bin (interpolated to
each step); the spectra are held in a reduced basis (:meth:`~tandem.design.series.SpectralSeries.
photon_basis`) whose rank is set by a photocurrent error bound, so photocurrents for all
steps of a bin are two small matrix products.

A design is a pair of absorbers (:class:`~tandem.design.matching.StackDesign`, optics-lite)
or a layer stack (:class:`StackYield`, thin-film optics with the wafer traced); only the
subcells' absorptance differs between them.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Callable, NamedTuple, Union

import numpy as np
import pandas as pd

from tandem.physics import detailed_balance as db
from tandem.optics.absorbers import absorbers_bulk
from tandem.design.matching import (STACKS_PER_SOLVE, Conditions, StackDesign, design_bulk,
                                    evaluate_design, rear_absorptance, stack_integrands,
                                    stack_performance)
from tandem.core.errors import TandemInputError
from tandem.design.series import FluxBasis, SpectralSeries, one_blas_thread
from tandem.physics.spectra import PhotonFlux, reference_flux_on, trapezoid_weights
from tandem.physics.stack import IDEAL, Electrical, evaluate_stack
from tandem.core.units import Q

if TYPE_CHECKING:
    from tandem.design.layerstack import LayerStack
    from tandem.design.stack_angles import AngleTable
    from tandem.optics.absorbers import Absorber


@dataclass(frozen=True)
class StackYield:
    """A layer stack as a yield design: its front absorber's thickness is what the yield
    sweeps; every other layer keeps its thickness in ``others`` (swept layers) or the file."""

    stack: LayerStack
    others: dict = field(default_factory=dict)  #: swept layer name → thickness [nm]
    origin: str = "given"  #: where ``others`` came from, for the output

    @property
    def front(self) -> Absorber:
        a = self.stack.front.absorber
        assert a is not None  # the front and back roles are absorbers (checked on reading)
        return a

    @property
    def back(self) -> Absorber:
        a = self.stack.back.absorber
        assert a is not None
        return a

    @property
    def front_gap_eV(self) -> float:
        """The front absorber's gap in the stack at 298.15 K [eV]."""
        layer = self.stack.front
        return float(layer.gap_eV if layer.gap_eV is not None else self.front.gap_eV)

    @property
    def back_thickness_nm(self) -> float:
        layer = self.stack.back
        return float(self.others.get(layer.name, layer.thickness_nm))


YieldDesign = Union[StackDesign, StackYield]


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
    p_3t: np.ndarray | None = None  #: three terminals (the electrical's middle contact) [W/m²]
    p_vm: np.ndarray | None = None  #: (n, k) voltage-matched strings, per string ratio


@dataclass(frozen=True)
class YieldSweep:
    gaps: np.ndarray  #: (n_g,) front gaps at 298.15 K [eV]
    thicknesses: np.ndarray  #: (n_d,) front thicknesses [nm]
    energy_2t: np.ndarray  #: (n_g, n_d) [kWh/m²]
    energy_4t: np.ndarray
    insolation: float  #: [kWh/m²]
    series: SpectralSeries
    design: YieldDesign
    back_thickness_nm: float
    efficiency_am15_2t: np.ndarray  #: (n_g, n_d) under AM1.5G at 298.15 K, fraction
    basis_rank: int = 0  #: rank of the spectra's reduced basis (:class:`~tandem.design.series.FluxBasis`)
    basis_bound: float = 0.0  #: its largest relative photocurrent error bound per step
    energy_3t: np.ndarray | None = None  #: (n_g, n_d) three terminals [kWh/m²]
    energy_vm: np.ndarray | None = None  #: (n_g, n_d, k) voltage-matched strings, per ratio

    @staticmethod
    def optimum_of(values: np.ndarray) -> tuple[int, int]:
        """(gap, thickness) indices of the largest of ``values`` over the sweep."""
        i, j = np.unravel_index(int(np.nanargmax(values)), values.shape)
        return int(i), int(j)

    @property
    def optimum(self) -> tuple[int, int]:
        return self.optimum_of(self.energy_2t)

    @property
    def optimum_4t(self) -> tuple[int, int]:
        return self.optimum_of(self.energy_4t)

    @property
    def am15_optimum(self) -> tuple[int, int]:
        return self.optimum_of(self.efficiency_am15_2t)


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


def bin_count(series: SpectralSeries, width_K: float = 2.0) -> int:
    """How many cell-temperature bins :func:`_bins` makes of the series."""
    return int(np.unique(np.round(np.asarray(series.cell_temperature_K) / width_K)).size)


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


def _subcells(design: YieldDesign, energy, gap, thickness, back_d, t_bin):
    """What each subcell collects per incident photon (n_d, nE) at the bin's temperature: the
    optics-lite pair's or the layer stack's (thin films, the wafer traced)."""
    if isinstance(design, StackYield):
        from tandem.design.layerstack import photon_budget

        budget = photon_budget(design.stack, energy, thickness, design.others, t_bin)
        return budget.front, budget.back
    parts = stack_integrands(design, energy, gap, back_d, None, t_bin)
    absorbed, transmitted = parts.transfer(thickness)
    return absorbed * parts.front_weight, transmitted * parts.back_weight


class _StackSky(NamedTuple):
    """A layer stack's light at its angles (:mod:`tandem.design.stack_angles`)."""

    parts: FluxBasis  #: the arriving direct (rows 0…steps − 1) and diffuse light
    steps: int
    angles: AngleTable  #: the stack's ΔA at the nodes
    aoi_deg: np.ndarray  #: each step's angle of incidence


def _stack_sky(design: YieldDesign, series: SpectralSeries, energy, thicknesses):
    """:class:`_StackSky` of a layer stack, or None at normal incidence (an optics-lite pair,
    or a series whose parts are unknown: measured spectra)."""
    if not (isinstance(design, StackYield) and series.has_parts):
        return None
    from tandem.design.stack_angles import angle_table

    assert series.aoi_deg is not None  # has_parts
    return _StackSky(series.parts_basis(), series.times.size,
                     angle_table(design.stack, design.others, energy, thicknesses), series.aoi_deg)


def _bin_performance(design, flux: FluxBasis, weights_e, step_bin, gap, thickness, back_d,
                     ideality, electrical, rear=None, open_share=0.0, sky=None):
    """The stack over the steps of one temperature bin, for one gap and thicknesses (n_d,).

    The gaps are shifted to the bin's mean temperature; J0 and the diodes use each step's
    own temperature. Photocurrents are two small products through the reduced basis:
    (n_d × nE)·(nE × r), then (n_d × r)·(r × n_h). Returns (performance with arrays
    (n_d, n_h), J_L (n_d, n_h, 2)). ``sky`` (:func:`_stack_sky`): a stack takes the arriving
    direct light at each step's angle and the diffuse light over the hemisphere.

    ``gap`` may be an array of gaps (n_g,): every array then has a leading gap axis, and the
    electrical side is solved once for all of them (its cost is per call at these sizes).
    """
    t_bin, idx, t_cell = step_bin
    if np.ndim(gap):
        parts = [_subcells(design, flux.energy, float(g), thickness, back_d, t_bin) for g in gap]
        front, back = np.stack([f for f, _ in parts]), np.stack([b for _, b in parts])
        gap = np.asarray(gap, dtype=float)[:, None, None]  # against (n_d, n_h)
    else:
        front, back = _subcells(design, flux.energy, gap, thickness, back_d, t_bin)
    front, back = front * weights_e, back * weights_e
    if sky is None:
        basis, coeff = flux.basis, flux.coefficients(idx).T  # (r, n_h)
    else:
        c_direct = sky.parts.coefficients(idx).T
        c_diffuse = sky.parts.coefficients(sky.steps + idx).T
        basis, coeff = sky.parts.basis, c_direct + c_diffuse
    jl = np.stack([(front @ basis.T) @ coeff, (back @ basis.T) @ coeff], axis=-1)
    if sky is not None:
        from tandem.design.stack_angles import angled_currents

        jl = jl + angled_currents(sky.angles, weights_e, basis, c_direct, c_diffuse,
                                  sky.aoi_deg[idx])
    nodes, lagrange = _j0_nodes(t_cell)
    bb = db.blackbody_photon_flux(flux.energy, nodes[:, None])  # (m, nE)
    j0 = np.stack([_interpolate_j0(front @ bb.T, lagrange),
                   _interpolate_j0(back @ bb.T, lagrange)], axis=-1)
    reference = None
    if ideality != 1.0:  # the non-radiative diode fixed under AM1.5G, 1 sun, at every step
        phi = reference_flux_on(flux.energy).flux
        reference = np.stack([front @ phi, back @ phi], axis=-1)
        reference = np.broadcast_to(reference[..., None, :], jl.shape)
    d = np.asarray(thickness, dtype=float)[:, None]
    if isinstance(design, StackYield):  # the stack's own gaps, at their thicknesses
        bulk = absorbers_bulk((design.front, design.back), (gap, design.stack.back.gap_eV),
                              (d, back_d), t_cell)
        design = StackDesign(design.front, design.back)  # its electrical side is the pair's
    else:
        bulk = design_bulk(design, gap, d, back_d, t_cell)
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


def yield_sweep(design: YieldDesign, series: SpectralSeries, gaps, thicknesses,
                back_thickness_nm: float, reference: PhotonFlux, ideality: float = 1.0,
                electrical: Electrical = IDEAL, bin_K: float = 2.0,
                progress: Callable[[int, int], None] | None = None,
                allow_outside: bool = False,
                reference_design: StackDesign | None = None) -> YieldSweep:
    """Energy over the series for every front gap × front thickness, 2T and 4T [kWh/m²].

    A pair's spectral losses are arrays on the series' energy grid (``series.energy``);
    ``reference_design`` holds the same losses on the reference spectrum's grid, for the
    AM1.5G comparison (default: ``design``, right when its losses are flat)."""
    gaps = np.atleast_1d(np.asarray(gaps, dtype=float))
    thicknesses = np.atleast_1d(np.asarray(thicknesses, dtype=float))
    if not np.all(thicknesses > 0):
        raise TandemInputError("front thicknesses must be positive")
    for g in gaps:
        design.front.check_gap(float(g), allow_outside)
    for d in thicknesses:
        design.front.check_thickness(float(d), "front thickness", allow_outside)
    design.back.check_thickness(float(back_thickness_nm), "back thickness", allow_outside)
    if isinstance(design, StackYield) and series.rear_ratio is not None:
        raise TandemInputError(f"stack '{design.stack.key}' on a bifacial site: the light reaching "
                               "a stack's rear is not modelled; give the site bifaciality 0, or "
                               "FRONT and BACK absorbers instead of the stack")
    with one_blas_thread():
        return _yield_sweep(design, series, gaps, thicknesses, back_thickness_nm, reference,
                            ideality, electrical, bin_K, progress, reference_design or design)


def _yield_sweep(design, series, gaps, thicknesses, back_thickness_nm, reference, ideality,
                 electrical, bin_K, progress, reference_design) -> YieldSweep:
    flux = series.photon_basis()
    w = trapezoid_weights(flux.energy) * Q
    e2 = np.zeros((gaps.size, thicknesses.size))
    e3, e4 = np.zeros_like(e2), np.zeros_like(e2)
    k = len(electrical.string_ratios)
    evm = np.zeros(e2.shape + (k,)) if k else None
    bins = list(_bins(series, bin_K))
    total, done = len(bins) * gaps.size, 0
    sky = _stack_sky(design, series, flux.energy, thicknesses)
    for step_bin in bins:
        hours = series.step_hours[step_bin[1]]
        # gaps solved together, a few thousand configurations a call (see STACKS_PER_SOLVE)
        per_call = max(1, STACKS_PER_SOLVE // (thicknesses.size * hours.size))
        for start in range(0, gaps.size, per_call):
            some = slice(start, start + per_call)
            perf, _ = _bin_performance(design, flux, w, step_bin, gaps[some], thicknesses,
                                       back_thickness_nm, ideality, electrical, series.rear_ratio,
                                       series.bifaciality, sky)
            e2[some] += perf.p_2t @ hours / 1000.0
            e3[some] += perf.power(3) @ hours / 1000.0
            e4[some] += perf.p_4t @ hours / 1000.0
            if evm is not None:
                evm[some] += np.einsum("gdsk,s->gdk", perf.p_vm, hours) / 1000.0
            done += gaps[some].size
            if progress:
                progress(done, total)
    am15 = np.array([_am15_efficiency(reference_design, reference, g, thicknesses,
                                      back_thickness_nm, ideality, electrical) for g in gaps])
    used = flux if sky is None else sky.parts  # the basis the photocurrents came through
    return YieldSweep(gaps, thicknesses, e2, e4, series.insolation_kWh_m2, series, design,
                      float(back_thickness_nm), am15, used.rank, used.bound, e3, evm)


def _am15_efficiency(design: YieldDesign, reference, gap, thicknesses, back_d, ideality,
                     electrical) -> np.ndarray:
    """Two-terminal efficiency under the reference spectrum at 298.15 K, per thickness."""
    if isinstance(design, StackYield):
        from tandem.design.layerstack import evaluate_budget, photon_budget

        budget = photon_budget(design.stack, reference.energy, thicknesses, design.others)
        return evaluate_budget(design.stack, budget, reference, 298.15, ideality,
                               electrical)[0].efficiency_2t
    cond = Conditions(reference, 298.15, ideality, electrical)
    return stack_performance(design, cond, gap, thicknesses, back_d).efficiency_2t


def hourly(design: YieldDesign, series: SpectralSeries, gap: float, thickness: float,
           back_thickness_nm: float, ideality: float = 1.0, electrical: Electrical = IDEAL,
           bin_K: float = 2.0) -> HourlyDesign:
    """One design at every time step of the series."""
    with one_blas_thread():
        return _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
                       bin_K)


def _hourly(design, series, gap, thickness, back_thickness_nm, ideality, electrical,
            bin_K) -> HourlyDesign:
    flux = series.photon_basis()
    w = trapezoid_weights(flux.energy) * Q
    n = series.times.size
    out = {k: np.zeros(n) for k in ("p2", "p3", "p4", "jf", "jb")}
    out["pvm"] = np.zeros((n, len(electrical.string_ratios)))
    sky = _stack_sky(design, series, flux.energy, np.array([thickness]))
    for step_bin in _bins(series, bin_K):
        idx = step_bin[1]
        perf, jl = _bin_performance(design, flux, w, step_bin, gap,
                                    np.array([thickness]), back_thickness_nm, ideality, electrical,
                                    series.rear_ratio, series.bifaciality, sky)
        out["p2"][idx], out["p3"][idx], out["p4"][idx] = perf.p_2t[0], perf.power(3)[0], perf.p_4t[0]
        if perf.p_vm is not None:
            out["pvm"][idx] = perf.p_vm[0]
        out["jf"][idx], out["jb"][idx] = jl[0, :, 0], jl[0, :, 1]
    return HourlyDesign(series.times, out["p2"], out["p4"], out["jf"], out["jb"],
                        series.step_irradiance,
                        series.cell_temperature_K, series.step_hours, out["p3"],
                        out["pvm"] if electrical.string_ratios else None)
