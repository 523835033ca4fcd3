"""One function per job, on typed inputs, returning result objects.

Every front end (the command line, scenario studies, a notebook) calls these; each result has
``summary()`` (the plain dict ``--json`` prints), ``to_frame()`` (a pandas DataFrame, units in
the column names), ``to_dataset()`` where the result is gridded (an xarray Dataset, the swept
quantities as dimensions with their units, the conditions as attributes) and ``plot(ax=None)``
(a matplotlib Figure; the backend is never changed).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from .absorbers import Absorber, load_absorber
from .design import (Conditions, MatchResult, OrderVerdict, StackDesign, match_currents,
                     tolerance_windows, which_in_front)
from .inputs import Light, OperatingPoint, Sweep
from .maps import DEFAULT_BACK, DEFAULT_FRONT, GapMap, absorber_gap_map, gap_axis, map_table, step_gap_map
from .report import (absorber_summary, design_summary, map_summary, match_summary,
                     yield_summary, _configuration)
from .stack import DesignResult, detailed_balance_limit

Progress = Callable[[int, int], None]

#: Measured throughput on the 2-core reference machine (tests/benchmarks/run.py; rounded down):
#: configurations per second for each job, and the limits beyond which a run must be asked for.
RATES = {"map": 3.0e5, "match": 1.0e4, "spread": 8.0e3, "yield": 1.0e6}
LIMIT_SECONDS, LIMIT_BYTES = 600.0, 2 * 2**30


def check_work(job: str, count: float, bytes_needed: float = 0.0, allow_large: bool = False,
               what: str = "configurations") -> None:
    """Refuse, with the estimate, a run predicted to take over 10 minutes or 2 GiB.

    ``count`` is the number of configurations (gap pairs, devices, step × design), ``bytes``
    the largest array the run holds. ``allow_large`` (``--large``) lifts the limit.
    """
    from .errors import TandemInputError

    seconds = count / RATES[job]
    if allow_large or (seconds <= LIMIT_SECONDS and bytes_needed <= LIMIT_BYTES):
        return
    raise TandemInputError(
        f"this {job} has {count:,.0f} {what}: about {seconds:,.0f} s and "
        f"{bytes_needed / 2**20:,.0f} MiB on a 2-core laptop, over the limit of "
        f"{LIMIT_SECONDS / 60:.0f} min and {LIMIT_BYTES / 2**30:.0f} GiB; narrow it, or pass "
        "--large to run it anyway")


def _frame(rows):
    import pandas as pd

    return pd.DataFrame(rows)


def _conditions_attrs(light_name: str, temperature_K: float, terminals: int, **extra) -> dict:
    attrs = {"spectrum": light_name, "temperature_K": float(temperature_K),
             "terminals": int(terminals)}
    attrs.update({k: v for k, v in extra.items() if v is not None})
    return attrs


def _absorber(a: Absorber | str) -> Absorber:
    return a if isinstance(a, Absorber) else load_absorber(a)


def _pair(front, back, operating: OperatingPoint) -> tuple[Absorber, Absorber]:
    """The two absorbers, with the operating point's ERE in place of theirs if it gives one."""
    from dataclasses import replace

    a_front, a_back = _absorber(front), _absorber(back)
    if operating.ere is not None:
        ere = operating.ere * 2 if len(operating.ere) == 1 else operating.ere
        a_front = replace(a_front, ere=ere[0], ere_origin="given on the command line")
        a_back = replace(a_back, ere=ere[1], ere_origin="given on the command line")
    return a_front, a_back


# --------------------------------------------------------------------------------------
# limit
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LimitResult:
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
        """Where the incident power goes (:func:`tandem.breakdown.loss_breakdown`).

        Examples
        --------
        >>> import tandem
        >>> b = tandem.limit([1.34], operating=tandem.OperatingPoint(temperature_K=300)).loss_breakdown()
        >>> round(sum(s.power_W_m2 for s in b.steps) / b.incident_W_m2, 12)
        1.0
        """
        from .breakdown import loss_breakdown
        from .detailed_balance import step_photocurrent

        d = self.design
        flux = (self.light or Light()).photon_flux()
        perf = d.performance
        gaps = np.array(d.gaps_eV)
        e = flux.energy
        upper = np.append(np.inf, gaps[:-1])
        bands = np.array([(e >= g) & (e < u) for g, u in zip(gaps, upper)], dtype=float)
        # step absorbers: every photon in the band, times the share the losses leave
        full = np.array([float(step_photocurrent(flux, g, None if np.isinf(u) else u))
                         for g, u in zip(gaps, upper)])
        eqe = bands * (np.asarray(perf.j_light) / full)[:, None]
        return loss_breakdown(e, flux.flux, flux.irradiance, eqe, gaps, perf, d.temperature_K,
                              d.terminals, d.electrical, _blackbody(self.light))

    def summary(self) -> dict:
        return design_summary(self.design)

    def to_frame(self):
        """One row per subcell: gap [eV], Jsc [mA/cm²], Voc [V], FF [%], power share [%]."""
        return _frame([{k: v for k, v in sub.items()} for sub in self.summary()["subcells"]])

    def plot(self, ax=None):
        from .plots import draw_limit

        return draw_limit(self.design, ax)


