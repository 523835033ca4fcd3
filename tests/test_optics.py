"""Optics-lite: light trapping limits, conservation, filtering, collection length."""

import dataclasses

import numpy as np
import pytest

import tandem
import tandem.core.units
import tandem.optics.absorptance
import tandem.optics.edges
from tandem.design.matching import Conditions, StackDesign, match_currents, stack_performance
from tandem.optics.absorptance import LayerOptics, absorptance, collection_efficiency, stack_optics


def test_lambertian_weak_absorption_gives_4n2_path():
    # Yablonovitch, J. Opt. Soc. Am. 72 (1982) 899: weak-absorption path enhancement 4n².
    alpha = np.array([1e-5, 1e-4, 1e-3])  # cm⁻¹, with d = 100 µm: 4n²αd ≤ 5e-4
    n, d = 3.5, 1e5
    ratio = absorptance(alpha, d, "lambertian", n) / absorptance(alpha, d, "single-pass")
    assert ratio == pytest.approx(4 * n**2, rel=2e-3)


def test_lambertian_matches_tiedje_yablonovitch_form():
    # Tiedje et al., IEEE Trans. Electron Devices 31 (1984) 711: a = α/(α + 1/(4n²d)),
    # written here from the paper's expression with d converted to cm.
    alpha = np.logspace(-3, 5, 50)
    n, d_nm = 3.6, 160e3
    expected = alpha / (alpha + 1 / (4 * n**2 * d_nm * 1e-7))
    assert absorptance(alpha, d_nm, "lambertian", n) == pytest.approx(expected, rel=1e-12)
    assert absorptance(1e6, d_nm, "lambertian", n) == pytest.approx(1.0, abs=1e-5)


def test_double_pass_is_single_pass_of_twice_the_thickness():
    alpha = np.logspace(0, 5, 20)
    assert absorptance(alpha, 300, "double-pass") == pytest.approx(absorptance(alpha, 600))


@pytest.fixture(scope="module")
def energy():
    return np.linspace(0.5, 4.0, 3000)


@pytest.mark.parametrize("losses", [(0.0, 0.0, 0.0), (0.05, 0.02, 0.03), "spectral"])
def test_light_is_conserved_at_every_energy(energy, losses):
    if losses == "spectral":
        losses = (0.02 + 0.05 * np.sin(energy) ** 2, 0.1 * (energy > 3), 0.01 * energy / 4)
    front = tandem.load_absorber("perovskite-wide").layer(energy, 400.0)
    back = tandem.load_absorber("silicon").layer(energy)
    light = stack_optics(front, back, *losses)
    total = (light.front_absorbed + light.back_absorbed + light.reflected + light.parasitic
             + light.transmitted)
    assert np.max(np.abs(total - 1.0)) < 1e-9
    assert np.all(light.front_eqe <= light.front_absorbed + 1e-15)


def test_back_cell_sees_the_front_transmission(energy):
    front = tandem.load_absorber("perovskite-wide").layer(energy, 300.0)
    back = LayerOptics(np.full_like(energy, 1e8), 1000.0)  # absorbs all it is given
    light = stack_optics(front, back)
    assert light.back_absorbed == pytest.approx(np.exp(-front.alpha_per_cm * 300e-7), abs=1e-12)


@pytest.fixture(scope="module")
def pvk_si(am15g):
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"))
    return design, Conditions(am15g, 298.15)


def test_currents_never_exceed_incident_photons(pvk_si, am15g):
    design, cond = pvk_si
    d = np.geomspace(50, 5000, 40)
    perf = stack_performance(design, cond, 1.68, d, 160e3)
    incident = tandem.core.units.Q * np.trapezoid(am15g.flux, am15g.energy)
    assert np.all(perf.j_light.sum(-1) <= incident)


def test_thinning_front_moves_current_to_back_and_match_is_exact(pvk_si):
    design, cond = pvk_si
    result = match_currents(design, cond, front_gaps=[1.68], thickness_points=60)
    j = result.best_sweep.performance.j_light
    assert np.all(np.diff(j[:, 0]) > 0)  # front gains with thickness
    assert np.all(np.diff(j[:, 1]) < 0)  # back loses
    dm = result.configurations[0].matched_front_thickness_nm
    assert dm is not None
    jm = stack_performance(design, cond, 1.68, dm, 160e3).j_light
    assert abs(jm[0] - jm[1]) / jm[1] < 0.005


