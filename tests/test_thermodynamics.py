"""Thermodynamic consistency: ideality, rear emission, temperature, anchored skies, coarse spectra.

Validation checks name their outside source beside them; the rest are consistency checks.
"""

import json
import math

import numpy as np
import pytest
from typer.testing import CliRunner

import tandem
import tandem.core.units
import tandem.design.maps
from tandem.cli.app import app
from tandem.physics import detailed_balance as db
from tandem.design.matching import Conditions, StackDesign, operating_gaps, stack_performance
from tandem.design.sky import STANDARD_SITE, _g173_global, _mean_distance_factor, anchored_poa, standard_zenith_deg
from tandem.core.units import HC_EV_NM, K_B_EV, Q

runner = CliRunner()


# --- ideality: a second, non-radiative diode ------------------------------------------

def test_ideality_one_is_exactly_the_ere_model(am15g):
    # the one-diode ERE model (Rau 2007): J0 = J0,rad/ERE, solved in closed form
    for ere in (1.0, 0.01, 1e-6):
        r = tandem.detailed_balance_limit([1.34], am15g, temperature_K=300.0, ere=[ere])
        jl = tandem.step_photocurrent(am15g, 1.34)
        j0 = db.step_radiative_dark_current(1.34, 300.0) / ere
        assert float(r.performance.p_2t) == float(db.single_junction_mpp(jl, j0, 300.0)[2])


def test_non_radiative_diode_keeps_the_ere_at_open_circuit(am15g):
    # definition (Rau 2007): at open circuit the front-face emission is ERE × J_L
    jl = tandem.step_photocurrent(am15g, 1.34)
    j0_rad = db.step_radiative_dark_current(1.34, 300.0)
    for n in (0.67, 1.0, 1.5, 2.0, 4.0):
        for ere in (0.3, 1e-2, 1e-5):
            j0_nr = db.nonradiative_saturation_current(jl, j0_rad, ere, n)
            voc = db.two_diode_voltage(0.0, jl, j0_rad, j0_nr, n, 300.0)
            emitted = j0_rad * math.expm1(voc / (K_B_EV * 300.0))
            assert emitted / jl == pytest.approx(ere, rel=1e-9)


def test_ideality_two_stays_below_the_gap_and_the_limit(am15g):
    # Shockley–Queisser single-junction limit at 1.34 eV: 33.7 % (Rühle, Solar Energy 130
    # (2016) 139); a non-ideal cell with the same gap must stay below it and below its gap
    radiative = tandem.detailed_balance_limit([1.34], am15g, temperature_K=300.0)
    assert 100 * radiative.efficiency == pytest.approx(33.7, abs=0.05)
    for ere in (1.0, 0.1, 1e-3):
        r = tandem.detailed_balance_limit([1.34], am15g, temperature_K=300.0, ere=[ere], ideality=2.0)
        assert float(r.performance.voc[0]) < 1.34
        assert r.efficiency <= radiative.efficiency
    # with ERE 1 there is no non-radiative diode: the ideality cannot change anything
    r = tandem.detailed_balance_limit([1.34], am15g, temperature_K=300.0, ideality=2.0)
    assert r.efficiency == radiative.efficiency
    stack = tandem.detailed_balance_limit([1.73, 1.12], am15g, 2, 300.0, [0.01], ideality=2.0)
    assert stack.efficiency < tandem.detailed_balance_limit([1.73, 1.12], am15g, 4, 300.0).efficiency
    assert np.all(stack.performance.voc < np.array([1.73, 1.12]))


def test_cli_ideality_findings_no_longer_reproduce():
    # finding: `limit 1.34 --ideality 2` printed Voc 2.163 V and 67.4 %
    res = runner.invoke(app, ["limit", "1.34", "--ideality", "2", "--temperature", "300", "--json"])
    s = json.loads(res.stdout)
    assert s["subcells"][0]["voc_V"] < 1.34 and s["efficiency_pct"] == pytest.approx(33.68, abs=0.01)
    assert any("changes nothing" in note for note in s["model_notes"])
    res = runner.invoke(app, ["limit", "1.73", "1.12", "--ideality", "2", "--json"])
    assert json.loads(res.stdout)["efficiency_pct"] < 46.0
    res = runner.invoke(app, ["limit", "1.34", "--ideality", "0.5", "--ere", "0.01", "--json"])
    assert json.loads(res.stdout)["efficiency_pct"] < 33.8


