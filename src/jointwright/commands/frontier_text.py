"""The words and the text staircase of a frontier (:class:`jointwright.frontier.Frontier`) on
the command line: what a better measure means, how the front was found, the region a stopped
run left, and the plot drawn in characters."""

from __future__ import annotations

import math

from ._format import num

UNITS = {"imf": "", "effective_mass": "kg", "backdrive_force": "N", "mass": "kg", "cost": ""}
#: axis and title names of each measure
LABELS = {
    "imf": "impact mitigation factor",
    "effective_mass": "back-driven effective mass",
    "backdrive_force": "back-drive force",
    "mass": "total actuator mass",
    "cost": "total actuator cost",
}
#: the measure's column heading in the frontier table (short: the table fits 100 columns)
HEADINGS = {
    "imf": "IMF",
    "effective_mass": "effective mass",
    "backdrive_force": "back-drive force",
    "mass": "total mass",
    "cost": "total cost",
}
#: what a better value of each measure means, the sense "min" (larger better) or "max"
BETTER = {"min": "higher is more back-drivable", "max": "lower is more back-drivable"}
BETTER_TOTAL = {"mass": "lower is lighter", "cost": "lower is cheaper"}


def better_text(f) -> str:
    """What a better measure means, e.g. "lower is more back-drivable"."""
    return BETTER_TOTAL.get(f.measure) or BETTER[f.sense]


def measure_name(f) -> str:
    """The measure in words ("back-driven effective mass", "total actuator mass")."""
    return LABELS[f.measure]


def at_case(f) -> str:
    """ " at case NAME", or nothing for the robot-level measures (total mass, cost)."""
    return "" if f.case is None else f" at case {f.case}"


def describe_run(f) -> str:
    """One sentence: how many points, whether complete, how they were found."""
    how = {
        "exhaustive": f"every one of {f.scored:,} candidate designs scored",
        "branch-and-bound": (
            f"bi-objective branch and bound, {f.scored:,} complete designs scored"
            if f.scored
            else "bi-objective branch and bound, stopped in its first single-objective search "
            "(the strongest design)"
        ),
        "sweep": f"{f.solves} exact solves",
    }.get(f.method, f.method)
    if f.complete:
        state = "complete (proven)"
    elif f.unexplored is not None and all(p.proven for p in f.points):
        state = "stopped: the points shown are proven"
    elif f.unexplored is not None and f.method == "sweep":
        weak = sum(not p.proven for p in f.points)
        state = (
            f"stopped: {len(f.points) - weak} point{'s' * (len(f.points) - weak != 1)} proven, "
            f"{weak} not (the best design of a stopped search: a better one may exist there)"
        )
    elif f.unexplored is not None:
        state = "stopped before the first proof: the best design found, not proven"
    else:
        state = "sampled (stopped early)"
    n = len(f.points)
    what = "non-dominated " if all(p.proven for p in f.points) else ""
    text = f"{n} {what}design{'' if n == 1 else 's'}, {state}; {how}, {f.seconds:.1f} s"
    if f.merge_tolerance > 0:
        text += (
            f"; {f.merged} near-duplicate point{'s' if f.merged != 1 else ''} merged (within "
            f"{100 * f.merge_tolerance:g} % of the front's span on both axes)"
        )
    return text


#: a front whose measure changes by less than this share of its size is called narrow
NARROW_SPAN = 0.05


def narrow_text(f) -> str | None:
    """A note when the measure barely changes along the whole front (less than
    :data:`NARROW_SPAN` of its size): the designs then trade payload for almost no
    back-drivability, and the steps, though real, matter little. None otherwise."""
    values = [p.measure for p in f.points if math.isfinite(p.measure)]
    if len(values) < 2:
        return None
    lo, hi = min(values), max(values)
    size = max(abs(lo), abs(hi))
    if size == 0 or (hi - lo) / size >= NARROW_SPAN:
        return None
    unit = UNITS[f.measure]
    return (
        f"the {HEADINGS[f.measure]} changes by only {100 * (hi - lo) / size:.2g} % along the whole "
        f"front ({num(lo, unit)} to {num(hi, unit)}): at this case the actuator choice barely "
        "changes it, so trading payload for it buys little"
    )


