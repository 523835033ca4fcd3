"""Oscillator models of a film's dielectric function: ε(E) = ε₁ + iε₂ from a few fitted
parameters, so n and k (and α = 4πk/λ) come from one Kramers–Kronig-consistent source.

Below its gap ε₁ − ε∞ = (2/π)∫ξε₂/(ξ² − E²)dξ > 0 (every ξ > E), so ε∞ > 0 keeps n real there.

Tauc–Lorentz (Jellison & Modine, Appl. Phys. Lett. 69 (1996) 371, with its erratum 69 (1996)
2137): the Tauc joint density of states times a Lorentz oscillator's ε₂,

    ε₂(E) = A·E₀·C·(E − E_g)² / [((E² − E₀²)² + C²E²)·E]   for E > E_g, else 0,

and ε₁ = ε∞ + (2/π)·P∫_{E_g}^∞ ξ·ε₂(ξ)/(ξ² − E²) dξ in the paper's closed form (A amplitude,
E₀ resonance, C broadening, all in eV). The tests compare the closed form with a numerical
principal-value integral of ε₂ (scipy ``quad``, Cauchy weight).
"""

from __future__ import annotations

import numpy as np


def tauc_lorentz_epsilon(energy_eV, amplitude_eV: float, resonance_eV: float,
                         broadening_eV: float, gap_eV: float, eps_infinity: float) -> np.ndarray:
    """Complex ε(E) of the Tauc–Lorentz model on an energy grid [eV] (needs C < 2E₀).

    Examples
    --------
    >>> from tandem.optics.oscillators import tauc_lorentz_epsilon
    >>> eps = tauc_lorentz_epsilon([1.0, 3.0], 122.0, 3.45, 2.54, 1.2, 1.15)
    >>> [round(float(x), 3) for x in eps.real], [round(float(x), 3) for x in eps.imag]
    ([12.43, 14.854], [0.0, 17.365])
    """
    a_, e0, c, eg = float(amplitude_eV), float(resonance_eV), float(broadening_eV), float(gap_eV)
    given = np.asarray(energy_eV, dtype=float)
    eps2 = np.where(given > eg, a_ * e0 * c * (given - eg) ** 2
                    / (((given**2 - e0**2) ** 2 + c * c * given**2) * given), 0.0)
    # ε₁ is continuous at E_g, but two of its terms carry ln|E − E_g| that cancel only in the limit
    e = np.where(np.abs(given - eg) < 1e-9 * eg, eg * (1 + 1e-9), given)
    e2 = e * e
    alpha = np.sqrt(4 * e0**2 - c * c)
    gamma2 = e0**2 - c * c / 2
    zeta4 = (e2 - gamma2) ** 2 + alpha**2 * c * c / 4
    a_ln = (eg**2 - e0**2) * e2 + eg**2 * c * c - e0**2 * (e0**2 + 3 * eg**2)
    a_atan = (e2 - e0**2) * (e0**2 + eg**2) + eg**2 * c * c
    pz = np.pi * zeta4
    eps1 = (eps_infinity
            + a_ * c * a_ln / (2 * pz * alpha * e0)
            * np.log((e0**2 + eg**2 + alpha * eg) / (e0**2 + eg**2 - alpha * eg))
            - a_ * a_atan / (pz * e0)
            * (np.pi - np.arctan((2 * eg + alpha) / c) + np.arctan((alpha - 2 * eg) / c))
            + 2 * a_ * e0 * eg * (e2 - gamma2) / (pz * alpha)
            * (np.pi + 2 * np.arctan(2 * (gamma2 - eg**2) / (alpha * c)))
            - a_ * e0 * c * (e2 + eg**2) / (pz * e) * np.log(np.abs(e - eg) / (e + eg))
            + 2 * a_ * e0 * c * eg / pz
            * np.log(np.abs(e - eg) * (e + eg) / np.sqrt((e0**2 - eg**2) ** 2 + eg**2 * c * c)))
    return eps1 + 1j * eps2


def index_from_epsilon(epsilon) -> np.ndarray:
    """ñ = n + ik = √ε on the branch with k ≥ 0 (a passive medium absorbs)."""
    root = np.sqrt(np.asarray(epsilon, dtype=complex))
    return np.where(root.imag < 0, -root, root)
