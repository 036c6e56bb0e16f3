"""Figures of a metric against one swept quantity: the gear ratio, a gear efficiency (tornado
bars), time over a duty cycle, and the pose index of a region (with the worst pose drawn), in
the look of :mod:`.figures`."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator, NullFormatter

from .figures import (
    GRID,
    INK,
    JOINT_COLOURS,
    figure_legend,
    joint_style,
    new_figure,
    set_labels,
    set_title,
)

#: the ratio trade's x axis
RATIO_AXIS = "ratio ÷ design ratio (log scale, 1)"


def ratio_figure(sweep, panels) -> Figure:
    """Metric against ratio multiplier per joint.

    ``panels`` = [(metric key, title, y label, limit or None)], one axes each.
    """
    fig, axes = new_figure(ncols=len(panels), height=4.6)
    for ax, (key, title, ylabel, limit) in zip(axes, panels, strict=True):
        values = sweep.values[key]
        if key == "payload" and np.nanmin(values) < 0:
            # below some case's fixed load there is no payload, not a negative mass; said under
            # the axis, where no curve runs
            values = np.maximum(values, 0.0)
            xlabel = f"{RATIO_AXIS}\n0 kg: no payload (a case below its fixed load)"
        else:
            xlabel = RATIO_AXIS
        for k, joint in enumerate(sweep.joints):
            ax.plot(
                sweep.factors,
                values[k],
                lw=1.6,
                **joint_style(k),
                label=f"{joint} (design N = {sweep.design_ratio[k]:.4g})",
            )
        ax.axvline(1.0, color="#9aa1ab", lw=0.9, ls="--")
        if limit is not None:
            ax.axhline(limit, color="#b0413e", lw=1.0, ls=":", label=f"requirement {limit:.4g}")
        ax.set_xscale("log")
        ax.set_xticks([0.25, 0.5, 1, 2, 4], labels=["¼", "½", "1", "2", "4"])
        ax.xaxis.set_minor_formatter(NullFormatter())
        set_labels(ax, xlabel, ylabel)
        set_title(ax, title, 70 // len(panels))
    figure_legend(fig, axes, ncols=3)
    return fig


def sensitivity_figure(sens, panels) -> Figure:
    """Tornado bars: change of each metric, % of its design value, per efficiency moved ±step."""
    fig, axes = new_figure(ncols=len(panels), height=0.9 + 0.32 * 2 * len(sens.joints))
    labels = [f"{j} {f}" for j in sens.joints for f in ("η_f", "η_b")]
    y = np.arange(len(labels))[::-1]
    pts = round(100 * sens.step)
    for ax, (key, title) in zip(axes, panels, strict=True):
        base = sens.base[key]
        v = sens.values[key].reshape(-1, 2)
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = 100.0 * (v - base) / abs(base) if base != 0 else np.zeros_like(v)
        rel = np.where(np.isfinite(rel), rel, 0.0)
        ax.barh(y + 0.18, rel[:, 0], height=0.34, color="#8a94a3", label=f"−{pts} points")
        ax.barh(y - 0.18, rel[:, 1], height=0.34, color="#3b6ea5", label=f"+{pts} points")
        ax.axvline(0.0, color=INK, lw=0.8)
        # symmetric about no change, so the zero line sits mid-panel even when every change has
        # one sign (matplotlib would end the axis at 0)
        reach = float(np.max(np.abs(rel))) if rel.size else 0.0
        if reach > 1e-9:
            ax.set_xlim(-1.15 * reach, 1.15 * reach)
        ax.set_yticks(y, labels=labels if ax is axes[0] else [""] * len(labels))
        if not np.any(np.abs(rel) > 1e-9):
            ax.text(
                0.5,
                0.5,
                f"no change at ±{pts} points",
                transform=ax.transAxes,
                ha="center",
                va="center",
                color=INK,
                fontsize=9,
                bbox=dict(fc="white", ec=GRID),
            )
        set_labels(ax, "change from the design value (%)", "")
        set_title(ax, title, 55 // len(panels))
    figure_legend(fig, axes, ncols=2)
    return fig


def series_figure(time, series, limits, *, y_label: str, title: str) -> Figure:
    """Time series per joint (duty cycles).

    ``series`` = {joint: values}; ``limits`` = {label: value}, drawn at ±value.
    """
    fig, (ax,) = new_figure(height=3.8)
    for k, (joint, values) in enumerate(series.items()):
        ax.plot(time, values, lw=1.4, label=joint, **joint_style(k))
    for k, (label, value) in enumerate(limits.items()):
        ls = (":", "-.", "--")[k % 3]
        ax.axhline(value, color="#b0413e", lw=1.0, ls=ls, label=f"{label} (±)")
        ax.axhline(-value, color="#b0413e", lw=1.0, ls=ls)
    set_labels(ax, "time (s)", y_label)
    set_title(ax, title)
    figure_legend(fig, [ax], ncols=3)
    return fig


def region_figure(
    margins, worst: int, chain, tip, direction, *, title: str, plane: tuple[int, int] = (0, 2)
) -> Figure:
    """A region case: its smallest requirement margin per pose (worst marked), and a side view
    of the robot at the worst pose (joint origins joined parent to child, the tip and the
    case's direction)."""
    fig, (ax, side) = new_figure(ncols=2, height=3.8)
    k = np.arange(len(margins))
    m = 100.0 * np.asarray(margins, dtype=float)
    ax.plot(k, m, "o-", color=JOINT_COLOURS[0], ms=3, lw=1, label="smallest margin at the pose")
    ax.axhline(0.0, color=INK, lw=0.8, ls=":")
    ax.plot([worst], [m[worst]], "o", ms=9, mfc="none", mec="#c0392b", mew=1.6, label="worst pose")
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    set_labels(ax, "pose index in the region", "margin (%)")
    set_title(ax, title, 40)
    i, j = plane
    for a, b in chain:
        side.plot([a[i], b[i]], [a[j], b[j]], "-", color=INK, lw=2)
        side.plot([b[i]], [b[j]], "o", color=JOINT_COLOURS[1], ms=4)
    side.plot([tip[i]], [tip[j]], "s", color="#c0392b", ms=6, label="case frame")
    span = max(
        1e-3,
        max(abs(p[i]) for seg in chain for p in seg),
        max(abs(p[j]) for seg in chain for p in seg),
    )
    d = np.asarray(direction, dtype=float)
    side.annotate(
        "",
        xy=(tip[i] + 0.25 * span * d[i], tip[j] + 0.25 * span * d[j]),
        xytext=(tip[i], tip[j]),
        arrowprops={"arrowstyle": "->", "color": "#c0392b", "lw": 1.4},
    )
    side.set_aspect("equal", adjustable="datalim")
    names = "xyz"
    set_labels(side, f"{names[i]} (m)", f"{names[j]} (m)")
    set_title(side, "worst pose, side view", 40)
    figure_legend(fig, [ax, side])
    return fig
