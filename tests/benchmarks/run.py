"""Speed benchmark: the tool against a straightforward per-point reference, same inputs.

Run on demand (not part of the test suite):

    python tests/benchmarks/run.py            # all cases
    python tests/benchmarks/run.py --quick    # smaller reference samples
    python tests/benchmarks/run.py --targets  # only the speed targets, each with its ratio

For each case it prints configurations per second and peak memory at two sizes (to show
that cost grows linearly), and for cases (a) and (b) the speed ratio against a reference
implementation contained here (a Python loop over points, photocurrents integrated on ASTM
G173-03's own wavelength rows or numpy.trapezoid on the spectrum's grid, scipy.optimize for
each maximum power point) run on a random sample of
the same grid, with its per-point cost extrapolated and the largest efficiency difference.
The last line reads ``speedup: <ratio>x, max difference: <value> % abs`` for case (a).
"""

from __future__ import annotations

import argparse
import gc
import os
import resource
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
from scipy import optimize

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # tests/: the shared references

import tandem  # noqa: E402
from tandem.physics import detailed_balance as db  # noqa: E402
from tandem.design.matching import Conditions, StackDesign, stack_performance  # noqa: E402
from tandem.design.maps import step_gap_map  # noqa: E402
from tandem.optics.absorptance import LayerOptics, stack_optics  # noqa: E402
from tandem.core.units import HC_EV_NM, Q  # noqa: E402
from references import dense_yield, g173_from_pvlib, wavelength_side_photons_above  # noqa: E402

T_CELL = 300.0


def measure(fn, repeats=3):
    """Best wall time of ``repeats`` runs, and the peak traced memory of one more run."""
    best = np.inf
    for _ in range(repeats):
        gc.collect()
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    gc.collect()
    tracemalloc.start()
    fn()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return best, peak


def line(label, n, seconds, peak):
    print(f"  {label:<34} {n:>9,} configs  {seconds:8.3f} s  {n / seconds:>12,.0f} configs/s"
          f"  peak {peak / 2**20:7.1f} MiB")


# --------------------------------------------------------------------------------------
# reference implementation: one point at a time, the obvious way
# --------------------------------------------------------------------------------------


G173 = g173_from_pvlib("am1.5g")


def ref_photocurrent(lo, hi):
    """J_L [A/m²] of AM1.5G photons between lo and hi, integrated on ASTM G173-03's own
    wavelength rows (pvlib's reader, a closed form per row interval), not the tool's grid."""
    above = wavelength_side_photons_above(*G173, np.array([lo, hi]))
    return Q * float(above[0] - above[1])


def ref_dark_current(gap, temperature, terms=4):
    """J0,rad [A/m²] of a step absorber from its gap to infinity, in closed form: with
    1/(e^x − 1) = Σ_k e^{−kx}, each term of 2π/(h³c²)·∫ E²e^{−kE/kT} dE is
    (kT/k)·e^{−k·Eg/kT}·(Eg² + 2Eg(kT/k) + 2(kT/k)²); at Eg/kT > 20 four terms reach 10⁻³⁴
    relative. Constants from scipy (CODATA), not the tool's."""
    from scipy import constants as c

    h = c.h / c.e  # eV s
    prefactor = 2 * np.pi / (h**3 * c.c**2)  # m⁻² s⁻¹ eV⁻³
    kt = c.k / c.e * temperature
    total = 0.0
    for k in range(1, terms + 1):
        s = kt / k
        total += s * np.exp(-gap / s) * (gap * gap + 2 * gap * s + 2 * s * s)
    return c.e * prefactor * total


def ref_series_mpp(jl, j0, temperature):
    vt = db.thermal_voltage(temperature)

    def minus_power(j):
        return -j * np.sum(vt * np.log1p((jl - j) / j0))

    top = float(np.min(jl))
    res = optimize.minimize_scalar(minus_power, bounds=(0.0, top), method="bounded",
                                   options={"xatol": 1e-10 * top, "maxiter": 500})
    return -res.fun


