"""Does the suite catch a physically meaningful slip? A mutation run over the whole tool.

Run on demand (not part of the suite; about 40 minutes on the 2-core machine):

    python tests/benchmarks/mutations.py            # every mutation below
    python tests/benchmarks/mutations.py sky-step   # the named ones

Each mutation is one edit a careless change could make (a unit, a sign, a factor, an input
ignored, a bracket on one side), applied to a scratch copy of the checkout (a git worktree of
HEAD). The tests most likely to see it run first (``-x``, stopping at the first failure); a
mutation they miss is run against the whole suite before it counts as missed. The list was
written from the physics before it was run, not from the tests; it prints one line per
mutation and the share caught.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

#: (name, file, text, replacement, what it breaks, the tests to try first)
MUTATIONS = [
    ("sky-step", "tandem/design/sky.py",
     "(times[1] - times[0]).total_seconds() / 3600", "(times[1] - times[0]).total_seconds() / 60",
     "clear-sky step length in minutes where hours are meant", "test_sky_yield test_dependences"),
    ("sky-horizon", "tandem/design/sky.py", 'up = (pos["apparent_zenith"] < 90)',
     'up = (pos["apparent_zenith"] < 80)', "the sun dropped below 10° elevation",
     "test_sky_yield test_dependences"),
    ("sky-wind", "tandem/design/sky.py", "sapm_cell(poa_W_m2, ambient_C, wind_m_s,",
     "sapm_cell(poa_W_m2, ambient_C, 0 * wind_m_s,", "wind ignored in the cell temperature",
     "test_sky_yield test_dependences"),
    ("sky-midstep", "tandem/design/sky.py", "pd.date_range(start + step / 2, end,",
     "pd.date_range(start, end,", "steps stamped at their start, not their middle",
     "test_sky_yield test_dependences"),
    ("rear-bifaciality", "tandem/design/sky.py", "return rows.bifaciality * np.where(",
     "return np.where(", "the rows' bifaciality dropped from the rear light",
     "test_region test_sky_yield test_dependences"),
    ("weather-swap", "tandem/design/weather.py",
     'data["dni"].to_numpy(), data["ghi"].to_numpy(), data["dhi"].to_numpy(),',
     'data["dhi"].to_numpy(), data["ghi"].to_numpy(), data["dni"].to_numpy(),',
     "a weather file's direct and diffuse columns swapped", "test_region test_sky_yield"),
    ("weather-step", "tandem/design/weather.py",
     "step_h = float(np.median(_hours_between(times))) if times.size > 1 else 1.0",
     "step_h = 1.0", "a weather file's step taken as one hour", "test_region test_sky_yield"),
    ("cover-direct", "tandem/design/cover.py",
     "direct = np.nan_to_num(pvlib.iam.physical(aoi, n=cover_index), nan=0.0)",
     "direct = np.ones_like(aoi)", "the cover's angular loss of direct light dropped",
     "test_sky_yield test_dependences"),
    ("spread-gap", "tandem/design/scatter.py",
     "gaps = front_gap + gap_sigma_eV * rng.standard_normal(samples)",
     "gaps = front_gap + 0.5 * gap_sigma_eV * rng.standard_normal(samples)",
     "the gap spread halved", "test_dependences test_cli_design test_api"),
    ("spread-thickness", "tandem/design/scatter.py", "(1 + sigma_pct / 100 * rng",
     "(1 + sigma_pct / 1000 * rng", "the thickness spread's percent read as per mille",
     "test_dependences test_cli_design test_api"),
    ("spread-percentiles", "tandem/design/scatter.py", "np.percentile(eff, [10, 50, 90])",
     "np.percentile(eff, [5, 50, 95])", "the 10th/90th percentiles reported as 5th/95th",
     "test_dependences test_cli_design test_figures_content"),
    ("best-thickness-bracket", "tandem/design/matching.py",
     "a = np.log(d_grid[np.maximum(i - 1, 0)])",
     "a = np.log(d_grid[i])",
     "the best thickness refined on one side of the grid maximum only",
     "test_dependences test_one_path test_api"),
    ("matched-root", "tandem/design/matching.py",
     "return _rising_root(f, float(d_grid[i - 1]), float(d_grid[i]), float(diff[i - 1]),\n"
     "                        float(diff[i])), \"matched\"",
     "return float(d_grid[i]), \"matched\"", "the matched thickness taken at a grid point, not solved",
     "test_dependences test_one_path test_api"),
    ("window-floor", "tandem/design/matching.py", "floor = y[i] - loss",
     "floor = y[i] - 2 * loss", "the tolerance window at twice the stated loss",
     "test_dependences test_cli_design test_api"),
    ("order-verdict", "tandem/design/matching.py",
     "winner, loser = (f, k) if a >= b else (k, f)", "winner, loser = (k, f) if a >= b else (f, k)",
     "the order verdict names the worse order", "test_dependences test_cli_design test_api"),
    ("gap-shift-note", "tandem/design/matching.py",
     "float(front_gap_eV + front.gap_shift_eV(temperature_K))",
     "float(front_gap_eV - front.gap_shift_eV(temperature_K))",
     "the front gap at temperature shifted the wrong way (reported gap)",
     "test_dependences test_cli_design test_api"),
    ("carnot", "tandem/design/breakdown.py", "gaps * temperature_K / t_sun * j",
     "gaps * t_sun / temperature_K * j", "the Carnot factor inverted", "test_breakdown"),
    ("boltzmann-concentration", "tandem/design/breakdown.py",
     "np.log(1.0 / (concentration * SUN_DILUTION))", "np.log(1.0 / SUN_DILUTION)",
     "the Boltzmann loss ignores concentration", "test_breakdown"),
    ("eqe-tail", "tandem/design/eqe.py", "np.exp(np.minimum(e - low_e, 0.0) / self.urbach_eV)",
     "np.exp(np.minimum(e - low_e, 0.0) / (2 * self.urbach_eV))",
     "a measured EQE's tail twice as wide as fitted", "test_eqe"),
    ("eqe-ere", "tandem/design/eqe.py",
     "np.exp(-(voc_rad - voc_measured) / (K_B_EV * temperature_K))",
     "np.exp(-(voc_rad - voc_measured) / (2 * K_B_EV * temperature_K))",
     "the ERE from a measured Voc with an ideality of 2", "test_eqe"),
    ("eqe-transmission-unit", "tandem/design/eqe.py",
     "np.exp(-alpha * (new_thickness_nm - thickness_nm) * 1e-7)",
     "np.exp(-alpha * (new_thickness_nm - thickness_nm) * 1e-6)",
     "the front's added thickness in the wrong length unit", "test_eqe"),
    ("yield-4t", "tandem/design/yields.py", "e4[some] += perf.p_4t @ hours / 1000.0",
     "e4[some] += perf.p_2t @ hours / 1000.0", "four-terminal energy counted as two-terminal",
     "test_sky_yield test_dependences"),
    ("yield-j0-temperature", "tandem/design/yields.py",
     "return np.where(positive, np.exp(logs @ weights.T), 0.0)",
     "return np.where(positive, np.exp(logs[..., :1] + 0 * logs @ weights.T), 0.0)",
     "J0 taken at one temperature node for every step of a bin",
     "test_sky_yield test_dependences"),
    ("concentration-ignored", "tandem/physics/spectra.py",
     'spectrum = scaled(spectrum, concentration, f"concentrated {concentration:g}×")',
     "spectrum = spectrum", "concentration ignored for reference and file spectra",
     "test_dependences test_spectra test_cli_limit"),
    ("celsius", "tandem/jobs/inputs.py", 'kelvin = t + 273.15 if unit == "C" else t',
     'kelvin = t + 273.0 if unit == "C" else t', "°C converted with 273 instead of 273.15",
     "test_units test_cli_limit test_api"),
    ("fingerprint-path", "tandem/jobs/fingerprints.py",
     "hashlib.sha256(Path(path).read_bytes()).hexdigest()",
     "hashlib.sha256(str(path).encode()).hexdigest()",
     "an input file fingerprinted by its path, not its content", "test_region"),
    ("fingerprint-step", "tandem/jobs/region.py", '"step": self.step_minutes, ', "",
     "the region fingerprint misses the time step", "test_region"),
    ("study-variant-temperature", "tandem/study/run.py",
     'temperature_K=float(variant.get("temperature_K", cond.temperature_K)),',
     "temperature_K=float(cond.temperature_K),", "a study variant's temperature ignored",
     "test_study"),
    # the engine and what prints its numbers (written the same way, from the physics)
    ("bb-radiance", "tandem/core/units.py", "BB_FLUX_PREFACTOR = 2 * math.pi * _E**3",
     "BB_FLUX_PREFACTOR = 2 * _E**3", "blackbody radiance per steradian taken as the "
     "hemispherical flux (π dropped)", "test_detailed_balance test_thermodynamics"),
    ("sun-dilution", "tandem/core/units.py", "SUN_DILUTION = (6.957e8 / _AU) ** 2",
     "SUN_DILUTION = 6.957e8 / _AU", "the sun's solid-angle dilution not squared",
     "test_detailed_balance test_breakdown test_spectra"),
    ("jacobian", "tandem/physics/spectral_grid.py", "* HC_EV_NM / energy**2",
     "* HC_EV_NM / energy", "a spectrum's |dλ/dE| taken as hc/E, not hc/E²",
     "test_spectra test_detailed_balance"),
    ("simpson", "tandem/physics/spectral_grid.py", "(f0 + 4.0 * fm + f1)", "(f0 + 2.0 * fm + f1)",
     "the photon count's Simpson weights wrong", "test_spectra test_detailed_balance"),
    ("partial-interval", "tandem/physics/detailed_balance.py",
     "partial = t * flux[i] + 0.5 * t**2 * slope", "partial = t * flux[i]",
     "the photons between a grid point and the gap counted at the point's flux",
     "test_detailed_balance test_spectra"),
    ("ere-nonradiative", "tandem/physics/detailed_balance.py",
     "j0_nr = j_light * (1.0 - ere) / np.expm1(x_oc / ideality)",
     "j0_nr = j_light / np.expm1(x_oc / ideality)",
     "the non-radiative J0 counts the radiative share again (1 − ERE dropped)",
     "test_detailed_balance test_ideality test_electrical"),
    ("ni-temperature", "tandem/physics/recombination.py", "(t / temperature_ref_K) ** 1.5",
     "(t / temperature_ref_K) ** 3", "n_i scaled as T³ (that is n_i²)", "test_recombination"),
    ("ni-half-gap", "tandem/physics/recombination.py",
     "- gap_eV / (2 * K_B_EV * t)))", "- gap_eV / (K_B_EV * t)))",
     "n_i activated with the whole gap, not half", "test_recombination"),
    ("width-unit", "tandem/physics/recombination.py",
     "w_cm = np.asarray(w, dtype=float) * 1e-7", "w_cm = np.asarray(w, dtype=float) * 1e-6",
     "an absorber's width in the wrong length unit (bulk recombination)",
     "test_recombination"),
    ("middle-contact-sign", "tandem/physics/connections.py",
     "cells.current(1, vb)\n    return vf * jf + vb * jb - r * (jf**2 + jb**2) - r_middle * (jf - sigma",
     "cells.current(1, vb)\n    return vf * jf + vb * jb - r * (jf**2 + jb**2) - r_middle * (jf + sigma",
     "three-terminal currents added in the shared contact where they subtract (Newton path)",
     "test_three_terminal test_three_terminal_jobs"),
    ("double-pass", "tandem/optics/absorptance.py", "return -np.expm1(-2.0 * ad)",
     "return -np.expm1(-ad)", "the back mirror's second pass dropped", "test_optics"),
    ("lambertian-n", "tandem/optics/absorptance.py", "path = 4.0 * refractive_index**2 * ad",
     "path = 4.0 * refractive_index * ad", "light trapping at 4n, not 4n² (Yablonovitch)",
     "test_optics"),
    ("collection-length", "tandem/optics/absorptance.py",
     "collected = a / (a + beta) * -np.expm1(-(a + beta) * d)",
     "collected = a / (a + beta) * -np.expm1(-a * d)",
     "collection: the decay of collection with depth left out of the exponent", "test_optics"),
    ("interlayer-twice", "tandem/optics/absorptance.py",
     "to_back = entering * through_front * (1.0 - np.asarray(interlayer_parasitic))",
     "to_back = entering * through_front",
     "photons taken by the interlayer also reach the back cell (counted twice)",
     "test_optics test_bounds"),
    ("urbach-table", "tandem/optics/edges.py",
     "tail = low_a * np.exp(np.minimum(energy - low_e, 0.0) / self.urbach_energy_eV)",
     "tail = low_a * np.exp(np.minimum(energy - low_e, 0.0) / (2 * self.urbach_energy_eV))",
     "a tabulated edge's Urbach tail twice as wide", "test_optics test_absorbers"),
    ("nk-alpha", "tandem/optics/edges.py", "alpha = 4 * np.pi * nk.imag / (wavelength * 1e-7)",
     "alpha = 2 * np.pi * nk.imag / (wavelength * 1e-7)",
     "α from k with the field's decay (2πk/λ), not the intensity's", "test_absorbers test_optics"),
    ("film-phase", "tandem/optics/thinfilm.py",
     "delta = 2 * np.pi * q[j] * np.asarray(thicknesses_nm[j - 1], dtype=float) / lam",
     "delta = np.pi * q[j] * np.asarray(thicknesses_nm[j - 1], dtype=float) / lam",
     "a film's phase thickness halved", "test_thinfilm"),
    ("wafer-alpha", "tandem/optics/wafer.py", "alpha_d = 4 * np.pi * n_w.imag / lam",
     "alpha_d = 2 * np.pi * n_w.imag / lam", "a wafer's α from the field's decay",
     "test_wafer"),
    ("gap-shift-sign", "tandem/optics/absorbers.py",
     "return tc * (np.asarray(temperature_K) - 298.15)",
     "return tc * (298.15 - np.asarray(temperature_K))",
     "an absorber's gap shifted the wrong way with temperature",
     "test_dependences test_absorbers"),
    ("series-resistance-drop", "tandem/physics/junctions.py",
     "    v = v_j - j * r_series\n", "    v = v_j\n",
     "the series resistance's voltage drop left out of the terminal voltage",
     "test_electrical"),
    ("series-jsc-crossing", "tandem/physics/junctions.py",
     "    holds = others(j_high) + v_short - j_high * r_series >= 0\n",
     "    holds = np.ones(np.shape(v_short), dtype=bool)\n",
     "an Auger-limited chain shorted at its largest photocurrent even where its voltage "
     "crosses zero before (a shunt, a large series resistance)", "test_recombination"),
    ("bose-li3", "tandem/physics/emission.py",
     "b2 = far * (far * b0 + 2 * li2) + 2 * li3", "b2 = far * (far * b0 + 2 * li2) + li3",
     "the exact emission's second Bose moment with Li3 once, not twice",
     "test_emission"),
    ("row-of-the-4t-candidate", "tandem/design/matching.py",
     "float(back_d), at.at((g - start, k)), matched, note)",
     "float(back_d), at.at((g - start, 0)), matched, note)",
     "the best-4T line shown with the performance of the chosen connection's row",
     "test_dependences test_one_path test_api"),
    ("region-batch-order", "tandem/jobs/region_cluster.py",
     "        for spec, record in zip(specs, records):",
     "        for spec, record in zip(specs, records[::-1]):",
     "a batch of sites stored each with another site's record", "test_region"),
    ("film-suffix-gain", "tandem/optics/thinfilm.py",
     "absorbed.append((1.0 if j <= last_swept else gain) * _form(",
     "absorbed.append((1.0 if j <= last_swept else 1.0) * _form(",
     "the films behind a swept layer given absorption per unit of transmitted amplitude, "
     "not times |t|²", "test_thinfilm"),
    ("film-front-form", "tandem/optics/thinfilm.py",
     "           + np.conj(x) * p10 * np.conj(p01))", "           + x * p10 * np.conj(p01))",
     "the films in front of a swept layer: a cross term of their Hermitian form unconjugated",
     "test_thinfilm"),
    ("film-oscillation", "tandem/optics/thinfilm.py",
     "imag = d * np.where(small, 0.5 * x, 2 * half * half / x_safe)",
     "imag = d * np.where(small, 0.5 * x, -2 * half * half / x_safe)",
     "a film's interference term (e^{ix} − 1)/(ix) with its imaginary part's sign flipped",
     "test_thinfilm"),
    ("mpp-parabolic-worst", "tandem/physics/junctions.py", "    return points[2][0]\n",
     "    return points[0][0]\n", "the maximum-power search returning the worst of its three "
     "last points", "test_electrical test_detailed_balance"),
    ("table-back-um", "tandem/output/report.py", "c.back_thickness_nm / 1000.0, 4",
     "c.back_thickness_nm / 100.0, 4", "the design table's back thickness [µm] off by 10",
     "test_cli_design test_api test_one_path"),
    ("printed-mismatch", "tandem/cli/render.py", "({100 * mismatch / b.incident_W_m2:.2f} %)",
     "({mismatch / b.incident_W_m2:.2f} %)", "the loss table's mismatch share printed as a "
     "fraction under a % sign", "test_breakdown test_cli_limit"),
]


def run(paths: list[str], where: Path, stop_first: bool = True) -> tuple[int, str]:
    """pytest's exit code and the first test it reports failed (or its last line)."""
    cmd = [sys.executable, "-m", "pytest", "-q", "-rf", "-p", "no:cacheprovider", "-p",
           "no:randomly", "-n", "2", *(["-x"] if stop_first else []), *paths]
    done = subprocess.run(cmd, cwd=where, env={**os.environ, "PYTHONPATH": str(where)},
                          capture_output=True, text=True)
    (where.parent / "last-run.txt").write_text(done.stdout + done.stderr)  # to read a failure
    lines = done.stdout.splitlines()
    failed = [line.split()[1] for line in lines if line.startswith(("FAILED ", "ERROR "))]
    return done.returncode, (failed[0] if failed else (lines[-1] if lines else ""))


