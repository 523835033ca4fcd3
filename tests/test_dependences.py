"""Each physical dependence past the engine pinned to an outside value or a closed form: a
flipped sign, a dropped factor or a wrong unit in spectra, sky, yield, region or the jobs makes
one of these fail (the checks a mutation run found missing)."""

import math
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

import tandem
from tandem.core.units import K_B_EV
from tandem.design.sky import Site, clear_sky_series, parse_period, standard_zenith_deg


# --- light ----------------------------------------------------------------------------------

@pytest.mark.parametrize("source", ["am1.5g", "csv"])
def test_concentration_multiplies_the_light_and_adds_kT_ln_X_to_voc(source, tmp_path):
    # Ideal diode (Shockley): Voc = (kT/q)·ln(1 + Jsc/J0) with Jsc ∝ X, so 3 suns add
    # (kT/q)·ln 3 — for the reference spectra and a user's CSV alike (a 1.6 eV cell, > 9 kT
    # below its gap in both). At 100 suns a 1.34 eV cell comes within 5.4 kT of its gap,
    # where the tool uses the exact (Bose–Einstein) emission: its Voc is then the root of
    # Würfel's law, integrated here on its own.
    from scipy import integrate, optimize

    if source == "csv":
        g173 = tandem.reference_spectrum("am1.5g")
        keep = (g173.wavelength_nm >= 300) & (g173.wavelength_nm <= 2500)
        lines = [f"{w:g},{v:.8g}" for w, v in zip(g173.wavelength_nm[keep], g173.irradiance[keep])]
        (tmp_path / "sun.csv").write_text("wavelength_nm,irradiance\n" + "\n".join(lines) + "\n")
        source = str(tmp_path / "sun.csv")
    gap, vt = 1.34, K_B_EV * 298.15

    def cell(g, x):
        return tandem.limit(g, tandem.Light(source=source, concentration=x)).design.performance

    one, hundred = cell(gap, 1.0), cell(gap, 100.0)
    assert float(hundred.irradiance) == pytest.approx(100 * float(one.irradiance), rel=1e-12)
    assert float(hundred.jsc[0]) == pytest.approx(100 * float(one.jsc[0]), rel=1e-12)
    assert float(cell(1.6, 3.0).voc[0] - cell(1.6, 1.0).voc[0]) == pytest.approx(
        vt * math.log(3.0), rel=1e-9)
    # Würfel, J. Phys. C 15 (1982) 3967: emission ∝ ∫ E²/(e^{(E−qV)/kT} − 1) dE above the gap,
    # scaled by the tool's Boltzmann J0 = C·∫ E²·e^{−E/kT} dE
    top = gap + 80 * vt

    def moment(v, exact=True):
        f = ((lambda e: e * e / math.expm1((e - v) / vt)) if exact else
             (lambda e: e * e * math.exp(-(e - v) / vt)))
        return integrate.quad(f, gap, top, epsabs=0, epsrel=1e-13, limit=200)[0]

    c = float(one.j0[0]) / moment(0.0, exact=False)
    jsc = float(hundred.jsc[0])
    voc = optimize.brentq(lambda v: c * (moment(v) - moment(0.0)) - jsc, 1.0, gap - 1e-3,
                          xtol=1e-14)
    assert float(hundred.voc[0]) == pytest.approx(voc, abs=1e-9)
    assert voc < 1.34 - 5 * vt  # and there the Boltzmann law would be 58 µV too high
    assert vt * math.log(100.0) - (voc - float(one.voc[0])) == pytest.approx(58e-6, rel=0.05)


def test_series_jsc_is_the_limiting_subcells_and_ff_is_its_definition():
    # A series stack at short circuit carries the smaller photocurrent (the other subcell is
    # forward biased; the limiting one reverse biased by at most kT·ln 2 — its J0 is ~1e-17 of
    # J_L); FF = P/(Voc·Jsc) by definition
    r = tandem.limit([1.73, 0.94])
    p = r.design.performance
    assert float(p.jsc_2t) == pytest.approx(float(np.min(p.j_light)), rel=1e-12)
    assert float(p.ff_2t) == pytest.approx(float(p.p_2t / (p.voc_2t * p.jsc_2t)), rel=1e-12)
    s = r.summary()
    assert s["jsc_mA_cm2"] == pytest.approx(float(np.min(p.j_light)) / 10, abs=1e-4)
    assert s["limiting_subcell"] == ("front" if p.j_light[0] < p.j_light[1] else "back")


