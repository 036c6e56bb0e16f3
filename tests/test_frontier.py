"""The payload / back-drivability frontier against the non-dominated set found by enumeration.

Reference: the Pareto (non-dominated) set of a finite set of (payload, measure) pairs, computed
here by brute force over every design of small seeded instances (solve/enumerate.py's
combinations, the evaluator and the checks). Invariants: every point meets every requirement when
re-evaluated; no point dominates another; the knee lies on the frontier.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_solve_search import build_table, example, planar_arm, set_limits, small_catalog

from jointwright.assessment import assess
from jointwright.errors import InputError
from jointwright.frontier import MEASURES, dominates, frontier, with_limit
from jointwright.problem import checks, feasible, objective
from jointwright.solve.enumerate import combinations
from jointwright.solve.model import SizingModel


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def brute_front(project, measure, case):
    """Non-dominated (payload, measure) pairs over every feasible design, the measure free."""
    _kind, key, metric, sense = MEASURES[measure]
    p = with_limit(project, case, key, None)
    table = build_table(p)
    n = len(p.robot.actuated)
    opts = [np.arange(len(table))] * n
    model = SizingModel(p, table, opts)
    idx = combinations(opts, 0, len(table) ** n)
    arrays = table.arrays(idx)
    ev = model.evaluator.evaluate(arrays, detail=False)
    ok = feasible(checks(p, arrays, ev), idx.shape[0])
    pay = objective(p, arrays, ev, "payload")[ok]
    if case is None:  # the robot-level measures: total actuator mass or cost, summed here
        mu = np.asarray(getattr(arrays, metric).sum(axis=1), dtype=float)[ok]
    else:
        mu = np.asarray(ev[case][metric], dtype=float)[ok]
    good = mu if sense == "min" else -mu
    front = []
    for i in np.lexsort((-good, -pay)):
        if not front or good[i] > front[-1][2] + 1e-7 * max(abs(good[i]), 1e-12):
            front.append((pay[i], mu[i], good[i]))
    # keep only pairs not dominated by a later (smaller payload, better measure) one of equal
    # payload
    out = []
    for k, (pp, mm, _gg) in enumerate(front):
        if k + 1 < len(front) and abs(front[k + 1][0] - pp) <= 1e-9 * max(1.0, abs(pp)):
            continue
        out.append((pp, mm))
    return out


def check_front(project, f):
    free = with_limit(project, f.case, MEASURES[f.measure][1], None)  # the sweep sets that limit
    for pt in f.points:  # re-evaluated by the numpy physics
        assert assess(free, pt.design).feasible
    for a in f.points:
        for b in f.points:
            assert a is b or not dominates(a, b, f.sense)
    if f.knee is not None:
        assert 0 <= f.knee < len(f.points)


@pytest.mark.slow
@pytest.mark.parametrize("method", ["branch-and-bound", "exhaustive", "sweep"])
@settings(
    max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    seed=st.integers(0, 2**31 - 1),
    measure=st.sampled_from(["imf", "effective_mass", "backdrive_force", "mass", "cost"]),
)
def test_leg_frontier_equals_enumerated_front(leg, method, seed, measure):
    # both methods (every candidate scored after the proven filters; exact ε-constraint solves)
    # against the brute-force front over every design with no filter at all
    rng = np.random.default_rng(seed)
    p = dataclasses.replace(
        leg, catalog=small_catalog(leg.catalog, rng), max_stages=1, stage_kinds=None, objective={}
    )
    p = set_limits(p, rng, build_table(p), keep_duty=False)
    f = frontier(p, measure, method=method)
    assert f.method == method
    check_front(p, f)
    ref = brute_front(p, measure, f.case)
    assert f.complete
    got = [(pt.payload, pt.measure) for pt in f.points]
    assert len(got) == len(ref)
    for (pa, ma), (pb, mb) in zip(got, ref, strict=True):
        assert pa == pytest.approx(pb, rel=1e-9, abs=1e-9)
        assert ma == pytest.approx(mb, rel=1e-6, abs=1e-9)


def test_arm_effective_mass_frontier_matches_enumeration():
    arm = example("arm")
    rng = np.random.default_rng(8)
    from jointwright.project import Case, Requirements

    robot = planar_arm(rng)
    pose = {"j0": 0.4, "j1": -0.7, "j2": 0.5}
    cases = (
        Case("lift", "payload", "tip", pose, direction=(0.0, 0.0, 1.0), limits={}),
        Case("bump", "impact", "tip", pose, direction=(1.0, 0.0, 0.0), limits={}),
    )
    p = dataclasses.replace(
        arm,
        robot=robot,
        cases=cases,
        catalog=small_catalog(arm.catalog, rng),
        max_stages=1,
        stage_kinds=None,
        objective={},
        requirements=Requirements(),
    )
    ref = brute_front(p, "effective_mass", "bump")
    for method in ("branch-and-bound", "exhaustive", "sweep"):
        f = frontier(p, "effective_mass", method=method)
        check_front(p, f)
        assert [round(x, 6) for x, _ in ref] == [round(pt.payload, 6) for pt in f.points]


def test_bad_measure_and_case(leg):
    with pytest.raises(InputError, match="measure"):
        frontier(leg, "stiffness")
    with pytest.raises(InputError, match="case"):
        frontier(leg, "imf", case="swing")
    with pytest.raises(InputError, match="points"):
        frontier(leg, "imf", points=0)
    with pytest.raises(InputError, match="method"):
        frontier(leg, "imf", method="guess")


@pytest.mark.slow
def test_cli_frontier_json_and_out(tmp_path):
    import json

    from click.testing import CliRunner

    from jointwright.cli import main

    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "leg")]).exit_code == 0
    out = tmp_path / "front.json"
    r = runner.invoke(
        main,
        [
            "frontier",
            str(tmp_path / "leg" / "project.toml"),
            "--measure",
            "backdrive_force",
            "--method",
            "sweep",
            "--points",
            "4",
            "--json",
            "--out",
            str(out),
        ],
    )
    assert r.exit_code == 0, r.output
    data = json.loads(out.read_text())
    assert data["measure"] == "backdrive_force" and data["points"]
    pays = [p["payload"] for p in data["points"]]
    assert pays == sorted(pays, reverse=True)  # largest payload first
    forces = [p["measure"] for p in data["points"]]
    assert forces == sorted(forces, reverse=True) and len(set(forces)) == len(
        forces
    )  # strictly better


@settings(
    max_examples=4, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1), small=st.integers(1, 3))
def test_more_sweep_points_never_lose_a_frontier_point(leg, seed, small):
    # the sweep walks from the largest payload towards better back-drivability, each point exact:
    # a larger point budget can only extend the list, never drop or move an earlier point
    rng = np.random.default_rng(seed)
    p = dataclasses.replace(
        leg, catalog=small_catalog(leg.catalog, rng), max_stages=1, stage_kinds=None, objective={}
    )
    p = set_limits(p, rng, build_table(p), keep_duty=False)
    few = frontier(p, "imf", points=2 * small, method="sweep")
    many = frontier(p, "imf", points=2 * small + 6, method="sweep")
    got = [(pt.payload, pt.measure) for pt in many.points]
    for pt in few.points:
        assert any(
            pt.payload == pytest.approx(a, rel=1e-9, abs=1e-9)
            and pt.measure == pytest.approx(b, rel=1e-6, abs=1e-9)
            for a, b in got
        )
    assert len(many.points) >= len(few.points)


def test_a_stopped_sweep_states_the_region_left_and_misses_nothing_outside_it(leg):
    """A sweep stopped by its solve budget returns points of the complete front and the region
    left; every point of the complete front that it lacks has a payload no larger than the
    region's bound and a measure no better than its measure bound, for every budget."""
    whole = frontier(leg, "imf", method="sweep")
    assert whole.complete and whole.unexplored is None and len(whole.points) >= 3
    assert whole.solves > 4
    for budget in range(2, whole.solves):
        part = frontier(leg, "imf", method="sweep", points=budget)
        assert not part.complete and part.solves == budget
        pmax, bound = part.unexplored
        for p in part.points:  # each a point of the complete front
            assert any(
                p.payload == pytest.approx(q.payload, rel=1e-9)
                and p.measure == pytest.approx(q.measure, rel=1e-6)
                for q in whole.points
            )
        for q in whole.points:
            if any(q.payload == pytest.approx(p.payload, rel=1e-9) for p in part.points):
                continue
            assert q.payload <= pmax * (1 + 1e-9) and q.measure <= bound * (1 + 1e-9)
    # two solves: the strongest end alone, the measure bound still the trivial one
    part = frontier(leg, "imf", method="sweep", points=2)
    assert len(part.points) == 1 and part.unexplored == (pytest.approx(whole.points[0].payload), 1.0)


