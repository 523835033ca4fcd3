"""References the tests and the benchmark share: the radiative limit that bounds every
efficiency the tool prints, the yield computed the direct way, the photons of ASTM G173-03
above a gap integrated on the standard's own wavelength grid, and a many-layer stack."""

import functools

import numpy as np

import tandem


@functools.lru_cache(maxsize=4)
def global_4t_limit(temperature: float) -> float:
    """The highest four-terminal radiative efficiency over all step-gap pairs (AM1.5G)."""
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    f, b = np.meshgrid(np.arange(1.2, 2.41, 0.01), np.arange(0.6, 1.61, 0.01), indexing="ij")
    ok = f > b
    perf = tandem.step_stack(flux, np.stack([f[ok], b[ok]], -1), temperature)
    # refine around the grid optimum with a finer local grid
    i = int(np.argmax(perf.p_4t))
    f0, b0 = f[ok][i], b[ok][i]
    f, b = np.meshgrid(np.linspace(f0 - 0.02, f0 + 0.02, 41), np.linspace(b0 - 0.02, b0 + 0.02, 41),
                       indexing="ij")
    fine = tandem.step_stack(flux, np.stack([f.ravel(), b.ravel()], -1), temperature)
    return float(max(perf.p_4t.max(), fine.p_4t.max()) / flux.irradiance)


def dense_yield(design, series, gaps, thicknesses, back_thickness_nm):
    """The yield the direct way [kWh/m², 2T, (n_g, n_d)]: dense spectra of every step and J0 at
    each step's own temperature, with the tool's bins and optics but no reduced basis and no
    J0 interpolation."""
    from tandem.physics import detailed_balance as db
    from tandem.design.matching import design_bulk, evaluate_design, stack_integrands
    from tandem.physics.spectra import to_energy, trapezoid_weights
    from tandem.core.units import HC_EV_NM, Q
    from tandem.design.yields import _bins

    energy = series.energy
    grid = np.sort(HC_EV_NM / energy)
    dense = to_energy(grid, np.stack([np.interp(grid, series.wavelength_nm, r)
                                       for r in series.irradiance]))[1]
    w = trapezoid_weights(energy) * Q
    e2 = np.zeros((len(gaps), len(thicknesses)))
    for t_bin, idx, t_cell in _bins(series, 2.0):
        bb = db.blackbody_photon_flux(energy, t_cell[:, None])  # each step's own temperature
        for i, g in enumerate(gaps):
            parts = stack_integrands(design, energy, g, back_thickness_nm, None, t_bin)
            a, t = parts.transfer(np.asarray(thicknesses, dtype=float))
            fw, bw = w * parts.front_weight, w * parts.back_weight
            jl = np.stack([a @ (dense[idx] * fw).T, t @ (dense[idx] * bw).T], -1)
            j0 = np.stack([a @ (bb * fw).T, t @ (bb * bw).T], -1)
            bulk = design_bulk(design, g, np.asarray(thicknesses, dtype=float)[:, None],
                               back_thickness_nm, t_cell)
            perf = evaluate_design(design, jl, j0, t_cell, 1.0, bulk=bulk)
            e2[i] += perf.p_2t @ series.step_hours[idx] / 1000
    return e2


def g173_from_pvlib(name: str = "am1.5g"):
    """ASTM G173-03 (wavelength [nm], irradiance [W m⁻² nm⁻¹]) through pvlib's own reader,
    ``pvlib.spectrum.get_reference_spectra``, not the tool's."""
    import pvlib

    table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    column = {"am1.5g": "global", "am1.5d": "direct", "am0": "extraterrestrial"}[name]
    return table.index.to_numpy(float), table[column].to_numpy(float)


def wavelength_side_photons_above(wavelength_nm, irradiance, gap_eV):
    """Photons above each gap [m⁻² s⁻¹] for a table read as linear in wavelength between its
    rows (as ASTM G173-03 is integrated): ∫ I(λ)·λ/(hc) dλ below λg, each row interval by the
    antiderivative of (a + bλ)·λ, the gap's own interval cut at λg. Written here apart from
    the tool's Simpson rule, its energy grid and its constants (scipy's CODATA values)."""
    from scipy import constants as c

    hc_ev_nm = c.h * c.c / c.e * 1e9
    wl, irr = np.asarray(wavelength_nm, float), np.asarray(irradiance, float)
    b = np.diff(irr) / np.diff(wl)
    a = irr[:-1] - b * wl[:-1]

    def antiderivative(k, lam):
        return a[k] * lam**2 / 2 + b[k] * lam**3 / 3

    whole = antiderivative(np.arange(b.size), wl[1:]) - antiderivative(np.arange(b.size), wl[:-1])
    below = np.concatenate(([0.0], np.cumsum(whole)))  # up to each row
    lam_g = hc_ev_nm / np.asarray(gap_eV, float)
    k = np.clip(np.searchsorted(wl, lam_g) - 1, 0, b.size - 1)
    cut = below[k] + antiderivative(k, lam_g) - antiderivative(k, wl[k])
    return cut / (hc_ev_nm * c.e)


def mirror_stack(pairs: int) -> str:
    """An invented stack: a perovskite film over a dielectric mirror of ``pairs`` layer pairs
    over a silicon wafer (a stand-in for a many-layer design, not a device anyone made)."""
    lines = ['title = "mirror of %d pairs"' % pairs]

    def layer(name, **keys):
        lines.extend(["", "[[layer]]", f'name = "{name}"', *(f"{k} = {v}" for k, v in keys.items())])

    layer("glass", thickness_nm=1.1e6, nk=1.52, coherent="false")
    layer("front", absorber='"perovskite-wide"', thickness_nm="[200, 800]", role='"front"')
    for i in range(2 * pairs):
        layer(f"mirror {i}", thickness_nm=80 if i % 2 else 110, nk=1.45 if i % 2 else 2.1)
    layer("back", absorber='"silicon"', thickness_nm=160000, role='"back"', coherent="false")
    return "\n".join(lines) + "\n"
