"""The public sizing API and the ``size`` verb: inputs, outputs, diagnosis, determinism."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from click.testing import CliRunner

from jointwright.cli import main
from jointwright.design import load_design
from jointwright.errors import InputError
from jointwright.sizing import size
from test_solve_search import build_table, example, set_limits, small_catalog


@pytest.fixture(scope="module")
def small():
    leg = example("leg")
    rng = np.random.default_rng(4)
    p = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    return set_limits(p, rng, build_table(p), keep_duty=False)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"objective": "speed"}, "objective"),
        ({"backend": "magic"}, "backend"),
        ({"time_limit": -1}, "time_limit"),
        ({"pins": {"elbow": {"motor": "x"}}}, "pins.elbow"),
        ({"pins": {"knee": {"motor": "no-such-motor"}}}, "pins.knee.motor"),
        ({"shared": [["knee"]]}, "shared[0]"),
        ({"shared": [["knee", "hip_fe"], ["knee", "hip_ab"]]}, "shared[1]"),
    ],
)
def test_bad_arguments_name_the_field(small, kwargs, field):
    with pytest.raises(InputError) as e:
        size(small, explain=False, **kwargs)
    assert e.value.field == field


@pytest.mark.slow
def test_objective_table_is_read_and_checked(small):
    p = dataclasses.replace(small, objective={"maximize": "mass"})
    assert size(p, explain=False).objective_kind == "mass"
    with pytest.raises(InputError, match="objective.colour"):
        size(dataclasses.replace(small, objective={"colour": 1}), explain=False)
    with pytest.raises(InputError, match="objective.maximize"):
        size(dataclasses.replace(small, objective={"maximize": "fun"}), explain=False)


@pytest.mark.slow
def test_same_input_same_design(small):
    a, b = size(small, explain=False), size(small, explain=False)
    assert a.design == b.design and a.objective == b.objective


@pytest.mark.slow
def test_result_is_reevaluated_and_explained(small):
    r = size(small)
    if r.status != "optimal":
        pytest.skip("instance infeasible")
    assert r.assessment.feasible and r.gap == 0.0
    assert all(a.loss is None or a.loss >= -1e-9 * abs(r.objective) for a in r.alternatives)
    json.dumps(r.to_dict(), allow_nan=False)


def test_infeasible_requirement_is_diagnosed(small):
    case = next(c for c in small.cases if c.kind == "payload")
    p = dataclasses.replace(
        small,
        cases=tuple(
            dataclasses.replace(c, limits={"payload_min": 1e6}) if c.name == case.name else c
            for c in small.cases
        ),
    )
    r = size(p)
    assert r.status == "infeasible" and r.design is None
    row = next(d for d in r.diagnosis if d.requirement.startswith(case.name))
    assert row.best_achievable < 1e6 and row.shortfall > 0  # cannot be met even alone
    assert row.relaxed_objective is not None  # dropping it leaves a feasible problem here


@pytest.mark.slow
def leg_with_touchdown_imf_min(value: float):
    """The bundled leg with its touchdown case's IMF limit set to ``value``."""
    leg = example("leg")
    return dataclasses.replace(
        leg,
        cases=tuple(
            dataclasses.replace(c, limits={**c.limits, "imf_min": value})
            if c.name == "touchdown"
            else c
            for c in leg.cases
        ),
    )


def test_a_run_without_the_explanation_does_not_point_to_a_diagnosis():
    """The leg with imf_min 0.25 is infeasible; sized without the explanation (``--no-explain``,
    a study's cases) its message says how to get the diagnosis instead of pointing to one that
    is not there."""
    bare = size(leg_with_touchdown_imf_min(0.25), explain=False, time_limit=30)
    assert bare.status == "infeasible" and not bare.diagnosis
    assert "diagnosis shows" not in bare.native_status
    assert "no diagnosis in this run" in bare.native_status


