"""The one-page summary at the top of a design report: decision, verdict, risks, cautions.

Written for a decision meeting: it must print on one A4 or Letter page (the browser tests check
this), so it holds only the decision (the actuator per joint with mass and cost), whether every
requirement is met and the three tightest margins, the frontier thumbnail with the reported
design when a frontier is given, the top risks and the cautions. Everything else is in the
appendix that follows it.
"""

from __future__ import annotations

import math
from pathlib import Path

from ..margin_words import check_label, margin_text, worst_per_region
from . import figures
from .frontier_map import dominating_point
from .markup import (
    Cell,
    Section,
    as_float,
    bullets,
    check_value,
    figure,
    fmt,
    number,
    paragraph,
    table,
)
from .wording import carried_payloads, limiting_quantity_text

#: a met requirement with a relative margin below this is called thin (10 %) [trade]
THIN_MARGIN = 0.10
#: a duty-cycle rating use above this is called close to the motor's limits (90 %) [trade]
HIGH_RATING_USE = 0.90
#: at most this many risk lines, most serious first
MAX_RISKS = 6

SUMMARY_CAUTION = (
    "Concept-stage sizing on the stated model and catalog data, not a certified design. Before "
    "building, verify every actuator against supplier data and by test. Self-locking and "
    "high-ratio joints can trap or crush; contact with people, holding brakes and guarding "
    "follow the applicable machinery and collaborative-robot safety standards, local codes and "
    "licensed engineering practice."
)


def _f(x) -> float:
    return float({"inf": math.inf, "-inf": -math.inf}.get(x, x)) if x is not None else math.nan


def has_costs(a: dict) -> bool:
    """True when the catalog gives costs (a zero total means it gives none)."""
    return _f(a.get("total_cost", 0.0)) > 0.0


def cost_text(value) -> str:
    """A cost in the catalog's currency units (the catalog states no currency)."""
    return fmt(value, "", digits=4)


def _grouped(a: dict, checks: list[dict]) -> list[tuple]:
    """``checks`` with each region's poses folded into its worst pose per requirement, sorted
    by margin, smallest first: [(check, label)]."""
    items = worst_per_region(checks, a.get("regions") or {})
    items.sort(key=lambda item: _f(item[0]["margin"]))
    return [(c, check_label(c, region, poses)) for c, region, poses in items]


def _margin(c: dict) -> str:
    return margin_text(c["margin"], c["limit"], c.get("sense"))


def _margin_both(c: dict) -> str:
    """The margin, and the one at the worst end of the efficiency band when that is lower."""
    text = _margin(c)
    worst = c.get("margin_worst")
    if worst is not None and _f(worst) < _f(c["margin"]) - 1e-12:
        text += f", {margin_text(worst, c['limit'], c.get('sense'))} at the worst end"
    return text


#: with more joints than this, joints with the same actuator share one row of the decision table
GROUP_ABOVE = 8


def _groups(joints: list[dict]) -> list[list[dict]]:
    """Joints in order; with more than :data:`GROUP_ABOVE`, those with one actuator together."""
    if len(joints) <= GROUP_ABOVE:
        return [[j] for j in joints]
    groups: dict = {}
    for j in joints:
        groups.setdefault(j["actuator"], []).append(j)
    return list(groups.values())


def decision_table(a: dict) -> str:
    """The actuator per joint with its mass (and cost when the catalog gives costs)."""
    costs = has_costs(a)
    drives = any(j.get("drive") for j in a["joints"])  # the project names drives
    rows = []
    groups = _groups(a["joints"])
    shared = any(len(g) > 1 for g in groups)
    for g in groups:
        j = g[0]
        lock = " (self-locking)" if j["self_locking"] else ""
        names = ", ".join(x["joint"] for x in g)
        row = [
            names,
            j["motor"],
            (" + ".join(j["stages"]) or "direct drive") + lock,
            Cell(f"{number(j['ratio'])} : 1", "num"),
        ]
        if drives:
            row.append(j.get("drive") or "—")
        if shared:
            row.append(Cell(f"{len(g)} ×", "num"))
        row.append(Cell(fmt(j["mass"], "kg"), "num", (("summary-joint", names), ("field", "mass"))))
        if costs:
            row.append(
                Cell(cost_text(j.get("cost")), "num", (("summary-joint", names), ("field", "cost")))
            )
        rows.append(row)
    total = [Cell("total", "num"), "", "", ""] + ([""] if drives else []) + ([""] if shared else [])
    total.append(Cell(fmt(a["total_mass"], "kg"), "num", (("field", "summary_total_mass"),)))
    if costs:
        total.append(Cell(cost_text(a["total_cost"]), "num", (("field", "summary_total_cost"),)))
    rows.append(total)
    each = " each" if shared else ""
    head = (
        ["joints" if shared else "joint", "motor", "gear stages", "ratio"]
        + (["drive"] if drives else [])
        + (["count"] if shared else [])
        + [f"mass{each}"]
        + ([f"cost{each}"] if costs else [])
    )
    notes = []
    if shared:
        notes.append("Joints with the same actuator share a row.")
    if drives:
        notes.append("Mass and cost include the drive's.")
    if costs:
        notes.append("Cost in the catalog's currency units.")
    return table(head, rows, caption=" ".join(notes), cls="compact")


