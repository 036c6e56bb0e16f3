"""Exact search against exhaustive enumeration on random small instances.

The oracle is enumeration of every combination of unfiltered options, each scored by the
evaluator and the project's checks (solve/enumerate.py); the search prunes with per-joint
filters and interval bounds (docs/optimizer.md). Both must report the same optimal objective
(ties within the documented 1e-9 relative tolerance) and the same feasibility verdict. Instances
are drawn from seeded generators: catalog subsets of the bundled examples, requirement levels set
from the metrics of random designs so that some bind and some do not, and random small planar
arms built with Robot.from_links.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from importlib import resources

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from jointwright.catalog.model import Catalog
from jointwright.options import build_table, matches_pin
from jointwright.project import Case, Requirements, load_project
from jointwright.robot import Robot
from jointwright.sizing import size
from jointwright.solve.enumerate import enumerate_all
from jointwright.solve.model import SizingModel


def example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        return load_project(folder / "project.toml")


@pytest.fixture(scope="module")
def leg():
    return example("leg")


@pytest.fixture(scope="module")
def arm():
    return example("arm")


def small_catalog(catalog, rng, motors=2, kinds=2, ratios=2):
    """A random subset: a few motors, a few stage types with one frame and a few ratios."""
    ms = [catalog.motors[i] for i in sorted(rng.choice(len(catalog.motors), motors, replace=False))]
    stages = []
    for i in sorted(rng.choice(len(catalog.stages), kinds, replace=False)):
        s = catalog.stages[i]
        fr = (s.frames[int(rng.integers(len(s.frames)))],)
        rs = tuple(
            sorted(
                float(r) for r in rng.choice(s.ratios, min(ratios, len(s.ratios)), replace=False)
            )
        )
        stages.append(dataclasses.replace(s, frames=fr, ratios=rs))
    return Catalog(motors=tuple(ms), stages=tuple(stages), drives=catalog.drives)


def small_leg(leg, rng, **sizes):
    """The leg with a random small catalog (:func:`small_catalog`), one stage, no objective."""
    return dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, **sizes),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )


def oracle(project, kind, pins=None, shared_idx=()):
    """Enumeration over every unfiltered option (pins applied), the reference optimum."""
    table = build_table(project)
    n = len(project.robot.actuated)
    opts = []
    for name in project.robot.actuated:
        keep = np.arange(len(table))
        if pins and name in pins:
            keep = np.array([o for o in keep if matches_pin(table.actuators[o], pins[name])])
        opts.append(keep)
    model = SizingModel(project, table, opts, kind, shared_idx)
    return enumerate_all(model, opts), model


def set_limits(project, rng, table, keep_duty=True):
    """Requirement levels from the metrics of random designs (factor 0.6-1.2): some bind."""
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n)
    sample = rng.integers(0, len(table), (8, n))
    ev = model.evaluator.evaluate(table.arrays(sample), detail=False)
    key = {
        "payload_min": "payload",
        "imf_min": "imf",
        "effective_mass_max": "effective_mass",
        "directional_imf_min": "imf_direction",
        "backdrive_force_max": "backdrive_force",
        "speed_min": "speed",
        "rating_use_max": "rating_use",
        "shock_use_max": "shock_use",
    }
    cases = []
    for c in project.cases:
        if c.kind == "duty" and not keep_duty:
            continue
        limits = {}
        for k in c.limits:
            vals = np.asarray(ev[c.name][key[k]], dtype=float)
            vals = vals[np.isfinite(vals)]
            if vals.size and rng.random() < 0.7:
                limits[k] = float(rng.choice(vals) * rng.uniform(0.6, 1.2))
        cases.append(dataclasses.replace(c, limits=limits))
    masses = table.rows["mass"][sample].sum(axis=1)
    total = float(rng.choice(masses) * rng.uniform(0.9, 1.3)) if rng.random() < 0.6 else math.inf
    return dataclasses.replace(
        project, cases=tuple(cases), requirements=Requirements(total_mass_max=total)
    )


def agree(project, kind, pins=None, shared=None):
    joints = list(project.robot.actuated)
    shared_idx = [tuple(joints.index(j) for j in g) for g in (shared or [])]
    ref, model = oracle(project, kind, pins, shared_idx)
    res = size(project, objective=kind, pins=pins or {}, shared=shared or [], explain=False, gap=0)
    if ref.status == "infeasible":
        assert res.status == "infeasible"
        return res
    assert res.status == "optimal"
    sense = -1.0 if kind == "mass" else 1.0
    # same optimum: the optimal objective of the enumeration (ties: 1e-9 relative)
    assert sense * res.objective == pytest.approx(ref.objective, rel=1e-9, abs=1e-9)
    # the reported design meets every requirement when re-evaluated
    assert res.assessment.feasible
    return res


@pytest.mark.slow
@settings(
    max_examples=10, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "mass", "imf"]))
def test_leg_instances_match_enumeration(leg, seed, kind):
    rng = np.random.default_rng(seed)
    project = small_leg(leg, rng)
    project = set_limits(project, rng, build_table(project), keep_duty=rng.random() < 0.5)
    agree(project, kind)


@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    seed=st.integers(0, 2**31 - 1),
    kind=st.sampled_from(["payload", "mass", "imf"]),
    gap=st.sampled_from([1e-4, 0.01, 0.05, 0.2]),
)
def test_optimality_gap_holds_against_enumeration(leg, seed, kind, gap):
    """With a relative gap the search may stop short of the optimum, never by more than the gap,
    and its bound still holds: bound ≥ the enumerated optimum ≥ objective ≥ bound − gap·|objective|
    (the MIP convention of a relative gap; checked here against every design of the instance)."""
    rng = np.random.default_rng(seed)
    project = small_leg(leg, rng)
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    ref, _ = oracle(project, kind)
    res = size(project, objective=kind, explain=False, gap=gap)
    if ref.status == "infeasible":
        assert res.status == "infeasible"
        return
    assert res.status == "optimal"
    assert res.assessment.feasible
    sense = -1.0 if kind == "mass" else 1.0
    value, bound = sense * res.objective, sense * res.bound
    tol = 1e-9 * max(1.0, abs(ref.objective))
    assert bound >= ref.objective - tol  # the bound holds
    assert value <= ref.objective + tol  # no design beats the optimum
    assert value >= bound - gap * abs(value) - tol  # within the gap asked for
    assert res.gap <= gap + 1e-12


@pytest.mark.slow
@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    seed=st.integers(0, 2**31 - 1),
    kind=st.sampled_from(["payload", "mass"]),
    gap=st.sampled_from([0.02, 0.1, 0.3]),
)
def test_search_with_a_gap_keeps_a_valid_bound(leg, seed, kind, gap):
    """The branch and bound alone, from the worst of a few random designs, so that its incumbent
    is often within a large gap of the optimum without being optimal and the nodes left out for
    the gap decide the bound: the bound must still hold for every enumerated design, and the
    value stay within the gap."""
    _gap_case(leg, seed, kind, gap)


@pytest.mark.parametrize("seed", [44, 69])
def test_a_gap_that_stops_short_of_the_optimum_keeps_a_valid_bound(leg, seed):
    """Two fixed instances of the test above where the search does stop short of the optimum
    (checked), so the nodes left out for the gap decide the bound. (The seeds are re-chosen
    when the search improves: with the payload probe, docs/optimizer.md item 10, the earlier
    seeds 2 and 9 reach the optimum itself.)"""
    out, ref = _gap_case(leg, seed, "payload", 0.3)
    assert out.objective < ref.objective  # the gap was used


def _gap_case(leg, seed, kind, gap):
    from jointwright.sizing import units_of
    from jointwright.solve.search import BranchAndBound

    rng = np.random.default_rng(seed)
    project = small_leg(leg, rng, motors=3, kinds=2, ratios=3)
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    ref, model = oracle(project, kind)
    if ref.status == "infeasible":
        return None, ref
    # a first design: the worst feasible one of a few random ones, usually short of the optimum
    keys = [model.best_key(row[None]) for row in rng.integers(0, len(model.table), (64, model.n))]
    keys = [k for k in keys if k is not None]
    first = min(keys, key=lambda k: k[0]) if keys else None
    out = BranchAndBound(model, units_of(model.n, ()), gap=gap, incumbent=first).run()
    assert out.status == "optimal"
    tol = 1e-9 * max(1.0, abs(ref.objective))
    assert out.bound >= ref.objective - tol
    assert out.objective <= ref.objective + tol
    assert out.objective >= out.bound - gap * abs(out.objective) - tol
    return out, ref


@pytest.mark.slow
def test_default_gap_keeps_the_least_mass_tie_break(arm, monkeypatch):
    """The bundled arm from a first design of the optimal payload but a heavier joint whose mass
    loads no other joint (a tie): with the default gap the search must still find the lighter
    design that the exact run (gap 0) returns."""
    import jointwright.solve.engines as engines

    exact = size(arm, gap=0, explain=False)
    first_design = engines.first_design

    def heavier(model, units, time_limit, phase=None):
        key = first_design(model, units, time_limit, phase)
        idx, j = np.array(key[3]), 0
        cands = model.candidates[j]
        rows = np.broadcast_to(idx, (cands.size, model.n)).copy()
        rows[:, j] = cands
        s = model.score(rows)
        ok = s.feasible & (np.abs(s.objective - key[0]) <= 1e-12 * abs(key[0]))
        heavy = np.flatnonzero(ok)[np.argmax(model.mass[cands[ok]])]
        assert model.mass[cands[heavy]] > model.mass[idx[j]]  # a heavier tie exists
        return model.key(s, heavy)

    monkeypatch.setattr(engines, "first_design", heavier)
    res = size(arm, explain=False)
    assert res.status == "optimal"
    assert res.objective == pytest.approx(exact.objective, rel=1e-9)
    assert res.design.mass == pytest.approx(exact.design.mass, rel=1e-9)


def test_gap_is_checked():
    from jointwright.errors import InputError

    leg_ = example("leg")
    for bad in (-0.1, 1.0, "0.01", True, float("nan"), float("inf")):
        with pytest.raises(InputError, match="gap"):
            size(leg_, gap=bad, explain=False)


@pytest.mark.slow
@settings(
    max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_two_stage_stacks_match_enumeration(leg, seed):
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, kinds=1),
        max_stages=2,
        stage_kinds=None,
        objective={},
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    agree(project, "payload")


def planar_arm(rng):
    """A random 3-link planar arm (fixed base, joints about y, gravity −z) with a tip frame."""
    lengths = rng.uniform(0.15, 0.4, 3)
    links = [
        {
            "name": "base",
            "mass": 2.0,
            "com": [0, 0, 0],
            "inertia": [[0.01, 0, 0], [0, 0.01, 0], [0, 0, 0.01]],
        }
    ]
    joints = []
    parent = "base"
    for i, L in enumerate(lengths):
        m = float(rng.uniform(0.3, 1.5))
        links.append(
            {
                "name": f"l{i}",
                "mass": m,
                "com": [float(L / 2), 0, 0],
                "inertia": [[1e-3, 0, 0], [0, m * L * L / 12, 0], [0, 0, m * L * L / 12]],
            }
        )
        xyz = [0, 0, 0] if i == 0 else [float(lengths[i - 1]), 0, 0]
        joints.append(
            {
                "name": f"j{i}",
                "type": "revolute",
                "parent": parent,
                "child": f"l{i}",
                "xyz": xyz,
                "axis": [0, 1, 0],
            }
        )
        parent = f"l{i}"
    table = {
        "base": "fixed",
        "gravity": [0, 0, -9.81],
        "links": links,
        "joints": joints,
        "frames": [{"name": "tip", "link": "l2", "xyz": [float(lengths[2]), 0, 0]}],
    }
    return Robot.from_links(table, file="random-arm.toml")


@pytest.mark.slow
@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "mass"]))
def test_random_planar_arms_match_enumeration(arm, seed, kind):
    rng = np.random.default_rng(seed)
    robot = planar_arm(rng)
    pose = {f"j{i}": float(v) for i, v in enumerate(rng.uniform(-1.2, 1.2, 3))}
    up = (0.0, 0.0, 1.0)
    side = (float(np.cos(rng.uniform(0, np.pi))), 0.0, float(np.sin(rng.uniform(0, np.pi))))
    cases = (
        Case(
            "lift",
            "payload",
            "tip",
            pose,
            direction=up,
            motion="along",
            limits={"payload_min": 1.0},
        ),
        Case(
            "press",
            "payload",
            "tip",
            pose,
            direction=side,
            motion="against",
            limits={"payload_min": 1.0},
        ),
        Case("bump", "impact", "tip", pose, direction=side, limits={"effective_mass_max": 1.0}),
        Case("push", "backdrive", "tip", pose, direction=side, limits={"backdrive_force_max": 1.0}),
        Case("move", "speed", "tip", pose, direction=side, limits={"speed_min": 0.1}),
    )
    project = dataclasses.replace(
        arm,
        robot=robot,
        cases=cases,
        catalog=small_catalog(arm.catalog, rng),
        max_stages=1,
        stage_kinds=None,
        objective={},
        requirements=Requirements(),
    )
    project = set_limits(project, rng, build_table(project))
    agree(project, kind)


@pytest.mark.slow
def test_arm_with_pins_and_shared_joints_matches_enumeration(arm):
    rng = np.random.default_rng(7)
    project = dataclasses.replace(
        arm,
        catalog=small_catalog(arm.catalog, rng, motors=2, kinds=2, ratios=2),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    table = build_table(project)
    project = set_limits(project, rng, table, keep_duty=True)
    a = table.actuators[3]
    pins = {
        "shoulder_yaw": {"motor": a.motor.name},
        "wrist_yaw": {"motor": a.motor.name},
        "wrist_flex": {"motor": table.actuators[0].motor.name, "stages": []},
    }
    res = agree(project, "payload", pins=pins, shared=[["wrist_pitch", "elbow"]])
    if res.design is not None:
        d = res.design
        assert d.actuator("wrist_pitch") == d.actuator("elbow")
        assert d.actuator("shoulder_yaw").motor.name == a.motor.name
        assert not d.actuator("wrist_flex").stages


@pytest.mark.slow
def test_search_design_is_feasible_and_no_sampled_design_beats_it(arm):
    """The bundled arm: proven optimum, re-evaluated feasible, and none of 20,000 random
    feasible designs has a larger objective (a check that cannot pass by construction)."""
    res = size(arm, explain=False, gap=0)
    assert res.status == "optimal" and res.gap == 0.0
    assert res.assessment.feasible
    table = build_table(arm)
    model = SizingModel(arm, table, [np.arange(len(table))] * 6)
    rng = np.random.default_rng(3)
    idx = rng.integers(0, len(table), (20_000, 6))
    s = model.score(idx)
    assert not np.any(s.objective[s.feasible] > res.objective * (1 + 1e-9))


def test_time_limit_reports_a_bound_and_gap(arm):
    res = size(arm, time_limit=0.05, explain=False)
    assert res.status in ("time_limit", "optimal")
    if res.status == "time_limit" and res.design is not None:
        assert res.bound >= res.objective - 1e-9
        assert res.gap >= 0.0


@pytest.mark.slow
@settings(
    max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "mass", "imf"]))
def test_first_design_is_feasible_and_never_beats_the_optimum(leg, seed, kind):
    """The primal heuristics' design (solve/heuristic.py) meets every requirement when
    re-evaluated and is no better than the enumerated optimum (it is a feasible point)."""
    from jointwright.assessment import assess
    from jointwright.sizing import build_model, design_of, units_of
    from jointwright.solve.heuristic import Heuristic

    rng = np.random.default_rng(seed)
    project = small_leg(leg, rng)
    project = set_limits(project, rng, build_table(project), keep_duty=rng.random() < 0.5)
    ref, _ = oracle(project, kind)
    model, _ = build_model(project, kind, {}, [], [])
    key = Heuristic(model, units_of(model.n, ()), math.inf).run()
    if ref.status == "infeasible":
        assert key is None
        return
    if key is None:
        return
    assert key[0] <= ref.objective + 1e-9 * max(1.0, abs(ref.objective))
    assert assess(project, design_of(project, model, np.array(key[3]), "first")).feasible


@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_impact_bounds_hold_for_every_completion(leg, seed):
    """The IMF bounds of a partial design (Loewner-order monotonicity, docs/optimizer.md item 8;
    IMF definition: Wensing et al., IEEE T-RO 33(3), 2017 [pub]) are at or above the IMF and the
    directional IMF the evaluator computes for random completions of it."""
    rng = np.random.default_rng(seed)
    project = small_leg(leg, rng, motors=3, kinds=2, ratios=3)
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "imf")
    st_ = model.stats(model.candidates)
    for _ in range(4):
        idx = np.full(n, -1, dtype=np.int64)
        assigned = rng.random(n) < 0.4
        idx[assigned] = rng.integers(0, len(table), int(assigned.sum()))
        free = np.flatnonzero(idx < 0)
        unit = (int(rng.choice(free)),) if free.size else (0,)
        options = np.arange(len(table))
        ub = model.impact_bounds(idx, unit, options, st_)
        for _k in range(6):
            full = np.broadcast_to(idx, (len(table), n)).copy()
            full[:, list(unit)] = options[:, None]
            for j in range(n):
                if j not in unit and idx[j] < 0:
                    full[:, j] = rng.integers(0, len(table), len(table))
            ev = model.impact_evaluator.evaluate(table.arrays(full), detail=False)
            for name, (xi, xd) in ub.items():
                assert np.all(np.asarray(ev[name]["imf"]) <= xi + 1e-12)
                assert np.all(np.asarray(ev[name]["imf_direction"]) <= xd + 1e-12)


@pytest.mark.slow
@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), kind=st.sampled_from(["payload", "imf", "mass"]))
def test_impact_limits_and_budgets_match_enumeration(leg, seed, kind):
    """imf_min, directional_imf_min and effective_mass_max on the impact case together with a
    total-mass budget: the search (IMF bounds, effective-mass bound, budget level bound) finds
    the enumerated optimum."""
    rng = np.random.default_rng(seed)
    limits = {"imf_min": 1.0, "directional_imf_min": 1.0, "effective_mass_max": 1.0}
    agree(leg_with_impact_limits(leg, rng, limits), kind)


def leg_with_impact_limits(leg, rng, limits):
    """A small leg instance without its duty case, with ``limits`` kinds on the impact case;
    their levels, and the budget's, drawn by :func:`set_limits` from random designs."""
    cases = tuple(
        dataclasses.replace(c, limits=dict(limits)) if c.kind == "impact" else c
        for c in leg.cases
        if c.kind != "duty"
    )
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=cases,
    )
    return set_limits(project, rng, build_table(project), keep_duty=False)


