"""Absorption-edge models: α(E) for an absorber, and the registry that reads them from files.

An absorber file names its model in ``[absorption] model``; each name is registered here
with the class that computes α, the keys it reads and the function that reads them. A new
model is one class (with ``movable`` and ``alpha(energy_eV, gap_eV)``) and one
:func:`register_edge_model` call; the file schema, the error for an unknown model, the
refusal of another model's keys, gap sweeps and study manifests all follow from it.

References
----------
F. Urbach, Phys. Rev. 92 (1953) 1324, doi:10.1103/PhysRev.92.1324 (exponential tail).
G. E. Jellison, F. A. Modine, Appl. Phys. Lett. 69 (1996) 371 (Tauc–Lorentz oscillator).
J. Tauc, R. Grigorovici, A. Vancu, Phys. Status Solidi 15 (1966) 627 (power-law edges,
p = 1/2 direct, p = 2 indirect/amorphous).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable, ClassVar, Protocol

import numpy as np

from tandem.core.toml_files import Checker
from tandem.core.units import HC_EV_NM
from tandem.optics.database import DatabaseEntryError, NkTableError, database_alpha, read_nk_table
from tandem.optics.oscillators import index_from_epsilon, tauc_lorentz_epsilon
from tandem.physics.columns import parse_two_columns, read_data_text


class Edge(Protocol):
    """What an absorber needs from an edge model."""

    movable: ClassVar[bool]  #: True if α depends on E − Eg only (the gap may be moved)

    def alpha(self, energy_eV, gap_eV) -> np.ndarray:
        """α [cm⁻¹] on an energy grid [eV]; a fixed edge ignores ``gap_eV``."""
        ...


@dataclass(frozen=True)
class ParametricEdge:
    """α(E) from a gap, an Urbach tail below it and a power law above it.

    α = α_g·exp((E − Eg)/E_U) for E < Eg; α = α_g + S·((E − Eg)/1 eV)^p above, with
    p = 1/2 for a direct gap and p = 2 for an indirect (or Tauc-like amorphous) edge.
    Continuous at Eg and positive everywhere.
    """

    movable: ClassVar[bool] = True  #: α depends on E − Eg only: the gap can be tuned or swept

    shape: str  #: 'direct' or 'indirect'
    urbach_energy_eV: float  #: E_U [eV]
    alpha_at_gap_per_cm: float  #: α_g [cm⁻¹]
    strength_per_cm: float  #: S [cm⁻¹]

    def alpha(self, energy_eV, gap_eV):
        energy = np.asarray(energy_eV, dtype=float)
        above = np.maximum(energy - gap_eV, 0.0)
        power = 0.5 if self.shape == "direct" else 2.0
        tail = self.alpha_at_gap_per_cm * np.exp(np.minimum(energy - gap_eV, 0.0)
                                                 / self.urbach_energy_eV)
        return np.where(energy < gap_eV, tail,
                        self.alpha_at_gap_per_cm + self.strength_per_cm * above**power)


@dataclass(frozen=True)
class TabulatedEdge:
    """α(E) from a table (log-linear interpolation), with an Urbach tail below the table.

    Above the table α keeps its last value; below it falls as exp((E − E_low)/E_U) from the
    lowest tabulated point, so α stays continuous and positive.
    """

    movable: ClassVar[bool] = False  #: the data fix the gap

    energy_eV: np.ndarray  #: ascending [eV]
    alpha_per_cm: np.ndarray  #: positive [cm⁻¹]
    urbach_energy_eV: float  #: slope of the extrapolated tail [eV]
    origin: str  #: where the table came from
    #: (wavelength nm ascending, n) when the table gave n too: the absorber's dispersive n
    index: tuple[np.ndarray, np.ndarray] | None = None

    def alpha(self, energy_eV, gap_eV=None):  # the gap of a table is fixed by its data
        energy = np.asarray(energy_eV, dtype=float)
        log_alpha = np.interp(energy, self.energy_eV, np.log(self.alpha_per_cm))
        low_e, low_a = self.energy_eV[0], self.alpha_per_cm[0]
        tail = low_a * np.exp(np.minimum(energy - low_e, 0.0) / self.urbach_energy_eV)
        return np.where(energy < low_e, tail, np.exp(log_alpha))


@dataclass(frozen=True)
class BandEdge:
    """α(E) as a sum of Gaussian absorption bands above an onset (dyes, organic blends): a
    band rises and falls again, unlike an edge.

    α = Σ α_k·exp(−(E − E_k)²/(2σ_k²)) above the onset Eg, with peak α_k [cm⁻¹], centre E_k
    and width σ_k [eV]; below it an Urbach tail α(Eg)·exp((E − Eg)/E_U). A Gaussian's own
    wing is not used below the onset: with σ² > kT·E_k it would make the reciprocity dark
    current grow without bound toward 0 eV, which no real film does.
    """

    movable: ClassVar[bool] = False  #: the bands fix the onset

    bands: tuple[tuple[float, float, float], ...]  #: (centre eV, σ eV, peak cm⁻¹) each
    urbach_energy_eV: float  #: E_U below the onset [eV]
    onset_eV: float  #: Eg, where the tail takes over [eV]

    def _bands(self, energy):
        total = np.zeros(np.shape(energy))
        for centre, width, peak in self.bands:
            total = total + peak * np.exp(-0.5 * ((energy - centre) / width) ** 2)
        return total

    def alpha(self, energy_eV, gap_eV=None):  # the bands are fixed by the description
        energy = np.asarray(energy_eV, dtype=float)
        at_onset = self._bands(np.array(self.onset_eV))
        tail = at_onset * np.exp(np.minimum(energy - self.onset_eV, 0.0) / self.urbach_energy_eV)
        return np.where(energy < self.onset_eV, tail, self._bands(energy))


@dataclass(frozen=True)
class TaucLorentzEdge:
    """α(E) and n(λ) from a Tauc–Lorentz oscillator (:mod:`tandem.optics.oscillators`), with
    an Urbach tail below the energy E_t where the oscillator's own logarithmic slope
    d ln α/dE falls to 1/E_U: α and its slope are continuous there.

    The oscillator alone has α ∝ (E − E_g)² at its gap (no tail, zero at E_g); joining the
    tail where the slopes agree is this tool's choice, in the spirit of the Urbach-extended
    oscillator models (e.g. Ferlauto et al., J. Appl. Phys. 92 (2002) 2424, recalled).
    Layer stacks take n (and k = αλ/4π) from the same ε, so n and α come from one
    Kramers–Kronig-consistent source.
    """

    movable: ClassVar[bool] = False  #: the oscillator fixes the gap

    amplitude_eV: float  #: A
    resonance_eV: float  #: E₀
    broadening_eV: float  #: C
    eps_infinity: float  #: ε∞
    gap_eV: float  #: the Tauc gap E_g
    urbach_energy_eV: float  #: E_U of the tail below E_t
    join_eV: float  #: E_t, where the tail takes over
    #: (wavelength nm ascending, n) of the oscillator: the absorber's dispersive n in stacks
    index: tuple[np.ndarray, np.ndarray]

    @property
    def origin(self) -> str:
        return (f"Tauc–Lorentz oscillator (A {self.amplitude_eV:g} eV, E0 {self.resonance_eV:g} eV, "
                f"C {self.broadening_eV:g} eV, ε∞ {self.eps_infinity:g}); Urbach tail below "
                f"{self.join_eV:.3f} eV")

    @staticmethod
    def oscillator_alpha(energy_eV, amplitude_eV, resonance_eV, broadening_eV, gap_eV,
                         eps_infinity) -> np.ndarray:
        """α = 4πk/λ [cm⁻¹] of the oscillator alone (no tail)."""
        energy = np.asarray(energy_eV, dtype=float)
        k = index_from_epsilon(tauc_lorentz_epsilon(energy, amplitude_eV, resonance_eV,
                                                    broadening_eV, gap_eV, eps_infinity)).imag
        return 4 * np.pi * k * energy / (HC_EV_NM * 1e-7)  # λ [cm] = hc/E

    @classmethod
    def build(cls, amplitude_eV, resonance_eV, broadening_eV, eps_infinity, gap_eV,
              urbach_energy_eV) -> "TaucLorentzEdge":
        """The edge with its join E_t (the first energy above E_g where the slopes agree)."""
        from scipy.optimize import brentq

        pars = (amplitude_eV, resonance_eV, broadening_eV, gap_eV, eps_infinity)

        def excess_slope(e):  # d ln α/dE − 1/E_U, by a central difference well inside (E_g, e)
            h = 1e-4 * (e - gap_eV)
            lo, hi = cls.oscillator_alpha(np.array([e - h, e + h]), *pars)
            return (np.log(hi) - np.log(lo)) / (2 * h) - 1.0 / urbach_energy_eV

        # near E_g α ∝ (E − E_g)²: the slope 2/(E − E_g) starts far above 1/E_U and falls
        grid = gap_eV + np.geomspace(1e-6, 8.0, 400)
        slope = np.array([excess_slope(e) for e in grid])
        below = np.flatnonzero(slope < 0)
        join = (float(brentq(excess_slope, grid[below[0] - 1], grid[below[0]], xtol=1e-12))
                if below.size else float(grid[-1]))
        wavelength = np.geomspace(100.0, 20000.0, 4000)  # past the spectra's 280–4000 nm
        n = index_from_epsilon(tauc_lorentz_epsilon(HC_EV_NM / wavelength, *pars[:4],
                                                    eps_infinity)).real
        return cls(float(amplitude_eV), float(resonance_eV), float(broadening_eV),
                   float(eps_infinity), float(gap_eV), float(urbach_energy_eV), join, (wavelength, n))

    def alpha(self, energy_eV, gap_eV=None):  # the oscillator fixes the gap
        energy = np.asarray(energy_eV, dtype=float)
        pars = (self.amplitude_eV, self.resonance_eV, self.broadening_eV, self.gap_eV,
                self.eps_infinity)
        at_join = self.oscillator_alpha(np.array(self.join_eV), *pars)
        tail = at_join * np.exp(np.minimum(energy - self.join_eV, 0.0) / self.urbach_energy_eV)
        return np.where(energy < self.join_eV, tail,
                        self.oscillator_alpha(np.maximum(energy, self.join_eV), *pars))


@dataclass(frozen=True)
class EdgeModel:
    """One registered model: how an absorber file's ``[absorption]`` section becomes an edge."""

    name: str  #: the value of ``[absorption] model``
    read: Callable[[Checker, float, float], Edge]  #: (checker, Urbach energy eV, gap eV) -> edge
    keys: dict[str, str]  #: the [absorption] keys it reads -> their kind (see Checker)
    movable: bool  #: the gap may be moved (a composition relation, gap sweeps)
    data_file_key: str | None = None  #: a key naming a file beside the absorber file


