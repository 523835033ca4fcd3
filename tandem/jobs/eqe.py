"""Two measured subcell EQEs (:func:`measured_eqe`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from tandem.jobs.common import check_connection, check_types, ResultDisplay, as_absorber, frame
from tandem.jobs.inputs import Light, OperatingPoint

if TYPE_CHECKING:  # for annotations only: no import cost at run time
    from tandem.design.eqe import SubcellEQE


@dataclass(frozen=True, repr=False)
class EQEResult(ResultDisplay):
    """Two measured subcell EQEs under one spectrum (and, optionally, a site's year).

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.design.eqe import MeasuredEQE
    >>> e = np.linspace(0.5, 4.4, 400)
    >>> front = MeasuredEQE.from_arrays('front', e, 0.9 * (e >= 1.73))
    >>> back = MeasuredEQE.from_arrays('back', e, 0.9 * ((e >= 1.12) & (e < 1.73)))
    >>> tandem.measured_eqe(front, back).summary()['limiting_subcell']
    'front'
    """

    front: SubcellEQE
    back: SubcellEQE
    spectrum: str
    temperature_K: float
    notes: tuple[str, ...]
    matching: dict | None = None  #: the thickness change that would match, if asked
    year: dict | None = None  #: currents over a site's series, if given
    curves: tuple = ()  #: (front, back) MeasuredEQE, for the figure

    def summary(self) -> dict:
        from tandem.output.report import CAUTION

        f, b = self.front, self.back
        limiting = "front" if f.j_light < b.j_light else "back"
        low, high = sorted((f.j_light, b.j_light))
        return {
            "subcells": [{"position": p, "name": c.name, "jsc_mA_cm2": round(c.j_light / 10, 4),
                          "j0_radiative_A_m2": float(f"{c.j0_radiative:.6e}"),
                          "voc_radiative_V": round(c.voc_radiative, 5),
                          "voc_measured_V": c.voc_measured,
                          "ere": None if c.ere is None else float(f"{c.ere:.4e}"),
                          "urbach_tail_meV": None if c.urbach_eV is None else
                          round(1000 * c.urbach_eV, 2)}
                         for p, c in (("front", f), ("back", b))],
            "limiting_subcell": limiting,
            "mismatch_pct": round(100 * (high - low) / low, 4),
            "matching": self.matching, "year": self.year, "notes": list(self.notes),
            "spectrum": self.spectrum, "temperature_K": self.temperature_K, "caution": CAUTION,
        }

    def to_frame(self):
        return frame(self.summary()["subcells"])

    def to_dataset(self):
        """The two subcells along ``subcell``, the comparison as attributes."""
        from tandem.jobs.common import frame_dataset

        return frame_dataset(self.to_frame(), "subcell", self.dataset_attrs(), label="position")

    def plot(self, ax=None):
        from tandem.output.plots import draw_eqe

        return draw_eqe(self, ax)


def measured_eqe(front, back, light: Light = Light(), operating: OperatingPoint = OperatingPoint(),
                 *, voc_V: tuple[float, float] | None = None, front_absorber=None,
                 front_thickness_nm: float | None = None, back_absorber=None,
                 back_thickness_nm: float | None = None, series=None) -> EQEResult:
    """Subcell currents, the limiting subcell and the radiative Voc of two measured EQEs.

    Parameters
    ----------
    front, back : path or MeasuredEQE
        EQE files (wavelength nm, EQE fraction or percent), measured in the stack.
    voc_V : (front, back), optional
        Measured subcell Voc [V]: each gives its subcell's ERE.
    front_absorber / back_absorber with its thickness : optional
        The limiting subcell's absorber description and present thickness [nm]: the
        thickness that would match the currents, scaling the EQE by the absorber's model.
    series : tandem.design.series.SpectralSeries, optional
        A site's period: currents step by step, hours the front limits, mismatch loss.

    Examples
    --------
    >>> import numpy as np, tandem
    >>> from tandem.design.eqe import MeasuredEQE
    >>> e = np.linspace(0.5, 4.4, 400)
    >>> front = MeasuredEQE.from_arrays('front', e, 0.9 * (e >= 1.73))
    >>> back = MeasuredEQE.from_arrays('back', e, 0.9 * ((e >= 1.12) & (e < 1.73)))
    >>> r = tandem.measured_eqe(front, back, voc_V=(1.25, 0.70))
    >>> 0 < r.summary()['subcells'][0]['ere'] < 1
    True
    """
    check_types(light=light, operating=operating)
    check_connection(operating, "eqe")
    from tandem.design.eqe import MeasuredEQE, matching_thickness, read_eqe, subcell_from_eqe

    t = operating.temperature_K
    curves = [m if isinstance(m, MeasuredEQE) else read_eqe(m, temperature_K=t)
              for m in (front, back)]
    flux = light.photon_flux()
    vocs = voc_V or (None, None)
    f, b = (subcell_from_eqe(m, flux, t, v) for m, v in zip(curves, vocs))
    matching = None
    limiting = "front" if f.j_light < b.j_light else "back"
    given = {}  # every absorber given is read and its thickness checked, limiting or not
    for side, (name, thickness) in {"front": (front_absorber, front_thickness_nm),
                                    "back": (back_absorber, back_thickness_nm)}.items():
        if name is None and thickness is None:
            continue
        if name is None or thickness is None:
            from tandem.core.errors import TandemInputError

            raise TandemInputError(f"give the {side} absorber's description and its present "
                                   "thickness together (or neither)")
        given[side] = (as_absorber(name), float(thickness))
        given[side][0].check_thickness(float(thickness), f"{side} thickness")
    extra = tuple(f"{side} absorber not used: the {limiting} subcell limits, so only its "
                  "thickness can match the currents" for side in given if side != limiting)
    if limiting in given:
        a, thickness = given[limiting]
        d = matching_thickness(curves[0], curves[1], flux, limiting, a, thickness, t)
        matching = {"subcell": limiting, "absorber": a.key,
                    "thickness_nm": thickness, "matched_thickness_nm":
                    None if d is None else round(d, 1),
                    "note": "" if d is not None else f"no thickness in {a.key}'s range "
                    f"{a.thickness_range_nm[0]:g}–{a.thickness_range_nm[1]:g} nm matches"}
    year = None
    if series is not None:
        year = _eqe_year(curves, series)
    notes = tuple(n for m in curves for n in m.notes) + extra
    return EQEResult(f, b, flux.name, float(t), notes, matching, year, tuple(curves))


def _eqe_year(curves, series) -> dict:
    """Both subcells' photocurrents at every step of a series (reduced basis, trapezoid)."""
    from tandem.core.units import Q
    from tandem.physics.spectra import trapezoid_weights

    basis = series.photon_basis()
    w = trapezoid_weights(basis.energy) * Q
    j = np.stack([basis.coefficients() @ (basis.basis @ (w * m.at(basis.energy)))
                  for m in curves], axis=-1)  # (n_t, 2) A/m²
    h = series.step_hours
    front_limits = j[:, 0] < j[:, 1]
    light = series.step_irradiance * h
    lost = np.sum((j.max(axis=1) - j.min(axis=1)) * h)
    return {"source": series.source, "steps": int(series.times.size),
            "charge_front_Ah_m2": round(float(j[:, 0] @ h), 3),
            "charge_back_Ah_m2": round(float(j[:, 1] @ h), 3),
            "share_of_light_with_front_limiting_pct":
                round(100 * float(light[front_limits].sum() / max(light.sum(), 1e-300)), 2),
            "mismatch_charge_pct": round(100 * float(lost / max(np.sum(j.max(axis=1) * h), 1e-300)), 3)}