def limit(gaps: Sequence[float], light: Light = Light(),
          operating: OperatingPoint = OperatingPoint()) -> LimitResult:
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Parameters
    ----------
    gaps : sequence of float
        Band gaps [eV], front (sunward) first; one gap for a single junction.
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
    >>> round(100 * limit([1.34], operating=OperatingPoint(temperature_K=300)).efficiency, 1)
    33.7
    """
    flux = light.photon_flux()
    share = operating.step_shares()
    return LimitResult(detailed_balance_limit(
        gaps, flux, operating.terminals, operating.temperature_K, operating.ere or (1.0,),
        operating.ideality, operating.electrical, operating.front_index,
        share[: len(gaps)] if len(gaps) == 2 else share[:1]), light)


def _blackbody(light) -> tuple[float, float] | None:
    """(T_sun, concentration) when the light is an unscaled blackbody sun, else None."""
    if light is None or light.source != "blackbody" or light.irradiance_W_m2 is not None:
        return None
    return float(light.sun_temperature_K), float(light.concentration)


# --------------------------------------------------------------------------------------
# match
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class MatchStudy:
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
        return _frame([_configuration(c) for c in self.result.configurations])

    def to_dataset(self):
        """Photocurrents and efficiencies over front gap × back thickness × front thickness."""
        import xarray as xr

        sweeps = self.result.sweeps
        gaps = sorted({s.front_gap_eV for s in sweeps})
        backs = sorted({s.back_thickness_nm for s in sweeps})
        d = sweeps[0].front_thickness_nm
        shape = (len(gaps), len(backs), d.size)
        data = {k: np.full(shape, np.nan) for k in ("jf", "jb", "e2", "e4")}
        for s in sweeps:
            i, j = gaps.index(s.front_gap_eV), backs.index(s.back_thickness_nm)
            p = s.performance
            data["jf"][i, j], data["jb"][i, j] = p.j_light[:, 0] / 10, p.j_light[:, 1] / 10
            data["e2"][i, j], data["e4"][i, j] = 100 * p.efficiency_2t, 100 * p.efficiency_4t
        dims = ("front_gap", "back_thickness", "front_thickness")
        cond = self.result.conditions
        ds = xr.Dataset(
            {"jsc_front": (dims, data["jf"], {"units": "mA/cm2"}),
             "jsc_back": (dims, data["jb"], {"units": "mA/cm2"}),
             "efficiency_2t": (dims, data["e2"], {"units": "%"}),
             "efficiency_4t": (dims, data["e4"], {"units": "%"})},
            coords={"front_gap": ("front_gap", gaps, {"units": "eV", "note": "at 298.15 K"}),
                    "back_thickness": ("back_thickness", backs, {"units": "nm"}),
                    "front_thickness": ("front_thickness", d, {"units": "nm"})},
            attrs=_conditions_attrs(cond.photon_flux.name, cond.temperature_K,
                                    self.result.terminals, front=self.result.design.front.key,
                                    back=self.result.design.back.key,
                                    ere_front=self.result.design.front.ere,
                                    ere_back=self.result.design.back.ere))
        return ds

    def plot(self, ax=None):
        from .plots import draw_match

        return draw_match(self.result, tolerance_windows(self.result, self.tolerance_pct), ax)

    def loss_breakdown(self, rank: int = 1):
        """Where the incident power of the ``rank``-th configuration goes
        (:func:`tandem.breakdown.loss_breakdown`)."""
        from .breakdown import match_breakdown

        return match_breakdown(self.result, rank, _blackbody(self.light))


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
    >>> study = match("perovskite-wide", "silicon", sweep=Sweep(front_gaps_eV=(1.7, 1.7, 0.01),
    ...               thickness_points=20))
    >>> study.summary()["order"]["recommended_front"]
    'perovskite-wide'
    """
    a_front, a_back = _pair(front, back, operating)
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
        from .errors import TandemInputError

        raise TandemInputError(f"top {top!r}: show at least one configuration")
    result = match_currents(design, cond, gaps, sweep.back_thicknesses_nm,
                            sweep.front_thickness_nm, sweep.thickness_points, operating.terminals,
                            progress)
    swapped = match_currents(design.swapped(), cond, None, None, None, sweep.thickness_points,
                             operating.terminals, progress)
    return MatchStudy(result, swapped, which_in_front(result, swapped), tolerance_pct, top, light)


