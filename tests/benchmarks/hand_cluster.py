"""A real region on a hand-started dask cluster against the serial run: bit for bit?

Run on demand (about 90 s on the 2-core machine; needs the `dask` command of the environment):

    python tests/benchmarks/hand_cluster.py              # 24 invented sites, one June day
    python tests/benchmarks/hand_cluster.py --sites 48

It starts `dask scheduler` and `dask worker --nworkers 2` as a user would by hand (the recipe
in docs/commands.md), runs `tandem region perovskite-wide silicon` over invented sites once
with `--workers 1` and once with `--scheduler`, prints both wall times, and compares the two
`region.csv` tables and every float variable of `region.nc` exactly.
"""

from __future__ import annotations

import argparse
import os
import random
import subprocess
import sys
import tempfile
import time
from pathlib import Path

BIN = Path(sys.executable).parent


def invented_sites(path: Path, count: int) -> None:
    rng = random.Random(3)
    rows = ["name,latitude,longitude,altitude_m,timezone,weather"]
    rows += [f"Invented site {i + 1:03d},{rng.uniform(-50, 60):.2f},{rng.uniform(-120, 140):.2f},"
             f"{rng.randint(0, 1500)},," for i in range(count)]
    path.write_text("\n".join(rows) + "\n")


def region(where: Path, out: str, *how: str) -> float:
    start = time.perf_counter()
    subprocess.run([str(BIN / "tandem"), "region", "perovskite-wide", "silicon", "--sites",
                    "sites.csv", "--period", "day:2026-06-21", "--out", out, "-q", *how],
                   cwd=where, check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - start


def main() -> None:
    import pandas as pd
    import xarray as xr

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=24)
    parser.add_argument("--port", type=int, default=8799)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="tandem-hand-cluster-") as tmp:
        where = Path(tmp)
        invented_sites(where / "sites.csv", args.sites)
        address = f"tcp://127.0.0.1:{args.port}"
        log = open(where / "dask.log", "w")
        scheduler = subprocess.Popen([str(BIN / "dask"), "scheduler", "--host", "127.0.0.1",
                                      "--port", str(args.port), "--no-dashboard"],
                                     stdout=log, stderr=log)
        time.sleep(4)
        # the workers as docs/commands.md sets them up: examples/dask-workers.yaml read
        examples = Path(__file__).resolve().parents[2] / "examples"
        workers = subprocess.Popen([str(BIN / "dask"), "worker", address, "--nthreads", "1",
                                    "--nworkers", "2", "--no-dashboard"], stdout=log, stderr=log,
                                   env={**os.environ, "DASK_CONFIG": str(examples)})
        time.sleep(8)
        try:
            serial = region(where, "serial", "--workers", "1")
            cluster = region(where, "cluster", "--scheduler", address)
        finally:
            workers.terminate(), scheduler.terminate()
            workers.wait(), scheduler.wait()
        print(f"{args.sites} sites: serial {serial:.1f} s, hand-started scheduler with two "
              f"workers {cluster:.1f} s ({serial / cluster:.2f}×)")
        a, b = (pd.read_csv(where / run / "region.csv").drop(columns="seconds")
                .sort_values("name").reset_index(drop=True) for run in ("serial", "cluster"))
        pd.testing.assert_frame_equal(a, b, check_exact=True)
        with xr.open_dataset(where / "serial" / "region.nc", engine="scipy") as x, \
                xr.open_dataset(where / "cluster" / "region.nc", engine="scipy") as y:
            for name in x.data_vars:
                if name != "seconds" and x[name].dtype.kind == "f":
                    u, v = x[name].sortby("site").values, y[name].sortby("site").values
                    assert ((u == v) | (u != u) & (v != v)).all(), name
        print("serial and cluster equal bit for bit (region.csv and every float in region.nc)")


if __name__ == "__main__":
    main()
