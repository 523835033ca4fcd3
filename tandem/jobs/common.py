"""What every job shares: the work estimate, frames, dataset attributes, the absorber pair.

Each job lives in a module of its own with its result type. Every front end (the command
line, scenario studies, a notebook) calls them; each result has
``summary()`` (the plain dict ``--json`` prints), ``to_frame()`` (a pandas DataFrame, units in
the column names), ``to_dataset()`` where the result is gridded (an xarray Dataset, the swept
quantities as dimensions with their units, the conditions as attributes) and ``plot(ax=None)``
(a matplotlib Figure; the backend is never changed).
"""

from __future__ import annotations

import math
from typing import Callable

from tandem.jobs.inputs import OperatingPoint
from tandem.optics.absorber_files import load_absorber
from tandem.optics.absorbers import Absorber

Progress = Callable[[int, int], None]

#: Measured throughput on the 2-core reference machine (tests/benchmarks/run.py; rounded down):
#: configurations per second for each job, and the limits beyond which a run must be asked for.
RATES = {"map": 4.0e5, "match": 1.0e4, "spread": 8.0e3,
         # a clear year (4,451 steps × 11 gaps × 16 thicknesses), perovskite over CIGS: 0.81–0.89
         # s, 880,000–970,000 a second in a slow hour of the 2-core machine (1.9 s, 408,000,
         # before the searches' bookkeeping became elementwise, 2026-12-04)
         "yield": 8.0e5}
LIMIT_SECONDS, LIMIT_BYTES = 600.0, 2 * 2**30
#: Resident memory of a tandem process before its job (numpy, scipy, matplotlib and the tool
#: imported: `tandem map` of 41 × 21 gaps over absorbers peaked at 185 MiB, the whole tree
#: sampled by tests/benchmarks/estimates.py); every memory estimate adds its job's to this.
PROCESS_BYTES = 180 * 2**20
#: A gap map's memory at its peak, per grid point: the grids, a chunk's arrays, the table and
#: its files (a 901 × 701 map measured 183 MB above the command's own 199 MB: 290 bytes)
MAP_BYTES = 300.0
#: Writing a map's tables (CSV, Parquet) and figures, per gap pair: about twice its computing
#: (801 × 801 took 6.8 s and 1601 × 1201 13.9 s whole on 2026-12-04, 7.2 µs a pair, of which
#: 2.4 µs compute; 18 µs a pair before the tables went through pyarrow)
MAP_OUTPUT_SECONDS = 6e-6


def map_work(pairs: int, per_pair: float = 1.0) -> tuple[float, float]:
    """Seconds and bytes (above the process's own) of a gap map of ``pairs`` gap pairs written
    to its tables and figures; ``per_pair``: its optics' cost in step-absorber pairs."""
    return pairs * (per_pair / RATES["map"] + MAP_OUTPUT_SECONDS), pairs * MAP_BYTES


#: A pair whose absorber has bulk recombination (Auger, SRH: the bundled silicon) solves the
#: full balance at every step: the same year over silicon took 3.54 s, 221,000 a second (4.0×;
#: 9× before the second round of 2026-12-04)
BULK_COST = 4.0
#: Series or shunt resistance (the general search): the silicon year 3.58 → 4.38 s (1.22×)
RESISTIVE_COST = 1.25


def yield_cost(operating: OperatingPoint, front: Absorber, back: Absorber) -> float:
    """How many times a plain pair's yield (``RATES["yield"]``) one with these absorbers and
    options costs: bulk recombination, resistances, connections (all measured)."""
    bulk = front.bulk is not None or back.bulk is not None
    return ((BULK_COST if bulk else 1.0) * (RESISTIVE_COST if operating.electrical.resistive else 1.0)
            * connection_cost(operating))


#: A region site's work besides its sweep (its spectra, the AM1.5G comparison, its record):
#: 0.6–2 s measured for a day, a month and a year in one process, 3.5 s for a day in a fresh
#: local worker
SITE_SECONDS = 2.0
#: Resident memory of one local region worker [bytes]: the peak of a whole `tandem yield`
#: process over a clear-sky year (337 MiB, docs/performance.md) rounded up; a worker holds one
#: site-year at a time, so the region's memory is this times the workers, whatever its sites.
WORKER_BYTES = 350 * 2**20


