"""Where in each absorber the light is absorbed: depth profiles of coherent films against the
``tmm`` package, of a traced wafer against closed forms, the generation rate against the
photocurrent, and the NetCDF photon budget read back without xarray."""

import json

import numpy as np
import pytest
from scipy.integrate import simpson
from scipy.special import expn

import tandem
from tandem.design.layerstack import generation_profiles, photon_budget, profile_figures
from tandem.optics.thinfilm import Layer, stack_optics
from tandem.optics.wafer import trace_wafer
from tandem.physics.spectra import trapezoid_weights

tmm = pytest.importorskip("tmm")


@pytest.mark.parametrize("pol", ["s", "p"])
@pytest.mark.parametrize("angle", [0.0, 0.5, 1.2])
def test_a_coherent_films_depth_profile_equals_tmm(pol, angle):
    # tmm.position_resolved (S. J. Byrnes, arXiv:1603.02720): absorbed power per nm at a depth
    rng = np.random.default_rng(7)
    wavelength = np.array([420.0, 610.0, 890.0])
    for _ in range(6):
        count = int(rng.integers(1, 5))
        n = [1.0] + [rng.uniform(1.3, 4) + 1j * rng.uniform(0, 0.6) for _ in range(count)] + [
            rng.uniform(1.3, 3.6) + 0.01j]
        d = list(rng.uniform(10, 400, count))
        layer = int(rng.integers(0, count))
        z = np.linspace(0.0, d[layer], 9)
        ours = stack_optics([Layer(np.full(3, x), t) for x, t in zip(n[1:-1], d)], 1.0, n[-1],
                            wavelength, np.sin(angle), pol, depths={layer: z})
        for k, lam in enumerate(wavelength):
            ref = tmm.coh_tmm(pol, n, [np.inf, *d, np.inf], angle, lam)
            expected = [tmm.position_resolved(layer + 1, x, ref)["absor"] for x in z]
            np.testing.assert_allclose(ours.profiles[layer][:, k], expected, rtol=1e-9, atol=1e-15)


def test_a_film_behind_thick_glass_equals_tmm_in_an_incoherent_stack():
    # tmm.inc_find_absorp_analytic_fn: the coherent layer's absorption inside a partly
    # incoherent stack (glass 1 mm in front, light arriving from both sides of the film group)
    n = [1.0, 1.52 + 1e-7j, 2.0 + 0.02j, 2.6 + 0.4j, 1.8 + 0.001j, 3.6 + 0.005j]
    d = [np.inf, 1e6, 80.0, 300.0, 40.0, np.inf]
    flags = ["i", "i", "c", "c", "c", "i"]
    z = np.linspace(0.0, 300.0, 13)
    wavelength = np.array([500.0, 700.0])
    ours = stack_optics([Layer(np.full(2, x), t, f == "c") for x, t, f in zip(n[1:-1], d[1:-1],
                                                                             flags[1:-1])],
                        1.0, n[-1], wavelength, depths={2: z})
    for k, lam in enumerate(wavelength):
        ref = tmm.inc_tmm("s", n, d, flags, 0, lam)
        fn = tmm.inc_find_absorp_analytic_fn(3, ref)
        np.testing.assert_allclose(ours.profiles[2][:, k], fn.run(z), rtol=1e-8, atol=1e-15)


def test_a_lambertian_wafers_profile_is_the_closed_form_of_lamberts_law():
    # index-matched front (nothing reflected back down): the first pass α·e^{−αz} plus the light
    # the rear sends up isotropically, ∫ 2μ dμ (α/μ) e^{−α(d−z)/μ} = 2α·E₂(α(d − z)) per unit
    # reaching the rear (Lambert's cosine law; E₂ the exponential integral, scipy.special.expn)
    n_w = 3.6 + 1j * np.array([2e-4, 2e-5])
    wavelength = np.array([950.0, 1050.0])
    d = 150e3
    z = np.linspace(0.0, d, 7)
    traced = trace_wafer([], 3.6, n_w, d, "lambertian", np.ones(2), wavelength, depths_nm=z)
    alpha = 4 * np.pi * n_w.imag / wavelength
    expected = (alpha * np.exp(-alpha * z[:, None])
                + np.exp(-alpha * d) * 2 * alpha * expn(2, alpha * (d - z[:, None])))
    np.testing.assert_allclose(traced.profile, expected, rtol=2e-5)


@pytest.mark.parametrize("rear", ["single-pass", "double-pass", "lambertian"])
def test_a_wafers_profile_adds_up_to_its_absorptance(rear):
    n_w = 3.6 + 1j * np.array([5e-3, 2e-4, 2e-5, 1e-6])
    wavelength = np.array([700.0, 950.0, 1050.0, 1150.0])
    films = [Layer(np.full(4, 2.0 + 0.01j), 70.0)]
    z = np.linspace(0.0, 150e3, 20001)
    traced = trace_wafer(films, 1.0, n_w, 150e3, rear, np.full(4, 0.9), wavelength, depths_nm=z)
    np.testing.assert_allclose(simpson(traced.profile, x=z, axis=0), traced.wafer, rtol=1e-9)


