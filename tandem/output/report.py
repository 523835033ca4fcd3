"""Plain-dict summaries of results, in display units, for JSON, tables and files.

Keys carry their unit (``_pct``, ``_V``, ``_mA_cm2``, ``_W_m2``, ``_eV``, ``_K``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable

import math

import numpy as np

from tandem.physics.stack import SUBCELL_NAMES
from tandem.physics.limit import DesignResult
from tandem.core.units import MA_CM2_PER_A_M2

if TYPE_CHECKING:
    from tandem.design.maps import GapMap
    from tandem.design.yields import HourlyDesign, YieldSweep

CAUTION = ("Modelling limits from detailed balance, not certified measurements; "
           "real devices fall short of them.")


def _r(x, digits=4):
    """Rounded for display; a quantity that is undefined (e.g. the fill factor of a cell
    without light) is None, never NaN, so JSON stays valid."""
    if x is None:
        return None
    x = float(x)
    return round(x, digits) if math.isfinite(x) else None


def _three_terminal_keys(result: DesignResult) -> dict:
    """The middle-contact connection and its two loads (``limit --terminals 3``)."""
    perf, el = result.performance, result.electrical
    assert perf.j_3t is not None and perf.v_3t is not None  # two subcells: computed
    jf, jb = perf.j_3t
    return {"efficiency_3t_pct": _r(100 * perf.efficiency_3t),
            "three_terminal": {
                "middle_contact": {"s": "series type", "r": "reverse type"}[el.middle_contact],
                "middle_resistance_ohm_cm2": el.middle_resistance_ohm_cm2,
                "front_load_V": _r(perf.v_3t[0]), "back_load_V": _r(perf.v_3t[1]),
                "front_current_mA_cm2": _r(jf * MA_CM2_PER_A_M2),
                "back_current_mA_cm2": _r(jb * MA_CM2_PER_A_M2),
                "middle_current_mA_cm2": _r((jf + jb if el.middle_contact == "r" else jf - jb)
                                            * MA_CM2_PER_A_M2)}}


def _string_keys(result: DesignResult) -> dict:
    """Voltage-matched strings of the stack's subcells, one entry per ratio (``--string-ratio``)."""
    perf = result.performance
    assert perf.p_vm is not None and perf.v_vm is not None
    return {"voltage_matched": [
        {"ratio": f"{m}:{n}", "efficiency_pct": _r(100 * perf.p_vm[k] / perf.irradiance),
         "front_V": _r(perf.v_vm[k, 0]), "back_V": _r(perf.v_vm[k, 1]),
         "string_V": _r(m * perf.v_vm[k, 0])}
        for k, (m, n) in enumerate(result.electrical.string_ratios)]}


def design_summary(result: DesignResult) -> dict:
    """The keys documented for ``tandem limit --json``.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> s = tandem.design_summary(tandem.detailed_balance_limit([1.34], flux, temperature_K=300.0))
    >>> s['efficiency_pct'], s['limiting_subcell']
    (33.6788, None)
    """
    perf = result.performance
    irr = perf.irradiance
    share = result.subcell_power()
    subcells = []
    for i, gap in enumerate(result.gaps_eV):
        subcells.append({
            "position": SUBCELL_NAMES[i] if result.n_subcells == 2 else "single",
            "gap_eV": _r(gap),
            # terminal values of the subcell's own circuit (equal to the photocurrent and the
            # diode's Voc without resistances); the photocurrent is what current matching uses
            "jsc_mA_cm2": _r(perf.jsc[i] * MA_CM2_PER_A_M2),
            "photocurrent_mA_cm2": _r(perf.j_light[i] * MA_CM2_PER_A_M2),
            "voc_V": _r(perf.voc[i]),
            "ff_pct": _r(100 * perf.ff_own[i], 3),
            "efficiency_pct": _r(100 * share[i] / irr),
            "ere": result.ere[i],
        })
    two = result.n_subcells == 2
    series = result.terminals == 2
    summary = {
        "efficiency_pct": _r(100 * result.efficiency),
        "power_W_m2": _r(result.power, 3),
        # A four-terminal stack has no single J-V curve: its stack Voc, Jsc and FF are null.
        "voc_V": _r(perf.voc_2t) if series else None,
        "jsc_mA_cm2": _r(perf.jsc_2t * MA_CM2_PER_A_M2) if series else None,
        "ff_pct": _r(100 * perf.ff_2t, 3) if series else None,
        "terminals": result.terminals if two else 1,
        "limiting_subcell": SUBCELL_NAMES[int(perf.limiting_index)] if two else None,
        "mismatch_pct": _r(100 * perf.mismatch, 3) if two else None,
        "efficiency_2t_pct": _r(100 * perf.efficiency_2t) if two else None,
        "efficiency_4t_pct": _r(100 * perf.efficiency_4t) if two else None,
        **(_three_terminal_keys(result) if two and result.terminals == 3 else {}),
        **(_string_keys(result) if two and result.electrical.string_ratios else {}),
        "temperature_K": result.temperature_K,
        "irradiance_W_m2": _r(irr, 3),
        "spectrum": result.spectrum_name,
        "spectrum_notes": list(result.spectrum_notes),
        "model_notes": list(result.model_notes),
        "subcells": subcells,
        "caution": CAUTION,
    }
    return summary


