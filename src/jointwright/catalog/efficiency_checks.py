"""What every efficiency model shares: checking a parameter against its interval (an
:class:`~jointwright.errors.InputError` naming the file and field of the model's table), and the
``pair``/``describe`` of a model that does not depend on the ratio.

The models themselves live in :mod:`.efficiency` (constant, Coulomb, proportional, basic-train
planetary, table) and :mod:`.thread_efficiency` (power screw, worm).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError

DEG = math.pi / 180.0

#: (file, field) of a model built from Python, used in error messages
API_ORIGIN = ("<api>", "efficiency")


def check_number(
    model: Any,
    name: str,
    lo: float,
    hi: float,
    *,
    lo_open: bool,
    hi_open: bool,
    angle: bool = False,
) -> float:
    """Check ``model.<name>`` is a real number in the interval; store and return it as float.

    Angles are checked in rad and shown in degrees in the message.
    """
    value = getattr(model, name)
    file, where = model.origin
    scale, unit = (1 / DEG, "°") if angle else (1.0, "")
    left, right = "(" if lo_open else "[", ")" if hi_open else "]"
    interval = f"{left}{lo * scale:g}{unit}, {hi * scale:g}{unit}{right}"
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(file, f"{where}.{name}", f"must be a number in {interval}, got {value!r}")
    value = float(value)
    ok = (value > lo if lo_open else value >= lo) and (value < hi if hi_open else value <= hi)
    if not ok or math.isnan(value):
        hint = ' (a plain number is read as radians; write e.g. "5 deg")' if angle else ""
        raise InputError(
            file, f"{where}.{name}", f"must be in {interval}, got {value * scale:g}{unit}{hint}"
        )
    object.__setattr__(model, name, value)
    return value


def model_error(model: Any, name: str, rule: str) -> InputError:
    """An InputError at ``<model's table>.<name>`` (the table itself when ``name`` is empty)."""
    file, where = model.origin
    return InputError(file, f"{where}.{name}" if name else where, rule)


def constant_pair(ratio: Any, forward: float, backward: float) -> tuple[np.ndarray, np.ndarray]:
    """``(forward, backward)`` filled to the shape of ``ratio``."""
    shape = np.shape(ratio)
    return np.full(shape, forward), np.full(shape, backward)


def pair_summary(model: Any) -> str:
    """``forward 0.503, backward 0.026[, self-locking]`` for a ratio-independent model."""
    f, b = (float(x) for x in model.pair(1.0))
    return f"forward {f:.3f}, backward {b:.3f}" + (", self-locking" if b <= 0 else "")
