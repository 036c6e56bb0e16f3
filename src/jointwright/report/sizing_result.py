"""The sizing result in the report: how the design was chosen, the runner-ups and why they
lost, and for an infeasible problem the diagnosis per requirement."""

from __future__ import annotations

import math

from .jsonfields import need, optional
from .markup import (
    Cell,
    Section,
    fmt,
    paragraph,
    pct,
    table,
)
from .wording import bound_mark, gap_text, objective_change, unknown_gap

#: unit of the sizing objective per kind (payload mass kg, total mass kg, cost in the catalog's
#: currency, IMF and normalized margin dimensionless)
OBJECTIVE_UNITS = {"payload": "kg", "mass": "kg", "imf": "", "cost": "", "margin": ""}


def runner_ups_section(
    data: dict, file: str = "<sizing>", units: dict | None = None, gap_note: str = ""
) -> Section:
    """How the design was chosen, the per-joint runner-ups and why they lost.

    ``data`` is the JSON form of a sizing result (``SizingResult.to_dict()``): ``status``,
    ``objective_kind``, ``objective``, ``bound``, ``gap``, ``backend``, ``seconds``, ``message``,
    ``gap_unknown_reason`` (why the bound is "inf", or null), ``alternatives`` = [{joint,
    actuator, change, objective, loss, ruled_out_by}] and, for an
    infeasible problem, ``diagnosis`` = [{requirement, limit, best_achievable, shortfall,
    relaxed_objective}]. Only ``status`` and ``objective_kind`` are required. ``units`` maps a
    requirement label ("case: payload min") to its unit for the diagnosis table ("%" for a
    fraction such as a rating use, shown ×100). ``gap_note``: why the gap is not known when
    the bound is infinite (markup.unknown_gap for the project), else a general sentence.
    """
    units = units or {}
    status = need(data, "status", str, file, "")
    kind = need(data, "objective_kind", str, file, "")
    unit = OBJECTIVE_UNITS.get(kind, "")
    head = [f"Search status: {status}"]
    if data.get("objective") is not None:
        head.append(f"objective ({kind}) {fmt(need(data, 'objective', float, file, ''), unit)}")
    bound = None if data.get("bound") is None else need(data, "bound", float, file, "")
    gap = None if data.get("gap") is None else need(data, "gap", float, file, "")
    if bound is not None and gap is not None and not (math.isfinite(bound) and math.isfinite(gap)):
        # no finite bound when the search stopped: the gap is not known (never shown as ∞)
        reason = data.get("gap_unknown_reason")
        if reason is not None:  # the sizing command's words why (a string, or null)
            reason = need(data, "gap_unknown_reason", str, file, "")
        head.append(gap_note or reason or unknown_gap(None, kind))
    else:
        if bound is not None:
            head.append(f"proven bound {fmt(bound, unit)}")
        if gap is not None:
            head.append(f"relative gap {gap_text(gap)}")
    if data.get("backend"):
        head.append(f"back-end {data['backend']}")
    parts = [paragraph("; ".join(head) + "."), paragraph(str(data.get("message", "")))]
    rows = []
    for k, r in enumerate(data.get("alternatives") or []):
        where = f"alternatives[{k}]."
        value = optional(r, "objective", file, where)
        loss = optional(r, "loss", file, where)
        change = objective_change(kind, loss, unit)
        why = (
            f"misses {r['ruled_out_by']}"
            if r.get("ruled_out_by")
            else "tie, lighter: ties of the MILP hand-over's design are broken only with gap 0"
            if change == "tie" and (optional(r, "mass_change", file, where) or 0.0) < 0
            else "tie: lost the tie-break"
            if change == "tie"
            else f"{change}: better, within the optimality gap (gap 0 searches it)"
            if loss is not None and loss < 0
            else f"{change} against the chosen design"
            if loss is not None
            else "—"
        )
        rows.append(
            [
                need(r, "joint", str, file, where),
                need(r, "actuator", str, file, where),
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
                "it is re-evaluated with the full physics. A tie has the chosen design's "
                "objective and lost the tie-break (least mass, then least back-driven reflected "
                "inertia); a lighter tie marks a MILP hand-over's design (ties broken only with "
                "gap 0), a better runner-up one within the optimality gap; a loss is signed as "
                "the objective reads.",
            )
        )
    diag = []
    for k, r in enumerate(data.get("diagnosis") or []):
        where = f"diagnosis[{k}]."
        label = need(r, "requirement", str, file, where)
        u = units.get(label, "")
        scale = 100.0 if u == "%" else 1.0  # rating uses are fractions, shown in %
        best = optional(r, "best_achievable", file, where)
        # a bound, not a value some design reaches: marked (and its shortfall is at least that)
        bound = r.get("best_proven", True) is False and best is not None
        mark = bound_mark(label, not bound)
        short = pct(optional(r, "shortfall", file, where))
        diag.append(
            [
                label,
                Cell(fmt(scale * need(r, "limit", float, file, where), u), "num"),
                Cell(mark + fmt(None if best is None else scale * best, u), "num"),
                Cell(("≥ " if bound and short != "—" else "") + short, "num"),
                Cell(fmt(optional(r, "relaxed_objective", file, where), unit), "num"),
            ]
        )
    if diag:
        parts.append(
            "<h3>Why no design meets every requirement</h3>"
            + table(
                [
                    "requirement",
                    "limit",
                    "best alone",
                    "shortfall",
                    "objective without it",
                ],
                diag,
                caption="One requirement at a time: its best value over all options (shortfall "
                "relative to the limit; ≤ 0 means it alone can be met, unless the value is "
                "marked ≤ or ≥: a bound from a search stopped by its time share, not a value "
                "some design reaches, so the shortfall is at least the one shown), and what "
                "dropping it buys. —: not computed (no closed form: gear shock use, duty rating "
                "use, directional IMF, gear life, or no time left); a speed is shown only when "
                "even the no-load bound (an upper bound, not a speed a design reaches) falls "
                "short of the limit.",
            )
        )
    return Section(
        "runner-ups", "How the design was chosen: runner-ups and why they lost", "".join(parts)
    )
