"""tandem: design two-junction solar cells from the command line.

A thin layer: parse options, call the ``tandem`` library, render with rich. No physics here.
Machine output (``--json``) goes alone to stdout; errors, notes and progress go to stderr.
"""

from __future__ import annotations

import functools
import json
import shutil
import sys
from pathlib import Path
from typing import Annotated, Optional

import numpy as np
import typer
from rich.console import Console
from rich.markup import escape
from rich.table import Table

import tandem
from tandem.errors import TandemInputError

app = typer.Typer(
    name="tandem",
    help="Design two-junction (tandem) solar cells: detailed-balance limits, current "
    "matching, band-gap maps. Results are modelling limits, not certified measurements.",
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    add_completion=False,
)
# Piped output is not cut to 80 columns: tables stay readable in files and logs.
_WIDTH = shutil.get_terminal_size((150, 24)).columns
out = Console(width=_WIDTH)
err = Console(stderr=True, width=_WIDTH)


def friendly(command):
    """Turn the library's input errors into one line on stderr and exit code 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except TandemInputError as exc:
            err.print(f"[bold red]error:[/] {escape(str(exc))}", highlight=False, soft_wrap=True)
            raise typer.Exit(2) from None
        except OSError as exc:  # a full disk, a read-only place, a file-size limit, a closed pipe
            where = f" '{exc.filename}'" if getattr(exc, "filename", None) else ""
            try:
                err.print(f"[bold red]error:[/] cannot write{escape(where)}: "
                          f"{escape(exc.strerror or str(exc))}", highlight=False, soft_wrap=True)
            except OSError:
                pass
            raise typer.Exit(2) from None

    return wrapper


def _version(value: bool):
    if value:
        out.print(f"tandem {tandem.__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: Annotated[Optional[bool], typer.Option("--version", callback=_version,
                                                    is_eager=True, help="Show the version.")] = None,
):
    pass


def _parse_floats(text: str, option: str) -> list[float]:
    try:
        return [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give numbers separated by commas, "
                               "e.g. 0.01,0.001") from None


def _emit_json(payload: dict) -> None:
    sys.stdout.write(json.dumps(payload, indent=2, allow_nan=False) + "\n")


SpectrumOpt = Annotated[str, typer.Option(
    "--spectrum", "-s",
    help="am1.5g, am1.5d, am0, blackbody, or a CSV file (wavelength nm, W m^-2 nm^-1).")]
TemperatureOpt = Annotated[float, typer.Option(help="Cell temperature [K].")]
ConcentrationOpt = Annotated[float, typer.Option(
    help="Suns of concentration (blackbody: up to the maximum, about 46,200).")]
SunTemperatureOpt = Annotated[float, typer.Option(help="Blackbody sun temperature [K].")]
IrradianceOpt = Annotated[Optional[float], typer.Option(
    help="Rescale the spectrum to this irradiance [W/m^2]; the scaling is reported.")]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print one JSON object on stdout only.")]


def _electrical(coupling, series_resistance, shunt_resistance, rear_emission=False):
    from tandem.stack import Electrical

    return Electrical(coupling, series_resistance, shunt_resistance, rear_emission)


CouplingOpt = Annotated[float, typer.Option(
    help="Luminescent coupling: share of the front's emission towards the back that the back "
    "collects (implies --rear-emission).")]
RearEmissionOpt = Annotated[bool, typer.Option(
    "--rear-emission", help="Count the front's emission towards the back (n² × its front-face "
    "emission) as a loss; default: emission through the front only.")]
SeriesOpt = Annotated[float, typer.Option(help="Series resistance of the stack [Ω·cm²].")]
ShuntOpt = Annotated[float, typer.Option(help="Shunt resistance of the stack [Ω·cm²].")]


def _photon_flux(spectrum, sun_temperature, concentration, irradiance):
    return tandem.load_spectrum(spectrum, sun_temperature_K=sun_temperature,
                                concentration=concentration,
                                target_irradiance_W_m2=irradiance).photon_flux()


@app.command()
@friendly
def limit(
    gaps: Annotated[list[float], typer.Argument(
        help="Band gap(s) [eV]: one for a single junction, two for a stack (front first).",
        show_default=False)],
    spectrum: SpectrumOpt = "am1.5g",
    terminals: Annotated[int, typer.Option("--terminals", "-t",
                                           help="2 (series, one current) or 4 (independent).")] = 2,
    temperature: TemperatureOpt = 298.15,
    ere: Annotated[str, typer.Option(
        help="External radiative efficiency in (0, 1]: one value or one per subcell, "
        "front first, e.g. 0.01,0.001.")] = "1",
    ideality: Annotated[float, typer.Option(help="Diode ideality factor.")] = 1.0,
    concentration: ConcentrationOpt = 1.0,
    sun_temperature: SunTemperatureOpt = 6000.0,
    irradiance: IrradianceOpt = None,
    coupling: CouplingOpt = 0.0,
    rear_emission: RearEmissionOpt = False,
    front_index: Annotated[float, typer.Option(
        help="Refractive index of the front subcell, for its rear emission.")] = 3.5,
    series_resistance: SeriesOpt = 0.0,
    shunt_resistance: ShuntOpt = float("inf"),
    json_out: JsonOpt = False,
):
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Examples:

      tandem limit 1.34 --temperature 300

      tandem limit 1.73 1.12 --terminals 4 --ere 0.01

      tandem limit 1.1 -s blackbody --concentration 1000 --json
    """
    flux = _photon_flux(spectrum, sun_temperature, concentration, irradiance)
    result = tandem.detailed_balance_limit(
        gaps, flux, terminals, temperature, _parse_floats(ere, "--ere"), ideality,
        _electrical(coupling, series_resistance, shunt_resistance, rear_emission), front_index)
    summary = tandem.design_summary(result)
    if json_out:
        _emit_json(summary)
        return
    _print_design(summary)


