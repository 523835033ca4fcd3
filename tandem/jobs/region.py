"""Regional studies: the energy-optimal design at many sites, on a distributed engine.

Each site is one task: it builds its own sky (clear or from its weather file) from a few
numbers, sweeps front gap × thickness over its year (:func:`tandem.design.yields.yield_sweep`) and
returns a small record. Records are stored in the region folder as each site finishes (a row
of ``sites.sqlite``), so an interrupted run resumes where it stopped: finished sites whose
inputs are unchanged are read back, not recomputed. Sites run in this process, or on
``dask.distributed`` (a local cluster of processes, or an existing scheduler); the numbers
are identical either way (tested).
"""

from __future__ import annotations

import csv
import hashlib
import json
import math
import re
from contextlib import closing
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

import numpy as np

from tandem.core.errors import MissingExtra, TandemInputError
from tandem.core.files import STAMP, check_output_folder
from tandem.jobs.common import ResultDisplay
from tandem.jobs.region_folder import (REGION_FORMAT, _clear_region_folder, _digest, _read_record,
                                       _write_json, open_store, region_folder_reason, store_record,
                                       stored_count)
from tandem.jobs.fingerprints import file_sha, input_files_sha, stack_text, tandem_version
from tandem.jobs.inputs import Light, OperatingPoint
from tandem.optics.absorbers import Absorber

if TYPE_CHECKING:  # for annotations only: no import cost at run time
    from tandem.design.sky import Rows
    from tandem.design.yields import StackYield

SITE_COLUMNS = ("name", "latitude", "longitude", "altitude_m", "timezone", "weather")
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 ._+-]{0,63}$")


@dataclass(frozen=True)
class SiteSpec:
    """One site of a region: where it is and, optionally, its weather file."""

    name: str
    latitude: float
    longitude: float
    altitude_m: float = 0.0
    timezone: str = ""  #: IANA name; empty: the standard time of the longitude
    weather: str | None = None  #: EPW or TMY3 path, or None for clear skies

    @property
    def zone(self) -> str:
        from tandem.design.sky import standard_time_zone

        return self.timezone or standard_time_zone(self.longitude)