#: A layer-stack solve's cost: per front thickness (the wafer's trace, the currents) and per
#: layer, photon energy and front thickness (the films' fields), seconds; and the bytes held
#: per layer, energy and thickness solved at once. Set from tests/benchmarks/estimates.py on
#: 2026-12-04 after the films' second round: the bundled wafer stack's match (770 thickness
#: solves of 7 layers) 9.8 s whole, mirrors of 67 and 131 layers 12.9 and 23.9 s (0.013 s
#: and 1.3e-6 s before it); memory: mirrors of 67 and 131 layers 1,255 and 2,333 MiB peak.
STACK_SOLVE_SECONDS, STACK_CELL_SECONDS, STACK_CELL_BYTES = 0.006, 0.6e-6, 70.0
#: Solves of one thickness a match adds to its grid per swept combination: the bisection of
#: each crossing and the four-terminal refinement (8 to 19 counted)
STACK_REFINE_SOLVES = 20


def stack_work(stack, energies: int, thicknesses: int, batches: float) -> tuple[float, float]:
    """Seconds and bytes (above the process's own) of ``batches`` solves of a layer stack, each
    at ``thicknesses`` front thicknesses at once on ``energies`` photon energies: both grow
    with the layers, the energies and the thicknesses of a batch (every layer's fields are
    held for each)."""
    layers = len(stack.layers)
    seconds = batches * thicknesses * (STACK_SOLVE_SECONDS + layers * energies * STACK_CELL_SECONDS)
    return seconds, layers * energies * thicknesses * STACK_CELL_BYTES


def stack_match_work(stack, energies: int, points: int) -> tuple[float, float]:
    """Seconds and bytes (above the process's own) of current-matching a stack on ``points``
    front thicknesses: each swept combination's grid solved at once, then its refinements."""
    combos = math.prod(x.points for x in stack.swept)
    return (stack_work(stack, energies, points + STACK_REFINE_SOLVES, combos)[0],
            stack_work(stack, energies, points, 1)[1])


def region_seconds(job, specs) -> float:
    """One core's seconds for every site of a region: each site's daylight steps (half of the
    period's, or of a weather file's 8,760 hours) × the designs at the yield's measured rate
    and costs, twice with bifacial rows, plus :data:`SITE_SECONDS`. Measured at one site over
    perovskite-wide: a year over silicon estimated 17.6 s + 2, ran 19.7 s; over CIGS 2.0 + 2,
    ran 2.1 s."""
    from tandem.design.sky import parse_period

    clear = parse_period(job.period, "UTC", job.step_minutes).size / 2
    rows = 2 if job.rows is not None else 1

    def sweep(steps: float) -> float:
        if job.stack is not None:  # films and wafer per temperature bin (about 20 a year)
            from tandem.design.stack_angles import ANGLE_SOLVES  # and per angle, s and p

            from tandem.design.sky import common_grid

            return stack_work(job.stack.stack, common_grid().size, len(job.thicknesses_nm),
                              20 + ANGLE_SOLVES)[0]
        designs = len(job.gaps_eV) * len(job.thicknesses_nm)
        return steps * designs * yield_cost(job.operating, job.front, job.back) / RATES["yield"]

    return sum(sweep(8760 / 2 if spec.weather else clear) * rows + SITE_SECONDS for spec in specs)


def connection_cost(operating: OperatingPoint) -> float:
    """How many times the two- and four-terminal yield a yield with these connections costs.

    Measured for a clear year at 38.5° N, perovskite over Auger silicon, R_s 1 Ω·cm²: 26.7 s
    for 2T and 4T, 44.6 s with a middle-contact resistance (×1.7), 48.5 s with one string
    ratio (+0.8 a ratio). Maps and matches pay less for them (a map ×1.1 and +0.3 a ratio, a
    match ×1.3 with a middle contact), so their estimates leave it out.
    """
    el = operating.electrical
    middle = operating.terminals == 3 and el.middle_resistance_ohm_cm2 > 0
    return 1.0 + 0.7 * middle + 0.8 * len(el.string_ratios)


