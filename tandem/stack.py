"""Single junctions and two-junction stacks: two-terminal (series) and four-terminal.

:func:`evaluate_stack` takes photocurrents and saturation currents of each subcell, so it
serves step absorbers (:func:`step_stack`) and the optics model alike. Arrays carry the
subcells on their last axis, front (sunward) first; any leading shape is a sweep.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import detailed_balance as db
from .errors import TandemInputError
from .spectra import PhotonFlux

SUBCELL_NAMES = ("front", "back")
OHM_CM2 = 1e-4  #: 1 Ω·cm² in Ω·m²


@dataclass(frozen=True)
class Electrical:
    """Optional electrical effects, all off by default.

    coupling : fraction of the front subcell's radiative recombination that reaches the back
        subcell as extra photocurrent (luminescent coupling), in [0, 1].
    series_resistance_ohm_cm2, shunt_resistance_ohm_cm2 : per stack (per subcell circuit for
        four terminals) [Ω·cm²]; 0 and infinity switch them off.
    """

    coupling: float = 0.0
    series_resistance_ohm_cm2: float = 0.0
    shunt_resistance_ohm_cm2: float = math.inf

    def __post_init__(self):
        if not 0.0 <= self.coupling <= 1.0:
            raise TandemInputError(f"luminescent coupling {self.coupling:g}: give a fraction in [0, 1]")
        if not self.series_resistance_ohm_cm2 >= 0:
            raise TandemInputError(f"series resistance {self.series_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a value ≥ 0")
        if not self.shunt_resistance_ohm_cm2 > 0:
            raise TandemInputError(f"shunt resistance {self.shunt_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a positive value (inf for none)")

    @property
    def resistive(self) -> bool:
        return self.series_resistance_ohm_cm2 > 0 or math.isfinite(self.shunt_resistance_ohm_cm2)


IDEAL = Electrical()


@dataclass(frozen=True)
class StackPerformance:
    """Arrays describing a sweep of stacks; subcells on the last axis where it applies.

    Currents [A/m²], voltages [V], powers [W/m²], efficiencies as fractions.
    """

    j_light: np.ndarray  #: (..., m) photocurrent of each subcell in place
    j0: np.ndarray  #: (..., m) saturation current of each subcell (J0,rad/ERE)
    voc: np.ndarray  #: (..., m) open-circuit voltage of each subcell alone
    p_own: np.ndarray  #: (..., m) each subcell at its own maximum power point
    j_own: np.ndarray  #: (..., m) current at each subcell's own maximum power point
    v_own: np.ndarray  #: (..., m) voltage at each subcell's own maximum power point
    j_2t: np.ndarray  #: (...) current at the series maximum power point
    v_2t: np.ndarray  #: (...) voltage at the series maximum power point
    p_2t: np.ndarray  #: (...) series (two-terminal) maximum power
    v_2t_sub: np.ndarray  #: (..., m) each subcell's voltage at the series maximum power point
    irradiance: float  #: incident power [W/m²]

    @property
    def p_4t(self) -> np.ndarray:
        """Four-terminal power: every subcell at its own maximum power point [W/m²]."""
        return np.sum(self.p_own, axis=-1)

    @property
    def efficiency_2t(self) -> np.ndarray:
        return self.p_2t / self.irradiance

    @property
    def efficiency_4t(self) -> np.ndarray:
        return self.p_4t / self.irradiance

    @property
    def jsc_2t(self) -> np.ndarray:
        """Short-circuit current of the series stack: the lowest photocurrent (ideal diodes)."""
        return np.min(self.j_light, axis=-1)

    @property
    def voc_2t(self) -> np.ndarray:
        return np.sum(self.voc, axis=-1)

    @property
    def ff_own(self) -> np.ndarray:
        return self.p_own / (self.voc * self.j_light)

    @property
    def ff_2t(self) -> np.ndarray:
        return self.p_2t / (self.voc_2t * self.jsc_2t)

    @property
    def limiting_index(self) -> np.ndarray:
        """Index of the subcell with the lowest photocurrent (0 = front)."""
        return np.argmin(self.j_light, axis=-1)

    @property
    def mismatch(self) -> np.ndarray:
        """Current mismatch (J_L,high − J_L,low)/J_L,low [-]."""
        low = np.min(self.j_light, axis=-1)
        return (np.max(self.j_light, axis=-1) - low) / low


def evaluate_stack(j_light, j0, temperature_K, irradiance, ideality=1.0,
                   electrical: Electrical = IDEAL, front_ere: float = 1.0) -> StackPerformance:
    """Two- and four-terminal maximum power of stacks of ideal diodes.

    Parameters
    ----------
    j_light, j0 : (..., m) arrays
        Photocurrent and saturation current of each subcell [A/m²], front first.
    temperature_K : float
        Cell temperature [K].
    irradiance : float
        Incident power [W/m²], the efficiency denominator.
    ideality : float
        Diode ideality factor n [-].
    electrical : Electrical
        Luminescent coupling and resistances (off by default).
    front_ere : float
        ERE of the front subcell: the radiative share of its recombination, which is what
        luminescent coupling passes on.

    Notes
    -----
    Luminescent coupling adds c·(J_L,f − J) to the back photocurrent, with c = coupling ×
    front ERE, since the front's radiative recombination current is ERE·J0·(e^{qV/nkT} − 1)
    = ERE·(J_L,f − J). In series this is exactly an ideal back diode with
    J_L' = (J_L,b + c·J_L,f)/(1 + c) and J0' = J0,b/(1 + c); with four terminals the front
    sits at its own maximum power point and the back gains c·(J_L,f − J_mp,f).
    """
    j_light = np.asarray(j_light, dtype=float)
    j0 = np.asarray(j0, dtype=float)
    m = j_light.shape[-1]
    # a temperature per point broadcasts against the leading axes; per-subcell quantities
    # need it with a trailing axis
    t_sub = np.asarray(temperature_K, dtype=float)
    t_sub = t_sub[..., None] if t_sub.ndim else t_sub
    c = electrical.coupling * front_ere if m == 2 else 0.0
    j_own, v_own, p_own = _own_mpp(j_light, j0, t_sub, ideality, electrical)
    if c > 0:  # four terminals: the back gains the front's radiative recombination at its MPP
        jl4 = j_light.copy()
        jl4[..., 1] += c * (j_light[..., 0] - j_own[..., 0])
        j_own, v_own, p_own = _own_mpp(jl4, j0, t_sub, ideality, electrical)
    voc = db.open_circuit_voltage(j_light, j0, t_sub, ideality)
    if m == 1:
        j_2t, v_2t, p_2t = j_own[..., 0], v_own[..., 0], p_own[..., 0]
        v_2t_sub = v_own
    else:
        jl_s, j0_s = j_light, j0
        if c > 0:
            jl_s, j0_s = j_light.copy(), np.broadcast_to(j0, j_light.shape).copy()
            jl_s[..., 1] = (j_light[..., 1] + c * j_light[..., 0]) / (1 + c)
            j0_s[..., 1] = j0_s[..., 1] / (1 + c)
        if electrical.resistive:
            j_2t, v_2t, p_2t = resistive_mpp(jl_s, j0_s, temperature_K, ideality, electrical)
        else:
            j_2t, v_2t, p_2t = db.series_mpp(jl_s, j0_s, temperature_K, ideality,
                                             own_mpp_current=None if c > 0 else j_own)
        v_2t_sub = db.diode_voltage(j_2t[..., None], jl_s, j0_s, t_sub, ideality)
    return StackPerformance(j_light, j0, voc, p_own, j_own, v_own, j_2t, v_2t, p_2t,
                            v_2t_sub, float(irradiance))


def _own_mpp(j_light, j0, t_sub, ideality, electrical):
    """Each subcell at its own maximum power point (with the resistances, if any).

    ``t_sub`` is the temperature shaped to broadcast against (..., m).
    """
    if not electrical.resistive:
        return db.single_junction_mpp(j_light, j0, t_sub, ideality)
    j0 = np.broadcast_to(j0, j_light.shape)
    return resistive_mpp(j_light[..., None], j0[..., None], t_sub, ideality, electrical)


def resistive_mpp(j_light, j0, temperature_K, ideality, electrical: Electrical, iterations=90):
    """Maximum power of series diodes with a series and a shunt resistance [A/m², V, W/m²].

    The diode chain carries J_d and has voltage V_d(J_d) = Σ V_i(J_d); the shunt across it
    takes V_d/R_sh and the series resistance drops J·R_s, so the terminal current and voltage
    are J = J_d − V_d/R_sh and V = V_d − J·R_s: the power is explicit in J_d, and a
    vectorised golden-section search over 0 < J_d < min J_L finds its maximum.
    """
    rs = electrical.series_resistance_ohm_cm2 * OHM_CM2
    rsh = electrical.shunt_resistance_ohm_cm2 * OHM_CM2

    def terminal(jd):
        vd = db.series_voltage(jd, j_light, j0, temperature_K, ideality)
        j = jd - vd / rsh
        return j, vd - j * rs

    def power(jd):
        j, v = terminal(jd)
        return j * v

    lo = np.zeros(j_light.shape[:-1])
    hi = np.min(j_light, axis=-1) + lo
    ratio = (math.sqrt(5.0) - 1.0) / 2.0
    x1, x2 = hi - ratio * (hi - lo), lo + ratio * (hi - lo)
    p1, p2 = power(x1), power(x2)
    for _ in range(iterations):
        left = p1 >= p2  # the maximum lies in [lo, x2]
        hi = np.where(left, x2, hi)
        lo = np.where(left, lo, x1)
        new = np.where(left, hi - ratio * (hi - lo), lo + ratio * (hi - lo))
        p_new = power(new)
        x1, x2, p1, p2 = (np.where(left, new, x2), np.where(left, x1, new),
                          np.where(left, p_new, p2), np.where(left, p1, p_new))
    jd = 0.5 * (lo + hi)
    j, v = terminal(jd)
    return j, v, j * v


def step_stack(photon_flux: PhotonFlux, gaps, temperature_K, ere=1.0, ideality=1.0,
               electrical: Electrical = IDEAL):
    """Detailed-balance stacks of step absorbers; ``gaps`` has subcells on its last axis.

    Each subcell absorbs every photon between its own gap and the gap of the cell in front
    of it, and by reciprocity emits (radiatively) in the same band (De Vos 1980).
    ``ere`` broadcasts against ``gaps`` (one value, or one per subcell).
    """
    gaps = np.asarray(gaps, dtype=float)
    cumulative = db.cumulative_flux(photon_flux.energy, photon_flux.flux)
    upper = np.concatenate([np.full(gaps.shape[:-1] + (1,), np.inf), gaps[..., :-1]], axis=-1)
    upper_finite = np.where(np.isinf(upper), photon_flux.energy[-1], upper)
    j_light = db.step_photocurrent(photon_flux, gaps, upper_finite, cumulative)
    j0_rad = db.step_radiative_dark_current(gaps, temperature_K, upper)
    front_ere = float(np.ravel(np.broadcast_to(ere, gaps.shape)[..., 0])[0])
    return evaluate_stack(j_light, db.dark_current(j0_rad, ere), temperature_K,
                          photon_flux.irradiance, ideality, electrical, front_ere)


# --------------------------------------------------------------------------------------
# One design, checked and described for people
# --------------------------------------------------------------------------------------


def check_temperature(temperature_K: float, what: str = "temperature") -> None:
    if not (math.isfinite(temperature_K) and 0 < temperature_K < 1000):
        raise TandemInputError(f"{what} {temperature_K:g} K: give a cell temperature in kelvin "
                               "between 0 and 1000 (298.15 K is 25 °C)")


def check_ere(ere: Sequence[float], n_subcells: int) -> np.ndarray:
    """ERE values, one per subcell; one value serves all. Each must lie in (0, 1]."""
    values = [float(x) for x in ere]
    if len(values) == 1:
        values = values * n_subcells
    if len(values) != n_subcells:
        raise TandemInputError(f"--ere has {len(values)} values for {n_subcells} subcells; "
                               "give one value, or one per subcell, front first")
    for v in values:
        if not (0 < v <= 1):
            raise TandemInputError(f"ERE {v:g} is outside (0, 1]; the external radiative "
                                   "efficiency is a fraction, 1 in the radiative limit")
    return np.array(values)


def check_gap_order(gaps: Sequence[float]) -> None:
    for name, g in zip(("front gap", "back gap"), gaps):
        if not (math.isfinite(g) and g > 0):
            raise TandemInputError(f"{name} {g:g} eV: a band gap must be a positive energy in eV")


@dataclass(frozen=True)
class DesignResult:
    """One stack (or single junction) under one spectrum, ready to report."""

    gaps_eV: tuple[float, ...]
    terminals: int
    temperature_K: float
    ere: tuple[float, ...]
    spectrum_name: str
    spectrum_notes: tuple[str, ...]
    performance: StackPerformance  # shape (m,) arrays for one design

    @property
    def n_subcells(self) -> int:
        return len(self.gaps_eV)

    @property
    def power(self) -> float:
        perf = self.performance
        return float(perf.p_2t if self.terminals == 2 else perf.p_4t)

    @property
    def efficiency(self) -> float:
        return self.power / self.performance.irradiance

    def subcell_power(self) -> np.ndarray:
        """Each subcell's share of the stack's power [W/m²] at the stack's operating point."""
        perf = self.performance
        if self.terminals == 2:
            return perf.j_2t * perf.v_2t_sub
        return perf.p_own