def test_a_hot_cells_photocurrent_is_that_of_its_shifted_gap():
    # The perovskite widens with heat (its file: +0.25 meV/K, cited there): at 65 °C its
    # photocurrent is the one of a gap 10 meV wider at 25 °C. A flipped sign gives the gap
    # 10 meV narrower and ~0.2 mA/cm² more.
    from tandem.design.matching import Conditions, StackDesign, design_currents

    pk, si = tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon")
    design = StackDesign(pk, si)
    flux = tandem.Light().photon_flux()
    hot = design_currents(design, Conditions(flux, 338.15), 1.68, np.array([500.0]), 160e3)[0]
    shift = float(pk.gap_shift_eV(338.15))
    assert shift == pytest.approx(pk.gap_temperature_coefficient_eV_K * 40.0) and shift > 0
    cool = design_currents(design, Conditions(flux, 298.15), 1.68 + shift, np.array([500.0]), 160e3)[0]
    assert float(hot[0, 0]) == pytest.approx(float(cool[0, 0]), rel=1e-12)


# --- sky and time ---------------------------------------------------------------------------

def test_air_mass_is_kasten_young():
    # Kasten & Young, Appl. Opt. 28 (1989) 4735 (coefficients recalled): AM(z) =
    # 1/(cos z + 0.50572·(96.07995° − z)^−1.6364), z the apparent zenith. Solved here on its
    # own for AM 1.5 (48.259°); a plane-parallel 1/cos z would put it at 48.190°
    from scipy.optimize import brentq

    def kasten_young(z):
        return 1 / (math.cos(math.radians(z)) + 0.50572 * (96.07995 - z) ** -1.6364)

    zenith = brentq(lambda z: kasten_young(z) - 1.5, 40.0, 55.0, xtol=1e-13)
    assert standard_zenith_deg() == pytest.approx(zenith, abs=1e-9)
    assert abs(zenith - math.degrees(math.acos(1 / 1.5))) > 0.05


def test_a_day_is_a_local_day_and_etc_gmt_signs_are_posix():
    # IANA 'Etc/GMT+7' is UTC−7 (POSIX sign convention): a local day there starts at 07:00 UTC
    times = parse_period("day:2026-06-21", "Etc/GMT+7", 60)
    assert times.size == 24
    assert times[0] == pd.Timestamp("2026-06-21 00:30", tz="Etc/GMT+7")
    assert times[0].tz_convert("UTC") == pd.Timestamp("2026-06-21 07:30", tz="UTC")


def test_the_brightest_clear_hour_is_around_solar_noon():
    # At the standard meridian of its zone (−105° for UTC−7) solar noon is 12:00 local minus
    # the equation of time (≈ −2 min on 21 June): a south-facing module is brightest at noon
    site = Site("meridian field", 35.0, -105.0, 0.0, 30.0, 180.0, "Etc/GMT+7")
    series = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 30))
    brightest = series.times[int(np.argmax(series.step_irradiance))]
    assert abs(brightest.hour + brightest.minute / 60 - 12.0) <= 0.5


def test_insolation_does_not_depend_on_the_step_length():
    # Σ G·Δt converges to the day's integral: 60- and 15-minute steps agree within 1 %
    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    coarse = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 60))
    fine = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 15))
    assert fine.step_hours[0] == pytest.approx(0.25)
    assert coarse.insolation_kWh_m2 == pytest.approx(fine.insolation_kWh_m2, rel=0.01)


