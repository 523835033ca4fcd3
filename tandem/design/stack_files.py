"""Layer-stack files: one TOML file a stack (layers from the sun side), read strictly; every
problem is one line naming the file, the field and the fix. The stack itself and its optics are
in :mod:`tandem.design.layerstack`.
"""

from __future__ import annotations

import difflib
import math
from pathlib import Path


from tandem.core.errors import TandemInputError
from tandem.core.files import bundled_dir
from tandem.core.toml_files import read_toml
from tandem.design.layerstack import LayerStack, StackLayer
from tandem.optics.absorber_files import load_absorber
from tandem.optics.absorptance import LIGHT_TRAPPING
from tandem.optics.database import DatabaseEntryError, database_index
from tandem.optics.wafer import FRONT_TEXTURES

ROLES = ("front", "back", "parasitic")
TOP_KEYS = {"title", "description", "ambient_index", "exit_index", "layer", "sources"}
LAYER_KEYS = {"name", "thickness_nm", "points", "nk", "absorber", "gap_eV", "coherent", "role",
              "light_trapping", "rear_reflectance", "front_texture", "thickness_spread_nm"}
#: Coherent layers thicker than this are refused: their fringes are finer than any
#: spectrum's grid and a real film of that size is not coherent (mark it incoherent).
MAX_COHERENT_NM = 20_000.0


def bundled_stacks() -> dict[str, Path]:
    """Bundled stack names (file stems) and their files.

    Examples
    --------
    >>> from tandem.design.stack_files import bundled_stacks
    >>> 'wide-gap-on-silicon-wafer' in bundled_stacks()
    True
    """
    return {p.stem: p for p in sorted(bundled_dir("stacks").glob("*.toml"))}


def load_stack(name_or_path: str | Path) -> LayerStack:
    """A bundled stack by name, or a user's stack file by path.

    Examples
    --------
    >>> from tandem import load_stack
    >>> [x.name for x in load_stack('organic-pair').layers][:3]
    ['glass', 'ITO electrode', 'ZnO (front)']
    """
    bundled = bundled_stacks()
    if str(name_or_path) in bundled:
        return parse_stack(bundled[str(name_or_path)])
    path = Path(name_or_path)
    if path.suffix != ".toml" and not path.exists():
        hint = difflib.get_close_matches(str(name_or_path), list(bundled), n=1)
        raise TandemInputError(f"stack '{name_or_path}' is neither a bundled stack nor a file; "
                               + (f"did you mean '{hint[0]}'? " if hint else "")
                               + f"bundled: {', '.join(bundled)}")
    return parse_stack(path)


def _fail(path, name, problem, fix):
    raise TandemInputError(f"stack file '{path}': field '{name}' {problem}; {fix}")


def _number(path, name, value, lo, hi, unit):
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        _fail(path, name, f"= {value!r} must be a number", f"give it in {unit}")
    if not lo <= value <= hi:
        _fail(path, name, f"= {value:g} is outside {lo:g}–{hi:g}", f"give it in {unit}")
    return float(value)


def parse_stack(path: Path) -> LayerStack:
    """Read and check one stack file: every problem is one line naming the field."""
    path = Path(path)
    data = read_toml(path, "stack file", "or a bundled name (see 'tandem absorbers')")
    for key in data:
        if key not in TOP_KEYS:
            hint = difflib.get_close_matches(key, TOP_KEYS, n=1)
            _fail(path, key, "is not a known key", f"did you mean '{hint[0]}'?" if hint
                  else f"allowed: {', '.join(sorted(TOP_KEYS))}")
    for key in ("title", "layer"):
        if key not in data:
            _fail(path, key, "is missing", "add it (see the layer-stack example in docs/commands.md)")
    if not isinstance(data["title"], str):
        _fail(path, "title", "must be text", "put it in quotes")
    raw = data["layer"]
    if not (isinstance(raw, list) and raw and all(isinstance(x, dict) for x in raw)):
        _fail(path, "layer", "must be a list of [[layer]] tables", "write each layer as [[layer]]")
    ambient = _number(path, "ambient_index", data.get("ambient_index", 1.0), 1.0, 4.0,
                      "a real refractive index (a lossless medium)")
    exit_index = _complex(path, "exit_index", data.get("exit_index", 1.0))
    layers = tuple(_layer(path, i, x) for i, x in enumerate(raw, 1))
    names = [x.name for x in layers]
    if len(set(names)) != len(names):
        _fail(path, "layer.name", "repeats a name", "give every layer its own name")
    for role in ("front", "back"):
        count = sum(x.role == role for x in layers)
        if count != 1:
            _fail(path, "layer.role", f"'{role}' is given to {count} layers",
                  f"mark exactly one absorber layer role = \"{role}\"")
    order = [x.role for x in layers]
    if order.index("front") > order.index("back"):
        _fail(path, "layer.role", "puts the back absorber before the front one",
              "list layers from the sun side")
    for i, x in enumerate(layers):
        if x.role == "back" and not x.coherent and i != len(layers) - 1:
            _fail(path, f"layer '{x.name}'.coherent", "is false for a back absorber that is not "
                  "the last layer", "put the wafer last (its light trapping ends the stack)")
        if x.role == "front" and not x.coherent:
            _fail(path, f"layer '{x.name}'.coherent", "is false for the front absorber",
                  "the front absorber is a thin film: set coherent = true")
    if "exit_index" in data and layers[-1].ends_stack:
        _fail(path, "exit_index", f"is not used: the wafer '{layers[-1].name}' ends the stack (its "
              "light trapping decides what leaves its back)", "remove exit_index, or end the "
              "stack with a coherent layer")
    swept = [x for x in layers if x.sweep_nm is not None and x.role != "front"]
    if len(swept) > 2:
        _fail(path, "layer.thickness_nm", f"sweeps {len(swept)} layers besides the front absorber",
              "sweep at most two other layers (give the rest one thickness)")
    sources = data.get("sources", {})
    if not isinstance(sources, dict):
        _fail(path, "sources", "must be a [sources] table", "write field = \"citation\" lines")
    return LayerStack(path.stem, path, data["title"], str(data.get("description", "")), layers,
                      ambient, exit_index, dict(sources))


