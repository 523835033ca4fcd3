"""Current matching of real absorbers: thickness and gap sweeps of a two-junction stack.

The optics-lite model gives each subcell's EQE in place (front filtering back); the
detailed-balance engine turns EQEs into photocurrents and, by reciprocity, J0. Sweeps are
vectorised over front thickness, and a match's front gaps share each electrical solve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Callable, Protocol, Sequence

import numpy as np

from tandem.physics import detailed_balance as db
from tandem.optics.absorbers import Absorber, absorbers_bulk
from tandem.core.errors import TandemInputError
from tandem.optics.absorptance import NM_TO_CM, StackOptics, stack_optics
from tandem.physics.spectra import PhotonFlux, trapezoid_weights
from tandem.physics.stack import IDEAL, SUBCELL_NAMES, Electrical, StackPerformance, evaluate_stack
from tandem.physics.checks import check_receives_light
from tandem.physics.recombination import BulkRecombination
from tandem.core.units import Q, T_STC

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class StackDesign:
    """Two absorbers, front (sunward) first, and the losses around them."""

    front: Absorber
    back: Absorber
    reflectance: float | np.ndarray = 0.0  #: front-surface reflectance per energy [-]
    front_parasitic: float | np.ndarray = 0.0  #: absorbed in the front contact [-]
    interlayer_parasitic: float | np.ndarray = 0.0  #: absorbed between the subcells [-]

    def swapped(self) -> StackDesign:
        return replace(self, front=self.back, back=self.front)

    @property
    def title(self) -> str:
        """The pair as figures and reports name it: the absorbers' names, not their file keys."""
        return f"{self.front.name} over {self.back.name}"


@dataclass(frozen=True)
class Conditions:
    photon_flux: PhotonFlux
    temperature_K: float = 298.15
    ideality: float = 1.0
    electrical: Electrical = IDEAL
    allow_outside_range: bool = False  #: accept gaps and thicknesses outside declared ranges


def stack_light(design: StackDesign, energy, front_gap, front_thickness_nm, back_thickness_nm,
                back_gap=None, temperature_K=T_STC) -> StackOptics:
    """Optics of the stack on the energy grid; ``front_thickness_nm`` may be an array.

    Gaps are given at 298.15 K and moved to ``temperature_K`` with each absorber's
    temperature coefficient (:meth:`~tandem.optics.absorbers.Absorber.gap_shift_eV`).
    """
    d_front = np.asarray(front_thickness_nm, dtype=float)[..., None]
    front = design.front.layer(energy, d_front, front_gap, design.front.gap_shift_eV(temperature_K),
                               position="front")
    back = design.back.layer(energy, back_thickness_nm, back_gap,
                             design.back.gap_shift_eV(temperature_K))
    return stack_optics(front, back, design.reflectance, design.front_parasitic,
                        design.interlayer_parasitic)


@dataclass(frozen=True)
class StackIntegrands:
    """Energy-resolved pieces of the stack's EQEs that do not depend on front thickness.

    front EQE(E, d) = front_weight(E)·(1 − exp(−(α_f + β)d)), β = 1/L_c (0 without);
    back EQE(E, d) = back_weight(E)·exp(−α_f d).
    """

    alpha_nm: np.ndarray  #: front α [1/nm]
    beta: float  #: 1/L_c of the front [1/nm]
    front_weight: np.ndarray  #: entering·α/(α + β)
    back_weight: np.ndarray  #: entering·(1 − p_inter)·a_back·η_back

    def transfer(self, thickness_nm):
        """(absorbed, transmitted) of the front for thicknesses (...,) → (..., nE)."""
        d = np.asarray(thickness_nm, dtype=float)
        depth = np.multiply.outer(-d, self.alpha_nm)  # −α·d
        if self.beta == 0.0:
            absorbed = np.negative(np.expm1(depth, out=depth), out=depth)
            # T = 1 − absorbed: its absolute error (1e-16) is far below every weight that matters
            return absorbed, np.subtract(1.0, absorbed)
        transmitted = np.exp(depth)
        return -np.expm1(depth - self.beta * d[..., None]), transmitted


