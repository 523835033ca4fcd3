"""Current matching of two absorbers in both orders (:func:`match`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tandem.design.matching import (
    Conditions,
    MatchResult,
    OrderVerdict,
    StackDesign,
    match_currents,
    tolerance_windows,
    which_in_front,
)
from tandem.jobs.common import (check_connection, check_types,
    Progress,
    ResultDisplay,
    absorber_pair,
    blackbody_of,
    check_work,
    with_conditions,
    frame,
)
from tandem.jobs.inputs import Light, OperatingPoint, Sweep
from tandem.optics.absorbers import Absorber
from tandem.output.report import configuration_row, match_summary


@dataclass(frozen=True, repr=False)
class MatchStudy(ResultDisplay):
    """Current matching of two absorbers in both orders (:func:`match`).

    Examples
    --------
    >>> import tandem
    >>> study = tandem.match('gainp', 'gaas', sweep=tandem.Sweep(thickness_points=10))
    >>> sorted(study.to_dataset().dims)
    ['back_thickness', 'front_gap', 'front_thickness']
    """

    result: MatchResult
    swapped: MatchResult
    verdict: OrderVerdict
    tolerance_pct: float = 1.0
    top: int = 8
    light: Light | None = None

    def summary(self) -> dict:
        return match_summary(self.result, self.swapped, self.verdict, self.top, self.tolerance_pct)

    def to_frame(self):
        """Every configuration, best first (the design-table columns)."""
        return frame([configuration_row(c, self.result.terminals) for c in self.result.configurations])

    def to_dataset(self):
        """Photocurrents and efficiencies over front gap × back thickness × front thickness."""
        import xarray as xr

        sweeps = self.result.sweeps
        gaps = sorted({s.front_gap_eV for s in sweeps})
        backs = sorted({s.back_thickness_nm for s in sweeps})
        d = sweeps[0].front_thickness_nm
        shape = (len(gaps), len(backs), d.size)
        data = {k: np.full(shape, np.nan) for k in ("jf", "jb", "e2", "e3", "e4")}
        for s in sweeps:
            i, j = gaps.index(s.front_gap_eV), backs.index(s.back_thickness_nm)
            p = s.performance
            data["jf"][i, j], data["jb"][i, j] = p.j_light[:, 0] / 10, p.j_light[:, 1] / 10
            data["e2"][i, j], data["e4"][i, j] = 100 * p.efficiency_2t, 100 * p.efficiency_4t
            data["e3"][i, j] = 100 * p.efficiency_3t
        dims = ("front_gap", "back_thickness", "front_thickness")
        cond = self.result.conditions
        ds = xr.Dataset(
            {"jsc_front": (dims, data["jf"], {"units": "mA/cm2"}),
             "jsc_back": (dims, data["jb"], {"units": "mA/cm2"}),
             "efficiency_2t": (dims, data["e2"], {"units": "%"}),
             "efficiency_4t": (dims, data["e4"], {"units": "%"}),
             **({"efficiency_3t": (dims, data["e3"], {"units": "%"})}
                if self.result.terminals == 3 else {})},
            coords={"front_gap": ("front_gap", gaps, {"units": "eV", "note": "at 298.15 K"}),
                    "back_thickness": ("back_thickness", backs, {"units": "nm"}),
                    "front_thickness": ("front_thickness", d, {"units": "nm"})})
        return with_conditions(ds, cond.photon_flux.name, cond.temperature_K,
                               self.result.terminals, front=self.result.design.front.key,
                               back=self.result.design.back.key,
                               ere_front=self.result.design.front.ere,
                               ere_back=self.result.design.back.ere)

    def plot(self, ax=None):
        from tandem.output.plots import draw_match

        return draw_match(self.result, tolerance_windows(self.result, self.tolerance_pct), ax)

    def loss_breakdown(self, rank: int = 1):
        """Where the incident power of the ``rank``-th configuration goes
        (:func:`tandem.design.breakdown.loss_breakdown`)."""
        from tandem.design.breakdown import match_breakdown

        return match_breakdown(self.result, rank, blackbody_of(self.light))


def match(front: Absorber | str, back: Absorber | str, light: Light = Light(),
          operating: OperatingPoint = OperatingPoint(), sweep: Sweep = Sweep(), *,
          tolerance_pct: float = 1.0, top: int = 8, progress: Progress | None = None,
          allow_large: bool = False) -> MatchStudy:
    """Current-match a two-junction stack of real absorbers, and check the other order.

    Parameters
    ----------
    front, back : Absorber or str
        Absorber descriptions, or bundled names / .toml paths.
    light, operating, sweep : Light, OperatingPoint, Sweep
        The spectrum; temperature, terminals (the ranking), losses and electrical options;
        what to sweep.
    tolerance_pct : float
        Loss [% absolute] that defines the thickness and gap windows.
    top : int
        Configurations in the summary (1 or more).
    progress : callable(done, total), optional

    Returns
    -------
    MatchStudy

    Examples
    --------
    >>> from tandem import Sweep, match
    >>> study = match("perovskite-wide", "silicon", sweep=Sweep(front_gaps_eV=1.7,
    ...               thickness_points=20))
    >>> study.summary()["order"]["recommended_front"]
    'perovskite-wide'
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "match", three=True)
    a_front, a_back = absorber_pair(front, back, operating)
    gaps = sweep.gaps()
    n_gaps = len(gaps) if gaps is not None else (
        int(round(np.ptp(a_front.gap_range_eV) / 0.02)) + 1 if a_front.tunable else 1)
    n_backs = len(sweep.back_thicknesses_nm or (1,))
    check_work("match", 2 * n_gaps * n_backs * sweep.thickness_points, allow_large=allow_large)
    flux = light.photon_flux()
    design = StackDesign(a_front, a_back, *operating.losses_on(flux.energy))
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical,
                      operating.allow_outside_range)
    if not (isinstance(top, int) and top >= 1):
        from tandem.core.errors import TandemInputError

        raise TandemInputError(f"top {top!r}: show at least one configuration")
    result = match_currents(design, cond, gaps, sweep.back_thicknesses_nm,
                            sweep.front_thickness_nm, sweep.thickness_points, operating.terminals,
                            progress)
    swapped = match_currents(design.swapped(), cond, None, None, None, sweep.thickness_points,
                             operating.terminals, progress)
    return MatchStudy(result, swapped, which_in_front(result, swapped), tolerance_pct, top, light)


