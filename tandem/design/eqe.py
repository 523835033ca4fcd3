"""Measured EQE of the subcells in a stack: their currents, which one limits, and the voltage
each EQE implies by reciprocity.

An EQE file lists wavelength [nm] and EQE (a fraction, or percent). Between its points the
EQE is linear in photon energy; integrals are exact for that shape: the photocurrent (EQE and
the spectrum both piecewise linear) by Simpson's rule on the merged grid, the radiative dark
current J0,rad = q∫EQE·Φ_bb dE in closed form on every interval (the Bose–Einstein factor
1/(e^x − 1) = Σ_k e^{−kx} term by term, each an incomplete gamma function). Below the lowest
measured energy the EQE continues as an Urbach tail fitted to its low-energy edge, when the
fit finds a slope below kT (otherwise the measured range alone counts, and the output says
that Voc,rad is then an upper bound); the tail is integrated down to 0 eV (adaptive
quadrature to 10⁻¹²), since with a slope near kT it converges slowly.

Reciprocity: Rau, Phys. Rev. B 76 (2007) 085303 — Voc,rad = (kT/q)·ln(J_L/J0,rad + 1), and a
measured Voc gives the ERE as exp(−q(Voc,rad − Voc)/kT).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.physics.columns import header_cells, parse_two_columns, read_data_text, spectrum_units
from tandem.physics.spectra import PhotonFlux
from tandem.core.units import BB_FLUX_PREFACTOR, HC_EV_NM, K_B_EV, Q



@dataclass(frozen=True)
class MeasuredEQE:
    """A subcell's EQE on an ascending energy grid, with its fitted low-energy tail."""

    name: str
    energy_eV: np.ndarray
    eqe: np.ndarray
    urbach_eV: float | None = None  #: tail slope below the data, or None (data alone)
    notes: tuple[str, ...] = field(default=())

    @classmethod
    def from_arrays(cls, name: str, energy_eV, eqe, temperature_K: float = 298.15):
        e = np.asarray(energy_eV, dtype=float)
        q = np.asarray(eqe, dtype=float)
        order = np.argsort(e)
        e, q = e[order], q[order]
        slope, notes = _fit_tail(e, q, temperature_K)
        return cls(name, e, q, slope, notes)

    def at(self, energy_eV) -> np.ndarray:
        """EQE on any energies: linear between points, the tail below, zero above the data."""
        e = np.asarray(energy_eV, dtype=float)
        inside = np.interp(e, self.energy_eV, self.eqe, left=0.0, right=0.0)
        if self.urbach_eV is None:
            return inside
        low_e, low_q = self.energy_eV[0], self.eqe[0]
        tail = low_q * np.exp(np.minimum(e - low_e, 0.0) / self.urbach_eV)
        return np.where(e < low_e, tail, inside)


def read_eqe(path: str | Path, name: str | None = None, temperature_K: float = 298.15) -> MeasuredEQE:
    """An EQE file: wavelength [nm], EQE as a fraction (0–1) or percent (0–100).

    A header states units: wavelengths in µm (``wavelength_um``) are converted, an EQE column
    headed ``%`` or ``percent`` is percent. Unheaded, a column whose largest value lies between
    1 and 5 is refused: it could be percent of a weak cell or a fraction above one, and the
    unit is never guessed.
    """
    path, text = read_data_text(path, "EQE file", "wavelength [nm], EQE")
    data = parse_two_columns(text, f"EQE file '{path}'", "wavelength [nm]", "EQE", rising=False,
                             y_min=0.0)
    x_scale = spectrum_units(text)[0]  # a header in µm is converted
    wl, values = data[:, 0] * x_scale, data[:, 1]
    header = header_cells(text) or []
    said_percent = len(header) > 1 and ("%" in header[1] or "percent" in header[1].lower())
    top = float(values.max())
    if said_percent and top <= 100.0:  # a header saying percent settles even a weak cell
        eqe, unit = values / 100.0, "percent"
    elif top <= 1.0:
        eqe, unit = values, "fraction"
    elif 5.0 <= top <= 100.0:
        eqe, unit = values / 100.0, "percent"
    else:
        raise TandemInputError(f"EQE file '{path}': the EQE column reaches {top:g}; give fractions "
                               "(0–1) or percent (0–100, e.g. 85 for 0.85; head the column "
                               "'EQE (%)' to say so)")
    if wl.max() < 50:
        raise TandemInputError(f"EQE file '{path}': wavelengths end at {wl.max():g}; did you mean "
                               f"{wl.max() * 1000:g} nm? give them in nm")
    measured = MeasuredEQE.from_arrays(name or Path(path).stem, HC_EV_NM / wl, eqe, temperature_K)
    note = f"{Path(path).name}: EQE read as a {unit}, {wl.min():g}–{wl.max():g} nm"
    return MeasuredEQE(measured.name, measured.energy_eV, measured.eqe, measured.urbach_eV,
                       (note,) + measured.notes)


