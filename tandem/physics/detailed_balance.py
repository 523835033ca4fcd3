"""Detailed balance with reciprocity: photocurrent, radiative dark current, diode, maximum power.

Pure functions on numpy arrays; every function broadcasts over leading dimensions, so a
sweep over thousands of gap pairs is one call. Units: energy [eV], temperature [K],
current density [A/m²], voltage [V], power [W/m²].

References
----------
W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510, doi:10.1063/1.1736034.
A. De Vos, J. Phys. D 13 (1980) 839, doi:10.1088/0022-3727/13/5/018.
U. Rau, Phys. Rev. B 76 (2007) 085303, doi:10.1103/PhysRevB.76.085303 (reciprocity, ERE).
"""

from __future__ import annotations

import numpy as np

from tandem.core.units import BB_FLUX_PREFACTOR, K_B_EV, Q

# --------------------------------------------------------------------------------------
# Integrals over the spectrum
# --------------------------------------------------------------------------------------


def exp_expm1(x):
    """(eˣ, eˣ − 1) elementwise: eˣ − 1 by subtraction where |x| ≥ 0.5 (the exponential's
    relative error times e^x/(e^x − 1) ≤ 2.6 there), by ``np.expm1`` below, where the
    subtraction would cancel. numpy's expm1 costs twice its exp (88 against 42 µs on 5,000
    values: no vectorised kernel), and the maximum-power searches evaluate it at every step."""
    x = np.asarray(x, dtype=float)
    e = np.exp(x)
    if x.ndim == 0:
        return e, np.expm1(x)
    em1 = e - 1.0
    small = np.abs(x) < 0.5
    if small.any():
        em1[small] = np.expm1(x[small])
    return e, em1


def blackbody_photon_flux(energy_eV, temperature_K):
    """Hemispherical blackbody photon flux per energy [m⁻² s⁻¹ eV⁻¹].

    Φ_bb(E, T) = 2π/(h³c²) · E² / (exp(E/kT) − 1), the emission through one face into a
    half-space (physics notes; Rau 2007 Eq. 1 with a = 1).

    Examples
    --------
    >>> from tandem import blackbody_photon_flux
    >>> f'{float(blackbody_photon_flux(1.0, 300.0)):.4g}'  # m⁻² s⁻¹ eV⁻¹ at 1 eV
    '1.569e+10'
    """
    energy = np.asarray(energy_eV, dtype=float)
    with np.errstate(over="ignore"):  # far above kT the flux is zero, as it should be
        return BB_FLUX_PREFACTOR * energy**2 / np.expm1(energy / (K_B_EV * temperature_K))


def photocurrent(energy_eV, flux, absorptance):
    """Photocurrent density J_L = q ∫ a(E) Φ(E) dE [A/m²].

    Parameters
    ----------
    energy_eV : (n,) array
        Ascending energy grid [eV].
    flux : (n,) array
        Incident photon flux per energy [m⁻² s⁻¹ eV⁻¹].
    absorptance : (..., n) array
        Absorptance of the subcell at each energy [-]; leading dimensions broadcast.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> step = (flux.energy >= 1.12).astype(float)
    >>> round(float(tandem.photocurrent(flux.energy, flux.flux, step)) / 10, 1)  # mA/cm²
    43.8
    """
    return Q * np.trapezoid(np.asarray(absorptance) * flux, energy_eV, axis=-1)


def radiative_dark_current(energy_eV, absorptance, temperature_K):
    """Radiative saturation current by reciprocity, J0,rad = q ∫ a(E) Φ_bb(E, T) dE [A/m²].

    The absorptance must be the one the subcell has in its place in the stack (its light
    comes and goes through the same front), so that emission and absorption agree (Rau 2007).

    Examples
    --------
    >>> import numpy as np, tandem
    >>> e = np.linspace(1.12, 4.0, 200_001)
    >>> j0 = tandem.radiative_dark_current(e, np.ones_like(e), 300.0)
    >>> bool(abs(j0 / tandem.step_radiative_dark_current(1.12, 300.0) - 1) < 1e-6)
    True
    """
    return Q * np.trapezoid(
        np.asarray(absorptance) * blackbody_photon_flux(energy_eV, temperature_K),
        energy_eV,
        axis=-1,
    )