#: name -> model, in registration order
EDGE_MODELS: dict[str, EdgeModel] = {}


def register_edge_model(name: str, edge_class: type[Edge], read: Callable[[Checker, float, float], Edge],
                        keys: dict[str, str], data_file_key: str | None = None) -> EdgeModel:
    """Make ``[absorption] model = name`` read by ``read`` into an ``edge_class``."""
    if name in EDGE_MODELS:
        raise ValueError(f"edge model '{name}' is already registered")
    if data_file_key is not None and data_file_key not in keys:
        raise ValueError(f"edge model '{name}': data_file_key '{data_file_key}' is not one of its keys")
    model = EdgeModel(name, read, dict(keys), bool(edge_class.movable), data_file_key)
    EDGE_MODELS[name] = model
    return model


# --- the readers of the bundled models ----------------------------------------------------


def _need(c: Checker, model: str, keys: tuple[str, ...], unit: str, low: float, high: float):
    values = []
    for key in keys:
        if c.get("absorption", key) is None:
            c.fail(f"absorption.{key}", "is missing",
                   f"a {model} edge needs {' and '.join(keys)} ({unit})")
        values.append(float(c.positive("absorption", key, unit, low=low, high=high)))
    return values


def _read_power_law(shape: str):
    def read(c: Checker, urbach_eV: float, gap_eV: float) -> ParametricEdge:
        at_gap, strength = _need(c, shape, ("alpha_at_gap_per_cm", "strength_per_cm"), "cm^-1",
                                 1e-3, 1e8)
        return ParametricEdge(shape, urbach_eV, at_gap, strength)
    return read


