"""What a trade study found, in the report: tables with units, the best case per variant and
each result plotted against each varied parameter."""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..units import pretty_unit
from . import figures
from .jsonfields import need
from .markup import (
    Cell,
    Section,
    figure,
    fmt,
    paragraph,
    table,
)


def _study_value(v, unit: str | None = None, scale: float = 1.0):
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        u = "" if unit in (None, "as computed") else pretty_unit(unit)
        return fmt(scale * v, u)
    return "—" if v in (None, "") else pretty_unit(str(v))


def _unit_words(unit) -> str:
    return "dimensionless" if unit == "" else ("as written" if unit is None else pretty_unit(unit))


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


def _shown(case: dict, lead: dict) -> str | None:
    """A case's lead result as the table shows it (None without a number)."""
    v = case["results"].get(lead["key"])
    if not isinstance(v, (int, float)) or isinstance(v, bool):
        return None
    return _study_value(v, lead.get("unit"))


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
            # every variant equal to the best (to the shown digits) is marked: a tie is a tie
            shown_best = None if best is None else _shown(best, lead)
            mark = c is best or (shown_best is not None and _shown(c, lead) == shown_best)
            tie = mark and sum(_shown(o, lead) == shown_best for o in by.values()) > 1
            row.append(
                Cell(
                    text + ((" (best, tie)" if tie else " (best)") if mark else ""),
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
    name = need(data, "name", str, file, "")
    params = need(data, "parameters", list, file, "")
    results = need(data, "results", list, file, "")
    cases = need(data, "cases", list, file, "")
    for k, p in enumerate(params):
        need(p, "key", str, file, f"parameters[{k}].")
        need(p, "label", str, file, f"parameters[{k}].")
    for k, r in enumerate(results):
        need(r, "key", str, file, f"results[{k}].")
        need(r, "label", str, file, f"results[{k}].")
    for k, c in enumerate(cases):
        where = f"cases[{k}]."
        need(c, "case", str, file, where)
        for field in ("values", "results"):
            need(c, field, dict, file, where)
        for r in results:
            v = c["results"].get(r["key"])
            if v is not None and not isinstance(v, (int, float, str)) or isinstance(v, bool):
                raise InputError(
                    file, f"{where}results.{r['key']}", f"must be a number, text or null, got {v!r}"
                )
    variants = any(c.get("variant") for c in cases)
    done = [c for c in cases if c.get("status") not in ("failed", "pending", "running")]
    failed = len(cases) - len(done)
    # a case that ran but found no design (infeasible, or stopped before one) has no values
    empty = [
        c for c in done if all(c["results"].get(r["key"]) is None for r in results) and results
    ]
    parts = []
    if data.get("description"):
        parts.append(paragraph(str(data["description"]).replace("\n", " ")))
    reasons: dict[str, list[int]] = {}
    for k, c in enumerate(cases):
        if c.get("why"):
            reasons.setdefault(str(c["why"]), []).append(k + 1)
    why = "".join(
        f" Case{'s' * (len(ks) > 1)} {', '.join(str(k) for k in ks[:8])}"
        f"{f' and {len(ks) - 8} more' if len(ks) > 8 else ''}: {reason}."
        for reason, ks in reasons.items()
    )
    parts.append(
        paragraph(
            f"{len(cases)} cases: {len(done) - len(empty)} with a design, {len(empty)} that ran "
            f"and found none (see their status), {failed} that did not run to the end; every "
            "value with its unit (parameters as written in the study file, results in SI)." + why
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
                + "; a lone marker is a case with no such neighbour"
                + (
                    f"; a panel of more than {figures.STUDY_LEGEND_MAX} lines has no legend "
                    "(the table above lists the cases)."
                    if any(len(g) > figures.STUDY_LEGEND_MAX for _x, g in panels)
                    else "."
                )
                + note,
            )
        )
    return Section("study", f"Study {name}", "".join(parts))
