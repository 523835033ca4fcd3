"""Single junctions and two-junction stacks: two-terminal (series) and four-terminal.

:func:`evaluate_stack` takes photocurrents and saturation currents of each subcell, so it
serves step absorbers (:func:`step_stack`) and the optics model alike. Arrays carry the
subcells on their last axis, front (sunward) first; any leading shape is a sweep.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields as dataclass_fields, replace

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.units import K_B_EV
from tandem.physics import detailed_balance as db
from tandem.physics.emission import StepEmission
from tandem.physics.connections import three_terminal, voltage_matched
from tandem.physics.junctions import _Cells, _coupled_four_terminal, _own_mpp, _series_general
from tandem.physics.recombination import BulkRecombination
from tandem.physics.spectra import PhotonFlux

SUBCELL_NAMES = ("front", "back")
OHM_CM2 = 1e-4  #: 1 Ω·cm² in Ω·m²
#: Refractive index of a step-absorber front cell when rear emission is counted [-]: typical
#: of III-V semiconductors and silicon (≈ 3.5 near their gaps; handbook values, common practice).
DEFAULT_FRONT_INDEX = 3.5


#: The largest middle-contact resistance taken [Ω·cm²]: there the three-terminal stack is the
#: series stack to 10⁻⁵ (tested); far above it the search's Hessian overflows (10¹⁰⁰ gave 0 %)
MAX_MIDDLE_OHM_CM2 = 1e7


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
    middle_contact : three terminals only: ``"s"`` (series type: the back continues the
        front's polarity, the middle contact carries the difference of the subcell currents)
        or ``"r"`` (reverse type: the back's polarity is reversed, the middle contact carries
        their sum).
    middle_resistance_ohm_cm2 : three terminals only: the middle contact's own resistance
        [Ω·cm²], beside R_s/2 in each circuit (see :func:`~tandem.physics.connections.three_terminal`).
        0: three terminals reach the four-terminal power.
    string_ratios : ((m, n), ...): strings of m front and n back subcells in series, in
        parallel at one voltage (voltage matching of a four-terminal module), one result per
        ratio; empty: not computed.

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
    middle_contact: str = "s"
    middle_resistance_ohm_cm2: float = 0.0
    string_ratios: tuple[tuple[int, int], ...] = ()

    def __post_init__(self):
        if not 0.0 <= self.coupling <= 1.0:
            raise TandemInputError(f"luminescent coupling {self.coupling:g}: give a fraction in [0, 1]")
        if not (self.series_resistance_ohm_cm2 >= 0 and math.isfinite(self.series_resistance_ohm_cm2)):
            raise TandemInputError(f"series resistance {self.series_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a finite value ≥ 0")
        if not self.shunt_resistance_ohm_cm2 > 0:
            raise TandemInputError(f"shunt resistance {self.shunt_resistance_ohm_cm2:g} Ω·cm²: "
                                   "give a positive value (inf for none)")
        if self.middle_contact not in ("s", "r"):
            raise TandemInputError(f"middle contact {self.middle_contact!r}: choose s (series "
                                   "type) or r (reverse type)")
        if not 0 <= self.middle_resistance_ohm_cm2 <= MAX_MIDDLE_OHM_CM2:
            raise TandemInputError(f"middle-contact resistance {self.middle_resistance_ohm_cm2:g} "
                                   f"Ω·cm²: give 0 to {MAX_MIDDLE_OHM_CM2:.0e} (a larger one "
                                   "carries no current: that is two terminals)")
        for ratio in self.string_ratios:
            if not (isinstance(ratio, tuple) and len(ratio) == 2
                    and all(isinstance(k, int) and not isinstance(k, bool) and 1 <= k <= 20
                            for k in ratio)):
                raise TandemInputError(f"string ratio {ratio!r}: give two whole numbers of cells "
                                       "from 1 to 20, front:back, e.g. 1:2")
        if len(set(self.string_ratios)) != len(self.string_ratios) or len(self.string_ratios) > 12:
            raise TandemInputError(f"string ratios {self.string_ratios!r}: give up to 12, each once")

    @property
    def resistive(self) -> bool:
        return self.series_resistance_ohm_cm2 > 0 or math.isfinite(self.shunt_resistance_ohm_cm2)

    @property
    def emits_rear(self) -> bool:
        """Whether the front subcell loses emission towards the back (always with coupling)."""
        return self.rear_emission or self.coupling > 0


IDEAL = Electrical()


def by_connection(terminals: int, two, three, four, holder: str):
    """The value for 2, 3 or 4 terminals, refused in one line where ``holder`` (what holds
    the values, in words) has no three-terminal value (None)."""
    value = {2: two, 3: three, 4: four}[terminals]
    if value is None:
        raise TandemInputError(f"{holder} holds no three-terminal values")
    return value


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
    bulk: BulkRecombination | None = None  #: Auger recombination in the subcells' bulk
    emission: StepEmission | None = None  #: exact emission's excess where it was used
    p_3t: np.ndarray | None = None  #: (...) three-terminal maximum power (two subcells)
    j_3t: np.ndarray | None = None  #: (..., m) each subcell's current there
    v_3t: np.ndarray | None = None  #: (..., m) the two loads' voltages there (top, back)
    p_vm: np.ndarray | None = None  #: (..., k) voltage-matched strings' power, per string ratio
    v_vm: np.ndarray | None = None  #: (..., k, m) each subcell's terminal voltage there

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
    def efficiency_3t(self) -> np.ndarray:
        return self.power(3) / self.irradiance

    def power(self, terminals: int) -> np.ndarray:
        """Maximum power with 2 (series), 3 (middle contact) or 4 terminals [W/m²]."""
        return by_connection(terminals, self.p_2t, self.p_3t, self.p_4t,
                             "a single junction (three terminals need two subcells)")

    def efficiency(self, terminals: int) -> np.ndarray:
        return self.power(terminals) / self.irradiance

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

    def at(self, index) -> "StackPerformance":
        """The stacks at ``index`` of the sweep's leading axes (an integer, a tuple, a mask),
        as if they had been solved alone: every array indexed, the recombination and emission
        terms broadcast against the sweep first (their arrays may be smaller)."""
        shape = np.shape(self.j_light)
        picked = {}
        for f in dataclass_fields(self):
            value = getattr(self, f.name)
            if isinstance(value, np.ndarray):
                value = value[index]
            elif isinstance(value, (BulkRecombination, StepEmission)):
                value = _take(value, index, shape)
            picked[f.name] = value
        return StackPerformance(**picked)


def evaluate_stack(j_light, j0_rad, temperature_K, irradiance, ere=1.0, ideality=1.0,
                   electrical: Electrical = IDEAL,
                   front_index: float = DEFAULT_FRONT_INDEX,
                   reference_j_light=None, bulk: BulkRecombination | None = None,
                   emission: StepEmission | None = None) -> StackPerformance:
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
    bulk : BulkRecombination, optional
        Auger recombination in each subcell's bulk (width 0 for a subcell without it): a third
        recombination current J_A(V) beside the diodes (see
        :mod:`tandem.physics.recombination`); the maximum-power points then come from the full
        balance J = J_L − J_rad − J_nr − J_A.

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
    j0_rad = np.broadcast_to(np.asarray(j0_rad, dtype=float), shape)
    ere = np.broadcast_to(np.asarray(ere, dtype=float), shape)
    t = np.asarray(temperature_K, dtype=float)
    args = (irradiance, ideality, electrical, front_index)
    perf = _evaluate(j_light, j0_rad, t, ere, reference_j_light, bulk, None, *args)
    if emission is None:
        return perf
    need = exact_emission_needed(perf, emission.gap_eV, t)
    if not np.any(need):
        return perf
    if need.ndim == 0 or np.all(need):
        return _evaluate(j_light, j0_rad, t, ere, reference_j_light, bulk, emission, *args)

    def take(x):
        return None if x is None else np.broadcast_to(x, shape)[need]

    sub = _evaluate(take(j_light), take(j0_rad), np.broadcast_to(t, shape[:-1])[need] if t.ndim else t,
                    take(ere), take(reference_j_light), _take(bulk, need, shape),
                    _take(emission, need, shape), *args)
    merged = {}
    for f in dataclass_fields(StackPerformance):
        value = getattr(perf, f.name)
        if isinstance(value, np.ndarray) and value.shape[:need.ndim] == need.shape:
            value = value.copy()
            value[need] = getattr(sub, f.name)
        merged[f.name] = value
    # the emission term as used (rear emission included): zero where the Boltzmann diode was kept
    rear = _rear_factors(shape[-1], electrical, front_index)
    merged["emission"] = StepEmission(
        np.broadcast_to(emission.gap_eV, shape), np.broadcast_to(emission.upper_eV, shape),
        np.where(need[..., None], np.broadcast_to(emission.scale, shape) * (1 + rear), 0.0),
        np.broadcast_to(emission.j0, shape))
    return StackPerformance(**merged)


#: Where every subcell's voltage leaves z = e^{−(E_g − qV)/kT} below this (E_g − qV > 9.2 kT,
#: true of most cells at one sun), the exact (Bose–Einstein) emission would move Voc by about
#: kT/q·z/2 (under 2 µV) and the power by under 1e-6 relative (tests/test_emission.py
#: measures both; at 2e-4 a 0.70 eV back cell at 340 K moved 1.02e-6): the Boltzmann closed
#: forms are kept there, the exact law solved elsewhere.
EXACT_EMISSION_BELOW = 1e-4


def exact_emission_needed(perf: StackPerformance, gap_eV, temperature_K) -> np.ndarray:
    """Where a Boltzmann result must be solved again with the exact emission, elementwise
    over the sweep: some subcell's voltage (Voc, its own or its series maximum-power point)
    leaves e^{−(E_g − qV)/kT} above EXACT_EMISSION_BELOW (see there)."""
    t = np.asarray(temperature_K, dtype=float)
    shape = np.shape(perf.j_light)
    vt = K_B_EV * (np.broadcast_to(t, shape[:-1])[..., None] if t.ndim else t)
    closest = np.maximum(perf.voc, np.maximum(perf.v_own, perf.v_2t_sub))
    with np.errstate(over="ignore"):
        return np.any(np.exp((closest - gap_eV) / vt) > EXACT_EMISSION_BELOW, axis=-1)


def _rear_factors(m: int, electrical: Electrical, front_index: float) -> np.ndarray:
    """Each subcell's rear emission in units of its front-face emission: n² for a front cell
    that emits towards the back (Yablonovitch 1982), else 0."""
    rear = np.zeros(m)
    if m == 2 and electrical.emits_rear:
        rear[0] = front_index**2
    return rear


def _take(term, mask, shape):
    """A recombination term's arrays at ``mask`` of the sweep (``shape`` with subcells last)."""
    if term is None:
        return None
    return replace(term, **{f.name: np.broadcast_to(getattr(term, f.name), shape)[mask]
                            for f in dataclass_fields(term)
                            if isinstance(getattr(term, f.name), (np.ndarray, float, int))})