def cumulative_flux(energy_eV, flux):
    """Running integral ∫_{E0}^{E_i} Φ dE on the grid (trapezoid rule) [m⁻² s⁻¹].

    Computed once per spectrum; :func:`flux_above` then answers any number of gaps.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> f'{float(tandem.cumulative_flux(flux.energy, flux.flux)[-1]):.4g}'  # photons m⁻² s⁻¹
    '4.306e+21'
    """
    steps = 0.5 * (flux[1:] + flux[:-1]) * np.diff(energy_eV)
    return np.concatenate(([0.0], np.cumsum(steps)))


def flux_above(energy_eV, flux, gap_eV, cumulative=None):
    """Photon flux above each gap, ∫_{Eg}^{E_max} Φ dE [m⁻² s⁻¹], for any array of gaps.

    Exact for the piecewise-linear interpolant of Φ, so a gap between grid points gets
    its partial interval, and the result agrees with the trapezoid rule at grid points.
    (:meth:`PhotonFlux.count_above` is exact for the spectrum a flux came from.)

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> f'{float(tandem.flux_above(flux.energy, flux.flux, 1.12)):.4g}'
    '2.734e+21'
    """
    energy = np.asarray(energy_eV, dtype=float)
    if cumulative is None:
        cumulative = cumulative_flux(energy, flux)
    gap = np.asarray(gap_eV, dtype=float)
    i = np.clip(np.searchsorted(energy, gap, side="right") - 1, 0, energy.size - 2)
    width = energy[i + 1] - energy[i]
    t = gap - energy[i]
    slope = (flux[i + 1] - flux[i]) / width
    partial = t * flux[i] + 0.5 * t**2 * slope  # ∫ from E_i to Eg of the linear interpolant
    return cumulative[-1] - (cumulative[i] + partial)


def step_photocurrent(photon_flux, gap_eV, upper_gap_eV=None):
    """Photocurrent [A/m²] of a step absorber (a = 1 above the gap, 0 below).

    With ``upper_gap_eV`` the absorber sees only photons between the two gaps, as the back
    cell of a stack whose front cell is an ideal step absorber.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum("am1.5g").photon_flux()
    >>> round(float(tandem.step_photocurrent(flux, 1.12)) / 10, 1)  # mA/cm²
    43.8
    """
    current = photon_flux.count_above(gap_eV)
    if upper_gap_eV is not None:
        current = current - photon_flux.count_above(upper_gap_eV)
    return Q * current


def _bose_tail(x):
    """∫_x^∞ t²/(eᵗ − 1) dt by the series Σ_k e^{−kx} (x²/k + 2x/k² + 2/k³); x > 0.

    Terms are added until e^{−kx} < 1e-17 for the smallest x (at most 40 terms; the
    series then has converged to double precision). x = +inf gives 0.
    """
    x = np.asarray(x, dtype=float)
    finite = np.where(np.isfinite(x), x, 0.0)
    total = np.zeros_like(finite)
    smallest = float(np.min(finite[finite > 0], initial=np.inf)) if finite.size else np.inf
    terms = 40 if not np.isfinite(smallest) or smallest <= 0 else min(40, int(39.2 / smallest) + 2)
    decay = np.exp(-finite)
    power = decay.copy()  # e^{−kx}, built by multiplication
    x2 = finite * finite
    for k in range(1, terms + 1):
        total += power * (x2 / k + 2 * finite / k**2 + 2 / k**3)
        power *= decay
    return np.where(np.isfinite(x), total, 0.0)


def step_radiative_dark_current(gap_eV, temperature_K, upper_gap_eV=None):
    """J0,rad [A/m²] of a step absorber, from the closed form of the blackbody integral.

    J0,rad = q · 2π/(h³c²) · (kT)³ · ∫_{Eg/kT}^{∞} t²/(eᵗ−1) dt; the series converges
    geometrically for Eg ≫ kT (two or three terms for real gaps at room temperature).
    With ``upper_gap_eV`` only emission between the two gaps counts (the back cell of a
    stack whose front cell absorbs everything above its own gap).

    Examples
    --------
    >>> from tandem import step_radiative_dark_current
    >>> f'{float(step_radiative_dark_current(1.12, 300.0)):.3g}'  # A/m²
    '8.23e-13'
    """
    kt = K_B_EV * np.asarray(temperature_K, dtype=float)
    tail = _bose_tail(np.asarray(gap_eV) / kt)
    if upper_gap_eV is not None:
        tail = tail - _bose_tail(np.asarray(upper_gap_eV) / kt)
    return Q * BB_FLUX_PREFACTOR * kt**3 * tail


