"""The command line: a typer app over the jobs (parse, call, render; no physics here)."""

import os

# One BLAS thread unless the user asks for more, set before numpy or scipy load their BLAS
# (each reads this once, when loaded): the tool's matrix products are many and small
# (thicknesses or steps × energies), where a second thread only spins. Measured on the 2-core
# machine, one thread against OpenBLAS's default of two: `tandem match my-film.toml silicon`
# 3.7 s wall, 3.7 s CPU against 5.0 s and 6.9 s; a month's yield 6.4 s against 8.3 s.
for _variable in ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

from tandem.cli.app import app, main  # noqa: E402

__all__ = ["app", "main"]
