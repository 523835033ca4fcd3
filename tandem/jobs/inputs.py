"""Typed inputs, validated once: the light, the operating point and the sweep.

Scenario files, the command line and notebooks build the same objects; their messages speak of
the quantity (``cell temperature``), and the command line adds its flag names where it reports.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.physics.checks import check_ere, check_front_index, check_ideality, check_temperature
from tandem.physics.spectra import (
    PhotonFlux,
    Spectrum,
    adjusted,
    load_spectrum,
    spectrum_from_arrays,
)
from tandem.physics.stack import DEFAULT_FRONT_INDEX, IDEAL, Electrical


def parse_temperature(value, what: str = "cell temperature") -> float:
    """A temperature as people write it, in K: 298.15, '298.15K', '25C', '25 °C'.

    A bare number is kelvin (never guessed to be Celsius); one outside 150–500 K is refused
    with the hint 'did you mean 25C?'.
    """
    from tandem.physics.checks import check_temperature

    text = str(value).strip().replace("°", "").replace(" ", "")
    unit = text[-1:].upper() if text[-1:].isalpha() else ""
    number = text[:-1] if unit else text
    try:
        t = float(number)
    except ValueError:
        raise TandemInputError(f"{what} '{value}': give a number with K or C, e.g. 298.15K or "
                               "25C") from None
    if unit not in ("", "K", "C"):
        raise TandemInputError(f"{what} '{value}': the unit must be K or C")
    kelvin = t + 273.15 if unit == "C" else t
    check_temperature(kelvin, what)
    return kelvin


def _finite(value, what: str, lo: float, hi: float, unit: str, hint: str = "") -> float:
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise TandemInputError(f"{what} {value!r}: give a number{hint}") from None
    if not (math.isfinite(value) and lo <= value <= hi):
        raise TandemInputError(f"{what} {value:g}{unit}: give a value from {lo:g} to {hi:g}{unit}{hint}")
    return value


@dataclass(frozen=True, kw_only=True)
class Light:
    """The incident light.

    Parameters
    ----------
    source : str or Spectrum
        'am1.5g', 'am1.5d', 'am0' (ASTM G173-03), 'blackbody', a CSV path (wavelength [nm],
        spectral irradiance [W m⁻² nm⁻¹]), or a :class:`~tandem.Spectrum`
        (:meth:`from_arrays`, :meth:`from_series` build one from arrays or pandas/xarray).
    concentration : float
        Suns [-]; for the blackbody up to the thermodynamic maximum (≈ 46,200).
    sun_temperature_K : float
        Blackbody sun temperature [K].
    irradiance_W_m2 : float or None
        Rescale the spectrum to this irradiance [W/m²] (reported, never silent).

    Examples
    --------
    >>> from tandem import Light
    >>> round(Light().photon_flux().irradiance, 2)
    1000.37
    >>> Light.from_arrays([300.0, 1000.0], [1.0, 1.0], name='flat').spectrum().integrated_irradiance
    700.0
    """

    source: str | Spectrum = "am1.5g"
    concentration: float = 1.0
    sun_temperature_K: float = 6000.0
    irradiance_W_m2: float | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.source, (str, Spectrum)):
            raise TandemInputError(f"light source {type(self.source).__name__}: give a name "
                                   "(am1.5g), a CSV path, a Spectrum, or use Light.from_arrays / "
                                   "Light.from_series")
        _finite(self.concentration, "concentration", 1e-6, 1e6, " suns")
        _finite(self.sun_temperature_K, "sun temperature", 1000.0, 20000.0, " K")
        if self.irradiance_W_m2 is not None:
            _finite(self.irradiance_W_m2, "irradiance", 1e-3, 1e7, " W/m²")

    @classmethod
    def from_arrays(cls, wavelength_nm, irradiance, *, name: str = "user spectrum",
                    **options) -> "Light":
        """Light from arrays of wavelength [nm] and spectral irradiance [W m⁻² nm⁻¹]."""
        return cls(source=spectrum_from_arrays(wavelength_nm, irradiance, name), **options)

    @classmethod
    def from_series(cls, data, *, name: str | None = None, **options) -> "Light":
        """Light from a pandas Series (index: wavelength [nm]) or a one-dimensional xarray
        DataArray (its coordinate: wavelength [nm]) of spectral irradiance [W m⁻² nm⁻¹]."""
        if hasattr(data, "dims") and hasattr(data, "coords"):  # xarray.DataArray
            if len(data.dims) != 1:
                raise TandemInputError("a spectrum DataArray must have one dimension, wavelength [nm]")
            wavelength = data[data.dims[0]].values
            label = name or str(data.name or "user spectrum")
        elif hasattr(data, "index") and hasattr(data, "to_numpy"):  # pandas.Series
            wavelength = data.index.to_numpy()
            label = name or str(data.name or "user spectrum")
        else:
            raise TandemInputError("give a pandas Series or an xarray DataArray of irradiance "
                                   "indexed by wavelength [nm] (or use Light.from_arrays)")
        return cls.from_arrays(wavelength, np.asarray(data), name=label, **options)

    def spectrum(self) -> Spectrum:
        """The spectrum as resolved (reference table, blackbody or CSV) [nm, W m⁻² nm⁻¹]."""
        return _spectrum(self.source, _stamp(self.source), self.concentration,
                         self.sun_temperature_K, self.irradiance_W_m2)

    def photon_flux(self) -> PhotonFlux:
        """The light as photon flux on a conserving energy grid [eV, m⁻² s⁻¹ eV⁻¹]."""
        return _flux(self.source, _stamp(self.source), self.concentration,
                     self.sun_temperature_K, self.irradiance_W_m2)


def _stamp(source: str | Spectrum) -> float | None:
    """A file's modification time (a changed file is read again), else None."""
    if isinstance(source, Spectrum):
        return None
    path = Path(source)
    return path.stat().st_mtime if path.is_file() else None