def stack_integrands(design: StackDesign, energy, front_gap, back_thickness_nm, back_gap=None,
                     temperature_K=T_STC) -> StackIntegrands:
    """The thickness-independent factors of both EQEs at a cell temperature.

    This is the one place where cell temperature moves the absorbers' edges: gaps are
    given at 298.15 K and shifted by each absorber's temperature coefficient, so every
    command (match, map, study, spread, yield) sees the same temperature dependence.
    """
    front, back = design.front, design.back
    front_shift_eV = front.gap_shift_eV(temperature_K)
    back_shift_eV = back.gap_shift_eV(temperature_K)
    e = np.asarray(energy, dtype=float)
    alpha_nm = front.alpha(e, front_gap, front_shift_eV) * NM_TO_CM
    beta = 0.0 if front.collection_length_nm is None else 1.0 / front.collection_length_nm
    entering = (1.0 - np.asarray(design.reflectance)) * (1.0 - np.asarray(design.front_parasitic))
    entering = np.broadcast_to(entering, e.shape)
    back_layer = back.layer(e, back_thickness_nm, back_gap, back_shift_eV)
    behind = (entering * (1.0 - np.asarray(design.interlayer_parasitic))
              * back_layer.absorptance() * back_layer.collection())
    # expm1 rather than 1 − T keeps the radiative J0 (weak sub-gap absorption) exact
    k = np.ones_like(alpha_nm) if beta == 0.0 else alpha_nm / (alpha_nm + beta)
    return StackIntegrands(alpha_nm, beta, entering * k, behind)


def rear_absorptance(design: StackDesign, energy, back_thickness_nm, temperature_K=T_STC,
                     back_gap=None) -> np.ndarray:
    """What the back subcell absorbs and collects of light reaching it from the rear (nE,).

    A bifacial module's rear light meets the back subcell first, with its own light
    trapping; the front subcell is not in its way. By reciprocity the same absorptance sets
    the back subcell's emission through its rear face (its extra J0).
    """
    back = design.back
    layer = back.layer(np.asarray(energy, dtype=float), back_thickness_nm, back_gap,
                       back.gap_shift_eV(temperature_K))
    return layer.absorptance() * layer.collection()


def subcell_currents(design: StackDesign, cond: Conditions, front_gap, front_thickness_nm,
                     back_thickness_nm, back_gap=None):
    """Photocurrent and radiative J0 of both subcells for an array of front thicknesses.

    Returns (j_light, j0_rad), each (..., 2) [A/m²], identical to integrating the EQEs of
    :func:`stack_light` (a test checks this) but much faster: each EQE is a function of
    energy times 1 − exp(−(α_f + 1/L_c)·d) (front) or exp(−α_f·d) (back), so the four
    integrals over energy are two matrix products with weight vectors.
    """
    return design_currents(design, cond, front_gap, front_thickness_nm, back_thickness_nm,
                           back_gap)[:2]


def design_currents(design: StackDesign, cond: Conditions, front_gap, front_thickness_nm,
                    back_thickness_nm, back_gap=None):
    """:func:`subcell_currents` and, for an n ≠ 1 cell, the photocurrents under AM1.5G at
    1 sun (where an absorber's ERE is stated, for its fixed non-radiative diode) from the same
    optics: one more weight column in the same products. Returns (j_light, j0_rad, reference),
    reference None for n = 1, whose ERE does not depend on light."""
    e, phi = cond.photon_flux.energy, cond.photon_flux.flux
    w = trapezoid_weights(e) * Q
    weights = [w * phi, w * db.blackbody_photon_flux(e, cond.temperature_K)]
    if cond.ideality != 1.0:
        from tandem.physics.spectra import reference_flux_on

        weights.append(w * reference_flux_on(e).flux)
    parts = stack_integrands(design, e, front_gap, back_thickness_nm, back_gap, cond.temperature_K)
    absorbed, transmitted = parts.transfer(front_thickness_nm)
    front_int = absorbed @ np.stack([x * parts.front_weight for x in weights], -1)
    back_int = transmitted @ np.stack([x * parts.back_weight for x in weights], -1)
    j_light, j0_rad, *reference = (np.stack([front_int[..., k], back_int[..., k]], axis=-1)
                                   for k in range(len(weights)))
    return j_light, j0_rad, reference[0] if reference else None


def stack_performance(design: StackDesign, cond: Conditions, front_gap, front_thickness_nm,
                      back_thickness_nm, back_gap=None) -> StackPerformance:
    """Two- and four-terminal performance for an array of front thicknesses."""
    j_light, j0_rad, reference = design_currents(design, cond, front_gap, front_thickness_nm,
                                                 back_thickness_nm, back_gap)
    bulk = design_bulk(design, front_gap, front_thickness_nm, back_thickness_nm,
                       cond.temperature_K)
    return _under(design, cond, j_light, j0_rad, reference, bulk)


