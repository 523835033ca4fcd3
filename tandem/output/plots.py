"""Figures people read, written whole or not at all.

Figures are built with matplotlib's object interface (``matplotlib.figure.Figure``), never
through pyplot: importing this module or drawing a figure never changes a notebook's backend
or its list of open figures. ``draw_*`` functions return the Figure; ``*_figure`` functions
also write it.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.figure import Figure

from tandem.design.matching import MatchResult, stack_light
from tandem.core.files import write_whole
from tandem.core.units import HC_EV_NM, MA_CM2_PER_A_M2, length_text


class _Pyplotless:
    """The two pyplot calls this module used, on bare Figures (no backend, no registry)."""

    @staticmethod
    def subplots(*args, figsize=None, **kwargs):
        fig = Figure(figsize=figsize)
        return fig, fig.subplots(*args, **kwargs)

    @staticmethod
    def close(fig):
        pass


plt = _Pyplotless()

FRONT_COLOUR, BACK_COLOUR, SUN_COLOUR = "#1f77b4", "#d62728", "0.85"
#: Parasitic layers in photon budgets: neither the front's blue nor the back's red.
LAYER_COLOURS = ("#ff7f0e", "#2ca02c", "#9467bd", "#8c564b", "#e377c2", "#bcbd22", "#17becf",
                 "#7f7f7f")


DPI = 300  #: print resolution of PNG figures
PNG_COMPRESSION = 3  #: zlib level of PNG figures (lossless at any level; see savefig)


#: while :func:`svg_copies` is active: output file name → the same figure as SVG text
_SVG_SINK: dict | None = None


class svg_copies:
    """Collect an SVG copy of every figure written inside the block (for a report that
    inlines them without drawing them twice): ``with svg_copies() as svgs: ...``."""

    def __enter__(self) -> dict:
        global _SVG_SINK
        self.previous, _SVG_SINK = _SVG_SINK, {}
        return _SVG_SINK

    def __exit__(self, *exc) -> None:
        global _SVG_SINK
        _SVG_SINK = self.previous


def savefig(fig, target, fmt: str, name: str | None = None) -> None:
    """Save at print resolution; SVG keeps its text as text (editable), not as paths.
    ``name`` (the output's file name) files an SVG copy while :class:`svg_copies` collects."""
    import io

    import matplotlib

    # PNG at zlib level 3, not Pillow's 6: the same pixels (lossless), files about a third
    # larger, encoding about 2.5x faster (measured at 300 dpi: the level-6 encoding was a fifth
    # of a study's whole run)
    extra = {"pil_kwargs": {"compress_level": PNG_COMPRESSION}} if fmt == "png" else {}
    bbox = tight_bbox(fig)
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(target, dpi=DPI, bbox_inches=bbox, format=fmt,
                    metadata={"Creator": "tandem"} if fmt in ("svg", "pdf") else {"Software": "tandem"},
                    **extra)
        if _SVG_SINK is not None and name is not None:
            text = io.StringIO()
            fig.savefig(text, bbox_inches=bbox, format="svg", metadata={"Creator": "tandem"})
            _SVG_SINK[name] = text.getvalue()


def tight_bbox(fig):
    """The figure's tight bounding box [in], laid out once, at the PNG resolution.

    ``bbox_inches="tight"`` lays the whole figure out again at every save (each text's
    extent: a quarter of writing a figure as PNG and SVG); this box is computed once, kept on
    the figure, and the figure's layout frozen there, so every format shows the same area."""
    import matplotlib

    bbox = getattr(fig, "_tandem_tight_bbox", None)
    if bbox is None:
        dpi = fig.dpi
        fig.set_dpi(DPI)
        try:
            fig.draw_without_rendering()  # runs a layout engine's layout, as savefig would
            bbox = fig.get_tightbbox().padded(matplotlib.rcParams["savefig.pad_inches"])
        finally:
            fig.set_dpi(dpi)
        fig.set_layout_engine("none")
        fig._tandem_tight_bbox = bbox
    return bbox


def save_figure(fig, path, overwrite):
    def write(tmp: Path):
        savefig(fig, tmp, Path(path).suffix.lstrip(".") or "png", Path(path).name)

    try:
        return write_whole(path, write, overwrite)
    finally:
        plt.close(fig)


def match_figure(result: MatchResult, path, overwrite: bool = False, tolerance=None) -> Path:
    """Write :func:`draw_match` to ``path`` (PNG or SVG), whole or not at all."""
    return save_figure(draw_match(result, tolerance), path, overwrite)


def draw_match(result: MatchResult, tolerance=None, ax=None) -> Figure:
    """Subcell currents against front thickness, and absorptance against wavelength.

    With ``ax``, only the currents are drawn, into that axes; its Figure is returned.
    """
    sweep = result.best_sweep
    best = result.configurations[0]
    design, cond = result.design, result.conditions
    if ax is None:
        fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(11, 4.2))
    else:
        fig, ax1, ax2 = ax.figure, ax, None
    d = sweep.front_thickness_nm
    j = sweep.performance.j_light * MA_CM2_PER_A_M2
    ax1.plot(d, j[:, 0], color=FRONT_COLOUR, label=f"front: {design.front.name}")
    ax1.plot(d, j[:, 1], color=BACK_COLOUR, label=f"back: {design.back.name}")
    if best.matched_front_thickness_nm is not None:
        dm = best.matched_front_thickness_nm
        jm = _front_current_at(result, dm)
        ax1.axvline(dm, color="0.4", ls="--", lw=1)
        ax1.plot([dm], [jm], "ko")
        ax1.annotate(f"matched: {dm:.0f} nm\n{jm:.2f} mA/cm²", (dm, jm), xytext=(-8, 14),
                     textcoords="offset points", fontsize=8, ha="right",
                     bbox={"boxstyle": "round", "fc": "white", "ec": "0.8"})
    ax1.axvline(best.front_thickness_nm, color="0.6", ls=":", lw=1)
    if tolerance is not None:
        lo, hi = tolerance["front_thickness_window_nm"]
        ax1.axvspan(lo, hi, color="0.92", zorder=0,
                    label=f"within {tolerance['loss_pct_abs']:g} % of best: {lo:.0f}–{hi:.0f} nm")
    ax1.set_xscale("log")
    ax1.xaxis.set_major_locator(matplotlib.ticker.LogLocator(subs=(1.0, 2.0, 5.0)))
    ax1.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    ax1.xaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
    ax1.set_xlabel("front thickness [nm]")
    ax1.set_ylabel("photocurrent [mA/cm²]")
    back_d = sweep.back_thickness_nm
    ax1.set_title(f"front gap {sweep.front_gap_eV:.3f} eV, back {length_text(back_d)}", fontsize=10)
    ax1.legend(fontsize=8, loc="best", framealpha=0.9)  # where it covers the least
    ax1.grid(alpha=0.3)
    if ax2 is None:
        return fig

    e = cond.photon_flux.energy
    light = stack_light(design, e, best.front_gap_eV, best.front_thickness_nm,
                        best.back_thickness_nm, temperature_K=cond.temperature_K)
    wl = HC_EV_NM / e
    keep = (wl >= 300) & (wl <= 1400)
    flux_per_nm = cond.photon_flux.flux * e**2 / HC_EV_NM  # Φ_λ = Φ_E·|dE/dλ|
    ax2.fill_between(wl[keep], 0, flux_per_nm[keep] / flux_per_nm[keep].max(), color=SUN_COLOUR,
                     label="incident photons per nm (scaled)")
    front_eqe = np.reshape(light.front_eqe, (-1, e.size))[0]
    back_eqe = np.reshape(light.back_eqe, (-1, e.size))[0]
    ax2.plot(wl[keep], front_eqe[keep], color=FRONT_COLOUR, label="front EQE")
    ax2.plot(wl[keep], back_eqe[keep], color=BACK_COLOUR, label="back EQE")
    ax2.set_xlabel("wavelength [nm]")
    ax2.set_ylabel("absorptance collected (EQE) [-]")
    ax2.set_ylim(0, 1.05)
    three = f" 3T {100 * best.efficiency(3):.1f} %," if result.terminals == 3 else ""
    ax2.set_title(f"at front {best.front_thickness_nm:.0f} nm: 2T {100 * best.efficiency_2t:.1f} %,"
                  f"{three} 4T {100 * best.efficiency_4t:.1f} %", fontsize=10)
    # the EQEs fill the panel: their legend goes under it, covering no curve
    ax2.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=3,
               frameon=False)
    ax2.grid(alpha=0.3)
    fig.suptitle("Modelling limits, not measurements", fontsize=8, x=0.99, ha="right", color="0.4")
    from tandem.design.matching import outside_ranges

    outside = outside_ranges(result.design, best.front_gap_eV, best.front_thickness_nm,
                             best.back_thickness_nm)
    if outside:  # allowed by --outside-range, and said on the figure as in the table
        fig.text(0.01, 0.99, "outside the absorbers' declared ranges: " + "; ".join(outside),
                 ha="left", va="top", fontsize=8, color="#b00000")
    return fig


