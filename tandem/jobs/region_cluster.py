"""A region's sites on a dask cluster: the scheduler address checked at the door, a local
cluster started (or yours used), and the sites streamed through it a few per worker at a time.
Used by :func:`tandem.jobs.region.run_region`; dask is imported only here and only when a
region runs on more than one process.

The workers and the scheduler must be trusted: dask unpickles what they send back.
"""

from __future__ import annotations

import contextlib
import os

from tandem.core.errors import TandemInputError

SCHEDULER_TIMEOUT_S = 20  #: how long to wait for a scheduler to answer


def check_scheduler_address(address: str) -> None:
    """A dask scheduler address as ``tcp://HOST:PORT`` or ``tls://HOST:PORT``, or one line
    saying so (before any folder is made or connection tried)."""
    from urllib.parse import urlsplit

    try:
        parts = urlsplit(str(address))
        port = parts.port
    except ValueError:
        port, parts = None, None
    if (parts is None or parts.scheme not in ("tcp", "tls") or not parts.hostname or port is None
            or parts.username is not None  # and nothing but scheme://host:port (a '#', '?', path)
            or str(address).rstrip("/") != f"{parts.scheme}://{parts.netloc}"):
        raise TandemInputError(f"--scheduler '{address}': give tcp://HOST:PORT (or tls://HOST:PORT "
                               "with certificates in dask's configuration), e.g. "
                               "tcp://10.0.0.5:8786")


def _run_distributed(todo, job, scheduler, workers, finished, task) -> None:
    """``task(spec, job)`` for every site of ``todo`` on a dask cluster (see :func:`run_region`)."""
    if scheduler is not None and not isinstance(scheduler, str):  # a Client the caller owns
        _stream_sites(scheduler, todo, job, finished, task)
        return
    with _quiet_dask_logs():
        _run_own_client(todo, job, scheduler, workers, finished, task)


@contextlib.contextmanager
def _quiet_dask_logs():
    """dask logs its own view of a lost scheduler (reconnect tracebacks) before the one line
    a run ends with: on a cluster tandem connects to or starts, that line reports alone."""
    import logging

    handlers = {h for name, logger in logging.root.manager.loggerDict.items()  # dask's printers
                if name.split(".")[0] == "distributed" and isinstance(logger, logging.Logger)
                for h in logger.handlers}
    levels = [(h, h.level) for h in handlers]
    for h in handlers:
        h.setLevel(logging.CRITICAL + 1)
    try:
        yield
    finally:
        for h, level in levels:
            h.setLevel(level)