@pytest.mark.filterwarnings("ignore:DatetimeIndex.dayofyear is deprecated")  # pvlib's own
def test_a_clear_day_keeps_every_step_the_sun_is_up_and_no_other():
    # Sunrise and sunset from an independent solar position (pvlib's ephemeris method, not the
    # SPA the tool uses; they agree to well under 0.5°): every 15-minute step with the sun
    # more than 0.5° up carries light, low sun included; every one 0.5° below has none
    import pvlib

    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    times = parse_period("day:2026-06-21", site.timezone, 15)
    series = clear_sky_series(site, times)
    elevation = pvlib.solarposition.get_solarposition(times, site.latitude, site.longitude,
                                                      method="ephemeris")["apparent_elevation"]
    kept = times.isin(series.times)
    assert kept[elevation.to_numpy() > 0.5].all() and not kept[elevation.to_numpy() < -0.5].any()
    low = (elevation.to_numpy() > 0.5) & (elevation.to_numpy() < 10)
    assert low.sum() >= 4  # dawn and dusk steps with the sun within 10° of the horizon


def test_wind_cools_the_cell_as_the_sapm_model_says():
    # King et al., Sandia report SAND2004-3535 (2004), SAPM: T = E·e^(a + b·WS) + Ta + E/E0·ΔT
    # (E0 = 1000 W/m²), open-rack glass/glass a = −3.47, b = −0.0594, ΔT = 3 °C (pvlib's table
    # of the report's values). From the cell temperature of a step at 1 m/s, E follows; the same
    # step at 6 m/s must then be the formula's temperature at that wind, a few kelvin cooler.
    a, b, delta_t = -3.47, -0.0594, 3.0
    calm = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1", wind_speed_m_s=1.0)
    windy = replace(calm, wind_speed_m_s=6.0)
    times = parse_period("day:2026-06-21", calm.timezone, 60)
    t_calm = clear_sky_series(calm, times).cell_temperature_K
    t_windy = clear_sky_series(windy, times).cell_temperature_K
    ambient = calm.ambient_temperature_C + 273.15
    poa = (t_calm - ambient) / (math.exp(a + b * 1.0) + delta_t / 1000)
    expected = poa * math.exp(a + b * 6.0) + ambient + poa / 1000 * delta_t
    np.testing.assert_allclose(t_windy, expected, rtol=0, atol=1e-9)
    assert np.max(t_calm - t_windy) > 3.0


# --- yield and region -----------------------------------------------------------------------

def test_an_open_rear_emits_even_in_the_dark():
    # Reciprocity (Rau 2007): a rear face open to light is open to emission. With no rear
    # light at all, an open rear only adds dark current to the back subcell, so the energy
    # falls — by a few per mille for a radiative silicon back (about kT·ln 2 of its Voc)
    from tandem.design.matching import StackDesign
    from tandem.design.yields import yield_sweep

    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    series = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 60))
    design = StackDesign(replace(tandem.load_absorber("perovskite-wide"), ere=1.0),
                         replace(tandem.load_absorber("silicon"), ere=1.0, bulk=None))
    flux = tandem.Light().photon_flux()
    mono = yield_sweep(design, series, [1.70], [600.0], 160e3, flux)
    dark_rear = replace(series, rear_ratio=np.zeros(series.times.size), bifaciality=1.0)
    opened = yield_sweep(design, dark_rear, [1.70], [600.0], 160e3, flux)
    loss = 1 - float(opened.energy_4t[0, 0] / mono.energy_4t[0, 0])
    assert 1e-3 < loss < 0.03


def test_a_region_resume_key_follows_the_step_and_the_weather_files_content(tmp_path):
    # A resumed site must have been computed from the same inputs: the time step and the
    # weather file's bytes (not its name) are part of the key
    from tandem.jobs.region import SiteSpec, region_job

    job = region_job("perovskite-wide", "silicon", front_gaps_eV=[1.7], thickness_points=2)
    assert replace(job, step_minutes=15.0).job_fingerprint() != job.job_fingerprint()
    weather = tmp_path / "w.csv"
    weather.write_text("a,b\n1,2\n")
    spec = SiteSpec("x", 10.0, 10.0, 0.0, "", str(weather))
    before = job.fingerprint(spec)
    weather.write_text("a,b\n1,3\n")
    assert job.fingerprint(spec) != before


