"""The study section's plain dict from a study store (SQLite), for
:func:`.study_results.study_section`.

Reads the store through :mod:`jointwright.study.store`: the varied parameters (with their units:
the unit written in the study file, or the one the parameter's name implies), a few headline
results per case with their units (the sizing objective, the actuator mass; for frontier
studies the largest payload and the knee) and the design each case found. Metric values are
stored in SI, as the project computes them.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..study.reading import read_cases, read_study
from ..units import registry

#: sizing objective kind -> (label, unit, which is better)
OBJECTIVES: dict[str | None, tuple[str, str, str | None]] = {
    "payload": ("payload mass every case carries", "kg", "max"),
    "mass": ("least actuator mass", "kg", "min"),
    "imf": ("best impact mitigation factor", "", "max"),
    "cost": ("least actuator cost", "", "min"),
    "margin": ("smallest normalized margin", "", "max"),
}
#: frontier measure -> unit
MEASURE_UNITS = {"imf": "", "effective_mass": "kg", "backdrive_force": "N"}
#: unit a plain-number parameter has by its name (the project's SI convention)
PARAMETER_UNITS = {
    "payload_min": "N",
    "imf_min": "",
    "directional_imf_min": "",
    "effective_mass_max": "kg",
    "backdrive_force_max": "N",
    "speed_min": "m/s",
    "temperature_margin_min": "K",
    "rating_use_max": "",
    "mass_max": "kg",
    "total_mass_max": "kg",
    "total_cost_max": "",
    "reflected_inertia_max": "kg·m²",
    "diameter_max": "m",
    "length_max": "m",
    "ratio_min": "",
    "ratio_max": "",
    "max_stages": "",
}
_UNIT_TEXT = {"kilogram": "kg", "newton": "N", "meter": "m", "second": "s"}


def _unit_text(unit: str) -> str:
    return _UNIT_TEXT.get(unit, unit)


def parameter_label(path: str, base: dict) -> str:
    """A readable name of a dotted parameter path: "case[3].imf_min" -> "touchdown: imf min"
    (the case's name from the base project), "requirements.total_mass_max" -> "total mass max".
    """
    *head, last = path.split(".")
    words = last.replace("_", " ")
    m = re.fullmatch(r"case\[(\d+)\]", head[0]) if len(head) == 1 else None
    if m:
        cases = base.get("case") if isinstance(base, dict) else None
        k = int(m.group(1))
        if isinstance(cases, list) and k < len(cases) and isinstance(cases[k], dict):
            return f"{cases[k].get('name', f'case {k + 1}')}: {words}"
        return f"case {k + 1}: {words}"
    return words


def _number(value, path: str, store) -> tuple[float | None, str | None]:
    """(magnitude, unit) of a parameter value: a plain number has no unit of its own."""
    if isinstance(value, bool) or value is None:
        return None, None
    if isinstance(value, (int, float)):
        return float(value), None
    try:
        return float(value), None
    except (TypeError, ValueError):
        pass
    try:
        q = registry().Quantity(str(value))
    except Exception:
        return None, None  # a text value (a list of stage kinds, a name): shown as written
    return float(q.magnitude), format(q.units, "~C")


def _parameters(study, cases, store) -> list[dict]:
    out = []
    for p in study.parameters:
        unit, numeric = None, True
        for c in cases:
            x, u = _number(c.values.get(p), p, store)
            if x is None:
                numeric = False
            unit = unit or u
        if unit is None and numeric:
            unit = PARAMETER_UNITS.get(p.rsplit(".", 1)[-1])
        out.append(
            {
                "key": p,
                "label": parameter_label(p, study.base_project),
                "unit": _unit_text(unit) if unit is not None else None,
                "numeric": numeric,
            }
        )
    return out


def _value_in(value, unit: str | None):
    """A parameter value in the parameter's unit (a number), or as written (text)."""
    x, u = _number(value, "", "")
    if x is None:
        return "—" if value is None else str(value)
    if u is not None and unit is not None and _unit_text(u) != unit:
        try:
            x = float(registry().Quantity(x, u).to(unit).magnitude)
        except Exception:
            return str(value)  # a unit that does not convert: shown as written
    return x


def _results(task: str, cases) -> list[dict[str, Any]]:
    """The headline results of the study's task, with units and which way is better."""
    if task == "frontier":
        measure: str = next(
            (
                str(c.result["measure"])
                for c in cases
                if isinstance(c.result, dict) and c.result.get("measure")
            ),
            "imf",
        )
        mu = MEASURE_UNITS.get(measure, "")
        return [
            {"key": "payload_max", "label": "largest payload", "unit": "N", "better": "max"},
            {"key": "knee_payload", "label": "payload at the knee", "unit": "N", "better": None},
            {
                "key": "knee_measure",
                "label": f"{measure.replace('_', ' ')} at the knee",
                "unit": mu,
                "better": None,
            },
        ]
    kinds = {c.result.get("objective_kind") for c in cases if isinstance(c.result, dict)}
    kinds.discard(None)
    kind = kinds.pop() if len(kinds) == 1 else None
    label, unit, better = OBJECTIVES.get(kind, ("objective", "", None))
    out = [{"key": "objective", "label": label, "unit": unit, "better": better}]
    if kind != "mass":
        out.append({"key": "total_mass", "label": "actuator mass", "unit": "kg", "better": None})
    return out


def study_data(store: str | Path, metrics=None, parameters=None) -> dict:
    """The hook dict of a study store (form in docs/report.md, "Study summary").

    Parameters
    ----------
    store : path of the study's SQLite file
    metrics : extra numeric metric names to add as results (their unit is not known: shown
        "as computed"); unknown names raise ``InputError``
    parameters : varied parameters to show (default: all)
    """
    study = read_study(store)
    cases = read_cases(store, results=True)
    params = _parameters(study, cases, store)
    if parameters is not None:
        known = {p["key"] for p in params}
        for p in parameters:
            if p not in known:
                raise InputError(
                    str(store),
                    "parameters",
                    f"{p!r} is not varied; varied: {', '.join(sorted(known))}",
                )
        params = [p for p in params if p["key"] in parameters]
    task = next((c.task for c in cases), "size")
    results = _results(task, [c for c in cases if c.status == "done"])
    names = {k for c in cases for k in c.metrics}
    for m in metrics or ():
        if m not in names:
            raise InputError(
                str(store),
                "metrics",
                f"no case reports metric {m!r}; known: {', '.join(sorted(names))}",
            )
        results.append(
            {"key": m, "label": m.replace("_", " "), "unit": "as computed", "better": None}
        )
    rows = []
    for c in cases:
        joints = [k[: -len(":actuator")] for k in c.metrics if k.endswith(":actuator")]
        status = c.metrics.get("sizing_status") or c.status
        if c.status != "done":
            status = c.status
        rows.append(
            {
                "case": c.case_id,
                "variant": c.variant or "",
                "status": str(status),
                "values": {p["key"]: _value_in(c.values.get(p["key"]), p["unit"]) for p in params},
                "results": {r["key"]: c.metrics.get(r["key"]) for r in results},
                "design": "; ".join(f"{j}: {c.metrics[f'{j}:actuator']}" for j in joints),
                "why": str(c.metrics.get("why") or ""),  # an infeasible case: the search's reason
            }
        )
    return {
        "name": study.name,
        "description": str(study.definition.get("study", {}).get("description", "")).strip(),
        "parameters": params,
        "results": results,
        "cases": rows,
    }
