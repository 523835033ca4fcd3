"""The study's design table in every format: columns, Markdown, LaTeX and the loss table.
"""

from __future__ import annotations

from tandem.output.report import CAUTION, DESIGN_COLUMNS, Column
from tandem.study.run import StudyResult
from tandem.study.scenario import Scenario


def variant_columns(scenario: Scenario) -> list:
    """One column group per [[variants]] entry: its best front gap, thickness, efficiency."""
    key = f"efficiency_{scenario.terminals}t_pct"
    t = f"{scenario.terminals}T"
    out = []
    for i, v in enumerate(scenario.data.get("variants", []), 1):
        name = v["name"]
        out += [Column(f"variant{i}_front_gap_eV", f"{name}: front gap [eV]", f"{name} gap eV",
                       "{:.3f}"),
                Column(f"variant{i}_front_thickness_nm", f"{name}: front thickness [nm]",
                       f"{name} nm", "{:.0f}", compact=False),
                Column(f"variant{i}_{key}", f"{name}: {t} [%]", f"{name} {t} %", "{:.2f}")]
    return out


TABLE_COLUMNS = ([Column("rank", "rank", "#", "{}"), Column("front", "front", "front", "{}"),
                  Column("back", "back", "back", "{}"),
                  Column("back_gap_eV", "back gap [eV]", "back eV", "{:.3f}", compact=False)]
                 + [c for c in DESIGN_COLUMNS if c.key != "front_composition" and not c.three]
                 + [Column("match_note", "why no current match", "no match because", "{}",
                           terminal=False)]
                 + [Column("front_thickness_window_lo_nm", "thickness window from [nm]", "window from nm",
                           "{:.0f}", compact=False),
                    Column("front_thickness_window_hi_nm", "thickness window to [nm]", "window to nm",
                           "{:.0f}", compact=False),
                    Column("front_gap_window_lo_eV", "gap window from [eV]", "gap from eV", "{:.3f}",
                           terminal=False),
                    Column("front_gap_window_hi_eV", "gap window to [eV]", "gap to eV", "{:.3f}",
                           terminal=False),
                    Column("front_file", "front file", "front file", "{}", terminal=False),
                    Column("back_file", "back file", "back file", "{}", terminal=False)])
OPTIONAL_COLUMNS = [
    Column("energy_2t_kWh_m2", "energy 2T [kWh/m²]", "2T kWh/m²", "{:.1f}"),
    Column("energy_3t_kWh_m2", "energy 3T [kWh/m²]", "3T kWh/m²", "{:.1f}"),
    Column("energy_4t_kWh_m2", "energy 4T [kWh/m²]", "4T kWh/m²", "{:.1f}"),
    Column("percentile_10_pct", "10th percentile [%]", "10th pct %", "{:.2f}"),
    Column("median_pct", "median [%]", "median %", "{:.2f}"),
    Column("percentile_90_pct", "90th percentile [%]", "90th pct %", "{:.2f}"),
    Column("share_at_target_pct", "at target [%]", "at target %", "{:.1f}"),
]


def columns(study) -> list:
    """The table's columns: the fixed ones and those the scenario's options produced."""
    stack = [Column("stack", "layer stack", "stack", "{}")] if study.stacks else []
    three = [c for c in DESIGN_COLUMNS if c.three] if study.scenario.terminals == 3 else []
    at = next(i for i, c in enumerate(TABLE_COLUMNS) if c.key == "efficiency_4t_pct")
    return (TABLE_COLUMNS[:3] + stack + TABLE_COLUMNS[3:at] + three + TABLE_COLUMNS[at:]
            + [c for c in OPTIONAL_COLUMNS if c.key in study.rows[0]]
            + variant_columns(study.scenario))


def _cell(row, key, fmt):
    v = row.get(key)
    return "—" if v is None or v == "" else fmt.format(v)


