"""`tandem region`: the energy-optimal design across many sites (parse, call, render)."""

from __future__ import annotations

import os
from pathlib import Path
from typing import Annotated, Optional

import typer

import tandem
from tandem.cli.options import (escape, flag_option, Json, Large, Quiet, build_light, build_operating, emit_json, err,
                                given, out, over_scenario, refuse_cover_with_stack, parse_gap_option, parse_range,
                                parse_thickness, plain_option, progress_bar, progress_callback,
                                render_table, say, stack_over_scenario)
from tandem.core.errors import TandemInputError


def region(
        front: Annotated[Optional[str], typer.Argument(help="Front absorber (default: the "
                                                       "scenario's first).", show_default=False)] = None,
        back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False)] = None,
        scenario: Annotated[Optional[str], plain_option(help="Take absorbers, spectrum, losses, "
                                                "electrical values, back thickness and period "
                                                "from this scenario.")] = None,
        stack: Annotated[Optional[str], plain_option(help="A layer stack (bundled name or .toml) instead "
                                             "of FRONT BACK: its films solved and wafer traced "
                                             "at every site.")] = None,
        sites: Annotated[Optional[str], plain_option(help="CSV of sites: name, latitude, longitude"
                                             "[, altitude_m, timezone, weather]; or demo-sites.")] = None,
        latitudes: Annotated[Optional[str], plain_option(help="Clear-sky grid instead of a site list: "
                                                 "LO:HI:STEP in °.")] = None,
        longitudes: Annotated[Optional[str], plain_option(help="With --latitudes: LO:HI:STEP in °.")] = None,
        period: Annotated[str, plain_option(help="year:YYYY, month:YYYY-MM or day:YYYY-MM-DD.")] = "year:2026",
        step: Annotated[float, plain_option(help="Time step of clear-sky sites in minutes.")] = 60.0,
        tilt: Annotated[str, plain_option(help="Module tilt in °, or 'latitude' (facing the equator).")] = "latitude",
        albedo: Annotated[float, plain_option(help="Ground albedo.")] = 0.2,
        cover_index: Annotated[float, plain_option(help="Refractive index of the front cover, for "
                                                   "the incidence-angle loss (1 = no cover).")] = 1.526,
        front_gaps: Annotated[Optional[str], plain_option(help="Front gaps LO:HI:STEP in eV.")] = None,
        points: Annotated[int, plain_option(help="Front thicknesses in the sweep.")] = 16,
        back_thickness: Annotated[Optional[str], plain_option(help="Back thickness, e.g. 160um.")] = None,
        bifacial: Annotated[bool, flag_option(help="Also bifacial rows: rear light on the back subcell.")] = False,
        gcr: Annotated[float, plain_option(help="Bifacial rows: ground coverage ratio.")] = 0.4,
        row_height: Annotated[float, plain_option(help="Bifacial rows: module height above ground in m.")] = 1.5,
        pitch: Annotated[float, plain_option(help="Bifacial rows: row pitch in m.")] = 5.0,
        bifaciality: Annotated[float, plain_option(help="Share of rear light reaching the cells.")] = 1.0,
        workers: Annotated[Optional[int], plain_option(help="Processes of a local dask cluster (default: "
                                               "the cores); 1 runs in this process.")] = None,
        scheduler: Annotated[Optional[str], plain_option(help="Address of an existing dask scheduler, "
                                                 "e.g. tcp://10.0.0.5:8786.")] = None,
        out_folder: Annotated[Optional[str], plain_option("--out", help="Region folder (default: "
                                                  "region-<sites>).")] = None,
        grids: Annotated[bool, flag_option(help="Keep every site's gap × thickness energy grid in "
                                    "region.nc.")] = False,
        overwrite: Annotated[bool, flag_option(help="Replace a region folder tandem wrote (every site "
                                        "is computed again).")] = False,
        large: Large = False, quiet: Quiet = False, json_out: Json = False, *, o):
    """Energy-optimal front gap and thickness at many sites, on a dask cluster.

    Each site's year is one task; an interrupted run resumes where it stopped. Examples:

      tandem region perovskite-wide silicon --sites sites.csv

      tandem region perovskite-wide silicon --latitudes 0:60:10 --longitudes 0:0:1 --bifacial

      tandem region perovskite-wide silicon --sites sites.csv --scheduler tcp://10.0.0.5:8786

      tandem region --scenario perovskite-silicon-rooftop --sites demo-sites

      tandem region --stack wide-gap-on-silicon-wafer --sites demo-sites
    """

    from tandem.jobs.region import grid_sites, read_sites, region_job, run_region, write_region_outputs
    from tandem.design.sky import Rows

    if (sites is None) == (latitudes is None):
        raise TandemInputError("give --sites FILE, or --latitudes and --longitudes (not both)")
    if sites is not None:
        from tandem.core.files import bundled_dir

        bundled = bundled_dir("scenarios") / f"{sites}.csv"  # a bundled list by name
        specs = read_sites(bundled if not Path(sites).exists() and bundled.is_file() else sites)
        default = f"region-{Path(sites).stem}"
    else:
        if latitudes is None or longitudes is None:
            raise TandemInputError("--latitudes needs --longitudes LO:HI:STEP")
        specs = grid_sites(_axis(latitudes, "--latitudes"), _axis(longitudes, "--longitudes"))
        default = "region-grid"
    if workers is not None and not 1 <= workers <= 1024:
        raise TandemInputError(f"--workers {workers}: give 1 to 1024")
    cell_temperature = (None if o["temperature"] is None
                        else build_operating(o).temperature_K)  # fixed instead of the SAPM model
    sweep = dict(front_gaps_eV=parse_gap_option(front_gaps, "--front-gaps"), thickness_points=points,
                 tilt=tilt, albedo=albedo, cell_temperature_K=cell_temperature,
                 cover_index=cover_index,
                 rows=Rows(gcr, row_height, pitch, bifaciality) if bifacial else None)
    back_d = parse_thickness(back_thickness, "--back-thickness") if back_thickness else None
    refuse_cover_with_stack(stack)
    notes: list[str] = []
    if scenario is not None:  # the scenario's inputs; options typed beside it replace them
        from tandem.study.sources import load_scenario

        sc = load_scenario(scenario)
        light, operating, notes = over_scenario(o, sc.light(), sc.operating(), skip=("temperature",))
        own_period, own_step = sc.clear_sky_period()
        if given("period"):
            notes.append(f"--period {period} replaces the scenario's period {own_period}")
        if given("step"):
            notes.append(f"--step {step:g} replaces the scenario's step_minutes {own_step:g}")
        unused = sc.not_used_by_region()
        if unused:
            notes.append(unused)
        if back_d is not None:
            sweep["back_thickness_nm"] = back_d
        if stack is not None:
            operating, note = stack_over_scenario(stack, operating)
            notes.append(note)
        job = sc.region_job(front, back, light, operating, period if given("period") else None,
                            step if given("step") else None, stack=stack, **sweep)
    elif stack is None and (front is None or back is None):
        raise TandemInputError("give FRONT and BACK absorbers (or --stack FILE), or --scenario")
    else:
        job = region_job(front, back, build_operating(o), back_thickness_nm=back_d, period=period,
                         step_minutes=step, reference=build_light(o), stack=stack, **sweep)
    if out_folder is not None and not out_folder.strip():
        raise TandemInputError("--out '': give a folder name, e.g. --out region-south")
    folder = Path(out_folder or default)
    from tandem.jobs.common import WORKER_BYTES, check_seconds, region_seconds

    seconds = region_seconds(job, specs)
    if scheduler is None:  # a local cluster's size is known; a remote one's is its owner's
        cores = os.cpu_count() or 1
        n = workers or cores
        if n > cores and not large:
            raise TandemInputError(
                f"--workers {n}: this machine has {cores} core{'s' if cores > 1 else ''}; more "
                f"local workers than cores add only memory (about {WORKER_BYTES / 2**20:.0f} MiB "
                f"each); give --workers {cores} or fewer, or pass --large")
        check_seconds("region", seconds / min(n, cores), f"is {len(specs):,} sites on {n} local "
                      f"worker{'s' if n > 1 else ''}", large, bytes_needed=n * WORKER_BYTES)
    with progress_bar(quiet or json_out, "sites") as bar:
        result = run_region(specs, job, folder, scheduler, workers, progress_callback(bar), overwrite)
    written = write_region_outputs(result, grids)
    s = result.summary()
    s["scenario_overrides"] = notes
    s["work_estimate_core_seconds"] = round(seconds, 1)
    s["outputs"] = [str(p) for p in written]
    if json_out:
        return emit_json(s)
    say(*notes, *s["stack_notes"])
    cols = [("site", lambda r: r["name"]), ("lat °", lambda r: f"{r['latitude']:.1f}"),
            ("gap eV", lambda r: f"{r['front_gap_eV']:.3f}"),
            ("front nm", lambda r: f"{r['front_thickness_nm']:.0f}"),
            ("2T kWh/m²", lambda r: f"{r['energy_2t_kWh_m2']:.1f}"),
            ("4T kWh/m²", lambda r: f"{r['energy_4t_kWh_m2']:.1f}"),
            ("mismatch kWh/m²", lambda r: f"{r['mismatch_loss_kWh_m2']:.1f}"),
            *([("3T kWh/m²", lambda r: f"{r['energy_3t_kWh_m2']:.1f}")]
              if job.operating.terminals == 3 else []),
            *[(f"VM {m}:{n} kWh/m²", lambda r, key=f"energy_voltage_matched_{m}:{n}_kWh_m2":
               f"{r[key]:.1f}") for m, n in job.operating.electrical.string_ratios],
            ("AM1.5G design 2T", lambda r: f"{r['am15g_design_energy_2t_kWh_m2']:.1f}")]
    if bifacial:
        cols += [("bifacial gap eV", lambda r: f"{r['bifacial_front_gap_eV']:.3f}"),
                 ("bifacial nm", lambda r: f"{r['bifacial_front_thickness_nm']:.0f}"),
                 ("bifacial 2T", lambda r: f"{r['bifacial_energy_2t_kWh_m2']:.1f}")]
    pair = f"{job.front.key} over {job.back.key}"
    if job.stack is not None:
        pair = f"stack {job.stack.stack.key} ({pair}; other layers {job.stack.origin}: " + (
            ", ".join(f"{k} {v:g} nm" for k, v in job.stack.others.items()) or "none swept") + ")"
    out.print(render_table(f"Energy-optimal {pair}, {len(specs)} sites",
                     cols, s["sites"], "energies per m² of module over the period"))
    first = s["sites"][0]
    say(*(f"* {r['name']}: the energy-optimal design is outside the declared ranges "
          f"(--outside-range): {r['outside_range']}" for r in s["sites"] if r.get("outside_range")))
    say(f"AM1.5G-optimal design: {first['am15g_front_gap_eV']:.3f} eV, "
         f"{first['am15g_front_thickness_nm']:.0f} nm (its energy at each site: the 'AM1.5G design 2T' column)",
         f"computed {len(s['computed'])} sites, resumed {len(s['resumed'])}; "
         f"{s['seconds_per_site']:.2f} s per site in a worker (estimated "
         f"{s['work_estimate_core_seconds'] / max(len(specs), 1):.2f})")
    err.print(f"wrote {escape(str(folder))}/ (sites.sqlite, region.nc, region.csv, region.png)")
    out.print(f"[dim]{escape(tandem.CAUTION)} Clear skies have no clouds.[/]")


def _axis(text: str, option: str) -> tuple[float, float, float]:
    values = parse_range(text, option)
    if len(values) != 3:
        raise TandemInputError(f"{option} '{text}': give LO:HI:STEP in degrees")
    return tuple(values)
