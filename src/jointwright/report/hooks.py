"""Report sections built from plain dicts: runner-ups, frontier, duty cycles, study summaries.

Each takes the JSON form another command writes (documented in docs/report.md) and returns a
:class:`~.markup.Section`. Malformed input raises :class:`~jointwright.errors.InputError` naming
the field, never a traceback.
"""

from __future__ import annotations

import math
from pathlib import Path

from ..errors import InputError
from . import figures
from .markup import Cell, Section, figure, fmt, paragraph, table


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
        raise InputError(file, f"{where}{key}", f"must be a {kind.__name__}, got {type(value).__name__}")
    return value


def runner_ups_section(data: dict, file: str = "<sizing>") -> Section:
    """Runner-up designs (and per-joint alternatives) and why they lost.

    ``data``: ``{"objective": {"name", "unit", "value"}, "status": str,
    "runner_ups": [{"name", "objective", "why", "joints": {joint: label}}],
    "per_joint": {joint: [{"choice", "objective", "why"}]}}``; lists may be empty or absent.
    """
    obj = _need(data, "objective", dict, file, "")
    unit = obj.get("unit", "")
    chosen = _need(obj, "value", float, file, "objective.")
    parts = [paragraph(f"Chosen design: {obj.get('name', 'objective')} {fmt(chosen, unit)}"
                       + (f" (search status: {data['status']})" if data.get("status") else "") + ".")]
    rows = []
    for k, r in enumerate(data.get("runner_ups", [])):
        where = f"runner_ups[{k}]."
        value = _need(r, "objective", float, file, where)
        joints = r.get("joints", {})
        rows.append([_need(r, "name", str, file, where), Cell(fmt(value, unit), "num"),
                     Cell(fmt(value - chosen, unit), "num"), _need(r, "why", str, file, where),
                     "; ".join(f"{j}: {v}" for j, v in joints.items())])
    if rows:
        parts.append(table(["runner-up", "objective", "versus chosen", "why it lost", "differs at"], rows))
    for joint, alts in (data.get("per_joint") or {}).items():
        jrows = []
        for k, r in enumerate(alts):
            where = f"per_joint.{joint}[{k}]."
            value = _need(r, "objective", float, file, where)
            jrows.append([_need(r, "choice", str, file, where), Cell(fmt(value, unit), "num"),
                          _need(r, "why", str, file, where)])
        parts.append(f"<h3>Alternatives at {joint}</h3>" + table(["choice", "objective", "why it lost"], jrows))
    return Section("runner-ups", "Runner-ups and why they lost", "".join(parts))


def _points(data, file):
    pts = _need(data, "points", list, file, "")
    xy = [(_need(p, "x", float, file, f"points[{k}]."), _need(p, "y", float, file, f"points[{k}]."))
          for k, p in enumerate(pts)]
    if not xy:
        raise InputError(file, "points", "needs at least one point")
    return pts, xy


def frontier_section(data: dict, fig_dir: Path, file: str = "<frontier>") -> Section:
    """Payload versus back-drivability frontier with the chosen design marked.

    ``data``: ``{"x": {"label", "unit"}, "y": {"label", "unit"}, "points": [{"x", "y", "design",
    "changes"}], "chosen": index or {"x", "y"}, "knee": index}``.
    """
    x, y = _need(data, "x", dict, file, ""), _need(data, "y", dict, file, "")
    pts, xy = _points(data, file)
    chosen = data.get("chosen")
    if isinstance(chosen, int) and 0 <= chosen < len(xy):
        chosen = xy[chosen]
    elif isinstance(chosen, dict):
        chosen = (_need(chosen, "x", float, file, "chosen."), _need(chosen, "y", float, file, "chosen."))
    elif chosen is not None:
        raise InputError(file, "chosen", "must be a point index or {x, y}")
    xl = f"{x.get('label', 'x')} ({x.get('unit') or 'dimensionless'})"
    yl = f"{y.get('label', 'y')} ({y.get('unit') or 'dimensionless'})"
    fig = figures.points_figure(xy, chosen, x_label=xl, y_label=yl, title=f"{y.get('label', 'y')} "
                                  f"against {x.get('label', 'x')}: non-dominated designs")
    png = figures.save(fig, fig_dir, "frontier")
    knee = data.get("knee")
    rows = [[str(k + 1), Cell(fmt(px, x.get("unit", "")), "num"), Cell(fmt(py, y.get("unit", "")), "num"),
             str(p.get("design", "")), str(p.get("changes", "")), "knee" if k == knee else ""]
            for k, (p, (px, py)) in enumerate(zip(pts, xy))]
    body = (figure(png, "frontier", "frontier", "Each point is a design no other design beats on both "
                   "axes; the ring is the chosen design.")
            + table(["#", xl, yl, "design", "what changes", ""], rows))
    return Section("frontier", "Payload versus back-drivability frontier", body)


