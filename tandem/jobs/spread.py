"""Fabrication spread of a design (:func:`fabrication_spread`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from tandem.design.matching import Conditions, StackDesign
from tandem.jobs.common import (ResultDisplay, absorber_pair, check_connection, check_seconds,
                                check_types, check_work, frame, stack_work)
from tandem.jobs.inputs import Light, OperatingPoint
from tandem.optics.absorbers import Absorber

if TYPE_CHECKING:  # for annotations only: no import cost at run time
    from tandem.design.scatter import ScatterResult


@dataclass(frozen=True, repr=False)
class SpreadResult(ResultDisplay):
    """Efficiency distribution of a design under fabrication spread.

    Examples
    --------
    >>> import tandem
    >>> s = tandem.fabrication_spread('gainp', 'gaas', samples=20)
    >>> len(s.to_frame())
    20
    """

    spread: ScatterResult
    terminals: int
    target_pct: float | None
    settings: dict

    def summary(self) -> dict:
        from tandem.output.report import CAUTION

        out = self.spread.stats(self.terminals, self.target_pct)
        out.update(self.settings)
        out["caution"] = CAUTION
        return out

    def to_frame(self):
        """One row per device drawn: front gap [eV], thickness [nm] (a stack: every film's),
        efficiencies [%]."""
        s = self.spread
        return frame({"front_gap_eV": s.front_gap_eV, "front_thickness_nm": s.front_thickness_nm,
                      **{f"{name} [nm]": d for name, d in s.layers_nm.items()},
                      "efficiency_2t_pct": 100 * s.efficiency_2t,
                      **({"efficiency_3t_pct": 100 * s.efficiency(3)} if self.terminals == 3 else {}),
                      "efficiency_4t_pct": 100 * s.efficiency_4t})

    def to_dataset(self):
        """The devices drawn along ``sample``, the statistics as attributes."""
        from tandem.jobs.common import frame_dataset

        return frame_dataset(self.to_frame(), "sample", self.dataset_attrs())

    def plot(self, ax=None):
        from tandem.output.sky_plots import draw_spread

        return draw_spread(self.spread, self.terminals, self.target_pct, ax,
                           self.settings.get("outside_range", ()))


def _check_target(target_pct: float | None) -> None:
    """An efficiency target in (0, 100) %, or none."""
    if target_pct is not None and not (np.isfinite(target_pct) and 0 < target_pct < 100):
        from tandem.core.errors import TandemInputError

        raise TandemInputError(f"target {target_pct:g} %: give an efficiency between 0 and 100 %")


def fabrication_spread(front: Absorber | str, back: Absorber | str, light: Light = Light(),
                       operating: OperatingPoint = OperatingPoint(), *,
                       front_gap_eV: float | None = None, front_thickness_nm: float | None = None,
                       back_thickness_nm: float | None = None, gap_sigma_eV: float = 0.01,
                       thickness_sigma_pct: float = 5.0, samples: int = 2000, seed: int = 1,
                       target_pct: float | None = None, allow_large: bool = False) -> SpreadResult:
    """How a spread in front gap and thickness spreads the efficiency of a design (seeded).

    Examples
    --------
    >>> from tandem import fabrication_spread
    >>> s = fabrication_spread("perovskite-wide", "silicon", samples=50, gap_sigma_eV=0.0,
    ...                        thickness_sigma_pct=0.0)
    >>> s.summary()["std_pct"]
    0.0
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "spread", three=True)
    from tandem.design.scatter import scatter

    a_front, a_back = absorber_pair(front, back, operating)
    check_work("spread", samples, allow_large=allow_large, what="devices")
    _check_target(target_pct)
    flux = light.photon_flux()
    g = a_front.gap_eV if front_gap_eV is None else float(front_gap_eV)
    flux.check_gap(g, "front gap")
    d = a_front.thickness_nm if front_thickness_nm is None else float(front_thickness_nm)
    bd = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    design = StackDesign(a_front, a_back, *operating.losses_on(flux.energy))
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical,
                      operating.allow_outside_range)
    result = scatter(design, cond, g, d, bd, gap_sigma_eV, thickness_sigma_pct, samples, seed)
    from tandem.design.matching import outside_ranges

    settings = {"front": a_front.key, "back": a_back.key, "front_gap_eV": g,
                "front_thickness_nm": d, "gap_sigma_eV": gap_sigma_eV,
                "thickness_sigma_pct": thickness_sigma_pct, "seed": seed,
                "outside_range": outside_ranges(design, g, d, bd)}
    return SpreadResult(result, operating.terminals, target_pct, settings)