@dataclass(frozen=True)
class Column:
    """One column of the design tables: its key, its headings, its format and where it comes
    from. Adding a design-table column is one line in :data:`DESIGN_COLUMNS`: the JSON,
    the terminal tables, CSV, Markdown and LaTeX all read this list."""

    key: str  #: key in rows and JSON (unit in the name)
    label: str  #: heading in files ("front gap [eV]")
    short: str  #: heading in the terminal ("gap eV")
    fmt: str  #: format of one value
    value: Callable | None = None  #: configuration -> value (None: the study fills it)
    terminal: bool = True  #: shown in terminal tables
    compact: bool = True  #: kept when the terminal is narrow (the others need --wide or room)
    three: bool = False  #: only when three terminals rank the designs


def _limiting(c):
    from tandem.design.matching import subcell_name

    return subcell_name(int(c.performance.limiting_index))


#: A subcell whose photocurrent is below this share of the other's carries no current worth
#: matching (a back left in the dark by a front that absorbs its light): no mismatch, 2T Voc
#: or 2T fill factor is shown for it, where they printed 10¹⁵ % and numbers that moved with
#: the solver's rounding (a 2T FF of 88 or 80 % for a stack giving 0.00 %).
DARK_SHARE = 1e-9


def _lit(c, value):
    """``value`` for a design whose subcells both carry current, else None (see DARK_SHARE)."""
    j = c.performance.j_light
    return value if float(min(j)) > DARK_SHARE * float(max(j)) else None


DESIGN_COLUMNS = [
    Column("front_gap_eV", "front gap [eV]", "gap eV", "{:.3f}", lambda c: _r(c.front_gap_eV)),
    Column("front_composition", "front composition", "x", "{:.3f}",
           lambda c: _r(c.front_composition), terminal=False),
    Column("front_thickness_nm", "front [nm]", "front nm", "{:.0f}",
           lambda c: _r(c.front_thickness_nm, 1)),
    Column("matched_front_thickness_nm", "matched [nm]", "match nm", "{:.0f}",
           lambda c: _r(c.matched_front_thickness_nm, 1)),
    Column("back_thickness_um", "back [µm]", "back µm", "{:g}",
           lambda c: _r(c.back_thickness_nm / 1000.0, 4), compact=False),
    Column("jsc_front_mA_cm2", "Jsc front [mA/cm²]", "Jsc front", "{:.2f}",
           lambda c: _r(c.performance.j_light[0] * MA_CM2_PER_A_M2)),
    Column("jsc_back_mA_cm2", "Jsc back [mA/cm²]", "Jsc back", "{:.2f}",
           lambda c: _r(c.performance.j_light[1] * MA_CM2_PER_A_M2)),
    Column("mismatch_pct", "mismatch [%]", "mismatch %", "{:.2f}",
           lambda c: _r(_lit(c, 100 * c.performance.mismatch), 3), compact=False),
    Column("limiting_subcell", "limiting", "limiting", "{}", _limiting),
    Column("voc_2t_V", "Voc 2T [V]", "Voc 2T V", "{:.3f}",
           lambda c: _r(_lit(c, c.performance.voc_2t)), compact=False),
    Column("ff_2t_pct", "FF 2T [%]", "FF 2T %", "{:.1f}",
           lambda c: _r(_lit(c, 100 * c.performance.ff_2t), 3), compact=False),
    Column("efficiency_2t_pct", "2T [%]", "2T %", "{:.2f}",
           lambda c: _r(100 * c.performance.efficiency_2t)),
    Column("efficiency_3t_pct", "3T [%]", "3T %", "{:.2f}",
           lambda c: _r(100 * c.performance.efficiency_3t), three=True),
    Column("efficiency_4t_pct", "4T [%]", "4T %", "{:.2f}",
           lambda c: _r(100 * c.performance.efficiency_4t)),
]


