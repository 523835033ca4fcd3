"""The Tauc–Lorentz oscillator model of an absorber: its closed-form ε₁ against a numerical
Kramers–Kronig integral, α = 4πk/λ, the Urbach join, and its n in layer stacks."""

import numpy as np
import pytest
from scipy.integrate import quad

import tandem
from tandem.core.units import HC_EV_NM
from tandem.optics.oscillators import tauc_lorentz_epsilon

#: a-Si parameters of Jellison & Modine, Appl. Phys. Lett. 69 (1996) 371 (recalled: A 122 eV,
#: E0 3.45 eV, C 2.54 eV, Eg 1.20 eV, ε∞ 1.15), and two invented sets with sharp and broad peaks
PARAMETERS = [(122.0, 3.45, 2.54, 1.20, 1.15), (50.0, 2.0, 0.5, 1.55, 2.0),
              (200.0, 4.0, 1.0, 0.7, 1.0), (30.0, 2.6, 4.9, 1.6, 3.0)]


def kramers_kronig_eps1(energy, amplitude, resonance, broadening, gap, eps_inf):
    """ε₁(E) = ε∞ + (2/π) P∫ ξ ε₂(ξ)/(ξ² − E²) dξ by scipy quadrature, with the Cauchy weight
    for the pole (ξ/(ξ² − E²) = ½[1/(ξ − E) + 1/(ξ + E)]); ε₂ written here from the paper's
    definition, the Tauc joint density of states times the Lorentz oscillator's ε₂."""
    def eps2(x):
        lorentz = amplitude * resonance * broadening * x / ((x * x - resonance**2) ** 2
                                                            + broadening**2 * x * x)
        return lorentz * (x - gap) ** 2 / x**2 if x > gap else 0.0

    top = 400 * resonance
    if energy > gap:
        near = quad(eps2, gap, top, weight="cauchy", wvar=energy, limit=500,
                    epsabs=1e-13, epsrel=1e-11)[0]
    else:
        near = quad(lambda x: eps2(x) / (x - energy), gap, top, limit=500, epsabs=1e-14)[0]
    far = quad(lambda x: eps2(x) / (x - energy), top, np.inf, limit=200)[0]
    plus = quad(lambda x: eps2(x) / (x + energy), gap, np.inf, limit=500, epsabs=1e-14)[0]
    return eps_inf + (near + far + plus) / np.pi


