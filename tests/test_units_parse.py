"""Quantity strings read through the cached unit factor give exactly what pint gives for the
whole string (pint is the reference library for unit conversion here), and wrong units still
fail with the same message."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.units import SI_UNITS, _parse, _parse_pint, quantity

UNITS = [
    ("kg", "mass"),
    ("g", "mass"),
    ("deg", "angle"),
    ("N", "force"),
    ("N*m", "torque"),
    ("kg*m^2", "inertia"),
    ("kg*cm^2", "inertia"),
    ("rpm", "angular_velocity"),
    ("m/s", "velocity"),
    ("mm", "length"),
    ("km/h", "velocity"),
    ("mN*m/A", "torque_constant"),
    ("ohm", "resistance"),
    ("K/W", "thermal_resistance"),
    ("g*cm**2", "inertia"),
    ("degC", "temperature"),
    ("degF", "temperature"),
    ("kelvin", "temperature"),
]


@given(
    x=st.floats(-1e6, 1e6, allow_nan=False),
    unit=st.sampled_from(UNITS),
    style=st.sampled_from(["{x:.6g} {u}", "{x!r} {u}", "{x:.3e}{u}", "  {x:g}   {u} "]),
)
def test_same_value_as_pint(x, unit, style):
    u, dim = unit
    text = style.format(x=x, u=u).strip()
    assert _parse(text, dim, SI_UNITS[dim], "f", "x") == _parse_pint(
        text, dim, SI_UNITS[dim], "f", "x"
    )


@pytest.mark.parametrize(
    "text, dim, rule",
    [
        ("3 m", "mass", "convertible to kg"),
        ("3 N*m", "force", "convertible to N"),
        ("2 furlongs", "mass", "convertible to kg"),
        ("5 kg", "dimensionless", "dimensionless"),
    ],
)
def test_wrong_units_still_fail_with_the_rule(text, dim, rule):
    for _ in range(2):  # the second time through the factor cache
        with pytest.raises(InputError, match=rule):
            quantity(text, dim, file="p.toml", field="x")


def test_a_whole_number_beyond_float_range_is_one_error():
    with pytest.raises(InputError, match="must be finite, got a 400-digit number"):
        quantity(10**399, "mass", file="p.toml", field="requirements.total_mass_max")


def test_large_numbers_are_written_in_full_with_grouped_thousands():
    """Four significant digits as everywhere, but a cost of 13,280 reads "13,280", not
    "1.328e+04"; rounding that reaches the next power of ten is grouped as well; small and
    very large numbers keep their usual form [common practice in engineering tables]."""
    from jointwright.units import format_number

    assert format_number(13280.4) == "13,280"
    assert format_number(-45678.9, minus="−") == "−45,680"
    assert format_number(9999.5) == "10,000"
    assert format_number(1328.04) == "1328"
    assert format_number(1328.04, 3) == "1,330"
    assert format_number(2.54e-05) == "2.54e-05"
    assert format_number(1.2e9) == "1.2e+09"
    # inside a list of numbers the commas separate entries: no grouping there
    assert format_number(12000, group=False) == "1.2e+04"


def test_units_are_shown_as_a_reader_writes_them():
    """ISO 80000-1 (quantities and units, general) writes a product of units with a half-high
    dot and powers as superscripts [pub]: "kg*m**2" reads "kg·m²" wherever a study value is
    shown, and what the project loader parses is left as written."""
    from jointwright.units import pretty_unit, quantity

    assert pretty_unit("0.02 kg*m**2") == "0.02 kg·m²"
    assert pretty_unit("kg*m^2") == "kg·m²"
    assert pretty_unit("m/s**2") == "m/s²"
    assert pretty_unit("N*m/A") == "N·m/A"
    assert pretty_unit("4 kg") == "4 kg"
    assert quantity("0.02 kg*m**2", "inertia") == 0.02
