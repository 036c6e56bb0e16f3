"""The report and ``assess`` name a region case's worst pose and draw it; tables show a payload
case's force (N) and the payload mass it carries (kg). Bookkeeping of the report; the physics is
checked in test_pose_regions.py and test_wrench_loads.py."""

from __future__ import annotations

import copy
import json
import tomllib
from pathlib import Path

import pytest

import jointwright.examples as examples
from jointwright.assessment import assess
from jointwright.design import load_design
from jointwright.project import STANDARD_GRAVITY, project_from_dict

ARM = Path(examples.__file__).parent / "arm"


def region_project():
    data = tomllib.loads((ARM / "project.toml").read_text())
    data["case"] = [c for c in data["case"] if c["kind"] != "duty"]
    region = copy.deepcopy(data["case"][0])
    region.update(name="reach-region", grid={"shoulder_pitch": [0.3, 0.9, 3]})
    data["case"].append(region)
    data["case"].append(
        {"name": "supplier", "kind": "torque", "torques": {"elbow": "10 N*m"}, "motion": "along"}
    )
    wrench = copy.deepcopy(data["case"][0])
    wrench.update(name="held-out", offset=[0.1, 0, 0], moment=[0, 0, "2 N*m"])
    data["case"].append(wrench)
    return project_from_dict(data, ARM / "project.toml")


@pytest.mark.slow
def test_report_draws_the_worst_pose_and_shows_kg_and_n(tmp_path):
    import math

    from jointwright.report.build import build_report
    from jointwright.units import format_number

    project = region_project()
    design = load_design(ARM / "design.toml", project)
    path = build_report(project, design, tmp_path)
    html = path.read_text(encoding="utf-8")
    a = assess(project, design)
    worst = a.regions["reach-region"]
    assert "Regions of poses: the worst pose" in html
    assert worst["case"] in html
    # the worst pose in degrees (the grid moves shoulder_pitch between 0.3 and 0.9 rad)
    q = project.case(worst["case"]).pose["shoulder_pitch"]
    assert "joint positions (° or m)" in html
    assert f"shoulder_pitch {format_number(math.degrees(q), minus='−')}°" in html
    assert (tmp_path / "figures" / "region-1.png").is_file()
    assert "payload mass it carries" in html
    assert "payload mass " in html and "kg)" in html  # payload_min read as a payload mass
    assert "smallest achieved ÷ required joint torque" in html
    assert "Force capability at the pose of held-out" in html  # its own polytope
    lift = next(c for c in a.cases if c.name == "reach-lift")
    case = project.case("reach-lift")
    want = (lift.metrics["payload"] - case.fixed_load) / (case.payload_share * STANDARD_GRAVITY)
    assert abs(lift.metrics["payload_carried"] - want) < 1e-9


def test_assess_json_has_regions():
    project = region_project()
    design = load_design(ARM / "design.toml", project)
    d = json.loads(json.dumps(assess(project, design).to_dict()))
    r = d["regions"]["reach-region"]
    assert r["poses"] == 3 and r["case"].startswith("reach-region@")
    assert set(r["pose"]) >= {"shoulder_pitch", "elbow"}


def test_region_poses_read_in_degrees_and_group_under_their_region(capsys, monkeypatch):
    """The worst pose in degrees (revolute; m for prismatic) in the terminal and the report, and
    the report's requirements and job tables group a region's poses under the region."""
    import math

    from jointwright.commands import _format
    from jointwright.commands.assess import print_assessment
    from jointwright.report import job, outcome
    from jointwright.report.wording import pose_text, region_groups
    from jointwright.units import format_number

    project = region_project()
    design = load_design(ARM / "design.toml", project)
    a = assess(project, design)
    worst = project.case(a.regions["reach-region"]["case"])
    q = worst.pose["shoulder_pitch"]  # a grid over 0.3 to 0.9 rad
    deg = f"shoulder_pitch {format_number(math.degrees(q))}°"
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.setattr(_format, "_console", None)
    print_assessment(a, project)
    out = capsys.readouterr().out
    assert deg in out and "joint positions (° or m)" in out
    # the terminal's requirements table: the region's row, then its poses indented under it
    table = out[out.index("Requirements") :]
    head = table.index("│ reach-region ")
    poses = [table.index(f"│   reach-region@{k} ") for k in range(3)]
    assert head < poses[0] < poses[1] < poses[2] < table.index("│ supplier ")
    assert "region of 3 poses" in table[head : poses[0]]
    # a revolute joint in degrees, a prismatic one in m
    assert pose_text({"slide": 0.12, "knee": math.pi / 2}, {"slide": False}) == (
        "slide 0.12 m, knee 90°"
    )
    # grouping: the poses together, where the first one stood
    names = [c.name for c in project.cases]
    groups = region_groups(names, project)
    assert ("reach-region", [f"reach-region@{k}" for k in range(3)]) in groups
    assert sum(len(n) for _r, n in groups) == len(names)
    d = a.to_dict()
    body = outcome.requirements_section(d, project).body
    head = body.index('scope="rowgroup">reach-region: a region of 3 poses')
    at = [body.index(f'data-check="reach-region@{k}:payload_min"') for k in range(3)]
    assert head < at[0] < at[1] < at[2]
    assert body.count("rowgroup") == 1 and body[head : at[2]].count("<tr") == 3
    job = job.job_section(project).body
    assert "reach-region (3 poses)" in job and "reach-region@1" not in job


def test_tightest_margins_and_risks_name_a_region_once_by_its_worst_pose():
    """The summary's tightest margins and risks, the binding constraints and the terminal's
    binding line count a region once, by its worst pose (named), as the case tables group it."""
    import re

    from jointwright.report import outcome, summary
    from jointwright.solve.explain import binding as binding_of

    project = region_project()
    design = load_design(ARM / "design.toml", project)
    a = assess(project, design)
    d = json.loads(json.dumps(a.to_dict()))
    worst = d["regions"]["reach-region"]["case"]
    poses = [c for c in d["checks"] if c["subject"].startswith("reach-region@")]
    assert len(poses) == 3  # one payload_min per pose
    low = min(poses, key=lambda c: float(c["margin"]))
    assert low["subject"] == worst
    # every check margin made the tightest: each list shows the region once
    for c in d["checks"]:
        c["margin"] = 0.01 if c["subject"].startswith("reach-region@") else 0.5
        c["ok"] = True
    next(c for c in d["checks"] if c["subject"] == worst)["margin"] = 0.001
    for c in d["checks"]:  # the efficiency band's worst end as the nominal (no band here)
        c["margin_worst"] = c["margin"]
    table = summary.margins_table(d)
    assert table.count('data-summary-check="reach-region@') == 1  # one row, its worst pose
    assert f"reach-region: payload min (worst of 3 poses: {worst})" in table
    risk = " ".join(summary.risks(d))
    assert len(re.findall(r"reach-region@\d", risk)) == 1 and worst in risk
    binding = outcome.binding_section(d).body
    assert len(re.findall(r"reach-region@\d", binding)) == 1 and worst in binding
    labels = binding_of(a)  # the sizing result's binding requirements (terminal, JSON, study)
    assert sum("reach-region" in x for x in labels) <= 1
    assert not any(re.search(r"^reach-region@\d", x) for x in labels)
