"""How numbers read in the terminal and the report: gear lives in plain hours, runner-ups'
objective changes signed as their objective reads, and an unknown gap said in words.

Expected texts are the project's own conventions [trade]: four significant digits (as
every number shown) with thousands separated, as a life is written in a supplier's rating table."""

from __future__ import annotations

import dataclasses
import math
from types import SimpleNamespace

import pytest

from jointwright.commands import size as size_cmd
from jointwright.commands._format import num, requirement_num
from jointwright.report.markup import fmt
from jointwright.report.wording import objective_change, unknown_gap
from jointwright.units import format_hours


@pytest.mark.parametrize(
    ("hours", "text"),
    [
        (1.2e5, "120,000 h"),
        (32_384.0, "32,380 h"),
        (10_000.0, "10,000 h"),
        (9999.9, "10,000 h"),  # rounds up into the thousands
        (850.0, "850 h"),
        (12.345, "12.35 h"),
        (0.42, "0.42 h"),
        (1e6, "1,000,000 h"),
        (123_456.0, "123,500 h"),
        (1.7e6, "> 10⁶ h"),
        (math.inf, "> 10⁶ h"),  # no load: no wear
        ("inf", "> 10⁶ h"),  # JSON's infinity
        (None, "—"),
        (math.nan, "—"),
    ],
)
def test_hours_read_plainly(hours, text):
    assert format_hours(hours) == text
    assert num(hours, "h") == text
    assert fmt(hours, "h") == text
    assert "e+" not in format_hours(hours)


def test_life_requirement_in_hours():
    # life_min is kept in s inside (SI) and shown in h
    assert requirement_num("hip_fe: life min", 3.6e7) == "10,000 h"


@pytest.mark.parametrize(
    ("kind", "loss", "unit", "text"),
    [
        ("payload", 0.12, "kg", "−0.12 kg payload"),  # less payload carried
        ("payload", 0.0, "kg", "tie"),  # never "−0 kg"
        ("payload", 1e-13, "kg", "tie"),
        ("mass", 0.12, "kg", "+0.12 kg heavier"),  # minimized: a loss is more mass
        ("mass", -0.05, "kg", "−0.05 kg lighter"),
        ("cost", 12.0, "", "+12 costlier"),
        ("imf", 0.0213, "", "−0.0213 IMF"),
        ("margin", 0.5, "", "−0.5 margin"),
        ("payload", None, "kg", "—"),
    ],
)
def test_objective_change_reads_right(kind, loss, unit, text):
    assert objective_change(kind, loss, unit) == text


def _stopped_result(kind: str) -> SimpleNamespace:
    """A search stopped by its time limit with no finite bound (as a margin run over an impact
    case stops)."""
    return SimpleNamespace(
        objective_kind=kind,
        backend="search",
        message="time limit reached",
        status="time_limit",
        objective=1.32,
        bound=math.inf,
        gap=math.inf,
        seconds=8.0,
        native_status="50 nodes",
        options={"hip_ab": 99},
        assessment=None,
        binding=(),
        alternatives=(),
        diagnosis=(),
    )


def test_unknown_gap_said_in_words(leg_project, capsys):
    objective = {"maximize": "margin", "cases": ["touchdown"]}
    project = dataclasses.replace(leg_project, objective=objective)
    size_cmd.print_result(_stopped_result("margin"), project)
    out = " ".join(capsys.readouterr().out.split())
    assert "∞" not in out and "inf" not in out.replace("infeasible", "")
    assert "bound —; gap —" in out
    assert "gap not known" in out and "touchdown (impact)" in out
    # the same words in the report
    assert "touchdown (impact)" in unknown_gap(project, "margin")


def test_unknown_gap_generic(leg_project):
    text = unknown_gap(leg_project, "payload")
    assert text.startswith("gap not known") and "not proven optimal" in text


