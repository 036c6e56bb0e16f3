"""Option generation and the per-joint filters.

ISO 3 Renard R20 series [pub]: 1.00 1.12 1.25 1.40 1.60 1.80 2.00 2.24 2.50 2.80 3.15 3.55 4.00
4.50 5.00 5.60 6.30 7.10 8.00 9.00 per decade. Filters are checked against the evaluator and the
project's own checks: an option a filter removes must miss the requirement in every design.
"""

from __future__ import annotations

import dataclasses
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.catalog.model import Catalog
from jointwright.drivetrain import Actuator
from jointwright.errors import InputError
from jointwright.options import (
    build_table,
    joint_candidates,
    matches_pin,
    option_key,
    preferred_ratios,
)
from jointwright.problem import checks
from jointwright.solve.model import SizingModel
from test_solve_search import example


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def test_r20_grid_inside_a_range():
    # ISO 3 R20 [pub]: between 3 and 12 the series gives 3.15 … 11.2
    assert preferred_ratios(3.0, 12.0) == (
        3.15,
        3.55,
        4.0,
        4.5,
        5.0,
        5.6,
        6.3,
        7.1,
        8.0,
        9.0,
        10.0,
        11.2,
    )
    assert preferred_ratios(4.6, 4.9) == (4.6,)  # no grid value inside: the low end


@settings(max_examples=40, deadline=None)
@given(low=st.floats(1.0, 200.0), factor=st.floats(1.0, 5.0))
def test_r20_values_stay_in_range_and_ascend(low, factor):
    r = preferred_ratios(low, low * factor)
    assert all(low * (1 - 1e-9) <= v <= low * factor * (1 + 1e-9) for v in r)
    assert list(r) == sorted(set(r))


def test_table_counts_every_motor_and_stack(leg):
    small = dataclasses.replace(
        leg,
        catalog=Catalog(motors=leg.catalog.motors[:2], stages=leg.catalog.stages[:2]),
        max_stages=2,
    )
    singles = sum(len(s.frames) * len(s.ratios) for s in small.catalog.stages)
    table = build_table(small)
    assert len(table) == 2 * (1 + singles + singles**2)
    keys = {option_key(a) for a in table.actuators}
    assert len(keys) == len(table)  # every option is distinct
    a = table.actuators[5]
    arrays = table.arrays(np.array([[5, 5, 5]]))
    assert arrays.mass[0, 0] == pytest.approx(a.mass) and arrays.ratio[0, 2] == pytest.approx(
        a.ratio
    )


def test_stage_kinds_and_exclusions(leg):
    p = dataclasses.replace(leg, stage_kinds=("planetary",), max_stages=1)
    table = build_table(p, exclude=[leg.catalog.motors[0].name, "Orbit-1"])
    kinds = {s.stage.kind for a in table.actuators for s in a.stages}
    assert kinds == {"planetary"}
    assert leg.catalog.motors[0].name not in table.motors
    assert all(s.frame.name != "Orbit-1" for a in table.actuators for s in a.stages)


def test_too_many_options_is_an_input_error(leg, monkeypatch):
    """Above the ceiling the table is refused with one message naming the field and the rule,
    with stack dominance (the count after it) and without."""
    import jointwright.options as options

    monkeypatch.setattr(options, "MAX_OPTIONS", 5_000)
    for dominance in (False, True):
        with pytest.raises(InputError, match="max_stages") as err:
            build_table(dataclasses.replace(leg, max_stages=2), dominance=dominance)
        assert "exceed the limit of 5000" in str(err.value)
    assert len(build_table(dataclasses.replace(leg, max_stages=1))) <= 5_000


def test_pins_match_motor_and_stages(leg):
    m = leg.catalog.motors[0]
    a = Actuator(m, ())
    assert matches_pin(a, {"motor": m.name})
    assert matches_pin(a, {"stages": []})
    assert not matches_pin(a, {"motor": leg.catalog.motors[1].name})
    assert not matches_pin(a, {"stages": [{"stage": "Orbit"}]})


def test_filters_only_remove_options_that_miss_a_requirement(leg):
    """Every option a per-joint filter removes fails that joint's checks in a random design."""
    p = dataclasses.replace(leg, max_stages=1)
    table = build_table(p)
    n = len(p.robot.actuated)
    model = SizingModel(p, table, [np.arange(len(table))] * n)
    cands = joint_candidates(p, table, model.evaluator)
    rng = np.random.default_rng(1)
    for j, name in enumerate(p.robot.actuated):
        removed = np.setdiff1d(np.arange(len(table)), cands.index[j])
        if removed.size == 0:
            continue
        idx = rng.integers(0, len(table), (removed.size, n))
        idx[:, j] = removed
        arrays = table.arrays(idx)
        ev = model.evaluator.evaluate(arrays, detail=False)
        own = [c for c in checks(p, arrays, ev) if c.subject == name or c.name == "speed_min"]
        ok = np.ones(removed.size, dtype=bool)
        for c in own:
            ok &= c.ok
        assert not ok.any()
        assert sum(cands.removed[j].values()) == removed.size


def test_no_usable_motor_is_an_input_error_not_a_crash(leg):
    # every motor excluded: one line naming the field, no empty table reaching the filters
    names = [m.name for m in leg.catalog.all_motors()]
    with pytest.raises(InputError, match="every motor of the catalog is excluded"):
        build_table(leg, exclude=names)


def test_no_drive_can_feed_a_motor_is_an_input_error():
    quad = example("quadruped")
    assert quad.drives, "the bundled quadruped fixes a drive per joint"
    bare = tuple(dataclasses.replace(m, torque_constant=None) for m in quad.catalog.motors)
    p = dataclasses.replace(
        quad, catalog=dataclasses.replace(quad.catalog, motors=bare, families=())
    )
    with pytest.raises(InputError, match="torque_constant") as err:
        build_table(p)
    assert err.value.field == "drives"