def _under(design: StackDesign, cond: Conditions, j_light, j0_rad, reference, bulk):
    """:func:`evaluate_design` under ``cond``'s irradiance, temperature, ideality, electrics."""
    return evaluate_design(design, j_light, j0_rad, cond.temperature_K,
                           cond.photon_flux.irradiance, cond.ideality, cond.electrical, reference,
                           bulk)


def gaps_performance(design: StackDesign, cond: Conditions, front_gaps, front_thickness_nm,
                     back_thickness_nm, check=None) -> StackPerformance:
    """:func:`stack_performance` for several front gaps (n_g,) at once, thicknesses (n_g, n)
    a row per gap: the optics gap by gap, the electrical side in one call for all (see
    STACKS_PER_SOLVE); ``check(j_light)`` sees the photocurrents (n_g, n, 2) before it."""
    gaps = np.asarray(front_gaps, dtype=float)
    d = np.broadcast_to(np.asarray(front_thickness_nm, dtype=float),
                        (gaps.size,) + np.shape(front_thickness_nm)[-1:])
    parts = [design_currents(design, cond, g, d[i], back_thickness_nm) for i, g in enumerate(gaps)]
    j_light, j0_rad = np.stack([p[0] for p in parts]), np.stack([p[1] for p in parts])
    reference = None if parts[0][2] is None else np.stack([p[2] for p in parts])
    if check is not None:
        check(j_light)
    bulk = design_bulk(design, gaps[:, None], d, back_thickness_nm, cond.temperature_K)
    return _under(design, cond, j_light, j0_rad, reference, bulk)


def design_bulk(design: StackDesign, front_gap, front_thickness_nm, back_thickness_nm,
                temperature_K) -> BulkRecombination | None:
    """Auger recombination in the subcells' bulk at their thicknesses [nm] (arrays broadcast
    against the sweep's leading axes); None when neither absorber states it."""
    return absorbers_bulk((design.front, design.back), (front_gap, None),
                          (front_thickness_nm, back_thickness_nm), temperature_K)


def evaluate_design(design: StackDesign, j_light, j0_rad, temperature_K, irradiance,
                    ideality: float = 1.0, electrical: Electrical = IDEAL,
                    reference_j_light=None, bulk: BulkRecombination | None = None
                    ) -> StackPerformance:
    """The stack's electrical result from its subcells' currents: the absorbers' EREs, the
    front's refractive index (rear emission), the ideality and electrical options; an n ≠ 1
    cell's non-radiative diode fixed at ``reference_j_light`` (see :func:`design_currents`);
    ``bulk`` from :func:`design_bulk` for absorbers with intrinsic recombination. An
    absorber's ERE then describes its other (defect) recombination."""
    ere = np.array([design.front.ere, design.back.ere])
    return evaluate_stack(j_light, j0_rad, temperature_K, irradiance, ere, ideality, electrical,
                          design.front.refractive_index, reference_j_light, bulk)


class AbsorberPair(Protocol):
    """Anything with a front and a back absorber (a pair, a layer stack's yield design)."""

    @property
    def front(self) -> Absorber: ...

    @property
    def back(self) -> Absorber: ...


def outside_ranges(design: AbsorberPair, front_gap_eV, front_thickness_nm,
                   back_thickness_nm) -> list[str]:
    """What of a design lies outside the ranges its absorber files declare (a design only
    ``--outside-range`` allows), one phrase each; empty when all is inside."""
    checks = [("front gap", front_gap_eV, design.front.gap_range_eV, "eV", "{:.3f}"),
              ("front thickness", front_thickness_nm, design.front.thickness_range_nm, "nm", "{:.0f}"),
              ("back thickness", back_thickness_nm, design.back.thickness_range_nm, "nm", "{:.0f}")]
    out = []
    for what, value, (lo, hi), unit, fmt in checks:
        if value is not None and not lo * (1 - 1e-9) - 1e-9 <= value <= hi * (1 + 1e-9) + 1e-9:
            out.append(f"{what} {fmt.format(value)} {unit} outside {fmt.format(lo)}–"
                       f"{fmt.format(hi)} {unit}")
    return out


