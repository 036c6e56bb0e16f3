"""A duty cycle in the report: motor torque and speed over the cycle against the ratings."""

from __future__ import annotations

import re
from pathlib import Path

from . import figures, sweep_figures
from .jsonfields import need, numbers
from .markup import (
    Cell,
    Section,
    figure,
    fmt,
    table,
)


def duty_section(data: dict, fig_dir: Path, file: str = "<duty>") -> Section:
    """Motor torque over a duty cycle per joint, against ratings.

    ``data``: ``{"case": str, "time": [s], "motor_torque": {joint: [N·m]}, "limits": {label: N·m},
    "summary": [{"joint", "rms_torque", "peak_torque", "peak_temperature", "backdriven_share"}]}``;
    with ``"peak_rating": {joint: N·m}`` for every joint, each joint is drawn as a share of its
    own peak rating instead (``limits`` then unused).
    """
    case = need(data, "case", str, file, "")
    time = numbers(data, "time", file, "")
    torque = need(data, "motor_torque", dict, file, "")
    series = {j: numbers(torque, j, file, "motor_torque.", len(time)) for j in torque}
    limits = {k: need(data["limits"], k, float, file, "limits.") for k in data.get("limits", {})}
    peak = data.get("peak_rating")
    if isinstance(peak, dict) and set(series) <= set(peak):
        # each joint against its own motor's peak rating: one pair of lines holds for all
        ratings = {j: need(peak, j, float, file, "peak_rating.") for j in series}
        series = {j: [100.0 * v / ratings[j] for v in vs] for j, vs in series.items()}
        limits = {"each joint's peak rating": 100.0}
        y_label, what = (
            "motor torque ÷ its peak rating (%)",
            "Motor torque, share of its peak rating,",
        )
        caption = (
            "Each joint's motor torque over the cycle as a share of its own motor's peak rating "
            "(under the drive that feeds it), by the power-flow law sample by sample; the red "
            "lines are ±100 %. The continuous rating applies to the RMS torque: the table gives "
            "every joint's."
        )
    else:
        y_label, what = "motor torque (N·m)", "Motor torque"
        caption = (
            "Motor torque per joint over the cycle, by the power-flow law sample by sample; red "
            "lines are the ratings (±) of the joint that limits the case (each joint's motor has "
            "its own; the table gives every joint's use)."
        )
    fig = sweep_figures.series_figure(
        time,
        series,
        limits,
        y_label=y_label,
        title=f"{what} over the duty cycle {case}",
    )
    name = "duty-" + (re.sub(r"[^A-Za-z0-9_.-]+", "-", case).strip("-.") or "case")
    png = figures.save(fig, fig_dir, name)
    rows = []
    for s in data.get("summary", []):
        share = s.get("backdriven_share")
        rows.append(
            [
                s.get("joint", ""),
                Cell(fmt(s.get("rms_torque"), "N·m"), "num"),
                Cell(fmt(s.get("peak_torque"), "N·m"), "num"),
                Cell(fmt(s.get("peak_temperature"), "°C"), "num"),
                Cell(fmt(None if share is None else 100 * share, "%"), "num"),
            ]
        )
    body = figure(
        png,
        name,
        f"duty cycle {case}",
        caption,
    )
    if rows:
        body += table(
            [
                "joint",
                "RMS motor torque",
                "highest motor torque",
                "hottest winding",
                "time back-driven",
            ],
            rows,
        )
    return Section(name, f"Duty cycle {case}", body)
