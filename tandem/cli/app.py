"""tandem: design two-junction solar cells from the command line.

A thin layer: map options to the library's typed inputs, call one workflow function, render
its result with rich. No physics here. ``--json`` goes alone to stdout; errors, notes and
progress to stderr. The light and operating options are declared once (``cli_options``).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer
from rich.markup import escape

import tandem
from tandem.cli.options import (SHARED, Json, Large, Losses, Wide, design_columns, Overwrite, Plot, Quiet, progress_callback,  # noqa: F401
                                emit_json, field_text, parse_floats, parse_gap_option, build_light, build_operating, plain_option,
                                progress_bar, parse_range, say, render_table, parse_thickness, write_plot,
                                check_outputs, energy_text, err, friendly, out, run_app, shared)
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
def limit(gaps: Annotated[list[float], typer.Argument(
        help="Band gap(s) in eV: one for a single junction, two for a stack (front first).",
        show_default=False)], plot: Plot = None, losses: Losses = None,
        overwrite: Overwrite = False, json_out: Json = False, *, o):
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Examples:

      tandem limit 1.34 --temperature 300

      tandem limit 1.73 1.12 --terminals 4 --ere 0.01

      tandem limit 1.34 -s blackbody --losses losses.png

      tandem limit 1.1 -s blackbody --concentration 1000 --json
    """
    check_outputs([plot, losses], overwrite, plot=True)
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
             f"2T {s['efficiency_2t_pct']:.2f} %, 4T {s['efficiency_4t_pct']:.2f} %")
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
          plot: Plot = None, losses: Losses = None, overwrite: Overwrite = False,
          quiet: Quiet = False, large: Large = False, wide: Wide = False, json_out: Json = False,
          *, o):
    """Current-match a two-junction stack of real absorbers: gap, thicknesses, limiting cell.

    Examples:

      tandem match perovskite-wide silicon --plot match.png

      tandem match organic-wide organic-narrow --reflectance 0.04 --json

      tandem match gainp gaas --back-thickness 1um,2um,3um -t 4

      tandem match --stack wide-gap-on-silicon-wafer
    """
    if stack or not (front and back):
        from tandem.cli.render import stack_match

        if not stack or front or back:
            raise TandemInputError("give FRONT and BACK absorbers, or --stack FILE (not both)")
        return stack_match(stack, o, points, plot, overwrite, quiet, json_out, wide, {
            "--front-gaps": front_gaps, "--front-thickness": front_thickness,
            "--back-thickness": back_thickness})
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
    title = f"{front} over {back}, the best configuration"
    if json_out:
        if losses:
            s["loss_breakdown"] = show_breakdown(result, losses, overwrite, title, json_out)
        return emit_json(s)
    f, b, best = s["front"], s["back"], s["configurations"][0]
    out.print(render_table(f"{f['name']} over {b['name']}: best configurations ({s['terminals']}T ranking)",
                     [("#", lambda r: r["rank"])] + design_columns(),
                     [dict(c, rank=i) for i, c in enumerate(s["configurations"], 1)],
                     "Jsc in mA/cm²", wide))
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
        out.print(render_table(f"the better order: {sw['front']} in front", design_columns(),
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
            rematch: Annotated[bool, plain_option(help="With absorbers: re-match the front thickness at "
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
    from tandem.design.maps import DEFAULT_BACK, DEFAULT_FRONT
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
            build_light(o), build_operating(o), parse_gap_option(front, "--front", 0.01) or DEFAULT_FRONT,
            backs if backs or front_absorber else DEFAULT_BACK,
            front_absorber=front_absorber, back_absorber=back_absorber,
            front_thickness_nm=front_thickness and parse_thickness(front_thickness, "--front-thickness"),
            back_thickness_nm=back_thickness and parse_thickness(back_thickness, "--back-thickness"),
            rematch=rematch, tolerance_pct=tolerance, marks=marks, progress=progress_callback(bar),
            allow_large=large)
    s, table = result.summary(), result.to_frame()
    written = map_figures(result.gap_map, o["terminals"], tolerance, marks, output, overwrite, {
        ".csv": lambda p: write_csv(table, p),
        ".parquet": lambda p: write_parquet(table, p)})
    s["outputs"] = [str(p) for p in written]
    if json_out:
        return emit_json(s)
    opt, t = s["optimum"], s["tolerance"]
    fw, bw = t["front_gap_window_eV"], t["back_gap_window_eV"]
    say(f"optimum ({o['terminals']}T): {opt['efficiency_pct']:.2f} % at front {opt['front_gap_eV']:.3f} "
         f"eV / back {opt['back_gap_eV']:.3f} eV (2T {opt['efficiency_2t_pct']:.2f} %, 4T "
         f"{opt['efficiency_4t_pct']:.2f} %; limiting subcell {opt['limiting_subcell']}, mismatch "
         f"{opt['mismatch_pct']:.2f} %)",
         f"within {tolerance:g} % abs of best: front gap {fw[0]:.3f}–{fw[1]:.3f} eV"
         + ("" if bw is None else f", back gap {bw[0]:.3f}–{bw[1]:.3f} eV"),
         f"{s['valid_pairs']:,} gap pairs computed (front above back, below degeneracy); {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m², cell "
         f"{s['temperature_K']:g} K", "wrote " + ", ".join(s["outputs"]))
    out.print(f"[dim]{escape(s['caution'])}[/]")


@app.command()
@friendly
def study(scenario: Annotated[Optional[str], typer.Argument(
        help="Bundled scenario name, scenario .toml, or an earlier study's manifest.json. "
        "Default: wide-gap-partner-for-silicon.", show_default=False)] = None,
        out_dir: Annotated[Optional[str], plain_option("--out", help="Study folder to write. Default: "
                                               "study-<scenario name>.")] = None,
        overwrite: Annotated[bool, plain_option(help="Replace an existing study folder (only one "
                                        "written by 'tandem study').")] = False,
        accept_edited: Annotated[bool, plain_option(help="Re-run a manifest whose checksum no longer "
                                            "matches (it was edited).")] = False,
        figures: Annotated[bool, plain_option(help="Write the figures.")] = True,
        list_all: Annotated[bool, plain_option("--list", help="List the bundled scenarios.")] = False,
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
    cols = design_columns(columns(result))
    say(sc.data["question"])
    out.print(render_table(f"{sc.data['title']} — ranked designs ({sc.terminals}T)", cols,
                     result.rows[: sc.top], "limiting: the subcell with the lower photocurrent", wide))
    best = result.rows[0]
    say(f"best: {best['front']} at {best['front_gap_eV']:.3f} eV over {best['back']}; the "
         f"{best['limiting_subcell']} subcell limits the current (mismatch {best['mismatch_pct']:.2f} %)",
         *[f"skipped: {n}" for n in result.skipped],
         f"spectrum: {result.spectrum_name}, {result.irradiance:.2f} W/m²; cell {sc.temperature_K:g} K",
         f"wrote {written}/ (design-table.csv/.md/.tex, loss-breakdown.csv, figures/, manifest.json)")
    out.print(f"[dim]{escape(tandem.CAUTION)}[/]")


@app.command("yield")
@friendly
@shared
def energy_yield(
        front: Annotated[Optional[str], typer.Argument(help="Front absorber (default: the "
                                                       "scenario's first).", show_default=False)] = None,
        back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False)] = None,
        scenario: Annotated[Optional[str], plain_option(help="Take site, weather, losses and absorbers from "
                                                "this scenario.")] = None,
        latitude: Annotated[Optional[float], plain_option(help="Site latitude in ° north.")] = None,
        longitude: Annotated[Optional[float], plain_option(help="Site longitude in ° east.")] = None,
        altitude: Annotated[float, plain_option(help="Site altitude in m.")] = 0.0,
        tilt: Annotated[float, plain_option(help="Module tilt in °.")] = 30.0,
        azimuth: Annotated[float, plain_option(help="Module azimuth in ° from north (180 = south).")] = 180.0,
        timezone: Annotated[Optional[str], plain_option(help="IANA time zone of the site (default: the "
                                                "standard time of its longitude).")] = None,
        ambient: Annotated[str, plain_option(help="Ambient temperature without weather, e.g. 20C.",
                                     metavar="TEMP")] = "20C",
        period: Annotated[str, plain_option(help="day:YYYY-MM-DD, month:YYYY-MM or year:YYYY.")] = "year:2026",
        step: Annotated[float, plain_option(help="Time step of clear-sky runs in minutes.")] = 60.0,
        weather: Annotated[Optional[str], plain_option(help="Typical-year weather file (EPW or TMY3).")] = None,
        spectra: Annotated[Optional[str], plain_option(help="Folder of measured spectra.")] = None,
        front_gaps: Annotated[Optional[str], plain_option(help="Front gaps LO:HI:STEP in eV.")] = None,
        front_thickness: Annotated[Optional[str], plain_option(help="Front thickness range THIN:THICK.")] = None,
        points: Annotated[int, plain_option(help="Front thicknesses in the sweep.")] = 16,
        back_thickness: Annotated[Optional[str], plain_option(help="Back thickness, e.g. 160um.")] = None,
        output: Annotated[str, plain_option("--output", "-o", help="Prefix of the figures and data files.")] = "yield",
        overwrite: Overwrite = False, quiet: Quiet = False, large: Large = False,
        json_out: Json = False, *, o):
    """Energy over a day, month or year under real skies: 2T vs 4T, energy-optimal design.

    Examples:

      tandem yield --scenario perovskite-silicon-rooftop

      tandem yield perovskite-wide silicon --latitude 40 --longitude -105 --timezone Etc/GMT+7
    """
    import numpy as np

    from tandem.jobs.inputs import parse_temperature
    from tandem.jobs.energy_yield import at_cell_temperature, scenario_yield_inputs, site_series

    if not Path(output).name.strip(". "):
        raise TandemInputError(f"--output '{output}': give a file name prefix, e.g. yield")
    check_outputs([Path(output).parent / f"{Path(output).name}{x}"
                   for x in ("-day.png", "-monthly.png", "-map.png", "-energy.nc",
                             "-series.parquet")], overwrite)
    operating, back_d = build_operating(o), back_thickness and parse_thickness(back_thickness, "--back-thickness")
    if scenario is not None:
        from tandem.study.sources import load_scenario

        series, a_front, a_back, operating, sc_back = scenario_yield_inputs(load_scenario(scenario),
                                                                            operating)
        a_front, a_back, back_d = front or a_front, back or a_back, back_d or sc_back
    elif front is None or back is None or latitude is None or longitude is None:
        raise TandemInputError("give FRONT and BACK absorbers with --latitude and --longitude, "
                               "or --scenario")
    else:
        if timezone is None:  # the site's own standard time, never UTC by default
            timezone = f"Etc/GMT{-round(longitude / 15):+d}" if round(longitude / 15) else "UTC"
        site = tandem.Site("site", latitude, longitude, altitude, tilt, azimuth, timezone,
                           ambient_temperature_C=parse_temperature(ambient, "ambient temperature")
                           - 273.15)
        series, a_front, a_back = site_series(site, weather=weather, spectra=spectra, period=period,
                                              step_minutes=step, allow_large=large), front, back
    if o["temperature"] is not None:  # a fixed cell temperature instead of the SAPM model
        series = at_cell_temperature(series, o["temperature"])
    a_front = tandem.load_absorber(a_front) if isinstance(a_front, str) else a_front
    lo, hi, *st = parse_range(front_gaps, "--front-gaps") if front_gaps else (None, None)
    thick = (parse_range(front_thickness, "--front-thickness",
                    lambda t: parse_thickness(t, "--front-thickness"))[:2] if front_thickness
             else a_front.thickness_range_nm)
    if not 2 <= points <= 400:
        raise TandemInputError(f"--points {points}: give 2 to 400")
    with progress_bar(quiet or json_out, "energy yield") as bar:
        result = tandem.energy_yield(
            a_front, a_back, series, operating, back_thickness_nm=back_d, reference=build_light(o),
            front_gaps_eV=None if lo is None else tandem.design.maps.gap_axis(
                lo, hi, st[0] if st else 0.02, "--front-gaps"),
            front_thicknesses_nm=np.geomspace(thick[0], thick[1], points), progress=progress_callback(bar),
            allow_large=large)
    s = result.summary()
    s["outputs"] = [str(p) for p in result.write(output, overwrite)]
    if json_out:
        return emit_json(s)
    eo = s["energy_optimum"]
    out.print(render_table(f"Energy yield: {s['front']} over {s['back']}", [
        ("design", lambda r: r["design"]), ("front gap eV", field_text("front_gap_eV", "{:.3f}")),
        ("front nm", field_text("front_thickness_nm", "{:.0f}")),
        ("2T energy", lambda r: energy_text(r["energy_2t_kWh_m2"])),
        ("4T energy", lambda r: energy_text(r["energy_4t_kWh_m2"])),
        ("2T η_E %", field_text("energy_weighted_efficiency_2t_pct")),
        ("AM1.5G 2T %", field_text("efficiency_am15g_2t_pct"))], result.design_rows(),
        "η_E: energy-weighted efficiency (energy ÷ plane-of-array insolation)"))
    e4 = s["energy_optimum_4t"]
    say(f"{s['source']}: {s['steps']:,} steps, {energy_text(s['insolation_kWh_m2'])} on the module plane; "
         f"spectra in a rank-{s['spectral_basis']['rank']} basis (photocurrents within "
         f"{s['spectral_basis']['photocurrent_error_bound']:.0e} of the full spectra)",
         *[f"note: {n}" for n in s["source_notes"]],
         f"two-terminal loss to current mismatch (4T − 2T): {energy_text(eo['mismatch_loss_kWh_m2'])} "
         f"({eo['mismatch_loss_pct']:.2f} %); the front limits for "
         f"{eo['share_of_light_with_front_limiting_pct']:.0f} % of the light",
         f"best four-terminal: {energy_text(e4['energy_4t_kWh_m2'])} at {e4['front_gap_eV']:.3f} eV, "
         f"{e4['front_thickness_nm']:.0f} nm", "wrote " + ", ".join(s["outputs"]))
    out.print(f"[dim]{escape(tandem.CAUTION)} Clear-sky spectra ignore clouds unless a weather "
              "file is given.[/]")


@app.command("spread")
@friendly
@shared
def fabrication_spread(
        front: Annotated[str, typer.Argument(help="Front absorber.", show_default=False)],
        back: Annotated[str, typer.Argument(help="Back absorber.", show_default=False)],
        gap: Annotated[Optional[float], plain_option(help="Design front gap in eV.")] = None,
        thickness: Annotated[Optional[str], plain_option(help="Design front thickness, e.g. 800nm.")] = None,
        back_thickness: Annotated[Optional[str], plain_option(help="Back thickness, e.g. 160um.")] = None,
        gap_sigma: Annotated[float, plain_option(help="Standard deviation of the front gap in eV.")] = 0.01,
        thickness_sigma: Annotated[float, plain_option(help="Standard deviation of the thickness in %.")] = 5.0,
        samples: Annotated[int, plain_option(help="Devices drawn.")] = 2000,
        seed: Annotated[int, plain_option(help="Random seed (same seed, same devices).")] = 1,
        target: Annotated[Optional[float], plain_option(help="Efficiency target in %.")] = None,
        plot: Plot = None, overwrite: Overwrite = False, large: Large = False,
        json_out: Json = False, *, o):
    """How fabrication spread in gap and thickness spreads the efficiency of a design.

    Examples:

      tandem spread perovskite-wide silicon --gap 1.72 --thickness 1000nm --target 37.5

      tandem spread organic-wide organic-narrow --thickness-sigma 10 --json
    """
    check_outputs([plot], overwrite, plot=True)
    result = tandem.fabrication_spread(
        front, back, build_light(o), build_operating(o), front_gap_eV=gap,
        front_thickness_nm=thickness and parse_thickness(thickness, "--thickness"),
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
    out.print(render_table(f"Fabrication spread: {s['front']} over {s['back']}, {samples:,} devices "
                     f"({o['terminals']}T)", cols, [s]))
    say(f"design: front gap {s['front_gap_eV']:.3f} eV ± {gap_sigma:g} eV, thickness "
         f"{s['front_thickness_nm']:.0f} nm ± {thickness_sigma:g} %; seed {seed}",
         *[f"wrote {p}" for p in s.get("outputs", [])])
    out.print(f"[dim]{escape(tandem.CAUTION)}[/]")


from tandem.cli.eqe import eqe  # noqa: E402  (commands in their own modules: cli.py stays short)
from tandem.cli.region import region  # noqa: E402

app.command("eqe")(friendly(shared(eqe)))
app.command("region")(friendly(shared(region)))


def main() -> None:
    """Console entry point (``tandem``): framework errors, too, are one line and exit 2."""
    run_app(app)
