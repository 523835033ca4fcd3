"""tandem: design two-junction solar cells from the command line.

A thin layer: parse options, call the ``tandem`` library, render with rich. No physics here.
Machine output (``--json``) goes alone to stdout; errors, notes and progress go to stderr.
"""

from __future__ import annotations

import functools
import json
import sys
from typing import Annotated, Optional

import typer
from rich.console import Console
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
out = Console()
err = Console(stderr=True)


def friendly(command):
    """Turn the library's input errors into one line on stderr and exit code 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except TandemInputError as exc:
            err.print(f"[bold red]error:[/] {exc}", highlight=False, soft_wrap=True)
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
    json_out: JsonOpt = False,
):
    """Detailed-balance limit of a single junction or a two-junction stack of step absorbers.

    Examples:

      tandem limit 1.34 --temperature 300

      tandem limit 1.73 1.12 --terminals 4 --ere 0.01

      tandem limit 1.1 -s blackbody --concentration 46238 --json
    """
    flux = _photon_flux(spectrum, sun_temperature, concentration, irradiance)
    result = tandem.detailed_balance_limit(gaps, flux, terminals, temperature,
                                           _parse_floats(ere, "--ere"), ideality)
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
    for note in s["spectrum_notes"]:
        out.print(f"note: {note}", highlight=False)
    out.print(f"[dim]{s['caution']}[/]")


def main() -> None:
    """Console entry point (``tandem``)."""
    app()


if __name__ == "__main__":
    main()
