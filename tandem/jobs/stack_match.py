"""Current matching in a real layer stack (:func:`match_stack`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from tandem.jobs.common import (Progress, ResultDisplay, check_connection, check_seconds, check_types,
                                frame, stack_match_work, with_conditions)
from tandem.jobs.inputs import Light, OperatingPoint, Sweep
from tandem.jobs.match import match

if TYPE_CHECKING:  # for annotations only: no import cost at run time
    from tandem.design.layerstack import StackMatch


@dataclass(frozen=True, repr=False)
class StackMatchResult(ResultDisplay):
    """Current matching of a layer stack with thin-film interference (:func:`match_stack`).

    Examples
    --------
    >>> import tandem
    >>> r = tandem.match_stack('all-thin-film-pair', points=40)
    >>> 100 < r.summary()['best']['front_thickness_nm'] < 1200
    True
    """

    match: StackMatch
    optics_lite_matched_nm: float | None  #: the optics-lite model's match, same absorbers
    spectrum: str

    def summary(self) -> dict:
        from tandem.output.report import stack_summary

        return stack_summary(self)

    def to_frame(self):
        """Every current match found, best two-terminal first (photocurrents in mA/cm²)."""
        return frame(self.summary()["matches"])

    def to_dataset(self):
        """Photocurrents and efficiencies over the swept layers × front-absorber thickness."""
        import xarray as xr

        m = self.match
        others = [x.name for x in m.stack.swept]
        rows = {k: np.stack([g[i] for g in m.grids]) for i, k in ((1, "j"), (2, "e2"), (3, "e4"))}
        dims = ("design", "front_thickness")
        coords: dict[str, tuple] = {"front_thickness": ("front_thickness", m.thicknesses_nm, {"units": "nm"})}
        for name in others:
            coords[name] = ("design", [g[0][name] for g in m.grids], {"units": "nm"})
        return with_conditions(xr.Dataset(
            {"jsc_front": (dims, rows["j"][..., 0] / 10, {"units": "mA/cm2"}),
             "jsc_back": (dims, rows["j"][..., 1] / 10, {"units": "mA/cm2"}),
             "efficiency_2t": (dims, 100 * rows["e2"], {"units": "%"}),
             "efficiency_4t": (dims, 100 * rows["e4"], {"units": "%"})},
            coords=coords), self.spectrum, m.temperature_K, 2, stack=m.stack.key)

    def budget_frame(self):
        """Where the photons go in the best design, per wavelength: the shares of the incident
        photons absorbed in each absorber and each other layer, reflected or escaped, and
        transmitted (they add up to 1 at every wavelength)."""
        import pandas as pd

        from tandem.core.units import HC_EV_NM

        m = self.match
        b = m.best_budget
        columns = {"wavelength_nm": HC_EV_NM / b.energy, "energy_eV": b.energy,
                   f"front: {m.stack.front.name}": b.front[0],
                   f"back: {m.stack.back.name}": b.back[0],
                   **{name: v[0] for name, v in b.parasitic.items()},
                   "reflected_or_escaped": b.reflected[0], "transmitted": b.transmitted[0]}
        return pd.DataFrame(columns).iloc[::-1].reset_index(drop=True)

    def budget_dataset(self):
        """The best design's photon budget and generation profiles as a CF-style Dataset:
        ``absorptance`` (layer × wavelength: each absorber and every other layer),
        ``reflected_or_escaped`` and ``transmitted`` (they add to 1 at every wavelength), the
        incident ``photon_flux``, and each absorber's generation rate G(z) on its own depth axis
        (``generation_front``/``generation_back``, cm⁻³ s⁻¹, from its sun side)."""
        import xarray as xr

        from tandem.core.files import STAMP
        from tandem.core.units import HC_EV_NM

        m = self.match
        b = m.best_budget
        assert m.flux is not None  # match_in_stack keeps the spectrum
        order = np.argsort(HC_EV_NM / b.energy)  # ascending wavelength
        names = [m.stack.front.name, m.stack.back.name, *b.parasitic]
        absorbed = np.stack([b.front[0], b.back[0], *(v[0] for v in b.parasitic.values())])
        flux = np.interp(b.energy, m.flux.energy, m.flux.flux) * b.energy / HC_EV_NM  # per nm
        wavelength = ("wavelength", (HC_EV_NM / b.energy)[order],
                      {"units": "nm", "long_name": "vacuum wavelength"})
        data = {
            "absorptance": (("layer", "wavelength"), absorbed[:, order],
                            {"units": "1", "long_name": "share of the incident photons absorbed in the layer"}),
            "reflected_or_escaped": ("wavelength", np.asarray(b.reflected[0])[order],
                                     {"units": "1", "long_name": "share reflected, or escaping back out through the front"}),
            "transmitted": ("wavelength", np.asarray(b.transmitted[0])[order],
                            {"units": "1", "long_name": "share leaving through the back of the stack"}),
            "photon_flux": ("wavelength", flux[order],
                            {"units": "m-2 s-1 nm-1", "long_name": "incident photon flux per wavelength"}),
        }
        coords: dict = {"wavelength": wavelength, "layer": ("layer", np.array(names, dtype=str),
                                                            {"long_name": "layer of the stack"})}
        for role, x in (("front", m.stack.front), ("back", m.stack.back)):
            z, g = m.best_generation[x.name]
            coords[f"depth_{role}"] = (f"depth_{role}", z, {
                "units": "nm", "long_name": f"depth in {x.name} from its sun side"})
            data[f"generation_{role}"] = (f"depth_{role}", g, {
                "units": "cm-3 s-1", "long_name": f"photogeneration rate in {x.name}"})
        best = m.best
        return with_conditions(
            xr.Dataset(data, coords=coords), self.spectrum, m.temperature_K, 2, stack=m.stack.key,
            front_thickness_nm=float(best.front_thickness_nm),
            **{f"{k}_nm": float(v) for k, v in best.others.items()},
            title=f"photon budget of {m.stack.title}", written_by=STAMP)

    def plot(self, ax=None):
        from tandem.output.stack_plots import draw_photon_budget

        return draw_photon_budget(self, ax)


def stack_input(stack, operating: OperatingPoint):
    """The layer stack a job works on (a LayerStack, bundled name or .toml), with the operating
    point's ERE in place of its absorbers'. Flat optical losses are refused: the stack's
    layers are its losses."""
    from dataclasses import replace

    from tandem.core.errors import TandemInputError
    from tandem.design.layerstack import LayerStack
    from tandem.design.stack_files import load_stack

    flat = operating.optical_losses_given()
    if flat:
        raise TandemInputError(f"{', '.join(k.replace('_', ' ') for k in flat)} with a layer stack: "
                               "the stack computes reflection and parasitic absorption layer by "
                               "layer; leave them at 0")
    stack = stack if isinstance(stack, LayerStack) else load_stack(stack)
    if operating.ere is not None:  # the operating point's ERE replaces the absorbers'
        ere = operating.ere * 2 if len(operating.ere) == 1 else operating.ere
        layers = tuple(replace(x, absorber=replace(x.absorber, ere=ere[("front", "back").index(x.role)]))
                       if x.role != "parasitic" else x for x in stack.layers)
        stack = replace(stack, layers=layers)
    return stack


def swept_thicknesses(stack, others: dict) -> dict:
    """Every swept layer's thickness [nm] (besides the front absorber): ``others`` checked
    against the stack's sweeps, a layer left out at the middle of its range."""
    from tandem.core.errors import TandemInputError

    swept = {x.name: x for x in stack.swept}
    for name, value in others.items():
        if name not in swept:
            raise TandemInputError(f"others: '{name}' is not a swept layer of stack '{stack.key}'"
                                   f" ({', '.join(swept) or 'it sweeps none'})")
        lo, hi = swept[name].sweep_nm or (0.0, 0.0)
        if not (lo <= float(value) <= hi):
            raise TandemInputError(f"others: {name} {value:g} nm is outside its sweep "
                                   f"{lo:g}–{hi:g} nm in the stack file")
    return {name: float(others.get(name, x.thickness_nm)) for name, x in swept.items()}


