"""Recombination in an absorber's bulk and at its surfaces, as a current through its junction.

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

Defect (Shockley–Read–Hall) recombination through a mid-gap level with equal capture, in the
bulk (lifetime τ = τ_n0 = τ_p0) and at the two surfaces (velocity S each), adds

    J_SRH = q·(W/τ + 2S)·(n·p − n_i²)/(n + p + 2n_i)

(Shockley & Read, Phys. Rev. 87 (1952) 835; Hall, Phys. Rev. 87 (1952) 387; the surface form
of Stevenson & Keyes, Physica 20 (1954) 1041 — common practice). At low injection in a doped
bulk it is the familiar 1/τ_eff = 1/τ + 2S/W; in an undoped bulk under light it is an
ideality-2 diode, J0 = q·n_i·(W/τ + 2S)/2.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, fields

import numpy as np

from tandem.core.units import K_B_EV, Q
from tandem.physics.detailed_balance import exp_expm1

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
    """Auger and SRH recombination of each subcell; arrays broadcast against (..., m).

    A subcell without either has ``width_cm`` and ``srh_velocity`` 0. :meth:`current` is
    J(V) [A/m²].
    """

    width_cm: np.ndarray
    n_i: np.ndarray  #: intrinsic density at the cell temperature [cm⁻³]
    n0: np.ndarray
    p0: np.ndarray
    low: np.ndarray  #: the doping part of the Auger bracket, AugerModel.low_injection(n0, p0)
    injection: np.ndarray  #: the Auger bracket's coefficient of Δn^exponent (0 without Auger)
    exponent: np.ndarray
    srh_velocity: np.ndarray  #: W/τ + 2S [cm/s] (0 without SRH)

    @functools.cached_property
    def _constants(self):
        """n_i², n0 + p0 and (n0 − p0)², computed once."""
        return self.n_i**2, self.n0 + self.p0, (self.n0 - self.p0) ** 2

    def _excess(self, x):
        """Δn, n·p − n_i² and n + p at reduced voltage x = qV/kT [cm⁻³, cm⁻⁶, cm⁻³].

        n + p = √((n0 − p0)² + 4n_i²e^x) (from (n0 + Δn)(p0 + Δn) = n_i²e^x), free of the
        cancellation (n0 + p0) + 2Δn suffers in reverse bias; Δn keeps the sign of V."""
        ni2, s, d2 = self._constants
        drive = ni2 * exp_expm1(x)[1]  # n·p − n_i²
        total = np.sqrt(d2 + 4 * (ni2 + drive))  # n·p = n_i² + drive: no second exponential
        return 2 * drive / (s + total), drive, total

    def current(self, voltage, vt):
        """J = q·W·R_Auger + J_SRH at junction voltage ``voltage`` and thermal voltage ``vt``
        [A/m²]."""
        dn, drive, total = self._excess(np.asarray(voltage) / vt)
        current = self.width_cm * drive * (self.low + self.injection * np.abs(dn) ** self.exponent)
        if self._srh:
            current = current + self.srh_velocity * drive / (total + 2 * self.n_i)
        return (Q * CM2_PER_M2) * current  # no term where both are 0

    @functools.cached_property
    def _srh(self) -> bool:
        """Whether any subcell has a defect term (skipped otherwise: the Auger-limited case)."""
        return bool(np.any(self.srh_velocity != 0))

    def current_slope(self, voltage, vt):
        """(J, dJ/dV) from one evaluation of the densities, for Newton steps."""
        x = np.asarray(voltage) / vt
        ni2 = self._constants[0]
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            dn, drive, total = self._excess(x)
            e = ni2 + drive  # d(n·p)/dx = n·p
            ddn = e / total  # dΔn/dx
            power = np.abs(dn) ** self.exponent
            bracket = self.low + self.injection * power
            d_bracket = np.where(dn != 0, self.injection * self.exponent * power / dn * ddn, 0.0)
            denominator = total + 2 * self.n_i  # n + p + 2n_i
            srh = self.srh_velocity * drive / denominator
            d_srh = self.srh_velocity * (e - 2 * drive * ddn / denominator) / denominator
            qc = Q * CM2_PER_M2
            return (qc * (self.width_cm * drive * bracket + srh),
                    qc * (self.width_cm * (e * bracket + drive * d_bracket) + d_srh) / vt)

    def subcell(self, index) -> "BulkRecombination":
        """The arrays at ``index`` of the subcell axis (an int, or a slice keeping it)."""
        def pick(a):
            a = np.asarray(a, dtype=float)
            return a[..., index] if a.ndim else a
        return BulkRecombination(*(pick(getattr(self, f.name)) for f in fields(self)))

    def active(self, index) -> bool:
        """Whether subcell ``index`` has a bulk or surface term anywhere in the sweep."""
        width = np.asarray(self.width_cm)[..., index]
        srh = np.asarray(self.srh_velocity)[..., index]
        return bool(np.any((width > 0) & (self.injection[..., index] + self.low[..., index] > 0))
                    or np.any(srh > 0))


@dataclass(frozen=True)
class BulkSpec:
    """An absorber's bulk and surface recombination as its file states it."""

    model: AugerModel | None  #: the Auger parametrisation (None: no Auger term)
    n_i_cm3: float  #: intrinsic carrier density at ``n_i_temperature_K`` [cm⁻³]
    n_i_temperature_K: float
    doping_cm3: float = 0.0  #: net background doping [cm⁻³]
    n_type: bool = True
    srh_lifetime_s: float = math.inf  #: bulk SRH lifetime τ_n0 = τ_p0, mid-gap level [s]
    surface_velocity_cm_s: float = 0.0  #: SRH velocity of each of the two surfaces [cm/s]

    def srh_velocity(self, width_cm):
        """W/τ + 2S [cm/s]: the SRH rate per unit of (n·p − n_i²)/(n + p + 2n_i)."""
        return np.asarray(width_cm) / self.srh_lifetime_s + 2 * self.surface_velocity_cm_s


