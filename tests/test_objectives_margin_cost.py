"""Objectives: the smallest normalized margin, least cost (and a cost budget), and the payload
mass of named cases with the others as constraints; cases with a wrench, a joint-space torque
requirement or a region of poses inside the optimizer.

The reference is exhaustive enumeration of every option combination, each scored by the
physics and the checks (solve/enumerate.py): the search prunes with bounds, so equal optima
show the bounds stay valid. The objective values themselves are recomputed from the assessment
(achieved ÷ required, the catalog costs) as a worked check.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.options import build_table
from jointwright.problem import MINIMIZED
from jointwright.project import STANDARD_GRAVITY, Requirements
from jointwright.sizing import read_objective, size
from tests.test_solve_search import leg, oracle, set_limits, small_catalog  # noqa: F401

SETTINGS = dict(
    max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)


def agree(project, kind):
    """The search's optimum equals enumeration's (sense: minimized totals are negated)."""
    ref, _model = oracle(project, kind)
    res = size(project, objective=kind, explain=False, gap=0)
    if ref.status == "infeasible":
        assert res.status == "infeasible"
        return res
    assert res.status == "optimal"
    sense = -1.0 if kind in MINIMIZED else 1.0
    assert sense * res.objective == pytest.approx(ref.objective, rel=1e-9, abs=1e-9)
    assert res.assessment.feasible
    return res


def instance(base, seed, objective=None):
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        base,
        catalog=small_catalog(base.catalog, rng),
        max_stages=1,
        stage_kinds=None,
        objective=objective or {},
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    # every payload case keeps a positive payload_min (the margin objective's default cases)
    cases = tuple(
        dataclasses.replace(c, limits={**c.limits, "payload_min": c.limits.get("payload_min", 5.0)})
        if c.kind == "payload"
        else c
        for c in project.cases
    )
    return dataclasses.replace(project, cases=cases), rng


@pytest.mark.slow
@settings(**SETTINGS)
@given(seed=st.integers(0, 2**31 - 1))
def test_margin_objective_matches_enumeration(leg, seed):  # noqa: F811
    project, _ = instance(leg, seed)
    res = agree(project, "margin")
    if res.status != "optimal":
        return
    # the value is min over payload cases of achieved ÷ payload_min, from the assessment
    worst = min(
        c.metrics["payload"] / project.case(c.name).limits["payload_min"]
        for c in res.assessment.cases
        if c.kind == "payload"
    )
    assert res.objective == pytest.approx(worst, rel=1e-12)


@pytest.mark.slow
@settings(**SETTINGS)
@given(seed=st.integers(0, 2**31 - 1), budget=st.booleans())
def test_cost_objective_and_budget_match_enumeration(leg, seed, budget):  # noqa: F811
    project, rng = instance(leg, seed)
    if budget:
        costs = build_table(project).rows["cost"]
        cap = float(np.sort(costs)[len(costs) // 2] * len(project.robot.actuated))
        project = dataclasses.replace(
            project,
            requirements=Requirements(
                total_mass_max=project.requirements.total_mass_max, total_cost_max=cap
            ),
        )
        res = agree(project, "payload")
        if res.status == "optimal":
            assert res.assessment.total_cost <= cap * (1 + 1e-9)
        return
    res = agree(project, "cost")
    if res.status == "optimal":
        assert res.objective == pytest.approx(sum(a.cost for a in res.design.actuators))
        assert res.objective == pytest.approx(res.assessment.total_cost)


@pytest.mark.slow
@settings(**SETTINGS)
@given(seed=st.integers(0, 2**31 - 1))
def test_payload_of_one_named_case_with_the_others_as_constraints(leg, seed):  # noqa: F811
    project, _ = instance(leg, seed)
    named = dataclasses.replace(project, objective={"cases": ["jump-push"]})
    res = agree(named, "payload")
    if res.status != "optimal":
        return
    jump = next(c for c in res.assessment.cases if c.name == "jump-push")
    case = project.case("jump-push")
    want = (jump.metrics["payload"] - case.fixed_load) / (case.payload_share * STANDARD_GRAVITY)
    assert res.objective == pytest.approx(want, rel=1e-9)
    every = size(project, objective="payload", explain=False)
    assert res.objective >= every.objective - 1e-9  # fewer cases in the min: never lower


@pytest.mark.slow
@settings(**SETTINGS)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "mass"]))
def test_wrench_torque_and_region_cases_inside_the_optimizer(leg, seed, kind):  # noqa: F811
    project, rng = instance(leg, seed)
    lift = next(c for c in project.cases if c.kind == "payload")
    wrench = dataclasses.replace(
        lift,
        name="wrench",
        offset=(0.04, -0.03, 0.0),
        moment=(float(rng.uniform(0.5, 4.0)), 0.0, 0.0),
        limits={"payload_min": 5.0},
    )
    region = [
        dataclasses.replace(
            lift,
            name=f"sweep@{k}",
            pose={**lift.pose, "knee": float(e)},
            region="sweep",
            region_index=k,
            limits={"payload_min": 5.0},
        )
        for k, e in enumerate(np.linspace(1.0, 1.6, 3))
    ]
    torque = dataclasses.replace(
        lift,
        name="supplier",
        kind="torque",
        frame=None,
        pose={},
        direction=None,
        limits={"torque_ratio_min": 1.0},
        joint_torques=(("hip_ab", float(rng.uniform(2, 15))), ("knee", -1.0)),
        joint_motions=(("hip_ab", "along"), ("knee", "hold")),
    )
    project = dataclasses.replace(project, cases=project.cases + (wrench, torque, *region))
    res = agree(project, kind)
    if res.status == "optimal":
        assert all(c.ok for c in res.assessment.checks if c.subject in ("wrench", "supplier"))
        assert "sweep" in res.assessment.regions


def test_objective_cases_are_checked(leg):  # noqa: F811
    bad = [
        ({"cases": []}, "objective.cases"),
        ({"cases": ["nope"]}, "objective.cases[0]"),
        ({"cases": ["touchdown"]}, "objective.cases[0]"),
        # under the mass objective the cases are read by the payload objective only (a
        # frontier's payload axis, size --objective payload): checked as for it
        ({"maximize": "mass", "cases": ["jump-push"]}, None),
        ({"maximize": "mass", "cases": ["touchdown"]}, "objective.cases[0]"),
        ({"maximize": "margin", "cases": ["trot"]}, None),
    ]
    for objective, field in bad:
        p = dataclasses.replace(leg, objective=objective)
        if field is None:
            read_objective(p)  # a duty case with rating_use_max has a positive limit
            continue
        with pytest.raises(InputError) as e:
            read_objective(p)
        assert field in str(e.value)
    # a mass objective's cases read by a payload run: only the named case sets the payload
    p = dataclasses.replace(leg, objective={"minimize": "mass", "cases": ["jump-push"]})
    res = size(p, objective="payload", explain=False)
    named = dataclasses.replace(leg, objective={"maximize": "payload", "cases": ["jump-push"]})
    ref = size(named, explain=False)
    assert res.status == ref.status == "optimal"
    assert res.objective == pytest.approx(ref.objective, rel=1e-9)
    # and a payload run checks them as the payload objective reads them: the margin objective
    # accepts a duty case, the payload objective does not
    p = dataclasses.replace(leg, objective={"maximize": "margin", "cases": ["trot"]})
    with pytest.raises(InputError) as e:
        size(p, objective="payload", explain=False)
    assert "objective.cases[0]" in str(e.value)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [1, 2])
def test_pyomo_cost_and_named_case_payload_match_enumeration(leg, seed):  # noqa: F811
    """The Pyomo/HiGHS back-end (linear total cost; the payload rows of the named case only)
    against enumeration; it refuses the margin objective."""
    project, _ = instance(leg, seed)
    for kind, objective in (("cost", {}), ("payload", {"cases": ["landing-absorb"]})):
        p = dataclasses.replace(project, objective=objective)
        ref, _model = oracle(p, kind)
        res = size(p, objective=kind, backend="pyomo", explain=False)
        if ref.status == "infeasible":
            assert res.status == "infeasible"
            continue
        assert res.status == "optimal"
        sense = -1.0 if kind in MINIMIZED else 1.0
        assert sense * res.objective == pytest.approx(ref.objective, rel=1e-9, abs=1e-9)
    with pytest.raises(InputError, match="margin"):
        size(project, objective="margin", backend="pyomo", explain=False)