def _run_own_client(todo, job, scheduler, workers, finished, task) -> None:
    """:func:`_run_distributed` on a client this run opens (and closes)."""
    import dask
    from dask.distributed import Client, LocalCluster

    if scheduler:
        try:
            client = Client(scheduler, timeout=f"{SCHEDULER_TIMEOUT_S}s")
        except OSError as exc:
            raise TandemInputError(f"no dask scheduler answers at '{scheduler}' ({exc}); check "
                                   "the address, e.g. tcp://10.0.0.5:8786") from None
        cluster = None
    else:
        n = workers or os.cpu_count() or 1
        # dask's workers start with MALLOC_TRIM_THRESHOLD_=65536, which turns every large
        # numpy allocation into fresh pages: a site-year took 0.72 s instead of 0.46 s
        with dask.config.set({"distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None}), \
                _workers_ignore_interrupts():
            # the HTTP endpoints on this machine only, on free ports (None does not switch them
            # off); the workers silent (a task's error comes back through its result)
            cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                   silence_logs=60, dashboard_address="127.0.0.1:0",
                                   worker_dashboard_address="127.0.0.1:0")
        client = Client(cluster)
    try:
        _stream_sites(client, todo, job, finished, task)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


@contextlib.contextmanager
def _workers_ignore_interrupts():
    """Worker processes started inside the block ignore Ctrl-C (an ignored signal stays
    ignored in a child): the interrupt reaches this process alone, which ends in one line and
    closes its cluster, instead of each worker printing its own KeyboardInterrupt traceback."""
    import signal
    import threading

    previous = None
    if threading.current_thread() is threading.main_thread():
        previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        if previous is not None:
            signal.signal(signal.SIGINT, previous)


#: Tasks in flight per worker: enough to keep each busy while a result travels back, few
#: enough that client and scheduler hold a bounded number of tasks whatever the region's size.
SITES_IN_FLIGHT_PER_WORKER = 4
#: A task's length to aim for [s]: sites cheaper than this travel several to a task, so that
#: dask's own cost of a task (about 10 ms of CPU on the 2-core machine, shared by client,
#: scheduler and workers) is spread over them; a site dearer than this travels alone.
TASK_SECONDS = 0.25
MAX_SITES_PER_TASK = 256
#: How long a region waits while the cluster has no worker before it gives up [s].
NO_WORKERS_TIMEOUT_S = 120
_POLL_S = 2.0  #: how often a waiting region looks at the cluster's workers [s]


def _stream_sites(client, todo, job, finished, task) -> None:
    """Every site of ``todo`` through ``client``: the job sent to the workers once, sites
    submitted in a bounded window, each result stored (``finished``) and its task released
    before the next site goes out. A cluster that goes away, or keeps no worker for
    NO_WORKERS_TIMEOUT_S, ends in one line; the sites stored so far are kept for a rerun."""
    import asyncio
    import concurrent.futures

    stored = 0

    def counted(spec, record) -> None:
        nonlocal stored
        finished(spec, record)
        stored += 1

    try:
        _stream(client, todo, job, counted, task)
    except TandemInputError:
        raise
    except (OSError, asyncio.CancelledError, concurrent.futures.CancelledError) as exc:
        raise TandemInputError(
            f"the dask cluster stopped answering after {stored} of {len(todo)} sites "
            f"({type(exc).__name__}); the finished sites are kept: run the same command again "
            "to resume") from None


def _stream(client, todo, job, finished, task) -> None:
    import itertools
    import queue

    _await_workers(client)
    in_flight = SITES_IN_FLIGHT_PER_WORKER * max(_worker_count(client), 1)
    [shared_job] = client.scatter([job], broadcast=True)  # one copy per worker, not per task
    sites = iter(todo)
    pending: dict = {}
    ready: queue.SimpleQueue = queue.SimpleQueue()  # filled by dask as tasks end (or cancel)
    batch = 1  # sites a task: one until a task has told what a site costs

    def submit_next() -> None:
        specs = list(itertools.islice(sites, batch))
        if specs:
            future = client.submit(sites_task, task, specs, shared_job, pure=False)
            pending[future] = specs
            future.add_done_callback(ready.put)

    for _ in range(in_flight):
        submit_next()
    while pending:
        try:
            future = ready.get(timeout=_POLL_S)
        except queue.Empty:  # nothing ended for a while: is there still a cluster to wait for?
            if client.status in ("closing", "closed", "failed"):
                raise ConnectionError(f"client {client.status}") from None
            _await_workers(client)
            continue
        specs = pending.pop(future)
        records, seconds = future.result()  # a cancelled task (the cluster gone) raises here
        future.release()  # the scheduler forgets the task and its result
        for spec, record in zip(specs, records):
            finished(spec, record)
        batch = sites_per_task(seconds / len(specs))
        submit_next()


def sites_per_task(site_seconds: float) -> int:
    """How many sites of this cost [s] make a task of about TASK_SECONDS (1 to the maximum)."""
    return max(1, min(MAX_SITES_PER_TASK, int(TASK_SECONDS / max(site_seconds, 1e-9))))


def sites_task(task, specs, job) -> tuple[list, float]:
    """``task(spec, job)`` for each site of ``specs``, on a worker: the records, in order, and
    the seconds they took."""
    import time

    start = time.perf_counter()
    records = [task(spec, job) for spec in specs]
    return records, time.perf_counter() - start


def _worker_count(client) -> int:
    return len(client.scheduler_info().get("workers", {}))


def _await_workers(client) -> None:
    """Return once the cluster has a worker; one line after NO_WORKERS_TIMEOUT_S without."""
    if _worker_count(client):
        return
    try:
        client.wait_for_workers(1, timeout=NO_WORKERS_TIMEOUT_S)
    except TimeoutError:
        raise TandemInputError(
            f"the dask cluster has had no worker for {NO_WORKERS_TIMEOUT_S} s; start workers "
            "(dask worker SCHEDULER-ADDRESS) and run the same command again to resume") from None