def test_a_region_resume_key_follows_input_files_by_content_and_the_version(tmp_path, monkeypatch):
    # Halving a spectrum file under the same name, or changing a loss CSV, or a new tandem
    # version, must not resume sites computed before
    from tandem.jobs.region import region_job

    g173 = tandem.reference_spectrum("am1.5g")
    sun = tmp_path / "sun.csv"

    def write(scale):
        sun.write_text("wavelength_nm,irradiance\n" + "\n".join(
            f"{w:g},{scale * v:.8g}" for w, v in zip(g173.wavelength_nm, g173.irradiance)) + "\n")

    write(1.0)
    job = region_job("perovskite-wide", "silicon", front_gaps_eV=[1.7], thickness_points=2,
                     reference=tandem.Light(source=str(sun)))
    before = job.job_fingerprint()
    write(0.5)
    assert job.job_fingerprint() != before
    loss = tmp_path / "r.csv"
    loss.write_text("wavelength_nm,reflectance\n300,0.02\n2000,0.02\n")
    lossy = replace(job, operating=tandem.OperatingPoint(reflectance=str(loss)))
    first = lossy.job_fingerprint()
    loss.write_text("wavelength_nm,reflectance\n300,0.04\n2000,0.04\n")
    assert lossy.job_fingerprint() != first
    now = job.job_fingerprint()
    monkeypatch.setattr(tandem, "__version__", "99.0")
    assert job.job_fingerprint() != now


def test_a_flat_loss_file_equals_the_same_flat_fraction_in_yield_and_region(tmp_path):
    # A loss CSV is resampled onto each grid it meets (the series' and the reference's): a
    # file holding 3 % everywhere gives exactly what the number 0.03 gives
    from tandem.jobs.region import SiteSpec, region_job, site_year

    loss = tmp_path / "r.csv"
    loss.write_text("wavelength_nm,reflectance\n280,0.03\n4000,0.03\n")
    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    series = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 60))
    kw = dict(front_gaps_eV=[1.7], front_thicknesses_nm=[400.0, 800.0])
    by_file = tandem.energy_yield("perovskite-wide", "silicon", series,
                                  tandem.OperatingPoint(reflectance=str(loss)), **kw)
    by_number = tandem.energy_yield("perovskite-wide", "silicon", series,
                                    tandem.OperatingPoint(reflectance=0.03), **kw)
    np.testing.assert_allclose(by_file.sweep.energy_2t, by_number.sweep.energy_2t, rtol=1e-12)
    np.testing.assert_allclose(by_file.sweep.efficiency_am15_2t,
                               by_number.sweep.efficiency_am15_2t, rtol=1e-12)
    spec = SiteSpec("x", 38.0, -4.0, 600.0, "Etc/GMT-1")
    records = [site_year(spec, region_job("perovskite-wide", "silicon", tandem.OperatingPoint(
        reflectance=value), front_gaps_eV=[1.7], thickness_points=2, period="day:2026-06-21"))
        for value in (str(loss), 0.03)]
    assert records[0]["energy_2t_kWh_m2"] == pytest.approx(records[1]["energy_2t_kWh_m2"], rel=1e-12)


# --- design refinement ---------------------------------------------------------------------------