def configuration_row(c, terminals: int = 2) -> dict:
    """One configuration as a row of :data:`DESIGN_COLUMNS` (display units); the
    three-terminal column only when three terminals rank the designs."""
    return {col.key: col.value(c) for col in DESIGN_COLUMNS
            if col.value is not None and (terminals == 3 or not col.three)}


def _absorber(a) -> dict:
    return {"key": a.key, "name": a.name, "gap_eV": _r(a.gap_eV),
            "tunable_gap_eV": [_r(g) for g in a.gap_range_eV] if a.tunable else None,
            "ere": a.ere, "ere_origin": a.ere_origin, "file": str(a.path)}


def match_summary(result, swapped=None, verdict=None, top: int = 10, tolerance_pct: float = 1.0) -> dict:
    """The keys documented for ``tandem match --json``.

    Examples
    --------
    >>> import tandem
    >>> study = tandem.match('gainp', 'gaas', sweep=tandem.Sweep(thickness_points=10))
    >>> s = tandem.match_summary(study.result)
    >>> s['front']['key'], s['terminals']
    ('gainp', 2)
    """
    from tandem.design.matching import outside_ranges, temperature_note, tolerance_windows
    from tandem.physics.checks import electrical_notes

    best = result.configurations[0]
    windows = tolerance_windows(result, tolerance_pct)
    cond = result.conditions
    summary = {
        "front": _absorber(result.design.front),
        "back": _absorber(result.design.back),
        "terminals": result.terminals,
        "configurations": [dict(configuration_row(c, result.terminals), outside_range=outside_ranges(
            result.design, c.front_gap_eV, c.front_thickness_nm, c.back_thickness_nm))
            for c in result.configurations[:top]],
        "matched_front_thickness_nm": (None if best.matched_front_thickness_nm is None
                                       else _r(best.matched_front_thickness_nm, 1)),
        "note": best.match_note if best.matched_front_thickness_nm is None else None,
        "best_4t": configuration_row(result.best_4t, result.terminals),
        "tolerance": {
            "loss_pct_abs": tolerance_pct,
            "front_thickness_window_nm": [_r(v, 1) for v in windows["front_thickness_window_nm"]],
            "front_gap_window_eV": (None if windows["front_gap_window_eV"] is None
                                    else [_r(v) for v in windows["front_gap_window_eV"]]),
        },
        "losses": {
            "reflectance": _loss(result.design.reflectance),
            "front_parasitic": _loss(result.design.front_parasitic),
            "interlayer_parasitic": _loss(result.design.interlayer_parasitic),
        },
        "spectrum": cond.photon_flux.name,
        "spectrum_notes": list(cond.photon_flux.notes),
        "irradiance_W_m2": _r(cond.photon_flux.irradiance, 3),
        "temperature_K": cond.temperature_K,
        "temperature_note": temperature_note(result.design, best.front_gap_eV, cond.temperature_K),
        "model_notes": list(electrical_notes(cond.electrical, result.design.front.refractive_index,
                                             cond.ideality, False))
                       + [n for n in (result.design.front.bulk_note(),
                                      result.design.back.bulk_note()) if n],
        "configurations_evaluated": result.n_evaluated,
        "caution": CAUTION,
    }
    if verdict is not None:
        summary["order"] = {
            "recommended_front": verdict.recommended_front,
            "given_order_is_better": verdict.user_order_is_better,
            "reason": verdict.reason,
        }
    if swapped is not None:
        summary["swapped"] = {
            "front": swapped.design.front.key,
            "back": swapped.design.back.key,
            "configurations": [configuration_row(c, swapped.terminals)
                               for c in swapped.configurations[:top]],
        }
    return summary


def _loss(value):
    import numpy as np

    arr = np.asarray(value)
    return _r(arr) if arr.ndim == 0 else "spectral"


