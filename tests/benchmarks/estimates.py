"""The work estimates against the runs they estimate, on this machine.

Run on demand (not part of the suite):

    python tests/benchmarks/estimates.py           # every case (about 10 minutes)
    python tests/benchmarks/estimates.py map       # the cases whose label holds "map"

Every job that can grow refuses a run estimated over 10 minutes or 2 GiB unless ``--large``
(``tandem/jobs/common.py``). Here each case runs ``tandem ARGS`` as a user would, in a
fresh process (with the ``tandem.work`` log shown, so the estimate is the one the run itself
made), while its whole process tree's resident memory is sampled every 20 ms. It prints the
estimate beside the measured wall time and peak memory, and their ratios; the target is a
ratio within 0.5–2 for memory, and for time wherever the job, not the imports and figures,
takes most of it (the cases below are sized for that).
"""

from __future__ import annotations

import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import psutil

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))  # the shared references

from references import mirror_stack  # noqa: E402

RUN = ("import logging, sys; logging.basicConfig(level=logging.INFO, format='%(name)s|%(message)s', "
       "stream=sys.stderr); sys.argv = ['tandem', *sys.argv[1:]]; from tandem.cli.app import main; "
       "main()")


def map_scenario(points_per_axis: int) -> str:
    """The bundled default scenario with a [map] of about ``points_per_axis``² pairs."""
    text = (ROOT / "scenarios" / "wide-gap-partner-for-silicon.toml").read_text()
    step = 1.0 / (points_per_axis - 1)
    text = re.sub(r"(?ms)^\[map\].*?(?=^\[|\Z)", "", text)
    return text + (f"\n[map]\nfront_gap_range_eV = [1.3, 2.3, {step:.6f}]\n"
                   f"back_gap_range_eV = [0.7, 1.7, {step:.6f}]\n")


SITE = ["--latitude", "35.2", "--longitude", "-106.4", "--altitude", "1650", "--timezone",
        "Etc/GMT+7"]

#: label, files to write in the scratch folder, the command's arguments
CASES = [
    ("map 801 x 801 step absorbers", {}, ["map", "--front", "1.4:2.2:0.001", "--back",
                                          "0.8:1.6:0.001", "-q"]),
    ("map 1601 x 1201 step absorbers", {}, ["map", "--front", "1.4:2.2:0.0005", "--back",
                                            "0.8:1.4:0.0005", "-q"]),
    ("map over absorbers 201 x 101", {}, ["map", "--front-absorber", "perovskite-wide",
                                          "--back-absorber", "cigs", "--front", "1.6:1.9:0.0015",
                                          "--back", "1.0:1.2:0.002", "-q"]),
    ("study with a 1001 x 1001 [map]", {"big-map.toml": map_scenario(1001)},
     ["study", "big-map.toml", "--out", "s", "-q"]),
    ("match --stack bundled wafer stack", {}, ["match", "--stack", "wide-gap-on-silicon-wafer", "-q"]),
    ("match --stack 32-pair mirror (67 layers)", {"mirror.toml": mirror_stack(32)},
     ["match", "--stack", "mirror.toml", "-q"]),
    ("match --stack 64-pair mirror (131 layers)", {"mirror.toml": mirror_stack(64)},
     ["match", "--stack", "mirror.toml", "-q", "--large"]),
    ("yield clear year 15 min, 11 x 16 designs", {},
     ["yield", "perovskite-wide", "silicon", *SITE, "--step", "15", "--front-gaps",
      "1.60:1.92:0.032", "-q"]),
    ("yield --stack bundled wafer stack, a June day", {},
     ["yield", "--stack", "wide-gap-on-silicon-wafer", *SITE, "--period", "day:2026-06-21", "-q"]),
    ("yield --stack 32-pair mirror, a June day", {"mirror.toml": mirror_stack(32)},
     ["yield", "--stack", "mirror.toml", *SITE, "--period", "day:2026-06-21", "-q"]),
    ("spread --stack 32-pair mirror, 400 devices", {"mirror.toml": mirror_stack(32)},
     ["spread", "--stack", "mirror.toml", "--samples", "400", "-q", "--large"]),
    ("region 4 sites x a month, 2 workers", {},
     ["region", "perovskite-wide", "silicon", "--latitudes", "30:45:5", "--longitudes", "0:0:1",
      "--period", "month:2026-06", "--workers", "2", "--out", "r", "-q"]),
]


def tree_rss(process: psutil.Process) -> int:
    """Resident bytes of a process and every process it started."""
    total = 0
    for p in [process, *process.children(recursive=True)]:
        try:
            total += p.memory_info().rss
        except psutil.Error:  # ended between the listing and the reading
            pass
    return total


def run(args: list[str], files: dict) -> tuple[float, int, list[tuple[str, float, float]]]:
    """Wall seconds, peak tree memory and the estimates the run logged (what, s, bytes)."""
    with tempfile.TemporaryDirectory() as folder:
        for name, text in files.items():
            (Path(folder) / name).write_text(text)
        start = time.perf_counter()
        child = subprocess.Popen([sys.executable, "-c", RUN, *args], cwd=folder,
                                 stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        watched, peak = psutil.Process(child.pid), 0
        while child.poll() is None:
            try:
                peak = max(peak, tree_rss(watched))
            except psutil.Error:
                pass
            time.sleep(0.02)
        wall = time.perf_counter() - start
        err = child.stderr.read() if child.stderr else ""
    if child.returncode:
        print(f"  {' '.join(args)}: exit {child.returncode}\n{err[-2000:]}")
    estimates = []
    for line in dict.fromkeys(err.splitlines()):  # a check made twice (a study's parse) counts once
        m = re.fullmatch(r"tandem\.work\|(.*): ([\d.]+) s, (-?\d+) bytes", line.strip())
        if m:
            estimates.append((m[1], float(m[2]), float(m[3])))
    return wall, peak, estimates


def main() -> None:
    import tandem

    chosen = [c for c in CASES if not sys.argv[1:] or any(a in c[0] for a in sys.argv[1:])]
    print(f"tandem {tandem.__version__}, {psutil.cpu_count()} cores; estimate vs measured "
          "(whole process tree, sampled every 20 ms)")
    print(f"  {'case':<44} {'est s':>7} {'wall s':>7} {'ratio':>6}   {'est MiB':>8} "
          f"{'peak MiB':>9} {'ratio':>6}")
    for label, files, args in chosen:
        wall, peak, estimates = run(args, files)
        if not estimates:
            print(f"  {label:<44} (no estimate logged)  {wall:7.1f} s  {peak / 2**20:8.0f} MiB")
            continue
        seconds = sum(e[1] for e in estimates)
        sized = [e[2] for e in estimates if e[2] >= 0]
        memory = max(sized) if sized else float("nan")
        print(f"  {label:<44} {seconds:7.1f} {wall:7.1f} {wall / seconds:6.2f}   "
              f"{memory / 2**20:8.0f} {peak / 2**20:9.0f} {peak / memory:6.2f}")


if __name__ == "__main__":
    main()