def _fit_tail(e, q, temperature_K):
    """Urbach slope of the low-energy edge: ln EQE against E over the points below 10 % of
    the peak at the low-energy end (at least three, all positive)."""
    kt = K_B_EV * temperature_K
    if q[0] <= 0:
        return None, ()
    peak = q.max()
    k = 0
    while k < q.size and 0 < q[k] < 0.1 * peak:
        k += 1
    if k < 3:
        return None, ("the EQE has fewer than three points on its low-energy edge below 10 % of "
                      "its peak: J0,rad counts the measured range only (Voc,rad is an upper bound)",)
    slope, _ = np.polyfit(e[:k], np.log(q[:k]), 1)
    urbach = 1.0 / slope if slope > 0 else np.inf
    if urbach >= 0.95 * kt:
        return None, (f"the EQE's low-energy edge falls with {1000 * urbach:.0f} meV, not below kT: "
                      "J0,rad counts the measured range only (Voc,rad is an upper bound)",)
    return float(urbach), (f"below the data the EQE continues as an Urbach tail of "
                           f"{1000 * urbach:.1f} meV fitted to its edge",)


def _merged(flux: PhotonFlux, m: MeasuredEQE) -> np.ndarray:
    """The spectrum's grid and the EQE's points, within the spectrum."""
    e = np.union1d(flux.energy, m.energy_eV)
    return e[(e >= flux.energy[0]) & (e <= flux.energy[-1])]


def photocurrent(flux: PhotonFlux, m: MeasuredEQE) -> float:
    """q∫EQE·Φ dE [A/m²], exact for the EQE linear in energy between its points (Simpson).

    For a flux made from a spectrum, exact for that spectrum, linear in wavelength between
    its rows: on each interval EQE = α + β/λ and I = c + dλ, so the photons per nm,
    EQE·I·λ/hc, are a quadratic in λ and Simpson's rule in wavelength is exact. Otherwise
    the flux is read as linear in energy and the rule runs in energy.
    """
    e = _merged(flux, m)
    if flux.cumulative is not None:
        lam = HC_EV_NM / e[::-1]
        mid = 0.5 * (lam[1:] + lam[:-1])
        f = m.at(e[::-1]) * flux.irradiance_at(lam) * lam
        fm = m.at(HC_EV_NM / mid) * flux.irradiance_at(mid) * mid
        return float(np.sum(np.diff(lam) / 6.0 * (f[:-1] + 4 * fm + f[1:])) / HC_EV_NM)
    mid = 0.5 * (e[1:] + e[:-1])
    f = m.at(e) * np.interp(e, flux.energy, flux.flux)
    fm = m.at(mid) * np.interp(mid, flux.energy, flux.flux)
    return float(Q * np.sum(np.diff(e) / 6.0 * (f[:-1] + 4 * fm + f[1:])))


def linear_emission_integral(energy_eV, eqe, temperature_K: float) -> float:
    """∫ EQE(E)·E²/(e^{E/kT} − 1) dE [eV³] for an EQE linear between the points, exactly.

    On [a, a + h] with EQE = q_a + s·t (t = E − a) the integrand is e^{−βa}·Σ_p c_p t^p e^{−βt}
    for each Bose term β = k/kT, and ∫_0^h t^p e^{−βt} dt = p!·P(p + 1, βh)/β^{p+1} with P the
    regularised lower incomplete gamma function (stable for any βh). Terms are added until
    e^{−k·a_min/kT} < 10⁻¹⁷.
    """
    from scipy.special import gammainc

    e = np.asarray(energy_eV, dtype=float)
    q = np.asarray(eqe, dtype=float)
    a, h, q_a = e[:-1], np.diff(e), q[:-1]
    s = np.diff(q) / h
    # (q_a + s t)(a + t)² = c0 + c1 t + c2 t² + c3 t³
    coeffs = (q_a * a * a, 2 * a * q_a + s * a * a, q_a + 2 * a * s, s)
    kt = K_B_EV * temperature_K
    terms = int(np.ceil(39.2 * kt / max(float(a[0]), 1e-3))) + 1
    total = 0.0
    for k in range(1, terms + 1):
        beta = k / kt
        factorial = 1.0
        inner = np.zeros_like(a)
        for p_, c in enumerate(coeffs):
            factorial *= max(p_, 1)
            inner += c * factorial * gammainc(p_ + 1, beta * h) / beta ** (p_ + 1)
        total += float(np.sum(np.exp(-beta * a) * inner))
    return total


