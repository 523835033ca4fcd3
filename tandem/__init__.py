"""tandem: detailed balance and optics-lite design of two-junction solar cells.

The supported Python API is listed in ``__all__``: the typed inputs (:class:`Light`,
:class:`OperatingPoint`, :class:`Sweep`), one function per job (:func:`limit`, :func:`match`,
:func:`gap_map`, :func:`energy_yield`, :func:`fabrication_spread`) and their result types,
absorbers and spectra, and the physics functions underneath. Users never need to know the
module a name lives in. Heavier parts load on first use, so ``import tandem`` stays quick.
"""

from __future__ import annotations

import importlib

__version__ = "0.3.0"

#: public name -> module that defines it
_WHERE = {
    # inputs and jobs
    "Light": "jobs.inputs", "OperatingPoint": "jobs.inputs", "Sweep": "jobs.inputs",
    "gap_range": "jobs.inputs", "gap_values": "jobs.inputs", "thickness_axis": "jobs.inputs",
    "limit": "jobs.limit", "match": "jobs.match", "gap_map": "jobs.gap_map",
    "energy_yield": "jobs.energy_yield", "energy_yield_stack": "jobs.energy_yield",
    "fabrication_spread": "jobs.spread", "fabrication_spread_stack": "jobs.spread",
    "LimitResult": "jobs.limit", "MatchStudy": "jobs.match", "MapResult": "jobs.gap_map",
    "YieldResult": "jobs.energy_yield", "SpreadResult": "jobs.spread",
    "match_stack": "jobs.stack_match", "StackMatchResult": "jobs.stack_match",
    "measured_eqe": "jobs.eqe", "EQEResult": "jobs.eqe",
    "LayerStack": "design.layerstack", "load_stack": "design.stack_files", "bundled_stacks": "design.stack_files",
    # absorbers, sites and spectra
    "Absorber": "optics.absorbers", "bundled_absorbers": "optics.absorber_files", "load_absorber": "optics.absorber_files",
    "parse_absorber": "optics.absorber_files",
    "Site": "design.sky", "clear_sky_series": "design.sky", "weather_series": "design.weather", "folder_series": "design.weather",
    "parse_period": "design.sky", "SpectralSeries": "design.series",
    "site_from_location": "design.sky", "weather_frame_series": "design.weather",
    "site_series": "jobs.energy_yield", "region_job": "jobs.region",
    "PhotonFlux": "physics.spectra", "Spectrum": "physics.spectra", "blackbody_sun": "physics.spectra",
    "load_spectrum": "physics.spectra", "read_spectrum_csv": "physics.spectra", "reference_spectrum": "physics.spectra",
    "scaled_to_irradiance": "physics.spectra",
    # physics underneath
    "blackbody_photon_flux": "physics.detailed_balance", "cumulative_flux": "physics.detailed_balance",
    "dark_current": "physics.detailed_balance", "diode_current": "physics.detailed_balance",
    "diode_voltage": "physics.detailed_balance", "flux_above": "physics.detailed_balance",
    "nonradiative_saturation_current": "physics.detailed_balance",
    "open_circuit_voltage": "physics.detailed_balance", "photocurrent": "physics.detailed_balance",
    "radiative_dark_current": "physics.detailed_balance", "series_mpp": "physics.detailed_balance",
    "series_voltage": "physics.detailed_balance", "single_junction_mpp": "physics.detailed_balance",
    "step_photocurrent": "physics.detailed_balance", "step_radiative_dark_current": "physics.detailed_balance",
    "two_diode_mpp": "physics.detailed_balance", "two_diode_voltage": "physics.detailed_balance",
    "DesignResult": "physics.limit", "Electrical": "physics.stack", "StackPerformance": "physics.stack",
    "detailed_balance_limit": "physics.limit", "evaluate_stack": "physics.stack", "step_stack": "physics.stack",
    # reporting
    "CAUTION": "output.report", "absorber_summary": "output.report", "design_summary": "output.report",
    "match_summary": "output.report",
    "TandemInputError": "core.errors",
}
#: the layer packages, loaded on first use
_MODULES = ("core", "physics", "optics", "design", "output", "jobs", "study", "cli")

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