def _read_bands(c: Checker, urbach_eV: float, onset_eV: float) -> BandEdge:
    bands = c.get("absorption", "bands")
    if not bands:
        c.fail("absorption.bands", "is missing", "give bands = [{centre_eV = 2.3, width_eV = 0.25, "
               "peak_per_cm = 3e3}, ...]")
    out = []
    for i, band in enumerate(bands, 1):
        if not isinstance(band, dict) or set(band) != {"centre_eV", "width_eV", "peak_per_cm"}:
            c.fail(f"absorption.bands[{i}]", "must have centre_eV, width_eV and peak_per_cm",
                   "write {centre_eV = 2.3, width_eV = 0.25, peak_per_cm = 3e3}")
        for key, lo, hi in (("centre_eV", 0.2, 10.0), ("width_eV", 0.005, 3.0),
                            ("peak_per_cm", 1e-3, 1e8)):
            v = band[key]
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not lo <= v <= hi:
                c.fail(f"absorption.bands[{i}].{key}", f"= {v!r} is outside {lo:g}–{hi:g}",
                       "check the value and its unit")
        out.append((float(band["centre_eV"]), float(band["width_eV"]), float(band["peak_per_cm"])))
    return BandEdge(tuple(out), urbach_eV, onset_eV)


#: Units a table's header may state, as the factor to nm, eV or cm⁻¹.
_ENERGY_UNITS = {"ev": 1.0, "mev": 1e-3}
_ALPHA_UNITS = {"cm": 1.0, "m": 1e-2, "um": 1e4, "µm": 1e4, "mm": 10.0}


