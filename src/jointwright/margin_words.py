"""Requirement checks in words, in one place for every layer that shows them (the terminal, the
report, the sizing result's binding requirements): a margin as an architect reads it at a
glance, and a region of poses folded into its worst pose."""

from __future__ import annotations

import math

#: a margin beyond this (+100 %: the achieved value is twice a minimum) reads as a multiple
MULTIPLE_FROM = 1.0
#: multiples from this one on read "> 100× limit" (a life past a century of the required)
MULTIPLE_SHOWN_MAX = 100.0


def margin_text(margin, limit=None, sense: str | None = None, *, minus: str = "−") -> str:
    """A requirement's relative margin as an architect reads it at a glance: "+12.3 %" up to
    +100 %; beyond that, a minimum met many times over reads as the achieved value's multiple
    of the limit, "3.24× limit", and from 100 times on "> 100× limit" (a gear life of
    10⁶ h against 10,000 h is not "+9900.0 %"). The multiple needs a positive limit of a
    "min" requirement (margin = achieved / limit − 1); any other margin stays in %. None and
    NaN are "—"; infinities "+∞ %" / "−∞ %"."""
    if margin is None:
        return "—"
    m = float({"inf": math.inf, "-inf": -math.inf}.get(margin, margin))
    if math.isnan(m):
        return "—"
    if math.isinf(m):
        return "+∞ %" if m > 0 else f"{minus}∞ %"
    lim = None if limit is None else float({"inf": math.inf}.get(limit, limit))
    if m > MULTIPLE_FROM and sense == "min" and lim is not None and 0.0 < lim < math.inf:
        times = 1.0 + m
        if times >= MULTIPLE_SHOWN_MAX:
            return f"> {MULTIPLE_SHOWN_MAX:g}× limit"
        return f"{times:.3g}× limit"
    return f"{100 * m:+.1f} %".replace("-", minus)


def _field(c, key: str):
    return c[key] if isinstance(c, dict) else getattr(c, key)


def _margin_value(x) -> float:
    if x is None:
        return math.nan
    return float({"inf": math.inf, "-inf": -math.inf}.get(x, x))


def region_of(subject: str, regions: dict) -> str:
    """The region case a check's subject is a pose of ("" for any other subject): a region's
    poses are named ``REGION@k`` (case_table; "@" is not allowed in a user's case name)."""
    head = subject.split("@", 1)[0]
    return head if "@" in subject and head in regions else ""


def worst_per_region(checks: list, regions: dict) -> list[tuple]:
    """``checks`` (dicts or records with subject, requirement, margin) with the poses of each
    region folded into one entry per region and requirement: that of the pose with the smallest
    margin, at the place of the region's first pose. Returns [(check, region or "", poses)]."""
    kept: dict = {}
    order: list = []
    for c in checks:
        region = region_of(str(_field(c, "subject")), regions)
        key = (region, _field(c, "requirement")) if region else (None, id(c))
        if key not in kept:
            order.append(key)
            kept[key] = c
        elif _margin_value(_field(c, "margin")) < _margin_value(_field(kept[key], "margin")):
            kept[key] = c
    out = []
    for key in order:
        region = key[0] or ""
        poses = int(regions[region].get("poses", 0)) if region else 1
        out.append((kept[key], region, poses))
    return out


def check_label(c, region: str = "", poses: int = 1) -> str:
    """A requirement check in words, "subject: requirement"; a region's worst pose as
    "REGION: requirement (worst of N poses: REGION@k)"."""
    words = str(_field(c, "requirement")).replace("_", " ")
    if not region:
        return f"{_field(c, 'subject')}: {words}"
    return f"{region}: {words} (worst of {poses} poses: {_field(c, 'subject')})"


def binding_labels(checks, regions: dict, count: int = 3, *, minus: str = "-") -> list[str]:
    """The requirements with the smallest finite margins, a region of poses once by its worst
    pose (named): "trot: rating use max (margin +1.8 %)"."""
    finite = [c for c in checks if math.isfinite(_margin_value(_field(c, "margin")))]
    items = worst_per_region(finite, regions or {})
    items.sort(key=lambda item: _margin_value(_field(item[0], "margin")))
    return [
        f"{check_label(c, region, poses)} (margin "
        f"{margin_text(_field(c, 'margin'), _field(c, 'limit'), _field(c, 'sense'), minus=minus)})"
        for c, region, poses in items[:count]
    ]
