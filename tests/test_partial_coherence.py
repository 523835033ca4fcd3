"""A film whose thickness varies across the cell (partial coherence by area averaging):
checked against dense averages of ``tmm`` solutions and against the incoherent limit that
averaging over whole fringes reaches (the phase-averaged Airy sum is the incoherent one;
Katsidis & Siapkas, Appl. Opt. 41 (2002) 3978, recalled)."""

from dataclasses import replace

import numpy as np
import pytest

import tandem
from tandem.design.layerstack import photon_budget
from tandem.optics.thinfilm import spread_nodes

tmm = pytest.importorskip("tmm")

FILM, SUBSTRATE = 2.4 + 0.0j, 1.5  # a lossless high-index film on glass (incoherent substrate)


def _tmm_rt(d_film, lam, film=FILM, flags=("i", "c", "i")):
    ref = tmm.inc_tmm("s", [1.0, film, SUBSTRATE], [np.inf, d_film, np.inf], list(flags), 0.0, lam)
    return ref["R"], ref["T"]


@pytest.mark.parametrize("lam, spread", [(400.0, 25.0), (600.0, 80.0), (900.0, 300.0)])
def test_the_nodes_average_like_a_dense_grid_of_tmm_solutions(lam, spread):
    offsets, weights, _ = spread_nodes(spread, np.array([lam]), np.array([FILM.real]))
    ours = sum(w * np.array(_tmm_rt(500.0 + o, lam)) for o, w in zip(offsets, weights))
    dense = (np.arange(4001) + 0.5) / 4001 * spread - spread / 2
    reference = np.mean([_tmm_rt(500.0 + o, lam) for o in dense], axis=0)
    np.testing.assert_allclose(ours, reference, atol=2e-6)


@pytest.mark.parametrize("fringes", [1, 2, 3])
def test_whole_fringes_of_spread_are_the_incoherent_film(fringes):
    lam = 700.0
    period = lam / (2 * FILM.real)
    offsets, weights, counted = spread_nodes(fringes * period, np.array([lam]), np.array([FILM.real]))
    assert counted == pytest.approx(fringes)
    ours = sum(w * np.array(_tmm_rt(400.0 + o, lam)) for o, w in zip(offsets, weights))
    incoherent = _tmm_rt(400.0, lam, flags=("i", "i", "i"))
    np.testing.assert_allclose(ours, incoherent, atol=1e-6)
    coherent = np.array(_tmm_rt(400.0, lam))
    assert np.max(np.abs(coherent - incoherent)) > 0.01  # the fringe it washes out


def _spread_stack(key, spread):
    stack = tandem.load_stack(key)
    layers = tuple(replace(x, thickness_spread_nm=spread) if x.role == "front" else x
                   for x in stack.layers)
    return stack, replace(stack, layers=layers)


@pytest.mark.parametrize("key", ["organic-pair", "wide-gap-on-silicon-wafer"])
def test_a_stacks_budget_is_the_area_average_and_counts_every_photon(key):
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    e = flux.energy[::4] if key == "organic-pair" else flux.energy[::24]  # a wafer trace costs
    plain, spread = _spread_stack(key, 60.0)
    d = plain.front.thickness_nm
    ours = photon_budget(spread, e, [d])
    n = 401 if key == "organic-pair" else 121  # midpoints: the wafer's fringes are its films'
    dense = photon_budget(plain, e, d + (np.arange(n) + 0.5) / n * 60.0 - 30.0)
    for got, ref in ((ours.front, dense.front), (ours.back, dense.back),
                     (ours.reflected, dense.reflected)):
        np.testing.assert_allclose(got[0], ref.mean(axis=0), atol=2e-6)
    total = ours.front + ours.back + sum(ours.parasitic.values()) + ours.reflected + ours.transmitted
    np.testing.assert_allclose(total, 1.0, atol=1e-12)
    coherent = photon_budget(plain, e, [d])
    assert np.max(np.abs(coherent.front - ours.front)) > 1e-3  # the spread changes something


def test_a_spread_films_profile_still_holds_every_pair():
    from tandem.design.layerstack import generation_profiles, profile_figures
    from tandem.physics.spectra import trapezoid_weights

    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    _, stack = _spread_stack("organic-pair", 40.0)
    budget = photon_budget(stack, flux.energy, [stack.front.thickness_nm], None, 298.15,
                           depth_points=201)
    photons = flux.flux * trapezoid_weights(flux.energy)
    for name, (z, g) in generation_profiles(budget, flux).items():
        absorbed = budget.front[0] if name == stack.front.name else budget.back[0]
        assert profile_figures(z, g)["carriers_per_cm2_s"] == pytest.approx(
            absorbed @ photons * 1e-4, rel=1e-6)
        assert z[-1] == pytest.approx(stack.front.thickness_nm if name == stack.front.name
                                      else stack.back.thickness_nm)


def _stack_file(tmp_path, line, after='absorber = "organic-wide"'):
    import tandem.core.files

    text = (tandem.core.files.bundled_dir("stacks") / "organic-pair.toml").read_text()
    assert after in text
    (tmp_path / "s.toml").write_text(text.replace(after, f"{after}\n{line}"))
    return tmp_path / "s.toml"


@pytest.mark.parametrize("line, message", [
    ("thickness_spread_nm = 40", "not below the layer's thickness"),
    ('thickness_spread_nm = "20nm"', "must be a number"),
    ("thickness_spread_nm = -5", "outside"),
])
def test_an_impossible_spread_is_one_line(tmp_path, line, message):
    with pytest.raises(tandem.TandemInputError, match=message) as err:
        tandem.load_stack(_stack_file(tmp_path, line))
    assert "thickness_spread_nm" in str(err.value) and "\n" not in str(err.value)


def test_a_spread_on_glass_is_refused_and_one_too_wide_to_average_is_one_line(tmp_path):
    glass = _stack_file(tmp_path, "thickness_spread_nm = 1000", after='name = "glass"')
    with pytest.raises(tandem.TandemInputError, match="only for a coherent film"):
        tandem.load_stack(glass)
    _, wide = _spread_stack("organic-pair", 900.0)  # about 12 fringes at 280 nm
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    with pytest.raises(tandem.TandemInputError, match=r"spans 1\d\.\d fringes at 280 nm") as err:
        photon_budget(wide, flux.energy, [2000.0])
    assert "wide-gap blend" in str(err.value) and "\n" not in str(err.value)