class TableHeaderError(ValueError):
    """A table header that contradicts the declared axis: (problem, fix)."""


def table_units(text: str, axis: str) -> tuple[float, float]:
    """Factors taking a two-column α table's values to nm (or eV) and cm⁻¹, from its header.

    A header names each column's quantity and unit (``wavelength_nm``, ``wavelength [um]``,
    ``energy_eV``, ``alpha_per_cm``, ``alpha [1/m]``, ``alpha (m^-1)``): a stated unit is
    converted; a header naming the other axis than ``table_axis`` is refused with the fix.
    No header: nm (or eV) and cm⁻¹, as the format says.
    """
    import re

    from tandem.physics.columns import header_cells, wavelength_factor

    header = header_cells(text)
    if header is None:
        return 1.0, 1.0
    if len(header) != 2:
        raise TableHeaderError(f"has the header '{' '.join(header)[:60]}', which does not name "
                               "two columns",
                               "head them e.g. wavelength_nm,alpha_per_cm")
    first, second = (h.strip().lower() for h in header)
    words = re.split(r"[^a-zµ]+", first)
    says_energy = "energy" in words or "ev" in words or "mev" in words
    says_wavelength = any(w in words for w in ("wavelength", "lambda", "nm", "um", "µm"))
    if axis == "wavelength_nm" and says_energy:
        raise TableHeaderError(f"heads its first column '{header[0].strip()}' while table_axis "
                               "is wavelength_nm", "set table_axis = \"energy_eV\" in [absorption]")
    if axis == "energy_eV" and says_wavelength and not says_energy:
        raise TableHeaderError(f"heads its first column '{header[0].strip()}' while table_axis "
                               "is energy_eV", "remove table_axis (wavelengths in nm)")
    x_scale = (wavelength_factor(first) if axis == "wavelength_nm"
               else next((_ENERGY_UNITS[w] for w in words if w in _ENERGY_UNITS), 1.0))
    # the α column: 'alpha_per_m', 'alpha [1/m]', 'alpha (m^-1)', 'a_cm-1' ...
    unit = re.search(r"(?:per[_ ]?|1/|/)(cm|mm|um|µm|m)\b|\b(cm|mm|um|µm|m)\s*(?:\^?-1|⁻¹)", second)
    alpha_scale = _ALPHA_UNITS[unit.group(1) or unit.group(2)] if unit else 1.0
    return x_scale, alpha_scale


