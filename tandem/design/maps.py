"""Efficiency over front and back band gaps, and tolerance windows around an optimum."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from tandem.design.matching import matched_thickness, check_design_inputs, stack_performance, tolerance_window  # noqa: F401
from tandem.core.errors import TandemInputError
from tandem.physics.spectra import PhotonFlux
from tandem.physics import detailed_balance as db
from tandem.physics.emission import StepEmission
from tandem.physics.stack import (IDEAL, StackPerformance, by_connection, evaluate_stack,
                                  exact_emission_needed, reference_current_above)

#: Default map ranges (low, high, step) [eV]: wide-gap fronts over the usual back-cell gaps.
DEFAULT_FRONT = (1.40, 2.30, 0.01)
DEFAULT_BACK = (0.80, 1.50, 0.01)



@dataclass(frozen=True)
class GapMap:
    """A grid of stacks over front × back gaps (NaN where front ≤ back)."""

    front_gaps: np.ndarray  #: (nf,)
    back_gaps: np.ndarray  #: (nb,)
    efficiency_2t: np.ndarray  #: (nf, nb) fraction
    efficiency_4t: np.ndarray  #: (nf, nb)
    j_front: np.ndarray  #: (nf, nb) A/m²
    j_back: np.ndarray  #: (nf, nb) A/m²
    voc_2t: np.ndarray  #: (nf, nb) V
    temperature_K: float
    spectrum: str
    irradiance: float
    efficiency_3t: np.ndarray | None = None  #: (nf, nb) with a middle contact
    efficiency_vm: np.ndarray | None = None  #: (nf, nb, k) voltage-matched strings, per ratio
    string_ratios: tuple = ()  #: the (m, n) ratios of ``efficiency_vm``

    def efficiency(self, terminals: int) -> np.ndarray:
        return by_connection(terminals, self.efficiency_2t, self.efficiency_3t,
                             self.efficiency_4t, "this map")

    def optimum(self, terminals: int) -> tuple[int, int]:
        eff = self.efficiency(terminals)
        if np.all(np.isnan(eff)):
            raise TandemInputError("no valid gap pair in the map: every front gap is at or below "
                                   "every back gap, or every pair is too close to degeneracy "
                                   "(concentration); widen the front range or lower the back range")
        i, j = np.unravel_index(int(np.nanargmax(eff)), eff.shape)
        return int(i), int(j)

    @property
    def grid_points(self) -> int:
        return int(self.front_gaps.size * self.back_gaps.size)


def step_gap_map(photon_flux: PhotonFlux, front_gaps, back_gaps, temperature_K=298.15,
                 ere=(1.0, 1.0), ideality=1.0, chunk: int = 8192,
                 progress: Callable[[int, int], None] | None = None, electrical=None,
                 front_index: float = 3.5, absorbed_share=(1.0, 1.0)) -> GapMap:
    """Detailed-balance map of step-absorber stacks, computed in chunks of ``chunk`` pairs.

    Small chunks keep each intermediate array (64 kB) in the core's cache: on the 2-core
    benchmark machine 8,192 pairs per chunk ran 1.9× faster than 250,000 (3.5 vs 1.9 M
    configurations/s at 401 × 401).
    """
    front_gaps = np.asarray(front_gaps, dtype=float)
    back_gaps = np.asarray(back_gaps, dtype=float)
    photon_flux.check_gap(front_gaps, "front gap")
    photon_flux.check_gap(back_gaps, "back gap")
    f, b = np.meshgrid(front_gaps, back_gaps, indexing="ij")
    valid = f > b
    pairs = np.stack([f[valid], b[valid]], axis=-1)
    i_front, i_back = np.nonzero(valid)
    fields = {k: np.full(f.shape, np.nan) for k in ("e2", "e3", "e4", "jf", "jb", "voc")}
    ratios = (electrical or IDEAL).string_ratios
    vm = np.full(f.shape + (len(ratios),), np.nan)
    out_vm = np.empty((len(pairs), len(ratios)))
    out = {k: np.empty(len(pairs)) for k in fields}
    ere = np.asarray(ere, dtype=float)
    # Photons above a gap and the Bose integral from a gap depend on one gap only: computed once
    # per axis, and each pair's band (front: above its gap; back: between the two) is a
    # difference of them, exactly as step_stack forms it pair by pair.
    above_f = photon_flux.count_above(front_gaps)
    above_b = photon_flux.count_above(back_gaps)
    j0_f = db.step_radiative_dark_current(front_gaps, temperature_K)
    j0_b = db.step_radiative_dark_current(back_gaps, temperature_K)
    share = np.broadcast_to(np.asarray(absorbed_share, dtype=float), (2,))
    ref_f = ref_b = None
    if ideality != 1.0:  # an n ≠ 1 cell's non-radiative diode is fixed under AM1.5G, 1 sun
        ref_f, ref_b = reference_current_above(front_gaps), reference_current_above(back_gaps)
    def inputs(sel):
        """The photocurrents, J0, reference light and emission of the pairs ``sel``."""
        fi, bi = i_front[sel], i_back[sel]
        j_light = db.Q * np.stack([above_f[fi], above_b[bi] - above_f[fi]], axis=-1) * share
        j0_rad = np.stack([j0_f[fi], j0_b[bi] - j0_f[fi]], axis=-1) * share
        reference = None
        if ref_f is not None and ref_b is not None:
            reference = np.stack([ref_f[fi], ref_b[bi] - ref_f[fi]], axis=-1) * share
        gaps = pairs[sel]
        emission = StepEmission.at(gaps, np.stack([np.full(len(gaps), np.inf), gaps[:, 0]], -1),
                                   share, temperature_K)
        return j_light, j0_rad, reference, emission

    def solve(sel, exact: bool):
        j_light, j0_rad, reference, emission = inputs(sel)
        perf: StackPerformance = evaluate_stack(
            j_light, j0_rad, temperature_K, photon_flux.irradiance, ere, ideality,
            electrical or IDEAL, front_index, reference, emission=emission if exact else None)
        out["e2"][sel], out["e3"][sel], out["e4"][sel] = (perf.efficiency_2t, perf.efficiency_3t,
                                                          perf.efficiency_4t)
        out["jf"][sel], out["jb"][sel] = perf.j_light[:, 0], perf.j_light[:, 1]
        out["voc"][sel] = perf.voc_2t
        if ratios:
            out_vm[sel] = np.asarray(perf.p_vm) / photon_flux.irradiance
        return perf, emission

    # Boltzmann's diodes first, chunk by chunk; the pairs where a voltage comes close to its
    # gap are solved again with the exact emission all at once (one call for the whole map:
    # that path's cost is per call, about 12 % of a 401 × 401 map at ERE 1)
    exact = []
    for start in range(0, len(pairs), chunk):
        sel = np.arange(start, min(start + chunk, len(pairs)))
        perf, emission = solve(sel, exact=False)
        exact.append(sel[exact_emission_needed(perf, emission.gap_eV, temperature_K)])
        if progress:
            progress(min(start + chunk, len(pairs)), len(pairs))
    again = np.concatenate(exact) if exact else np.array([], dtype=int)
    if again.size:
        solve(again, exact=True)
    for k in fields:
        fields[k][valid] = out[k]
    vm[valid] = out_vm
    return GapMap(front_gaps, back_gaps, fields["e2"], fields["e4"], fields["jf"], fields["jb"],
                  fields["voc"], float(temperature_K), photon_flux.name, photon_flux.irradiance,
                  fields["e3"], vm if ratios else None, tuple(ratios))


def absorber_gap_map(design, conditions, front_gaps, back_gaps=None, front_thickness_nm=None,
                     back_thickness_nm=None, rematch: bool = False, thickness_points: int = 60,
                     progress: Callable[[int, int], None] | None = None):
    """Map of real-absorber stacks over gaps, their edges moved rigidly to each gap.

    With ``rematch`` the front thickness is re-matched at every gap pair (the current-matched
    thickness, or the two-terminal best where none in range matches); otherwise it is fixed.
    Returns the :class:`GapMap` and the front thickness used at each point [nm].
    """

    front, back = design.front, design.back
    front_gaps = np.asarray(front_gaps, dtype=float)
    back_gaps = np.array([back.gap_eV]) if back_gaps is None else np.asarray(back_gaps, dtype=float)
    for g in back_gaps:
        back.check_gap(float(g), allow_outside=True)  # a map moves edges on purpose
    d_front = front.thickness_nm if front_thickness_nm is None else float(front_thickness_nm)
    d_back = back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    import dataclasses

    check_design_inputs(design, dataclasses.replace(conditions, allow_outside_range=True),
                        front_gaps, [d_back], (d_front, d_front * 1.0001))
    design.front.check_thickness(d_front, "front thickness", conditions.allow_outside_range)
    design.back.check_thickness(d_back, "back thickness", conditions.allow_outside_range)
    conditions.photon_flux.check_gap(back_gaps, "back gap")
    thinnest, thickest = front.thickness_range_nm
    grid = np.geomspace(thinnest, thickest, thickness_points)
    shape = (front_gaps.size, back_gaps.size)
    e2, e3, e4, jf, jb, voc, used = (np.full(shape, np.nan) for _ in range(7))
    ratios = conditions.electrical.string_ratios
    vm = np.full(shape + (len(ratios),), np.nan)
    total, done = shape[0] * shape[1], 0
    for j, gb in enumerate(back_gaps):
        for i, gf in enumerate(front_gaps):
            done += 1
            if gf <= gb:
                continue
            d = d_front
            if rematch:
                sweep = stack_performance(design, conditions, gf, grid, d_back, gb)
                matched, _ = matched_thickness(design, conditions, gf, grid, d_back, sweep.j_light,
                                              gb)
                d = matched if matched is not None else float(grid[np.argmax(sweep.p_2t)])
            perf = stack_performance(design, conditions, gf, d, d_back, gb)
            e2[i, j], e3[i, j], e4[i, j] = (perf.efficiency_2t, perf.efficiency_3t,
                                            perf.efficiency_4t)
            jf[i, j], jb[i, j] = perf.j_light
            if ratios:
                vm[i, j] = np.asarray(perf.p_vm) / perf.irradiance
            voc[i, j], used[i, j] = perf.voc_2t, d
            if progress and (done % 10 == 0 or done == total):
                progress(done, total)
    cond = conditions
    return GapMap(front_gaps, back_gaps, e2, e4, jf, jb, voc, cond.temperature_K,
                  cond.photon_flux.name, cond.photon_flux.irradiance, e3,
                  vm if ratios else None, tuple(ratios)), used


def map_table(gap_map: GapMap, front_thickness_nm=None, terminals: int = 2):
    """The map as a tidy table: one row per valid gap pair (pandas DataFrame); the
    three-terminal column when ``terminals`` is 3."""
    import pandas as pd

    f, b = np.meshgrid(gap_map.front_gaps, gap_map.back_gaps, indexing="ij")
    valid = np.isfinite(gap_map.efficiency_2t)
    jf, jb = gap_map.j_front[valid], gap_map.j_back[valid]
    table = {
        "front_gap_eV": f[valid],
        "back_gap_eV": b[valid],
        "efficiency_2t_pct": 100 * gap_map.efficiency_2t[valid],
        "efficiency_4t_pct": 100 * gap_map.efficiency_4t[valid],
        **({"efficiency_3t_pct": 100 * gap_map.efficiency(3)[valid]} if terminals == 3 else {}),
        **{f"efficiency_voltage_matched_{m}:{n}_pct": 100 * np.asarray(gap_map.efficiency_vm)[valid, k]
           for k, (m, n) in enumerate(gap_map.string_ratios)},
        "jsc_front_mA_cm2": jf / 10,
        "jsc_back_mA_cm2": jb / 10,
        "voc_2t_V": gap_map.voc_2t[valid],
        "limiting_subcell": np.where(jf <= jb, "front", "back"),
        "mismatch_pct": 100 * (np.maximum(jf, jb) - np.minimum(jf, jb)) / np.minimum(jf, jb),
    }
    if front_thickness_nm is not None:
        table["front_thickness_nm"] = np.asarray(front_thickness_nm)[valid]
    return pd.DataFrame(table)