def _verdict(a: dict) -> tuple[str, bool]:
    checks = a["checks"]
    missed = [c for c in checks if not c["ok"]]
    totals = f"actuators {fmt(a['total_mass'], 'kg')}"
    if has_costs(a):
        totals += f", cost {cost_text(a['total_cost'])} (catalog currency)"
    carried = carried_payloads(a).values()
    if carried and min(carried) < 0:  # below a case's fixed load: no payload, not a negative one
        totals = "no payload (a case does not carry its own fixed load); " + totals
    elif carried:  # the sizing's payload objective: the least payload mass over the cases
        totals = f"payload at least {fmt(min(carried), 'kg')} in every payload case; " + totals
    if not checks:
        return f"The design “{a['design']}” is assessed against no requirement; {totals}.", True
    if not missed:
        return (f"The design “{a['design']}” meets all {len(checks)} requirements; {totals}.", True)
    return (
        f"The design “{a['design']}” misses {len(missed)} of {len(checks)} requirements; {totals}.",
        False,
    )


def margins_table(a: dict, count: int = 3) -> str:
    """The ``count`` requirements with the smallest margins; a region of poses counts once,
    by its worst pose (named)."""
    rows = [
        [
            label,
            Cell(check_value(c, "achieved"), "num"),
            Cell(check_value(c, "limit"), "num"),
            Cell(
                _margin(c),
                "num" + ("" if c["ok"] else " bad"),
                (("summary-check", f"{c['subject']}:{c['requirement']}"),),
            ),
        ]
        for c, label in _grouped(a, a["checks"])[:count]
    ]
    if not rows:
        return paragraph("The project states no requirement.")
    return table(
        ["requirement", "achieved", "limit", "margin"],
        rows,
        cls="compact",
        caption="Margin: how far past its limit each requirement is; below 0 it is missed.",
    )


