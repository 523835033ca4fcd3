"""Real layer stacks: a two-junction device as the ordered films a lab deposits.

A stack description (TOML, see docs/commands.md, `match --stack`) lists layers from the sun side: a cover, a
transparent electrode, transport layers, the front absorber, a recombination layer, the
back absorber. Thin layers are solved coherently, thick ones incoherently
(:mod:`tandem.optics.thinfilm`); each subcell's absorptance in the stack gives its photocurrent
and, by reciprocity, its radiative J0, exactly as the optics-lite model does with its own
absorptances. Every other layer's absorption is a parasitic loss, counted per layer.

A thick (incoherent) back absorber, such as a wafer, must be the last layer. The light the
films transmit into it is traced (:mod:`tandem.optics.wafer`): down through the wafer, off its
rear (the light-trapping mode names the rear: ``single-pass`` lets the rest out, ``double-pass``
is a mirror, ``lambertian`` a randomising reflector; the file's mode unless the layer sets
``light_trapping``), and back up through the films at every angle, s and p, where the front
absorber gains from it, the other films absorb part of it, and the rest escapes. A wafer with
``front_texture = "lambertian"`` takes the light in randomised (a textured front).

Losses are counted over the photons the stack could use: those above the back absorber's
gap.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from tandem.physics import detailed_balance as db
from tandem.optics.absorbers import Absorber, absorbers_bulk
from tandem.core.errors import TandemInputError
from tandem.physics.spectra import PhotonFlux, trapezoid_weights
from tandem.physics.stack import evaluate_stack
from tandem.optics.thinfilm import (MAX_SPREAD_NODES, Layer, index_from_alpha, spread_nodes,
                                     stack_optics, unpolarised)
from tandem.optics.wafer import trace_wafer
from tandem.core.units import HC_EV_NM, Q

@dataclass(frozen=True)
class StackLayer:
    """One layer of a stack description, resolved."""

    name: str
    thickness_nm: float  #: the value used when it is not swept
    sweep_nm: tuple[float, float] | None  #: a range to sweep
    points: int
    coherent: bool
    role: str  #: 'front', 'back' or 'parasitic'
    source: str  #: where n and k come from, as text
    absorber: Absorber | None = None
    gap_eV: float | None = None
    constant: complex | None = None
    table: tuple[np.ndarray, np.ndarray] | None = None  #: (wavelength nm ascending, ñ)
    light_trapping: str | None = None  #: for an incoherent back absorber (default: its file's)
    rear_reflectance: float = 1.0  #: of the reflector behind an incoherent back absorber
    front_texture: str = "flat"  #: 'lambertian': the wafer's front randomises the light
    #: a coherent film's thickness varies uniformly over ±spread/2 across the cell [nm]
    thickness_spread_nm: float = 0.0

    def real_index(self, wavelength_nm):
        """n of an absorber layer: from the n,k table or database entry its α comes from
        (dispersive, held at the table's ends), else the file's constant ``refractive_index``.
        k always follows the absorber's α (k = αλ/4π), so α stays the one the rest of the
        tool uses."""
        a = self.absorber
        assert a is not None  # only absorber layers ask
        table = getattr(a.edge, "index", None)
        if table is not None:
            return np.interp(wavelength_nm, *table)
        if a.index_entry is None:
            return a.refractive_index
        from tandem.optics.database import database_index

        wl, nk = database_index(a.index_entry)
        return np.interp(wavelength_nm, wl, nk.real)

    @property
    def ends_stack(self) -> bool:
        """An incoherent back absorber: the exit medium, with its own light trapping."""
        return self.role == "back" and not self.coherent

    def index(self, energy_eV, temperature_K: float = 298.15) -> np.ndarray:
        """ñ = n + ik on the energy grid (nE,). Tables are held at their end values outside
        their range (the stack reports which layers were)."""
        e = np.asarray(energy_eV, dtype=float)
        wavelength = HC_EV_NM / e
        if self.absorber is not None:
            a = self.absorber
            alpha = a.alpha(e, self.gap_eV, a.gap_shift_eV(temperature_K))
            return index_from_alpha(alpha, wavelength, self.real_index(wavelength))
        if self.constant is not None:
            return np.full(e.shape, self.constant, dtype=complex)
        assert self.table is not None  # a layer has one source: absorber, constant or table
        wl, nk = self.table
        return np.interp(wavelength, wl, nk.real) + 1j * np.interp(wavelength, wl, nk.imag)


@dataclass(frozen=True)
class LayerStack:
    """A stack description: layers from the sun side between two media.

    Examples
    --------
    >>> from tandem import load_stack
    >>> stack = load_stack('wide-gap-on-silicon-wafer')
    >>> stack.front.absorber.key, stack.back.absorber.key, stack.back.coherent
    ('perovskite-wide', 'silicon', False)
    """

    key: str
    path: Path
    title: str
    description: str
    layers: tuple[StackLayer, ...]
    ambient_index: float = 1.0
    exit_index: complex = 1.0
    sources: dict = field(default_factory=dict)

    def role(self, role: str) -> StackLayer:
        return next(layer for layer in self.layers if layer.role == role)

    @property
    def front(self) -> StackLayer:
        return self.role("front")

    @property
    def back(self) -> StackLayer:
        return self.role("back")

    @property
    def swept(self) -> tuple[StackLayer, ...]:
        """Layers other than the front absorber whose thickness is swept."""
        return tuple(x for x in self.layers if x.sweep_nm is not None and x.role != "front")


# --------------------------------------------------------------------------------------
# reading descriptions
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class PhotonBudget:
    """Where the incident photons go, per energy, for each front thickness (n_d, nE)."""

    energy: np.ndarray  #: (nE,) [eV]
    front: np.ndarray  #: absorbed in the front absorber (collected: the front EQE)
    back: np.ndarray  #: absorbed in the back absorber (the back EQE)
    parasitic: dict  #: layer name → absorbed in that layer
    reflected: np.ndarray  #: reflected, plus what escapes a Lambertian wafer
    transmitted: np.ndarray  #: out through the exit medium
    thickness_nm: tuple = (None, None)  #: (front (n_d,), back) absorber thicknesses [nm]
    #: absorber name → (depths [nm] (nz,), absorbed fraction per nm (nz, n_d, nE)), when asked
    profiles: dict = field(default_factory=dict)


def photon_budget(stack: LayerStack, energy, front_thickness_nm, others: dict | None = None,
                  temperature_K: float = 298.15, depth_points: int = 0,
                  angle_deg: float = 0.0) -> PhotonBudget:
    """Absorptance of every layer for front thicknesses (n_d,) on the energy grid (nE,).

    ``others`` maps a swept layer's name to its thickness [nm] (default: its middle).
    ``depth_points`` > 0 (one front thickness only) also gives each absorber's absorbed
    fraction per nm on that many depths (``profiles``): from the coherent solution's field
    in a film, from the traced light in a wafer. ``angle_deg``: the sunlight's angle of
    incidence in air, as a sky model gives it (s and p averaged; 0 is normal incidence,
    solved once); an ambient medium of index n takes it at arcsin(sin θ/n).
    """
    spread = [x for x in stack.layers if x.thickness_spread_nm > 0]
    if spread:
        return _area_average(stack, spread, energy, front_thickness_nm, others or {},
                             temperature_K, depth_points, angle_deg)
    e = np.asarray(energy, dtype=float)
    wavelength = HC_EV_NM / e
    d_front = np.atleast_1d(np.asarray(front_thickness_nm, dtype=float))[:, None]
    others = others or {}
    layers = list(stack.layers)
    wafer = layers.pop() if layers[-1].ends_stack else None
    films = [Layer(x.index(e, temperature_K),
                   d_front if x.role == "front" else others.get(x.name, x.thickness_nm),
                   x.coherent) for x in layers]
    exit_index = wafer.index(e, temperature_K) if wafer is not None else stack.exit_index
    depths = {}
    if depth_points:
        if d_front.size != 1:
            raise ValueError("depth profiles are for one design at a time")
        for x in (stack.front, stack.back):
            d = float(d_front[0, 0]) if x.role == "front" else float(others.get(x.name, x.thickness_nm))
            depths[x.name] = np.linspace(0.0, d, depth_points) if x.coherent else wafer_depths(d, depth_points)
    # the sky's angle is in air: n·sin θ is kept across every interface, whatever the ambient
    kappa = math.sin(math.radians(angle_deg))
    pols = ("s",) if kappa == 0 else ("s", "p")  # at normal incidence s and p are one
    solved = [stack_optics(films, stack.ambient_index, exit_index, wavelength, kappa, pol, depths={
        i: depths[x.name] for i, x in enumerate(layers) if x.name in depths}) for pol in pols]
    optics = solved[0] if len(solved) == 1 else unpolarised(solved)
    shape = optics.reflectance.shape
    absorbed = dict(zip((x.name for x in layers), optics.absorptance))
    reflected = np.array(optics.reflectance)
    transmitted = np.array(optics.transmittance)
    if wafer is not None:
        a = wafer.absorber
        assert a is not None  # a wafer is an absorber layer
        traced = trace_wafer(films, stack.ambient_index, exit_index,
                             others.get(wafer.name, wafer.thickness_nm),
                             wafer.light_trapping or a.light_trapping, transmitted, wavelength,
                             depths_nm=depths.get(wafer.name),
                             film_depths={i: depths[x.name] for i, x in enumerate(layers)
                                          if x.name in depths}, incidence_kappa=kappa,
                             rear_reflectance=wafer.rear_reflectance,
                             front=wafer.front_texture)
        absorbed[wafer.name] = traced.wafer
        for x, extra in zip(layers, traced.films):  # light coming back up through the films
            absorbed[x.name] = absorbed[x.name] + extra
        reflected, transmitted = reflected + traced.escaped, traced.transmitted
    parasitic = {x.name: np.broadcast_to(absorbed[x.name], shape) for x in stack.layers
                 if x.role == "parasitic"}
    if wafer is not None and wafer.rear_reflectance < 1:  # the reflector's own loss
        lost = traced.rear if traced.rear is not None else np.zeros(shape)  # none reached it
        parasitic[rear_reflector_name(stack)] = np.broadcast_to(lost, shape)
    back = stack.back
    back_d = others.get(back.name, back.thickness_nm)  # per device (n_d, 1) in a spread
    index = {x.name: i for i, x in enumerate(layers)}
    profiles = {}
    for name, z in depths.items():
        if wafer is not None and name == wafer.name:
            profiles[name] = (z, traced.profile)
        else:  # the sunlight's pass, and the light coming back from a wafer behind
            returning = 0.0 if wafer is None else traced.film_profiles[index[name]]
            profiles[name] = (z, optics.profiles[index[name]] + returning)
    return PhotonBudget(e, np.broadcast_to(absorbed[stack.front.name], shape),
                        np.broadcast_to(absorbed[stack.back.name], shape), parasitic,
                        reflected, transmitted,
                        (d_front[:, 0], back_d[:, 0] if np.ndim(back_d) == 2 else back_d),
                        profiles)


def _area_average(stack: LayerStack, spread: list, energy, front_thickness_nm, others: dict,
                  temperature_K: float, depth_points: int, angle_deg: float) -> PhotonBudget:
    """The budget of a stack whose spread films vary in thickness across the cell: the
    weighted mean of fixed-thickness stacks at the nodes of :func:`spread_nodes` (each place
    coherent, the cell their area average). A spread film's depth profile is averaged at the
    same share of each place's thickness, scaled so that ∫G dz still counts every pair."""
    e = np.asarray(energy, dtype=float)
    wavelength = HC_EV_NM / e
    axes = []
    for x in spread:
        offsets, weights, fringes = spread_nodes(x.thickness_spread_nm, wavelength,
                                                 np.real(x.index(e, temperature_K)))
        if offsets.size > MAX_SPREAD_NODES:
            raise TandemInputError(
                f"stack '{stack.key}': layer '{x.name}': thickness_spread_nm = "
                f"{x.thickness_spread_nm:g} spans {fringes:.1f} fringes at {wavelength.min():.0f} nm "
                f"({offsets.size} solves, at most {MAX_SPREAD_NODES}); give a smaller spread, or "
                "coherent = false if its fringes are washed out everywhere")
        axes.append([(x.name, o, w) for o, w in zip(offsets, weights)])
    plain = replace(stack, layers=tuple(replace(x, thickness_spread_nm=0.0) for x in stack.layers))
    d_front = np.atleast_1d(np.asarray(front_thickness_nm, dtype=float))
    nominal = {x.name: float(d_front[0]) if x.role == "front" else others.get(x.name, x.thickness_nm)
               for x in spread}
    sums: dict = {}  # the weighted sums of the fixed-thickness budgets' arrays
    parasitic: dict = {}
    profiles: dict = {}
    for combo in itertools.product(*axes):
        offset = {name: o for name, o, _ in combo}
        weight = math.prod(w for *_, w in combo)
        moved = {x.name: np.maximum(np.asarray(nominal[x.name], dtype=float) + offset[x.name], 0.1)
                 for x in spread if x.role != "front"}
        front = np.maximum(d_front + offset.get(stack.front.name, 0.0), 0.1)
        b = photon_budget(plain, e, front, {**others, **moved}, temperature_K, depth_points,
                          angle_deg)
        for key in ("front", "back", "reflected", "transmitted"):
            sums[key] = sums.get(key, 0.0) + weight * getattr(b, key)
        for name, v in b.parasitic.items():
            parasitic[name] = parasitic.get(name, 0.0) + weight * v
        for name, (z, g) in b.profiles.items():
            # a spread absorber's profile: at the same share of this place's thickness
            stretch = (nominal[name] + offset[name]) / nominal[name] if name in offset else 1.0
            profiles[name] = (z / stretch, profiles.get(name, (None, 0.0))[1] + weight * g * stretch)
    back_d = nominal.get(stack.back.name, others.get(stack.back.name, stack.back.thickness_nm))
    return PhotonBudget(e, sums["front"], sums["back"], parasitic, sums["reflected"],
                        sums["transmitted"],
                        (d_front, back_d[:, 0] if np.ndim(back_d) == 2 else back_d), profiles)


def stack_model_notes(stack: LayerStack) -> list[str]:
    """What a reader must know of the stack's optical model: a textured wafer front, films
    averaged over a thickness spread (every output of a stack says them)."""
    notes = []
    if stack.layers[-1].ends_stack and stack.layers[-1].front_texture == "lambertian":
        notes.append(f"{stack.layers[-1].name}: textured front: the light enters it randomised; "
                     "the films are taken flat, so the texture does not lower their reflection "
                     "of the sunlight (a conservative limit)")
    return notes + [f"{x.name}: optics averaged over its thickness varying by "
                    f"{x.thickness_spread_nm:g} nm across the cell (uniformly; each place coherent)"
                    for x in stack.layers if x.thickness_spread_nm > 0]


def rear_reflector_name(stack: LayerStack) -> str:
    """The loss table's name for what a wafer's rear reflector absorbs."""
    names = {x.name for x in stack.layers}
    return "rear reflector" if "rear reflector" not in names else f"rear reflector of {stack.back.name}"


def wafer_depths(thickness_nm: float, points: int) -> np.ndarray:
    """Depths [nm] crowded geometrically towards both faces of a wafer (from 0.1 nm), where
    strongly absorbed light (1/α of 10 nm in the blue) and grazing returning light are."""
    near = np.geomspace(0.1, thickness_nm / 2, max((points - 2) // 2, 2))
    return np.unique(np.concatenate([[0.0], near, thickness_nm - near, [thickness_nm]]))


def profile_figures(depth_nm, generation) -> dict:
    """What a device engineer reads off a generation profile: the carriers made per cm² and
    second (∫G dz), the peak rate and its depth, and the depth within which half are made."""
    from scipy.integrate import cumulative_simpson

    z, g = np.asarray(depth_nm, dtype=float), np.asarray(generation, dtype=float)
    made = cumulative_simpson(g, x=z * 1e-7, initial=0.0)  # [cm⁻²s⁻¹], z in cm
    peak = int(np.argmax(g))
    return {"carriers_per_cm2_s": float(made[-1]), "peak_per_cm3_s": float(g[peak]),
            "peak_depth_nm": float(z[peak]),
            "half_depth_nm": float(np.interp(0.5 * made[-1], made, z)) if made[-1] > 0 else None}


def generation_profiles(budget: PhotonBudget, flux) -> dict:
    """Each absorber's photogeneration rate G(z) under ``flux``, summed over the spectrum:
    {absorber name: (depth [nm] (nz,), G [cm⁻³ s⁻¹] (nz,))} for the first design of a budget
    made with ``depth_points``. Every absorbed photon makes one electron–hole pair, so
    ∫G dz = J_L/q of the absorber."""
    phi = np.interp(budget.energy, flux.energy, flux.flux) * trapezoid_weights(budget.energy)
    # absorbed per nm per m² of sun → per cm³: 1e7 nm/cm × 1e-4 m²/cm²
    return {name: (z, 1e3 * (np.reshape(per_nm, (len(z), -1, budget.energy.size))[:, 0] @ phi))
            for name, (z, per_nm) in budget.profiles.items()}


def budget_currents(budget: PhotonBudget, flux, temperature_K: float, usable_from_eV: float = 0.0):
    """Photocurrents of every destination [A/m²] and the subcells' J0,rad by reciprocity.

    Parasitic, reflected and transmitted currents count photons above ``usable_from_eV`` only.
    Returns (j_light (n_d, 2), j0_rad (n_d, 2), parasitic {name: (n_d,)}, reflected (n_d,),
    transmitted (n_d,)).
    """
    w = trapezoid_weights(budget.energy) * Q
    phi = np.interp(budget.energy, flux.energy, flux.flux)
    bb = db.blackbody_photon_flux(budget.energy, temperature_K)
    j_light = np.stack([budget.front @ (w * phi), budget.back @ (w * phi)], axis=-1)
    j0 = np.stack([budget.front @ (w * bb), budget.back @ (w * bb)], axis=-1)
    usable = w * phi * (budget.energy >= usable_from_eV)
    parasitic = {k: v @ usable for k, v in budget.parasitic.items()}
    return j_light, j0, parasitic, budget.reflected @ usable, budget.transmitted @ usable


def usable_from_eV(stack: LayerStack, temperature_K: float) -> float:
    """The back absorber's gap at the cell temperature [eV]: photons above it are usable."""
    back = stack.back
    assert back.absorber is not None  # the back role is an absorber (checked on reading)
    gap = back.gap_eV if back.gap_eV is not None else back.absorber.gap_eV
    return float(gap + back.absorber.gap_shift_eV(temperature_K))


# --------------------------------------------------------------------------------------
# current matching in a stack
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class StackPoint:
    """One design of a stack: its layers' thicknesses and what it delivers."""

    others: dict  #: swept layer name → thickness [nm]
    front_thickness_nm: float
    j_light: np.ndarray  #: (2,) [A/m²]
    efficiency_2t: float
    efficiency_4t: float
    voc_2t: float
    parasitic: dict  #: layer name → photocurrent lost there [A/m²]
    reflected: float  #: [A/m²]
    matched: bool  #: the subcells' photocurrents are equal here
    transmitted: float = 0.0  #: out through the back of the stack [A/m²]


@dataclass(frozen=True)
class StackMatch:
    """Current matching of a layer stack (:func:`match_in_stack`)."""

    stack: LayerStack
    thicknesses_nm: np.ndarray  #: the front-absorber grid
    grids: list  #: per combination of other layers: (others, j_light (n_d, 2), eff_2t, eff_4t)
    crossings: list[StackPoint]  #: every current match found, best 2T first
    best: StackPoint  #: the best matched design, or the best 2T point if none matched
    best_4t: StackPoint  #: the highest four-terminal efficiency on the grid (no matching needed)
    notes: tuple[str, ...]
    temperature_K: float
    irradiance: float
    energy: np.ndarray  #: the spectrum's energy grid [eV]
    flux: PhotonFlux | None = None  #: the spectrum

    #: depths on which the best design's generation profiles are given
    PROFILE_POINTS = 201

    @functools.cached_property
    def best_budget(self) -> PhotonBudget:
        """Where the photons go in the best design, on the spectrum's grid, with each
        absorber's depth profile (computed once)."""
        b = self.best
        return photon_budget(self.stack, self.energy, [b.front_thickness_nm], b.others,
                             self.temperature_K, depth_points=self.PROFILE_POINTS)

    @functools.cached_property
    def best_generation(self) -> dict:
        """Each absorber's generation rate G(z) in the best design (:func:`generation_profiles`)."""
        assert self.flux is not None  # match_in_stack keeps the spectrum
        return generation_profiles(self.best_budget, self.flux)


def evaluate_budget(stack, budget, flux, temperature_K, ideality, electrical):
    """The stack's electrical result from a photon budget under ``flux``: (performance,
    parasitic, reflected and transmitted currents)."""
    usable = usable_from_eV(stack, temperature_K)
    j_light, j0, parasitic, reflected, transmitted = budget_currents(budget, flux, temperature_K,
                                                                     usable)
    ere = np.array([stack.front.absorber.ere, stack.back.absorber.ere])
    reference = None
    if ideality != 1.0:  # an n ≠ 1 cell's non-radiative diode is fixed under AM1.5G, 1 sun
        from tandem.physics.spectra import reference_flux_on

        reference = budget_currents(budget, reference_flux_on(flux.energy), temperature_K,
                                    usable)[0]
    perf = evaluate_stack(j_light, j0, temperature_K, flux.irradiance, ere, ideality, electrical,
                          stack.front.absorber.refractive_index, reference,
                          absorbers_bulk([x.absorber for x in (stack.front, stack.back)],
                                         [stack.front.gap_eV, stack.back.gap_eV],
                                         budget.thickness_nm, temperature_K))
    return perf, parasitic, reflected, transmitted


def _point(stack, flux, others, d, temperature_K, ideality, electrical, matched, budget=None):
    """The stack at front thickness ``d`` (``budget``: its photon budget, if already solved)."""
    if budget is None:
        budget = photon_budget(stack, flux.energy, [d], others, temperature_K)
    perf, parasitic, reflected, transmitted = evaluate_budget(stack, budget, flux, temperature_K,
                                                              ideality, electrical)
    return StackPoint(dict(others), float(d), perf.j_light[0], float(perf.efficiency_2t[0]),
                      float(perf.efficiency_4t[0]), float(perf.voc_2t[0]),
                      {k: float(v[0]) for k, v in parasitic.items()}, float(reflected[0]), matched,
                      float(transmitted[0]))


def _refined_4t(stack, flux, others, grid, i, temperature_K, ideality, electrical):
    """The four-terminal optimum refined between the grid's neighbours of its best point
    (bounded search on log thickness to 10⁻⁵ relative; the grid point if that is better)."""
    from scipy.optimize import minimize_scalar

    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    on_grid = _point(stack, flux, others, grid[i], temperature_K, ideality, electrical, False)
    if lo == hi:
        return on_grid

    def loss(log_d):
        return -_point(stack, flux, others, math.exp(log_d), temperature_K, ideality, electrical,
                       False).efficiency_4t

    found = minimize_scalar(loss, bounds=(math.log(lo), math.log(hi)), method="bounded",
                            options={"xatol": 1e-5})
    refined = _point(stack, flux, others, math.exp(found.x), temperature_K, ideality,
                     electrical, False)
    return refined if refined.efficiency_4t > on_grid.efficiency_4t else on_grid


def _bisect_match(stack, flux, others, lo, hi, temperature_K, ends):
    """Front thickness where J_front = J_back between lo and hi (a sign change) [nm]: Brent's
    method on log d (the sweep is geometric) to 10⁻⁷ relative. ``ends``: J_front − J_back at
    lo and hi, known from the sweep (Brent's first two evaluations, not solved again).
    Returns (thickness, its photon budget, or None where the root was not itself solved)."""
    from scipy.optimize import brentq

    known = {math.log(lo): float(ends[0]), math.log(hi): float(ends[1])}
    budgets = {}

    def gap(log_d):
        if log_d in known:
            return known[log_d]
        budget = photon_budget(stack, flux.energy, [math.exp(log_d)], others, temperature_K)
        budgets[log_d] = budget
        j = budget_currents(budget, flux, temperature_K)[0][0]
        return j[0] - j[1]

    root = brentq(gap, math.log(lo), math.log(hi), xtol=1e-7, rtol=1e-12)
    return math.exp(root), budgets.get(root)


def match_in_stack(stack: LayerStack, flux, temperature_K: float = 298.15, points: int = 120,
                   ideality: float = 1.0, electrical=None, progress=None) -> StackMatch:
    """Every current match of the front absorber's thickness, for every swept layer.

    Interference makes J_front(d) − J_back(d) non-monotonic, so all sign changes on the
    grid are refined (bisection) and reported; the best two-terminal one is the design.
    """
    from tandem.physics.stack import IDEAL

    electrical = electrical or IDEAL
    front = stack.front
    assert front.absorber is not None  # the front role is an absorber (checked on reading)
    lo, hi = front.sweep_nm or front.absorber.thickness_range_nm
    grid = np.geomspace(lo, hi, points)
    axes = [[(x.name, float(v)) for v in np.geomspace(*(x.sweep_nm or (0.0, 0.0)), x.points)]
            for x in stack.swept]  # a swept layer always has its range
    combos = [dict(c) for c in itertools.product(*axes)] if axes else [{}]
    notes = [n for n in (x.absorber.bulk_note() for x in (stack.front, stack.back)
                         if x.absorber is not None) if n]
    notes += stack_model_notes(stack)
    usable = flux.flux * trapezoid_weights(flux.energy) * (
        flux.energy >= usable_from_eV(stack, temperature_K))
    for x in stack.layers:  # tables held constant beyond their ends: said where it matters
        if x.table is not None:
            wl = HC_EV_NM / flux.energy
            first, last = float(x.table[0][0]), float(x.table[0][-1])
            share = usable[(wl < first) | (wl > last)].sum() / usable.sum()
            if share > 1 - 1e-9:  # an end value held for every usable photon is no data at all
                wl_usable = wl[usable > 0]
                raise TandemInputError(
                    f"stack '{stack.key}': layer '{x.name}' has n,k for {first:g}–{last:g} nm, "
                    f"none of the usable light ({wl_usable.min():.0f}–{wl_usable.max():.0f} nm); "
                    "give a table that covers it")
            if share > 1e-3:
                notes.append(f"{x.name}: n and k held at their end values outside {first:g}–{last:g} "
                             f"nm, where {100 * share:.1f} % of the usable photons are")
    grids, crossings = [], []
    for n, others in enumerate(combos, 1):
        budget = photon_budget(stack, flux.energy, grid, others, temperature_K)
        perf = evaluate_budget(stack, budget, flux, temperature_K, ideality, electrical)[0]
        grids.append((others, perf.j_light, perf.efficiency_2t, perf.efficiency_4t))
        diff = perf.j_light[:, 0] - perf.j_light[:, 1]
        for i in np.flatnonzero(np.sign(diff[:-1]) * np.sign(diff[1:]) < 0):
            d, budget = _bisect_match(stack, flux, others, grid[i], grid[i + 1], temperature_K,
                                      diff[i:i + 2])
            crossings.append(_point(stack, flux, others, d, temperature_K, ideality, electrical,
                                    True, budget))
        if progress:
            progress(n, len(combos))
    crossings.sort(key=lambda p: -p.efficiency_2t)
    if crossings:
        best = crossings[0]
    else:
        k2, i2 = max(((k, int(np.nanargmax(g[2]))) for k, g in enumerate(grids)),
                     key=lambda ki: grids[ki[0]][2][ki[1]])
        best = _point(stack, flux, grids[k2][0], grid[i2], temperature_K, ideality, electrical, False)
        limiting = "front" if best.j_light[0] < best.j_light[1] else "back"
        notes.append(f"no current match for {lo:g}–{hi:g} nm of {front.name}: the {limiting} "
                     "subcell limits throughout; the best two-terminal point is shown")
    for x in stack.swept:  # an optimum on the edge of a layer's sweep may lie beyond it
        value = best.others.get(x.name)
        if value is not None and x.sweep_nm is not None and x.points > 2 and any(
                math.isclose(value, edge, rel_tol=1e-9) for edge in x.sweep_nm):
            notes.append(f"{x.name}: the best design sits at the edge of its sweep ({value:g} nm "
                         f"of {x.sweep_nm[0]:g}–{x.sweep_nm[1]:g} nm); widen the range to see "
                         "whether it improves beyond")
    k4, i4 = max(((k, int(np.nanargmax(g[3]))) for k, g in enumerate(grids)),
                 key=lambda ki: grids[ki[0]][3][ki[1]])
    best_4t = _refined_4t(stack, flux, grids[k4][0], grid, i4, temperature_K, ideality,
                          electrical)
    return StackMatch(stack, grid, grids, crossings, best, best_4t, tuple(notes),
                      float(temperature_K), float(flux.irradiance), flux.energy, flux)