def test_size_json_says_why_the_bound_is_infinite(leg_project):
    """``size --json``: an infinite bound stays the string "inf" (valid JSON, no bare Infinity)
    and ``gap_unknown_reason`` says why; null with a finite bound."""
    import json

    objective = {"maximize": "margin", "cases": ["touchdown"]}
    project = dataclasses.replace(leg_project, objective=objective)
    result = _stopped_result("margin")
    result.to_dict = lambda: {"bound": "inf", "gap": "inf"}
    d = json.loads(json.dumps(size_cmd.result_json(result, project), allow_nan=False))
    assert d["bound"] == "inf" and d["gap_unknown_reason"].startswith("gap not known")
    assert "touchdown (impact)" in d["gap_unknown_reason"]
    result.objective = math.nan  # stopped before any design: no "best design found"
    reason = size_cmd.result_json(result, project)["gap_unknown_reason"]
    assert "before it found a design" in reason and "best design found" not in reason
    result.objective, result.bound, result.gap = 1.32, 1.5, 0.136
    assert size_cmd.result_json(result, project)["gap_unknown_reason"] is None


def test_report_reads_the_reason_from_the_sizing_json():
    from jointwright.report import sizing_result

    sizing = {"status": "time_limit", "objective_kind": "payload", "objective": 1.32}
    sizing |= {"bound": "inf", "gap": "inf", "gap_unknown_reason": "gap not known: because"}
    assert "gap not known: because" in sizing_result.runner_ups_section(sizing).body
    from jointwright.errors import InputError

    with pytest.raises(InputError, match="gap_unknown_reason"):
        sizing_result.runner_ups_section(sizing | {"gap_unknown_reason": 3})


def test_report_names_lighter_ties_and_better_runner_ups_within_the_gap():
    """A runner-up's label in the report: a tie lost the tie-break; a lighter tie comes from a
    MILP hand-over design; a better one lies within the optimality gap (docs/optimizer.md, "Ties
    and the optimality gap")."""
    from jointwright.report import sizing_result

    sizing = {"status": "optimal", "objective_kind": "payload", "objective": 20.0, "bound": 20.0}
    sizing |= {"gap": 0.0, "backend": "search", "seconds": 1.0, "message": "proven"}

    def why(alt):
        one = {"joint": "knee", "actuator": "M / S 9:1", "change": "other motor"} | alt
        return sizing_result.runner_ups_section(sizing | {"alternatives": [one]}).body

    assert "lost the tie-break" in why({"objective": 20.0, "loss": 0.0, "mass_change": 0.2})
    assert "tie, lighter" in why({"objective": 20.0, "loss": 0.0, "mass_change": -0.2})
    assert "within the optimality gap" in why({"objective": 20.002, "loss": -0.002})
    assert "against the chosen design" in why({"objective": 19.0, "loss": 1.0})


def test_finite_gap_still_shown(leg_project, capsys):
    result = _stopped_result("payload")
    result.bound, result.gap = 1.5, (1.5 - 1.32) / 1.32
    size_cmd.print_result(result, leg_project)
    out = capsys.readouterr().out
    assert "bound 1.5 kg; gap 13.6 %" in out and "gap not known" not in out


def test_runner_ups_signed_in_the_terminal(leg_project, capsys):
    alt = SimpleNamespace(
        joint="knee",
        change="other motor",
        actuator="M | S",
        ruled_out_by=None,
        objective=3.05,
        loss=0.128,
        mass_change=0.128,
    )
    tie = SimpleNamespace(**{**vars(alt), "loss": 0.0})
    result = _stopped_result("mass")
    result.bound, result.gap, result.alternatives = 2.9, 0.0, (alt, tie)
    size_cmd.print_result(result, leg_project)
    out = capsys.readouterr().out
    assert "+0.128 kg heavier" in out and "(tie)" in out
    assert "−0 kg" not in out and "-0 kg" not in out


def test_report_says_why_the_gap_is_unknown(leg_project):
    from jointwright.report import sizing_result

    sizing = {"status": "time_limit", "objective_kind": "margin", "objective": 1.32}
    sizing |= {"bound": "inf", "gap": "inf"}
    objective = {"maximize": "margin", "cases": ["touchdown"]}
    note = unknown_gap(dataclasses.replace(leg_project, objective=objective), "margin")
    body = sizing_result.runner_ups_section(sizing, gap_note=note).body
    assert "∞" not in body and "touchdown (impact)" in body
    assert "gap not known" in sizing_result.runner_ups_section(sizing).body