def absorber_summary(a) -> dict:
    """One absorber's resolved parameters, for `tandem absorbers NAME` and manifests.

    Examples
    --------
    >>> import tandem
    >>> tandem.absorber_summary(tandem.load_absorber('silicon'))['gap_eV']
    1.12
    """
    from tandem.core.units import HC_EV_NM

    edge = a.edge
    out = {
        "key": a.key,
        "name": a.name,
        "description": a.description,
        "file": str(a.path),
        "gap_eV": _r(a.gap_eV),
        "gap_relation": None if a.relation is None else {
            "coefficients_eV": list(a.relation.coefficients_eV),
            "composition": a.relation.composition,
            "composition_range": list(a.relation.composition_range),
            "composition_default": a.relation.composition_default,
        },
        "gap_temperature_coefficient_meV_per_K": (None if a.gap_temperature_coefficient_eV_K is None
                                                  else a.gap_temperature_coefficient_eV_K * 1000),
        "edge_model": a.edge_model,
        "edge_origin": getattr(edge, "origin", "parametric"),
        "urbach_energy_meV": _r(edge.urbach_energy_eV * 1000, 3),
        "refractive_index": a.refractive_index,
        "light_trapping": a.light_trapping,
        "ere": a.ere,
        "ere_origin": a.ere_origin,
        "collection_length_nm": a.collection_length_nm,
        "recombination": None if a.bulk is None else {
            "auger": None if a.bulk.model is None else a.bulk.model.name,
            "srh_lifetime_s": a.bulk.srh_lifetime_s if math.isfinite(a.bulk.srh_lifetime_s) else None,
            "surface_recombination_velocity_cm_per_s": a.bulk.surface_velocity_cm_s,
            "intrinsic_density_per_cm3": a.bulk.n_i_cm3,
            "intrinsic_density_temperature_K": a.bulk.n_i_temperature_K,
            "doping_per_cm3": a.bulk.doping_cm3,
            "doping_type": None if a.bulk.doping_cm3 == 0 else ("n" if a.bulk.n_type else "p"),
        },
        "thickness_nm": a.thickness_nm,
        "thickness_range_nm": list(a.thickness_range_nm),
        "alpha_per_cm": {f"{wl} nm": float(f"{float(a.alpha(HC_EV_NM / wl)):.4g}")
                         for wl in (400, 500, 600, 700, 800, 900, 1000, 1100)},
        "sources": a.sources,
    }
    return out


def _string_map_keys(gap_map: GapMap, i: int, j: int) -> dict:
    """Voltage-matched strings on a map: each ratio at the optimum, and the most they recover
    over two terminals anywhere (the best ratio at each gap pair)."""
    if gap_map.efficiency_vm is None:
        return {}
    vm = 100 * gap_map.efficiency_vm
    gain = np.nanmax(vm, axis=-1) - 100 * gap_map.efficiency_2t
    return {"voltage_matched_at_optimum_pct": {f"{m}:{n}": round(float(vm[i, j, k]), 4)
                                               for k, (m, n) in enumerate(gap_map.string_ratios)},
            "largest_string_gain_over_2t_pct_abs": round(float(np.nanmax(gain)), 4)}


def map_summary(gap_map: GapMap, terminals: int, tolerance_pct: float) -> dict:
    """Optimum and tolerance windows of a map, in display units."""
    from tandem.design.matching import tolerance_window

    i, j = gap_map.optimum(terminals)
    eff = 100 * gap_map.efficiency(terminals)
    front_window = tolerance_window(gap_map.front_gaps, eff[:, j], tolerance_pct)
    back_window = (tolerance_window(gap_map.back_gaps, eff[i, :], tolerance_pct)
                   if gap_map.back_gaps.size > 1 else None)
    jf, jb = gap_map.j_front[i, j], gap_map.j_back[i, j]
    return {
        "optimum": {
            "front_gap_eV": round(float(gap_map.front_gaps[i]), 4),
            "back_gap_eV": round(float(gap_map.back_gaps[j]), 4),
            "efficiency_pct": round(float(eff[i, j]), 4),
            "terminals": terminals,
            "efficiency_2t_pct": round(float(100 * gap_map.efficiency_2t[i, j]), 4),
            "efficiency_4t_pct": round(float(100 * gap_map.efficiency_4t[i, j]), 4),
            **({"efficiency_3t_pct": round(float(eff[i, j]), 4)} if terminals == 3 else {}),
            "limiting_subcell": "front" if jf <= jb else "back",
            "mismatch_pct": round(float(100 * abs(jf - jb) / min(jf, jb)), 3),
        },
        "tolerance": {
            "loss_pct_abs": tolerance_pct,
            "front_gap_window_eV": [round(v, 4) for v in front_window],
            "back_gap_window_eV": None if back_window is None else [round(v, 4) for v in back_window],
        },
        **({"largest_3t_gain_over_2t_pct_abs": round(float(np.nanmax(
            100 * (gap_map.efficiency_3t - gap_map.efficiency_2t))), 4)} if terminals == 3 else {}),
        **_string_map_keys(gap_map, i, j),
        "grid_points": gap_map.grid_points,
        "valid_pairs": int(np.isfinite(gap_map.efficiency_2t).sum()),
        "spectrum": gap_map.spectrum,
        "irradiance_W_m2": round(gap_map.irradiance, 3),
        "temperature_K": gap_map.temperature_K,
        "caution": CAUTION,
    }


