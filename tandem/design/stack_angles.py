"""A layer stack under a real sky: the direct beam at each step's angle of incidence and the
diffuse light over the hemisphere, through the stack's own layers.

The stack's absorptances are solved at a few angles of incidence (s and p averaged, the wafer
traced with its first pass at the refracted angle) once per front thickness, at 298.15 K, and
kept as changes from normal incidence, ΔA(θ_k) = A(θ_k) − A(0). A step's photocurrent is then

    J = q∫[A₀(E, T)·(Φ_dir + Φ_dif) + ΔA(E, θ)·Φ_dir + ΔA_hemi(E)·Φ_dif] dE,

with A₀ at the step's temperature bin (as at normal incidence), ΔA(θ) interpolated linearly in θ
between the nodes, and ΔA_hemi the average over an isotropic sky, ∫₀¹ ΔA du with u = sin²θ
(radiance uniform over the hemisphere: power per solid angle ∝ cos θ). Sky and ground light are
both taken as isotropic over the whole hemisphere, and the temperature's effect on the angular
change is neglected (it moves A₀ by parts in 10³ over a year's range; ΔA by less).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Angles of incidence [°] at which the stack is solved (the absorptance is 0 at 90°), closer
#: towards grazing where the reflectance turns fast: linear interpolation between them stays
#: within 3.4e-3 of the organic pair's absorptances at any angle, and the hemispherical
#: average within 9e-4 of a 40-point Gauss quadrature (measured; the latter is tested).
ANGLE_NODES_DEG = np.array([0.0, 10.0, 20.0, 30.0, 40.0, 48.0, 55.0, 61.0, 66.0, 70.5, 74.5,
                            78.0, 81.0, 83.5, 85.5, 87.3, 88.7, 90.0])


@dataclass(frozen=True)
class AngleTable:
    """ΔA = A(θ) − A(0) of the front and back absorbers, per front thickness."""

    nodes_deg: np.ndarray  #: (K,)
    delta: np.ndarray  #: (K, n_d, 2, nE) at each node
    hemisphere: np.ndarray  #: (n_d, 2, nE) averaged over an isotropic hemisphere


def stack_light_note(series) -> str:
    """How a layer stack took a series' light, for the output."""
    if series.has_parts:
        return ("the stack's own layers take the light at its angles: the direct beam at each "
                "step's angle of incidence (s and p averaged), sky and ground light averaged over "
                "an isotropic hemisphere; no separate cover factor (the site's cover index is not "
                "used)")
    return "the stack at normal incidence: these spectra's direct and diffuse parts are unknown"


#: Stack solves per front thickness the angles add (s and p at each node but 0° and 90°)
ANGLE_SOLVES = 2 * (ANGLE_NODES_DEG.size - 2)


def angle_solves(series) -> int:
    """:data:`ANGLE_SOLVES` where the series lets a stack take its angles, else 0."""
    return ANGLE_SOLVES if series.has_parts else 0


def angle_table(stack, others: dict, energy, thicknesses) -> AngleTable:
    """ΔA of a stack's absorbers at :data:`ANGLE_NODES_DEG` for front thicknesses (n_d,)."""
    from tandem.design.layerstack import photon_budget

    absorbed = []
    for angle in ANGLE_NODES_DEG[:-1]:
        b = photon_budget(stack, energy, thicknesses, others, 298.15, angle_deg=float(angle))
        absorbed.append(np.stack([b.front, b.back], axis=1))  # (n_d, 2, nE)
    absorbed.append(np.zeros_like(absorbed[0]))  # grazing: everything is reflected
    delta = np.array(absorbed) - absorbed[0]
    return AngleTable(ANGLE_NODES_DEG, delta, np.tensordot(hemisphere_weights(), delta, axes=1))


def direct_weights(aoi_deg) -> np.ndarray:
    """(n, K) weights of the nodes that interpolate linearly in θ at each angle (90° and
    beyond: the last node)."""
    theta = np.clip(np.asarray(aoi_deg, dtype=float), 0.0, 90.0)
    nodes = ANGLE_NODES_DEG
    j = np.clip(np.searchsorted(nodes, theta, side="right") - 1, 0, nodes.size - 2)
    t = (theta - nodes[j]) / (nodes[j + 1] - nodes[j])
    weights = np.zeros((theta.size, nodes.size))
    rows = np.arange(theta.size)
    weights[rows, j] = 1 - t
    weights[rows, j + 1] += t
    return weights


def hemisphere_weights(points: int = 4001) -> np.ndarray:
    """(K,) weights giving ∫₀¹ ΔA du (u = sin²θ) of the piecewise-linear ΔA(θ), by a fine
    trapezoid in θ (du = sin 2θ dθ)."""
    theta = np.linspace(0.0, 90.0, points)
    density = np.sin(np.radians(2 * theta)) * np.radians(theta[1] - theta[0])
    density[[0, -1]] *= 0.5
    return density @ direct_weights(theta)


def angled_currents(angles: AngleTable, weights_e, basis, c_direct, c_diffuse, aoi_deg):
    """The angular part of each step's photocurrents (n_d, n_h, 2) [A/m²]: ΔA(θ)·Φ_dir +
    ΔA_hemi·Φ_dif through the reduced basis (``c_*`` (r, n_h) coefficients)."""
    projected = (angles.delta * weights_e) @ basis.T  # (K, n_d, 2, r)
    per_node = np.einsum("kdsr,rh->kdhs", projected, c_direct)
    direct = np.einsum("hk,kdhs->dhs", direct_weights(aoi_deg), per_node)
    diffuse = np.einsum("dsr,rh->dhs", (angles.hemisphere * weights_e) @ basis.T, c_diffuse)
    return direct + diffuse
