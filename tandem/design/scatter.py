"""Fabrication scatter: the efficiency distribution when gap and thickness vary.

Front gap and front thickness are drawn from normal distributions around a design (seeded,
reproducible); every sample is evaluated with the optics-lite model and the detailed-balance
engine, in chunks. For a layer stack (:func:`scatter_stack`) every thin film's thickness is
drawn independently and each chunk of devices is one thin-film solve, wafer traced.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from tandem.design.matching import (Conditions, StackDesign, design_bulk, design_currents,
                                    evaluate_design, stack_performance)
from tandem.core.errors import TandemInputError
from tandem.physics.stack import by_connection


@dataclass(frozen=True)
class ScatterResult:
    front_gap_eV: np.ndarray  #: samples
    front_thickness_nm: np.ndarray
    efficiency_2t: np.ndarray  #: fractions
    efficiency_4t: np.ndarray
    nominal_2t: float
    nominal_4t: float
    layers_nm: dict = field(default_factory=dict)  #: a stack's other films: name → samples [nm]
    efficiency_3t: np.ndarray | None = None  #: with a middle contact (the electrical's)
    nominal_3t: float | None = None

    def efficiency(self, terminals: int) -> np.ndarray:
        """Every device's efficiency with 2, 3 or 4 terminals [-]."""
        return by_connection(terminals, self.efficiency_2t, self.efficiency_3t,
                             self.efficiency_4t, "this spread")

    def nominal(self, terminals: int) -> float:
        """The undrawn design's efficiency with 2, 3 or 4 terminals [-]."""
        return by_connection(terminals, self.nominal_2t, self.nominal_3t, self.nominal_4t,
                             "this spread")

    def stats(self, terminals: int = 2, target_pct: float | None = None) -> dict:
        eff = 100 * self.efficiency(terminals)
        # statistical percentiles (10 % of devices fall below percentile_10); not the
        # exceedance "P90" of energy-yield reports, hence the explicit names
        p10, p50, p90 = np.percentile(eff, [10, 50, 90])
        out = {"samples": int(eff.size), "terminals": terminals,
               "nominal_pct": round(100 * self.nominal(terminals), 4),
               "mean_pct": round(float(eff.mean()), 4), "std_pct": round(float(eff.std()), 4),
               "percentile_10_pct": round(float(p10), 4), "median_pct": round(float(p50), 4),
               "percentile_90_pct": round(float(p90), 4)}
        if target_pct is not None:
            out["target_pct"] = target_pct
            out["share_at_or_above_target_pct"] = round(100 * float(np.mean(eff >= target_pct)), 3)
        return out


def _check_draws(samples: int, seed: int) -> None:
    """How many devices and which seed, for any spread: one line when out of range."""
    if not 1 <= samples <= 1_000_000:
        raise TandemInputError(f"samples {samples}: give 1 to 1,000,000 devices")
    if not (isinstance(seed, (int, np.integer)) and 0 <= seed < 2**63):
        raise TandemInputError(f"seed {seed}: give a whole number from 0 up")


def _draw_thickness(rng, nominal_nm: float, sigma_pct: float, samples: int) -> np.ndarray:
    """Thicknesses ~ N(d, σ·d) [nm], floored at 10⁻³·d (a film cannot be thinner than nothing)."""
    d = nominal_nm * (1 + sigma_pct / 100 * rng.standard_normal(samples))
    return np.maximum(d, 1e-3 * nominal_nm)


def scatter(design: StackDesign, cond: Conditions, front_gap: float, front_thickness_nm: float,
            back_thickness_nm: float, gap_sigma_eV: float = 0.01, thickness_sigma_pct: float = 5.0,
            samples: int = 2000, seed: int = 1, chunk: int = 500) -> ScatterResult:
    """Draw front gap ~ N(gap, σ_g) and thickness ~ N(d, σ_d·d), evaluate every sample."""
    if not (gap_sigma_eV >= 0 and thickness_sigma_pct >= 0):
        raise TandemInputError("fabrication spreads must be zero or positive (gap σ in eV, "
                               "thickness σ in %)")
    _check_draws(samples, seed)
    if not (np.isfinite(gap_sigma_eV) and np.isfinite(thickness_sigma_pct)
            and gap_sigma_eV <= 0.5 and thickness_sigma_pct <= 100):
        raise TandemInputError(f"fabrication spreads gap σ {gap_sigma_eV:g} eV, thickness σ "
                               f"{thickness_sigma_pct:g} %: give at most 0.5 eV and 100 %")
    design.front.check_gap(front_gap, cond.allow_outside_range)
    design.front.check_thickness(front_thickness_nm, "front thickness", cond.allow_outside_range)
    design.back.check_thickness(back_thickness_nm, "back thickness", cond.allow_outside_range)
    if gap_sigma_eV > 0:
        design.front.check_gap(front_gap + 1e-3, True)  # a tabulated edge cannot move
    rng = np.random.default_rng(seed)
    gaps = front_gap + gap_sigma_eV * rng.standard_normal(samples)
    thick = _draw_thickness(rng, front_thickness_nm, thickness_sigma_pct, samples)
    e2, e3, e4 = np.empty(samples), np.empty(samples), np.empty(samples)
    for start in range(0, samples, chunk):
        sl = slice(start, start + chunk)
        # optics per sample (each has its own gap), the engine once per chunk
        currents = [design_currents(design, cond, g, d, back_thickness_nm)
                    for g, d in zip(gaps[sl], thick[sl])]
        jl = np.array([c[0] for c in currents])
        j0 = np.array([c[1] for c in currents])
        reference = None if cond.ideality == 1.0 else np.array([c[2] for c in currents])
        bulk = design_bulk(design, gaps[sl], thick[sl], back_thickness_nm, cond.temperature_K)
        perf = evaluate_design(design, jl, j0, cond.temperature_K, cond.photon_flux.irradiance,
                               cond.ideality, cond.electrical, reference, bulk)
        e2[sl], e3[sl], e4[sl] = perf.efficiency_2t, perf.efficiency_3t, perf.efficiency_4t
    nominal = stack_performance(design, cond, front_gap, front_thickness_nm, back_thickness_nm)
    return ScatterResult(gaps, thick, e2, e4, float(nominal.efficiency_2t),
                         float(nominal.efficiency_4t), efficiency_3t=e3,
                         nominal_3t=float(nominal.efficiency_3t))