# --------------------------------------------------------------------------------------
# Diodes and maximum power
# --------------------------------------------------------------------------------------


def thermal_voltage(temperature_K):
    """kT/q [V]."""
    return K_B_EV * np.asarray(temperature_K, dtype=float)


def dark_current(j0_radiative, ere):
    """Saturation current with non-radiative loss, J0 = J0,rad / ERE [A/m²] (Rau 2007).

    Examples
    --------
    >>> from tandem import dark_current
    >>> f'{float(dark_current(1e-20, 0.01)):.3g}'  # ERE 1 % → 100 × J0,rad
    '1e-18'
    """
    return np.asarray(j0_radiative) / np.asarray(ere)


def diode_current(voltage, j_light, j0, temperature_K):
    """J(V) = J_L − J0·(exp(qV/kT) − 1) [A/m²], the ideal (n = 1) diode of reciprocity.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> round(float(tandem.diode_current(0.0, jl, j0, 300.0)) / 10, 2)  # Jsc, mA/cm²
    35.03
    """
    return j_light - j0 * np.expm1(voltage / thermal_voltage(temperature_K))


def diode_voltage(current, j_light, j0, temperature_K):
    """V(J) = (kT/q)·ln((J_L − J)/J0 + 1) [V], the inverse of :func:`diode_current`.

    Defined for J < J_L + J0; the ideal diode has no reverse breakdown.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> round(float(tandem.diode_voltage(0.0, jl, j0, 300.0)), 4)  # Voc [V]
    1.0817
    """
    return thermal_voltage(temperature_K) * np.log1p((j_light - current) / j0)


def open_circuit_voltage(j_light, j0, temperature_K):
    """Voc = (kT/q)·ln(J_L/J0 + 1) [V].

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> round(float(tandem.open_circuit_voltage(jl, j0, 300.0)), 4)
    1.0817
    """
    return diode_voltage(0.0, j_light, j0, temperature_K)


def _solve_w_plus_log_w(y):
    """w with w + ln w = y for y ≥ 1 (i.e. w = W(eʸ), the Lambert W of a huge argument).

    Newton's method from w = y − ln y; works in logarithms so that eʸ never overflows.
    """
    log_y = np.log(y)
    w = np.maximum(y - log_y + log_y / y, 1.0)  # asymptotic start, good to ~(ln y / y)²
    for _ in range(6):
        step = (w + np.log(w) - y) / (1.0 + 1.0 / w)
        w = w - step
        if np.max(np.abs(step) / w, initial=0.0) < 1e-15:
            break
    return w


def single_junction_mpp(j_light, j0, temperature_K):
    """Maximum power point of an ideal diode, in closed form.

    Returns
    -------
    j_mp [A/m²], v_mp [V], p_mp [W/m²]

    Notes
    -----
    dP/dV = 0 gives e^v (1 + v) = 1 + J_L/J0 with v = qV/kT, so
    1 + v = W(e·(1 + J_L/J0)) and J_mp = (J_L + J0)·v/(1 + v).

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum("am1.5g").photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> j, v, p = tandem.single_junction_mpp(jl, j0, 300.0)
    >>> round(100 * float(p) / flux.irradiance, 1)  # Rühle 2016: 33.7 %
    33.7
    """
    j_light = np.asarray(j_light, dtype=float)
    y = 1.0 + np.log1p(j_light / j0)
    v = _solve_w_plus_log_w(y) - 1.0
    vt = thermal_voltage(temperature_K)
    v_mp = vt * v
    j_mp = (j_light + j0) * v / (1.0 + v)
    return j_mp, v_mp, j_mp * v_mp


