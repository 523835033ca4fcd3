"""Connections beyond two and four terminals: three terminals (a middle contact and two loads)
and voltage-matched strings of a four-terminal module.

Both are maximised over junction voltages, where every subcell's current is explicit
(:meth:`~tandem.physics.junctions._Cells.current`), so no step solves a diode. Arrays carry
the subcells on their last axis; resistances are in Ω·m². Used by
:func:`tandem.physics.stack.evaluate_stack`.
"""

from __future__ import annotations

import numpy as np

from tandem.physics.junctions import _Cells, _own_mpp, golden_maximum, terminal_root

#: Newton iterations for the three-terminal optimum (it converges in 4–8 from the
#: four-terminal point; a line search keeps every step an ascent)
NEWTON_STEPS = 60


def _bounded_maximum(power, lo, hi):
    """:func:`~tandem.physics.junctions.golden_maximum` that also tries both ends: a
    maximum on the boundary (a junction held at open circuit, where its current is steep in
    its voltage) is then taken exactly, not a small part of the bracket short of it."""
    x = golden_maximum(power, lo, hi)
    for end in (lo, hi):
        x = np.where(power(end) > power(x), end, x)
    return x


def _slopes(cells: _Cells, i: int, v, extra=0.0, second: bool = True):
    """Subcell i's current at junction voltage ``v`` (with ``extra`` photocurrent) and its
    first two derivatives (J, dJ/dV, d²J/dV²; the last None unless ``second``): the diodes'
    in closed form, an extra term's second derivative by a central difference of its
    analytic slope over 10⁻⁶·kT/q."""
    vt, n = cells.vt, cells.n
    a, b = cells.a[..., i], cells.b[..., i]
    ea, eb = a * np.exp(v / vt), b * np.exp(v / (n * vt))
    j = cells.current(i, v, extra)
    d1 = -(ea / vt + eb / (n * vt)) - 1.0 / cells.r_shunt
    d2 = -(ea / vt**2 + eb / (n * vt) ** 2) if second else None
    h = 1e-6 * vt
    for term in cells._terms[i]:
        d1 = d1 - term.current_slope(v, vt)[1]
        if second:
            d2 = d2 - (term.current_slope(v + h, vt)[1] - term.current_slope(v - h, vt)[1]) / (2 * h)
    return j, d1, d2


def three_terminal(cells: _Cells, r_series_stack: float, r_middle: float, reverse: bool,
                   floor=0.0):
    """Two subcells with a third (middle) contact and two independent loads, the stack's
    resistance shared as its contacts share it.

    Lumped circuit (after Warren et al., Sustainable Energy Fuels 2 (2018) 1141, recalled):
    the top circuit carries R_s/2, the bottom circuit R_s/2 (so with the middle contact
    open the series chain carries R_s, as with two terminals), and the middle contact its own
    R_m. Its current J_m is the difference J_f − J_b of the subcell currents in the series
    type (``reverse`` False: the back's polarity continues the front's) and their sum in the
    reverse type. The power V_f·J_f + V_b·J_b − (R_s/2)(J_f² + J_b²) − R_m·J_m² is maximised
    over both junction voltages, each between ``floor`` and open circuit: the floor is 0
    (short circuit) or, where a shunt lets the series stack drive a junction into reverse
    bias, that junction's voltage at the series point, so the series type can always reach
    the two-terminal operating point (J_m = 0). Newton's method from the four-terminal point (exact gradient and
    Hessian), each step an ascent by a backtracking line search; with coupling (the back's
    light depends on the front's voltage) a golden search over the back's voltage inside one
    over the front's.

    Returns p (...), j (..., 2) the subcell currents, v (..., 2) the two loads' voltages
    (top to middle, back circuit) [W/m², A/m², V].
    """
    r = r_series_stack / 2
    sigma = -1.0 if reverse else 1.0
    low = np.minimum(np.broadcast_to(floor, cells.j_light.shape), 0.0)
    if cells.coupled:
        vf, vb = _nested(cells, r, r_middle, sigma, low)
    else:
        vf, vb = _newton(cells, r_series_stack, r_middle, sigma, low)
    jf = cells.current(0, vf)
    jb = cells.current(1, vb, cells.back_gain(vf) if cells.coupled else 0.0)
    jm = jf - sigma * jb
    load_f = vf - r * jf - r_middle * jm
    load_b = vb - r * jb + sigma * r_middle * jm
    p = load_f * jf + load_b * jb
    dead = ~(p > 0)
    j = np.where(dead[..., None], 0.0, np.stack([jf, jb], -1))
    v = np.where(dead[..., None], 0.0, np.stack([load_f, load_b], -1))
    return np.where(dead, 0.0, p), j, v