@functools.lru_cache(maxsize=16)
def _spectrum(source, stamp, concentration, sun_temperature_K, irradiance):
    if isinstance(source, Spectrum):  # held by identity: a Spectrum is immutable
        return adjusted(source, concentration, irradiance)
    return load_spectrum(source, sun_temperature_K=sun_temperature_K, concentration=concentration,
                         target_irradiance_W_m2=irradiance)


@functools.lru_cache(maxsize=16)
def _flux(source, stamp, concentration, sun_temperature_K, irradiance):
    return _spectrum(source, stamp, concentration, sun_temperature_K, irradiance).photon_flux()


@dataclass(frozen=True, kw_only=True)
class OperatingPoint:
    """How the cells are operated and what surrounds them.

    Parameters
    ----------
    temperature_K : float
        Cell temperature [K]; absorbers' gaps move with their temperature coefficients.
    terminals : int
        2 (series, one current), 3 (a middle contact and two loads; its type and resistance
        in ``electrical``) or 4 (each subcell at its own maximum power point).
    ere : tuple of float or None
        External radiative efficiency of step absorbers [-], one value or front, back.
        Real absorbers carry their own in their description.
    ideality : float
        Ideality factor of the non-radiative diode [-] (the radiative diode is always 1).
    electrical : Electrical
        Rear emission, luminescent coupling, series and shunt resistance.
    front_index : float
        Refractive index of a step-absorber front, for its rear emission [-].
    allow_outside_range : bool
        Accept gaps and thicknesses outside the ranges the absorber files declare (reported).
    reflectance, front_parasitic, interlayer_parasitic : float or str
        Optical losses: a fraction in [0, 1) or a CSV of wavelength [nm], fraction.

    Examples
    --------
    >>> from tandem import OperatingPoint
    >>> OperatingPoint(temperature_K=338.15, terminals=4).terminals
    4
    """

    temperature_K: float = 298.15
    terminals: int = 2
    ere: tuple[float, ...] | None = None
    ideality: float = 1.0
    electrical: Electrical = field(default=IDEAL)
    front_index: float = DEFAULT_FRONT_INDEX
    reflectance: float | str = 0.0
    front_parasitic: float | str = 0.0
    interlayer_parasitic: float | str = 0.0
    allow_outside_range: bool = False  #: accept gaps and thicknesses outside absorbers' ranges

    def __post_init__(self):
        check_temperature(float(self.temperature_K), "cell temperature")
        if self.terminals not in (2, 3, 4):
            raise TandemInputError(f"terminals {self.terminals!r}: choose 2 (series), 3 (middle "
                                   "contact) or 4 (independent)")
        el = self.electrical
        if self.terminals != 3 and (el.middle_contact != "s" or el.middle_resistance_ohm_cm2 > 0):
            raise TandemInputError("the middle contact's type and resistance apply to three "
                                   f"terminals: add --terminals 3 (now {self.terminals})")
        check_ideality(float(self.ideality))
        check_front_index(float(self.front_index))
        if self.ere is not None:
            values = tuple(float(e) for e in self.ere)
            if not 1 <= len(values) <= 2:
                raise TandemInputError(f"ERE has {len(values)} values; give one value, or one per "
                                       "subcell (front, back)")
            check_ere(values, len(values))
            object.__setattr__(self, "ere", values)

    def step_shares(self) -> tuple[float, float]:
        """Share of the light each step subcell can absorb after flat losses [-] (front, back).

        Spectral losses (CSV files) need absorbers on an energy grid and are refused here.
        """
        values = []
        for k in ("reflectance", "front_parasitic", "interlayer_parasitic"):
            v = getattr(self, k)
            try:
                v = float(v)
            except (TypeError, ValueError):
                raise TandemInputError(f"{k.replace('_', ' ')} '{v}': step absorbers take a flat "
                                       "fraction; spectral losses need absorbers (use match)") from None
            if not (math.isfinite(v) and 0 <= v < 1):
                raise TandemInputError(f"{k.replace('_', ' ')} {v:g}: give a fraction in [0, 1)")
            values.append(v)
        r, pf, pi = values
        return (1 - r) * (1 - pf), (1 - r) * (1 - pf) * (1 - pi)

    def optical_losses_given(self) -> list[str]:
        """The optical losses this operating point sets: a CSV, or a fraction other than 0
        (a layer stack computes its own, so it refuses them)."""
        given = []
        for k in ("reflectance", "front_parasitic", "interlayer_parasitic"):
            v = getattr(self, k)
            try:
                is_zero = float(v) == 0.0
            except (TypeError, ValueError):
                is_zero = False  # a file of spectral losses
            if not is_zero:
                given.append(k)
        return given

    def losses_on(self, energy_eV):
        """(reflectance, front parasitic, interlayer parasitic) on the energy grid."""
        from tandem.optics.losses import loss_on_grid

        return tuple(loss_on_grid(getattr(self, k), energy_eV, k.replace("_", " "))
                     for k in ("reflectance", "front_parasitic", "interlayer_parasitic"))