def _print_design(s: dict) -> None:
    two = len(s["subcells"]) == 2
    title = (f"{s['terminals']}-terminal stack" if two else "single junction")
    table = Table(title=f"Detailed-balance limit, {title}", title_justify="left")
    for col in ("", "gap eV", "Jsc mA/cm²", "Voc V", "FF %", "efficiency %"):
        table.add_column(col, justify="right" if col else "left")
    for sub in s["subcells"]:
        table.add_row(sub["position"], f"{sub['gap_eV']:.3f}", f"{sub['jsc_mA_cm2']:.2f}",
                      f"{sub['voc_V']:.3f}", f"{sub['ff_pct']:.1f}", f"{sub['efficiency_pct']:.2f}")
    if two:
        series = s["terminals"] == 2
        table.add_row("[bold]stack[/]", "",
                      f"{s['jsc_mA_cm2']:.2f}" if series else "—",
                      f"{s['voc_V']:.3f}" if series else "—",
                      f"{s['ff_pct']:.1f}" if series else "—",
                      f"[bold]{s['efficiency_pct']:.2f}[/]")
    out.print(table)
    if two:
        verb = "limits the current" if s["terminals"] == 2 else "would limit in series"
        out.print(f"limiting subcell: [bold]{s['limiting_subcell']}[/] {verb} "
                  f"(mismatch {s['mismatch_pct']:.2f} %); "
                  f"2T {s['efficiency_2t_pct']:.2f} %, 4T {s['efficiency_4t_pct']:.2f} %",
                  highlight=False)
    out.print(f"spectrum: {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m²; "
              f"cell {s['temperature_K']:g} K", highlight=False)
    for note in s["spectrum_notes"] + s["model_notes"]:
        out.print(f"note: {escape(note)}", highlight=False)
    out.print(f"[dim]{s['caution']}[/]")


# --------------------------------------------------------------------------------------
# absorbers
# --------------------------------------------------------------------------------------


@app.command()
@friendly
def absorbers(
    name: Annotated[Optional[str], typer.Argument(
        help="A bundled absorber name or a .toml file; omit to list the bundled ones.",
        show_default=False)] = None,
    plot: Annotated[Optional[str], typer.Option(help="Write α(λ) to this PNG/SVG file.")] = None,
    overwrite: Annotated[bool, typer.Option(help="Replace an existing output file.")] = False,
    json_out: JsonOpt = False,
):
    """List the bundled absorber descriptions, or show one.

    Examples:

      tandem absorbers

      tandem absorbers perovskite-wide --plot alpha.png

      tandem absorbers my-film.toml --json
    """
    if name is None:
        rows = [tandem.load_absorber(k) for k in tandem.bundled_absorbers()]
        if json_out:
            _emit_json({"absorbers": [tandem.absorber_summary(a) for a in rows]})
            return
        table = Table(title="Bundled absorbers", title_justify="left")
        for col in ("name", "description", "gap eV", "edge", "thickness", "trapping", "ERE"):
            table.add_column(col)
        for a in rows:
            lo, hi = a.gap_range_eV
            gap = f"{lo:.2f}–{hi:.2f}" if a.tunable else f"{a.gap_eV:.3f}"
            table.add_row(a.key, a.name, gap, a.edge_model, _thickness_text(a.thickness_nm),
                          a.light_trapping, f"{a.ere:.1e}")
        out.print(table)
        out.print("Add your own: pass the path of a .toml file written to the schema in the README.")
        return
    a = tandem.load_absorber(name)
    summary = tandem.absorber_summary(a)
    if json_out:
        _emit_json(summary)
    else:
        table = Table(title=f"{a.name} ({a.key})", title_justify="left", show_header=False)
        table.add_column("field", style="bold")
        table.add_column("value")
        for key, value in summary.items():
            if key in ("sources", "alpha_per_cm"):
                continue
            table.add_row(key, escape(str(value)))
        for wl, alpha in summary["alpha_per_cm"].items():
            table.add_row(f"α at {wl}", f"{alpha:.3g} cm⁻¹")
        for key, value in summary["sources"].items():
            table.add_row(f"source: {key}", escape(value))
        out.print(table)
    if plot:
        from tandem.plots import absorber_figure

        written = absorber_figure(a, plot, overwrite)
        err.print(f"wrote {written}")


def _thickness_text(nm: float) -> str:
    return f"{nm / 1000:g} µm" if nm >= 10_000 else f"{nm:g} nm"


def _parse_thickness(text: str, option: str) -> float:
    """'500', '500nm', '160um' or '160µm' → nm."""
    t = text.strip().lower().replace("µ", "u")
    scale = 1.0
    if t.endswith("um"):
        t, scale = t[:-2], 1000.0
    elif t.endswith("nm"):
        t = t[:-2]
    try:
        value = float(t) * scale
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give a thickness such as 500, 500nm or "
                               "160um") from None
    if not value > 0:
        raise TandemInputError(f"{option} '{text}': a thickness must be positive")
    return value


def _parse_range(text: str, option: str, parse=float) -> tuple:
    parts = text.split(":")
    if len(parts) not in (2, 3):
        raise TandemInputError(f"{option} '{text}': give low:high or low:high:step")
    try:
        return tuple(parse(p) for p in parts)
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give numbers as low:high or low:high:step") from None


# --------------------------------------------------------------------------------------
# match
# --------------------------------------------------------------------------------------


def _progress(quiet: bool, label: str):
    """A rich progress bar on stderr, or nothing."""
    from contextlib import nullcontext

    if quiet:
        return nullcontext(None)
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    return Progress(TextColumn(label), BarColumn(), TextColumn("{task.completed}/{task.total}"),
                    TimeRemainingColumn(), console=err, transient=True)


