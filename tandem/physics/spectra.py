"""Incident spectra: ASTM G173-03 through pvlib, blackbody suns, user CSV files.

A :class:`Spectrum` holds spectral irradiance on a wavelength grid [nm, W m⁻² nm⁻¹]; the
engine works with :class:`PhotonFlux`, the same light as photon flux per energy on an
ascending energy grid [eV, m⁻² s⁻¹ eV⁻¹].
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.units import BB_FLUX_PREFACTOR, HC_EV_NM, K_B_EV, Q, SUN_DILUTION
from tandem.physics.columns import MAX_ROWS, parse_two_columns, read_data_text, spectrum_units
from tandem.physics.spectral_grid import (  # noqa: F401 (re-exported: one place to import from)
    DARK_STEP_EV, EMISSION_FLOOR_EV, photons_between, conserving_grid, dark_below,
    interval_photons, to_energy, trapezoid_weights)

#: Names of the bundled reference spectra and the pvlib column of ASTM G173-03 for each.
REFERENCE_SPECTRA = {
    "am1.5g": ("global", "ASTM G173-03 global tilt (AM1.5G)"),
    "am1.5d": ("direct", "ASTM G173-03 direct + circumsolar (AM1.5D)"),
    "am0": ("extraterrestrial", "ASTM G173-03 extraterrestrial (AM0)"),
}


@dataclass(frozen=True, eq=False)
class Spectrum:
    """Spectral irradiance on an ascending wavelength grid.

    Attributes
    ----------
    name : str
        Human-readable name, also written to reports.
    wavelength_nm : ndarray
        Strictly ascending wavelengths [nm].
    irradiance : ndarray
        Spectral irradiance [W m⁻² nm⁻¹], finite and non-negative.
    notes : tuple of str
        Every change made to the source data (scaling, concentration), for reports.

    Examples
    --------
    >>> import numpy as np
    >>> from tandem import Spectrum
    >>> flat = Spectrum('flat', np.array([300.0, 1000.0]), np.array([1.0, 1.0]))
    >>> flat.integrated_irradiance  # W/m²
    700.0
    """

    name: str
    wavelength_nm: np.ndarray
    irradiance: np.ndarray
    notes: tuple[str, ...] = field(default=())

    def __repr__(self) -> str:  # compact, and by content (it enters job fingerprints)
        return (f"Spectrum({self.name!r}, {self.wavelength_nm.size} points, "
                f"{self.wavelength_nm[0]:g}–{self.wavelength_nm[-1]:g} nm, sha256 {self.digest()[:16]})")

    def digest(self) -> str:
        """SHA-256 of the wavelengths and irradiances (the spectrum's content)."""
        import hashlib

        data = np.ascontiguousarray(self.wavelength_nm, float).tobytes() + \
            np.ascontiguousarray(self.irradiance, float).tobytes()
        return hashlib.sha256(data).hexdigest()

    @property
    def integrated_irradiance(self) -> float:
        """Irradiance [W/m²]: trapezoid rule on the spectrum's own wavelength grid."""
        return float(np.trapezoid(self.irradiance, self.wavelength_nm))

    @property
    def energy_range_eV(self) -> tuple[float, float]:
        """Lowest and highest photon energy on the grid [eV]."""
        return HC_EV_NM / float(self.wavelength_nm[-1]), HC_EV_NM / float(self.wavelength_nm[0])

    @property
    def photon_count(self) -> float:
        """Photon flux [m⁻² s⁻¹], exact for the piecewise-linear spectrum.

        ∫ I(λ)·λ/(hc) dλ: the integrand is quadratic on each interval, so Simpson's rule
        is exact there.
        """
        return float(np.sum(interval_photons(self.wavelength_nm, self.irradiance)))

    def photon_flux(self, tolerance: float = 5e-7) -> PhotonFlux:
        """The same light as photon flux per energy on an ascending energy grid.

        Parameters
        ----------
        tolerance : float
            Largest relative difference allowed between the trapezoid integrals of photons
            and power on the energy grid and the exact integrals of the piecewise-linear
            spectrum on its wavelength grid [-] (see :func:`conserving_grid`).

        Notes
        -----
        Φ(E) = I(λ)·λ/(hc)·|dλ/dE| with |dλ/dE| = hc/E².
        """
        wavelength = conserving_grid(self.wavelength_nm, self.irradiance, tolerance)
        irradiance = np.interp(wavelength, self.wavelength_nm, self.irradiance)
        energy, flux = to_energy(wavelength, irradiance)
        # the grid's points lie on the piecewise-linear spectrum, so each energy interval's
        # photons are known exactly from the wavelength side
        cumulative = np.concatenate(([0.0], np.cumsum(interval_photons(wavelength,
                                                                        irradiance)[::-1])))
        notes = self.notes
        if energy[0] > EMISSION_FLOOR_EV * (1 + 1e-9):
            energy, flux = dark_below(energy, flux)
            cumulative = np.concatenate((np.zeros(energy.size - cumulative.size), cumulative))
            notes += (f"the spectrum ends at {self.wavelength_nm[-1]:g} nm "
                      f"({HC_EV_NM / self.wavelength_nm[-1]:.3f} eV); its flux is "
                      "taken as zero below that, so a gap there absorbs the whole spectrum",)
        return PhotonFlux(
            name=self.name,
            energy=energy,
            flux=flux,
            irradiance=self.integrated_irradiance,
            notes=notes,
            cumulative=cumulative,
        )


@dataclass(frozen=True)
class PhotonFlux:
    """Photon flux per energy on an ascending energy grid.

    Attributes
    ----------
    name : str
        Name of the spectrum it came from.
    energy : ndarray
        Ascending photon energies [eV].
    flux : ndarray
        Photon flux per energy [m⁻² s⁻¹ eV⁻¹].
    irradiance : float
        Incident power used as the efficiency denominator [W/m²].
    notes : tuple of str
        Changes made to the source spectrum (scaling, concentration).
    cumulative : ndarray or None
        Photons from the grid's first point up to each point [m⁻² s⁻¹], exact for the
        piecewise-linear spectrum the flux came from (its wavelength-side integral); None
        for a flux given only on energies, whose running count is the trapezoid rule's.

    Examples
    --------
    >>> import tandem
    >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
    >>> flux.energy[0] < flux.energy[-1], round(flux.irradiance, 2)
    (np.True_, 1000.37)
    """

    name: str
    energy: np.ndarray
    flux: np.ndarray
    irradiance: float
    notes: tuple[str, ...] = field(default=())
    cumulative: np.ndarray | None = field(default=None, repr=False)

    def running_count(self) -> np.ndarray:
        """Photons from the first grid point up to each point [m⁻² s⁻¹] (see ``cumulative``)."""
        if self.cumulative is not None:
            return self.cumulative
        from tandem.physics.detailed_balance import cumulative_flux

        return cumulative_flux(self.energy, self.flux)

    def count_above(self, gap_eV) -> np.ndarray:
        """Photons above each gap [m⁻² s⁻¹]: a step absorber's photon current.

        For a flux made from a spectrum, exact for that piecewise-linear spectrum: whole
        intervals from ``cumulative``, the gap's partial interval in closed form on the
        wavelength side (each interval of the grid lies inside one interval of the spectrum,
        so the irradiance is linear in wavelength there). Otherwise the trapezoid rule's
        count (:func:`~tandem.physics.detailed_balance.flux_above`).

        Examples
        --------
        >>> import tandem
        >>> flux = tandem.reference_spectrum('am1.5g').photon_flux()
        >>> f'{float(flux.count_above(1.12)):.4g}'
        '2.734e+21'
        """
        from tandem.physics.detailed_balance import flux_above

        if self.cumulative is None:
            return flux_above(self.energy, self.flux, gap_eV)
        e, c = self.energy, self.cumulative
        gap = np.asarray(gap_eV, dtype=float)
        i = np.clip(np.searchsorted(e, gap, side="right") - 1, 0, e.size - 2)
        lam_low = HC_EV_NM / e[i]  # the partial interval runs from E_i up to the gap
        lam_gap = np.clip(HC_EV_NM / gap, HC_EV_NM / e[i + 1], lam_low)
        irr_low = self.flux[i] * e[i] ** 3 * Q / HC_EV_NM  # at the point E_i itself
        partial = photons_between(lam_gap, lam_low, self.irradiance_at(lam_gap), irr_low)
        return c[-1] - c[i] - np.clip(partial, 0.0, c[i + 1] - c[i])

    def irradiance_at(self, wavelength_nm) -> np.ndarray:
        """Spectral irradiance [W m⁻² nm⁻¹] at any wavelength inside the grid, linear in
        wavelength between the grid's points (I = Φ·E³·q/hc there: the inverse of
        :func:`to_energy`), as the spectrum it came from is read."""
        lam = HC_EV_NM / self.energy[::-1]
        irr = (self.flux * self.energy**3 * Q / HC_EV_NM)[::-1]
        return np.interp(wavelength_nm, lam, irr)

    def check_gap(self, gap_eV, what: str = "gap") -> None:
        """Raise :class:`TandemInputError` unless every gap lies inside the grid."""
        gaps = np.atleast_1d(np.asarray(gap_eV, dtype=float))
        lo, hi = float(self.energy[0]), float(self.energy[-1])
        bad = gaps[~((gaps > lo) & (gaps < hi))]
        if bad.size:
            g = float(bad[0])
            if not g > 0:
                raise TandemInputError(f"{what} {g:g} eV: a band gap must be a positive energy in eV")
            raise TandemInputError(
                f"{what} {g:g} eV lies outside the spectrum '{self.name}' "
                f"({lo:.3f}–{hi:.3f} eV, {HC_EV_NM / hi:.0f}–{HC_EV_NM / lo:.0f} nm); "
                "choose a gap inside it or a spectrum that covers it"
            )


@functools.lru_cache(maxsize=1)
def astm_g173_table() -> dict:
    """The ASTM G173-03 table shipped with pvlib, read without importing pvlib (which is slow):
    {'wavelength', 'extraterrestrial', 'global', 'direct'} arrays [nm, W m⁻² nm⁻¹].

    ``tests/test_spectra.py`` checks it equals ``pvlib.spectrum.get_reference_spectra``.
    """
    import importlib.util

    spec = importlib.util.find_spec("pvlib")
    if spec is None or not spec.submodule_search_locations:
        raise TandemInputError("the ASTM G173-03 table comes with pvlib, which is not installed; "
                               "install tandem's dependencies")
    path = Path(spec.submodule_search_locations[0]) / "data" / "ASTMG173.csv"
    data = np.loadtxt(path, delimiter=",", skiprows=2)
    return {"wavelength": data[:, 0], "extraterrestrial": data[:, 1], "global": data[:, 2],
            "direct": data[:, 3]}


def reference_spectrum(name: str = "am1.5g") -> Spectrum:
    """One of the ASTM G173-03 reference spectra, read through ``pvlib``.

    Parameters
    ----------
    name : {'am1.5g', 'am1.5d', 'am0'}
        Global tilt (1000.37 W/m²), direct + circumsolar (900.14 W/m²) or
        extraterrestrial (1347.9 W/m² within 280–4000 nm).

    References
    ----------
    ASTM G173-03, Standard Tables for Reference Solar Spectral Irradiances (2003, reapproved 2012).

    Examples
    --------
    >>> from tandem import reference_spectrum
    >>> round(reference_spectrum("am1.5g").integrated_irradiance, 2)
    1000.37
    """
    key = name.lower()
    if key not in REFERENCE_SPECTRA:
        choices = ", ".join(REFERENCE_SPECTRA)
        raise TandemInputError(f"spectrum '{name}' is unknown; choose one of {choices}, "
                               "'blackbody', or a CSV file path")
    column, title = REFERENCE_SPECTRA[key]
    table = astm_g173_table()
    return Spectrum(name=title, wavelength_nm=table["wavelength"].copy(),
                    irradiance=table[column].copy())


def blackbody_sun(
    temperature_K: float = 6000.0,
    concentration: float = 1.0,
    dilution: float = SUN_DILUTION,
    relative_step: float = 0.0015,
) -> Spectrum:
    """A blackbody sun seen from the earth, optionally concentrated.

    Parameters
    ----------
    temperature_K : float
        Sun temperature [K]; 6000 K in De Vos (1980), 5772 K is the effective temperature.
    concentration : float
        Concentration ratio X, from 1 up to the maximum 1/dilution (≈ 46,200).
    dilution : float
        Geometric factor f = (R_sun/d)² [-], ≈ 2.16e-5.
    relative_step : float
        Spacing of the grid as a fraction of the photon energy (geometric grid; 0.0015
        gives about 2 meV near 1.3 eV, ample for room-temperature emission with kT ≈ 26 meV).

    Notes
    -----
    Spectral irradiance I(λ) = f·X·2πhc²/λ⁵ / (exp(hc/(λkT)) − 1), i.e. the hemispherical
    emission of a blackbody diluted by f and concentrated X times.

    References
    ----------
    A. De Vos, J. Phys. D 13 (1980) 839, doi:10.1088/0022-3727/13/5/018.

    Examples
    --------
    >>> from tandem import blackbody_sun
    >>> round(blackbody_sun(6000.0).integrated_irradiance, 1)  # W/m² at one sun
    1589.3
    """
    if not temperature_K > 0 or not math.isfinite(temperature_K):
        raise TandemInputError(f"sun temperature {temperature_K:g} K: give a positive temperature in K")
    max_x = 1.0 / dilution
    if not 0 < concentration <= max_x * (1 + 1e-9):
        raise TandemInputError(
            f"concentration {concentration:g}: must lie in (0, {max_x:,.1f}] (the thermodynamic "
            "maximum 1/f); give a smaller concentration"
        )
    kt = K_B_EV * temperature_K
    # 0.02 eV to 30 kT covers all but ~1e-9 of the sun's power and photons.
    energy = np.geomspace(0.02, 30 * kt, int(np.log(30 * kt / 0.02) / relative_step) + 1)
    flux = dilution * concentration * BB_FLUX_PREFACTOR * energy**2 / np.expm1(energy / kt)
    wavelength = HC_EV_NM / energy[::-1]
    # back from photons per eV to watts per nm: I = Φ · E q · E²/hc
    e_rev = energy[::-1]
    irradiance = flux[::-1] * e_rev * Q * e_rev**2 / HC_EV_NM
    name = f"blackbody sun {temperature_K:g} K"
    notes: tuple[str, ...] = ()
    if concentration == 1:
        name += ", one sun"
    else:
        name += f", {concentration:g} suns"
        notes = (f"blackbody concentrated {concentration:g}× (maximum {max_x:,.0f}×)",)
    return Spectrum(name=name, wavelength_nm=wavelength, irradiance=irradiance, notes=notes)


def read_spectrum_csv(path: str | Path) -> Spectrum:
    """Read a user's two-column spectrum: wavelength [nm], spectral irradiance [W m⁻² nm⁻¹].

    A header stating other units (``wavelength_um``, ``irradiance [W/m2/um]``) is converted;
    wavelengths that can only be µm under no header are refused with the fix.
    Columns are separated by a comma, semicolon, tab or spaces; one header line is allowed;
    lines starting with ``#`` are comments. Wavelengths must rise strictly; irradiance must
    be finite and non-negative. Any bad row raises :class:`TandemInputError` naming it.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from tandem import read_spectrum_csv
    >>> path = pathlib.Path(tempfile.mkdtemp()) / 'flat.csv'
    >>> _ = path.write_text('300,1' + chr(10) + '1000,1' + chr(10))
    >>> read_spectrum_csv(path).integrated_irradiance
    700.0
    """
    path, text = read_data_text(path, "spectrum file",
                                 "wavelength [nm] and irradiance [W m^-2 nm^-1]")
    return parse_spectrum_text(text, str(path), path.name)


#: The spectral irradiance a spectrum may reach [W m⁻² nm⁻¹]: about 500,000 times the sun's
#: peak (about 2 in AM0), beyond sunlight concentrated as far as it can be (about 46,000×)
MAX_SPECTRAL_IRRADIANCE = 1e6
#: The dimmest spectrum taken [W m⁻²]: a millionth of dim indoor light (about 1 W m⁻²); below
#: it every current underflows and a limit of 0 % would be printed as if computed
MIN_IRRADIANCE = 1e-6


def _checked_light(spectrum: Spectrum, where: str) -> Spectrum:
    """``spectrum`` if its light lies between the two limits above, else one line saying so."""
    top = float(spectrum.irradiance.max())
    if top > MAX_SPECTRAL_IRRADIANCE:
        raise TandemInputError(f"{where}: irradiance reaches {top:.3g} W m^-2 nm^-1, above "
                               f"{MAX_SPECTRAL_IRRADIANCE:g} (about 500,000 suns); check the unit "
                               "of the second column (W m^-2 nm^-1)")
    total = spectrum.integrated_irradiance
    if not total > 0:
        raise TandemInputError(f"{where}: irradiance is zero everywhere; check the second column")
    if total < MIN_IRRADIANCE:
        raise TandemInputError(f"{where}: {total:.3g} W/m² in all, too dim for a cell (at least "
                               f"{MIN_IRRADIANCE:g} W/m²); check the unit of the second column")
    return spectrum


def parse_spectrum_text(text: str, where_label: str, name: str) -> Spectrum:
    """The two-column spectrum in ``text`` (see :func:`read_spectrum_csv`); ``where_label``
    names its origin in messages, ``name`` becomes the spectrum's name."""
    label = f"spectrum file '{where_label}'"
    data = parse_two_columns(text, label, "wavelength [nm]", "irradiance [W m^-2 nm^-1]",
                             rising=True, y_min=0.0)
    x_scale, y_scale = spectrum_units(text)  # a header's units are converted
    wavelength, irradiance = data[:, 0] * x_scale, data[:, 1] * y_scale
    top = float(wavelength[-1])
    if x_scale == 1.0 and top < 100.0:  # no solar spectrum ends below 100 nm
        raise TandemInputError(f"{label}: the wavelengths run only to {top:g}, which looks like "
                               "µm; head the first column wavelength_um, or give nm")
    if x_scale != 1.0 and top > 1e5:
        raise TandemInputError(f"{label}: the header says µm but the wavelengths run to "
                               f"{top / 1e3:g} µm; head the column wavelength_nm, or give µm")
    return _checked_light(Spectrum(name=name, wavelength_nm=wavelength, irradiance=irradiance),
                          label)


def scaled(spectrum: Spectrum, factor: float, why: str) -> Spectrum:
    """The spectrum multiplied by ``factor``, with the reason kept in its notes."""
    if not (factor > 0 and math.isfinite(factor)):
        raise TandemInputError(f"scaling factor {factor:g}: must be a positive number")
    return Spectrum(
        name=spectrum.name,
        wavelength_nm=spectrum.wavelength_nm,
        irradiance=spectrum.irradiance * factor,
        notes=spectrum.notes + (why,),
    )


def scaled_to_irradiance(spectrum: Spectrum, target_W_m2: float) -> Spectrum:
    """The spectrum scaled so that it integrates to ``target_W_m2``; the scaling is noted.

    Examples
    --------
    >>> from tandem import reference_spectrum, scaled_to_irradiance
    >>> scaled_to_irradiance(reference_spectrum(), 1000.0).notes
    ('scaled from 1000.37 to 1000.00 W/m²',)
    """
    if not (target_W_m2 > 0 and math.isfinite(target_W_m2)):
        raise TandemInputError(f"irradiance target {target_W_m2:g} W/m²: give a positive value")
    before = spectrum.integrated_irradiance
    return scaled(spectrum, target_W_m2 / before,
                  f"scaled from {before:.2f} to {target_W_m2:.2f} W/m²")


@functools.lru_cache(maxsize=1)
def reference_flux() -> PhotonFlux:
    """AM1.5G (ASTM G173-03 global, 1 sun) as photon flux on its own grid, computed once: the
    light at which an absorber's ERE is stated."""
    return reference_spectrum("am1.5g").photon_flux()


def reference_flux_on(energy_eV) -> PhotonFlux:
    """AM1.5G (ASTM G173-03 global, 1 sun) as photon flux on another energy grid: where an
    absorber's ERE is stated. Linear between its points, zero outside its 0.31–4.43 eV.

    Examples
    --------
    >>> import numpy as np
    >>> from tandem.physics.spectra import reference_flux_on
    >>> f'{float(reference_flux_on(np.array([1.5])).flux[0]):.3e}'  # m⁻² s⁻¹ eV⁻¹
    '2.207e+21'
    """
    ref = reference_flux()
    e = np.asarray(energy_eV, dtype=float)
    return PhotonFlux(ref.name, e, np.interp(e, ref.energy, ref.flux, left=0.0, right=0.0),
                      ref.irradiance, ref.notes)


def load_spectrum(
    source: str = "am1.5g",
    *,
    sun_temperature_K: float = 6000.0,
    concentration: float = 1.0,
    target_irradiance_W_m2: float | None = None,
) -> Spectrum:
    """Resolve a spectrum as the user names it: a reference name, 'blackbody' or a CSV path.

    Concentration multiplies the spectrum (for the blackbody it raises the solid angle of
    the sun, capped at the thermodynamic maximum). A target irradiance rescales the result;
    both changes are recorded in ``Spectrum.notes``, never applied silently.

    Examples
    --------
    >>> from tandem import load_spectrum
    >>> round(load_spectrum('am1.5d').integrated_irradiance, 2)
    900.14
    """
    if not (concentration > 0 and math.isfinite(concentration)):
        raise TandemInputError(f"concentration {concentration:g}: give a positive number of suns")
    max_x = 1.0 / SUN_DILUTION
    if concentration > max_x * (1 + 1e-9):
        # étendue: no optic concentrates sunlight beyond 1/f (the sun's solid angle, π sr over
        # ≈ 6.8e-5 sr); any spectrum of direct sunlight, not only a blackbody
        raise TandemInputError(f"concentration {concentration:g}: above the thermodynamic "
                               f"maximum {max_x:,.1f}× for sunlight (the sun's solid angle "
                               "fills the whole hemisphere there); give at most that")
    key = str(source).lower()
    if key == "blackbody":
        spectrum = blackbody_sun(sun_temperature_K, concentration)
    else:
        if key in REFERENCE_SPECTRA:
            spectrum = reference_spectrum(key)
        elif key.endswith((".csv", ".txt", ".dat")) or Path(source).exists():
            spectrum = read_spectrum_csv(source)
        else:
            spectrum = reference_spectrum(key)  # raises with the list of valid names
        return adjusted(spectrum, concentration, target_irradiance_W_m2)
    return adjusted(spectrum, 1.0, target_irradiance_W_m2)


def adjusted(spectrum: Spectrum, concentration: float = 1.0,
             target_irradiance_W_m2: float | None = None) -> Spectrum:
    """The spectrum concentrated ``concentration`` times, then rescaled to a target
    irradiance [W/m²] if one is given; both changes are kept in its notes."""
    if concentration != 1:
        spectrum = scaled(spectrum, concentration, f"concentrated {concentration:g}×")
    if target_irradiance_W_m2 is not None:
        spectrum = scaled_to_irradiance(spectrum, target_irradiance_W_m2)
    return spectrum


def spectrum_from_arrays(wavelength_nm, irradiance, name: str = "user spectrum") -> Spectrum:
    """A spectrum from arrays, checked as a spectrum file is: wavelengths [nm] positive and
    rising, irradiance [W m⁻² nm⁻¹] finite and non-negative, at most ``MAX_ROWS`` points.

    Examples
    --------
    >>> import numpy as np
    >>> from tandem.physics.spectra import spectrum_from_arrays
    >>> spectrum_from_arrays([300.0, 1000.0], [1.0, 1.0], 'flat').integrated_irradiance
    700.0
    """
    try:
        wl = np.asarray(wavelength_nm, dtype=float)
        irr = np.asarray(irradiance, dtype=float)
    except (TypeError, ValueError):
        raise TandemInputError(f"spectrum '{name}': give numbers (wavelength nm, W m^-2 nm^-1)") from None
    where = f"spectrum '{name}'"
    if wl.ndim != 1 or irr.shape != wl.shape or wl.size < 2:
        raise TandemInputError(f"{where}: give two 1-D arrays of equal length (at least two "
                               "points): wavelength [nm] and irradiance [W m^-2 nm^-1]")
    if wl.size > MAX_ROWS:
        raise TandemInputError(f"{where}: {wl.size:,} points; give at most {MAX_ROWS:,}")
    if not (np.isfinite(wl).all() and np.isfinite(irr).all()):
        raise TandemInputError(f"{where}: a value is not finite; replace it with a number")
    if not (wl[0] > 0 and (np.diff(wl) > 0).all()):
        raise TandemInputError(f"{where}: wavelengths must be positive and rising (nm); sort "
                               "them and remove duplicates")
    if (irr < 0).any():
        raise TandemInputError(f"{where}: irradiance is negative somewhere")
    return _checked_light(Spectrum(name=name, wavelength_nm=wl.copy(), irradiance=irr.copy()),
                          where)