@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_payload_mass_objective_matches_enumeration_with_case_transforms(arm, seed):
    # each payload case reads its force as a payload mass through its own increasing transform
    # (F − fixed_load)/(payload_share·g_n); the search's bounds apply the same transform before
    # combining cases, so its optimum must equal exhaustive enumeration (share 0: constraint only)
    from jointwright.problem import carried_payload

    rng = np.random.default_rng(seed)
    robot = planar_arm(rng)
    pose = {f"j{i}": float(v) for i, v in enumerate(rng.uniform(-1.2, 1.2, 3))}
    up = (0.0, 0.0, 1.0)
    side = (float(np.cos(rng.uniform(0, np.pi))), 0.0, float(np.sin(rng.uniform(0, np.pi))))
    shares = [float(rng.choice([0.0, 0.25, 1.0, 3.0])), float(rng.choice([0.25, 1.0, 3.0]))]
    fixed = [float(rng.uniform(0, 30)), float(rng.uniform(0, 30))]
    cases = (
        Case(
            "lift",
            "payload",
            "tip",
            pose,
            direction=up,
            motion="along",
            limits={"payload_min": 1.0},
            fixed_load=fixed[0],
            payload_share=shares[0],
        ),
        Case(
            "press",
            "payload",
            "tip",
            pose,
            direction=side,
            motion="against",
            limits={"payload_min": 1.0},
            fixed_load=fixed[1],
            payload_share=shares[1],
        ),
        Case("move", "speed", "tip", pose, direction=side, limits={"speed_min": 0.1}),
    )
    project = dataclasses.replace(
        arm,
        robot=robot,
        cases=cases,
        catalog=small_catalog(arm.catalog, rng),
        max_stages=1,
        stage_kinds=None,
        objective={},
        requirements=Requirements(),
    )
    project = set_limits(project, rng, build_table(project))
    res = agree(project, "payload")
    if res.status == "optimal":
        # the reported objective is the smallest carried payload over the cases, in kg
        metrics = {c.name: c.metrics for c in res.assessment.cases}
        carried = [float(carried_payload(c, metrics[c.name]["payload"])) for c in cases[:2]]
        assert res.objective == pytest.approx(min(carried), rel=1e-9, abs=1e-9)


