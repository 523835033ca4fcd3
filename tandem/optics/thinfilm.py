"""Thin-film optics at any angle, s and p: coherent layers and thick incoherent ones.

Every function works on whole arrays: a layer's complex index ñ = n + ik and its thickness
broadcast against each other (typically thickness sweep × photon energy), so a stack is
solved for every wavelength and thickness at once, with no loop over either.

Conventions follow the published generalised matrix method for partly coherent stacks
(S. J. Byrnes, "Multilayer optical calculations", arXiv:1603.02720 (2016); C. C. Katsidis and
D. I. Siapkas, Appl. Opt. 41 (2002) 3978; E. Centurioni, Appl. Opt. 44 (2005) 7532):

- Coherent layers: the 2×2 characteristic-matrix product of Fresnel interfaces and phase
  δ = 2πñd/λ (Born & Wolf, Principles of Optics, §1.6); the field's forward and backward
  amplitudes at each layer give the normal Poynting flux, and a layer absorbs the flux
  that enters it minus the flux that leaves it.
- Incoherent layers (glass, wafers): intensities, not amplitudes, pass through them,
  attenuated by P = exp(−4πkd/λ) per pass; the coherent groups between them enter as their
  intensity reflectances and transmittances from either side.
- Oblique light: the in-plane wavevector κ = n₀ sin θ₀ is the same in every layer (Snell), so
  each layer enters through its normal index q = n cos θ = √(ñ² − κ²) (the root that decays
  forward); s and p differ only in the Fresnel coefficients and the flux normalisation
  (Born & Wolf §1.5–1.6; Byrnes §2–4). κ = 0 is normal incidence, where s and p agree.
- R + T + Σ A = 1 at every energy (tested); the incident medium must be lossless.

A single opaque pass (Im δ > 35, or P < 1e-30) is clipped there, as in Byrnes's
reference implementation, to keep the matrices finite.
"""

from __future__ import annotations

from typing import Any

from dataclasses import dataclass, field

import numpy as np

from tandem.physics.detailed_balance import exp_expm1

#: Largest single-pass attenuation kept in a coherent layer (|e^{iδ}| ≥ e^{−35}).
MAX_IMAG_PHASE = 35.0
#: Smallest single-pass intensity transmittance kept in an incoherent layer.
MIN_PASS = 1e-30
#: Smallest transmittance of a coherent group kept in the intensity matrices: a group beyond
#: its critical angle transmits nothing, and the matrices divide by it.
MIN_GROUP_T = 1e-100


@dataclass(frozen=True)
class Layer:
    """One layer: complex index (…, nE), thickness [nm] (scalar or broadcastable), coherence."""

    index: np.ndarray
    thickness_nm: object
    coherent: bool = True


@dataclass(frozen=True)
class Optics:
    """Fractions of the incident power [-], each broadcast to the stack's shape (…, nE)."""

    reflectance: np.ndarray
    transmittance: np.ndarray  #: into the exit medium
    absorptance: tuple[np.ndarray, ...]  #: one per layer, in order from the sun
    #: {layer number: absorbed fraction per nm at the depths asked (nz, …, nE)}
    profiles: dict = field(default_factory=dict)


POLARISATIONS = ("s", "p")


def normal_index(n, kappa=0.0):
    """q = n cos θ = √(ñ² − κ²) [-], the root with Im q ≥ 0 (the wave decays forward; for a
    lossless medium beyond its critical angle, the evanescent one). κ = 0 gives ñ itself."""
    n = np.asarray(n, dtype=complex)
    if np.all(np.asarray(kappa) == 0):
        return n
    q = np.sqrt(n * n - np.asarray(kappa, dtype=float) ** 2 + 0j)
    return np.where(q.imag < 0, -q, q)