def _front_current_at(result: MatchResult, thickness_nm: float) -> float:
    from tandem.design.matching import stack_performance

    best = result.configurations[0]
    perf = stack_performance(result.design, result.conditions, best.front_gap_eV, thickness_nm,
                             best.back_thickness_nm)
    return float(perf.j_light[0]) * MA_CM2_PER_A_M2


def absorber_figure(absorber, path, overwrite: bool = False) -> Path:
    """Write :func:`draw_absorber` to ``path`` (PNG or SVG), whole or not at all."""
    return save_figure(draw_absorber(absorber), path, overwrite)


def draw_absorber(absorber) -> Figure:
    """Absorption coefficient against wavelength, log scale."""
    wl = np.linspace(300, 1400, 1101)
    fig, ax = plt.subplots(figsize=(6, 4))
    ax.semilogy(wl, absorber.alpha(HC_EV_NM / wl), color=FRONT_COLOUR)
    ax.axvline(HC_EV_NM / absorber.gap_eV, color="0.5", ls="--", lw=1,
               label=f"gap {absorber.gap_eV:.3f} eV")
    ax.set_ylim(1e-1, None)
    ax.set_xlabel("wavelength [nm]")
    ax.set_ylabel("absorption coefficient [cm⁻¹]")
    ax.set_title(absorber.name)
    ax.legend()
    ax.grid(alpha=0.3, which="both")
    return fig