# --------------------------------------------------------------------------------------
# current matching in a real layer stack
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class StackMatchResult:
    """Current matching of a layer stack with thin-film interference (:func:`match_stack`).

    Examples
    --------
    >>> import tandem
    >>> r = tandem.match_stack('all-thin-film-pair', points=40)
    >>> 100 < r.summary()['best']['front_thickness_nm'] < 1200
    True
    """

    match: object  #: :class:`tandem.layerstack.StackMatch`
    optics_lite_matched_nm: float | None  #: the optics-lite model's match, same absorbers
    spectrum: str

    def summary(self) -> dict:
        from .report import stack_summary

        return stack_summary(self)

    def to_frame(self):
        """Every current match found, best two-terminal first (photocurrents in mA/cm²)."""
        return _frame(self.summary()["matches"])

    def to_dataset(self):
        """Photocurrents and efficiencies over the swept layers × front-absorber thickness."""
        import xarray as xr

        m = self.match
        others = [x.name for x in m.stack.swept]
        rows = {k: np.stack([g[i] for g in m.grids]) for i, k in ((1, "j"), (2, "e2"), (3, "e4"))}
        dims = ("design", "front_thickness")
        coords = {"front_thickness": ("front_thickness", m.thicknesses_nm, {"units": "nm"})}
        for name in others:
            coords[name] = ("design", [g[0][name] for g in m.grids], {"units": "nm"})
        return xr.Dataset(
            {"jsc_front": (dims, rows["j"][..., 0] / 10, {"units": "mA/cm2"}),
             "jsc_back": (dims, rows["j"][..., 1] / 10, {"units": "mA/cm2"}),
             "efficiency_2t": (dims, 100 * rows["e2"], {"units": "%"}),
             "efficiency_4t": (dims, 100 * rows["e4"], {"units": "%"})},
            coords=coords, attrs=_conditions_attrs(self.spectrum, m.temperature_K, 2,
                                                   stack=m.stack.key))

    def plot(self, ax=None):
        from .plots import draw_photon_budget

        return draw_photon_budget(self, ax)


def match_stack(stack, light: Light = Light(), operating: OperatingPoint = OperatingPoint(), *,
                points: int = 120, progress: Progress | None = None) -> StackMatchResult:
    """Current-match the front absorber of a layer stack, thin-film interference included.

    Parameters
    ----------
    stack : LayerStack or str
        A stack description (:func:`tandem.layerstack.load_stack`): bundled name or .toml.
    light, operating : Light, OperatingPoint
        The spectrum; cell temperature, ERE, ideality and electrical options (flat optical
        losses do not apply: the stack's layers are the losses).
    points : int
        Front-absorber thicknesses on the log-spaced grid (every crossing is then refined).

    Examples
    --------
    >>> import tandem
    >>> r = tandem.match_stack('organic-pair', points=30)
    >>> best = r.summary()['best']
    >>> abs(best['jsc_front_mA_cm2'] - best['jsc_back_mA_cm2']) < 1e-3
    True
    """
    from dataclasses import replace

    from .errors import TandemInputError
    from .layerstack import LayerStack, load_stack, match_in_stack

    stack = stack if isinstance(stack, LayerStack) else load_stack(stack)
    if not (isinstance(points, int) and 8 <= points <= 2000):
        raise TandemInputError(f"points {points!r}: give 8 to 2000 front thicknesses")
    if operating.ere is not None:  # the operating point's ERE replaces the absorbers'
        ere = operating.ere * 2 if len(operating.ere) == 1 else operating.ere
        layers = tuple(replace(x, absorber=replace(x.absorber, ere=ere[("front", "back").index(x.role)]))
                       if x.role != "parasitic" else x for x in stack.layers)
        stack = replace(stack, layers=layers)
    combos = int(np.prod([x.points for x in stack.swept])) if stack.swept else 1
    check_work("match", combos * points * 20, what="layer-stack evaluations")
    flux = light.photon_flux()
    result = match_in_stack(stack, flux, operating.temperature_K, points, operating.ideality,
                            operating.electrical, progress)
    front, back = stack.front, stack.back
    gap = front.gap_eV or front.absorber.gap_eV
    lite = match(front.absorber, back.absorber, light, replace(operating, terminals=2),
                 Sweep(front_gaps_eV=(gap, gap, 0.01), thickness_points=points,
                       back_thicknesses_nm=(back.thickness_nm,)))
    return StackMatchResult(result, lite.result.configurations[0].matched_front_thickness_nm,
                            flux.name)


