"""Absorber descriptions: one TOML file each, validated strictly, resolved to optics.

The schema (documented in docs/file-formats.md) is ours. Every field is checked; an unknown key, a
missing field or a physically impossible value raises :class:`TandemInputError` naming the
file, the field and the fix in one line.
"""

from __future__ import annotations

import difflib
import functools
import math
from dataclasses import replace
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError
from tandem.core.files import bundled_dir
from tandem.core.toml_files import Checker, Schema, read_toml
from tandem.core.units import K_B_EV, T_STC
from tandem.optics.absorbers import MAX_UNCUT_URBACH_EV, Absorber, GapRelation
from tandem.optics.absorptance import LIGHT_TRAPPING
from tandem.optics.edges import EDGE_MODELS
from tandem.physics.checks import MIN_ERE
from tandem.physics.recombination import AUGER_MODELS, BulkSpec

# --------------------------------------------------------------------------------------
# Schema
# --------------------------------------------------------------------------------------

#: section -> {key: (kind, required)}: the keys of every absorber file
SCHEMA: Schema = {
    "": {"name": ("str", True), "description": ("str", True)},
    "gap": {
        "value_eV": ("num", False),
        "relation": ("str", False),
        "coefficients_eV": ("numlist", False),
        "composition": ("str", False),
        "composition_range": ("numlist", False),
        "composition_default": ("num", False),
        "temperature_coefficient_meV_per_K": ("num", False),
    },
    # the keys every edge model shares; each registered model adds its own (see schema())
    "absorption": {
        "model": ("str", True),
        "urbach_energy_meV": ("num", False),
        "defect_floor_per_cm": ("num", False),
        "tail_cutoff_below_gap_eV": ("num", False),
    },
    "optics": {"refractive_index": ("num", True), "light_trapping": ("str", True)},
    "electrical": {
        "ere": ("num", False),
        "nonradiative_voc_loss_V": ("num", False),
        "gap_voltage_offset_V": ("num", False),
        "voc_deficit_V": ("num", False),  # refused with the new names (it was ambiguous)
        "collection_length_nm": ("num", False),
    },
    # bulk and surface recombination (see tandem.physics.recombination)
    "recombination": {
        "auger": ("str", False),
        "srh_lifetime_s": ("num", False),
        "surface_recombination_velocity_cm_per_s": ("num", False),
        "intrinsic_density_per_cm3": ("num", True),
        "intrinsic_density_temperature_K": ("num", True),
        "doping_per_cm3": ("num", False),
        "doping_type": ("str", False),
    },
    "thickness": {
        "default_nm": ("num", False),
        "range_nm": ("numlist", False),
        "default_um": ("num", False),
        "range_um": ("numlist", False),
    },
    "sources": {},  # free keys: field -> citation
}


def schema() -> Schema:
    """The absorber-file schema with the keys of every registered edge model."""
    full = {section: dict(keys) for section, keys in SCHEMA.items()}
    for model in EDGE_MODELS.values():
        full["absorption"].update({k: (kind, False) for k, kind in model.keys.items()})
    return full