@dataclass(frozen=True)
class RegionJob:
    """What every site computes: the pair, the sweep, the period and the module."""

    front: Absorber
    back: Absorber
    operating: OperatingPoint
    gaps_eV: tuple[float, ...]
    thicknesses_nm: tuple[float, ...]
    back_thickness_nm: float
    period: str = "year:2026"
    step_minutes: float = 60.0
    tilt: str = "latitude"  #: 'latitude' (tilt = the absolute latitude, facing the equator) or degrees
    albedo: float = 0.2
    rows: Rows | None = None  #: bifacial rows, or None (monofacial)
    reference: Light | None = None  #: the comparison design's light (default AM1.5G)
    cell_temperature_K: float | None = None  #: one cell temperature instead of SAPM per step
    cover_index: float = 1.526  #: the front cover's index, for the incidence-angle loss (1: none)
    stack: StackYield | None = None  #: a layer stack instead of the optics-lite pair

    def fingerprint(self, spec: SiteSpec) -> str:
        """SHA-256 of everything that changes a site's numbers (resume only on a match)."""
        text = json.dumps({"site": asdict(spec), "weather": file_sha(spec.weather),
                           "job": self.job_fingerprint()}, sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()

    def input_digests(self) -> dict[str, str]:
        """What a region dataset says it was computed from, as attributes: the job's
        fingerprint (its resume key) and the SHA-256 of each input file it names by path."""
        return {"job_sha256": self.job_fingerprint(),
                **{f"input_sha256_{k}": v
                   for k, v in sorted(input_files_sha(self.operating, self.reference).items())}}

    def job_fingerprint(self) -> str:
        """SHA-256 of the job's own inputs (the same for every site)."""
        text = json.dumps({"front": self.front.path.read_text(encoding="utf-8"),
                           "back": self.back.path.read_text(encoding="utf-8"),
                           "ere": [self.front.ere, self.back.ere],
                           "operating": repr(self.operating), "gaps": self.gaps_eV,
                           "thicknesses": self.thicknesses_nm, "back_d": self.back_thickness_nm,
                           "period": self.period, "step": self.step_minutes, "tilt": self.tilt,
                           "albedo": self.albedo, "rows": repr(self.rows),
                           "reference": repr(self.reference),
                           "cell_temperature_K": self.cell_temperature_K,
                           "cover_index": self.cover_index,
                           "stack": None if self.stack is None else stack_text(self.stack),
                           # files named by path count by content, and the tool by version
                           "files": input_files_sha(self.operating, self.reference),
                           "version": tandem_version()},
                          sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()


def region_job(front: Absorber | str | None, back: Absorber | str | None,
               operating: OperatingPoint = OperatingPoint(), *, front_gaps_eV=None,
               thickness_points: int = 16, back_thickness_nm: float | None = None,
               period: str = "year:2026", step_minutes: float = 60.0,
               tilt: str | float = "latitude", albedo: float = 0.2, rows=None,
               reference=None, cell_temperature_K: float | None = None,
               cover_index: float = 1.526, stack=None, others=None) -> RegionJob:
    """What every site of a region computes, checked once (the same axes as a yield).

    ``tilt`` is degrees (0–90) or 'latitude' (tilt = the absolute latitude, facing the equator);
    ``thickness_points`` front thicknesses (2–100) span the front's range. ``stack`` (a
    LayerStack, bundled name or .toml) replaces FRONT and BACK: every site sweeps its front
    absorber's thickness with the films solved and the wafer traced, the other swept layers
    at ``others`` or the AM1.5G-matched design's (:func:`~tandem.energy_yield_stack`).

    Examples
    --------
    >>> from tandem.jobs.region import region_job
    >>> job = region_job('perovskite-wide', 'silicon', front_gaps_eV=[1.70, 1.75], thickness_points=3)
    >>> len(job.gaps_eV), len(job.thicknesses_nm), job.back_thickness_nm
    (2, 3, 160000.0)
    """
    from tandem.design.sky import parse_period
    from tandem.jobs.common import absorber_pair, check_connection
    from tandem.jobs.energy_yield import yield_axes

    check_connection(operating, "region", three=True, strings=True)

    design = None
    if stack is not None:
        given = [name for name, value in (("FRONT and BACK", front or back),
                                          ("front gaps", front_gaps_eV),
                                          ("back thickness", back_thickness_nm),
                                          ("bifacial rows", rows)) if value is not None]
        if given:
            raise TandemInputError(f"{', '.join(given)} with a layer stack: the stack file sets "
                                   "the absorbers, their gaps and the wafer, and light reaching "
                                   "its rear is not modelled; drop them")
        from tandem.jobs.energy_yield import stack_yield_design

        # the region's own estimate (its command) counts the sites, not this design match
        design, thick = stack_yield_design(stack, operating, reference or Light(), others, None,
                                           thickness_points, most_points=100, allow_large=True)
        a_front, a_back = design.front, design.back
        gaps, back_d = np.array([design.front_gap_eV]), design.back_thickness_nm
    else:
        if front is None or back is None:
            raise TandemInputError("give FRONT and BACK absorbers, or a layer stack")
        a_front, a_back = absorber_pair(front, back, operating)
        gaps, thick = yield_axes(a_front, a_back, front_gaps_eV, None, thickness_points,
                                 most_points=100)
        back_d = a_back.thickness_nm if back_thickness_nm is None else float(back_thickness_nm)
    for g in gaps:
        a_front.check_gap(float(g), operating.allow_outside_range)
    a_back.check_thickness(back_d, "back thickness", operating.allow_outside_range)
    if tilt != "latitude":
        try:
            tilt_deg = float(tilt)
        except (TypeError, ValueError):
            raise TandemInputError(f"tilt {tilt!r}: give degrees or 'latitude'") from None
        if not 0 <= tilt_deg <= 90:
            raise TandemInputError(f"tilt {tilt_deg:g}: give 0 to 90 degrees")
        tilt = f"{tilt_deg:g}"
    if not (math.isfinite(albedo) and 0 <= albedo <= 1):
        raise TandemInputError(f"albedo {albedo:g}: give a fraction from 0 to 1")
    if not (math.isfinite(cover_index) and 1 <= cover_index <= 2.5):
        raise TandemInputError(f"cover index {cover_index:g}: give a refractive index from 1 (no "
                               "cover) to 2.5; glass is about 1.5")
    parse_period(period, "UTC", step_minutes)
    return RegionJob(a_front, a_back, operating, tuple(map(float, gaps)), tuple(map(float, thick)),
                     back_d, period, float(step_minutes), str(tilt), float(albedo), rows,
                     reference, cell_temperature_K, float(cover_index), design)


def read_sites(path: str | Path) -> list[SiteSpec]:
    """Sites from a CSV: name, latitude, longitude[, altitude_m, timezone, weather].

    Weather paths are relative to the CSV. Every problem is one line naming row and column.
    """
    path = Path(path)
    if not path.is_file():
        raise TandemInputError(f"site list '{path}' not found; give a CSV of name, latitude, "
                               "longitude[, altitude_m, timezone, weather]")
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            rows = list(csv.DictReader(line for line in fh if not line.lstrip().startswith("#")))
    except (UnicodeDecodeError, OSError, csv.Error) as exc:
        raise TandemInputError(f"site list '{path}' cannot be read ({type(exc).__name__}); give "
                               "a UTF-8 CSV") from None
    if not rows:
        raise TandemInputError(f"site list '{path}' has no sites; give a header line and one "
                               "row per site")
    unknown = [c for c in rows[0] if c not in SITE_COLUMNS]
    missing = [c for c in SITE_COLUMNS[:3] if c not in rows[0]]
    if unknown or missing:
        raise TandemInputError(f"site list '{path}': columns must be {', '.join(SITE_COLUMNS)} "
                               f"(missing: {', '.join(missing) or '-'}; unknown: "
                               f"{', '.join(map(str, unknown)) or '-'})")
    if len(rows) > 100_000:
        raise TandemInputError(f"site list '{path}' has {len(rows):,} sites; at most 100,000")
    sites, seen = [], set()
    for i, row in enumerate(rows, 2):
        where = f"site list '{path}', line {i}"
        name = (row.get("name") or "").strip()
        if not _NAME.match(name):
            raise TandemInputError(f"{where}: name {name!r} must be 1–64 letters, digits, spaces "
                                   "or . _ + - (it names the site's result file)")
        if name.lower() in seen:
            raise TandemInputError(f"{where}: site '{name}' is listed twice")
        seen.add(name.lower())
        values = {}
        for key, lo, hi, unit in (("latitude", -90, 90, "° north"), ("longitude", -180, 180, "° east"),
                                  ("altitude_m", -500, 9000, "m")):
            text = (row.get(key) or "").strip()
            if not text and key == "altitude_m":
                values[key] = 0.0
                continue
            try:
                value = float(text)
            except ValueError:
                raise TandemInputError(f"{where}: {key} {text!r} is not a number; give {unit}") from None
            if not (math.isfinite(value) and lo <= value <= hi):
                raise TandemInputError(f"{where}: {key} {value:g} is outside {lo}–{hi} {unit}")
            values[key] = value
        weather = (row.get("weather") or "").strip() or None
        if weather:
            weather = str((path.parent / weather).resolve())
            if not Path(weather).is_file():
                raise TandemInputError(f"{where}: weather file '{row['weather']}' not found "
                                       "(paths are relative to the site list)")
        sites.append(SiteSpec(name, values["latitude"], values["longitude"], values["altitude_m"],
                              (row.get("timezone") or "").strip(), weather))
    return sites


def grid_sites(latitudes: tuple[float, float, float], longitudes: tuple[float, float, float]
               ) -> list[SiteSpec]:
    """Clear-sky sites on a latitude × longitude grid (each axis lo, hi, step in degrees)."""
    axes = []
    for what, (lo, hi, step), limit in (("latitudes", latitudes, 90), ("longitudes", longitudes, 180)):
        if not (all(map(math.isfinite, (lo, hi, step))) and step > 0 and -limit <= lo <= hi <= limit):
            raise TandemInputError(f"{what} {lo:g}:{hi:g}:{step:g}: give lo:hi:step in degrees "
                                   f"with −{limit} ≤ lo ≤ hi ≤ {limit} and a positive step")
        n = int(round((hi - lo) / step)) + 1
        if n > 1000:
            raise TandemInputError(f"{what} has {n:,} values; give a coarser step")
        axes.append(np.linspace(lo, hi, n))
    sites = [SiteSpec(f"{la:+.2f}_{lo:+.2f}", float(la), float(lo))
             for la in axes[0] for lo in axes[1] if abs(la) < 89.0]
    if len(sites) > 100_000:
        raise TandemInputError(f"the grid has {len(sites):,} sites; at most 100,000")
    return sites




def site_year(spec: SiteSpec, job: RegionJob) -> dict:
    """The energy-optimal design at one site, monofacial (and bifacial with ``job.rows``).

    Every BLAS call of a site runs on one thread, in this process or on a worker: the sky
    series' matrix products, too, summed in another order on two threads, moved a design's
    energy in its last bits between a serial and a distributed run."""
    from tandem.design.series import one_blas_thread

    with one_blas_thread():
        return _site_year(spec, job)


def _site_year(spec: SiteSpec, job: RegionJob) -> dict:
    import time

    from tandem.design.matching import StackDesign, outside_ranges
    from tandem.design.sky import Site, clear_sky_series, parse_period
    from tandem.design.weather import weather_series
    from tandem.design.yields import yield_sweep
    from tandem.physics.spectra import load_spectrum

    start = time.perf_counter()
    tilt = min(abs(spec.latitude), 90.0) if job.tilt == "latitude" else float(job.tilt)
    site = Site(spec.name, spec.latitude, spec.longitude, spec.altitude_m, tilt,
                180.0 if spec.latitude >= 0 else 0.0, spec.zone, job.albedo,
                cover_index=job.cover_index)
    reference = (job.reference.photon_flux() if job.reference is not None
                 else load_spectrum("am1.5g").photon_flux())
    # a pair's spectral losses on each grid they meet: the series' and the reference's
    at_reference = StackDesign(job.front, job.back, *job.operating.losses_on(reference.energy))
    gaps, thick = np.array(job.gaps_eV), np.array(job.thicknesses_nm)
    out = {"name": spec.name, "latitude": spec.latitude, "longitude": spec.longitude,
           "altitude_m": spec.altitude_m, "timezone": spec.zone, "tilt_deg": tilt,
           "weather": Path(spec.weather).name if spec.weather else None}
    for label, rows in (("", None),) + ((("bifacial_", job.rows),) if job.rows else ()):
        if spec.weather:
            series = weather_series(site, spec.weather, rows)
        else:
            series = clear_sky_series(site, parse_period(job.period, site.timezone,
                                                         job.step_minutes), rows)
        if job.cell_temperature_K is not None:
            series = replace(series, cell_temperature_K=np.full(series.times.size,
                                                                job.cell_temperature_K))
        design = job.stack or replace(at_reference, **dict(zip(
            ("reflectance", "front_parasitic", "interlayer_parasitic"),
            job.operating.losses_on(series.energy))))
        sweep = yield_sweep(design, series, gaps, thick, job.back_thickness_nm, reference,
                            job.operating.ideality, job.operating.electrical,
                            allow_outside=job.operating.allow_outside_range,
                            reference_design=at_reference)
        i, j = sweep.optimum
        a, b = sweep.am15_optimum
        out.update({
            f"{label}front_gap_eV": float(sweep.gaps[i]),
            f"{label}front_thickness_nm": float(sweep.thicknesses[j]),
            f"{label}energy_2t_kWh_m2": float(sweep.energy_2t[i, j]),
            f"{label}energy_4t_kWh_m2": float(sweep.energy_4t[i, j]),
            f"{label}mismatch_loss_kWh_m2": float(sweep.energy_4t[i, j] - sweep.energy_2t[i, j]),
            **({f"{label}energy_3t_kWh_m2": float(sweep.energy_3t[i, j])}
               if job.operating.terminals == 3 and sweep.energy_3t is not None else {}),
            **{f"{label}energy_voltage_matched_{m}:{n}_kWh_m2": float(np.asarray(sweep.energy_vm)[i, j, k])
               for k, (m, n) in enumerate(job.operating.electrical.string_ratios)},
            f"{label}am15g_design_energy_2t_kWh_m2": float(sweep.energy_2t[a, b]),
            f"{label}energy_2t_grid": sweep.energy_2t.tolist(),
            # what --outside-range let the energy-optimal design take ("" when all is inside)
            f"{label}outside_range": "; ".join(outside_ranges(
                design, float(sweep.gaps[i]), float(sweep.thicknesses[j]),
                job.back_thickness_nm)),
        })
        if not label:
            out.update({"am15g_front_gap_eV": float(sweep.gaps[a]),
                        "am15g_front_thickness_nm": float(sweep.thicknesses[b]),
                        "insolation_kWh_m2": float(series.insolation_kWh_m2),
                        "steps": int(series.times.size)})
        else:
            out["rear_insolation_kWh_m2"] = float(series.rear_insolation_kWh_m2)
    out["seconds"] = time.perf_counter() - start
    return out




@dataclass(repr=False)
class RegionResult(ResultDisplay):
    """Every site's record, in the order given, and what this run computed."""

    records: list[dict]
    computed: list[str] = field(default_factory=list)  #: sites computed in this run
    reused: list[str] = field(default_factory=list)  #: finished sites read back (resumed)
    folder: Path | None = None
    job: RegionJob | None = None

    def summary(self) -> dict:
        from tandem.design.layerstack import stack_model_notes
        from tandem.output.report import CAUTION

        keys = [k for k in self.records[0] if not k.endswith("_grid")] if self.records else []
        return {"sites": [{k: r[k] for k in keys} for r in self.records],
                "computed": self.computed, "resumed": self.reused,
                "seconds_per_site": (float(np.mean([r["seconds"] for r in self.records]))
                                     if self.records else None),
                "front": self.job.front.key if self.job else None,
                "back": self.job.back.key if self.job else None,
                "stack": self.job.stack.stack.key if self.job and self.job.stack else None,
                "stack_layers_nm": dict(self.job.stack.others, origin=self.job.stack.origin)
                if self.job and self.job.stack else None,
                "bifacial": bool(self.job and self.job.rows),
                "stack_notes": stack_model_notes(self.job.stack.stack)
                if self.job and self.job.stack else [], "caution": CAUTION}

    def to_frame(self):
        import pandas as pd

        return pd.DataFrame([{k: v for k, v in r.items() if not k.endswith("_grid")}
                             for r in self.records])

    def to_dataset(self, grids: bool = False):
        """Per-site results on a ``site`` dimension (xarray); with ``grids`` the 2T energy
        over front gap × thickness at every site as well."""
        import xarray as xr

        from tandem.jobs.common import UNIT_SUFFIXES

        frame = self.to_frame()
        data: dict[str, tuple] = {}
        # a column's unit suffix becomes its units attribute, as in every other result's
        # dataset ('energy_2t_kWh_m2' -> 'energy_2t' in kWh/m2)
        suffixes = {**UNIT_SUFFIXES, "_deg": "degree", "_m": "m"}
        for column in frame.columns:
            if column in ("name",):
                continue
            name, unit = column, "s" if column == "seconds" else ""
            for suffix, u in suffixes.items():
                if column.endswith(suffix):
                    name, unit = column[: -len(suffix)], u
                    break
            values = frame[column].to_numpy()
            if values.dtype == object:
                values = np.array(["" if v is None else str(v) for v in values])
            data[name] = ("site", values, {"units": unit} if unit else {})
        coords: dict[str, tuple] = {"site": ("site", frame["name"].to_numpy().astype(str))}
        for axis, unit in (("latitude", "degrees_north"), ("longitude", "degrees_east")):
            if axis in data:  # CF's coordinates of a site, with their standard names
                coords[axis] = ("site", data.pop(axis)[1].astype(float),
                                {"units": unit, "standard_name": axis})
        if grids and self.job is not None:
            # the designs every site was searched over (front_gap and front_thickness are each
            # site's energy-optimal one)
            coords["design_front_gap"] = ("design_front_gap", np.array(self.job.gaps_eV),
                                          {"units": "eV"})
            coords["design_front_thickness"] = ("design_front_thickness",
                                                np.array(self.job.thicknesses_nm), {"units": "nm"})
            for key in [k for k in self.records[0] if k.endswith("_grid")]:
                data[key.removesuffix("_grid") + "_by_design"] = (
                    ("site", "design_front_gap", "design_front_thickness"),
                    np.array([r[key] for r in self.records]), {"units": "kWh/m2"})
        attrs: dict[str, Any] = {"written_by": STAMP, "format": REGION_FORMAT}
        if self.job is not None:
            attrs.update(front=self.job.front.key, back=self.job.back.key,
                         step_minutes=float(self.job.step_minutes),
                         bifacial=int(self.job.rows is not None), **self.job.input_digests())
        from tandem.output.datasets import described

        # the run's conditions as scalar coordinates: two regions concatenate along them
        conditions = {} if self.job is None else dict(
            period=self.job.period, absorbers=(self.job.stack.stack.key if self.job.stack else
                                               f"{self.job.front.key} over {self.job.back.key}"))
        return described(xr.Dataset(data, coords=coords, attrs=attrs), **conditions)

    def plot(self, ax=None):
        from tandem.output.sky_plots import draw_region

        return draw_region(self, ax)



def require_dask() -> None:
    """dask.distributed, which a region on more than one process needs: one line naming the
    extra that brings it when it is missing."""
    try:
        import distributed  # noqa: F401  (its import is the check)
    except ImportError:
        raise MissingExtra("a region on more than one process needs dask.distributed: pip "
                           "install 'tandemcell[region]', or give --workers 1 to run it in "
                           "this process") from None


def run_region(sites: list[SiteSpec], job: RegionJob, folder: str | Path,
               scheduler=None, workers: int | None = None,
               progress: Callable[[int, int], None] | None = None,
               overwrite: bool = False) -> RegionResult:
    """Every site's energy-optimal design, written to ``folder`` as each site finishes.

    ``workers`` 1 runs in this process; otherwise a ``dask.distributed`` local cluster of
    ``workers`` processes (default: the machine's cores), or the cluster at ``scheduler``: an
    address (``tcp://HOST:PORT``), or a ``dask.distributed.Client`` you opened, which is used
    and left open. Sites go out a few per worker at a time, the job once per worker, so the
    client and the scheduler hold a bounded number of tasks for any number of sites.
    Finished sites with unchanged inputs are read back from ``folder`` (a resumed run);
    ``overwrite`` replaces what tandem wrote there and recomputes every site.
    """
    folder = Path(folder)
    if not sites:
        raise TandemInputError("the region has no sites")
    if isinstance(scheduler, str):
        from tandem.jobs.region_cluster import check_scheduler_address

        check_scheduler_address(scheduler)
    elif scheduler is not None and not callable(getattr(scheduler, "submit", None)):
        raise TandemInputError(f"scheduler {scheduler!r:.60}: give an address (tcp://HOST:PORT) "
                               "or a dask.distributed.Client")
    if isinstance(scheduler, str) or (scheduler is None and workers != 1):
        require_dask()  # before the folder: a refused run leaves nothing behind
    reason = region_folder_reason(folder, job, overwrite)
    if reason:
        raise TandemInputError(reason)
    created = not folder.exists()
    if created:
        check_output_folder(folder)
        folder.mkdir(parents=True, exist_ok=True)
    from tandem.core.files import folder_lock

    try:
        with folder_lock(folder, "region folder"):  # one run at a time writes a region folder
            if (folder / "region.json").exists():  # what another run wrote before this waited
                reason = region_folder_reason(folder, job, overwrite)
                if reason:
                    raise TandemInputError(reason)
            return _run_locked(sites, job, folder, scheduler, workers, progress, overwrite)
    except BaseException:  # a new folder without one stored site is not left behind
        if created and not stored_count(folder):
            import shutil

            shutil.rmtree(folder, ignore_errors=True)
        raise


def _run_locked(sites, job, folder, scheduler, workers, progress, overwrite):
    """:func:`run_region` holding the folder's lock. No record is held while the sites run:
    each goes to the store as it finishes, and all are read back from it at the end."""
    if overwrite:  # --overwrite always recomputes: nothing of the old run is read back
        _clear_region_folder(folder)
    _write_json(folder / "region.json", {"format": REGION_FORMAT, "written_by": STAMP,
                                         "job": job.job_fingerprint(), "sites": len(sites)})
    with closing(open_store(folder)) as db:
        todo = [spec for spec in sites if _read_record(db, spec, job) is None]
        pending = {s.name for s in todo}
        reused = [s.name for s in sites if s.name not in pending]
        computed: list[str] = []

        def finished(spec: SiteSpec, record: dict) -> None:
            record.update(fingerprint=job.fingerprint(spec), written_by=STAMP)
            record["digest"] = _digest(record)
            store_record(db, spec.name, record)
            computed.append(spec.name)
            if progress:
                progress(len(reused) + len(computed), len(sites))

        if progress:
            progress(len(reused), len(sites))
        if todo and (workers == 1 and scheduler is None):
            for spec in todo:
                finished(spec, site_year(spec, job))
        elif todo:
            from tandem.jobs.region_cluster import _run_distributed

            _run_distributed(todo, job, scheduler, workers, finished, site_year)
        read = [_read_record(db, s, job) for s in sites]
    ordered = [r for r in read if r is not None]
    if len(ordered) < len(sites):  # a record stored in this run cannot fail its digest
        raise TandemInputError(f"region folder '{folder}': its site store changed during the "
                               "run; run the same command again")
    for r in ordered:
        r.pop("fingerprint", None)
        r.pop("written_by", None)
    return RegionResult(ordered, computed, reused, folder, job)


def write_region_outputs(result: RegionResult, grids: bool = False) -> list[Path]:
    """The region's Dataset (region.nc), table (region.csv) and figure (region.png), written
    whole into its folder (replacing only what tandem wrote there before)."""
    from tandem.core.files import write_all_whole, write_csv, write_netcdf
    from tandem.output.plots import savefig

    folder = result.folder
    if folder is None:
        raise TandemInputError("the region result has no folder to write into")
    dataset = result.to_dataset(grids)
    frame = result.to_frame()
    figure = result.plot()
    try:
        return write_all_whole({
            folder / "region.nc": lambda tmp: write_netcdf(dataset, tmp),
            folder / "region.csv": lambda tmp: write_csv(frame, tmp),
            folder / "region.png": lambda tmp: savefig(figure, tmp, "png"),
        }, overwrite=True)
    except OSError as exc:  # a full disk: the sites' records are whole and kept for a rerun
        raise TandemInputError(
            f"cannot write '{exc.filename}' ({exc.strerror}); the {len(result.records):,} sites "
            f"computed are kept in {folder / 'sites.sqlite'}: free some space and run the same "
            "command again (it reuses them)") from exc
