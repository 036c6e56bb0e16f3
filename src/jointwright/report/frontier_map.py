"""The frontier in the report: the payload versus back-drivability points with the reported
design ringed, from a plain dict or from `jointwright frontier --out` JSON."""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from . import figures
from .jsonfields import need
from .markup import (
    Cell,
    Section,
    figure,
    fmt,
    table,
)


def _points(data, file):
    pts = need(data, "points", list, file, "")
    xy = [
        (need(p, "x", float, file, f"points[{k}]."), need(p, "y", float, file, f"points[{k}]."))
        for k, p in enumerate(pts)
    ]
    if not xy:
        raise InputError(file, "points", "needs at least one point")
    return pts, xy


def _chosen(data, xy, file):
    chosen = data.get("chosen")
    if isinstance(chosen, int) and not isinstance(chosen, bool) and 0 <= chosen < len(xy):
        return xy[chosen]
    if isinstance(chosen, dict):
        return tuple(need(chosen, k, float, file, "chosen.") for k in ("x", "y"))
    if chosen is not None:
        raise InputError(file, "chosen", f"must be a point index (0 to {len(xy) - 1}) or {{x, y}}")
    return None


def dominating_point(xy, chosen, steps) -> int | None:
    """The frontier point that beats ``chosen`` on both axes (one of them strictly), or None.

    ``steps`` says which x is better: "pre" a larger one (IMF), "post" a smaller one (effective
    mass, back-drive force, mass, cost); any other value: not known, None. Of several, the one
    with the largest payload."""
    if chosen is None or steps not in ("pre", "post"):
        return None
    cx, cy = chosen
    sign = 1.0 if steps == "pre" else -1.0
    tol = 1e-9 * max(1.0, abs(cx), abs(cy))
    found = [
        k
        for k, (px, py) in enumerate(xy)
        if sign * (px - cx) >= -tol and py >= cy - tol and (sign * (px - cx) > tol or py > cy + tol)
    ]
    return max(found, key=lambda k: xy[k][1]) if found else None


def _axis_label(axis: dict, default: str) -> str:
    return f"{axis.get('label', default)} ({axis.get('unit') or 'dimensionless'})"


def frontier_section(data: dict, fig_dir: Path, file: str = "<frontier>") -> Section:
    """Payload versus back-drivability frontier with the chosen design marked.

    ``data``: ``{"x": {"label", "unit"}, "y": {"label", "unit"}, "points": [{"x", "y", "design",
    "changes", "proven" (optional, default true)}], "chosen": index or {"x", "y"}, "knee":
    index}``.
    """
    x, y = need(data, "x", dict, file, ""), need(data, "y", dict, file, "")
    pts, xy = _points(data, file)
    chosen = _chosen(data, xy, file)
    xl, yl = _axis_label(x, "x"), _axis_label(y, "y")
    title = f"{y.get('label', 'y')} against {x.get('label', 'x')}: non-dominated designs"
    knee = data.get("knee")
    knee = knee if isinstance(knee, int) and not isinstance(knee, bool) else None
    steps = data.get("steps")
    if steps in ("pre", "post"):  # discrete designs: the staircase of the command line's plot
        fig = figures.frontier_figure(
            {"non-dominated designs": ([p[0] for p in xy], [p[1] for p in xy])},
            None if knee is None or not 0 <= knee < len(xy) else xy[knee],
            x_label=xl,
            y_label=yl,
            title=title,
            steps=steps,
            numbered=True,
            chosen=chosen,
            self_locking=[
                k
                for k, p in enumerate(data.get("points") or [])
                if isinstance(p, dict) and p.get("self_locking")
            ],
        )
    else:
        fig = figures.points_figure(xy, chosen, x_label=xl, y_label=yl, title=title)
    png = figures.save(fig, fig_dir, "frontier")
    rows = [
        [
            str(k + 1),
            Cell(fmt(px, x.get("unit", "")), "num"),
            Cell(fmt(py, y.get("unit", "")), "num"),
            str(p.get("design", "")),
            str(p.get("changes", "")),
            "; ".join(
                w
                for w in (
                    "◆ turning point" if k == knee else "",
                    "not proven" if p.get("proven", True) is False else "",
                    (
                        "self-locking at "
                        + ", ".join(p["self_locking"])
                        + ": not back-drivable there; holds unpowered, can trap or crush"
                    )
                    if isinstance(p, dict) and p.get("self_locking")
                    else "",
                )
                if w
            ),
        ]
        for k, (p, (px, py)) in enumerate(zip(pts, xy, strict=True))
    ]
    weak = sum(1 for p in pts if isinstance(p, dict) and p.get("proven", True) is False)
    caption = (
        "Each point is a design no other design beats on both axes"
        + (" (except those marked not proven)" if weak else "")
        + "; the ring is the chosen design."
    )
    if knee is not None:
        caption += " The diamond marks the turning point of the trade-off."
    better = dominating_point(xy, chosen, steps)
    if better is not None:
        label = str(x.get("label", "measure"))
        article = "an" if label[:1].lower() in "aeiou" else "a"
        caption += (
            f" The ring lies inside the frontier: point {better + 1} carries at least as much "
            f"payload with {article} {label} at least as good; it may be heavier or costlier, "
            "which this plot does not show (the sizing picks by its own objective, which may be "
            "the least mass or cost, and breaks payload ties by the least mass)."
        )
    region = data.get("unexplored")
    if weak == len(pts):
        marked = (
            f"{'The point is' if weak == 1 else f'All {weak} points are'} marked not proven: a "
            "search stopped on each, so a design that beats it may exist"
        )
    else:
        marked = (
            f"{weak} of the {len(pts)} points {'is' if weak == 1 else 'are'} marked not proven: "
            "a search stopped on each, so a design that beats it may exist; the others are "
            "proven non-dominated"
        )
    if data.get("complete") is False and isinstance(region, str) and weak:
        caption += f" The search stopped early (time limit or solve budget); {region}. {marked}."
    elif data.get("complete") is False and isinstance(region, str):
        caption += (
            " The search stopped early (time limit or solve budget): every point shown is "
            f"proven; {region}."
        )
    elif weak:
        caption += f" {marked}."
    elif data.get("complete") is False:
        caption += (
            " This frontier is a sample: its computation stopped early (point budget or "
            "time limit), so designs between and beyond these points may be missing."
        )
    merged = data.get("merged")
    if isinstance(merged, int) and not isinstance(merged, bool) and merged > 0:
        caption += f" {merged} near-duplicate point{'s' if merged != 1 else ''} merged."
    body = figure(png, "frontier", "frontier", caption) + table(
        ["#", xl, yl, "design", "what changes", "note"], rows
    )
    return Section("frontier", "Payload versus back-drivability frontier", body)