def series_voltage(current, j_light, j0, temperature_K):
    """Voltage of series-connected ideal diodes carrying one current [V].

    ``j_light`` and ``j0`` have the subcells on their last axis; ``current`` broadcasts
    against the leading axes.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> j0 = [tandem.step_radiative_dark_current(1.73, 300.0),
    ...       tandem.step_radiative_dark_current(1.12, 300.0, 1.73)]
    >>> round(float(tandem.series_voltage(0.0, np.array([216.7, 221.4]), np.array(j0), 300.0)), 3)
    2.305
    """
    current = np.asarray(current, dtype=float)[..., None]
    vt = thermal_voltage(temperature_K)
    vt = vt[..., None] if np.ndim(vt) else vt
    return np.sum(vt * np.log1p((j_light - current) / j0), axis=-1)


def series_mpp(j_light, j0, temperature_K, iterations=50, own_mpp_current=None):
    """Maximum power point of series-connected ideal diodes (a two-terminal stack).

    Parameters
    ----------
    j_light, j0 : (..., m) arrays
        Photocurrent and saturation current of each of the m subcells [A/m²].
    own_mpp_current : (..., m) array, optional
        Each subcell's own maximum-power current, if already known (saves recomputing it).

    Returns
    -------
    j_mp [A/m²], v_mp [V], p_mp [W/m²]

    Notes
    -----
    P(J) = J·ΣV_i(J) with V_i = (kT/q)·ln((J_L,i − J)/J0,i + 1) is strictly concave on
    0 < J < min J_L,i (V_i' < 0 and V_i'' < 0), so P'(J) has one root. Each term of
    P'(J) = Σ(V_i + J·V_i') is the derivative of subcell i's own power, so the root lies
    between min J_mp,i and min J_L,i. Near the limiting photocurrent A = J_L + J0 of the
    limiting subcell, V_lim ∝ ln(A − J) varies fastest; Newton's method on
    s = ln(A − J) (the distance to it, on a log scale) converges in about four steps from
    s₀ = ln(A/(1 + Σ qVoc,i/kT)) for all points at once. Steps that leave the bracket
    fall back to bisection in s.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> j0 = [tandem.step_radiative_dark_current(1.73, 300.0),
    ...       tandem.step_radiative_dark_current(1.12, 300.0, 1.73)]
    >>> j, v, p = tandem.series_mpp(np.array([216.7, 221.4]), np.array(j0), 300.0)
    >>> round(float(p), 1)  # W/m²
    450.6
    """
    j, v_sub = series_mpp_subcells(j_light, j0, temperature_K, iterations, own_mpp_current)
    v = v_sub.sum(axis=-1)
    return j, v, j * v


def series_mpp_subcells(j_light, j0, temperature_K, iterations=50, own_mpp_current=None,
                        reduced_voc=None):
    """:func:`series_mpp`'s current and each subcell's voltage (..., m) [A/m², V].

    ``reduced_voc`` (Σ ln(1 + J_L,i/J0,i), shape (...)) may be passed when already known.
    """
    j_light = np.asarray(j_light, dtype=float)
    j0 = np.asarray(j0, dtype=float)
    shape = np.broadcast_shapes(j_light.shape, j0.shape)
    # subcells first: each subcell's arrays are contiguous, and sums over the (short)
    # subcell axis become a few whole-array additions
    jl = np.moveaxis(np.broadcast_to(j_light, shape), -1, 0)
    j0s = np.moveaxis(np.broadcast_to(j0, shape), -1, 0)
    m = shape[-1]
    limiting = np.argmin(jl, axis=0)
    top = np.take_along_axis(jl + j0s, limiting[None], axis=0)[0]  # A = J_L + J0 of the limiting cell
    if own_mpp_current is None:
        j_low = single_junction_mpp(jl, j0s, temperature_K)[0].min(axis=0)
    else:
        j_low = np.min(own_mpp_current, axis=-1)
    s_hi = np.log(top - j_low)  # P' ≥ 0 here
    s_lo = np.log(np.take_along_axis(j0s, limiting[None], axis=0)[0])  # J = J_L,lim: P' < 0
    if reduced_voc is None:
        reduced_voc = sum(np.log1p(jl[i] / j0s[i]) for i in range(m))
    s = np.clip(np.log(top / (1.0 + reduced_voc)), s_lo, s_hi)
    plus = [jl[i] + j0s[i] for i in range(m)]
    inv_j0 = [1.0 / j0s[i] for i in range(m)]
    for _ in range(iterations):
        gap = np.exp(s)
        j = top - gap
        d = [plus[i] - j for i in range(m)]
        inv = [1.0 / di for di in d]
        inv_sum = sum(inv)
        # Σ ln(d_i/J0_i) as the log of a product: one logarithm for a pair (the product of
        # two ratios ≤ ~1e130 for any gap in a spectrum; more subcells keep one log each)
        logs = (np.log(d[0] * inv_j0[0] * d[1] * inv_j0[1]) if m == 2
                else sum(np.log(d[i] * inv_j0[i]) for i in range(m)))
        slope = logs - j * inv_sum  # P'(J)·q/kT
        d_slope_ds = gap * (2.0 * inv_sum + j * sum(x * x for x in inv))  # dP'/ds > 0
        s_lo = np.where(slope < 0, s, s_lo)
        s_hi = np.where(slope < 0, s_hi, s)
        step = s - slope / d_slope_ds
        new = np.where((step >= s_lo) & (step <= s_hi), step, 0.5 * (s_lo + s_hi))
        # Newton converges quadratically: after a step below 1e-8 the error is ~1e-16
        done = np.max(np.abs(new - s), initial=0.0) < 1e-8
        s = new
        if done:
            break
    j = top - np.exp(s)
    vt = thermal_voltage(temperature_K)
    vt = vt[..., None] if np.ndim(vt) else vt
    return j, vt * np.moveaxis(np.log1p((jl - j) / j0s), 0, -1)


