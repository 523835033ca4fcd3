"""A layer stack under a real sky: each step's direct beam at its angle of incidence and the
diffuse light over the hemisphere, through the stack's own layers (tandem.design.stack_angles)."""

import dataclasses

import numpy as np
import pandas as pd
import pytest

import tandem
from tandem.design.layerstack import photon_budget
from tandem.design.series import SpectralSeries
from tandem.design.stack_angles import (ANGLE_NODES_DEG, angle_table, direct_weights,
                                        hemisphere_weights)
from tandem.design.yields import StackYield, hourly
from tandem.optics.wafer import trace_wafer

tmm = pytest.importorskip("tmm")


def test_the_angle_weights_integrate_closed_forms():
    # ∫₀¹ du = 1 and, for a ΔA linear in θ, ∫ θ sin 2θ dθ = π/4 (45° in degrees), exactly
    # representable by the piecewise-linear interpolant
    w = hemisphere_weights()
    assert w.sum() == pytest.approx(1.0, abs=1e-6)
    assert w @ ANGLE_NODES_DEG == pytest.approx(45.0, abs=1e-5)
    theta = np.array([0.0, 7.3, 50.0, 89.0, 95.0])
    interpolated = direct_weights(theta) @ ANGLE_NODES_DEG
    np.testing.assert_allclose(interpolated, np.minimum(theta, 90.0), atol=1e-12)


def test_a_stack_at_an_angle_equals_tmm_s_and_p_averaged():
    # tmm.inc_tmm (Byrnes): the glass-fronted thin-film pair at 50°, unpolarised light
    stack = tandem.load_stack("all-thin-film-pair")
    energy = np.array([1.5, 2.0, 2.6])
    ours = photon_budget(stack, energy, [400.0], None, 298.15, angle_deg=50.0)
    layers = list(stack.layers)
    n = [stack.ambient_index] + [x.index(energy) for x in layers] + [stack.exit_index]
    d = [np.inf] + [400.0 if x.role == "front" else x.thickness_nm for x in layers] + [np.inf]
    flags = ["i"] + ["c" if x.coherent else "i" for x in layers] + ["i"]
    front = [i for i, x in enumerate(layers) if x.role == "front"][0]
    back = [i for i, x in enumerate(layers) if x.role == "back"][0]
    for k, lam in enumerate(tandem.core.units.HC_EV_NM / energy):
        index = [np.asarray(x)[k] if np.ndim(x) else x for x in n]
        absorbed = np.mean([tmm.inc_absorp_in_each_layer(tmm.inc_tmm(p, index, d, flags,
                                                                     np.radians(50), lam))
                            for p in "sp"], axis=0)[1:-1]
        assert ours.front[0, k] == pytest.approx(absorbed[front], abs=1e-8)
        assert ours.back[0, k] == pytest.approx(absorbed[back], abs=1e-8)


def test_the_skys_angle_is_in_air_whatever_the_ambient_medium():
    # Snell: n·sin θ is kept, so sunlight at 60° in air meets a stack whose ambient is glass
    # (n 1.52) at arcsin(sin 60°/1.52) there; tmm (Byrnes) solves it from the glass side
    stack = dataclasses.replace(tandem.load_stack("all-thin-film-pair"), ambient_index=1.52)
    energy = np.array([1.6, 2.2])
    ours = photon_budget(stack, energy, [400.0], None, 298.15, angle_deg=60.0)
    layers = list(stack.layers)
    n = [1.52] + [x.index(energy) for x in layers] + [stack.exit_index]
    d = [np.inf] + [400.0 if x.role == "front" else x.thickness_nm for x in layers] + [np.inf]
    flags = ["i"] + ["c" if x.coherent else "i" for x in layers] + ["i"]
    front = [i for i, x in enumerate(layers) if x.role == "front"][0]
    inside = np.arcsin(np.sin(np.radians(60.0)) / 1.52)
    for k, lam in enumerate(tandem.core.units.HC_EV_NM / energy):
        index = [np.asarray(x)[k] if np.ndim(x) else x for x in n]
        absorbed = np.mean([tmm.inc_absorp_in_each_layer(tmm.inc_tmm(p, index, d, flags, inside,
                                                                     lam))
                            for p in "sp"], axis=0)[1:-1]
        assert ours.front[0, k] == pytest.approx(absorbed[front], abs=1e-8)


