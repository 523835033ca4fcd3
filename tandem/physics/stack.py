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
    series_resistance_ohm_cm2 : the stack's series resistance [Ω·cm²]: the whole series chain
        carries it with two terminals; with four, each of the m subcell circuits carries R_s/m
        (the same layers shared between the circuits), so four terminals can always reproduce
        the two-terminal operating point and never do worse. 0 switches it off.
    shunt_resistance_ohm_cm2 : across each junction, with any number of terminals [Ω·cm²];
        infinity switches it off.
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
    voc: np.ndarray  #: (..., m) terminal open-circuit voltage of each subcell's own circuit
    jsc: np.ndarray  #: (..., m) terminal short-circuit current of each subcell's own circuit
    p_own: np.ndarray  #: (..., m) each subcell at its four-terminal maximum power point
    j_own: np.ndarray  #: (..., m) current at each subcell's four-terminal maximum power point
    v_own: np.ndarray  #: (..., m) voltage at each subcell's four-terminal maximum power point
    j_2t: np.ndarray  #: (...) current at the series maximum power point
    v_2t: np.ndarray  #: (...) voltage at the series maximum power point
    p_2t: np.ndarray  #: (...) series (two-terminal) maximum power
    v_2t_sub: np.ndarray  #: (..., m) each junction's voltage at the series maximum power point
    voc_2t: np.ndarray  #: (...) terminal open-circuit voltage of the series stack
    jsc_2t: np.ndarray  #: (...) terminal short-circuit current of the series stack
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
    def ff_own(self) -> np.ndarray:
        """Fill factor of each subcell's own circuit, from its terminal Voc and Jsc [-]."""
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.p_own > 0, self.p_own / (self.voc * self.jsc), 0.0)

    @property
    def ff_2t(self) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.p_2t > 0, self.p_2t / (self.voc_2t * self.jsc_2t), 0.0)

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
    r_shunt: float = math.inf  #: across each junction [Ω·m²]

    @property
    def coupled(self) -> bool:
        return self.j_light.shape[-1] == 2 and bool(np.any(self.gain > 0))

    def voltage(self, i: int, current, extra=0.0):
        """Junction voltage of subcell i (with its shunt) carrying ``current`` with ``extra``
        photocurrent [V]."""
        return junction_voltage(current, self.j_light[..., i] + extra, self.a[..., i],
                                self.b[..., i], self.n, self.vt, self.ideal, self.r_shunt)

    def alone(self, i: int) -> "_Cells":
        """Subcell i as a one-cell chain (no coupling)."""
        return _Cells(self.j_light[..., i:i + 1], self.a[..., i:i + 1], self.b[..., i:i + 1],
                      self.n, self.vt, 0.0 * self.gain, self.ideal, self.r_shunt)

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


def junction_voltage(current, j_light, a, b, n, vt, ideal: bool, r_shunt: float = math.inf):
    """Voltage of a junction with a shunt across it, carrying terminal ``current`` [V].

    Solves J_L − a·(e^{V/vt} − 1) − b·(e^{V/(n·vt)} − 1) − V/R_sh = J for V; the left side
    falls strictly with V and is concave, so the root is bracketed by [min(0, (J_L − J)·R_sh),
    max(0, min(V without the shunt, (J_L − J)·R_sh))] and found by Newton's method from the
    upper end, with bisection whenever a step would leave the bracket. Without a shunt, the
    closed form of the diode(s).
    """
    v_open = _cell_voltage(current, j_light, a, b, n, vt, ideal)
    if not math.isfinite(r_shunt):
        return v_open
    excess = np.asarray(j_light, dtype=float) - current
    lo = np.minimum(excess * r_shunt, 0.0)
    # both the diode's own voltage and the shunt's alone (J_L − J)·R_sh leave f ≤ 0: start
    # from the smaller, where Newton on this concave f converges from the right
    hi = np.where(excess > 0, np.minimum(v_open, excess * r_shunt), 0.0) + 0.0 * lo
    v = hi.copy()
    for _ in range(200):
        x = v / vt
        ea, eb = a * np.exp(x), b * np.exp(x / n)
        f = excess - a * np.expm1(x) - b * np.expm1(x / n) - v / r_shunt
        lo, hi = np.where(f > 0, v, lo), np.where(f > 0, hi, v)
        step = v + f / ((ea + eb / n) / vt + 1.0 / r_shunt)
        new = np.where((step >= lo) & (step <= hi), step, 0.5 * (lo + hi))
        done = np.max(np.abs(new - v) - 1e-12 * np.abs(v), initial=0.0) < 1e-13
        v = new
        if done:
            break
    return v