def _callback(bar):
    if bar is None:
        return None
    task = bar.add_task("sweep", total=None)

    def update(done, total):
        bar.update(task, completed=done, total=total)

    return update


@app.command()
@friendly
def match(
    front: Annotated[str, typer.Argument(help="Front (sunward) absorber: bundled name or .toml.",
                                         show_default=False)],
    back: Annotated[str, typer.Argument(help="Back absorber: bundled name or .toml.",
                                        show_default=False)],
    spectrum: SpectrumOpt = "am1.5g",
    terminals: Annotated[int, typer.Option("--terminals", "-t",
                                           help="Rank by 2 (series) or 4 (independent).")] = 2,
    temperature: TemperatureOpt = 298.15,
    front_gaps: Annotated[Optional[str], typer.Option(
        help="Sweep these front gaps, low:high:step in eV (direct/indirect edges only). "
        "Default: the front's tunable range at 0.02 eV, or its fixed gap.")] = None,
    front_thickness: Annotated[Optional[str], typer.Option(
        help="Front thickness range to sweep, thinnest:thickest (nm, or with um). "
        "Default: the absorber's allowed range.")] = None,
    back_thickness: Annotated[Optional[str], typer.Option(
        help="Back thickness(es), comma-separated, e.g. 160um or 100um,160um,250um. "
        "Default: the absorber's default.")] = None,
    points: Annotated[int, typer.Option(help="Front thicknesses per sweep (log-spaced).")] = 120,
    reflectance: Annotated[str, typer.Option(
        help="Front reflectance: a fraction or a CSV of wavelength nm, fraction.")] = "0",
    front_parasitic: Annotated[str, typer.Option(
        help="Parasitic absorption of the front contact: fraction or CSV.")] = "0",
    interlayer_parasitic: Annotated[str, typer.Option(
        help="Parasitic absorption between the subcells: fraction or CSV.")] = "0",
    top: Annotated[int, typer.Option(help="Configurations to show.")] = 8,
    tolerance: Annotated[float, typer.Option(
        help="Loss [% absolute] defining the thickness and gap tolerance windows.")] = 1.0,
    coupling: CouplingOpt = 0.0,
    rear_emission: RearEmissionOpt = False,
    series_resistance: SeriesOpt = 0.0,
    shunt_resistance: ShuntOpt = float("inf"),
    concentration: ConcentrationOpt = 1.0,
    sun_temperature: SunTemperatureOpt = 6000.0,
    irradiance: IrradianceOpt = None,
    plot: Annotated[Optional[str], typer.Option(
        help="Write currents vs front thickness and EQE vs wavelength to this PNG/SVG.")] = None,
    overwrite: Annotated[bool, typer.Option(help="Replace an existing plot file.")] = False,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress bar.")] = False,
    json_out: JsonOpt = False,
):
    """Current-match a two-junction stack of real absorbers: gap, thicknesses, limiting cell.

    Sweeps the front thickness (and the front gap where the absorber is tunable or
    --front-gaps asks), finds the current-matched thickness, ranks configurations, and
    checks whether the other order would be better.

    Examples:

      tandem match perovskite-wide silicon --plot match.png

      tandem match organic-wide organic-narrow --reflectance 0.04 --json

      tandem match gainp gaas --back-thickness 1000,2000,3000 -t 4
    """
    from tandem.design import Conditions, StackDesign, match_currents, which_in_front
    from tandem.losses import loss_on_grid

    flux = _photon_flux(spectrum, sun_temperature, concentration, irradiance)
    tandem.stack.check_temperature(temperature)
    a_front, a_back = tandem.load_absorber(front), tandem.load_absorber(back)
    e = flux.energy
    design = StackDesign(a_front, a_back,
                         loss_on_grid(reflectance, e, "--reflectance"),
                         loss_on_grid(front_parasitic, e, "--front-parasitic"),
                         loss_on_grid(interlayer_parasitic, e, "--interlayer-parasitic"))
    cond = Conditions(flux, temperature, 1.0,
                      _electrical(coupling, series_resistance, shunt_resistance, rear_emission))
    gaps = None
    if front_gaps:
        lo, hi, *step = _parse_range(front_gaps, "--front-gaps")
        step = step[0] if step else 0.02
        if not (step > 0 and hi >= lo):
            raise TandemInputError(f"--front-gaps '{front_gaps}': give low:high:step with "
                                   "low ≤ high and a positive step")
        gaps = np.linspace(lo, hi, max(int(round((hi - lo) / step)) + 1, 1))
    d_range = None
    if front_thickness:
        d_range = _parse_range(front_thickness, "--front-thickness",
                               lambda t: _parse_thickness(t, "--front-thickness"))[:2]
    backs = None
    if back_thickness:
        backs = [_parse_thickness(t, "--back-thickness") for t in back_thickness.split(",")]
    with _progress(quiet or json_out, "sweeping") as bar:
        result = match_currents(design, cond, gaps, backs, d_range, points, terminals,
                                _callback(bar))
        swapped = match_currents(design.swapped(), cond, None, None, None, points, terminals,
                                 _callback(bar))
    verdict = which_in_front(result, swapped)
    summary = tandem.match_summary(result, swapped, verdict, top, tolerance)
    if json_out:
        _emit_json(summary)
    else:
        _print_match(summary, show_swapped=not verdict.user_order_is_better, top=top)
    if plot:
        from tandem.plots import match_figure

        written = match_figure(result, plot, overwrite, summary["tolerance"])
        err.print(f"wrote {written}")