def connection_rows(sweep: YieldSweep, terminals: int = 2, ratios=()) -> list[dict]:
    """Energy of each connection at its own energy-optimal design: two and four terminals,
    three when asked (``terminals`` 3), voltage-matched strings for each of ``ratios``."""
    energies = [("2T (series)", sweep.energy_2t)]
    if terminals == 3 and sweep.energy_3t is not None:
        energies.append(("3T (middle contact)", sweep.energy_3t))
    energies.append(("4T (independent)", sweep.energy_4t))
    if sweep.energy_vm is not None:
        energies += [(f"voltage-matched {m}:{n}", sweep.energy_vm[..., k])
                     for k, (m, n) in enumerate(ratios)]
    rows = []
    for name, energy in energies:
        i, j = sweep.optimum_of(energy)
        rows.append({"connection": name, "energy_kWh_m2": round(float(energy[i, j]), 3),
                     "energy_weighted_efficiency_pct": round(100 * float(energy[i, j])
                                                            / sweep.insolation, 3),
                     "front_gap_eV": round(float(sweep.gaps[i]), 4),
                     "front_thickness_nm": round(float(sweep.thicknesses[j]), 1)})
    return rows


def _best_ratio(sweep: YieldSweep, ratios) -> str | None:
    """The string ratio whose voltage-matched energy is highest at its own optimum."""
    if not ratios or sweep.energy_vm is None:
        return None
    k = int(np.argmax([np.nanmax(sweep.energy_vm[..., k]) for k in range(len(ratios))]))
    return f"{ratios[k][0]}:{ratios[k][1]}"


def _source_notes(sweep: YieldSweep) -> list[str]:
    """The series' notes; a layer stack's own layers replace the cover's angular loss."""
    from tandem.design.yields import StackYield

    notes = list(sweep.series.notes)
    if not isinstance(sweep.design, StackYield):
        return notes
    from tandem.design.cover import is_cover_note
    from tandem.design.layerstack import stack_model_notes
    from tandem.design.stack_angles import stack_light_note

    return ([n for n in notes if not is_cover_note(n)] + [stack_light_note(sweep.series)]
            + stack_model_notes(sweep.design.stack))


