"""The front cover's incidence-angle loss: how much of the beam, sky and ground light a
module's cover lets through, relative to normal incidence."""

from __future__ import annotations

import numpy as np

#: Front-glass index of the physical incidence-angle model (pvlib ``iam.physical``'s default,
#: soda-lime glass; De Soto et al., Sol. Energy 80 (2006) 78).
GLASS_INDEX = 1.526


def incidence_factors(cover_index: float, tilt_deg: float, aoi_deg):
    """Shares of the direct, sky-diffuse and ground-reflected light a cover lets through,
    relative to normal incidence [-]: (direct (n,), sky, ground).

    The physical model of a glass cover (Fresnel transmission of its front face, s and p
    averaged, and absorption e^{−KL/cos θ_r} with K = 4 m⁻¹, L = 2 mm; De Soto et al., Sol.
    Energy 80 (2006) 78; pvlib ``iam.physical``); diffuse light integrated over the sky and
    ground seen by the tilted plane (Marion, Sol. Energy 153 (2017) 1; pvlib
    ``iam.marion_diffuse``). A cover index of 1 means no cover: every factor is 1.
    """
    aoi = np.atleast_1d(np.asarray(aoi_deg, dtype=float))
    if cover_index == 1.0:
        return np.ones_like(aoi), 1.0, 1.0
    import pvlib

    direct = np.nan_to_num(pvlib.iam.physical(aoi, n=cover_index), nan=0.0)
    diffuse = pvlib.iam.marion_diffuse("physical", tilt_deg, n=cover_index)
    return direct, float(diffuse["sky"]), float(diffuse["ground"])


def cover_note(cover_index: float) -> str:
    """One line saying which incidence-angle loss a series carries."""
    if cover_index == 1.0:
        return "no front cover: no incidence-angle loss"
    return (f"front cover of index {cover_index:g}: incidence-angle loss of direct and "
            "diffuse light (physical model, De Soto 2006; diffuse by Marion 2017; pvlib)")


def is_cover_note(text: str) -> bool:
    """Whether a series note is :func:`cover_note`'s (a layer stack replaces it with its own)."""
    return text.startswith(("no front cover:", "front cover of index "))
