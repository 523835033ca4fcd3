"""Running a study: every front × back candidate pair swept, current-matched and ranked.

The scenario is translated once into the typed inputs every job takes
(:meth:`Scenario.light`, :meth:`Scenario.operating`, :meth:`Scenario.sweep`); the energies
use the same operating point as the ranking (its ideality, electrical options and losses).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Callable

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.design.matching import (
    Conditions,
    MatchResult,
    StackDesign,
    match_currents,
    tolerance_windows,
)
from tandem.optics.losses import loss_on_grid
from tandem.output.report import configuration_row
from tandem.physics.spectra import load_spectrum
from tandem.jobs.inputs import Sweep
from tandem.study.scenario import Scenario

@dataclass(frozen=True)
class StudyResult:
    scenario: Scenario
    spectrum_name: str
    spectrum_notes: tuple
    irradiance: float
    energy_range_eV: tuple
    rows: list[dict]  #: ranked design table, best first
    results: dict  #: (front, back) -> MatchResult
    skipped: list[str]
    sky: dict | None = None  #: the real-sky series the energies were computed under
    stacks: dict = field(default_factory=dict)  #: stack key -> layerstack.StackMatch


def run_study(scenario: Scenario, progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Every front × back candidate pair, swept and current-matched, ranked."""
    light, operating, sweep = scenario.light(), scenario.operating(), scenario.sweep()
    spectrum = light.spectrum()
    flux = light.photon_flux()
    e = flux.energy
    cond = Conditions(flux, operating.temperature_K, operating.ideality, operating.electrical)
    series = scenario.series()
    losses = [loss_on_grid(getattr(operating, k), e, f"stack.{k}")
              for k in ("reflectance", "front_parasitic", "interlayer_parasitic")]
    pairs = [(f, b) for f in scenario.fronts for b in scenario.backs if f.key != b.key]
    results, rows, skipped = {}, [], []
    for n, (front, back) in enumerate(pairs, 1):
        if front.gap_range_eV[1] <= back.gap_eV:
            skipped.append(f"{front.key} over {back.key}: the front gap ({front.gap_range_eV[1]:.3f} "
                           f"eV at most) is not above the back gap ({back.gap_eV:.3f} eV)")
            continue
        design = StackDesign(front, back, *losses)
        from tandem.design.matching import front_gap_grid

        backs = back_thicknesses_for(back, sweep.back_thicknesses_nm, skipped)
        if backs == []:
            continue
        gaps = front_gap_grid(front, sweep.front_gap_step_eV)
        gaps = gaps[gaps > back.gap_eV]
        result = match_currents(design, cond, gaps, backs, None,
                                sweep.thickness_points, operating.terminals)
        results[(front.key, back.key)] = result
        row = _row(result, scenario.tolerance_pct)
        row["front_file"] = scenario.absorber_records.get(front.key, {}).get("entry", front.key)
        row["back_file"] = scenario.absorber_records.get(back.key, {}).get("entry", back.key)
        best = result.configurations[0]
        if series is not None:
            from tandem.design.yields import hourly

            row.update(_energy_columns(hourly(
                design, series, best.front_gap_eV, best.front_thickness_nm,
                best.back_thickness_nm, operating.ideality, operating.electrical),
                operating.terminals))
        if "spread" in scenario.data:
            from tandem.design.scatter import scatter

            sc = scenario.data["spread"]
            spread = scatter(design, cond, best.front_gap_eV, best.front_thickness_nm,
                             best.back_thickness_nm,
                             float(sc.get("gap_sigma_eV", 0.01)) if front.edge.movable else 0.0,
                             float(sc.get("thickness_sigma_pct", 5.0)), int(sc.get("samples", 1000)),
                             int(sc.get("seed", 1)))
            row.update(_spread_columns(spread, scenario))
        rows.append(row)
        if progress:
            progress(n, len(pairs))
    for i, variant in enumerate(scenario.data.get("variants", []), 1):
        _run_variant(scenario, i, variant, rows, losses, cond, sweep)
    stacks = {}
    for key, stack in scenario.stacks().items():
        from tandem.design.layerstack import match_in_stack

        stacks[key] = match_in_stack(stack, flux, operating.temperature_K, sweep.thickness_points,
                                     operating.ideality, operating.electrical)
        row = _stack_row(key, stacks[key])
        _stack_site_and_spread(scenario, stacks[key], series, flux, operating, row)
        rows.append(row)
    key = f"efficiency_{scenario.terminals}t_pct"
    rows.sort(key=lambda r: r[key], reverse=True)
    for rank, row in enumerate(rows, 1):
        row["rank"] = rank
    if not rows:
        raise TandemInputError(f"scenario '{scenario.path}': no candidate pair has a front gap above "
                               "its back gap; check candidates.front and candidates.back")
    return StudyResult(scenario, spectrum.name, spectrum.notes, spectrum.integrated_irradiance,
                       spectrum.energy_range_eV, rows, results, skipped,
                       None if series is None else {"source": series.source,
                                                    "notes": _site_notes(series, stacks),
                                                    "steps": int(series.times.size),
                                                    "insolation_kWh_m2": round(series.insolation_kWh_m2, 3)},
                       stacks)