def ref_bands(flux, front, back):
    """Each subcell's photocurrent once and its J0 once [A/m²] (the back cell emits between
    its gap and the front's, where the front does not absorb its light)."""
    jl = np.array([ref_photocurrent(front, flux.energy[-1]), ref_photocurrent(back, front)])
    j0_front = ref_dark_current(front, T_CELL)
    return jl, np.array([j0_front, ref_dark_current(back, T_CELL) - j0_front])


def ref_step_efficiency(flux, front, back):
    """One point: the two bands, then the series maximum-power point."""
    jl, j0 = ref_bands(flux, front, back)
    return ref_series_mpp(jl, j0, T_CELL) / flux.irradiance


def ref_near_gap(flux, front, back):
    """Whether a subcell's Boltzmann Voc comes within the tool's threshold of its gap, where
    the tool solves the exact (Bose–Einstein) emission and this Boltzmann reference is the
    approximate one."""
    from tandem.physics.stack import EXACT_EMISSION_BELOW

    jl, j0 = ref_bands(flux, front, back)
    vt = db.thermal_voltage(T_CELL)
    voc = vt * np.log1p(jl / j0)
    return bool(np.any(np.exp((voc - np.array([front, back])) / vt) > EXACT_EMISSION_BELOW))


def ref_optics_efficiency(design, cond, gap, thickness, back_thickness):
    e, phi = cond.photon_flux.energy, cond.photon_flux.flux
    t = cond.temperature_K  # the model moves each edge by its temperature coefficient
    front = LayerOptics(design.front.alpha(e, gap, design.front.gap_shift_eV(t)), thickness,
                        "single-pass", design.front.refractive_index,
                        design.front.collection_length_nm)
    back = design.back.layer(e, back_thickness, shift_eV=design.back.gap_shift_eV(t))
    light = stack_optics(front, back, design.reflectance, design.front_parasitic,
                         design.interlayer_parasitic)
    bb = db.blackbody_photon_flux(e, cond.temperature_K)
    jl, j0 = [], []
    for eqe, ere in ((light.front_eqe, design.front.ere), (light.back_eqe, design.back.ere)):
        jl.append(Q * np.trapezoid(eqe * phi, e))
        j0.append(Q * np.trapezoid(eqe * bb, e) / ere)
    return ref_series_mpp(np.array(jl), np.array(j0), cond.temperature_K) / cond.photon_flux.irradiance


def compare(label, tool_seconds, n_total, sample, ref_fn, tool_values):
    t0 = time.perf_counter()
    ref = np.array([ref_fn(*point) for point in sample])
    per_point = (time.perf_counter() - t0) / len(sample)
    ref_total = per_point * n_total
    diff = float(np.max(np.abs(100 * (ref - tool_values))))
    ratio = ref_total / tool_seconds
    print(f"  reference on {len(sample)} random points: {per_point * 1e3:.2f} ms per point, "
          f"{ref_total:,.0f} s extrapolated to all {n_total:,}")
    print(f"  {label}: tool {tool_seconds:.3f} s; speed ratio {ratio:,.0f}x; "
          f"largest efficiency difference {diff:.2e} % abs")
    return ratio, diff


# --------------------------------------------------------------------------------------
# cases
# --------------------------------------------------------------------------------------


