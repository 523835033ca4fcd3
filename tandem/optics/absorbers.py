"""Absorbers: the :class:`Absorber` record (gap, edge, optics, electrical) and its ranges.

Absorber files are read in :mod:`tandem.optics.absorber_files`; published optical constants
come from :mod:`tandem.optics.database`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.optics.absorptance import LayerOptics
from tandem.optics.edges import Edge
from tandem.physics.recombination import BulkRecombination, BulkSpec, stack_bulk
#: Urbach energies above this need a tail cutoff: with E_U ≳ kT the reciprocity dark current
#: grows into the tail without bound (α·Φ_bb ∝ exp(E(1/E_U − 1/kT))) [eV].
MAX_UNCUT_URBACH_EV = 0.025


@dataclass(frozen=True)
class GapRelation:
    """Band gap as a polynomial in a composition variable x: Eg = Σ c_k x^k [eV]."""

    coefficients_eV: tuple[float, ...]
    composition: str
    composition_range: tuple[float, float]
    composition_default: float

    def gap(self, x):
        return np.polyval(self.coefficients_eV[::-1], np.asarray(x, dtype=float))

    def composition_for_gap(self, gap_eV: float) -> float | None:
        """The composition in range giving ``gap_eV``, or None if the range cannot."""
        lo, hi = self.composition_range
        roots = np.roots(np.array(self.coefficients_eV[::-1]) - np.r_[np.zeros(len(self.coefficients_eV) - 1), gap_eV])
        real = [r.real for r in roots if abs(r.imag) < 1e-9 and lo - 1e-9 <= r.real <= hi + 1e-9]
        return float(real[0]) if real else None


@dataclass(frozen=True)
class Absorber:
    """One absorber description, resolved and checked.

    Examples
    --------
    >>> from tandem import load_absorber
    >>> si = load_absorber('silicon')
    >>> si.gap_eV, si.thickness_nm, round(float(si.alpha(1.23984198)), 1)  # α at 1000 nm [cm⁻¹]
    (1.12, 160000.0, 64.0)
    """

    key: str  #: file stem, the name users type
    path: Path
    name: str
    description: str
    gap_eV: float  #: the default gap (fixed, or the relation at the default composition)
    relation: GapRelation | None
    edge: Edge
    edge_model: str  #: its name in the edge-model registry (tandem.optics.edges)
    refractive_index: float
    light_trapping: str
    ere: float
    ere_origin: str  #: 'given' or how it was derived (a non-radiative loss, a gap–voltage offset)
    collection_length_nm: float | None
    thickness_nm: float  #: default
    thickness_range_nm: tuple[float, float]
    gap_temperature_coefficient_eV_K: float | None
    sources: dict = field(default_factory=dict)
    defect_floor_per_cm: float = 0.0  #: sub-gap defect absorption the tail cannot fall below
    tail_cutoff_below_gap_eV: float | None = None  #: no absorption this far below the gap
    bulk: BulkSpec | None = None  #: intrinsic (Auger) recombination in the bulk, if stated
    #: the refractive-index database entry its α comes from; layer stacks take n(λ) from it too
    index_entry: str | None = None

    @property
    def tunable(self) -> bool:
        return self.relation is not None

    @property
    def gap_range_eV(self) -> tuple[float, float]:
        if self.relation is None:
            return (self.gap_eV, self.gap_eV)
        lo, hi = self.relation.composition_range
        g = self.relation.gap(np.linspace(lo, hi, 201))
        return float(g.min()), float(g.max())

    def alpha(self, energy_eV, gap_eV: float | None = None, shift_eV=0.0):
        """Absorption coefficient [cm⁻¹] on an energy grid, at ``gap_eV`` (default gap).

        ``shift_eV`` moves the whole edge rigidly (a gap change with temperature): a
        movable edge to gap + shift, one fixed by data to α(E − shift).
        """
        if self.edge.movable:
            gap = (self.gap_eV if gap_eV is None else gap_eV) + shift_eV
            alpha = self.edge.alpha(energy_eV, gap)
        else:  # the data fix the gap (check_gap refuses another)
            gap = self.gap_eV + shift_eV
            alpha = self.edge.alpha(np.asarray(energy_eV) - shift_eV, self.gap_eV)
        if self.defect_floor_per_cm == 0.0 and self.tail_cutoff_below_gap_eV is None:
            return alpha
        energy = np.asarray(energy_eV, dtype=float)
        # a real film stops absorbing: its tail meets a defect floor, and the defects
        # themselves absorb nothing below the cutoff
        alpha = np.where(energy < gap, np.maximum(alpha, self.defect_floor_per_cm), alpha)
        if self.tail_cutoff_below_gap_eV is not None:
            alpha = np.where(energy < gap - self.tail_cutoff_below_gap_eV, 0.0, alpha)
        return alpha

    def bulk_note(self) -> str | None:
        """What the absorber's bulk and surface recombination is, in one line (None without)."""
        if self.bulk is None:
            return None
        b = self.bulk
        doping = ("undoped" if b.doping_cm3 == 0 else
                  f"{'n' if b.n_type else 'p'}-type {b.doping_cm3:.3g} cm⁻³")
        state = [f"{doping}, n_i {b.n_i_cm3:.3g} cm⁻³ at {b.n_i_temperature_K:g} K"]
        kinds = []
        if b.model is not None:  # the state is said once, with the first kind
            kinds.append(f"Auger recombination in its bulk ({b.model.name}, {state.pop()})")
        srh = [f"bulk lifetime {b.srh_lifetime_s:.3g} s"] if math.isfinite(b.srh_lifetime_s) else []
        if b.surface_velocity_cm_s > 0:
            srh.append(f"surfaces {b.surface_velocity_cm_s:.3g} cm/s each")
        if srh:
            kinds.append(f"SRH recombination ({', '.join(srh + state)})")
        other = "other (defect)" if not srh else "remaining"
        return (f"{self.key}: {' and '.join(kinds)} beside its radiative emission; its ERE "
                f"{self.ere:g} describes the {other} recombination")

    def gap_shift_eV(self, temperature_K) -> np.ndarray | float:
        """Gap change from 298.15 K with the description's temperature coefficient [eV]."""
        tc = self.gap_temperature_coefficient_eV_K or 0.0
        return tc * (np.asarray(temperature_K) - 298.15)

    def layer(self, energy_eV, thickness_nm=None, gap_eV=None, shift_eV=0.0,
              position: str = "back") -> LayerOptics:
        """The absorber's optics on an energy grid, in the ``position`` it has in a stack.

        In front, light passes once whatever the file says (the back cell must receive what
        the front does not absorb); behind, the file's light-trapping mode applies.
        """
        if position not in ("front", "back", "alone"):
            raise TandemInputError(f"position '{position}': use 'front', 'back' or 'alone'")
        return LayerOptics(
            alpha_per_cm=self.alpha(energy_eV, gap_eV, shift_eV),
            thickness_nm=self.thickness_nm if thickness_nm is None else thickness_nm,
            light_trapping="single-pass" if position == "front" else self.light_trapping,
            refractive_index=self.refractive_index,
            collection_length_nm=self.collection_length_nm,
        )

    def check_thickness(self, thickness_nm: float, what: str = "thickness",
                        allow_outside: bool = False) -> None:
        """Refuse a thickness that is not positive, or outside the declared range [nm].

        A bare number is read as nm; when it would fit the range in µm, the message says so
        ("did you mean 160um?"). ``allow_outside`` lifts the range (the caller reports it).
        """
        if not (math.isfinite(thickness_nm) and thickness_nm > 0):
            raise TandemInputError(f"{what} {thickness_nm:g} nm for {self.key}: give a positive "
                                   "thickness, e.g. 500nm or 160um")
        lo, hi = self.thickness_range_nm
        if allow_outside or lo * (1 - 1e-9) <= thickness_nm <= hi * (1 + 1e-9):
            return
        wafer = lo >= 10_000
        shown = (f"{thickness_nm / 1000:g} µm" if wafer else f"{thickness_nm:g} nm")
        span = f"{lo / 1000:g}–{hi / 1000:g} µm" if wafer else f"{lo:g}–{hi:g} nm"
        hint = (f"did you mean {thickness_nm:g}um? " if lo <= thickness_nm * 1000 <= hi else "")
        raise TandemInputError(f"{what} {shown} for {self.key} is outside its declared range "
                               f"{span}; {hint}give a thickness inside it (or allow it with "
                               "--outside-range)")

    def check_gap(self, gap_eV: float, allow_outside: bool = False) -> None:
        """Refuse a gap a tabulated edge cannot have, or one outside the declared range [eV]."""
        if not self.edge.movable and abs(gap_eV - self.gap_eV) > 1e-9:
            raise TandemInputError(f"{self.key}: its gap is fixed by its '{self.edge_model}' "
                                   f"absorption data at {self.gap_eV:g} eV; only an edge model "
                                   "whose gap can move (e.g. direct, indirect) can be moved")
        lo, hi = self.gap_range_eV
        if allow_outside or lo - 1e-9 <= gap_eV <= hi + 1e-9:
            return
        what = (f"its tunable range {lo:.3f}–{hi:.3f} eV" if self.tunable
                else f"its fixed gap {self.gap_eV:.3f} eV")
        raise TandemInputError(f"gap {gap_eV:g} eV for {self.key} is outside {what}; choose a gap "
                               "inside it (or allow it with --outside-range)")


def absorbers_bulk(absorbers, gaps_eV, thicknesses_nm, temperature_K) -> BulkRecombination | None:
    """Auger recombination of subcells made of ``absorbers`` (front first), each at its gap
    (at 298.15 K; None: its default) and thickness [nm], for
    :func:`~tandem.physics.stack.evaluate_stack`; None when no absorber states it. Arrays
    broadcast against the sweep's leading axes."""
    if all(a.bulk is None for a in absorbers):
        return None
    t = np.asarray(temperature_K, dtype=float)
    gaps = [a.gap_eV if g is None else g for a, g in zip(absorbers, gaps_eV)]
    # each n_i is stated at its own temperature: the gap there, and at the cell's
    at_ref = [g + a.gap_shift_eV(a.bulk.n_i_temperature_K if a.bulk else 298.15)
              for a, g in zip(absorbers, gaps)]
    now = [g + a.gap_shift_eV(t) for a, g in zip(absorbers, gaps)]
    return stack_bulk([a.bulk for a in absorbers], thicknesses_nm, at_ref, now, t)