def test_a_sweep_solves_both_ends_first(leg):
    """After the strongest end the sweep solves the most back-drivable one (the best measure
    with every other requirement kept, then the largest payload at it): four solves already
    show the front's whole range, both ends proven, and the region left lies between them."""
    whole = frontier(leg, "imf", method="sweep")
    part = frontier(leg, "imf", method="sweep", points=4)
    assert len(part.points) == 2 and all(p.proven for p in part.points)
    for p, q in ((part.points[0], whole.points[0]), (part.points[-1], whole.points[-1])):
        assert p.payload == pytest.approx(q.payload, rel=1e-9)
        assert p.measure == pytest.approx(q.measure, rel=1e-6)
    pmax, bound = part.unexplored  # between the ends: the best measure is proven
    assert pmax == pytest.approx(whole.points[0].payload)
    assert bound == pytest.approx(whole.points[-1].measure)


def test_step_solves_alone_prove_the_front_when_every_measure_solve_stops(leg, monkeypatch):
    """With every solve whose objective is the measure stopped before it finds a design (the
    second stages and the most back-drivable end), the payload solves alone still give the
    complete front: a step past a point either finds a design of the same payload with a better
    measure, which replaces it, or proves it non-dominated."""
    import jointwright.frontier_sweep as sweep

    whole = frontier(leg, "imf", method="sweep")
    real = sweep._solve

    def payload_only(project, kind, *args, **kw):
        if "@" in kind:
            return "time_limit", None, None, None, float("inf")
        return real(project, kind, *args, **kw)

    monkeypatch.setattr(sweep, "_solve", payload_only)
    alone = frontier(leg, "imf", method="sweep")
    assert alone.complete and all(p.proven for p in alone.points)
    assert [(p.payload, p.measure) for p in alone.points] == [
        (pytest.approx(q.payload, rel=1e-9), pytest.approx(q.measure, rel=1e-6))
        for q in whole.points
    ]


