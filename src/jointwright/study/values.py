"""The values a study parameter takes.

Listed (with units), a grid, or seeded random draws between two endpoints; one dimension each.
"""

from __future__ import annotations

import math
import re
from typing import Any

from ..errors import InputError
from ..tomlfile import Table

#: version of the study file format this module reads


# ------------------------------------------------------------------------ value sources

#: largest number of cases one study may expand to
MAX_CASES = 1_000_000
_NUMBER_FIRST = re.compile(r"\s*[-+]?(\d|\.\d|inf|nan)", re.IGNORECASE)


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _as_quantity(v: Any, file: str, field: str):
    """(magnitude, unit text or None, dimensionality or None) of a number or quantity string."""
    if _is_number(v):
        if isinstance(v, int) and abs(v) > 2**1023:
            raise InputError(file, field, f"must be finite, got a {len(str(abs(v)))}-digit number")
        if not math.isfinite(v):
            raise InputError(file, field, f"must be finite, got {v!r}")
        return float(v), None, None
    if not isinstance(v, str):
        raise InputError(
            file, field, f"must be a number or a quantity string such as '2 kg', got {v!r}"
        )
    try:
        return float(v), None, None
    except ValueError:
        pass
    if not _NUMBER_FIRST.match(v):
        raise InputError(
            file, field, f"must be a number or a quantity string such as '2 kg', got {v!r}"
        )
    from ..units import registry

    try:
        q = registry().Quantity(v.strip())
    except Exception:
        raise InputError(file, field, f"cannot read {v!r} as a number with a unit") from None
    if not math.isfinite(float(q.magnitude)):
        raise InputError(file, field, f"must be finite, got {v!r}")
    return float(q.magnitude), format(q.units, "~C"), q.dimensionality


def _same_dimension(items: list, file: str, field: str) -> None:
    dims = {str(d) for _, _, d in items}
    if len(dims) > 1:
        if "None" in dims:
            raise InputError(
                file,
                field,
                "mixes plain numbers and quantities with units; write every value with its unit",
            )
        raise InputError(
            file, field, f"values have different dimensions: {', '.join(sorted(dims))}"
        )


def _listed(values: list, file: str, field: str) -> list:
    if not values:
        raise InputError(file, field, "must list at least one value")
    items = [_as_quantity(v, file, f"{field}[{i}]") for i, v in enumerate(values)]
    _same_dimension(items, file, field)
    return list(values)


def _endpoints(t: Table, keys: tuple[str, str], scale: str) -> tuple[float, float, str | None]:
    a, b = (t.raw(k) for k in keys)
    qa = _as_quantity(a, t.file, t.field(keys[0]))
    qb = _as_quantity(b, t.file, t.field(keys[1]))
    _same_dimension([qa, qb], t.file, t.field(keys[1]))
    lo, hi, unit = qa[0], qb[0], qa[1]
    if unit is not None and qb[1] != unit:
        from ..units import registry

        hi = float(registry().Quantity(b.strip()).to(unit).magnitude)
    if scale == "log" and not (lo > 0 and hi > 0):
        raise InputError(
            t.file,
            t.field(keys[0]),
            f"log scale needs {keys[0]} and {keys[1]} > 0, got {a!r}, {b!r}",
        )
    return lo, hi, unit


def _count(t: Table, key: str) -> int:
    n = t.raw(key)
    if not isinstance(n, int) or isinstance(n, bool) or n < 1:
        raise InputError(t.file, t.field(key), f"must be a whole number >= 1, got {n!r}")
    if n > MAX_CASES:
        got = n if n < 10**12 else f"a {len(str(n))}-digit number"
        raise InputError(
            t.file,
            t.field(key),
            f"must be at most {MAX_CASES} (the most cases a study may have), got {got}",
        )
    return n


def _written(xs, unit: str | None) -> list:
    """Round to 12 significant digits (so 0.30000000000000004 reads 0.3) and re-attach the unit."""
    out = [float(f"{float(x):.12g}") for x in xs]
    return out if unit is None else [f"{x!r} {unit}" for x in out]


def _grid(t: Table, file: str) -> list:
    """``{start, stop, num, scale}``: ``num`` points from start to stop inclusive."""
    import numpy as np

    scale = t.text("scale", "linear", choices=("linear", "log"))
    start, stop, unit = _endpoints(t, ("start", "stop"), scale)
    num = _count(t, "num")
    if num > 1 and start == stop:
        raise InputError(
            file, t.field("stop"), f"must differ from start when num > 1, got {start!r}"
        )
    xs = np.geomspace(start, stop, num) if scale == "log" else np.linspace(start, stop, num)
    return _written(xs, unit)


def _random(t: Table, file: str) -> list:
    """``{low, high, count, seed, scale}``: uniform samples (of the log when scale = log)."""
    import numpy as np

    scale = t.text("scale", "linear", choices=("linear", "log"))
    low, high, unit = _endpoints(t, ("low", "high"), scale)
    if not low < high:
        raise InputError(
            file, t.field("high"), f"must be greater than low, got low={low!r}, high={high!r}"
        )
    count = _count(t, "count")
    seed = t.raw("seed")
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise InputError(file, t.field("seed"), f"must be a whole number >= 0, got {seed!r}")
    rng = np.random.default_rng(seed)
    if scale == "log":
        xs = np.exp(rng.uniform(math.log(low), math.log(high), count))
    else:
        xs = rng.uniform(low, high, count)
    return _written(xs, unit)