def detailed_balance_limit(
    gaps: Sequence[float],
    photon_flux: PhotonFlux,
    terminals: int = 2,
    temperature_K: float = 298.15,
    ere: Sequence[float] = (1.0,),
    ideality: float = 1.0,
    electrical: Electrical = IDEAL,
) -> DesignResult:
    """Validate one design given as band gaps (front first) and compute its limit.

    Raises :class:`TandemInputError` for gaps that are not positive, outside the spectrum
    or in the wrong order (naming what the swapped order gives), an ERE outside (0, 1],
    an unknown number of terminals or a temperature out of range.
    """
    gaps = tuple(float(g) for g in gaps)
    if not 1 <= len(gaps) <= 2:
        raise TandemInputError(f"{len(gaps)} gaps given; give one gap (single junction) or two, "
                               "front (sunward) first")
    if terminals not in (2, 4):
        raise TandemInputError(f"--terminals {terminals}: choose 2 (series) or 4 (independent)")
    if not (math.isfinite(ideality) and 0.5 <= ideality <= 5):
        raise TandemInputError(f"ideality {ideality:g}: give a diode ideality factor between 0.5 and 5")
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
                             ere_values[::-1], ideality, electrical)
        eff = float(swapped.p_2t if terminals == 2 else swapped.p_4t) / swapped.irradiance
        raise TandemInputError(
            f"front gap {gaps[0]:g} eV is below back gap {gaps[1]:g} eV: the order looks "
            f"inverted (the sunward cell needs the wider gap); swapped, {gaps[1]:g}/{gaps[0]:g} eV "
            f"gives {100 * eff:.2f} % ({terminals}T): run 'tandem limit {gaps[1]:g} {gaps[0]:g}'"
        )
    perf = step_stack(photon_flux, np.array(gaps), temperature_K, ere_values, ideality, electrical)
    return DesignResult(gaps, terminals if len(gaps) == 2 else 2, temperature_K,
                        tuple(ere_values), photon_flux.name, photon_flux.notes, perf)