def _evaluate(j_light, j0_rad, t, ere, reference_j_light, bulk, emission, irradiance, ideality,
              electrical, front_index) -> StackPerformance:
    """:func:`evaluate_stack` with the arrays checked; ``emission`` solves with the exact law."""
    shape = j_light.shape
    m = shape[-1]
    vt = K_B_EV * np.broadcast_to(t, shape[:-1]) if t.ndim else K_B_EV * float(t)
    t_sub = t[..., None] if t.ndim else t
    rear = _rear_factors(m, electrical, front_index)
    j0_rear = j0_rad * rear
    gain = electrical.coupling * j0_rear[..., 0] if m == 2 else np.zeros(shape[:-1])
    r_shunt = electrical.shunt_resistance_ohm_cm2 * OHM_CM2
    r_series = electrical.series_resistance_ohm_cm2 * OHM_CM2
    extra: tuple = (() if bulk is None else (bulk,))
    handed_on = None
    if emission is not None:  # the front's rear emission has the same spectrum, n² as much
        emission = replace(emission, scale=np.broadcast_to(emission.scale, shape) * (1 + rear))
        extra = extra + (emission,)
        if m == 2 and electrical.coupling > 0:
            handed_on = replace(emission.subcell(0), scale=emission.subcell(0).scale
                                * electrical.coupling * rear[0] / (1 + rear[0]))
    if ideality == 1.0:
        j0_nr = j0_rad / ere - j0_rad  # reported only; the diode uses J0,rad/ERE exactly
        cells = _Cells(j_light, j0_rad / ere + j0_rear, np.zeros(shape), 1.0, vt, gain, True,
                       r_shunt, extra, handed_on)
    else:
        # no reference light (a gap above AM1.5G's range): the ERE holds where it is used
        at = j_light if reference_j_light is None else np.where(
            np.asarray(reference_j_light, dtype=float) > 0, reference_j_light, j_light)
        j0_nr = db.nonradiative_saturation_current(at, j0_rad, ere, ideality)
        ideal = not np.any(j0_nr > 0)  # ERE = 1: no non-radiative diode at all
        cells = _Cells(j_light, j0_rad + j0_rear, j0_nr, float(ideality), vt, gain, ideal,
                       r_shunt, extra, handed_on)
    if cells.coupled:
        j_own, v_own, p_own, voc, jsc = _coupled_four_terminal(cells, r_series)
    else:
        j_own, v_own, p_own, voc, jsc = _own_mpp(cells, j_light, r_series, m)
    if m == 1:
        j_2t, v_2t, p_2t = j_own[..., 0], v_own[..., 0], p_own[..., 0]
        v_2t_sub = v_own + j_own * r_series  # junction
        voc_2t, jsc_2t = voc[..., 0], jsc[..., 0]
    elif cells.ideal and not electrical.resistive and not extra:
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
        j_2t, v_2t, p_2t, v_2t_sub, voc_2t, jsc_2t = _series_general(
            cells, r_series, None if cells.coupled else voc)
    p_3t = j_3t = v_3t = p_vm = v_vm = None
    if m == 2:
        r_middle = electrical.middle_resistance_ohm_cm2 * OHM_CM2
        if r_middle > 0:
            p_3t, j_3t, v_3t = three_terminal(cells, r_series, r_middle,
                                              electrical.middle_contact == "r", v_2t_sub)
        else:  # no middle-contact loss: each circuit at its own maximum, as with four
            p_3t, j_3t, v_3t = np.sum(p_own, axis=-1), j_own, v_own
        if electrical.string_ratios:
            strings = [voltage_matched(cells, r_series, ratio) for ratio in electrical.string_ratios]
            p_vm = np.stack([p for p, _ in strings], -1)
            v_vm = np.stack([v for _, v in strings], -2)
    return StackPerformance(j_light, j0_rad + j0_rear, j0_nr, float(ideality), voc, jsc, p_own,
                            j_own, v_own, j_2t, v_2t, p_2t, v_2t_sub, voc_2t, jsc_2t,
                            float(irradiance), bulk, emission, p_3t=p_3t, j_3t=j_3t, v_3t=v_3t,
                            p_vm=p_vm, v_vm=v_vm)