_MEASURE_AXES = {
    "imf": ("impact mitigation factor", ""),
    "effective_mass": ("back-driven effective mass", "kg"),
    "backdrive_force": ("back-drive force", "N"),
    "mass": ("total actuator mass", "kg"),
    "cost": ("total actuator cost", "currency units"),
}
#: the robot-level measures: the assessment's totals, no case
_MEASURE_TOTALS = {"mass": "total_mass", "cost": "total_cost"}


def frontier_from_sweep(data: dict, assessment: dict, file: str = "<frontier>") -> dict:
    """The :func:`frontier_section` form of a ``jointwright frontier --out`` file, with the
    reported design marked at its own (measure, worst payload)."""
    measure, case = data.get("measure"), data.get("case")
    if measure not in _MEASURE_AXES or not isinstance(data.get("points"), list):
        raise InputError(
            file, "measure", f"must be one of {', '.join(_MEASURE_AXES)} with a points list"
        )
    label, unit = _MEASURE_AXES[measure]
    points = []
    for i, p in enumerate(data["points"]):
        if not isinstance(p, dict) or "payload" not in p or "measure" not in p:
            raise InputError(file, f"points[{i}]", "needs payload and measure")
        points.append(
            {
                "x": p["measure"],
                "y": p["payload"],
                "design": "; ".join(f"{j}: {a}" for j, a in p.get("actuators", {}).items()),
                "changes": ", ".join(p.get("changes", [])),
                "proven": p.get("proven", True) is not False,
                "self_locking": [str(j) for j in p.get("self_locking") or []],
            }
        )
    out = {
        "x": {"label": label if case is None else f"{label} at case {case}", "unit": unit},
        "y": {"label": "payload mass every case carries", "unit": "kg"},
        "points": points,
        "knee": data.get("knee"),
        "complete": data.get("complete", True),
        # larger IMF is better: a payload holds up to its point ("pre"); else from it ("post")
        "steps": "pre" if measure == "imf" else "post",
    }
    region = data.get("unexplored")
    if isinstance(region, dict) and all(
        isinstance(region.get(k), (int, float)) for k in ("payload_max", "measure_bound")
    ):
        side = "≤" if measure == "imf" else "≥"
        out["unexplored"] = (
            f"designs with payload ≤ {region['payload_max']:.4g} kg and {label} {side} "
            f"{region['measure_bound']:.4g}{f' {unit}' if unit else ''} were not all searched"
        )
    if isinstance(data.get("merged"), int) and data.get("merged"):
        out["merged"] = data["merged"]
    cases = {c["name"]: c for c in assessment.get("cases", [])}
    payloads = [
        c["metrics"].get("payload_carried")
        for c in cases.values()
        if c["kind"] in ("payload", "stance") and "payload_carried" in c["metrics"]
    ]
    if measure in _MEASURE_TOTALS:
        own = assessment.get(_MEASURE_TOTALS[measure])
    else:
        own = cases.get(case, {}).get("metrics", {}).get(measure)
    if (
        payloads
        and all(isinstance(v, (int, float)) for v in payloads)
        and isinstance(own, (int, float))
    ):
        out["chosen"] = {"x": float(own), "y": float(min(payloads))}
    return out
