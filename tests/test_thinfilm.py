"""Thin-film optics and layer stacks, checked against textbook formulas and the general-purpose
``tmm`` package (S. J. Byrnes), a test dependency only."""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import tandem
from tandem.optics.database import database_index
from tandem.design.matching import Conditions, StackDesign, subcell_currents
from tandem.design.layerstack import (LayerStack, StackLayer, budget_currents, match_in_stack,
                                      photon_budget)
from tandem.design.stack_files import load_stack
from tandem.optics.thinfilm import Layer, stack_optics
from tandem.core.units import HC_EV_NM

from references import global_4t_limit

tmm = pytest.importorskip("tmm")


def solve(layers, n0, n_exit, wavelength):
    return stack_optics([Layer(np.asarray(n, complex), d, c) for n, d, c in layers], n0, n_exit,
                        np.atleast_1d(np.asarray(wavelength, float)))


@pytest.mark.parametrize("n1, n2", [(1.0, 1.5), (1.0, 3.5), (1.5, 1.0), (1.33, 2.4)])
def test_single_interface_is_fresnel(n1, n2):
    # any optics textbook (Hecht, Optics, §4.6): R = ((n1 − n2)/(n1 + n2))² at normal incidence
    out = solve([], n1, n2, 600.0)
    assert out.reflectance[0] == pytest.approx(((n1 - n2) / (n1 + n2)) ** 2, abs=1e-15)
    assert out.reflectance[0] + out.transmittance[0] == pytest.approx(1.0, abs=1e-15)


@pytest.mark.parametrize("n0, n1, n2", [(1.0, 1.38, 1.52), (1.0, 1.9, 3.6), (1.0, 1.2247449, 1.5),
                                        (1.52, 2.0, 3.5)])
def test_quarter_wave_layer(n0, n1, n2):
    # Macleod, Thin-Film Optical Filters, §3: a quarter-wave layer gives
    # R = ((n0·n2 − n1²)/(n0·n2 + n1²))², zero when n1 = √(n0·n2)
    lam = 550.0
    out = solve([(n1, lam / (4 * n1), True)], n0, n2, lam)
    expected = ((n0 * n2 - n1**2) / (n0 * n2 + n1**2)) ** 2
    assert out.reflectance[0] == pytest.approx(expected, abs=1e-14)
    zero = solve([(np.sqrt(n0 * n2), lam / (4 * np.sqrt(n0 * n2)), True)], n0, n2, lam)
    assert zero.reflectance[0] < 1e-28


def random_stack(rng, coherent_only=False):
    count = int(rng.integers(1, 7))
    layers = []
    for _ in range(count):
        coherent = coherent_only or rng.random() < 0.6
        n = rng.uniform(1.2, 4.0) + 1j * (rng.uniform(0, 0.8) if rng.random() < 0.7 else 0.0)
        d = rng.uniform(2, 500)
        if not coherent:  # thick and weakly absorbing, as glass and wafers are
            n, d = n.real + 1j * rng.uniform(0, 2e-3), rng.uniform(1e3, 3e5)
        layers.append((n, d, coherent))
    return layers, rng.uniform(1.0, 1.6), rng.uniform(1.0, 4.0) + 1j * rng.uniform(0, 0.2)


@pytest.mark.parametrize("coherent_only", [True, False])
def test_random_stacks_agree_with_tmm(coherent_only):
    """R, T and every layer's absorptance within 1e-9 of tmm's coh_tmm / inc_tmm."""
    rng = np.random.default_rng(2026 + coherent_only)
    wavelengths = np.linspace(300, 1300, 23)
    for _ in range(40):
        layers, n0, n_exit = random_stack(rng, coherent_only)
        ours = solve(layers, n0, n_exit, wavelengths)
        flags = ["i"] + ["c" if c else "i" for _, _, c in layers] + ["i"]
        for k, lam in enumerate(wavelengths):
            ref = tmm.inc_tmm("s", [n0, *[n for n, _, _ in layers], n_exit],
                              [np.inf, *[d for _, d, _ in layers], np.inf], flags, 0, lam)
            absorbed = tmm.inc_absorp_in_each_layer(ref)[1:-1]
            assert ours.reflectance[k] == pytest.approx(ref["R"], abs=1e-9)
            assert ours.transmittance[k] == pytest.approx(ref["T"], abs=1e-9)
            for i, a in enumerate(absorbed):
                assert ours.absorptance[i][k] == pytest.approx(a, abs=1e-9)


