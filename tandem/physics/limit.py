"""The detailed-balance limit of one design of step absorbers, validated.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.physics.checks import (
    check_ere,
    check_front_index,
    check_gap_order,
    check_ideality,
    check_receives_light,
    check_temperature,
    electrical_notes,
)
from tandem.physics.spectra import PhotonFlux
from tandem.physics.stack import DEFAULT_FRONT_INDEX, IDEAL, Electrical, StackPerformance, step_stack


@dataclass(frozen=True)
class DesignResult:
    """One stack (or single junction) under one spectrum, ready to report.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> r = tandem.detailed_balance_limit([1.34], flux, temperature_K=300.0)
    >>> r.n_subcells, round(100 * r.efficiency, 1)
    (1, 33.7)
    """

    gaps_eV: tuple[float, ...]
    terminals: int
    temperature_K: float
    ere: tuple[float, ...]
    spectrum_name: str
    spectrum_notes: tuple[str, ...]
    performance: StackPerformance  # shape (m,) arrays for one design
    ideality: float = 1.0
    electrical: Electrical = IDEAL
    front_index: float = DEFAULT_FRONT_INDEX

    @property
    def model_notes(self) -> tuple[str, ...]:
        """The emission and diode conventions of this result, in words."""
        return electrical_notes(self.electrical, self.front_index, self.ideality,
                                all(e >= 1 for e in self.ere), self.n_subcells)

    @property
    def n_subcells(self) -> int:
        return len(self.gaps_eV)

    @property
    def power(self) -> float:
        return float(self.performance.power(self.terminals))

    @property
    def efficiency(self) -> float:
        return self.power / self.performance.irradiance

    def subcell_power(self) -> np.ndarray:
        """Each subcell's share of the stack's power [W/m²] at the stack's operating point."""
        perf = self.performance
        if self.terminals == 2:
            return perf.j_2t * perf.v_2t_sub
        if self.terminals == 3:  # what each load takes (the middle contact's drop shared)
            assert perf.j_3t is not None and perf.v_3t is not None  # two subcells: computed
            return perf.j_3t * perf.v_3t
        return perf.p_own


def detailed_balance_limit(
    gaps: Sequence[float],
    photon_flux: PhotonFlux,
    terminals: int = 2,
    temperature_K: float = 298.15,
    ere: Sequence[float] = (1.0,),
    ideality: float = 1.0,
    electrical: Electrical = IDEAL,
    front_index: float = DEFAULT_FRONT_INDEX,
    absorbed_share=1.0,
) -> DesignResult:
    """Validate one design given as band gaps (front first) and compute its limit.

    Raises :class:`TandemInputError` for gaps that are not positive, outside the spectrum
    or in the wrong order (naming what the swapped order gives), an ERE outside (0, 1],
    an unknown number of terminals or a temperature out of range.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum("am1.5g").photon_flux()
    >>> r = tandem.detailed_balance_limit([1.73, 1.12], flux, temperature_K=300.0)
    >>> round(100 * r.efficiency, 2), tandem.design_summary(r)["limiting_subcell"]
    (45.04, 'front')
    """
    gaps = tuple(float(g) for g in gaps)
    if not 1 <= len(gaps) <= 2:
        raise TandemInputError(f"{len(gaps)} gaps given; give one gap (single junction) or two, "
                               "front (sunward) first")
    if terminals not in (2, 3, 4) or (terminals == 3 and len(gaps) != 2):
        raise TandemInputError(f"terminals {terminals}: choose 2 (series), 3 (middle contact, "
                               "two gaps) or 4 (independent)")
    if electrical.string_ratios and len(gaps) != 2:
        raise TandemInputError("voltage-matched strings need two gaps (front, back): drop "
                               "--string-ratio for a single junction")
    check_ideality(ideality)
    check_front_index(front_index)
    check_gap_order(gaps)
    check_temperature(temperature_K)
    for name, g in zip(("front gap", "back gap") if len(gaps) == 2 else ("gap",), gaps):
        photon_flux.check_gap(g, name)
    ere_values = check_ere(ere, len(gaps))
    if len(gaps) == 2 and gaps[0] <= gaps[1]:
        if gaps[0] == gaps[1]:
            raise TandemInputError(f"front and back gaps are both {gaps[0]:g} eV: the back cell "
                                   "would get no light; give the front a wider gap")
        swapped = step_stack(photon_flux, np.array(gaps[::-1]), temperature_K,
                             ere_values[::-1], ideality, electrical, front_index, absorbed_share)
        eff = float(swapped.efficiency(terminals))
        raise TandemInputError(
            f"front gap {gaps[0]:g} eV is below back gap {gaps[1]:g} eV: the order looks "
            f"inverted (the sunward cell needs the wider gap); swapped, {gaps[1]:g}/{gaps[0]:g} eV "
            f"gives {100 * eff:.2f} % ({terminals}T): run 'tandem limit {gaps[1]:g} {gaps[0]:g}'"
        )
    perf = step_stack(photon_flux, np.array(gaps), temperature_K, ere_values, ideality, electrical,
                      front_index, np.broadcast_to(absorbed_share, (len(gaps),)))
    names = ([f"front subcell ({gaps[0]:g} eV)", f"back subcell ({gaps[1]:g} eV, behind the front)"]
             if len(gaps) == 2 else [f"the cell ({gaps[0]:g} eV)"])
    check_receives_light(perf.j_light, photon_flux, names)
    return DesignResult(gaps, terminals if len(gaps) == 2 else 2, temperature_K,
                        tuple(float(e) for e in ere_values), photon_flux.name, photon_flux.notes,
                        perf, float(ideality), electrical, float(front_index))
