"""Every kind of figure the tool draws, rendered and compared with a stored reference PNG.

The content tests (tests/test_figures_content.py) read numbers back from the matplotlib
objects; these catch what they cannot name: a panel gone, a colour changed, a legend over the
data, a label cut off. The references live in tests/figure_references/ at a low resolution
(the layout, not the 300 dpi print) and are compared by matplotlib's own image comparison
(``matplotlib.testing.compare.compare_images``, RMS over the pixels on a 0–255 scale).

A deliberate change of a figure (or of a number it draws) is accepted by regenerating them::

    python tests/test_figure_pixels.py        # rewrites tests/figure_references/*.png

and looking at every rewritten PNG before committing it. Rendering differs between matplotlib
releases (text layout, antialiasing), so the comparison runs with the matplotlib release that
drew the references (recorded in VERSION) and is skipped, saying so, with any other.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run as a script from anywhere

import tandem  # noqa: E402

REFERENCES = Path(__file__).with_name("figure_references")
DPI = 40
#: RMS over the pixels [0–255] still called the same figure: the same release renders the
#: same bytes (0.0 measured between two machines' runs is the norm); a moved label or a
#: legend entry gone is 2–10 (common practice in matplotlib's own tests: tol 0 to a few).
TOLERANCE = 1.0
DATA = Path(__file__).with_name("data")


def _limit():
    return tandem.limit([1.73, 1.12]).plot()


def _breakdown():
    from tandem.output.plots import draw_loss_breakdown

    return draw_loss_breakdown(tandem.limit([1.73, 1.12]).loss_breakdown(), "1.73 / 1.12 eV")


def _match():
    return tandem.match("perovskite-wide", "silicon",
                        sweep=tandem.Sweep(front_gaps_eV=[1.66, 1.70, 1.74],
                                           thickness_points=30)).plot()


def _absorber():
    from tandem.output.plots import draw_absorber

    return draw_absorber(tandem.load_absorber("perovskite-wide"))


def _map():
    return tandem.gap_map(front_gaps_eV=np.linspace(1.5, 2.1, 31),
                          back_gaps_eV=np.linspace(0.9, 1.3, 21)).plot()


def _map_line():
    return tandem.gap_map(front_gaps_eV=np.linspace(1.5, 2.1, 61), back_gaps_eV=1.12).plot()


def _eqe():
    return tandem.measured_eqe(DATA / "front-eqe.csv", DATA / "back-eqe.csv").plot()


def _site_series():
    site = tandem.Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    return tandem.clear_sky_series(site, tandem.parse_period("day:2026-06-21", site.timezone, 60))


def _yield():
    return tandem.energy_yield("perovskite-wide", "silicon", _site_series(),
                               front_gaps_eV=[1.62, 1.68, 1.74],
                               front_thicknesses_nm=[300.0, 600.0, 1200.0]).plot()


def _spread():
    return tandem.fabrication_spread("perovskite-wide", "silicon", samples=200,
                                     target_pct=37.0).plot()


def _stack():
    from tandem.output.stack_plots import draw_photon_budget

    return draw_photon_budget(tandem.match_stack("organic-pair", points=20))


def _pairs():
    from tandem.output.plots import draw_pair_comparison
    from tandem.study.run import run_study
    from tandem.study.sources import load_scenario

    return draw_pair_comparison(run_study(load_scenario("low-cost-organic-pair")).results)


def _region(folder: Path):
    from tandem.jobs.inputs import OperatingPoint
    from tandem.jobs.region import RegionJob, read_sites, run_region
    from tandem.design.sky import Rows

    sites = folder / "sites.csv"
    sites.write_text("name,latitude,longitude,altitude_m,timezone\n"
                     "Mesa Verdeja,35.2,-106.4,1650,Etc/GMT+7\n"
                     "Lago Norte,60.2,24.9,20,Etc/GMT-2\n"
                     "Serra Fria,-33.9,18.4,100,Etc/GMT-2\n")
    job = RegionJob(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"),
                    OperatingPoint(), (1.62, 1.70, 1.78), (300.0, 1500.0), 160e3,
                    period="day:2026-06-21", rows=Rows())
    return run_region(read_sites(sites), job, folder / "region", workers=1).plot()


#: figure kind → how to draw it (a region needs a folder to run in)
KINDS = {"limit": _limit, "breakdown": _breakdown, "match": _match, "absorber": _absorber,
         "map": _map, "map-line": _map_line, "eqe": _eqe, "yield": _yield,
         "spread": _spread, "stack": _stack, "pairs": _pairs, "region": _region}


def render(kind: str, target: Path, scratch: Path) -> None:
    build = KINDS[kind]
    with _fonts():
        _save(build(scratch) if kind == "region" else build(), target)


def _fonts():
    """matplotlib's own font settings for image tests (its bundled DejaVu Sans)."""
    import matplotlib

    return matplotlib.rc_context({"font.family": "DejaVu Sans", "text.hinting": "default"})


def _save(fig, target: Path) -> None:
    fig.savefig(target, dpi=DPI, bbox_inches="tight", format="png")


def _drawn_by() -> str:
    import matplotlib

    return f"matplotlib {matplotlib.__version__}"


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_the_figure_looks_as_its_reference(kind, tmp_path):
    from matplotlib.testing.compare import compare_images

    recorded = (REFERENCES / "VERSION").read_text().strip()
    if recorded != _drawn_by():
        pytest.skip(f"references drawn with {recorded}, this is {_drawn_by()}: "
                    "regenerate with python tests/test_figure_pixels.py")
    actual = tmp_path / f"{kind}.png"
    render(kind, actual, tmp_path)
    expected = REFERENCES / f"{kind}.png"
    from PIL import Image

    with Image.open(expected) as a, Image.open(actual) as b:
        assert a.size == b.size, f"{kind}: {b.size} pixels, the reference has {a.size}"
    failure = compare_images(str(expected), str(actual), tol=TOLERANCE)
    assert failure is None, failure


def test_every_reference_has_a_kind_and_every_kind_a_reference():
    stored = {p.stem for p in REFERENCES.glob("*.png")}
    assert stored == set(KINDS)


def test_a_changed_figure_is_told_apart_from_its_reference(tmp_path):
    # the comparison bites: the limit figure without its legend is not the reference
    from matplotlib.testing.compare import compare_images

    with _fonts():
        fig = _limit()
        fig.axes[0].get_legend().remove()
        _save(fig, tmp_path / "limit.png")
    from PIL import Image

    with Image.open(REFERENCES / "limit.png") as a, Image.open(tmp_path / "limit.png") as b:
        same_size = a.size == b.size
    assert not same_size or compare_images(str(REFERENCES / "limit.png"),
                                           str(tmp_path / "limit.png"), tol=TOLERANCE)


def regenerate() -> None:
    """Rewrite every reference PNG and the VERSION it was drawn with."""
    import tempfile

    REFERENCES.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as scratch:
        for kind in sorted(KINDS):
            render(kind, REFERENCES / f"{kind}.png", Path(scratch))
            print(f"wrote {REFERENCES / f'{kind}.png'}")
    (REFERENCES / "VERSION").write_text(_drawn_by() + "\n")


if __name__ == "__main__":
    regenerate()
