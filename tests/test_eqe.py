"""Measured EQE: currents and reciprocity voltages against the step absorber's closed forms
and the optics path, units at the door."""

import json

import numpy as np
import pytest
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.design.eqe import MeasuredEQE, photocurrent, read_eqe, subcell_from_eqe
from tandem.core.units import HC_EV_NM, K_B_EV


@pytest.fixture(scope="module")
def am15g():
    return tandem.reference_spectrum("am1.5g").photon_flux()


def step_eqe(flux, gap):
    """EQE = 1 above ``gap`` (a grid point), 0 below: a vertical edge."""
    e = flux.energy
    k = int(np.searchsorted(e, gap))
    energy = np.r_[e[:k], e[k] * (1 - 1e-13), e[k:]]
    return MeasuredEQE.from_arrays("step", energy, np.r_[np.zeros(k + 1), np.ones(e.size - k)]), e[k]


@pytest.mark.parametrize("gap", [1.12, 1.34, 1.73])
def test_a_step_eqe_reproduces_the_step_absorber(am15g, gap):
    """Currents from the exact partial-interval integral, J0 from the closed-form Bose series
    (the step absorber's own formulas), Voc from both: equal to 1e-9."""
    m, eg = step_eqe(am15g, gap)
    s = subcell_from_eqe(m, am15g, 300.0)
    jl = tandem.step_photocurrent(am15g, eg)
    j0 = float(tandem.step_radiative_dark_current(eg, 300.0))
    assert s.j_light == pytest.approx(jl, rel=1e-9)
    assert s.j0_radiative == pytest.approx(j0, rel=1e-9)
    assert s.voc_radiative == pytest.approx(float(tandem.open_circuit_voltage(jl, j0, 300.0)),
                                            abs=1e-9)


def test_a_two_point_eqe_is_integrated_exactly():
    """A flat EQE given by two points (1.12 and 4.0 eV, no edge to fit a tail to) is a step
    absorber between them: J0,rad equals the closed-form Bose series to 1e-12 (a fixed
    8-point quadrature on the one wide interval was 32 % low, Voc,rad 10 mV high)."""
    from tandem.design.eqe import radiative_dark_current

    m = MeasuredEQE.from_arrays("two points", [1.12, 4.0], [1.0, 1.0], 300.0)
    assert m.urbach_eV is None
    closed = float(tandem.step_radiative_dark_current(1.12, 300.0, 4.0))
    assert radiative_dark_current(m, 300.0) == pytest.approx(closed, rel=1e-12)


def test_a_slow_urbach_tail_is_integrated_to_convergence():
    """An edge falling with a slope near kT: its tail below the data converges slowly, so it is
    integrated from 0 eV. Reference: scipy.integrate.quad of the same tail and the linear data
    on their own (E² e^{(E−E0)/E_U}/(e^{E/kT} − 1), q·2π/(h³c²) in front)."""
    from scipy.integrate import quad

    from tandem.core.units import BB_FLUX_PREFACTOR, Q
    from tandem.design.eqe import radiative_dark_current

    t = 300.0
    kt = K_B_EV * t
    eu = 0.9 * kt
    e = np.r_[np.linspace(1.30, 1.40, 6), np.linspace(1.45, 3.0, 20)]
    q = np.where(e <= 1.40, 0.08 * np.exp((e - 1.40) / eu), 0.9)
    m = MeasuredEQE.from_arrays("slow edge", e, q, t)
    assert m.urbach_eV == pytest.approx(eu, rel=1e-9)
    # below the data the EQE is that exponential itself, as the photocurrent and figures use it
    below = np.array([0.9, 1.2, 1.29])
    assert m.at(below) == pytest.approx(q[0] * np.exp((below - e[0]) / eu), rel=1e-9)
    bose = lambda x: x * x / np.expm1(x / kt)
    data = quad(lambda x: np.interp(x, e, q) * bose(x), e[0], e[-1], points=e[1:-1],
                epsrel=1e-13, limit=500)[0]
    tail = quad(lambda x: q[0] * np.exp((x - e[0]) / eu) * bose(x) if x > 0 else 0.0, 0.0, e[0],
                epsrel=1e-13, limit=500)[0]
    reference = Q * BB_FLUX_PREFACTOR * (data + tail)
    assert radiative_dark_current(m, t) == pytest.approx(reference, rel=1e-10)
    # a tail cut 40 slopes deep (as before) misses 2×10⁻⁴ of J0, far above the 10⁻¹⁰ held now
    short = quad(lambda x: q[0] * np.exp((x - e[0]) / eu) * bose(x), e[0] - 40 * eu, e[0])[0]
    assert (tail - short) / (data + tail) > 1e-4