@pytest.mark.slow
@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_budget_bounds_are_above_the_enumerated_optimum(leg, seed):
    """The payload bounds that see the mass budget (docs/optimizer.md items 4a and 4b) are never
    below the optimum found by enumerating every design under a random budget."""
    from jointwright.sizing import build_model

    rng = np.random.default_rng(seed)
    cases = tuple(c for c in leg.cases if c.kind != "duty")
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=cases,
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    masses = build_table(project).rows["mass"]
    budget = float(rng.uniform(3 * masses.min(), 3 * masses.max()))
    project = dataclasses.replace(project, requirements=Requirements(total_mass_max=budget))
    ref, _ = oracle(project, "payload")
    if ref.status == "infeasible":
        return
    model, _ = build_model(project, "payload", {}, [], [])
    st_ = model.stats(model.candidates)
    slack = 1e-9 * max(1.0, abs(ref.objective))  # rounding only (the objective may be negative)
    assert model.budget_cap(st_) >= ref.objective - slack
    root = np.full(model.n, -1, dtype=np.int64)
    unit = (0,)
    b = model.child_bounds(root, unit, model.candidates[0], st_)
    assert b["objective"].max() >= ref.objective - slack


@pytest.mark.slow
@pytest.mark.parametrize("seed, kind", [(1, "payload"), (2, "mass")])
def test_quadruped_with_stance_cases_matches_enumeration(seed, kind):
    """The bundled quadruped (floating base, legs shared, two stance cases with friction cones,
    a leg payload case and an IMF limit) on a small random catalog: the search's optimum equals
    the best of every combination of the three shared groups' options, each scored in full."""

    q = example("quadruped")
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        q,
        catalog=small_catalog(q.catalog, rng, motors=2, kinds=1, ratios=2),
        max_stages=1,
        stage_kinds=None,
        objective={"maximize": kind, "shared": q.objective["shared"]},
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    table = build_table(project)
    joints = list(project.robot.actuated)
    groups = [[joints.index(j) for j in g] for g in q.objective["shared"]]
    model = SizingModel(project, table, [np.arange(len(table))] * len(joints), kind, groups)
    key = model.best_key(grouped_designs(len(joints), groups, len(table)))
    res = size(project, explain=False, gap=0)
    if key is None:
        assert res.status == "infeasible"
        return
    assert res.status == "optimal" and res.assessment.feasible
    sense = -1.0 if kind == "mass" else 1.0
    assert sense * res.objective == pytest.approx(key[0], rel=1e-9, abs=1e-9)


