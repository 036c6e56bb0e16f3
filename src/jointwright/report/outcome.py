"""What the design achieves: the outcome in words, every requirement against its limit (a region's
poses grouped under it) and the binding constraints."""

from __future__ import annotations

import math

from ..cases import STANDARD_GRAVITY as G0
from ..margin_words import check_label, margin_text, worst_per_region
from .markup import (
    Cell,
    Group,
    Section,
    as_float,
    check_value,
    fmt,
    number,
    paragraph,
    pct,
    table,
)
from .wording import carried_payloads, region_groups


def _worst_first(a: dict, checks: list[dict]) -> list[tuple[dict, str]]:
    """``checks`` with each region's poses folded into its worst pose per requirement (named),
    smallest margin first: [(check, label)]."""
    items = worst_per_region(checks, a.get("regions") or {})
    items.sort(key=lambda item: as_float(item[0]["margin"]))
    return [(c, check_label(c, region, poses)) for c, region, poses in items]


def _margin(c: dict) -> str:
    return margin_text(c["margin"], c["limit"], c.get("sense"))


def _limiting_reason(a: dict, case: dict) -> str:
    """Why the limiting joint of a payload case stops: its motor or its gear rating."""
    j = next((x for x in a["joints"] if x["joint"] == case["limiting_joint"]), None)
    if j is None:
        return ""
    mode = (case.get("joint_modes") or {}).get(j["joint"])
    cap = as_float(
        j["capacity_motoring"] if mode in (None, "motoring") else j["capacity_backdriven"]
    )
    gear = as_float(j["gear_peak_torque"])
    who = "it is" if mode is None else f"it is {mode} and"
    tau = abs(as_float((case.get("metrics") or {}).get(f"joint_torque:{j['joint']}", math.nan)))
    if mode is None and math.isfinite(tau):  # a stance case: the torque it reached says which
        drive, hold = as_float(j["capacity_motoring"]), as_float(j["capacity_backdriven"])
        cap = min((drive, hold), key=lambda c: abs(c - tau) if math.isfinite(c) else math.inf)
        if math.isclose(cap, hold, rel_tol=1e-6) and not math.isclose(cap, drive, rel_tol=1e-6):
            if not (math.isfinite(gear) and math.isclose(cap, gear, rel_tol=1e-9)):
                return (
                    f"it is held against the load at its holding torque ({fmt(cap, 'N·m')}, "
                    "the motor's peak torque back-driven through the gear): a larger motor or a "
                    "higher ratio raises the payload"
                )
    if math.isfinite(gear) and math.isclose(cap, gear, rel_tol=1e-9):
        return (
            f"{who} at its gear torque limit (peak) ({fmt(gear, 'N·m')}): a larger "
            "gear frame raises the payload, a larger motor or ratio does not"
        )
    what = "drive torque" if mode is None else "motor's peak torque through the gear"
    return (
        f"{who} at its {what} ({fmt(cap, 'N·m')}): a larger motor or a higher ratio raises "
        "the payload"
    )


def _impact_words(case: dict) -> str:
    """One sentence on what an impact at the case's contact feels (back-driven transmissions)."""
    m = case["metrics"]
    text = f"An impact in case {case['name']} meets"
    if m.get("imf") is not None:
        text += (
            f" an impact mitigation factor of {number(m['imf'])} (back-driven; 0 is no "
            "better than locked joints)"
        )
        if m.get("contact_rank", 3) < 3 and m.get("imf_restricted") is not None:
            text += f", {number(m['imf_restricted'])} over the directions the limb can move"
        text += " and"
    text += f" an effective mass of {fmt(m.get('effective_mass'), 'kg')} along its direction."
    return text + _shock_words(m)


def _shock_words(m: dict) -> str:
    """The landing or collision shock on the gears, when the case states an impact speed. A
    stage with no momentary rating has an unknown share (its joint is named as unrated, never
    as the one taking the largest share); the largest torque is then named on its own."""
    use = m.get("shock_use")
    if use is None and "shock_limiting_joint" not in m:
        return ""
    note = (
        " (docs/metrics.md, gear shock; a rigid contact and an undamped gear spring, an "
        "estimate to verify by test)."
    )
    torques = {k.split(":", 1)[1]: v for k, v in m.items() if k.startswith("shock_torque:")}
    unrated = [j for j in torques if _unknown(m.get(f"shock_use_joint:{j}"))]
    if unrated:
        rated = {j: m.get(f"shock_use_joint:{j}") for j in torques if j not in unrated}
        top = max(torques, key=lambda j: _value(torques[j]))
        text = (
            f" At its impact speed the largest gear torque is {fmt(torques[top], 'N·m')}, at "
            f"{top}; the stages of {', '.join(unrated)} state no momentary (emergency-stop) "
            "rating, so their share of it is unknown"
        )
        if any(_value(u) > 0 for u in rated.values()):
            worst = max(rated, key=lambda j: _value(rated[j]))
            text += (
                f"; of the rated ones {worst} takes the largest share, "
                f"{fmt(100.0 * _value(rated[worst]), '%')}"
            )
        return text + note
    who = m.get("shock_limiting_joint") or "—"
    torque = m.get(f"shock_torque:{who}")
    use = 100.0 * use if isinstance(use, (int, float)) and not isinstance(use, bool) else use
    return (
        f" At its impact speed the gear teeth of {who} take the largest share of their momentary "
        f"(emergency-stop) rating: {fmt(torque, 'N·m')}, {fmt(use, '%')}" + note
    )