def radiative_dark_current(m: MeasuredEQE, temperature_K: float, upper_eV: float = 10.0) -> float:
    """q∫EQE·Φ_bb dE [A/m²] over the data (exact for the piecewise-linear EQE) and its tail.

    The Urbach tail EQE_0·e^{(E − E_0)/E_U} below the data is integrated from 0 eV by adaptive
    quadrature (relative error 10⁻¹²): with E_U close to kT the integrand falls only as
    e^{−(1/E_U − 1/kT)(E_0 − E)}, so a fixed number of slopes below the data is not enough.
    """
    keep = m.energy_eV <= upper_eV
    e, q = m.energy_eV[keep], m.eqe[keep]
    total = linear_emission_integral(e, q, temperature_K) if e.size > 1 else 0.0
    if m.urbach_eV is not None:
        from scipy.integrate import quad

        e0, q0, eu = float(e[0]), float(q[0]), float(m.urbach_eV)
        kt = K_B_EV * temperature_K

        def tail(energy):  # E² e^{(E − E0)/E_U}/(e^{E/kT} − 1), continuous to E·kT at 0
            return (q0 * energy * energy * np.exp((energy - e0) / eu)
                    / np.expm1(energy / kt) if energy > 0 else 0.0)

        value, _ = quad(tail, 0.0, e0, epsabs=0.0, epsrel=1e-12, limit=400,
                        points=[max(e0 - 5 * eu, 0.0)])
        total += value
    return float(Q * BB_FLUX_PREFACTOR * total)


@dataclass(frozen=True)
class SubcellEQE:
    name: str
    j_light: float  #: [A/m²]
    j0_radiative: float  #: [A/m²]
    voc_radiative: float  #: [V]
    voc_measured: float | None
    ere: float | None
    urbach_eV: float | None


def subcell_from_eqe(m: MeasuredEQE, flux: PhotonFlux, temperature_K: float,
                     voc_measured: float | None = None) -> SubcellEQE:
    """Current, radiative J0 and Voc of one measured subcell; the ERE from a measured Voc."""
    j = photocurrent(flux, m)
    j0 = radiative_dark_current(m, temperature_K)
    if not (j > 0 and j0 > 0):
        raise TandemInputError(f"EQE '{m.name}' takes no photons of this spectrum; check the file "
                               "and its wavelength range")
    voc_rad = K_B_EV * temperature_K * np.log1p(j / j0)
    ere = None
    if voc_measured is not None:
        if not 0 < voc_measured < voc_rad:
            raise TandemInputError(f"measured Voc {voc_measured:g} V for '{m.name}' must lie between "
                                   f"0 and its radiative limit {voc_rad:.3f} V")
        ere = float(np.exp(-(voc_rad - voc_measured) / (K_B_EV * temperature_K)))
    return SubcellEQE(m.name, j, j0, float(voc_rad), voc_measured, ere, m.urbach_eV)


def scaled_to_thickness(m: MeasuredEQE, absorber, thickness_nm: float, new_thickness_nm: float,
                        position: str, temperature_K: float = 298.15) -> MeasuredEQE:
    """The EQE the same subcell would have at another thickness: scaled by the ratio of the
    absorber's own absorptance at the two thicknesses (its light-trapping mode; single pass in
    front). Where the absorber takes nothing the EQE is left as measured."""
    e = m.energy_eV
    shift = absorber.gap_shift_eV(temperature_K)
    now = absorber.layer(e, thickness_nm, None, shift, position=position).absorptance()
    new = absorber.layer(e, new_thickness_nm, None, shift, position=position).absorptance()
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(now > 1e-9, new / np.where(now > 1e-9, now, 1.0), 1.0)
    return MeasuredEQE(m.name, e, np.clip(m.eqe * ratio, 0.0, 1.0), m.urbach_eV, m.notes)


def transmitted_to_back(m_back: MeasuredEQE, absorber, thickness_nm: float,
                        new_thickness_nm: float, temperature_K: float = 298.15) -> MeasuredEQE:
    """The back's EQE when the front absorber's thickness changes: times the change of the
    front's single-pass transmission, exp(−α·(d_new − d))."""
    e = m_back.energy_eV
    alpha = absorber.alpha(e, None, absorber.gap_shift_eV(temperature_K))
    factor = np.exp(-alpha * (new_thickness_nm - thickness_nm) * 1e-7)
    return MeasuredEQE(m_back.name, e, np.clip(m_back.eqe * factor, 0.0, 1.0), m_back.urbach_eV,
                       m_back.notes)


def matching_thickness(front: MeasuredEQE, back: MeasuredEQE, flux: PhotonFlux, which: str,
                       absorber, thickness_nm: float, temperature_K: float = 298.15
                       ) -> float | None:
    """The thickness of the ``which`` ('front' or 'back') subcell's absorber at which the two
    photocurrents match, inside the absorber's declared range, or None if none does."""
    from scipy.optimize import brentq

    def gap(d):
        if which == "front":
            f = scaled_to_thickness(front, absorber, thickness_nm, d, "front", temperature_K)
            b = transmitted_to_back(back, absorber, thickness_nm, d, temperature_K)
        else:
            f, b = front, scaled_to_thickness(back, absorber, thickness_nm, d, "back", temperature_K)
        return photocurrent(flux, f) - photocurrent(flux, b)

    lo, hi = absorber.thickness_range_nm
    g_lo, g_hi = gap(lo), gap(hi)
    if g_lo * g_hi > 0:
        return None
    return float(np.exp(brentq(lambda x: gap(np.exp(x)), np.log(lo), np.log(hi), xtol=1e-9)))