@dataclass(frozen=True)
class Configuration:
    """One front gap, front thickness and back thickness with its performance."""

    front_gap_eV: float
    front_composition: float | None
    front_thickness_nm: float
    back_thickness_nm: float
    performance: StackPerformance  # arrays of shape (2,) or scalars
    matched_front_thickness_nm: float | None
    match_note: str

    @property
    def efficiency_2t(self) -> float:
        return float(self.performance.efficiency_2t)

    @property
    def efficiency_4t(self) -> float:
        return float(self.performance.efficiency_4t)

    def efficiency(self, terminals: int) -> float:
        """Efficiency with 2, 3 or 4 terminals [-]."""
        return float(self.performance.efficiency(terminals))


#: a connection in words, as rankings and verdicts name it
CONNECTION = {2: "two-terminal", 3: "three-terminal", 4: "four-terminal"}


@dataclass(frozen=True)
class ThicknessSweep:
    """Currents and efficiencies against front thickness for one gap and back thickness."""

    front_gap_eV: float
    back_thickness_nm: float
    front_thickness_nm: np.ndarray
    performance: StackPerformance


@dataclass(frozen=True)
class MatchResult:
    design: StackDesign
    conditions: Conditions
    configurations: list[Configuration]  #: best first
    best_sweep: ThicknessSweep  #: the sweep behind the best configuration
    best_4t: Configuration  #: the configuration with the highest four-terminal efficiency
    terminals: int
    n_evaluated: int = 0
    notes: tuple[str, ...] = field(default=())
    sweeps: tuple = ()  #: every (front gap, back thickness) sweep, in evaluation order


def matched_thickness(design, cond, gap, d_grid, back_d, currents,
                     back_gap=None) -> tuple[float | None, str]:
    """Front thickness where the subcell photocurrents are equal, or None with the reason."""
    diff = currents[:, 0] - currents[:, 1]  # rises with front thickness
    lo, hi = d_grid[0], d_grid[-1]
    if diff[0] > 0:
        return None, (f"the front already carries more current at its thinnest ({lo:.0f} nm): "
                      "the back limits at every thickness in range; a thinner front or a wider "
                      "front gap would match")
    if diff[-1] < 0:
        return None, (f"the front carries less current even at its thickest ({hi:.0f} nm): "
                      "it limits at every thickness in range; a thicker front or a narrower front "
                      "gap would match")
    i = int(np.argmax(diff >= 0))
    if diff[i] == 0:
        return float(d_grid[i]), "matched"

    def f(d):  # the photocurrents alone: no electrical solve inside the root search
        j = subcell_currents(design, cond, gap, d, back_d, back_gap)[0]
        return j[..., 0] - j[..., 1]

    return _rising_root(f, float(d_grid[i - 1]), float(d_grid[i]), float(diff[i - 1]),
                        float(diff[i])), "matched"


def _rising_root(f, lo, hi, f_lo, f_hi, points: int = 17, rtol: float = 1e-9) -> float:
    """Where the rising ``f`` (vectorised in thickness) crosses zero between lo and hi [nm],
    given f_lo < 0 < f_hi.

    Zooms of ``points`` thicknesses, geometric, each keeping the interval of the sign change
    (16× narrower), until it is under ``rtol`` in ln d; then the secant through its ends,
    exact to (width)² × curvature, far below rtol. One call of ``f`` a zoom, where a scalar
    root search takes one a step; no solver library to import (a quick command must start
    fast)."""
    a, b = math.log(lo), math.log(hi)
    while b - a > rtol:
        x = np.linspace(a, b, points)
        y = np.asarray(f(np.exp(x[1:-1])), dtype=float)
        k = int(np.argmax(y >= 0)) if np.any(y >= 0) else y.size
        if k < y.size and y[k] == 0:
            return float(np.exp(x[k + 1]))
        a, b = x[k], x[k + 1]
        f_lo = f_lo if k == 0 else y[k - 1]
        f_hi = f_hi if k == y.size else y[k]
    return float(np.exp(a - f_lo * (b - a) / (f_hi - f_lo)))