def test_a_profiles_figures_are_those_of_beer_lambert():
    # G = G0·e^{−αz} on [0, d]: carriers G0(1 − e^{−αd})/α, peak G0 at z = 0, and half of them
    # within h = −ln(1 − (1 − e^{−αd})/2)/α (closed form of the integral)
    alpha, d, g0 = 1 / 150.0, 600.0, 3e21  # [1/nm], [nm], [cm⁻³ s⁻¹]
    z = np.linspace(0.0, d, 2001)
    got = profile_figures(z, g0 * np.exp(-alpha * z))
    assert got["carriers_per_cm2_s"] == pytest.approx(g0 * -np.expm1(-alpha * d) / alpha * 1e-7,
                                                      rel=1e-9)
    assert got["peak_per_cm3_s"] == g0 and got["peak_depth_nm"] == 0.0
    assert got["half_depth_nm"] == pytest.approx(-np.log1p(-(-np.expm1(-alpha * d)) / 2) / alpha,
                                                 rel=1e-6)


@pytest.mark.parametrize("key, tolerance", [("wide-gap-on-silicon-wafer", 1e-4),
                                            ("all-thin-film-pair", 1e-6), ("organic-pair", 1e-6)])
def test_every_absorbed_photon_makes_one_pair_at_some_depth(key, tolerance):
    # ∫G dz = J_L/q for each absorber: the films' profiles include the light a wafer sends
    # back up through them (dropping it left the perovskite's sum 2.5× too high, then short)
    stack = tandem.load_stack(key)
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    thickness = stack.front.thickness_nm
    budget = photon_budget(stack, flux.energy, [thickness], None, 298.15, depth_points=201)
    photons = flux.flux * trapezoid_weights(flux.energy)  # per m² s
    for name, (z, g) in generation_profiles(budget, flux).items():
        absorbed = budget.front[0] if name == stack.front.name else budget.back[0]
        made = profile_figures(z, g)["carriers_per_cm2_s"]
        assert made == pytest.approx(absorbed @ photons * 1e-4, rel=tolerance)
        assert np.all(g >= 0)


def test_the_netcdf_budget_is_cf_and_counts_every_photon_once(tmp_path, monkeypatch):
    from scipy.io import netcdf_file

    from tandem.cli.app import app
    from typer.testing import CliRunner

    monkeypatch.chdir(tmp_path)
    run = CliRunner().invoke(app, ["match", "--stack", "organic-pair", "--points", "30",
                                   "--budget", "b.nc", "--plot", "p.png", "--json"])
    assert run.exit_code == 0, run.output
    summary = json.loads(run.stdout)
    with netcdf_file(tmp_path / "b.nc", "r", mmap=False) as f:  # scipy's reader, not xarray
        assert f.Conventions == b"CF-1.8" and f.written_by == b"tandem"
        total = (f.variables["absorptance"][:].sum(axis=0) + f.variables["reflected_or_escaped"][:]
                 + f.variables["transmitted"][:])
        np.testing.assert_allclose(total, 1.0, atol=1e-12)
        assert f.variables["generation_front"].units == b"cm-3 s-1"
        assert f.variables["depth_front"].units == b"nm"
        z, g = f.variables["depth_front"][:].copy(), f.variables["generation_front"][:].copy()
    front = next(x for x in summary["generation"] if x["role"] == "front")
    assert profile_figures(z, g)["carriers_per_cm2_s"] == pytest.approx(
        front["carriers_per_cm2_s"], rel=1e-4)
    # the photocurrent the same carriers make: J = q·∫G dz
    assert front["carriers_per_cm2_s"] * 1.602176634e-19 * 1e3 == pytest.approx(
        summary["best"]["jsc_front_mA_cm2"], rel=1e-3)
    refused = CliRunner().invoke(app, ["match", "--stack", "organic-pair", "--budget", "b.txt"])
    assert refused.exit_code == 2 and ".nc" in refused.output


def test_a_budget_in_a_missing_folder_names_the_folder_and_the_file(tmp_path, monkeypatch):
    from tandem.cli.app import app
    from typer.testing import CliRunner

    monkeypatch.chdir(tmp_path)
    run = CliRunner().invoke(app, ["match", "--stack", "organic-pair", "--budget", "nodir/b.nc"])
    assert run.exit_code == 2 and "nodir' does not exist" in run.output and "'b.nc'" in run.output
    assert "--out" not in run.output  # match has no --out