@pytest.mark.parametrize("pol", ["s", "p"])
def test_swept_layers_agree_with_tmm_point_by_point(pol):
    """A sweep's thickness axis takes its own paths through the matrix method (the layers
    behind the last swept one from amplitudes free of it, those in front by a Hermitian form
    in its amplitudes, its own matrix never formed): R, T and every layer's absorptance,
    at 40° in the ambient, within 1e-9 of tmm's coh_tmm for each thickness alone; one swept
    layer between others, and two swept on axes of their own."""
    from tandem.optics.thinfilm import coherent

    rng = np.random.default_rng(31 if pol == "s" else 32)
    wavelengths = np.linspace(320, 1250, 9)
    theta, n0, n_exit = np.radians(40.0), 1.0, 1.52
    for case in range(12):
        count = int(rng.integers(3, 7))
        ns = [rng.uniform(1.3, 3.8) + 1j * (rng.uniform(0, 0.6) if rng.random() < 0.8 else 0.0)
              for _ in range(count)]
        ds: list = [float(rng.uniform(5, 400)) for _ in range(count)]
        first = int(rng.integers(1, count - 1))  # a swept layer with layers on both sides
        ds[first] = rng.uniform(5, 600, 4)[:, None]
        if case % 2:  # and a second one, in front of it, on an axis of its own
            other = int(rng.integers(0, first))
            ds[other] = rng.uniform(5, 300, 3)[:, None, None]
        ours = coherent([n0, *ns, n_exit], ds, wavelengths, n0 * np.sin(theta), pol)
        shape = np.broadcast_shapes(*(np.shape(d) for d in ds), wavelengths.shape)
        for index in np.ndindex(shape[:-1]):
            here = [d if np.ndim(d) == 0 else float(np.broadcast_to(d, shape)[index + (0,)])
                    for d in ds]
            for k, lam in enumerate(wavelengths):
                ref = tmm.coh_tmm(pol, [n0, *ns, n_exit], [np.inf, *here, np.inf], theta, lam)
                at = index + (k,)
                assert np.broadcast_to(ours["R"], shape)[at] == pytest.approx(ref["R"], abs=1e-9)
                assert np.broadcast_to(ours["T"], shape)[at] == pytest.approx(ref["T"], abs=1e-9)
                for i, a in enumerate(tmm.absorp_in_each_layer(ref)[1:-1]):
                    assert np.broadcast_to(ours["A"][i], shape)[at] == pytest.approx(a, abs=1e-9)


def test_a_bragg_mirror_of_more_than_64_layers_agrees_with_tmm():
    # 36 pairs of quarter-wave high/low-index layers (72 layers): numpy's broadcast of more
    # than 64 arrays once failed here. tmm's coh_tmm is the reference; at its design
    # wavelength a quarter-wave stack of many pairs reflects nearly all light (its stop band;
    # Hecht, Optics, recalled)
    centre = 600.0
    n_hi, n_lo = 2.3 + 1e-4j, 1.45
    layers = [(n, centre / (4 * n.real), True) for _ in range(36) for n in (n_hi, n_lo)]
    wavelengths = np.array([450.0, 600.0, 750.0])
    ours = solve(layers, 1.0, 1.52, wavelengths)
    for k, lam in enumerate(wavelengths):
        ref = tmm.coh_tmm("s", [1.0, *[n for n, _, _ in layers], 1.52],
                          [np.inf, *[d for _, d, _ in layers], np.inf], 0, lam)
        assert ours.reflectance[k] == pytest.approx(ref["R"], abs=1e-9)
        assert ours.transmittance[k] == pytest.approx(ref["T"], abs=1e-9)
    assert ours.reflectance[1] > 0.99


def test_every_photon_once_and_lossless_stacks_absorb_nothing():
    rng = np.random.default_rng(7)
    wavelengths = np.linspace(300, 2000, 301)
    for _ in range(30):
        layers, n0, n_exit = random_stack(rng)
        out = solve(layers, n0, n_exit, wavelengths)
        total = out.reflectance + out.transmittance + sum(out.absorptance)
        np.testing.assert_allclose(total, 1.0, rtol=0, atol=1e-12)
        clear = solve([(n.real, d, c) for n, d, c in layers], n0, n_exit.real, wavelengths)
        assert max(np.max(np.abs(a)) for a in clear.absorptance) < 1e-15
        np.testing.assert_allclose(clear.reflectance + clear.transmittance, 1.0, atol=1e-12)


