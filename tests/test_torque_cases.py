"""Joint-space cases: required torque per joint, checked against each joint's capacity in its
power-flow mode. Outside values: the transmission law (DESIGN §2.3, motoring η_f·N·τ_m,
back-driven N·τ_m/η_b) worked by hand from the design's catalog data."""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import pytest

import jointwright.examples as examples
from jointwright.assessment import assess
from jointwright.design import load_design
from jointwright.errors import InputError
from jointwright.project import project_from_dict

ARM = Path(examples.__file__).parent / "arm"


def project_with(case: dict):
    data = tomllib.loads((ARM / "project.toml").read_text())
    data["case"] = [c for c in data["case"] if c["kind"] != "duty"] + [case]
    return project_from_dict(data, ARM / "project.toml")


def test_torque_case_ratio_by_hand():
    case = {
        "name": "supplier-loads",
        "kind": "torque",
        "torques": {"shoulder_yaw": "20 N*m", "elbow": "-30 N*m"},
        "motion": "along",
        "motions": {"elbow": "against"},
    }
    project = project_with(case)
    design = load_design(ARM / "design.toml", project)
    a = assess(project, design)
    res = next(c for c in a.cases if c.name == "supplier-loads")
    acts = dict(zip(project.robot.actuated, design.actuators, strict=True))
    yaw, elbow = acts["shoulder_yaw"], acts["elbow"]
    # motoring: η_f·N·τ_m (capped by the gear rating); back-driven: N·τ_m/η_b
    # capped by the gear stack's peak rating
    want_yaw = min(yaw.eta_forward * yaw.ratio * yaw.motor.peak_torque, yaw.gear_peak_torque) / 20
    held = (
        math.inf
        if elbow.self_locking
        else elbow.ratio * elbow.motor.peak_torque / elbow.eta_backward
    )
    want_elbow = min(held, elbow.gear_peak_torque) / 30.0
    assert res.metrics["torque_ratio:shoulder_yaw"] == pytest.approx(want_yaw, rel=1e-12)
    assert res.metrics["torque_ratio:elbow"] == pytest.approx(want_elbow, rel=1e-12)
    assert res.metrics["torque_ratio"] == pytest.approx(min(want_yaw, want_elbow), rel=1e-12)
    assert res.limiting_joint == ("shoulder_yaw" if want_yaw < want_elbow else "elbow")
    check = next(c for c in a.checks if c.subject == "supplier-loads")
    assert check.requirement == "torque_ratio_min" and check.limit == 1.0
    assert check.ok == (min(want_yaw, want_elbow) >= 1.0)


@pytest.mark.parametrize(
    "patch, field",
    [
        ({"torques": {}}, "torques"),
        ({"torques": {"nope": 1.0}}, "torques.nope"),
        ({"torques": {"elbow": "3 kg"}}, "torques.elbow"),
        ({"torques": {"elbow": 3.0}, "motions": {"wrist_yaw": "hold"}}, "motions.wrist_yaw"),
        ({"torques": {"elbow": 3.0}, "motion": "sideways"}, "motion"),
        ({"torques": {"elbow": 3.0}, "torque_ratio_min": 0}, "torque_ratio_min"),
        ({"torques": {"elbow": 3.0}, "grid": {"elbow": [0, 1, 2]}}, "grid"),
    ],
)
def test_bad_torque_cases_name_the_field(patch, field):
    case = {"name": "t", "kind": "torque", **patch}
    with pytest.raises(InputError) as e:
        project_with(case)
    assert field in str(e.value)


def test_torque_case_shows_required_and_available_torque(capsys, monkeypatch):
    """The terminal and the report show each joint's required torque, the torque available on
    its side in its power-flow mode (by hand as above: η_f·N·τ_m motoring, N·τ_m/η_b
    back-driven, each capped by the gear's peak rating) and their ratio, in N·m."""
    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.report import case_tables
    from jointwright.units import format_number

    case = {
        "name": "supplier-loads",
        "kind": "torque",
        "torques": {"shoulder_yaw": "20 N*m", "elbow": "-30 N*m"},
        "motion": "along",
        "motions": {"elbow": "against"},
    }
    project = project_with(case)
    design = load_design(ARM / "design.toml", project)
    a = assess(project, design)
    acts = dict(zip(project.robot.actuated, design.actuators, strict=True))
    yaw = acts["shoulder_yaw"]
    avail_yaw = min(yaw.eta_forward * yaw.ratio * yaw.motor.peak_torque, yaw.gear_peak_torque)
    monkeypatch.setenv("COLUMNS", "160")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, project)
    out = capsys.readouterr().out
    head = "Case supplier-loads: required and available torque per joint"
    lines = out[out.index(head) :].splitlines()
    row = next(x for x in lines if x.startswith("│ shoulder_yaw "))
    cells = [x.strip() for x in row.split("│")[1:-1]]
    assert cells[:2] == ["shoulder_yaw", "20 N·m"]
    assert cells[2] == f"{format_number(avail_yaw)} N·m" and cells[4] == "motoring"
    assert cells[3] == format_number(avail_yaw / 20.0)
    elbow = next(x for x in lines if x.startswith("│ elbow "))
    assert "-30 N·m" in elbow and "back-driven" in elbow
    body = case_tables.cases_section(a.to_dict(), project).body
    assert f"{format_number(avail_yaw, minus='−')} N·m" in body and "−30 N·m" in body
    assert "back-driven" in body and "available ÷ required" in body
