"""Efficiency over front × back band gaps (:func:`gap_map`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from tandem.design.maps import (
    DEFAULT_BACK,
    DEFAULT_FRONT,
    GapMap,
    absorber_gap_map,
    map_table,
    step_gap_map,
)
from tandem.design.matching import Conditions, StackDesign
from tandem.jobs.common import (Progress, ResultDisplay, absorber_pair, check_connection,
                                check_seconds, check_types, map_work, with_conditions)
from tandem.jobs.inputs import Light, OperatingPoint, gap_range, gap_values
from tandem.optics.absorbers import Absorber
from tandem.output.report import map_summary


@dataclass(frozen=True, repr=False)
class MapResult(ResultDisplay):
    """Efficiency over front × back gaps (:func:`gap_map`).

    Examples
    --------
    >>> import tandem
    >>> m = tandem.gap_map(front_gaps_eV=[1.6, 1.7, 1.8], back_gaps_eV=[0.9, 1.0, 1.1])
    >>> m.to_dataset()['front_gap'].attrs['units']
    'eV'
    """

    gap_map: GapMap
    terminals: int
    tolerance_pct: float = 1.0
    marks: tuple = ()
    front_thickness_nm: np.ndarray | None = None
    ere: tuple | None = None
    #: what --outside-range let the map's absorbers take (their thicknesses; the gaps move on
    #: purpose), one phrase each
    outside_range: tuple = ()

    def summary(self) -> dict:
        return dict(map_summary(self.gap_map, self.terminals, self.tolerance_pct),
                    outside_range=list(self.outside_range))

    def to_frame(self):
        """One row per valid gap pair."""
        return map_table(self.gap_map, self.front_thickness_nm, self.terminals)

    def to_dataset(self):
        import xarray as xr

        m = self.gap_map
        dims = ("front_gap", "back_gap")
        return with_conditions(xr.Dataset(
            {"efficiency_2t": (dims, 100 * m.efficiency_2t, {"units": "%"}),
             "efficiency_4t": (dims, 100 * m.efficiency_4t, {"units": "%"}),
             **({"efficiency_3t": (dims, 100 * m.efficiency(3), {"units": "%"})}
                if self.terminals == 3 else {}),
             "jsc_front": (dims, m.j_front / 10, {"units": "mA/cm2"}),
             "jsc_back": (dims, m.j_back / 10, {"units": "mA/cm2"}),
             "voc_2t": (dims, m.voc_2t, {"units": "V"})},
            coords={"front_gap": ("front_gap", m.front_gaps, {"units": "eV"}),
                    "back_gap": ("back_gap", m.back_gaps, {"units": "eV"})}),
            m.spectrum, m.temperature_K, self.terminals, irradiance_W_m2=m.irradiance,
            ere=None if self.ere is None else list(self.ere))

    def plot(self, ax=None):
        from tandem.output.plots import draw_map

        return draw_map(self.gap_map, self.terminals, self.tolerance_pct, self.marks, ax)


def gap_map(light: Light = Light(), operating: OperatingPoint = OperatingPoint(),
            front_gaps_eV: Sequence[float] | float | None = None,
            back_gaps_eV: Sequence[float] | float | None = None, *,
            front_absorber: Absorber | str | None = None,
            back_absorber: Absorber | str | None = None,
            front_thickness_nm: float | None = None, back_thickness_nm: float | None = None,
            rematch: bool = False, tolerance_pct: float = 1.0, marks: Sequence = (),
            progress: Progress | None = None, allow_large: bool = False) -> MapResult:
    """Efficiency over front × back band gaps: step absorbers, or real absorbers' edges.

    Parameters
    ----------
    front_gaps_eV, back_gaps_eV : float or sequence of float, optional
        The gaps [eV] (:func:`~tandem.gap_range` makes a range). Default front: 1.40–2.30 eV at
        0.01 eV; default back: 0.80–1.50 eV at 0.01 eV for step absorbers, the back absorber's
        own gap for real absorbers.
    front_absorber, back_absorber : optional
        Move these absorbers' edges to each gap instead of using step absorbers.
    marks : list
        Gaps to mark on the figure, as (label, gap) pairs.

    Examples
    --------
    >>> from tandem import gap_map, gap_range
    >>> m = gap_map(front_gaps_eV=gap_range(1.6, 1.8, 0.05), back_gaps_eV=1.12)
    >>> m.summary()["optimum"]["front_gap_eV"]
    1.75
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "map", three=True, strings=True)
    fronts = (gap_range(*DEFAULT_FRONT) if front_gaps_eV is None
              else gap_values(front_gaps_eV, "front gaps"))
    backs = None if back_gaps_eV is None else gap_values(back_gaps_eV, "back gaps")
    if backs is None and front_absorber is None:  # step absorbers: the default back range
        backs = gap_range(*DEFAULT_BACK, "back gaps")
    n_backs = 1 if backs is None else backs.size
    # a pair over absorbers costs this many step pairs (its optics, a Python loop over pairs):
    # 201 × 101 gaps took 18.3 s whole (740 µs a pair), re-matched 11 × 11 took 1.5 s (12 ms)
    per_pair = 3600 if (front_absorber is not None and rematch) else (
        250 if front_absorber is not None else 1)
    seconds, bytes_needed = map_work(fronts.size * n_backs, per_pair)
    check_seconds("map", seconds, f"has {fronts.size * n_backs:,} gap pairs", allow_large,
                  bytes_needed)
    flux = light.photon_flux()
    marks = tuple(marks)
    if (front_absorber is None) != (back_absorber is None):
        from tandem.core.errors import TandemInputError

        raise TandemInputError("give both a front and a back absorber, or neither (step absorbers)")
    if front_absorber is None:
        assert backs is not None  # the default range, set above
        ere = np.asarray(operating.ere or (1.0,), dtype=float)
        ere = np.broadcast_to(ere, (2,)) if ere.size == 1 else ere
        result = step_gap_map(flux, fronts, backs, operating.temperature_K, ere,
                              operating.ideality, progress=progress,
                              electrical=operating.electrical, front_index=operating.front_index,
                              absorbed_share=operating.step_shares())
        return MapResult(result, operating.terminals, tolerance_pct, marks, None,
                         tuple(float(e) for e in ere))
    design = StackDesign(*absorber_pair(front_absorber, back_absorber, operating),
                         *operating.losses_on(flux.energy))
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical,
                      operating.allow_outside_range)
    result, used = absorber_gap_map(design, cond, fronts, backs, front_thickness_nm,
                                    back_thickness_nm, rematch, progress=progress)
    from tandem.design.matching import outside_ranges

    outside = outside_ranges(design, None, None if rematch else (
        design.front.thickness_nm if front_thickness_nm is None else float(front_thickness_nm)),
        design.back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm))
    return MapResult(result, operating.terminals, tolerance_pct, marks, used,
                     outside_range=tuple(outside))