def fresnel(n1, n2, q1=None, q2=None, pol="s"):
    """Amplitude reflection and transmission from n1 into n2 (q = n cos θ; normal incidence
    when not given): s: r = (q1 − q2)/(q1 + q2), t = 2q1/(q1 + q2); p: r = (n2²q1 − n1²q2)/
    (n2²q1 + n1²q2), t = 2n1n2q1/(n2²q1 + n1²q2) (Hecht, Optics, §4.6; Born & Wolf §1.5.2)."""
    q1 = n1 if q1 is None else q1
    q2 = n2 if q2 is None else q2
    if pol == "s":
        return (q1 - q2) / (q1 + q2), 2 * q1 / (q1 + q2)
    denominator = n2 * n2 * q1 + n1 * n1 * q2
    return (n2 * n2 * q1 - n1 * n1 * q2) / denominator, 2 * n1 * n2 * q1 / denominator


def _flux_factor(n, q, pol):
    """The factor f with normal Poynting flux ∝ Re(f·conj(v + w)·(v − w)) for s, and
    ∝ Re(f·(v + w)·conj(v − w)) for p (f = n·conj(cos θ)) (Byrnes, arXiv:1603.02720, §3)."""
    return q if pol == "s" else n * np.conj(q / n)


def _flux(n, q, v, w, pol):
    f = _flux_factor(n, q, pol)
    if pol == "s":
        return np.real(f * np.conj(v + w) * (v - w))
    return np.real(f * (v + w) * np.conj(v - w))


