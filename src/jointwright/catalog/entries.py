"""Reading the fields of one catalog entry (a motor, a stage frame) from a TOML table or a CSV
row: the rules every entry shares (known keys, a non-empty name, quantities with their sign,
one rating not above another). The entries themselves are read in :mod:`.io` (motors, motor
families) and :mod:`.stage_table` (stage types and their frames).
"""

from __future__ import annotations

from dataclasses import MISSING, fields
from typing import Any

from ..errors import InputError, unknown_name
from ..tomlfile import Table


def read_values(t: Table, spec: dict[str, tuple[str, str]], cls) -> dict[str, Any]:
    """Read every field of ``spec`` present in ``t`` (required when ``cls`` has no default)."""
    defaults = {f.name: f.default for f in fields(cls)}
    out = {}
    for key, (dim, sign) in spec.items():
        if t.has(key) or defaults[key] is MISSING:
            out[key] = t.quantity(key, dim, sign=sign)
    return out


def entry_name(t: Table, default: str | None = None) -> str:
    """The entry's ``name`` (stripped, not empty); ``default`` when given and none is set."""
    if default is not None and not t.has("name"):
        return default
    name = t.text("name")
    if not name.strip():
        raise InputError(t.file, t.field("name"), "must not be empty")
    return name.strip()


def at_most(t: Table, kw: dict, small: str, big: str, unit: str) -> None:
    """``kw[small]`` must not exceed ``kw[big]`` (a continuous rating and its peak)."""
    if kw[small] > kw[big]:
        raise InputError(
            t.file,
            t.field(small),
            f"must not exceed {big} ({kw[big]:g} {unit}), got {kw[small]:g} {unit}",
        )


def check_entry_keys(t: Table, allowed) -> None:
    """Unknown keys are typos until proven otherwise."""
    for key in t.data:
        if key not in allowed:
            raise unknown_name(t.file, t.field(key), key, allowed)