def _match_table(title: str, rows: list[dict], tunable: bool) -> Table:
    table = Table(title=title, title_justify="left")
    cols = ["#", "gap eV"] + (["x"] if tunable else []) + [
        "front nm", "match nm", "back µm", "Jsc F", "Jsc B", "mism. %", "limits",
        "Voc V", "FF %", "2T %", "4T %"]
    for col in cols:
        table.add_column(col, justify="right")
    for i, c in enumerate(rows, 1):
        cells = [str(i), f"{c['front_gap_eV']:.3f}"]
        if tunable:
            x = c["front_composition"]
            cells.append("—" if x is None else f"{x:.3f}")
        m = c["matched_front_thickness_nm"]
        cells += [f"{c['front_thickness_nm']:.0f}", "none" if m is None else f"{m:.0f}",
                  f"{c['back_thickness_um']:g}",
                  f"{c['jsc_front_mA_cm2']:.2f}", f"{c['jsc_back_mA_cm2']:.2f}",
                  f"{c['mismatch_pct']:.2f}", c["limiting_subcell"], f"{c['voc_2t_V']:.3f}",
                  f"{c['ff_2t_pct']:.1f}", f"[bold]{c['efficiency_2t_pct']:.2f}[/]",
                  f"{c['efficiency_4t_pct']:.2f}"]
        table.add_row(*cells)
    table.caption = ("gap, x: front gap and composition; front nm: best front thickness; match "
                     "nm: current-matched thickness; Jsc F/B: front/back photocurrent (mA/cm²); "
                     "Voc, FF: two-terminal; 2T/4T: efficiency")
    return table


def _print_match(s: dict, show_swapped: bool, top: int) -> None:
    f, b = s["front"], s["back"]
    title = f"{f['name']} over {b['name']}: best configurations ({s['terminals']}T ranking)"
    out.print(_match_table(title, s["configurations"], f["tunable_gap_eV"] is not None))
    best = s["configurations"][0]
    if s["matched_front_thickness_nm"] is not None:
        out.print(f"current-matched front thickness at {best['front_gap_eV']:.3f} eV: "
                  f"[bold]{s['matched_front_thickness_nm']:.0f} nm[/]", highlight=False)
    else:
        out.print(f"no current match at {best['front_gap_eV']:.3f} eV: {escape(s['note'])}",
                  highlight=False)
    out.print(f"limiting subcell of the best design: [bold]{best['limiting_subcell']}[/] "
              f"(mismatch {best['mismatch_pct']:.2f} %)", highlight=False)
    b4 = s["best_4t"]
    out.print(f"best four-terminal: {b4['efficiency_4t_pct']:.2f} % at front gap "
              f"{b4['front_gap_eV']:.3f} eV, {b4['front_thickness_nm']:.0f} nm", highlight=False)
    tol = s["tolerance"]
    dw, gw = tol["front_thickness_window_nm"], tol["front_gap_window_eV"]
    out.print(f"within {tol['loss_pct_abs']:g} % (absolute) of the best: front thickness "
              f"{dw[0]:.0f}–{dw[1]:.0f} nm" + ("" if gw is None else
                                              f", front gap {gw[0]:.3f}–{gw[1]:.3f} eV"),
              highlight=False)
    out.print(f"[bold]order:[/] {escape(s['order']['reason'])}", highlight=False)
    if show_swapped:
        sw = s["swapped"]
        out.print(_match_table(f"the better order: {sw['front']} in front",
                               sw["configurations"][:top], False))
    for note in s["spectrum_notes"] + s["model_notes"]:
        out.print(f"note: {escape(note)}", highlight=False)
    out.print(escape(s["temperature_note"]), highlight=False)
    out.print(f"spectrum: {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m²; cell "
              f"{s['temperature_K']:g} K; {s['configurations_evaluated']:,} configurations",
              highlight=False)
    out.print(f"[dim]{s['caution']}[/]")


# --------------------------------------------------------------------------------------
# map
# --------------------------------------------------------------------------------------


def _gap_option(text: str, option: str, default):
    from tandem.maps import gap_axis

    if text is None:
        return gap_axis(*default, option)
    parts = _parse_range(text, option) if ":" in text else (float(_parse_floats(text, option)[0]),)
    if len(parts) == 1:
        return np.array([parts[0]])
    lo, hi, *step = parts
    return gap_axis(lo, hi, step[0] if step else 0.01, option)


