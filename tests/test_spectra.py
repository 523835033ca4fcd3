"""Spectra against ASTM G173-03 and Stefan–Boltzmann; CSV validation."""

import numpy as np
import pytest
from scipy import constants

import tandem
from tandem.core.units import HC_EV_NM, Q, SUN_DILUTION
from references import g173_from_pvlib, wavelength_side_photons_above


# ASTM G173-03: the standard's own totals on its grid (trapezoid), as stated in the standard.
@pytest.mark.parametrize("name, total, tol", [
    ("am1.5g", 1000.37, 0.01),
    ("am1.5d", 900.14, 0.01),
    ("am0", 1347.9, 0.05),
])
def test_astm_g173_integrals(name, total, tol):
    assert tandem.reference_spectrum(name).integrated_irradiance == pytest.approx(total, abs=tol)


@pytest.mark.parametrize("name", ["am1.5g", "am1.5d", "am0"])
def test_photons_above_any_gap_match_the_wavelength_side_integral(name):
    # ASTM G173-03 from pvlib's own reader (pvlib.spectrum.get_reference_spectra), integrated
    # in wavelength by a closed form; the tool counts on its energy grid. Every gap of a fine
    # sweep (on, between and off the table's rows) agrees to 10⁻¹⁰ relative (measured
    # 3×10⁻¹², rounding), where the energy-side trapezoid rule alone is off by up to 1.6×10⁻⁴.
    wl, irr = g173_from_pvlib(name)
    flux = tandem.reference_spectrum(name).photon_flux()
    gaps = np.r_[np.linspace(0.32, 4.4, 4001), HC_EV_NM / wl[(wl > 282) & (wl < 3870)][::7]]
    exact = wavelength_side_photons_above(wl, irr, gaps)
    counted = flux.count_above(gaps)
    lit = exact > 1e-4 * exact.max()  # above 4.3 eV the table holds almost no photons
    assert np.all(np.abs(counted[lit] / exact[lit] - 1) < 1e-10)
    assert np.all(np.abs(counted - exact) < 1e-12 * exact.max())  # the antiderivative rounds
    # and the photocurrent every job uses is this count
    assert tandem.step_photocurrent(flux, gaps) / Q == pytest.approx(counted, rel=1e-15)


def test_photons_above_a_gap_exact_on_a_coarse_spectrum():
    # Two rows, 1 W m⁻² nm⁻¹ at 300 and 1000 nm: the photons below λg are
    # (λg² − 300²)/2/(hc) per nm-W, whatever the energy grid the tool builds.
    flux = tandem.Spectrum("flat", np.array([300.0, 1000.0]), np.ones(2)).photon_flux()
    for gap in (1.3, 2.0, 3.9):
        lam = HC_EV_NM / gap
        assert float(flux.count_above(gap)) == pytest.approx(
            (lam**2 - 300.0**2) / 2 / (HC_EV_NM * Q), rel=1e-12)


def test_power_same_on_energy_grid(am15g):
    power = np.trapezoid(am15g.flux * am15g.energy * Q, am15g.energy)
    assert power == pytest.approx(1000.37, abs=0.01)


def test_blackbody_sun_obeys_stefan_boltzmann():
    # Stefan–Boltzmann law with scipy.constants.sigma (CODATA 2018): P = f σ T⁴.
    sun = tandem.blackbody_sun(6000.0)
    assert sun.integrated_irradiance == pytest.approx(
        SUN_DILUTION * constants.sigma * 6000.0**4, rel=2e-4)
    # dilution (R_sun/d)² ≈ 2.16e-5 (De Vos 1980 uses 2.16e-5; IAU nominal radius, 1 au)
    assert SUN_DILUTION == pytest.approx(2.16e-5, rel=2e-3)


def test_blackbody_concentration_capped():
    with pytest.raises(tandem.TandemInputError, match="concentration .* maximum"):
        tandem.blackbody_sun(6000.0, concentration=1e6)


def test_scaling_is_reported_not_silent():
    spec = tandem.load_spectrum("am1.5g", target_irradiance_W_m2=1000.0)
    assert spec.integrated_irradiance == pytest.approx(1000.0)
    assert any("scaled from 1000.37 to 1000.00" in note for note in spec.notes)
    assert tandem.reference_spectrum("am1.5g").notes == ()