# --------------------------------------------------------------------------------------
# measured EQE
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class EQEResult:
    """Two measured subcell EQEs under one spectrum (and, optionally, a site's year).

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.eqe import MeasuredEQE
    >>> e = np.linspace(0.5, 4.4, 400)
    >>> front = MeasuredEQE.from_arrays('front', e, 0.9 * (e >= 1.73))
    >>> back = MeasuredEQE.from_arrays('back', e, 0.9 * ((e >= 1.12) & (e < 1.73)))
    >>> tandem.measured_eqe(front, back).summary()['limiting_subcell']
    'front'
    """

    front: object  #: eqe.SubcellEQE
    back: object
    spectrum: str
    temperature_K: float
    notes: tuple[str, ...]
    matching: dict | None = None  #: the thickness change that would match, if asked
    year: dict | None = None  #: currents over a site's series, if given
    curves: tuple = ()  #: (front, back) MeasuredEQE, for the figure

    def summary(self) -> dict:
        from .report import CAUTION

        f, b = self.front, self.back
        limiting = "front" if f.j_light < b.j_light else "back"
        low, high = sorted((f.j_light, b.j_light))
        return {
            "subcells": [{"position": p, "name": c.name, "jsc_mA_cm2": round(c.j_light / 10, 4),
                          "j0_radiative_A_m2": float(f"{c.j0_radiative:.6e}"),
                          "voc_radiative_V": round(c.voc_radiative, 5),
                          "voc_measured_V": c.voc_measured,
                          "ere": None if c.ere is None else float(f"{c.ere:.4e}"),
                          "urbach_tail_meV": None if c.urbach_eV is None else
                          round(1000 * c.urbach_eV, 2)}
                         for p, c in (("front", f), ("back", b))],
            "limiting_subcell": limiting,
            "mismatch_pct": round(100 * (high - low) / low, 4),
            "matching": self.matching, "year": self.year, "notes": list(self.notes),
            "spectrum": self.spectrum, "temperature_K": self.temperature_K, "caution": CAUTION,
        }

    def to_frame(self):
        return _frame(self.summary()["subcells"])

    def plot(self, ax=None):
        from .plots import draw_eqe

        return draw_eqe(self, ax)


def measured_eqe(front, back, light: Light = Light(), operating: OperatingPoint = OperatingPoint(),
                 *, voc_V: tuple[float, float] | None = None, front_absorber=None,
                 front_thickness_nm: float | None = None, back_absorber=None,
                 back_thickness_nm: float | None = None, series=None) -> EQEResult:
    """Subcell currents, the limiting subcell and the radiative Voc of two measured EQEs.

    Parameters
    ----------
    front, back : path or MeasuredEQE
        EQE files (wavelength nm, EQE fraction or percent), measured in the stack.
    voc_V : (front, back), optional
        Measured subcell Voc [V]: each gives its subcell's ERE.
    front_absorber / back_absorber with its thickness : optional
        The limiting subcell's absorber description and present thickness [nm]: the
        thickness that would match the currents, scaling the EQE by the absorber's model.
    series : tandem.sky.SpectralSeries, optional
        A site's period: currents step by step, hours the front limits, mismatch loss.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.eqe import MeasuredEQE
    >>> e = np.linspace(0.5, 4.4, 400)
    >>> front = MeasuredEQE.from_arrays('front', e, 0.9 * (e >= 1.73))
    >>> back = MeasuredEQE.from_arrays('back', e, 0.9 * ((e >= 1.12) & (e < 1.73)))
    >>> r = tandem.measured_eqe(front, back, voc_V=(1.25, 0.70))
    >>> 0 < r.summary()['subcells'][0]['ere'] < 1
    True
    """
    from .eqe import MeasuredEQE, matching_thickness, read_eqe, subcell_from_eqe

    t = operating.temperature_K
    curves = [m if isinstance(m, MeasuredEQE) else read_eqe(m, temperature_K=t)
              for m in (front, back)]
    flux = light.photon_flux()
    vocs = voc_V or (None, None)
    f, b = (subcell_from_eqe(m, flux, t, v) for m, v in zip(curves, vocs))
    matching = None
    limiting = "front" if f.j_light < b.j_light else "back"
    absorber = {"front": (front_absorber, front_thickness_nm),
                "back": (back_absorber, back_thickness_nm)}[limiting]
    if absorber[0] is not None:
        a = _absorber(absorber[0])
        if absorber[1] is None:
            from .errors import TandemInputError

            raise TandemInputError(f"give the {limiting} absorber's present thickness with its "
                                   "description")
        a.check_thickness(absorber[1], f"{limiting} thickness")
        d = matching_thickness(*curves, flux, limiting, a, absorber[1], t)
        matching = {"subcell": limiting, "absorber": a.key,
                    "thickness_nm": absorber[1], "matched_thickness_nm":
                    None if d is None else round(d, 1),
                    "note": "" if d is not None else f"no thickness in {a.key}'s range "
                    f"{a.thickness_range_nm[0]:g}–{a.thickness_range_nm[1]:g} nm matches"}
    year = None
    if series is not None:
        year = _eqe_year(curves, series)
    notes = tuple(n for m in curves for n in m.notes)
    return EQEResult(f, b, flux.name, float(t), notes, matching, year, tuple(curves))