def parse_absorber(path: Path) -> Absorber:
    """Read and validate one absorber file.

    Examples
    --------
    >>> from tandem import bundled_absorbers, parse_absorber
    >>> parse_absorber(bundled_absorbers()['gaas']).gap_eV
    1.424
    """
    path = Path(path)
    c = Checker(path, read_toml(path), schema())
    c.check_keys()

    # --- gap: fixed or a relation -------------------------------------------------------
    value = c.get("gap", "value_eV")
    coeffs = c.get("gap", "coefficients_eV")
    relation = None
    if (value is None) == (coeffs is None):
        c.fail("gap.value_eV", "and gap.coefficients_eV are both given or both missing",
               "give value_eV for a fixed gap, or relation = 'polynomial' with coefficients_eV, "
               "composition, composition_range and composition_default")
    if coeffs is not None:
        if c.get("gap", "relation") not in ("polynomial", "quadratic", "linear"):
            c.fail("gap.relation", f"= {c.get('gap', 'relation')!r} is not known",
                   "use 'polynomial' (Eg = c0 + c1·x + c2·x² + …)")
        for key in ("composition", "composition_range", "composition_default"):
            if c.get("gap", key) is None:
                c.fail(f"gap.{key}", "is missing", "a tunable gap needs composition, "
                       "composition_range and composition_default")
        rng = c.get("gap", "composition_range")
        if len(rng) != 2 or rng[0] >= rng[1]:
            c.fail("gap.composition_range", f"= {rng} must be [low, high] with low < high",
                   "swap or fix the two values")
        x0 = c.get("gap", "composition_default")
        if not rng[0] <= x0 <= rng[1]:
            c.fail("gap.composition_default", f"= {x0:g} lies outside composition_range {rng}",
                   "choose a default inside the range")
        relation = GapRelation(tuple(float(v) for v in coeffs), c.get("gap", "composition"),
                               (float(rng[0]), float(rng[1])), float(x0))
        gaps = relation.gap(np.linspace(rng[0], rng[1], 101))
        if not np.all(gaps > 0):
            c.fail("gap.coefficients_eV", "give a gap ≤ 0 eV inside composition_range",
                   "check the coefficients (eV) and the range")
        value = float(relation.gap(x0))
    elif not value > 0:
        c.fail("gap.value_eV", f"= {value:g} must be positive", "give the band gap in eV")
    tc = c.get("gap", "temperature_coefficient_meV_per_K")
    # measured gap coefficients lie within about ±1 meV/K (silicon −0.27, GaAs −0.45, lead
    # halide perovskites +0.2 to +0.3: handbook values, recalled); ±2 leaves room, 1e300 none
    if tc is not None and not -2.0 <= tc <= 2.0:
        c.fail("gap.temperature_coefficient_meV_per_K", f"= {tc:g} is outside −2 to 2 meV/K",
               "give the gap's shift per kelvin in meV/K, e.g. -0.27 for silicon")

    # --- absorption edge ---------------------------------------------------------------
    name = c.get("absorption", "model")
    if name not in EDGE_MODELS:
        c.fail("absorption.model", f"= {name!r} is not known", f"use one of {', '.join(EDGE_MODELS)}")
    model = EDGE_MODELS[name]
    shared = SCHEMA["absorption"]
    for key in c.data["absorption"]:
        if key not in shared and key not in model.keys:
            readers = [m.name for m in EDGE_MODELS.values() if key in m.keys]
            c.fail(f"absorption.{key}", f"is not read by model '{name}'",
                   f"remove it, or use model {' or '.join(repr(r) for r in readers)}")
    if c.get("absorption", "urbach_energy_meV") is None:
        c.fail("absorption.urbach_energy_meV", "is missing", "give the tail's slope in meV "
               "(typically 5–50)")
    eu = (c.positive("absorption", "urbach_energy_meV", "meV (typically 5–50)", low=1.0,
                     high=300.0) or 0.0) / 1000.0
    floor = c.positive("absorption", "defect_floor_per_cm", "cm^-1", low=1e-6, high=1e4) or 0.0
    cutoff = c.positive("absorption", "tail_cutoff_below_gap_eV", "eV below the gap", low=0.01,
                        high=3.0)
    if cutoff is not None and cutoff >= value:
        c.fail("absorption.tail_cutoff_below_gap_eV", f"= {cutoff:g} eV reaches below 0 eV",
               f"give less than the gap ({value:g} eV)")
    if eu > MAX_UNCUT_URBACH_EV and cutoff is None:
        c.fail("absorption.urbach_energy_meV", f"= {1000 * eu:g} meV is above 25 meV (about kT) "
               "with no tail cutoff: the radiative dark current would grow into the tail without "
               "bound", "add tail_cutoff_below_gap_eV (where the film stops absorbing)")
    if floor and cutoff is None:
        c.fail("absorption.defect_floor_per_cm", "needs tail_cutoff_below_gap_eV",
               "a floor absorbs down to 0 eV otherwise; give where the defect absorption ends")
    if relation is not None and not model.movable:
        c.fail("gap.coefficients_eV", f"cannot move a '{name}' edge (its data fix the gap)",
               "use a fixed value_eV, or a model whose gap can move "
               f"({', '.join(m.name for m in EDGE_MODELS.values() if m.movable)})")
    edge = model.read(c, eu, value)

    # --- optics, electrical, thickness -------------------------------------------------
    n = c.positive("optics", "refractive_index", "as a number (e.g. 3.6 for silicon)", high=10.0)
    if n < 1:
        c.fail("optics.refractive_index", f"= {n:g} is below 1", "give the real part of the index (≥ 1)")
    trapping = c.get("optics", "light_trapping")
    if trapping not in LIGHT_TRAPPING:
        c.fail("optics.light_trapping", f"= {trapping!r} is not known", f"use one of {', '.join(LIGHT_TRAPPING)}")
    if c.get("electrical", "voc_deficit_V") is not None:
        old = c.get("electrical", "voc_deficit_V")
        c.fail("electrical.voc_deficit_V", "is ambiguous and no longer read (in the trade a Voc "
               "deficit is Eg/q − Voc; here it meant Voc,rad − Voc)",
               f"write nonradiative_voc_loss_V = {old!r} for the same absorber, or "
               "gap_voltage_offset_V for Eg/q − Voc")
    given = {k: c.get("electrical", k) for k in ("ere", "nonradiative_voc_loss_V",
                                                  "gap_voltage_offset_V")}
    stated = [k for k, v in given.items() if v is not None]
    if len(stated) != 1:
        c.fail("electrical.ere", f"and its alternatives: {len(stated)} of ere, "
               "nonradiative_voc_loss_V and gap_voltage_offset_V are given",
               "give exactly one: ere in (0, 1], the non-radiative loss Voc,rad − Voc in V, or "
               "the gap–voltage offset Eg/q − Voc in V")
    ere, loss, offset = given["ere"], given["nonradiative_voc_loss_V"], given["gap_voltage_offset_V"]
    if ere is not None:
        if not MIN_ERE <= ere <= 1:
            c.fail("electrical.ere", f"= {ere:g} is outside {MIN_ERE:g}–1", "give a fraction, "
                   f"1 = radiative limit (below {MIN_ERE:g} the non-radiative loss exceeds 0.7 V)")
        origin = "given"
    elif loss is not None:
        if not 0 <= loss < 0.8 * value:
            c.fail("electrical.nonradiative_voc_loss_V", f"= {loss:g} V is outside 0 to "
                   f"{0.8 * value:.2f} V", "give the non-radiative loss in V, well below the gap")
        # Rau 2007: ΔVoc,nr = −(kT/q) ln ERE, at the standard 298.15 K
        ere = math.exp(-loss / (K_B_EV * T_STC))
        origin = f"from a non-radiative Voc loss of {loss:g} V at 298.15 K"
    else:
        if not 0 < offset < value:
            c.fail("electrical.gap_voltage_offset_V", f"= {offset:g} V is outside 0 to {value:g} V",
                   "give Eg/q − Voc in V, below the gap")
        ere = 1.0  # settled below, once the absorber's optics are known
        origin = ""
    lc = c.positive("electrical", "collection_length_nm", "nm", low=1.0, high=1e8)
    bulk = _bulk_spec(c)

    default, rng = c.get("thickness", "default_nm"), c.get("thickness", "range_nm")
    if default is None and c.get("thickness", "default_um") is not None:
        default = c.get("thickness", "default_um") * 1000.0
    if rng is None and c.get("thickness", "range_um") is not None:
        rng = [v * 1000.0 for v in c.get("thickness", "range_um")]
    if default is None or rng is None:
        c.fail("thickness.default_nm", "or thickness.range_nm is missing",
               "give default_nm and range_nm (or default_um and range_um for wafers)")
    if len(rng) != 2:
        c.fail("thickness.range_nm", f"= {rng} must have two values", "write [thinnest, thickest]")
    if not rng[0] > 0:
        c.fail("thickness.range_nm", f"starts at {rng[0]:g}", "thicknesses must be positive")
    if not (0.1 <= rng[0] and rng[1] <= 1e7):
        c.fail("thickness.range_nm", f"= {rng} goes beyond 0.1 nm – 10 mm",
               "give thicknesses a device can have")
    if rng[0] >= rng[1]:
        c.fail("thickness.range_nm", f"= {rng} is reversed or empty", "write [thinnest, thickest]")
    if not rng[0] <= default <= rng[1]:
        c.fail("thickness.default_nm", f"= {default:g} lies outside the range {rng}",
               "choose a default inside the range")

    sources = c.data.get("sources", {})
    if not sources:
        c.fail("sources", "is empty", "name where each number comes from (mark values recalled from memory)")
    absorber = Absorber(
        key=path.stem, path=path, name=c.get("", "name") or c.data["name"],
        description=c.data["description"], gap_eV=float(value), relation=relation, edge=edge,
        edge_model=name, refractive_index=float(n), light_trapping=trapping, ere=float(ere),
        ere_origin=origin, collection_length_nm=None if lc is None else float(lc),
        thickness_nm=float(default), thickness_range_nm=(float(rng[0]), float(rng[1])),
        gap_temperature_coefficient_eV_K=None if tc is None else tc / 1000.0,
        sources={str(k): str(v) for k, v in sources.items()},
        defect_floor_per_cm=float(floor), tail_cutoff_below_gap_eV=cutoff, bulk=bulk,
        index_entry=c.get("absorption", "database") if name == "database" else None,
    )
    if offset is None:
        return absorber
    if bulk is not None:
        c.fail("electrical.gap_voltage_offset_V", "cannot be turned into an ERE for an absorber "
               "with a [recombination] section (its loss there depends on the operating point)",
               "give ere or nonradiative_voc_loss_V (the recombination the section does not state)")
    voc_rad = radiative_voc(absorber)
    if value - offset >= voc_rad:
        c.fail("electrical.gap_voltage_offset_V", f"= {offset:g} V puts Voc ({value - offset:.3f} V) "
               f"at or above this absorber's radiative limit ({voc_rad:.3f} V)",
               f"give more than {value - voc_rad:.3f} V")
    # Voc = Voc,rad + (kT/q) ln ERE (Rau 2007) at AM1.5G, 298.15 K and the default thickness
    loss = voc_rad - (value - offset)
    return replace(absorber, ere=math.exp(-loss / (K_B_EV * T_STC)),
                   ere_origin=f"from a gap–voltage offset Eg/q − Voc of {offset:g} V (Voc,rad "
                              f"{voc_rad:.3f} V at the default thickness, AM1.5G, 298.15 K)")