def write(tmp_path, text, name="sky.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_csv_round_trip(tmp_path):
    spec = tandem.reference_spectrum("am1.5g")
    rows = "\n".join(f"{w},{i}" for w, i in zip(spec.wavelength_nm, spec.irradiance))
    mine = tandem.read_spectrum_csv(write(tmp_path, "wavelength_nm,irradiance\n" + rows))
    assert mine.integrated_irradiance == pytest.approx(spec.integrated_irradiance, rel=1e-12)


@pytest.mark.parametrize("text, match", [
    ("400,1\n500,2\n450,1\n", "row 3: wavelength 450 nm does not rise"),
    ("400,1\n500,-2\n", "row 2: irradiance -2 is negative"),
    ("400,1\n500,nan\n", "row 2: value is not finite"),
    ("400,1\n500\n", "row 2: has 1 columns"),
    ("wl,irr\n400,1\n500,abc\n", "row 3: '500,abc' is not two numbers"),
    ("400,1\n", "at least two data rows"),
    ("-5,1\n500,1\n", "row 1: wavelength -5 nm must be positive"),
])
def test_csv_errors_name_the_row(tmp_path, text, match):
    with pytest.raises(tandem.TandemInputError, match=match):
        tandem.read_spectrum_csv(write(tmp_path, text))


def test_missing_csv(tmp_path):
    with pytest.raises(tandem.TandemInputError, match="not found"):
        tandem.load_spectrum(str(tmp_path / "nowhere.csv"))


def test_unknown_spectrum_lists_choices():
    with pytest.raises(tandem.TandemInputError, match="am1.5g, am1.5d, am0"):
        tandem.load_spectrum("am2")


def test_a_spectrum_that_stops_short_is_dark_below_and_keeps_the_full_emission():
    """A spectrometer file ending at 1,050 nm used with a 1.12 eV step absorber: the absorber
    takes every photon of the file (∫ I·λ/(hc) dλ of the piecewise-linear data, by
    scipy's trapezoid-exact quadrature), and its radiative J0 is the closed-form Bose series
    of its gap, not the part of the emission above 1.181 eV."""
    from scipy.integrate import quad

    wl = np.arange(300.0, 1051.0, 5.0)
    g173 = tandem.reference_spectrum("am1.5g")
    light = tandem.Light.from_arrays(wl, np.interp(wl, g173.wavelength_nm, g173.irradiance))
    r = tandem.limit([1.12], light, tandem.OperatingPoint(temperature_K=300.0))
    p = r.design.performance
    irr = np.interp(wl, g173.wavelength_nm, g173.irradiance)
    photons = quad(lambda x: np.interp(x, wl, irr) * x * 1e-9 / (6.62607015e-34 * 299792458.0),
                   wl[0], wl[-1], points=wl[1:-1], limit=400, epsrel=1e-12)[0]
    assert float(p.j_light[0]) == pytest.approx(1.602176634e-19 * photons, rel=1e-6)
    assert float(p.j0_radiative[0]) == pytest.approx(
        float(tandem.step_radiative_dark_current(1.12, 300.0)), rel=1e-6)
    assert any("ends at 1050 nm" in n for n in light.photon_flux().notes)


def test_reciprocity_dark_current_does_not_depend_on_where_the_spectrum_stops():
    """J0,rad = q∫a·Φ_bb dE depends on the absorber and temperature only (Rau 2007): silicon
    behind a perovskite gives the same J0 under AM1.5G and under the same data cut at 1,050 nm
    (their grids differ below 1.18 eV: G173's 1–5 nm steps against the 0.5 meV dark grid)."""
    from tandem.design.matching import Conditions, StackDesign, subcell_currents

    wl = np.arange(300.0, 1051.0, 5.0)
    g173 = tandem.reference_spectrum("am1.5g")
    short = tandem.Light.from_arrays(wl, np.interp(wl, g173.wavelength_nm, g173.irradiance))
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"))
    j0 = []
    for flux in (g173.photon_flux(), short.photon_flux()):
        _, j0_rad = subcell_currents(design, Conditions(flux, 298.15), 1.70, np.array([500.0]),
                                     160e3)
        j0.append(j0_rad[0])
    assert j0[1][1] == pytest.approx(j0[0][1], rel=2e-3)  # back (silicon)
    assert j0[1][0] == pytest.approx(j0[0][0], rel=2e-3)  # front


def test_a_spectrum_header_states_its_units(tmp_path):
    # The same G173 light written in nm and W m⁻² nm⁻¹, in µm and W m⁻² µm⁻¹ (headed so), gives
    # the same 1000.37 W/m² (ASTM G173-03); µm values without a header are refused, not read as nm
    g173 = tandem.reference_spectrum("am1.5g")
    wl, irr = g173.wavelength_nm, g173.irradiance

    def write(name, header, x, y):
        path = tmp_path / name
        path.write_text(header + "\n".join(f"{a:.6g},{b:.8g}" for a, b in zip(x, y)) + "\n")
        return tandem.read_spectrum_csv(path)

    nm = write("nm.csv", "wavelength_nm,irradiance_W_m2_nm\n", wl, irr)
    for header in ("wavelength_um,irradiance_W_m2_um\n", "wavelength [um],irradiance [W/m2/um]\n",
                   "wavelength (µm);E (W m-2 µm-1)\n".replace(";", ",")):
        um = write("um.csv", header, wl / 1e3, irr * 1e3)
        assert um.integrated_irradiance == pytest.approx(nm.integrated_irradiance, rel=1e-6)
        assert um.integrated_irradiance == pytest.approx(1000.37, abs=0.05)
    with pytest.raises(tandem.TandemInputError, match="looks like µm; head the first column wavelength_um"):
        write("bare.csv", "", wl / 1e3, irr * 1e3)
    with pytest.raises(tandem.TandemInputError, match="the header says µm but the wavelengths run to"):
        write("liar.csv", "wavelength_um,irradiance\n", wl, irr)
