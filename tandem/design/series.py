"""Spectra over time: a series of plane-of-array spectra held as factors, and the reduced
photon basis the yield computes photocurrents in (:class:`SpectralSeries`, :class:`FluxBasis`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from tandem.physics.spectra import conserving_grid, to_energy, trapezoid_weights


@dataclass(frozen=True)
class FluxBasis:
    """Photon fluxes of a series in a reduced basis: Φ(t, E) ≈ coefficients(t) · basis.

    The basis is orthonormal in the trapezoid-weighted inner product on ``energy``, so the
    dropped part of each step is measured in the norm that photocurrents see. For any
    absorptance 0 ≤ a(E) ≤ 1, Cauchy–Schwarz bounds the photocurrent error of a step by
    ``bound`` times the step's whole photocurrent on the grid:
    |ΔJ_t| ≤ q · (Σ w)^½ · ‖ΔΦ_t‖_w  (w: trapezoid weights).

    The coefficients are not stored: each step's are its series factors times
    ``projection``, formed for the steps in use (about 1 kB per step stays held).
    """

    energy: np.ndarray  #: (nE,) ascending [eV]
    factors: np.ndarray  #: (n_t, k) the series' own coefficients
    projection: np.ndarray  #: (k, r)
    basis: np.ndarray  #: (r, nE) [m⁻² s⁻¹ eV⁻¹ per unit coefficient]
    bound: float  #: the largest relative photocurrent error bound over the steps

    @property
    def rank(self) -> int:
        return int(self.basis.shape[0])

    def coefficients(self, idx=slice(None)) -> np.ndarray:
        """(n, r) coordinates of steps ``idx`` in the basis."""
        return self.factors[idx] @ self.projection

    def rows(self, idx=slice(None)) -> np.ndarray:
        """Dense fluxes of steps ``idx`` (n, nE) [m⁻² s⁻¹ eV⁻¹]: for small selections only."""
        return self.coefficients(idx) @ self.basis


#: Default photocurrent error bound of the reduced basis (relative, per step).
BASIS_TOLERANCE = 1e-9


def one_blas_thread():
    """A series' many small matrix products (steps × energies: its basis, a yield's sums) run
    fastest on one BLAS thread: two threads contend on two busy cores (measured: a basis took
    2.6 s CPU on two threads of a loaded machine, 0.095 s on one; see DEVELOPERS.md)."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def reduced_basis(energy, coefficients, basis, tolerance: float = BASIS_TOLERANCE) -> FluxBasis:
    """The smallest orthonormal basis whose per-step photocurrent bound is ≤ ``tolerance``.

    ``coefficients @ basis`` (n_t × k, k × nE) are the fluxes; k is small (SPECTRL2's 122
    wavelengths), so the dense matrix is never formed: a QR factorisation of the
    coefficients and an SVD of the k × nE core give the truncated SVD exactly (Golub & Van
    Loan, Matrix Computations, 4th ed., §2.4 and §5.2).
    """
    sw = np.sqrt(trapezoid_weights(energy))
    weighted = basis * sw
    q, r = np.linalg.qr(np.asarray(coefficients, dtype=float))
    u, s, vt = np.linalg.svd(r @ weighted, full_matrices=False)
    coeff = q @ (u * s)  # (n_t, k): rows' coordinates in the orthonormal basis vt
    total = coeff @ (vt @ sw)  # Σ w Φ_t: each step's photons on the grid
    # tail[:, m] = ‖Φ_t − first m terms‖_w, as a share of the step's photocurrent
    tail = np.sqrt(np.cumsum((coeff**2)[:, ::-1], axis=1)[:, ::-1])
    tail = np.append(tail, np.zeros((tail.shape[0], 1)), axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        worst = np.max(np.where(total[:, None] > 0, np.linalg.norm(sw) * tail / total[:, None],
                                0.0), axis=0)
    rank = max(int(np.argmax(worst <= tolerance)), 1)
    return FluxBasis(energy, coefficients, weighted @ vt[:rank].T, vt[:rank] / sw,
                     float(worst[rank]))


@dataclass(frozen=True)
class SpectralSeries:
    """Plane-of-array spectra over time on one wavelength grid, held as factors.

    The spectra are ``coefficients @ basis`` (n_t × k, k × n_wl): SPECTRL2 skies are linear
    in its 122 wavelengths, so a year at 15-minute steps needs about 1 kB per step instead of
    16 kB. :meth:`from_spectra` factorises dense spectra (measured folders, tests).

    Examples
    --------
    >>> from tandem import Site, clear_sky_series, parse_period
    >>> site = Site('field', latitude=38.5, longitude=-3.0, timezone='Etc/GMT-1')
    >>> series = clear_sky_series(site, parse_period('day:2026-06-21', site.timezone, 60))
    >>> 5 < series.insolation_kWh_m2 < 10
    True
    """

    times: pd.DatetimeIndex  #: middle of each step
    wavelength_nm: np.ndarray  #: (n_wl,)
    coefficients: np.ndarray  #: (n_t, k)
    basis: np.ndarray  #: (k, n_wl) [W m⁻² nm⁻¹ per unit coefficient]
    cell_temperature_K: np.ndarray  #: (n_t,)
    step_hours: np.ndarray  #: (n_t,) duration each spectrum stands for [h]
    source: str
    notes: tuple[str, ...] = field(default=())
    #: rear-to-front plane-of-array irradiance of each step (bifacial rows), or None
    rear_ratio: np.ndarray | None = None
    #: share of the rear face open to light (and so to emission): the rows' bifaciality
    bifaciality: float = 0.0
    #: share of each step's plane-of-array light the front cover lets through (its
    #: incidence-angle loss); the spectra are the light past the cover, None: no cover
    past_cover: np.ndarray | None = None
    #: each step's angle of incidence on the plane [°], where the sky model knows it
    aoi_deg: np.ndarray | None = None
    #: (n_t, k) factors of the direct beam and of the sky and ground light as they arrive
    #: (before any cover), for layer stacks that take each at its own angles; or None
    arriving_direct: np.ndarray | None = None
    arriving_diffuse: np.ndarray | None = None

    @classmethod
    def from_spectra(cls, times, wavelength_nm, irradiance, cell_temperature_K, step_hours,
                     source: str, notes: tuple[str, ...] = ()) -> "SpectralSeries":
        """A series from dense spectra (n_t, n_wl) [W m⁻² nm⁻¹], factorised exactly (SVD)."""
        irradiance = np.asarray(irradiance, dtype=float)
        u, s, vt = np.linalg.svd(irradiance, full_matrices=False)
        keep = max(int(np.sum(s > s[0] * 1e-15)), 1) if s.size and s[0] > 0 else 1
        return cls(times, np.asarray(wavelength_nm, float), u[:, :keep] * s[:keep], vt[:keep],
                   np.asarray(cell_temperature_K, float), np.asarray(step_hours, float),
                   source, tuple(notes))

    @property
    def irradiance(self) -> np.ndarray:
        """Dense spectra (n_t, n_wl) [W m⁻² nm⁻¹], formed on demand (16 kB per step)."""
        return self.coefficients @ self.basis

    def photon_basis(self, tolerance: float = BASIS_TOLERANCE) -> FluxBasis:
        """Photon fluxes on one energy grid in a reduced basis (:func:`reduced_basis`).

        The grid is refined (:func:`~tandem.physics.spectra.conserving_grid`) so that the
        time-weighted mean spectrum keeps its photons and power.
        """
        cache = self.__dict__.setdefault("_bases", {})  # the series is frozen: compute once
        if tolerance not in cache:
            energy, rows = self._energy_rows()
            with one_blas_thread():  # wherever it is first asked (a job reads .energy early)
                cache[tolerance] = reduced_basis(energy, self.coefficients, rows, tolerance)
        return cache[tolerance]

    @property
    def has_parts(self) -> bool:
        """Whether the arriving direct and diffuse light and the angles are known."""
        return self.arriving_direct is not None and self.aoi_deg is not None

    def parts_basis(self, tolerance: float = BASIS_TOLERANCE) -> FluxBasis:
        """The arriving direct beam (rows 0…n_t − 1) and diffuse light (rows n_t…2n_t − 1) in
        one reduced basis on :meth:`photon_basis`'s energy grid, with the same bound."""
        if not self.has_parts:
            raise ValueError("this series does not know its direct and diffuse parts")
        cache = self.__dict__.setdefault("_part_bases", {})
        if tolerance not in cache:
            energy, rows = self._energy_rows()
            parts = np.concatenate([self.arriving_direct, self.arriving_diffuse])
            with one_blas_thread():
                cache[tolerance] = reduced_basis(energy, parts, rows, tolerance)
        return cache[tolerance]

    def _energy_rows(self):
        """(energy grid, the basis rows as photon fluxes on it), computed once."""
        if "_rows_on_energy" not in self.__dict__:
            weights = self.step_hours / max(float(np.sum(self.step_hours)), 1e-300)
            grid = conserving_grid(self.wavelength_nm, (weights @ self.coefficients) @ self.basis)
            rows = self.basis if grid.size == self.wavelength_nm.size else \
                np.stack([np.interp(grid, self.wavelength_nm, b) for b in self.basis])
            self.__dict__["_rows_on_energy"] = to_energy(grid, rows)
        return self.__dict__["_rows_on_energy"]

    @property
    def energy(self) -> np.ndarray:
        """The photon-energy grid of :meth:`photon_basis` [eV]."""
        return self.photon_basis().energy

    @property
    def step_irradiance(self) -> np.ndarray:
        """Plane-of-array irradiance of each step, as it arrives (before the cover) [W/m²]."""
        cached = self.__dict__.get("_step_irradiance")
        if cached is None:
            cached = self.coefficients @ np.trapezoid(self.basis, self.wavelength_nm, axis=-1)
            if self.past_cover is not None:  # the light arriving, before the cover's loss
                cached = cached / np.where(self.past_cover > 0, self.past_cover, 1.0)
            object.__setattr__(self, "_step_irradiance", cached)
        return cached

    @property
    def insolation_kWh_m2(self) -> float:
        return float(np.sum(self.step_irradiance * self.step_hours) / 1000.0)

    @property
    def rear_insolation_kWh_m2(self) -> float:
        """Light on the module's rear over the period [kWh/m²] (0 for monofacial)."""
        if self.rear_ratio is None:
            return 0.0
        return float(np.sum(self.rear_ratio * self.step_irradiance * self.step_hours) / 1000.0)
