"""The radiative limit that bounds every efficiency the tool prints (shared by property tests)."""

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
