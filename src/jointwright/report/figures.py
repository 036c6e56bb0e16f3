"""The report's figures: their one look and their files, and the figures of designs as points
(frontier, a study's results). With :mod:`.capability_figures` (force polytopes, inertia
ellipses) and :mod:`.sweep_figures` (a metric against a swept quantity), the only modules of the
package that use matplotlib (Agg, no pyplot).

Each ``*_figure`` function takes plain numbers (from :mod:`.geometry`, :mod:`.sweeps` or a plain
dict) and returns a matplotlib :class:`~matplotlib.figure.Figure`; :func:`save` writes it as PNG
and SVG and returns the PNG bytes for embedding. One calm palette and one look throughout
(:func:`new_figure`, :func:`set_title`, :func:`set_labels`, :func:`figure_legend`): modes always
have the same colour and line style, joints the same colour in every figure.
"""

from __future__ import annotations

import io
import textwrap
from pathlib import Path

import numpy as np
from matplotlib import rc_context
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

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

RC = {"font.size": 9.5, "axes.titlesize": 10.5, "axes.labelsize": 9.5, "legend.fontsize": 8.5}


def joint_style(k: int) -> dict:
    """Colour and line style of the k-th joint: colours first, then dashes for the next round."""
    n = len(JOINT_COLOURS)
    return {"color": JOINT_COLOURS[k % n], "ls": ("-", "--", "-.", ":")[(k // n) % 4]}


def new_figure(ncols: int = 1, height: float = 4.2, width: float = WIDTH):
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
        ax.tick_params(colors=INK, labelsize=RC["font.size"] - 1)
    return fig, axes


def set_title(ax, text: str, width: int = 70) -> None:
    """Left-aligned title, wrapped to ``width`` characters (narrow panels need less)."""
    ax.set_title(
        textwrap.fill(text, width, break_on_hyphens=False),
        fontsize=RC["axes.titlesize"],
        color=INK,
        loc="left",
    )


def set_labels(ax, x: str, y: str) -> None:
    ax.set_xlabel(x, fontsize=RC["axes.labelsize"], color=INK)
    ax.set_ylabel(y, fontsize=RC["axes.labelsize"], color=INK)


def figure_legend(fig, axes, ncols: int = 2) -> None:
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
        fontsize=RC["legend.fontsize"],
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
    steps: str | None = None,
) -> Figure:
    """Points (x, y) joined in order of x (a frontier), ``chosen`` ringed (in the colour of
    :func:`frontier_figure`'s ring); ``width`` and ``height`` in inches (the summary's thumbnail
    is smaller); ``steps`` "pre"/"post": a staircase between discrete designs, as
    :func:`frontier_figure` draws it."""
    fig, (ax,) = new_figure(height=height, width=width)
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    order = np.argsort(pts[:, 0], kind="stable")
    draw = {"drawstyle": f"steps-{steps}"} if steps in ("pre", "post") else {}
    ax.plot(
        pts[order, 0], pts[order, 1], "o-", color="#3b6ea5", lw=1.4, ms=4.5, label=label, **draw
    )
    if chosen is not None:
        ax.plot(*chosen, "o", ms=11, mfc="none", mec="#5b8c3a", mew=2.0, label="chosen design")
    # labels wrapped to the figure (about 8 characters an inch of height for the y label, 12 of
    # width for the x label): a long label in a small figure (the summary's) is never clipped
    set_labels(
        ax,
        textwrap.fill(x_label, max(24, int(12 * width)), break_on_hyphens=False),
        textwrap.fill(y_label, max(16, int(8 * height)), break_on_hyphens=False),
    )
    set_title(ax, title, width=int(70 * width / WIDTH))
    figure_legend(fig, [ax], ncols=3 if width >= WIDTH else 2)
    return fig


#: a study panel with more lines than this has no legend (one line per combination of the other
#: parameters: the table beside the figure names them)
STUDY_LEGEND_MAX = 6


def study_figure(panels, *, y_label: str, title: str) -> Figure:
    """One result against each varied parameter, one panel per parameter.

    ``panels`` = [(x_label, groups)] with ``groups`` = {label: (xs, ys)}: the cases that share
    every other parameter (and variant). Each group is drawn as markers joined in order of x
    (a group of one case is a lone marker), so a line never joins unrelated cases; groups keep
    their colour and marker across panels of one figure only by label. In a panel of up to
    :data:`STUDY_LEGEND_MAX` lines, earlier lines are wider with larger markers, so groups with
    the same results stay visible one inside the other; a panel of more lines has no legend.
    """
    fig, axes = new_figure(ncols=len(panels), height=3.6)
    markers = ("o", "s", "^", "D", "v", "P", "X", "*")
    for ax, (x_label, groups) in zip(axes, panels, strict=True):
        n = len(groups)
        for k, (label, (xs, ys)) in enumerate(groups.items()):
            xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
            order = np.argsort(xs, kind="stable")
            style = joint_style(k)
            # lines drawn first are wider with larger markers: where groups give the same
            # results (a budget that does not bind) the later ones sit inside, all visible
            wider = n - 1 - k if n <= STUDY_LEGEND_MAX else 0
            ax.plot(
                xs[order],
                ys[order],
                marker=markers[k % len(markers)],
                ms=4.5 + 2.0 * wider,
                lw=1.3 + 0.9 * wider,
                color=style["color"],
                ls=style["ls"],
                label=label,
                alpha=0.9,
            )
        ax.margins(x=0.08, y=0.12)
        set_labels(ax, x_label, y_label if ax is axes[0] else "")
        if len(groups) <= STUDY_LEGEND_MAX:
            legend = ax.legend(fontsize=RC["legend.fontsize"] - 1, frameon=False, loc="best")
            # drawn over the data area: it takes no room from the layout, so a long legend in a
            # narrow panel can never collapse the panels (constrained layout)
            legend.set_in_layout(False)
    fig.suptitle(
        textwrap.fill(title, 90), fontsize=RC["axes.titlesize"], color=INK, x=0.01, ha="left"
    )
    return fig


def _number_points(ax, xs: np.ndarray, ys: np.ndarray, fontsize: float = 7.0) -> None:
    """Each point's number 1, 2, … beside it, the ends first, leaving out a number whose box on
    the page would overlap one already written (said in the axes' corner when any is)."""
    fig = ax.figure
    fig.canvas.draw()  # the data limits and layout, so that places on the page are final
    renderer = fig.canvas.get_renderer()
    n = len(xs)
    boxes: list = []
    left_out = 0
    for i in dict.fromkeys([0, n - 1, *range(n)]):
        note = ax.annotate(
            str(i + 1),
            (xs[i], ys[i]),
            textcoords="offset points",
            xytext=(4, 4),
            fontsize=fontsize,
            color="#2b4f77",
        )
        box = note.get_window_extent(renderer)
        if any(box.overlaps(b) for b in boxes):
            note.remove()
            left_out += 1
            continue
        boxes.append(box)
    if left_out:
        ax.text(
            0.99,
            0.01,
            f"{left_out} point numbers left out where they would overlap",
            transform=ax.transAxes,
            ha="right",
            va="bottom",
            fontsize=fontsize,
            color="#555555",
        )


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
    self_locking=(),
) -> Figure:
    """Frontiers as staircases through their points, one per label; ``knee`` (x, y) marked
    with a diamond and its own legend entry.

    ``series`` = {label: (xs, ys)}; the first is drawn in the main colour, the others (e.g. the
    frictionless-transmission frontier) dashed for comparison. ``steps`` "post" when a smaller
    x is better (each payload holds from its point to the right), "pre" when a larger x is.
    ``numbered``: the first series' points carry their numbers 1, 2, … in the given order (the
    numbering of the tables); ``chosen`` (x, y) is ringed; ``self_locking``: indices of the
    first series' points where a joint self-locks, marked ⊘ with a legend entry.
    """
    fig, (ax,) = new_figure(height=4.4)
    first = (np.zeros(0), np.zeros(0))
    for k, (label, (xs, ys)) in enumerate(series.items()):
        xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
        order = np.argsort(xs, kind="stable")
        style = (
            dict(color="#3b6ea5", lw=1.6, ms=5, ls="-")
            if k == 0
            else dict(color="#8a8a8a", lw=1.2, ms=4, ls="--")
        )
        ax.plot(xs[order], ys[order], marker="o", label=label, drawstyle=f"steps-{steps}", **style)
        if k == 0:
            first = (xs, ys)
        if k == 0 and len(self_locking):
            at = np.asarray(list(self_locking), dtype=int)
            ax.plot(
                xs[at],
                ys[at],
                ls="none",
                marker=r"$\oslash$",
                ms=13,
                color="#b0413e",
                label="a joint self-locks (cannot be back-driven)",
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
    set_labels(ax, x_label, y_label)
    set_title(ax, title)
    figure_legend(fig, [ax], ncols=3)
    if numbered and series:
        # last: every artist is drawn, so the axes' limits and the numbers' places are final
        _number_points(ax, *first)
    return fig
