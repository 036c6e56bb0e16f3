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
    from jointwright.report.build import build_report

    project = region_project()
    design = load_design(ARM / "design.toml", project)
    path = build_report(project, design, tmp_path)
    html = path.read_text(encoding="utf-8")
    a = assess(project, design)
    worst = a.regions["reach-region"]
    assert "Regions of poses: the worst pose" in html
    assert worst["case"] in html
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
