"""The detailed-balance limit of step absorbers (:func:`limit`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.jobs.common import check_types, ResultDisplay, blackbody_of, frame
from tandem.jobs.inputs import Light, OperatingPoint
from tandem.output.report import design_summary
from tandem.physics.limit import DesignResult, detailed_balance_limit


@dataclass(frozen=True, repr=False)
class LimitResult(ResultDisplay):
    """The detailed-balance limit of one design (:func:`limit`).

    Examples
    --------
    >>> import tandem
    >>> tandem.limit([1.73, 1.12]).to_frame()['position'].tolist()
    ['front', 'back']
    """

    design: DesignResult
    light: Light | None = None

    @property
    def efficiency(self) -> float:
        """Efficiency of the chosen connection (2T or 4T) [-]."""
        return self.design.efficiency

    def loss_breakdown(self):
        """Where the incident power goes (:func:`tandem.design.breakdown.loss_breakdown`).

        Examples
        --------
        >>> import tandem
        >>> b = tandem.limit([1.34], operating=tandem.OperatingPoint(temperature_K=300)).loss_breakdown()
        >>> round(sum(s.power_W_m2 for s in b.steps) / b.incident_W_m2, 12)
        1.0
        """
        from tandem.design.breakdown import loss_breakdown
        from tandem.physics.detailed_balance import step_photocurrent

        d = self.design
        flux = (self.light or Light()).photon_flux()
        perf = d.performance
        gaps = np.array(d.gaps_eV)
        # each gap becomes a point of the grid, twice (just below and at it), so the step EQE
        # changes exactly there: the shares then use the same partial intervals as J_L
        inside = gaps[(gaps > flux.energy[0]) & (gaps < flux.energy[-1])]
        e = np.unique(np.r_[flux.energy, inside * (1 - 1e-13), inside])
        phi = np.interp(e, flux.energy, flux.flux)
        upper = np.append(np.inf, gaps[:-1])
        bands = np.array([(e >= g) & (e < u) for g, u in zip(gaps, upper)], dtype=float)
        # step absorbers: every photon in the band, times the share the losses leave
        full = np.array([float(step_photocurrent(flux, g, None if np.isinf(u) else u))
                         for g, u in zip(gaps, upper)])
        eqe = bands * (np.asarray(perf.j_light) / full)[:, None]
        return loss_breakdown(e, phi, flux.irradiance, eqe, gaps, perf, d.temperature_K,
                              d.terminals, d.electrical, blackbody_of(self.light))

    def summary(self) -> dict:
        return design_summary(self.design)

    def to_frame(self):
        """One row per subcell: gap [eV], Jsc [mA/cm²], Voc [V], FF [%], power share [%]."""
        return frame([{k: v for k, v in sub.items()} for sub in self.summary()["subcells"]])

    def to_dataset(self):
        """The subcells along ``subcell`` (front first), the design's figures as attributes."""
        from tandem.jobs.common import frame_dataset

        return frame_dataset(self.to_frame(), "subcell", self.dataset_attrs(), label="position")

    def plot(self, ax=None):
        from tandem.output.plots import draw_limit

        return draw_limit(self.design, ax)


def limit(gaps: Sequence[float] | float, light: Light = Light(),
          operating: OperatingPoint = OperatingPoint()) -> LimitResult:
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Parameters
    ----------
    gaps : float or sequence of float
        Band gaps [eV], front (sunward) first; one gap (or a number) for a single junction.
    light : Light
        The spectrum.
    operating : OperatingPoint
        Cell temperature, terminals, ERE, ideality and electrical options.

    Returns
    -------
    LimitResult

    References
    ----------
    W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510; A. De Vos, J. Phys. D 13 (1980) 839.

    Examples
    --------
    >>> from tandem import OperatingPoint, limit
    >>> round(100 * limit(1.34, operating=OperatingPoint(temperature_K=300)).efficiency, 1)
    33.7
    """
    check_types(light=light, operating=operating)
    try:
        gaps = [float(g) for g in np.atleast_1d(np.asarray(gaps, dtype=float))]
    except (TypeError, ValueError):
        raise TandemInputError(f"gaps {gaps!r}: give one or two band gaps in eV, e.g. 1.34 or "
                               "[1.73, 1.12]") from None
    flux = light.photon_flux()
    share = operating.step_shares()
    return LimitResult(detailed_balance_limit(
        gaps, flux, operating.terminals, operating.temperature_K, operating.ere or (1.0,),
        operating.ideality, operating.electrical, operating.front_index,
        share[: len(gaps)] if len(gaps) == 2 else share[:1]), light)