def coherent(indices, thicknesses_nm, wavelength_nm, kappa=0.0, pol="s", depths=None):
    """A coherent stack between two semi-infinite media.

    Parameters
    ----------
    indices : sequence of L + 2 complex arrays
        ñ of the incident medium, the L layers and the exit medium, broadcastable.
    thicknesses_nm : sequence of L arrays or floats
    wavelength_nm : array (nE,)
    kappa : float or array broadcastable with the rest
        The in-plane wavevector n₀ sin θ₀ [-] (0: normal incidence).
    pol : 's' or 'p'
    depths : optional sequence of L depth arrays [nm] (or None per layer): where to give the
        absorbed fraction per nm (``G``, one (nz, …, nE) array per layer asked, else None)

    Returns
    -------
    dict with R, T, the flux entering from the front (``entering``; 1 − R for a lossless
    incident medium), ``A``, a list of the L layers' absorptances, and ``G``.
    """
    if pol not in POLARISATIONS:
        raise ValueError(f"pol must be 's' or 'p', not {pol!r}")
    n = [np.asarray(x, dtype=complex) for x in indices]
    q = [normal_index(x, kappa) for x in n]
    lam = np.asarray(wavelength_nm, dtype=float)
    layers = len(n) - 2
    incident = np.real(_flux_factor(n[0], q[0], pol))
    # an evanescent incident medium (a thick layer beyond its critical angle) carries no flux:
    # what it would deliver is weighted by a zero pass in stack_optics, so any scale will do
    incident = np.where(incident > 0, incident, 1.0)
    # characteristic matrices M_j = (1/t_j,j+1)·diag(e^{−iδ}, e^{iδ})·[[1, r], [r, 1]]
    r01, t01 = fresnel(n[0], n[1], q[0], q[1], pol)
    m00, m01, m10, m11 = 1 / t01, r01 / t01, r01 / t01, 1 / t01
    # Past the last layer whose thickness is an array (a sweep's axis), every matrix is free
    # of that axis: their product is formed on the smaller arrays and applied once; that
    # layer's own matrix is never formed (its two phase factors enter the product directly)
    last_swept = max((j for j in range(1, layers + 1) if np.size(thicknesses_nm[j - 1]) > 1),
                     default=0)
    mats: list[tuple] = []  # M_j's entries, or for the swept layer (e^{−iδ}, e^{iδ}, r, t)
    prefix, suffix = (m00, m01, m10, m11), None
    for j in range(1, layers + 1):
        delta = 2 * np.pi * q[j] * np.asarray(thicknesses_nm[j - 1], dtype=float) / lam
        delta = np.where(delta.imag > MAX_IMAG_PHASE, delta.real + 1j * MAX_IMAG_PHASE, delta)
        r, t = fresnel(n[j], n[j + 1], q[j], q[j + 1], pol)
        phase = np.exp(-1j * delta)  # e^{iδ} is its reciprocal: one complex exponential
        if j == last_swept:
            mats.append((phase, 1 / phase, r, t))
            continue
        back, fwd = phase / t, 1 / (phase * t)
        mat = (back, back * r, fwd * r, fwd)
        mats.append(mat)
        if j < last_swept:
            prefix = _product(prefix, mat)
        else:
            suffix = mat if suffix is None else _product(suffix, mat)
    if last_swept:
        # M = P·(1/t_s)·diag(e^{−iδ}, e^{iδ})·U with U = [[1, r_s], [r_s, 1]]·(the suffix):
        # its first column, all that r and t need, is P_a0·U₀₀/t_s·e^{−iδ} + P_a1·U₁₀/t_s·e^{iδ}
        ahead_phase, behind_phase, r_s, t_s = mats[last_swept - 1]
        s00, s10 = (1.0, 0.0) if suffix is None else (suffix[0], suffix[2])
        u00, u10 = (s00 + r_s * s10) / t_s, (r_s * s00 + s10) / t_s
        m00 = prefix[0] * u00 * ahead_phase + prefix[1] * u10 * behind_phase
        m10 = prefix[2] * u00 * ahead_phase + prefix[3] * u10 * behind_phase
    else:
        m00, m01, m10, m11 = prefix if suffix is None else _product(prefix, suffix)
    r = m10 / m00
    t = 1 / m00
    transmittance = np.abs(t) ** 2 * np.real(_flux_factor(n[-1], q[-1], pol)) / incident
    entering = _flux(n[0], q[0], 1, r, pol) / incident
    # amplitudes at the start of each layer, from the exit backwards: vw_j = M_j · vw_{j+1}.
    # Absorption is quadratic in them, so the sweep's axis enters only where it must:
    # behind the last swept layer s, vw_j = t·(α_j, β_j) with (α, β) = M_j…M_L·(1, 0) free of
    # that axis, and the layer absorbs |t|² times what (α, β) gives; in front of it,
    # vw_j = P_j·vw_s with P_j = M_j…M_{s−1} free of it, and the layer's absorption is a
    # Hermitian form in vw_s (:func:`_in_front`): three of its products, shared by those layers
    absorbed: list = []
    density: list = []
    v, w = 1.0 + 0j, 0j  # (α, β) at the exit
    gain = np.abs(t) ** 2
    at_swept: tuple = ()  # |v_s|², |w_s|², v_s·w̄_s
    ahead: tuple | None = None  # P_j
    for j in range(layers, 0, -1):
        mat = mats[j - 1]
        weights = _layer_weights(n[j], q[j], thicknesses_nm[j - 1], lam, pol)
        if j < last_swept:
            ahead = mat if ahead is None else _product(mat, ahead)
            p00, p01, p10, p11 = ahead
            absorbed.append(_form(_in_front(weights, ahead), *at_swept) / incident)
        else:
            if j == last_swept:  # the amplitudes themselves, with every axis: t·M_s·(α, β)
                ahead_phase, behind_phase, r_s, t_s = mat
                v, w = ((t * ahead_phase) * ((v + r_s * w) / t_s),
                        (t * behind_phase) * ((r_s * v + w) / t_s))
            else:
                v, w = mat[0] * v + mat[1] * w, mat[2] * v + mat[3] * w
            square = (np.abs(v) ** 2, np.abs(w) ** 2, v * np.conj(w))
            if j == last_swept:
                at_swept = square
            absorbed.append((1.0 if j <= last_swept else gain) * _form(weights, *square)
                            / incident)
        z = None if depths is None else depths[j - 1]
        if z is None:
            density.append(None)
            continue
        # a profile (the best design only) from the amplitudes themselves: its depth axis
        # leads, so it takes every other axis from them
        if j < last_swept:
            vj, wj = p00 * v + p01 * w, p10 * v + p11 * w
        else:
            vj, wj = (v, w) if j <= last_swept else (t * v, t * w)
        density.append(_absorbed_at_depth(n[j], q[j], incident, vj, wj, z, lam, pol))
    return {"R": np.abs(r) ** 2, "T": transmittance, "entering": entering, "A": absorbed[::-1],
            "G": density[::-1]}


