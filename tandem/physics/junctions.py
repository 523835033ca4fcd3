"""Junctions and their maximum power: the diode(s) of each subcell, extra recombination
terms, shunts and series resistance, searched elementwise over any sweep.

Arrays carry the subcells on their last axis, front (sunward) first. Used by
:func:`tandem.physics.stack.evaluate_stack`; resistances are in Ω·m² here.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from tandem.core.units import K_B_EV
from tandem.physics import detailed_balance as db
from tandem.physics.emission import StepEmission


#: Golden-section steps for a maximum-power point (0.618⁸ ≈ 2 % of the bracket), then
#: parabolic steps through the best three points: the power exact to about 1e-14 relative
#: (measured on 2×10⁵ random two-diode cells with series resistance: 8e-15; 18 + 2 steps gave
#: 5e-15 and 32 golden steps 1.4e-13), in 16 evaluations instead of 22. On the 401 × 401 step
#: map against 45 + 4 steps, two-terminal efficiencies fall short by at most 5e-14 % abs
#: (18 + 2: 1.6e-12); fewer parabolic steps stall there (8 + 5: 1.5e-10, 10 + 4: 1.5e-9).
GOLDEN_STEPS = 8
PARABOLIC_STEPS = 6


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
    extra: tuple = ()  #: further recombination currents of each subcell (see junction_voltage)
    handed_on: StepEmission | None = None  #: the exact emission's excess the coupling hands on

    @property
    def coupled(self) -> bool:
        return self.j_light.shape[-1] == 2 and bool(np.any(self.gain > 0))

    @functools.cached_property
    def _terms(self) -> tuple:
        """Each subcell's active extra terms (computed once)."""
        return tuple(tuple(t.subcell(i) for t in self.extra if t.active(i))
                     for i in range(self.j_light.shape[-1]))

    def voltage(self, i: int, current, extra=0.0):
        """Junction voltage of subcell i (with its shunt) carrying ``current`` with ``extra``
        photocurrent [V]."""
        return junction_voltage(current, self.j_light[..., i] + extra, self.a[..., i],
                                self.b[..., i], self.n, self.vt, self.ideal, self.r_shunt,
                                self._terms[i])

    def current(self, i: int, v, extra=0.0):
        """Current out of subcell i's junction at junction voltage ``v`` (its diodes, shunt and
        extra terms, with ``extra`` photocurrent), explicit in ``v`` [A/m²]."""
        j = self.j_light[..., i] + extra - _diodes(self.a[..., i], self.b[..., i], self.n,
                                                   v / self.vt, self.ideal)[1]
        if math.isfinite(self.r_shunt):
            j = j - v / self.r_shunt
        for t in self._terms[i]:
            j = j - t.current(v, self.vt)
        return j

    def alone(self, i: int) -> "_Cells":
        """Subcell i as a one-cell chain (no coupling)."""
        return _Cells(self.j_light[..., i:i + 1], self.a[..., i:i + 1], self.b[..., i:i + 1],
                      self.n, self.vt, 0.0 * self.gain, self.ideal, self.r_shunt,
                      tuple(t.subcell(slice(i, i + 1)) for t in self.extra if t.active(i)))

    def back_gain(self, v_front):
        gain = self.gain * np.expm1(v_front / self.vt)
        return gain if self.handed_on is None else gain + self.handed_on.current(v_front, self.vt)

    def series_voltages(self, current):
        """Each subcell's voltage when ``current`` flows through all of them (..., m) [V]."""
        v = [self.voltage(0, current)]
        for i in range(1, self.j_light.shape[-1]):
            v.append(self.voltage(i, current, self.back_gain(v[0]) if i == 1 else 0.0))
        return np.stack(v, axis=-1)


