"""Measured skies: typical-year weather files, pvlib weather frames, folders of spectra.

Each gives a :class:`~tandem.design.series.SpectralSeries` like the clear skies do: SPECTRL2's
shape anchored to ASTM G173-03, scaled to the measured plane-of-array irradiance, or the
measured spectra themselves.
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd

from tandem.core.errors import TandemInputError

#: Atmosphere of ASTM G173-03 (the standard's stated SMARTS inputs), used as defaults.
from tandem.design.cover import cover_note, incidence_factors
from tandem.design.series import SpectralSeries
from tandem.design.sky import (Rows, Site, anchored_parts, cell_temperature_K,
                               common_grid, rear_ratio, rows_note, solar_position)
from tandem.physics.spectra import (
    read_spectrum_csv,
)


def weather_series(site: Site, path: str | Path, rows: Rows | None = None) -> SpectralSeries:
    """Hourly spectra from a typical-year weather file (EPW, or TMY3 CSV) read with pvlib.

    The file's stamps end their hour, so each step is placed at the middle of its hour; the
    rest is :func:`weather_frame_series`.

    Examples
    --------
    >>> from tandem import Site, weather_series
    >>> weather_series(Site(), 'no-such-file.epw')
    Traceback (most recent call last):
    ...
    tandem.core.errors.TandemInputError: weather file 'no-such-file.epw' not found; give an EPW or TMY3 CSV file
    """
    import pvlib

    path = Path(path)
    if not path.is_file():
        raise TandemInputError(f"weather file '{path}' not found; give an EPW or TMY3 CSV file")
    try:
        if path.suffix.lower() == ".epw":
            data, _ = pvlib.iotools.read_epw(path, coerce_year=2026)
        else:
            data, _ = pvlib.iotools.read_tmy3(path, coerce_year=2026, map_variables=True)
        data = data[list(WEATHER_COLUMNS)].astype(float)
    except Exception as exc:  # pvlib raises many types on a malformed file
        raise TandemInputError(f"weather file '{path}' cannot be read as EPW or TMY3 "
                               f"({type(exc).__name__}); check the format") from None
    data.index = data.index - pd.Timedelta(minutes=30)  # typical-year stamps end their hour
    series = weather_frame_series(site, data, rows, f"weather file {path.name}")
    hours = len(data.index)
    if hours < 8760:  # a typical year has 8,760 hours; a shorter file is not one (said)
        from dataclasses import replace

        series = replace(series, notes=series.notes + (
            f"weather file {path.name} holds {hours:,} hours ({hours / 24:.1f} days), not a "
            "typical year of 8,760: every energy is over those hours",))
    return series


#: Weather columns in pvlib's conventions, with the ranges a value must lie in.
WEATHER_COLUMNS = {"ghi": (0, 1500, "W/m²"), "dni": (0, 1500, "W/m²"), "dhi": (0, 1000, "W/m²"),
                   "temp_air": (-90, 70, "°C"), "wind_speed": (0, 120, "m/s")}


def weather_frame_series(site: Site, data: pd.DataFrame, rows: Rows | None = None,
                         source: str = "weather data") -> SpectralSeries:
    """Spectra from weather as data: a DataFrame in pvlib's conventions.

    Columns ``ghi``, ``dni``, ``dhi`` [W/m²], ``temp_air`` [°C] and ``wind_speed`` [m/s] on a
    time-zone-aware index marking the middle of each step (hourly or finer). Each daylight
    step gets the SPECTRL2 shape for that sun position, scaled to the plane-of-array
    irradiance from GHI, DNI and DHI (isotropic sky); the cell temperature uses the air
    temperature and wind speed; with ``rows`` the rear light of bifacial rows.

    Examples
    --------
    >>> import pandas as pd
    >>> from tandem import Site
    >>> from tandem import weather_frame_series
    >>> times = pd.date_range('2026-06-21 06:30', periods=12, freq='h', tz='Etc/GMT-1')
    >>> data = pd.DataFrame({'ghi': 600.0, 'dni': 700.0, 'dhi': 100.0, 'temp_air': 25.0,
    ...                      'wind_speed': 2.0}, index=times)
    >>> series = weather_frame_series(Site('field', 38.5, -3.0, timezone='Etc/GMT-1'), data)
    >>> series.times.size
    12
    """
    import pvlib

    if not isinstance(data, pd.DataFrame) or not isinstance(data.index, pd.DatetimeIndex):
        raise TandemInputError(f"{source}: give a DataFrame on a DatetimeIndex")
    if data.index.tz is None:
        raise TandemInputError(f"{source}: the index has no time zone; localise it "
                               "(e.g. data.tz_localize('Etc/GMT+7'))")
    missing = [c for c in WEATHER_COLUMNS if c not in data.columns]
    if missing:
        raise TandemInputError(f"{source}: columns {', '.join(missing)} are missing; give ghi, "
                               "dni, dhi [W/m²], temp_air [°C] and wind_speed [m/s]")
    data = data[list(WEATHER_COLUMNS)].astype(float)
    if data.empty or data.isna().all().any():
        raise TandemInputError(f"{source} has no usable irradiance or temperature columns; "
                               "check the data")
    for column, (lo, hi, unit) in WEATHER_COLUMNS.items():
        values = data[column].dropna()
        bad = values[(values < lo) | (values > hi)]
        if not bad.empty:
            raise TandemInputError(f"{source}: {column} {bad.iloc[0]:g} {unit} at "
                                   f"{bad.index[0]} is outside {lo}–{hi} {unit}; check the data")
    times = data.index
    step_h = float(np.median(_hours_between(times))) if times.size > 1 else 1.0
    pos, aoi = solar_position(site, times)
    parts = pvlib.irradiance.get_total_irradiance(
        site.tilt_deg, site.azimuth_deg, pos["apparent_zenith"], pos["azimuth"],
        data["dni"].to_numpy(), data["ghi"].to_numpy(), data["dhi"].to_numpy(),
        albedo=site.albedo).fillna(0.0)
    poa = parts["poa_global"].to_numpy()
    direct, sky, ground = incidence_factors(site.cover_index, site.tilt_deg, aoi.to_numpy())
    past_parts = {"direct": direct * parts["poa_direct"].to_numpy(),
                  "sky": sky * parts["poa_sky_diffuse"].to_numpy(),
                  "ground": ground * parts["poa_ground_diffuse"].to_numpy()}
    past = past_parts["direct"] + past_parts["sky"] + past_parts["ground"]
    use = (pos["apparent_zenith"].to_numpy() < 89.0) & (poa > 1.0)
    if not use.any():
        raise TandemInputError(f"{source} has no daylight irradiance on this plane")
    # Each part of the light takes SPECTRL2's clear-sky shape for that part (past the cover),
    # scaled to the file's amount of it. Sky light beyond what a clear sky would scatter comes
    # from clouds, which scatter nearly neutrally what would have been direct and diffuse
    # light: that excess takes the clear-sky global shape (the idea of cloud-cover spectral
    # models such as Nann & Riordan, J. Appl. Meteorol. 30 (1991) 447; recalled). Overcast
    # hours come out a little bluer than clear ones, clear-sky diffuse much bluer.
    # SPECTRL2's parts as they arrive (one evaluation), then each past the cover by its factor
    grid, arrive, basis = anchored_parts(replace(site, cover_index=1.0),
                                         pos["apparent_zenith"].to_numpy()[use],
                                         aoi.to_numpy()[use], times[use].day_of_year.to_numpy())
    factor = {"direct": direct[use][:, None], "sky": sky, "ground": ground, "cloud": sky}
    arrive["cloud"] = arrive["direct"] + arrive["sky"]  # clouds scatter both; it comes as sky light
    ratios = {key: factor[key] * r for key, r in arrive.items()}
    band = np.trapezoid(basis, grid, axis=-1)
    amounts = {key: value[use] for key, value in past_parts.items()}
    model = {key: r @ band for key, r in ratios.items()}
    amounts["sky"] = np.minimum(amounts["sky"], model["sky"])  # the clear-sky share of it
    amounts["cloud"] = past_parts["sky"][use] - amounts["sky"]

    def scaled(key):  # the part's SPECTRL2 ratios scaled to the file's amount of it
        have = model[key] > 1e-9
        return ratios[key] * np.where(have, amounts[key] / np.where(have, model[key], 1.0),
                                      0.0)[:, None]

    ratio = scaled("direct") + scaled("sky") + scaled("ground") + scaled("cloud")
    total = ratio @ band
    ok = total > 0
    # a part SPECTRL2 lacks (direct light with its sun below the horizon) goes to the others
    rescale = np.where(ok, past[use] / np.where(ok, total, 1.0), 0.0)[:, None]
    ratio = ratio * rescale
    # the same light as it arrives, before the cover's factor of each part (for layer stacks,
    # whose own layers take each part at its angles)
    def arriving(key):
        f = np.broadcast_to(factor[key], (ratio.shape[0], 1))
        return scaled(key) * rescale / np.where(f > 0, f, 1.0)

    arriving_direct = arriving("direct")
    arriving_diffuse = arriving("sky") + arriving("cloud") + arriving("ground")
    past_cover = np.where(poa[use] > 0, past[use] / np.where(poa[use] > 0, poa[use], 1.0), 1.0)
    temps = cell_temperature_K(poa[use], data["temp_air"].to_numpy()[use],
                               data["wind_speed"].to_numpy()[use])
    rear = None
    if rows is not None:
        rear = rear_ratio(site, rows, pos[use], *(data[c].to_numpy()[use] for c in ("ghi", "dni",
                                                                                  "dhi")))[ok]
    dropped = int((poa > 1.0).sum() - ok.sum())
    notes = ((f"{dropped} steps with irradiance but the sun at or below the horizon in SPECTRL2 "
              "were left out",) if dropped else ()) + (cover_note(site.cover_index),) + rows_note(rows)
    return SpectralSeries(times[use][ok], grid, ratio[ok], basis, temps[ok],
                          np.full(int(ok.sum()), step_h), f"{source} at {site.name}", notes, rear,
                          rows.bifaciality if rows else 0.0,
                          past_cover[ok] if site.cover_index != 1.0 else None,
                          aoi.to_numpy()[use][ok], arriving_direct[ok], arriving_diffuse[ok])


def _hours_between(times: pd.DatetimeIndex) -> np.ndarray:
    """Hours from each time to the next (whatever unit the index stores)."""
    return np.diff(times.to_numpy()).astype("timedelta64[ns]").astype(np.int64) / 3.6e12


_STAMP = re.compile(r"(\d{4})-?(\d{2})-?(\d{2})[T_ ]?(\d{2})[-:]?(\d{2})")


def folder_series(site: Site, folder: str | Path) -> SpectralSeries:
    """Measured spectra: one CSV per time stamp in a folder (wavelength nm, W m⁻² nm⁻¹).

    File names carry the time, e.g. ``2026-06-21T12-00.csv`` or ``20260621T1200.csv``
    (site time zone). All files must use the same units: a file whose wavelengths look like
    micrometres among files in nanometres is refused.

    Examples
    --------
    >>> from tandem import Site, folder_series
    >>> folder_series(Site(), 'no-such-folder')
    Traceback (most recent call last):
    ...
    tandem.core.errors.TandemInputError: spectrum folder 'no-such-folder' not found; give a folder of CSV files
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise TandemInputError(f"spectrum folder '{folder}' not found; give a folder of CSV files")
    files = sorted(folder.glob("*.csv"))
    if not files:
        raise TandemInputError(f"spectrum folder '{folder}' has no .csv files")
    stamps, spectra = [], []
    for f in files:
        m = _STAMP.search(f.stem)
        if not m:
            raise TandemInputError(f"spectrum folder '{folder}': file '{f.name}' has no time stamp "
                                   "in its name; name files like 2026-06-21T12-00.csv")
        stamps.append(pd.Timestamp("{}-{}-{}T{}:{}".format(*m.groups()), tz=site.timezone))
        # each file in its own header's units (read_spectrum_csv converts them, and refuses
        # µm values under no header), so a folder may mix files headed nm and µm
        spectra.append(read_spectrum_csv(f))
    order = np.argsort(stamps)
    times = pd.DatetimeIndex([stamps[i] for i in order])
    if times.has_duplicates:
        raise TandemInputError(f"spectrum folder '{folder}': two files share a time stamp")
    grid = common_grid()
    irr = np.array([np.interp(grid, spectra[i].wavelength_nm, spectra[i].irradiance,
                              left=0.0, right=0.0) for i in order])
    if times.size > 1:
        gaps_h = _hours_between(times)
        step = np.append(gaps_h, np.median(gaps_h))
    else:
        step = np.ones(1)
    total = np.trapezoid(irr, grid, axis=-1)
    temps = cell_temperature_K(total, site.ambient_temperature_C, site.wind_speed_m_s)
    return SpectralSeries.from_spectra(times, grid, irr, temps, step,
                                       f"measured spectra in {folder.name}",
                                       ("each spectrum stands for the time until the next one",
                                        "measured spectra are taken as the light the cells receive: "
                                        "no incidence-angle loss is added (their direct and diffuse "
                                        "parts are unknown)"))