def test_a_tabulated_silicon_eqe_gives_the_optics_path_current(am15g, tmp_path):
    """EQE = the silicon absorber's absorptance (160 µm, Lambertian; Green 2008 data) on the
    ASTM G173-03 wavelengths, written as a file: its current equals the optics path's."""
    si = tandem.load_absorber("silicon")
    e = am15g.energy
    a = si.layer(e, 160e3).absorptance()
    path = tmp_path / "si.csv"
    np.savetxt(path, np.c_[HC_EV_NM / e, a], delimiter=",", header="wavelength_nm,eqe",
               comments="", fmt="%.10g")
    from tandem.physics.spectra import trapezoid_weights
    from tandem.core.units import Q

    optics = Q * np.sum(trapezoid_weights(e) * a * am15g.flux)
    assert photocurrent(am15g, read_eqe(path)) == pytest.approx(optics, rel=1e-4)


def test_a_measured_voc_gives_back_the_ere(am15g):
    """Rau 2007: Voc = Voc,rad + (kT/q)·ln ERE."""
    m, _ = step_eqe(am15g, 1.5)
    s = subcell_from_eqe(m, am15g, 298.15)
    voc = s.voc_radiative + K_B_EV * 298.15 * np.log(3e-3)
    assert subcell_from_eqe(m, am15g, 298.15, voc).ere == pytest.approx(3e-3, rel=1e-9)
    with pytest.raises(tandem.TandemInputError, match="between 0 and its radiative limit"):
        subcell_from_eqe(m, am15g, 298.15, s.voc_radiative + 0.01)


def write(path, rows, header="wavelength_nm,eqe"):
    path.write_text(header + "\n" + "\n".join(f"{a},{b}" for a, b in rows) + "\n")
    return path


def test_percent_fraction_and_ambiguous_columns(tmp_path):
    wl = np.arange(300, 1201, 50)
    frac = read_eqe(write(tmp_path / "f.csv", zip(wl, np.full(wl.size, 0.8))))
    pct = read_eqe(write(tmp_path / "p.csv", zip(wl, np.full(wl.size, 80.0))))
    np.testing.assert_allclose(frac.eqe, pct.eqe)
    with pytest.raises(tandem.TandemInputError, match="give fractions .0–1. or percent"):
        read_eqe(write(tmp_path / "a.csv", zip(wl, np.full(wl.size, 2.5))))
    with pytest.raises(tandem.TandemInputError, match="did you mean 1200 nm"):
        read_eqe(write(tmp_path / "u.csv", zip(wl / 1000, np.full(wl.size, 0.8))))


def demo_files(folder, front_nm=480.0):
    e = HC_EV_NM / np.arange(300, 1201, 5.0)
    f, s = tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon")
    af = f.layer(e, front_nm, position="front").absorptance()
    back = (1 - af) * s.layer(e, 160e3).absorptance()
    return (write(folder / "front.csv", zip(HC_EV_NM / e, 0.95 * af)),
            write(folder / "back.csv", zip(HC_EV_NM / e, 0.95 * back)))


def test_the_thickness_that_would_match(tmp_path, am15g):
    from tandem.design.eqe import scaled_to_thickness, transmitted_to_back

    front, back = demo_files(tmp_path)
    r = tandem.measured_eqe(front, back, front_absorber="perovskite-wide", front_thickness_nm=480.0)
    m = r.summary()["matching"]
    assert r.summary()["limiting_subcell"] == "front" and m["matched_thickness_nm"] > 480
    a = tandem.load_absorber("perovskite-wide")
    d = m["matched_thickness_nm"]
    f = scaled_to_thickness(read_eqe(front), a, 480.0, d, "front")
    b = transmitted_to_back(read_eqe(back), a, 480.0, d)
    assert photocurrent(am15g, f) == pytest.approx(photocurrent(am15g, b), rel=1e-4)