def test_a_wafers_first_pass_crosses_at_the_refracted_angle():
    # Snell and Beer–Lambert: a single pass at sin θ_w = sin θ/n absorbs 1 − e^{−αd/cos θ_w}
    n_w = 3.6 + 1j * np.array([2e-4, 2e-5])
    wavelength = np.array([950.0, 1050.0])
    alpha_d = 4 * np.pi * n_w.imag / wavelength * 150e3
    kappa = np.sin(np.radians(60.0))
    traced = trace_wafer([], 1.0, n_w, 150e3, "single-pass", np.ones(2), wavelength,
                         incidence_kappa=kappa)
    mu = np.sqrt(1 - (kappa / 3.6) ** 2)
    np.testing.assert_allclose(traced.wafer, -np.expm1(-alpha_d / mu), rtol=1e-12)
    np.testing.assert_allclose(traced.transmitted, np.exp(-alpha_d / mu), rtol=1e-12)


def test_the_hemispherical_average_is_within_1e_3_of_a_gauss_quadrature():
    # an independent quadrature: 40 Gauss–Legendre points in u = sin²θ of the stack's own
    # absorptance (radiance uniform over the sky: power per solid angle ∝ cos θ)
    stack = tandem.load_stack("organic-pair")
    energy = np.linspace(1.2, 3.4, 23)
    table = angle_table(stack, {}, energy, [150.0])
    at_normal = photon_budget(stack, energy, [150.0], None, 298.15)
    x, w = np.polynomial.legendre.leggauss(40)
    gauss = 0.0
    for u, weight in zip((x + 1) / 2, w / 2):
        b = photon_budget(stack, energy, [150.0], None, 298.15,
                          angle_deg=float(np.degrees(np.arcsin(np.sqrt(u)))))
        gauss = gauss + weight * np.stack([b.front[0], b.back[0]])
    ours = np.stack([at_normal.front[0], at_normal.back[0]]) + table.hemisphere[0]
    np.testing.assert_allclose(ours, gauss, atol=1e-3)


def _steady_series(direct_share, aoi_deg, hours=3):
    """AM1.5G-shaped light for a few hours, a share of it direct at ``aoi_deg``."""
    from tandem.design.sky import common_grid
    from tandem.physics.spectra import reference_spectrum

    grid = common_grid()
    ref = reference_spectrum("am1.5g")
    irr = np.interp(grid, ref.wavelength_nm, ref.irradiance)
    times = pd.date_range("2026-06-21 10:00", periods=hours, freq="h", tz="Etc/GMT-1")
    base = SpectralSeries.from_spectra(times, grid, np.tile(irr, (hours, 1)), np.full(hours, 298.15),
                                       np.ones(hours), "steady")
    return dataclasses.replace(base, aoi_deg=np.full(hours, aoi_deg),
                               arriving_direct=direct_share * base.coefficients,
                               arriving_diffuse=(1 - direct_share) * base.coefficients)


def test_all_light_direct_at_normal_incidence_is_the_normal_incidence_result():
    stack = tandem.load_stack("organic-pair")
    design = StackYield(stack, {})
    parts = _steady_series(1.0, 0.0)
    plain = dataclasses.replace(parts, arriving_direct=None, arriving_diffuse=None, aoi_deg=None)
    a, b = (hourly(design, s, design.front_gap_eV, 150.0, design.back_thickness_nm)
            for s in (parts, plain))
    np.testing.assert_allclose(a.j_front, b.j_front, rtol=1e-10)
    np.testing.assert_allclose(a.p_2t, b.p_2t, rtol=1e-10)