def risks(a: dict, sensitivity: dict | None = None) -> list[str]:
    """The top risks, most serious first: missed requirements, self-locking joints, thin
    margins, duty cycles close to the motor's limits, the efficiency assumption."""
    out = []
    missed = [c for c in a["checks"] if not c["ok"]]
    for c, label in _grouped(a, missed):
        out.append(
            f"Missed: {label} is {check_value(c, 'achieved')} against "
            f"{check_value(c, 'limit')} ({_margin(c)})."
        )
    locking = [j["joint"] for j in a["joints"] if j["self_locking"]]
    if locking:
        one = len(locking) == 1
        out.append(
            f"Self-locking: {', '.join(locking)} cannot be pushed back by a person or an "
            f"obstacle; {'it holds' if one else 'each holds'} its load unpowered only as long "
            "as its gear friction lasts (it varies with load, temperature and wear). Treat "
            f"{'it as a pinch and crush point' if one else 'them as pinch and crush points'}."
        )
    unsure = [
        j["joint"]
        for j in a["joints"]
        if not j["self_locking"]  # a nominal lock is named above already
        and isinstance(j.get("eta_backward_band"), list)
        and len(j["eta_backward_band"]) == 2
        and _f(j["eta_backward_band"][0]) <= 0.0 < _f(j["eta_backward_band"][1])
    ]
    if unsure:
        out.append(
            f"Uncertain self-locking: the backward efficiency band of {', '.join(unsure)} "
            "crosses 0, so the joint may or may not self-lock with temperature, load and wear; "
            "rely on neither holding nor yielding (Appendix: cautions)."
        )
    # met at the nominal efficiencies but missed at the worst end of the efficiency band
    edge = [c for c in a["checks"] if c["ok"] and _f(c.get("margin_worst", c["margin"])) < 0]
    if edge:
        items = ", ".join(f"{label} ({_margin_both(c)})" for c, label in _grouped(a, edge))
        out.append(
            f"Missed at the worst end of the efficiency band: {items}; met only at the "
            "nominal efficiencies."
        )
    # thin at the nominal efficiencies or at the worst end of the efficiency band
    # a region of poses is named once: among the misses at the band's end when a pose is there
    at_edge = {c["subject"].split("@")[0] for c in edge if "@" in c["subject"]}
    thin = [
        c
        for c in a["checks"]
        if c["ok"]
        and c not in edge
        and not ("@" in c["subject"] and c["subject"].split("@")[0] in at_edge)
        and min(_f(c["margin"]), _f(c.get("margin_worst", c["margin"]))) < THIN_MARGIN
    ]
    if thin:
        items = ", ".join(f"{label} ({_margin_both(c)})" for c, label in _grouped(a, thin))
        out.append(
            f"Thin margins (below {100 * THIN_MARGIN:.0f} %, nominal or at the worst end of "
            f"the efficiency band): {items}; a small change of load, catalog data or "
            "efficiency can miss them."
        )
    for c in a["cases"]:
        use = c["metrics"].get("rating_use") if c["kind"] == "duty" else None
        if isinstance(use, (int, float)) and HIGH_RATING_USE < use <= 1.0:
            key = c["metrics"].get("limiting_quantity")
            quantity = limiting_quantity_text(key) if key else "rating"
            out.append(
                f"Duty cycle {c['name']}: {c.get('limiting_joint') or 'a joint'} uses "
                f"{fmt(100 * use, '%')} of its motor's {quantity}; a hotter "
                "room or a longer cycle can overheat it."
            )
    duty = any(c["kind"] == "duty" for c in a["cases"])
    if not duty:
        out.append(
            "No duty cycle: continuous (RMS) torque, winding temperature and gear life are not "
            "checked, only peaks; a design that meets them can still overheat when it holds or "
            "repeats a load."
        )
    if sensitivity:
        out.append(sensitivity_risk(sensitivity))
    out.append(
        "Assumed: rigid links and gears (but for the estimate of an impact's gear shock), the "
        "catalog's efficiencies, its peak ratings at "
        "standstill and along the torque–speed envelope where a case moves at speed; thermal "
        "limits "
        + ("only over the duty cycles given" if duty else "not checked (no duty cycle given)")
        + " (Appendix: assumptions, limits and cautions)."
    )
    return out[:MAX_RISKS]


def payload_sensitivity(sens) -> dict | None:
    """The largest relative change of the payload mass every case carries in a
    :class:`.sweeps.Sensitivity`,
    as the dict :func:`sensitivity_risk` reads; None without a finite, nonzero payload."""
    import numpy as np

    base = sens.base.get("payload")
    if base is None or not math.isfinite(base) or base == 0:
        return None
    rel = np.abs(np.asarray(sens.values["payload"], dtype=float) - base) / abs(base)
    rel = np.where(np.isfinite(rel), rel, 0.0)
    j, f, _s = np.unravel_index(int(np.argmax(rel)), rel.shape)
    moved = float(np.asarray(sens.values["payload"], dtype=float)[j, f, _s])
    return {
        "points": round(100 * sens.step),
        "change": float(rel[j, f, _s]),
        "joint": sens.joints[j],
        "efficiency": ("η_f", "η_b")[f],
        # the move leaves no payload: some case no longer carries its own fixed load
        "loses": bool(base > 0 and moved <= 0),
        "sign": "−+"[_s],
    }