def test_an_absorber_given_for_the_subcell_that_does_not_limit_is_checked_and_said(tmp_path):
    # the front limits here: a back absorber given beside it was once ignored in silence (even
    # with a thickness outside its range); now it is read, checked and named in a note
    front, back = demo_files(tmp_path)
    r = tandem.measured_eqe(front, back, front_absorber="perovskite-wide", front_thickness_nm=480.0,
                            back_absorber="silicon", back_thickness_nm=160e3)
    assert r.summary()["matching"]["subcell"] == "front"
    assert any("back absorber not used: the front subcell limits" in n for n in r.summary()["notes"])
    with pytest.raises(tandem.TandemInputError, match="back thickness"):
        tandem.measured_eqe(front, back, back_absorber="silicon", back_thickness_nm=160.0)
    with pytest.raises(tandem.TandemInputError, match="back absorber's description and its"):
        tandem.measured_eqe(front, back, back_thickness_nm=160e3)


def test_a_thicker_front_dims_the_back_by_beer_lambert():
    # The back's EQE behind a front of 480 nm, moved to 600 nm, is the back made behind 600 nm
    # directly: the front's single pass e^{−αd} (Beer–Lambert, α in cm⁻¹ from the absorber file,
    # 1 nm = 10⁻⁷ cm) with nothing else changed
    from tandem.design.eqe import transmitted_to_back

    e = HC_EV_NM / np.arange(300, 1201, 5.0)
    f, s = tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon")
    silicon = s.layer(e, 160e3).absorptance()

    def back(d):
        return 0.95 * np.exp(-f.alpha(e, None) * d * 1e-7) * silicon

    moved = transmitted_to_back(MeasuredEQE("back", e[::-1], back(480.0)[::-1], None), f, 480.0, 600.0)
    lit = back(600.0)[::-1] > 1e-3
    assert moved.eqe[lit] == pytest.approx(back(600.0)[::-1][lit], rel=1e-12)


def test_eqe_command_with_a_site_year(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    demo_files(tmp_path)
    res = CliRunner().invoke(app, ["eqe", "front.csv", "back.csv", "--voc", "1.2,0.7",
                                   "--scenario", "perovskite-silicon-rooftop", "--json"])
    assert res.exit_code == 0, res.output
    s = json.loads(res.stdout)
    assert [c["position"] for c in s["subcells"]] == ["front", "back"]
    assert 0 < s["subcells"][0]["ere"] < 1 and s["year"]["steps"] > 4000
    assert 0 <= s["year"]["share_of_light_with_front_limiting_pct"] <= 100
    bad = CliRunner().invoke(app, ["eqe", "front.csv", "back.csv", "--voc", "1.2"])
    assert bad.exit_code == 2 and "give FRONT,BACK in V" in bad.stderr


def test_an_eqe_header_states_its_units(tmp_path):
    # the same EQE in nm and fraction, in µm (headed wavelength_um) and in percent (headed
    # 'EQE (%)') gives the same photocurrent; a weak cell's percent column (max 3) is read as
    # percent when the header says so, and refused when it does not (the unit is never guessed)
    import tandem.design.eqe as eqe_mod

    wl = np.array([300.0, 500.0, 700.0, 800.0, 900.0])
    q = np.array([0.5, 0.9, 0.85, 0.4, 0.01])

    def write(name, header, x, y):
        path = tmp_path / name
        path.write_text(header + "\n".join(f"{a:g},{b:g}" for a, b in zip(x, y)) + "\n")
        return eqe_mod.read_eqe(path)

    base = write("nm.csv", "wavelength_nm,eqe\n", wl, q)
    for header, x, y in (("wavelength_um,eqe\n", wl / 1e3, q), ("wavelength_nm,EQE (%)\n", wl, 100 * q)):
        other = write("other.csv", header, x, y)
        np.testing.assert_allclose(other.energy_eV, base.energy_eV, rtol=1e-12)
        np.testing.assert_allclose(other.eqe, base.eqe, rtol=1e-12)
    weak = write("weak.csv", "wavelength_nm,EQE (%)\n", wl, 3 * q)
    assert float(weak.eqe.max()) == pytest.approx(0.027)
    with pytest.raises(tandem.TandemInputError, match="head the column 'EQE \\(%\\)'"):
        write("weak2.csv", "wavelength_nm,eqe\n", wl, 3 * q)
