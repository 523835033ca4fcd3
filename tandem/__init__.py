"""tandem: detailed balance and optics-lite design of two-junction solar cells.

The public functions are re-exported here, so users never need to know the module.
"""

from .detailed_balance import (
    blackbody_photon_flux,
    cumulative_flux,
    dark_current,
    diode_current,
    diode_voltage,
    flux_above,
    open_circuit_voltage,
    photocurrent,
    radiative_dark_current,
    series_mpp,
    series_voltage,
    single_junction_mpp,
    step_photocurrent,
    step_radiative_dark_current,
)
from .absorbers import Absorber, bundled_absorbers, load_absorber, parse_absorber
from .errors import TandemInputError
from .report import CAUTION, absorber_summary, design_summary, match_summary
from .spectra import (
    PhotonFlux,
    Spectrum,
    blackbody_sun,
    load_spectrum,
    read_spectrum_csv,
    reference_spectrum,
    scaled_to_irradiance,
)
from . import maps, stack
from .stack import DesignResult, StackPerformance, detailed_balance_limit, evaluate_stack, step_stack

__version__ = "0.2.0"

__all__ = [name for name in dir() if not name.startswith("_")]
