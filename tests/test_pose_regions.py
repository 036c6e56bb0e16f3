"""Cases over a region of poses: the requirement holds at every pose, the worst pose is reported.
Outside check: brute evaluation of one ordinary case per pose (each with its own ``pose``)."""

from __future__ import annotations

import copy
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

import jointwright.examples as examples
from jointwright.assessment import assess
from jointwright.design import load_design
from jointwright.errors import InputError
from jointwright.project import project_from_dict

ARM = Path(examples.__file__).parent / "arm"


def base_data():
    data = tomllib.loads((ARM / "project.toml").read_text())
    data["case"] = [c for c in data["case"] if c["kind"] != "duty"]
    return data


def test_grid_worst_pose_matches_brute_evaluation():
    data = base_data()
    region = copy.deepcopy(data["case"][0])
    region.update(
        name="reach-region", grid={"shoulder_pitch": [0.2, 0.9, 4], "elbow": [0.5, 1.5, 3]}
    )
    region["payload_min"] = "1 kg"
    data["case"].append(region)
    project = project_from_dict(data, ARM / "project.toml")
    members = [c for c in project.cases if c.region == "reach-region"]
    assert len(members) == 12
    design = load_design(ARM / "design.toml", project)
    a = assess(project, design)

    # brute: one ordinary case per grid pose, evaluated on its own
    brute = []
    for sp in np.linspace(0.2, 0.9, 4):
        for el in np.linspace(0.5, 1.5, 3):
            d = base_data()
            c = copy.deepcopy(d["case"][0])
            c["name"] = "one"
            c["payload_min"] = "1 kg"
            c["pose"] = dict(c["pose"], shoulder_pitch=float(sp), elbow=float(el))
            d["case"] = [c]
            p1 = project_from_dict(d, ARM / "project.toml")
            brute.append(next(x for x in assess(p1, design).cases).metrics["payload"])
    got = [next(x for x in a.cases if x.name == c.name).metrics["payload"] for c in members]
    np.testing.assert_allclose(got, brute, rtol=1e-12)
    worst = a.regions["reach-region"]
    assert worst["index"] == int(np.argmin(brute))
    assert worst["poses"] == 12
    assert worst["pose"]["elbow"] == pytest.approx(members[worst["index"]].pose["elbow"])
    # payload_min "1 kg" on top of the gripper's fixed_load "0.4 kg", share 1: 1.4 kg at g_n
    limit = 1.4 * 9.80665
    assert worst["margin"] == pytest.approx((min(brute) - limit) / limit, rel=1e-9)
    # the requirement holds at every pose: feasible only if the worst pose meets it
    region_checks = [c for c in a.checks if c.subject.startswith("reach-region@")]
    assert len(region_checks) == 12
    assert min(c.margin for c in region_checks) == pytest.approx(worst["margin"])


def test_pose_list_and_named_poses():
    data = base_data()
    data["poses"] = {"a": data["case"][0]["pose"], "b": data["case"][1]["pose"]}
    region = copy.deepcopy(data["case"][0])
    del region["pose"]
    region.update(name="two", poses=["a", "b"])
    data["case"].append(region)
    project = project_from_dict(data, ARM / "project.toml")
    two = [c for c in project.cases if c.region == "two"]
    assert [c.name for c in two] == ["two@0", "two@1"]
    assert two[1].pose == project.case("close-lift").pose


def test_trajectory_samples(tmp_path):
    data = base_data()
    csv = tmp_path / "sweep.csv"
    joints = ["shoulder_yaw", "shoulder_pitch", "elbow", "wrist_pitch", "wrist_yaw", "wrist_flex"]
    rows = ["t," + ",".join(f"q:{j}" for j in joints)]
    for k in range(6):
        rows.append(f"{0.1 * k},0,{0.2 + 0.1 * k},1.0,-0.2,0,0")
    csv.write_text("\n".join(rows) + "\n")
    region = copy.deepcopy(data["case"][0])
    del region["pose"]
    region.update(name="sweep", trajectory_poses=str(csv), every=2)
    data["case"].append(region)
    project = project_from_dict(data, ARM / "project.toml")
    sweep = [c for c in project.cases if c.region == "sweep"]
    assert [round(c.pose["shoulder_pitch"], 12) for c in sweep] == [0.2, 0.4, 0.6]