def main(names: list[str]) -> None:
    chosen = [m for m in MUTATIONS if not names or m[0] in names]
    caught = 0
    with tempfile.TemporaryDirectory(prefix="tandem-mutations-") as scratch:
        where = Path(scratch) / "tree"
        subprocess.run(["git", "worktree", "add", "-q", "--detach", str(where), "HEAD"], cwd=ROOT,
                       check=True)
        try:
            for name, file, text, replacement, what, tests in chosen:
                path = where / file
                source = path.read_text(encoding="utf-8")
                if source.count(text) != 1:
                    print(f"{name:<28} NOT APPLIED: the text occurs {source.count(text)} times")
                    continue
                path.write_text(source.replace(text, replacement), encoding="utf-8")
                t0 = time.perf_counter()
                code, by = run([f"tests/{t}.py" for t in tests.split()], where)
                how = "first tests"
                if code == 0:
                    (code, by), how = run(["tests"], where, stop_first=True), "whole suite"
                path.write_text(source, encoding="utf-8")
                # 1: a test failed; 2: pytest-xdist stopped the run at that failure (-x)
                verdict = "caught" if code in (1, 2) else "MISSED" if code == 0 else f"exit {code}"
                caught += code in (1, 2)
                print(f"{name:<28} {verdict:<7} ({how}, {time.perf_counter() - t0:5.0f} s)  {what}"
                      f"\n{'':<30}{by if code else ''}", flush=True)
        finally:
            subprocess.run(["git", "worktree", "remove", "--force", str(where)], cwd=ROOT)
    print(f"caught {caught} of {len(chosen)} ({100 * caught / max(len(chosen), 1):.0f} %)")


if __name__ == "__main__":
    main(sys.argv[1:])