@pytest.mark.parametrize("share, aoi", [(1.0, 60.0), (0.0, 0.0)])
def test_direct_light_at_its_angle_and_diffuse_light_over_the_hemisphere(share, aoi):
    # the photocurrents equal q∫A(E, θ)Φ dE with A solved at θ itself (direct light), or
    # averaged by the Gauss quadrature above (diffuse light), within the interpolation's
    # error (a few 1e-3 of the current)
    from tandem.physics.spectra import trapezoid_weights

    stack = tandem.load_stack("organic-pair")
    design = StackYield(stack, {})
    series = _steady_series(share, aoi)
    got = hourly(design, series, design.front_gap_eV, 150.0, design.back_thickness_nm)
    flux = series.photon_basis()
    phi = flux.rows([0])[0] * trapezoid_weights(flux.energy) * 1.602176634e-19
    if share == 1.0:
        b = photon_budget(stack, flux.energy, [150.0], None, 298.15, angle_deg=aoi)
        expected = np.array([b.front[0] @ phi, b.back[0] @ phi])
    else:
        x, w = np.polynomial.legendre.leggauss(24)
        expected = 0.0
        for u, weight in zip((x + 1) / 2, w / 2):
            b = photon_budget(stack, flux.energy, [150.0], None, 298.15,
                              angle_deg=float(np.degrees(np.arcsin(np.sqrt(u)))))
            expected = expected + weight * np.array([b.front[0] @ phi, b.back[0] @ phi])
    np.testing.assert_allclose([got.j_front[0], got.j_back[0]], expected, rtol=3e-3)


def test_a_glass_fronted_stack_loses_2_to_4_percent_a_year_to_its_angles():
    # a glass-fronted module loses 2–4 % of its yearly energy to incidence angles (Martin &
    # Ruiz, Sol. Energy Mater. Sol. Cells 70 (2001) 25; recalled): the organic pair, its own
    # 1.1 mm glass in front, a clear year at 38.5° N, four terminals (each subcell at its own
    # maximum-power point: the optical loss); measured 3.1 % (two terminals lose 1.7 %: oblique
    # light lengthens the front's path and eases its current limit)
    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    series = tandem.site_series(site, period="year:2026", step_minutes=120)
    normal = dataclasses.replace(series, arriving_direct=None, arriving_diffuse=None,
                                 aoi_deg=None, past_cover=None,
                                 coefficients=series.arriving_direct + series.arriving_diffuse)
    angled, flat = (tandem.energy_yield_stack("organic-pair", s, front_thicknesses_nm=[150.0])
                    .summary()["energy_optimum"] for s in (series, normal))
    loss = 1 - angled["energy_4t_kWh_m2"] / flat["energy_4t_kWh_m2"]
    assert 0.02 < loss < 0.04


def test_the_cover_index_is_refused_with_a_stack_and_the_note_says_why(tmp_path, monkeypatch):
    from typer.testing import CliRunner

    from tandem.cli.app import app

    monkeypatch.chdir(tmp_path)
    refused = CliRunner().invoke(app, ["yield", "--stack", "organic-pair", "--latitude", "38.5",
                                       "--longitude", "-3", "--period", "day:2026-06-21",
                                       "--cover-index", "1.5"])
    assert refused.exit_code == 2 and "--cover-index with --stack" in refused.output
    result = tandem.energy_yield_stack("organic-pair", _steady_series(0.7, 40.0), others={},
                                       front_thicknesses_nm=[150.0])
    notes = result.summary()["source_notes"]
    assert any("direct beam at each step's angle of incidence" in n for n in notes)
    plain = dataclasses.replace(_steady_series(0.7, 40.0), arriving_direct=None)
    notes = tandem.energy_yield_stack("organic-pair", plain, others={},
                                      front_thicknesses_nm=[150.0]).summary()["source_notes"]
    assert any("the stack at normal incidence" in n for n in notes)


