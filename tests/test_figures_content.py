"""Figures checked by what they show (read back from the matplotlib objects), not by size."""

import numpy as np
import pytest

import tandem


def _line(ax, label):
    return next(line for line in ax.get_lines() if line.get_label() == label)


def test_the_limit_figure_draws_the_series_stack_through_its_own_points():
    # The series curve ends at the stack's Voc (the subcells' open-circuit voltages add: one
    # current, zero, through both) and starts at the limiting photocurrent at short circuit
    r = tandem.limit([1.73, 1.12])
    p = r.design.performance
    ax = r.plot().axes[0]
    stack = _line(ax, "series stack (2T)")
    v, j = stack.get_xdata(), stack.get_ydata()
    assert v[0] == 0.0 and j[0] == pytest.approx(float(np.min(p.j_light)) / 10, rel=1e-12)
    assert float(np.max(v)) == pytest.approx(float(p.voc[0] + p.voc[1]), rel=1e-6)
    assert float(np.max(v)) == pytest.approx(float(p.voc_2t), rel=1e-6)
    star = next(line for line in ax.get_lines() if line.get_label().startswith("series maximum"))
    assert float(star.get_xdata()[0]) == pytest.approx(float(p.v_2t))
    assert {line.get_label() for line in ax.get_lines()} >= {"front 1.730 eV", "back 1.120 eV"}


def test_the_spread_figure_names_its_percentiles_in_the_legend():
    s = tandem.fabrication_spread("perovskite-wide", "silicon", samples=200, target_pct=37.0)
    ax = s.plot().axes[0]
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    p10, p50, p90 = np.percentile(100 * s.spread.efficiency_2t, [10, 50, 90])
    assert f"10th / median / 90th percentile: {p10:.2f} / {p50:.2f} / {p90:.2f} %" in labels
    assert any(label.startswith("target 37 %") for label in labels)
    assert ax.get_xlabel() == "2-terminal efficiency [%]"


def test_a_yield_maps_optimum_on_the_edge_is_drawn_whole():
    from tandem.design.sky import Site, clear_sky_series, parse_period

    site = Site("invented field", 38.0, -4.0, 600.0, 30.0, 180.0, "Etc/GMT-1")
    series = clear_sky_series(site, parse_period("day:2026-06-21", site.timezone, 60))
    y = tandem.energy_yield("perovskite-wide", "silicon", series, front_gaps_eV=[1.66, 1.72],
                            front_thicknesses_nm=[300.0, 1500.0])
    ax = y.plot().axes[0]
    star = _line(ax, "energy optimum")
    i, j = y.sweep.optimum
    assert star.get_xdata()[0] == y.sweep.thicknesses[j] and star.get_ydata()[0] == y.sweep.gaps[i]
    assert star.get_clip_on() is False


def test_a_waterfall_names_the_steps_too_small_to_draw():
    # a radiative cell has no non-radiative loss: that step is zero, so it gets no bar, and
    # the figure says which steps it left out instead of dropping them silently
    b = tandem.limit(1.34).loss_breakdown()
    from tandem.output.plots import draw_loss_breakdown

    ax = draw_loss_breakdown(b).axes[0]
    ticks = [t.get_text() for t in ax.get_xticklabels()]
    small = [s.name for s in b.steps[:-1] if abs(s.power_W_m2) <= 1e-4 * b.incident_W_m2]
    assert small and not set(small) & set(ticks)
    notes = " ".join(t.get_text() for t in ax.texts)
    assert all(name in notes for name in small) and "not drawn" in notes


def test_the_pair_comparison_shows_each_pairs_best_design():
    from tandem.output.plots import draw_pair_comparison
    from tandem.study.run import run_study
    from tandem.study.sources import load_scenario

    study = run_study(load_scenario("low-cost-organic-pair"))
    ax = draw_pair_comparison(study.results).axes[0]
    for (front, back), r in study.results.items():
        best = r.configurations[0]
        # named by the absorbers' names, as the match figures name them, not by file keys
        assert r.design.title == f"{r.design.front.name} over {r.design.back.name}"
        curve = next(line for line in ax.get_lines()
                     if line.get_label().startswith(f"{r.design.title} "))
        assert f"({best.front_gap_eV:.3f} eV)" in curve.get_label()
        # the star is the refined best design; the swept curve peaks just below it
        star = next(line for line in ax.get_lines() if line.get_marker() == "*"
                    and line.get_color() == curve.get_color())
        assert float(star.get_ydata()[0]) == pytest.approx(100 * best.efficiency_2t, rel=1e-12)
        peak = float(np.max(curve.get_ydata()))
        assert 100 * best.efficiency_2t - 0.05 < peak <= 100 * best.efficiency_2t * (1 + 1e-9)
    # a circle for each pair with a current-matched thickness, and the title's key for circles
    # only where one is drawn (the organic pair matches; a set of pairs that never do says so)
    matched = [r for r in study.results.values()
               if r.configurations[0].matched_front_thickness_nm is not None]
    circles = [line for line in ax.get_lines() if line.get_marker() == "o"]
    assert len(circles) == len(matched) == 1
    assert "circle: current-matched thickness" in ax.get_title()
    unmatched = {k: r for k, r in study.results.items() if r not in matched}
    title = draw_pair_comparison(unmatched).axes[0].get_title()
    assert "circle" not in title and "no pair current-matches" in title