def _frontier(project):
    """Three frontier points of the leg's design (their numbers need not be optimal: this is about
    layout), each later one changing two joints."""
    from importlib import resources

    from jointwright.design import load_design
    from jointwright.frontier import Frontier, FrontierPoint

    with resources.as_file(resources.files("jointwright.examples") / "leg" / "design.toml") as p:
        design = load_design(p, project)
    labels = [a.label() for a in design.actuators]
    long_ = "Flatwind-9 | Flexring/Flexring-2 100:1"  # as long as an actuator label gets
    changed = (("hip_ab", labels[0], long_), ("knee", labels[2], long_))
    points = tuple(
        FrontierPoint(
            27.0 - k,
            0.14 + 0.005 * k,
            design,
            3.9,
            () if k == 0 else ("hip_ab", "knee"),
            () if k == 0 else changed,
            shock_use=0.7556,
        )
        for k in range(3)
    )
    return Frontier("imf", "touchdown", "min", points, True, 1, 12.3, 0, "branch-and-bound", 584)


def test_frontier_tables_fit_100_columns(leg_project, capsys, monkeypatch):
    from jointwright.commands import _format
    from jointwright.commands.frontier import print_frontier

    monkeypatch.setenv("COLUMNS", "100")
    monkeypatch.setattr(_format, "_console", None)
    print_frontier(_frontier(leg_project))
    out = capsys.readouterr().out
    lines = out.splitlines()
    assert max(len(x) for x in lines) <= 100
    # one line a point: no cell of the frontier table wraps
    first = next(k for k, x in enumerate(lines) if x.startswith("Frontier (largest"))
    body = [x for x in lines[first + 4 : first + 7]]
    assert [x.split("│")[1].strip() for x in body] == ["1", "2 ◆", "3"]
    assert "joints changed" in out and "hip_ab, knee" in out
    # the designs: the first point in full, then only the changed joints
    assert "Frontier designs" in out and out.count("Flexring/Flexring-2 100:1") == 4


def test_frontier_tables_show_a_shared_group_once():
    """Joints that share one actuator change together: the frontier's tables name the group's
    first joint with the count of the others, and keep a group that does not change whole."""
    from jointwright.commands.frontier import _grouped

    shared = [["fl_knee", "fr_knee"], ["fl_hip", "fr_hip"]]
    rows = [("fl_knee", "A", "B"), ("fr_knee", "A", "B"), ("fl_hip", "C", "D")]
    assert _grouped(rows, shared) == [("fl_knee (+1 shared)", "A", "B"), ("fl_hip", "C", "D")]
    assert _grouped(rows, []) == rows


@pytest.fixture(scope="module")
def wrench_leg(tmp_path_factory):
    """The leg example with its jump-push force acting 50 mm ahead of and 20 mm below the foot
    frame, and a 3 N·m moment about −y with it (docs/project-format.md, `offset`, `moment`)."""
    from click.testing import CliRunner

    from jointwright.cli import main
    from jointwright.project import load_project

    folder = tmp_path_factory.mktemp("wrench") / "leg"
    assert CliRunner().invoke(main, ["new", str(folder), "--example", "leg"]).exit_code == 0
    path = folder / "project.toml"
    text = path.read_text("utf-8")
    at = text.index("pose =", text.index('name = "jump-push"'))
    text = text[:at] + 'offset = [0.05, 0, -0.02]\nmoment = [0, "-3 N*m", 0]\n' + text[at:]
    path.write_text(text, "utf-8")
    return load_project(path)


WRENCH = "at (0.05, 0, -0.02) m from foot; moment (0, -3, 0) N·m (world axes)"


def test_check_shows_offset_and_moment(wrench_leg):
    import json

    from click.testing import CliRunner

    from jointwright.cli import main

    out = " ".join(CliRunner().invoke(main, ["check", str(wrench_leg.file)]).output.split())
    assert f"where the force acts and the moment with it: jump-push {WRENCH}" in out
    assert "landing-absorb at" not in out  # the other cases act at their frame
    data = json.loads(CliRunner().invoke(main, ["check", str(wrench_leg.file), "--json"]).output)
    case = next(c for c in data["cases"] if c["name"] == "jump-push")
    assert case["offset"] == [0.05, 0.0, -0.02] and case["moment"] == [0.0, -3.0, 0.0]


