"""Open robot models of the PyPI package ``example-robot-data`` (BSD-3; installed by the
``robots`` extra, its URDFs under ``<site-packages>/cmeel.prefix/share/example-robot-data``):
an architect's own robot differs from our bundled examples — whole-robot URDFs with limbs that
are not sized here, grippers that are not actuated, mimic joints, a URDF's own floating joint,
joint limits and actuator masses already inside the link masses.

Each test names the robot it reads. Rigid-body reference values come from Pinocchio (``pin``)
applied to the same URDF independently of the project layer. Catalogs are our own invented
examples (the bundled leg and arm catalogs).
"""

from __future__ import annotations

import sysconfig
from importlib import resources
from pathlib import Path

import numpy as np
import pinocchio as pin
import pytest

from jointwright.assessment import assess, unloaded_joints
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.project import load_project
from jointwright.robot.basis import gravity, pose_basis
from jointwright.sizing import size

ROBOTS = (
    Path(sysconfig.get_paths()["purelib"])
    / "cmeel.prefix"
    / "share"
    / "example-robot-data"
    / "robots"
)
pytestmark = pytest.mark.skipif(
    not ROBOTS.is_dir(),
    reason="example-robot-data is not installed (pip install '.[robots]'); real-robot checks skipped",
)

SOLO12 = ROBOTS / "solo_description" / "robots" / "solo12.urdf"
UR5 = ROBOTS / "ur_description" / "urdf" / "ur5_robot.urdf"
PANDA = ROBOTS / "panda_description" / "urdf" / "panda.urdf"
BOLT = ROBOTS / "bolt_description" / "robots" / "bolt.urdf"
TALOS = ROBOTS / "talos_data" / "robots" / "talos_reduced.urdf"


def _catalog(tmp_path: Path, example: str) -> str:
    text = (
        resources.files("jointwright.examples").joinpath(example, "catalog.toml").read_text("utf-8")
    )
    (tmp_path / "catalog.toml").write_text(text, encoding="utf-8")
    return "catalog.toml"


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "project.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _pose(values: dict) -> str:
    return "\n".join(f'{k} = "{v} deg"' for k, v in values.items())


def _pin_gravity(urdf: Path, floating: bool, q: np.ndarray) -> np.ndarray:
    """Generalized gravity straight from Pinocchio on the URDF (the outside reference)."""
    text = urdf.read_text(encoding="utf-8")
    model = (
        pin.buildModelFromXML(text, pin.JointModelFreeFlyer(), mimic=True)
        if floating
        else pin.buildModelFromXML(text, mimic=True)
    )
    return pin.computeGeneralizedGravity(model, model.createData(), q)


# ---------------------------------------------------------------------------------- quadruped
SOLO_STAND = {
    f"{leg}_{j}": v
    for leg in ("FL", "FR", "HL", "HR")
    for j, v in (
        ("HAA", 0),
        ("HFE", 40 if leg[0] == "F" else -40),
        ("KFE", -80 if leg[0] == "F" else 80),
    )
}


def _solo_project(tmp_path: Path, extra_robot: str = "", actuated: str = "") -> Path:
    cat = _catalog(tmp_path, "leg")
    legs = ("FL", "FR", "HL", "HR")
    shared = ", ".join(
        "[" + ", ".join(f'"{leg}_{j}"' for leg in legs) + "]" for j in ("HAA", "HFE", "KFE")
    )
    return _write(
        tmp_path,
        f"""
[project]
name = "solo12 whole robot"
[robot]
urdf = "{SOLO12}"
base = "floating"
{actuated}
{extra_robot}
[catalog]
files = ["{cat}"]
max_stages = 1
stage_kinds = ["planetary"]
[objective]
shared = [{shared}]
[poses.stand]
{_pose(SOLO_STAND)}
[[case]]
name = "push-down"
kind = "payload"
frame = "FL_FOOT"
direction = [0, 0, -1]
pose = "stand"
[[case]]
name = "stand-carry"
kind = "stance"
frame = "base_link"
direction = [0, 0, 1]
motion = "hold"
pose = "stand"
contacts = [{{ frame = "FL_FOOT", friction = 0.6 }}, {{ frame = "FR_FOOT", friction = 0.6 }},
            {{ frame = "HL_FOOT", friction = 0.6 }}, {{ frame = "HR_FOOT", friction = 0.6 }}]
[[case]]
name = "touchdown"
kind = "impact"
frame = "FL_FOOT"
direction = [0, 0, 1]
pose = "stand"
imf_min = 0.01
""",
    )