# --------------------------------------------------------------------------------------
# The non-ideal cell: a radiative diode (n = 1) and a non-radiative diode (n)
# --------------------------------------------------------------------------------------


def nonradiative_saturation_current(j_light, j0_rad, ere, ideality):
    """J0,nr [A/m²] of the non-radiative diode, set so that the ERE at open circuit is ``ere``.

    Parameters
    ----------
    j_light : array
        Photocurrent of the subcell [A/m²].
    j0_rad : array
        Radiative saturation current through the front face, by reciprocity [A/m²].
    ere : array
        External radiative efficiency at open circuit, in (0, 1] [-].
    ideality : float
        Ideality factor n of the non-radiative diode [-].

    Notes
    -----
    The cell is J(V) = J_L − J0,rad·(e^{qV/kT} − 1) − J0,nr·(e^{qV/nkT} − 1). The ERE is the
    share of the recombination at open circuit that leaves as front-face emission (Rau 2007),
    so J0,rad·(e^{qVoc/kT} − 1) = ERE·J_L, i.e. qVoc = kT·ln(1 + ERE·J_L/J0,rad), and

        J0,nr = J_L·(1 − ERE) / (e^{qVoc/nkT} − 1).

    For n = 1 this is J0,rad·(1/ERE − 1): the total J0,rad/ERE of the one-diode ERE model.
    Any n keeps the radiative diode at n = 1, so Voc stays below its radiative value (and
    the gap) whatever n is; only the shape of the J–V curve below Voc changes.

    References
    ----------
    U. Rau, Phys. Rev. B 76 (2007) 085303, doi:10.1103/PhysRevB.76.085303.

    Examples
    --------
    >>> from tandem import nonradiative_saturation_current
    >>> round(float(nonradiative_saturation_current(350.0, 1e-20, 0.01, 1.0) / 1e-20), 6)  # n = 1: 1/ERE − 1
    99.0
    """
    j_light = np.asarray(j_light, dtype=float)
    ere = np.asarray(ere, dtype=float)
    x_oc = np.log1p(ere * j_light / j0_rad)  # qVoc/kT at the given ERE
    with np.errstate(divide="ignore", invalid="ignore"):
        j0_nr = j_light * (1.0 - ere) / np.expm1(x_oc / ideality)
    return np.where(ere >= 1.0, 0.0, j0_nr)