@app.command("map")
@friendly
def gap_map(
    front: Annotated[Optional[str], typer.Option(
        "--front", help="Front gaps LO:HI:STEP [eV].", show_default="1.4:2.3:0.01")] = None,
    back: Annotated[Optional[str], typer.Option(
        "--back", help="Back gaps LO:HI:STEP [eV], or one value for a 1-D scan.",
        show_default="0.8:1.5:0.01")] = None,
    terminals: Annotated[int, typer.Option("--terminals", "-t", help="2 or 4.")] = 2,
    spectrum: SpectrumOpt = "am1.5g",
    temperature: TemperatureOpt = 298.15,
    ere: Annotated[str, typer.Option(help="ERE of step absorbers: one value or front,back.")] = "1",
    front_absorber: Annotated[Optional[str], typer.Option(
        help="Use this absorber's edge (moved to each gap) instead of a step.")] = None,
    back_absorber: Annotated[Optional[str], typer.Option(help="Likewise for the back.")] = None,
    front_thickness: Annotated[Optional[str], typer.Option(
        help="Front thickness with absorbers (nm or um). Default: the absorber's.")] = None,
    back_thickness: Annotated[Optional[str], typer.Option(help="Back thickness with absorbers.")] = None,
    rematch: Annotated[bool, typer.Option(
        help="With absorbers: re-match the front thickness at every gap pair.")] = False,
    mark: Annotated[Optional[str], typer.Option(
        help="Absorbers to mark at their gaps, comma-separated.")] = None,
    tolerance: Annotated[float, typer.Option(
        help="Loss [% absolute] that defines the tolerance window.")] = 1.0,
    output: Annotated[str, typer.Option(
        "--output", "-o", help="Prefix of the files written (.png .svg .csv .parquet).")] = "gap-map",
    overwrite: Annotated[bool, typer.Option(help="Replace existing output files.")] = False,
    concentration: ConcentrationOpt = 1.0,
    sun_temperature: SunTemperatureOpt = 6000.0,
    irradiance: IrradianceOpt = None,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress bar.")] = False,
    json_out: JsonOpt = False,
):
    """Efficiency over front × back band gaps: contour map, tolerance window, tidy tables.

    Examples:

      tandem map

      tandem map --back 1.12 --output si-partner

      tandem map --front 1.5:2.0:0.01 --back 1.12 --front-absorber perovskite-wide
      --back-absorber silicon --rematch
    """
    from tandem.maps import DEFAULT_BACK, DEFAULT_FRONT, absorber_gap_map, map_table, step_gap_map
    from tandem.report import map_summary
    from tandem.plots import map_figures

    flux = _photon_flux(spectrum, sun_temperature, concentration, irradiance)
    tandem.stack.check_temperature(temperature)
    if terminals not in (2, 4):
        raise TandemInputError(f"--terminals {terminals}: choose 2 (series) or 4 (independent)")
    fronts = _gap_option(front, "--front", DEFAULT_FRONT)
    if (front_absorber is None) != (back_absorber is None):
        raise TandemInputError("give both --front-absorber and --back-absorber, or neither "
                               "(step absorbers)")
    thickness = None
    with _progress(quiet or json_out, "mapping") as bar:
        if front_absorber is None:
            backs = _gap_option(back, "--back", DEFAULT_BACK)
            ere_values = tandem.stack.check_ere(_parse_floats(ere, "--ere"), 2)
            result = step_gap_map(flux, fronts, backs, temperature, ere_values,
                                  progress=_callback(bar))
        else:
            from tandem.design import Conditions, StackDesign

            design = StackDesign(tandem.load_absorber(front_absorber), tandem.load_absorber(back_absorber))
            backs = None if back is None else _gap_option(back, "--back", DEFAULT_BACK)
            result, thickness = absorber_gap_map(
                design, Conditions(flux, temperature), fronts, backs,
                None if front_thickness is None else _parse_thickness(front_thickness, "--front-thickness"),
                None if back_thickness is None else _parse_thickness(back_thickness, "--back-thickness"),
                rematch, progress=_callback(bar))
    summary = map_summary(result, terminals, tolerance)
    marks = []
    for name in (mark.split(",") if mark else []):
        a = tandem.load_absorber(name.strip())
        marks.append((a.key, a.gap_eV))
    table = map_table(result, thickness)
    written = map_figures(result, terminals, tolerance, marks, output, overwrite, tables={
        ".csv": lambda p: table.to_csv(p, index=False, float_format="%.6g"),
        ".parquet": lambda p: table.to_parquet(p, index=False),
    })
    summary["outputs"] = [str(p) for p in written]
    if json_out:
        _emit_json(summary)
        return
    o, t = summary["optimum"], summary["tolerance"]
    out.print(f"[bold]optimum ({terminals}T):[/] {o['efficiency_pct']:.2f} % at front "
              f"{o['front_gap_eV']:.3f} eV / back {o['back_gap_eV']:.3f} eV "
              f"(2T {o['efficiency_2t_pct']:.2f} %, 4T {o['efficiency_4t_pct']:.2f} %; limiting "
              f"subcell {o['limiting_subcell']}, mismatch {o['mismatch_pct']:.2f} %)", highlight=False)
    fw = t["front_gap_window_eV"]
    out.print(f"within {tolerance:g} % (absolute) of the best: front gap {fw[0]:.3f}–{fw[1]:.3f} eV"
              + ("" if t["back_gap_window_eV"] is None else
                 f", back gap {t['back_gap_window_eV'][0]:.3f}–{t['back_gap_window_eV'][1]:.3f} eV"),
              highlight=False)
    out.print(f"{summary['grid_points']:,} gap pairs; {summary['spectrum']}, "
              f"{summary['irradiance_W_m2']:.2f} W/m², cell {summary['temperature_K']:g} K", highlight=False)
    out.print("wrote " + ", ".join(summary["outputs"]), highlight=False)
    out.print(f"[dim]{summary['caution']}[/]")


# --------------------------------------------------------------------------------------
# study
# --------------------------------------------------------------------------------------


