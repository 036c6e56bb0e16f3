"""Figures lay out without matplotlib warnings: every figure is drawn with warnings as errors
(a collapsed constrained layout draws panels of zero size, so the warning means a broken figure).
"""

from __future__ import annotations

import warnings

import pytest

from jointwright.report import figures, summary


def _panels(groups: int, label: str):
    """Three narrow panels of ``groups`` lines each, with long group labels as a study's
    combinations of the other parameters make them."""
    return [
        (
            f"parameter {p} (unit)",
            {
                f"{label} {g}, other parameter {g % 3}": ([1.0, 2.0, 3.0], [g, g + 1.0, g + 0.5])
                for g in range(groups)
            },
        )
        for p in range(3)
    ]


@pytest.mark.parametrize("groups", [1, 4, figures.STUDY_LEGEND_MAX, 24])
def test_study_figure_without_layout_warnings(groups, tmp_path):
    fig = figures.study_figure(
        _panels(groups, "planetary, total mass max 3.4 kg, touchdown: imf min"),
        y_label="largest worst-case payload (N)",
        title="largest worst-case payload against total mass max and touchdown: imf min and "
        "max stages",
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        png = figures.save(fig, tmp_path, "study")
    assert png.startswith(b"\x89PNG")
    # a legend only where it can be read
    legends = [ax.get_legend() for ax in fig.axes]
    assert all((lg is not None) == (groups <= figures.STUDY_LEGEND_MAX) for lg in legends)


def test_summary_frontier_thumbnail_without_layout_warnings(tmp_path):
    frontier = {
        "x": {"label": "impact mitigation factor at case touchdown-on-rough-ground", "unit": ""},
        "y": {"label": "payload mass every payload and stance case carries", "unit": "kg"},
        "points": [{"x": 0.08 + 0.01 * k, "y": 30.0 - k} for k in range(12)],
        "chosen": 3,
    }
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        html = summary.frontier_thumbnail(frontier, tmp_path)
    assert "summary-frontier" in html and (tmp_path / "summary-frontier.png").is_file()
    # every label inside the figure: a long y label in the small thumbnail is wrapped, not cut
    fig = figures.points_figure(
        [(p["x"], p["y"]) for p in frontier["points"]],
        None,
        x_label="impact mitigation factor at case touchdown-on-rough-ground (dimensionless)",
        y_label="payload mass every payload and stance case carries (kg)",
        title="Frontier of non-dominated designs",
        width=4.8,
        height=2.8,
    )
    fig.canvas.draw()  # the layout at the PNG's resolution
    renderer = fig.canvas.get_renderer()
    box = fig.bbox
    for label in (fig.axes[0].xaxis.label, fig.axes[0].yaxis.label):
        ext = label.get_window_extent(renderer)
        assert box.x0 - 1 <= ext.x0 and ext.x1 <= box.x1 + 1, label.get_text()
        assert box.y0 - 1 <= ext.y0 and ext.y1 <= box.y1 + 1, label.get_text()


@pytest.mark.slow
def test_full_report_draws_without_warnings(tmp_path):
    """The leg example's report with a frontier, a sizing and a study: every figure, warnings
    as errors (numpy's floating-point warnings of the physics are not the layout's)."""
    import test_report_browser as browser

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        warnings.simplefilter("ignore", RuntimeWarning)
        warnings.simplefilter("ignore", ResourceWarning)
        path = browser._build(
            tmp_path,
            "leg",
            frontier=browser.FRONTIER,
            sizing=browser.SIZING,
            study=browser._study(tmp_path),
        )
    assert path.is_file()


def test_sensitivity_bars_keep_no_change_mid_panel(tmp_path):
    """Changes of one sign only (every move lowers the payload) still put the zero line in the
    middle of the panel, so a bar is never read as running off the axis."""
    from types import SimpleNamespace

    import numpy as np

    from jointwright.report import sweep_figures

    values = np.full((2, 2, 2), 100.0)
    values[0, 1, 1], values[1, 0, 0] = 97.0, 97.4  # −3 % and −2.6 %: all on one side
    sens = SimpleNamespace(
        joints=("hip", "knee"), step=0.05, base={"payload": 100.0}, values={"payload": values}
    )
    fig = sweep_figures.sensitivity_figure(sens, [("payload", "Payload mass")])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        figures.save(fig, tmp_path, "sensitivity")
    low, high = fig.axes[0].get_xlim()
    assert low == pytest.approx(-high) and high >= 3.0


def test_study_lines_with_the_same_results_stay_visible(tmp_path):
    """Two groups with equal results (a budget that does not bind): the one drawn first is wider
    with larger markers, so the later one shows inside it instead of hiding it."""
    same = {
        "budget 3.4 kg": ([0.05, 0.1], [26.9, 26.9]),
        "budget 3.8 kg": ([0.05, 0.1], [26.9, 26.9]),
    }
    fig = figures.study_figure([("imf min", same)], y_label="payload (kg)", title="study")
    first, second = fig.axes[0].get_lines()[:2]
    assert first.get_markersize() > second.get_markersize()
    assert first.get_linewidth() > second.get_linewidth()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        figures.save(fig, tmp_path, "study-same")