def test_assess_size_and_report_show_offset_and_moment(wrench_leg, capsys, monkeypatch):
    from importlib import resources

    from jointwright.assessment import assess
    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.design import load_design
    from jointwright.report import case_tables, job

    with resources.as_file(resources.files("jointwright.examples") / "leg" / "design.toml") as p:
        design = load_design(p, wrench_leg)
    a = assess(wrench_leg, design)
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, wrench_leg)
    out = capsys.readouterr().out
    assert out.count(WRENCH) == 1  # in the jump-push case's table only
    rows = size_cmd.payload_rows(wrench_leg, a)
    assert [r[-1] for r in rows] == [WRENCH, "at the frame, no moment", "at the frame, no moment"]
    # every force at its frame: no column for it
    assert [len(r) for r in size_cmd.payload_rows(_plain(wrench_leg), a)] == [5, 5, 5]
    shown = WRENCH.replace("-", "−")  # the report's minus sign
    assert shown in job.job_section(wrench_leg).body
    assert case_tables.cases_section(a.to_dict(), wrench_leg).body.count(shown) == 1


def _plain(project):
    """The same project with every force at its frame and no moment."""
    cases = tuple(
        dataclasses.replace(c, offset=(0.0,) * 3, moment=(0.0,) * 3) for c in project.cases
    )
    return dataclasses.replace(project, cases=cases)


@pytest.mark.parametrize(
    ("margin", "limit", "sense", "text"),
    [
        (0.018, 1.0, "max", "+1.8 %"),
        (-0.25, 200.0, "min", "−25.0 %"),
        (0.999, 150.0, "min", "+99.9 %"),
        (1.497, 150.0, "min", "2.5× limit"),  # 374.5 N against 150 N
        (2.238, 10_000.0, "min", "3.24× limit"),  # a gear life of 32,380 h against 10,000 h
        (168.977, 10_000.0, "min", "> 100× limit"),  # 1.7e6 h against 10,000 h
        (99.0, 10_000.0, "min", "> 100× limit"),
        (5.0, 0.0, "min", "+500.0 %"),  # no multiple of a zero limit
        (5.0, -2.0, "min", "+500.0 %"),  # nor of a negative one
        (math.inf, 1.0, "min", "+∞ %"),
        ("inf", 1.0, "min", "+∞ %"),
        (None, 1.0, "min", "—"),
        (math.nan, 1.0, "min", "—"),
    ],
)
def test_large_margins_read_as_multiples(margin, limit, sense, text):
    """Margin = (achieved − limit)/|limit| (docs/report.md); past +100 % a minimum is shown as
    achieved ÷ limit, from 100 on as "> 100×" [trade]."""
    from jointwright.margin_words import margin_text

    assert margin_text(margin, limit, sense) == text
    assert margin_text(margin, limit, sense, minus="-") == text.replace("−", "-")


def test_region_poses_fold_into_their_worst_pose():
    from jointwright.margin_words import check_label, worst_per_region

    def check(subject, requirement, margin):
        return {"subject": subject, "requirement": requirement, "margin": margin}

    regions = {"reach": {"poses": 3, "case": "reach@1", "margin": 0.05}}
    checks = [
        check("reach@0", "payload_min", 0.30),
        check("lift", "payload_min", 0.20),
        check("reach@1", "payload_min", 0.05),
        check("reach@2", "payload_min", "inf"),
        check("reach@1", "speed_min", 0.50),
        check("not@aregion", "payload_min", 0.01),  # not a region's pose: stays itself
    ]
    out = worst_per_region(checks, regions)
    assert [(c["subject"], c["requirement"], r, n) for c, r, n in out] == [
        ("reach@1", "payload_min", "reach", 3),
        ("lift", "payload_min", "", 1),
        ("reach@1", "speed_min", "reach", 3),
        ("not@aregion", "payload_min", "", 1),
    ]
    c, region, poses = out[0]
    assert check_label(c, region, poses) == "reach: payload min (worst of 3 poses: reach@1)"
    assert check_label(out[1][0]) == "lift: payload min"