@app.command()
@friendly
def study(
    scenario: Annotated[Optional[str], typer.Argument(
        help="Bundled scenario name, scenario .toml, or an earlier study's manifest.json. "
        "Default: wide-gap-partner-for-silicon.", show_default=False)] = None,
    out_dir: Annotated[Optional[str], typer.Option(
        "--out", help="Study folder to write. Default: study-<scenario name>.")] = None,
    overwrite: Annotated[bool, typer.Option(
        help="Replace an existing study folder (only one written by 'tandem study').")] = False,
    accept_edited: Annotated[bool, typer.Option(
        help="Re-run a manifest whose checksum no longer matches (it was edited).")] = False,
    figures: Annotated[bool, typer.Option(help="Write the figures.")] = True,
    list_all: Annotated[bool, typer.Option("--list", help="List the bundled scenarios.")] = False,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress bar.")] = False,
    json_out: JsonOpt = False,
):
    """Run a whole design study and write its folder (tables, figures, manifest).

    The folder holds the ranked design table as CSV, Markdown and LaTeX, the figures, and a
    manifest from which the same study can be run again.

    Examples:

      tandem study

      tandem study low-cost-organic-pair --out organic

      tandem study my-study.toml --overwrite

      tandem study study-wide-gap-partner-for-silicon/manifest.json --out rerun
    """
    from tandem.study import (bundled_scenarios, check_study_target, load_scenario, run_study,
                              write_study)

    if list_all:
        for name, path in bundled_scenarios().items():
            out.print(f"[bold]{name}[/]: {escape(load_scenario(name).data['question'])}")
        return
    sc = load_scenario(scenario, accept_edited)
    folder = Path(out_dir or f"study-{sc.key}")
    check_study_target(folder, overwrite, sc.input_paths)  # refuse before the work, not after
    with _progress(quiet or json_out, f"study {sc.key}") as bar:
        result = run_study(sc, _callback(bar))
        written = write_study(result, folder, overwrite, figures)
    if json_out:
        _emit_json({"scenario": sc.key, "title": sc.data["title"], "folder": str(written),
                    "terminals": sc.terminals, "rows": result.rows, "skipped": result.skipped,
                    "spectrum": result.spectrum_name, "irradiance_W_m2": round(result.irradiance, 3),
                    "temperature_K": sc.temperature_K, "caution": tandem.CAUTION})
        return
    table = Table(title=f"{sc.data['title']} — ranked designs ({sc.terminals}T)", title_justify="left")
    cols = ["#", "front", "back", "gap eV", "front nm", "match nm", "back µm", "Jsc F", "Jsc B",
            "limits", "mism. %", "2T %", "4T %", "±%g%% thickness nm" % sc.tolerance_pct]
    extra = [(k, label) for k, label in (("energy_2t_kWh_m2", "2T kWh/m²"), ("energy_4t_kWh_m2", "4T kWh/m²"),
                                         ("p10_pct", "P10 %"), ("p90_pct", "P90 %"))
             if k in result.rows[0]]
    cols += [label for _, label in extra]
    for col in cols:
        table.add_column(col, justify="left" if col in ("front", "back", "limits") else "right")
    for r in result.rows[: sc.top]:
        m = r["matched_front_thickness_nm"]
        table.add_row(str(r["rank"]), r["front"], r["back"], f"{r['front_gap_eV']:.3f}",
                      f"{r['front_thickness_nm']:.0f}", "none" if m is None else f"{m:.0f}",
                      f"{r['back_thickness_um']:g}", f"{r['jsc_front_mA_cm2']:.2f}",
                      f"{r['jsc_back_mA_cm2']:.2f}", r["limiting_subcell"],
                      f"{r['mismatch_pct']:.2f}", f"[bold]{r['efficiency_2t_pct']:.2f}[/]",
                      f"{r['efficiency_4t_pct']:.2f}", r["front_thickness_window_nm"],
                      *[f"{r[k]:.1f}" if "kWh" in k else f"{r[k]:.2f}" for k, _ in extra])
    table.caption = "Jsc F/B: front/back photocurrent (mA/cm²); limits: the limiting subcell"
    out.print(escape(sc.data["question"]), highlight=False)
    out.print(table)
    best = result.rows[0]
    out.print(f"best: [bold]{best['front']}[/] at {best['front_gap_eV']:.3f} eV over "
              f"[bold]{best['back']}[/]; the {best['limiting_subcell']} subcell limits the current "
              f"(mismatch {best['mismatch_pct']:.2f} %)", highlight=False)
    for note in result.skipped:
        out.print(f"skipped: {escape(note)}", highlight=False)
    out.print(f"spectrum: {result.spectrum_name}, {result.irradiance:.2f} W/m²; cell "
              f"{sc.temperature_K:g} K", highlight=False)
    out.print(f"wrote {written}/ (design-table.csv/.md/.tex, figures/, manifest.json)", highlight=False)
    out.print(f"[dim]{tandem.CAUTION}[/]")


# --------------------------------------------------------------------------------------
# yield and scatter
# --------------------------------------------------------------------------------------