def case_a(flux, n_sample, rng):
    print("(a) two-terminal step-absorber map under AM1.5G (front 1.4-2.3 eV x back 0.8-1.5 eV)")
    gaps = np.linspace(0.32, 4.4, 40_001)
    exact = wavelength_side_photons_above(*G173, gaps)
    lit = exact > 1e-4 * exact.max()
    off = np.abs(flux.count_above(gaps)[lit] / exact[lit] - 1)
    print(f"  photons above {lit.sum():,} gaps of 0.32-4.4 eV against ASTM G173-03 integrated "
          f"on its own wavelength rows: largest relative difference {off.max():.1e}")
    for n in (201, 401):
        fronts, backs = np.linspace(1.4, 2.3, n), np.linspace(0.8, 1.5, n)
        seconds, peak = measure(lambda: step_gap_map(flux, fronts, backs, T_CELL))
        line(f"{n} x {n} gap pairs", n * n, seconds, peak)
    fronts, backs = np.linspace(1.4, 2.3, 401), np.linspace(0.8, 1.5, 401)
    gap_map = step_gap_map(flux, fronts, backs, T_CELL)
    valid = np.argwhere(np.isfinite(gap_map.efficiency_2t))
    picks = valid[rng.choice(len(valid), n_sample, replace=False)]
    # tool and reference interleaved: each round times one whole map and a slice of the
    # reference sample, so that a change of load on the machine touches both alike
    rounds = 10
    tool_seconds, ref_seconds, ref_values = 0.0, 0.0, []
    for part in np.array_split(picks, rounds):
        gc.collect()
        t0 = time.perf_counter()
        step_gap_map(flux, fronts, backs, T_CELL)
        tool_seconds += time.perf_counter() - t0
        t0 = time.perf_counter()
        ref_values += [ref_step_efficiency(flux, fronts[i], backs[j]) for i, j in part]
        ref_seconds += time.perf_counter() - t0
    tool = np.array([gap_map.efficiency_2t[i, j] for i, j in picks])
    per_point = ref_seconds / n_sample
    ref_total = per_point * len(valid)
    tool_mean = tool_seconds / rounds
    near = np.array([ref_near_gap(flux, fronts[i], backs[j]) for i, j in picks])
    gaps_off = np.abs(100 * (np.array(ref_values) - tool))
    diff = float(np.max(gaps_off[~near], initial=0.0))
    ratio = ref_total / tool_mean
    print(f"  interleaved, {rounds} rounds: tool {tool_mean:.4f} s per map; reference "
          f"{per_point * 1e3:.2f} ms per point on {n_sample} random points "
          f"({ref_total:,.0f} s extrapolated to all {len(valid):,} valid pairs)")
    print(f"  case (a): speed ratio {ratio:,.0f}x; largest efficiency difference {diff:.2e} % abs "
          f"on the {int((~near).sum())} pairs far from their gaps; on the {int(near.sum())} near "
          f"them, where the tool solves the exact emission, the Boltzmann reference is "
          f"{float(np.max(gaps_off[near], initial=0.0)):.2e} % abs off")
    return ratio, diff


def optics_setup(auger: bool = True):
    """Perovskite over silicon with flat losses; ``auger=False`` drops the silicon's Auger
    term, for (b) and (c), whose per-point reference is one diode per subcell (J0,rad/ERE)."""
    from dataclasses import replace

    silicon = tandem.load_absorber("silicon")
    silicon = silicon if auger else replace(silicon, bulk=None)
    return StackDesign(tandem.load_absorber("perovskite-wide"), silicon, 0.02, 0.02, 0.01)


def optics_sweep(design, cond, gaps, thicknesses):
    out = np.empty((gaps.size, thicknesses.size))
    for i, gap in enumerate(gaps):
        out[i] = stack_performance(design, cond, gap, thicknesses, 160e3).efficiency_2t
    return out


def case_b(flux, n_sample, rng):
    print("(b) optics-lite sweep: perovskite-wide front gaps x thicknesses over 160 um silicon "
          "(no Auger term)")
    design = optics_setup(auger=False)
    cond = Conditions(flux, T_CELL)
    thicknesses = np.geomspace(100, 1500, 200)
    timings = {}
    for n_gaps in (50, 100):
        gaps = np.linspace(1.60, 1.92, n_gaps)
        seconds, peak = measure(lambda: optics_sweep(design, cond, gaps, thicknesses))
        line(f"{n_gaps} gaps x 200 thicknesses", n_gaps * 200, seconds, peak)
        timings[n_gaps] = seconds
    gaps = np.linspace(1.60, 1.92, 100)
    tool = optics_sweep(design, cond, gaps, thicknesses)
    picks = [(rng.integers(100), rng.integers(200)) for _ in range(n_sample)]
    sample = [(design, cond, gaps[i], thicknesses[j], 160e3) for i, j in picks]
    values = np.array([tool[i, j] for i, j in picks])
    ratio, diff = compare("case (b)", timings[100], 100 * 200, sample, ref_optics_efficiency, values)
    return timings[100]