def test_an_impact_limit_no_design_meets_is_named_as_the_cause():
    """The bundled leg with its touchdown's IMF limit raised to 0.25 (every other requirement
    as shipped): the search proves it infeasible in about a second, and the diagnosis, which
    may take the rest of the time limit, finds that dropping the IMF limit alone makes it
    feasible (and so does dropping the trot's rating use), each with the optimum a sizing of the
    project without that limit finds, and the best
    IMF over every option ignoring every other requirement (a search of its own, not "—")."""
    from jointwright.commands.size import gap_reason

    leg = example("leg")
    p = leg_with_touchdown_imf_min(0.25)
    r = size(p, time_limit=60)
    assert r.status == "infeasible"
    row = next(d for d in r.diagnosis if d.requirement == "touchdown: imf min")
    free = dataclasses.replace(
        leg,
        cases=tuple(
            dataclasses.replace(c, limits={k: v for k, v in c.limits.items() if k != "imf_min"})
            for c in leg.cases
        ),
    )
    direct = size(free, explain=False)
    assert direct.status == "optimal" and row.relaxed_proven
    assert row.relaxed_objective == pytest.approx(direct.objective, rel=1e-9)
    assert 0.25 < row.best_achievable <= 1.0 and row.shortfall < 0
    # the one other way out: the trot's rating (the low ratios the IMF asks for overload the
    # motors in the trot); its row's optimum is that of the project without that limit
    others = [d for d in r.diagnosis if d is not row and d.relaxed_objective is not None]
    assert [d.requirement for d in others] == ["trot: rating use max"]
    no_trot = dataclasses.replace(
        p,
        cases=tuple(
            dataclasses.replace(c, limits={}) if c.kind == "duty" else c for c in p.cases
        ),
    )
    direct = size(no_trot, explain=False)
    assert direct.status == "optimal" and others[0].relaxed_proven
    assert others[0].relaxed_objective == pytest.approx(direct.objective, rel=1e-9)
    assert "feasible without touchdown: imf min" in r.message
    assert gap_reason(r, p) is None  # proven infeasible: no "longer time limit" hint