def _absorption_factors(n, q, kz, pol):
    """(c, c_x) of the absorbed power per depth, c·(|v|²e^{−2k''z} + |w|²e^{2k''z}) +
    2Re(c_x v w̄ e^{2ik'z}): c = c_x = Im(q k_z) for s; c = 2k''·Re f, c_x = −2k'·Im f for p
    (f = n·conj(cos θ); Byrnes, arXiv:1603.02720)."""
    if pol == "s":
        c = np.imag(q * kz)
        return c, c
    f = _flux_factor(n, q, pol)
    return 2 * np.imag(kz) * np.real(f), -2 * np.real(kz) * np.imag(f)


def _absorbed_at_depth(n, q, incident, v, w, depth_nm, wavelength_nm, pol="s"):
    """The integrand of :func:`_layer_weights`: the fraction of the incident flux absorbed
    per nm at each depth z (nz,) → (nz, …, nE): c·(|v|²e^{−2k''z} + |w|²e^{2k''z}) +
    2Re(c_x v w̄ e^{2ik'z}) (Byrnes, arXiv:1603.02720, absorption at a depth)."""
    kz = 2 * np.pi * q / wavelength_nm
    k1, k2 = np.real(kz), np.imag(kz)
    batch = max(np.ndim(kz), np.ndim(v), np.ndim(w))  # depth leads every other axis
    z = np.asarray(depth_nm, dtype=float).reshape((-1,) + (1,) * batch)
    c, c_x = _absorption_factors(n, q, kz, pol)
    local = (c * (np.abs(v) ** 2 * np.exp(-2 * k2 * z) + np.abs(w) ** 2 * np.exp(2 * k2 * z))
             + 2 * np.real(c_x * v * np.conj(w) * np.exp(2j * k1 * z)))
    return local / incident


def _product(m, k):
    """The 2×2 product m·k of matrices given as (00, 01, 10, 11) arrays."""
    return (m[0] * k[0] + m[1] * k[2], m[0] * k[1] + m[1] * k[3],
            m[2] * k[0] + m[3] * k[2], m[2] * k[1] + m[3] * k[3])


def _form(weights, vv, ww, vw):
    """f·|v|² + b·|w|² + 2Re(x·v·w̄) for a layer's :func:`_layer_weights` (f, b, x), from
    |v|², |w|² and v·w̄."""
    f, b, x = weights
    return f * vv + b * ww + 2 * (np.real(x) * vw.real - np.imag(x) * vw.imag)


def _in_front(weights, p):
    """The weights (h_v, h_w, h_x) with which a layer whose amplitudes are P·(v, w) absorbs,
    in terms of (v, w): :func:`_form` of |v|², |w|², v·w̄.

    With v' = P₀₀v + P₀₁w, w' = P₁₀v + P₁₁w the form f|v'|² + b|w'|² + 2Re(x v' w̄') is
    h_v|v|² + h_w|w|² + 2Re(h_x v w̄), h_v = f|P₀₀|² + b|P₁₀|² + 2Re(x P₀₀P̄₁₀),
    h_w = f|P₀₁|² + b|P₁₁|² + 2Re(x P₀₁P̄₁₁), h_x = f P₀₀P̄₀₁ + b P₁₀P̄₁₁ + x P₀₀P̄₁₁ + x̄ P₁₀P̄₀₁
    (expand and collect; Re(z·conj(X)) = Re(z̄·X))."""
    f, b, x = weights
    p00, p01, p10, p11 = p
    h_v = f * np.abs(p00) ** 2 + b * np.abs(p10) ** 2 + 2 * np.real(x * p00 * np.conj(p10))
    h_w = f * np.abs(p01) ** 2 + b * np.abs(p11) ** 2 + 2 * np.real(x * p01 * np.conj(p11))
    h_x = (f * p00 * np.conj(p01) + b * p10 * np.conj(p11) + x * p00 * np.conj(p11)
           + np.conj(x) * p10 * np.conj(p01))
    return h_v, h_w, h_x


