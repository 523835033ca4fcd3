"""Light inside a thick wafer, traced between the films in front of it and its rear.

Sunlight crosses the front films at normal incidence (:func:`tandem.optics.thinfilm.stack_optics`)
and enters the wafer. What the wafer does not absorb on its way down meets the rear:

- ``single-pass``: it leaves through the back (transmitted);
- ``double-pass``: a specular mirror sends it straight back up;
- ``lambertian``: a randomising (Lambertian) reflector sends it back isotropically: the
  radiance is uniform, so the intensity per direction is 2μ dμ = d(sin²θ) (μ = cos θ in the
  wafer; Lambert's cosine law, e.g. Green, Prog. Photovolt. 10 (2002) 235).

Light coming back up crosses the wafer at its angle (attenuation e^{−αd/μ}) and meets the front
films from inside, at that angle: they reflect part of it back down (their angle-resolved
reflectance, s and p averaged), absorb part of it (the front absorber gains photocurrent, the
other films lose it) and let the rest escape. The reflected part crosses the wafer again and
reaches the rear, which randomises it again (or mirrors it). Every round trip returns the same
fraction ρ of what went up, so the series sums in closed form:

    U = T·e^{−αd} / (1 − ρ),   ρ = ∫ e^{−2αd/μ} R(μ) d(sin²θ),
    escaping or absorbed in film X:  U·∫ e^{−αd/μ} X(μ) d(sin²θ),

with T the light entering the wafer and U the light leaving the rear upwards. This is the
redistribution-matrix treatment of a flat front and a Lambertian (or mirror) rear reduced to
its one angular mode that a randomising rear leaves (cf. Tucher et al., Opt. Express 23 (2015)
A1720; recalled). It conserves energy exactly; the rear is taken as a lossless reflector, and
the films are met from a lossless medium of the wafer's real index (the wafer's own absorption
is the e^{−αd/μ} factor).

A textured front (``front = "lambertian"``) randomises the light where it crosses into the
wafer and where the films reflect it back down: every downward pass is isotropic, surviving
D = 2E₃(αd) of its light (Lambert's cosine law; E₃ the exponential integral), and the series
runs on X, the isotropic light going down from the front:

    X = T / (1 − ρ),  ρ = Σᵢ wᵢ uᵢ rᵢ Rᵢ,  uᵢ = e^{−αd/μᵢ}, rᵢ = R_b·D (Lambertian rear)
    or R_b·uᵢ (mirror), Rᵢ the films' reflectance from inside at node i.

The films are still met as flat layers (a randomising interface just inside them): their
reflectance of the sunlight is not lowered by the texture, which stays a conservative
limit of the in-coupling a real texture gives.

The angular integral uses Gauss–Legendre nodes in sin²θ between the critical angles of every
medium in front (where the reflectance has its kinks), so a few nodes per interval suffice.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from tandem.optics.absorptance import LIGHT_TRAPPING
from tandem.optics.thinfilm import POLARISATIONS, Layer, stack_optics, unpolarised

#: Gauss–Legendre nodes per interval between critical angles (convergence tested).
NODES_PER_INTERVAL = 8
#: A single pass that transmits less than this leaves nothing worth tracing back.
NEGLIGIBLE_PASS = 1e-17
#: Extra breakpoints near grazing incidence (cos θ in the wafer).
GRAZING_MU = (0.3, 0.1, 0.03, 0.01)
#: Breakpoints closer than this in sin²θ share one interval (a kink within it costs little).
MERGE_BELOW = 0.02
#: Energies on which the films' angular response is solved (then interpolated).
COARSE_ENERGIES = 48
#: How a wafer's front sends light into it: straight on, or randomised (a textured front).
FRONT_TEXTURES = ("flat", "lambertian")


def _take(index, where):
    """A layer's index at some energies (a constant stays a constant)."""
    return np.asarray(index)[..., where] if np.ndim(index) else index


