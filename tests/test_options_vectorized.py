"""The option table built by numpy over motor × stack equals the per-actuator formulas.

Reference: jointwright.design.actuator_row on each drivetrain.Actuator (the formulas that
docs/metrics.md and the drivetrain tests check against published values); the table must give
the same floating-point numbers, field by field, for one-, two- and mixed-length stacks, with
self-locking stages and motors without electrical data (NaN fields).
"""

from __future__ import annotations

import dataclasses
from dataclasses import fields
from importlib import resources

import numpy as np
import pytest

from jointwright.design import DesignArrays, actuator_row
from jointwright.options import ActuatorList, build_table
from jointwright.project import load_project


def _example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        return load_project(folder / "project.toml")


@pytest.mark.parametrize(
    "name, stages, bare",
    [("leg", 1, False), ("leg", 2, True), ("arm", 2, False), ("quadruped", 2, False)],
)
def test_table_rows_equal_the_per_actuator_formulas(name, stages, bare):
    """``bare``: the first two motors lose their electrical and thermal data (NaN fields); the
    arm's catalog has self-locking stages (150,240 of its 567,860 two-stage options)."""
    project = dataclasses.replace(_example(name), max_stages=stages)
    if bare:
        motors = list(project.catalog.motors)
        for k in range(2):
            motors[k] = dataclasses.replace(
                motors[k],
                torque_constant=None,
                resistance=None,
                bus_voltage=None,
                thermal_resistance=None,
                thermal_time_constant=None,
            )
        catalog = dataclasses.replace(project.catalog, motors=tuple(motors))
        project = dataclasses.replace(project, catalog=catalog)
    table = build_table(project)
    assert isinstance(table.actuators, ActuatorList) and len(table.actuators) == len(table)
    rng = np.random.default_rng(stages)
    rows = np.unique(np.concatenate([rng.integers(0, len(table), 1500), [0, len(table) - 1]]))
    if bare:
        assert np.isnan(table.rows["torque_constant"][rows]).any()
    if name == "arm":
        assert table.rows["self_locking"][rows].any()
    for i in rows:
        ref = actuator_row(table.actuators[int(i)])
        for f in fields(DesignArrays):
            # per-stage-slot fields (gear life ratings) are small arrays; NaN equals NaN
            got = np.asarray(table.rows[f.name][i], dtype=float)
            want = np.asarray(ref[f.name], dtype=float)
            assert np.array_equal(got, want, equal_nan=True), (f.name, int(i))
    # motor-major order, every motor with every stack
    assert table.actuators[len(table) - 1].motor.name == table.motors[-1]
    assert table.motor[0] == 0 and table.motor[-1] == len(table.motors) - 1
    assert table.actuators[-1] == table.actuators[len(table) - 1]
    with pytest.raises(IndexError):
        table.actuators[len(table)]


def test_option_fields_have_one_source():
    """design's field tables name every DesignArrays field once (motor, stack or combined), and
    the option table builds exactly those fields: the motor and stack ones taken from design."""
    from jointwright.design import _ACTUATOR_FIELDS, COMBINED_FIELDS, MOTOR_FIELDS, STACK_FIELDS

    parts = [set(MOTOR_FIELDS), set(STACK_FIELDS), set(COMBINED_FIELDS)]
    assert sum(len(p) for p in parts) == len(set().union(*parts))  # disjoint
    names = {f.name for f in fields(DesignArrays)}
    assert set().union(*parts) == names == set(_ACTUATOR_FIELDS)
    table = build_table(dataclasses.replace(_example("leg"), max_stages=1))
    assert set(table.rows) == names
