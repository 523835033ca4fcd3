"""Intrinsic (Auger) recombination in an absorber's bulk, as a current through its junction.

A junction at voltage V splits the quasi-Fermi levels by qV, so n·p = n_i²·e^{qV/kT}; with
background doping the equilibrium densities are n0, p0 (n0·p0 = n_i²) and the excess density
Δn solves (n0 + Δn)(p0 + Δn) = n_i²·e^{qV/kT}. With the carrier densities uniform across a bulk
of width W (the flat quasi-Fermi levels of a limiting-efficiency calculation), the bulk
recombines J_A = q·W·R(Δn). Radiative recombination is not here: it is the reciprocity diode,
whose external emission already nets out photon recycling.

R follows the parametrisation of intrinsic Auger recombination in crystalline silicon at
300 K by Richter et al., Energy Procedia 27 (2012) 88 (used for the limit in Richter et al.,
IEEE J. Photovolt. 3 (2013) 1184):

    R = (n·p − n_i²)·(2.5e-31·g_eeh·n0 + 8.5e-32·g_ehh·p0 + 3.0e-29·Δn^0.92)  [cm⁻³ s⁻¹]
    g_eeh = 1 + 13·(1 − tanh((n0/3.3e17)^0.66)),  g_ehh = 1 + 7.5·(1 − tanh((p0/7.0e17)^0.63))

(densities in cm⁻³). In undoped silicon under light (n ≈ p ≈ Δn) it grows as Δn^2.92, so a
thicker wafer absorbs more but recombines more: the best thickness is a result.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from tandem.core.units import K_B_EV, Q

CM2_PER_M2 = 1e4  #: A/cm² → A/m²


@dataclass(frozen=True)
class AugerModel:
    """Coefficients of a Richter-type parametrisation (densities in cm⁻³, rates in cm⁻³ s⁻¹)."""

    name: str
    source: str
    eeh: float  #: low-injection e-e-h coefficient [cm⁶/s]
    eeh_enhancement: float
    eeh_density: float  #: [cm⁻³]
    eeh_exponent: float
    ehh: float  #: low-injection e-h-h coefficient [cm⁶/s]
    ehh_enhancement: float
    ehh_density: float  #: [cm⁻³]
    ehh_exponent: float
    injection: float  #: coefficient of Δn^exponent (R in cm⁻³ s⁻¹ with densities in cm⁻³)
    injection_exponent: float

    def low_injection(self, n0, p0):
        """2.5e-31·g_eeh·n0 + 8.5e-32·g_ehh·p0 [s⁻¹·cm³]: the doping part of the bracket."""
        g_eeh = 1 + self.eeh_enhancement * (1 - np.tanh((n0 / self.eeh_density) ** self.eeh_exponent))
        g_ehh = 1 + self.ehh_enhancement * (1 - np.tanh((p0 / self.ehh_density) ** self.ehh_exponent))
        return self.eeh * g_eeh * n0 + self.ehh * g_ehh * p0


#: The parametrisations an absorber file may name in ``[recombination] auger``.
AUGER_MODELS = {
    "richter-2012": AugerModel(
        "richter-2012", "Richter et al., Energy Procedia 27 (2012) 88 (crystalline silicon, 300 K)",
        2.5e-31, 13.0, 3.3e17, 0.66, 8.5e-32, 7.5, 7.0e17, 0.63, 3.0e-29, 0.92),
}


def intrinsic_density(n_i_ref, temperature_ref_K, gap_ref_eV, gap_eV, temperature_K):
    """Intrinsic carrier density at another temperature (or gap) [cm⁻³].

    n_i² = N_c·N_v·e^{−E_g/kT} with N_c·N_v ∝ T³ (Sze & Ng, Physics of Semiconductor Devices,
    3rd ed. (2007), ch. 1; common practice): n_i = n_i,ref·(T/T_ref)^{3/2}·
    exp(E_g,ref/(2kT_ref) − E_g/(2kT)), with E_g the gap at T.
    """
    t = np.asarray(temperature_K, dtype=float)
    return (n_i_ref * (t / temperature_ref_K) ** 1.5
            * np.exp(gap_ref_eV / (2 * K_B_EV * temperature_ref_K) - gap_eV / (2 * K_B_EV * t)))


def equilibrium_densities(n_i, doping_cm3, n_type: bool):
    """(n0, p0) of a bulk with net doping ``doping_cm3`` (≥ 0) of one type [cm⁻³];
    n0·p0 = n_i², charge neutrality n0 − p0 = ±N."""
    n_i = np.asarray(n_i, dtype=float)
    majority = 0.5 * doping_cm3 + np.sqrt(0.25 * doping_cm3**2 + n_i**2)
    minority = n_i**2 / majority
    return (majority, minority) if n_type else (minority, majority)


@dataclass(frozen=True)
class BulkRecombination:
    """Auger recombination of each subcell's bulk; arrays broadcast against (..., m).

    A subcell without it has ``width_cm`` 0. :meth:`current` is J_A(V) [A/m²].
    """

    model: AugerModel
    width_cm: np.ndarray
    n_i: np.ndarray  #: intrinsic density at the cell temperature [cm⁻³]
    n0: np.ndarray
    p0: np.ndarray
    low: np.ndarray  #: the doping part of the bracket, model.low_injection(n0, p0)

    @functools.cached_property
    def _constants(self):
        """n_i², n0 + p0 and (n0 + p0)², computed once."""
        s = self.n0 + self.p0
        return self.n_i**2, s, s * s

    def _excess(self, x):
        """Δn and n·p − n_i² at reduced voltage x = qV/kT [cm⁻³, cm⁻⁶]; Δn keeps the sign
        of V (a cancellation-free root of the quadratic)."""
        ni2, s, s2 = self._constants
        drive = ni2 * np.expm1(x)  # n·p − n_i²
        return 2 * drive / (s + np.sqrt(s2 + 4 * drive)), drive

    def current(self, voltage, vt):
        """J_A = q·W·R at junction voltage ``voltage`` and thermal voltage ``vt`` [A/m²]."""
        dn, drive = self._excess(np.asarray(voltage) / vt)
        rate = drive * (self.low + self.model.injection * np.abs(dn) ** self.model.injection_exponent)
        return (Q * CM2_PER_M2 * self.width_cm) * rate  # no term where the width is 0

    def current_slope(self, voltage, vt):
        """(J_A, dJ_A/dV) from one evaluation of the densities, for Newton steps."""
        x = np.asarray(voltage) / vt
        m = self.model
        ni2, s, _ = self._constants
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            dn, drive = self._excess(x)
            e = ni2 * np.exp(x)  # d(n·p)/dx
            ddn = e / (s + 2 * dn)
            bracket = self.low + m.injection * np.abs(dn) ** m.injection_exponent
            d_bracket = np.where(dn != 0, m.injection * m.injection_exponent
                                 * np.abs(dn) ** (m.injection_exponent - 1) * np.sign(dn) * ddn, 0.0)
            qw = Q * CM2_PER_M2 * self.width_cm  # no term where the width is 0
            return qw * drive * bracket, qw * (e * bracket + drive * d_bracket) / vt

    def subcell(self, index) -> "BulkRecombination":
        """The arrays at ``index`` of the subcell axis (an int, or a slice keeping it)."""
        def pick(a):
            a = np.asarray(a, dtype=float)
            return a[..., index] if a.ndim else a
        return BulkRecombination(self.model, pick(self.width_cm), pick(self.n_i), pick(self.n0),
                                 pick(self.p0), pick(self.low))

    def active(self, index) -> bool:
        """Whether subcell ``index`` has a bulk term anywhere in the sweep."""
        return bool(np.any(np.asarray(self.width_cm)[..., index] > 0))


@dataclass(frozen=True)
class BulkSpec:
    """An absorber's intrinsic recombination as its file states it."""

    model: AugerModel
    n_i_cm3: float  #: intrinsic carrier density at ``n_i_temperature_K`` [cm⁻³]
    n_i_temperature_K: float
    doping_cm3: float = 0.0  #: net background doping [cm⁻³]
    n_type: bool = True