def radiative_voc(absorber: Absorber) -> float:
    """The absorber's radiative-limit Voc alone at its default gap and thickness, AM1.5G,
    298.15 K [V]: kT/q·ln(1 + Jsc/J0,rad), both from its absorptance (collected) by
    reciprocity (Rau 2007)."""
    from tandem.physics.detailed_balance import blackbody_photon_flux, open_circuit_voltage
    from tandem.physics.spectra import reference_flux, trapezoid_weights

    flux = reference_flux()
    e = flux.energy
    layer = absorber.layer(e, position="alone")
    collected = layer.absorptance() * layer.collection() * trapezoid_weights(e)
    jsc, j0 = collected @ flux.flux, collected @ blackbody_photon_flux(e, T_STC)
    return float(open_circuit_voltage(jsc, j0, T_STC))


def _bulk_spec(c: Checker) -> BulkSpec | None:
    """The [recombination] section: an Auger parametrisation and/or SRH lifetime and surface
    velocity, n_i where it was stated, doping."""
    if "recombination" not in c.data:
        return None  # its required keys are checked with every section's (Checker.check_keys)
    name = c.get("recombination", "auger")
    if name is not None and name not in AUGER_MODELS:
        c.fail("recombination.auger", f"= {name!r} is not known", f"use one of {', '.join(AUGER_MODELS)}")
    # an SRH lifetime beyond a second, or below a picosecond, is a unit slip (µs or ms given)
    tau = c.positive("recombination", "srh_lifetime_s", "seconds (did you mean 1e-3 for 1 ms?)",
                     low=1e-12, high=1.0)
    velocity = c.get("recombination", "surface_recombination_velocity_cm_per_s")
    # 0 (ideal passivation) up to the carriers' thermal velocity, about 1e7 cm/s
    if velocity is not None and not (math.isfinite(velocity) and 0 <= velocity <= 1e7):
        c.fail("recombination.surface_recombination_velocity_cm_per_s",
               f"= {velocity:g} is outside 0–1e7", "give each surface's velocity in cm/s "
               "(did you mean 10 for 0.1 m/s?)")
    if name is None and tau is None and velocity is None:
        c.fail("recombination", "states no recombination",
               "give auger, srh_lifetime_s or surface_recombination_velocity_cm_per_s")
    n_i = c.positive("recombination", "intrinsic_density_per_cm3", "cm^-3 (silicon: about 1e10)",
                     low=1e-10, high=1e20)
    t_ref = c.positive("recombination", "intrinsic_density_temperature_K",
                       "K (e.g. 300; did you mean 300 for 27 C?)", low=150.0, high=500.0)
    doping = c.get("recombination", "doping_per_cm3", 0.0)
    if not (math.isfinite(doping) and 0 <= doping <= 1e21):
        c.fail("recombination.doping_per_cm3", f"= {doping:g} is outside 0–1e21",
               "give the net background doping in cm^-3 (0 for undoped)")
    kind = c.get("recombination", "doping_type")
    if doping > 0 and kind not in ("n", "p"):
        c.fail("recombination.doping_type", f"= {kind!r} is not 'n' or 'p'",
               "say which carrier the doping gives: doping_type = \"n\" or \"p\"")
    if doping == 0 and kind is not None:
        c.fail("recombination.doping_type", "is given for an undoped bulk",
               "remove it, or give doping_per_cm3")
    return BulkSpec(None if name is None else AUGER_MODELS[name], float(n_i), float(t_ref),
                    float(doping), kind != "p", math.inf if tau is None else float(tau),
                    0.0 if velocity is None else float(velocity))