def test_thickness_sweep_is_vectorised_and_equals_one_at_a_time():
    lam = np.linspace(350, 1100, 50)
    d = np.array([100.0, 250.0, 400.0])[:, None]
    swept = solve([(1.9 + 0.01j, 80.0, True), (2.5 + 0.3j, d, True), (3.6 + 0.001j, 1e5, False)],
                  1.0, 1.0, lam)
    for i, di in enumerate(d[:, 0]):
        one = solve([(1.9 + 0.01j, 80.0, True), (2.5 + 0.3j, di, True), (3.6 + 0.001j, 1e5, False)],
                    1.0, 1.0, lam)
        np.testing.assert_allclose(swept.absorptance[1][i], one.absorptance[1], rtol=1e-13, atol=0)


def test_silicon_constants_from_the_database_match_the_absorber():
    # Green, Sol. Energy Mater. Sol. Cells 92 (2008) 1305 via the offline database: k gives the
    # same α as the bundled silicon absorber, and n(1000 nm) = 3.572 (Green 2008, recalled)
    wl, index = database_index("main/Si/Green-2008")
    si = tandem.load_absorber("silicon")
    for lam in (800, 900, 1000):
        k = np.interp(lam, wl, index.imag)
        alpha = 4 * np.pi * k / (lam * 1e-7)
        assert alpha == pytest.approx(float(si.alpha(HC_EV_NM / lam)), rel=0.02)
    assert np.interp(1000, wl, index.real) == pytest.approx(3.572, abs=0.01)


# --------------------------------------------------------------------------------------
# stacks of absorbers
# --------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def am15g():
    return tandem.reference_spectrum("am1.5g").photon_flux()


@pytest.fixture(scope="module")
def am15g_coarse(am15g):
    """AM1.5G on every fourth point of its grid: the crossing logic needs the fringes, not
    the spectrum's fine structure (the wafer trace costs per energy)."""
    return replace(am15g, energy=am15g.energy[::4], flux=am15g.flux[::4])


def index_matched(front="perovskite-wide", back="silicon", n=3.0):
    """A stack with no reflecting interface: one real index everywhere, thick layers."""
    f = replace(tandem.load_absorber(front), refractive_index=n, index_entry=None)
    b = replace(tandem.load_absorber(back), refractive_index=n, index_entry=None)  # n = 3 only
    layers = (StackLayer("front", 800.0, None, 7, True, "front", "absorber", absorber=f),
              StackLayer("back", 160e3, None, 7, False, "back", "absorber", absorber=b))
    return LayerStack("matched", Path("matched.toml"), "index-matched", "", layers, n, n), f, b


def test_index_matched_stack_reproduces_optics_lite(am15g):
    """Without interfaces the front is the optics-lite single pass, and the wafer behind it is
    a flat film over a Lambertian rear with nothing to trap its light (the ambient has its
    index): Lambert's cosine law gives A = 1 − 2e^{−αd}E₃(αd) (first pass straight down, the
    second isotropic; E₃ the exponential integral; e.g. Green, Prog. Photovolt. 10 (2002) 235).
    Stated tolerance: photocurrents and J0 within 0.5 %. The residue is the reflection that the
    absorbers' own k still causes, |ik/(2n + ik)|²: up to 1.1 % in the blue for the perovskite
    (k ≈ 0.64 at 3 eV); near the gaps, where J0 is made, the amplitudes ~k/2n reflected at the
    film's two faces interfere (0.3 % at 200 nm)."""
    from scipy.special import expn

    from tandem.physics.spectra import trapezoid_weights
    from tandem.physics.detailed_balance import blackbody_photon_flux
    from tandem.core.units import Q

    stack, f, b = index_matched()
    d = np.array([200.0, 500.0, 1200.0])
    budget = photon_budget(stack, am15g.energy, d)
    j_light, j0, *_ = budget_currents(budget, am15g, 298.15)
    design = StackDesign(f, b, 0.0, 0.0, 0.0)
    lite_j, lite_j0 = subcell_currents(design, Conditions(am15g, 298.15), f.gap_eV, d, 160e3)
    np.testing.assert_allclose(j_light[:, 0], lite_j[:, 0], rtol=5e-3)
    np.testing.assert_allclose(j0[:, 0], lite_j0[:, 0], rtol=5e-3)
    assert np.all(j_light[:, 0] < lite_j[:, 0])  # the residual reflection only takes light
    e = am15g.energy
    through = np.exp(-f.alpha(e) * d[:, None] * 1e-7)  # past the front film
    ad = b.alpha(e) * 160e3 * 1e-7
    wafer = through * (1 - 2 * np.exp(-ad) * expn(3, ad))
    w = trapezoid_weights(e) * Q
    np.testing.assert_allclose(j_light[:, 1], wafer @ (w * am15g.flux), rtol=5e-3)
    np.testing.assert_allclose(j0[:, 1], wafer @ (w * blackbody_photon_flux(e, 298.15)), rtol=5e-3)


