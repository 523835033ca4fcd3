"""`tandem eqe`: measured subcell EQEs — currents, the limiting subcell, radiative Voc."""

from __future__ import annotations

from typing import Annotated, Optional


import tandem
from tandem.cli.options import (escape, Json, Overwrite, Plot, argument, emit_json, parse_floats, build_light,
                                build_operating, plain_option, say, render_table, parse_thickness, write_plot,
                                check_outputs, out)


def eqe(front: Annotated[str, argument("Front subcell's EQE: CSV of wavelength nm, EQE "
                                        "(fraction or %).")],
        back: Annotated[str, argument("Back subcell's EQE, measured in the stack.")],
        voc: Annotated[Optional[str], plain_option(help="Measured subcell Voc in V, FRONT,BACK: gives "
                                           "each ERE.", metavar="VF,VB")] = None,
        front_absorber: Annotated[Optional[str], plain_option(help="The front's absorber description: "
                                                      "the thickness that would match.")] = None,
        front_thickness: Annotated[Optional[str], plain_option(help="The front's present thickness, "
                                                       "e.g. 450nm.")] = None,
        back_absorber: Annotated[Optional[str], plain_option(help="The back's absorber description.")] = None,
        back_thickness: Annotated[Optional[str], plain_option(help="The back's present thickness, e.g. "
                                                      "160um.")] = None,
        scenario: Annotated[Optional[str], plain_option(help="Also the currents over this scenario's "
                                                "site and period.")] = None,
        plot: Plot = None, overwrite: Overwrite = False, json_out: Json = False, *, o):
    """Measured subcell EQEs: currents, which subcell limits, the Voc each implies.

    Examples:

      tandem eqe front-eqe.csv back-eqe.csv --voc 1.21,0.71

      tandem eqe front-eqe.csv back-eqe.csv --front-absorber perovskite-wide --front-thickness 450nm

      tandem eqe front-eqe.csv back-eqe.csv --scenario perovskite-silicon-rooftop
    """
    check_outputs([plot], overwrite, plot=True)
    operating = build_operating(o)
    vocs = None if voc is None else parse_floats(voc, "--voc")
    if vocs is not None and len(vocs) != 2:
        from tandem.core.errors import TandemInputError

        raise TandemInputError(f"--voc '{voc}': give FRONT,BACK in V, e.g. 1.21,0.71")
    series = None
    if scenario is not None:
        from tandem.study.sources import load_scenario
        series = load_scenario(scenario).site_series()
    result = tandem.measured_eqe(
        front, back, build_light(o), operating, voc_V=vocs, front_absorber=front_absorber,
        front_thickness_nm=front_thickness and parse_thickness(front_thickness, "--front-thickness"),
        back_absorber=back_absorber,
        back_thickness_nm=back_thickness and parse_thickness(back_thickness, "--back-thickness"),
        series=series)
    s = result.summary()
    if plot:
        write_plot(result, plot, overwrite)
    if json_out:
        return emit_json(s)
    out.print(render_table("Subcells from their measured EQE", [
        ("", lambda r: r["position"]), ("file", lambda r: r["name"]),
        ("Jsc mA/cm²", lambda r: f"{r['jsc_mA_cm2']:.2f}"),
        ("Voc,rad V", lambda r: f"{r['voc_radiative_V']:.3f}"),
        ("Voc V", lambda r: "—" if r["voc_measured_V"] is None else f"{r['voc_measured_V']:.3f}"),
        ("ERE", lambda r: "—" if r["ere"] is None else f"{r['ere']:.1e}"),
        ("tail meV", lambda r: "—" if r["urbach_tail_meV"] is None
         else f"{r['urbach_tail_meV']:.1f}")], s["subcells"],
        "Voc,rad: reciprocity (Rau 2007) from each EQE; ERE = exp(−q(Voc,rad − Voc)/kT)"))
    lines = [f"limiting subcell: {s['limiting_subcell']} (mismatch {s['mismatch_pct']:.2f} %)"]
    m = s["matching"]
    if m:
        lines.append(f"{m['subcell']} {m['absorber']} at {m['thickness_nm']:g} nm → "
                     + (f"{m['matched_thickness_nm']:.0f} nm would match the currents"
                        if m["matched_thickness_nm"] else m["note"]))
    y = s["year"]
    if y:
        lines.append(f"{y['source']}: {y['steps']:,} steps; the front limits for "
                     f"{y['share_of_light_with_front_limiting_pct']:.0f} % of the light; "
                     f"{y['mismatch_charge_pct']:.2f} % of the larger subcell's charge is "
                     "unmatched")
    say(*lines, *[f"note: {n}" for n in s["notes"]],
         f"spectrum: {s['spectrum']}; cell {s['temperature_K']:g} K")
    out.print(f"[dim]{escape(tandem.CAUTION)}[/]")
