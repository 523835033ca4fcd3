"""Exact (Bose–Einstein) emission of a step absorber at a chemical potential qV.

A cell at voltage V emits, per unit energy, a(E)·(2π/(h³c²))·E²/(e^{(E − qV)/kT} − 1)
(Würfel, J. Phys. C 15 (1982) 3967). The diodes elsewhere drop the −1 (Boltzmann), which holds
while E_g − qV ≫ kT and lets a voltage approach or pass the gap under strong light. For a step
absorber (a = 1 in a band [E_g, E_hi)) the exact current has a closed form: with t = E/kT,
u = qV/kT and s = t − u,

    J_em(u) = q·2π/(h³c²)·(kT)³ · [u²·B₀(a) + 2u·B₁(a) + B₂(a)]_{a = g_hi − u}^{a = g − u},
    B_m(a) = ∫_a^∞ s^m/(e^s − 1) ds,

B₀(a) = −ln(1 − e^{−a}) exactly; B₁, B₂ by the series Σ_k e^{−ka}(…) for a ≥ 1 and by
ζ-values minus the Bernoulli series of ∫_0^a for a < 1. J_em grows without bound as qV → E_g
(B₀ diverges), so the exact law keeps every voltage below the gap by itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from tandem.core.units import BB_FLUX_PREFACTOR, K_B_EV, Q

_ZETA2, _ZETA3 = math.pi**2 / 6, 1.2020569031595942  # ζ(2), ζ(3)
#: Bernoulli numbers B_n / n! for n = 0…24 (x/(eˣ − 1) = Σ B_n xⁿ/n!); odd n > 1 vanish.
_BERNOULLI = {0: 1.0, 1: -0.5, 2: 1 / 6, 4: -1 / 30, 6: 1 / 42, 8: -1 / 30, 10: 5 / 66,
              12: -691 / 2730, 14: 7 / 6, 16: -3617 / 510, 18: 43867 / 798,
              20: -174611 / 330, 22: 854513 / 138, 24: -236364091 / 2730}
_SERIES = [(n, b / math.factorial(n)) for n, b in _BERNOULLI.items()]


#: The small-a series as polynomials for Horner's rule: ∫_0^a s^{m−1}·Σ B_n sⁿ/n! ds
#: = Σ c_n a^{n+m}/(n+m) = a^m·(c₀/m + c₁·a/(m+1) + a²·Σ_{n even ≥ 2} c_n (a²)^{(n−2)/2}/(n+m))
_EVEN = [(n, c) for n, c in _SERIES if n >= 2]


def _horner(x, coefficients):
    """Σ coefficients[i]·xⁱ by Horner's rule (two array operations a coefficient)."""
    total = np.full_like(x, coefficients[-1])
    for c in coefficients[-2::-1]:
        total *= x
        total += c
    return total