def _site_notes(series, stacks) -> list[str]:
    """The site's notes; stack rows take the light at its angles with their own layers."""
    notes = list(series.notes)
    if stacks:
        from tandem.design.stack_angles import stack_light_note

        notes.append(f"layer-stack rows: {stack_light_note(series)}")
    return notes


def _stack_row(key: str, m) -> dict:
    """A design-table row for a layer stack's best current match (optics of the whole stack;
    the scenario's flat losses do not apply, its layers are the losses)."""
    best, stack = m.best, m.stack
    j = np.asarray(best.j_light) / 10
    low = float(j.min())
    front = stack.front
    back = stack.back
    return {"rank": 0, "front": front.absorber.key, "back": back.absorber.key,
            "back_gap_eV": round(back.gap_eV or back.absorber.gap_eV, 4),
            "match_note": None if best.matched else "no current match in the swept thicknesses",
            "stack": key, "front_gap_eV": round(front.gap_eV or front.absorber.gap_eV, 4),
            "front_composition": None, "front_thickness_nm": round(best.front_thickness_nm, 1),
            "matched_front_thickness_nm": round(best.front_thickness_nm, 1) if best.matched else None,
            "back_thickness_um": round(stack.back.thickness_nm / 1000, 4),
            "jsc_front_mA_cm2": round(float(j[0]), 3), "jsc_back_mA_cm2": round(float(j[1]), 3),
            "mismatch_pct": round(100 * float(j.max() - low) / low, 3),
            "limiting_subcell": "front" if j[0] < j[1] else "back",
            "voc_2t_V": round(best.voc_2t, 4),
            "ff_2t_pct": round(100 * best.efficiency_2t * m.irradiance / (best.voc_2t * low * 10), 2),
            "efficiency_2t_pct": round(100 * best.efficiency_2t, 3),
            "efficiency_4t_pct": round(100 * best.efficiency_4t, 3),
            "front_thickness_window_lo_nm": None, "front_thickness_window_hi_nm": None,
            "front_gap_window_lo_eV": None, "front_gap_window_hi_eV": None,
            "front_file": front.absorber.key, "back_file": stack.back.absorber.key}


def back_thicknesses_for(back, thicknesses_nm, notes: list) -> list | None:
    """The scenario's back thicknesses that lie in ``back``'s declared range (None: its
    default). One list serves every back candidate, so a thickness outside one absorber's
    range is left out for that absorber alone, with a note; none left skips the pair."""
    if thicknesses_nm is None:
        return None
    lo, hi = back.thickness_range_nm
    inside = [d for d in thicknesses_nm if lo - 1e-9 <= d <= hi + 1e-9]
    outside = [d for d in thicknesses_nm if d not in inside]
    if outside:
        shown = ", ".join(f"{d:g}" for d in outside)
        note = (f"{back.key}: back thickness {shown} nm left out, outside its range "
                f"{lo:g}–{hi:g} nm" + ("" if inside else
                                       " — no thickness left, so its pairs are not compared"))
        if note not in notes:  # one list for every pair with this back
            notes.append(note)
    return inside


def _energy_columns(h, terminals: int = 2) -> dict:
    """A design's energy over the scenario's period, 2T and 4T (and 3T where three terminals
    rank) [kWh/m²] (row columns)."""
    out = {"energy_2t_kWh_m2": round(float(h.p_2t @ h.step_hours) / 1000, 3),
           "energy_4t_kWh_m2": round(float(h.p_4t @ h.step_hours) / 1000, 3)}
    if terminals == 3:
        out["energy_3t_kWh_m2"] = round(float(h.p_3t @ h.step_hours) / 1000, 3)
    return out


def _spread_columns(spread, scenario: Scenario) -> dict:
    """A design's fabrication-spread percentiles (and share at the target) as row columns."""
    st = spread.stats(scenario.terminals, scenario.data["spread"].get("target_pct"))
    out = {k: st[k] for k in ("percentile_10_pct", "median_pct", "percentile_90_pct")}
    if "share_at_or_above_target_pct" in st:
        out["share_at_target_pct"] = st["share_at_or_above_target_pct"]
    return out