#: Bytes a device of a stack spread holds per layer and photon energy while its chunk is
#: solved: every film's thickness differs between devices, so every layer's fields are held
#: per device (a 67-layer mirror, 200 devices a chunk: 4,808 MiB peak, 4,600 above the
#: process's own: 152 bytes; tests/benchmarks/estimates.py)
DEVICE_CELL_BYTES = 152.0
#: The memory a chunk of stack devices may take; the chunk is sized to it (200 at most)
CHUNK_BYTES = 256 * 2**20


def stack_chunk(layers: int, energies: int) -> int:
    """Devices of a stack spread solved at once: 200, or fewer where the stack has so many
    layers × energies that 200 would hold more than :data:`CHUNK_BYTES`."""
    return int(np.clip(CHUNK_BYTES // (layers * energies * DEVICE_CELL_BYTES), 1, 200))


def scatter_stack(stack, flux, temperature_K: float, ideality: float, electrical,
                  front_thickness_nm: float, others: dict, thickness_sigma_pct: float = 5.0,
                  samples: int = 2000, seed: int = 1, chunk: int | None = None,
                  progress=None) -> ScatterResult:
    """Every thin film of a layer stack (the coherent layers, front absorber included) drawn
    ~ N(d, σ·d) independently around the design: the front absorber at
    ``front_thickness_nm``, the swept layers at ``others`` (name → nm), every other layer at
    its file's thickness; thick incoherent layers (glass, the wafer) keep theirs. Each chunk
    (:func:`stack_chunk` devices unless given) is one broadcast thin-film solve
    (:func:`~tandem.design.layerstack.photon_budget`)."""
    from tandem.design.layerstack import evaluate_budget, photon_budget

    chunk = chunk or stack_chunk(len(stack.layers), flux.energy.size)
    if not (np.isfinite(thickness_sigma_pct) and 0 <= thickness_sigma_pct <= 100):
        raise TandemInputError(f"thickness σ {thickness_sigma_pct:g} %: give 0 to 100 %")
    _check_draws(samples, seed)
    front = stack.front.name
    nominal_nm = {x.name: x.thickness_nm for x in stack.layers}
    nominal_nm.update(others)
    nominal_nm[front] = float(front_thickness_nm)
    rng = np.random.default_rng(seed)
    films = [x.name for x in stack.layers if x.coherent]
    draws = {name: _draw_thickness(rng, nominal_nm[name], thickness_sigma_pct, samples)
             for name in films}
    fixed = {k: v for k, v in nominal_nm.items() if k not in draws and k != front}
    e2, e3, e4 = np.empty(samples), np.empty(samples), np.empty(samples)
    for start in range(0, samples, chunk):
        sl = slice(start, start + chunk)
        others = {**fixed, **{k: v[sl, None] for k, v in draws.items() if k != front}}
        budget = photon_budget(stack, flux.energy, draws[front][sl], others, temperature_K)
        perf = evaluate_budget(stack, budget, flux, temperature_K, ideality, electrical)[0]
        e2[sl], e3[sl], e4[sl] = perf.efficiency_2t, perf.efficiency_3t, perf.efficiency_4t
        if progress:
            progress(min(start + chunk, samples), samples)
    budget = photon_budget(stack, flux.energy, [nominal_nm[front]],
                           {k: v for k, v in nominal_nm.items() if k != front}, temperature_K)
    nominal = evaluate_budget(stack, budget, flux, temperature_K, ideality, electrical)[0]
    gap = stack.front.gap_eV if stack.front.gap_eV is not None else stack.front.absorber.gap_eV
    return ScatterResult(np.full(samples, float(gap)), draws[front], e2, e4,
                         float(nominal.efficiency_2t[0]), float(nominal.efficiency_4t[0]),
                         {k: v for k, v in draws.items() if k != front}, e3,
                         float(nominal.efficiency_3t[0]))