@pytest.mark.parametrize("name", ["wide-gap-on-silicon-wafer", "all-thin-film-pair", "organic-pair"])
def test_bundled_stacks_count_every_photon_once(name, am15g):
    stack = load_stack(name)
    budget = photon_budget(stack, am15g.energy, np.geomspace(*stack.front.sweep_nm, 9))
    total = budget.front + budget.back + budget.reflected + budget.transmitted + sum(
        budget.parasitic.values())
    np.testing.assert_allclose(total, 1.0, rtol=0, atol=1e-12)
    for share in (budget.front, budget.back, budget.reflected, *budget.parasitic.values()):
        assert share.min() > -1e-12


def test_every_crossing_is_found_and_matched(am15g_coarse):
    stack = load_stack("wide-gap-on-silicon-wafer")
    result = match_in_stack(stack, am15g_coarse, points=60)
    assert len(result.crossings) >= len(result.grids)  # at least one per electrode thickness
    for p in result.crossings:
        assert p.j_light[0] == pytest.approx(p.j_light[1], rel=1e-6)
    for others, j, _, _ in result.grids:  # one crossing per sign change of J_f − J_b
        changes = int(np.sum(np.diff(np.sign(j[:, 0] - j[:, 1])) != 0))
        assert changes == sum(p.others == others for p in result.crossings)
    assert result.best.efficiency_2t == max(p.efficiency_2t for p in result.crossings)
    # the four-terminal optimum needs no matching: at least every grid point's 4T
    assert result.best_4t.efficiency_4t >= max(float(np.max(g[3])) for g in result.grids) - 1e-12
    assert result.best_4t.efficiency_4t >= result.best.efficiency_4t


def test_interference_fringes_give_several_crossings(am15g_coarse):
    """Where the front saturates near the back's fringing current (a 1.80 eV front over the
    flat-front wafer), J_front − J_back changes sign several times: every crossing is
    reported, the best two-terminal one first."""
    stack = load_stack("wide-gap-on-silicon-wafer")
    layers = tuple(replace(x, gap_eV=1.80, sweep_nm=(300.0, 1500.0)) if x.role == "front" else
                   replace(x, sweep_nm=None, thickness_nm=60.0) if x.sweep_nm else x
                   for x in stack.layers)
    # 120 points find the same three crossings as 300 (to the nm), at 40 % of the cost
    result = match_in_stack(replace(stack, layers=layers), am15g_coarse, points=120)
    _, j, _, _ = result.grids[0]
    changes = int(np.sum(np.diff(np.sign(j[:, 0] - j[:, 1])) != 0))
    assert changes >= 2 and len(result.crossings) == changes
    assert [p.efficiency_2t for p in result.crossings] == sorted(
        (p.efficiency_2t for p in result.crossings), reverse=True)
    for p in result.crossings:
        assert p.matched and p.j_light[0] == pytest.approx(p.j_light[1], rel=1e-6)


@settings(max_examples=25, deadline=None)
@given(extra_n=st.floats(1.2, 3.5), extra_k=st.floats(0.0, 0.5), extra_d=st.floats(1.0, 300.0),
       front_d=st.floats(150.0, 1500.0), temperature=st.floats(280.0, 350.0))
def test_stack_results_stay_inside_physics(extra_n, extra_k, extra_d, front_d, temperature):
    """Any extra layer in front: every photon counted once, 2T ≤ 4T, Voc below each gap, and
    the efficiency below the two-junction radiative limit of any gaps (De Vos 1980)."""
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    stack = load_stack("wide-gap-on-silicon-wafer")
    extra = StackLayer("extra", extra_d, None, 7, True, "parasitic", "random",
                       constant=complex(extra_n, extra_k))
    stack = replace(stack, layers=(stack.layers[0], extra) + stack.layers[1:])
    budget = photon_budget(stack, flux.energy, [front_d], temperature_K=temperature)
    total = budget.front + budget.back + budget.reflected + budget.transmitted + sum(
        budget.parasitic.values())
    np.testing.assert_allclose(total, 1.0, rtol=0, atol=1e-12)
    from tandem.design.layerstack import evaluate_budget
    from tandem.physics.stack import IDEAL

    perf = evaluate_budget(stack, budget, flux, temperature, 1.0, IDEAL)[0]
    assert perf.efficiency_2t[0] <= perf.efficiency_4t[0] * (1 + 1e-9)
    assert perf.efficiency_4t[0] <= global_4t_limit(280.0) * (1 + 1e-9)
    gaps = [stack.front.absorber.gap_eV + stack.front.absorber.gap_shift_eV(temperature),
            stack.back.absorber.gap_eV + stack.back.absorber.gap_shift_eV(temperature)]
    assert np.all(perf.voc[0] < np.array(gaps))


