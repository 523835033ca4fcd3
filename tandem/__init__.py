"""tandem: detailed balance and optics-lite design of two-junction solar cells.

The supported Python API is listed in ``__all__``: the typed inputs (:class:`Light`,
:class:`OperatingPoint`, :class:`Sweep`), one function per job (:func:`limit`, :func:`match`,
:func:`gap_map`, :func:`energy_yield`, :func:`fabrication_spread`) and their result types,
absorbers and spectra, and the physics functions underneath. Users never need to know the
module a name lives in. Heavier parts load on first use, so ``import tandem`` stays quick.
"""

from __future__ import annotations

import importlib

__version__ = "0.2.0"

#: public name -> module that defines it
_WHERE = {
    # inputs and jobs
    "Light": "inputs", "OperatingPoint": "inputs", "Sweep": "inputs",
    "limit": "workflows", "match": "workflows", "gap_map": "workflows",
    "energy_yield": "workflows", "fabrication_spread": "workflows",
    "LimitResult": "workflows", "MatchStudy": "workflows", "MapResult": "workflows",
    "YieldResult": "workflows", "SpreadResult": "workflows",
    "match_stack": "workflows", "StackMatchResult": "workflows",
    "measured_eqe": "workflows", "EQEResult": "workflows",
    "LayerStack": "layerstack", "load_stack": "layerstack", "bundled_stacks": "layerstack",
    # absorbers, sites and spectra
    "Absorber": "absorbers", "bundled_absorbers": "absorbers", "load_absorber": "absorbers",
    "parse_absorber": "absorbers",
    "Site": "sky", "clear_sky_series": "sky", "weather_series": "sky", "folder_series": "sky",
    "parse_period": "sky", "SpectralSeries": "sky",
    "PhotonFlux": "spectra", "Spectrum": "spectra", "blackbody_sun": "spectra",
    "load_spectrum": "spectra", "read_spectrum_csv": "spectra", "reference_spectrum": "spectra",
    "scaled_to_irradiance": "spectra",
    # physics underneath
    "blackbody_photon_flux": "detailed_balance", "cumulative_flux": "detailed_balance",
    "dark_current": "detailed_balance", "diode_current": "detailed_balance",
    "diode_voltage": "detailed_balance", "flux_above": "detailed_balance",
    "nonradiative_saturation_current": "detailed_balance",
    "open_circuit_voltage": "detailed_balance", "photocurrent": "detailed_balance",
    "radiative_dark_current": "detailed_balance", "series_mpp": "detailed_balance",
    "series_voltage": "detailed_balance", "single_junction_mpp": "detailed_balance",
    "step_photocurrent": "detailed_balance", "step_radiative_dark_current": "detailed_balance",
    "two_diode_mpp": "detailed_balance", "two_diode_voltage": "detailed_balance",
    "DesignResult": "stack", "Electrical": "stack", "StackPerformance": "stack",
    "detailed_balance_limit": "stack", "evaluate_stack": "stack", "step_stack": "stack",
    # reporting
    "CAUTION": "report", "absorber_summary": "report", "design_summary": "report",
    "match_summary": "report",
    "TandemInputError": "errors",
}
_MODULES = ("maps", "stack", "units", "workflows", "study", "sky", "plots", "design")

__all__ = sorted(_WHERE) + ["__version__"]


def __getattr__(name: str):
    if name in _WHERE:
        value = getattr(importlib.import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    if name in _MODULES:
        return importlib.import_module(f".{name}", __name__)
    raise AttributeError(f"module 'tandem' has no attribute '{name}'")


def __dir__():
    return __all__
