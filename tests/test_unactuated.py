"""Joints that are not actuated: held (locked by structure or brake) and free (no torque), on the
planar elbow arm with closed forms.

Reference: Spong, Hutchinson & Vidyasagar, Robot Modeling and Control, planar elbow manipulator
(mass matrix and gravity) [mem, verified in tests/test_robot_model.py]; effective mass along u
1/(uᵀ·J·M⁻¹·Jᵀ·u) (Khatib 1995 [mem]); payload along a ray by the one-variable LP ratio test
(Chiacchio et al. 1997 [mem]). Only the shoulder q1 is actuated, by a direct-drive motor of our
own invented test catalog.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from jointwright.assessment import assess, unloaded_joints
from jointwright.design import design_from_dict
from jointwright.errors import InputError
from jointwright.project import load_project
from test_robot_model import spong_elbow

G = 9.81
M1, M2, L1, L2, LC1, I1, I2 = 2.0, 1.5, 0.4, 0.35, 0.2, 0.03, 0.02
TAU_PEAK, ROTOR, BREAKAWAY = 40.0, 2e-3, 0.5

CATALOG = f"""
[[motor]]
name = "test-rotor-a"
peak_torque = "{TAU_PEAK} N*m"
continuous_torque = "10 N*m"
rotor_inertia = "{ROTOR} kg*m^2"
mass = "0.8 kg"
max_speed = "3000 rpm"
cogging_torque = "{BREAKAWAY} N*m"
"""


def project(
    tmp_path: Path,
    role: str | None,
    lc2: float = 0.15,
    extra_case: str = "",
    pose: str = "q1 = 0, q2 = 0",
) -> Path:
    unact = f'unactuated = {{ q2 = "{role}" }}' if role else ""
    (tmp_path / "catalog.toml").write_text(CATALOG, encoding="utf-8")
    path = tmp_path / "project.toml"
    path.write_text(
        f"""