def _power(cells, r, r_middle, sigma, vf, vb):
    jf, jb = cells.current(0, vf), cells.current(1, vb)
    return vf * jf + vb * jb - r * (jf**2 + jb**2) - r_middle * (jf - sigma * jb) ** 2


def _newton(cells, r_series_stack, r_middle, sigma, low):
    """The three-terminal junction voltages of uncoupled subcells by projected Newton ascent
    (a junction held at a bound its gradient pushes against is left there); an element
    where it does not settle on a stationary point is searched by :func:`_nested` instead."""
    r = r_series_stack / 2
    zeros = np.zeros(low.shape[:-1])
    top = np.stack([np.maximum(cells.voltage(i, 0.0), 0.0) + zeros for i in (0, 1)], -1)
    j_own, v_own, *_ = _own_mpp(cells, cells.j_light, r_series_stack, 2)
    v = np.clip(v_own + j_own * r, low, top)  # each junction at its own maximum (R_m = 0)
    f = _power(cells, r, r_middle, sigma, v[..., 0], v[..., 1])
    settled = np.zeros(zeros.shape, dtype=bool)
    for _ in range(NEWTON_STEPS):
        (jf, df, d2f), (jb, db_, d2b) = _slopes(cells, 0, v[..., 0]), _slopes(cells, 1, v[..., 1])
        jm = jf - sigma * jb
        a_f = v[..., 0] - 2 * r * jf - 2 * r_middle * jm  # ∂P/∂J_f
        a_b = v[..., 1] - 2 * r * jb + 2 * sigma * r_middle * jm
        g = np.stack([jf + a_f * df, jb + a_b * db_], -1)  # ∂P/∂V_j
        h_ff = 2 * df - 2 * (r + r_middle) * df**2 + a_f * d2f
        h_bb = 2 * db_ - 2 * (r + r_middle) * db_**2 + a_b * d2b
        h_fb = 2 * sigma * r_middle * df * db_
        free = ~(((v <= low) & (g < 0)) | ((v >= top) & (g > 0)))
        both = free[..., 0] & free[..., 1]
        det = h_ff * h_bb - h_fb**2
        diagonal = np.stack([h_ff, h_bb], -1)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            newton = np.stack([-(h_bb * g[..., 0] - h_fb * g[..., 1]) / det,
                               -(h_ff * g[..., 1] - h_fb * g[..., 0]) / det], -1)
            alone = np.where(diagonal < 0, -g / diagonal, g / (np.abs(diagonal) + 1e-300))
        joint = both & (h_ff < 0) & (det > 0)
        step = np.where(joint[..., None], newton, np.where(free, alone, 0.0))
        step = np.where(np.isfinite(step), step, 0.0)
        scale = np.abs(np.stack([jf, jb], -1)) + 1e-3  # A/m²: the size of a gradient term
        # stationary: the gradient vanishes, or a Newton step on a concave patch is under
        # 0.1 µV (the power is then exact to ~|H|·δV², under 10⁻⁹ W/m²; an Auger term's
        # gradient carries rounding of 10⁻⁸ of the current, which keeps its Newton steps
        # near 10⁻⁹ V however long they run, so the gradient alone cannot say so)
        concave_here = joint | (~both & np.all(~free | (diagonal < 0), axis=-1))
        settled = (np.all(~free | (np.abs(g) <= 1e-9 * scale), axis=-1)
                   | (concave_here & (np.max(np.abs(step), axis=-1) < 1e-7)))
        t = np.ones(zeros.shape)
        pending = ~settled
        new = v.copy()
        for _ in range(40):  # backtrack until the power does not fall
            if not pending.any():
                break
            trial = np.clip(v + t[..., None] * step, low, top)
            f_trial = _power(cells, r, r_middle, sigma, trial[..., 0], trial[..., 1])
            take = pending & (f_trial >= f)
            new = np.where(take[..., None], trial, new)
            f = np.where(take, f_trial, f)
            pending &= ~take
            t = np.where(pending, 0.5 * t, t)
        stuck = np.max(np.abs(new - v), initial=0.0) == 0.0
        v = new
        if settled.all() or stuck:
            break
    vf, vb = v[..., 0], v[..., 1]
    if not settled.all():  # rare (an ill-conditioned valley): the slower, sure search there
        nf, nb = _nested(cells, r, r_middle, sigma, low)
        better = (_power(cells, r, r_middle, sigma, nf, nb)
                  > _power(cells, r, r_middle, sigma, vf, vb)) & ~settled
        vf, vb = np.where(better, nf, vf), np.where(better, nb, vb)
    return vf, vb