def bose_moments(a):
    """(B₀, B₁, B₂)(a) = ∫_a^∞ s^m/(e^s − 1) ds for m = 0, 1, 2; a > 0 (inf gives 0).

    With z = e^{−a}: B₀ = −ln(1 − z), B₁ = a·B₀ + Li₂(z), B₂ = a²·B₀ + 2a·Li₂(z) + 2·Li₃(z)
    (the series Σ_k z^k·(a/k + 1/k²) and Σ_k z^k·(a²/k + 2a/k² + 2/k³) term by term), the
    polylogarithms Li_s(z) = Σ z^k/k^s for a ≥ 1 by Horner's rule to z^k < 1e-17 (at most 40
    terms); below, ζ(m+1)·m! minus ∫_0^a s^{m−1}·Σ B_n sⁿ/n! ds, whose terms shrink as
    (a/2π)ⁿ. Every term is positive for a ≥ 1, so neither form cancels.
    """
    a = np.asarray(a, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        finite = np.isfinite(a)
        far = np.where(finite & (a >= 1.0), a, 1e3)  # 1e3: no term (e^{−1000} = 0)
        z = np.exp(-np.where(finite, a, 1e3))
        b0 = -np.log1p(-z)  # −ln(1 − e^{−a}); for small a from expm1, which keeps its digits
        if np.any(a < 0.7):
            b0 = np.where(a < 0.7, -np.log(-np.expm1(-a)), b0)
        # z^k < 1e-17 after 39.2/a terms (a ≥ 1: at most 40)
        terms = 0 if np.all(far >= 1e3) else min(40, int(39.2 / float(np.min(far))) + 2)
        if terms:
            zf = np.where(far < 1e3, z, 0.0)
            li2 = zf * _horner(zf, [1.0 / k**2 for k in range(1, terms + 1)])
            li3 = zf * _horner(zf, [1.0 / k**3 for k in range(1, terms + 1)])
            b1 = far * b0 + li2
            b2 = far * (far * b0 + 2 * li2) + 2 * li3
        else:
            b1 = b2 = np.zeros_like(far)
        if np.any(a < 1.0):
            near = np.minimum(a, 1.0)
            square = near * near
            c0, c1 = _SERIES[0][1], _SERIES[1][1]
            b1n = _ZETA2 - near * (c0 + c1 * near / 2 + square * _horner(
                square, [c / (n + 1) for n, c in _EVEN]))
            b2n = 2 * _ZETA3 - square * (c0 / 2 + c1 * near / 3 + square * _horner(
                square, [c / (n + 2) for n, c in _EVEN]))
            b1, b2 = np.where(a >= 1.0, b1, b1n), np.where(a >= 1.0, b2, b2n)
        b1, b2 = np.where(finite, b1, 0.0), np.where(finite, b2, 0.0)
    return np.where(finite, b0, 0.0), b1, b2


def _moments_scalar(a: float) -> tuple[float, float, float]:
    """:func:`bose_moments` for one value, in plain floats (the searches call it often)."""
    if not math.isfinite(a):
        return 0.0, 0.0, 0.0
    b0 = -math.log(-math.expm1(-a)) if a < 0.7 else -math.log1p(-math.exp(-a))
    if a >= 1.0:
        decay = math.exp(-a)
        power, b1, b2 = decay, 0.0, 0.0
        for k in range(1, min(40, int(39.2 / a) + 2) + 1):
            b1 += power * (a / k + 1 / k**2)
            b2 += power * (a * a / k + 2 * a / k**2 + 2 / k**3)
            power *= decay
        return b0, b1, b2
    b1, b2 = _ZETA2, 2 * _ZETA3
    for n, c in _SERIES:
        b1 -= c * a ** (n + 1) / (n + 1)
        b2 -= c * a ** (n + 2) / (n + 2)
    return b0, b1, b2


def _band(u, g):
    """∫_g^∞ t²/(e^{t−u} − 1) dt and its u-derivative, in units of (kT)³ (g may be inf)."""
    if np.ndim(u) == 0 and np.ndim(g) == 0:  # one point: plain floats, ten times faster
        uf, gf = float(u), float(g)
        if not math.isfinite(gf):
            return 0.0, 0.0
        s0, s1, s2 = _moments_scalar(gf - uf)
        rim = gf * gf / math.expm1(gf - uf) if gf - uf < 700 else 0.0
        return uf * uf * s0 + 2 * uf * s1 + s2, rim + 2 * (uf * s0 + s1)
    a = g - u
    b0, b1, b2 = bose_moments(a)
    value = u * u * b0 + 2 * u * b1 + b2
    # ∂/∂u ∫ t²·f(t − u) dt = g²·f(g − u) + 2∫ t·f dt (by parts), f(s) = 1/(eˢ − 1)
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        edge = np.where(np.isfinite(a), g * g / np.expm1(a), 0.0)
    return value, edge + 2 * (u * b0 + b1)


def emission_current(voltage, gap_eV, temperature_K, upper_gap_eV=np.inf):
    """Exact emitted current q∫Φ_BE dE of a step absorber in [E_g, E_hi) at voltage V [A/m²].

    At V = 0 it is the radiative J0 of :func:`~tandem.physics.detailed_balance.step_radiative_dark_current`;
    +inf at or above the gap. Examples
    --------
    >>> from tandem.physics.emission import emission_current
    >>> f'{float(emission_current(0.0, 1.12, 300.0)):.3g}'
    '8.23e-13'
    """
    kt = K_B_EV * np.asarray(temperature_K, dtype=float)
    u = np.asarray(voltage, dtype=float) / kt
    g, g_hi = np.asarray(gap_eV, dtype=float) / kt, np.asarray(upper_gap_eV, dtype=float) / kt
    below = u < g
    us = np.where(below, u, 0.0)
    value = _band(us, g)[0] - _band(us, g_hi)[0]
    return np.where(below, Q * BB_FLUX_PREFACTOR * kt**3 * value, np.inf)


@dataclass(frozen=True)
class StepEmission:
    """The exact emission of step-absorber subcells minus their Boltzmann diode J0·(e^{qV/kT} − 1).

    Arrays broadcast against (..., m): each gap [eV], the gap of the cell in front (inf for the
    front cell), and the scale of the subcell's radiative diode (its absorbed share; × (1 + n²)
    for a front cell that also emits towards the back). J0 is the exact current at V = 0, so
    the difference vanishes there exactly.
    """

    gap_eV: np.ndarray
    upper_eV: np.ndarray
    scale: np.ndarray
    j0: np.ndarray  #: the exact (= Boltzmann) current at V = 0 per unit scale [A/m²]

    @classmethod
    def at(cls, gap_eV, upper_eV, scale, temperature_K) -> "StepEmission":
        """The term for cells at ``temperature_K`` (its J0 computed once, exactly)."""
        j0 = emission_current(0.0, gap_eV, temperature_K, upper_eV)
        return cls(np.asarray(gap_eV, dtype=float), np.asarray(upper_eV, dtype=float),
                   np.asarray(scale, dtype=float), j0)

    @property
    def ceiling_V(self):
        """No junction voltage reaches this (the gap) [V]."""
        return self.gap_eV

    def _parts(self, voltage, vt):
        u = np.asarray(voltage, dtype=float) / vt
        g, g_hi = self.gap_eV / vt, self.upper_eV / vt
        below = u < g
        us = np.where(below, u, 0.0)
        prefactor = Q * BB_FLUX_PREFACTOR * np.asarray(vt, dtype=float) ** 3
        v1, d1 = _band(us, g)
        if np.all(np.isinf(g_hi)):
            v2 = d2 = 0.0
        else:
            v2, d2 = _band(us, g_hi)
        with np.errstate(over="ignore"):
            boltzmann = self.j0 * np.exp(us)
        return below, prefactor * (v1 - v2), prefactor * (d1 - d2), boltzmann

    def current(self, voltage, vt):
        """Exact emission current less the Boltzmann diode's [A/m²]; +inf at the gap."""
        below, exact, _, boltzmann = self._parts(voltage, vt)
        return np.where(below, self.scale * (exact - boltzmann), np.inf)

    def current_slope(self, voltage, vt):
        """(current, slope) from one evaluation of the moments, for Newton steps."""
        below, exact, d_exact, boltzmann = self._parts(voltage, vt)
        return (np.where(below, self.scale * (exact - boltzmann), np.inf),
                np.where(below, self.scale * (d_exact - boltzmann) / vt, np.inf))

    def active(self, index) -> bool:
        """Whether subcell ``index`` uses the exact law anywhere in the sweep."""
        return bool(np.any(np.asarray(self.scale)[..., index] != 0))

    def subcell(self, index) -> "StepEmission":
        def pick(a):
            a = np.asarray(a, dtype=float)
            return a[..., index] if a.ndim else a
        return StepEmission(pick(self.gap_eV), pick(self.upper_eV), pick(self.scale), pick(self.j0))
