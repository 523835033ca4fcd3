"""tandem: design two-junction solar cells from the command line.

A thin layer: map options to the library's typed inputs, call one workflow function, render
its result with rich. No physics here. ``--json`` goes alone to stdout; errors, notes and
progress to stderr. The light and operating options are declared once (``cli_options``).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Optional

import typer

import tandem
from tandem.cli.options import (escape, flag_option, parse_gap, SHARED, Json, Large, Losses, Overwrite, Plot,  # noqa: F401
                                Quiet, Wide, build_light, build_operating, check_outputs,
                                design_columns, emit_json, energy_text, err, field_text, friendly,
                                given, out, over_scenario, parse_floats, parse_gap_option,
                                parse_range, parse_thickness, plain_option, progress_bar,
                                progress_callback, render_table, run_app, say, shared, write_plot)
from tandem.cli.render import show_breakdown, show_version
from tandem.core.errors import TandemInputError

app = typer.Typer(
    name="tandem",
    help="Design two-junction (tandem) solar cells: detailed-balance limits, current "
    "matching, band-gap maps. Results are modelling limits, not certified measurements.",
    no_args_is_help=True, pretty_exceptions_enable=False, add_completion=False)


@app.callback()
def _root(version: Annotated[Optional[bool], typer.Option(
        "--version", callback=show_version, is_eager=True, help="Show the version.")] = None):
    pass


# --------------------------------------------------------------------------------------
# Commands
# --------------------------------------------------------------------------------------

@app.command()
@friendly
@shared
def limit(gap_text: Annotated[list[str], typer.Argument(
        metavar="GAP [GAP2]",
        help="Band gap(s) in eV (1.7 or 1.7eV): one for a single junction, two for a stack "
             "(front first).", show_default=False)], plot: Plot = None, losses: Losses = None,
        overwrite: Overwrite = False, json_out: Json = False, *, o):
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Examples:

      tandem limit 1.34 --temperature 300

      tandem limit 1.73 1.12 --terminals 4 --ere 0.01

      tandem limit 1.34 -s blackbody --losses losses.png

      tandem limit 1.1 -s blackbody --concentration 1000 --json
    """
    check_outputs([plot, losses], overwrite, plot=True)
    gaps = [parse_gap(g, "GAP") for g in gap_text]
    result = tandem.limit(gaps, build_light(o), build_operating(o))
    s = result.summary()
    if plot:
        write_plot(result, plot, overwrite)
    title = "limit " + " / ".join(f"{g:g} eV" for g in gaps)
    if json_out:
        if losses:
            s["loss_breakdown"] = show_breakdown(result, losses, overwrite, title, json_out)
        return emit_json(s)
    two = len(s["subcells"]) == 2
    rows = s["subcells"] + ([{"position": "stack", "gap_eV": None, "jsc_mA_cm2": s["jsc_mA_cm2"],
                              "voc_V": s["voc_V"], "ff_pct": s["ff_pct"],
                              "efficiency_pct": s["efficiency_pct"]}] if two else [])
    kind = f"{s['terminals']}-terminal stack" if two else "single junction"
    out.print(render_table(f"Detailed-balance limit, {kind}", [
        ("", lambda r: r["position"]), ("gap eV", field_text("gap_eV", "{:.3f}", "")),
        ("Jsc mA/cm²", field_text("jsc_mA_cm2")), ("Voc V", field_text("voc_V", "{:.3f}")),
        ("FF %", field_text("ff_pct", "{:.1f}")), ("efficiency %", field_text("efficiency_pct"))], rows,
        "subcell rows: each subcell's share of the stack's power" if two else None))
    if two:
        verb = "limits the current" if s["terminals"] == 2 else "would limit in series"
        say(f"limiting subcell: {s['limiting_subcell']} {verb} (mismatch {s['mismatch_pct']:.2f} %); "
             f"2T {s['efficiency_2t_pct']:.2f} %, "
             + (f"3T {s['efficiency_3t_pct']:.2f} %, " if "efficiency_3t_pct" in s else "")
             + f"4T {s['efficiency_4t_pct']:.2f} %")
        if "three_terminal" in s:
            t = s["three_terminal"]
            say(f"three terminals ({t['middle_contact']}, middle contact {t['middle_resistance_ohm_cm2']:g} "
                f"Ω·cm²): front load {t['front_load_V']:.3f} V at {t['front_current_mA_cm2']:.2f} mA/cm², "
                f"back load {t['back_load_V']:.3f} V at {t['back_current_mA_cm2']:.2f} mA/cm², middle "
                f"contact {t['middle_current_mA_cm2']:.2f} mA/cm²")
        for vm in s.get("voltage_matched", []):
            say(f"voltage-matched strings {vm['ratio']} (front:back cells): {vm['efficiency_pct']:.2f} % "
                f"at {vm['string_V']:.3f} V a string (front {vm['front_V']:.3f} V, back {vm['back_V']:.3f} V)")
    say(f"spectrum: {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m²; cell {s['temperature_K']:g} K",
         *[f"note: {n}" for n in s["spectrum_notes"] + s["model_notes"]])
    if losses:
        show_breakdown(result, losses, overwrite, title, json_out)
    out.print(f"[dim]{escape(s['caution'])}[/]")