def _diodes(a, b, n, x, ideal: bool):
    """(a·eˣ + b·e^{x/n}/n, a·(eˣ − 1) + b·(e^{x/n} − 1)) at reduced voltage x = qV/kT: the
    diodes' slope (× kT/q) and their recombination current [A/m²]; ``ideal`` (b = 0): the
    n = 1 diode alone."""
    e, em1 = db.exp_expm1(x)
    if ideal:
        return a * e, a * em1
    e_n, em1_n = db.exp_expm1(x / n)
    return a * e + b * e_n / n, a * em1 + b * em1_n


def _cell_voltage(current, j_light, a, b, n, vt, ideal: bool):
    """Voltage of a cell carrying ``current`` [V]: one n = 1 diode (``ideal``, continued
    linearly through zero in reverse bias) or the radiative plus non-radiative pair."""
    if ideal:
        y = j_light - current
        with np.errstate(invalid="ignore"):
            return vt * np.where(y > 0, np.log1p(np.maximum(y, 0.0) / a), y / a)
    return db.two_diode_voltage(current, j_light, a, b, n, vt / K_B_EV)


def junction_voltage(current, j_light, a, b, n, vt, ideal: bool, r_shunt: float = math.inf,
                     extra: tuple = ()):
    """Voltage of a junction with a shunt across it, carrying terminal ``current`` [V].

    Solves J_L − a·(e^{V/vt} − 1) − b·(e^{V/(n·vt)} − 1) − ΣJ_x(V) − V/R_sh = J for V, where
    ``extra`` holds further recombination currents J_x(V), each rising with V and giving
    J_x from ``current`` and (J_x, dJ_x/dV) from ``current_slope`` (Auger in the
    bulk: :class:`~tandem.physics.recombination.BulkRecombination`; the exact emission's excess
    over the Boltzmann diode: :class:`~tandem.physics.emission.StepEmission`, whose gap no
    voltage reaches). The left side falls strictly with V and is concave where it matters, so
    the root is bracketed by [min(0, (J_L − J)·R_sh), max(0, min(V of the diodes alone,
    (J_L − J)·R_sh, the gap))] and found by Newton's method from the upper end, with
    bisection whenever a step would leave the bracket. Without a shunt or extra terms, the
    closed form of the diode(s); without a shunt, a current above the photocurrent continues
    the diodes alone (the extra terms' reverse-bias share, e.g. Auger generation of order
    q·W·C·n_i³, is negligible there).
    """
    v_open = _cell_voltage(current, j_light, a, b, n, vt, ideal)
    shunted = math.isfinite(r_shunt)
    if not shunted and not extra:
        return v_open
    excess = np.asarray(j_light, dtype=float) - current
    g_shunt = 1.0 / r_shunt if shunted else 0.0
    reach = excess * r_shunt if shunted else np.where(excess > 0, np.inf, 0.0)
    lo = np.minimum(reach, 0.0)
    # both the diodes' own voltage and the shunt's alone (J_L − J)·R_sh leave f ≤ 0: start
    # from the smaller, where Newton on this concave f converges from the right
    hi = np.where(excess > 0, np.minimum(v_open, reach), 0.0) + 0.0 * lo
    for term in extra:  # just below a gap, whose exact emission no current can pay for
        if hasattr(term, "ceiling_V"):
            hi = np.minimum(hi, term.ceiling_V * (1 - 1e-15))
    v = hi.copy()
    log_excess = np.log(np.where(excess > 0, excess, 1.0))
    for _ in range(200):
        slope, recombination = _diodes(a, b, n, v / vt, ideal)
        recombination = recombination + v * g_shunt
        slope = slope / vt + g_shunt
        for term in extra:
            current_x, slope_x = term.current_slope(v, vt)
            recombination = recombination + current_x
            slope = slope + slope_x
        f = excess - recombination
        lo, hi = np.where(f > 0, v, lo), np.where(f > 0, hi, v)
        # Newton on ln(recombination) = ln(J_L − J) where both are positive: the sum of
        # exponentials is nearly linear in log space (a few steps), where Newton on f itself
        # crawls down the exponential about kT per step from the diodes' voltage
        with np.errstate(divide="ignore", invalid="ignore"):
            logarithmic = (excess > 0) & (recombination > 0)
            step = np.where(logarithmic, v - (np.log(np.where(logarithmic, recombination, 1.0))
                                              - log_excess) * recombination / slope,
                            v + f / slope)
        # a step that barely moves while f is far from zero (the steep emission just below a
        # gap) would stall Newton's method there: bisect instead
        stalled = (np.abs(step - v) < 1e-6 * (hi - lo)) & (np.abs(f) > 1e-3 * (np.abs(excess) + a))
        new = np.where((step >= lo) & (step <= hi) & ~stalled, step, 0.5 * (lo + hi))
        done = np.max(np.abs(new - v) - 1e-12 * np.abs(v), initial=0.0) < 1e-13
        v = new
        if done:
            break
    return v if shunted else np.where(excess > 0, v, v_open)


