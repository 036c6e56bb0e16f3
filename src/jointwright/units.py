"""Quantity parsing: numbers or strings with units ("0.45 kg*cm^2", "3000 rpm") to SI floats.

Plain numbers are taken to be in the SI unit of the expected dimension (kg, m, N·m, rad/s, ...).
Temperatures are the one exception to "SI inside": they are kept in degrees Celsius, and a plain
number is read as °C. The pint registry is built on first use so that importing is cheap.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Any

from .errors import InputError

#: expected dimension name -> SI unit (pint expression) used for conversion and messages
SI_UNITS: dict[str, str] = {
    "dimensionless": "dimensionless",
    "mass": "kg",
    "length": "m",
    "area": "m**2",
    "angle": "rad",
    "time": "s",
    "lifetime": "s",  # a rated or required life: hours by habit, so its unit must be written
    "force": "N",
    "torque": "N*m",
    "inertia": "kg*m**2",
    "angular_velocity": "rad/s",
    "angular_acceleration": "rad/s**2",
    "velocity": "m/s",
    "acceleration": "m/s**2",
    "voltage": "V",
    "current": "A",
    "resistance": "ohm",
    "power": "W",
    "energy": "J",
    "torque_constant": "N*m/A",
    "thermal_resistance": "K/W",
    "stiffness_torsional": "N*m/rad",
    "stiffness_linear": "N/m",
    "temperature": "degC",
    "screw_lead": "m/rad",
    "ratio": "dimensionless",
}


@lru_cache(maxsize=1)
def registry():
    """The shared pint registry (built once, on first use)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    if "rpm" not in ureg:
        ureg.define("rpm = revolution / minute")
    return ureg


def quantity(value: Any, dimension: str, *, file: str = "<api>", field: str = "value") -> float:
    """Convert ``value`` (number or string with unit) to a float in the SI unit of ``dimension``.

    Raises :class:`InputError` naming ``file`` and ``field`` when the value is not a number,
    cannot be parsed, has the wrong dimension, or is not finite.
    """
    if dimension not in SI_UNITS:
        raise KeyError(f"unknown dimension {dimension!r}")
    si = SI_UNITS[dimension]
    if dimension == "lifetime" and plain_number(value):
        raise InputError(
            file,
            field,
            f"needs its unit, got {value!r}: a life is commonly stated in hours, and a plain "
            'number would be read as seconds; write e.g. "20000 h" (in a catalog CSV table, '
            "that in the cell or the unit in the header: rated_life [h])",
        )
    if isinstance(value, bool):
        raise InputError(file, field, f"must be a number or a quantity in {si}, got {value!r}")
    if isinstance(value, (int, float)):
        try:
            out = float(value)
        except OverflowError:  # a whole number beyond float range (about 1.8e308)
            digits = len(str(abs(value)))
            raise InputError(file, field, f"must be finite, got a {digits}-digit number") from None
    elif isinstance(value, str):
        text = value.strip()
        try:
            out = float(text)
        except ValueError:
            out = _parse(text, dimension, si, file, field)
    else:
        raise InputError(file, field, f"must be a number or a quantity in {si}, got {value!r}")
    if not math.isfinite(out):
        raise InputError(file, field, f"must be finite, got {value!r}")
    return out


def plain_number(value: Any) -> bool:
    """A number, or a string that is only a number (no unit)."""
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        return True
    if isinstance(value, str):
        try:
            float(value.strip())
        except ValueError:
            return False
        return True
    return False


_SUPERSCRIPTS = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")


def pretty_unit(text: str) -> str:
    """A unit (or a quantity) as written for code, "kg*m**2", as a reader writes it, "kg·m²":
    powers as superscripts, products as a middle dot. For display only (not parsed back)."""
    out = re.sub(r"\*\*\s*(-?\d+)", lambda m: m.group(1).translate(_SUPERSCRIPTS), text)
    out = re.sub(r"\^\s*(-?\d+)", lambda m: m.group(1).translate(_SUPERSCRIPTS), out)
    return out.replace("*", "·")


#: "<number> <unit>" with a unit that starts with a letter: the unit's factor is looked up once
_NUMBER_UNIT = re.compile(
    r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)"
    r"\s*([A-Za-zµ°Ω][A-Za-z0-9_µ°Ω*/^. ]*?)\s*"
)


@lru_cache(maxsize=512)
def _unit_factor(unit: str, dimension: str) -> float | None:
    """SI value of one ``unit`` for ``dimension`` (None when pint refuses it: the full parse then
    gives the message). Temperatures are affine, not a factor: never here."""
    if dimension == "temperature":
        return None
    try:
        return _parse_pint(f"1 {unit}", dimension, SI_UNITS[dimension], "<unit>", "unit")
    except InputError:
        return None