@pytest.mark.parametrize("pars", PARAMETERS)
@pytest.mark.parametrize("energy", [0.3, 1.0, 1.4, 1.9, 2.5, 3.5, 5.0, 8.0])
def test_the_closed_form_is_the_kramers_kronig_transform_of_eps2(pars, energy):
    eps = tauc_lorentz_epsilon(energy, *pars)
    assert float(eps.real) == pytest.approx(kramers_kronig_eps1(energy, *pars), rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("pars", PARAMETERS)
def test_eps2_vanishes_below_the_gap_and_eps1_is_continuous_across_it(pars):
    # and below the gap ε1 > ε∞ (all of ε2's weight lies above: the Kramers–Kronig integrand
    # is positive), so ε∞ > 0 is all a real index needs there
    gap = pars[3]
    assert np.all(tauc_lorentz_epsilon(np.linspace(0.05, gap, 50), *pars).real > pars[4])
    e = np.array([0.5 * gap, gap * (1 - 1e-6), gap, gap * (1 + 1e-6)])
    eps = tauc_lorentz_epsilon(e, *pars)
    assert np.all(eps.imag[:3] == 0) and eps.imag[3] > 0
    assert np.all(np.isfinite(eps.real))
    assert eps.real[1] == pytest.approx(eps.real[3], rel=1e-5)


def _film(tmp_path, absorption: str, gap: str = "value_eV = 1.20", urbach: float = 48):
    text = f'''name = "oscillator film"
description = "a Tauc-Lorentz test film"
[gap]
{gap}
[absorption]
model = "tauc-lorentz"
urbach_energy_meV = {urbach}
tail_cutoff_below_gap_eV = 0.4
{absorption}
[optics]
refractive_index = 4.0
light_trapping = "double-pass"
[electrical]
ere = 1e-4
[thickness]
default_nm = 250
range_nm = [50, 400]
[sources]
fit = "Jellison & Modine 1996 a-Si parameters, recalled"
'''
    path = tmp_path / "tl.toml"
    path.write_text(text)
    return path


A_SI = "amplitude_eV = 122.0\nresonance_eV = 3.45\nbroadening_eV = 2.54\neps_infinity = 1.15"


def test_alpha_is_4_pi_k_over_lambda_above_the_join_and_an_urbach_tail_below(tmp_path):
    film = tandem.load_absorber(_film(tmp_path, A_SI))
    edge = film.edge
    wavelength = np.array([350.0, 450.0, 600.0, 800.0])
    k = np.sqrt(tauc_lorentz_epsilon(HC_EV_NM / wavelength, 122.0, 3.45, 2.54, 1.20, 1.15)).imag
    np.testing.assert_allclose(film.alpha(HC_EV_NM / wavelength), 4 * np.pi * k / (wavelength * 1e-7),
                               rtol=1e-12)
    # the join: α and d ln α/dE continuous, the slope 1/E_U there (Urbach, Phys. Rev. 92 (1953) 1324)
    t, h = edge.join_eV, 1e-6
    below, at, above = film.alpha(np.array([t - h, t, t + h]))
    assert below == pytest.approx(at, rel=1e-4) and above == pytest.approx(at, rel=1e-4)
    assert np.log(at / below) / h == pytest.approx(1 / 0.048, rel=1e-3)
    assert np.log(above / at) / h == pytest.approx(1 / 0.048, rel=1e-3)
    # for α ∝ (E − Eg)² near the gap the join sits near Eg + 2·E_U; the oscillator's other
    # factors move it a little
    assert 1.20 + 0.06 < t < 1.20 + 0.12
    deep = film.alpha(np.array([1.0, 1.1]))  # one E_U·ln(ratio) apart: pure exponential
    assert np.log(deep[1] / deep[0]) == pytest.approx(0.1 / 0.048, rel=1e-9)


def test_a_stack_takes_the_oscillators_n_and_a_k_that_gives_its_alpha(tmp_path):
    from dataclasses import replace

    film = tandem.load_absorber(_film(tmp_path, A_SI))
    stack = tandem.load_stack("all-thin-film-pair")
    layer = replace(next(x for x in stack.layers if x.role == "front"), absorber=film, gap_eV=None)
    energy = np.linspace(1.0, 3.8, 57)
    index = layer.index(energy)
    eps = tauc_lorentz_epsilon(energy, 122.0, 3.45, 2.54, 1.20, 1.15)
    np.testing.assert_allclose(index.real, np.sqrt(eps).real, rtol=2e-6)  # n from ε, not 4.0
    wavelength = HC_EV_NM / energy
    np.testing.assert_allclose(4 * np.pi * index.imag / (wavelength * 1e-7), film.alpha(energy),
                               rtol=1e-12)


@pytest.mark.parametrize("absorption, gap, field", [
    ("amplitude_eV = 122.0\nresonance_eV = 1.1\nbroadening_eV = 0.5\neps_infinity = 1.15",
     "value_eV = 1.20", "absorption.resonance_eV"),
    ("amplitude_eV = 122.0\nresonance_eV = 3.45\nbroadening_eV = 7.0\neps_infinity = 1.15",
     "value_eV = 1.20", "absorption.broadening_eV"),
    ("amplitude_eV = 122.0\nresonance_eV = 3.45\nbroadening_eV = 2.54",
     "value_eV = 1.20", "absorption.eps_infinity"),
    ("amplitude_eV = 122.0\nbroadening_eV = 2.54\neps_infinity = 1.15",
     "value_eV = 1.20", "absorption.resonance_eV"),
    ("amplitude_eV = 122.0\nresonance_eV = 3.45\nbroadening_eV = 2.54\neps_infinity = -1",
     "value_eV = 1.20", "absorption.eps_infinity"),
    (A_SI, 'relation = "polynomial"\ncoefficients_eV = [1.2, 0.1]\ncomposition = "x"\n'
     'composition_range = [0, 1]\ncomposition_default = 0.5', "gap.coefficients_eV"),
])
def test_impossible_oscillators_are_refused_naming_the_field(tmp_path, absorption, gap, field):
    with pytest.raises(tandem.TandemInputError, match=field.replace(".", r"\.")) as err:
        tandem.load_absorber(_film(tmp_path, absorption, gap))
    assert "\n" not in str(err.value)