def check_work(job: str, count: float, bytes_needed: float = 0.0, allow_large: bool = False,
               what: str = "configurations") -> None:
    """Refuse, with the estimate, a run predicted to take over 10 minutes or 2 GiB.

    ``count`` is the number of configurations (gap pairs, devices, step × design), ``bytes``
    the largest array the run holds. ``allow_large`` (``--large``) lifts the limit.
    """
    check_seconds(job, count / RATES[job], f"has {count:,.0f} {what}", allow_large, bytes_needed)


def check_seconds(job: str, seconds: float, what: str, allow_large: bool = False,
                  bytes_needed: float | None = None) -> None:
    """Refuse, with the estimate, a run predicted to take over 10 minutes (or, where
    ``bytes_needed`` is estimated, 2 GiB); ``what`` says how it was counted ("has 12 pairs",
    "is 40 sites on 2 local workers"). ``allow_large`` (``--large``) lifts the limit."""
    from tandem.core.errors import TandemInputError

    if bytes_needed is not None:
        bytes_needed += PROCESS_BYTES  # the whole process, as a user sees it
    log_estimate(job, what, seconds, bytes_needed)
    if allow_large or not over_limits(seconds, bytes_needed):
        return
    memory, limit = ("", "") if bytes_needed is None else (
        f" and {bytes_needed / 2**20:,.0f} MiB on a 2-core laptop",
        f" and {LIMIT_BYTES / 2**30:.0f} GiB")
    raise TandemInputError(f"this {job} {what}: about {seconds:,.0f} s{memory}, over the limit of "
                           f"{LIMIT_SECONDS / 60:.0f} min{limit}; narrow it, or pass --large to "
                           "run it anyway")


def log_estimate(job: str, what: str, seconds: float, bytes_needed: float | None) -> None:
    """Log a run's estimate (logger ``tandem.work``, level INFO: silent unless configured), for
    tests/benchmarks/estimates.py to set beside the measured run."""
    import logging

    logging.getLogger("tandem.work").info("%s %s: %.3f s, %.0f bytes", job, what, seconds,
                                          -1 if bytes_needed is None else bytes_needed)


def over_limits(seconds: float, bytes_needed: float | None) -> bool:
    """Whether a run estimated at ``seconds`` and ``bytes_needed`` (the whole process) needs
    ``--large``."""
    return seconds > LIMIT_SECONDS or (bytes_needed is not None and bytes_needed > LIMIT_BYTES)


def frame(rows):
    import pandas as pd

    return pd.DataFrame(rows)


def with_conditions(ds, light_name: str, temperature_K: float, terminals: int, **extra):
    """A result's Dataset with its run's conditions as scalar coordinates (so runs concatenate
    along them) and ``extra`` attributes (None left out): :func:`tandem.output.datasets.described`."""
    from tandem.output.datasets import described

    ds.attrs.update({k: v for k, v in extra.items() if v is not None})
    return described(ds, spectrum=light_name, temperature=float(temperature_K),
                     terminals=int(terminals))


def check_types(**inputs) -> None:
    """Refuse, in one line, a typed input of the wrong kind (a Light where an OperatingPoint
    belongs, say: easy to pass by position), instead of a traceback deep in the job."""
    from tandem.core.errors import TandemInputError
    from tandem.jobs.inputs import Light

    kinds = {"light": Light, "reference": Light, "operating": OperatingPoint}
    for name, value in inputs.items():
        kind = kinds[name]
        if value is not None and not isinstance(value, kind):
            raise TandemInputError(f"{name}: got {type(value).__name__}, not a tandem.{kind.__name__}; "
                                   f"pass {name}=tandem.{kind.__name__}(...) by keyword")