def fabrication_spread_stack(stack, light: Light = Light(),
                             operating: OperatingPoint = OperatingPoint(), *,
                             front_thickness_nm: float | None = None, others=None,
                             thickness_sigma_pct: float = 5.0, samples: int = 2000, seed: int = 1,
                             target_pct: float | None = None, progress=None,
                             allow_large: bool = False) -> SpreadResult:
    """How a spread in every thin film's thickness spreads the efficiency of a layer stack.

    Every coherent layer (the front absorber, contacts, transport and recombination layers)
    is drawn ~ N(d, σ·d) independently (seeded); glass and wafer keep their thickness; the
    stack file fixes the gaps. The nominal design is the one ``match --stack`` chooses under
    ``light`` at the cell temperature, unless ``front_thickness_nm`` / ``others`` (swept
    layer → nm) say otherwise.

    Examples
    --------
    >>> import tandem
    >>> s = tandem.fabrication_spread_stack('organic-pair', samples=40, front_thickness_nm=120.0,
    ...                                     others={})
    >>> s.summary()['stack'], len(s.to_frame().columns) > 4
    ('organic-pair', True)
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "spread", three=True)
    from tandem.design.scatter import DEVICE_CELL_BYTES, scatter_stack, stack_chunk
    from tandem.jobs.stack_match import stack_input, swept_thicknesses

    stack = stack_input(stack, operating)
    _check_target(target_pct)
    flux = light.photon_flux()
    # every film differs between devices: each layer costs as the front does in a match, about
    # twice a fixed layer (400 devices of a 67-layer mirror: 171 s, against 84 s counted once)
    layers, energies = len(stack.layers), flux.energy.size
    seconds = 2 * stack_work(stack, energies, samples, 1)[0]
    check_seconds("spread", seconds, f"solves {layers} layers × {energies:,} energies for "
                  f"{samples:,} devices", allow_large,
                  min(samples, stack_chunk(layers, energies)) * layers * energies * DEVICE_CELL_BYTES)
    origin = "given"
    if front_thickness_nm is None or others is None:
        from tandem.design.layerstack import match_in_stack

        best = match_in_stack(stack, flux, operating.temperature_K, 24, operating.ideality,
                              operating.electrical).best
        origin = "matched" if best.matched else "best two-terminal"
        front_thickness_nm = best.front_thickness_nm if front_thickness_nm is None else front_thickness_nm
        others = best.others if others is None else others
    d = float(front_thickness_nm)
    stack.front.absorber.check_thickness(d, "front thickness", operating.allow_outside_range)
    others = swept_thicknesses(stack, others)
    result = scatter_stack(stack, flux, operating.temperature_K, operating.ideality,
                           operating.electrical, d, others, thickness_sigma_pct, samples, seed,
                           progress=progress)
    settings = {"front": stack.front.absorber.key, "back": stack.back.absorber.key,
                "stack": stack.key, "nominal_origin": origin,
                "front_gap_eV": float(result.front_gap_eV[0]), "front_thickness_nm": d,
                "layers_nm": {x.name: round(float(others.get(x.name, x.thickness_nm)), 2)
                              for x in stack.layers if x.name in result.layers_nm},
                "gap_sigma_eV": 0.0, "thickness_sigma_pct": thickness_sigma_pct, "seed": seed}
    return SpreadResult(result, operating.terminals, target_pct, settings)