def _complex(path, name, value) -> complex:
    if isinstance(value, list) and len(value) == 2:
        n = _number(path, f"{name}[0]", value[0], 1e-3, 20.0, "n (real part)")
        k = _number(path, f"{name}[1]", value[1], 0.0, 20.0, "k (extinction, ≥ 0)")
        return complex(n, k)
    return complex(_number(path, name, value, 1e-3, 20.0, "n, or [n, k]"), 0.0)


def _layer(path: Path, i: int, x: dict) -> StackLayer:
    name = x.get("name")
    if not isinstance(name, str) or not name.strip():
        _fail(path, f"layer[{i}].name", "is missing or not text", "name every layer")
    where = f"layer '{name}'"
    for key in x:
        if key not in LAYER_KEYS:
            hint = difflib.get_close_matches(key, LAYER_KEYS, n=1)
            _fail(path, f"{where}.{key}", "is not a known key", f"did you mean '{hint[0]}'?"
                  if hint else f"allowed: {', '.join(sorted(LAYER_KEYS))}")
    if ("nk" in x) == ("absorber" in x):
        _fail(path, f"{where}.nk", "and 'absorber' are both given or both missing",
              "give optical constants as nk = ..., or absorber = \"name\"")
    role = x.get("role", "parasitic")
    if role not in ROLES:
        _fail(path, f"{where}.role", f"= {role!r} is unknown", "use front, back or parasitic")
    if role != "parasitic" and "absorber" not in x:
        _fail(path, f"{where}.role", f"'{role}' needs an absorber", "add absorber = \"name\"")
    if "thickness_nm" not in x:
        _fail(path, f"{where}.thickness_nm", "is missing", "give nm, or [thin, thick] to sweep")
    t = x["thickness_nm"]
    if isinstance(t, list):
        if len(t) != 2:
            _fail(path, f"{where}.thickness_nm", "as a list must be [thin, thick]", "give two values")
        lo = _number(path, f"{where}.thickness_nm[0]", t[0], 0.1, 1e8, "nm")
        hi = _number(path, f"{where}.thickness_nm[1]", t[1], 0.1, 1e8, "nm")
        if hi <= lo:
            _fail(path, f"{where}.thickness_nm", "must rise: [thin, thick]", "swap the two values")
        sweep, thickness = (lo, hi), math.sqrt(lo * hi)
    else:
        thickness, sweep = _number(path, f"{where}.thickness_nm", t, 0.1, 1e8, "nm"), None
    if "points" in x and (sweep is None or role == "front"):  # nothing would read it
        _fail(path, f"{where}.points", "is only for a swept layer besides the front absorber "
              "(whose thicknesses --points sets)", "remove it, or sweep the layer with "
              "thickness_nm = [thin, thick]")
    points = _number(path, f"{where}.points", x.get("points", 7), 2, 200, "a count")
    if not points.is_integer():  # 7.5 was once taken as 7
        _fail(path, f"{where}.points", f"= {points:g} is not a whole number", "give a count, e.g. 7")
    points = int(points)
    coherent = x.get("coherent", True)
    if not isinstance(coherent, bool):
        _fail(path, f"{where}.coherent", "must be true or false", "write true or false")
    top = sweep[1] if sweep else thickness
    if coherent and top > MAX_COHERENT_NM:
        _fail(path, f"{where}.coherent", f"is true for {top / 1000:g} µm",
              "set coherent = false for layers thicker than 20 µm (glass, wafers)")
    trapping = x.get("light_trapping")
    if trapping is not None and trapping not in LIGHT_TRAPPING:
        _fail(path, f"{where}.light_trapping", f"= {trapping!r} is unknown",
              f"use {', '.join(LIGHT_TRAPPING)}")
    if trapping is not None and (role != "back" or coherent):
        _fail(path, f"{where}.light_trapping", "is only for an incoherent back absorber",
              "set role = \"back\" and coherent = false, or remove it")
    rear = x.get("rear_reflectance")
    if rear is not None:
        rear = _number(path, f"{where}.rear_reflectance", rear, 0.0, 1.0, "a fraction (0.95: 5 % "
                       "absorbed in the rear at each bounce)")
        if rear == 0 or role != "back" or coherent:
            _fail(path, f"{where}.rear_reflectance", "is only for the reflector behind an "
                  "incoherent back absorber, above 0", "set role = \"back\" and coherent = false, "
                  "or light_trapping = \"single-pass\" for no reflector")
    texture = x.get("front_texture", "flat")
    if texture not in FRONT_TEXTURES:
        _fail(path, f"{where}.front_texture", f"= {texture!r} is unknown",
              f"use {' or '.join(FRONT_TEXTURES)}")
    if "front_texture" in x and (role != "back" or coherent):
        _fail(path, f"{where}.front_texture", "is only for an incoherent back absorber (a wafer)",
              "set role = \"back\" and coherent = false, or remove it")
    spread = x.get("thickness_spread_nm", 0.0)
    if "thickness_spread_nm" in x:
        spread = _number(path, f"{where}.thickness_spread_nm", spread, 0.0, 1e5,
                         "nm, the full width of the thickness variation across the cell")
        if not coherent:
            _fail(path, f"{where}.thickness_spread_nm", "is only for a coherent film (an "
                  "incoherent layer has no fringes to wash out)", "remove it")
        if spread >= (sweep[0] if sweep else thickness):
            _fail(path, f"{where}.thickness_spread_nm", f"= {spread:g} nm is not below the "
                  f"layer's thickness ({sweep[0] if sweep else thickness:g} nm)",
                  "give a spread smaller than the thinnest thickness")
    fields = dict(name=name, thickness_nm=thickness, sweep_nm=sweep, points=points,
                  coherent=coherent, role=role, light_trapping=trapping,
                  rear_reflectance=1.0 if rear is None else rear, front_texture=texture,
                  thickness_spread_nm=spread)
    if "absorber" in x:
        if not isinstance(x["absorber"], str):
            _fail(path, f"{where}.absorber", "must be a name or path", "put it in quotes")
        ref = x["absorber"]
        local = path.parent / ref
        absorber = load_absorber(local if local.suffix == ".toml" and local.is_file() else ref)
        gap = x.get("gap_eV")
        try:  # the absorber's declared ranges hold in a stack too
            if gap is not None:
                gap = _number(path, f"{where}.gap_eV", gap, 0.1, 10.0, "eV")
                absorber.check_gap(gap)
            for d in (sweep or (thickness,)):
                absorber.check_thickness(d, f"{where} thickness")
        except TandemInputError as exc:
            text = str(exc).split(" (or allow it")[0]
            raise TandemInputError(text if text.startswith("stack file") else
                                   f"stack file '{path}': {text}") from None
        if rear is not None and (trapping or absorber.light_trapping) == "single-pass":
            _fail(path, f"{where}.rear_reflectance", "is given for a single-pass wafer (no "
                  "reflector behind it)", "use light_trapping = \"lambertian\" or \"double-pass\", "
                  "or remove rear_reflectance")
        return StackLayer(source=f"absorber {absorber.key}", absorber=absorber, gap_eV=gap,
                          **fields)
    if "gap_eV" in x:
        _fail(path, f"{where}.gap_eV", "is only for absorber layers", "remove it")
    return StackLayer(**fields, **_optical_constants(path, where, x["nk"]))


