"""Fields of the plain dicts handed to the report (a sizing result, a frontier, a study): a
missing or mistyped field is one InputError naming the file and the field."""

from __future__ import annotations

import math

from ..errors import InputError


def need(data, key: str, kind, file: str, where: str):
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


def optional(data, key: str, file: str, where: str):
    """A number or None (JSON null: not assessed / rules the option out)."""
    return None if data.get(key) is None else need(data, key, float, file, where)


def numbers(data, key: str, file: str, where: str, size: int | None = None) -> list[float]:
    """A list of numbers (``size`` of them when given)."""
    values = need(data, key, list, file, where)
    if size is not None and len(values) != size:
        raise InputError(file, f"{where}{key}", f"must have {size} entries, got {len(values)}")
    return [need({key: v}, key, float, file, f"{where}{key}[{i}]") for i, v in enumerate(values)]
