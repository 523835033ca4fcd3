"""Single junctions and two-junction stacks: two-terminal (series) and four-terminal.

:func:`evaluate_stack` takes photocurrents and saturation currents of each subcell, so it
serves step absorbers (:func:`step_stack`) and the optics model alike. Arrays carry the
subcells on their last axis, front (sunward) first; any leading shape is a sweep.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.units import K_B_EV
from tandem.physics import detailed_balance as db
from tandem.physics.spectra import PhotonFlux

SUBCELL_NAMES = ("front", "back")
OHM_CM2 = 1e-4  #: 1 Ω·cm² in Ω·m²
#: Refractive index of a step-absorber front cell when rear emission is counted [-]: typical
#: of III-V semiconductors and silicon (≈ 3.5 near their gaps; handbook values, common practice).
DEFAULT_FRONT_INDEX = 3.5


@dataclass(frozen=True)
class Electrical:
    """Emission conventions and electrical effects; all off by default.

    coupling : fraction of the front subcell's rear emission that the back subcell collects
        (luminescent coupling), in [0, 1]. Coupling implies ``rear_emission``.
    series_resistance_ohm_cm2, shunt_resistance_ohm_cm2 : per stack (per subcell circuit for
        four terminals) [Ω·cm²]; 0 and infinity switch them off.
    rear_emission : count the front subcell's emission towards the back cell (about n² times
        its front-face emission for index n) as a loss. Off: the published convention of
        emission through the front only (a perfect selective reflector between the subcells,
        De Vos 1980).

    Examples
    --------
    >>> from tandem import Electrical
    >>> Electrical(coupling=0.5).emits_rear  # coupling passes on the rear emission
    True
    """

    coupling: float = 0.0
    series_resistance_ohm_cm2: float = 0.0
    shunt_resistance_ohm_cm2: float = math.inf
    rear_emission: bool = False

    def __post_init__(self):
        if not 0.0 <= self.coupling <= 1.0:
            raise TandemInputError(f"luminescent coupling {self.coupling:g}: give a fraction in [0, 1]")
        if not (self.series_resistance_ohm_cm2 >= 0 and math.isfinite(self.series_resistance_ohm_cm2)):
            raise TandemInputError(f"series resistance {self.series_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a finite value ≥ 0")
        if not self.shunt_resistance_ohm_cm2 > 0:
            raise TandemInputError(f"shunt resistance {self.shunt_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a positive value (inf for none)")

    @property
    def resistive(self) -> bool:
        return self.series_resistance_ohm_cm2 > 0 or math.isfinite(self.shunt_resistance_ohm_cm2)

    @property
    def emits_rear(self) -> bool:
        """Whether the front subcell loses emission towards the back (always with coupling)."""
        return self.rear_emission or self.coupling > 0


IDEAL = Electrical()


@dataclass(frozen=True)
class StackPerformance:
    """Arrays describing a sweep of stacks; subcells on the last axis where it applies.

    Currents [A/m²], voltages [V], powers [W/m²], efficiencies as fractions.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> import numpy as np
    >>> perf = tandem.step_stack(flux, np.array([1.73, 1.12]), 300.0)
    >>> int(perf.limiting_index), round(100 * float(perf.mismatch), 2)  # front limits
    (0, 2.19)
    """

    j_light: np.ndarray  #: (..., m) photocurrent of each subcell in place
    j0_radiative: np.ndarray  #: (..., m) radiative saturation current (front face, + rear emission)
    j0_nonradiative: np.ndarray  #: (..., m) saturation current of the non-radiative diode
    ideality: float  #: ideality factor of the non-radiative diode
    voc: np.ndarray  #: (..., m) open-circuit voltage of each subcell alone
    p_own: np.ndarray  #: (..., m) each subcell at its four-terminal maximum power point
    j_own: np.ndarray  #: (..., m) current at each subcell's four-terminal maximum power point
    v_own: np.ndarray  #: (..., m) voltage at each subcell's four-terminal maximum power point
    j_2t: np.ndarray  #: (...) current at the series maximum power point
    v_2t: np.ndarray  #: (...) voltage at the series maximum power point
    p_2t: np.ndarray  #: (...) series (two-terminal) maximum power
    v_2t_sub: np.ndarray  #: (..., m) each subcell's voltage at the series maximum power point
    irradiance: float  #: incident power [W/m²]

    @property
    def j0(self) -> np.ndarray:
        """Total saturation current J0,rad/ERE (+ rear emission) of an n = 1 cell [A/m²]."""
        return self.j0_radiative + self.j0_nonradiative

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


@dataclass(frozen=True)
class _Cells:
    """Diode parameters of the subcells, (..., m); the back gains gain·(e^{qV_f/kT} − 1)."""

    j_light: np.ndarray
    a: np.ndarray  #: n = 1 saturation current (radiative + rear; + non-radiative when ideal)
    b: np.ndarray  #: non-radiative saturation current at ``n`` (zero when ideal)
    n: float
    vt: np.ndarray | float  #: kT/q over the leading axes (...), or one value
    gain: np.ndarray  #: (...) c·J0,rear of the front; zero without coupling
    ideal: bool  #: every subcell is one n = 1 diode

    @property
    def coupled(self) -> bool:
        return self.j_light.shape[-1] == 2 and bool(np.any(self.gain > 0))

    def voltage(self, i: int, current, extra=0.0):
        """Voltage of subcell i carrying ``current`` with ``extra`` photocurrent [V]."""
        return _cell_voltage(current, self.j_light[..., i] + extra, self.a[..., i],
                             self.b[..., i], self.n, self.vt, self.ideal)

    def back_gain(self, v_front):
        return self.gain * np.expm1(v_front / self.vt)

    def series_voltages(self, current):
        """Each subcell's voltage when ``current`` flows through all of them (..., m) [V]."""
        v = [self.voltage(0, current)]
        for i in range(1, self.j_light.shape[-1]):
            v.append(self.voltage(i, current, self.back_gain(v[0]) if i == 1 else 0.0))
        return np.stack(v, axis=-1)