def draw_map(gap_map, terminals, tolerance_pct=1.0, marks=(), ax=None) -> Figure:
    """Efficiency over front × back gaps (or a line for one back gap), optimum and window."""
    return _map_axes_figure(gap_map, terminals, tolerance_pct, marks, ax)


def _map_axes_figure(gap_map, terminals, tolerance_pct, marks, ax=None, note=None):
    from tandem.design.matching import tolerance_window

    eff = 100 * gap_map.efficiency(terminals)
    i, j = gap_map.optimum(terminals)
    fg, bg = gap_map.front_gaps, gap_map.back_gaps
    if bg.size == 1:  # one-dimensional scan
        fig, ax = plt.subplots(figsize=(6.5, 4.2)) if ax is None else (ax.figure, ax)
        ax.plot(fg, 100 * gap_map.efficiency_2t[:, 0], color=FRONT_COLOUR, label="two-terminal")
        ax.plot(fg, 100 * gap_map.efficiency_4t[:, 0], color=BACK_COLOUR, ls="--",
                label="four-terminal")
        if terminals == 3:
            ax.plot(fg, eff[:, 0], color="0.2", ls="-.", label="three-terminal")
        lo, hi = tolerance_window(fg, eff[:, 0], tolerance_pct)
        ax.axvspan(lo, hi, color="0.9", label=f"within {tolerance_pct:g} % of best: "
                   f"{lo:.3f}–{hi:.3f} eV")
        ax.plot([fg[i]], [eff[i, 0]], "ko")
        ax.annotate(f"{eff[i, 0]:.2f} % at {fg[i]:.3f} eV", (fg[i], eff[i, 0]), xytext=(6, 6),
                    textcoords="offset points", fontsize=8)
        for name, gap, *role in marks:
            if role and role[0] == "back":
                continue
            ax.axvline(gap, color="0.4", lw=0.8, ls=":")
            ax.text(gap, ax.get_ylim()[0], f" {name}", rotation=90, va="bottom", fontsize=7)
        ax.set_xlabel("front gap [eV]")
        ax.set_ylabel("efficiency [%]")
        ax.set_title(f"back gap {bg[0]:.3f} eV, {gap_map.spectrum}, {gap_map.temperature_K:g} K",
                     fontsize=9)
        ax.legend(fontsize=8)
        ax.grid(alpha=0.3)
        return fig
    # beside the map, what a middle contact and voltage-matched strings recover over two
    panels = ([("3t", 100 * (gap_map.efficiency(3) - gap_map.efficiency_2t))] if terminals == 3
              else [])
    if gap_map.efficiency_vm is not None:
        panels.append(("vm", 100 * (np.nanmax(gap_map.efficiency_vm, axis=-1)
                                    - gap_map.efficiency_2t)))
    if ax is not None:
        fig, extra = ax.figure, []
    elif panels:
        fig, axes = plt.subplots(1, 1 + len(panels), figsize=(6.5 + 6 * len(panels), 5.6))
        ax, extra = axes[0], list(axes[1:])
    else:
        fig, ax = plt.subplots(figsize=(7, 5.6))
        extra = []
    B, F = np.meshgrid(bg, fg)
    for gain_ax, (kind, gain) in zip(extra, panels):
        _gain_panel(fig, gain_ax, B, F, gain, gap_map, kind)
    best = np.nanmax(eff)
    levels = np.arange(np.floor(np.nanmin(eff)), np.ceil(best) + 0.5, 0.5)
    filled = ax.contourf(B, F, eff, levels=levels, cmap="viridis")
    # labelled iso-efficiency lines: coarse far from the optimum, finer close to it
    marks_pct = [v for v in (10, 20, 30, 35, 40, 42, 44, 45, 46, 47, 48) if np.nanmin(eff) < v < best]
    if marks_pct:
        lines = ax.contour(B, F, eff, levels=marks_pct, colors="white", linewidths=0.7)
        ax.clabel(lines, fmt="%g %%", fontsize=7)
    fig.colorbar(filled, ax=ax, label=f"{terminals}-terminal efficiency [%]")
    ax.contour(B, F, eff, levels=[best - tolerance_pct], colors="orange", linewidths=1.2,
               linestyles="--")
    balance = gap_map.j_front - gap_map.j_back
    if np.nanmin(balance) < 0 < np.nanmax(balance):
        ax.contour(B, F, balance, levels=[0], colors="red", linewidths=1.2)
    ax.plot([bg[j]], [fg[i]], marker="*", color="red", ms=12, mec="white")
    ax.annotate(f"{eff[i, j]:.2f} %\n{fg[i]:.3f}/{bg[j]:.3f} eV", (bg[j], fg[i]), xytext=(10, -28),
                textcoords="offset points", fontsize=8,
                bbox={"boxstyle": "round", "fc": "white", "ec": "0.6", "alpha": 0.9})
    for name, gap, *role in marks:  # a candidate is marked on the axis of its position
        role = role[0] if role else None
        if role != "front" and bg[0] <= gap <= bg[-1]:
            ax.axvline(gap, color="white", lw=0.8, ls=":")
            ax.text(gap, fg[0], f" {name}", rotation=90, va="bottom", fontsize=7, color="white")
        if role != "back" and fg[0] <= gap <= fg[-1]:
            ax.axhline(gap, color="white", lw=0.8, ls=":")
            ax.text(bg[-1], gap, f"{name} ", ha="right", va="bottom", fontsize=7, color="white")
    ax.set_xlabel("back gap [eV]")
    ax.set_ylabel("front gap [eV]")
    ax.set_title((f"{note}\n" if note else "")
                 + f"{gap_map.spectrum}, cell {gap_map.temperature_K:g} K\nred: equal currents; "
                 f"orange dashed: within {tolerance_pct:g} % of best", fontsize=8)
    return fig