@app.command("yield")
@friendly
def energy_yield(
    front: Annotated[Optional[str], typer.Argument(help="Front absorber (default: the scenario's first).",
                                                   show_default=False)] = None,
    back: Annotated[Optional[str], typer.Argument(help="Back absorber.", show_default=False)] = None,
    scenario: Annotated[Optional[str], typer.Option(
        help="Take site, weather, losses and absorbers from this scenario (name or file).")] = None,
    latitude: Annotated[Optional[float], typer.Option(help="Site latitude [° north].")] = None,
    longitude: Annotated[Optional[float], typer.Option(help="Site longitude [° east].")] = None,
    altitude: Annotated[float, typer.Option(help="Site altitude [m].")] = 0.0,
    tilt: Annotated[float, typer.Option(help="Module tilt [°].")] = 30.0,
    azimuth: Annotated[float, typer.Option(help="Module azimuth [° from north, 180 = south].")] = 180.0,
    timezone: Annotated[str, typer.Option(help="IANA time zone of the site.")] = "UTC",
    ambient: Annotated[float, typer.Option(help="Ambient temperature without weather [°C].")] = 20.0,
    period: Annotated[str, typer.Option(help="day:YYYY-MM-DD, month:YYYY-MM or year:YYYY.")] = "year:2026",
    step: Annotated[float, typer.Option(help="Time step of clear-sky runs [min].")] = 60.0,
    weather: Annotated[Optional[str], typer.Option(help="Typical-year weather file (EPW or TMY3 CSV).")] = None,
    spectra: Annotated[Optional[str], typer.Option(help="Folder of measured spectra, one CSV per time.")] = None,
    front_gaps: Annotated[Optional[str], typer.Option(help="Front gaps LO:HI:STEP [eV].")] = None,
    front_thickness: Annotated[Optional[str], typer.Option(help="Front thickness range A:B (nm or um).")] = None,
    points: Annotated[int, typer.Option(help="Front thicknesses in the sweep.")] = 16,
    back_thickness: Annotated[Optional[str], typer.Option(help="Back thickness (nm or um).")] = None,
    coupling: CouplingOpt = 0.0,
    rear_emission: RearEmissionOpt = False,
    series_resistance: SeriesOpt = 0.0,
    shunt_resistance: ShuntOpt = float("inf"),
    output: Annotated[str, typer.Option("--output", "-o", help="Prefix of the figures.")] = "yield",
    overwrite: Annotated[bool, typer.Option(help="Replace existing figures.")] = False,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress bar.")] = False,
    json_out: JsonOpt = False,
):
    """Energy over a day, month or year under real skies: 2T vs 4T, energy-optimal design.

    Clear-sky SPECTRL2 spectra for the site (or a weather file, or measured spectra), cell
    temperature from the SAPM model, gaps shifted with temperature.

    Examples:

      tandem yield --scenario perovskite-silicon-rooftop

      tandem yield perovskite-wide silicon --latitude 40 --longitude -105 --timezone Etc/GMT+7

      tandem yield perovskite-wide silicon --latitude 40 --longitude -105 --period day:2026-06-21
    """
    from tandem.design import StackDesign
    from tandem.maps import gap_axis
    from tandem.plots import yield_figures
    from tandem.sky import Site, clear_sky_series, folder_series, parse_period, weather_series
    from tandem.report import yield_summary
    from tandem.yields import hourly, yield_sweep

    losses = (0.0, 0.0, 0.0)
    if scenario is not None:
        from tandem.study import load_scenario

        sc = load_scenario(scenario)
        if sc.site() is None:
            raise TandemInputError(f"scenario '{sc.key}' has no [site]; add one or give --latitude "
                                   "and --longitude")
        series = sc.series()
        a_front = tandem.load_absorber(front) if front else sc.fronts[0]
        a_back = tandem.load_absorber(back) if back else sc.backs[0]
        losses = tuple(float(sc.get("stack", k, 0.0)) for k in
                       ("reflectance", "front_parasitic", "interlayer_parasitic"))
        electrical = sc.electrical()
        backs = sc.back_thicknesses_nm()
        back_d = backs[0] if backs else a_back.thickness_nm
    else:
        if front is None or back is None:
            raise TandemInputError("give FRONT and BACK absorbers, or --scenario")
        if latitude is None or longitude is None:
            raise TandemInputError("give --latitude and --longitude of the site (or --scenario)")
        site = Site("site", latitude, longitude, altitude, tilt, azimuth, timezone,
                    ambient_temperature_C=ambient)
        if weather:
            series = weather_series(site, weather)
        elif spectra:
            series = folder_series(site, spectra)
        else:
            series = clear_sky_series(site, parse_period(period, timezone, step))
        a_front, a_back = tandem.load_absorber(front), tandem.load_absorber(back)
        electrical = _electrical(coupling, series_resistance, shunt_resistance, rear_emission)
        back_d = a_back.thickness_nm
    if back_thickness:
        back_d = _parse_thickness(back_thickness, "--back-thickness")
    design = StackDesign(a_front, a_back, *losses)
    if front_gaps:
        lo, hi, *st = _parse_range(front_gaps, "--front-gaps")
        gaps = gap_axis(lo, hi, st[0] if st else 0.02, "--front-gaps")
    elif a_front.tunable:
        lo, hi = a_front.gap_range_eV
        gaps = np.linspace(max(lo, a_back.gap_eV + 0.3), hi, 11)
    else:
        gaps = np.array([a_front.gap_eV])
    lo_d, hi_d = (_parse_range(front_thickness, "--front-thickness",
                               lambda t: _parse_thickness(t, "--front-thickness"))[:2]
                  if front_thickness else a_front.thickness_range_nm)
    if not (hi_d > lo_d > 0) or not 2 <= points <= 400:
        raise TandemInputError("--front-thickness must be thinnest:thickest (positive) and --points 2–400")
    thicknesses = np.geomspace(lo_d, hi_d, points)
    reference = tandem.reference_spectrum("am1.5g").photon_flux()
    with _progress(quiet or json_out, "energy yield") as bar:
        sweep = yield_sweep(design, series, gaps, thicknesses, back_d, reference,
                            electrical=electrical, progress=_callback(bar))
        i, j = sweep.optimum
        best = hourly(design, series, sweep.gaps[i], sweep.thicknesses[j], back_d,
                      electrical=electrical)
    summary = yield_summary(sweep, best)
    written = yield_figures(sweep, best, output, overwrite)
    summary["outputs"] = [str(p) for p in written]
    if json_out:
        _emit_json(summary)
        return
    eo, am = summary["energy_optimum"], summary["am15g_optimum"]
    table = Table(title=f"Energy yield: {a_front.name} over {a_back.name}", title_justify="left")
    for col in ("design", "front gap eV", "front nm", "2T kWh/m²", "4T kWh/m²", "2T η_E %",
                "AM1.5G 2T %"):
        table.add_column(col, justify="left" if col == "design" else "right")
    table.add_row("energy-optimal", f"{eo['front_gap_eV']:.3f}", f"{eo['front_thickness_nm']:.0f}",
                  f"[bold]{eo['energy_2t_kWh_m2']:.1f}[/]", f"{eo['energy_4t_kWh_m2']:.1f}",
                  f"{eo['energy_weighted_efficiency_2t_pct']:.2f}",
                  f"{100 * float(sweep.efficiency_am15_2t[i, j]):.2f}")
    table.add_row("AM1.5G-optimal", f"{am['front_gap_eV']:.3f}", f"{am['front_thickness_nm']:.0f}",
                  f"{am['energy_2t_kWh_m2']:.1f}", f"{am['energy_4t_kWh_m2']:.1f}",
                  f"{100 * am['energy_2t_kWh_m2'] / summary['insolation_kWh_m2']:.2f}",
                  f"{am['efficiency_2t_pct']:.2f}")
    table.caption = "η_E: energy-weighted efficiency (energy ÷ plane-of-array insolation)"
    out.print(table)
    out.print(f"{escape(summary['source'])}: {summary['steps']:,} steps, "
              f"{summary['insolation_kWh_m2']:.1f} kWh/m² on the module plane", highlight=False)
    for note in summary["source_notes"]:
        out.print(f"note: {escape(note)}", highlight=False)
    out.print(f"two-terminal loss to current mismatch (4T − 2T): {eo['mismatch_loss_kWh_m2']:.1f} "
              f"kWh/m² ({eo['mismatch_loss_pct']:.2f} %); the front limits for "
              f"{eo['share_of_light_with_front_limiting_pct']:.0f} % of the light", highlight=False)
    e4 = summary["energy_optimum_4t"]
    out.print(f"best four-terminal: {e4['energy_4t_kWh_m2']:.1f} kWh/m² at {e4['front_gap_eV']:.3f} eV, "
              f"{e4['front_thickness_nm']:.0f} nm", highlight=False)
    out.print("wrote " + ", ".join(summary["outputs"]), highlight=False)
    out.print(f"[dim]{tandem.CAUTION} Clear-sky spectra ignore clouds unless a weather file "
              "is given.[/]")