@pytest.mark.parametrize(
    "patch, field",
    [
        ({"grid": {"elbow": [0, 1]}}, "grid.elbow"),
        ({"grid": {"elbow": [0, 1, 0]}}, "grid.elbow[2]"),
        ({"grid": {"elbow": [0, 99, 2]}}, "grid.elbow[1]"),
        ({"grid": {"nope": [0, 1, 2]}}, "grid.nope"),
        ({"grid": {"elbow": [0, 1, 2]}, "poses": ["x"]}, "poses"),
        ({"poses": []}, "poses"),
        ({"poses": ["nowhere"]}, "poses[0]"),
        ({"every": 2}, "every"),
        ({"grid": {"elbow": [0.0, 1.0, 200], "shoulder_pitch": [0.0, 1.0, 100]}}, "grid"),
        ({"name": "a@b"}, "name"),
    ],
)
def test_bad_regions_name_the_field(patch, field):
    data = base_data()
    case = copy.deepcopy(data["case"][0])
    case.update(patch)
    if "poses" in patch:
        del case["pose"]
    data["case"].append(dict(case, name=patch.get("name", "r")))
    with pytest.raises(InputError) as e:
        project_from_dict(data, ARM / "project.toml")
    assert field in str(e.value)
    assert not math.isnan(0.0)


def test_the_documented_examples_load_and_assess(tmp_path):
    """The TOML examples of docs/project-format.md ("Regions of poses", "A full wrench and a
    joint-space load") added to the bundled arm: they load, and every case is assessed."""
    import re
    import shutil

    doc = (Path(__file__).parents[1] / "docs" / "project-format.md").read_text(encoding="utf-8")
    part = doc.split("### Regions of poses")[1].split("### `[objective]`")[0]
    blocks = re.findall(r"```toml\n(.*?)```", part, re.S)
    assert len(blocks) == 2
    for f in ARM.iterdir():
        if f.is_file():
            shutil.copy(f, tmp_path / f.name)
    text = (ARM / "project.toml").read_text(encoding="utf-8")
    reach = (
        '\n[poses.reach]\nshoulder_yaw = 0\nshoulder_pitch = "50 deg"\nelbow = "50 deg"\n'
        'wrist_pitch = "-10 deg"\nwrist_yaw = 0\nwrist_flex = 0\n'
    )
    (tmp_path / "project.toml").write_text(text + reach + "\n".join(blocks), encoding="utf-8")
    from jointwright.project import load_project

    project = load_project(tmp_path / "project.toml")
    a = assess(project, load_design(tmp_path / "design.toml", project))
    assert set(a.regions) == {"reach-region", "transfer-path"}
    assert a.regions["reach-region"]["poses"] == 20
    names = {c.name for c in a.cases}
    assert {"drill", "held-out", "gearbox-supplier"} <= names


def test_check_shows_a_region_of_alike_poses_once(tmp_path):
    """`check` lists a region whose poses read alike (same kind, frame, direction, motion,
    requirements, load growth) as one row "region (N poses)", not N equal rows; its load line
    likewise. A 12-pose grid added to the bundled arm."""
    import shutil

    from click.testing import CliRunner

    from jointwright.cli import main

    shutil.copytree(ARM, tmp_path / "arm")
    path = tmp_path / "arm" / "project.toml"
    path.write_text(
        path.read_text()
        + '\n[[case]]\nname = "reach-region"\nkind = "payload"\nframe = "tool"\n'
        "direction = [0, 0, 1]\nmotion = \"along\"\npayload_min = \"1 kg\"\n"
        "grid = { shoulder_pitch = [0.2, 0.9, 4], elbow = [0.5, 1.5, 3] }\n"
        "pose = { shoulder_yaw = 0, shoulder_pitch = 0, elbow = 0, wrist_pitch = 0, "
        "wrist_yaw = 0, wrist_flex = 0 }\n"
    )
    out = CliRunner().invoke(main, ["check", str(path)], env={"COLUMNS": "200"})
    assert out.exit_code == 0, out.output
    assert out.output.count("reach-region (12 poses)") == 2  # the table row and the load line
    assert "reach-region@" not in out.output