# --------------------------------------------------------------------------------------
# Finding absorbers
# --------------------------------------------------------------------------------------


def bundled_absorbers() -> dict[str, Path]:
    """Bundled absorber names (file stems) and their files.

    Examples
    --------
    >>> from tandem import bundled_absorbers
    >>> 'silicon' in bundled_absorbers()
    True
    """
    return {p.stem: p for p in sorted(bundled_dir("absorbers").glob("*.toml"))}


def load_absorber(name_or_path: str | Path) -> Absorber:
    """A bundled absorber by name, or a user's file by path.

    Examples
    --------
    >>> from tandem import load_absorber
    >>> load_absorber('perovskite-wide').tunable
    True
    """
    text = str(name_or_path)
    path = Path(text)
    if text.endswith(".toml") or path.is_file():
        return _parse_cached(path.resolve())
    bundled = bundled_absorbers()
    if text in bundled:
        return _parse_cached(bundled[text])
    close = difflib.get_close_matches(text, bundled, n=3)
    hint = f"did you mean {', '.join(close)}? " if close else ""
    raise TandemInputError(f"absorber '{text}' is neither a bundled name nor a .toml file; "
                           f"{hint}bundled: {', '.join(bundled)}")


@functools.lru_cache(maxsize=64)
def _cached(path: Path, mtime: float) -> Absorber:
    return parse_absorber(path)


def _parse_cached(path: Path) -> Absorber:
    mtime = path.stat().st_mtime if path.exists() else -1.0
    return _cached(path, mtime)