def _bisect(f, lo, hi, iterations: int = 52):
    """Where the decreasing ``f`` crosses zero in [lo, hi] (f(lo) ≥ 0 ≥ f(hi)), elementwise;
    52 halvings leave 2⁻⁵² of the bracket, the resolution of a double."""
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        above = f(mid) > 0
        lo, hi = np.where(above, mid, lo), np.where(above, hi, mid)
    return 0.5 * (lo + hi)


def _chain_maximum(chain_voltage, j_high, r_series: float):
    """Terminal Voc, Jsc and maximum power point of a series chain with a series resistance.

    ``chain_voltage(J)`` is the sum of the junction voltages at terminal current J (each
    falling and concave in J); the terminal voltage is chain_voltage(J) − J·R_s, so
    P(J) = J·V(J) is concave on [0, Jsc]: Jsc is found by bisection (V(J_high) ≤ 0 when
    every junction is past its photocurrent), the maximum by golden section inside.
    Returns (voc, jsc, j_mp, v_mp), all (...).
    """
    def terminal_voltage(j):
        return chain_voltage(j) - j * r_series

    zero = np.zeros_like(np.asarray(j_high, dtype=float))
    voc = terminal_voltage(zero)
    alive = voc > 0
    jsc = np.where(alive, _bisect(terminal_voltage, zero, j_high), 0.0)
    # 48 golden steps leave 0.618⁴⁸ ≈ 1e-10 of [0, Jsc]; P is flat there to ~1e-20 relative
    j = db.golden_maximum(lambda x: x * terminal_voltage(x), zero, jsc, iterations=48)
    v = terminal_voltage(j)
    dead = ~(j * v > 0)
    return (np.maximum(voc, 0.0), jsc, np.where(dead, 0.0, j), np.where(dead, 0.0, v))


def _own_mpp(cells: _Cells, j_light, electrical: Electrical, circuits: int):
    """Every subcell alone at its maximum power point, elementwise over (..., m); each
    circuit carries R_s/``circuits`` (the stack's series resistance shared between them).

    Returns j, v, p, voc, jsc (terminal values of each subcell's own circuit).
    """
    vt = np.asarray(cells.vt)[..., None] if np.ndim(cells.vt) else cells.vt
    if not electrical.resistive:
        if cells.ideal:
            j, v, p = db.single_junction_mpp(j_light, cells.a, vt / K_B_EV)
            voc = db.open_circuit_voltage(j_light, cells.a, vt / K_B_EV)
        else:
            j, v, p = db.two_diode_mpp(j_light, cells.a, cells.b, cells.n, vt / K_B_EV)
            voc = db.two_diode_voltage(0.0, j_light, cells.a, cells.b, cells.n, vt / K_B_EV)
        return j, v, p, voc, np.asarray(j_light, dtype=float) + 0.0 * voc

    def voltage(j):
        return junction_voltage(j, j_light, cells.a, cells.b, cells.n, vt, cells.ideal,
                                cells.r_shunt)

    voc, jsc, j, v = _chain_maximum(voltage, np.asarray(j_light, dtype=float),
                                    electrical.series_resistance_ohm_cm2 * OHM_CM2 / circuits)
    return j, v, j * v, voc, jsc