def unexplored_text(f) -> str | None:
    """The region a stopped branch and bound did not search, in words, or None."""
    if f.unexplored is None:
        return None
    pmax, bound = f.unexplored
    side = "≤" if f.sense == "min" else "≥"
    return (
        f"stopped by the time limit: designs with payload ≤ {num(pmax, 'kg')} and "
        f"{HEADINGS[f.measure]} {side} {num(bound, UNITS[f.measure])} were not all searched and "
        "may add points there"
        + ("; every point shown is proven non-dominated" if all(p.proven for p in f.points) else "")
    )


def plot_text(f, width: int = 64, height: int = 16) -> str:
    """The frontier as a text staircase (measure across, payload up), the same steps, numbers
    and turning-point symbol as the figure (:func:`write_plot`)."""
    xs = [p.measure for p in f.points]
    ys = [p.payload for p in f.points]
    x0, x1 = min(xs), max(xs)
    y0, y1 = min(ys), max(ys)
    # one value on an axis (a single point, or equal measures): a span of ±5 % around it, so
    # the point sits mid-axis and the ticks read its value
    if x1 == x0:
        pad = 0.05 * max(abs(x0), 1e-9)
        x0, x1 = x0 - pad, x1 + pad
    if y1 == y0:
        pad = 0.05 * max(abs(y0), 1e-9)
        y0, y1 = y0 - pad, y1 + pad
    sx, sy = x1 - x0, y1 - y0
    grid = [[" "] * width for _ in range(height)]

    def col(x: float) -> int:
        return round((x - x0) / sx * (width - 1))

    def row(y: float) -> int:
        return height - 1 - round((y - y0) / sy * (height - 1))

    order = sorted(range(len(xs)), key=lambda i: xs[i])
    for a, b in zip(order, order[1:], strict=False):
        ca, cb = col(xs[a]), col(xs[b])
        # "post" (smaller measure better): the payload holds from a point to the right, then
        # rises at the next; "pre" (larger better): it falls at a point, then holds
        level = ys[a] if f.sense == "max" else ys[b]
        at = cb if f.sense == "max" else ca
        r = row(level)
        for c in range(ca, cb + 1):
            grid[r][c] = "─"
        ra, rb = sorted((row(ys[a]), row(ys[b])))
        for r2 in range(ra, rb + 1):
            grid[r2][at] = "┼" if grid[r2][at] == "─" else "│"
        if ra != rb:  # the corner where the step turns
            grid[r][at] = "└" if f.sense == "min" else "┘"
    omitted = _label_points(grid, f, [row(y) for y in ys], [col(x) for x in xs], width)
    unit = UNITS[f.measure]
    lines = []
    for r in range(height):
        y = y1 - r / (height - 1) * sy
        tick = f"{y:8.3g} ┤" if r in (0, height // 2, height - 1) else "         │"
        lines.append(tick + "".join(grid[r]))
    lines.append("         └" + "─" * width)
    left, right = f"{x0:.4g}", f"{x1:.4g}"
    lines.append("          " + left + " " * max(1, width - len(left) - len(right)) + right)
    lines.append(
        f"          payload (kg) against {measure_name(f)}{f' ({unit})' if unit else ''}"
        f"{at_case(f)}; "
        "numbers: the points of the table"
        + (f" (• a point whose number would overlap another: {omitted} of them)" if omitted else "")
        + (
            "; ◆ the turning point of the trade-off" + (f" (point {f.knee + 1})")
            if f.knee is not None
            else ""
        )
    )
    return "\n".join(lines)


def _label_points(grid: list, f, rows: list, cols: list, width: int) -> int:
    """Write each point's number (◆ for the turning point) at its cell, keeping one blank cell
    between labels: the turning point, the two ends, then the rest in the table's order; a
    point whose label would touch one already written gets • instead. Returns how many did."""
    n = len(rows)
    taken: set[tuple[int, int]] = set()
    first = [i for i in (f.knee, 0, n - 1) if i is not None]
    order = list(dict.fromkeys(first + list(range(n))))
    dots = []
    for i in order:
        label = "◆" if i == f.knee else str(i + 1)
        r, c = rows[i], min(cols[i], width - len(label))
        if any((r, k) in taken for k in range(c - 1, c + len(label) + 1)):
            dots.append(i)
            continue
        for k, ch in enumerate(label):
            grid[r][c + k] = ch
            taken.add((r, c + k))
    for i in dots:
        if (rows[i], cols[i]) not in taken:
            grid[rows[i]][cols[i]] = "•"
    return len(dots)