def _nested(cells, r, r_middle, sigma, low):
    """The three-terminal junction voltages with coupling, by nested golden searches."""
    zeros = np.zeros(low.shape[:-1])
    def back_voltage(vf, jf):
        gain = cells.back_gain(vf)

        def power(vb):
            jb = cells.current(1, vb, gain)
            return vb * jb - r * jb**2 - r_middle * (jf - sigma * jb) ** 2

        voc_b = np.maximum(cells.voltage(1, 0.0, gain), 0.0) + zeros
        return _bounded_maximum(power, low[..., 1] + zeros, voc_b)

    def total(vf):
        jf = cells.current(0, vf)
        vb = back_voltage(vf, jf)
        jb = cells.current(1, vb, cells.back_gain(vf))
        return vf * jf + vb * jb - r * (jf**2 + jb**2) - r_middle * (jf - sigma * jb) ** 2

    voc_f = np.maximum(cells.voltage(0, 0.0), 0.0) + zeros
    vf = _bounded_maximum(total, low[..., 0] + zeros, voc_f)
    return vf, back_voltage(vf, cells.current(0, vf))


def _junction_at_terminal(cells: _Cells, i: int, target, r: float, gain=0.0, v_open=None):
    """Subcell i's junction voltage where its terminal voltage V_j − J(V_j)·r is ``target``.

    f(V_j) = V_j − r·J(V_j) − target rises and is convex (J is concave in V_j), so Newton's
    method from a point where f ≥ 0 (the larger of the target and the open circuit) falls
    monotonically onto the root, in a few steps. ``v_open``: the junction's open circuit, if
    known. The start is the lower of that point and target + r·J_L (f ≥ 0 there too, as no
    junction at a voltage ≥ 0 delivers more than its photocurrent): about r·(J_L − J) above
    the root, two or three steps."""
    v = np.maximum(target, cells.voltage(i, 0.0, gain) if v_open is None else v_open)
    near = target + r * (cells.j_light[..., i] + gain)
    v = np.where(near >= 0, np.minimum(v, near), v)
    return terminal_root(lambda x: _slopes(cells, i, x, gain, second=False)[:2], v, r, target)


def voltage_matched(cells: _Cells, r_series_stack: float, ratio: tuple[int, int]):
    """Strings of m front subcells and of n back subcells in parallel at one voltage
    V = m·V_f = n·V_b (a four-terminal module wired without separate electronics); each
    circuit carries R_s/2 as in four terminals. Power per stack P_f(V_f) + P_b(V_b), maximised
    over the front's junction voltage by golden section; the back's junction voltage for its
    terminal voltage V_b = (m/n)·V_f by Newton's method (:func:`_junction_at_terminal`).

    Returns p (...), v (..., 2) the subcells' terminal voltages [W/m², V].
    """
    m, n = ratio
    r = r_series_stack / 2
    zeros = np.zeros(cells.j_light.shape[:-1])
    v_open = None if cells.coupled else cells.voltage(1, 0.0)  # the back's, once

    def operating(vf):
        jf = cells.current(0, vf)
        v_front = vf - r * jf
        target = v_front * m / n
        gain = cells.back_gain(vf) if cells.coupled else 0.0
        vb = target if r == 0 else _junction_at_terminal(cells, 1, target + zeros, r, gain,
                                                         v_open)
        return jf, v_front, cells.current(1, vb, gain), target

    def total(vf):
        jf, v_front, jb, v_back = operating(vf)
        with np.errstate(invalid="ignore"):
            p = jf * v_front + jb * v_back
        return np.where(np.isnan(p), -np.inf, p)  # a back driven past its gap

    voc_f = np.maximum(cells.voltage(0, 0.0), 0.0) + zeros
    vf = golden_maximum(total, zeros, voc_f)
    jf, v_front, jb, v_back = operating(vf)
    p = jf * v_front + jb * v_back
    dead = ~(p > 0)
    return np.where(dead, 0.0, p), np.where(dead[..., None], 0.0, np.stack([v_front, v_back], -1))