def _coupled_four_terminal(cells: _Cells, electrical: Electrical):
    """Four terminals with coupling: the front's operating point is chosen with the back's.

    The front at diode current J_f gives P_f(J_f) and hands the back c·J0,rear·(e^{qV_f/kT} − 1);
    the back sits at its own maximum power point for that photocurrent. The sum is maximised
    over J_f, so the four-terminal result is never below the two-terminal one.
    """
    jl = cells.j_light
    front, back = cells.alone(0), cells.alone(1)
    r_series = electrical.series_resistance_ohm_cm2 * OHM_CM2 / 2

    def parts(jf):
        vf = front.voltage(0, jf)  # the front's junction voltage sets what it hands the back
        v = vf - jf * r_series
        back_light = jl[..., 1:] + cells.back_gain(vf)[..., None]
        jb, vb, pb, voc_b, jsc_b = _own_mpp(back, back_light, electrical, 2)
        return v, jb[..., 0], vb[..., 0], pb[..., 0], voc_b[..., 0], jsc_b[..., 0]

    def total(jf):
        v, _, _, pb, _, _ = parts(jf)
        return np.maximum(jf * v, 0.0) + pb

    # the front's own terminal limits bound its current (no power outside [0, Jsc])
    _, _, _, voc_f, jsc_f = _own_mpp(front, jl[..., :1], electrical, 2)
    jf = db.golden_maximum(total, np.zeros(jl.shape[:-1]), jsc_f[..., 0], iterations=48)
    v, jb, vb, pb, voc_b, jsc_b = parts(jf)
    dead = ~(jf * v > 0)
    j, v = np.where(dead, 0.0, jf), np.where(dead, 0.0, v)
    return (np.stack([j, jb], -1), np.stack([v, vb], -1), np.stack([j * v, pb], -1),
            np.stack([voc_f[..., 0], voc_b], -1), np.stack([jsc_f[..., 0], jsc_b], -1))


def evaluate_stack(j_light, j0_rad, temperature_K, irradiance, ere=1.0, ideality=1.0,
                   electrical: Electrical = IDEAL,
                   front_index: float = DEFAULT_FRONT_INDEX,
                   reference_j_light=None) -> StackPerformance:
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
    reference_j_light : (..., m) array, optional
        Photocurrent where the ERE is stated (AM1.5G, 1 sun: see
        :func:`~tandem.physics.spectra.reference_flux_on`) [A/m²]. The non-radiative diode
        of an n ≠ 1 cell is fixed there, so under other light its ERE follows (an n = 2 cell's
        Voc moves by n·kT/q·ln 10 per decade of light at low ERE). None: the ERE holds at
        ``j_light`` itself, as it is where the reference is not positive. With n = 1 the ERE
        does not depend on light and this is unused.

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
    r_shunt = electrical.shunt_resistance_ohm_cm2 * OHM_CM2
    if ideality == 1.0:
        j0_nr = j0_rad / ere - j0_rad  # reported only; the diode uses J0,rad/ERE exactly
        cells = _Cells(j_light, j0_rad / ere + j0_rear, np.zeros(shape), 1.0, vt, gain, True,
                       r_shunt)
    else:
        # no reference light (a gap above AM1.5G's range): the ERE holds where it is used
        at = j_light if reference_j_light is None else np.where(
            np.asarray(reference_j_light, dtype=float) > 0, reference_j_light, j_light)
        j0_nr = db.nonradiative_saturation_current(at, j0_rad, ere, ideality)
        ideal = not np.any(j0_nr > 0)  # ERE = 1: no non-radiative diode at all
        cells = _Cells(j_light, j0_rad + j0_rear, j0_nr, float(ideality), vt, gain, ideal,
                       r_shunt)
    if cells.coupled:
        j_own, v_own, p_own, voc, jsc = _coupled_four_terminal(cells, electrical)
    else:
        j_own, v_own, p_own, voc, jsc = _own_mpp(cells, j_light, electrical, m)
    if m == 1:
        j_2t, v_2t, p_2t = j_own[..., 0], v_own[..., 0], p_own[..., 0]
        v_2t_sub = v_own + j_own * electrical.series_resistance_ohm_cm2 * OHM_CM2  # junction
        voc_2t, jsc_2t = voc[..., 0], jsc[..., 0]
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
        # ideal diodes: Jsc is the lowest photocurrent (to within J0), Voc the sum
        voc_2t = (np.sum(db.open_circuit_voltage(jl_s, j0_s, t_sub), axis=-1) if cells.coupled
                  else np.sum(voc, axis=-1))
        jsc_2t = np.min(jl_s, axis=-1)
    else:
        j_2t, v_2t, p_2t, v_2t_sub, voc_2t, jsc_2t = _series_general(cells, electrical)
    return StackPerformance(j_light, j0_rad + j0_rear, j0_nr, float(ideality), voc, jsc, p_own,
                            j_own, v_own, j_2t, v_2t, p_2t, v_2t_sub, voc_2t, jsc_2t,
                            float(irradiance))