# --- temperature everywhere ------------------------------------------------------------

def test_silicon_gap_at_338_k():
    # dEg/dT ≈ −0.25 meV/K near 300 K (Varshni fit of Thurmond, J. Electrochem. Soc. 122
    # (1975) 1133; recalled from memory): 1.12 − 0.25 meV/K × 40 K = 1.110 eV
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"))
    gaps = operating_gaps(design, 1.70, 338.15)
    assert gaps["back"][2] == pytest.approx(1.12 - 0.25e-3 * 40, abs=1e-9)
    assert gaps["front"][2] > 1.70  # lead-halide perovskite gaps widen on warming


def test_match_reports_the_shifted_currents_at_338_k():
    res = {t: json.loads(runner.invoke(app, ["match", "perovskite-wide", "silicon", "--front-gaps",
                                             "1.70:1.70:0.01", "--temperature", t, "--json"]).stdout)
           for t in ("298.15", "338.15")}
    cold, hot = res["298.15"]["configurations"][0], res["338.15"]["configurations"][0]
    # silicon's narrower gap at 338 K takes more of the red: more back current
    assert hot["jsc_back_mA_cm2"] > cold["jsc_back_mA_cm2"] + 0.05
    assert "silicon 1.110 eV" in res["338.15"]["temperature_note"]


def test_every_command_shifts_gaps_the_same_way(am15g):
    # the optics-lite path (match, map, study, spread) and the yield path share one shift
    from tandem.design.matching import subcell_currents
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"))
    hot = Conditions(am15g, 338.15)
    j_hot = subcell_currents(design, hot, 1.70, 600.0, 160e3)[0]
    j_cold = subcell_currents(design, Conditions(am15g, 298.15), 1.70, 600.0, 160e3)[0]
    assert not np.allclose(j_hot, j_cold)


# --- real skies anchored to the standard ----------------------------------------------

def test_anchored_sky_equals_g173_at_the_standards_conditions():
    # ASTM G173-03 conditions (AM1.5, 37° tilt towards the sun, its atmosphere); at the mean
    # Earth–Sun distance the anchored spectrum is the standard's table within 0.1 %
    days = np.arange(1, 366)
    day = int(days[np.argmin(np.abs(_mean_distance_factor(days) - 1))])
    z = standard_zenith_deg()
    grid, irr = anchored_poa(STANDARD_SITE, z, z - 37.0, day)
    g173 = np.interp(grid, *_g173_global())
    np.testing.assert_allclose(irr[0], g173, rtol=1e-3)


def test_anchored_sky_blue_fraction_falls_at_air_mass_3():
    # SPECTRL2 (Bird & Riordan 1986, through pvlib): a longer path scatters the blue away
    z15 = standard_zenith_deg()
    z3 = math.degrees(math.acos(1 / 3.0))
    grid, irr = anchored_poa(STANDARD_SITE, np.array([z15, z3]), np.array([z15 - 37, z3 - 37]),
                             np.array([278, 278]))
    blue = (grid >= 350) & (grid <= 500)
    share = np.trapezoid(irr[:, blue], grid[blue], axis=1) / np.trapezoid(irr, grid, axis=1)
    assert share[1] < share[0] * 0.9


def test_limiting_subcell_under_anchored_standard_sky_equals_am15g(am15g):
    # finding: a design front-limited under G173 was back-limited under SPECTRL2
    z = standard_zenith_deg()
    grid, irr = anchored_poa(STANDARD_SITE, z, z - 37.0, 278)
    sky = tandem.Spectrum("anchored", grid, irr[0]).photon_flux()
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"),
                         0.02, 0.02, 0.01)
    ref = stack_performance(design, Conditions(am15g), 1.72, 700.0, 160e3)
    under_sky = stack_performance(design, Conditions(sky), 1.72, 700.0, 160e3)
    assert int(ref.limiting_index) == int(under_sky.limiting_index)
    np.testing.assert_allclose(under_sky.j_light, ref.j_light, rtol=2e-3)


# --- spectra conserve power and photons; degenerate inputs -----------------------------