def test_solo12_gravity_equals_pinocchio(tmp_path):
    # example-robot-data solo12: 12 joints on a floating trunk; reference: Pinocchio's own
    # generalized gravity at the same configuration, no actuator masses added
    p = load_project(_solo_project(tmp_path))
    robot = p.robot
    assert robot.base == "floating" and robot.nv == 18 and robot.n_act == 12
    q = robot.configuration(p.case("push-down").pose)
    b = pose_basis(robot, q)
    ours = gravity(b, np.zeros((1, 12)))[0]
    np.testing.assert_allclose(ours, _pin_gravity(SOLO12, True, q), rtol=0, atol=1e-9)


def test_solo12_whole_robot_sized_with_shared_legs(tmp_path):
    # example-robot-data solo12, the four legs sharing one actuator per joint kind
    p = load_project(_solo_project(tmp_path))
    r = size(p, time_limit=120)
    assert r.design is not None and r.assessment.feasible
    labels = {j.joint: j.actuator for j in r.assessment.joints}
    for kind in ("HAA", "HFE", "KFE"):
        assert len({labels[f"{leg}_{kind}"] for leg in ("FL", "FR", "HL", "HR")}) == 1
    cases = {c.name: c for c in r.assessment.cases}
    assert 0.01 <= cases["touchdown"].metrics["imf"] <= 1.0
    assert cases["stand-carry"].metrics["payload"] > 0


def test_one_limb_of_a_whole_robot(tmp_path):
    # example-robot-data solo12: size the front-left leg only; the other nine joints are held
    # (their torque goes to the structure), so payload at the FL foot equals the result with the
    # same three actuators on a robot where nothing else moves.
    path = _solo_project(tmp_path, actuated='actuated = ["FL_HAA", "FL_HFE", "FL_KFE"]')
    text = path.read_text().replace("shared = ", "# shared = ")
    path.write_text(text)
    p = load_project(path)
    assert p.robot.n_act == 3 and len(p.robot.held) == 9 and not p.robot.free
    ev = Evaluator(p)
    r = size(p, time_limit=60)
    assert r.design is not None
    a = assess(p, r.design, ev)
    impact = next(c for c in a.cases if c.name == "touchdown")
    assert 0.0 <= impact.metrics["imf"] <= 1.0
    stance = next(c for c in a.cases if c.name == "stand-carry")
    assert stance.metrics["payload"] > 0  # held legs stand; the sized leg carries its share


def test_included_actuator_mass_is_replaced_not_added(tmp_path):
    # example-robot-data solo12: with 0.3 kg of the knee actuator declared as already inside the
    # link masses, a sized 0.3 kg actuator at the same mount gives back the URDF's own gravity
    # (Pinocchio), and a lighter one gives less load on the hip.
    path = _solo_project(tmp_path, extra_robot='included = { FL_KFE = "0.1 kg" }')
    p = load_project(path)
    robot = p.robot
    q = robot.configuration(p.case("push-down").pose)
    b = pose_basis(robot, q)
    k = robot.actuated.index("FL_KFE")
    m = np.zeros((1, 12))
    m[0, k] = 0.1
    np.testing.assert_allclose(gravity(b, m)[0], _pin_gravity(SOLO12, True, q), rtol=0, atol=1e-9)
    assert robot.link_mass_total == pytest.approx(_pin_mass(SOLO12) - 0.1, abs=1e-12)