@pytest.mark.slow
def test_cli_size_writes_a_design_that_assess_reads(tmp_path):
    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "arm"), "--example", "arm"]).exit_code == 0
    project = tmp_path / "arm" / "project.toml"
    out = tmp_path / "best.toml"
    r = runner.invoke(main, ["size", str(project), "--out", str(out), "--json"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.output[r.output.index("{") :])
    assert data["status"] == "optimal" and data["gap"] == 0.0
    from jointwright.project import load_project

    p = load_project(project)
    d = load_design(out, p)
    assert d.joints == tuple(p.robot.actuated)
    r2 = runner.invoke(main, ["assess", str(project), "--design", str(out), "--json"])
    assert r2.exit_code == 0 and json.loads(r2.output)["feasible"] is True
    # the objective is the payload mass (kg) every payload case carries, as assess reports it
    carried = [
        c["metrics"]["payload_carried"]
        for c in json.loads(r2.output)["cases"]
        if c["kind"] == "payload"
    ]
    assert math.isclose(min(carried), data["objective"], rel_tol=1e-9)


def test_cli_bad_time_limit_exits_2(tmp_path):
    runner = CliRunner()
    runner.invoke(main, ["new", str(tmp_path / "leg")])
    r = runner.invoke(main, ["size", str(tmp_path / "leg" / "project.toml"), "--time-limit", "-3"])
    assert r.exit_code == 2 and "--time-limit" in r.output


@pytest.mark.slow
def test_continuous_ratio_range_is_gridded_then_refined(small):
    """A stage with a ratio range is searched on the R20 grid (ISO 3 [pub]) and then refined:
    the refined design is feasible, inside the range and at least as good as the grid optimum."""
    st = small.catalog.stages[0]
    lo, hi = min(st.ratios), max(st.ratios) * 1.5
    stage = dataclasses.replace(st, ratios=None, ratio_range=(lo, hi))
    cat = dataclasses.replace(small.catalog, stages=(stage,) + small.catalog.stages[1:])
    p = dataclasses.replace(small, catalog=cat)
    r = size(p, explain=False)
    if r.design is None:
        pytest.skip("instance infeasible")
    assert r.assessment.feasible
    for a in r.design.actuators:
        for s in a.stages:
            if s.stage.name == stage.name:
                assert lo * (1 - 1e-12) <= s.ratio <= hi * (1 + 1e-12)
    grid = size(p, explain=False, backend="enumerate")
    assert r.objective >= grid.objective * (1 - 1e-9)


def test_time_limit_covers_option_building(small):
    """A limit that runs out before the options are built ends the run with status time_limit
    and no design (not an exception, not an unlimited search)."""
    r = size(small, time_limit=1e-9)
    assert r.status == "time_limit" and r.design is None
    assert "time limit" in r.message


@pytest.mark.slow
def test_runner_ups_change_a_shared_group_as_a_whole(small):
    """With joints shared, a runner-up gives the whole group the other option: its objective is
    the one of the design with every joint of the group changed (scored by the evaluator)."""
    from jointwright.sizing import build_model

    shared = [["hip_fe", "knee"]]
    r = size(small, shared=shared)
    if r.status != "optimal":
        pytest.skip("instance infeasible")
    model, _ = build_model(small, "payload", {}, [], shared)
    labels = {a.label(): o for o, a in enumerate(model.table.actuators)}
    index = np.array([labels[a.label()] for a in r.design.actuators])
    group = [list(small.robot.actuated).index(j) for j in shared[0]]
    rows = [a for a in r.alternatives if a.joint == "hip_fe, knee"]
    assert rows and not any(a.joint in ("hip_fe", "knee") for a in r.alternatives)
    for a in rows:
        if a.objective is None:
            continue
        changed = index.copy()
        changed[group] = labels[a.actuator]
        s = model.score(changed[None, :])
        assert s.feasible[0]
        assert s.objective[0] == pytest.approx(a.objective, rel=1e-12)


@pytest.mark.slow
def test_cli_no_explain_skips_the_runner_ups(tmp_path):
    runner = CliRunner()
    runner.invoke(main, ["new", str(tmp_path / "leg")])
    project = str(tmp_path / "leg" / "project.toml")
    r = runner.invoke(main, ["size", project, "--no-explain", "--json"])
    data = json.loads(r.output[r.output.index("{") :])
    assert data["alternatives"] == [] and data["diagnosis"] == []


@pytest.mark.slow
def test_bundled_leg_maximizes_the_payload_mass_every_case_carries():
    # the default objective is the payload mass (kg) every payload case carries, each case reading
    # its force through required = fixed_load + payload_share·m_p·g_n; the raw minimum over the
    # cases' forces would let the 40 N side-step case decide [derived from the case definitions]
    from jointwright.problem import STANDARD_GRAVITY, carried_payload

    leg = example("leg")
    r = size(leg, explain=False)
    assert r.status == "optimal" and r.assessment.feasible
    metrics = {c.name: c.metrics for c in r.assessment.cases}
    carried = {
        c.name: float(carried_payload(c, metrics[c.name]["payload"]))
        for c in leg.cases
        if c.kind == "payload"
    }
    assert r.objective == pytest.approx(min(carried.values()), rel=1e-9)
    assert min(carried, key=carried.get) != "side-step"
    for c in leg.cases:
        if c.kind == "payload":
            expected = (metrics[c.name]["payload"] - c.fixed_load) / (
                c.payload_share * STANDARD_GRAVITY
            )
            assert metrics[c.name]["payload_carried"] == pytest.approx(expected, rel=1e-12)
    # the issue the objective answers: with the side-step no longer deciding, the vertical cases
    # get far more than the 200 N the raw minimum gave them
    raw_min = min(
        metrics[c.name]["payload"]
        for c in leg.cases
        if c.kind == "payload" and c.name != "side-step"
    )
    assert raw_min > 300.0


@pytest.mark.slow
def test_progress_is_told_every_phase(small):
    """A progress object with a phase method hears each phase in order (the command line shows
    them on stderr)."""
    seen = []

    class Progress:
        def __call__(self, nodes, best):
            pass

        def phase(self, text):
            seen.append(text)

    r = size(small, progress=Progress())
    assert seen[:4] == ["building options", "filtering options", "tightening", "first designs"]
    assert "searching" in seen
    if r.design is not None:
        assert seen[-1] == "explaining"


def test_a_stopped_run_says_whether_its_value_is_proven():
    """Status time_limit with a gap within the one asked for: the value is proven and only the
    tie-break is unfinished (docs/optimizer.md, "The time limit"); a larger gap points to it."""
    from jointwright.sizing import _message

    proven = _message("time_limit", "payload", 26.93, (), 0.0, 1e-4)
    assert "proven within the gap" in proven and "tie-break" in proven
    open_ = _message("time_limit", "payload", 26.93, (), 0.05, 1e-4)
    assert "see bound and gap" in open_ and "proven" not in open_
    assert "proven within 0.05 %" in _message("optimal", "payload", 26.93, (), 5e-4, 1e-3)


@pytest.mark.slow
def test_a_runner_up_is_shown_once_per_joint():
    """The best option of another motor can also be the best of another stage type; it is shown
    once per joint (as the stage type's, since it changes the stack too), not twice."""
    from jointwright.project import load_example
    from jointwright.sizing import size

    res = size(load_example("arm"), time_limit=60)
    seen = [(a.joint, a.actuator) for a in res.alternatives]
    assert seen and len(seen) == len(set(seen))


def test_diagnosis_never_shows_a_no_load_speed_as_reached():
    """The leg with an IMF floor no option meets (0.25 with a 4 kg budget): the swing's speed row
    of the diagnosis gives no 'best alone' figure, since the only closed form is the no-load
    speed through the lowest ratio, an upper bound on the loaded speed (a speed within the
    motor's torque-speed envelope never exceeds its no-load speed, docs/metrics.md) far above
    anything a loaded foot reaches; a limit above even that bound is shown with it."""
    leg = example("leg")
    cases = tuple(
        dataclasses.replace(c, limits={**c.limits, "imf_min": 0.25}) if c.kind == "impact" else c
        for c in leg.cases
    )
    r = size(dataclasses.replace(leg, cases=cases), time_limit=30)
    assert r.status == "infeasible"
    row = next(d for d in r.diagnosis if d.requirement == "swing: speed min")
    assert math.isnan(row.best_achievable) and math.isnan(row.shortfall)
    fast = tuple(
        dataclasses.replace(c, limits={**c.limits, "speed_min": 1e5}) if c.kind == "speed" else c
        for c in cases
    )
    row = next(
        d
        for d in size(dataclasses.replace(leg, cases=fast), time_limit=30).diagnosis
        if d.requirement == "swing: speed min"
    )
    assert 0 < row.best_achievable < 1e5 and row.shortfall > 0


def test_cli_size_points_to_the_frontier_when_runner_ups_tie(tmp_path):
    """The bundled leg's payload optimum has runner-ups that tie on payload (joints that do not
    limit it); the tie-break took the lightest, and the note says where the designs that keep
    the payload with a better measure are mapped. The leg's frontier's first point carries the
    same payload with an IMF at least as good (the front's largest-payload end)."""
    from jointwright.frontier import frontier

    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "leg"), "--example", "leg"]).exit_code == 0
    project = tmp_path / "leg" / "project.toml"
    r = runner.invoke(main, ["size", str(project), "--time-limit", "60"])
    assert r.exit_code == 0, r.output
    text = " ".join(r.output.split())
    assert "(tie)" in text and "`jointwright frontier` maps" in text
    from jointwright.project import load_project

    p = load_project(project)
    chosen = size(p, time_limit=60)
    imf = chosen.assessment.cases[[c.kind for c in chosen.assessment.cases].index("impact")]
    first = frontier(p, "imf", time_limit=60).points[0]
    assert first.payload == pytest.approx(chosen.objective, rel=1e-6)
    assert first.measure >= imf.metrics["imf"] - 1e-9


def test_infeasible_counts_options_by_each_joints_own_filters():
    """A knee mass limit no knee option meets (0.1 kg) empties the knee by its own filter: the
    result counts each joint's options after its own filters (the hips keep theirs) and names
    the knee. A knee reflected-inertia limit that keeps some options alone but no complete
    design (0.002 kg·m²) leaves every joint options of its own, and the message says the proven
    bounds rule out every option of every joint."""
    leg = example("leg")

    def with_knee(**limits):
        lim = dataclasses.replace(leg.requirements.joint("knee"), **limits)
        req = dataclasses.replace(
            leg.requirements, joints={**leg.requirements.joints, "knee": lim}
        )
        return size(dataclasses.replace(leg, requirements=req), time_limit=30, explain=False)

    r = with_knee(mass_max=0.1)
    assert r.status == "infeasible" and r.options["knee"] == 0
    assert r.options["hip_ab"] > 0 and r.options["hip_fe"] > 0
    assert "no option of knee meets the joint's own requirements" in r.native_status
    r = with_knee(reflected_inertia_max=0.002)
    assert r.status == "infeasible" and all(k > 0 for k in r.options.values())
    assert "rule out every option of every joint" in r.native_status