def stack_bulk(specs, widths_nm, gaps_at_ref_eV, gaps_eV, temperature_K) -> BulkRecombination | None:
    """The Auger recombination of subcells (front first) for :func:`~tandem.physics.stack.evaluate_stack`.

    ``specs`` holds a :class:`BulkSpec` or None per subcell; ``widths_nm``, ``gaps_at_ref_eV``
    (each gap at its spec's n_i temperature) and ``gaps_eV`` (at the cell temperature)
    broadcast against the sweep's leading axes. None when no subcell has a spec.
    """
    present = [s for s in specs if s is not None]
    if not present:
        return None
    model = present[0].model
    if any(s.model is not model for s in present):
        raise ValueError("subcells with different Auger parametrisations")
    t = np.asarray(temperature_K, dtype=float)
    width, n_i, n0, p0 = [], [], [], []
    for s, w, g_ref, g in zip(specs, widths_nm, gaps_at_ref_eV, gaps_eV):
        if s is None:  # no bulk term: zero width (a tiny n_i keeps the arithmetic finite)
            ni = np.ones_like(t)
            width.append(0.0 * np.asarray(w, dtype=float))
            n_i.append(ni)
            n0.append(ni)
            p0.append(ni)
            continue
        ni = intrinsic_density(s.n_i_cm3, s.n_i_temperature_K, g_ref, g, t)
        a, b = equilibrium_densities(ni, s.doping_cm3, s.n_type)
        width.append(np.asarray(w, dtype=float) * 1e-7)
        n_i.append(ni)
        n0.append(a)
        p0.append(b)
    shape = np.broadcast_shapes(*(np.shape(x) for x in width + n_i))

    def stacked(parts):
        return np.stack([np.broadcast_to(p, shape) for p in parts], axis=-1)

    n0s, p0s = stacked(n0), stacked(p0)
    return BulkRecombination(model, stacked(width), stacked(n_i), n0s, p0s,
                             model.low_injection(n0s, p0s))