def _pin_mass(urdf: Path) -> float:
    model = pin.buildModelFromXML(urdf.read_text(encoding="utf-8"), mimic=True)
    return float(sum(i.mass for i in model.inertias))


def test_included_mass_larger_than_its_link_is_refused(tmp_path):
    path = _solo_project(tmp_path, extra_robot='included = { FL_KFE = "50 kg" }')
    with pytest.raises(InputError, match=r"robot.included.FL_KFE.*more than"):
        load_project(path)


# ---------------------------------------------------------------------------------- arms
UR5_POSE = {
    "shoulder_pan_joint": 0,
    "shoulder_lift_joint": -60,
    "elbow_joint": 60,
    "wrist_1_joint": -90,
    "wrist_2_joint": -90,
    "wrist_3_joint": 0,
}


def _arm_project(tmp_path, urdf, pose, frame, extra="") -> Path:
    cat = _catalog(tmp_path, "arm")
    return _write(
        tmp_path,
        f"""
[project]
name = "arm"
[robot]
urdf = "{urdf}"
{extra}
[catalog]
files = ["{cat}"]
max_stages = 1
stage_kinds = ["planetary", "strain_wave"]
[poses.work]
{_pose(pose)}
[[case]]
name = "lift"
kind = "payload"
frame = "{frame}"
direction = [0, 0, 1]
pose = "work"
payload_min = "1 kg"
[[case]]
name = "side-hit"
kind = "impact"
frame = "{frame}"
direction = [0, 1, 0]
pose = "work"
effective_mass_max = "40 kg"
""",
    )


def test_ur5_six_joint_arm(tmp_path):
    # example-robot-data ur5_robot.urdf: six revolute joints, fixed base
    p = load_project(_arm_project(tmp_path, UR5, UR5_POSE, "tool0"))
    assert p.robot.n_act == 6 and p.robot.base == "fixed"
    q = p.robot.configuration(p.case("lift").pose)
    g = gravity(pose_basis(p.robot, q), np.zeros((1, 6)))[0]
    np.testing.assert_allclose(g, _pin_gravity(UR5, False, q), rtol=0, atol=1e-9)
    r = size(p, time_limit=60)
    assert r.design is not None and r.assessment.feasible
    # no case loads the base yaw (vertical axis, vertical force): it is reported, not sized
    assert "shoulder_pan_joint" in unloaded_joints(p)


PANDA_POSE = {
    "panda_joint1": 0,
    "panda_joint2": 30,
    "panda_joint3": 0,
    "panda_joint4": -90,
    "panda_joint5": 0,
    "panda_joint6": 100,
    "panda_joint7": 0,
}


def test_panda_arm_with_unactuated_gripper(tmp_path):
    # example-robot-data panda.urdf: 7 arm joints; finger_joint2 mimics finger_joint1 (a
    # follower, no degree of freedom of its own); the gripper is not sized and is held
    actuated = "actuated = [" + ", ".join(f'"panda_joint{i}"' for i in range(1, 8)) + "]"
    p = load_project(_arm_project(tmp_path, PANDA, PANDA_POSE, "panda_hand", actuated))
    robot = p.robot
    assert robot.n_act == 7 and robot.held == ("panda_finger_joint1",)
    assert robot.mimic == (("panda_finger_joint2", "panda_finger_joint1", 1.0, 0.0),)
    assert robot.nv == 8  # 7 arm joints + one finger; the mimic joint adds none
    q = robot.configuration(p.case("lift").pose)
    g = gravity(pose_basis(robot, q), np.zeros((1, 7)))[0]
    np.testing.assert_allclose(g, _pin_gravity(PANDA, False, q), rtol=0, atol=1e-9)
    r = size(p, time_limit=60)
    assert r.design is not None and r.assessment.feasible
    hit = next(c for c in r.assessment.cases if c.name == "side-hit")
    assert 0 < hit.metrics["effective_mass"] <= 40


