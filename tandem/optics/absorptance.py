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


@dataclass(frozen=True)
class ParametricEdge:
    """α(E) from a gap, an Urbach tail below it and a power law above it.

    α = α_g·exp((E − Eg)/E_U) for E < Eg; α = α_g + S·((E − Eg)/1 eV)^p above, with
    p = 1/2 for a direct gap and p = 2 for an indirect (or Tauc-like amorphous) edge.
    Continuous at Eg and positive everywhere.
    """

    shape: str  #: 'direct' or 'indirect'
    urbach_energy_eV: float  #: E_U [eV]
    alpha_at_gap_per_cm: float  #: α_g [cm⁻¹]
    strength_per_cm: float  #: S [cm⁻¹]

    def alpha(self, energy_eV, gap_eV):
        energy = np.asarray(energy_eV, dtype=float)
        above = np.maximum(energy - gap_eV, 0.0)
        power = 0.5 if self.shape == "direct" else 2.0
        tail = self.alpha_at_gap_per_cm * np.exp(np.minimum(energy - gap_eV, 0.0)
                                                 / self.urbach_energy_eV)
        return np.where(energy < gap_eV, tail,
                        self.alpha_at_gap_per_cm + self.strength_per_cm * above**power)


@dataclass(frozen=True)
class TabulatedEdge:
    """α(E) from a table (log-linear interpolation), with an Urbach tail below the table.

    Above the table α keeps its last value; below it falls as exp((E − E_low)/E_U) from the
    lowest tabulated point, so α stays continuous and positive.
    """

    energy_eV: np.ndarray  #: ascending [eV]
    alpha_per_cm: np.ndarray  #: positive [cm⁻¹]
    urbach_energy_eV: float  #: slope of the extrapolated tail [eV]
    origin: str  #: where the table came from

    def alpha(self, energy_eV, gap_eV=None):  # the gap of a table is fixed by its data
        energy = np.asarray(energy_eV, dtype=float)
        log_alpha = np.interp(energy, self.energy_eV, np.log(self.alpha_per_cm))
        low_e, low_a = self.energy_eV[0], self.alpha_per_cm[0]
        tail = low_a * np.exp(np.minimum(energy - low_e, 0.0) / self.urbach_energy_eV)
        return np.where(energy < low_e, tail, np.exp(log_alpha))


@dataclass(frozen=True)
class BandEdge:
    """α(E) as a sum of Gaussian absorption bands above an onset (dyes, organic blends): a
    band rises and falls again, unlike an edge.

    α = Σ α_k·exp(−(E − E_k)²/(2σ_k²)) above the onset Eg, with peak α_k [cm⁻¹], centre E_k
    and width σ_k [eV]; below it an Urbach tail α(Eg)·exp((E − Eg)/E_U). A Gaussian's own
    wing is not used below the onset: with σ² > kT·E_k it would make the reciprocity dark
    current grow without bound toward 0 eV, which no real film does.
    """

    bands: tuple[tuple[float, float, float], ...]  #: (centre eV, σ eV, peak cm⁻¹) each
    urbach_energy_eV: float  #: E_U below the onset [eV]
    onset_eV: float  #: Eg, where the tail takes over [eV]

    def _bands(self, energy):
        total = np.zeros(np.shape(energy))
        for centre, width, peak in self.bands:
            total = total + peak * np.exp(-0.5 * ((energy - centre) / width) ** 2)
        return total

    def alpha(self, energy_eV, gap_eV=None):  # the bands are fixed by the description
        energy = np.asarray(energy_eV, dtype=float)
        at_onset = self._bands(np.array(self.onset_eV))
        tail = at_onset * np.exp(np.minimum(energy - self.onset_eV, 0.0) / self.urbach_energy_eV)
        return np.where(energy < self.onset_eV, tail, self._bands(energy))


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