def golden_maximum(power, lo, hi, iterations=GOLDEN_STEPS, parabolic=PARABOLIC_STEPS):
    """Argument of the maximum of a unimodal function on [lo, hi], elementwise.

    A vectorised golden-section search: ``power`` maps an array of arguments (shaped like
    ``lo``) to an array of values; each step keeps the part of every bracket holding the
    maximum: n steps shrink it by 0.618ⁿ (with ``parabolic=0`` its middle is returned).

    ``parabolic`` steps then follow (successive parabolic interpolation, as in Brent's method:
    R. P. Brent, Algorithms for Minimization without Derivatives (1973), ch. 5): the vertex of
    the parabola through the three best points evaluated, kept inside the bracket; near a
    smooth maximum each step about squares the error, so 8 golden steps (2 % of the bracket)
    and 6 parabolic ones place the maximum better than 32 golden steps, in 16 evaluations
    instead of 34 (see GOLDEN_STEPS). The best point evaluated is returned then.
    """
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float) + 0.0 * lo
    lo = lo + 0.0 * hi
    ratio = (5.0**0.5 - 1.0) / 2.0
    x1, x2 = hi - ratio * (hi - lo), lo + ratio * (hi - lo)
    p1, p2 = power(x1), power(x2)
    x3, p3 = x2, p2  # the third point for a parabola: the interior point last dropped
    for _ in range(iterations):
        left = p1 >= p2  # the maximum lies in [lo, x2]
        x3, p3 = np.where(left, x2, x1), np.where(left, p2, p1)
        hi = np.where(left, x2, hi)
        lo = np.where(left, lo, x1)
        new = np.where(left, hi - ratio * (hi - lo), lo + ratio * (hi - lo))
        p_new = power(new)
        x1, x2, p1, p2 = (np.where(left, new, x2), np.where(left, x1, new),
                          np.where(left, p_new, p2), np.where(left, p1, p_new))
    if not parabolic:
        return 0.5 * (lo + hi)
    points = [(x1, p1, _rank(p1)), (x2, p2, _rank(p2)), (x3, p3, _rank(p3))]
    for step in range(parabolic):
        (a, fa, _), (b, fb, _), (c, fc, _) = points
        with np.errstate(all="ignore"):
            num = (b - a) ** 2 * (fb - fc) - (b - c) ** 2 * (fb - fa)
            den = (b - a) * (fb - fc) - (b - c) * (fb - fa)
            vertex = b - 0.5 * num / den
        ok = np.isfinite(vertex) & (den != 0)
        vertex = np.clip(np.where(ok, vertex, 0.5 * (lo + hi)), lo, hi)
        p_v = power(vertex)
        if step == 0:  # from here on the three are kept in ascending order of power
            points = _sorted_three(points)
        points = _best_three(points, (vertex, p_v, _rank(p_v)))
    return points[2][0]


def _rank(p):
    """A power as the parabolic steps rank it: NaN (no power there) below every number."""
    return np.where(np.isnan(p), -np.inf, p)