def case_c(b_seconds):
    print("(c) case (b) over 24 spectra: ASTM G173-03 x 3 and 21 blackbody suns")
    spectra = [tandem.reference_spectrum(n) for n in ("am1.5g", "am1.5d", "am0")]
    for t_sun in (5000, 5500, 5772, 6000, 6500, 7000, 8000):
        for x in (0.5, 1.0, 10.0):
            spectra.append(tandem.blackbody_sun(t_sun, concentration=x))
    design = optics_setup(auger=False)
    thicknesses = np.geomspace(100, 1500, 200)
    gaps = np.linspace(1.60, 1.92, 100)
    fluxes = [s.photon_flux() for s in spectra]

    def run(subset):
        for flux in subset:
            optics_sweep(design, Conditions(flux, T_CELL), gaps, thicknesses)

    for count in (12, 24):
        subset = fluxes[:count]
        seconds, peak = measure(lambda: run(subset), repeats=1)
        points = sum(f.energy.size for f in subset)
        line(f"{count} spectra x 100 x 200", count * 20_000, seconds, peak)
        print(f"    {points:,} spectral points in all; {seconds / count:.3f} s per spectrum "
              f"(case (b) alone: {b_seconds:.3f} s on {fluxes[0].energy.size:,} points)")


MESA = dict(name="Mesa Verdeja test field", latitude=35.2, longitude=-106.4, altitude_m=1650.0,
            timezone="Etc/GMT+7", aerosol_turbidity_500nm=0.07, precipitable_water_cm=1.0,
            ambient_temperature_C=17.0)  # the invented site of the rooftop scenario


def busy(seconds):
    """Keep one core busy (a second process) for ``seconds``: load for the threads test."""
    end = time.perf_counter() + seconds
    while time.perf_counter() < end:
        pass


def case_e():
    print("(e) energy yield over a clear-sky year: 11 front gaps x 16 thicknesses, perovskite "
          "on 160 um silicon")
    import multiprocessing

    from tandem.jobs.energy_yield import site_series
    from tandem.design.yields import yield_sweep

    design = optics_setup()
    reference = tandem.reference_spectrum("am1.5g").photon_flux()
    gaps = np.linspace(1.60, 1.92, 11)
    thick = np.geomspace(*design.front.thickness_range_nm, 16)
    for minutes in (60, 15):
        t0 = time.perf_counter()
        series = site_series(tandem.Site(**MESA), period="year:2026", step_minutes=minutes)
        basis = series.photon_basis()
        build = time.perf_counter() - t0
        seconds, peak = measure(lambda: yield_sweep(design, series, gaps, thick, 160e3, reference),
                                repeats=2)
        n = series.times.size * gaps.size * thick.size
        line(f"{minutes}-min year, {series.times.size:,} steps", n, seconds, peak)
        print(f"    spectra {build:.2f} s; basis rank {basis.rank}, photocurrent bound "
              f"{basis.bound:.1e}; {series.coefficients.nbytes / series.times.size:.0f} bytes "
              "of spectra per step")
        if minutes == 60:
            sweep = yield_sweep(design, series, gaps, thick, 160e3, reference)
            with multiprocessing.get_context("fork").Pool(1) as pool:
                load = pool.map_async(busy, [seconds * 4 + 2])
                t0 = time.perf_counter()
                yield_sweep(design, series, gaps, thick, 160e3, reference)
                loaded = time.perf_counter() - t0
                load.wait()
            print(f"    with the other core busy (the tool pins BLAS to one thread): {loaded:.3f} s")
            t0 = time.perf_counter()
            full = dense_yield(design, series, gaps, thick, 160e3)
            print(f"    full calculation (dense spectra, J0 per step) {time.perf_counter() - t0:.2f} s;"
                  f" largest relative energy difference {np.max(np.abs(sweep.energy_2t / full - 1)):.1e}; "
                  "same optimum: " + ("yes" if np.unravel_index(np.argmax(full), full.shape)
                                      == sweep.optimum else "NO"))


