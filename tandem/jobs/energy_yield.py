"""Energy over a day, month or year (:func:`energy_yield`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tandem.design.matching import StackDesign
from tandem.jobs.common import Progress, absorber_pair, check_work
from tandem.jobs.inputs import Light, OperatingPoint
from tandem.optics.absorbers import Absorber
from tandem.output.report import yield_summary


@dataclass(frozen=True)
class YieldResult:
    """Energy over a period for front gap × thickness, and the best design hour by hour.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.jobs.energy_yield import site_series
    >>> site = tandem.Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> y = tandem.energy_yield('perovskite-wide', 'silicon', site_series(site, period='day:2026-06-21'),
    ...                         front_gaps_eV=[1.72], front_thicknesses_nm=[500.0, 1000.0])
    >>> sorted(y.to_dataset().dims)
    ['front_gap', 'front_thickness']
    """

    sweep: object  #: yields.YieldSweep
    best: object  #: yields.HourlyDesign

    def summary(self) -> dict:
        return yield_summary(self.sweep, self.best)

    def to_frame(self):
        """The energy-optimal design step by step: powers [W/m²], photocurrents [mA/cm²]."""
        import pandas as pd

        b = self.best
        return pd.DataFrame({"p_2t_W_m2": b.p_2t, "p_4t_W_m2": b.p_4t,
                             "jsc_front_mA_cm2": b.j_front / 10, "jsc_back_mA_cm2": b.j_back / 10,
                             "irradiance_W_m2": b.irradiance,
                             "cell_temperature_K": b.cell_temperature_K,
                             "step_hours": b.step_hours}, index=b.times)

    def to_dataset(self):
        import xarray as xr

        s = self.sweep
        dims = ("front_gap", "front_thickness")
        return xr.Dataset(
            {"energy_2t": (dims, s.energy_2t, {"units": "kWh/m2"}),
             "energy_4t": (dims, s.energy_4t, {"units": "kWh/m2"}),
             "efficiency_am15g_2t": (dims, 100 * s.efficiency_am15_2t, {"units": "%"})},
            coords={"front_gap": ("front_gap", s.gaps, {"units": "eV", "note": "at 298.15 K"}),
                    "front_thickness": ("front_thickness", s.thicknesses, {"units": "nm"})},
            attrs={"source": s.series.source, "insolation_kWh_m2": float(s.insolation),
                   "front": s.design.front.key, "back": s.design.back.key,
                   "back_thickness_nm": float(s.back_thickness_nm)})

    def plot(self, ax=None):
        from tandem.output.plots import draw_yield_map

        return draw_yield_map(self.sweep, ax)

    def write(self, prefix, overwrite: bool = False) -> list:
        """The figures, the gap × thickness energy grid (``PREFIX-energy.nc``) and the
        energy-optimal design's time series (``PREFIX-series.parquet``), written as one."""
        from pathlib import Path

        from tandem.core.files import STAMP, write_parquet
        from tandem.output.plots import yield_figures

        prefix = Path(prefix)
        grid = self.to_dataset()
        grid.attrs["written_by"] = STAMP
        series = self.to_frame().reset_index(names="time")
        return yield_figures(self.sweep, self.best, prefix, overwrite, {
            prefix.parent / f"{prefix.name}-energy.nc": lambda p: grid.to_netcdf(p, engine="scipy"),
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
    clear skies over a period; optionally at a fixed cell temperature instead of SAPM [K]."""
    from tandem.design.sky import clear_sky_series, common_grid, parse_period
    from tandem.design.weather import folder_series, weather_series

    if not (weather or spectra):
        times = parse_period(period, site.timezone, step_minutes)
        # daylight is about half the steps; spectra, fluxes and a working copy are held at once
        check_work("yield", 0.5 * times.size, 0.5 * times.size * common_grid().size * 8 * 4,
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


def scenario_yield_inputs(scenario, operating: OperatingPoint):
    """What a scenario says for a yield run: (series, front, back, operating, back thickness).

    The same resolver as ``tandem study`` (its [site], [weather], [stack] losses and
    [electrical] section); the operating point keeps its temperature and terminals.
    """
    import dataclasses

    from tandem.core.errors import TandemInputError

    if scenario.site() is None:
        raise TandemInputError(f"scenario '{scenario.key}' has no [site]; add one or give a "
                               "latitude and longitude")
    operating = dataclasses.replace(operating, electrical=scenario.electrical(), **{
        k: float(scenario.get("stack", k, 0.0))
        for k in ("reflectance", "front_parasitic", "interlayer_parasitic")})
    backs = scenario.back_thicknesses_nm()
    return (scenario.series(), scenario.fronts[0], scenario.backs[0], operating,
            backs[0] if backs else None)


def energy_yield(front: Absorber | str, back: Absorber | str, series,
                 operating: OperatingPoint = OperatingPoint(), *, front_gaps_eV=None,
                 front_thicknesses_nm=None, back_thickness_nm: float | None = None,
                 reference: Light = Light(), progress: Progress | None = None,
                 allow_large: bool = False) -> YieldResult:
    """Energy over a spectral series (a day, month or year) for front gap × thickness.

    Parameters
    ----------
    series : tandem.design.sky.SpectralSeries
        Plane-of-array spectra and cell temperatures (``tandem.design.sky.clear_sky_series``,
        ``weather_series`` or ``folder_series``).
    front_gaps_eV : array, optional
        Front gaps at 298.15 K [eV]; default: 11 across the front's tunable range.
    front_thicknesses_nm : array, optional
        Default: 16 log-spaced across the front's range.

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
    from tandem.design.yields import hourly, yield_sweep

    a_front, a_back = absorber_pair(front, back, operating)
    energy = series.energy
    design = StackDesign(a_front, a_back, *operating.losses_on(energy))
    if front_gaps_eV is None:
        lo, hi = a_front.gap_range_eV
        gaps = np.linspace(max(lo, a_back.gap_eV + 0.3), hi, 11) if a_front.tunable else \
            np.array([a_front.gap_eV])
    else:
        gaps = np.asarray(front_gaps_eV, dtype=float)
    thick = (np.geomspace(*a_front.thickness_range_nm, 16) if front_thicknesses_nm is None
             else np.asarray(front_thicknesses_nm, dtype=float))
    back_d = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    check_work("yield", series.times.size * gaps.size * thick.size, allow_large=allow_large,
               what="step × design evaluations")
    sweep = yield_sweep(design, series, gaps, thick, back_d, reference.photon_flux(),
                        operating.ideality, operating.electrical, progress=progress,
                        allow_outside=operating.allow_outside_range)
    i, j = sweep.optimum
    best = hourly(design, series, sweep.gaps[i], sweep.thicknesses[j], back_d,
                  operating.ideality, operating.electrical)
    return YieldResult(sweep, best)