def test_a_solve_whose_limit_ends_while_its_options_are_built_reports_the_time_limit(leg):
    """A sweep solve whose time limit is spent before its option table is built answers
    "time_limit" with no design, as a stopped run must, instead of failing."""
    from jointwright.frontier_methods import _solve

    out = _solve(leg, "payload", None, 1e-9, None, "search")
    assert out[:4] == ("time_limit", None, None, None) and out[4] == float("inf")


def test_a_stopped_second_stage_keeps_the_design_it_started_from(leg, monkeypatch):
    """The sweep's second stage (the best measure at the payload just proven) starts from the
    first stage's design: stopped before its first node it still returns that design, which
    meets the payload floor and every requirement, instead of no design; without a start, the
    primal heuristics' design."""
    from jointwright.frontier_methods import _solve
    from jointwright.solve import search

    free = with_limit(leg, "touchdown", "imf_min", None)
    status, payload, design, first, bound = _solve(free, "payload", None, None, None, "search")
    assert status == "optimal" and first is not None and bound >= payload

    def stop(self, idx, level, cands=None, st=None):
        self.stopped = True

    monkeypatch.setattr(search.BranchAndBound, "_node", stop)
    kind = "imf@touchdown"
    # without a start, the primal heuristics' design (found before the search) is returned
    status1, _v1, design1, _i1, _b1 = _solve(free, kind, payload, None, None, "search")
    assert status1 == "time_limit" and design1 is not None
    status2, _value, again, index, _b = _solve(
        free, kind, payload, None, None, "search", start=first
    )
    assert status2 == "time_limit"
    assert np.array_equal(index, first)
    assert assess(free, again).feasible


def test_the_sweep_is_capped_by_solves_only_without_a_time_limit(leg, monkeypatch):
    """``points`` left out: a run bounded by its time limit has no cap on solves (the time
    bounds it: the arm's cost front needs 91 solves, docs/benchmarks.md), a run without one at
    most DEFAULT_SOLVES; a number given is kept either way."""
    import jointwright.frontier as fr

    seen = []

    def fake(project, name, key, metric, sense, points, *rest):
        seen.append(points)
        raise RuntimeError("stop")

    monkeypatch.setattr(fr, "_sweep", fake)
    for kwargs in ({"time_limit": 30.0}, {}, {"time_limit": 30.0, "points": 7}):
        with pytest.raises(RuntimeError, match="stop"):
            fr.frontier(leg, "imf", method="sweep", **kwargs)
    assert seen[0] > 10**9 and seen[1] == fr.DEFAULT_SOLVES and seen[2] == 7
