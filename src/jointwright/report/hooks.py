"""Report sections built from plain dicts: runner-ups, frontier, duty cycles, study summaries.

Each takes the JSON form another command writes (documented in docs/report.md) and returns a
:class:`~.markup.Section`. Malformed input raises :class:`~jointwright.errors.InputError` naming
the field, never a traceback.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

from ..errors import InputError
from . import figures
from .markup import Cell, Section, figure, fmt, paragraph, pct, table


def _need(data, key: str, kind, file: str, where: str):
    if not isinstance(data, dict) or key not in data:
        raise InputError(file, f"{where}{key}", "is required")
    value = data[key]
    if kind is float:
        if isinstance(value, str) and value in ("inf", "-inf"):
            return float(value)
        if isinstance(value, bool) or not isinstance(value, (int, float)) or math.isnan(value):
            raise InputError(file, f"{where}{key}", f"must be a number, got {value!r}")
        return float(value)
    if not isinstance(value, kind):
        got = type(value).__name__
        raise InputError(file, f"{where}{key}", f"must be a {kind.__name__}, got {got}")
    return value


#: unit of the sizing objective per kind (payload mass kg, total mass kg, cost in the catalog's
#: currency, IMF and normalized margin dimensionless)
OBJECTIVE_UNITS = {"payload": "kg", "mass": "kg", "imf": "", "cost": "", "margin": ""}


def _optional(data, key: str, file: str, where: str):
    """A number or None (JSON null: not assessed / rules the option out)."""
    return None if data.get(key) is None else _need(data, key, float, file, where)


def runner_ups_section(data: dict, file: str = "<sizing>", units: dict | None = None) -> Section:
    """How the design was chosen, the per-joint runner-ups and why they lost.

    ``data`` is the JSON form of a sizing result (``SizingResult.to_dict()``): ``status``,
    ``objective_kind``, ``objective``, ``bound``, ``gap``, ``backend``, ``seconds``, ``message``,
    ``alternatives`` = [{joint, actuator, change, objective, loss, ruled_out_by}] and, for an
    infeasible problem, ``diagnosis`` = [{requirement, limit, best_achievable, shortfall,
    relaxed_objective}]. Only ``status`` and ``objective_kind`` are required. ``units`` maps a
    requirement label ("case: payload min") to its unit for the diagnosis table ("%" for a
    fraction such as a rating use, shown ×100).
    """
    units = units or {}
    status = _need(data, "status", str, file, "")
    kind = _need(data, "objective_kind", str, file, "")
    unit = OBJECTIVE_UNITS.get(kind, "")
    head = [f"Search status: {status}"]
    if data.get("objective") is not None:
        head.append(f"objective ({kind}) {fmt(_need(data, 'objective', float, file, ''), unit)}")
    if data.get("bound") is not None:
        head.append(f"proven bound {fmt(_need(data, 'bound', float, file, ''), unit)}")
    if data.get("gap") is not None:
        head.append(f"relative gap {pct(_need(data, 'gap', float, file, ''))}")
    if data.get("backend"):
        head.append(f"back-end {data['backend']}")
    parts = [paragraph("; ".join(head) + "."), paragraph(str(data.get("message", "")))]
    rows = []
    for k, r in enumerate(data.get("alternatives") or []):
        where = f"alternatives[{k}]."
        value = _optional(r, "objective", file, where)
        loss = _optional(r, "loss", file, where)
        why = (
            f"misses {r['ruled_out_by']}"
            if r.get("ruled_out_by")
            else f"loses {fmt(loss, unit)}"
            if loss is not None
            else "—"
        )
        rows.append(
            [
                _need(r, "joint", str, file, where),
                _need(r, "actuator", str, file, where),
                str(r.get("change", "")),
                Cell(fmt(value, unit), "num"),
                why,
            ]
        )
    if rows:
        parts.append(
            table(
                ["joint", "runner-up actuator", "change", f"objective ({kind})", "why it lost"],
                rows,
                caption="Each runner-up changes one joint of the chosen design and keeps the rest; "
                "it is re-evaluated with the full physics.",
            )
        )
    diag = []
    for k, r in enumerate(data.get("diagnosis") or []):
        where = f"diagnosis[{k}]."
        label = _need(r, "requirement", str, file, where)
        u = units.get(label, "")
        scale = 100.0 if u == "%" else 1.0  # rating uses are fractions, shown in %
        best = _optional(r, "best_achievable", file, where)
        diag.append(
            [
                label,
                Cell(fmt(scale * _need(r, "limit", float, file, where), u), "num"),
                Cell(fmt(None if best is None else scale * best, u), "num"),
                Cell(pct(_optional(r, "shortfall", file, where)), "num"),
                Cell(fmt(_optional(r, "relaxed_objective", file, where), unit), "num"),
            ]
        )
    if diag:
        parts.append(
            "<h3>Why no design meets every requirement</h3>"
            + table(
                [
                    "requirement",
                    "limit",
                    "best achievable alone",
                    "shortfall",
                    "objective without it",
                ],
                diag,
                caption="One requirement at a time: its best value over all options (shortfall "
                "relative to the limit; ≤ 0 means it alone can be met), and what "
                "dropping it buys.",
            )
        )
    return Section(
        "runner-ups", "How the design was chosen: runner-ups and why they lost", "".join(parts)
    )


def _numbers(data, key: str, file: str, where: str, size: int | None = None) -> list[float]:
    """A list of numbers (``size`` of them when given)."""
    values = _need(data, key, list, file, where)
    if size is not None and len(values) != size:
        raise InputError(file, f"{where}{key}", f"must have {size} entries, got {len(values)}")
    return [_need({key: v}, key, float, file, f"{where}{key}[{i}]") for i, v in enumerate(values)]


def _points(data, file):
    pts = _need(data, "points", list, file, "")
    xy = [
        (_need(p, "x", float, file, f"points[{k}]."), _need(p, "y", float, file, f"points[{k}]."))
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
        return tuple(_need(chosen, k, float, file, "chosen.") for k in ("x", "y"))
    if chosen is not None:
        raise InputError(file, "chosen", f"must be a point index (0 to {len(xy) - 1}) or {{x, y}}")
    return None


def _axis_label(axis: dict, default: str) -> str:
    return f"{axis.get('label', default)} ({axis.get('unit') or 'dimensionless'})"


def frontier_section(data: dict, fig_dir: Path, file: str = "<frontier>") -> Section:
    """Payload versus back-drivability frontier with the chosen design marked.

    ``data``: ``{"x": {"label", "unit"}, "y": {"label", "unit"}, "points": [{"x", "y", "design",
    "changes"}], "chosen": index or {"x", "y"}, "knee": index}``.
    """
    x, y = _need(data, "x", dict, file, ""), _need(data, "y", dict, file, "")
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
            "◆ turning point" if k == knee else "",
        ]
        for k, (p, (px, py)) in enumerate(zip(pts, xy, strict=True))
    ]
    caption = (
        "Each point is a design no other design beats on both axes; the ring is the chosen design."
    )
    if knee is not None:
        caption += " The diamond marks the turning point of the trade-off."
    region = data.get("unexplored")
    if data.get("complete") is False and isinstance(region, str):
        caption += f" The search stopped at its time limit: every point shown is proven; {region}."
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


def duty_section(data: dict, fig_dir: Path, file: str = "<duty>") -> Section:
    """Motor torque over a duty cycle per joint, against ratings.

    ``data``: ``{"case": str, "time": [s], "motor_torque": {joint: [N·m]}, "limits": {label: N·m},
    "summary": [{"joint", "rms_torque", "peak_torque", "peak_temperature", "backdriven_share"}]}``.
    """
    case = _need(data, "case", str, file, "")
    time = _numbers(data, "time", file, "")
    torque = _need(data, "motor_torque", dict, file, "")
    series = {j: _numbers(torque, j, file, "motor_torque.", len(time)) for j in torque}
    limits = {k: _need(data["limits"], k, float, file, "limits.") for k in data.get("limits", {})}
    fig = figures.series_figure(
        time,
        series,
        limits,
        y_label="motor torque (N·m)",
        title=f"Motor torque over the duty cycle {case}",
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
        "Motor torque per joint over the cycle, by the "
        "power-flow law sample by sample; red lines are ratings (±).",
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


def _study_value(v, unit: str | None = None, scale: float = 1.0):
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        u = "" if unit in (None, "as computed") else unit
        return fmt(scale * v, u)
    return "—" if v in (None, "") else str(v)


def _unit_words(unit) -> str:
    return "dimensionless" if unit == "" else ("as written" if unit is None else unit)


def _head(label: str, unit) -> str:
    return f"{label} ({_unit_words(unit)})"


def _best(cases: list[dict], result: dict) -> dict | None:
    """The finished case with the best value of ``result`` (None when none has a number)."""
    if result.get("better") not in ("max", "min"):
        return None
    numeric = [
        c
        for c in cases
        if isinstance(c["results"].get(result["key"]), (int, float))
        and not isinstance(c["results"].get(result["key"]), bool)
    ]
    if not numeric:
        return None
    pick = max if result["better"] == "max" else min
    return pick(numeric, key=lambda c: c["results"][result["key"]])


def _study_groups(cases, params, param, result, variants: bool):
    """{group label: (xs, ys)}: the cases sharing every other parameter and the variant."""
    others = [p for p in params if p["key"] != param["key"]]
    groups: dict = {}
    for c in cases:
        x, y = c["values"].get(param["key"]), c["results"].get(result["key"])
        if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (x, y)):
            continue
        parts = [c["variant"]] if variants and c["variant"] else []
        parts += [
            f"{p['label']} {_study_value(c['values'].get(p['key']), p['unit'])}" for p in others
        ]
        g = groups.setdefault(", ".join(parts) or "all cases", ([], []))
        g[0].append(float(x))
        g[1].append(float(y))
    return groups


def _variant_pivot(cases: list[dict], params: list[dict], lead: dict) -> str:
    """The lead result of every variant side by side, one row per setting of the parameters,
    the best variant of each row marked."""
    variants = list(dict.fromkeys(c.get("variant") or "" for c in cases))
    rows: dict = {}
    for c in cases:
        key = tuple(_study_value(c["values"].get(p["key"]), p.get("unit")) for p in params)
        rows.setdefault(key, {})[c.get("variant") or ""] = c
    body = []
    for key, by in rows.items():
        best = _best([c for c in by.values() if c.get("status") not in ("failed",)], lead)
        row = list(key)
        for v in variants:
            c = by.get(v)
            if c is None:
                row.append("—")
                continue
            value = c["results"].get(lead["key"])
            text = (
                _study_value(value, lead.get("unit"))
                if isinstance(value, (int, float)) and not isinstance(value, bool)
                else str(c.get("status") or "—").replace("_", " ")
            )
            mark = c is best
            row.append(
                Cell(
                    text + (" (best)" if mark else ""),
                    "num ok" if mark else "num",
                    (("study-pivot", f"{c['case']}"),),
                )
            )
        body.append(row)
    head = [_head(p["label"], p.get("unit")) for p in params] + variants
    return "<h3>Variants side by side</h3>" + table(
        head,
        body,
        cls="wide",
        caption=f"{lead['label'][:1].upper()}{lead['label'][1:]} ({_unit_words(lead.get('unit'))}) "
        "of each variant at each setting of the varied parameters; a status instead of "
        "a number when the case found no design.",
    )


def study_section(data: dict, fig_dir: Path, file: str = "<study>") -> Section:
    """What a study found: a short table of the varied parameters and headline results with
    units, the best design per variant, and each result against each varied parameter.

    ``data``: ``{"name", "description", "parameters": [{"key", "label", "unit"}], "results":
    [{"key", "label", "unit", "better"}], "cases": [{"case", "variant", "status", "values":
    {key: number or text}, "results": {key: number or null}, "design"}]}`` (docs/report.md).
    """
    name = _need(data, "name", str, file, "")
    params = _need(data, "parameters", list, file, "")
    results = _need(data, "results", list, file, "")
    cases = _need(data, "cases", list, file, "")
    for k, p in enumerate(params):
        _need(p, "key", str, file, f"parameters[{k}].")
        _need(p, "label", str, file, f"parameters[{k}].")
    for k, r in enumerate(results):
        _need(r, "key", str, file, f"results[{k}].")
        _need(r, "label", str, file, f"results[{k}].")
    for k, c in enumerate(cases):
        where = f"cases[{k}]."
        _need(c, "case", str, file, where)
        for field in ("values", "results"):
            _need(c, field, dict, file, where)
        for r in results:
            v = c["results"].get(r["key"])
            if v is not None and not isinstance(v, (int, float, str)) or isinstance(v, bool):
                raise InputError(
                    file, f"{where}results.{r['key']}", f"must be a number, text or null, got {v!r}"
                )
    variants = any(c.get("variant") for c in cases)
    done = [c for c in cases if c.get("status") not in ("failed", "pending", "running")]
    failed = len(cases) - len(done)
    parts = []
    if data.get("description"):
        parts.append(paragraph(str(data["description"]).replace("\n", " ")))
    parts.append(
        paragraph(
            f"{len(cases)} cases, {failed} without a result; every value with "
            "its unit (parameters as written in the study file, results in SI)."
        )
    )

    lead = next((r for r in results if r.get("better") in ("max", "min")), None)
    if variants and lead is not None:
        parts.append(_variant_pivot(cases, params, lead))

    # the short table: parameters and headline results, one row per case
    head = (["variant"] if variants else []) + [_head(p["label"], p.get("unit")) for p in params]
    head += [_head(r["label"], r.get("unit")) for r in results] + ["status"]
    rows = []
    for c in cases:
        row = [c.get("variant") or ""] if variants else []
        row += [Cell(_study_value(c["values"].get(p["key"]), p.get("unit")), "num") for p in params]
        row += [
            Cell(
                _study_value(c["results"].get(r["key"]), r.get("unit")),
                "num",
                (("study-case", c["case"]), ("field", r["key"])),
            )
            for r in results
        ]
        row.append(str(c.get("status", "")).replace("_", " "))
        rows.append(row)
    parts.append(
        "<h3>Cases</h3>"
        + table(head, rows, cls="wide", caption="One row per case, in the study's order.")
    )

    # what each variant does best
    if lead is not None:
        rows = []
        others = len(results) > 1
        by_variant: dict = {}
        for c in done:
            by_variant.setdefault(c.get("variant") or "all cases", []).append(c)
        for v, group in by_variant.items():
            best = _best(group, lead)
            if best is None:
                rows.append([v, "—", "no case has a result"] + ([""] if others else []) + [""])
                continue
            where = ", ".join(
                f"{p['label']} {_study_value(best['values'].get(p['key']), p['unit'])}"
                for p in params
            )
            rest = "; ".join(
                f"{r['label']} {_study_value(best['results'].get(r['key']), r['unit'])}"
                for r in results
                if r is not lead
            )
            design = "\n".join((best.get("design") or "—").split("; "))
            row = [
                v,
                where,
                Cell(
                    _study_value(best["results"][lead["key"]], lead["unit"]),
                    "num",
                    (("study-best", v),),
                ),
            ]
            rows.append(row + ([rest] if others else []) + [Cell(design, "lines")])
        parts.append(
            f"<h3>{'Best design per variant' if variants else 'Best design'}</h3>"
            + table(
                ["variant", "at", _head(lead["label"], lead.get("unit"))]
                + (["other results"] if others else [])
                + ["design"],
                rows,
                cls="wide",
                caption=f"The case with the best result ({lead['label']}) in each variant, and the "
                "actuators it chose.",
            )
        )

    # each numeric result against each numeric parameter, grouped by the other parameters
    numeric = [
        p
        for p in params
        if p.get("numeric", True)
        and any(isinstance(c["values"].get(p["key"]), (int, float)) for c in done)
    ]
    for k, r in enumerate(results):
        panels = []
        for p in numeric:
            groups = _study_groups(done, params, p, r, variants)
            if groups:
                panels.append((_head(p["label"], p.get("unit")), groups))
        if not panels:
            continue
        fig = figures.study_figure(
            panels,
            y_label=_head(r["label"], r.get("unit")),
            title=f"{r['label']} against {' and '.join(p['label'] for p in numeric)}",
        )
        fname = f"study-{k + 1}"
        drawn = {c["case"] for c in done if isinstance(c["results"].get(r["key"]), (int, float))}
        missing = len(cases) - len(drawn)
        note = (
            f" {missing} of {len(cases)} cases have no {r['label']} (no design found or "
            "failed) and are not drawn."
            if missing
            else ""
        )
        parts.append(
            figure(
                figures.save(fig, fig_dir, fname),
                fname,
                r["label"],
                "Each line joins the cases that share every other parameter"
                + (" and the variant" if variants else "")
                + "; a lone marker is a case with no such neighbour."
                + note,
            )
        )
    return Section("study", f"Study {name}", "".join(parts))


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