def check_connection(operating: OperatingPoint, job: str, three: bool = False,
                     strings: bool = False) -> None:
    """Refuse, in one line, three terminals or voltage-matched strings where ``job`` does not
    compute them (rather than ranking by another connection in silence)."""
    from tandem.core.errors import TandemInputError

    if operating.terminals == 3 and not three:
        raise TandemInputError(f"{job} does not compute three terminals: use --terminals 2 or 4 "
                               "(limit, match, map, spread, yield and region take 3)")
    if operating.electrical.string_ratios and not strings:
        raise TandemInputError(f"{job} does not compute voltage-matched strings: drop "
                               "--string-ratio (limit, map, yield and region take it)")


def as_absorber(a: Absorber | str) -> Absorber:
    return a if isinstance(a, Absorber) else load_absorber(a)


def absorber_pair(front, back, operating: OperatingPoint) -> tuple[Absorber, Absorber]:
    """The two absorbers, with the operating point's ERE in place of theirs if it gives one."""
    from dataclasses import replace

    a_front, a_back = as_absorber(front), as_absorber(back)
    if operating.ere is not None:
        ere = operating.ere * 2 if len(operating.ere) == 1 else operating.ere
        a_front = replace(a_front, ere=ere[0], ere_origin="given on the command line")
        a_back = replace(a_back, ere=ere[1], ere_origin="given on the command line")
    return a_front, a_back



def blackbody_of(light) -> tuple[float, float] | None:
    """(T_sun, concentration) when the light is an unscaled blackbody sun, else None."""
    if light is None or light.source != "blackbody" or light.irradiance_W_m2 is not None:
        return None
    return float(light.sun_temperature_K), float(light.concentration)




#: column-name unit suffixes and the CF-style unit string they stand for (longest first)
UNIT_SUFFIXES = {"_mA_cm2": "mA/cm2", "_kWh_m2": "kWh/m2", "_W_m2": "W/m2", "_A_m2": "A/m2",
                 "_meV": "meV", "_eV": "eV", "_nm": "nm", "_pct": "%", "_K": "K", "_V": "V",
                 "_hours": "h"}


def frame_dataset(frame, dim: str, attrs: dict | None = None, label: str | None = None):
    """A table as an xarray Dataset along ``dim``: a column named with a unit suffix becomes a
    variable without it and a ``units`` attribute ('jsc_mA_cm2' -> 'jsc' in mA/cm2); columns
    of text are coordinates, the ``label`` column the values of ``dim`` itself; missing values
    (None) become NaN."""
    import numpy as np
    import xarray as xr

    variables, coords = {}, {}
    for column in frame.columns:
        values = frame[column].to_numpy()
        if values.dtype == object and all(isinstance(v, str) for v in values):
            coords[dim if column == label else column] = (dim, values.astype(str))
            continue
        name, units = column, None
        for suffix, unit in UNIT_SUFFIXES.items():
            if column.endswith(suffix):
                name, units = column[: -len(suffix)], unit
                break
        data = np.array([np.nan if v is None else v for v in values], dtype=float)
        variables[name] = (dim, data, {"units": units} if units else {})
    from tandem.output.datasets import described

    return described(xr.Dataset(variables, coords=coords, attrs=dict(attrs or {})))


class ResultDisplay:
    """A compact ``repr`` and a notebook table (``_repr_html_``) for every job's result, from
    its ``summary()``: the scalar entries only (lists and tables stay in ``to_frame()``)."""

    def _headline(self) -> dict:
        summary = self.summary()  # type: ignore[attr-defined]
        return {k: v for k, v in summary.items()
                if isinstance(v, (int, float, str, bool)) and k != "caution"}

    def dataset_attrs(self) -> dict:
        """The summary's scalar entries as dataset attributes (NetCDF has no booleans)."""
        return {k: int(v) if isinstance(v, bool) else v for k, v in self._headline().items()}

    def __repr__(self) -> str:
        items = ", ".join(f"{k}={v!r}" for k, v in list(self._headline().items())[:8])
        return f"<{type(self).__name__} {items}>"

    def _repr_html_(self) -> str:
        from html import escape

        rows = "".join(f"<tr><th>{escape(str(k))}</th><td>{escape(str(v))}</td></tr>"
                       for k, v in self._headline().items())
        return f"<table><caption>{escape(type(self).__name__)}</caption>{rows}</table>"