def _gain_panel(fig, ax, B, F, gain, gap_map, kind: str) -> None:
    """What three terminals (``kind`` '3t', never negative) or the best of the voltage-matched
    string ratios ('vm', which can fall below two terminals: a diverging scale, and each ratio
    named where it is the best) recover over two terminals [% abs]."""
    if kind == "3t":
        steps = matplotlib.ticker.MaxNLocator(12).tick_values(0, max(np.nanmax(gain), 0.1))
        shade = ax.contourf(B, F, gain, levels=steps, cmap="magma")
        label, title = "3T − 2T efficiency [% abs]", "what three terminals recover over two"
    else:
        reach = max(np.nanmax(np.abs(gain)), 0.1)
        steps = matplotlib.ticker.MaxNLocator(16, symmetric=True).tick_values(-reach, reach)
        shade = ax.contourf(B, F, gain, levels=steps, cmap="RdBu_r")
        label = "best voltage-matched − 2T efficiency [% abs]"
        title = "what voltage-matched strings recover over two (best ratio, named where it wins)"
        best = np.nanargmax(np.where(np.isnan(gap_map.efficiency_vm), -np.inf,
                                     gap_map.efficiency_vm), axis=-1)
        for k, (m, n) in enumerate(gap_map.string_ratios):
            where = (best == k) & np.isfinite(gain)
            if where.sum() >= 4:  # name the ratio at the middle of where it wins
                ax.text(np.median(B[where]), np.median(F[where]), f"{m}:{n}", fontsize=8,
                        ha="center", va="center", color="k",
                        bbox={"boxstyle": "round", "fc": "white", "ec": "none", "alpha": 0.7})
    fig.colorbar(shade, ax=ax, label=label)
    balance = gap_map.j_front - gap_map.j_back
    if np.nanmin(balance) < 0 < np.nanmax(balance):
        ax.contour(B, F, balance, levels=[0], colors="cyan", linewidths=1.0)
    ax.set_xlabel("back gap [eV]")
    ax.set_ylabel("front gap [eV]")
    ax.set_title(f"{title}\ncyan: equal currents", fontsize=8)