def _cell_voltage(current, j_light, a, b, n, vt, ideal: bool):
    """Voltage of a cell carrying ``current`` [V]: one n = 1 diode (``ideal``, continued
    linearly through zero in reverse bias) or the radiative plus non-radiative pair."""
    if ideal:
        y = j_light - current
        with np.errstate(invalid="ignore"):
            return vt * np.where(y > 0, np.log1p(np.maximum(y, 0.0) / a), y / a)
    return db.two_diode_voltage(current, j_light, a, b, n, vt / K_B_EV)


def _terminal(j_diode, v_diode, electrical: Electrical):
    """Terminal current and voltage of a diode chain behind R_s with R_sh across it."""
    if not electrical.resistive:
        return j_diode, v_diode
    j = j_diode - v_diode / (electrical.shunt_resistance_ohm_cm2 * OHM_CM2)
    return j, v_diode - j * electrical.series_resistance_ohm_cm2 * OHM_CM2


def _delivered(j, v):
    """(J, V) where the chain delivers power, (0, 0) where a shunt or R_s leaves it none."""
    dead = ~(j * v > 0)
    return np.where(dead, 0.0, j), np.where(dead, 0.0, v)


def _resistive_maximum(chain_voltage, lo, hi, electrical: Electrical):
    """Diode current of the maximum power point of a chain with resistances, and its power.

    The terminal current J rises and the terminal voltage V falls with the diode current, so
    power is positive only between J = 0 and V = 0; both edges are found by bisection first
    (a strong shunt leaves a sliver next to J_L), then a golden-section search runs inside.
    A chain that cannot deliver power at all sits at J = 0.
    """
    def terminal(jd):
        return _terminal(jd, chain_voltage(jd), electrical)

    def bisect(lo, hi, positive_below):
        for _ in range(64):
            mid = 0.5 * (lo + hi)
            below = positive_below(mid)
            lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
        return 0.5 * (lo + hi)

    start = np.where(terminal(lo)[0] >= 0, lo, bisect(lo, hi, lambda x: terminal(x)[0] < 0))
    end = np.where(terminal(hi)[1] >= 0, hi, bisect(lo, hi, lambda x: terminal(x)[1] >= 0))
    end = np.maximum(start, end)

    def power(jd):
        j, v = terminal(jd)
        return j * v

    jd = db.golden_maximum(power, start, end)
    return np.where(power(jd) > 0, jd, start)


def _own_mpp(cells: _Cells, j_light, electrical: Electrical):
    """Every subcell alone at its maximum power point, elementwise over (..., m)."""
    vt = np.asarray(cells.vt)[..., None] if np.ndim(cells.vt) else cells.vt
    if cells.ideal and not electrical.resistive:
        return db.single_junction_mpp(j_light, cells.a, vt / K_B_EV)
    if not electrical.resistive:
        return db.two_diode_mpp(j_light, cells.a, cells.b, cells.n, vt / K_B_EV)

    def voltage(jd):
        return _cell_voltage(jd, j_light, cells.a, cells.b, cells.n, vt, cells.ideal)

    jd = _resistive_maximum(voltage, np.zeros_like(j_light), j_light, electrical)
    j, v = _delivered(*_terminal(jd, voltage(jd), electrical))
    return j, v, j * v