def test_light_out_through_a_single_pass_wafer_is_reported(am15g, tmp_path, monkeypatch):
    """Every usable photon (above the back gap) is counted once in the stack's report: the two
    subcells, each parasitic layer, reflection and, for a single-pass wafer, the light leaving
    through its back (missing before, so the reported currents did not add up). Reference: the
    photon current above 1.12 eV of the AM1.5G grid itself (trapezoid)."""
    from typer.testing import CliRunner

    from tandem.cli.app import app

    text = (Path(__file__).resolve().parents[1] / "stacks" / "wide-gap-on-silicon-wafer.toml"
            ).read_text().replace('role = "back"\ncoherent = false',
                                  'role = "back"\ncoherent = false\nlight_trapping = "single-pass"')
    (tmp_path / "single.toml").write_text(text)
    monkeypatch.chdir(tmp_path)  # the photon-budget figure is written here
    res = CliRunner().invoke(app, ["match", "--stack", str(tmp_path / "single.toml"), "--json",
                                   "-q", "--points", "24"])
    assert res.exit_code == 0, res.output
    import json

    s = json.loads(res.stdout)
    b = s["best"]
    lost = (sum(s["parasitic_loss_mA_cm2"].values()) + s["reflected_or_escaped_mA_cm2"]
            + s["transmitted_mA_cm2"])
    above = am15g.energy >= s["losses_counted_above_eV"]
    photons = np.trapezoid(am15g.flux * above, am15g.energy) * 1.602176634e-19 / 10  # mA/cm²
    assert s["transmitted_mA_cm2"] > 1.0  # a 160 µm single-pass wafer lets the infrared out
    # sub-gap tail absorption in the subcells is the only light outside the usable band
    assert b["jsc_front_mA_cm2"] + b["jsc_back_mA_cm2"] + lost == pytest.approx(photons, rel=2e-3)


def test_stack_fields_that_would_be_ignored_are_refused(tmp_path, am15g):
    """An exit_index behind a wafer that ends the stack, and an n,k table that covers none of
    the usable light (its end value would stand in for every photon), are one-line errors."""
    root = Path(__file__).resolve().parents[1] / "stacks"
    wafer = (root / "wide-gap-on-silicon-wafer.toml").read_text()
    (tmp_path / "exit.toml").write_text(wafer.replace("ambient_index = 1.0",
                                                      "ambient_index = 1.0\nexit_index = 1.5"))
    with pytest.raises(tandem.TandemInputError, match="exit_index' is not used: the wafer"):
        load_stack(tmp_path / "exit.toml")
    (tmp_path / "uv.csv").write_text("wavelength_nm,n,k\n100,1.9,0.01\n150,1.9,0.01\n200,1.9,0.01\n")
    (tmp_path / "uv.toml").write_text(wafer.replace('nk = [1.75, 0.002]', 'nk = "uv.csv"'))
    with pytest.raises(tandem.TandemInputError, match="has n,k for 100–200 nm, none of the usable"):
        tandem.match_stack(load_stack(tmp_path / "uv.toml"), points=8)
    organic = (root / "organic-pair.toml").read_text()  # 7.5 points was once taken as 7
    (tmp_path / "half.toml").write_text(organic.replace("points = 5", "points = 7.5", 1))
    with pytest.raises(tandem.TandemInputError, match="points' = 7.5 is not a whole number"):
        load_stack(tmp_path / "half.toml")


def test_no_match_note_names_the_thickness_range_swept(tmp_path):
    """With no crossing in the swept range the note names that range (it once printed the last
    n,k table's wavelengths, 18–2,479 nm)."""
    text = (Path(__file__).resolve().parents[1] / "stacks" / "all-thin-film-pair.toml").read_text()
    (tmp_path / "narrow.toml").write_text(text.replace("thickness_nm = [150, 1200]",
                                                       "thickness_nm = [150, 160]"))
    result = tandem.match_stack(load_stack(tmp_path / "narrow.toml"), points=8)
    assert not result.match.crossings
    assert any("no current match for 150–160 nm" in n for n in result.match.notes)