@app.command("scatter")
@friendly
def fabrication_scatter(
    front: Annotated[str, typer.Argument(help="Front absorber.", show_default=False)],
    back: Annotated[str, typer.Argument(help="Back absorber.", show_default=False)],
    gap: Annotated[Optional[float], typer.Option(help="Design front gap [eV]. Default: the absorber's.")] = None,
    thickness: Annotated[Optional[str], typer.Option(help="Design front thickness. Default: the absorber's.")] = None,
    back_thickness: Annotated[Optional[str], typer.Option(help="Back thickness (nm or um).")] = None,
    gap_sigma: Annotated[float, typer.Option(help="Standard deviation of the front gap [eV].")] = 0.01,
    thickness_sigma: Annotated[float, typer.Option(help="Standard deviation of the thickness [%].")] = 5.0,
    samples: Annotated[int, typer.Option(help="Devices drawn.")] = 2000,
    seed: Annotated[int, typer.Option(help="Random seed (same seed, same devices).")] = 1,
    target: Annotated[Optional[float], typer.Option(help="Efficiency target [%]: share of devices reaching it.")] = None,
    terminals: Annotated[int, typer.Option("--terminals", "-t", help="2 or 4.")] = 2,
    spectrum: SpectrumOpt = "am1.5g",
    temperature: TemperatureOpt = 298.15,
    coupling: CouplingOpt = 0.0,
    rear_emission: RearEmissionOpt = False,
    series_resistance: SeriesOpt = 0.0,
    shunt_resistance: ShuntOpt = float("inf"),
    plot: Annotated[Optional[str], typer.Option(help="Write a histogram to this PNG/SVG.")] = None,
    overwrite: Annotated[bool, typer.Option(help="Replace an existing plot.")] = False,
    json_out: JsonOpt = False,
):
    """How fabrication scatter in gap and thickness spreads the efficiency of a design.

    Examples:

      tandem scatter perovskite-wide silicon --gap 1.72 --thickness 1000 --target 37.5 --plot spread.png

      tandem scatter organic-wide organic-narrow --thickness-sigma 10 --json
    """
    from tandem.design import Conditions, StackDesign
    from tandem.scatter import scatter

    flux = _photon_flux(spectrum, 6000.0, 1.0, None)
    tandem.stack.check_temperature(temperature)
    if terminals not in (2, 4):
        raise TandemInputError(f"--terminals {terminals}: choose 2 (series) or 4 (independent)")
    a_front, a_back = tandem.load_absorber(front), tandem.load_absorber(back)
    g = a_front.gap_eV if gap is None else gap
    flux.check_gap(g, "--gap")
    d = a_front.thickness_nm if thickness is None else _parse_thickness(thickness, "--thickness")
    bd = a_back.thickness_nm if back_thickness is None else _parse_thickness(back_thickness, "--back-thickness")
    cond = Conditions(flux, temperature, 1.0,
                      _electrical(coupling, series_resistance, shunt_resistance, rear_emission))
    result = scatter(StackDesign(a_front, a_back), cond, g, d, bd, gap_sigma, thickness_sigma,
                     samples, seed)
    stats = result.stats(terminals, target)
    stats.update({"front": a_front.key, "back": a_back.key, "front_gap_eV": g,
                  "front_thickness_nm": d, "gap_sigma_eV": gap_sigma,
                  "thickness_sigma_pct": thickness_sigma, "seed": seed, "caution": tandem.CAUTION})
    if plot:
        from tandem.plots import scatter_figure

        stats["outputs"] = [str(scatter_figure(result, terminals, target, plot, overwrite))]
    if json_out:
        _emit_json(stats)
        return
    table = Table(title=f"Fabrication scatter: {a_front.key} over {a_back.key}, {samples:,} devices "
                  f"({terminals}T)", title_justify="left")
    for col in ("nominal %", "mean %", "std %", "P10 %", "P50 %", "P90 %") + (("≥ target",) if target else ()):
        table.add_column(col, justify="right")
    row = [f"{stats[k]:.2f}" for k in ("nominal_pct", "mean_pct", "std_pct", "p10_pct", "p50_pct", "p90_pct")]
    if target:
        row.append(f"{stats['share_at_or_above_target_pct']:.1f} %")
    table.add_row(*row)
    out.print(table)
    out.print(f"design: front gap {g:.3f} eV ± {gap_sigma:g} eV, thickness {d:.0f} nm ± "
              f"{thickness_sigma:g} %; seed {seed}", highlight=False)
    for p in stats.get("outputs", []):
        out.print(f"wrote {p}", highlight=False)
    out.print(f"[dim]{tandem.CAUTION}[/]")


def main() -> None:
    """Console entry point (``tandem``)."""
    app(prog_name="tandem")


if __name__ == "__main__":
    main()