def reference_current_above(gap_eV) -> np.ndarray:
    """q∫Φ dE above each gap under AM1.5G at 1 sun, on its own grid (exact for its
    piecewise-linear spectrum) [A/m²]: a step absorber's photocurrent where its ERE is stated.
    Zero for a gap at or above the spectrum's top (infinity included)."""
    from tandem.physics.spectra import reference_flux

    ref = reference_flux()
    return db.Q * ref.count_above(np.minimum(gap_eV, ref.energy[-1]))


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
    upper = np.concatenate([np.full(gaps.shape[:-1] + (1,), np.inf), gaps[..., :-1]], axis=-1)
    upper_finite = np.where(np.isinf(upper), photon_flux.energy[-1], upper)
    share = np.asarray(absorbed_share, dtype=float)
    j_light = db.step_photocurrent(photon_flux, gaps, upper_finite) * share
    j0_rad = db.step_radiative_dark_current(gaps, temperature_K, upper) * share
    reference = None
    if ideality != 1.0:  # each band's photons under AM1.5G, where the ERE is stated
        reference = (reference_current_above(gaps) - reference_current_above(upper)) * share
    emission = StepEmission.at(gaps, upper, np.broadcast_to(share, gaps.shape), temperature_K)
    return evaluate_stack(j_light, j0_rad, temperature_K, photon_flux.irradiance, ere, ideality,
                          electrical, front_index, reference, emission=emission)