@pytest.mark.parametrize("terminals", [2, 4])
def test_each_refined_thickness_is_the_best_a_dense_search_finds(terminals):
    # Every configuration's thickness is refined between its grid neighbours; a dense search
    # over the whole thickness range (4,001 log-spaced points, then scipy's bounded Brent
    # around the best of them) finds no better design at that gap and back thickness.
    from scipy.optimize import minimize_scalar

    from tandem.design.matching import stack_performance

    def rows(gaps):
        r = tandem.match("perovskite-wide", "silicon",
                         operating=tandem.OperatingPoint(terminals=terminals),
                         sweep=tandem.Sweep(front_gaps_eV=gaps, thickness_points=9)).result
        # the table's rows, and (four terminals) the best-4T line of a two-terminal study
        return r, [(c, terminals) for c in r.configurations] + [(r.best_4t, 4)]

    r, checked = rows([1.64, 1.70, 1.76, 1.82])
    # at 1.62 eV the best-4T line (1,334 nm) is far from the two-terminal row (373 nm)
    checked += rows([1.62])[1]
    d_grid = r.best_sweep.front_thickness_nm
    dense = np.geomspace(d_grid[0], d_grid[-1], 4001)
    for c, kind in checked:
        def power(d):
            perf = stack_performance(r.design, r.conditions, c.front_gap_eV, d, c.back_thickness_nm)
            return perf.power(kind)

        p = power(dense)
        k = int(np.argmax(p))
        lo, hi = np.log(dense[max(k - 1, 0)]), np.log(dense[min(k + 1, dense.size - 1)])
        best = minimize_scalar(lambda x: -float(power(np.exp(x))), bounds=(lo, hi),
                               method="bounded", options={"xatol": 1e-9})
        top = max(float(p[k]), -best.fun)
        assert float(power(c.front_thickness_nm)) >= top * (1 - 2e-7), (c.front_gap_eV, kind)
        # a row solved with the other gaps equals the design solved alone, silicon's Auger term
        # included (the gaps share one call of the solver)
        alone = stack_performance(r.design, r.conditions, c.front_gap_eV, c.front_thickness_nm,
                                  c.back_thickness_nm)
        for name in ("j_light", "j0_radiative", "voc", "jsc", "p_own", "p_2t", "voc_2t", "jsc_2t"):
            np.testing.assert_allclose(getattr(c.performance, name), getattr(alone, name),
                                       rtol=1e-9, atol=1e-12, err_msg=name)
        # where on its flat top the series maximum lies: a power exact to ~1e-14 places it to
        # ~1e-7 (the square root), and the searches of the batch and of the design alone start
        # from brackets a rounding apart
        np.testing.assert_allclose(c.performance.v_2t_sub, alone.v_2t_sub, rtol=1e-7)
        vt = 0.025693
        assert c.performance.bulk is not None and alone.bulk is not None
        assert float(c.performance.bulk.subcell(1).current(0.70, vt)) == pytest.approx(
            float(alone.bulk.subcell(1).current(0.70, vt)), rel=1e-12)


def test_the_matched_thickness_equalises_the_subcell_currents():
    # the definition of current matching: at the reported thickness both photocurrents agree
    # (to the root search's precision), though the grid has no point there
    from tandem.design.matching import stack_performance

    study = tandem.match("perovskite-wide", "silicon", sweep=tandem.Sweep(
        front_gaps_eV=[1.66, 1.72, 1.78], thickness_points=7))
    r = study.result
    grid = r.best_sweep.front_thickness_nm
    matched = [c for c in r.configurations if c.matched_front_thickness_nm is not None]
    assert matched
    for c in matched:
        d = c.matched_front_thickness_nm
        assert not np.any(np.isclose(grid, d, rtol=1e-6))
        j = stack_performance(r.design, r.conditions, c.front_gap_eV, d, c.back_thickness_nm).j_light
        # the zooms leave 1e-9 in ln d and the secant through it is exact to its square
        assert j[0] == pytest.approx(j[1], rel=1e-12)


def test_the_gaps_reported_at_a_hot_cell_move_as_published():
    # At 338.15 K (40 K above the rating): silicon narrows by Varshni's dEg/dT at 300 K with
    # Thurmond's parameters, 4.73e-4·T(T + 2·636)/(T + 636)² ≈ 0.255 meV/K (recalled), and a
    # lead-halide perovskite widens by +0.2 to +0.3 meV/K (recalled, e.g. Milot et al., Adv.
    # Funct. Mater. 25 (2015) 6218): the reported hot gaps move 40 K times those, each its way.
    from tandem.design.matching import operating_gaps

    design = tandem.match("perovskite-wide", "silicon", sweep=tandem.Sweep(
        front_gaps_eV=[1.70], thickness_points=5)).result.design
    gaps = operating_gaps(design, 1.70, 338.15)
    varshni = 4.73e-4 * 300 * (300 + 2 * 636) / (300 + 636) ** 2
    assert gaps["back"][2] - gaps["back"][1] == pytest.approx(-40 * varshni, rel=0.1)
    assert 40 * 0.2e-3 <= gaps["front"][2] - gaps["front"][1] <= 40 * 0.3e-3


def test_a_tolerance_window_ends_where_the_loss_is_reached():
    # y = y0 − a(x − x0)² falls by `loss` at x0 ± √(loss/a) (closed form); linear interpolation
    # between grid points of step h is within a·h² of it
    from tandem.design.matching import tolerance_window

    x = np.linspace(0.0, 10.0, 2001)
    y = 37.0 - 0.8 * (x - 4.3) ** 2
    lo, hi = tolerance_window(x, y, 1.0)
    half = math.sqrt(1.0 / 0.8)
    assert (lo, hi) == pytest.approx((4.3 - half, 4.3 + half), abs=0.8 * (x[1] - x[0]) ** 2)