def _eqe_year(curves, series) -> dict:
    """Both subcells' photocurrents at every step of a series (reduced basis, trapezoid)."""
    from .spectra import trapezoid_weights
    from .units import Q

    basis = series.photon_basis()
    w = trapezoid_weights(basis.energy) * Q
    j = np.stack([basis.coefficients() @ (basis.basis @ (w * m.at(basis.energy)))
                  for m in curves], axis=-1)  # (n_t, 2) A/m²
    h = series.step_hours
    front_limits = j[:, 0] < j[:, 1]
    light = series.step_irradiance * h
    lost = np.sum((j.max(axis=1) - j.min(axis=1)) * h)
    return {"source": series.source, "steps": int(series.times.size),
            "charge_front_Ah_m2": round(float(j[:, 0] @ h), 3),
            "charge_back_Ah_m2": round(float(j[:, 1] @ h), 3),
            "share_of_light_with_front_limiting_pct":
                round(100 * float(light[front_limits].sum() / max(light.sum(), 1e-300)), 2),
            "mismatch_charge_pct": round(100 * float(lost / max(np.sum(j.max(axis=1) * h), 1e-300)), 3)}


# --------------------------------------------------------------------------------------
# gap map
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class MapResult:
    """Efficiency over front × back gaps (:func:`gap_map`).

    Examples
    --------
    >>> import tandem
    >>> m = tandem.gap_map(front_gaps_eV=(1.6, 1.8, 0.1), back_gaps_eV=(0.9, 1.1, 0.1))
    >>> m.to_dataset()['front_gap'].attrs['units']
    'eV'
    """

    gap_map: GapMap
    terminals: int
    tolerance_pct: float = 1.0
    marks: tuple = ()
    front_thickness_nm: np.ndarray | None = None
    ere: tuple | None = None

    def summary(self) -> dict:
        return map_summary(self.gap_map, self.terminals, self.tolerance_pct)

    def to_frame(self):
        """One row per valid gap pair."""
        return map_table(self.gap_map, self.front_thickness_nm)

    def to_dataset(self):
        import xarray as xr

        m = self.gap_map
        dims = ("front_gap", "back_gap")
        return xr.Dataset(
            {"efficiency_2t": (dims, 100 * m.efficiency_2t, {"units": "%"}),
             "efficiency_4t": (dims, 100 * m.efficiency_4t, {"units": "%"}),
             "jsc_front": (dims, m.j_front / 10, {"units": "mA/cm2"}),
             "jsc_back": (dims, m.j_back / 10, {"units": "mA/cm2"}),
             "voc_2t": (dims, m.voc_2t, {"units": "V"})},
            coords={"front_gap": ("front_gap", m.front_gaps, {"units": "eV"}),
                    "back_gap": ("back_gap", m.back_gaps, {"units": "eV"})},
            attrs=_conditions_attrs(m.spectrum, m.temperature_K, self.terminals,
                                    irradiance_W_m2=m.irradiance,
                                    ere=None if self.ere is None else list(self.ere)))

    def plot(self, ax=None):
        from .plots import draw_map

        return draw_map(self.gap_map, self.terminals, self.tolerance_pct, self.marks, ax)


