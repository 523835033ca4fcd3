"""What a region job's results depend on, as SHA-256 digests: a resumed site must have been
computed from the same inputs — files by content, the layer stack's resolved data, the tool's
version (:meth:`tandem.jobs.region.RegionJob.job_fingerprint`)."""

from __future__ import annotations

import hashlib
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from tandem.design.yields import StackYield
    from tandem.jobs.inputs import Light, OperatingPoint


def stack_text(design: StackYield) -> dict:
    """What a stack job's numbers depend on, as data: the stack file, every layer's resolved
    optical data (tables by their content), the other layers' thicknesses."""
    layers = [{"name": x.name, "thickness_nm": x.thickness_nm, "sweep_nm": x.sweep_nm,
               "coherent": x.coherent, "role": x.role, "source": x.source, "gap_eV": x.gap_eV,
               "constant": repr(x.constant), "light_trapping": x.light_trapping,
               "absorber": None if x.absorber is None else x.absorber.path.read_text(encoding="utf-8"),
               "table": None if x.table is None else hashlib.sha256(
                   np.ascontiguousarray(x.table[0]).tobytes()
                   + np.ascontiguousarray(x.table[1]).tobytes()).hexdigest()}
              for x in design.stack.layers]
    return {"file": design.stack.path.read_text(encoding="utf-8"), "layers": layers,
            "ambient": design.stack.ambient_index, "exit": repr(design.stack.exit_index),
            "others": design.others}


def input_files_sha(operating: OperatingPoint, reference: Light | None) -> dict:
    """SHA-256 of every input file a region job names by path: a spectrum CSV and spectral
    loss CSVs (a resumed site must have used the same numbers, not just the same names)."""
    named = {k: getattr(operating, k) for k in ("reflectance", "front_parasitic",
                                                "interlayer_parasitic")}
    if reference is not None:
        named["spectrum"] = reference.source
    return {k: file_sha(v) for k, v in named.items() if isinstance(v, str) and Path(v).is_file()}


def tandem_version() -> str:
    from tandem import __version__

    return __version__


def file_sha(path: str | None) -> str | None:
    if not path:
        return None
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return None
