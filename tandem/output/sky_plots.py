"""Figures of energy under real skies and of spread: a year's yield, regions of sites, the
fabrication spread of a design. Drawn like every figure (see :mod:`tandem.output.plots`)."""

from __future__ import annotations

from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.figure import Figure

from tandem.output.plots import BACK_COLOUR, FRONT_COLOUR, plt, savefig


def yield_figures(sweep, best, prefix: str | Path, overwrite: bool = False,
                  data: dict | None = None) -> list[Path]:
    """Three figures: a day's subcell currents, monthly energy (2T/4T), the yield map.

    ``data`` maps further output paths to writers; all are written as one (whole or none).
    """
    from tandem.core.files import write_all_whole

    prefix = Path(prefix)
    figs = {}
    i, j = sweep.optimum
    stack = getattr(sweep.design, "stack", None)
    pair = (f"{sweep.design.front.name} over {sweep.design.back.name}"
            + (f" (stack {stack.key})" if stack is not None else ""))
    # every figure says which design, where: the series' source names the site or file
    from tandem.design.matching import outside_ranges

    outside = outside_ranges(sweep.design, float(sweep.gaps[i]), float(sweep.thicknesses[j]),
                             sweep.back_thickness_nm)
    heading = (f"{pair}: front {sweep.gaps[i]:.3f} eV, {sweep.thicknesses[j]:.0f} nm "
               f"(energy-optimal)\n{sweep.series.source}"
               + ("\noutside the absorbers' declared ranges: " + "; ".join(outside) if outside else ""))
    # --- a day: the one with the most light, which shows the noon peak and the red mornings
    days = best.times.normalize()
    daily = {d: float((best.irradiance * best.step_hours)[days == d].sum()) for d in days.unique()}
    day = max(daily, key=lambda d: daily[d])
    sel = days == day
    hours = best.times[sel].hour + best.times[sel].minute / 60
    jf, jb = best.j_front[sel] / 10, best.j_back[sel] / 10
    fig, (ax, ax2) = plt.subplots(2, 1, figsize=(6.5, 5.5), sharex=True,
                                  gridspec_kw={"height_ratios": [2, 1]})
    ax.plot(hours, jf, color=FRONT_COLOUR, marker="o", ms=3, label="front photocurrent")
    ax.plot(hours, jb, color=BACK_COLOUR, marker="o", ms=3, label="back photocurrent")
    ax.set_ylabel("photocurrent [mA/cm²]")
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    balance = 100 * (jf - jb) / np.maximum(np.minimum(jf, jb), 1e-12)
    ax2.bar(hours, balance, width=0.8 * float(np.median(np.diff(hours))) if hours.size > 1 else 0.5,
            color=np.where(balance < 0, FRONT_COLOUR, BACK_COLOUR))
    ax2.axhline(0, color="0.3", lw=0.8)
    bright = np.minimum(jf, jb) > 0.1 * max(float(np.max(np.minimum(jf, jb))), 1e-12)
    if bright.any():  # dawn and dusk ratios of tiny currents would hide the day's pattern
        span = 1.3 * max(float(np.max(np.abs(balance[bright]))), 0.5)
        ax2.set_ylim(-span, span)
    ax2.set_ylabel("front − back [%]")
    ax2.set_title("below zero: the front limits; above: the back limits (dawn and dusk clipped)",
                  fontsize=8)
    ax2.set_xlabel(f"time of day [h], {day.date()} ({best.times.tz})")
    ax2.grid(alpha=0.3)
    fig.suptitle(heading, fontsize=8)
    figs["-day"] = fig
    # --- monthly energy
    months = best.times.month
    ms = sorted(set(months))
    e2 = [float(best.p_2t[months == m] @ best.step_hours[months == m]) / 1000 for m in ms]
    e4 = [float(best.p_4t[months == m] @ best.step_hours[months == m]) / 1000 for m in ms]
    fig, ax = plt.subplots(figsize=(6.5, 4))
    x = np.arange(len(ms))
    ax.bar(x - 0.2, e2, 0.4, color=FRONT_COLOUR, label="two-terminal")
    ax.bar(x + 0.2, e4, 0.4, color=BACK_COLOUR, label="four-terminal")
    ax.set_xticks(x, [["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct",
                       "Nov", "Dec"][m - 1] for m in ms])
    ax.set_ylabel("energy [kWh/m²]")
    ax.set_title(heading, fontsize=8)
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3, axis="y")
    figs["-monthly"] = fig
    figs["-map"] = draw_yield_map(sweep)
    figs["-map"].suptitle(f"{pair}\n{sweep.series.source}", fontsize=8)
    for f in figs.values():
        f.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7, color="0.4")
    writers = {}
    for suffix, f in figs.items():
        writers[prefix.parent / f"{prefix.name}{suffix}.png"] = (
            lambda p, f=f: savefig(f, p, "png"))
    return write_all_whole({**writers, **(data or {})}, overwrite)