def match_stack(stack, light: Light = Light(), operating: OperatingPoint = OperatingPoint(), *,
                points: int = 120, progress: Progress | None = None,
                allow_large: bool = False) -> StackMatchResult:
    """Current-match the front absorber of a layer stack, thin-film interference included.

    Parameters
    ----------
    stack : LayerStack or str
        A stack description (:func:`tandem.design.stack_files.load_stack`): bundled name or .toml.
    light, operating : Light, OperatingPoint
        The spectrum; cell temperature, ERE, ideality and electrical options (flat optical
        losses do not apply: the stack's layers are the losses).
    points : int
        Front-absorber thicknesses on the log-spaced grid (every crossing is then refined).
    allow_large : bool
        Run a stack estimated over 10 minutes or 2 GiB (it grows with layers × energies ×
        thicknesses) instead of refusing it.

    Examples
    --------
    >>> import tandem
    >>> r = tandem.match_stack('organic-pair', points=30)
    >>> best = r.summary()['best']
    >>> abs(best['jsc_front_mA_cm2'] - best['jsc_back_mA_cm2']) < 1e-3
    True
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "match --stack")
    from dataclasses import replace

    from tandem.core.errors import TandemInputError

    if operating.terminals == 4:  # it ranks current matches; 4T is reported beside each
        raise TandemInputError("match --stack finds current matches (two terminals) and reports "
                               "the four-terminal efficiency beside each; drop --terminals 4")
    from tandem.design.layerstack import match_in_stack

    stack = stack_input(stack, operating)
    if not (isinstance(points, int) and 8 <= points <= 2000):
        raise TandemInputError(f"points {points!r}: give 8 to 2000 front thicknesses")
    combos = int(np.prod([x.points for x in stack.swept])) if stack.swept else 1
    flux = light.photon_flux()
    seconds, bytes_needed = stack_match_work(stack, flux.energy.size, points)
    check_seconds("match --stack", seconds, f"solves {len(stack.layers)} layers × "
                  f"{flux.energy.size:,} energies × {points} thicknesses × {combos} combinations",
                  allow_large, bytes_needed)
    result = match_in_stack(stack, flux, operating.temperature_K, points, operating.ideality,
                            operating.electrical, progress)
    front, back = stack.front, stack.back
    gap = front.gap_eV or front.absorber.gap_eV
    lite = match(front.absorber, back.absorber, light, replace(operating, terminals=2),
                 Sweep(front_gaps_eV=gap, thickness_points=points,
                       back_thicknesses_nm=(back.thickness_nm,)))
    return StackMatchResult(result, lite.result.configurations[0].matched_front_thickness_nm,
                            flux.name)


