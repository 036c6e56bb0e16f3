"""Force-capability figures of the report: sections of the force polytope and of the inertia
ellipse per power-flow mode (drawn from :mod:`.geometry`), in the look of :mod:`.figures`."""

from __future__ import annotations

import math

import numpy as np
from matplotlib.figure import Figure

from .figures import INK, MODE_STYLE, figure_legend, new_figure, set_labels, set_title


def polytope_figure(section, axis_names: str = "xyz") -> Figure:
    """Overlaid force-polytope sections per mode, with each case's payload marked."""
    fig, (ax,) = new_figure(height=6.2, width=6.4)
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
    set_labels(ax, *labels)
    set_title(ax, title)
    figure_legend(fig, [ax], ncols=ncols)


def ellipse_figure(section, axis_names: str = "xyz") -> Figure:
    """Inertia-ellipse sections per mode (and locked joints), with the case direction."""
    fig, (ax,) = new_figure(height=6.2, width=6.4)
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