def _layer_weights(n, q, thickness_nm, wavelength_nm, pol="s"):
    """The weights (f, b, x) of a layer's absorption f·|v|² + b·|w|² + 2Re(x·v·w̄) (divided
    by the incident flux: :func:`_form`): the divergence of the normal Poynting flux
    integrated over the layer, for the field E = v·e^{ik_z z} + w·e^{−ik_z z}
    (k_z = 2πq/λ = k' + ik'').

    The integral in closed form, with expm1 so that a weakly absorbing layer keeps its full
    relative precision (its absorptance, not 1 minus the rest, feeds the radiative J0):
    c·[|v|²(1 − e^{−2k''d})/2k'' + |w|²(e^{2k''d} − 1)/2k''] + 2Re(c_x v w̄ (e^{2ik'd} − 1)/2ik'),
    with c = c_x = Im(q k_z) for s, and c = 2k''·Re f, c_x = −2k'·Im f (f = n·conj(cos θ)) for p
    (Byrnes, arXiv:1603.02720, the absorbed energy per depth), so the layers add up to 1 − R − T.
    At normal incidence c = n'·α: the absorbed density is n·α·|E|²/n₀.
    """
    kz = 2 * np.pi * q / wavelength_nm
    k1, k2 = np.real(kz), np.imag(kz)
    d = np.asarray(thickness_nm, dtype=float)
    c, c_x = _absorption_factors(n, q, kz, pol)
    # 1 − e^{−x} = (e^x − 1)/e^x: one e^x − 1 for both waves, each to full relative precision
    # (the opaque cap: beyond e^{-35} the backward wave's growth is the cap's, as in δ)
    grown = exp_expm1(np.minimum(2 * k2 * d, 2 * MAX_IMAG_PHASE))[1]
    x = 2 * k1 * d
    half = np.sin(0.5 * x)
    if np.all(k2 > 0) and 2 * np.min(np.abs(k1)) * np.min(d) >= 1e-4:
        # every wave decays and none is near evanescent (the usual case, and a sweep's whole
        # size): the factors of the layer folded into c/2k'' and c_x/2k' on the smaller arrays
        scale, scale_x = c / (2 * k2), c_x / (2 * k1)
        oscillating = np.empty(np.broadcast_shapes(x.shape, np.shape(scale_x)), dtype=complex)
        oscillating.real, oscillating.imag = np.sin(x) * scale_x, half * half * (2 * scale_x)
        return grown / (1 + grown) * scale, grown * scale, oscillating
    with np.errstate(divide="ignore", invalid="ignore"):
        safe = np.where(k2 > 0, 2 * k2, 1.0)
        backward = np.where(k2 > 0, grown / safe, d)
        forward = np.where(k2 > 0, grown / (1 + grown) / safe, d)
        # (e^{ix} − 1)/(ix)·d with x = 2k'd (real): sin x/x + i·2sin²(x/2)/x, two real sines
        # where a complex expm1 costs several; an evanescent wave has k' → 0, where the series
        # 1 + ix/2 − x²/6 holds to 10⁻¹⁶ (|x| < 10⁻⁴)
        small = np.abs(x) < 1e-4
        x_safe = np.where(small, 1.0, x)
        real = d * np.where(small, 1 - x * x / 6, np.sin(x) / x_safe)
        imag = d * np.where(small, 0.5 * x, 2 * half * half / x_safe)
    oscillating = np.empty(np.broadcast_shapes(real.shape, np.shape(c_x)), dtype=complex)
    oscillating.real, oscillating.imag = c_x * real, c_x * imag
    return c * forward, c * backward, oscillating


