"""The constants written out in tandem.core.units are scipy's CODATA 2018 values (validation against
a general-purpose library), and the ASTM G173-03 table read directly is pvlib's."""

import numpy as np
import pytest
from scipy import constants

from tandem.core import units
from tandem.physics.spectra import astm_g173_table


def test_constants_are_codata_2018():
    assert units.Q == constants.e
    assert units.K_B_EV == pytest.approx(constants.k / constants.e, rel=1e-15)
    assert units.HC_EV_NM == pytest.approx(constants.h * constants.c / constants.e * 1e9, rel=1e-15)
    assert units.BB_FLUX_PREFACTOR == pytest.approx(
        2 * constants.pi * constants.e**3 / (constants.h**3 * constants.c**2), rel=1e-14)
    assert units.SUN_DILUTION == pytest.approx((6.957e8 / constants.au) ** 2, rel=1e-15)


def test_g173_read_directly_equals_pvlib():
    # ASTM G173-03 as pvlib reads it (pandas), against the direct read tandem uses
    import pvlib

    ref = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    ours = astm_g173_table()
    np.testing.assert_array_equal(ours["wavelength"], ref.index.to_numpy(dtype=float))
    for column in ("extraterrestrial", "global", "direct"):
        # to the last bit but one: pvlib 0.11 parses the CSV with pandas' fast (not correctly
        # rounded) float reader, 8 of 2,002 values differ by 1 ulp (2e-16 relative) there
        np.testing.assert_allclose(ours[column], ref[column].to_numpy(dtype=float), rtol=4.5e-16,
                                   atol=0)


@pytest.mark.parametrize("text, kelvin", [("25C", 298.15), ("-40C", 233.15), ("65C", 338.15),
                                          ("300K", 300.0), ("0C", 273.15)])
def test_celsius_is_kelvin_minus_273_15(text, kelvin):
    # SI: T/K = t/°C + 273.15, exactly (BIPM, the SI Brochure, 9th edition, 2019)
    from tandem.jobs.inputs import parse_temperature

    assert parse_temperature(text) == pytest.approx(kelvin, abs=1e-12)