[robot]
base = "fixed"
gravity = [0, -{G}, 0]
actuated = ["q1"]
{unact}
frames = [{{ name = "tip", link = "link2", xyz = [{L2}, 0, 0] }}]
[[robot.links]]
name = "ground"
mass = 1.0
shape = "point"
[[robot.links]]
name = "link1"
mass = {M1}
com = [{LC1}, 0, 0]
inertia = [{0.2 * I1}, {0.8 * I1}, {I1}]
[[robot.links]]
name = "link2"
mass = {M2}
com = [{lc2}, 0, 0]
inertia = [{0.3 * I2}, {0.7 * I2}, {I2}]
[[robot.joints]]
name = "q1"
type = "revolute"
parent = "ground"
child = "link1"
axis = [0, 0, 1]
lower = "-170 deg"
upper = "170 deg"
[[robot.joints]]
name = "q2"
type = "revolute"
parent = "link1"
child = "link2"
xyz = [{L1}, 0, 0]
axis = [0, 0, 1]
lower = "-150 deg"
upper = "150 deg"
[catalog]
files = ["catalog.toml"]
max_stages = 0
[[case]]
name = "lift"
kind = "payload"
frame = "tip"
direction = [0, 1, 0]
motion = "hold"
pose = {{ {pose} }}
[[case]]
name = "bump"
kind = "impact"
frame = "tip"
direction = [0, 1, 0]
pose = {{ {pose} }}
[[case]]
name = "push"
kind = "backdrive"
frame = "tip"
direction = [0, 1, 0]
pose = {{ {pose} }}
{extra_case}
""",
        encoding="utf-8",
    )
    return path


def assessed(path: Path):
    p = load_project(path)
    d = design_from_dict(
        {"design": {"name": "direct"}, "joint": {"q1": {"motor": "test-rotor-a"}}}, p
    )
    return p, {c.name: c for c in assess(p, d).cases}


def test_default_role_is_held(tmp_path):
    p = load_project(project(tmp_path, None))
    assert p.robot.held == ("q2",) and p.robot.free == ()
    assert p.robot.role("q2") == "held" and p.robot.role("q1") == "actuated"


def test_held_elbow_closed_forms(tmp_path):
    lc2 = 0.15
    p, c = assessed(project(tmp_path, "held", lc2))
    # payload: τ1 = g1 + s·(l1 + l2) ≤ τ_peak, g1 = G(m1·lc1 + m2·(l1 + lc2)) at q = 0; the held
    # elbow takes its own torque (no limit)
    g1 = G * (M1 * LC1 + M2 * (L1 + lc2))
    assert c["lift"].metrics["payload"] == pytest.approx((TAU_PEAK - g1) / (L1 + L2), rel=1e-12)
    assert c["lift"].limiting_joint == "q1"
    # effective mass: the arm is one rigid body about q1, m = (d11 + I_r)/(l1 + l2)²
    D, _ = spong_elbow(0.0, 0.0, M1, M2, L1, LC1, lc2, I1, I2)
    assert c["bump"].metrics["effective_mass"] == pytest.approx(
        (D[0, 0] + ROTOR) / (L1 + L2) ** 2, rel=1e-9
    )
    # back-drive: only q1 can yield, against its breakaway torque
    assert c["push"].metrics["backdrive_force"] == pytest.approx(BREAKAWAY / (L1 + L2), rel=1e-12)


def test_free_elbow_closed_forms(tmp_path):
    lc2 = 0.15
    p, c = assessed(project(tmp_path, "free", lc2))
    # the elbow's own weight needs torque m2·lc2·G there: a free elbow cannot hold the arm
    assert c["lift"].metrics["payload"] == 0.0
    assert c["lift"].limiting_joint == "q2" and "free joint q2" in c["lift"].note
    # effective mass with the elbow moving: 1/(uᵀ J M⁻¹ Jᵀ u), M = D + diag(I_r, 0)
    D, _ = spong_elbow(0.0, 0.0, M1, M2, L1, LC1, lc2, I1, I2)
    M = D + np.diag([ROTOR, 0.0])
    J = np.array([[0.0, 0.0], [L1 + L2, L2]])  # tip velocity at q = 0, rows x, y
    u = np.array([0.0, 1.0])
    ref = 1.0 / (u @ J @ np.linalg.solve(M, J.T @ u))
    assert c["bump"].metrics["effective_mass"] == pytest.approx(ref, rel=1e-9)
    assert ref < (D[0, 0] + ROTOR) / (L1 + L2) ** 2  # a free elbow makes the tip lighter
    # a push moves the free elbow with no force at all
    assert c["push"].metrics["backdrive_force"] == 0.0
    assert c["push"].limiting_joint == "q2"


def test_free_elbow_balanced_carries_nothing_along_its_motion(tmp_path):
    # centre of mass of link 2 on the elbow axis: no weight torque there, but any tip force along
    # y turns the elbow (a = l2 ≠ 0), so nothing can be held; the arm still holds itself up
    p, c = assessed(project(tmp_path, "free", lc2=0.0))
    assert c["lift"].metrics["payload"] == 0.0 and c["lift"].metrics["self_supporting"]
    assert c["lift"].limiting_joint == "q2"


def test_unloaded_joint_is_reported(tmp_path):
    # a pushing case along x at q = 0 reaches no joint (the force passes through both axes) and
    # gravity along -y loads q1: nothing is unloaded; with gravity along z (horizontal arm plane)
    # and a force along x, q1 carries nothing
    p = load_project(project(tmp_path, "held"))
    assert unloaded_joints(p) == ()
    path = project(tmp_path, "held")
    text = path.read_text().replace(f"gravity = [0, -{G}, 0]", f"gravity = [0, 0, -{G}]")
    text = text.replace("direction = [0, 1, 0]\nmotion", "direction = [1, 0, 0]\nmotion")
    path.write_text(text)
    assert unloaded_joints(load_project(path)) == ("q1",)
    # the sizing result carries the same note (the CLI prints it, --json lists it)
    from jointwright.sizing import size

    r = size(load_project(path), explain=False)
    assert r.unloaded_joints == ("q1",) and r.to_dict()["unloaded_joints"] == ["q1"]
    # a torque case that requires a torque of q1 loads it (the joint is then sized for it)
    torque = '\n[[case]]\nname = "spec"\nkind = "torque"\ntorques = { q1 = "2 N*m" }\n'
    torque += 'motion = "along"\n'
    path.write_text(text + torque)
    assert unloaded_joints(load_project(path)) == ()
    # so does a speed case whose tip pushes along y (|J_q1ᵀ·F| = (l1 + l2)·200 N at q = 0)
    speed = '\n[[case]]\nname = "swing-out"\nkind = "speed"\nframe = "tip"\ndirection = [0, 1, 0]\n'
    speed += 'tip_force = ["0 N", "200 N", "0 N"]\npose = { q1 = 0, q2 = 0 }\n'
    path.write_text(text + speed)
    assert unloaded_joints(load_project(path)) == ()
    path.write_text(text + speed.replace('"200 N"', '"0 N"'))
    assert unloaded_joints(load_project(path)) == ("q1",)


@pytest.mark.parametrize(
    "snippet, field, rule",
    [
        ('unactuated = { q1 = "held" }', "robot.unactuated.q1", "is actuated"),
        ('unactuated = { q2 = "loose" }', "robot.unactuated.q2", "must be one of held, free"),
        ('unactuated = { q9 = "free" }', "robot.unactuated.q9", "no 1-dof joint"),
        ('included = { q2 = "0.1 kg" }', "robot.included.q2", "not an actuated joint"),
        # q1's stator sits on the fixed base (the world): no moving link holds its mass
        ('included = { q1 = "1 kg" }', "robot.included.q1", "part of the fixed base"),
    ],
)
def test_bad_roles_and_included_masses(tmp_path, snippet, field, rule):
    path = project(tmp_path, None)
    path.write_text(path.read_text().replace('actuated = ["q1"]', f'actuated = ["q1"]\n{snippet}'))
    with pytest.raises(InputError) as exc:
        load_project(path)
    assert exc.value.field == field and rule in exc.value.rule


@pytest.mark.parametrize(
    "pose, rule",
    [
        ("q1 = 90, q2 = 0", "more than a full turn"),  # degrees meant, radians read
        ('q1 = "175 deg", q2 = 0', "outside the joint's limits"),
        ('q1 = 0, q2 = "-2.7 rad"', "outside the joint's limits"),
        ('q1 = "0.1 m", q2 = 0', "convertible to rad"),
    ],
)
def test_pose_units_and_limits(tmp_path, pose, rule):
    with pytest.raises(InputError) as exc:
        load_project(project(tmp_path, None, pose=pose))
    assert "pose" in exc.value.field and rule in exc.value.rule


def test_plain_radians_within_limits_are_read_as_radians(tmp_path):
    p = load_project(project(tmp_path, None, pose="q1 = 0.5, q2 = -1.2"))
    assert p.case("lift").pose == {"q1": 0.5, "q2": -1.2}
    assert math.isclose(p.robot.position_limits("q1")[1], math.radians(170))


STAGES = """
[[motor]]
name = "test-rotor-b"
peak_torque = "4 N*m"
continuous_torque = "1.5 N*m"
rotor_inertia = "1e-4 kg*m^2"
mass = "0.4 kg"
max_speed = "3000 rpm"