def _optical_constants(path: Path, where: str, nk) -> dict:
    """nk = 1.9 | [n, k] | "database:shelf/book/page" | "file.csv" (wavelength nm, n, k)."""
    if isinstance(nk, str) and nk.startswith("database:"):
        entry = nk.removeprefix("database:")
        try:
            wl, index = database_index(entry)
        except DatabaseEntryError as exc:
            _fail(path, f"{where}.nk", f"entry '{entry}' {exc}", "give shelf/book/page as on "
                  "refractiveindex.info, e.g. database:main/ZnO/Stelling")
        return {"source": f"database {entry}", "table": (wl, index)}
    if isinstance(nk, str):
        file = path.parent / nk
        if not file.is_file():
            _fail(path, f"{where}.nk", f"file '{nk}' not found", "give a CSV of wavelength nm, n, k "
                  "beside the stack file, or database:shelf/book/page")
        return {"source": f"file {nk}", "table": _read_nk_csv(path, where, file)}
    value = _complex(path, f"{where}.nk", nk)
    return {"source": f"constant n = {value.real:g}, k = {value.imag:g}", "constant": value}


def _read_nk_csv(path, where, file):
    from tandem.optics.database import NkTableError, read_nk_table

    try:
        return read_nk_table(file)
    except NkTableError as exc:
        _fail(path, f"{where}.nk", f"file {exc.args[0]}", exc.args[1])


# --------------------------------------------------------------------------------------
# optics of a stack
# --------------------------------------------------------------------------------------