def _coupled_four_terminal(cells: _Cells, electrical: Electrical):
    """Four terminals with coupling: the front's operating point is chosen with the back's.

    The front at diode current J_f gives P_f(J_f) and hands the back c·J0,rear·(e^{qV_f/kT} − 1);
    the back sits at its own maximum power point for that photocurrent. The sum is maximised
    over J_f, so the four-terminal result is never below the two-terminal one.
    """
    jl = cells.j_light
    front = _Cells(jl[..., :1], cells.a[..., :1], cells.b[..., :1], cells.n, cells.vt,
                   0.0 * cells.gain, cells.ideal)
    back = _Cells(jl[..., 1:], cells.a[..., 1:], cells.b[..., 1:], cells.n, cells.vt,
                  0.0 * cells.gain, cells.ideal)

    def parts(jf):
        vf = front.voltage(0, jf)
        j, v = _delivered(*_terminal(jf, vf, electrical))
        back_light = jl[..., 1:] + cells.back_gain(vf)[..., None]
        jb, vb, pb = _own_mpp(back, back_light, electrical)
        return j, v, jb[..., 0], vb[..., 0], pb[..., 0]

    def total(jf):
        j, v, _, _, pb = parts(jf)
        return j * v + pb

    jf = db.golden_maximum(total, np.zeros(jl.shape[:-1]), jl[..., 0])
    j, v, jb, vb, pb = parts(jf)
    return np.stack([j, jb], -1), np.stack([v, vb], -1), np.stack([j * v, pb], -1)


def evaluate_stack(j_light, j0_rad, temperature_K, irradiance, ere=1.0, ideality=1.0,
                   electrical: Electrical = IDEAL,
                   front_index: float = DEFAULT_FRONT_INDEX) -> StackPerformance:
    """Two- and four-terminal maximum power of stacks of subcells (or single junctions).

    Parameters
    ----------
    j_light : (..., m) array
        Photocurrent of each subcell in place [A/m²], front first.
    j0_rad : (..., m) array
        Radiative saturation current of each subcell through its front face, by reciprocity
        from the same absorptance [A/m²].
    temperature_K : float or (...) array
        Cell temperature [K].
    irradiance : float
        Incident power [W/m²], the efficiency denominator.
    ere : float or (..., m) array
        External radiative efficiency at open circuit, in (0, 1] [-].
    ideality : float
        Ideality factor of the non-radiative diode [-]; the radiative diode is always n = 1.
    electrical : Electrical
        Rear emission, luminescent coupling and resistances (off by default).
    front_index : float
        Refractive index of the front subcell [-], for its rear emission (n² × front face).

    Notes
    -----
    Each subcell is J = J_L − J0,rad·(e^{qV/kT} − 1) − J0,nr·(e^{qV/nkT} − 1), with J0,nr from
    :func:`~tandem.physics.detailed_balance.nonradiative_saturation_current` (for n = 1 the one diode
    J0,rad/ERE). With rear emission the front's radiative term gains n²·J0,rad (the emission
    into a medium of index n, Yablonovitch 1982); luminescent coupling passes the fraction c
    of exactly that emission to the back, whose photocurrent becomes
    J_L,b + c·n²·J0,rad,f·(e^{qV_f/kT} − 1): the photons appear once as the front's loss and
    once as the back's gain. For n = 1 cells this is an ideal back diode with
    J_L' = (J_L,b + c'·J_L,f)/(1 + c') and J0' = J0,b/(1 + c'), c' = c·n²·J0,rad,f/J0,f.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> import numpy as np
    >>> perf = tandem.step_stack(flux, np.array([1.73, 1.12]), 300.0)
    >>> again = tandem.evaluate_stack(perf.j_light, perf.j0_radiative, 300.0, flux.irradiance)
    >>> bool(again.p_2t == perf.p_2t)
    True
    """
    j_light = np.asarray(j_light, dtype=float)
    shape = j_light.shape
    m = shape[-1]
    j0_rad = np.broadcast_to(np.asarray(j0_rad, dtype=float), shape)
    ere = np.broadcast_to(np.asarray(ere, dtype=float), shape)
    t = np.asarray(temperature_K, dtype=float)
    vt = K_B_EV * np.broadcast_to(t, shape[:-1]) if t.ndim else K_B_EV * float(t)
    t_sub = t[..., None] if t.ndim else t
    rear = np.zeros(m)
    if m == 2 and electrical.emits_rear:
        rear[0] = front_index**2
    j0_rear = j0_rad * rear
    gain = electrical.coupling * j0_rear[..., 0] if m == 2 else np.zeros(shape[:-1])
    if ideality == 1.0:
        j0_nr = j0_rad / ere - j0_rad  # reported only; the diode uses J0,rad/ERE exactly
        cells = _Cells(j_light, j0_rad / ere + j0_rear, np.zeros(shape), 1.0, vt, gain, True)
    else:
        j0_nr = db.nonradiative_saturation_current(j_light, j0_rad, ere, ideality)
        ideal = not np.any(j0_nr > 0)  # ERE = 1: no non-radiative diode at all
        cells = _Cells(j_light, j0_rad + j0_rear, j0_nr, float(ideality), vt, gain, ideal)
    if cells.ideal:
        voc = db.open_circuit_voltage(j_light, cells.a, t_sub)
    else:
        voc = db.two_diode_voltage(0.0, j_light, cells.a, cells.b, cells.n, t_sub)
    if cells.coupled:
        j_own, v_own, p_own = _coupled_four_terminal(cells, electrical)
    else:
        j_own, v_own, p_own = _own_mpp(cells, j_light, electrical)
    if m == 1:
        j_2t, v_2t, p_2t = j_own[..., 0], v_own[..., 0], p_own[..., 0]
        v_2t_sub = v_own
    elif cells.ideal and not electrical.resistive:
        jl_s, j0_s = j_light, cells.a
        if cells.coupled:  # the coupled back is an ideal diode with shifted J_L and J0
            c = gain / cells.a[..., 0]
            jl_s, j0_s = j_light.copy(), cells.a.copy()
            jl_s[..., 1] = (j_light[..., 1] + c * j_light[..., 0]) / (1 + c)
            j0_s[..., 1] = cells.a[..., 1] / (1 + c)
        j_2t, v_2t_sub = db.series_mpp_subcells(
            jl_s, j0_s, t, own_mpp_current=None if cells.coupled else j_own,
            reduced_voc=None if cells.coupled else np.sum(voc, axis=-1) / vt)
        v_2t = v_2t_sub.sum(axis=-1)
        p_2t = j_2t * v_2t
    else:
        j_2t, v_2t, p_2t, v_2t_sub = _series_general(cells, electrical)
    return StackPerformance(j_light, j0_rad + j0_rear, j0_nr, float(ideality), voc, p_own,
                            j_own, v_own, j_2t, v_2t, p_2t, v_2t_sub, float(irradiance))