@pytest.mark.slow
def test_panda_free_finger_yields_and_carries_nothing_it_cannot(tmp_path):
    # a free finger carries no torque: a force at the finger tip along its sliding axis cannot be
    # held (payload 0, limited by the finger), and the same push back-drives it with no force
    actuated = "actuated = [" + ", ".join(f'"panda_joint{i}"' for i in range(1, 8)) + "]"
    extra = actuated + '\nunactuated = { panda_finger_joint1 = "free" }'
    path = _arm_project(tmp_path, PANDA, PANDA_POSE, "panda_hand", extra)
    p = load_project(path)
    q = p.robot.configuration(p.case("lift").pose)
    b = pose_basis(p.robot, q, ["panda_leftfinger"])
    axis = b.J[0, :3, p.robot.joint_v_index[p.robot.joint_names.index("panda_finger_joint1")]]
    u = axis / np.linalg.norm(axis)
    text = (
        path.read_text()
        + f"""
[[case]]
name = "pinch"
kind = "payload"
frame = "panda_leftfinger"
direction = [{u[0]:.12f}, {u[1]:.12f}, {u[2]:.12f}]
pose = "work"
[[case]]
name = "finger-push"
kind = "backdrive"
frame = "panda_leftfinger"
direction = [{u[0]:.12f}, {u[1]:.12f}, {u[2]:.12f}]
pose = "work"
"""
    )
    path.write_text(text)
    p = load_project(path)
    r = size(p, time_limit=60, explain=False)
    assert r.design is not None
    a = assess(p, r.design)
    pinch = next(c for c in a.cases if c.name == "pinch")
    assert pinch.metrics["payload"] == 0.0 and pinch.limiting_joint == "panda_finger_joint1"
    assert "free joint" in pinch.note
    push = next(c for c in a.cases if c.name == "finger-push")
    assert push.metrics["backdrive_force"] == pytest.approx(0.0, abs=1e-12)


# ---------------------------------------------------------------------------------- legged
def test_bolt_biped(tmp_path):
    # example-robot-data bolt.urdf: a small biped, three joints per leg, floating base
    cat = _catalog(tmp_path, "leg")
    pose = {"FL_HAA": 0, "FL_HFE": 30, "FL_KFE": -60, "FR_HAA": 0, "FR_HFE": 30, "FR_KFE": -60}
    p = load_project(
        _write(
            tmp_path,
            f"""
[robot]
urdf = "{BOLT}"
base = "floating"
[catalog]
files = ["{cat}"]
max_stages = 1
stage_kinds = ["planetary"]
[poses.stand]
{_pose(pose)}
[[case]]
name = "push"
kind = "payload"
frame = "FL_FOOT"
direction = [0, 0, -1]
pose = "stand"
[[case]]
name = "landing"
kind = "impact"
frame = "FL_FOOT"
direction = [0, 0, 1]
pose = "stand"
""",
        )
    )
    assert p.robot.n_act == 6
    q = p.robot.configuration(p.case("push").pose)
    g = gravity(pose_basis(p.robot, q), np.zeros((1, 6)))[0]
    np.testing.assert_allclose(g, _pin_gravity(BOLT, True, q), rtol=0, atol=1e-9)
    r = size(p, time_limit=60)
    assert r.design is not None and r.assessment.feasible
    land = next(c for c in r.assessment.cases if c.name == "landing")
    assert 0.0 <= land.metrics["imf"] <= 1.0


