"""The report's figures: the only module of the package that imports matplotlib (Agg, no pyplot).

Each ``*_figure`` function takes plain numbers (from :mod:`.geometry`, :mod:`.sweeps` or a plain
dict) and returns a matplotlib :class:`~matplotlib.figure.Figure`; :func:`save` writes it as PNG
and SVG and returns the PNG bytes for embedding. One calm palette and one look throughout: modes
always have the same colour and line style, joints the same colour in every figure.
"""

from __future__ import annotations

import io
import math
import textwrap
from pathlib import Path

import numpy as np
from matplotlib import rc_context
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator, NullFormatter

#: power-flow modes: colour, line style, legend label
MODE_STYLE = {
    "frictionless": ("#8a94a3", "--", "frictionless (η = 1)"),
    "motoring": ("#2f7d6d", "-", "motoring (η_f)"),
    "backdriven": ("#c0703c", "-", "back-driven (1/η_b)"),
    "locked": ("#5a5f8f", ":", "all joints locked"),
}
#: joint colours, in actuated-joint order
JOINT_COLOURS = ("#3b6ea5", "#2f7d6d", "#c0703c", "#8a5a9e", "#a8963a", "#5f6b7a", "#b55a6a")
INK, GRID = "#2b2f36", "#d9dde3"
WIDTH = 7.2  # in; 100 dpi PNG ≈ page width
DPI = 110

_RC = {"font.size": 9.5, "axes.titlesize": 10.5, "axes.labelsize": 9.5, "legend.fontsize": 8.5}


