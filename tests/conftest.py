import os

# numpy first, whatever the plugins loaded before us: its BLAS keeps its full thread pool,
# limited to one thread at run time below, so that a test may still raise it (one checks
# that a series' basis is built on one thread even where two are allowed)
import numpy  # noqa: F401

# One BLAS thread per test process, as the command line runs (tandem/cli/__init__.py): the
# suite runs one process per core, where BLAS threads only contend. The variable reaches
# subprocesses and BLAS libraries loaded later (scipy's); numpy's is limited at run time.
for _variable in ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

import pytest  # noqa: E402
from hypothesis import HealthCheck, settings  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

import tandem  # noqa: E402

threadpool_limits(limits=1, user_api="blas")  # whatever the variable says (even no number)

# Property tests: a few hundred examples per property in CI; `--hypothesis-profile thorough`
# runs 10⁴ (the closing notes of physics changes report having run it).
settings.register_profile("ci", max_examples=200, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("thorough", max_examples=10_000, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


@pytest.fixture(scope="session")
def am15g():
    """ASTM G173-03 global tilt as photon flux."""
    return tandem.reference_spectrum("am1.5g").photon_flux()


# Tests write into their own temporary folders, never into the project: a file that appears in
# the working tree during the run (untracked and not ignored) fails the session, named.
_ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _untracked() -> set[str] | None:
    import subprocess

    try:
        out = subprocess.run(["git", "status", "--porcelain", "--untracked-files=all"], cwd=_ROOT,
                             capture_output=True, text=True, timeout=60)
    except (OSError, subprocess.TimeoutExpired):
        return None
    if out.returncode != 0:  # not a git checkout (an installed copy): nothing to watch
        return None
    return {line[3:] for line in out.stdout.splitlines() if line.startswith("??")}


def pytest_sessionstart(session):
    session.config._untracked_before = _untracked()


def pytest_sessionfinish(session, exitstatus):
    before = getattr(session.config, "_untracked_before", None)
    after = _untracked()
    if before is None or after is None:
        return
    written = sorted(after - before)
    if written:
        print(f"\ntests wrote into the project: {', '.join(written[:10])}")
        session.exitstatus = 1