@pytest.mark.slow
def test_talos_legs_inside_the_whole_humanoid(tmp_path):
    # example-robot-data talos_reduced.urdf: a humanoid; size its 12 leg joints, the torso, arms,
    # head and grippers stay held (not sized)
    cat = _catalog(tmp_path, "leg")
    legs = [f"leg_{side}_{i}_joint" for side in ("left", "right") for i in range(1, 7)]
    pose = {
        j: v
        for side in ("left", "right")
        for j, v in (
            (f"leg_{side}_3_joint", -25),
            (f"leg_{side}_4_joint", 50),
            (f"leg_{side}_5_joint", -25),
        )
    }
    p = load_project(
        _write(
            tmp_path,
            f"""
[robot]
urdf = "{TALOS}"
base = "floating"
actuated = [{", ".join(f'"{j}"' for j in legs)}]
[catalog]
files = ["{cat}"]
max_stages = 1
stage_kinds = ["planetary", "cycloidal"]
[poses.stand]
{_pose({j: pose.get(j, 0) for j in legs})}
[[case]]
name = "push"
kind = "payload"
frame = "leg_left_6_link"
direction = [0, 0, -1]
pose = "stand"
[[case]]
name = "landing"
kind = "impact"
frame = "leg_left_6_link"
direction = [0, 0, 1]
pose = "stand"
""",
        )
    )
    robot = p.robot
    assert robot.n_act == 12 and len(robot.held) == len(robot.joint_names) - 12
    q = robot.configuration(p.case("push").pose)
    g = gravity(pose_basis(robot, q), np.zeros((1, 12)))[0]
    np.testing.assert_allclose(g, _pin_gravity(TALOS, True, q), rtol=0, atol=1e-9)
    r = size(p, time_limit=120, explain=False)
    assert r.design is not None
    a = assess(p, r.design)
    land = next(c for c in a.cases if c.name == "landing")
    assert 0.0 <= land.metrics["imf"] <= 1.0


# ---------------------------------------------------------------------------------- URDF features
def test_urdf_own_floating_joint_becomes_the_one_floating_base(tmp_path):
    # example-robot-data solo12, written as many legged-robot files are: a massless "world" root
    # link and a floating joint to the trunk. The robot gets one free-flyer, never two, and the
    # same gravity as the plain file on a floating base (Pinocchio).
    text = SOLO12.read_text(encoding="utf-8")
    head, sep, rest = text.partition('<link name="base_link"')
    own = (
        head
        + (
            '<link name="world"/>\n<joint name="trunk_free" type="floating">'
            '<parent link="world"/><child link="base_link"/></joint>\n'
        )
        + sep
        + rest
    )
    urdf = tmp_path / "solo12_floating.urdf"
    urdf.write_text(own, encoding="utf-8")
    cat = _catalog(tmp_path, "leg")
    base = f"""
[robot]
urdf = "{urdf}"
actuated = ["FL_HAA", "FL_HFE", "FL_KFE"]
BASE
[catalog]
files = ["{cat}"]
max_stages = 1
[[case]]
name = "push"
kind = "payload"
frame = "FL_FOOT"
direction = [0, 0, -1]
pose = {{ FL_HAA = 0, FL_HFE = "40 deg", FL_KFE = "-80 deg" }}
"""
    p = load_project(_write(tmp_path, base.replace("BASE", "")))
    assert p.robot.base == "floating" and p.robot.nv == 18
    q = p.robot.configuration(p.case("push").pose)
    g = gravity(pose_basis(p.robot, q), np.zeros((1, 3)))[0]
    np.testing.assert_allclose(g, _pin_gravity(SOLO12, True, q), rtol=0, atol=1e-9)
    with pytest.raises(InputError, match=r"robot.base.*trunk_free"):
        load_project(_write(tmp_path, base.replace("BASE", 'base = "fixed"')))


def test_pose_outside_the_urdf_limits_names_case_and_joint(tmp_path):
    # panda_joint4's URDF limits are [-3.0718, -0.0698] rad: 0 rad is outside
    pose = dict(PANDA_POSE, panda_joint4=0)
    actuated = "actuated = [" + ", ".join(f'"panda_joint{i}"' for i in range(1, 8)) + "]"
    with pytest.raises(InputError, match=r"poses.work.panda_joint4.*outside the joint's limits"):
        load_project(_arm_project(tmp_path, PANDA, pose, "panda_hand", actuated))