def map_figures(gap_map, terminals, tolerance_pct, marks, prefix: str | Path,
                overwrite: bool = False, tables: dict | None = None,
                note: str | None = None) -> list[Path]:
    """PNG and SVG of the map, plus any ``tables`` {suffix: writer}, written as one group;
    ``note`` heads the title (what the map is, where that is not obvious)."""
    from tandem.core.files import write_all_whole

    fig = _map_axes_figure(gap_map, terminals, tolerance_pct, marks, note=note)
    fig.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7, color="0.4")
    prefix = Path(prefix)
    writers = {
        prefix.with_suffix(".png"): lambda p: savefig(fig, p, "png", prefix.with_suffix(".png").name),
        prefix.with_suffix(".svg"): lambda p: savefig(fig, p, "svg"),
    }
    for suffix, writer in (tables or {}).items():
        writers[prefix.with_suffix(suffix)] = writer
    try:
        return write_all_whole(writers, overwrite)
    finally:
        plt.close(fig)


def draw_limit(result, ax=None) -> Figure:
    """Current–voltage curves of each subcell (and the series stack) with maximum power points.

    ``result`` is a :class:`~tandem.physics.limit.DesignResult`.
    """
    from tandem.physics.detailed_balance import two_diode_current

    perf = result.performance
    fig, ax = plt.subplots(figsize=(6.5, 4.2)) if ax is None else (ax.figure, ax)
    names = ("front", "back") if result.n_subcells == 2 else ("cell",)
    colours = (FRONT_COLOUR, BACK_COLOUR)
    for i, name in enumerate(names):
        v = np.linspace(0.0, float(perf.voc[i]), 400)
        j = two_diode_current(v, perf.j_light[i], perf.j0_radiative[i], perf.j0_nonradiative[i],
                              perf.ideality, result.temperature_K)
        ax.plot(v, j * MA_CM2_PER_A_M2, color=colours[i], label=f"{name} {result.gaps_eV[i]:.3f} eV")
        ax.plot([perf.v_own[i]], [perf.j_own[i] * MA_CM2_PER_A_M2], "o", color=colours[i])
    if result.n_subcells == 2:
        from tandem.physics.detailed_balance import two_diode_voltage

        # the series stack: one current through both, the voltages add (ideal diodes, as the
        # subcell curves; resistances and coupling move only the starred point)
        # currents dense near the limiting photocurrent, where the knee is; at short circuit
        # the limiting subcell is reverse biased and the stack carries its photocurrent
        j_min = float(np.min(perf.j_light))
        j = j_min * (1 - np.geomspace(1e-12, 1.0, 400))
        v = sum(two_diode_voltage(j, perf.j_light[i], perf.j0_radiative[i],
                                  perf.j0_nonradiative[i], perf.ideality, result.temperature_K)
                for i in range(2))
        ax.plot(np.concatenate([[0.0], v]), np.concatenate([[j_min], j]) * MA_CM2_PER_A_M2,
                color="k", lw=1.2, label="series stack (2T)")
        ax.plot([float(perf.v_2t)], [float(perf.j_2t) * MA_CM2_PER_A_M2], "k*", ms=11,
                label=f"series maximum power: {100 * float(perf.efficiency_2t):.2f} %")
    ax.set_xlabel("voltage [V]")
    ax.set_ylabel("current density [mA/cm²]")
    ax.set_ylim(0, None)
    ax.set_xlim(0, None)
    ax.set_title(f"{result.spectrum_name}, cell {result.temperature_K:g} K", fontsize=9)
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    return fig


