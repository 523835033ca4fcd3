"""`tandem yield`: energy over a day, month or year under real skies (parse, call, render)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

import tandem
from tandem.cli.options import (escape, Json, Large, Overwrite, Quiet, build_light, build_operating,
                                check_outputs, emit_json, energy_text, field_text, given, out,
                                refuse_cover_with_stack,
                                over_scenario, parse_gap_option, parse_range, parse_thickness,
                                plain_option, progress_bar, progress_callback, render_table, say,
                                stack_over_scenario)
from tandem.core.errors import TandemInputError


def energy_yield(
        front: Annotated[Optional[str], typer.Argument(help="Front absorber (default: the "
                                                       "scenario's first).", show_default=False)] = None,
        back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False)] = None,
        scenario: Annotated[Optional[str], plain_option(help="Take site, weather, losses and absorbers from "
                                                "this scenario.")] = None,
        stack: Annotated[Optional[str], plain_option(help="A layer stack (bundled name or .toml) instead "
                                             "of FRONT BACK: its thin films solved and its wafer "
                                             "traced at every cell temperature.")] = None,
        latitude: Annotated[Optional[float], plain_option(help="Site latitude in ° north.")] = None,
        longitude: Annotated[Optional[float], plain_option(help="Site longitude in ° east.")] = None,
        altitude: Annotated[float, plain_option(help="Site altitude in m.")] = 0.0,
        tilt: Annotated[float, plain_option(help="Module tilt in °.")] = 30.0,
        azimuth: Annotated[float, plain_option(help="Module azimuth in ° from north (180 = south).")] = 180.0,
        cover_index: Annotated[float, plain_option(help="Refractive index of the front cover, for "
                                                   "the incidence-angle loss (1 = no cover).")] = 1.526,
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

      tandem yield --stack wide-gap-on-silicon-wafer --scenario perovskite-silicon-rooftop
    """

    from tandem.jobs.inputs import parse_temperature
    from tandem.jobs.energy_yield import at_cell_temperature, site_series

    if not Path(output).name.strip(". "):
        raise TandemInputError(f"--output '{output}': give a file name prefix, e.g. yield")
    check_outputs([Path(output).parent / f"{Path(output).name}{x}"
                   for x in ("-day.png", "-monthly.png", "-map.png", "-energy.nc",
                             "-series.parquet")], overwrite)
    back_d = back_thickness and parse_thickness(back_thickness, "--back-thickness")
    if stack is not None:  # the stack file fixes the absorbers, their gaps and the wafer
        for name, value in (("FRONT and BACK", front or back), ("--front-gaps", front_gaps),
                            ("--back-thickness", back_thickness)):
            if value:
                raise TandemInputError(f"{name} with --stack: the stack file sets the absorbers, "
                                       "their gaps and the wafer; drop it (or edit the stack)")
        refuse_cover_with_stack(stack)
    notes: list[str] = []
    a_front: str | tandem.Absorber | None
    a_back: str | tandem.Absorber | None
    if scenario is not None:  # the scenario's inputs; options typed beside it replace them
        from tandem.study.sources import load_scenario

        sc = load_scenario(scenario)
        for option in ("latitude", "longitude", "altitude", "tilt", "azimuth", "timezone",
                       "cover_index", "ambient", "weather", "spectra"):
            if given(option):
                raise TandemInputError(f"--{option.replace('_', '-')} with --scenario: the scenario's [site] and "
                                       "[weather] set the site; edit the scenario, or drop "
                                       "--scenario")
        reference, operating, notes = over_scenario(o, sc.light(), sc.operating(),
                                                    skip=("temperature",))
        w = sc.data.get("weather", {})
        if given("period"):
            notes.append(f"--period {period} replaces the scenario's period "
                         f"{w.get('period', 'year:2026')}")
        if given("step"):
            notes.append(f"--step {step:g} replaces the scenario's step_minutes "
                         f"{w.get('step_minutes', 60):g}")
        series = sc.site_series(period if given("period") else None,
                                step if given("step") else None)
        backs = sc.sweep().back_thicknesses_nm
        a_front, a_back = front or sc.fronts[0], back or sc.backs[0]
        back_d = back_d or (backs[0] if backs else None)
        if stack is not None:
            operating, note = stack_over_scenario(stack, operating)
            notes.append(note)
    elif (stack is None and (front is None or back is None)) or latitude is None or longitude is None:
        raise TandemInputError("give FRONT and BACK absorbers (or --stack FILE) with --latitude "
                               "and --longitude, or --scenario")
    else:
        reference, operating = build_light(o), build_operating(o)
        site = tandem.Site("site", latitude, longitude, altitude, tilt, azimuth, timezone,
                           ambient_temperature_C=parse_temperature(ambient, "ambient temperature")
                           - 273.15, cover_index=cover_index)
        series, a_front, a_back = site_series(site, weather=weather, spectra=spectra, period=period,
                                              step_minutes=step, allow_large=large), front, back
    if o["temperature"] is not None:  # a fixed cell temperature instead of the SAPM model
        series = at_cell_temperature(series, o["temperature"])
    thick = front_thickness and parse_range(front_thickness, "--front-thickness",
                                            lambda t: parse_thickness(t, "--front-thickness"))[:2]
    with progress_bar(quiet or json_out, "energy yield") as bar:
        if stack is not None:
            result = tandem.energy_yield_stack(
                stack, series, operating, reference=reference, thickness_points=points,
                front_thicknesses_nm=thick and tandem.thickness_axis(
                    *thick, points, "--front-thickness", most=400),
                progress=progress_callback(bar), allow_large=large)
        else:
            assert a_front is not None and a_back is not None  # required above without --stack
            result = tandem.energy_yield(
                a_front, a_back, series, operating, back_thickness_nm=back_d, reference=reference,
                front_gaps_eV=parse_gap_option(front_gaps, "--front-gaps"),
                front_thicknesses_nm=thick and tandem.thickness_axis(
                    *thick, points, "--front-thickness", most=400),
                thickness_points=points,
                progress=progress_callback(bar), allow_large=large)
    s = result.summary()
    s["scenario_overrides"] = notes
    s["outputs"] = [str(p) for p in result.write(output, overwrite)]
    if json_out:
        return emit_json(s)
    say(*notes)
    layers = dict(s["stack_layers_nm"] or {})
    origin = layers.pop("origin", None)
    if layers:
        say(f"other layers of the stack ({origin}): "
            + ", ".join(f"{k} {v:g} nm" for k, v in layers.items()))
    eo = s["energy_optimum"]
    title = f"{s['front']} over {s['back']}"
    if s["stack"]:
        title = f"stack {s['stack']} ({title})"
    out.print(render_table(f"Energy yield: {title}", [
        ("design", lambda r: r["design"]), ("front gap eV", field_text("front_gap_eV", "{:.3f}")),
        ("front nm", field_text("front_thickness_nm", "{:.0f}")),
        ("2T energy", lambda r: energy_text(r["energy_2t_kWh_m2"])),
        ("4T energy", lambda r: energy_text(r["energy_4t_kWh_m2"])),
        ("2T η_E %", field_text("energy_weighted_efficiency_2t_pct")),
        ("AM1.5G 2T %", field_text("efficiency_am15g_2t_pct"))], result.design_rows(),
        "η_E: energy-weighted efficiency (energy ÷ plane-of-array insolation)"))
    say(*[f"* the energy-optimal design is outside the declared range (--outside-range): {x}"
          for x in eo["outside_range"]])
    if len(s["connections"]) > 2:  # three terminals or voltage-matched strings asked for
        out.print(render_table("Energy by connection, each at its own energy-optimal design", [
            ("connection", lambda r: r["connection"]),
            ("energy", lambda r: energy_text(r["energy_kWh_m2"])),
            ("η_E %", field_text("energy_weighted_efficiency_pct")),
            ("front gap eV", field_text("front_gap_eV", "{:.3f}")),
            ("front nm", field_text("front_thickness_nm", "{:.0f}"))], s["connections"],
            None if s["best_string_ratio"] is None
            else f"best string ratio over the period: {s['best_string_ratio']} (front:back cells)"))
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
