"""Checks of the quantities a detailed-balance calculation takes (one line each when refused).
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.physics import detailed_balance as db
from tandem.physics.spectra import PhotonFlux
from tandem.physics.stack import Electrical

# --------------------------------------------------------------------------------------
# One design, checked and described for people
# --------------------------------------------------------------------------------------


#: Cell temperatures the model accepts [K]: far beyond any solar cell's operating range.
CELL_TEMPERATURE_RANGE_K = (150.0, 500.0)


def check_temperature(temperature_K: float, what: str = "cell temperature") -> None:
    """Refuse a cell temperature outside 150–500 K; a value that looks like °C says so."""
    lo, hi = CELL_TEMPERATURE_RANGE_K
    if math.isfinite(temperature_K) and lo <= temperature_K <= hi:
        return
    hint = (f"did you mean {temperature_K:g}C ({temperature_K + 273.15:g} K)? "
            if math.isfinite(temperature_K) and -100 <= temperature_K < lo else "")
    raise TandemInputError(f"{what} {temperature_K:g} K is outside {lo:g}–{hi:g} K; {hint}give kelvin "
                           "(298.15K) or Celsius with its unit (25C)")


#: Smallest external radiative efficiency accepted: kT·ln(10¹²) = 0.71 V of non-radiative loss
#: at 298 K, beyond any working cell; smaller values (1e-320) overflow J0,rad/ERE.
MIN_ERE = 1e-12


def check_ere(ere: Sequence[float], n_subcells: int) -> np.ndarray:
    """ERE values, one per subcell; one value serves all. Each must lie in [MIN_ERE, 1]."""
    values = [float(x) for x in ere]
    if len(values) == 1:
        values = values * n_subcells
    if len(values) != n_subcells:
        raise TandemInputError(f"ERE has {len(values)} values for {n_subcells} subcells; "
                               "give one value, or one per subcell, front first")
    for v in values:
        if not (MIN_ERE <= v <= 1):
            raise TandemInputError(f"ERE {v:g} is outside {MIN_ERE:g}–1; the external radiative "
                                   "efficiency is a fraction, 1 in the radiative limit (below "
                                   f"{MIN_ERE:g} the non-radiative loss exceeds 0.7 V)")
    return np.array(values)


def check_ideality(ideality: float) -> None:
    """The non-radiative diode's ideality factor: 2/3 (Auger) to 5, finite."""
    if not (math.isfinite(ideality) and 0.5 <= ideality <= 5):
        raise TandemInputError(f"ideality {ideality:g}: give the non-radiative diode's ideality "
                               "factor between 0.5 and 5 (1 = the ERE model alone)")


def check_front_index(index: float) -> None:
    if not (math.isfinite(index) and 1.0 <= index <= 6.0):
        raise TandemInputError(f"front refractive index {index:g}: give a value between 1 and 6 "
                               "(about 2.5 for perovskites, 3.5 for III-V and silicon)")


def electrical_notes(electrical: Electrical, front_index: float, ideality: float,
                     radiative: bool, n_subcells: int = 2) -> tuple[str, ...]:
    """Plain-language notes on the emission convention and the diode model used."""
    notes = []
    if n_subcells == 2:
        if electrical.coupling > 0:
            notes.append(f"the front emits towards the back ({front_index:g}² × its front-face "
                         f"emission, counted as its loss); {100 * electrical.coupling:g} % of "
                         "that emission is collected by the back (luminescent coupling)")
        elif electrical.rear_emission:
            notes.append(f"the front emits towards the back ({front_index:g}² × its front-face "
                         "emission), a loss with no coupling")
        else:
            notes.append("each subcell emits through its front only (perfect selective "
                         "reflector between them, the published convention)")
    if ideality != 1.0:
        notes.append(f"non-radiative diode with ideality {ideality:g}, fixed where the ERE is "
                     "stated: at open circuit under AM1.5G, 1 sun (under other light the ERE "
                     "follows)" + ("; with ERE 1 there is no non-radiative recombination, so "
                                   "the ideality changes nothing" if radiative else ""))
    return tuple(notes)


#: A subcell that collects less than this share of the spectrum's photons "receives no light".
DARK_SHARE = 1e-3


def check_receives_light(j_light, photon_flux: PhotonFlux, what: Sequence[str]) -> None:
    """Refuse a design whose subcell collects (almost) none of the spectrum's photons.

    ``j_light`` holds the best photocurrent each subcell reaches [A/m²] (subcells on the last
    axis), ``what`` a description of each subcell for the message.
    """
    total = db.Q * float(photon_flux.running_count()[-1])
    best = np.max(np.reshape(j_light, (-1, len(what))), axis=0)
    for j, name in zip(best, what):
        if not j > DARK_SHARE * total:
            raise TandemInputError(
                f"{name} receives almost no light ({j / 10:.3g} mA/cm², under "
                f"{100 * DARK_SHARE:g} % of the {total / 10:.1f} mA/cm² of photons in "
                f"'{photon_flux.name}', which reaches up to {photon_flux.energy[-1]:.2f} eV); "
                "choose a lower gap, a thicker layer or a spectrum that covers it")


def check_gap_order(gaps: Sequence[float]) -> None:
    for name, g in zip(("front gap", "back gap") if len(gaps) == 2 else ("gap",), gaps):
        if not (math.isfinite(g) and g > 0):
            raise TandemInputError(f"{name} {g:g} eV: a band gap must be a positive energy in eV")