def draw_yield_map(sweep, ax=None) -> Figure:
    """Two-terminal energy over front gap × thickness, with both optima marked; along the one
    swept axis (2T and 4T energy) when the other holds one value."""
    fig, ax = plt.subplots(figsize=(6.5, 4.6)) if ax is None else (ax.figure, ax)
    i, j = sweep.optimum
    a, b = sweep.am15_optimum
    if sweep.gaps.size > 1 and sweep.thicknesses.size > 1:
        D, G = np.meshgrid(sweep.thicknesses, sweep.gaps)
        filled = ax.contourf(D, G, sweep.energy_2t, levels=20, cmap="viridis")
        fig.colorbar(filled, ax=ax, label="two-terminal energy [kWh/m²]")
        ax.set_xscale("log")
        _plain_log_ticks(ax.xaxis)
        # an optimum on the edge of the sweep stays whole (not clipped by the axes)
        ax.plot([sweep.thicknesses[j]], [sweep.gaps[i]], "r*", ms=12, label="energy optimum",
                clip_on=False, zorder=5)
        ax.plot([sweep.thicknesses[b]], [sweep.gaps[a]], "wo", ms=7, mec="k",
                label="AM1.5G optimum", clip_on=False, zorder=5)
        ax.set_xlabel("front thickness [nm]")
        ax.set_ylabel("front gap at 25 °C [eV]")
        ax.legend(fontsize=8, loc="lower right")
        return fig
    along_gap = sweep.thicknesses.size == 1 and sweep.gaps.size > 1
    x = sweep.gaps if along_gap else sweep.thicknesses
    e2, e4 = np.ravel(sweep.energy_2t), np.ravel(sweep.energy_4t)
    ax.plot(x, e2, "o-", ms=3, color=FRONT_COLOUR, label="two-terminal")
    ax.plot(x, e4, "o-", ms=3, color=BACK_COLOUR, label="four-terminal")
    k, m = (i, a) if along_gap else (j, b)
    ax.plot([x[k]], [e2[k]], "r*", ms=12, label="energy optimum (2T)")
    ax.plot([x[m]], [e2[m]], "wo", ms=7, mec="k", label="AM1.5G optimum (2T)")
    if along_gap:
        ax.set_xlabel("front gap at 25 °C [eV]")
        ax.set_title(f"front {sweep.thicknesses[0]:.0f} nm", fontsize=9)
    else:
        ax.set_xscale("log")
        _plain_log_ticks(ax.xaxis)
        ax.set_xlabel("front thickness [nm]")
        ax.set_title(f"front gap {sweep.gaps[0]:.3f} eV at 25 °C", fontsize=9)
    ax.set_ylabel("energy [kWh/m²]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    return fig


def _plain_log_ticks(axis) -> None:
    """Thickness ticks on a log axis as plain numbers (200, not 2×10²); minor ticks labelled
    at 2, 3 and 5 × 10ⁿ only, so that labels never run into each other."""
    axis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    axis.set_minor_formatter(matplotlib.ticker.FuncFormatter(
        lambda v, _: f"{v:g}" if v > 0 and f"{v:.0e}"[0] in "235" else ""))


def draw_spread(result, terminals=2, target_pct=None, ax=None, outside=()) -> Figure:
    """Histogram of the fabrication spread with its percentiles, the nominal and a target."""
    eff = 100 * result.efficiency(terminals)
    nominal = 100 * result.nominal(terminals)
    fig, ax = plt.subplots(figsize=(6.5, 4)) if ax is None else (ax.figure, ax)
    ax.hist(eff, bins=60, color=FRONT_COLOUR, alpha=0.8)
    p10, p50, p90 = np.percentile(eff, [10, 50, 90])
    # the percentiles in the legend, not beside their lines: close lines would overprint
    for k, v in enumerate((p10, p50, p90)):
        ax.axvline(v, color="0.3", ls=":", lw=1, label=None if k else
                   f"10th / median / 90th percentile: {p10:.2f} / {p50:.2f} / {p90:.2f} %")
    ax.axvline(nominal, color="k", lw=1.2, label=f"nominal {nominal:.2f} %")
    if target_pct is not None:
        share = 100 * np.mean(eff >= target_pct)
        ax.axvline(target_pct, color=BACK_COLOUR, lw=1.2,
                   label=f"target {target_pct:g} %: {share:.1f} % of devices reach it")
    ax.set_xlabel(f"{terminals}-terminal efficiency [%]")
    ax.set_ylabel("devices")
    ax.yaxis.set_major_locator(matplotlib.ticker.MaxNLocator(integer=True))
    ax.set_ylim(top=ax.get_ylim()[1] * 1.3)  # room for the legend above the bars
    ax.legend(fontsize=8, loc="upper left")
    fig.text(0.99, 0.005, "Modelling limits, not measurements", ha="right", fontsize=7, color="0.4")
    if outside:  # allowed by --outside-range, and said on the figure
        fig.text(0.01, 0.99, "outside the absorbers' declared ranges: " + "; ".join(outside),
                 ha="left", va="top", fontsize=8, color="#b00000")
    return fig


def draw_region(result, ax=None) -> Figure:
    """The energy-optimal front gap at every site: against latitude (with the bifacial
    optimum beside the monofacial one), and on a longitude/latitude map.

    With ``ax``, only the gap-against-latitude panel is drawn, into that axes.
    """
    frame = result.to_frame()
    if ax is None:
        fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(12, 4.6))
    else:
        fig, ax1, ax2 = ax.figure, ax, None
    ax1.scatter(frame["latitude"], frame["front_gap_eV"], color=FRONT_COLOUR, s=28,
                label="monofacial", zorder=3)
    if "bifacial_front_gap_eV" in frame:
        ax1.scatter(frame["latitude"], frame["bifacial_front_gap_eV"], facecolor="none",
                    edgecolor=BACK_COLOUR, s=40, label="bifacial", zorder=3)
    ax1.axhline(frame["am15g_front_gap_eV"].iloc[0], color="0.5", ls="--", lw=1,
                label="AM1.5G optimum")
    ax1.set_xlabel("latitude [°]")
    ax1.set_ylabel("energy-optimal front gap [eV]")
    ax1.grid(alpha=0.3)
    ax1.legend(fontsize=8)
    if ax2 is not None:
        points = ax2.scatter(frame["longitude"], frame["latitude"], c=frame["front_gap_eV"],
                             cmap="viridis", s=60, edgecolor="k", lw=0.4)
        fig.colorbar(points, ax=ax2, label="energy-optimal front gap [eV]")
        ax2.margins(x=0.12, y=0.08)
        middle = 0.5 * (float(frame["longitude"].min()) + float(frame["longitude"].max()))
        for _, row in frame.iterrows() if len(frame) <= 30 else ():
            # names on the side away from the colour bar: a right-hand site is labelled to
            # its left, so no name runs under the bar
            right = float(row["longitude"]) > middle
            ax2.annotate(str(row["name"]), (row["longitude"], row["latitude"]), fontsize=7,
                         xytext=(-4 if right else 4, 3), textcoords="offset points",
                         ha="right" if right else "left")
        ax2.set_xlabel("longitude [°]")
        ax2.set_ylabel("latitude [°]")
        ax2.grid(alpha=0.3)
        ax2.set_title("2T energy-optimal front gap by site", fontsize=10)
        fig.suptitle("Modelling limits, not measurements", fontsize=8, x=0.99, ha="right",
                     color="0.4")
        fig.tight_layout()
    return fig