@pytest.fixture(scope="module")
def wafer_stack_match():
    """The bundled wafer stack matched on a 12-point grid (shared: it is the costly part)."""
    return tandem.match_stack(load_stack("wide-gap-on-silicon-wafer"), points=12)


def test_an_optimum_on_the_edge_of_a_layer_sweep_is_flagged(wafer_stack_match):
    """The bundled wafer stack's electrode is best at its thinnest swept value (60 nm): the
    optimum may lie beyond the range, and the notes say so."""
    result = wafer_stack_match
    assert result.match.best.others["ITO electrode"] == pytest.approx(60.0)
    assert any("ITO electrode: the best design sits at the edge of its sweep (60 nm"
               in n for n in result.match.notes)


def test_the_four_terminal_optimum_is_refined_off_the_grid(am15g, wafer_stack_match):
    """The best four-terminal point is refined between its grid neighbours: it is at least the
    grid's best and a local maximum in the front thickness (±0.1 % both lower)."""
    from tandem.design.layerstack import _point
    from tandem.physics.stack import IDEAL

    stack = load_stack("wide-gap-on-silicon-wafer")
    m = wafer_stack_match.match
    best = m.best_4t
    on_grid = max(float(np.nanmax(g[3])) for g in m.grids)
    assert best.efficiency_4t >= on_grid * (1 - 1e-12)
    assert not np.any(np.isclose(best.front_thickness_nm, m.thicknesses_nm, rtol=1e-6))
    for factor in (0.999, 1.001):
        near = _point(stack, am15g, best.others, best.front_thickness_nm * factor, 298.15, 1.0,
                      IDEAL, False)
        assert near.efficiency_4t <= best.efficiency_4t


def test_database_absorbers_bring_their_dispersive_index_into_stacks():
    """A stack's silicon takes n(λ) from the entry its α comes from (Green, Sol. Energy Mater.
    Sol. Cells 92 (2008) 1305: n = 3.572 at 1000 nm, falling to the red — recalled), k from the
    absorber's α; an absorber with a model edge keeps its file's constant n."""
    stack = load_stack("wide-gap-on-silicon-wafer")
    wl = np.array([800.0, 1000.0, 1150.0])
    index = stack.back.index(HC_EV_NM / wl)
    assert index.real[1] == pytest.approx(3.572, abs=0.01)
    assert index.real[0] > index.real[1] > index.real[2]  # normal dispersion below the gap
    alpha = 4 * np.pi * index.imag / (wl * 1e-7)
    np.testing.assert_allclose(alpha, stack.back.absorber.alpha(HC_EV_NM / wl), rtol=1e-12)
    front = stack.front.index(HC_EV_NM / wl)
    np.testing.assert_array_equal(front.real, stack.front.absorber.refractive_index)


def test_budget_csv_counts_every_photon_once_and_is_refused_without_a_stack(tmp_path,
                                                                            monkeypatch):
    """--budget writes the best design's photon budget per wavelength: the shares add up to 1
    at every wavelength (the photon-conservation law the solver obeys, R + T + ΣA = 1)."""
    import pandas as pd

    from tandem.cli.app import app
    from typer.testing import CliRunner

    monkeypatch.chdir(tmp_path)
    res = CliRunner().invoke(app, ["match", "--stack", "all-thin-film-pair", "--points", "20", "-q",
                                   "--budget", "b.csv"])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(tmp_path / "b.csv")
    shares = table.drop(columns=["wavelength_nm", "energy_eV"])
    np.testing.assert_allclose(shares.sum(axis=1), 1.0, atol=1e-9)
    assert np.all(np.diff(table["wavelength_nm"]) > 0) and table.columns[2].startswith("front: ")
    again = CliRunner().invoke(app, ["match", "--stack", "all-thin-film-pair", "--points", "20",
                                     "-q", "--budget", "b.csv"])
    assert again.exit_code == 2 and "exists" in again.stderr
    for args, message in ((["perovskite-wide", "silicon", "--budget", "x.csv"], "--budget needs --stack"),
                          (["--stack", "all-thin-film-pair", "--budget", "x.txt"], "give a .csv")):
        res = CliRunner().invoke(app, ["match", *args])
        assert res.exit_code == 2 and message in res.stderr, res.output
        assert len(res.stderr.strip().splitlines()) == 1
