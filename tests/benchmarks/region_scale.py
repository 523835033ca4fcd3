"""How the region engine scales with the number of sites, by simulation.

Run on demand (not part of the suite):

    python tests/benchmarks/region_scale.py                 # 100,000 sites, 2 workers
    python tests/benchmarks/region_scale.py --sites 20000 --workers 2

A stand-in task replaces a site's year (it returns a record of the real one's size at once),
so what is measured is the engine alone: the job scattered once, sites streamed a few per
worker, each result stored as the real run stores it (a row of a scratch ``sites.sqlite``, in
its own transaction, with its digest) and its task released. It prints the engine's cost
per site and the resident memory of client, scheduler and workers at 10 %, 50 % and 100 % of
the sites (flat means the engine holds nothing per site). The real cost of a site-year comes
from ``tests/benchmarks/run.py`` (case g); the time for N real sites on W workers is about
N × (site-year + engine cost) / W.
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))


def stand_in_site(spec, job):
    """A record the size of a real site's (a few dozen numbers), at once."""
    return {"name": spec, "front_gap_eV": 1.7, "front_thickness_nm": 800.0,
            "energy_2t_kWh_m2": 400.0, "energy_4t_kWh_m2": 410.0, "grid": [0.0] * 24}


def rss_mib() -> float:
    import psutil

    return psutil.Process().memory_info().rss / 2**20


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=100_000)
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args()

    import tempfile
    from contextlib import closing

    from dask.distributed import Client, LocalCluster

    import tandem
    from tandem.jobs.region_cluster import _stream_sites
    from tandem.jobs.region_folder import _digest, open_store, store_record

    job = tandem.region_job("perovskite-wide", "silicon", period="day:2026-06-21")
    sites = [f"site-{i:06d}" for i in range(args.sites)]
    marks = {int(args.sites * share): share for share in (0.1, 0.5, 1.0)}
    rows = []
    with LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True,
                      dashboard_address="127.0.0.1:0", silence_logs=60) as cluster, \
            Client(cluster) as client, tempfile.TemporaryDirectory() as scratch, \
            closing(open_store(Path(scratch))) as db:
        count = [0]
        start = time.perf_counter()

        def finished(spec, record):
            record.update(fingerprint="stand-in", written_by="stand-in")
            record["digest"] = _digest(record)
            store_record(db, spec, record)
            count[0] += 1
            share = marks.get(count[0])
            if share is not None:
                workers = client.run(rss_mib)
                rows.append((share, count[0], time.perf_counter() - start, rss_mib(),
                             client.run_on_scheduler(rss_mib), max(workers.values())))

        _stream_sites(client, sites, job, finished, stand_in_site)
        seconds = time.perf_counter() - start
    print(f"tandem {tandem.__version__}: {args.sites:,} stand-in sites on {args.workers} local "
          f"workers ({os.cpu_count()} cores)")
    print(f"  engine: {seconds:.1f} s in all, {1e3 * seconds / args.sites:.2f} ms per site")
    print("  share  sites     elapsed   client MiB  scheduler MiB  largest worker MiB")
    for share, n, t, client_mib, scheduler_mib, worker_mib in rows:
        print(f"  {share:>4.0%} {n:>8,} {t:>9.1f} s {client_mib:>11.0f} {scheduler_mib:>14.0f} "
              f"{worker_mib:>19.0f}")
    print(f"  client peak resident memory {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB")


if __name__ == "__main__":
    main()