def test_a_design_outside_the_declared_ranges_says_so_on_its_figure():
    m = tandem.match("perovskite-wide", "silicon",
                     operating=tandem.OperatingPoint(allow_outside_range=True),
                     sweep=tandem.Sweep(front_gaps_eV=[1.5], thickness_points=10))
    texts = " ".join(t.get_text() for t in m.plot().texts)
    assert "outside the absorbers' declared ranges: front gap 1.500 eV outside 1.570–1.923 eV" in texts
    s = tandem.fabrication_spread("perovskite-wide", "silicon", samples=20, front_gap_eV=1.5,
                                  operating=tandem.OperatingPoint(allow_outside_range=True))
    assert any("front gap 1.500 eV outside" in t.get_text() for t in s.plot().texts)
    inside = tandem.match("perovskite-wide", "silicon", sweep=tandem.Sweep(front_gaps_eV=[1.7],
                                                                            thickness_points=10))
    assert "outside" not in " ".join(t.get_text() for t in inside.plot().texts)


def test_the_stack_figure_shows_where_each_absorber_makes_its_carriers():
    # the third panel: each absorber's G(z) on a shared relative depth, its half-depth dotted
    # where the JSON says, in cm⁻³ s⁻¹ on a log axis
    from tandem.output.stack_plots import draw_photon_budget

    result = tandem.match_stack("organic-pair", points=20)
    fig = draw_photon_budget(result)
    ax = fig.axes[2]
    assert ax.get_yscale() == "log" and "cm⁻³ s⁻¹" in ax.get_ylabel()
    assert "share of the absorber's thickness" in ax.get_xlabel()
    m = result.match
    summary = {g["layer"]: g for g in result.summary()["generation"]}
    for layer in (m.stack.front, m.stack.back):
        thickness = m.best_budget.profiles[layer.name][0][-1]
        line = next(x for x in ax.get_lines() if x.get_label().startswith(f"{layer.name} ("))
        x, y = line.get_xdata(), line.get_ydata()
        assert x[0] == 0 and x[-1] == pytest.approx(1.0)
        assert np.max(y) == pytest.approx(summary[layer.name]["peak_per_cm3_s"], rel=1e-4)
        dots = [d for d in ax.get_lines() if d.get_marker() == "o" and d.get_color() == line.get_color()]
        assert dots[0].get_xdata()[0] == pytest.approx(
            summary[layer.name]["half_depth_nm"] / thickness, rel=1e-4)


def test_a_figure_laid_out_once_shows_what_matplotlibs_tight_save_shows(tmp_path):
    # savefig computes the tight box once and keeps it: the PNG is pixel for pixel
    # matplotlib's own bbox_inches="tight" save at the same resolution, and the SVG copy
    # (written after it, with no second layout) covers the same area in points
    import re

    import numpy as np
    from PIL import Image

    from tandem.output.plots import DPI, draw_match, savefig, tight_bbox

    result = tandem.match("perovskite-wide", "silicon",
                          sweep=tandem.Sweep(front_gaps_eV=[1.70, 1.75], thickness_points=9)).result
    fig = draw_match(result)
    fig.savefig(tmp_path / "matplotlib.png", dpi=DPI, bbox_inches="tight", format="png")
    savefig(fig, tmp_path / "ours.png", "png")
    savefig(fig, tmp_path / "ours.svg", "svg")
    with Image.open(tmp_path / "matplotlib.png") as a, Image.open(tmp_path / "ours.png") as b:
        assert a.size == b.size
        assert np.array_equal(np.asarray(a), np.asarray(b))
    box = tight_bbox(fig)
    width, height = (float(x) for x in re.search(r'width="([\d.]+)pt" height="([\d.]+)pt"',
                                                (tmp_path / "ours.svg").read_text()).groups())
    assert (width, height) == pytest.approx((72 * box.width, 72 * box.height), abs=1e-3)