@app.command()
@friendly
def absorbers(name: Annotated[Optional[str], typer.Argument(
        help="A bundled absorber name or a .toml file; omit to list the bundled ones.",
        show_default=False)] = None, plot: Plot = None, overwrite: Overwrite = False,
        json_out: Json = False):
    """List the bundled absorber descriptions and layer stacks, or show one absorber.

    Examples:

      tandem absorbers

      tandem absorbers perovskite-wide --plot alpha.png
    """
    if name is None:
        from tandem.cli.render import list_bundled

        return list_bundled(json_out)
    from tandem.cli.render import show_absorber

    show_absorber(name, plot, overwrite, json_out)


@app.command()
@friendly
@shared
def match(front: Annotated[Optional[str], typer.Argument(help="Front (sunward) absorber: bundled "
                                               "name or .toml.", show_default=False, metavar="FRONT")] = None,
          back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False,
                                              metavar="BACK")] = None,
          stack: Annotated[Optional[str], plain_option(help="A layer stack (bundled name or .toml) instead "
                           "of FRONT BACK: thin-film interference and every layer's loss.")] = None,
          front_gaps: Annotated[Optional[str], plain_option(
              help="Front gaps LO:HI:STEP in eV at 25 °C (default: the tunable range).",
              metavar="LO:HI:STEP")] = None,
          front_thickness: Annotated[Optional[str], plain_option(
              help="Front thickness range THIN:THICK, e.g. 100nm:2um.", metavar="THIN:THICK")] = None,
          back_thickness: Annotated[Optional[str], plain_option(
              help="Back thickness(es), e.g. 160um or 100um,160um.", metavar="LIST")] = None,
          points: Annotated[int, plain_option(help="Front thicknesses per sweep (log-spaced).")] = 120,
          top: Annotated[int, plain_option(help="Configurations to show.")] = 8,
          tolerance: Annotated[float, plain_option(help="Loss in % absolute defining the windows.")] = 1.0,
          budget: Annotated[Optional[str], plain_option(
              help="With --stack: write where the photons go in the best design, per "
                   "wavelength, as CSV; as .nc (NetCDF) with each absorber's generation "
                   "profile too.", metavar="FILE.csv|.nc")] = None,
          plot: Plot = None, losses: Losses = None, overwrite: Overwrite = False,
          quiet: Quiet = False, large: Large = False, wide: Wide = False, json_out: Json = False,
          *, o):
    """Current-match a two-junction stack of real absorbers: gap, thicknesses, limiting cell.

    Examples:

      tandem match perovskite-wide silicon --plot match.png

      tandem match organic-wide organic-narrow --reflectance 0.04 --json

      tandem match gainp gaas --back-thickness 1um,2um,3um -t 4

      tandem match --stack wide-gap-on-silicon-wafer --budget photons.csv
    """
    if stack or not (front and back):
        from tandem.cli.render import stack_match

        if not stack or front or back:
            raise TandemInputError("give FRONT and BACK absorbers, or --stack FILE (not both)")
        return stack_match(stack, o, points, plot, budget, overwrite, quiet, json_out, wide, {
            "--front-gaps": front_gaps, "--front-thickness": front_thickness,
            "--back-thickness": back_thickness, "--losses": losses,
            "--top": given("top"), "--tolerance": given("tolerance")}, large)
    if budget:
        raise TandemInputError("--budget needs --stack: the photon budget of FRONT BACK is in "
                               "--plot and --json")
    sweep = tandem.Sweep(
        front_gaps_eV=parse_gap_option(front_gaps, "--front-gaps"), thickness_points=points,
        front_thickness_nm=None if not front_thickness else parse_range(
            front_thickness, "--front-thickness", lambda t: parse_thickness(t, "--front-thickness"))[:2],
        back_thicknesses_nm=None if not back_thickness else tuple(
            parse_thickness(t, "--back-thickness") for t in back_thickness.split(",")))
    check_outputs([plot, losses], overwrite, plot=True)
    with progress_bar(quiet or json_out, "sweeping") as bar:
        result = tandem.match(front, back, build_light(o), build_operating(o), sweep,
                              tolerance_pct=tolerance, top=top, progress=progress_callback(bar),
                              allow_large=large)
    s = result.summary()
    if plot:
        write_plot(result, plot, overwrite)
    title = f"{result.result.design.title}, the best configuration"
    if json_out:
        if losses:
            s["loss_breakdown"] = show_breakdown(result, losses, overwrite, title, json_out)
        return emit_json(s)
    f, b, best = s["front"], s["back"], s["configurations"][0]
    outside = [i for i, c in enumerate(s["configurations"], 1) if c["outside_range"]]
    out.print(render_table(f"{f['name']} over {b['name']}: best configurations ({s['terminals']}T ranking)",
                     [("#", lambda r: f"{r['rank']}*" if r["outside_range"] else r["rank"])]
                     + design_columns(rows=s["configurations"]),
                     [dict(c, rank=i) for i, c in enumerate(s["configurations"], 1)],
                     "Jsc in mA/cm²" + ("; * outside the absorbers' declared ranges"
                                        if outside else ""), wide))
    if outside:  # allowed by --outside-range, never silent: what lies outside, row by row
        say(*(f"* #{i}: " + "; ".join(s["configurations"][i - 1]["outside_range"])
              for i in outside))
    m = s["matched_front_thickness_nm"]
    b4, tol = s["best_4t"], s["tolerance"]
    dw, gw = tol["front_thickness_window_nm"], tol["front_gap_window_eV"]
    say(f"current-matched front thickness at {best['front_gap_eV']:.3f} eV: {m:.0f} nm" if m
         else f"no current match at {best['front_gap_eV']:.3f} eV: {s['note']}",
         f"limiting subcell of the best design: {best['limiting_subcell']} (mismatch "
         f"{best['mismatch_pct']:.2f} %)",
         f"best four-terminal: {b4['efficiency_4t_pct']:.2f} % at front gap {b4['front_gap_eV']:.3f} "
         f"eV, {b4['front_thickness_nm']:.0f} nm",
         f"within {tol['loss_pct_abs']:g} % abs of best: front thickness "
         f"{dw[0]:.0f}–{dw[1]:.0f} nm" + ("" if gw is None else f", front gap {gw[0]:.3f}–{gw[1]:.3f} eV"),
         f"order: {s['order']['reason']}")
    if not s["order"]["given_order_is_better"]:
        sw = s["swapped"]
        out.print(render_table(f"the better order: {sw['front']} in front",
                               design_columns(rows=sw["configurations"][:top]),
                         sw["configurations"][:top], wide=wide))
    say(*[f"note: {n}" for n in s["spectrum_notes"] + s["model_notes"]], s["temperature_note"],
         f"spectrum: {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m²; cell {s['temperature_K']:g} K; "
         f"{s['configurations_evaluated']:,} configurations")
    if losses:
        show_breakdown(result, losses, overwrite, title, json_out)
    out.print(f"[dim]{escape(s['caution'])}[/]")