def joint_style(k: int) -> dict:
    """Colour and line style of the k-th joint: colours first, then dashes for the next round."""
    n = len(JOINT_COLOURS)
    return {"color": JOINT_COLOURS[k % n], "ls": ("-", "--", "-.", ":")[(k // n) % 4]}


def _figure(ncols: int = 1, height: float = 4.2, width: float = WIDTH):
    fig = Figure(figsize=(width, height), dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    axes = [fig.add_subplot(1, ncols, k + 1) for k in range(ncols)]
    for ax in axes:
        ax.grid(True, color=GRID, linewidth=0.7)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        for side in ("left", "bottom"):
            ax.spines[side].set_color("#9aa1ab")
        ax.tick_params(colors=INK, labelsize=_RC["font.size"] - 1)
    return fig, axes


def _title(ax, text: str, width: int = 70) -> None:
    """Left-aligned title, wrapped to ``width`` characters (narrow panels need less)."""
    ax.set_title(
        textwrap.fill(text, width, break_on_hyphens=False),
        fontsize=_RC["axes.titlesize"],
        color=INK,
        loc="left",
    )


def _label(ax, x: str, y: str) -> None:
    ax.set_xlabel(x, fontsize=_RC["axes.labelsize"], color=INK)
    ax.set_ylabel(y, fontsize=_RC["axes.labelsize"], color=INK)


def _legend(fig, axes, ncols: int = 2) -> None:
    """One legend for the figure, below the axes, so it never hides data."""
    handles, labels, seen = [], [], set()
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels(), strict=True):
            if lab not in seen:
                seen.add(lab)
                handles.append(h)
                labels.append(lab)
    fig.legend(
        handles,
        labels,
        loc="outside lower center",
        ncols=ncols,
        fontsize=_RC["legend.fontsize"],
        frameon=False,
    )


def save(fig: Figure, out_dir: Path, name: str) -> bytes:
    """Write ``name``.png and ``name``.svg into ``out_dir``; return the PNG bytes."""
    out_dir.mkdir(parents=True, exist_ok=True)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, facecolor="white")
    data = buf.getvalue()
    (out_dir / f"{name}.png").write_bytes(data)
    with rc_context({"svg.hashsalt": "jointwright"}):  # stable ids: same input, same file
        fig.savefig(
            out_dir / f"{name}.svg", format="svg", facecolor="white", metadata={"Date": None}
        )
    return data


def polytope_figure(section, axis_names: str = "xyz") -> Figure:
    """Overlaid force-polytope sections per mode, with each case's payload marked."""
    fig, (ax,) = _figure(height=6.2, width=6.4)
    i, j = section.plane
    reach = 0.0
    for mode in ("frictionless", "backdriven", "motoring"):
        v = section.vertices[mode]
        colour, ls, label = MODE_STYLE[mode]
        if v.shape[0] == 0:
            continue
        if section.clipped[mode]:
            label += " — unbounded, clipped"
        else:
            reach = max(reach, float(np.abs(v).max()))
        closed = np.vstack([v, v[:1]])
        shade = 0.0 if mode == "frictionless" else 0.10
        ax.fill(closed[:, 0], closed[:, 1], color=colour, alpha=shade)
        ax.plot(closed[:, 0], closed[:, 1], color=colour, ls=ls, lw=1.8, label=label)
    for k, (name, point) in enumerate(section.markers):
        ax.annotate(
            "",
            xy=point,
            xytext=(0, 0),
            arrowprops=dict(arrowstyle="-|>", color=INK, lw=1.2, shrinkA=0, shrinkB=0),
        )
        ax.plot(*point, "o", color=INK, ms=4)
        ax.annotate(
            f"{name}: {np.linalg.norm(point):.4g} N",
            point,
            textcoords="offset points",
            xytext=(8, -4 - 12 * (k % 2)),
            fontsize=8.5,
            color=INK,
            bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.85),
        )
    ax.plot(0, 0, "+", color=INK, ms=8)
    _square(
        fig,
        ax,
        1.2 * reach,
        section.title,
        (f"tip force F_{axis_names[i]} (N)", f"tip force F_{axis_names[j]} (N)"),
        ncols=2,
    )
    return fig


def _square(fig, ax, half: float, title: str, labels: tuple[str, str], ncols: int) -> None:
    """Equal axes |x|, |y| ≤ ``half`` around the origin, labels, title and the legend below."""
    if half > 0:
        ax.set_xlim(-half, half)
        ax.set_ylim(-half, half)
    ax.set_aspect("equal", adjustable="box")
    _label(ax, *labels)
    _title(ax, title)
    _legend(fig, [ax], ncols=ncols)


def ellipse_figure(section, axis_names: str = "xyz") -> Figure:
    """Inertia-ellipse sections per mode (and locked joints), with the case direction."""
    fig, (ax,) = _figure(height=6.2, width=6.4)
    i, j = section.plane
    reach = 0.0
    for mode in ("locked", "frictionless", "motoring", "backdriven"):
        if mode not in section.curves:
            continue
        pts = section.curves[mode]
        colour, ls, label = MODE_STYLE[mode]
        if mode == "motoring":  # forward driving: the energy reading, not an ellipse
            label = "motors driving (forward, E_f⁻¹·M + R)"
        m = section.mass_along.get(mode)
        if m is not None:
            label += (
                f": {m:.4g} kg along the case direction"
                if math.isfinite(m)
                else ": ∞ kg (immovable)"
            )
        if section.unbounded[mode]:
            label += " (unbounded, cut)"
        else:
            reach = max(reach, float(np.abs(pts).max()))
        ax.plot(pts[:, 0], pts[:, 1], color=colour, ls=ls, lw=1.8, label=label)
    u = section.direction
    if np.linalg.norm(u) > 0 and reach > 0:
        ax.annotate(
            "",
            xy=1.1 * reach * u,
            xytext=(0, 0),
            arrowprops=dict(arrowstyle="-|>", color=INK, lw=1.0, shrinkA=0, shrinkB=0),
        )
        ax.annotate(
            "case direction",
            1.1 * reach * u,
            textcoords="offset points",
            xytext=(5, -12),
            fontsize=8.5,
            color=INK,
        )
    _square(
        fig,
        ax,
        1.3 * reach,
        section.title,
        (f"{axis_names[i]} component (√kg)", f"{axis_names[j]} component (√kg)"),
        ncols=1,
    )
    return fig


def ratio_figure(sweep, panels) -> Figure:
    """Metric against ratio multiplier per joint.

    ``panels`` = [(metric key, title, y label, limit or None)], one axes each.
    """
    fig, axes = _figure(ncols=len(panels), height=4.6)
    for ax, (key, title, ylabel, limit) in zip(axes, panels, strict=True):
        values = sweep.values[key]
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
        _label(ax, "ratio ÷ design ratio (log scale, 1)", ylabel)
        _title(ax, title, 70 // len(panels))
    _legend(fig, axes, ncols=3)
    return fig


def sensitivity_figure(sens, panels) -> Figure:
    """Tornado bars: change of each metric, % of its design value, per efficiency moved ±step."""
    fig, axes = _figure(ncols=len(panels), height=0.9 + 0.32 * 2 * len(sens.joints))
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
        _label(ax, "change from the design value (%)", "")
        _title(ax, title, 55 // len(panels))
    _legend(fig, axes, ncols=2)
    return fig


def points_figure(
    points,
    chosen=None,
    *,
    x_label: str,
    y_label: str,
    title: str,
    label: str = "non-dominated designs",
    width: float = WIDTH,
    height: float = 4.2,
) -> Figure:
    """Points (x, y) joined in order of x (a frontier), ``chosen`` ringed; ``width`` and
    ``height`` in inches (the summary's thumbnail is smaller)."""
    fig, (ax,) = _figure(height=height, width=width)
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    order = np.argsort(pts[:, 0], kind="stable")
    ax.plot(pts[order, 0], pts[order, 1], "o-", color="#3b6ea5", lw=1.4, ms=4.5, label=label)
    if chosen is not None:
        ax.plot(*chosen, "o", ms=11, mfc="none", mec="#c0703c", mew=2.0, label="chosen design")
    # labels wrapped to the figure (about 8 characters an inch of height for the y label, 12 of
    # width for the x label): a long label in a small figure (the summary's) is never clipped
    _label(
        ax,
        textwrap.fill(x_label, max(24, int(12 * width)), break_on_hyphens=False),
        textwrap.fill(y_label, max(16, int(8 * height)), break_on_hyphens=False),
    )
    _title(ax, title, width=int(70 * width / WIDTH))
    _legend(fig, [ax], ncols=3 if width >= WIDTH else 2)
    return fig


def grouped_figure(groups, *, x_label: str, y_label: str, title: str) -> Figure:
    """One line of markers per group (a study's variants): ``groups`` = {label: (xs, ys)}."""
    fig, (ax,) = _figure(height=4.0)
    for k, (label, (xs, ys)) in enumerate(groups.items()):
        order = np.argsort(np.asarray(xs, dtype=float), kind="stable")
        ax.plot(
            np.asarray(xs, float)[order],
            np.asarray(ys, float)[order],
            "o",
            ms=4.5,
            lw=1.4,
            label=label,
            **joint_style(k),
        )
    _label(ax, x_label, y_label)
    _title(ax, title)
    _legend(fig, [ax], ncols=4)
    return fig


#: a study panel with more lines than this has no legend (one line per combination of the other
#: parameters: the table beside the figure names them)
STUDY_LEGEND_MAX = 6


def study_figure(panels, *, y_label: str, title: str) -> Figure:
    """One result against each varied parameter, one panel per parameter.

    ``panels`` = [(x_label, groups)] with ``groups`` = {label: (xs, ys)}: the cases that share
    every other parameter (and variant). Each group is drawn as markers joined in order of x
    (a group of one case is a lone marker), so a line never joins unrelated cases; groups keep
    their colour and marker across panels of one figure only by label. A panel of more than
    :data:`STUDY_LEGEND_MAX` lines has no legend.
    """
    fig, axes = _figure(ncols=len(panels), height=3.6)
    markers = ("o", "s", "^", "D", "v", "P", "X", "*")
    for ax, (x_label, groups) in zip(axes, panels, strict=True):
        for k, (label, (xs, ys)) in enumerate(groups.items()):
            xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
            order = np.argsort(xs, kind="stable")
            style = joint_style(k)
            ax.plot(
                xs[order],
                ys[order],
                marker=markers[k % len(markers)],
                ms=4.5,
                lw=1.3,
                color=style["color"],
                ls=style["ls"],
                label=label,
            )
        ax.margins(x=0.08, y=0.12)
        _label(ax, x_label, y_label if ax is axes[0] else "")
        if len(groups) <= STUDY_LEGEND_MAX:
            legend = ax.legend(fontsize=_RC["legend.fontsize"] - 1, frameon=False, loc="best")
            # drawn over the data area: it takes no room from the layout, so a long legend in a
            # narrow panel can never collapse the panels (constrained layout)
            legend.set_in_layout(False)
    fig.suptitle(
        textwrap.fill(title, 90), fontsize=_RC["axes.titlesize"], color=INK, x=0.01, ha="left"
    )
    return fig


def series_figure(time, series, limits, *, y_label: str, title: str) -> Figure:
    """Time series per joint (duty cycles).

    ``series`` = {joint: values}; ``limits`` = {label: value}, drawn at ±value.
    """
    fig, (ax,) = _figure(height=3.8)
    for k, (joint, values) in enumerate(series.items()):
        ax.plot(time, values, lw=1.4, label=joint, **joint_style(k))
    for k, (label, value) in enumerate(limits.items()):
        ls = (":", "-.", "--")[k % 3]
        ax.axhline(value, color="#b0413e", lw=1.0, ls=ls, label=f"{label} (±)")
        ax.axhline(-value, color="#b0413e", lw=1.0, ls=ls)
    _label(ax, "time (s)", y_label)
    _title(ax, title)
    _legend(fig, [ax], ncols=3)
    return fig


def frontier_figure(
    series,
    knee=None,
    *,
    x_label: str,
    y_label: str,
    title: str,
    steps: str = "post",
    numbered: bool = False,
    chosen=None,
) -> Figure:
    """Frontiers as staircases through their points, one per label; ``knee`` (x, y) marked
    with a diamond and its own legend entry.

    ``series`` = {label: (xs, ys)}; the first is drawn in the main colour, the others (e.g. the
    frictionless-transmission frontier) dashed for comparison. ``steps`` "post" when a smaller
    x is better (each payload holds from its point to the right), "pre" when a larger x is.
    ``numbered``: the first series' points carry their numbers 1, 2, … in the given order (the
    numbering of the tables); ``chosen`` (x, y) is ringed.
    """
    fig, (ax,) = _figure(height=4.4)
    for k, (label, (xs, ys)) in enumerate(series.items()):
        xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
        order = np.argsort(xs, kind="stable")
        style = (
            dict(color="#3b6ea5", lw=1.6, ms=5, ls="-")
            if k == 0
            else dict(color="#8a8a8a", lw=1.2, ms=4, ls="--")
        )
        ax.plot(xs[order], ys[order], marker="o", label=label, drawstyle=f"steps-{steps}", **style)
        if k == 0 and numbered:
            for i, (px, py) in enumerate(zip(xs, ys, strict=True)):
                ax.annotate(
                    str(i + 1),
                    (px, py),
                    textcoords="offset points",
                    xytext=(4, 4),
                    fontsize=7,
                    color="#2b4f77",
                )
    if chosen is not None:
        ax.plot(*chosen, "o", ms=12, mfc="none", mec="#5b8c3a", mew=2.0, label="chosen design")
    if knee is not None:
        ax.plot(
            *knee,
            "D",
            ms=11,
            mfc="none",
            mec="#c0703c",
            mew=2.0,
            label="turning point of the trade-off",
        )
    ax.ticklabel_format(axis="both", useOffset=False)
    _label(ax, x_label, y_label)
    _title(ax, title)
    _legend(fig, [ax], ncols=3)
    return fig


def region_figure(
    margins, worst: int, chain, tip, direction, *, title: str, plane: tuple[int, int] = (0, 2)
) -> Figure:
    """A region case: its smallest requirement margin per pose (worst marked), and a side view
    of the robot at the worst pose (joint origins joined parent to child, the tip and the
    case's direction)."""
    fig, (ax, side) = _figure(ncols=2, height=3.8)
    k = np.arange(len(margins))
    m = 100.0 * np.asarray(margins, dtype=float)
    ax.plot(k, m, "o-", color=JOINT_COLOURS[0], ms=3, lw=1, label="smallest margin at the pose")
    ax.axhline(0.0, color=INK, lw=0.8, ls=":")
    ax.plot([worst], [m[worst]], "o", ms=9, mfc="none", mec="#c0392b", mew=1.6, label="worst pose")
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    _label(ax, "pose index in the region", "margin (%)")
    _title(ax, title, 40)
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
    _label(side, f"{names[i]} (m)", f"{names[j]} (m)")
    _title(side, "worst pose, side view", 40)
    _legend(fig, [ax, side])
    return fig