def test_no_match_is_explained(pvk_si):
    design, cond = pvk_si
    result = match_currents(design, cond, front_gaps=[1.9], thickness_points=20)
    best = result.configurations[0]
    assert best.matched_front_thickness_nm is None
    assert "limits at every thickness" in best.match_note


def strong_absorber(key, gap, trapping):
    """A thick, strongly absorbing, loss-free edge: the step absorber's optical limit."""
    base = tandem.load_absorber("cdte")
    edge = tandem.optics.edges.ParametricEdge("direct", 0.0005, 1e7, 1e8)
    return dataclasses.replace(base, key=key, gap_eV=gap, edge=edge, ere=1.0,
                               light_trapping=trapping, collection_length_nm=None,
                               thickness_range_nm=(1e3, 1e5))


def test_strong_thick_absorbers_reproduce_step_limits(am15g):
    # Internal limit check: the optics path must converge to the step-absorber engine.
    front, back = strong_absorber("f", 1.73, "single-pass"), strong_absorber("b", 1.12, "double-pass")
    design = StackDesign(front, back)
    perf = stack_performance(design, Conditions(am15g, 300.0), 1.73, 1e4, 1e4)
    step = tandem.step_stack(am15g, np.array([1.73, 1.12]), 300.0)
    assert 100 * perf.efficiency_2t == pytest.approx(100 * step.efficiency_2t, abs=0.2)
    assert 100 * perf.efficiency_4t == pytest.approx(100 * step.efficiency_4t, abs=0.2)


def test_collection_length_saturates_current_and_moves_optimum_thinner(am15g):
    blend = tandem.load_absorber("organic-wide")
    free = dataclasses.replace(blend, collection_length_nm=None)
    cond = Conditions(am15g, 298.15)
    back = tandem.load_absorber("silicon")
    d = np.array([100.0, 200, 400, 800, 1600])
    with_lc = stack_performance(StackDesign(blend, back), cond, 1.82, d, 160e3).j_light[:, 0]
    without = stack_performance(StackDesign(free, back), cond, 1.82, d, 160e3).j_light[:, 0]
    assert np.all(with_lc < without)
    gains = np.diff(with_lc)
    assert gains[-1] < 0.02 * with_lc[-1]  # saturated: doubling 800→1600 nm adds < 2 %
    assert gains[-1] < 0.1 * (without[-1] - without[-2]) or gains[-1] <= 0

    def optimum(absorber):
        design = StackDesign(absorber, back)
        wide = Conditions(am15g, 298.15, allow_outside_range=True)  # past the file's 300 nm
        return match_currents(design, wide, [1.82], None, (40, 3000), 60).configurations[0]

    assert optimum(blend).front_thickness_nm < optimum(free).front_thickness_nm


def test_collection_efficiency_limits():
    assert collection_efficiency(1e5, 100.0, None) == pytest.approx(1.0)
    # very long collection length: everything collected
    assert collection_efficiency(1e4, 500.0, 1e9) == pytest.approx(1.0, abs=1e-6)
    # weakly absorbed light: uniform generation, mean of exp(−z/L) over the layer
    assert collection_efficiency(1e-6, 100.0, 100.0) == pytest.approx(1 - np.exp(-1.0), rel=1e-6)


@pytest.mark.parametrize("front_key", ["perovskite-wide", "organic-wide"])  # without/with L_c
def test_fast_currents_equal_integrated_eqe(am15g, front_key):
    # the matrix-product path must equal integrating the full EQE arrays of stack_optics
    from tandem.design.matching import stack_light, subcell_currents

    e = am15g.energy
    design = StackDesign(tandem.load_absorber(front_key), tandem.load_absorber("silicon"),
                         0.03 + 0.02 * np.cos(e), 0.02, 0.01)
    cond = Conditions(am15g, 298.15)
    d = np.array([60.0, 250.0, 900.0])
    j_light, j0 = subcell_currents(design, cond, 1.75, d, 160e3)
    light = stack_light(design, e, 1.75, d, 160e3)
    for i, eqe in enumerate((light.front_eqe, light.back_eqe)):
        assert j_light[:, i] == pytest.approx(tandem.photocurrent(e, am15g.flux, eqe), rel=1e-10)
        assert j0[:, i] == pytest.approx(tandem.radiative_dark_current(e, eqe, 298.15), rel=1e-8)