@settings(
    max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_refined_imf_bounds_hold_for_every_completion_that_meets_the_limits(leg, seed):
    """The IMF boxes refined against the limits and a floor (docs/optimizer.md, item 8;
    IMF definition: Wensing et al., IEEE T-RO 33(3), 2017 [pub]) against enumeration of every
    completion of random partial designs: a child with a completion that meets imf_min and
    directional_imf_min stays live, and its bounds are at or above that completion's IMF,
    directional IMF and objective (the worst case's IMF), whatever the floor and the budget."""
    from itertools import product

    from jointwright.solve.impact_bound import box_bounds

    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, kinds=2, ratios=2),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=tuple(c for c in leg.cases if c.kind != "duty"),
    )
    table = build_table(project)
    n, n_opt = len(project.robot.actuated), len(table)
    every = np.array(list(product(range(n_opt), repeat=n)), dtype=np.int64)
    free_model = SizingModel(project, table, [np.arange(n_opt)] * n, "imf")
    ev = free_model.impact_evaluator.evaluate(table.arrays(every), detail=False)
    names = [c.name for c in project.cases if c.kind == "impact"]
    # limits at random quantiles of the enumerated values: some bind, some do not
    limits = {
        nm: {
            "imf_min": float(np.quantile(ev[nm]["imf"], rng.uniform(0.0, 0.9))),
            "directional_imf_min": float(np.quantile(ev[nm]["imf_direction"], rng.uniform(0, 0.9))),
        }
        for nm in names
    }
    project = dataclasses.replace(
        project,
        cases=tuple(
            dataclasses.replace(c, limits=limits[c.name]) if c.name in limits else c
            for c in project.cases
        ),
    )
    model = SizingModel(project, table, [np.arange(n_opt)] * n, "imf")
    st_ = model.stats(model.candidates)
    meets = np.ones(every.shape[0], dtype=bool)
    for nm in names:
        meets &= np.asarray(ev[nm]["imf"]) >= limits[nm]["imf_min"] * (1 - 1e-9) - 1e-12
        meets &= (
            np.asarray(ev[nm]["imf_direction"])
            >= limits[nm]["directional_imf_min"] * (1 - 1e-9) - 1e-12
        )
    objective = np.min([np.asarray(ev[nm]["imf"]) for nm in names], axis=0)
    for _ in range(4):
        idx = np.full(n, -1, dtype=np.int64)
        assigned = rng.random(n) < 0.4
        idx[assigned] = rng.integers(0, n_opt, int(assigned.sum()))
        free = np.flatnonzero(idx < 0)
        unit = (int(rng.choice(free)),) if free.size else (0,)
        options = np.arange(n_opt)
        floor = None if rng.random() < 0.3 else float(rng.uniform(0.0, objective.max()))
        budget = int(rng.choice([1, 4, 48]))
        per, obj, live = box_bounds(
            model, idx, unit, options, st_, floor=floor, limits=True, budget=budget
        )
        fixed = np.flatnonzero((idx >= 0) & ~np.isin(np.arange(n), unit))
        rows = np.all(every[:, fixed] == idx[fixed], axis=1) & meets
        for r in np.flatnonzero(rows):
            k = int(every[r, unit[0]])
            assert live[k]
            assert obj[k] >= objective[r] - 1e-12
            for nm in names:
                assert per[nm][0][k] >= ev[nm]["imf"][r] - 1e-12
                assert per[nm][1][k] >= ev[nm]["imf_direction"][r] - 1e-12