def case_f(rng):
    print("(f) thin-film stack: the bundled wide-gap film on a silicon wafer (6 layers in the "
          "matrix method, the wafer behind), 200 perovskite thicknesses")
    from threadpoolctl import threadpool_limits

    from tandem.design.layerstack import photon_budget
    from tandem.design.stack_files import load_stack

    stack = load_stack("wide-gap-on-silicon-wafer")
    energy = tandem.reference_spectrum("am1.5g").photon_flux().energy
    thick = np.geomspace(150, 1500, 200)
    with threadpool_limits(limits=1):
        seconds, peak = measure(lambda: photon_budget(stack, energy, thick))
    line(f"{energy.size:,} energies x 200 thicknesses, 1 core", energy.size * 200, seconds, peak)
    try:
        import tmm
    except ImportError:
        print("  (tmm not installed: no reference comparison)")
        return
    from tandem.optics.thinfilm import Layer, stack_optics

    wl = HC_EV_NM / energy
    films = [x for x in stack.layers if not x.ends_stack]
    idx = [x.index(energy) for x in films]
    exit_index = stack.back.index(energy)
    mine = stack_optics([Layer(n, x.thickness_nm if x.role != "front" else thick[:, None],
                               x.coherent) for n, x in zip(idx, films)],
                        stack.ambient_index, exit_index, wl)
    picks = [(int(rng.integers(200)), int(rng.integers(energy.size))) for _ in range(300)]
    worst, t0 = 0.0, time.perf_counter()
    for i, k in picks:
        d = [thick[i] if x.role == "front" else x.thickness_nm for x in films]
        ref = tmm.inc_tmm("s", [stack.ambient_index, *[n[k] for n in idx], exit_index[k]],
                          [np.inf, *d, np.inf], ["i"] + ["c" if x.coherent else "i" for x in films]
                          + ["i"], 0, wl[k])
        a = tmm.inc_absorp_in_each_layer(ref)[1:-1]
        worst = max(worst, abs(mine.reflectance[i, k] - ref["R"]),
                    *[abs(mine.absorptance[j][i, k] - a[j]) for j in range(len(films))])
    per = (time.perf_counter() - t0) / len(picks)
    print(f"  tmm package, one point at a time: {per * 1e3:.2f} ms per point, "
          f"{per * energy.size * 200:,.0f} s extrapolated; speed ratio {per * energy.size * 200 / seconds:,.0f}x;"
          f" largest difference in R or a layer's absorptance {worst:.1e}")


def case_g():
    print("(g) a region: 24 clear-sky sites, a year at 60 min each, 11 gaps x 16 thicknesses")
    import tempfile

    from tandem.jobs.inputs import OperatingPoint
    from tandem.jobs.region import RegionJob, grid_sites, run_region

    design = optics_setup()
    job = RegionJob(design.front, design.back, OperatingPoint(),
                    tuple(np.linspace(1.60, 1.92, 11)),
                    tuple(np.geomspace(*design.front.thickness_range_nm, 16)), 160e3)
    sites = grid_sites((10.0, 60.0, 10.0), (-100.0, 80.0, 60.0))
    timings = {}
    with tempfile.TemporaryDirectory() as folder:
        for workers in (1, 2):
            t0, c0 = time.perf_counter(), time.process_time()
            result = run_region(sites, job, Path(folder) / f"w{workers}", workers=workers)
            timings[workers] = time.perf_counter() - t0
            if workers == 1:  # serial: the whole run's CPU is in this process
                cpu_per_site = (time.process_time() - c0) / len(sites)
        per_site = float(np.mean([r["seconds"] for r in result.records]))
    print(f"  {len(sites)} sites: {timings[1]:.1f} s in one process ({timings[1] / len(sites):.2f} s "
          f"per site-year); {timings[2]:.1f} s on a 2-worker local cluster, start-up included "
          f"(speed-up {timings[1] / timings[2]:.2f}x); {per_site:.2f} s per site inside a worker")
    print(f"  estimate for 1,000 sites: {1000 * timings[1] / len(sites) / 60:.0f} min in one process, "
          f"{1000 * per_site / 2 / 60:.0f} min on 2 workers, "
          f"{1000 * per_site / 32 / 60:.1f} min on 32 workers (from the per-site figure)")
    return cpu_per_site, timings[1] / timings[2]


def compiled_once() -> None:
    """The tool's bytecode written, as its first import on a user's machine writes it."""
    import compileall

    compileall.compile_dir(str(Path(tandem.__file__).parent), quiet=1)