[[motor]]
name = "test-rotor-c"
peak_torque = "9 N*m"
continuous_torque = "3 N*m"
rotor_inertia = "4e-4 kg*m^2"
mass = "0.9 kg"
max_speed = "2500 rpm"

[[stage]]
name = "test-orbit"
kind = "planetary"
ratios = [3, 5, 8, 12]
efficiency = { model = "constant", forward = 0.95, backward = 0.93 }

[[stage.frame]]
name = "test-orbit-1"
rated_peak_torque = "60 N*m"
rated_continuous_torque = "30 N*m"
mass = "0.3 kg"
input_inertia = "1e-6 kg*m^2"
"""


@pytest.mark.parametrize("role", ["held", "free"])
def test_floating_robot_with_an_unactuated_joint_sized_under_an_imf_limit(tmp_path, role):
    # a floating base, the shoulder sized, the elbow held or free, a minimum IMF at the tip: the
    # search's proven IMF bounds must treat the unactuated joint as the evaluator does (held:
    # locked; free: moving), so the search's optimum equals exhaustive enumeration
    from jointwright.sizing import size

    path = project(tmp_path, role)
    (tmp_path / "catalog.toml").write_text(CATALOG + STAGES, encoding="utf-8")
    text = path.read_text().replace('base = "fixed"', 'base = "floating"')
    text = text.replace("max_stages = 0", "max_stages = 1")
    text = text.replace(
        'name = "bump"\nkind = "impact"', 'name = "bump"\nkind = "impact"\nimf_min = 0.02'
    )
    # a free elbow cannot hold the arm's weight: lift along the elbow-neutral direction only
    text = text.replace(
        'name = "lift"\nkind = "payload"\nframe = "tip"\ndirection = [0, 1, 0]',
        'name = "lift"\nkind = "payload"\nframe = "link1"\ndirection = [0, 1, 0]',
    )
    path.write_text(text)
    p = load_project(path)
    assert p.robot.base == "floating"
    search = size(p, explain=False, gap=0)
    exhaustive = size(p, backend="enumerate", explain=False)
    assert search.status == exhaustive.status
    if search.status == "optimal":
        assert search.objective == pytest.approx(exhaustive.objective, rel=1e-9, abs=1e-12)
        imf = next(c for c in search.assessment.cases if c.name == "bump").metrics["imf"]
        assert imf >= 0.02 * (1 - 1e-9)