def test_a_stroke_speed_case_says_which_speed_is_which(leg_project, capsys, monkeypatch):
    """The leg's swing has a 0.1 m stroke: the speed reached at its end is the requirement's and
    the only speed in the table. The loaded steady speed (the ceiling of the motion linearized
    at the pose, tens of m/s on a sized arm) and the no-load speed are not speeds the foot
    reaches: no table row shows them; one note says what lies beyond the stroke (terminal and
    report say the same)."""
    from importlib import resources

    from jointwright.assessment import assess
    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.design import load_design
    from jointwright.report.case_tables import cases_section
    from jointwright.units import format_number

    with resources.as_file(resources.files("jointwright.examples") / "leg" / "design.toml") as p:
        design = load_design(p, leg_project)
    a = assess(leg_project, design)
    swing = next(c for c in a.cases if c.name == "swing")
    assert swing.metrics["speed_steady"] >= swing.metrics["speed"]  # the stroke ends below it
    monkeypatch.setenv("COLUMNS", "200")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, leg_project)
    out = capsys.readouterr().out
    steady = format_number(swing.metrics["speed_steady"], 4)
    assert "end-point speed at the end of the stroke, with the load" in out
    for gone in ("unlimited stroke", "no-load speed", "steady speed with no stroke limit"):
        assert gone not in out
    # the ceiling is named but not given: a figure far above any speed the foot reaches
    assert "beyond the stroke the motors would keep accelerating" in out
    assert f"{steady} m/s" not in out and "no speed it reaches" in out
    # the limiting joint is named once, and the envelope only inside the note on the stroke
    lines = [x.strip() for x in out.splitlines()]
    at = lines.index(f"the checked end-point speed is limited by {swing.limiting_joint}")
    assert not lines[at + 1].startswith("limited by")
    body = cases_section(a.to_dict(), leg_project).body
    assert "unlimited stroke" not in body and "at steady speed" not in body
    assert f"{steady} m/s" not in body and "no speed it reaches" in body
    assert "time to cover the stroke from rest" in body
    # the report's case tables carry what the terminal prints: the acceleration from rest and
    # each joint's peak gear torque at the touchdown (its impact speed), with its rating share
    assert "acceleration along the direction from rest, under gravity and the case" in body
    touchdown = next(c for c in a.cases if c.name == "touchdown")
    for j in a.joints:
        torque = format_number(touchdown.metrics[f"shock_torque:{j.joint}"], 4)
        assert f"peak gear torque at the impact, {j.joint}" in body
        assert f"{torque} N·m (" in body


def test_duty_gear_rows_only_where_the_catalog_gives_a_number(capsys, monkeypatch):
    """The arm's catalog states no rated gear life (each life is NaN: unknown) but a
    repeated-peak rating: the terminal shows the gear rows it has numbers for, never a row
    of dashes."""
    from importlib import resources

    from jointwright.assessment import assess
    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.design import load_design
    from jointwright.project import load_project

    arm = resources.files("jointwright.examples") / "arm"
    with resources.as_file(arm / "project.toml") as p, resources.as_file(arm / "design.toml") as d:
        project = load_project(p)
        a = assess(project, load_design(d, project))
    duty = next(c for c in a.cases if c.kind == "duty")
    lives = [duty.metrics[f"gear_life:{j.joint}"] for j in a.joints]
    assert all(math.isnan(v) for v in lives)  # no rated life in the arm's catalog
    monkeypatch.setenv("COLUMNS", "200")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, project)
    out = capsys.readouterr().out
    assert "gear life on this cycle alone" not in out
    assert "gear repeated-peak rating used" in out
    # a direct drive has no gear: its gear rows say so, in the terminal and the report
    import dataclasses

    from jointwright.report.case_tables import cases_section

    with resources.as_file(arm / "design.toml") as d:
        design = load_design(d, project)
    k = design.joints.index("wrist_yaw")
    direct = dataclasses.replace(design.actuators[k], stages=())
    design = dataclasses.replace(
        design, actuators=design.actuators[:k] + (direct,) + design.actuators[k + 1 :]
    )
    b = assess(project, design)
    print_assessment(b, project)
    out = capsys.readouterr().out
    row = next(x for x in out.splitlines() if "gear repeated-peak rating used" in x)
    assert row.count("no gear") == 1 and "0 %" not in row
    body = cases_section(b.to_dict(), project).body
    assert "wrist_yaw no gear" in body


