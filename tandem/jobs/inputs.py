"""Typed inputs, validated once: the light, the operating point and the sweep.

Scenario files, the command line and notebooks build the same objects; their messages speak of
the quantity (``cell temperature``), and the command line adds its flag names where it reports.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from pathlib import Path

from tandem.core.errors import TandemInputError
from tandem.physics.spectra import PhotonFlux, Spectrum, load_spectrum
from tandem.physics.stack import DEFAULT_FRONT_INDEX, IDEAL, Electrical
from tandem.physics.checks import check_front_index, check_ideality, check_temperature


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
    source : str
        'am1.5g', 'am1.5d', 'am0' (ASTM G173-03), 'blackbody', or a CSV path (wavelength [nm],
        spectral irradiance [W m⁻² nm⁻¹]).
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
    """

    source: str = "am1.5g"
    concentration: float = 1.0
    sun_temperature_K: float = 6000.0
    irradiance_W_m2: float | None = None

    def __post_init__(self):
        _finite(self.concentration, "concentration", 1e-6, 1e6, " suns")
        _finite(self.sun_temperature_K, "sun temperature", 1000.0, 20000.0, " K")
        if self.irradiance_W_m2 is not None:
            _finite(self.irradiance_W_m2, "irradiance", 1e-3, 1e7, " W/m²")

    def spectrum(self) -> Spectrum:
        """The spectrum as resolved (reference table, blackbody or CSV) [nm, W m⁻² nm⁻¹]."""
        path = Path(self.source)
        stamp = path.stat().st_mtime if path.is_file() else None
        return _spectrum(self.source, stamp, self.concentration, self.sun_temperature_K,
                         self.irradiance_W_m2)

    def photon_flux(self) -> PhotonFlux:
        """The light as photon flux on a conserving energy grid [eV, m⁻² s⁻¹ eV⁻¹]."""
        path = Path(self.source)
        stamp = path.stat().st_mtime if path.is_file() else None
        return _flux(self.source, stamp, self.concentration, self.sun_temperature_K,
                     self.irradiance_W_m2)


@functools.lru_cache(maxsize=16)
def _spectrum(source, _stamp, concentration, sun_temperature_K, irradiance):
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
        2 (series, one current) or 4 (each subcell at its own maximum power point).
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
        if self.terminals not in (2, 4):
            raise TandemInputError(f"terminals {self.terminals!r}: choose 2 (series) or 4 "
                                   "(independent)")
        check_ideality(float(self.ideality))
        check_front_index(float(self.front_index))
        if self.ere is not None:
            values = tuple(float(e) for e in self.ere)
            if not 1 <= len(values) <= 2:
                raise TandemInputError(f"ERE has {len(values)} values; give one value, or one per "
                                       "subcell (front, back)")
            for v in values:
                if not (math.isfinite(v) and 0 < v <= 1):
                    raise TandemInputError(f"ERE {v:g} is outside (0, 1]; the external radiative "
                                           "efficiency is a fraction, 1 in the radiative limit")
                if v < 1e-30:
                    raise TandemInputError(f"ERE {v:g} is below 1e-30, where the voltage loss "
                                           "passes 1.7 V; give a realistic ERE")
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

    def losses_on(self, energy_eV):
        """(reflectance, front parasitic, interlayer parasitic) on the energy grid."""
        from tandem.optics.losses import loss_on_grid

        return tuple(loss_on_grid(getattr(self, k), energy_eV, k.replace("_", " "))
                     for k in ("reflectance", "front_parasitic", "interlayer_parasitic"))


@dataclass(frozen=True, kw_only=True)
class Sweep:
    """What to sweep in a current-matching study.

    Parameters
    ----------
    front_gaps_eV : (low, high, step) or None
        Front gaps at 298.15 K [eV]; default: the front's tunable range at 0.02 eV, or its gap.
    front_thickness_nm : (thinnest, thickest) or None
        Front thickness range [nm]; default: the absorber's allowed range.
    back_thicknesses_nm : tuple or None
        Back thicknesses [nm]; default: the absorber's default.
    thickness_points : int
        Front thicknesses per sweep (log-spaced).

    Examples
    --------
    >>> from tandem import Sweep
    >>> Sweep(front_gaps_eV=(1.68, 1.76, 0.02)).gaps()
    array([1.68, 1.7 , 1.72, 1.74, 1.76])
    """

    front_gaps_eV: tuple[float, float, float] | None = None
    front_thickness_nm: tuple[float, float] | None = None
    back_thicknesses_nm: tuple[float, ...] | None = None
    thickness_points: int = 120

    def __post_init__(self):
        if not (isinstance(self.thickness_points, int) and 5 <= self.thickness_points <= 5000):
            raise TandemInputError(f"thickness points {self.thickness_points!r}: give a whole "
                                   "number from 5 to 5000")
        if self.front_gaps_eV is not None:
            lo, hi, step = (float(v) for v in self.front_gaps_eV)
            if not (all(math.isfinite(v) for v in (lo, hi, step)) and 0 < lo <= hi and step > 0):
                raise TandemInputError(f"front gaps {lo:g}:{hi:g}:{step:g} eV: give low:high:step "
                                       "with 0 < low ≤ high and a positive step")
            if (hi - lo) / step > 2000:
                raise TandemInputError(f"front gaps {lo:g}:{hi:g}:{step:g} eV make "
                                       f"{int((hi - lo) / step) + 1:,} gaps; give a coarser step "
                                       "(at most 2,001 gaps)")
        if self.front_thickness_nm is not None:
            lo, hi = (float(v) for v in self.front_thickness_nm)
            if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
                raise TandemInputError(f"front thickness range {lo:g}-{hi:g} nm is empty or "
                                       "reversed; give thinnest:thickest, both positive")
        if self.back_thicknesses_nm is not None:
            for d in self.back_thicknesses_nm:
                if not (math.isfinite(float(d)) and float(d) > 0):
                    raise TandemInputError(f"back thickness {float(d):g} nm: give a positive "
                                           "thickness")

    def gaps(self):
        """The front gaps to sweep [eV], or None for the absorber's default."""
        import numpy as np

        if self.front_gaps_eV is None:
            return None
        lo, hi, step = self.front_gaps_eV
        return np.linspace(lo, hi, max(int(round((hi - lo) / step)) + 1, 1))