def _sorted_three(points):
    """Three (x, p, rank) points in ascending rank, elementwise, ties in their given order
    (three compare-exchanges of neighbours, as a stable sort does them)."""
    points = list(points)
    for i in (0, 1, 0):
        swap = points[i][2] > points[i + 1][2]
        first, second = points[i], points[i + 1]
        points[i] = tuple(np.where(swap, s, f) for f, s in zip(first, second))
        points[i + 1] = tuple(np.where(swap, f, s) for f, s in zip(first, second))
    return points


def _best_three(points, new):
    """The three best of three points in ascending rank and a new one, again in ascending
    rank, elementwise: what a stable sort of the four (the new one last) keeps when its
    lowest is dropped (the new point goes after every point of equal rank)."""
    a, b, c = points
    rank = new[2]
    past_a, past_b, past_c = a[2] <= rank, b[2] <= rank, c[2] <= rank
    return [tuple(np.where(past_a, np.where(past_b, vb, vn), va) for va, vb, vn in zip(a, b, new)),
            tuple(np.where(past_b, np.where(past_c, vc, vn), vb) for vb, vc, vn in zip(b, c, new)),
            tuple(np.where(past_c, vn, vc) for vc, vn in zip(c, new))]


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
    # Where the chain still holds its voltage at j_high (no shunt and no series resistance:
    # no junction passes its photocurrent), the terminal current cannot rise further and Jsc
    # is j_high itself; the bisection, 52 evaluations of the chain, is for the rest
    if np.all(terminal_voltage(j_high) >= 0):
        jsc = np.where(alive, j_high, 0.0)
    else:
        jsc = np.where(alive, _bisect(terminal_voltage, zero, j_high), 0.0)
    j = golden_maximum(lambda x: x * terminal_voltage(x), zero, jsc)
    v = terminal_voltage(j)
    dead = ~(j * v > 0)
    return (np.maximum(voc, 0.0), jsc, np.where(dead, 0.0, j), np.where(dead, 0.0, v))


def terminal_root(current_slope, start, r: float, target=0.0):
    """Junction voltage where a circuit with series resistance ``r`` has terminal voltage
    ``target``: V_j − r·J(V_j) = target (``target`` 0: its short circuit).

    f(V_j) = V_j − r·J(V_j) − target rises and is convex (J falls and is concave in V_j), so
    Newton's method from a point where f ≥ 0 falls monotonically onto the root, quadratically
    near it (a few steps where bisection takes 52). ``current_slope(v)`` gives (J, dJ/dV_j);
    ``start``: such a point, e.g. the smaller of the open circuit and target + r·J_L (no
    junction at V ≥ 0 delivers more than its photocurrent), far below a gap whose steep exact
    emission would stall the first steps. Where f stays above zero (a target beyond a gap,
    whose exact emission no current pays for) a non-finite step leaves v where it is.
    """
    v = np.asarray(start, dtype=float)
    for _ in range(100):
        j, dj = current_slope(v)
        with np.errstate(invalid="ignore"):
            new = np.minimum(v - (v - r * j - target) / (1.0 - r * dj), v)
        new = np.where(np.isfinite(new), new, v)
        done = np.max(np.abs(new - v) - 1e-12 * np.abs(v), initial=0.0) < 1e-13
        v = new
        if done:
            break
    return v