def test_names_stay_whole_while_the_table_fits(monkeypatch):
    """A case name is never folded mid-word when the table fits the console; when it cannot,
    the names fold and every column (the ok / MISSED mark last) is still shown."""
    from rich.console import Console

    from jointwright.commands import _format

    monkeypatch.setenv("COLUMNS", "100")
    monkeypatch.setattr(_format, "_console", None)
    rows = [["unpowered-push", "backdrive force max", "4.859 N", "40 N", "+87.9 %", "ok"]]
    wide = rows[0][:2] + ["9.145 N", "10.78 N", "80 N", "+88.6 %", "+86.5 %", "[red]MISSED[/red]"]

    def shown(columns, body):
        con = Console(width=100, record=True, soft_wrap=False)
        con.print(_format.table("Requirements", columns, body))
        return con.export_text()

    text = shown(["subject", "requirement", "achieved", "limit", "margin", ""], rows)
    assert "unpowered-push" in text
    cols = ["subject", "requirement", "nominal", "worst end", "limit", "margin", "at worst", ""]
    name = "unpowered-push-at-dock-2"  # 24 characters: with the rest, more than 100 columns
    many = [[name] + wide[1:5] + ["2.84× limit", "2.84× limit", wide[7]]]
    text = shown(cols, many)
    assert "MISSED" in text and all(len(line) <= 100 for line in text.splitlines())
    assert name not in text  # folded, so that the table fits


def test_modes_group_by_mode_and_fold_a_long_last_group():
    from jointwright.report.wording import modes_text

    leg = {"hip_ab": "holding", "hip_fe": "back-driven", "knee": "motoring"}
    assert modes_text(leg) == "motoring: knee; back-driven: hip_fe; holding: hip_ab"
    robot = {"fl_hip_fe": "motoring", "fl_knee": "motoring"}
    robot |= {f"j{k}": "holding" for k in range(10)}
    assert modes_text(robot) == "motoring: fl_hip_fe, fl_knee; holding: the other 10 joints"
    # a single group is listed, never "the other"
    every = {f"j{k}": "motoring" for k in range(6)}
    assert modes_text(every) == "motoring: " + ", ".join(every)


@pytest.mark.parametrize(
    ("gap", "text"),
    [
        (0.0, "0 %"),
        (0.136, "13.6 %"),
        (2e-5, "0.002 %"),
        (1.0, "100 %"),
        (1.11e-15, "0 %"),  # a MILP bound off by double-precision rounding
        (1e-9, "1e-07 %"),
    ],
)
def test_gap_reads_unsigned(gap, text):
    """A relative gap |bound − objective| / |objective| is never negative: no sign; a gap at
    the rounding of double precision reads as 0."""
    from jointwright.report.wording import gap_text

    assert gap_text(gap) == text


def test_limiting_quantity_reads_the_same_everywhere():
    """The duty cycle's binding rating in the terminal, the case table and the summary's risk:
    "continuous torque (RMS)", never the key "rms torque"."""
    from jointwright.report import summary
    from jointwright.report.wording import limiting_quantity_text

    assert limiting_quantity_text("rms_torque") == "continuous torque (RMS)"
    assert limiting_quantity_text("new_check") == "new check"
    assert limiting_quantity_text(None) == "—"
    a = {
        "checks": [],
        "joints": [],
        "cases": [
            {
                "name": "trot",
                "kind": "duty",
                "limiting_joint": "hip_fe",
                "metrics": {"rating_use": 0.98, "limiting_quantity": "rms_torque"},
            }
        ],
    }
    risk = " ".join(summary.risks(a))
    assert "hip_fe uses 98 % of its motor's continuous torque (RMS)" in risk


