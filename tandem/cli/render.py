"""Longer renderings kept out of cli.py: the bundled catalogue and `tandem match --stack`.

Parse, call the library, render; no physics here.
"""

from __future__ import annotations


import tandem
from tandem.cli.options import (escape, progress_callback, emit_json, build_light, build_operating, progress_bar, say,
                                render_table, check_outputs, err, out)
from tandem.core.errors import TandemInputError
from tandem.core.units import length_text


def stack_match(stack: str, o: dict, points: int, plot: str | None, budget: str | None,
                overwrite: bool, quiet: bool, json_out: bool, wide: bool, unused: dict,
                large: bool = False) -> None:
    """Match the front absorber of a layer stack and report where the photons go."""
    given = [name for name, value in unused.items() if value]
    if given:
        raise TandemInputError(f"--stack does not use {', '.join(given)}: it takes the absorbers "
                               "and thicknesses from the stack file (sweep a layer with "
                               "thickness_nm = [thin, thick]) and reports its losses layer by "
                               "layer; drop them")
    if build_operating(o).optical_losses_given():
        raise TandemInputError("--stack computes reflection and parasitic absorption layer by "
                               "layer; drop --reflectance, --front-parasitic and "
                               "--interlayer-parasitic")
    loaded = tandem.load_stack(stack)
    figure = plot or f"photons-{loaded.key}.png"
    if budget is not None and not budget.lower().endswith((".csv", ".nc")):
        raise TandemInputError(f"--budget '{budget}': give a .csv file name (the per-wavelength "
                               "table) or .nc (NetCDF: the table and the generation profiles)")
    check_outputs([figure], overwrite, plot=True)
    check_outputs([budget], overwrite)
    with progress_bar(quiet or json_out, "matching") as bar:
        result = tandem.match_stack(loaded, build_light(o), build_operating(o), points=points,
                                    progress=progress_callback(bar), allow_large=large)
    from tandem.output.stack_plots import stack_figure

    s = result.summary()
    s["outputs"] = [str(stack_figure(result, figure, overwrite))]
    if budget is not None:
        from tandem.core.files import write_csv, write_netcdf, write_whole

        if budget.lower().endswith(".nc"):
            dataset = result.budget_dataset()
            write = lambda p: write_netcdf(dataset, p)  # noqa: E731
        else:
            table = result.budget_frame()
            write = lambda p: write_csv(table, p)  # noqa: E731
        s["outputs"].append(str(write_whole(budget, write, overwrite)))
    if json_out:
        return emit_json(s)
    swept = [k for k in s["best"] if k.endswith("[nm]")]
    columns = [(k.replace(" [nm]", " nm"), lambda r, k=k: f"{r[k]:.0f}") for k in swept] + [
        ("front nm", lambda r: f"{r['front_thickness_nm']:.0f}"),
        ("Jsc front", lambda r: f"{r['jsc_front_mA_cm2']:.2f}"),
        ("Jsc back", lambda r: f"{r['jsc_back_mA_cm2']:.2f}"),
        ("2T %", lambda r: f"{r['efficiency_2t_pct']:.2f}"),
        ("4T %", lambda r: f"{r['efficiency_4t_pct']:.2f}")]
    rows = s["matches"] or [s["best"]]
    caption = (f"current matches of {s['front']}, best 2T first" if s["matches"] else
               f"no current match of {s['front']}: the best two-terminal point")
    out.print(render_table(s["title"], columns, rows, f"{caption}; Jsc in mA/cm²", wide))
    losses = [{"where": k, "lost": v} for k, v in s["parasitic_loss_mA_cm2"].items()]
    losses.append({"where": "reflected or escaped", "lost": s["reflected_or_escaped_mA_cm2"]})
    if s["transmitted_mA_cm2"] > 0:  # a single-pass wafer lets light out through its back
        losses.append({"where": "transmitted", "lost": s["transmitted_mA_cm2"]})
    out.print(render_table("usable photons lost",
                     [("layer", lambda r: r["where"]), ("mA/cm²", lambda r: f"{r['lost']:.2f}")],
                     losses, f"above {s['losses_counted_above_eV']:.3f} eV",
                     wide=wide))
    b, lite = s["best"], s["optics_lite_matched_front_thickness_nm"]
    say((f"current-matched {s['front']} thickness: {b['front_thickness_nm']:.0f} nm"
          if b["current_matched"] else "no current match in the swept range")
         + "".join(f", {k.replace(' [nm]', '')} {b[k]:.0f} nm" for k in swept)
         + f"; 2T {b['efficiency_2t_pct']:.2f} %, 4T {b['efficiency_4t_pct']:.2f} %",
         f"best four-terminal: {s['best_4t']['efficiency_4t_pct']:.2f} % at "
         f"{s['best_4t']['front_thickness_nm']:.0f} nm"
         + "".join(f", {k.replace(' [nm]', '')} {s['best_4t'][k]:.0f} nm" for k in swept),
         "optics-lite (no interference, no layer losses) matches at "
         + (f"{lite:.0f} nm" if lite else "no thickness in range"),
         *[f"generation in {g['layer']}: half of its carriers within {length_text(g['half_depth_nm'])} "
           f"of its sun side, peak {g['peak_per_cm3_s']:.2e} cm⁻³s⁻¹ at {length_text(g['peak_depth_nm'])}"
           for g in s["generation"] if g["half_depth_nm"] is not None],
         *[f"note: {n}" for n in s["notes"]],
         f"spectrum: {s['spectrum']}, {s['irradiance_W_m2']:.2f} W/m²; cell {s['temperature_K']:g} K")
    err.print(f"wrote {escape(', '.join(s['outputs']))}")
    out.print(f"[dim]{escape(s['caution'])}[/]")