@app.command("map")
@friendly
@shared
def gap_map(front: Annotated[Optional[str], plain_option("--front", help="Front gaps LO:HI:STEP in eV.",
                                                 show_default="1.4:2.3:0.01")] = None,
            back: Annotated[Optional[str], plain_option("--back", help="Back gaps LO:HI:STEP in eV, or one "
                                                "value.", show_default="0.8:1.5:0.01")] = None,
            front_absorber: Annotated[Optional[str], plain_option(
                help="Move this absorber's edge to each gap instead of a step.")] = None,
            back_absorber: Annotated[Optional[str], plain_option(help="Likewise for the back.")] = None,
            front_thickness: Annotated[Optional[str], plain_option(help="Front thickness with absorbers.")] = None,
            back_thickness: Annotated[Optional[str], plain_option(help="Back thickness with absorbers.")] = None,
            rematch: Annotated[bool, flag_option(help="With absorbers: re-match the front thickness at "
                                          "every gap pair.")] = False,
            mark: Annotated[Optional[str], plain_option(help="Absorbers to mark, comma-separated.")] = None,
            tolerance: Annotated[float, plain_option(help="Loss in % absolute defining the window.")] = 1.0,
            output: Annotated[str, plain_option("--output", "-o", help="Prefix of the files written "
                                        "(.png .svg .csv .parquet).")] = "gap-map",
            overwrite: Overwrite = False, quiet: Quiet = False, large: Large = False,
            json_out: Json = False, *, o):
    """Efficiency over front × back band gaps: contour map, tolerance window, tidy tables.

    Examples:

      tandem map

      tandem map --back 1.12 --output si-partner

      tandem map --front 1.5:2.0:0.01 --back 1.12 --front-absorber perovskite-wide
      --back-absorber silicon --rematch
    """
    from tandem.core.files import write_csv, write_parquet
    from tandem.output.plots import map_figures

    if not Path(output).name.strip(". "):
        raise TandemInputError(f"--output '{output}': give a file name prefix, e.g. gap-map")
    check_outputs([Path(output).with_suffix(x) for x in (".png", ".svg", ".csv", ".parquet")],
                  overwrite)
    backs = parse_gap_option(back, "--back", 0.01)
    marks = [(a.key, a.gap_eV) for a in (tandem.load_absorber(n.strip())
                                         for n in (mark.split(",") if mark else []))]
    with progress_bar(quiet or json_out, "mapping") as bar:
        result = tandem.gap_map(
            build_light(o), build_operating(o), parse_gap_option(front, "--front", 0.01), backs,
            front_absorber=front_absorber, back_absorber=back_absorber,
            front_thickness_nm=front_thickness and parse_thickness(front_thickness, "--front-thickness"),
            back_thickness_nm=back_thickness and parse_thickness(back_thickness, "--back-thickness"),
            rematch=rematch, tolerance_pct=tolerance, marks=marks, progress=progress_callback(bar),
            allow_large=large)
    s, table = result.summary(), result.to_frame()
    el = build_operating(o).electrical
    note = (f"three terminals, {el.middle_contact}-type: middle contact {el.middle_resistance_ohm_cm2:g} "
            f"Ω·cm², series {el.series_resistance_ohm_cm2:g} Ω·cm² (R_s/2 a circuit)"
            if o["terminals"] == 3 else None)
    written = map_figures(result.gap_map, o["terminals"], tolerance, marks, output, overwrite, {
        ".csv": lambda p: write_csv(table, p),
        ".parquet": lambda p: write_parquet(table, p)}, note=note)
    s["outputs"] = [str(p) for p in written]
    if json_out:
        return emit_json(s)
    opt, t = s["optimum"], s["tolerance"]
    fw, bw = t["front_gap_window_eV"], t["back_gap_window_eV"]
    say(f"optimum ({o['terminals']}T): {opt['efficiency_pct']:.2f} % at front {opt['front_gap_eV']:.3f} "
         f"eV / back {opt['back_gap_eV']:.3f} eV (2T {opt['efficiency_2t_pct']:.2f} %, 4T "
         f"{opt['efficiency_4t_pct']:.2f} %; limiting subcell {opt['limiting_subcell']}, mismatch "
         f"{opt['mismatch_pct']:.2f} %)",
         *([f"three terminals recover up to {s['largest_3t_gain_over_2t_pct_abs']:.2f} % abs over two "
            "(second panel of the figure)"] if o["terminals"] == 3 else []),
         *([f"voltage-matched strings recover up to {s['largest_string_gain_over_2t_pct_abs']:.2f} % abs "
            "over two (best ratio at each pair; last panel), at the optimum "
            + ", ".join(f"{k} {v:.2f} %" for k, v in s["voltage_matched_at_optimum_pct"].items())]
           if "largest_string_gain_over_2t_pct_abs" in s else []),
         f"within {tolerance:g} % abs of best: front gap {fw[0]:.3f}–{fw[1]:.3f} eV"
         + ("" if bw is None else f", back gap {bw[0]:.3f}–{bw[1]:.3f} eV"),
         f"{s['valid_pairs']:,} gap pairs computed (front above back, below degeneracy); {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m², cell "
         f"{s['temperature_K']:g} K",
         *[f"* outside the declared range (--outside-range): {x}" for x in s["outside_range"]],
         "wrote " + ", ".join(s["outputs"]))
    out.print(f"[dim]{escape(s['caution'])}[/]")


