"""Optics-lite: absorption edges, subcell absorptance, and the front cell filtering the back.

No interference (incoherent light). Units: energy [eV], absorption coefficient α [cm⁻¹],
thickness [nm]; αd is formed as α·d·1e-7.

References
----------
T. Tiedje, E. Yablonovitch, G. D. Cody, B. G. Brooks, IEEE Trans. Electron Devices 31 (1984)
711, doi:10.1109/T-ED.1984.21594 (Lambertian absorptance α/(α + 1/(4n²d))).
E. Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899, doi:10.1364/JOSA.72.000899 (4n² limit).
F. Urbach, Phys. Rev. 92 (1953) 1324, doi:10.1103/PhysRev.92.1324 (exponential tail).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

LIGHT_TRAPPING = ("single-pass", "double-pass", "lambertian")
NM_TO_CM = 1e-7


def absorptance(alpha_per_cm, thickness_nm, light_trapping="single-pass", refractive_index=1.0):
    """Fraction of the light entering a layer that it absorbs [-].

    single-pass: 1 − exp(−αd); double-pass over an ideal back mirror: 1 − exp(−2αd);
    lambertian (Tiedje et al. 1984): α/(α + 1/(4n²d)), whose weak-absorption limit is a
    path enhanced 4n² times (Yablonovitch 1982).
    """
    ad = np.asarray(alpha_per_cm) * np.asarray(thickness_nm) * NM_TO_CM
    if light_trapping == "single-pass":
        return -np.expm1(-ad)
    if light_trapping == "double-pass":
        return -np.expm1(-2.0 * ad)
    if light_trapping == "lambertian":
        path = 4.0 * refractive_index**2 * ad
        return path / (path + 1.0)
    raise ValueError(f"light trapping '{light_trapping}' is not one of {LIGHT_TRAPPING}")


def collection_efficiency(alpha_per_cm, thickness_nm, collection_length_nm=None):
    """Share of the carriers generated in a layer that are collected [-].

    Carriers generated at depth z are collected with probability exp(−z/L_c); for a
    single-pass generation profile α·exp(−αz) this gives
    η = α/(α + 1/L_c) · (1 − exp(−(α + 1/L_c)d)) / (1 − exp(−αd)),
    applied to every light-trapping mode as a first-order estimate. None: η = 1.
    """
    alpha = np.asarray(alpha_per_cm, dtype=float)
    if collection_length_nm is None:
        return np.ones(np.broadcast_shapes(alpha.shape, np.shape(thickness_nm)))
    d = np.asarray(thickness_nm, dtype=float)
    beta = 1.0 / collection_length_nm  # [1/nm]
    a = alpha * NM_TO_CM  # [1/nm]
    collected = a / (a + beta) * -np.expm1(-(a + beta) * d)
    absorbed = -np.expm1(-a * d)
    # where nothing is absorbed, the ratio tends to (1 − e^{−βd})/(βd)
    weak = -np.expm1(-beta * d) / (beta * d)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(absorbed > 1e-12, collected / np.where(absorbed > 1e-12, absorbed, 1.0),
                        weak)


@dataclass(frozen=True)
class LayerOptics:
    """What one absorber does with the light it is given, on the energy grid."""

    alpha_per_cm: np.ndarray
    thickness_nm: float | np.ndarray
    light_trapping: str = "single-pass"
    refractive_index: float = 1.0
    collection_length_nm: float | None = None

    def absorptance(self):
        return absorptance(self.alpha_per_cm, self.thickness_nm, self.light_trapping,
                           self.refractive_index)

    def collection(self):
        return collection_efficiency(self.alpha_per_cm, self.thickness_nm,
                                     self.collection_length_nm)


@dataclass(frozen=True)
class StackOptics:
    """Where the light goes in a two-junction stack, per energy (fractions of incident).

    ``front_absorbed + back_absorbed + reflected + parasitic + transmitted = 1``; the
    ``*_eqe`` arrays are the absorbed shares that are collected (external quantum
    efficiency), which feed both the photocurrent and, by reciprocity, J0.
    """

    front_absorbed: np.ndarray
    back_absorbed: np.ndarray
    reflected: np.ndarray
    parasitic: np.ndarray
    transmitted: np.ndarray
    front_eqe: np.ndarray
    back_eqe: np.ndarray


def stack_optics(front: LayerOptics, back: LayerOptics, reflectance=0.0, front_parasitic=0.0,
                 interlayer_parasitic=0.0) -> StackOptics:
    """Light through a two-junction stack, front (sunward) to back.

    The front subcell passes light once (it cannot have a back mirror: the back cell must
    see what it does not absorb); the back subcell uses its own light-trapping mode.
    Losses are fractions per energy (scalars or arrays on the grid): ``reflectance`` at
    the front surface, ``front_parasitic`` in the front contact, ``interlayer_parasitic``
    in the layers between the subcells. The back cell sees T_front(E)·(1 − p_inter)·Φ(E).
    """
    entering = (1.0 - np.asarray(reflectance)) * (1.0 - np.asarray(front_parasitic))
    ad_front = np.asarray(front.alpha_per_cm) * np.asarray(front.thickness_nm) * NM_TO_CM
    through_front = np.exp(-ad_front)
    front_abs = entering * -np.expm1(-ad_front)
    to_back = entering * through_front * (1.0 - np.asarray(interlayer_parasitic))
    back_frac = back.absorptance()
    back_abs = to_back * back_frac
    reflected = np.asarray(reflectance) + 0.0 * front_abs
    parasitic = ((1.0 - np.asarray(reflectance)) * np.asarray(front_parasitic)
                 + entering * through_front * np.asarray(interlayer_parasitic))
    transmitted = to_back * (1.0 - back_frac)
    return StackOptics(
        front_absorbed=front_abs,
        back_absorbed=back_abs,
        reflected=reflected,
        parasitic=parasitic,
        transmitted=transmitted,
        front_eqe=front_abs * front.collection(),
        back_eqe=back_abs * back.collection(),
    )