def gap_map(light: Light = Light(), operating: OperatingPoint = OperatingPoint(),
            front_gaps_eV: tuple[float, float, float] = DEFAULT_FRONT,
            back_gaps_eV: tuple[float, float, float] | None = DEFAULT_BACK, *,
            front_absorber: Absorber | str | None = None,
            back_absorber: Absorber | str | None = None,
            front_thickness_nm: float | None = None, back_thickness_nm: float | None = None,
            rematch: bool = False, tolerance_pct: float = 1.0, marks: Sequence = (),
            progress: Progress | None = None, allow_large: bool = False) -> MapResult:
    """Efficiency over front × back band gaps: step absorbers, or real absorbers' edges.

    Parameters
    ----------
    front_gaps_eV, back_gaps_eV : (low, high, step)
        Gap axes [eV]; ``back_gaps_eV`` None (absorbers only) keeps the back absorber's gap.
    front_absorber, back_absorber : optional
        Move these absorbers' edges to each gap instead of using step absorbers.
    marks : sequence of (name, gap)
        Gaps to mark on the figure.

    Examples
    --------
    >>> from tandem import gap_map
    >>> m = gap_map(front_gaps_eV=(1.6, 1.8, 0.05), back_gaps_eV=(1.12, 1.12, 0.01))
    >>> m.summary()["optimum"]["front_gap_eV"]
    1.75
    """
    fronts = gap_axis(*front_gaps_eV, "front gaps")
    backs = None if back_gaps_eV is None else gap_axis(*back_gaps_eV, "back gaps")
    n_backs = 1 if backs is None else backs.size
    per_pair = 60 * 30 if (front_absorber is not None and rematch) else (
        30 if front_absorber is not None else 1)  # optics per pair cost about this many steps
    check_work("map", fronts.size * n_backs * per_pair, allow_large=allow_large,
               what="gap-pair evaluations")
    flux = light.photon_flux()
    marks = tuple(marks)
    if (front_absorber is None) != (back_absorber is None):
        from .errors import TandemInputError

        raise TandemInputError("give both a front and a back absorber, or neither (step absorbers)")
    if front_absorber is None:
        backs = gap_axis(*DEFAULT_BACK, "back gaps") if backs is None else backs
        ere = np.asarray(operating.ere or (1.0,), dtype=float)
        ere = np.broadcast_to(ere, (2,)) if ere.size == 1 else ere
        result = step_gap_map(flux, fronts, backs, operating.temperature_K, ere,
                              operating.ideality, progress=progress,
                              electrical=operating.electrical, front_index=operating.front_index,
                              absorbed_share=operating.step_shares())
        return MapResult(result, operating.terminals, tolerance_pct, marks, None,
                         tuple(float(e) for e in ere))
    design = StackDesign(*_pair(front_absorber, back_absorber, operating),
                         *operating.losses_on(flux.energy))
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical,
                      operating.allow_outside_range)
    result, used = absorber_gap_map(design, cond, fronts, backs, front_thickness_nm,
                                    back_thickness_nm, rematch, progress=progress)
    return MapResult(result, operating.terminals, tolerance_pct, marks, used)


# --------------------------------------------------------------------------------------
# energy yield
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class YieldResult:
    """Energy over a period for front gap × thickness, and the best design hour by hour.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.workflows import site_series
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield('perovskite-wide', 'silicon', site_series(site, period='day:2026-06-21'),
    ...                         front_gaps_eV=[1.72], front_thicknesses_nm=[500.0, 1000.0])
    >>> sorted(y.to_dataset().dims)
    ['front_gap', 'front_thickness']
    """

    sweep: object  #: yields.YieldSweep
    best: object  #: yields.HourlyDesign

    def summary(self) -> dict:
        return yield_summary(self.sweep, self.best)

    def to_frame(self):
        """The energy-optimal design step by step: powers [W/m²], photocurrents [mA/cm²]."""
        import pandas as pd

        b = self.best
        return pd.DataFrame({"p_2t_W_m2": b.p_2t, "p_4t_W_m2": b.p_4t,
                             "jsc_front_mA_cm2": b.j_front / 10, "jsc_back_mA_cm2": b.j_back / 10,
                             "irradiance_W_m2": b.irradiance,
                             "cell_temperature_K": b.cell_temperature_K,
                             "step_hours": b.step_hours}, index=b.times)

    def to_dataset(self):
        import xarray as xr

        s = self.sweep
        dims = ("front_gap", "front_thickness")
        return xr.Dataset(
            {"energy_2t": (dims, s.energy_2t, {"units": "kWh/m2"}),
             "energy_4t": (dims, s.energy_4t, {"units": "kWh/m2"}),
             "efficiency_am15g_2t": (dims, 100 * s.efficiency_am15_2t, {"units": "%"})},
            coords={"front_gap": ("front_gap", s.gaps, {"units": "eV", "note": "at 298.15 K"}),
                    "front_thickness": ("front_thickness", s.thicknesses, {"units": "nm"})},
            attrs={"source": s.series.source, "insolation_kWh_m2": float(s.insolation),
                   "front": s.design.front.key, "back": s.design.back.key,
                   "back_thickness_nm": float(s.back_thickness_nm)})

    def plot(self, ax=None):
        from .plots import draw_yield_map

        return draw_yield_map(self.sweep, ax)

    def write(self, prefix, overwrite: bool = False) -> list:
        """The figures, the gap × thickness energy grid (``PREFIX-energy.nc``) and the
        energy-optimal design's time series (``PREFIX-series.parquet``), written as one."""
        from pathlib import Path

        from .files import STAMP, write_parquet
        from .plots import yield_figures

        prefix = Path(prefix)
        grid = self.to_dataset()
        grid.attrs["written_by"] = STAMP
        series = self.to_frame().reset_index(names="time")
        return yield_figures(self.sweep, self.best, prefix, overwrite, {
            prefix.parent / f"{prefix.name}-energy.nc": lambda p: grid.to_netcdf(p, engine="scipy"),
            prefix.parent / f"{prefix.name}-series.parquet": lambda p: write_parquet(series, p)})

    def design_rows(self) -> list[dict]:
        """The energy-optimal and the AM1.5G-optimal design, side by side (display units)."""
        s = self.summary()
        eo, am = s["energy_optimum"], s["am15g_optimum"]
        i, j = self.sweep.optimum
        return [dict(eo, design="energy-optimal",
                     efficiency_am15g_2t_pct=100 * float(self.sweep.efficiency_am15_2t[i, j])),
                dict(am, design="AM1.5G-optimal", efficiency_am15g_2t_pct=am["efficiency_2t_pct"],
                     energy_weighted_efficiency_2t_pct=100 * am["energy_2t_kWh_m2"]
                     / s["insolation_kWh_m2"])]