def _stack_site_and_spread(scenario: Scenario, m, series, flux, operating, row: dict) -> None:
    """A stack row's energy at the scenario's site and its fabrication spread, as for pairs:
    the best design's films solved at every step's cell temperature, and every film's
    thickness drawn with the [spread] σ (the stack file fixes the gap: no gap spread)."""
    best, stack = m.best, m.stack
    if series is not None:
        from tandem.design.yields import StackYield, hourly

        design = StackYield(stack, best.others, "matched")
        row.update(_energy_columns(hourly(
            design, series, design.front_gap_eV, best.front_thickness_nm,
            design.back_thickness_nm, operating.ideality, operating.electrical)))
    if "spread" in scenario.data:
        from tandem.design.scatter import scatter_stack

        sc = scenario.data["spread"]
        spread = scatter_stack(stack, flux, operating.temperature_K, operating.ideality,
                               operating.electrical, best.front_thickness_nm, best.others,
                               float(sc.get("thickness_sigma_pct", 5.0)),
                               int(sc.get("samples", 1000)), int(sc.get("seed", 1)))
        row.update(_spread_columns(spread, scenario))


def _run_variant(scenario: Scenario, index: int, variant: dict, rows: list, losses, cond,
                 sweep: Sweep) -> None:
    """Every pair again under one variant (temperature, ERE, losses, spectrum): its best
    front gap, thickness and efficiency go into the row as a column group."""
    from tandem.design.matching import front_gap_grid

    flux = (load_spectrum(variant["source"]).photon_flux() if "source" in variant
            else cond.photon_flux)
    e = flux.energy
    losses_v = [loss_on_grid(variant[k], e, f"variants[{index}].{k}") if k in variant else
                (loss if "source" not in variant else
                 loss_on_grid(scenario.get("stack", k, 0.0), e, f"stack.{k}"))
                for k, loss in zip(("reflectance", "front_parasitic", "interlayer_parasitic"), losses)]
    cond_v = replace(cond, photon_flux=flux,
                     temperature_K=float(variant.get("temperature_K", cond.temperature_K)),
                     ideality=float(variant.get("ideality", cond.ideality)))
    ere = variant.get("ere")
    ere = [None, None] if ere is None else (ere * 2 if isinstance(ere, list) and len(ere) == 1
                                            else ere if isinstance(ere, list) else [ere, ere])
    ere = [variant.get("ere_front", ere[0]), variant.get("ere_back", ere[1])]
    by_pair = {(r["front"], r["back"]): r for r in rows if "stack" not in r}
    absorbers = {a.key: a for a in scenario.fronts + scenario.backs}
    key = f"efficiency_{scenario.terminals}t_pct"
    for (f_key, b_key), row in by_pair.items():
        front, back = absorbers[f_key], absorbers[b_key]
        if ere[0] is not None:
            front = replace(front, ere=float(ere[0]))
        if ere[1] is not None:
            back = replace(back, ere=float(ere[1]))
        gaps = front_gap_grid(front, sweep.front_gap_step_eV)
        result = match_currents(StackDesign(front, back, *losses_v), cond_v, gaps[gaps > back.gap_eV],
                                back_thicknesses_for(back, sweep.back_thicknesses_nm, []),
                                None, sweep.thickness_points, scenario.terminals)
        best = configuration_row(result.configurations[0], scenario.terminals)
        row[f"variant{index}_front_gap_eV"] = best["front_gap_eV"]
        row[f"variant{index}_front_thickness_nm"] = best["front_thickness_nm"]
        row[f"variant{index}_{key}"] = best[key]


def _row(result: MatchResult, tolerance_pct: float) -> dict:
    best = result.configurations[0]
    windows = tolerance_windows(result, tolerance_pct)
    row = {"rank": 0, "front": result.design.front.key, "back": result.design.back.key,
           "back_gap_eV": round(result.design.back.gap_eV, 4)}
    row.update(configuration_row(best, result.terminals))
    # why a row has no current match (the front limits at every thickness in range, ...)
    row["match_note"] = best.match_note if best.matched_front_thickness_nm is None else None
    lo, hi = windows["front_thickness_window_nm"]
    row["front_thickness_window_lo_nm"], row["front_thickness_window_hi_nm"] = round(lo, 1), round(hi, 1)
    gw = windows["front_gap_window_eV"] or (None, None)
    row["front_gap_window_lo_eV"], row["front_gap_window_hi_eV"] = (
        None if gw[0] is None else round(gw[0], 4), None if gw[1] is None else round(gw[1], 4))
    return row