def stack_optics(layers: list[Layer], ambient_index, exit_index, wavelength_nm, kappa=0.0,
                 pol="s", depths: dict | None = None) -> Optics:
    """Reflectance, transmittance and each layer's absorptance of a partly coherent stack,
    for light arriving with in-plane wavevector ``kappa`` = n₀ sin θ₀ and polarisation ``pol``.

    Incoherent layers split the stack into coherent groups; each group is solved from the
    front and from the back (:func:`coherent`), then intensities are chained through the
    incoherent layers with the 2×2 intensity matrices of Byrnes (arXiv:1603.02720, §5); one
    pass through an incoherent layer transmits exp(−4π·Im q·d/λ).

    ``depths`` {layer number: depths [nm]} asks for the absorbed fraction per nm in coherent
    layers (``Optics.profiles``, (nz, …, nE) each): the front and back solves' densities,
    weighted by the light arriving from each side, as their absorptances are.
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    media = [Layer(np.asarray(ambient_index, dtype=complex), np.inf, False)]
    groups: list[list[int]] = [[]]  # coherent layer numbers between incoherent media
    incoherent_at = [-1]  # layer number of each incoherent medium (−1: ambient)
    for i, layer in enumerate(layers):
        if layer.coherent:
            groups[-1].append(i)
        else:
            media.append(layer)
            incoherent_at.append(i)
            groups.append([])
    media.append(Layer(np.asarray(exit_index, dtype=complex), np.inf, False))
    incoherent_at.append(len(layers))
    count = len(media)

    fwd, bwd = [], []
    for g, members in enumerate(groups):
        n_in, n_out = media[g].index, media[g + 1].index
        ns = [layers[i].index for i in members]
        ds = [layers[i].thickness_nm for i in members]
        zs = [(depths or {}).get(i) for i in members]
        fwd.append(coherent([n_in, *ns, n_out], ds, lam, kappa, pol, zs))
        mirrored = [None if z is None else np.asarray(d, dtype=float).item() - np.asarray(z, dtype=float)
                    for z, d in zip(zs, ds)]  # depth from the layer's back
        bwd.append(coherent([n_out, *ns[::-1], n_in], ds[::-1], lam, kappa, pol, mirrored[::-1]))
    passes = [None] + [np.maximum(np.exp(-4 * np.pi * np.asarray(m.thickness_nm, float)
                                         * np.imag(normal_index(m.index, kappa)) / lam), MIN_PASS)
                       for m in media[1:-1]] + [None]

    def l_matrix(g):  # intensity matrix of group g (between media g and g + 1)
        rf, tf, rb, tb = fwd[g]["R"], np.maximum(fwd[g]["T"], MIN_GROUP_T), bwd[g]["R"], bwd[g]["T"]
        return (1 / tf, -rb / tf, rf / tf, (tb * tf - rb * rf) / tf)

    total = l_matrix(0)
    chain: list[Any] = [None]
    for i in range(1, count - 1):
        a, b, c, d = l_matrix(i)
        p = passes[i]
        mat = (a / p, b / p, c * p, d * p)
        chain.append(mat)
        total = (total[0] * mat[0] + total[1] * mat[2], total[0] * mat[1] + total[1] * mat[3],
                 total[2] * mat[0] + total[3] * mat[2], total[2] * mat[1] + total[3] * mat[3])
    transmittance = 1 / total[0]
    reflectance = total[2] / total[0]
    # forward (V) and backward (W) intensities at the start of each incoherent medium
    vw: list[Any] = [None] * count
    v, w = transmittance, np.zeros_like(transmittance)
    vw[-1] = (v, w)
    for i in range(count - 2, 0, -1):
        a, b, c, d = chain[i]
        v, w = a * v + b * w, c * v + d * w
        vw[i] = (v, w)
    # light arriving at group g from the front (F) and from the back (B)
    arriving = [(1.0 if g == 0 else vw[g][0] * passes[g], vw[g + 1][1]) for g in range(count - 1)]
    # flux entering each incoherent medium across the interface before it
    entering: list[Any] = [None]
    for i in range(1, count):
        f, b = arriving[i - 1]
        back = bwd[i - 1]["entering"] if groups[i - 1] else bwd[i - 1]["T"]
        entering.append(f * fwd[i - 1]["T"] - b * back)
    absorbed: list[Any] = [None] * len(layers)
    for i in range(1, count - 1):
        f, b = arriving[i]
        front_side = fwd[i]["entering"] if groups[i] else fwd[i]["T"]
        leaving = f * front_side - b * bwd[i]["T"]
        absorbed[incoherent_at[i]] = entering[i] - leaving
    profiles = {}
    for g, members in enumerate(groups):
        f, b = arriving[g]
        for k, i in enumerate(members):
            absorbed[i] = f * fwd[g]["A"][k] + b * bwd[g]["A"][len(members) - 1 - k]
            if fwd[g]["G"][k] is not None:
                profiles[i] = f * fwd[g]["G"][k] + b * bwd[g]["G"][len(members) - 1 - k]
    unasked = set(depths or {}) - set(profiles)
    if unasked:
        raise ValueError(f"depth profiles are for coherent layers, not layers {sorted(unasked)}")
    # np.broadcast takes at most 64 arrays: a 32-pair Bragg mirror has more layers
    shape = np.broadcast_shapes(*(np.shape(x) for x in (reflectance, lam, kappa, *absorbed)))
    return Optics(np.broadcast_to(reflectance, shape), np.broadcast_to(transmittance, shape),
                  tuple(np.broadcast_to(a, shape) for a in absorbed),
                  {i: np.broadcast_to(p, p.shape[:1] + shape) for i, p in profiles.items()})


def unpolarised(solved: list[Optics]) -> Optics:
    """The mean of the s and p solutions (unpolarised light): R, T, each absorptance and
    each depth profile."""
    def mean(get):
        return np.mean([get(o) for o in solved], axis=0)

    return Optics(mean(lambda o: o.reflectance), mean(lambda o: o.transmittance),
                  tuple(mean(lambda o, k=k: o.absorptance[k]) for k in range(len(solved[0].absorptance))),
                  {i: mean(lambda o, i=i: o.profiles[i]) for i in solved[0].profiles})


def index_from_alpha(alpha_per_cm, wavelength_nm, n_real):
    """ñ = n + ik with k = αλ/(4π) (α in cm⁻¹, λ in nm)."""
    return n_real + 1j * np.asarray(alpha_per_cm) * np.asarray(wavelength_nm) * 1e-7 / (4 * np.pi)


#: Fringe orders resolved across a spread layer's thickness window (the multiple-reflection
#: harmonics of a film's fringes fall off as (r₁r₂)^m; three keep them below 10⁻⁴ in tests).
SPREAD_HARMONICS = 3
#: Most thickness nodes one spread layer may take (each is one more solve of the stack).
MAX_SPREAD_NODES = 48


def spread_nodes(spread_nm: float, wavelength_nm, n_real):
    """Thickness offsets [nm] (N,) and weights (N,) averaging a coherent layer over a thickness
    spread uniformly across ±spread/2 (a film thicker in one place than another, each place
    coherent; the cell gives the area average), and the fringe count of the window.

    The layer's round-trip phase 4πn·d/λ turns once per fringe period λ/(2n); Gauss–Legendre
    nodes over the window integrate exactly the polynomials of degree < 2N, and resolve the
    fringes' first SPREAD_HARMONICS orders when N ≥ SPREAD_HARMONICS·π·fringes + 2 (a
    polynomial of that degree follows e^{imφ} over the window; tested against a dense average
    of ``tmm`` solutions).
    """
    period = np.asarray(wavelength_nm, dtype=float) / (2 * np.maximum(np.asarray(n_real, float), 1.0))
    fringes = float(spread_nm) / float(np.min(period))
    count = int(np.ceil(SPREAD_HARMONICS * np.pi * fringes)) + 2
    x, w = np.polynomial.legendre.leggauss(count)
    return 0.5 * float(spread_nm) * x, w / 2, fringes