def _unknown(value) -> bool:
    """A per-joint shock use that is not a number: an unrated stage (NaN, or None in JSON)."""
    return math.isnan(as_float(value))


def _value(value) -> float:
    """A metric as a float for ordering (unknown values lowest)."""
    out = as_float(value)
    return -math.inf if math.isnan(out) else out


def _payload_words(a: dict, project) -> list[str]:
    payload = [
        c
        for c in a["cases"]
        if c["kind"] in ("payload", "stance") and c["metrics"].get("payload") is not None
    ]
    if not payload:
        return []
    margins = {
        c["subject"]: as_float(c["margin"])
        for c in a["checks"]
        if c["requirement"] == "payload_min"
    }
    if any(c["name"] in margins for c in payload):
        # the tightest against its own requirement, which need not be the smallest force
        worst = min((c for c in payload if c["name"] in margins), key=lambda c: margins[c["name"]])
        lead = f"Payload is tightest against its requirement in case {worst['name']}"
    elif all(isinstance(c["metrics"].get("payload_carried"), (int, float)) for c in payload):
        # the case that sets the payload objective: the least payload mass carried
        worst = min(payload, key=lambda c: as_float(c["metrics"]["payload_carried"]))
        lead = f"The smallest payload mass is carried in case {worst['name']}"
    else:
        worst = min(payload, key=lambda c: as_float(c["metrics"]["payload"]))
        lead = f"The smallest payload force is in case {worst['name']}"
    value = as_float(worst["metrics"]["payload"])
    carried = worst["metrics"].get("payload_carried")
    kg = ""
    if isinstance(carried, (int, float)) and math.isfinite(carried):
        # the force holds the case's fixed load and its share of the payload's weight: say
        # which payload mass that is (the sizing's objective reads it), not the force over g
        kg = (
            f" (with its fixed load, it carries a payload of {fmt(carried, 'kg')})"
            if carried >= 0
            else " (it carries no payload: the force falls short of the case's fixed load)"
        )
    elif project.case(worst["name"]).weight_equivalent and math.isfinite(value):
        kg = f" (the weight of {fmt(value / G0, 'kg')} at standard gravity)"
    text = f"{lead}: {fmt(value, 'N')}{kg}"
    if worst["limiting_joint"]:
        text += f", limited by joint {worst['limiting_joint']}: {_limiting_reason(a, worst)}"
    # the headline: the payload mass every case carries (the sizing's payload objective), which
    # the tightest margin above need not name
    finite = carried_payloads(a)
    if len(finite) > 1:
        least = min(finite, key=lambda k: finite[k])
        head = (
            f"The design carries no payload: case {least} does not carry its own fixed load."
            if finite[least] < 0
            else f"The design carries a payload of at least {fmt(finite[least], 'kg')} in every "
            f"payload case (the least, in case {least})."
        )
        return [head, text + "."]
    return [text + "."]


def outcome_section(a: dict, project) -> Section:
    """The outcome in plain words: missed requirements, what limits payload, self-locking joints."""
    checks = a["checks"]
    missed = [c for c in checks if not c["ok"]]
    name = a["design"]
    if not missed:
        words = [f"The design “{name}” meets all {len(checks)} requirements."]
    else:
        items = "; ".join(
            f"{label} {check_value(c, 'achieved')} against {check_value(c, 'limit')} ({_margin(c)})"
            for c, label in _worst_first(a, missed)
        )
        words = [
            f"The design “{name}” misses {len(missed)} of {len(checks)} requirements: {items}."
        ]
    words += _payload_words(a, project)
    words += [_impact_words(c) for c in a["cases"] if c["kind"] == "impact"]
    locking = [j for j in a["joints"] if j["self_locking"]]
    if locking:
        names = ", ".join(
            f"{j['joint']} (backward efficiency {number(j['eta_backward'], 3)})" for j in locking
        )
        words.append(
            f"Self-locking joints: {names}. They hold their load unpowered and cannot be "
            "pushed back by a person or an obstacle."
        )
    else:
        words.append("No joint is self-locking: every transmission can be back-driven by its load.")
    cost = (
        f" and cost {fmt(a['total_cost'])} (catalog currency units)"
        if as_float(a.get("total_cost", 0.0)) > 0
        else ""
    )
    words.append(f"Actuator mass {fmt(a['total_mass'], 'kg')}{cost} in total.")
    cls = "verdict" if not missed else "verdict bad"
    body = f'<div class="{cls}">' + "".join(paragraph(w) for w in words) + "</div>"
    return Section("outcome", "Outcome", body)