def test_two_row_spectrum_conserves_power_and_photons(tmp_path):
    # finding: 300 and 1000 nm at 1 W m⁻² nm⁻¹ (700 W/m²) gave 130.5 % and 80 mA/cm².
    # Exact photon current between 300 nm and the gap wavelength λg for a flat spectrum:
    # q·∫ λ/(hc) dλ = (λg² − 300²)/(2·hc) with hc in eV·nm (elementary calculus).
    path = tmp_path / "flat.csv"
    path.write_text("300,1\n1000,1\n")
    flux = tandem.load_spectrum(str(path)).photon_flux()
    lam_g = HC_EV_NM / 1.5
    exact = (lam_g**2 - 300.0**2) / (2 * HC_EV_NM)  # A/m² (W/m² per eV of photon energy)
    assert tandem.step_photocurrent(flux, 1.5) == pytest.approx(exact, rel=1e-6)
    r = tandem.detailed_balance_limit([1.5], flux)
    assert r.performance.irradiance == pytest.approx(700.0, rel=1e-12)
    assert 0 < r.efficiency < 0.5
    assert np.trapezoid(Q * flux.energy * flux.flux, flux.energy) == pytest.approx(700.0, rel=1e-6)


def test_a_subcell_without_light_is_refused(tmp_path, am15g):
    with pytest.raises(tandem.TandemInputError, match="the cell .4.42 eV. receives almost no light"):
        tandem.detailed_balance_limit([4.42], am15g)
    text = (tandem.load_absorber("gainp").path.read_text()
            .replace("value_eV = 1.88", "value_eV = 4.3"))
    path = tmp_path / "uv.toml"
    path.write_text(text)
    res = runner.invoke(app, ["match", str(path), "silicon", "--json", "-q"])
    assert res.exit_code == 2 and res.stdout == ""
    assert "front subcell uv at 4.300 eV" in res.stderr and "Traceback" not in res.stderr


def test_a_back_cell_pumped_towards_its_gap_stays_below_it():
    # a 0.5 eV back under a fully coupled 3 eV front at 1000 blackbody suns is driven towards
    # degeneracy; the Boltzmann diode would put it past its gap, the exact emission cannot
    flux = tandem.blackbody_sun(6000.0, 1000.0).photon_flux()
    from tandem.physics.stack import Electrical
    result = tandem.detailed_balance_limit([3.0, 0.5], flux, 2, 250.0,
                                           electrical=Electrical(1.0, 1.0), front_index=2.0)
    assert np.all(result.performance.v_2t_sub < np.array([3.0, 0.5]))
    assert np.all(result.performance.voc < np.array([3.0, 0.5]))
    # at full concentration a single junction's Boltzmann Voc would pass its gap (1.145 V at
    # 1.1 eV); the exact law leaves it just below
    full = tandem.blackbody_sun(6000.0, 1 / tandem.core.units.SUN_DILUTION).photon_flux()
    single = tandem.detailed_balance_limit([1.1], full, temperature_K=300.0)
    assert 1.1 - 1e-3 < float(single.performance.voc[0]) < 1.1
    gap_map = tandem.design.maps.step_gap_map(full, np.array([1.8, 2.0]), np.array([1.0, 1.1]), 300.0)
    assert np.all(gap_map.voc_2t < np.array([[2.8, 2.9], [3.0, 3.1]]))


def test_a_map_near_full_concentration_keeps_its_optimum():
    # At 5,000 blackbody suns the two-terminal optimum lies at about 1.573/0.802 eV, 52.68 %
    # (an independent quadrature with exact Bose–Einstein emission, recorded with issue 21).
    # The map used to blank every point whose open-circuit voltage came within kT of a gap, the
    # optimum among them, and reported a lower maximum elsewhere; an efficiency needs only its
    # operating point to be clear of the gap.
    flux = tandem.blackbody_sun(6000.0, 5000.0).photon_flux()
    gap_map = tandem.design.maps.step_gap_map(flux, np.arange(1.50, 1.65, 0.01),
                                              np.arange(0.75, 0.86, 0.01), 298.15)
    e2 = gap_map.efficiency_2t
    i, j = np.unravel_index(np.nanargmax(e2), e2.shape)
    assert abs(gap_map.front_gaps[i] - 1.573) < 0.015 and abs(gap_map.back_gaps[j] - 0.802) < 0.015
    assert 100 * e2[i, j] == pytest.approx(52.68, abs=0.1)