def yield_summary(sweep: YieldSweep, best: HourlyDesign, terminals: int = 2, ratios=()) -> dict:
    """Totals and optima in display units (the `tandem yield --json` keys)."""
    i, j = sweep.optimum
    a, b = sweep.am15_optimum
    i4, j4 = sweep.optimum_4t
    e2, e4 = float(sweep.energy_2t[i, j]), float(sweep.energy_4t[i, j])
    months = best.times.month
    monthly = []
    for m in sorted(set(months)):
        sel = months == m
        monthly.append({"month": int(m), "energy_2t_kWh_m2": round(float(best.p_2t[sel] @ best.step_hours[sel]) / 1000, 3),
                           "energy_4t_kWh_m2": round(float(best.p_4t[sel] @ best.step_hours[sel]) / 1000, 3),
                           "insolation_kWh_m2": round(float(best.irradiance[sel] @ best.step_hours[sel]) / 1000, 3)})
    front_limits = float(np.sum(best.step_hours[best.j_front < best.j_back] * best.irradiance[best.j_front < best.j_back])
                         / max(np.sum(best.step_hours * best.irradiance), 1e-300))
    from tandem.design.matching import outside_ranges
    from tandem.design.yields import StackYield

    d = sweep.design  # a layer stack's yield names the stack and its other layers
    layers = ({"origin": d.origin, **{k: round(v, 1) for k, v in d.others.items()}}
              if isinstance(d, StackYield) else None)
    return {
        "front": d.front.key,
        "back": d.back.key,
        "stack": d.stack.key if isinstance(d, StackYield) else None,
        "stack_layers_nm": layers,
        "source": sweep.series.source,
        "source_notes": _source_notes(sweep),
        "steps": int(sweep.series.times.size),
        "insolation_kWh_m2": round(sweep.insolation, 3),
        "energy_optimum": {
            "front_gap_eV": round(float(sweep.gaps[i]), 4),
            "front_thickness_nm": round(float(sweep.thicknesses[j]), 1),
            "outside_range": outside_ranges(d, float(sweep.gaps[i]), float(sweep.thicknesses[j]),
                                            sweep.back_thickness_nm),
            "energy_2t_kWh_m2": round(e2, 3),
            "energy_4t_kWh_m2": round(e4, 3),
            "energy_weighted_efficiency_2t_pct": round(100 * e2 / sweep.insolation, 3),
            "energy_weighted_efficiency_4t_pct": round(100 * e4 / sweep.insolation, 3),
            "mismatch_loss_kWh_m2": round(e4 - e2, 3),
            "mismatch_loss_pct": round(100 * (e4 - e2) / e4, 3),
            "share_of_light_with_front_limiting_pct": round(100 * front_limits, 2),
        },
        "energy_optimum_4t": {
            "front_gap_eV": round(float(sweep.gaps[i4]), 4),
            "front_thickness_nm": round(float(sweep.thicknesses[j4]), 1),
            "energy_4t_kWh_m2": round(float(sweep.energy_4t[i4, j4]), 3),
        },
        "am15g_optimum": {
            "front_gap_eV": round(float(sweep.gaps[a]), 4),
            "front_thickness_nm": round(float(sweep.thicknesses[b]), 1),
            "efficiency_2t_pct": round(100 * float(sweep.efficiency_am15_2t[a, b]), 3),
            "energy_2t_kWh_m2": round(float(sweep.energy_2t[a, b]), 3),
            "energy_4t_kWh_m2": round(float(sweep.energy_4t[a, b]), 3),
        },
        "connections": connection_rows(sweep, terminals, ratios),
        "best_string_ratio": _best_ratio(sweep, ratios),
        "back_thickness_um": round(sweep.back_thickness_nm / 1000.0, 4),
        "monthly": monthly,
        "grid": {"front_gaps": int(sweep.gaps.size), "front_thicknesses": int(sweep.thicknesses.size)},
        "spectral_basis": {"rank": sweep.basis_rank,
                           "photocurrent_error_bound": float(f"{sweep.basis_bound:.2e}")},
        "caution": CAUTION,
    }


def stack_summary(result) -> dict:
    """A layer-stack match in display units (the `tandem match --stack --json` keys)."""
    m = result.match

    def point(p) -> dict:
        return {**{f"{k} [nm]": round(v, 1) for k, v in p.others.items()},
                "front_thickness_nm": round(p.front_thickness_nm, 1),
                "jsc_front_mA_cm2": round(float(p.j_light[0]) / 10, 3),
                "jsc_back_mA_cm2": round(float(p.j_light[1]) / 10, 3),
                "efficiency_2t_pct": round(100 * p.efficiency_2t, 3),
                "efficiency_4t_pct": round(100 * p.efficiency_4t, 3),
                "voc_2t_V": round(p.voc_2t, 4),
                "current_matched": p.matched}

    best = m.best
    losses = {k: round(v / 10, 3) for k, v in best.parasitic.items()}
    from tandem.design.layerstack import profile_figures, usable_from_eV

    return {
        "stack": m.stack.key, "title": m.stack.title,
        "front": m.stack.front.absorber.key, "back": m.stack.back.absorber.key,
        "layers": [{"name": x.name, "role": x.role, "thickness_nm": (list(x.sweep_nm) if x.sweep_nm
                    else x.thickness_nm), "coherent": x.coherent, "optical_constants": x.source}
                   for x in m.stack.layers],
        "best": point(best),
        "best_4t": point(m.best_4t),
        "matches": [point(p) for p in m.crossings],
        "parasitic_loss_mA_cm2": losses,
        "generation": [{"layer": name, "role": role, **{
            k: (None if v is None else float(f"{v:.5g}"))
            for k, v in profile_figures(*m.best_generation[name]).items()}}
            for role, name in (("front", m.stack.front.name), ("back", m.stack.back.name))],
        "reflected_or_escaped_mA_cm2": round(best.reflected / 10, 3),
        "transmitted_mA_cm2": round(best.transmitted / 10, 3),
        "losses_counted_above_eV": round(usable_from_eV(m.stack, m.temperature_K), 4),
        "optics_lite_matched_front_thickness_nm": (None if result.optics_lite_matched_nm is None
                                                   else round(result.optics_lite_matched_nm, 1)),
        "notes": list(m.notes),
        "spectrum": result.spectrum, "irradiance_W_m2": round(m.irradiance, 3),
        "temperature_K": m.temperature_K,
        "caution": CAUTION,
    }