def _beside(c: Checker, key: str, rel: str) -> Path:
    """The data file ``[absorption] key`` names, beside the absorber file (or one line)."""
    path = c.path.parent / rel
    if not path.is_file():
        c.fail(f"absorption.{key}", f"= '{path.name}' not found next to the absorber file",
               "put the CSV beside the .toml or fix the path")
    return path


def _refuse_outside_sun(c: Checker, key: str, path: Path, energy, verb: str, likely: str) -> None:
    """A table whose energies meet none of any solar spectrum (0.3–4.5 eV) is a unit mistake."""
    if energy.max() < 0.3 or energy.min() > 4.5:
        c.fail(f"absorption.{key}", f"'{path.name}' {verb} {energy.min():.3g}–{energy.max():.3g} "
               "eV, none of the solar spectrum (0.3–4.5 eV)", likely)


def _read_table(c: Checker, urbach_eV: float, gap_eV: float) -> TabulatedEdge:
    rel = c.get("absorption", "table")
    if rel is None:
        c.fail("absorption.table", "is missing", "give the CSV file with the α table")
    axis = c.get("absorption", "table_axis", "wavelength_nm")
    if axis not in ("wavelength_nm", "energy_eV"):
        c.fail("absorption.table_axis", f"= {axis!r} is not known", "use 'wavelength_nm' or 'energy_eV'")
    path = _beside(c, "table", rel)
    x_name = "wavelength [nm]" if axis == "wavelength_nm" else "energy [eV]"
    # one read: the numbers, and the header that states their units
    path, text = read_data_text(path, "absorption table", f"{x_name}, alpha [cm^-1]")
    data = parse_two_columns(text, f"absorption table '{path}'", x_name, "alpha [cm^-1]",
                             rising=False, positive=True)
    try:
        x_scale, alpha_scale = table_units(text, axis)
    except TableHeaderError as exc:
        c.fail("absorption.table", f"'{path.name}' {exc.args[0]}", exc.args[1])
    x, alpha = data[:, 0] * x_scale, data[:, 1] * alpha_scale
    energy = HC_EV_NM / x if axis == "wavelength_nm" else x
    _refuse_outside_sun(c, "table", path, energy, "covers",
                        "wavelengths in µm? head the column wavelength_um, or give nm"
                        if axis == "wavelength_nm" and x.max() < 20 else
                        "energies in eV? check table_axis" if axis == "energy_eV" else
                        "check the unit")
    order = np.argsort(energy)  # distinct: parse_two_columns refuses a point given twice
    return TabulatedEdge(energy[order], alpha[order], urbach_eV, f"table {rel}")


def _read_database(c: Checker, urbach_eV: float, gap_eV: float) -> TabulatedEdge:
    entry = c.get("absorption", "database")
    if entry is None:
        c.fail("absorption.database", "is missing",
               "give the refractive-index database entry as 'shelf/book/page', e.g. 'main/Si/Green-2008'")
    try:
        energy, alpha = database_alpha(entry)
    except DatabaseEntryError as exc:
        c.fail("absorption.database", f"= {entry!r}: {exc}", "check the entry name")
    return TabulatedEdge(energy, alpha, urbach_eV, f"refractive-index database {entry}")


