"""Energy over a day, month or year (:func:`energy_yield`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from tandem.design.matching import StackDesign
from tandem.jobs.common import (Progress, ResultDisplay, absorber_pair, check_seconds, check_types,
                                check_work, connection_cost, stack_work, yield_cost)
from tandem.jobs.inputs import Light, OperatingPoint, gap_values, thickness_axis
from tandem.optics.absorbers import Absorber
from tandem.output.report import yield_summary

if TYPE_CHECKING:  # for annotations only: no import cost at run time
    from tandem.design.yields import HourlyDesign, YieldSweep


@dataclass(frozen=True, repr=False)
class YieldResult(ResultDisplay):
    """Energy over a period for front gap × thickness, and the best design hour by hour.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield('perovskite-wide', 'silicon', tandem.site_series(site, period='day:2026-06-21'),
    ...                         front_gaps_eV=[1.72], front_thicknesses_nm=[500.0, 1000.0])
    >>> sorted(y.to_dataset().dims)
    ['front_gap', 'front_thickness', 'time']
    """

    sweep: YieldSweep
    best: HourlyDesign
    terminals: int = 2  #: 3: three terminals join the connections (table, frame, dataset)
    string_ratios: tuple = ()  #: voltage-matched strings of these (m, n) ratios join them

    def summary(self) -> dict:
        return yield_summary(self.sweep, self.best, self.terminals, self.string_ratios)

    def to_frame(self):
        """The energy-optimal design step by step: powers [W/m²], photocurrents [mA/cm²]."""
        import pandas as pd

        b = self.best
        return pd.DataFrame({"p_2t_W_m2": b.p_2t, "p_4t_W_m2": b.p_4t,
                             **({"p_3t_W_m2": b.p_3t} if self.terminals == 3 else {}),
                             **{f"p_voltage_matched_{m}:{n}_W_m2": np.asarray(b.p_vm)[:, k]
                                for k, (m, n) in enumerate(self.string_ratios)},
                             "jsc_front_mA_cm2": b.j_front / 10, "jsc_back_mA_cm2": b.j_back / 10,
                             "irradiance_W_m2": b.irradiance,
                             "cell_temperature_K": b.cell_temperature_K,
                             "step_hours": b.step_hours}, index=b.times)

    def to_dataset(self):
        """Energy over front gap × thickness, and the energy-optimal design along ``time``
        (UTC, the middle of each step; the site's time zone is an attribute)."""
        import pandas as pd
        import xarray as xr

        s, b = self.sweep, self.best
        dims = ("front_gap", "front_thickness")
        times = pd.DatetimeIndex(b.times)
        zone = str(times.tz) if times.tz is not None else "UTC"
        utc = (times.tz_convert("UTC") if times.tz is not None else times).tz_localize(None)
        series = {name: ("time", np.asarray(values, dtype=float),
                         {"units": units, "long_name": long_name})
                  for name, values, units, long_name in (
                      ("power_2t", b.p_2t, "W/m2", "two-terminal power of the energy-optimal design"),
                      ("power_4t", b.p_4t, "W/m2", "four-terminal power of the energy-optimal design"),
                      ("jsc_front", b.j_front / 10, "mA/cm2", "front subcell photocurrent"),
                      ("jsc_back", b.j_back / 10, "mA/cm2", "back subcell photocurrent"),
                      ("irradiance", b.irradiance, "W/m2", "plane-of-array irradiance"),
                      ("cell_temperature", b.cell_temperature_K, "K", "cell temperature"),
                      ("step_length", b.step_hours, "h", "length of the step"))}
        ds = xr.Dataset(
            {"energy_2t": (dims, s.energy_2t, {"units": "kWh/m2"}),
             "energy_4t": (dims, s.energy_4t, {"units": "kWh/m2"}),
             **({"energy_3t": (dims, s.energy_3t, {"units": "kWh/m2"})}
                if self.terminals == 3 else {}),
             **({"energy_voltage_matched": (dims + ("string_ratio",), s.energy_vm,
                                            {"units": "kWh/m2"})} if self.string_ratios else {}),
             "efficiency_am15g_2t": (dims, 100 * s.efficiency_am15_2t, {"units": "%"}),
             **series},
            coords={"front_gap": ("front_gap", s.gaps, {"units": "eV", "note": "at 298.15 K"}),
                    "front_thickness": ("front_thickness", s.thicknesses, {"units": "nm"}),
                    "time": ("time", utc.to_numpy(), {"long_name": "middle of the step, UTC"}),
                    **({"string_ratio": ("string_ratio", [f"{m}:{n}" for m, n in self.string_ratios],
                                         {"long_name": "front:back cells per string"})}
                       if self.string_ratios else {})},
            attrs={"source": s.series.source, "insolation_kWh_m2": float(s.insolation),
                   "front": s.design.front.key, "back": s.design.back.key,
                   "back_thickness_nm": float(s.back_thickness_nm), "site_time_zone": zone,
                   "optimum_front_gap_eV": float(s.gaps[s.optimum[0]]),
                   "optimum_front_thickness_nm": float(s.thicknesses[s.optimum[1]])})
        # stored as double hours: NetCDF-3 (scipy) has no 64-bit integers, and minutes since
        # 1970 overflow 32 bits
        ds["time"].encoding = {"units": "hours since 1970-01-01 00:00:00", "dtype": "f8",
                               "calendar": "proleptic_gregorian"}
        from tandem.output.datasets import described

        return described(ds)

    def plot(self, ax=None):
        from tandem.output.sky_plots import draw_yield_map

        return draw_yield_map(self.sweep, ax)

    def write(self, prefix, overwrite: bool = False) -> list:
        """The figures, the gap × thickness energy grid (``PREFIX-energy.nc``) and the
        energy-optimal design's time series (``PREFIX-series.parquet``), written as one."""
        from pathlib import Path

        from tandem.core.files import STAMP, write_netcdf, write_parquet
        from tandem.output.sky_plots import yield_figures

        prefix = Path(prefix)
        grid = self.to_dataset()[["energy_2t", "energy_4t", "efficiency_am15g_2t"]]
        grid.attrs["written_by"] = STAMP
        series = self.to_frame().reset_index(names="time")
        return yield_figures(self.sweep, self.best, prefix, overwrite, {
            prefix.parent / f"{prefix.name}-energy.nc": lambda p: write_netcdf(grid, p),
            prefix.parent / f"{prefix.name}-series.parquet": lambda p: write_parquet(series, p)})

    def design_rows(self) -> list[dict]:
        """The energy-optimal and the AM1.5G-optimal design, side by side (display units)."""
        s = self.summary()
        eo, am = s["energy_optimum"], s["am15g_optimum"]
        i, j = self.sweep.optimum
        return [dict(eo, design="energy-optimal",
                     efficiency_am15g_2t_pct=100 * float(self.sweep.efficiency_am15_2t[i, j])),
                dict(am, design="AM1.5G-optimal", efficiency_am15g_2t_pct=am["efficiency_2t_pct"],
                     energy_weighted_efficiency_2t_pct=100 * am["energy_2t_kWh_m2"]
                     / s["insolation_kWh_m2"])]


def site_series(site, *, weather=None, spectra=None, period: str = "year:2026",
                step_minutes: float = 60.0, cell_temperature_K: float | None = None,
                allow_large: bool = False):
    """The plane-of-array spectra of a site: a weather file, a folder of measured spectra, or
    clear skies over a period; optionally at a fixed cell temperature instead of SAPM [K].

    Examples
    --------
    >>> import tandem
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0)
    >>> tandem.site_series(site, period='day:2026-06-21', step_minutes=30).times.size > 20
    True
    """
    from tandem.design.sky import clear_sky_series, common_grid, parse_period
    from tandem.design.weather import folder_series, weather_series

    if not (weather or spectra):
        times = parse_period(period, site.timezone, step_minutes)
        # daylight is about half the steps; at the peak about one float64 a step and energy is
        # held (a 15-minute clear year measured 412 MiB whole, 232 MiB above the process's own,
        # against 262 MiB so counted: tests/benchmarks/estimates.py)
        check_work("yield", 0.5 * times.size, 0.5 * times.size * common_grid().size * 8,
                   allow_large=allow_large, what="daylight spectra (about)")
    series = (weather_series(site, weather) if weather else folder_series(site, spectra)
              if spectra else clear_sky_series(site, times))
    return series if cell_temperature_K is None else at_cell_temperature(series, cell_temperature_K)


def at_cell_temperature(series, cell_temperature_K: float):
    """The series with every step at one cell temperature [K] instead of the SAPM model's."""
    import dataclasses

    from tandem.physics.checks import check_temperature

    check_temperature(float(cell_temperature_K), "cell temperature")
    return dataclasses.replace(series, cell_temperature_K=np.full(series.times.size,
                                                                  float(cell_temperature_K)))



MAX_YIELD_THICKNESSES = 400  #: front thicknesses in one yield sweep


def yield_axes(front: Absorber, back: Absorber, front_gaps_eV=None, front_thicknesses_nm=None,
               thickness_points: int = 16, most_points: int = MAX_YIELD_THICKNESSES
               ) -> tuple[np.ndarray, np.ndarray]:
    """The front gaps [eV] and thicknesses [nm] a yield sweeps, checked.

    Defaults: 11 gaps from 0.3 eV above the back's gap (or the front's lowest) to the front's
    highest, or its fixed gap; ``thickness_points`` (2 to ``most_points``) log-spaced across
    the front's range. Given thicknesses are checked where they are swept (``yield_sweep``).
    """
    if front_gaps_eV is None:
        lo, hi = front.gap_range_eV
        gaps = (np.linspace(max(lo, back.gap_eV + 0.3), hi, 11) if front.tunable
                else np.array([front.gap_eV]))
    else:
        gaps = gap_values(front_gaps_eV, "front gaps")
    if front_thicknesses_nm is None:
        thick = thickness_axis(*front.thickness_range_nm, thickness_points, most=most_points)
    else:
        thick = np.atleast_1d(np.asarray(front_thicknesses_nm, dtype=float))
    return gaps, thick


def energy_yield(front: Absorber | str, back: Absorber | str, series,
                 operating: OperatingPoint = OperatingPoint(), *, front_gaps_eV=None,
                 front_thicknesses_nm=None, thickness_points: int = 16,
                 back_thickness_nm: float | None = None, reference: Light = Light(),
                 progress: Progress | None = None, allow_large: bool = False) -> YieldResult:
    """Energy over a spectral series (a day, month or year) for front gap × thickness.

    Parameters
    ----------
    series : tandem.design.series.SpectralSeries
        Plane-of-array spectra and cell temperatures (``tandem.design.sky.clear_sky_series``,
        ``weather_series`` or ``folder_series``).
    front_gaps_eV : array, optional
        Front gaps at 298.15 K [eV]; default: 11 across the front's tunable range.
    front_thicknesses_nm : array, optional
        Default: ``thickness_points`` log-spaced across the front's range
        (:func:`~tandem.thickness_axis` makes another range).

    Examples
    --------
    >>> import tandem
    >>> from tandem.jobs.energy_yield import site_series
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield('perovskite-wide', 'silicon', site_series(site, period='day:2026-06-21'),
    ...                         front_gaps_eV=[1.72], front_thicknesses_nm=[800.0])
    >>> y.summary()['energy_optimum']['energy_4t_kWh_m2'] >= y.summary()['energy_optimum']['energy_2t_kWh_m2']
    True
    """
    check_types(operating=operating, reference=reference)
    from tandem.design.yields import hourly, yield_sweep

    a_front, a_back = absorber_pair(front, back, operating)
    energy = series.energy
    design = StackDesign(a_front, a_back, *operating.losses_on(energy))
    gaps, thick = yield_axes(a_front, a_back, front_gaps_eV, front_thicknesses_nm, thickness_points)
    back_d = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    check_work("yield", series.times.size * gaps.size * thick.size
               * yield_cost(operating, a_front, a_back), allow_large=allow_large,
               what="step × design evaluations")
    flux = reference.photon_flux()
    sweep = yield_sweep(design, series, gaps, thick, back_d, flux,
                        operating.ideality, operating.electrical, progress=progress,
                        allow_outside=operating.allow_outside_range,
                        reference_design=StackDesign(a_front, a_back,
                                                     *operating.losses_on(flux.energy)))
    i, j = sweep.optimum
    best = hourly(design, series, sweep.gaps[i], sweep.thicknesses[j], back_d,
                  operating.ideality, operating.electrical)
    return YieldResult(sweep, best, operating.terminals, operating.electrical.string_ratios)


def energy_yield_stack(stack, series, operating: OperatingPoint = OperatingPoint(), *,
                       front_thicknesses_nm=None, thickness_points: int = 16, others=None,
                       reference: Light = Light(), progress: Progress | None = None,
                       allow_large: bool = False) -> YieldResult:
    """Energy of a layer stack over a spectral series, for its front absorber's thickness.

    The stack's thin films are solved and its wafer traced at every cell-temperature bin
    (normal incidence; the cover's angular loss is in the series), so the energy-optimal
    front thickness of a real stack can be compared with its AM1.5G match.

    Parameters
    ----------
    stack : LayerStack or str
        A stack description (bundled name or .toml); its gaps are fixed by the file.
    front_thicknesses_nm : array, optional
        Default: ``thickness_points`` log-spaced across the front's sweep in the stack file
        (or the absorber's range).
    others : dict, optional
        Thicknesses [nm] of the stack's other swept layers (a layer left out: the geometric
        middle of its range). Default: those of the design ``match --stack`` chooses under
        the reference spectrum at 25 °C, whose front thickness then joins the default axis.

    Examples
    --------
    >>> import tandem
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield_stack('organic-pair', tandem.site_series(site, period='day:2026-06-21'),
    ...                               front_thicknesses_nm=[80.0, 120.0])
    >>> y.summary()['stack']
    'organic-pair'
    """
    check_types(operating=operating, reference=reference)
    from tandem.design.yields import hourly, yield_sweep

    design, thick = stack_yield_design(stack, operating, reference, others, front_thicknesses_nm,
                                       thickness_points, MAX_YIELD_THICKNESSES, allow_large)
    gaps = np.array([design.front_gap_eV])
    from tandem.design.yields import bin_count

    from tandem.design.stack_angles import angle_solves

    solves = bin_count(series) + angle_solves(series)  # each solves every thickness at once
    seconds, bytes_needed = stack_work(design.stack, series.energy.size, thick.size, solves)
    check_seconds("yield --stack", seconds * connection_cost(operating),
                  f"solves {len(design.stack.layers)} layers × {series.energy.size:,} energies × "
                  f"{thick.size} thicknesses for {solves} temperature bins and angles",
                  allow_large, bytes_needed)
    back_d = design.back_thickness_nm
    sweep = yield_sweep(design, series, gaps, thick, back_d, reference.photon_flux(),
                        operating.ideality, operating.electrical, progress=progress,
                        allow_outside=operating.allow_outside_range)
    best = hourly(design, series, gaps[0], sweep.thicknesses[sweep.optimum[1]], back_d,
                  operating.ideality, operating.electrical)
    return YieldResult(sweep, best, operating.terminals, operating.electrical.string_ratios)


def stack_yield_design(stack, operating: OperatingPoint, reference: Light, others=None,
                       front_thicknesses_nm=None, thickness_points: int = 16,
                       most_points: int = MAX_YIELD_THICKNESSES, allow_large: bool = False):
    """A layer stack as a yield design, and the front thicknesses [nm] a yield sweeps.

    ``others`` (swept layer → nm) default to the design ``match --stack`` chooses under the
    reference light at 25 °C, whose front thickness then joins the default axis
    (``thickness_points`` log-spaced across the front's sweep in the stack file)."""
    from tandem.design.yields import StackYield
    from tandem.jobs.inputs import thickness_axis
    from tandem.jobs.stack_match import stack_input, swept_thicknesses

    stack = stack_input(stack, operating)
    matched = None
    if others is None:  # the design `match --stack` chooses under the reference spectrum
        from tandem.design.layerstack import match_in_stack
        from tandem.jobs.common import stack_match_work

        flux = reference.photon_flux()
        seconds, bytes_needed = stack_match_work(stack, flux.energy.size, 24)
        check_seconds("yield --stack", seconds, f"first matches {len(stack.layers)} layers × "
                      f"{flux.energy.size:,} energies under the reference light", allow_large,
                      bytes_needed)
        matched = match_in_stack(stack, flux, 298.15, 24, operating.ideality,
                                 operating.electrical).best
        others = matched.others
    design = StackYield(stack, swept_thicknesses(stack, others),
                        "given" if matched is None else "AM1.5G-matched")
    if front_thicknesses_nm is None:
        lo, hi = stack.front.sweep_nm or design.front.thickness_range_nm
        thick = thickness_axis(lo, hi, thickness_points, most=most_points)
        if matched is not None:  # the AM1.5G-matched thickness itself is on the axis
            thick = np.union1d(thick, [matched.front_thickness_nm])
    else:
        thick = np.atleast_1d(np.asarray(front_thicknesses_nm, dtype=float))
    return design, thick