def sensitivity_risk(s: dict) -> str:
    """One sentence on how far the payload moves when one gear efficiency moves by a few points.

    ``s`` = {"points": percentage points, "change": largest |relative change| of the payload
    mass every case carries, "joint": its joint, "efficiency": "η_f" or "η_b"}.
    """
    if s["change"] < 5e-4:  # below the 4th shown digit
        return (
            f"Efficiency assumption: moving any one gear efficiency by ±{s['points']} points "
            "leaves the payload mass every case carries unchanged; impact figures may still move "
            "(Appendix: sensitivity)."
        )
    if s.get("loses"):
        return (
            f"Efficiency assumption: {s['efficiency']} of {s['joint']} "
            f"{s['sign']}{s['points']} points leaves no payload at all: a case no longer "
            "carries its own fixed load (the joint holds it only through gear friction; "
            "Appendix: sensitivity)."
        )
    return (
        f"Efficiency assumption: moving one gear efficiency by ±{s['points']} points moves "
        f"the payload mass every case carries by up to {fmt(100 * s['change'], '%', 3)} "
        f"({s['efficiency']} of {s['joint']})."
    )


def frontier_thumbnail(frontier: dict, fig_dir: Path) -> str:
    """A small frontier figure with the reported design ringed (the frontier section's form)."""
    x, y = frontier["x"], frontier["y"]
    xy = [(float(p["x"]), float(p["y"])) for p in frontier["points"]]
    chosen = frontier.get("chosen")
    if isinstance(chosen, int) and not isinstance(chosen, bool):
        chosen = xy[chosen]
    elif isinstance(chosen, dict):
        chosen = (float(chosen["x"]), float(chosen["y"]))
    else:
        chosen = None

    def label(axis, default):
        return f"{axis.get('label', default)} ({axis.get('unit') or 'dimensionless'})"

    fig = figures.points_figure(
        xy,
        chosen,
        x_label=label(x, "x"),
        y_label=label(y, "y"),
        title="Frontier of non-dominated designs",
        width=4.8,
        height=2.8,
        steps=frontier.get("steps"),
    )
    png = figures.save(fig, fig_dir, "summary-frontier")
    where = (
        "the ring is this design"
        if chosen is not None
        else "this design is not placed on it (its measures are not both known)"
    )
    better = dominating_point(xy, chosen, frontier.get("steps"))
    if better is not None:
        where += f", inside the frontier (point {better + 1} is at least as good on both axes)"
    return figure(png, "summary-frontier", "frontier thumbnail", f"Non-dominated designs; {where}.")


def search_note(sizing: dict | None) -> str | None:
    """One sentence when the sizing run that chose the design stopped before proving it: the
    best design found, with the proven bound and gap (None for a proven or an unknown run)."""
    if sizing is None or sizing.get("status") != "time_limit":
        return None
    gap = as_float(sizing.get("gap"))
    within = (
        f"; the proven bound leaves a gap of {100 * gap:.3g} % to the optimum"
        if math.isfinite(gap)
        else "; how far it is from the optimum is not known"
    )
    return (
        "The sizing search stopped at its time limit: this design is the best found, not a "
        f"proven optimum{within} (see “How the design was chosen”). Run it again with a longer "
        "limit before relying on it."
    )


def summary_section(
    a: dict,
    fig_dir: Path,
    *,
    frontier: dict | None = None,
    sensitivity: dict | None = None,
    sizing: dict | None = None,
) -> Section:
    """The one-page summary (see the module docstring); ``sizing``: the JSON form of the sizing
    result that chose the design, when the report has it (a stopped search is said)."""
    words, ok = _verdict(a)
    note = search_note(sizing)
    if note is not None:
        words = f"{words} {note}"
        ok = False
    parts = [
        f'<div class="{"verdict" if ok else "verdict bad"}">{paragraph(words)}</div>',
        "<h3>Decision: the actuator of each joint</h3>",
        decision_table(a),
    ]
    margins = "<h3>Tightest margins</h3>" + margins_table(a)
    if frontier is not None:
        parts.append(
            f'<div class="pair"><div>{margins}</div>'
            f"<div>{frontier_thumbnail(frontier, fig_dir)}</div></div>"
        )
    else:
        parts.append(margins)
    parts.append("<h3>Top risks</h3>" + bullets(risks(a, sensitivity), cls="risks"))
    parts.append('<h3>Cautions</h3><div class="caution">' + paragraph(SUMMARY_CAUTION) + "</div>")
    parts.append(
        paragraph(
            "The appendix that follows holds the full assessment: every "
            "requirement, every case, the figures and the assumptions.",
            cls="sub",
        )
    )
    return Section("summary", "Summary", "".join(parts))