def _parse(text: str, dimension: str, si: str, file: str, field: str) -> float:
    # Large projects hold tens of thousands of quantities; pint takes about a millisecond for
    # each, so "<number> <unit>" is read as number × (the unit's SI factor, found once).
    m = _NUMBER_UNIT.fullmatch(text)
    if m is not None and dimension != "temperature":
        factor = _unit_factor(m.group(2), dimension)
        if factor is not None:
            return float(m.group(1)) * factor
    return _parse_pint(text, dimension, si, file, field)


def _parse_pint(text: str, dimension: str, si: str, file: str, field: str) -> float:
    import pint

    ureg = registry()
    try:
        q = ureg.Quantity(text)
        if dimension == "temperature":
            return float(q.to("degC").magnitude)
        if dimension in ("dimensionless", "ratio"):
            if not q.dimensionless:
                raise pint.DimensionalityError(q.units, "dimensionless")
            return float(q.to("dimensionless").magnitude)
        return float(q.to(si).magnitude)
    except pint.DimensionalityError:
        raise InputError(
            file, field, f"must be a quantity convertible to {si}, got {text!r}"
        ) from None
    except Exception:
        raise InputError(file, field, f"cannot read {text!r} as a quantity in {si}") from None


def positive(value: Any, dimension: str, *, file: str = "<api>", field: str = "value") -> float:
    """Like :func:`quantity` but the result must be > 0."""
    out = quantity(value, dimension, file=file, field=field)
    if not out > 0:
        raise InputError(file, field, f"must be > 0 {SI_UNITS[dimension]}, got {value!r}")
    return out


def nonnegative(value: Any, dimension: str, *, file: str = "<api>", field: str = "value") -> float:
    """Like :func:`quantity` but the result must be >= 0."""
    out = quantity(value, dimension, file=file, field=field)
    if out < 0:
        raise InputError(file, field, f"must be >= 0 {SI_UNITS[dimension]}, got {value!r}")
    return out


def format_number(value, digits: int = 4, *, minus: str = "-", group: bool = True) -> str:
    """``value`` with ``digits`` significant digits for people to read.

    Infinities are written ∞ / −∞ (a self-locking holding capacity is infinite, never NaN);
    None and NaN are "—" (not assessed); strings "inf"/"-inf" from JSON count as infinities and
    other strings pass through. ``minus`` is the sign used for negative numbers; ``group``:
    numbers from 10^digits on in full with grouped thousands ("13,280"); off inside a list of
    numbers, where the commas separate the entries.
    """
    if value is None:
        return "—"
    if isinstance(value, str):
        value = {"inf": math.inf, "-inf": -math.inf}.get(value, value)
        if isinstance(value, str):
            return value
    v = float(value)
    if math.isnan(v):
        return "—"
    if math.isinf(v):
        return "∞" if v > 0 else f"{minus}∞"
    rounded = float(f"{v:.{digits}g}")
    if group and 10.0**digits <= abs(rounded) < GROUPED_MAX:
        # a large number in full with its thousands grouped ("13,280", not "1.328e+04"),
        # still rounded to ``digits`` significant digits
        return f"{rounded:,.0f}".replace("-", minus)
    return f"{v:.{digits}g}".replace("-", minus)


#: numbers from 10^digits up to this are written in full with grouped thousands
GROUPED_MAX = 1e9


#: lives past this many hours are shown as "> 10⁶ h" (over a century of running)
HOURS_SHOWN_MAX = 1e6


def format_hours(hours, *, minus: str = "-") -> str:
    """A life in hours for people to read: four significant digits (as every number shown) with
    thousands separated ("32,380 h", "850 h", "0.42 h"); lives beyond :data:`HOURS_SHOWN_MAX`
    (∞ included: an unloaded gear) are "> 10⁶ h"; None and NaN are "—"."""
    if hours is None:
        return "—"
    if isinstance(hours, str):
        hours = {"inf": math.inf, "-inf": -math.inf}.get(hours, hours)
        if isinstance(hours, str):
            return hours
    v = float(hours)
    if math.isnan(v):
        return "—"
    if v > HOURS_SHOWN_MAX:
        return "> 10⁶ h"
    if v < 0:
        return f"{minus}{format_hours(-v)}"
    v = float(f"{v:.4g}")  # four significant digits, then thousands separated
    return f"{v:,.0f} h" if v >= 1000.0 else f"{v:g} h"