def _coarse_indices(energy, count):
    """Indices of about ``count`` points spread evenly in ``energy`` (or 1/λ), ends included."""
    if energy.size <= count:
        return np.arange(energy.size)
    order = np.argsort(energy)
    targets = np.linspace(energy[order[0]], energy[order[-1]], count)
    picked = order[np.clip(np.searchsorted(energy[order], targets), 0, energy.size - 1)]
    return np.unique(np.concatenate([picked, order[[0, -1]]]))


def _interpolation(coarse_energy, fine_energy):
    """Linear interpolation from the coarse energies (K,) to the fine ones (n,): each fine
    energy's coarse neighbours below and above (indices into the coarse arrays) and the
    upper one's weight, (lo, hi, t), all (n,)."""
    order = np.argsort(coarse_energy)
    xs = coarse_energy[order]
    if xs.size == 1:
        zero = np.zeros(fine_energy.size, dtype=int)
        return order[zero], order[zero], np.zeros(fine_energy.size)
    j = np.clip(np.searchsorted(xs, fine_energy) - 1, 0, xs.size - 2)
    t = np.clip((fine_energy - xs[j]) / (xs[j + 1] - xs[j]), 0.0, 1.0)
    return order[j], order[j + 1], t


def _to_fine(values, interval):
    """``values`` on the coarse energies (…, K) taken to the fine ones (…, n)."""
    lo, hi, t = interval
    values = np.asarray(values)
    return values[..., lo] * (1 - t) + values[..., hi] * t


def _node_sum(values, weights, interval):
    """Σᵢ weights[i]·(values[i] taken to the fine energies): values (nodes, …, K) on the
    coarse energies, weights (nodes, n) on the fine ones → (…, n).

    The interpolation is linear in the values, so the sum over the nodes comes first: for
    the fine energies between two coarse ones, two matrix products (values at each coarse
    end, nodes × …, against the weights, nodes × those energies), then the interpolation of
    the two sums. Node by node, the same sums cost a gather and an update of (…, n) each."""
    lo, hi, t = interval
    values = np.asarray(values)
    flat = values.reshape(values.shape[0], -1, values.shape[-1])  # (nodes, …, K) → (nodes, M, K)
    out = np.empty((flat.shape[1], np.shape(weights)[-1]))
    starts = np.flatnonzero(np.r_[True, lo[1:] != lo[:-1]])  # runs of one coarse interval
    for start, stop in zip(starts, np.r_[starts[1:], lo.size]):
        w = weights[:, start:stop]
        below, above = flat[:, :, lo[start]].T @ w, flat[:, :, hi[start]].T @ w
        out[:, start:stop] = below * (1 - t[start:stop]) + above * t[start:stop]
    return out.reshape(values.shape[1:-1] + out.shape[-1:])


@dataclass(frozen=True)
class WaferLight:
    """Where the light entering a wafer ends up, per unit of the incident sunlight (…, nE)."""

    wafer: np.ndarray  #: absorbed in the wafer
    films: tuple[np.ndarray, ...]  #: extra absorption in each front film (sun-side order)
    escaped: np.ndarray  #: out through the front films into the ambient
    transmitted: np.ndarray  #: out through the rear (single pass only)
    #: absorbed per nm at the depths asked (nz, …, nE), from the front of the wafer
    profile: np.ndarray | None = None
    #: {film number: the returning light absorbed per nm at its depths asked (nz, …, nE)}
    film_profiles: dict = field(default_factory=dict)
    #: absorbed in the rear reflector (…, nE) (None: a lossless rear, or no reflector)
    rear: np.ndarray | None = None