def _series_general(cells: _Cells, electrical: Electrical):
    """Series maximum power of any subcells (two diodes, coupling, resistances).

    The chain's terminal voltage at current J is Σ V_j,i(J) − J·R_s, each junction voltage
    with its own shunt (and the back's extra light from coupling); see :func:`_chain_maximum`.
    The search runs up to the limiting photocurrent without shunts (the back's with the most
    coupling can give, the front at open circuit), and with shunts past every photocurrent,
    where every junction is reverse-biased.
    """
    jl = cells.j_light
    photocurrents = [jl[..., i] for i in range(jl.shape[-1])]
    if len(photocurrents) == 2:  # the back's with the most the coupling can give
        photocurrents[1] = photocurrents[1] + cells.back_gain(cells.voltage(0, 0.0))
    # Without shunts no junction carries more than its photocurrent (the diode saturates in
    # reverse; the fast ideal path caps there too), so the limiting one bounds the search;
    # a shunt lets the others drive current through it, up to past every photocurrent.
    stacked = np.stack(photocurrents, axis=-1)
    j_high = stacked.max(axis=-1) if math.isfinite(cells.r_shunt) else stacked.min(axis=-1)

    def chain_voltage(j):
        return np.sum(cells.series_voltages(j), axis=-1)

    voc, jsc, j, v = _chain_maximum(chain_voltage, j_high,
                                    electrical.series_resistance_ohm_cm2 * OHM_CM2)
    v_sub = cells.series_voltages(j)
    return j, v, j * v, v_sub, voc, jsc


def reference_current_above(gap_eV) -> np.ndarray:
    """q∫Φ dE above each gap under AM1.5G at 1 sun, on its own grid (exact for its
    piecewise-linear flux) [A/m²]: a step absorber's photocurrent where its ERE is stated.
    Zero for a gap at or above the spectrum's top (infinity included)."""
    from tandem.physics.spectra import reference_flux

    ref = reference_flux()
    return db.Q * db.flux_above(ref.energy, ref.flux, np.minimum(gap_eV, ref.energy[-1]))


def step_stack(photon_flux: PhotonFlux, gaps, temperature_K, ere=1.0, ideality=1.0,
               electrical: Electrical = IDEAL, front_index: float = DEFAULT_FRONT_INDEX,
               absorbed_share=1.0):
    """Detailed-balance stacks of step absorbers; ``gaps`` has subcells on its last axis.

    Each subcell absorbs every photon between its own gap and the gap of the cell in front
    of it, and by reciprocity emits (radiatively) in the same band (De Vos 1980).
    ``ere`` broadcasts against ``gaps`` (one value, or one per subcell). ``absorbed_share``
    (per subcell) scales each subcell's absorptance for flat optical losses; by reciprocity it
    scales its photocurrent and its radiative J0 alike. An n ≠ 1 cell's non-radiative diode
    is fixed where the ERE is stated, under AM1.5G at 1 sun (see :func:`evaluate_stack`).

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
    reference = None
    if ideality != 1.0:  # each band's photons under AM1.5G, where the ERE is stated
        reference = (reference_current_above(gaps) - reference_current_above(upper)) * share
    return evaluate_stack(j_light, j0_rad, temperature_K, photon_flux.irradiance, ere, ideality,
                          electrical, front_index, reference)