@app.command()
@friendly
def study(scenario: Annotated[Optional[str], typer.Argument(
        help="Bundled scenario name, scenario .toml, or an earlier study's manifest.json. "
        "Default: wide-gap-partner-for-silicon.", show_default=False)] = None,
        out_dir: Annotated[Optional[str], plain_option("--out", help="Study folder to write. Default: "
                                               "study-<scenario name>.")] = None,
        overwrite: Annotated[bool, flag_option(help="Replace an existing study folder (only one "
                                        "written by 'tandem study').")] = False,
        accept_edited: Annotated[bool, flag_option(help="Re-run a manifest whose checksum no longer "
                                            "matches (it was edited).")] = False,
        figures: Annotated[bool, flag_option(help="Write the figures.")] = True,
        list_all: Annotated[bool, flag_option("--list", help="List the bundled scenarios.")] = False,
        quiet: Quiet = False, wide: Wide = False, json_out: Json = False):
    """Run a whole design study and write its folder (tables, figures, manifest).

    The scenario file sets the light and operating point. Examples:

      tandem study

      tandem study low-cost-organic-pair --out organic

      tandem study study-wide-gap-partner-for-silicon/manifest.json --out rerun
    """
    from tandem.study.sources import bundled_scenarios, load_scenario
    from tandem.study.folders import check_study_target, write_study
    from tandem.study.tables import columns
    from tandem.study.run import run_study

    if list_all:
        return say(*[f"{n}: {load_scenario(n).data['question']}" for n in bundled_scenarios()])
    sc = load_scenario(scenario, accept_edited)
    if out_dir is not None and not out_dir.strip():
        raise TandemInputError("--out '': give a folder name, e.g. --out organic")
    folder = Path(out_dir or f"study-{sc.key}")
    check_study_target(folder, overwrite, sc.input_paths)  # refuse before the work, not after
    with progress_bar(quiet or json_out, f"study {sc.key}") as bar:
        result = run_study(sc, progress_callback(bar))
        written = write_study(result, folder, overwrite, figures)
    if json_out:
        return emit_json({"scenario": sc.key, "title": sc.data["title"], "folder": str(written),
                           "terminals": sc.terminals, "rows": result.rows, "skipped": result.skipped,
                           "spectrum": result.spectrum_name, "temperature_K": sc.temperature_K,
                           "irradiance_W_m2": round(result.irradiance, 3), "caution": tandem.CAUTION})
    cols = design_columns(columns(result), result.rows[: sc.top])
    say(sc.data["question"])
    out.print(render_table(f"{sc.data['title']} — ranked designs ({sc.terminals}T)", cols,
                     result.rows[: sc.top], "limiting: the subcell with the lower photocurrent", wide,
                     key_columns=3 + ("stack" in result.rows[0])))
    best = result.rows[0]
    say(*(f"#{r['rank']} has no current match: {r['match_note']}" for r in result.rows[: sc.top]
          if r.get("match_note")))
    say(f"best: {best['front']} at {best['front_gap_eV']:.3f} eV over {best['back']}; the "
         f"{best['limiting_subcell']} subcell limits the current (mismatch {best['mismatch_pct']:.2f} %)",
         *[f"skipped: {n}" for n in result.skipped],
         f"spectrum: {result.spectrum_name}, {result.irradiance:.2f} W/m²; cell {sc.temperature_K:g} K",
         f"wrote {written}/ (report.html, design-table.csv/.md/.tex, loss-breakdown.csv, figures/, manifest.json)")
    out.print(f"[dim]{escape(tandem.CAUTION)}[/]")


