"""Where the incident power of a design goes: a loss breakdown that adds up exactly.

The steps follow the published analysis of detailed-balance losses (Hirst & Ekins-Daukes,
Prog. Photovolt. 19 (2011) 286), extended to real cells (optical loss, non-radiative
recombination and voltage, resistance) and to stacks. Each connection is taken at its own
operating point: four terminals at every subcell's own maximum power point, two terminals at
the series maximum power point (one current J through every subcell), three at the two loads'
joint maximum. With subcell i's gap
E_g,i, its EQE in the stack, photocurrent J_L,i, current J_i and junction voltage V_j,i:

- below the gaps: ∫_{E<E_g,back} E·Φ·(1 − ΣEQE) dE — photons no subcell takes;
- optical loss: ∫_{E≥E_g,back} E·Φ·(1 − ΣEQE) dE — reflected, parasitic, transmitted,
  not collected;
- thermalisation: Σ ∫ (E − E_g,i)·Φ·EQE_i dE — carriers relaxing to the band edges;
- emission: Σ E_g,i·J_rad,i/q, J_rad = J0,rad·(e^{qV_j/kT} − 1) — radiative recombination
  (for step absorbers close to their gap, the exact Bose–Einstein emission the engine used);
- non-radiative recombination: Σ E_g,i·J_nr,i/q, J_nr = J_L − J − J_rad − J_sh (defects and,
  where an absorber states it, Auger recombination in its bulk);
- shunt: Σ E_g,i·J_sh,i/q, J_sh = V_j/R_sh — carriers lost through each junction's shunt;
- Carnot and Boltzmann (the radiative voltage deficit): Σ (E_g,i − qV_oc,rad,i)·J_i/q with
  qV_oc,rad = kT·ln(J_L/J0,rad + 1) (from the exact Bose–Einstein emission where the engine
  used it, close to the gap); under a blackbody sun split into Carnot E_g·T_c/T_s,
  Boltzmann kT_c·ln(Ω_emit/Ω_sun), and two gains (negative rows, named as gains): the
  hot-sun gain −kT_c·ln(T_s/T_c) and the photon-spread gain, the rest (for a step absorber
  with Boltzmann statistics −kT_c·ln(P(T_s)/P(T_c)), P(T) = E_g² + 2E_g·kT + 2(kT)²), and,
  where the exact emission was used, its extra loss Σ (V_oc,rad,Boltzmann − V_oc,rad)·J_i;
- non-radiative voltage loss: Σ (V_oc,rad,i − V_oc,i)·J_i, V_oc of the junction (no shunt);
- operating point: Σ (V_oc,i − V_j,i)·J_i — the drop from open circuit to the operating
  voltage (for a two-terminal stack this holds the cost of current mismatch: the subcell
  with spare photocurrent runs near its open circuit, the limiting one below its own V_mp);
- series resistance: J²·R_s (two terminals) or Σ J_i²·R_s/m (three and four; the stack's R_s
  shared between the m circuits);
- middle contact (three terminals): R_m·J_m², its current the difference of the subcell
  currents (series type) or their sum (reverse type), each junction at its own voltage;
- output: the design's power.

Every step is ≥ 0 at these operating points. The current-mismatch cost of a two-terminal
design, P_4T − P_2T, is reported beside the steps (``mismatch_W_m2``), not as a step: it is
the difference of two operating points, not a flow of power at one.

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
from tandem.physics.junctions import junction_voltage
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
    mismatch_W_m2: float | None = None  #: P_4T − P_2T of a two-terminal stack, beside the steps

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
    m = eqe.shape[0]
    series = terminals == 2 and m > 1
    rs = electrical.series_resistance_ohm_cm2 * 1e-4  # Ω·m²
    if series:  # one current through every subcell, each at its own junction voltage
        j = np.full(m, float(perf.j_2t))
        v_j = np.asarray(perf.v_2t_sub, float)
        resistive = float(j[0] ** 2 * rs)
    elif terminals == 3 and m == 2:  # two loads; R_s/2 a circuit and the middle contact's R_m
        j = np.asarray(perf.j_3t, float)
        reverse = electrical.middle_contact == "r"
        j_middle = j[0] + j[1] if reverse else j[0] - j[1]
        r_middle = electrical.middle_resistance_ohm_cm2 * 1e-4
        v_j = (np.asarray(perf.v_3t, float) + j * rs / 2
               + r_middle * j_middle * np.array([1.0, 1.0 if reverse else -1.0]))
        resistive = float(np.sum(j**2) * rs / 2)
        middle = r_middle * j_middle**2
    else:  # each subcell's own circuit carries R_s/m
        j = np.asarray(perf.j_own, float)
        v_j = np.asarray(perf.v_own, float) + j * rs / m
        resistive = float(np.sum(j**2) * rs / m)
    j0_rad = np.asarray(perf.j0_radiative, float)
    j_rad = j0_rad * np.expm1(v_j / vt)
    extra = tuple(x for x in (perf.bulk, perf.emission) if x is not None)
    if perf.emission is not None:  # the exact emission's excess where the engine used it
        j_rad = j_rad + perf.emission.current(v_j, vt)
    r_sh = electrical.shunt_resistance_ohm_cm2 * 1e-4
    j_sh = v_j / r_sh if np.isfinite(r_sh) else np.zeros_like(v_j)
    j_nr = j_l - j - j_rad - j_sh
    voc_rad_boltzmann = vt * np.log1p(j_l / j0_rad)
    voc_rad = voc_rad_boltzmann if perf.emission is None else junction_voltage(
        0.0, j_l, j0_rad, 0.0, 1.0, vt, True, extra=(perf.emission,))
    # the junction's open circuit without the shunt (whose loss is its own step)
    voc = junction_voltage(0.0, j_l, j0_rad, np.asarray(perf.j0_nonradiative, float),
                           perf.ideality, vt, False, extra=extra)
    deficit = float(np.sum((gaps - voc_rad) * j))
    # the exact law emits more than the Boltzmann form near the gap: its own (≥ 0) step
    degeneracy = float(np.sum((voc_rad_boltzmann - voc_rad) * j))
    steps = [
        LossStep("below the gaps", "∫_{E<Eg,back} E·Φ·(1 − ΣEQE) dE", below),
        LossStep("optical loss above the gaps", "∫_{E≥Eg,back} E·Φ·(1 − ΣEQE) dE", optical),
        LossStep("thermalisation", "Σ ∫ (E − Eg,i)·Φ·EQE_i dE", thermalisation),
        LossStep("emission", "Σ Eg,i·J_rad,i/q at the operating point",
                 float(np.sum(gaps * j_rad))),
        LossStep("non-radiative recombination", "Σ Eg,i·(J_L − J − J_rad − J_sh)/q",
                 float(np.sum(gaps * j_nr))),
        LossStep("shunt", "Σ Eg,i·J_sh,i/q, J_sh = V_j/R_sh", float(np.sum(gaps * j_sh))),
    ]
    if blackbody_sun is not None:
        t_sun, concentration = blackbody_sun
        carnot = float(np.sum(gaps * temperature_K / t_sun * j))
        boltzmann = float(np.sum(vt * np.log(1.0 / (concentration * SUN_DILUTION)) * j))
        # The sun's photons carry its temperature: qVoc,rad gains kT_c·ln(T_s/T_c) from the
        # hotter source and a little more from its broader photon-energy spread (for a step
        # absorber kT_c·ln(P(T_s)/P(T_c)), P(T) = Eg² + 2Eg·kT + 2(kT)²); both are gains,
        # shown as such (negative rows), never folded into a loss.
        hot_sun = -float(np.sum(vt * np.log(t_sun / temperature_K) * j))
        steps += [LossStep("Carnot", "Σ Eg,i·(T_cell/T_sun)·J_i/q", carnot),
                  LossStep("Boltzmann", "Σ kT·ln(Ω_emit/Ω_sun)·J_i/q", boltzmann),
                  LossStep("hot-sun gain (negative: a gain)", "−Σ kT·ln(T_sun/T_cell)·J_i/q",
                           hot_sun),
                  LossStep("photon-spread gain (negative: a gain)",
                           "Σ (Eg,i − qVoc,rad,i)·J_i/q − Carnot − Boltzmann − hot-sun gain, "
                           "Voc,rad of the Boltzmann form",
                           deficit - degeneracy - carnot - boltzmann - hot_sun)]
        if perf.emission is not None:
            steps.append(LossStep("Bose–Einstein emission near the gap",
                                  "Σ (Voc,rad,Boltzmann − Voc,rad,exact)·J_i", degeneracy))
    else:
        steps.append(LossStep("Carnot and Boltzmann (radiative voltage deficit)",
                              "Σ (Eg,i − qVoc,rad,i)·J_i/q, qVoc,rad = kT·ln(J_L/J0,rad + 1) "
                              "(exact emission near the gap)",
                              deficit))
    middle = middle if terminals == 3 and m == 2 else 0.0
    p_out = float(np.sum(v_j * j)) - resistive - middle
    steps += [
        LossStep("non-radiative voltage loss", "Σ (Voc,rad,i − Voc,i)·J_i",
                 float(np.sum((voc_rad - voc) * j))),
        LossStep("operating point", "Σ (Voc,i − V_j,i)·J_i", float(np.sum((voc - v_j) * j))),
        LossStep("series resistance", "J²·R_s (2T) or Σ J_i²·R_s/m (3T, 4T)", resistive),
    ]
    if terminals == 3 and m == 2:
        steps.append(LossStep("middle contact", "R_m·J_m², J_m = J_f ∓ J_b (s-type: −, r-type: +)",
                              float(middle)))
    steps += [
        LossStep("output", "P_2T = J·(ΣV_j,i − J·R_s)" if series else "P = Σ J_i·V_i", p_out),
    ]
    mismatch = float(perf.p_4t - perf.p_2t) if series else None
    return LossBreakdown(float(irradiance), tuple(steps), int(terminals), mismatch)


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