def _own_mpp(cells: _Cells, j_light, r_series: float, circuits: int):
    """Every subcell alone at its maximum power point, elementwise over (..., m); each
    circuit carries R_s/``circuits`` (``r_series``, the stack's series resistance [Ω·m²],
    shared between them).

    Returns j, v, p, voc, jsc (terminal values of each subcell's own circuit).
    """
    m = np.shape(cells.j_light)[-1]
    if cells.extra and m > 1:
        # each subcell with its own terms only: one without any (a film beside an
        # Auger-limited wafer) keeps its closed form, and the searches run on the others alone
        parts = [_own_mpp(cells.alone(i), np.asarray(j_light)[..., i:i + 1], r_series, circuits)
                 for i in range(m)]
        return tuple(np.concatenate(column, axis=-1) for column in zip(*parts))
    vt = np.asarray(cells.vt)[..., None] if np.ndim(cells.vt) else cells.vt
    if r_series == 0 and not math.isfinite(cells.r_shunt) and not cells.extra:
        if cells.ideal:
            j, v, p = db.single_junction_mpp(j_light, cells.a, vt / K_B_EV)
            voc = db.open_circuit_voltage(j_light, cells.a, vt / K_B_EV)
        else:
            j, v, p = db.two_diode_mpp(j_light, cells.a, cells.b, cells.n, vt / K_B_EV)
            voc = db.two_diode_voltage(0.0, j_light, cells.a, cells.b, cells.n, vt / K_B_EV)
        return j, v, p, voc, np.asarray(j_light, dtype=float) + 0.0 * voc

    jl = np.asarray(j_light, dtype=float)
    g_shunt = 1.0 / cells.r_shunt
    r_series = r_series / circuits

    def current(v):  # terminal current at junction voltage v: explicit
        return current_slope(v, slope=False)[0]

    def current_slope(v, slope=True):  # (J, dJ/dV_j) from one evaluation of each term
        dj, recombination = _diodes(cells.a, cells.b, cells.n, v / vt, cells.ideal)
        j = jl - recombination
        dj = -dj / vt - g_shunt
        if g_shunt:
            j = j - v * g_shunt
        for t in cells.extra:
            if not slope:
                j = j - t.current(v, vt)
                continue
            j_x, slope_x = t.current_slope(v, vt)
            j, dj = j - j_x, dj - slope_x
        return j, dj

    # Parameterised by the junction voltage V_j, the terminal voltage V_j − J(V_j)·R_s rises
    # with V_j, so P = J·(V_j − J·R_s) keeps its single maximum and every step is explicit:
    # one solve for Voc, Newton's method for Jsc (V_j = J·R_s), a golden search for the maximum.
    voc = junction_voltage(0.0, jl, cells.a, cells.b, cells.n, vt, cells.ideal, cells.r_shunt,
                           cells.extra)
    alive = voc > 0
    v_sc = np.minimum(0.0, voc)
    if r_series > 0:
        v_sc = np.where(alive, terminal_root(current_slope, np.minimum(voc, r_series * jl),
                                             r_series), voc)
    jsc = np.where(alive, current(v_sc), 0.0)

    def power(v):
        j = current(v)
        return j * (v - j * r_series)

    v_j = golden_maximum(power, v_sc + 0.0 * voc, np.maximum(voc, v_sc))
    j = current(v_j)
    v = v_j - j * r_series
    dead = ~(j * v > 0) | ~alive
    j, v = np.where(dead, 0.0, j), np.where(dead, 0.0, v)
    return j, v, j * v, np.maximum(voc, 0.0), jsc


def _coupled_four_terminal(cells: _Cells, r_series_stack: float):
    """Four terminals with coupling: the front's operating point is chosen with the back's.

    The front at diode current J_f gives P_f(J_f) and hands the back c·J0,rear·(e^{qV_f/kT} − 1);
    the back sits at its own maximum power point for that photocurrent. The sum is maximised
    over J_f, so the four-terminal result is never below the two-terminal one.
    """
    jl = cells.j_light
    front, back = cells.alone(0), cells.alone(1)
    r_series = r_series_stack / 2

    def parts(jf):
        vf = front.voltage(0, jf)  # the front's junction voltage sets what it hands the back
        v = vf - jf * r_series
        back_light = jl[..., 1:] + cells.back_gain(vf)[..., None]
        jb, vb, pb, voc_b, jsc_b = _own_mpp(back, back_light, r_series_stack, 2)
        return v, jb[..., 0], vb[..., 0], pb[..., 0], voc_b[..., 0], jsc_b[..., 0]

    def total(jf):
        v, _, _, pb, _, _ = parts(jf)
        return np.maximum(jf * v, 0.0) + pb

    # the front's own terminal limits bound its current (no power outside [0, Jsc])
    _, _, _, voc_f, jsc_f = _own_mpp(front, jl[..., :1], r_series_stack, 2)
    jf = golden_maximum(total, np.zeros(jl.shape[:-1]), jsc_f[..., 0])
    v, jb, vb, pb, voc_b, jsc_b = parts(jf)
    dead = ~(jf * v > 0)
    j, v = np.where(dead, 0.0, jf), np.where(dead, 0.0, v)
    return (np.stack([j, jb], -1), np.stack([v, vb], -1), np.stack([j * v, pb], -1),
            np.stack([voc_f[..., 0], voc_b], -1), np.stack([jsc_f[..., 0], jsc_b], -1))