def hemisphere_nodes(n_wafer, critical_indices, per_interval: int = NODES_PER_INTERVAL):
    """Nodes and weights in u = sin²θ ∈ [0, 1] of the wafer for ∫₀¹ g(u) du (both (m, nE)).

    The intervals end at every u = (n_k/n_wafer)² below 1 (the critical angle towards a medium
    of real index n_k), per energy; repeated breakpoints are dropped.
    """
    n_w = np.asarray(n_wafer, dtype=float)
    # a medium as dense as the wafer has no critical angle: its cut stays just below grazing,
    # so that no node sits at u = 1 (κ = n_wafer, where no light travels)
    cuts = [np.clip((np.asarray(n, float) / n_w) ** 2, 0.0, 1.0 - 1e-9) * np.ones_like(n_w)
            for n in critical_indices]
    edges = np.sort(np.stack([np.zeros_like(n_w), *cuts, np.ones_like(n_w)]), axis=0)
    keep = np.ones(len(edges), dtype=bool)  # drop breakpoints closer than MERGE to the last kept
    for i in range(1, len(edges) - 1):
        last = edges[np.flatnonzero(keep[:i])[-1]]
        keep[i] = np.any(edges[i] - last > MERGE_BELOW) and np.any(edges[-1] - edges[i] > MERGE_BELOW)
    # near grazing, e^{−αd/μ} falls within μ ≈ αd: intervals graded in μ resolve it
    top = edges[keep][-2]
    grazing = [np.maximum(top, 1 - mu * mu) for mu in GRAZING_MU]
    edges = np.concatenate([edges[keep][:-1], np.stack(grazing), edges[-1:]])
    x, w = np.polynomial.legendre.leggauss(per_interval)
    # u = lo + width·(1 − cos πt)/2: the reflectance has square-root kinks at the critical
    # angles, which this substitution makes smooth (du/dt vanishes at both ends)
    t = (x + 1) / 2
    share, slope = (1 - np.cos(np.pi * t)) / 2, np.pi / 2 * np.sin(np.pi * t) * w / 2
    lo, width = edges[:-1, None, :], np.diff(edges, axis=0)[:, None, :]
    # an interval of no width (two media alike at this energy) weighs nothing; its nodes go to
    # normal incidence rather than onto a critical angle, where a lossless layer carries no flux
    nodes = np.where(width > 0, lo + width * share[None, :, None], 0.0)
    weights = width * (slope / slope.sum())[None, :, None]  # constants exact: energy conserved
    return nodes.reshape(-1, n_w.size), weights.reshape(-1, n_w.size)