def _read_nk(c: Checker, urbach_eV: float, gap_eV: float) -> TabulatedEdge:
    """An n,k table (wavelength nm, n, k): α = 4πk/λ where k > 0, and n for layer stacks."""
    rel = c.get("absorption", "nk_table")
    if rel is None:
        c.fail("absorption.nk_table", "is missing", "give the CSV of wavelength nm, n, k")
    path = _beside(c, "nk_table", rel)
    try:
        wavelength, nk = read_nk_table(path)
    except NkTableError as exc:
        c.fail("absorption.nk_table", exc.args[0], exc.args[1])
    alpha = 4 * np.pi * nk.imag / (wavelength * 1e-7)  # [cm⁻¹], λ in cm
    keep = alpha > 0  # below the gap k = 0: the Urbach tail extends α there
    if np.count_nonzero(keep) < 2:
        c.fail("absorption.nk_table", f"'{path.name}' has fewer than two rows with k > 0",
               "give the absorbing range: α = 4πk/λ needs k > 0")
    energy = HC_EV_NM / wavelength[keep]
    _refuse_outside_sun(c, "nk_table", path, energy, "absorbs only at", "check the unit")
    order = np.argsort(energy)
    return TabulatedEdge(energy[order], alpha[keep][order], urbach_eV, f"n,k table {rel}",
                         (wavelength, nk.real))


def _read_tauc_lorentz(c: Checker, urbach_eV: float, gap_eV: float) -> TaucLorentzEdge:
    """A Tauc–Lorentz oscillator: its gap is [gap] value_eV, the rest in [absorption]."""
    amplitude, resonance, broadening = _need(
        c, "tauc-lorentz", ("amplitude_eV", "resonance_eV", "broadening_eV"), "eV", 1e-3, 1e4)
    eps_inf = c.get("absorption", "eps_infinity")
    if eps_inf is None:
        c.fail("absorption.eps_infinity", "is missing", "give the oscillator's ε∞ (often 1–4)")
    eps_inf = float(c.positive("absorption", "eps_infinity", "as a number (often 1–4)", high=50.0))
    if not resonance > gap_eV:
        c.fail("absorption.resonance_eV", f"= {resonance:g} eV is not above the gap ({gap_eV:g} eV)",
               "give the Lorentz resonance E0 above [gap] value_eV (the Tauc gap)")
    if not broadening < 2 * resonance:
        c.fail("absorption.broadening_eV", f"= {broadening:g} eV is not below 2 × resonance_eV "
               f"({2 * resonance:g} eV)", "the Tauc–Lorentz form needs C < 2·E0; check the fit")
    return TaucLorentzEdge.build(amplitude, resonance, broadening, eps_inf, gap_eV, urbach_eV)


_POWER_LAW_KEYS = {"alpha_at_gap_per_cm": "num", "strength_per_cm": "num"}
register_edge_model("direct", ParametricEdge, _read_power_law("direct"), _POWER_LAW_KEYS)
register_edge_model("indirect", ParametricEdge, _read_power_law("indirect"), _POWER_LAW_KEYS)
register_edge_model("table", TabulatedEdge, _read_table,
                    {"table": "str", "table_axis": "str"}, data_file_key="table")
register_edge_model("database", TabulatedEdge, _read_database, {"database": "str"})
register_edge_model("nk", TabulatedEdge, _read_nk, {"nk_table": "str"}, data_file_key="nk_table")
register_edge_model("bands", BandEdge, _read_bands, {"bands": "bandlist"})
register_edge_model("tauc-lorentz", TaucLorentzEdge, _read_tauc_lorentz,
                    {"amplitude_eV": "num", "resonance_eV": "num", "broadening_eV": "num",
                     "eps_infinity": "num"})