def _series_general(cells: _Cells, electrical: Electrical):
    """Series maximum power of any subcells (two diodes, coupling, resistances).

    P(J) = J·ΣV_i(J) is unimodal in the diode current (each V_i is concave and falling), so a
    golden-section search over 0 < J < J_max finds it; J_max is the front's photocurrent or
    the back's with the most the coupling can give (the front at open circuit).
    """
    jl = cells.j_light
    hi = jl[..., 0]
    if jl.shape[-1] == 2:
        v_oc_front = cells.voltage(0, 0.0)
        hi = np.minimum(hi, jl[..., 1] + cells.back_gain(v_oc_front))

    def chain_voltage(jd):
        return np.sum(cells.series_voltages(jd), axis=-1)

    jd = _resistive_maximum(chain_voltage, np.zeros_like(hi), hi, electrical)
    v_sub = cells.series_voltages(jd)
    j, v = _delivered(*_terminal(jd, np.sum(v_sub, axis=-1), electrical))
    return j, v, j * v, v_sub


def step_stack(photon_flux: PhotonFlux, gaps, temperature_K, ere=1.0, ideality=1.0,
               electrical: Electrical = IDEAL, front_index: float = DEFAULT_FRONT_INDEX,
               absorbed_share=1.0):
    """Detailed-balance stacks of step absorbers; ``gaps`` has subcells on its last axis.

    Each subcell absorbs every photon between its own gap and the gap of the cell in front
    of it, and by reciprocity emits (radiatively) in the same band (De Vos 1980).
    ``ere`` broadcasts against ``gaps`` (one value, or one per subcell). ``absorbed_share``
    (per subcell) scales each subcell's absorptance for flat optical losses; by reciprocity it
    scales its photocurrent and its radiative J0 alike.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> import numpy as np
    >>> perf = tandem.step_stack(flux, np.array([1.73, 1.12]), 300.0)
    >>> round(100 * float(perf.efficiency_2t), 2), round(100 * float(perf.efficiency_4t), 2)
    (45.04, 45.05)
    """
    gaps = np.asarray(gaps, dtype=float)
    cumulative = db.cumulative_flux(photon_flux.energy, photon_flux.flux)
    upper = np.concatenate([np.full(gaps.shape[:-1] + (1,), np.inf), gaps[..., :-1]], axis=-1)
    upper_finite = np.where(np.isinf(upper), photon_flux.energy[-1], upper)
    share = np.asarray(absorbed_share, dtype=float)
    j_light = db.step_photocurrent(photon_flux, gaps, upper_finite, cumulative) * share
    j0_rad = db.step_radiative_dark_current(gaps, temperature_K, upper) * share
    return evaluate_stack(j_light, j0_rad, temperature_K, photon_flux.irradiance, ere, ideality,
                          electrical, front_index)