def trace_wafer(films: list[Layer], ambient_index, wafer_index, thickness_nm, rear: str,
                entering, wavelength_nm, per_interval: int | None = None,
                depths_nm=None, film_depths: dict | None = None,
                incidence_kappa: float = 0.0, rear_reflectance: float = 1.0,
                front: str = "flat") -> WaferLight:
    """Absorption in a thick wafer and the light it sends back through the films in front.

    Parameters
    ----------
    films : the layers in front of the wafer, sun-side first (as for ``stack_optics``)
    ambient_index : the medium the sunlight comes from (real)
    wafer_index : ñ of the wafer (nE,); α = 4πk/λ
    thickness_nm : the wafer's thickness [nm]
    rear : 'single-pass', 'double-pass' or 'lambertian'
    entering : the light entering the wafer at normal incidence (…, nE) [fraction of the sun]
    wavelength_nm : (nE,)
    depths_nm : optional depths (nz,) from the wafer's front where ``profile`` gives the light
        absorbed per nm: the first pass α·e^{−αz}, then at every angle node the light going up
        from the rear, (α/μ)·e^{−α(d−z)/μ}, and what the films send back down, (α/μ)·e^{−αz/μ}
        (each the integrand of the sums above, so the profile integrates to ``wafer``).
    film_depths : optional {film number (sun order): depths from its sun side [nm]}: where
        ``film_profiles`` gives the returning light each coherent film absorbs per nm.
    incidence_kappa : n₀ sin θ₀ of the sunlight (0: normal incidence): the first pass crosses
        the wafer at its refracted angle, cos θ_w = √(1 − (κ/n_w)²), and a mirror sends it
        back at that angle (a randomising rear forgets it).
    rear_reflectance : R_b of the reflector (0 < R_b ≤ 1): at every bounce it returns R_b of
        the light reaching it and absorbs the rest, so U = R_b·T·e^{−αd}/(1 − R_b·ρ) and the
        rear absorbs (1 − R_b)/R_b·U (``rear``).
    front : 'flat', or 'lambertian' for a textured front that randomises the light entering
        the wafer and the light the films reflect back into it (``incidence_kappa`` then
        matters only for ``entering``).
    """
    if rear not in LIGHT_TRAPPING:
        raise ValueError(f"rear must be one of {LIGHT_TRAPPING}, not {rear!r}")
    if front not in FRONT_TEXTURES:
        raise ValueError(f"front must be one of {FRONT_TEXTURES}, not {front!r}")
    lam = np.asarray(wavelength_nm, dtype=float)
    n_w = np.asarray(wafer_index, dtype=complex) * np.ones_like(lam)
    alpha_d = 4 * np.pi * n_w.imag / lam * float(thickness_nm)  # α·d [-]
    textured = front == "lambertian"
    first_u = (float(incidence_kappa) / n_w.real) ** 2  # sin²θ_w of the first pass
    first_ad = alpha_d / np.sqrt(1 - first_u)  # α times the first pass's path
    entering = np.asarray(entering, dtype=float)
    zero = np.zeros(np.broadcast(entering, lam).shape)
    if textured:  # an isotropic pass: ∫ e^{−αd/μ} 2μ dμ = 2E₃(αd)
        from scipy.special import expn

        down = 2 * expn(3, alpha_d)
        first_absorbed = 1 - down
    else:
        down = np.exp(-first_ad)
        first_absorbed = -np.expm1(-first_ad)
    wafer = entering * first_absorbed  # the first pass
    films_extra = [zero.copy() for _ in films]
    profile, film_profiles = None, {k: np.zeros(np.shape(z) + zero.shape)
                                    for k, z in (film_depths or {}).items()}
    if depths_nm is not None:
        z = np.asarray(depths_nm, dtype=float).reshape((-1,) + (1,) * np.ndim(zero))
        if textured:  # ∫ (α/μ)e^{−αz/μ} 2μ dμ = 2α·E₂(αz), integrating to 1 − 2E₃(αd)
            alpha = alpha_d / float(thickness_nm)
            first_profile = 2 * alpha * expn(2, alpha * z)
        else:
            alpha = first_ad / float(thickness_nm)  # along the path [1/nm]
            first_profile = alpha * np.exp(-alpha * z)
        profile = entering * first_profile * np.ones_like(zero)
    if rear == "single-pass":
        return WaferLight(wafer, tuple(films_extra), zero, entering * down, profile, film_profiles)
    escaped = zero.copy()
    live = np.flatnonzero(down > NEGLIGIBLE_PASS)  # energies where light comes back at all
    if live.size == 0:
        return WaferLight(wafer, tuple(films_extra), escaped, zero, profile, film_profiles)
    lam_l, n_l, ad = lam[live], n_w[live], alpha_d[live]
    # the films' response at each angle node varies slowly with energy: solve it on a coarse
    # grid and interpolate linearly (which keeps R + T + ΣA = 1); the wafer's own attenuation
    # e^{−αd/μ}, which is not slow, is taken at every energy
    coarse = _coarse_indices(1 / lam_l, COARSE_ENERGIES)
    reversed_films = [Layer(_take(x.index, live[coarse]), x.thickness_nm, x.coherent)
                      for x in films[::-1]]
    n_c = n_l.real[coarse]
    if rear == "double-pass" and not textured:  # the mirror returns the first pass's angle
        nodes, weights = first_u[live[coarse]][None, :], np.ones((1, coarse.size))
    else:
        critical = [ambient_index] + [np.real(x.index) for x in reversed_films]
        nodes, weights = hemisphere_nodes(n_c, critical, per_interval or NODES_PER_INTERVAL)
    batch = np.ndim(entering) - 1
    kappa = (n_c * np.sqrt(nodes)).reshape(len(nodes), *([1] * batch), coarse.size)
    last = len(films) - 1  # the films met from inside: film k is number last − k, depth d − z
    inside = {last - k: np.asarray(films[k].thickness_nm, dtype=float).item() - np.asarray(z, dtype=float)
              for k, z in (film_depths or {}).items()}
    response = unpolarised([stack_optics(reversed_films, n_c, ambient_index, lam[live[coarse]],
                                         kappa, pol, depths=inside) for pol in POLARISATIONS])
    film_density = {k: response.profiles[last - k] for k in film_profiles}  # (nz, nodes, …, coarse)
    reflect, escape = response.reflectance, response.transmittance
    absorb = list(response.absorptance)[::-1]  # back to sun-side order
    interval = _interpolation(1 / lam_l[coarse], 1 / lam_l)
    # per unit of light leaving the rear upwards (flat front), or of isotropic light going
    # down from the front (textured): returned to the same place (ρ), and per sink
    shape = np.broadcast_shapes(reflect.shape[1:-1] + (lam_l.size,), entering.shape[:-1] + (1,))
    # every node at once on the fine energies (nodes, n): its weight, sin²θ, one pass's
    # survival e^{−αd/μ} (the nodes avoid u = 1), the light leaving the rear upwards at it
    # (per unit of the state) and arriving at the front; a mirror under a textured front
    # returns each angle as it came down
    w, u = _to_fine(weights, interval), _to_fine(nodes, interval)
    up = np.exp(-ad / np.sqrt(1 - u))
    rising = w * up if textured and rear == "double-pass" else w
    arriving = rising * up
    zeros = np.zeros(shape)
    reached = zeros + np.sum(w * up, axis=0)
    returned = zeros + _node_sum(reflect, arriving if textured else arriving * up, interval)
    in_wafer = zeros + np.sum(rising * (1 - up), axis=0)
    if not textured:
        in_wafer = in_wafer + _node_sum(reflect, arriving * (1 - up), interval)
    out = zeros + _node_sum(escape, arriving, interval)
    in_films = [zeros + _node_sum(a, arriving, interval) for a in absorb]
    for k, density in film_density.items():  # (nz, nodes, …, coarse): the nodes lead
        film_profiles[k][..., live] += _node_sum(np.moveaxis(density, 1, 0), arriving, interval)
    if profile is not None:  # per unit leaving the rear, as in_wafer; depth by depth
        d = float(thickness_nm)
        per_nm = ad / d / np.sqrt(1 - u)  # (nodes, n)
        depth_live = np.zeros(z.shape[:1] + shape)
        for i in range(len(per_nm)):
            rise = rising[i] * per_nm[i] * np.exp(-per_nm[i] * (d - z))
            if not textured:
                r = _to_fine(reflect[i], interval)
                rise = rise + arriving[i] * r * per_nm[i] * np.exp(-per_nm[i] * z)
            depth_live += rise
    # (1 − ρ > 0 unless light could circle forever with no loss and no exit)
    r_b, tiny = float(rear_reflectance), np.finfo(float).tiny
    if textured:
        # X, the isotropic light going down from the front: T/(1 − ρ); the rear returns R_b·D
        # of it (a mirror with the nodes' own shares, scaled to D exactly: every photon once)
        d_l = down[live]
        per_x = r_b * (d_l if rear == "lambertian" else d_l / np.maximum(reached, tiny))
        first = entering[..., live] / np.maximum(1 - per_x * returned, tiny)
        leaving_rear, reaching_rear = first * per_x, first * d_l
    else:
        first = entering[..., live]
        leaving_rear = r_b * first * down[live] / np.maximum(1 - r_b * returned, tiny)
        reaching_rear = leaving_rear / r_b
    wafer[..., live] = first * first_absorbed[live] + leaving_rear * in_wafer
    escaped[..., live] = leaving_rear * out
    for k, a in enumerate(in_films):
        films_extra[k][..., live] = leaving_rear * a
    if profile is not None:
        profile[..., live] = first * first_profile[..., live] + leaving_rear * depth_live
    for k in film_profiles:
        film_profiles[k][..., live] *= leaving_rear
    in_rear = None
    if r_b < 1:
        in_rear = zero.copy()
        in_rear[..., live] = (1 - r_b) * reaching_rear
    return WaferLight(wafer, tuple(films_extra), escaped, zero, profile, film_profiles, in_rear)