def _least_cpu(command: list[str], repeats: int) -> tuple[float, float, int]:
    """Run ``command`` ``repeats`` times, each in a scratch folder through /usr/bin/time (so the
    figures are the command's own, not this script's), with the bytecode written as on a
    user's machine from the second run on (an environment with PYTHONDONTWRITEBYTECODE compiled
    27 of the tool's modules at every start, 70-80 ms of each command's CPU): the run of least
    CPU, as (CPU s, wall s, peak KiB)."""
    import shutil
    import subprocess
    import tempfile

    timer = shutil.which("time") or "/usr/bin/time"
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    runs = []
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as folder:
            report = Path(folder) / "time.txt"
            t0 = time.perf_counter()
            subprocess.run([timer, "-f", "%U %S %M", "-o", str(report), *command], cwd=folder,
                           check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                           env=env)
            wall = time.perf_counter() - t0
            user, system, kib = report.read_text().split()[-3:]
        runs.append((float(user) + float(system), wall, int(kib)))
    return min(runs)


def whole_process(label: str, args: list[str], repeats: int = 1) -> float:
    """Run ``tandem ARGS`` as a user would: wall time, CPU and peak memory of the run of least
    CPU of ``repeats`` (a sub-second command moves by a third with the machine's load)."""
    compiled_once()
    cpu, wall, kib = _least_cpu([sys.executable, "-m", "tandem", *args], repeats)
    best = f" (least of {repeats})" if repeats > 1 else ""
    print(f"  {label:<54} {wall:6.2f} s wall {cpu:6.2f} s CPU  peak {kib / 1024:5.0f} MiB{best}")
    return cpu


def case_d():
    print("(d) whole commands, as a user runs them")
    whole_process("tandem limit 1.73 1.12", ["limit", "1.73", "1.12"])
    whole_process("tandem map, 801 x 801, with .png .svg .csv .parquet",
                  ["map", "--front", "1.4:2.2:0.001", "--back", "0.8:1.6:0.001", "-q"])
    whole_process("tandem yield, rooftop scenario (clear-sky year, 1 h)",
                  ["yield", "--scenario", "perovskite-silicon-rooftop", "-q"])
    site = ["--latitude", "35.2", "--longitude", "-106.4", "--altitude", "1650",
            "--timezone", "Etc/GMT+7", "--front-gaps", "1.60:1.92:0.032"]
    whole_process("tandem yield, the same site at 15 min (11 x 16 designs)",
                  ["yield", "perovskite-wide", "silicon", *site, "--step", "15", "-q"])


def _importable(name: str) -> bool:
    """A real package, not a pseudo-module (Cython's ``cython_runtime`` has no spec)."""
    import importlib.util

    try:
        return importlib.util.find_spec(name) is not None
    except ValueError:
        return False


def import_floor(args: list[str], repeats: int = 3) -> tuple[float, list[str]]:
    """The CPU of importing, alone, the libraries ``tandem ARGS`` loads (the modules it holds
    when it ends, through the console entry point; the standard library and tandem itself
    left out): what the command cannot go below while it needs them. Least of ``repeats``
    runs, interpreter start included, as in :func:`whole_process`."""
    import json
    import subprocess
    import tempfile

    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    probe = ("import sys, json; sys.argv = ['tandem'] + sys.argv[1:]; from tandem.cli import main\n"
             "try:\n    main()\nexcept SystemExit:\n    pass\n"
             "print(json.dumps(sorted({n.split('.')[0] for n, m in list(sys.modules.items()) "
             "if m is not None})))")
    with tempfile.TemporaryDirectory() as folder:
        run = subprocess.run([sys.executable, "-c", probe, *args], cwd=folder,
                             capture_output=True, text=True, env=env, check=True)
    loaded = json.loads(run.stdout.strip().splitlines()[-1])
    libraries = [n for n in loaded if n.isidentifier() and not n.startswith("_")
                 and n not in sys.stdlib_module_names
                 and n not in ("tandem", "sitecustomize", "usercustomize")
                 and _importable(n)]
    best = _least_cpu([sys.executable, "-c", "import " + ", ".join(libraries)], repeats)[0]
    return best, libraries