def _grouped_rows(rows: list, subjects: list[str], a: dict, project) -> list:
    """``rows`` (one per subject, in order) with the poses of each region case together under a
    :class:`Group` row naming the region, its poses and its worst pose; other rows unchanged."""
    regions = a.get("regions") or {}
    if not regions or project is None:
        return rows
    index: dict[str, list[int]] = {}
    for k, s in enumerate(subjects):
        index.setdefault(s, []).append(k)
    out: list = []
    for region, names in region_groups(list(dict.fromkeys(subjects)), project):
        picked = [rows[k] for n in names for k in index[n]]
        if not region:
            out += picked
            continue
        info = regions.get(region, {})
        out.append(
            Group(
                f"{region}: a region of {info.get('poses', len(names))} poses; the worst pose "
                f"decides ({info.get('case', '—')}, margin {pct(info.get('margin'))})"
            )
        )
        for row in picked:
            first = row[0]
            text = first.text if isinstance(first, Cell) else str(first)
            out.append([Cell(text, "grouped", first.data if isinstance(first, Cell) else ())])
            out[-1] += row[1:]
    return out


def requirements_section(a: dict, project=None) -> Section:
    """Every requirement, achieved value, limit and relative margin; with ``project``, the poses
    of a region case grouped under their region."""
    rows = []
    for c in a["checks"]:
        key = (("check", f"{c['subject']}:{c['requirement']}"),)
        rows.append(
            [
                c["subject"],
                c["requirement"].replace("_", " "),
                Cell(check_value(c, "achieved"), "num", key + (("field", "achieved"),)),
                Cell(check_value(c, "limit"), "num", key + (("field", "limit"),)),
                Cell(_margin(c), "num", key + (("field", "margin"),)),
                Cell("met" if c["ok"] else "MISSED", "ok" if c["ok"] else "bad"),
            ]
        )
    head = ["subject", "requirement", "achieved", "limit", "margin", "status"]
    caption = (
        "Margin = (achieved − limit)/|limit| for a minimum, "
        "(limit − achieved)/|limit| for a maximum; a requirement is met when its "
        "margin is ≥ 0; past +100 %, a minimum's margin is shown as achieved ÷ limit "
        '("2.5× limit"). IMF values are dimensionless.'
    )
    if any(c.get("margin_worst") is not None for c in a["checks"]):
        # efficiency bands (docs/metrics.md): each margin at nominal and at the worst end
        for r, c in zip(rows, a["checks"], strict=True):
            r[5:5] = [
                Cell(check_value(c, "achieved_nominal"), "num"),
                Cell(margin_text(c["margin_nominal"], c["limit"], c.get("sense")), "num"),
                Cell(check_value(c, "achieved_worst"), "num"),
                Cell(margin_text(c["margin_worst"], c["limit"], c.get("sense")), "num"),
            ]
        head[5:5] = ["nominal η", "margin", "worst end of the band", "margin"]
        judged = (
            "the worst end (the project requires the whole band)"
            if str(a.get("efficiency", "")).startswith("worst")
            else "the nominal efficiencies (the project does not require the band)"
        )
        caption += (
            " The stages' efficiencies have bands: each requirement is shown at the nominal "
            "efficiencies and at the end of the band that is worst for it (docs/metrics.md, "
            f"Efficiency bands); achieved, margin and status are at {judged}."
        )
    rows = _grouped_rows(rows, [c["subject"] for c in a["checks"]], a, project)
    body = table(head, rows, caption=caption)
    return Section("requirements", "Requirements versus achieved", body)


def binding_section(a: dict, count: int = 3) -> Section:
    """The requirements with the smallest margins and the joint that sets each; a region of
    poses counts once, by its worst pose (named)."""
    order = _worst_first(a, a["checks"])[:count]
    cases = {c["name"]: c for c in a["cases"]}
    joints = [j["joint"] for j in a["joints"]]
    rows = []
    for c, label in order:
        case = cases.get(c["subject"])
        if case and case.get("limiting_joint"):
            by = case["limiting_joint"]
        else:
            by = c["subject"] if c["subject"] in joints else "—"
        rows.append([label, Cell(_margin(c), "num"), by])
    body = paragraph(
        "These requirements are closest to their limits (or furthest past them): "
        "any change of the design or the assumptions moves them first."
    ) + table(["requirement", "margin", "set by joint"], rows)
    return Section("binding", "Binding constraints", body)