def draw_pair_comparison(results: dict, terminals: int = 2, ax=None) -> Figure:
    """The candidate pairs side by side: each pair's efficiency against front thickness at its
    best front gap (its best sweep), the current-matched thickness marked with a circle and
    the best design with a star."""
    fig, ax = plt.subplots(figsize=(7.5, 4.6)) if ax is None else (ax.figure, ax)
    colours = (FRONT_COLOUR, BACK_COLOUR) + LAYER_COLOURS
    circles = 0
    for k, r in enumerate(results.values()):
        sweep, best = r.best_sweep, r.configurations[0]
        eff = 100 * sweep.performance.efficiency(terminals)
        colour = colours[k % len(colours)]
        ax.plot(sweep.front_thickness_nm, eff, color=colour, lw=1.4,
                label=f"{r.design.title} ({sweep.front_gap_eV:.3f} eV)")
        best_eff = 100 * best.efficiency(terminals)
        ax.plot([best.front_thickness_nm], [best_eff], "*", color=colour, ms=11, mec="k",
                mew=0.5, clip_on=False, zorder=5)
        if best.matched_front_thickness_nm is not None:
            ax.plot([best.matched_front_thickness_nm],
                    [np.interp(best.matched_front_thickness_nm, sweep.front_thickness_nm, eff)],
                    "o", mfc="white", mec=colour, ms=6, zorder=5)
            circles += 1
    ax.set_xscale("log")
    ax.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    ax.set_xlabel("front thickness [nm]")
    ax.set_ylabel(f"{terminals}-terminal efficiency [%]")
    # the circles' key only where one is drawn: a pair limited by one subcell at every
    # thickness in its range has no current-matched thickness to mark
    ax.set_title("candidate pairs at their best front gap — star: best design; "
                 + ("circle: current-matched thickness" if circles else
                    "no pair current-matches within its thickness range"), fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    fig.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7,
             color="0.4")
    return fig