#: The speed targets of the project (issue "Speed III"), as (what, limit, unit, larger is better)
TARGETS = {
    "map": ("step map 401 x 401, one core", 8e6, "pairs/s", True),
    "limit": ("tandem limit 1.73 1.12", 0.30, "s CPU", False),
    "match": ("tandem match perovskite-wide silicon", 0.6, "s CPU", False),
    "map-cmd": ("tandem map (default grid)", 0.8, "s CPU", False),
    "stack": ("tandem match --stack wide-gap-on-silicon-wafer", 1.0, "s CPU", False),
    "absorbers": ("tandem absorbers", 0.4, "s CPU", False),
    "yield": ("tandem yield, rooftop scenario, 60 min", 1.5, "s CPU", False),
    "study": ("tandem study (default scenario, figures)", 2.0, "s CPU", False),
    "region": ("region, CPU per site-year (serial run)", 0.15, "s", False),
    "workers": ("region, 2 workers against 1, 24 sites", 1.6, "x", True),
}

TARGET_COMMANDS = {
    "limit": ["limit", "1.73", "1.12"],
    "match": ["match", "perovskite-wide", "silicon"],
    "map-cmd": ["map"],
    "stack": ["match", "--stack", "wide-gap-on-silicon-wafer"],
    "absorbers": ["absorbers"],
    "yield": ["yield", "--scenario", "perovskite-silicon-rooftop"],
    "study": ["study"],
}


def case_targets(flux, region=None):
    """Each target measured once more, side by side: value, limit, ratio (value/limit for
    times, limit/value for rates: 1 or less is met)."""
    print("(t) the speed targets: measured, limit, ratio (<= 1 is met)")
    fronts, backs = np.linspace(1.4, 2.3, 401), np.linspace(0.8, 1.5, 401)
    seconds, _ = measure(lambda: step_gap_map(flux, fronts, backs, T_CELL))
    measured = {"map": 401 * 401 / seconds}
    floors = {}
    for key, args in TARGET_COMMANDS.items():
        quick = key in ("limit", "match", "map-cmd", "absorbers")
        measured[key] = whole_process(" ".join(["tandem", *args]), args, 5 if quick else 1)
        floors[key], libraries = import_floor(args)
        print(f"    its libraries' imports alone: {floors[key]:.2f} s CPU ({', '.join(libraries)})")
    if region is None:
        region = case_g()
    measured["region"], measured["workers"] = region
    print(f"  {'target':<50} {'measured':>12} {'limit':>10}  ratio")
    for key, (label, limit, unit, larger) in TARGETS.items():
        value = measured[key]
        ratio = limit / value if larger else value / limit
        floor = floors.get(key)
        below = (f"  (imports alone {floor:.2f} s: "
                 f"{'above the limit' if floor > limit else 'below it'})" if floor else "")
        print(f"  {label:<50} {value:>12,.3g} {limit:>10,.3g} {unit:<8} {ratio:5.2f} "
              f"{'met' if ratio <= 1 else 'not met'}{below}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="500-point reference samples only")
    parser.add_argument("--sample", type=int, default=1000, help="reference sample size (>= 500)")
    parser.add_argument("--targets", action="store_true", help="only the speed targets (t)")
    args = parser.parse_args()
    n_sample = 500 if args.quick else max(500, args.sample)
    rng = np.random.default_rng(2026)
    from threadpoolctl import threadpool_info

    blas = ", ".join(f"{i['internal_api']} {i['num_threads']} threads" for i in threadpool_info())
    print(f"tandem {tandem.__version__}, numpy {np.__version__}, {os.cpu_count()} cores, "
          f"Python {sys.version.split()[0]}; BLAS: {blas or 'none found'}")
    flux = tandem.reference_spectrum("am1.5g").photon_flux()
    if args.targets:
        case_targets(flux)
        return
    ratio_a, diff_a = case_a(flux, n_sample, rng)
    b_seconds = case_b(flux, n_sample, rng)
    case_c(b_seconds)
    case_e()
    case_f(rng)
    region = case_g()
    case_d()
    case_targets(flux, region)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"process peak resident memory: {rss:,.0f} MiB")
    print(f"speedup: {ratio_a:.0f}x, max difference: {diff_a:.2e} % abs")


if __name__ == "__main__":
    main()