def test_impact_bounds_in_pieces_equal_the_bounds_in_one(leg, monkeypatch):
    """The IMF bounds of many rows are computed in pieces (memory); each row is bounded on its
    own, so the pieces give the same bounds as one batch, to the last bit."""
    import jointwright.solve.impact_bound as impact_bound

    rng = np.random.default_rng(5)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=4, kinds=2, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "imf")
    rows = rng.integers(0, len(table), (200, n))
    m_lo, r_lo = model.mass[rows], model.reflected[rows]
    m_hi = m_lo * rng.uniform(1.0, 1.5, m_lo.shape)
    whole = impact_bound._impact_bounds_at(model, 200, m_lo, m_hi, r_lo)
    monkeypatch.setattr(impact_bound, "BOUND_CHUNK", 7)  # 29 pieces, the last one short
    pieces = impact_bound._impact_bounds_at(model, 200, m_lo, m_hi, r_lo)
    assert whole.keys() == pieces.keys() and whole
    for name in whole:
        for a, b in zip(whole[name], pieces[name], strict=True):
            assert a.shape == (200,) and np.array_equal(a, b)


def test_measure_objectives_assign_the_joints_that_move_the_bound_first():
    """The least effective mass of the bundled arm's side collision (impact along y with the
    arm in its x-z plane) at a payload floor is moved almost only by the shoulder's yaw joint,
    the one joint of the payload order (:func:`search_order`, distal first) that no payload
    case loads, so it comes last there; :func:`spread_order` puts it first. Reference for the
    physics: the operational-space inertia (Khatib 1987) along y sees the reflected inertia of
    the joints that move the tool along y. The payload objective keeps its own order."""
    from jointwright.frontier_methods import with_limit, with_payload_floor
    from jointwright.sizing import build_model, units_of
    from jointwright.solve.unit_order import root_spreads, search_order, spread_order

    arm = with_limit(example("arm"), "side-collision", "effective_mass_max", None)
    floored = with_payload_floor(arm, 12.0)
    model, _ = build_model(floored, "effective_mass@side-collision", {}, [], [])
    units = units_of(model.n, model.shared)
    order = search_order(model, units)
    joints = list(model.project.robot.actuated)
    yaw = (joints.index("shoulder_yaw"),)
    assert order[-1] == yaw
    spreads = root_spreads(model, order)
    ordered = spread_order(model, order)
    assert ordered[0] == yaw
    assert sorted(ordered) == sorted(order)
    values = [spreads[u] for u in ordered]
    assert all(a >= b for a, b in zip(values, values[1:], strict=False))
    assert spreads[yaw] > 0
    payload_model, _ = build_model(arm, "payload", {}, [], [])
    porder = search_order(payload_model, units)
    assert spread_order(payload_model, porder) == porder


def grouped_designs(n: int, groups, options: int) -> np.ndarray:
    """Every design (D, n) in which each group of joints (lists of joint indices covering all
    n) takes one of ``options`` options together: the enumeration of a shared-leg robot."""
    rows = []
    for combo in itertools.product(range(options), repeat=len(groups)):
        idx = np.empty(n, dtype=np.int64)
        for g, o in zip(groups, combo, strict=True):
            idx[g] = o
        rows.append(idx)
    return np.array(rows)
