"""The report's efficiency-sensitivity words when a move leaves no payload at all.

The payload mass a case carries is (F − fixed_load)/(share·g_n) (docs/project-format.md); when a
gear efficiency move leaves a joint unable to hold its own fixed load, F falls to 0 and that
formula goes negative. The report says "none" and names the move, never a negative mass or a
change of more than 100 % (worked by hand below).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from jointwright.report.plots import _sensitivity_table
from jointwright.report.summary import payload_sensitivity, sensitivity_risk


def _sens(low: float, high: float):
    values = np.array([[[200.0, 201.0], [low, high]]])  # (joint, η_f/η_b, −/+)
    return SimpleNamespace(
        base={"payload": 200.0},
        values={"payload": values},
        step=0.05,
        joints=("hip_roll",),
        clipped=np.zeros((1, 2, 2), dtype=bool),
        locking_changed=np.zeros((1, 2, 2), dtype=bool),
    )


def test_a_move_below_the_fixed_load_reads_as_no_payload():
    s = payload_sensitivity(_sens(-94.8, 204.7))
    assert s is not None and s["loses"] and s["sign"] == "−" and s["efficiency"] == "η_b"
    text = sensitivity_risk(s)
    assert "η_b of hip_roll −5 points leaves no payload at all" in text and "%" not in text
    html = _sensitivity_table(
        _sens(-94.8, 204.7), ["payload"], {"payload": "Payload"}, {"payload": "kg"}
    )
    assert "none / 204.7 kg" in html and "-94" not in html and "−94" not in html


def test_an_ordinary_move_keeps_its_percentage():
    s = payload_sensitivity(_sens(190.0, 205.0))
    # |190 − 200| / 200 = 5 %, the largest change
    assert not s["loses"] and abs(s["change"] - 0.05) < 1e-12
    assert "by up to 5 %" in sensitivity_risk(s)


def test_the_ratio_plot_shows_no_negative_payload_mass():
    """The ratio trade's payload panel: below a case's fixed load the payload is none, drawn at
    0 with a note, never as a negative mass (the formula (F − fixed_load)/(share·g_n) would go
    negative there)."""
    from jointwright.report.sweep_figures import ratio_figure

    sweep = SimpleNamespace(
        joints=("knee",),
        factors=np.array([0.25, 1.0, 4.0]),
        design_ratio=np.array([9.0]),
        values={"payload": np.array([[-9.0, 11.0, 27.0]])},
    )
    fig = ratio_figure(sweep, [("payload", "Payload mass", "kg", None)])
    ax = fig.axes[0]
    assert min(float(min(line.get_ydata())) for line in ax.get_lines()) >= 0.0
    # the note sits under the axis (where no curve runs), not over the curves
    assert "no payload" in ax.get_xlabel() and not ax.texts