MAX_GAPS = 20_001  #: points on one gap axis


def gap_range(lo: float, hi: float, step: float, what: str = "front gaps") -> np.ndarray:
    """Gaps from ``lo`` to ``hi`` inclusive at ``step`` [eV], for any ``*_gaps_eV`` input.

    Examples
    --------
    >>> from tandem import gap_range
    >>> gap_range(1.68, 1.76, 0.02)
    array([1.68, 1.7 , 1.72, 1.74, 1.76])
    """
    values = [_finite(v, f"{what} low:high:step", -math.inf, math.inf, " eV") for v in (lo, hi, step)]
    lo, hi, step = values
    if not (step > 0 and hi >= lo > 0):
        raise TandemInputError(f"{what} {lo:g}:{hi:g}:{step:g}: give low:high:step in eV with "
                               "0 < low ≤ high and a positive step")
    n = int(round((hi - lo) / step)) + 1
    if n > MAX_GAPS:
        raise TandemInputError(f"{what} has {n:,} points; give a coarser step (at most "
                               f"{MAX_GAPS:,})")
    return np.linspace(lo, hi, n)


def gap_values(gaps, what: str = "front gaps") -> np.ndarray:
    """Gaps as given [eV]: a number or a sequence, finite, positive, strictly increasing.

    Every ``*_gaps_eV`` input of the API means this one thing: the gaps themselves. A range is
    :func:`gap_range`; ``(1.68, 1.76, 0.02)`` is refused (0.02 eV is not above 1.76 eV).

    Examples
    --------
    >>> from tandem import gap_values
    >>> gap_values([1.68, 1.70]).tolist()
    [1.68, 1.7]
    """
    try:
        values = np.atleast_1d(np.asarray(gaps, dtype=float))
    except (TypeError, ValueError):
        raise TandemInputError(f"{what} {gaps!r}: give gaps in eV, e.g. [1.68, 1.70] or "
                               "tandem.gap_range(1.6, 1.8, 0.02)") from None
    if values.ndim != 1 or values.size == 0:
        raise TandemInputError(f"{what}: give one gap or a flat list of gaps in eV")
    if values.size > MAX_GAPS:
        raise TandemInputError(f"{what} has {values.size:,} gaps; at most {MAX_GAPS:,}")
    if not (np.isfinite(values).all() and (values > 0).all()):
        raise TandemInputError(f"{what} {_short(values)}: every gap must be a positive number of eV")
    if values.size > 1 and not (np.diff(values) > 0).all():
        raise TandemInputError(f"{what} {_short(values)}: give increasing gaps (a range is "
                               "tandem.gap_range(low, high, step), e.g. gap_range(1.6, 1.8, 0.02))")
    return values