@app.command("spread")
@friendly
@shared
def fabrication_spread(
        front: Annotated[Optional[str], typer.Argument(help="Front absorber.", show_default=False)] = None,
        back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False)] = None,
        stack: Annotated[Optional[str], plain_option(help="A layer stack (bundled name or .toml) instead "
                                             "of FRONT BACK: every thin film's thickness spread.")] = None,
        gap: Annotated[Optional[float], plain_option(help="Design front gap in eV.")] = None,
        thickness: Annotated[Optional[str], plain_option(help="Design front thickness, e.g. 800nm.")] = None,
        back_thickness: Annotated[Optional[str], plain_option(help="Back thickness, e.g. 160um.")] = None,
        gap_sigma: Annotated[float, plain_option(help="Standard deviation of the front gap in eV.")] = 0.01,
        thickness_sigma: Annotated[float, plain_option(help="Standard deviation of the thickness in %.")] = 5.0,
        samples: Annotated[int, plain_option(help="Devices drawn.")] = 2000,
        seed: Annotated[int, plain_option(help="Random seed (same seed, same devices).")] = 1,
        target: Annotated[Optional[float], plain_option(help="Efficiency target in %.")] = None,
        plot: Plot = None, overwrite: Overwrite = False, large: Large = False,
        quiet: Quiet = False, json_out: Json = False, *, o):
    """How fabrication spread in gap and thickness spreads the efficiency of a design.

    Examples:

      tandem spread perovskite-wide silicon --gap 1.72 --thickness 1000nm --target 37.5

      tandem spread organic-wide organic-narrow --thickness-sigma 10 --json

      tandem spread --stack wide-gap-on-silicon-wafer --samples 500
    """
    check_outputs([plot], overwrite, plot=True)
    design_d = thickness and parse_thickness(thickness, "--thickness")
    if stack is not None:
        for name, value in (("FRONT and BACK", front or back), ("--gap", gap),
                            ("--back-thickness", back_thickness),
                            ("--gap-sigma", gap_sigma if given("gap_sigma") else None)):
            if value is not None:
                raise TandemInputError(f"{name} with --stack: the stack file sets the absorbers, "
                                       "their gaps and the wafer (its films' thicknesses are "
                                       "what spreads); drop it")
        with progress_bar(quiet or json_out, "devices") as bar:
            result = tandem.fabrication_spread_stack(
                stack, build_light(o), build_operating(o), front_thickness_nm=design_d,
                thickness_sigma_pct=thickness_sigma, samples=samples, seed=seed,
                target_pct=target, progress=progress_callback(bar), allow_large=large)
    elif front is None or back is None:
        raise TandemInputError("give FRONT and BACK absorbers, or --stack FILE")
    else:
        result = tandem.fabrication_spread(
            front, back, build_light(o), build_operating(o), front_gap_eV=gap,
            front_thickness_nm=design_d,
            back_thickness_nm=back_thickness and parse_thickness(back_thickness, "--back-thickness"),
            gap_sigma_eV=gap_sigma, thickness_sigma_pct=thickness_sigma, samples=samples, seed=seed,
            target_pct=target, allow_large=large)
    s = result.summary()
    if plot:
        from tandem.output.plots import save_figure

        s["outputs"] = [str(save_figure(result.plot(), plot, overwrite))]
    if json_out:
        return emit_json(s)
    cols = [(label, field_text(k)) for k, label in (
        ("nominal_pct", "nominal %"), ("mean_pct", "mean %"), ("std_pct", "std %"),
        ("percentile_10_pct", "10th percentile %"), ("median_pct", "median %"),
        ("percentile_90_pct", "90th percentile %"))]
    if target is not None:
        cols.append(("≥ target", field_text("share_at_or_above_target_pct", "{:.1f} %")))
    title = f"{s['front']} over {s['back']}"
    if s.get("stack"):
        title = f"stack {s['stack']} ({title})"
    out.print(render_table(f"Fabrication spread: {title}, {samples:,} devices "
                     f"({o['terminals']}T)", cols, [s]))
    if s.get("stack"):
        design = (f"design ({s['nominal_origin']}): front {s['front_thickness_nm']:.0f} nm, "
                  + ", ".join(f"{k} {v:g} nm" for k, v in s["layers_nm"].items())
                  + f", each ± {thickness_sigma:g} %; gap {s['front_gap_eV']:.3f} eV fixed by "
                  f"the stack file; seed {seed}")
    else:
        design = (f"design: front gap {s['front_gap_eV']:.3f} eV ± {gap_sigma:g} eV, thickness "
                  f"{s['front_thickness_nm']:.0f} nm ± {thickness_sigma:g} %; seed {seed}")
    say(design, *[f"* outside the declared range (--outside-range): {x}" for x in
                  s.get("outside_range", [])], *[f"wrote {p}" for p in s.get("outputs", [])])
    out.print(f"[dim]{escape(tandem.CAUTION)}[/]")


