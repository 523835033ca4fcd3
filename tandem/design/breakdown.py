"""Where the incident power of a design goes: a loss breakdown that adds up exactly.

The steps follow the published analysis of detailed-balance losses (Hirst & Ekins-Daukes,
Prog. Photovolt. 19 (2011) 286), extended to real cells (optical loss, non-radiative
recombination and voltage, resistance) and to stacks (current mismatch). With subcell i's
gap E_g,i, its EQE in the stack, photocurrent J_L,i and operating point (J_i, V_i) at its own
maximum power point (V_j,i = V_i + J_i·R_s at the junction):

- below the gaps: ∫_{E<E_g,back} E·Φ·(1 − ΣEQE) dE — photons no subcell takes;
- optical loss: ∫_{E≥E_g,back} E·Φ·(1 − ΣEQE) dE — reflected, parasitic, transmitted,
  not collected;
- thermalisation: Σ ∫ (E − E_g,i)·Φ·EQE_i dE — carriers relaxing to the band edges;
- emission: Σ E_g,i·J_rad,i/q, J_rad = J0,rad·(e^{qV_j/kT} − 1) — radiative recombination;
- non-radiative recombination: Σ E_g,i·J_nr,i/q, J_nr = J_L − J − J_rad − J_sh;
- Carnot and Boltzmann (the radiative voltage deficit): Σ (E_g,i − qV_oc,rad,i)·J_i/q with
  qV_oc,rad = kT·ln(J_L/J0,rad + 1); under a blackbody sun split into Carnot E_g·T_c/T_s,
  Boltzmann kT_c·ln(Ω_emit/Ω_sun) and the rest;
- non-radiative voltage loss: Σ (V_oc,rad,i − V_oc,i)·J_i;
- maximum-power point: Σ (V_oc,i − V_j,i)·J_i — the drop from open circuit to V_mp;
- resistance: Σ (V_j,i − V_i)·J_i + E_g,i·J_sh,i/q, J_sh = V_j/R_sh;
- current mismatch: P_4T − P_2T (two-terminal designs only);
- output: the design's power.

They sum to the incident power by construction; thermalisation takes the quadrature's
difference between ∫E·Φ dE and the spectrum's irradiance (≤ 5×10⁻⁷ of it, see
:func:`~tandem.physics.spectra.conserving_grid`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tandem.physics import detailed_balance as db
from tandem.core.errors import TandemInputError
from tandem.physics.spectra import trapezoid_weights
from tandem.physics.stack import Electrical, StackPerformance
from tandem.core.units import K_B_EV, SUN_DILUTION


@dataclass(frozen=True)
class LossStep:
    name: str
    equation: str
    power_W_m2: float

    def share(self, incident: float) -> float:
        return self.power_W_m2 / incident


@dataclass(frozen=True)
class LossBreakdown:
    """The incident power split into named steps that add up to it exactly."""

    incident_W_m2: float
    steps: tuple[LossStep, ...]  #: losses in order, then the output last
    terminals: int

    @property
    def output_W_m2(self) -> float:
        return self.steps[-1].power_W_m2

    def rows(self) -> list[dict]:
        """Display rows: name, equation, W/m² and % of the incident power."""
        return [{"step": s.name, "equation": s.equation,  # + 0.0: no "−0.00" for a residual
                 "power_W_m2": round(s.power_W_m2, 4) + 0.0,
                 "share_pct": round(100 * s.share(self.incident_W_m2), 4) + 0.0} for s in self.steps]


def loss_breakdown(energy, flux, irradiance: float, eqe, gaps_eV, perf: StackPerformance,
                   temperature_K: float, terminals: int = 2, electrical: Electrical | None = None,
                   blackbody_sun: tuple[float, float] | None = None) -> LossBreakdown:
    """The breakdown of one design.

    Parameters
    ----------
    energy, flux : (nE,) arrays
        The spectrum's grid [eV] and photon flux [m⁻² s⁻¹ eV⁻¹].
    irradiance : float
        Incident power [W/m²] (the efficiency denominator).
    eqe : (m, nE) array
        Each subcell's EQE in the stack (what feeds its J_L and, by reciprocity, its J0).
    gaps_eV : (m,) array
        The subcells' gaps at the cell temperature [eV], front first.
    perf : StackPerformance
        The design evaluated (arrays of shape (m,), scalars for the series point).
    blackbody_sun : (T_sun [K], concentration), optional
        Splits the radiative voltage deficit into Carnot and Boltzmann factors.
    """
    electrical = electrical or Electrical()
    if electrical.coupling > 0:
        raise TandemInputError("a loss breakdown with luminescent coupling is not available "
                               "(the coupled back's current has two sources); drop --coupling")
    e = np.asarray(energy, dtype=float)
    phi = np.asarray(flux, dtype=float)
    eqe = np.atleast_2d(np.asarray(eqe, dtype=float))
    gaps = np.atleast_1d(np.asarray(gaps_eV, dtype=float))
    w = trapezoid_weights(e)
    power = e * phi * db.Q  # W m⁻² eV⁻¹
    missed = 1.0 - eqe.sum(axis=0)
    below = float(np.sum(w * power * missed * (e < gaps.min())))
    optical = float(np.sum(w * power * missed * (e >= gaps.min())))
    j_l = np.asarray(perf.j_light, dtype=float)
    absorbed_at_gap = float(np.sum(gaps * j_l))
    thermalisation = irradiance - below - optical - absorbed_at_gap

    vt = K_B_EV * temperature_K
    j, v = np.asarray(perf.j_own, float), np.asarray(perf.v_own, float)
    rs = electrical.series_resistance_ohm_cm2 * 1e-4  # Ω·m²
    v_j = v + j * rs
    j0_rad = np.asarray(perf.j0_radiative, float)
    j_rad = j0_rad * np.expm1(v_j / vt)
    j_sh = (v_j / (electrical.shunt_resistance_ohm_cm2 * 1e-4)
            if np.isfinite(electrical.shunt_resistance_ohm_cm2) else np.zeros_like(v_j))
    j_nr = j_l - j - j_rad - j_sh
    voc_rad = vt * np.log1p(j_l / j0_rad)
    voc = np.asarray(perf.voc, float)
    deficit = float(np.sum((gaps - voc_rad) * j))
    steps = [
        LossStep("below the gaps", "∫_{E<Eg,back} E·Φ·(1 − ΣEQE) dE", below),
        LossStep("optical loss above the gaps", "∫_{E≥Eg,back} E·Φ·(1 − ΣEQE) dE", optical),
        LossStep("thermalisation", "Σ ∫ (E − Eg,i)·Φ·EQE_i dE", thermalisation),
        LossStep("emission", "Σ Eg,i·J_rad,i/q at the operating point",
                 float(np.sum(gaps * j_rad))),
        LossStep("non-radiative recombination", "Σ Eg,i·(J_L − J − J_rad − J_sh)/q",
                 float(np.sum(gaps * j_nr))),
    ]
    if blackbody_sun is not None:
        t_sun, concentration = blackbody_sun
        carnot = float(np.sum(gaps * temperature_K / t_sun * j))
        boltzmann = float(np.sum(vt * np.log(1.0 / (concentration * SUN_DILUTION)) * j))
        steps += [LossStep("Carnot", "Σ Eg,i·(T_cell/T_sun)·J_i/q", carnot),
                  LossStep("Boltzmann", "Σ kT·ln(Ω_emit/Ω_sun)·J_i/q", boltzmann),
                  LossStep("rest of the radiative voltage deficit",
                           "Σ (Eg,i − qVoc,rad,i)·J_i/q − Carnot − Boltzmann",
                           deficit - carnot - boltzmann)]
    else:
        steps.append(LossStep("Carnot and Boltzmann (radiative voltage deficit)",
                              "Σ (Eg,i − qVoc,rad,i)·J_i/q, qVoc,rad = kT·ln(J_L/J0,rad + 1)",
                              deficit))
    p_4t = float(np.sum(v * j))
    steps += [
        LossStep("non-radiative voltage loss", "Σ (Voc,rad,i − Voc,i)·J_i",
                 float(np.sum((voc_rad - voc) * j))),
        LossStep("maximum-power point", "Σ (Voc,i − V_j,i)·J_i", float(np.sum((voc - v_j) * j))),
        LossStep("series and shunt resistance", "Σ (V_j,i − V_i)·J_i + Eg,i·J_sh,i/q",
                 float(np.sum((v_j - v) * j + gaps * j_sh))),
    ]
    if terminals == 2 and eqe.shape[0] > 1:
        p_out = float(perf.p_2t)
        steps.append(LossStep("current mismatch (two-terminal)", "P_4T − P_2T", p_4t - p_out))
    else:
        p_out = p_4t
    steps.append(LossStep("output", "P = Σ J·V" if p_out == p_4t else "P_2T = J_2T·V_2T", p_out))
    return LossBreakdown(float(irradiance), tuple(steps), int(terminals))


def match_breakdown(result, rank: int = 1, blackbody_sun=None) -> LossBreakdown:
    """The breakdown of the ``rank``-th configuration of a :class:`~tandem.design.matching.MatchResult`:
    its subcells' EQEs in the stack, gaps at the cell temperature."""
    from tandem.design.matching import stack_light, stack_performance

    c = result.configurations[rank - 1]
    cond, design = result.conditions, result.design
    e = cond.photon_flux.energy
    light = stack_light(design, e, c.front_gap_eV, c.front_thickness_nm, c.back_thickness_nm,
                        temperature_K=cond.temperature_K)
    eqe = np.stack([np.reshape(light.front_eqe, e.shape), np.reshape(light.back_eqe, e.shape)])
    perf = stack_performance(design, cond, c.front_gap_eV, c.front_thickness_nm,
                             c.back_thickness_nm)
    gaps = np.array([c.front_gap_eV + design.front.gap_shift_eV(cond.temperature_K),
                     design.back.gap_eV + design.back.gap_shift_eV(cond.temperature_K)])
    return loss_breakdown(e, cond.photon_flux.flux, cond.photon_flux.irradiance, eqe, gaps, perf,
                          cond.temperature_K, result.terminals, cond.electrical, blackbody_sun)
