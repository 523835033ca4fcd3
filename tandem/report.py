"""Plain-dict summaries of results, in display units, for JSON, tables and files.

Keys carry their unit (``_pct``, ``_V``, ``_mA_cm2``, ``_W_m2``, ``_eV``, ``_K``).
"""

from __future__ import annotations

from .stack import SUBCELL_NAMES, DesignResult
from .units import MA_CM2_PER_A_M2

CAUTION = ("Modelling limits from detailed balance, not certified measurements; "
           "real devices fall short of them.")


def _r(x, digits=4):
    return None if x is None else round(float(x), digits)


def design_summary(result: DesignResult) -> dict:
    """The keys documented for ``tandem limit --json``."""
    perf = result.performance
    irr = perf.irradiance
    share = result.subcell_power()
    subcells = []
    for i, gap in enumerate(result.gaps_eV):
        subcells.append({
            "position": SUBCELL_NAMES[i] if result.n_subcells == 2 else "single",
            "gap_eV": _r(gap),
            "jsc_mA_cm2": _r(perf.j_light[i] * MA_CM2_PER_A_M2),
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
        "temperature_K": result.temperature_K,
        "irradiance_W_m2": _r(irr, 3),
        "spectrum": result.spectrum_name,
        "spectrum_notes": list(result.spectrum_notes),
        "subcells": subcells,
        "caution": CAUTION,
    }
    return summary
