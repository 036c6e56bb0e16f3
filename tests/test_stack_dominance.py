"""Stage-stack dominance (stack_dominance.py, docs/optimizer.md "Stack dominance").

Two checks: (1) on the option fields themselves, every option the filter drops has a kept
option with the same unit whose every field is equal, or no worse in the direction the rule
states; (2) the sizing optimum with the filter equals exhaustive enumeration over the
unfiltered options (solve/enumerate.py) on random small instances with two-stage stacks, so a
wrong rule shows up as a different optimum.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_solve_search import agree, example, set_limits, small_catalog

from jointwright.options import build_table
from jointwright.stack_dominance import stack_rules, undominated

#: option fields (DesignArrays) and the stack rule each follows; the unit's own fields are equal
#: for the same unit, so they are checked as "equal"
OPTION_RULE = {
    "ratio": "ratio",
    "mass": "mass",
    "eta_forward": "eta_forward",
    "eta_backward": "eta_backward",
    "self_locking": "self_locking",
    "eta_forward_low": "eta_forward_low",
    "eta_forward_high": "eta_forward_high",
    "eta_backward_low": "eta_backward_low",
    "eta_backward_high": "eta_backward_high",
    "rotor_inertia": "inertia",
    "breakaway_torque": "breakaway",
    "breakaway_motor_side": "breakaway",
    "diameter": "diameter",
    "length": "length",
    "cost": "cost",
    "stiffness": "stiffness",
    "gear_peak_torque": "gear_peak_torque",
    "gear_continuous_torque": "gear_continuous_torque",
    "gear_momentary_torque": "gear_momentary_torque",
    "life_torque": "life_torque",
    "life_speed": "life_speed",
    "life_rated": "life_rated",
    "life_exponent": "life_exponent",
}


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def two_stage(leg, rng, inertia_monotone):
    p = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=2, kinds=2, ratios=2),
        max_stages=2,
        stage_kinds=None,
        objective={},
    )
    if inertia_monotone:
        p = dataclasses.replace(
            p, cases=tuple(c for c in p.cases if c.kind not in ("speed", "duty"))
        )
    return p


def _no_worse(a, b, rule) -> bool:
    a, b = np.asarray(a, float), np.asarray(b, float)
    same_nan = np.array_equal(np.isnan(a), np.isnan(b))
    a, b = np.nan_to_num(a, nan=0.0), np.nan_to_num(b, nan=0.0)
    if rule == "equal":
        return same_nan and bool(np.allclose(a, b, rtol=1e-11, atol=0.0))
    if rule == "low":
        return same_nan and bool(np.all(a <= b * (1 + 1e-12) + 1e-300))
    if rule == "high":
        return same_nan and bool(np.all(a >= b * (1 - 1e-12)))
    return rule == "ignore"


@pytest.mark.parametrize("seed", range(6))
def test_every_dropped_option_has_a_kept_option_no_worse_in_every_field(leg, seed):
    rng = np.random.default_rng(seed)
    project = two_stage(leg, rng, inertia_monotone=bool(seed % 2))
    rules = stack_rules(project)
    assert rules["inertia"] == ("low" if seed % 2 else "equal")
    full = build_table(project)
    kept = build_table(project, dominance=True)
    assert 0 < len(kept) <= len(full)
    units = full.actuators.units
    n_full, n_kept = len(full.actuators.stacks), len(kept.actuators.stacks)

    def key(stack):
        return tuple((x.stage.name, x.frame.name, x.ratio) for x in stack)

    kept_keys = {key(st) for st in kept.actuators.stacks}
    dropped = 0
    for u in range(len(units)):
        for s, stack in enumerate(full.actuators.stacks):
            if key(stack) in kept_keys:
                continue
            dropped += 1
            o = u * n_full + s
            found = False
            for k in range(n_kept):
                q = u * n_kept + k
                if all(
                    _no_worse(kept.rows[f][q], full.rows[f][o], rules[r])
                    for f, r in OPTION_RULE.items()
                ) and all(
                    _no_worse(kept.rows[f][q], full.rows[f][o], "equal")
                    for f in full.rows
                    if f not in OPTION_RULE
                ):
                    found = True
                    break
            assert found, f"option {full.actuators[o]} dropped without a dominating one"
    assert dropped == len(units) * (n_full - n_kept)
    if seed % 2:  # reversed stage orders are dropped once the inertia is monotone
        assert dropped > 0


def test_a_stack_is_kept_when_all_its_fields_tie_with_a_later_one_only():
    # two identical stacks: the first in order stays, the second goes; a third, better in one
    # "low" field and worse in a "high" one, is incomparable and stays
    parts = {
        "ratio": np.array([10.0, 10.0, 10.0]),
        "cost": np.array([5.0, 5.0, 4.0]),
        "gear_peak_torque": np.array([50.0, 50.0, 40.0]),
    }
    rules = {"ratio": "equal", "cost": "low", "gear_peak_torque": "high"}
    assert undominated(parts, rules).tolist() == [0, 2]
    with pytest.raises(KeyError):
        undominated(parts, {"ratio": "equal", "cost": "low"})


def test_reversed_stage_order_with_the_same_parts_is_dominated_when_inertia_is_monotone():
    # the same two stages in both orders: equal ratio, mass, efficiencies, cost; the order with
    # the smaller input inertia first and the stronger stage last wins when every reader of the
    # inertia prefers less (no speed or duty case)
    parts = {
        "ratio": np.array([12.0, 12.0]),
        "mass": np.array([0.5, 0.5]),
        "inertia": np.array([1e-6, 3e-6]),
        "gear_peak_torque": np.array([40.0, 25.0]),
    }
    low = {"ratio": "equal", "mass": "equal", "inertia": "low", "gear_peak_torque": "high"}
    assert undominated(parts, low).tolist() == [0]
    assert undominated(parts, dict(low, inertia="equal")).tolist() == [0, 1]


@pytest.mark.slow
@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "mass"]))
def test_filtered_two_stage_optimum_matches_enumeration_of_every_option(leg, seed, kind):
    rng = np.random.default_rng(seed)
    project = two_stage(leg, rng, inertia_monotone=bool(rng.random() < 0.5))
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    agree(project, kind)  # size() filters stacks; the oracle enumerates the unfiltered table


@pytest.mark.parametrize("seed", [3, 11])
def test_filtered_two_stage_optimum_matches_enumeration_quick(leg, seed):
    rng = np.random.default_rng(seed)
    project = two_stage(leg, rng, inertia_monotone=True)
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    assert len(build_table(project, dominance=True)) < len(build_table(project))
    agree(project, "payload")


def test_a_pinned_stage_list_keeps_its_stack_even_when_dominated(leg):
    from jointwright.options import matches_pin
    from jointwright.sizing import build_model

    project = two_stage(leg, np.random.default_rng(1), inertia_monotone=True)
    full, kept = build_table(project), build_table(project, dominance=True)

    def key(stack):
        return tuple((x.stage.name, x.frame.name, x.ratio) for x in stack)

    kept_keys = {key(st) for st in kept.actuators.stacks}
    dropped = [st for st in full.actuators.stacks if key(st) not in kept_keys]
    assert dropped
    pin = {
        "stages": [
            {"stage": s.stage.name, "frame": s.frame.name, "ratio": s.ratio} for s in dropped[0]
        ]
    }
    joint = project.robot.actuated[0]
    model, cands = build_model(project, "payload", {joint: pin}, [], [])
    assert len(model.table) == len(full)  # no stack dropped while a pin names a stage list
    assert all(matches_pin(model.table.actuators[int(o)], pin) for o in cands.index[0])
    assert cands.index[0].size > 0