def site_series(site, *, weather=None, spectra=None, period: str = "year:2026",
                step_minutes: float = 60.0, cell_temperature_K: float | None = None,
                allow_large: bool = False):
    """The plane-of-array spectra of a site: a weather file, a folder of measured spectra, or
    clear skies over a period; optionally at a fixed cell temperature instead of SAPM [K]."""
    from .sky import clear_sky_series, common_grid, folder_series, parse_period, weather_series

    if not (weather or spectra):
        times = parse_period(period, site.timezone, step_minutes)
        # daylight is about half the steps; spectra, fluxes and a working copy are held at once
        check_work("yield", 0.5 * times.size, 0.5 * times.size * common_grid().size * 8 * 4,
                   allow_large=allow_large, what="daylight spectra (about)")
    series = (weather_series(site, weather) if weather else folder_series(site, spectra)
              if spectra else clear_sky_series(site, times))
    return series if cell_temperature_K is None else at_cell_temperature(series, cell_temperature_K)


def at_cell_temperature(series, cell_temperature_K: float):
    """The series with every step at one cell temperature [K] instead of the SAPM model's."""
    import dataclasses

    from .stack import check_temperature

    check_temperature(float(cell_temperature_K), "cell temperature")
    return dataclasses.replace(series, cell_temperature_K=np.full(series.times.size,
                                                                  float(cell_temperature_K)))


def scenario_yield_inputs(scenario, operating: OperatingPoint):
    """What a scenario says for a yield run: (series, front, back, operating, back thickness).

    The same resolver as ``tandem study`` (its [site], [weather], [stack] losses and
    [electrical] section); the operating point keeps its temperature and terminals.
    """
    import dataclasses

    from .errors import TandemInputError

    if scenario.site() is None:
        raise TandemInputError(f"scenario '{scenario.key}' has no [site]; add one or give a "
                               "latitude and longitude")
    operating = dataclasses.replace(operating, electrical=scenario.electrical(), **{
        k: float(scenario.get("stack", k, 0.0))
        for k in ("reflectance", "front_parasitic", "interlayer_parasitic")})
    backs = scenario.back_thicknesses_nm()
    return (scenario.series(), scenario.fronts[0], scenario.backs[0], operating,
            backs[0] if backs else None)