def _series_general(cells: _Cells, r_series: float, open_circuit=None):
    """Series maximum power of any subcells (two diodes, coupling, resistances).
    ``open_circuit``: each junction's own voltage at zero current (..., m), if already solved
    (a subcell's own Voc, :func:`_own_mpp`): not solved again.

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

    with_terms = [i for i in range(jl.shape[-1]) if any(t.active(i) for t in cells.extra)]
    if with_terms and not cells.coupled:  # along the first: one voltage solve fewer a step
        k = with_terms[0]
        return _series_along(cells, k, j_high, r_series,
                             None if open_circuit is None else open_circuit[..., k])

    def chain_voltage(j):
        return np.sum(cells.series_voltages(j), axis=-1)

    voc, jsc, j, v = _chain_maximum(chain_voltage, j_high, r_series)
    v_sub = cells.series_voltages(j)
    return j, v, j * v, v_sub, voc, jsc


def _series_along(cells: _Cells, k: int, j_high, r_series: float, v_open=None):
    """:func:`_series_general` searched along subcell k's junction voltage, k the first
    subcell with extra recombination terms (e.g. an Auger-limited silicon back, or a step
    absorber's exact emission in every subcell).

    Its current J(V_k) is explicit, so no step solves for k's voltage: the others' voltages at
    that current are closed forms where they have no terms of their own, one solve each where
    they have (where the current search solved every junction); J falls as V_k rises, so the
    terminal voltage rises and the power keeps its single maximum along V_k. Same results as
    the current search.
    """
    m = cells.j_light.shape[-1]

    def current(vk):
        return cells.current(k, vk)

    def others(j):
        return sum(cells.voltage(i, j) for i in range(m) if i != k)

    def terminal(vk):
        j = current(vk)
        return others(j) + vk - j * r_series

    def power(vk):
        j = current(vk)
        return j * (others(j) + vk - j * r_series)

    if v_open is None:  # J = 0: the chain's open circuit
        v_open = cells.voltage(k, 0.0)
    v_short = cells.voltage(k, j_high)  # J = j_high: the largest current the search considers
    voc = terminal(v_open)
    alive = voc > 0
    # Where the chain still holds a voltage at j_high (without shunts: no junction carries
    # more than its photocurrent, so always), J cannot rise further and v_short is the short
    # circuit; the bisection, 52 evaluations of the chain, is for a crossing inside
    # (the chain's voltage taken at j_high itself: the current at v_short, solved and
    # re-evaluated, can pass a limiting photocurrent by a rounding error, where that
    # junction's voltage falls off its cliff)
    holds = others(j_high) + v_short - j_high * r_series >= 0
    v_sc = v_short + 0.0 * v_open
    if not np.all(holds):
        v_sc = np.where(holds, v_sc, _bisect(lambda v: -terminal(v), v_sc, v_open))
    v_sc = np.where(alive, v_sc, v_open)
    jsc = np.where(alive, np.where(holds, j_high, current(v_sc)), 0.0)
    vk = golden_maximum(power, v_sc, v_open + 0.0 * v_sc)
    j = current(vk)
    v = terminal(vk)
    dead = ~(j * v > 0)
    j, v, vk = np.where(dead, 0.0, j), np.where(dead, 0.0, v), np.where(dead, 0.0, vk)
    v_sub = np.stack([vk if i == k else cells.voltage(i, j) for i in range(m)], axis=-1)
    return j, v, j * v, v_sub, np.maximum(voc, 0.0), jsc