def two_diode_voltage(current, j_light, j0_rad, j0_nr, ideality, temperature_K):
    """V(J) [V] of a radiative (n = 1) plus a non-radiative (n) diode carrying ``current``.

    Solves J0,rad·(e^x − 1) + J0,nr·(e^{x/n} − 1) = J_L − J for x = qV/kT by Newton's method
    on ln(J0,rad·e^x + J0,nr·e^{x/n}) = ln(J_L − J + J0,rad + J0,nr), a convex function of x,
    started from its smaller upper bound so that it converges monotonically. For
    J ≥ J_L the voltage continues linearly through zero (a reverse-biased cell), which
    keeps the series power unimodal for the searches that use it.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> round(float(tandem.two_diode_voltage(0.0, jl, j0, 99 * j0, 1.0, 300.0)), 4)  # ERE 1 %
    0.9627
    """
    y = np.asarray(j_light, dtype=float) - current
    a = np.asarray(j0_rad, dtype=float)
    b = np.asarray(j0_nr, dtype=float)
    n = float(ideality)
    vt = thermal_voltage(temperature_K)
    total = np.maximum(y, 0.0) + a + b
    log_a = np.log(a)
    with np.errstate(divide="ignore"):
        log_b = np.log(b)
        x = np.minimum(np.log(total) - log_a, n * (np.log(total) - log_b))
    target = np.log(total)
    for _ in range(60):
        u, w = log_a + x, log_b + x / n
        f = np.logaddexp(u, w) - target
        share = np.exp(u - np.logaddexp(u, w))  # radiative share of the recombination
        step = f / (share + (1.0 - share) / n)
        x = x - step
        if np.max(np.abs(step), initial=0.0) < 1e-12:
            break
    slope = a + b / n  # dJ/dx at V = 0
    return vt * np.where(y > 0, x, y / slope)


def two_diode_current(voltage, j_light, j0_rad, j0_nr, ideality, temperature_K):
    """J(V) = J_L − J0,rad·(e^{qV/kT} − 1) − J0,nr·(e^{qV/nkT} − 1) [A/m²]."""
    x = np.asarray(voltage, dtype=float) / thermal_voltage(temperature_K)
    return j_light - j0_rad * np.expm1(x) - j0_nr * np.expm1(x / ideality)


def two_diode_mpp(j_light, j0_rad, j0_nr, ideality, temperature_K, iterations=60):
    """Maximum power point of a radiative (n = 1) plus non-radiative (n) diode cell.

    Returns
    -------
    j_mp [A/m²], v_mp [V], p_mp [W/m²]

    Notes
    -----
    P(V) = V·J(V) with J(V) concave and falling, so P″ = 2J′ + V·J″ < 0 and P′ has one
    root in (0, Voc): safeguarded Newton on P′(V) = J + V·J′, bisection when a step leaves
    the bracket. Converges in a handful of steps for all points at once.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> jl = tandem.step_photocurrent(flux, 1.34)
    >>> j0 = tandem.step_radiative_dark_current(1.34, 300.0)
    >>> j, v, p = tandem.two_diode_mpp(jl, j0, 99 * j0, 1.0, 300.0)
    >>> round(float(p) / 10, 2)  # mW/cm², the ERE 1 % cell
    29.63
    """
    j_light = np.asarray(j_light, dtype=float)
    a = np.asarray(j0_rad, dtype=float)
    b = np.asarray(j0_nr, dtype=float)
    n = float(ideality)
    vt = thermal_voltage(temperature_K)
    lo = np.zeros(np.broadcast_shapes(j_light.shape, a.shape, b.shape, np.shape(vt)))
    hi = two_diode_voltage(0.0, j_light, a, b, n, temperature_K) + lo
    v = 0.9 * hi
    for _ in range(iterations):
        x = v / vt
        ea, eb = a * np.exp(x), b * np.exp(x / n)
        current = j_light - a * np.expm1(x) - b * np.expm1(x / n)
        d1 = -(ea + eb / n) / vt  # J′
        d2 = -(ea + eb / (n * n)) / vt**2  # J″
        slope = current + v * d1  # P′
        lo, hi = np.where(slope > 0, v, lo), np.where(slope > 0, hi, v)
        step = v - slope / (2 * d1 + v * d2)
        new = np.where((step > lo) & (step < hi), step, 0.5 * (lo + hi))
        done = np.max(np.abs(new - v), initial=0.0) < 1e-15
        v = new
        if done:
            break
    j = two_diode_current(v, j_light, a, b, n, temperature_K)
    return j, v, j * v