def markdown_table(study: StudyResult) -> str:
    cols = columns(study)
    head = [c.label for c in cols]
    lines = [f"# {study.scenario.data['title']}", "",
             study.scenario.data["question"], "",
             "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for row in study.rows:
        lines.append("| " + " | ".join(_cell(row, c.key, c.fmt) for c in cols) + " |")
    tol = study.scenario.tolerance_pct
    lines += ["", f"Windows: front thickness and front gap keeping efficiency within {tol:g} % "
              "abs of best.", f"Spectrum: {study.spectrum_name}, "
              f"{study.irradiance:.2f} W/m²; cell {study.scenario.temperature_K:g} K."]
    if study.sky:
        lines += [f"Energy: {study.sky['source']}, {study.sky['steps']} steps, "
                  f"{study.sky['insolation_kWh_m2']:.1f} kWh/m² on the module plane."]
    if "spread" in study.scenario.data:
        sc = study.scenario.data["spread"]
        lines += [f"Fabrication spread: front gap σ = {sc.get('gap_sigma_eV', 0.01):g} eV, thickness σ = "
                  f"{sc.get('thickness_sigma_pct', 5.0):g} %, {sc.get('samples', 1000)} samples."]
    lines += ["",
              f"*{CAUTION}*", ""]
    return "\n".join(lines)


def _latex_escape(text: str) -> str:
    for a, b in (("\\", r"\textbackslash{}"), ("&", r"\&"), ("%", r"\%"), ("_", r"\_"),
                 ("#", r"\#"), ("µ", r"$\mu$"), ("²", r"$^2$"), ("–", "--"), ("—", "---")):
        text = text.replace(a, b)
    return text


def latex_table(study: StudyResult) -> str:
    """The design table for a LaTeX document: booktabs rules, in two parts that each fit a
    portrait page (needs ``\\usepackage{booktabs}``), windows included."""
    cols = [c for c in columns(study) if not c.key.endswith("_file")]
    key = cols[:1]  # the rank ties the two parts together
    half = (len(cols) + 1) // 2
    parts = [cols[:half], key + cols[half:]]
    lines = [r"\begin{table}", r"\centering", r"\small"]
    for i, part in enumerate(parts):
        lines += [r"\begin{tabular}{" + "".join("l" if c.fmt == "{}" else "r" for c in part) + "}",
                  r"\toprule", " & ".join(_latex_escape(c.label) for c in part) + r" \\",
                  r"\midrule"]
        for row in study.rows:
            lines.append(" & ".join(_latex_escape(_cell(row, c.key, c.fmt)) for c in part)
                         + r" \\")
        lines += [r"\bottomrule", r"\end{tabular}"]
        if i == 0:
            lines += [r"\par\medskip"]
    windows = (f"Windows: front thickness and gap keeping efficiency within "
               f"{study.scenario.tolerance_pct:g} % abs of best.")
    lines += [r"\caption{" + _latex_escape(f"{study.scenario.data['title']}. {windows} {CAUTION}")
              + "}", r"\end{table}", ""]
    return "\n".join(lines)


def loss_table(study: StudyResult):
    """Every design row's loss breakdown, one line per step (W/m² and % of the incident); a
    two-terminal design's current-mismatch cost (P_4T − P_2T, not a step) in its own column."""
    import pandas as pd

    from tandem.design.breakdown import match_breakdown

    lines = []
    for row in study.rows:
        if "stack" in row:  # a stack's losses are its layers: see its photon-budget figure
            continue
        b = match_breakdown(study.results[(row["front"], row["back"])])
        mismatch = None if b.mismatch_W_m2 is None else round(b.mismatch_W_m2, 4)
        for step in b.rows():
            lines.append({"rank": row["rank"], "front": row["front"], "back": row["back"],
                          "step": step["step"], "power_W_m2": step["power_W_m2"],
                          "share_pct": step["share_pct"], "equation": step["equation"],
                          "mismatch_beside_W_m2": mismatch})
    return pd.DataFrame(lines)