def stack_bulk(specs, widths_nm, gaps_at_ref_eV, gaps_eV, temperature_K) -> BulkRecombination | None:
    """The bulk and surface recombination of subcells (front first) for
    :func:`~tandem.physics.stack.evaluate_stack`.

    ``specs`` holds a :class:`BulkSpec` or None per subcell; ``widths_nm``, ``gaps_at_ref_eV``
    (each gap at its spec's n_i temperature) and ``gaps_eV`` (at the cell temperature)
    broadcast against the sweep's leading axes. None when no subcell has a spec.
    """
    if all(s is None for s in specs):
        return None
    t = np.asarray(temperature_K, dtype=float)
    parts = []  # per subcell: width, n_i, n0, p0, low, injection, exponent, srh velocity
    for s, w, g_ref, g in zip(specs, widths_nm, gaps_at_ref_eV, gaps_eV):
        w_cm = np.asarray(w, dtype=float) * 1e-7
        if s is None:  # no term: zero coefficients (a unit n_i keeps the arithmetic finite)
            one = np.ones_like(t)
            parts.append((0.0 * w_cm, one, one, one, 0.0, 0.0, 1.0, 0.0))
            continue
        ni = intrinsic_density(s.n_i_cm3, s.n_i_temperature_K, g_ref, g, t)
        n0, p0 = equilibrium_densities(ni, s.doping_cm3, s.n_type)
        m = s.model
        auger = (0.0, 0.0, 1.0) if m is None else (m.low_injection(n0, p0), m.injection,
                                                    m.injection_exponent)
        parts.append((w_cm, ni, n0, p0, *auger, s.srh_velocity(w_cm)))
    shape = np.broadcast_shapes(*(np.shape(x) for part in parts for x in part))
    columns = [np.stack([np.broadcast_to(np.asarray(p[k], dtype=float), shape) for p in parts],
                        axis=-1) for k in range(8)]
    return BulkRecombination(*columns)