def list_bundled(json_out: bool) -> None:
    """The bundled absorber descriptions and layer stacks."""
    import tomllib

    found = [tandem.load_absorber(k) for k in tandem.bundled_absorbers()]
    # a listing needs each stack's title and layer names, not its optics: read the text only
    # (resolving the database's n,k tables took about 2 s)
    stacks = []
    for key, path in tandem.bundled_stacks().items():
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        stacks.append({"name": key, "title": data.get("title", key),
                       "layers": [x.get("name", "?") for x in data.get("layer", [])]})
    if json_out:
        return emit_json({"absorbers": [tandem.absorber_summary(a) for a in found],
                           "stacks": stacks})
    out.print(render_table("Bundled absorbers", [
        ("name", lambda a: a.key), ("description", lambda a: a.name),
        ("gap eV", lambda a: "{:.2f}–{:.2f}".format(*a.gap_range_eV) if a.tunable
         else f"{a.gap_eV:.3f}"), ("edge", lambda a: a.edge_model),
        ("thickness", lambda a: length_text(a.thickness_nm)),
        ("trapping", lambda a: a.light_trapping), ("ERE", lambda a: f"{a.ere:.1e}")], found))
    out.print(render_table("Bundled layer stacks (tandem match --stack NAME)", [
        ("name", lambda s: s["name"]), ("title", lambda s: s["title"]),
        ("layers", lambda s: str(len(s["layers"])))], stacks))
    say("Add your own: pass the path of a .toml file written to the schemas in docs/file-formats.md.")


def show_absorber(name: str, plot, overwrite: bool, json_out: bool) -> None:
    """One absorber's resolved parameters, α at eight wavelengths and its sources."""
    check_outputs([plot], overwrite, plot=True)
    a = tandem.load_absorber(name)
    s = tandem.absorber_summary(a)
    if json_out:
        emit_json(s)
    else:
        rows: list[tuple[str, str]] = []
        for k, v in s.items():
            if k in ("sources", "alpha_per_cm"):
                continue
            # a nested group (the recombination parameters) as one line per field
            rows += ([(f"{k}: {kk}", _plain(vv)) for kk, vv in v.items() if vv is not None]
                     if isinstance(v, dict) else [(k, _plain(v))])
        rows += [(f"α at {wl}", f"{v:.3g} cm⁻¹") for wl, v in s["alpha_per_cm"].items()]
        rows += [(f"source: {k}", v) for k, v in s["sources"].items()]
        # field: value lines, not a table: a long value (a path, a citation) wraps at words
        # onto its own line instead of being folded inside a narrow column
        out.print(f"[bold]{escape(a.name)} ({escape(a.key)})[/]")
        say(*(f"{k}: {v}" for k, v in rows))
    if plot:
        from tandem.output.plots import absorber_figure

        err.print(f"wrote {escape(str(absorber_figure(a, plot, overwrite)))}")


def show_breakdown(result, path, overwrite: bool, title: str, json_out: bool) -> dict:
    """Print a design's loss breakdown and write its waterfall; returns it for --json."""
    from tandem.output.plots import breakdown_figure

    b = result.loss_breakdown()
    written = breakdown_figure(b, path, title, overwrite)
    rows = b.rows()
    err.print(f"wrote {escape(str(written))}")
    mismatch = None if b.mismatch_W_m2 is None else round(b.mismatch_W_m2, 4)
    if json_out:
        return {"incident_W_m2": b.incident_W_m2, "steps": rows, "mismatch_W_m2": mismatch,
                "figure": str(written)}
    where = ("the two-terminal operating point" if b.mismatch_W_m2 is not None else
             "the two loads' joint maximum power point" if b.terminals == 3 else
             "each subcell's own maximum power point")
    out.print(render_table("where the incident power goes", [
        ("step", lambda r: r["step"]), ("W/m²", lambda r: f"{r['power_W_m2']:.2f}"),
        ("%", lambda r: f"{r['share_pct']:.2f}"), ("equation", lambda r: r["equation"])], rows,
        f"incident {b.incident_W_m2:.2f} W/m²; the steps add up to it exactly, at {where}"))
    if mismatch is not None:
        say(f"current mismatch: the same cells at four terminals give {mismatch:.2f} W/m² "
            f"({100 * mismatch / b.incident_W_m2:.2f} %) more; at the series current the subcell "
            "with spare photocurrent recombines it (emission and operating-point steps)")
    return {}


def show_version(value: bool) -> None:
    """The --version callback."""
    import typer

    if value:
        out.print(f"tandem {tandem.__version__}")
        raise typer.Exit()


def _plain(value) -> str:
    """A value as a reader writes it: no Python reprs (None, 17 significant digits, [a, b])."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, (list, tuple)):
        return "–".join(_plain(v) for v in value)
    return str(value)