def draw_loss_breakdown(breakdown, title: str = "", ax=None) -> Figure:
    """A waterfall from the incident power to the output: each step a bar hanging from what
    is left before it [% of the incident power]."""
    if ax is None:
        fig, ax = plt.subplots(figsize=(9, 4.8))
    else:
        fig = ax.figure
    incident = breakdown.incident_W_m2
    steps = [s for s in breakdown.steps[:-1] if abs(s.power_W_m2) > 1e-4 * incident]
    names = ["incident"] + [s.name for s in steps] + ["output"]
    left = 100.0
    ax.bar(0, 100.0, color="0.75", width=0.7)
    for k, s in enumerate(steps, 1):
        share = 100 * s.power_W_m2 / incident
        ax.bar(k, -share, bottom=left, width=0.7, color=BACK_COLOUR if share > 0 else "#2ca02c")
        ax.text(k, left + 1.0, f"{share:.1f}", ha="center", va="bottom", fontsize=7)
        left -= share
    out = 100 * breakdown.output_W_m2 / incident
    ax.bar(len(names) - 1, out, width=0.7, color=FRONT_COLOUR)
    ax.text(len(names) - 1, out + 1.0, f"{out:.1f}", ha="center", va="bottom", fontsize=8,
            weight="bold")
    ax.set_xticks(range(len(names)), names, rotation=35, ha="right", fontsize=8)
    ax.set_ylabel("share of the incident power [%]")
    ax.set_ylim(0, 108)
    ax.grid(alpha=0.3, axis="y")
    ax.set_title(title or "where the incident power goes", fontsize=10)
    remarks = []
    if breakdown.mismatch_W_m2 is not None:  # the cost of series connection, beside the steps
        remarks.append(f"at the two-terminal operating point; four terminals would give "
                       f"{100 * breakdown.mismatch_W_m2 / incident:.2f} % more (current mismatch)")
    small = [s for s in breakdown.steps[:-1] if s not in steps]
    if small:  # too small for a bar: named, never silently left out
        remarks.append("not drawn, under 0.01 % each: " + ", ".join(s.name for s in small))
    if remarks:  # between the title and the bars, clear of the bars' labels
        ax.set_title(title or "where the incident power goes", fontsize=10,
                     pad=6 + 9 * len(remarks))
        ax.annotate("\n".join(remarks), (0.5, 1.0), xycoords="axes fraction",
                    xytext=(0, 3), textcoords="offset points", ha="center", va="bottom",
                    fontsize=7, color="0.3")
    fig.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7,
             color="0.4")
    fig.tight_layout()
    return fig


def breakdown_figure(breakdown, path, title: str = "", overwrite: bool = False) -> Path:
    """Write :func:`draw_loss_breakdown` to ``path``, whole or not at all."""
    return save_figure(draw_loss_breakdown(breakdown, title), path, overwrite)


def draw_eqe(result, ax=None) -> Figure:
    """Both measured EQEs over wavelength, their radiative tails, and which subcell limits."""
    if ax is None:
        fig, ax = plt.subplots(figsize=(7.5, 4.2))
    else:
        fig = ax.figure
    summary = result.summary()
    for m, colour, sub in zip(result.curves, (FRONT_COLOUR, BACK_COLOUR), summary["subcells"]):
        wl = HC_EV_NM / m.energy_eV
        ax.plot(wl, m.eqe, color=colour, label=f"{sub['position']}: {m.name}, "
                f"{sub['jsc_mA_cm2']:.2f} mA/cm², Voc,rad {sub['voc_radiative_V']:.3f} V")
    ax.set_xlabel("wavelength [nm]")
    ax.set_ylabel("EQE [-]")
    ax.set_ylim(0, 1.05)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="upper right")
    ax.set_title(f"the {summary['limiting_subcell']} subcell limits (mismatch "
                 f"{summary['mismatch_pct']:.2f} %), {result.spectrum}", fontsize=9)
    fig.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7,
             color="0.4")
    return fig