def _best_thicknesses(design, cond, gaps, d_grid, back_d, powers: dict) -> dict:
    """Each gap's grid maximum of each chosen power (``powers``: terminals → (n_g, n) on
    ``d_grid``), refined between its grid neighbours; every gap and power in one solve a zoom.

    Four zooms of 17 points in log-thickness each shrink the bracket eightfold (to 1/4096 of
    the grid's spacing, about 10⁻⁵ in ln d on the default grid); the result is never worse
    than the grid's best point. Returns terminals → (n_g,) thicknesses [nm].
    """
    kinds = list(powers)
    p = np.stack([powers[t] for t in kinds], axis=1)  # (n_g, k, n)
    i = np.argmax(p, axis=-1)
    best_d, best_p = d_grid[i], np.take_along_axis(p, i[..., None], -1)[..., 0]
    a = np.log(d_grid[np.maximum(i - 1, 0)])
    b = np.log(d_grid[np.minimum(i + 1, d_grid.size - 1)])
    for _ in range(4):
        x = np.linspace(a, b, 17, axis=-1)  # (n_g, k, 17)
        perf = gaps_performance(design, cond, gaps, np.exp(x).reshape(len(gaps), -1), back_d)
        q = np.stack([perf.power(t).reshape(x.shape)[:, j] for j, t in enumerate(kinds)], 1)
        k = np.argmax(q, axis=-1)[..., None]
        q_k, x_k = np.take_along_axis(q, k, -1)[..., 0], np.take_along_axis(x, k, -1)[..., 0]
        better = q_k > best_p
        best_d, best_p = np.where(better, np.exp(x_k), best_d), np.where(better, q_k, best_p)
        a = np.take_along_axis(x, np.maximum(k - 1, 0), -1)[..., 0]
        b = np.take_along_axis(x, np.minimum(k + 1, x.shape[-1] - 1), -1)[..., 0]
    return {t: best_d[:, j] for j, t in enumerate(kinds)}


def operating_gaps(design: StackDesign, front_gap_eV: float, temperature_K: float) -> dict:
    """Each absorber's gap as given (at 298.15 K) and at the cell temperature [eV]."""
    front, back = design.front, design.back
    return {
        "front": (front.key, float(front_gap_eV),
                  float(front_gap_eV + front.gap_shift_eV(temperature_K))),
        "back": (back.key, back.gap_eV, float(back.gap_eV + back.gap_shift_eV(temperature_K))),
    }


def temperature_note(design: StackDesign, front_gap_eV: float, temperature_K: float) -> str:
    """'cell 338.15 K: silicon 1.110 eV, …' — what the cell temperature did to the gaps."""
    parts = [f"{key} {hot:.3f} eV" + ("" if abs(hot - cold) < 5e-5 else f" ({cold:.3f} eV at 298.15 K)")
             for key, cold, hot in operating_gaps(design, front_gap_eV, temperature_K).values()]
    return (f"cell {temperature_K:g} K: " + ", ".join(parts)
            + " (gaps moved by each absorber's temperature coefficient)")


def check_design_inputs(design: StackDesign, cond: Conditions, front_gaps, back_thicknesses,
                        front_thickness_range) -> None:
    t = cond.temperature_K
    cond.photon_flux.check_gap(np.asarray(front_gaps) + design.front.gap_shift_eV(t), "front gap")
    cond.photon_flux.check_gap(design.back.gap_eV + design.back.gap_shift_eV(t), "back gap")
    free = cond.allow_outside_range
    for g in np.atleast_1d(front_gaps):
        design.front.check_gap(float(g), free)
    for d in back_thicknesses:
        design.back.check_thickness(d, "back thickness", free)
    lo, hi = front_thickness_range
    design.front.check_thickness(lo, "front thickness", free)
    design.front.check_thickness(hi, "front thickness", free)
    if not hi > lo:
        raise TandemInputError(f"front thickness range {lo:g}-{hi:g} nm is empty or reversed; "
                               "give thinnest:thickest")


def _check_light(design: StackDesign, cond: Conditions, gap, j_light, lo, hi) -> None:
    """Refuse a design whose subcell gets no light; an inverted order is reported, not refused
    (the command then shows the better order), unless its back gets nothing at all."""
    front, back = design.front, design.back
    inverted = back.gap_eV >= gap
    if inverted and not np.max(j_light[..., 1]) > 0:
        raise TandemInputError(f"back subcell {back.key} ({back.gap_eV:.3f} eV) gets no light "
                               f"behind {front.key} ({gap:.3f} eV): the order looks inverted; put "
                               f"{back.key} in front")
    check_receives_light(j_light if not inverted else j_light[..., :1], cond.photon_flux, [
        f"front subcell {front.key} at {gap:.3f} eV (even at {hi:g} nm)",
        f"back subcell {back.key} behind {front.key} at {gap:.3f} eV (even at {lo:g} nm)",
    ][: 1 if inverted else 2])


