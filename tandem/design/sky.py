"""Spectra under real skies: sites, SPECTRL2 clear skies anchored to ASTM G173-03, the series.

Every source gives a :class:`SpectralSeries`: plane-of-array spectral irradiance on one
common wavelength grid (the ASTM G173-03 points from 300 to 4000 nm, so that absorptances
are computed once for all time steps) and the cell temperature at each step. Weather files
and measured spectra are read in :mod:`tandem.design.weather`.

References
----------
R. Bird, C. Riordan, SERI/TR-215-2436 (1984) (SPECTRL2), via pvlib.spectrum.spectrl2.
D. L. King, W. E. Boyson, J. A. Kratochvil, SAND2004-3535 (2004) (SAPM cell temperature),
via pvlib.temperature.sapm_cell.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from tandem.core.errors import TandemInputError
from tandem.design.cover import GLASS_INDEX, cover_note, incidence_factors
from tandem.design.series import SpectralSeries
from tandem.physics.spectra import astm_g173_table

#: Atmosphere of ASTM G173-03 (the standard's stated SMARTS inputs), used as defaults.

#: Atmosphere of ASTM G173-03 (the standard's stated SMARTS inputs), used as defaults.
G173_AEROSOL_500NM = 0.084  #: aerosol optical depth at 500 nm [-]
G173_WATER_CM = 1.4164  #: precipitable water [cm]
G173_OZONE_ATM_CM = 0.3438  #: ozone [atm-cm]
SAPM_MOUNT = "open_rack_glass_glass"


def standard_time_zone(longitude: float) -> str:
    """The fixed-offset zone of a longitude's standard time ('Etc/GMT-1' at 15° east).

    Examples
    --------
    >>> standard_time_zone(-105.0), standard_time_zone(3.0)
    ('Etc/GMT+7', 'UTC')
    """
    hours = int(round(longitude / 15.0))
    return "UTC" if hours == 0 else f"Etc/GMT{-hours:+d}"


@dataclass(frozen=True)
class Site:
    """Where and how the module stands, and the clear-sky atmosphere.

    Angles in degrees; azimuth clockwise from north (180 = facing south); altitude [m].

    Examples
    --------
    >>> from tandem import Site
    >>> Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1').tilt_deg
    30.0
    """

    name: str = "site"
    latitude: float = 40.0
    longitude: float = -105.0
    altitude_m: float = 0.0
    tilt_deg: float = 30.0
    azimuth_deg: float = 180.0
    timezone: str = ""  #: IANA name; empty: the standard time of the longitude
    albedo: float = 0.2
    aerosol_turbidity_500nm: float = G173_AEROSOL_500NM
    precipitable_water_cm: float = G173_WATER_CM
    ozone_atm_cm: float = G173_OZONE_ATM_CM
    ambient_temperature_C: float = 20.0  #: used when no weather file gives it
    wind_speed_m_s: float = 1.0  #: likewise
    #: refractive index of the module's front cover, for the incidence-angle loss (1: none)
    cover_index: float = GLASS_INDEX

    def __post_init__(self) -> None:
        checks = [
            ("latitude", self.latitude, -90, 90, "degrees north, -90 to 90"),
            ("longitude", self.longitude, -180, 180, "degrees east, -180 to 180"),
            ("altitude_m", self.altitude_m, -500, 9000, "metres above sea level"),
            ("tilt_deg", self.tilt_deg, 0, 90, "degrees from horizontal, 0 to 90"),
            ("azimuth_deg", self.azimuth_deg, 0, 360, "degrees clockwise from north, 0 to 360"),
            ("albedo", self.albedo, 0, 1, "a fraction"),
            ("aerosol_turbidity_500nm", self.aerosol_turbidity_500nm, 0, 5, "an optical depth"),
            ("precipitable_water_cm", self.precipitable_water_cm, 0, 10, "cm of water"),
            ("ozone_atm_cm", self.ozone_atm_cm, 0, 1, "atm-cm"),
            ("ambient_temperature_C", self.ambient_temperature_C, -60, 60, "°C"),
            ("wind_speed_m_s", self.wind_speed_m_s, 0, 60, "m/s"),
            ("cover_index", self.cover_index, 1, 2.5, "a refractive index from 1 (no cover) to 2.5"),
        ]
        for name, value, lo, hi, unit in checks:
            if not (isinstance(value, (int, float)) and math.isfinite(value) and lo <= value <= hi):
                raise TandemInputError(f"site {name} = {value!r} is out of range; give {unit}")
        if not self.timezone:  # the site's own standard time, never UTC by default
            object.__setattr__(self, "timezone", standard_time_zone(self.longitude))
        try:
            pd.Timestamp("2026-01-01", tz=self.timezone)
        except Exception:
            raise TandemInputError(f"site timezone '{self.timezone}' is unknown; give an IANA name "
                                   "such as 'Europe/Madrid' or 'Etc/GMT+7', or 'UTC'") from None


@dataclass(frozen=True)
class Rows:
    """Rows of bifacial modules for the rear light (pvlib's infinite-sheds view-factor model).

    Examples
    --------
    >>> from tandem.design.sky import Rows
    >>> Rows(gcr=0.4, height_m=1.5, pitch_m=5.0).bifaciality
    1.0
    """

    gcr: float = 0.4  #: ground coverage ratio: module slant length / row pitch [-]
    height_m: float = 1.5  #: height of the module centre above the ground [m]
    pitch_m: float = 5.0  #: distance between rows [m]
    bifaciality: float = 1.0  #: share of the rear light reaching the cells (rear grid, frame)

    def __post_init__(self):
        for name, value, lo, hi in (("gcr", self.gcr, 0.01, 0.99), ("height_m", self.height_m, 0.0, 50.0),
                                    ("pitch_m", self.pitch_m, 0.1, 100.0),
                                    ("bifaciality", self.bifaciality, 0.0, 1.0)):
            if not (isinstance(value, (int, float)) and math.isfinite(value) and lo <= value <= hi):
                raise TandemInputError(f"bifacial rows: {name} = {value!r} is out of range; give "
                                       f"{lo:g} to {hi:g}")


def rear_ratio(site: Site, rows: Rows, pos, ghi, dni, dhi) -> np.ndarray:
    """Rear-to-front plane-of-array irradiance of each step (pvlib.bifacial.infinite_sheds,
    isotropic sky; Mikofski et al., IEEE PVSC 2019), times the rows' bifaciality.

    The rear light takes the front spectrum's shape (an approximation: ground-reflected light
    is the global spectrum times the ground's spectral albedo, taken as flat).
    """
    from pvlib.bifacial import infinite_sheds

    out = infinite_sheds.get_irradiance(
        surface_tilt=site.tilt_deg, surface_azimuth=site.azimuth_deg,
        solar_zenith=pos["apparent_zenith"].to_numpy(), solar_azimuth=pos["azimuth"].to_numpy(),
        gcr=rows.gcr, height=rows.height_m, pitch=rows.pitch_m, ghi=np.asarray(ghi, float),
        dhi=np.asarray(dhi, float), dni=np.asarray(dni, float), albedo=site.albedo)
    front, back = (np.nan_to_num(np.asarray(out[k], float)) for k in ("poa_front", "poa_back"))
    with np.errstate(divide="ignore", invalid="ignore"):
        return rows.bifaciality * np.where(front > 0, back / np.where(front > 0, front, 1.0), 0.0)


def site_from_location(location, **settings) -> Site:
    """Our :class:`Site` from a ``pvlib.location.Location`` (name, latitude, longitude,
    altitude, time zone), with any other site settings as keywords.

    Examples
    --------
    >>> import pvlib
    >>> from tandem import site_from_location
    >>> site_from_location(pvlib.location.Location(38.5, -3.0, 'Etc/GMT-1', 600, 'field'),
    ...                    tilt_deg=25).timezone
    'Etc/GMT-1'
    """
    return Site(name=location.name or "site", latitude=float(location.latitude),
                longitude=float(location.longitude), altitude_m=float(location.altitude or 0.0),
                timezone=str(location.tz), **settings)


def common_grid() -> np.ndarray:
    """The ASTM G173-03 wavelengths from 300 to 4000 nm (SPECTRL2's range) [nm]."""
    wl = astm_g173_table()["wavelength"]
    return wl[(wl >= 300.0) & (wl <= 4000.0)]


def parse_period(period: str, timezone: str, step_minutes: float) -> pd.DatetimeIndex:
    """'day:2026-06-21', 'month:2026-06', 'year:2026' → the middles of each step.

    Examples
    --------
    >>> from tandem import parse_period
    >>> parse_period('day:2026-06-21', 'UTC', 60).size  # hourly steps
    24
    """
    if not (isinstance(step_minutes, (int, float)) and 1 <= step_minutes <= 180):
        raise TandemInputError(f"time step {step_minutes:g} min: give 1 to 180 minutes")
    match = re.fullmatch(r"(day|month|year):(\d{4}(?:-\d{2}(?:-\d{2})?)?)", period.strip())
    if not match:
        raise TandemInputError(f"period '{period}': give day:YYYY-MM-DD, month:YYYY-MM or year:YYYY")
    kind, text = match.groups()
    if not 1900 <= int(text[:4]) <= 2200:
        raise TandemInputError(f"period '{period}': give a year from 1900 to 2200")
    need = {"day": 3, "month": 2, "year": 1}[kind]
    if len(text.split("-")) != need:
        raise TandemInputError(f"period '{period}': a {kind} is written "
                               f"{ {'day': 'YYYY-MM-DD', 'month': 'YYYY-MM', 'year': 'YYYY'}[kind]}")
    try:
        start = pd.Timestamp(text, tz=timezone)
    except ValueError:
        raise TandemInputError(f"period '{period}': not a real date") from None
    end = start + {"day": pd.DateOffset(days=1), "month": pd.DateOffset(months=1),
                   "year": pd.DateOffset(years=1)}[kind]
    step = pd.Timedelta(minutes=step_minutes)
    return pd.date_range(start + step / 2, end, freq=step, inclusive="left")


def solar_position(site: Site, times: pd.DatetimeIndex):
    import pvlib

    pos = pvlib.solarposition.get_solarposition(times, site.latitude, site.longitude,
                                                altitude=site.altitude_m)
    aoi = pvlib.irradiance.aoi(site.tilt_deg, site.azimuth_deg, pos["apparent_zenith"],
                               pos["azimuth"])
    return pos, aoi


def spectrl2_poa(site: Site, apparent_zenith, aoi, dayofyear, relative_airmass=None,
                 broadband: bool = False, parts: bool = False):
    """SPECTRL2 plane-of-array global spectra past the site's cover: (wavelengths (122,) [nm],
    (n, 122) [W m⁻² nm⁻¹]).

    Air mass from the apparent zenith (Kasten & Young 1989) unless given, pressure from the
    site altitude; the direct, sky and ground parts weighted by :func:`incidence_factors`.
    With ``broadband`` a third item gives SPECTRL2's own direct normal and diffuse horizontal
    irradiance of each step, {'dni', 'dhi'}, and the plane-of-array irradiance before and past
    the cover, {'poa', 'poa_past_cover'} [W/m²], and the spectra of the direct beam and of the
    sky and ground light as they arrive, before any cover, {'arriving_direct',
    'arriving_diffuse'} (n, 122) [W m⁻² nm⁻¹]. With ``parts`` the second item is instead a
    dict of the direct, sky-diffuse and ground-reflected spectra past the cover.
    """
    import pvlib

    zenith = np.atleast_1d(np.asarray(apparent_zenith, dtype=float))
    airmass = (pvlib.atmosphere.get_relative_airmass(zenith) if relative_airmass is None
               else np.broadcast_to(np.asarray(relative_airmass, dtype=float), zenith.shape))
    spectra = pvlib.spectrum.spectrl2(
        apparent_zenith=zenith, aoi=np.atleast_1d(np.asarray(aoi, dtype=float)),
        surface_tilt=site.tilt_deg, ground_albedo=site.albedo,
        surface_pressure=pvlib.atmosphere.alt2pres(site.altitude_m),
        relative_airmass=np.asarray(airmass), precipitable_water=site.precipitable_water_cm,
        ozone=site.ozone_atm_cm, aerosol_turbidity_500nm=site.aerosol_turbidity_500nm,
        dayofyear=np.atleast_1d(dayofyear))
    def part(name):
        return np.nan_to_num(np.asarray(spectra[name], dtype=float).T, nan=0.0)

    direct, sky, ground = incidence_factors(site.cover_index, site.tilt_deg, aoi)
    past = {"direct": direct[:, None] * part("poa_direct"), "sky": sky * part("poa_sky_diffuse"),
            "ground": ground * part("poa_ground_diffuse")}
    wl = np.asarray(spectra["wavelength"], dtype=float)
    if parts:
        return wl, {key: np.clip(value, 0.0, None) for key, value in past.items()}
    poa = np.clip(past["direct"] + past["sky"] + past["ground"], 0.0, None)
    if not broadband:
        return wl, poa
    totals = {k: np.trapezoid(part(k), wl, axis=-1) for k in ("dni", "dhi")}
    totals["poa"] = np.trapezoid(part("poa_global"), wl, axis=-1)
    totals["poa_past_cover"] = np.trapezoid(poa, wl, axis=-1)
    totals["arriving_direct"] = np.clip(part("poa_direct"), 0.0, None)
    totals["arriving_diffuse"] = np.clip(part("poa_sky_diffuse") + part("poa_ground_diffuse"), 0.0, None)
    return wl, poa, totals


#: The standard's own conditions (ASTM G173-03): relative air mass 1.5, a surface tilted 37°
#: towards the sun, sea level, its atmosphere, and a ground albedo of 0.2 (the standard uses a
#: light soil; 0.2 is the usual broadband stand-in, common practice).
G173_TILT_DEG = 37.0
STANDARD_SITE = Site(name="ASTM G173-03 conditions", latitude=0.0, longitude=0.0,
                     altitude_m=0.0, tilt_deg=G173_TILT_DEG, azimuth_deg=180.0, albedo=0.2,
                     cover_index=1.0)  # the standard is the light arriving, before any cover


def _mean_distance_factor(dayofyear):
    """SPECTRL2's extraterrestrial scaling for the Earth–Sun distance (Spencer 1971, in pvlib)."""
    import pvlib

    return np.asarray(pvlib.irradiance.get_extra_radiation(np.asarray(dayofyear),
                                                           method="spencer", solar_constant=1.0))


@functools.lru_cache(maxsize=1)
def standard_zenith_deg() -> float:
    """Apparent solar zenith [°] where the Kasten–Young air mass (used for every step) is 1.5."""
    import pvlib
    from scipy.optimize import brentq

    return float(brentq(lambda z: float(pvlib.atmosphere.get_relative_airmass(z)) - 1.5,
                        40.0, 55.0, xtol=1e-12))


@functools.lru_cache(maxsize=1)
def _spectrl2_at_standard():
    """SPECTRL2 at the standard's conditions, at the mean Earth–Sun distance (122 points)."""
    zenith = standard_zenith_deg()
    wl, poa = spectrl2_poa(STANDARD_SITE, zenith, zenith - G173_TILT_DEG, 81)
    return wl, poa[0] / float(_mean_distance_factor(81))


def anchored_poa(site: Site, apparent_zenith, aoi, dayofyear):
    """Plane-of-array spectra anchored to the standard, on the common grid [nm, W m⁻² nm⁻¹].

    G173(λ) · S(λ; step)/S(λ; standard): SPECTRL2 (S) supplies the change from the
    standard's conditions (air mass, atmosphere, angle of incidence, Earth–Sun distance),
    the ASTM G173-03 table the reference itself. SPECTRL2 alone gives 1032 W/m² and another
    red/blue balance at the standard's own conditions; anchored, the spectrum there is G173.

    Returns (grid (n_wl,), irradiance (n, n_wl)).
    """
    grid, ratio, basis = anchored_factors(site, apparent_zenith, aoi, dayofyear)
    return grid, ratio @ basis


def anchored_factors(site: Site, apparent_zenith, aoi, dayofyear, with_broadband=False):
    """:func:`anchored_poa` as factors: (grid (n_wl,), ratios (n, 122), basis (122, n_wl)).

    The spectra are ratios @ basis: linear interpolation is linear in the ratios, so each
    basis row is G173 times the interpolant of one SPECTRL2 wavelength (a hat function).
    """
    chunks = _spectrl2_chunks(site, apparent_zenith, aoi, dayofyear, broadband=True)
    ratio = _per_standard(np.concatenate([c[1] for c in chunks]))
    grid, basis = _anchored_basis(chunks[0][0])
    if not with_broadband:
        return grid, ratio, basis
    broadband = {k: np.concatenate([c[2][k] for c in chunks])
                 for k in ("dni", "dhi", "poa", "poa_past_cover")}
    for k in ("arriving_direct", "arriving_diffuse"):  # spectra: anchored as the ratios are
        broadband[k] = _per_standard(np.concatenate([c[2][k] for c in chunks]))
    return grid, ratio, basis, broadband


def anchored_parts(site: Site, apparent_zenith, aoi, dayofyear):
    """The direct, sky and ground parts of :func:`anchored_factors`, past the cover: (grid,
    {'direct', 'sky', 'ground'} → ratios (n, 122), basis (122, n_wl)); they add up to the
    global ratios."""
    chunks = _spectrl2_chunks(site, apparent_zenith, aoi, dayofyear, parts=True)
    ratios = {key: _per_standard(np.concatenate([c[1][key] for c in chunks]))
              for key in ("direct", "sky", "ground")}
    grid, basis = _anchored_basis(chunks[0][0])
    return grid, ratios, basis


def _spectrl2_chunks(site: Site, apparent_zenith, aoi, dayofyear, **kind):
    """:func:`spectrl2_poa` over many steps, 1024 at a time: SPECTRL2 holds a few dozen
    (122 × n) intermediates, and chunks keep a 15-minute year small."""
    zenith, aoi, day = np.broadcast_arrays(np.atleast_1d(np.asarray(apparent_zenith, float)),
                                           np.atleast_1d(np.asarray(aoi, float)),
                                           np.atleast_1d(dayofyear))
    return [spectrl2_poa(site, zenith[i:i + 1024], aoi[i:i + 1024], day[i:i + 1024], **kind)
            for i in range(0, zenith.size, 1024)]


def _per_standard(poa):
    """SPECTRL2 spectra (n, 122) as ratios to SPECTRL2 at the standard's conditions."""
    ref = _spectrl2_at_standard()[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(ref > 0, poa / np.where(ref > 0, ref, 1.0), 0.0)


def _anchored_basis(wl):
    """(common grid, basis (122, n_wl)): G173 times the hat interpolant of each wavelength."""
    grid = common_grid()
    return grid, _hat_basis(wl, grid) * np.interp(grid, *_g173_global())


def _hat_basis(wl, grid):
    """(len(wl), len(grid)): row i interpolates a unit value at wl[i] onto the grid, zero
    outside the data (numpy.interp of each unit vector)."""
    return np.stack([np.interp(grid, wl, row, left=0.0, right=0.0) for row in np.eye(wl.size)])


@functools.lru_cache(maxsize=1)
def _g173_global():
    table = astm_g173_table()
    return table["wavelength"], table["global"]


def spectrl2_factors(site: Site, times, pos, aoi, with_broadband=False):
    """Anchored plane-of-array spectra at ``times`` as factors (:func:`anchored_factors`)."""
    return anchored_factors(site, pos["apparent_zenith"].to_numpy(), aoi.to_numpy(),
                            times.day_of_year.to_numpy(), with_broadband)


def cell_temperature_K(poa_W_m2, ambient_C, wind_m_s):
    """SAPM cell temperature (King et al. 2004), open-rack glass/glass mounting [K]."""
    import pvlib

    params = pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS["sapm"][SAPM_MOUNT]
    return np.asarray(pvlib.temperature.sapm_cell(poa_W_m2, ambient_C, wind_m_s, **params)) + 273.15


def clear_sky_series(site: Site, times: pd.DatetimeIndex, rows: Rows | None = None) -> SpectralSeries:
    """SPECTRL2 clear-sky spectra at ``times`` (daylight steps only); with ``rows``, the
    rear light of bifacial rows from SPECTRL2's own direct and diffuse irradiance.

    Examples
    --------
    >>> from tandem import Site, clear_sky_series, parse_period
    >>> site = Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> series = clear_sky_series(site, parse_period('day:2026-06-21', site.timezone, 60))
    >>> 12 < series.times.size < 18  # daylight hours only
    True
    """
    pos, aoi = solar_position(site, times)
    up = (pos["apparent_zenith"] < 90).to_numpy()
    if not up.any():
        raise TandemInputError("the sun never rises over this period at this site; choose another "
                               "period or latitude")
    times_up = times[up]
    grid, ratio, basis, broadband = spectrl2_factors(site, times_up, pos[up], aoi[up], True)
    past_cover = np.where(broadband["poa"] > 0, broadband["poa_past_cover"]
                          / np.where(broadband["poa"] > 0, broadband["poa"], 1.0), 1.0)
    total = ratio @ np.trapezoid(basis, grid, axis=-1) / past_cover  # arriving, for the temperature
    rear = None
    if rows is not None:
        cosz = np.clip(np.cos(np.radians(pos["apparent_zenith"].to_numpy()[up])), 0.0, None)
        rear = rear_ratio(site, rows, pos[up], broadband["dni"] * cosz + broadband["dhi"],
                          broadband["dni"], broadband["dhi"])
    step_h = np.full(times_up.size, (times[1] - times[0]).total_seconds() / 3600 if times.size > 1 else 1.0)
    temps = cell_temperature_K(total, site.ambient_temperature_C, site.wind_speed_m_s)
    return SpectralSeries(times_up, grid, ratio, basis, temps, step_h,
                          f"clear sky at {site.name} (ASTM G173-03 × SPECTRL2 change)",
                          (f"aerosol optical depth {site.aerosol_turbidity_500nm:g} at 500 nm, "
                           f"precipitable water {site.precipitable_water_cm:g} cm, ozone "
                           f"{site.ozone_atm_cm:g} atm-cm, albedo {site.albedo:g}",
                           f"ambient {site.ambient_temperature_C:g} °C, wind "
                           f"{site.wind_speed_m_s:g} m/s, SAPM {SAPM_MOUNT}", cover_note(site.cover_index))
                          + rows_note(rows), rear, rows.bifaciality if rows else 0.0,
                          past_cover if site.cover_index != 1.0 else None, aoi[up].to_numpy(),
                          broadband["arriving_direct"], broadband["arriving_diffuse"])


def rows_note(rows: Rows | None) -> tuple[str, ...]:
    if rows is None:
        return ()
    return (f"bifacial rows: ground coverage {rows.gcr:g}, height {rows.height_m:g} m, pitch "
            f"{rows.pitch_m:g} m, bifaciality {rows.bifaciality:g} (pvlib infinite sheds); the "
            "rear light reaches the back subcell only, with the front spectrum's shape",)