def test_binding_labels_read_large_margins_as_multiples():
    """The sizing result's binding requirements (terminal, --json, study store) read margins as
    the report does: a gear life 169 times the required one is "> 100× limit", not "+16800.0 %"."""
    from jointwright.margin_words import binding_labels

    checks = [
        {
            "subject": "hip",
            "requirement": "gear_life_min",
            "margin": 168.0,
            "limit": 10_000.0,
            "sense": "min",
        },
        {
            "subject": "knee",
            "requirement": "payload_min",
            "margin": 0.05,
            "limit": 2.0,
            "sense": "min",
        },
        {
            "subject": "ankle",
            "requirement": "imf_min",
            "margin": "inf",
            "limit": 0.2,
            "sense": "min",
        },
    ]
    labels = binding_labels(checks, {}, count=3)
    assert labels == [
        "knee: payload min (margin +5.0 %)",
        "hip: gear life min (margin > 100× limit)",
    ]


def test_a_speed_case_without_stroke_says_how_long_its_speed_takes_at_least():
    """Without a stroke the checked speed is the one the motors sustain, however long it takes;
    the acceleration from rest is the largest on the way, so the time is at least v/a₀:
    2.208 / 0.1463 = 15.09 s (worked by hand). With a stroke, or for other kinds, no note."""
    from jointwright.report.wording import without_stroke

    text = without_stroke("speed", {"speed": 2.208, "acceleration": 0.1463})
    assert "however long it takes to reach" in text and "v/a₀ = 15.1 s" in text
    assert "set stroke" in text
    assert without_stroke("speed", {"speed": 1.1, "acceleration": 3.1, "speed_steady": 11.3}) == ""
    assert without_stroke("payload", {"speed": 1.0, "acceleration": 1.0}) == ""


def test_a_force_below_the_fixed_load_is_no_payload_not_a_negative_mass(
    leg_project, capsys, monkeypatch
):
    """(F − fixed load)/(share·g_n) < 0 when the force falls short of the case's fixed load
    (the payload objective's definition, docs/project-format.md): the terminal, the report's
    case table and its outcome say the case carries no payload, never a negative mass."""
    from importlib import resources

    from jointwright.assessment import assess
    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.design import load_design
    from jointwright.report.case_tables import cases_section
    from jointwright.report.wording import NO_PAYLOAD
    from jointwright.units import format_number

    cases = tuple(
        dataclasses.replace(c, fixed_load=1000.0) if c.name == "side-step" else c
        for c in leg_project.cases
    )
    project = dataclasses.replace(leg_project, cases=cases)
    with resources.as_file(resources.files("jointwright.examples") / "leg" / "design.toml") as p:
        design = load_design(p, project)
    a = assess(project, design)
    step = next(c for c in a.cases if c.name == "side-step")
    assert step.metrics["payload_carried"] < 0 < step.metrics["payload"] < 1000.0
    monkeypatch.setenv("COLUMNS", "200")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, project)
    out = capsys.readouterr().out
    negative = format_number(-step.metrics["payload_carried"], 4) + " kg"
    assert NO_PAYLOAD in " ".join(out.split()) and f"-{negative}" not in out
    body = " ".join(cases_section(a.to_dict(), project).body.split())
    assert NO_PAYLOAD.replace("'", "&#x27;") in body and f"−{negative}" not in body


def test_an_unrated_gear_struck_past_its_repeated_peak_rating_says_so():
    """A stage with no momentary rating, struck at an impact with more torque than its
    repeated-peak rating: the share of that rating is named (10.12 / 6 = 168.7 %), since the
    stage is rated for cycles below it and states no emergency-stop limit above it."""
    from jointwright.report.wording import shock_share

    def pct(v):
        return f"{v:.4g} %"

    assert shock_share(True, float("nan"), 10.12, 6.0, pct) == (
        "no momentary rating; 168.7 % of the repeated-peak rating"
    )
    assert shock_share(True, None, -10.12, 6.0, pct).endswith("168.7 % of the repeated-peak rating")
    assert shock_share(True, "nan", 3.0, 6.0, pct) == "no momentary rating"
    assert shock_share(True, 0.5925, 71.1, 120.0, pct) == "59.25 % of momentary"
    assert shock_share(False, float("nan"), 0.0, float("inf"), pct) == "direct drive: no gear"
