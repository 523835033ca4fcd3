"""Figures of a layer stack's best design: its current matches, where every photon goes,
and where in each absorber the carriers are made (objects only, as in :mod:`tandem.output.plots`)."""

from __future__ import annotations

from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.figure import Figure

from tandem.core.units import HC_EV_NM, MA_CM2_PER_A_M2, length_text
from tandem.output.plots import BACK_COLOUR, FRONT_COLOUR, LAYER_COLOURS, save_figure


def stack_figure(result, path, overwrite: bool = False) -> Path:
    """Write :func:`draw_photon_budget` to ``path`` (PNG or SVG), whole or not at all."""
    return save_figure(draw_photon_budget(result), path, overwrite)


def draw_photon_budget(result, ax=None) -> Figure:
    """Where every incident photon goes in the best design of a layer stack, over wavelength
    (stacked), the subcells' photocurrents against the front thickness, and where in each
    absorber the carriers are made (:func:`draw_generation`).

    With ``ax``, only the photon budget is drawn, into that axes.
    """
    from tandem.design.layerstack import usable_from_eV

    m = result.match
    best = m.best
    if ax is None:
        fig = Figure(figsize=(17, 4.6), layout="constrained")  # the outside legend fits
        ax1, ax2, ax3 = fig.subplots(1, 3, width_ratios=(1, 1.5, 1))
        draw_generation(result, ax3)
    else:
        fig, ax1, ax2 = ax.figure, None, ax
    if ax1 is not None:
        for others, j, _, _ in m.grids:
            bold = others == best.others
            kw = {"lw": 1.8 if bold else 0.7, "alpha": 1.0 if bold else 0.35}
            ax1.plot(m.thicknesses_nm, j[:, 0] * MA_CM2_PER_A_M2, color=FRONT_COLOUR, **kw,
                     label=f"front: {m.stack.front.name}" if bold else None)
            ax1.plot(m.thicknesses_nm, j[:, 1] * MA_CM2_PER_A_M2, color=BACK_COLOUR, **kw,
                     label=f"back: {m.stack.back.name}" if bold else None)
        for p in m.crossings:
            ax1.plot([p.front_thickness_nm], [p.j_light[0] * MA_CM2_PER_A_M2], "o",
                     color="k" if p is best else "0.6", ms=5 if p is best else 3)
        ax1.set_xscale("log")
        ax1.xaxis.set_major_locator(matplotlib.ticker.LogLocator(subs=(1.0, 2.0, 5.0)))
        ax1.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
        ax1.xaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
        ax1.set_xlabel(f"{m.stack.front.name} thickness [nm]")
        ax1.set_ylabel("photocurrent [mA/cm²]")
        swept = ", ".join(f"{k} {v:.0f} nm" for k, v in best.others.items())
        ax1.set_title("current matches (dots); bold: " + (swept or "the stack as given"),
                      fontsize=9)
        ax1.legend(fontsize=8, loc="lower right")
        ax1.grid(alpha=0.3)
    e = m.energy
    budget = m.best_budget
    wl = HC_EV_NM / e
    edge = HC_EV_NM / usable_from_eV(m.stack, m.temperature_K)
    keep = (wl >= 300) & (wl <= edge + 100)
    order = np.argsort(wl[keep])
    x = wl[keep][order]
    parts = [(f"front: {m.stack.front.name}", budget.front[0], FRONT_COLOUR),
             (f"back: {m.stack.back.name}", budget.back[0], BACK_COLOUR)]
    for k, (name, a) in enumerate(budget.parasitic.items()):
        if np.max(a[0][keep]) > 1e-3:  # layers that absorb nothing visible stay out of the key
            parts.append((name, a[0], LAYER_COLOURS[k % len(LAYER_COLOURS)]))
    parts.append(("reflected or escaped", budget.reflected[0], "0.88"))
    if np.max(budget.transmitted[0][keep]) > 1e-3:
        parts.append(("transmitted", budget.transmitted[0], "0.97"))
    ax2.stackplot(x, *[np.clip(p[1][keep][order], 0, 1) for p in parts],
                  labels=[p[0] for p in parts], colors=[p[2] for p in parts], lw=0)
    ax2.axvline(edge, color="0.3", ls=":", lw=1)
    ax2.set_xlim(x[0], x[-1])
    ax2.set_ylim(0, 1)
    ax2.set_xlabel("wavelength [nm]")
    ax2.set_ylabel("share of incident photons [-]")
    ax2.set_title(f"{m.stack.title}: front {best.front_thickness_nm:.0f} nm, "
                  f"2T {100 * best.efficiency_2t:.1f} %", fontsize=9)
    ax2.legend(fontsize=7, loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False)
    if ax is None:
        fig.suptitle("Modelling limits, not measurements", fontsize=8, x=0.99, ha="right",
                     color="0.4")
    return fig


def draw_generation(result, ax) -> None:
    """Each absorber's photogeneration rate G against depth from its sun side, as a share of
    its thickness (a film of 300 nm and a wafer of 160 µm on one axis), log scale; a dot marks
    the depth within which half its carriers are made."""
    from tandem.design.layerstack import profile_figures

    m = result.match
    for layer, colour in ((m.stack.front, FRONT_COLOUR), (m.stack.back, BACK_COLOUR)):
        z, g = m.best_generation[layer.name]
        thick = z[-1]
        ax.plot(z / thick, g, color=colour, lw=1.5, label=f"{layer.name} ({length_text(thick)})")
        half = profile_figures(z, g)["half_depth_nm"]
        if half is not None:
            ax.plot([half / thick], [np.interp(half, z, g)], "o", color=colour, ms=5, mec="k",
                    mew=0.5)
    ax.set_yscale("log")
    ax.set_xlim(0, 1)
    ax.set_xlabel("depth from the sun side [share of the absorber's thickness]")
    ax.set_ylabel("photogeneration G [cm⁻³ s⁻¹]")
    ax.set_title("where the carriers are made (dots: half of them above)", fontsize=9)
    ax.legend(fontsize=7, loc="upper right")
    ax.grid(alpha=0.3, which="both")