def energy_yield(front: Absorber | str, back: Absorber | str, series,
                 operating: OperatingPoint = OperatingPoint(), *, front_gaps_eV=None,
                 front_thicknesses_nm=None, back_thickness_nm: float | None = None,
                 reference: Light = Light(), progress: Progress | None = None,
                 allow_large: bool = False) -> YieldResult:
    """Energy over a spectral series (a day, month or year) for front gap × thickness.

    Parameters
    ----------
    series : tandem.sky.SpectralSeries
        Plane-of-array spectra and cell temperatures (``tandem.sky.clear_sky_series``,
        ``weather_series`` or ``folder_series``).
    front_gaps_eV : array, optional
        Front gaps at 298.15 K [eV]; default: 11 across the front's tunable range.
    front_thicknesses_nm : array, optional
        Default: 16 log-spaced across the front's range.

    Examples
    --------
    >>> import tandem
    >>> from tandem.workflows import site_series
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield('perovskite-wide', 'silicon', site_series(site, period='day:2026-06-21'),
    ...                         front_gaps_eV=[1.72], front_thicknesses_nm=[800.0])
    >>> y.summary()['energy_optimum']['energy_4t_kWh_m2'] >= y.summary()['energy_optimum']['energy_2t_kWh_m2']
    True
    """
    from .yields import hourly, yield_sweep

    a_front, a_back = _pair(front, back, operating)
    energy = series.energy
    design = StackDesign(a_front, a_back, *operating.losses_on(energy))
    if front_gaps_eV is None:
        lo, hi = a_front.gap_range_eV
        gaps = np.linspace(max(lo, a_back.gap_eV + 0.3), hi, 11) if a_front.tunable else \
            np.array([a_front.gap_eV])
    else:
        gaps = np.asarray(front_gaps_eV, dtype=float)
    thick = (np.geomspace(*a_front.thickness_range_nm, 16) if front_thicknesses_nm is None
             else np.asarray(front_thicknesses_nm, dtype=float))
    back_d = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    check_work("yield", series.times.size * gaps.size * thick.size, allow_large=allow_large,
               what="step × design evaluations")
    sweep = yield_sweep(design, series, gaps, thick, back_d, reference.photon_flux(),
                        operating.ideality, operating.electrical, progress=progress,
                        allow_outside=operating.allow_outside_range)
    i, j = sweep.optimum
    best = hourly(design, series, sweep.gaps[i], sweep.thicknesses[j], back_d,
                  operating.ideality, operating.electrical)
    return YieldResult(sweep, best)


# --------------------------------------------------------------------------------------
# fabrication spread
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SpreadResult:
    """Efficiency distribution of a design under fabrication spread.

    Examples
    --------
    >>> import tandem
    >>> s = tandem.fabrication_spread('gainp', 'gaas', samples=20)
    >>> len(s.to_frame())
    20
    """

    spread: object  #: scatter.ScatterResult
    terminals: int
    target_pct: float | None
    settings: dict

    def summary(self) -> dict:
        from .report import CAUTION

        out = self.spread.stats(self.terminals, self.target_pct)
        out.update(self.settings)
        out["caution"] = CAUTION
        return out

    def to_frame(self):
        """One row per device drawn: front gap [eV], thickness [nm], efficiencies [%]."""
        s = self.spread
        return _frame({"front_gap_eV": s.front_gap_eV, "front_thickness_nm": s.front_thickness_nm,
                       "efficiency_2t_pct": 100 * s.efficiency_2t,
                       "efficiency_4t_pct": 100 * s.efficiency_4t})

    def plot(self, ax=None):
        from .plots import draw_spread

        return draw_spread(self.spread, self.terminals, self.target_pct, ax)


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
    from .scatter import scatter

    a_front, a_back = _pair(front, back, operating)
    check_work("spread", samples, allow_large=allow_large, what="devices")
    if target_pct is not None and not (np.isfinite(target_pct) and 0 < target_pct < 100):
        from .errors import TandemInputError

        raise TandemInputError(f"target {target_pct:g} %: give an efficiency between 0 and 100 %")
    flux = light.photon_flux()
    g = a_front.gap_eV if front_gap_eV is None else float(front_gap_eV)
    flux.check_gap(g, "front gap")
    d = a_front.thickness_nm if front_thickness_nm is None else float(front_thickness_nm)
    bd = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    design = StackDesign(a_front, a_back, *operating.losses_on(flux.energy))
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical,
                      operating.allow_outside_range)
    result = scatter(design, cond, g, d, bd, gap_sigma_eV, thickness_sigma_pct, samples, seed)
    settings = {"front": a_front.key, "back": a_back.key, "front_gap_eV": g,
                "front_thickness_nm": d, "gap_sigma_eV": gap_sigma_eV,
                "thickness_sigma_pct": thickness_sigma_pct, "seed": seed}
    return SpreadResult(result, operating.terminals, target_pct, settings)


__all__ = ["LimitResult", "MapResult", "MatchStudy", "SpreadResult", "YieldResult",
           "absorber_summary", "energy_yield", "fabrication_spread", "gap_map", "limit", "match",
           "at_cell_temperature", "scenario_yield_inputs", "site_series", "StackMatchResult",
           "match_stack", "EQEResult", "measured_eqe"]