from tandem.cli.energy_yield import energy_yield  # noqa: E402  (commands in modules of their own)
from tandem.cli.eqe import eqe  # noqa: E402
from tandem.cli.region import region  # noqa: E402

app.command("yield")(friendly(shared(energy_yield)))
app.command("eqe")(friendly(shared(eqe)))
app.command("region")(friendly(shared(region)))


def main() -> None:
    """Console entry point (``tandem``): framework errors, too, are one line and exit 2."""
    hidden = sys.argv[1:2] != ["region"] and hide_dask()
    try:
        run_app(app)
    finally:  # called in a Python process that goes on (a test), dask is back afterwards
        if hidden and "dask" in sys.modules and sys.modules["dask"] is None:
            del sys.modules["dask"]


def hide_dask() -> bool:
    """Make dask look uninstalled to this process (unless it is already imported); whether
    it did.

    xarray imports dask.array when it builds its first dataset (0.6 s of CPU) and
    dask.distributed when it writes netCDF (0.2 s) whenever dask is installed, though tandem's
    datasets hold numpy arrays; only ``tandem region`` uses dask, so a command line's process
    running anything else hides it, as if not installed. The library never does (a Python
    session's own xarray work may want dask, and xarray keeps the answer)."""
    if "dask" in sys.modules:
        return False
    sys.modules["dask"] = None  # type: ignore[assignment]  # import dask → ImportError
    return True
