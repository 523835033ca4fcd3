"""Figures people read: matplotlib (Agg), written whole or not at all."""

from __future__ import annotations

from pathlib import Path

import matplotlib
import matplotlib.ticker

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from .design import MatchResult, stack_light  # noqa: E402
from .files import write_whole  # noqa: E402
from .units import HC_EV_NM, MA_CM2_PER_A_M2  # noqa: E402

FRONT_COLOUR, BACK_COLOUR, SUN_COLOUR = "#1f77b4", "#d62728", "0.85"


def _save(fig, path, overwrite):
    def write(tmp: Path):
        fig.savefig(tmp, dpi=150, bbox_inches="tight", format=Path(path).suffix.lstrip(".") or "png")

    try:
        return write_whole(path, write, overwrite)
    finally:
        plt.close(fig)


def match_figure(result: MatchResult, path, overwrite: bool = False) -> Path:
    """Subcell currents against front thickness, and absorptance against wavelength."""
    sweep = result.best_sweep
    best = result.configurations[0]
    design, cond = result.design, result.conditions
    fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(11, 4.2))
    d = sweep.front_thickness_nm
    j = sweep.performance.j_light * MA_CM2_PER_A_M2
    ax1.plot(d, j[:, 0], color=FRONT_COLOUR, label=f"front: {design.front.name}")
    ax1.plot(d, j[:, 1], color=BACK_COLOUR, label=f"back: {design.back.name}")
    if best.matched_front_thickness_nm is not None:
        dm = best.matched_front_thickness_nm
        jm = stack_light_current(result, dm)
        ax1.axvline(dm, color="0.4", ls="--", lw=1)
        ax1.plot([dm], [jm], "ko")
        ax1.annotate(f"matched: {dm:.0f} nm\n{jm:.2f} mA/cm²", (dm, jm), xytext=(-8, 14),
                     textcoords="offset points", fontsize=8, ha="right",
                     bbox={"boxstyle": "round", "fc": "white", "ec": "0.8"})
    ax1.axvline(best.front_thickness_nm, color="0.6", ls=":", lw=1)
    ax1.set_xscale("log")
    ax1.xaxis.set_major_locator(matplotlib.ticker.LogLocator(subs=(1.0, 2.0, 5.0)))
    ax1.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    ax1.xaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
    ax1.set_xlabel("front thickness [nm]")
    ax1.set_ylabel("photocurrent [mA/cm²]")
    back_d = sweep.back_thickness_nm
    back_text = f"{back_d / 1000:g} µm" if back_d >= 10_000 else f"{back_d:.0f} nm"
    ax1.set_title(f"front gap {sweep.front_gap_eV:.3f} eV, back {back_text}", fontsize=10)
    ax1.legend(fontsize=8, loc="lower center", framealpha=0.9)
    ax1.grid(alpha=0.3)

    e = cond.photon_flux.energy
    light = stack_light(design, e, best.front_gap_eV, best.front_thickness_nm,
                        best.back_thickness_nm)
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
    ax2.set_title(f"at front {best.front_thickness_nm:.0f} nm: 2T {100 * best.efficiency_2t:.1f} %,"
                  f" 4T {100 * best.efficiency_4t:.1f} %", fontsize=10)
    ax2.legend(fontsize=8, loc="upper right", framealpha=0.9)
    ax2.grid(alpha=0.3)
    fig.suptitle("Modelling limits, not measurements", fontsize=8, x=0.99, ha="right", color="0.4")
    return _save(fig, path, overwrite)


def stack_light_current(result: MatchResult, thickness_nm: float) -> float:
    from .design import stack_performance

    best = result.configurations[0]
    perf = stack_performance(result.design, result.conditions, best.front_gap_eV, thickness_nm,
                             best.back_thickness_nm)
    return float(perf.j_light[0]) * MA_CM2_PER_A_M2


def absorber_figure(absorber, path, overwrite: bool = False) -> Path:
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
    return _save(fig, path, overwrite)