@pytest.mark.parametrize("source", ["clear sky", "weather"])
def test_the_arriving_light_is_the_same_whatever_cover_the_site_names(source):
    # the direct and diffuse light a stack takes arrive before any cover: a site's cover index
    # changes the pair's spectra (the light past the cover) but not these; with no cover their
    # sum is the series itself (each part's cover factor undone exactly)
    from tandem.design.weather import weather_frame_series

    times = pd.date_range("2026-03-21 08:30", periods=6, freq="h", tz="Etc/GMT-1")
    data = pd.DataFrame({"ghi": [300.0, 600.0, 800.0, 850.0, 400.0, 150.0],
                         "dni": [500.0, 750.0, 850.0, 820.0, 100.0, 0.0],
                         "dhi": [90.0, 110.0, 120.0, 140.0, 300.0, 150.0],
                         "temp_air": 15.0, "wind_speed": 2.0}, index=times)
    made = []
    for cover in (1.0, 1.526):
        site = tandem.Site("field", 38.5, -3.0, timezone="Etc/GMT-1", cover_index=cover)
        made.append(weather_frame_series(site, data) if source == "weather" else
                    tandem.clear_sky_series(site, times))
    bare, glass = made
    np.testing.assert_allclose(glass.arriving_direct, bare.arriving_direct, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(glass.arriving_diffuse, bare.arriving_diffuse, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(bare.arriving_direct + bare.arriving_diffuse, bare.coefficients,
                               rtol=1e-10, atol=1e-12)
    assert not np.allclose(glass.coefficients, bare.coefficients, rtol=1e-3)  # the pair's do move
    assert np.all(bare.arriving_direct >= 0) and np.all(bare.arriving_diffuse >= 0)


def test_a_stack_yields_work_estimate_counts_its_angle_solves(monkeypatch):
    # (temperature bins + 2 × 16 oblique nodes) solves of every thickness with the sky's parts
    # known; the bins alone without them: the count the yield hands to its work estimate
    import tandem.jobs.energy_yield as job
    from tandem.design.stack_angles import ANGLE_SOLVES
    from tandem.design.yields import bin_count

    class Counted(Exception):
        pass

    def stack_work(stack, energies, thicknesses, batches):
        raise Counted(thicknesses * batches)

    monkeypatch.setattr(job, "stack_work", stack_work)
    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    series = tandem.site_series(site, period="day:2026-06-21")
    flat = dataclasses.replace(series, arriving_direct=None)

    def counted(s):
        with pytest.raises(Counted) as stopped:
            tandem.energy_yield_stack("organic-pair", s, others={},
                                      front_thicknesses_nm=[100.0, 150.0, 200.0])
        return stopped.value.args[0]

    assert ANGLE_SOLVES == 32
    assert counted(flat) == 3 * bin_count(series)
    assert counted(series) == 3 * (bin_count(series) + ANGLE_SOLVES)


def test_a_stack_yield_estimates_its_design_match_before_running_it(tmp_path):
    # without `others` a stack yield first matches the stack under AM1.5G; for a 400-pair
    # mirror (803 layers) that match alone needs about 3 GiB (70 bytes a layer, energy and
    # thickness of its 24), so it is refused before it runs (it once ran unasked, the
    # estimate coming only after it)
    from references import mirror_stack

    path = tmp_path / "mirror.toml"
    path.write_text(mirror_stack(400))
    site = tandem.Site("field", latitude=38.5, longitude=-3.0, timezone="Etc/GMT-1")
    series = tandem.site_series(site, period="day:2026-06-21")
    with pytest.raises(tandem.TandemInputError, match="first matches 803 layers .* pass --large"):
        tandem.energy_yield_stack(str(path), series)