# --- fabrication spread ------------------------------------------------------------------------

def test_the_spread_draws_have_the_stated_widths_and_reports_its_own_percentiles():
    # A normal sample's standard deviation scatters by about σ/√(2n) (standard statistics):
    # 1.6 % at 2,000 devices, so ±8 % is five of those; a σ halved, or a percentage read as
    # per mille, lands far outside. The mean scatters by σ/√n.
    s = tandem.fabrication_spread("perovskite-wide", "silicon", front_gap_eV=1.72,
                                  front_thickness_nm=800.0, gap_sigma_eV=0.02,
                                  thickness_sigma_pct=6.0, samples=2000)
    d, n = s.spread, 2000
    assert np.std(d.front_gap_eV, ddof=1) == pytest.approx(0.02, rel=0.08)
    assert abs(np.mean(d.front_gap_eV) - 1.72) < 5 * 0.02 / math.sqrt(n)
    assert np.std(d.front_thickness_nm / 800.0, ddof=1) == pytest.approx(0.06, rel=0.08)
    assert abs(np.mean(d.front_thickness_nm) / 800.0 - 1) < 5 * 0.06 / math.sqrt(n)
    # the p-th percentile is the efficiency p % of the devices fall below (to one device)
    eff, summary = 100 * d.efficiency_2t, s.summary()
    for p, key in ((10, "percentile_10_pct"), (50, "median_pct"), (90, "percentile_90_pct")):
        below = np.mean(eff < summary[key] - 1e-4) * 100
        assert p - 100 / n - 0.1 <= below <= p + 0.1, (key, below)


# --- what --outside-range allows is said, never silent ----------------------------------------

def test_designs_outside_declared_ranges_are_flagged_in_match_spread_and_yield(tmp_path):
    # perovskite-wide declares 1.57–1.923 eV (its composition relation over x = 0–0.6)
    import json

    from typer.testing import CliRunner

    from tandem.cli.app import app

    runner = CliRunner()
    res = runner.invoke(app, ["match", "perovskite-wide", "silicon", "--front-gaps",
                              "1.5:1.6:0.05", "--outside-range", "--points", "20", "--json"])
    assert res.exit_code == 0, res.output
    rows = {round(r["front_gap_eV"], 3): r["outside_range"] for r in json.loads(res.stdout)["configurations"]}
    assert rows[1.6] == [] and rows[1.5] == ["front gap 1.500 eV outside 1.570–1.923 eV"]
    text = runner.invoke(app, ["match", "perovskite-wide", "silicon", "--front-gaps",
                               "1.5:1.6:0.05", "--outside-range", "--points", "20", "-q"]).output
    assert "outside the absorbers' declared ranges" in text and "front gap 1.550 eV outside" in text
    s = tandem.fabrication_spread("perovskite-wide", "silicon",
                                  operating=tandem.OperatingPoint(allow_outside_range=True),
                                  front_gap_eV=1.5, samples=5, gap_sigma_eV=0.0)
    assert s.summary()["outside_range"] == ["front gap 1.500 eV outside 1.570–1.923 eV"]
    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    series = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 60))
    y = tandem.energy_yield("perovskite-wide", "silicon", series,
                            tandem.OperatingPoint(allow_outside_range=True),
                            front_gaps_eV=[1.55], front_thicknesses_nm=[400.0])
    assert y.summary()["energy_optimum"]["outside_range"] == [
        "front gap 1.550 eV outside 1.570–1.923 eV"]
    # a map moves the gaps on purpose; what --outside-range lets it take is the thickness
    m = tandem.gap_map(operating=tandem.OperatingPoint(allow_outside_range=True),
                       front_gaps_eV=[1.7], front_absorber="perovskite-wide",
                       back_absorber="silicon", front_thickness_nm=3000.0)
    assert m.summary()["outside_range"] == ["front thickness 3000 nm outside 100–1500 nm"]