def _short(values: np.ndarray) -> str:
    text = ", ".join(f"{v:g}" for v in values[:4])
    return f"[{text}{', …' if values.size > 4 else ''}]"


def thickness_axis(thinnest_nm: float, thickest_nm: float, points: int, what: str = "front "
                   "thickness", most: int = 5000) -> np.ndarray:
    """``points`` log-spaced thicknesses from thinnest to thickest [nm] (both positive).

    Examples
    --------
    >>> from tandem import thickness_axis
    >>> thickness_axis(100, 1000, 3).round(1).tolist()
    [100.0, 316.2, 1000.0]
    """
    lo = _finite(thinnest_nm, f"{what} (thinnest)", 1e-3, 1e9, " nm")
    hi = _finite(thickest_nm, f"{what} (thickest)", 1e-3, 1e9, " nm")
    if not lo < hi:
        raise TandemInputError(f"{what} range {lo:g}-{hi:g} nm is empty or reversed; give "
                               "thinnest:thickest")
    if not (isinstance(points, (int, np.integer)) and 2 <= points <= most):
        raise TandemInputError(f"{what} points {points!r}: give a whole number from 2 to {most}")
    return np.geomspace(lo, hi, int(points))


@dataclass(frozen=True, kw_only=True)
class Sweep:
    """What to sweep in a current-matching study.

    Parameters
    ----------
    front_gaps_eV : float, sequence of float, or None
        Front gaps at 298.15 K [eV], the gaps themselves (:func:`gap_range` makes a range);
        default: the front's tunable range at ``front_gap_step_eV``, or its fixed gap.
    front_gap_step_eV : float
        Step across the front's tunable range when no gaps are given [eV].
    front_thickness_nm : (thinnest, thickest) or None
        Front thickness range [nm]; default: the absorber's allowed range.
    back_thicknesses_nm : tuple or None
        Back thicknesses [nm]; default: the absorber's default.
    thickness_points : int
        Front thicknesses per sweep (log-spaced).

    Examples
    --------
    >>> from tandem import Sweep, gap_range
    >>> Sweep(front_gaps_eV=[1.68, 1.70, 1.72]).gaps()
    array([1.68, 1.7 , 1.72])
    >>> Sweep(front_gaps_eV=gap_range(1.68, 1.76, 0.04)).gaps()
    array([1.68, 1.72, 1.76])
    """

    front_gaps_eV: tuple[float, ...] | None = None
    front_gap_step_eV: float = 0.02
    front_thickness_nm: tuple[float, float] | None = None
    back_thicknesses_nm: tuple[float, ...] | None = None
    thickness_points: int = 120

    def __post_init__(self) -> None:
        if not (isinstance(self.thickness_points, (int, np.integer))
                and 5 <= self.thickness_points <= 5000):
            raise TandemInputError(f"thickness points {self.thickness_points!r}: give a whole "
                                   "number from 5 to 5000")
        if self.front_gaps_eV is not None:
            gaps = gap_values(self.front_gaps_eV, "front gaps")
            if gaps.size > 2001:
                raise TandemInputError(f"front gaps: {gaps.size:,} gaps; give a coarser step "
                                       "(at most 2,001 gaps)")
            object.__setattr__(self, "front_gaps_eV", tuple(float(g) for g in gaps))
        _finite(self.front_gap_step_eV, "front gap step", 1e-5, 10.0, " eV")
        if self.front_thickness_nm is not None:
            lo, hi = (float(v) for v in self.front_thickness_nm)
            if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
                raise TandemInputError(f"front thickness range {lo:g}-{hi:g} nm is empty or "
                                       "reversed; give thinnest:thickest, both positive")
            object.__setattr__(self, "front_thickness_nm", (lo, hi))
        if self.back_thicknesses_nm is not None:
            values = tuple(float(d) for d in np.atleast_1d(self.back_thicknesses_nm))
            for d in values:
                if not (math.isfinite(d) and d > 0):
                    raise TandemInputError(f"back thickness {d:g} nm: give a positive "
                                           "thickness")
            object.__setattr__(self, "back_thicknesses_nm", values)

    def gaps(self) -> np.ndarray | None:
        """The front gaps to sweep [eV], or None for the absorber's default."""
        return None if self.front_gaps_eV is None else np.array(self.front_gaps_eV)