def duty_section(data: dict, fig_dir: Path, file: str = "<duty>") -> Section:
    """Motor torque over a duty cycle per joint, against ratings.

    ``data``: ``{"case": str, "time": [s], "motor_torque": {joint: [N·m]}, "limits": {label: N·m},
    "summary": [{"joint", "rms_torque", "peak_torque", "peak_temperature", "backdriven_share"}]}``.
    """
    case = _need(data, "case", str, file, "")
    time = _need(data, "time", list, file, "")
    series = _need(data, "motor_torque", dict, file, "")
    for j, v in series.items():
        if not isinstance(v, list) or len(v) != len(time):
            raise InputError(file, f"motor_torque.{j}", f"must be a list of {len(time)} numbers (one per time)")
    fig = figures.series_figure(time, series, data.get("limits", {}), y_label="motor torque (N·m)",
                                title=f"Motor torque over the duty cycle {case}")
    name = f"duty-{case}"
    png = figures.save(fig, fig_dir, name)
    rows = [[s.get("joint", ""), Cell(fmt(s.get("rms_torque"), "N·m"), "num"),
             Cell(fmt(s.get("peak_torque"), "N·m"), "num"), Cell(fmt(s.get("peak_temperature"), "°C"), "num"),
             Cell(fmt(100 * s["backdriven_share"] if s.get("backdriven_share") is not None else None, "%"), "num")]
            for s in data.get("summary", [])]
    body = figure(png, name, f"duty cycle {case}", "Motor torque per joint; dotted lines are ratings.")
    if rows:
        body += table(["joint", "RMS torque", "peak torque", "peak winding temperature", "time back-driven"], rows)
    return Section(f"duty-{case}", f"Duty cycle {case}", body)


def study_section(data: dict, fig_dir: Path, file: str = "<study>") -> Section:
    """A study summary: one table of cases and optional metric-against-parameter series.

    ``data``: ``{"name": str, "columns": [str], "rows": [[...]], "series": [{"metric", "parameter",
    "unit", "x": [...], "y": [...]}]}``.
    """
    name = _need(data, "name", str, file, "")
    columns = _need(data, "columns", list, file, "")
    rows = _need(data, "rows", list, file, "")
    for k, r in enumerate(rows):
        if not isinstance(r, list) or len(r) != len(columns):
            raise InputError(file, f"rows[{k}]", f"must have {len(columns)} entries, one per column")
    cells = [[Cell(fmt(v), "num") if isinstance(v, (int, float)) and not isinstance(v, bool) else str(v)
              for v in r] for r in rows]
    body = table([str(c) for c in columns], cells)
    for k, s in enumerate(data.get("series", [])):
        where = f"series[{k}]."
        xs, ys = _need(s, "x", list, file, where), _need(s, "y", list, file, where)
        if len(xs) != len(ys):
            raise InputError(file, f"{where}y", "must have as many entries as x")
        unit = s.get("unit") or "as in the study file"
        metric = str(s.get("metric", "y"))
        fig = figures.points_figure(list(zip(xs, ys)), None, x_label=f"{s.get('parameter', 'x')} ({unit})",
                                    y_label=f"{metric} ({s.get('metric_unit') or 'dimensionless'})",
                                    title=f"{metric} across the study", label="finished cases")
        fname = f"study-{k + 1}"
        body += figure(figures.save(fig, fig_dir, fname), fname, str(s.get("metric", "")), "One point per finished case.")
    return Section("study", f"Study {name}", body)