def front_gap_grid(front: Absorber, step_eV: float = 0.02) -> np.ndarray:
    """Gaps to sweep for a front absorber: its tunable range at ``step_eV``, else its gap."""
    if not front.tunable:
        return np.array([front.gap_eV])
    if not step_eV > 0:
        raise TandemInputError(f"gap step {step_eV:g} eV: give a positive step")
    lo, hi = front.gap_range_eV
    n = max(int(round((hi - lo) / step_eV)) + 1, 2)
    return np.linspace(lo, hi, n)


#: Stacks a batched sweep hands the electrical solver at once (a match's gaps × thicknesses,
#: a yield's × a bin's steps): its cost is per call below a few thousand
STACKS_PER_SOLVE = 8192


def match_currents(
    design: StackDesign,
    cond: Conditions,
    front_gaps: Sequence[float] | np.ndarray | None = None,
    back_thicknesses_nm: Sequence[float] | None = None,
    front_thickness_range_nm: tuple[float, float] | None = None,
    thickness_points: int = 120,
    terminals: int = 2,
    progress: Progress | None = None,
) -> MatchResult:
    """Sweep front gap, front thickness and back thickness; rank configurations.

    For every front gap and back thickness: the current-matched front thickness (or why
    there is none), and the front thickness that maximises the chosen (2T or 4T) power.
    """
    front, back = design.front, design.back
    gaps = front_gap_grid(front) if front_gaps is None else np.asarray(front_gaps, dtype=float)
    backs = [back.thickness_nm] if back_thicknesses_nm is None else list(back_thicknesses_nm)
    lo, hi = front.thickness_range_nm if front_thickness_range_nm is None else front_thickness_range_nm
    if not 5 <= thickness_points <= 5000:
        raise TandemInputError(f"thickness points {thickness_points}: give between 5 and 5000")
    check_design_inputs(design, cond, gaps, backs, (lo, hi))
    if terminals not in (2, 3, 4):
        raise TandemInputError(f"terminals {terminals}: choose 2 (series), 3 (middle contact) or "
                               "4 (independent)")
    d_grid = np.geomspace(lo, hi, thickness_points)
    configs: list[Configuration] = []
    sweeps: list[ThicknessSweep] = []
    best4: Configuration | None = None
    total = len(gaps) * len(backs)
    compositions = [front.relation.composition_for_gap(float(g)) if front.relation is not None
                    else None for g in gaps]
    # (gap index, back index) → (sweep, configuration, its best-4T candidate)
    found: dict[tuple[int, int], tuple[ThicknessSweep, Configuration, Configuration]] = {}
    # gaps solved together, a few thousand stacks a call (the solver's cost is per call at
    # these sizes): the sweep, the refinements of its chosen and 4T optima, then both optima
    # solved again as the table's rows
    per_call = max(1, STACKS_PER_SOLVE // d_grid.size)
    for b, back_d in enumerate(backs):
        for start in range(0, len(gaps), per_call):
            some = np.arange(start, min(start + per_call, len(gaps)))
            def lit(j_light):
                for g in some:
                    _check_light(design, cond, gaps[g], j_light[g - start], lo, hi)

            perf = gaps_performance(design, cond, gaps[some], d_grid[None, :], back_d, lit)
            best = _best_thicknesses(design, cond, gaps[some], d_grid, back_d,
                                     {terminals: perf.power(terminals), 4: perf.p_4t})
            at = gaps_performance(design, cond, gaps[some],
                                  np.stack([best[terminals], best[4]], -1), back_d)
            for g in some:
                gap, sweep_g = float(gaps[g]), perf.at(g - start)
                matched, note = matched_thickness(design, cond, gap, d_grid, back_d,
                                                  sweep_g.j_light)
                chosen, four = (Configuration(gap, compositions[g], float(best[t][g - start]),
                                              float(back_d), at.at((g - start, k)), matched, note)
                                for k, t in enumerate((terminals, 4)))
                found[int(g), b] = (ThicknessSweep(gap, float(back_d), d_grid, sweep_g), chosen, four)
            if progress:
                progress(b * len(gaps) + some[-1] + 1, total)
    for key in sorted(found):  # evaluation order as before: gap by gap, each back within
        sweep, config, cand = found[key]
        sweeps.append(sweep)
        configs.append(config)
        # refined like the table's rows, so the best-4T line and the table agree
        if best4 is None or cand.efficiency_4t > best4.efficiency_4t:
            best4 = cand
    order = sorted(range(len(configs)), key=lambda i: configs[i].efficiency(terminals), reverse=True)
    assert best4 is not None  # at least one gap and one back thickness were evaluated
    return MatchResult(design, cond, [configs[i] for i in order], sweeps[order[0]], best4,
                       terminals, n_evaluated=total * thickness_points, sweeps=tuple(sweeps))


def subcell_name(index: int) -> str:
    return SUBCELL_NAMES[index]


@dataclass(frozen=True)
class OrderVerdict:
    """Which absorber should face the sun, from the best result of each order."""

    recommended_front: str  #: absorber key
    user_order_is_better: bool
    reason: str


def which_in_front(chosen: MatchResult, swapped: MatchResult) -> OrderVerdict:
    """Compare both orders by their best efficiency of the chosen kind (2T or 4T)."""
    def best(r: MatchResult) -> float:
        return r.configurations[0].efficiency(r.terminals)

    a, b = best(chosen), best(swapped)
    f, k = chosen.design.front, chosen.design.back
    kind = CONNECTION[chosen.terminals]
    winner, loser = (f, k) if a >= b else (k, f)
    gap_w = chosen.configurations[0].front_gap_eV if a >= b else swapped.configurations[0].front_gap_eV
    gap_l = k.gap_eV if a >= b else f.gap_eV
    why = ("the wider gap faces the sun, turning blue photons into more voltage and passing "
           "the red ones on" if gap_w > gap_l else
           "it gives the higher efficiency in this model despite the narrower gap")
    reason = (f"{winner.key} goes in front ({gap_w:.3f} eV over {gap_l:.3f} eV): {why}; best "
              f"{kind} {100 * max(a, b):.2f} % against {100 * min(a, b):.2f} % with "
              f"{loser.key} in front")
    return OrderVerdict(winner.key, a >= b, reason)


def tolerance_windows(result: MatchResult, loss_pct: float = 1.0) -> dict:
    """Front-thickness and front-gap windows that keep efficiency within ``loss_pct`` % abs.

    The thickness window is read from the best configuration's sweep; the gap window from
    the best configuration of each gap at the same back thickness (None for one gap).
    """
    sweep = result.best_sweep
    perf = sweep.performance
    eff = 100 * perf.efficiency(result.terminals)
    d_window = tolerance_window(np.log(sweep.front_thickness_nm), eff, loss_pct)
    best = result.configurations[0]
    same_back = sorted((c for c in result.configurations
                        if c.back_thickness_nm == best.back_thickness_nm),
                       key=lambda c: c.front_gap_eV)
    gap_window = None
    if len(same_back) > 1:
        gaps = np.array([c.front_gap_eV for c in same_back])
        effs = 100 * np.array([c.efficiency(result.terminals) for c in same_back])
        gap_window = tolerance_window(gaps, effs, loss_pct)
    return {
        "loss_pct_abs": loss_pct,
        "front_thickness_window_nm": [float(np.exp(d_window[0])), float(np.exp(d_window[1]))],
        "front_gap_window_eV": None if gap_window is None else [float(g) for g in gap_window],
    }


def tolerance_window(x, y, loss: float) -> tuple[float, float]:
    """The interval of x around the maximum of y where y ≥ max(y) − loss.

    Edges are found by linear interpolation between grid points; an edge of the grid is
    returned as is (the window may reach further). NaN entries end the window.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if not loss >= 0:
        raise TandemInputError(f"tolerance {loss:g}: give a non-negative loss in % absolute")
    i = int(np.nanargmax(y))
    floor = y[i] - loss

    def edge(step: int) -> float:
        j = i
        while 0 <= j + step < x.size and np.isfinite(y[j + step]) and y[j + step] >= floor:
            j += step
        k = j + step
        if not (0 <= k < x.size) or not np.isfinite(y[k]):
            return float(x[j])
        t = (y[j] - floor) / (y[j] - y[k])
        return float(x[j] + t * (x[k] - x[j]))

    return edge(-1), edge(+1)
