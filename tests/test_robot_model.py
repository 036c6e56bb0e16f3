"""Robot building from project tables and URDF: dynamics against closed forms, equivalence of the
two routes, mounts, configurations and input validation."""

from __future__ import annotations

import copy
import math
import pickle
import tomllib
from pathlib import Path

import numpy as np
import pinocchio as pin
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.robot import Robot

DATA = Path(__file__).parent / "data" / "robot"
G = 9.81


def arm4_table() -> dict:
    with open(DATA / "arm4.toml", "rb") as fh:
        return tomllib.load(fh)["robot"]


def full_mass_matrix(model, q):
    """crba with the lower triangle filled (releases differ on filling it)."""
    M = pin.crba(model, model.createData(), q)
    return np.triu(M) + np.triu(M, 1).T


def planar_elbow(m1, m2, l1, lc1, lc2, I1, I2) -> Robot:
    """Two links in the x-y plane, joints about z, gravity along -y (q1 measured from x)."""
    return Robot.from_links(
        {
            "base": "fixed",
            "gravity": [0, -G, 0],
            "links": [
                {"name": "ground", "mass": 1.0, "shape": "point"},
                # thin plates in the x-y plane: Izz = Ixx + Iyy (perpendicular-axis theorem)
                {
                    "name": "link1",
                    "mass": m1,
                    "com": [lc1, 0, 0],
                    "inertia": [0.2 * I1, 0.8 * I1, I1],
                },
                {
                    "name": "link2",
                    "mass": m2,
                    "com": [lc2, 0, 0],
                    "inertia": [0.3 * I2, 0.7 * I2, I2],
                },
            ],
            "joints": [
                {
                    "name": "q1",
                    "type": "revolute",
                    "parent": "ground",
                    "child": "link1",
                    "axis": [0, 0, 1],
                },
                {
                    "name": "q2",
                    "type": "revolute",
                    "parent": "link1",
                    "child": "link2",
                    "xyz": [l1, 0, 0],
                    "axis": [0, 0, 1],
                },
            ],
        },
        file="elbow.toml",
    )


# --------------------------------------------------------------------------- closed forms
def spong_elbow(q1, q2, m1, m2, l1, lc1, lc2, I1, I2):
    """Spong, Hutchinson & Vidyasagar, Robot Modeling and Control, planar elbow manipulator
    [mem, verified by re-deriving the kinetic and potential energy]:
    d11 = m1 lc1² + m2(l1² + lc2² + 2 l1 lc2 cos q2) + I1 + I2,
    d12 = m2(lc2² + l1 lc2 cos q2) + I2, d22 = m2 lc2² + I2,
    g1 = (m1 lc1 + m2 l1) g cos q1 + m2 lc2 g cos(q1+q2), g2 = m2 lc2 g cos(q1+q2)."""
    c2 = math.cos(q2)
    d11 = m1 * lc1**2 + m2 * (l1**2 + lc2**2 + 2 * l1 * lc2 * c2) + I1 + I2
    d12 = m2 * (lc2**2 + l1 * lc2 * c2) + I2
    d22 = m2 * lc2**2 + I2
    g1 = (m1 * lc1 + m2 * l1) * G * math.cos(q1) + m2 * lc2 * G * math.cos(q1 + q2)
    g2 = m2 * lc2 * G * math.cos(q1 + q2)
    return np.array([[d11, d12], [d12, d22]]), np.array([g1, g2])


@settings(max_examples=40, deadline=None)
@given(
    q1=st.floats(-math.pi, math.pi),
    q2=st.floats(-math.pi, math.pi),
    m1=st.floats(0.2, 5.0),
    m2=st.floats(0.2, 5.0),
    l1=st.floats(0.1, 1.0),
    f1=st.floats(0.1, 0.9),
    lc2=st.floats(0.05, 0.8),
    I1=st.floats(1e-4, 0.2),
    I2=st.floats(1e-4, 0.2),
)
def test_planar_elbow_matches_spong_closed_forms(q1, q2, m1, m2, l1, f1, lc2, I1, I2):
    # Spong, Hutchinson & Vidyasagar closed forms [mem, verified]: see spong_elbow
    lc1 = f1 * l1
    robot = planar_elbow(m1, m2, l1, lc1, lc2, I1, I2)
    q = robot.configuration({"q1": q1, "q2": q2})
    M = full_mass_matrix(robot.model, q)
    g = pin.computeGeneralizedGravity(robot.model, robot.model.createData(), q)
    D, g_ref = spong_elbow(q1, q2, m1, m2, l1, lc1, lc2, I1, I2)
    np.testing.assert_allclose(M, D, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(g, g_ref, rtol=1e-12, atol=1e-10)


def test_shape_shorthands_give_textbook_moments():
    # thin rod m·L²/12 about transverse axes through the centre; solid box m(b²+c²)/12
    # [mem: standard tables of mass moments of inertia, e.g. Meriam & Kraige, Dynamics, appendix]
    robot = Robot.from_links(
        {
            "base": "floating",
            "links": [
                {"name": "rod", "mass": 3.0, "shape": "rod", "length": "40 cm", "along": "y"},
                {"name": "box", "mass": 2.0, "shape": "box", "size": [0.1, 0.2, 0.3]},
            ],
            "joints": [
                {
                    "name": "j",
                    "type": "revolute",
                    "parent": "rod",
                    "child": "box",
                    "axis": [1, 0, 0],
                }
            ],
        },
        file="shapes.toml",
    )
    rod, box = robot.model.inertias[1], robot.model.inertias[2]
    np.testing.assert_allclose(np.diag(rod.inertia), [3 * 0.16 / 12, 0, 3 * 0.16 / 12], atol=1e-15)
    expect = [2 * (0.04 + 0.09) / 12, 2 * (0.01 + 0.09) / 12, 2 * (0.01 + 0.04) / 12]
    np.testing.assert_allclose(np.diag(box.inertia), expect, rtol=1e-12)


# --------------------------------------------------------------------------- URDF == table
@pytest.mark.parametrize("floating", [False, True])
def test_urdf_and_table_give_the_same_dynamics(floating):
    # the same invented arm written twice (tests/data/robot/arm4.*); the table uses units
    # ("900 g", "35 cm", "3 kg*cm^2") and an unnormalized axis, the URDF plain SI
    table = arm4_table()
    table["base"] = "floating" if floating else "fixed"
    a = Robot.from_links(table, file="arm4.toml")
    b = Robot.from_urdf(DATA / "arm4.urdf", floating=floating, frames=table["frames"])
    assert a.joint_names == b.joint_names == ("yaw", "shoulder", "elbow", "wrist")
    assert a.link_names == b.link_names
    assert a.frame_names == b.frame_names == ("tool",) + a.link_names
    assert a.link_mass_total == pytest.approx(b.link_mass_total, rel=1e-12)
    assert a.link_mass_total == pytest.approx(4.0 + 1.2 + 1.8 + 0.9 + 0.4 + 0.15, rel=1e-12)
    rng = np.random.default_rng(7)
    for _ in range(5):
        q = a.configuration(rng.uniform(-1, 1, 4), rng.uniform(-1, 1, 3), rng.uniform(-1, 1, 3))
        np.testing.assert_allclose(
            full_mass_matrix(a.model, q), full_mass_matrix(b.model, q), atol=1e-12
        )
        ga = pin.computeGeneralizedGravity(a.model, a.model.createData(), q)
        gb = pin.computeGeneralizedGravity(b.model, b.model.createData(), q)
        np.testing.assert_allclose(ga, gb, atol=1e-12)
    for ma, mb in zip(a.mounts, b.mounts, strict=True):
        assert (ma.link, ma.body_joint) == (mb.link, mb.body_joint)
        np.testing.assert_allclose(ma.point, mb.point, atol=1e-15)
    assert a.position_limits("elbow") == b.position_limits("elbow") == (-2.5, 2.5)


def test_joint_axis_and_floating_base_pose_follow_the_rpy_convention():
    # URDF convention R = Rz(yaw)·Ry(pitch)·Rx(roll) [pub: URDF joint/origin specification]
    def rot(r, p, y):
        cr, sr, cp, sp, cy, sy = (
            math.cos(r),
            math.sin(r),
            math.cos(p),
            math.sin(p),
            math.cos(y),
            math.sin(y),
        )
        rz = np.array([[cy, -sy, 0], [sy, cy, 0], [0, 0, 1]])
        ry = np.array([[cp, 0, sp], [0, 1, 0], [-sp, 0, cp]])
        rx = np.array([[1, 0, 0], [0, cr, -sr], [0, sr, cr]])
        return rz @ ry @ rx

    table = arm4_table()
    table["base"] = "floating"
    robot = Robot.from_links(table, file="arm4.toml")
    q = robot.configuration({}, base_xyz=["10 cm", 0.2, 0.3], base_rpy=[0.3, -0.2, 0.5])
    data = robot.model.createData()
    pin.forwardKinematics(robot.model, data, q)
    base = rot(0.3, -0.2, 0.5)
    np.testing.assert_allclose(data.oMi[1].rotation, base, atol=1e-14)
    np.testing.assert_allclose(data.oMi[1].translation, [0.1, 0.2, 0.3], atol=1e-15)
    # wrist axis (3, 0, 4)/5 in its frame; joint frames at q = 0 compose the origin rotations
    axis = base @ rot(0.05, 0, 0) @ rot(0, 0.1, 0.2) @ np.array([0.6, 0, 0.8])
    np.testing.assert_allclose(robot.joint_axis_world(q)[3], axis, atol=1e-14)


def test_continuous_urdf_joint_and_configuration(tmp_path):
    urdf = tmp_path / "wheel.urdf"
    urdf.write_text(
        '<robot name="w"><link name="a"><inertial><mass value="1"/><inertia ixx="1" iyy="1" '
        'izz="1" ixy="0" ixz="0" iyz="0"/></inertial></link><link name="b"><inertial>'
        '<mass value="1"/><inertia ixx="1" iyy="1" izz="1" ixy="0" ixz="0" iyz="0"/></inertial>'
        '</link><joint name="spin" type="continuous"><parent link="a"/><child link="b"/>'
        '<axis xyz="0 0 1"/></joint></robot>'
    )
    robot = Robot.from_urdf(urdf, floating=False)
    assert robot.nq == 2 and robot.nv == 1 and robot.actuated == ("spin",)
    np.testing.assert_allclose(robot.configuration({"spin": "90 deg"}), [0, 1], atol=1e-15)
    assert robot.position_limits("spin") == (-math.inf, math.inf)


# --------------------------------------------------------------------------- mounts
def test_mounts_default_child_and_remote():
    table = arm4_table()
    joints = {j["name"]: j for j in table["joints"]}
    joints["shoulder"]["mount"] = "child"
    joints["wrist"]["mount_link"] = "upper_arm"
    joints["wrist"]["mount_xyz"] = [0.2, 0, "1 cm"]
    robot = Robot.from_links(table, file="arm4.toml")
    yaw, shoulder, elbow, wrist = robot.mounts
    assert (yaw.link, yaw.body_joint, yaw.spin_sign) == ("base", 0, 1)
    np.testing.assert_allclose(yaw.point, [0, 0, 0.1])  # the yaw joint's origin on the base
    assert (shoulder.link, shoulder.body_joint, shoulder.spin_sign) == ("upper_arm", 2, -1)
    np.testing.assert_allclose(shoulder.point, 0)
    assert (elbow.link, elbow.body_joint) == ("upper_arm", 2)
    np.testing.assert_allclose(elbow.point, [0.35, 0, 0])
    assert (wrist.link, wrist.body_joint, wrist.spin_sign) == ("upper_arm", 2, 1)
    np.testing.assert_allclose(wrist.point, [0.2, 0, 0.01])


def test_actuator_point_masses_move_mass_and_centre_of_mass():
    # centre of mass of the union = mass-weighted mean [pub: rigid-body mechanics]; the default
    # mount is the joint origin, which forward kinematics places at oMi[joint].translation.
    # Pinocchio's centre of mass leaves out what sits on the fixed world (the base link and the
    # yaw motor), so the yaw motor mass is 0 here and moving masses come from data.mass[0].
    table = arm4_table()
    joints = {j["name"]: j for j in table["joints"]}
    joints["wrist"]["mount_link"] = "forearm"
    joints["wrist"]["mount_xyz"] = [0.1, 0.02, 0]
    robot = Robot.from_links(table, file="arm4.toml")
    masses = np.array([0.0, 1.1, 0.7, 0.3])
    model = robot.with_actuator_masses(masses)
    q = robot.configuration([0.4, -0.7, 1.1, 0.2])
    data0, data = robot.model.createData(), model.createData()
    c0 = pin.centerOfMass(robot.model, data0, q)
    c = pin.centerOfMass(model, data, q)
    pin.forwardKinematics(robot.model, data0, q)
    ids = [robot.model.getJointId(n) for n in robot.actuated]
    points = [data0.oMi[i].translation for i in ids[:3]]
    points.append(data0.oMi[ids[2]].act(np.array([0.1, 0.02, 0])))  # wrist motor on forearm
    moving = data0.mass[0]
    assert moving == pytest.approx(robot.link_mass_total - 4.0, rel=1e-13)  # base link 4 kg
    expect = (moving * c0 + masses @ np.array(points)) / (moving + masses.sum())
    np.testing.assert_allclose(c, expect, atol=1e-13)
    assert data.mass[0] == pytest.approx(moving + masses.sum(), rel=1e-13)
    assert robot.model.inertias[2].mass == pytest.approx(1.8)  # the robot itself is unchanged


def test_robot_pickles_for_worker_processes():
    robot = Robot.from_links(arm4_table(), file="arm4.toml")
    again = pickle.loads(pickle.dumps(robot))
    q = robot.configuration([0.1, 0.2, 0.3, 0.4])
    np.testing.assert_array_equal(
        full_mass_matrix(again.model, q), full_mass_matrix(robot.model, q)
    )
    assert again.actuated == robot.actuated


# --------------------------------------------------------------------------- bad input
def _set(path, value):
    def edit(t):
        *head, last = path
        node = t
        for key in head:
            node = node[key]
        node[last] = value

    return edit


def _add_link_cycle(t):
    t["links"] += [{"name": n, "mass": 1, "shape": "point"} for n in ("p", "r")]
    t["joints"] += [
        {"name": "pr", "type": "revolute", "parent": "p", "child": "r", "axis": [1, 0, 0]},
        {"name": "rp", "type": "revolute", "parent": "r", "child": "p", "axis": [1, 0, 0]},
    ]


def _close_at_root(t):
    t["joints"].append({"name": "back", "type": "fixed", "parent": "tool_plate", "child": "base"})


BAD_TABLES = [
    (_set(["joints", 1, "parent"], "nowhere"), "robot.joints[1].parent", "no link"),
    (_add_link_cycle, "robot.joints[5].parent", "cycle"),
    (_set(["joints", 0, "parent"], "forearm"), "robot.joints[0].parent", "cycle"),
    (_close_at_root, "robot.joints", "cycle"),
    (_set(["joints", 2, "child"], "upper_arm"), "robot.joints[2].child", "itself"),
    (_set(["joints", 3, "child"], "turret"), "robot.joints[3].child", "already the child"),
    (_set(["links", 2, "name"], "turret"), "robot.links[2].name", "already used"),
    (_set(["joints", 1, "name"], "tool_plate"), "robot.joints[1].name", "already used"),
    (_set(["links", 1, "mass"], 0), "robot.links[1].mass", "> 0"),
    (_set(["links", 1, "mass"], "-2 kg"), "robot.links[1].mass", "> 0"),
    (_set(["links", 1, "mass"], "2 m"), "robot.links[1].mass", "kg"),
    (
        _set(["links", 1, "inertia"], [[0.01, 0.02, 0], [0.02, 0.01, 0], [0, 0, 0.01]]),
        "robot.links[1].inertia",
        "semidefinite",
    ),
    (_set(["links", 1, "inertia"], [0.001, 0.001, 0.01]), "robot.links[1].inertia", "triangle"),
    (
        _set(["links", 1, "inertia"], [[0.01, 0.001, 0], [0, 0.01, 0], [0, 0, 0.01]]),
        "robot.links[1].inertia",
        "symmetric",
    ),
    (_set(["links", 1, "shape"], "rod"), "robot.links[1].inertia", "exactly one"),
    (_set(["links", 0, "colour"], "red"), "robot.links[0].colour", "unknown field"),
    (_set(["basis"], "fixed"), "robot.basis", "unknown field"),
    (_set(["base"], "wobbly"), "robot.base", "fixed"),
    (_set(["joints", 0, "axis"], [0, 0, 0]), "robot.joints[0].axis", "zero vector"),
    (_set(["joints", 0, "type"], "ball"), "robot.joints[0].type", "revolute"),
    (_set(["joints", 1, "upper"], -2.5), "robot.joints[1].upper", "> lower"),
    (_set(["joints", 4, "mount"], "child"), "robot.joints[4].mount", "fixed joint"),
    (_set(["joints", 2, "mount_link"], "hand_x"), "robot.joints[2].mount_link", "no link"),
    (_set(["joints", 3, "mount_link"], "base"), "robot.joints[3].mount_xyz", "required"),
    (_set(["joints", 2, "mount"], "middle"), "robot.joints[2].mount", "parent"),
    (_set(["frames", 0, "link"], "wand"), "robot.frames[0].link", "no link"),
    (_set(["frames", 0, "name"], "elbow"), "robot.frames[0].name", "already used"),
    (_set(["actuated"], ["yaw", "knee"]), "robot.actuated[1]", "not a joint"),
    (_set(["actuated"], ["flange"]), "robot.actuated[0]", "not a 1-dof joint"),
    (_set(["actuated"], ["yaw", "yaw"]), "robot.actuated[1]", "twice"),
    (_set(["joints", 1, "xyz"], [0, 0]), "robot.joints[1].xyz", "3 numbers"),
    (_set(["gravity"], [0, 0, "-9.81 m"]), "robot.gravity[2]", "m/s"),
]


@pytest.mark.parametrize(
    "edit, field, words", BAD_TABLES, ids=[f"{f}:{w}" for _, f, w in BAD_TABLES]
)
def test_bad_robot_tables_raise_one_input_error(edit, field, words):
    table = copy.deepcopy(arm4_table())
    edit(table)
    with pytest.raises(InputError) as err:
        Robot.from_links(table, file="arm4.toml")
    assert err.value.file == "arm4.toml"
    assert err.value.field == field
    assert words in err.value.rule


def test_mount_on_an_unactuated_joint_is_refused():
    table = arm4_table()
    table["actuated"] = ["yaw", "shoulder"]
    table["joints"][2]["mount"] = "child"
    with pytest.raises(InputError, match="not actuated") as err:
        Robot.from_links(table, file="arm4.toml")
    assert err.value.field == "robot.joints[2]"


@pytest.mark.parametrize(
    "text, field",
    [
        ('<robot name="x"><link name="a"></robot>', "urdf line 1"),
        ('<model name="x"><link name="a"/></model>', "urdf"),
        (
            '<robot name="x"><link name="a"/><joint name="j" type="revolute"><parent link="a"/>'
            '<child link="b"/><limit lower="0" upper="1" effort="1" velocity="1"/></joint></robot>',
            "urdf.joint[j].child",
        ),
        (
            '<robot name="x"><link name="a"/><link name="b"/><joint name="j" type="revolute">'
            '<parent link="a"/><child link="b"/></joint></robot>',
            "urdf.joint[j].limit",
        ),
    ],
)
def test_malformed_urdf_names_the_file(tmp_path, text, field):
    path = tmp_path / "bad.urdf"
    path.write_text(text)
    with pytest.raises(InputError) as err:
        Robot.from_urdf(path, floating=False, file="project.toml")
    assert err.value.file == str(path) and err.value.field == field


def test_urdf_options_are_checked_against_the_model(tmp_path):
    path = DATA / "arm4.urdf"
    with pytest.raises(InputError) as err:
        Robot.from_urdf(tmp_path / "missing.urdf", floating=False)
    assert err.value.field == "urdf" and "cannot read" in err.value.rule
    with pytest.raises(InputError) as err:
        Robot.from_urdf(
            path, floating=True, mounts={"knee": "child"}, file="p.toml", prefix="robot"
        )
    assert (err.value.file, err.value.field) == ("p.toml", "robot.mounts.knee")
    with pytest.raises(InputError) as err:
        Robot.from_urdf(path, floating=True, actuated=["root_joint"], file="p.toml")
    assert err.value.field == "actuated[0]" and "not a 1-dof joint" in err.value.rule
    with pytest.raises(InputError) as err:
        Robot.from_urdf(
            path, floating=False, mounts={"elbow": {"mount_lnk": "base"}}, file="p.toml"
        )
    assert err.value.field == "mounts.elbow.mount_lnk"
    robot = Robot.from_urdf(path, floating=False)
    with pytest.raises(InputError) as err:
        robot.configuration({"knee": 0.2})
    assert err.value.field == "pose.knee"
    with pytest.raises(InputError) as err:
        robot.with_actuator_masses([1.0, -1.0, 0.0, 0.0])
    assert err.value.field == "masses"


def test_the_documented_example_loads():
    # docs/robot-format.md: the complete example must stay a valid robot table
    text = (Path(__file__).parents[1] / "docs" / "robot-format.md").read_text(encoding="utf-8")
    block = text.split("```toml\n", 1)[1].split("```", 1)[0]
    robot = Robot.from_links(tomllib.loads(block)["robot"], file="robot-format.md")
    assert robot.n_base == 6 and robot.nv == 8 and robot.actuated == ("hip", "knee")
    assert robot.link_mass_total == pytest.approx(6.0 + 0.9 + 0.35, rel=1e-12)
    hip, knee = robot.mounts
    assert (hip.link, knee.link, knee.spin_sign) == ("body", "body", 1)
    np.testing.assert_allclose(knee.point, [0.04, 0.08, -0.06])
    assert robot.frame_names[0] == "foot"
    thigh = robot.model.inertias[2]  # rod along z: m·L²/12 across it [mem, inertia tables]
    np.testing.assert_allclose(np.diag(thigh.inertia), [0.9 * 0.24**2 / 12] * 2 + [0], atol=1e-15)
    deg = math.pi / 180
    assert robot.position_limits("knee") == pytest.approx((-150 * deg, -5 * deg))


def test_branching_tree_from_tables_has_a_valid_mass_matrix():
    # a trunk with two two-link legs written as project tables: the joints reach Pinocchio in
    # depth-first order (each subtree contiguous), so its mass matrix is symmetric positive
    # definite and equals the one of the same robot built joint by joint in depth-first order by
    # hand (Pinocchio, rigid-body mechanics [pub])
    links = [{"name": "trunk", "mass": 5.0, "shape": "box", "size": [0.4, 0.2, 0.1]}]
    joints = []
    for leg, y in (("l", 0.1), ("r", -0.1)):
        links += [
            {
                "name": f"{leg}_thigh",
                "mass": 1.0,
                "com": [0, 0, -0.1],
                "inertia": [0.004, 0.004, 0.001],
            },
            {
                "name": f"{leg}_shin",
                "mass": 0.5,
                "com": [0, 0, -0.1],
                "inertia": [0.002, 0.002, 0.0005],
            },
        ]
        joints += [
            {
                "name": f"{leg}_hip",
                "type": "revolute",
                "parent": "trunk",
                "child": f"{leg}_thigh",
                "xyz": [0, y, 0],
                "axis": [0, 1, 0],
            },
            {
                "name": f"{leg}_knee",
                "type": "revolute",
                "parent": f"{leg}_thigh",
                "child": f"{leg}_shin",
                "xyz": [0, 0, -0.2],
                "axis": [0, 1, 0],
            },
        ]
    # list the joints breadth first, as a user may write them
    joints = [joints[0], joints[2], joints[1], joints[3]]
    robot = Robot.from_links(
        {"base": "floating", "links": links, "joints": joints}, file="two_legs.toml"
    )
    q = robot.configuration({"l_hip": 0.3, "l_knee": -0.6, "r_hip": -0.2, "r_knee": 0.5})
    M = full_mass_matrix(robot.model, q)
    assert np.linalg.eigvalsh(M).min() > 0
    # reference: the same bodies, each leg's joints added one after the other
    ref = pin.Model()
    trunk = ref.addJoint(0, pin.JointModelFreeFlyer(), pin.SE3.Identity(), "root_joint")
    ref.appendBodyToJoint(
        trunk,
        pin.Inertia(
            5.0,
            np.zeros(3),
            np.diag(
                [
                    5.0 * (0.2**2 + 0.1**2) / 12,
                    5.0 * (0.4**2 + 0.1**2) / 12,
                    5.0 * (0.4**2 + 0.2**2) / 12,
                ]
            ),
        ),
        pin.SE3.Identity(),
    )
    for leg, y in (("l", 0.1), ("r", -0.1)):
        hip = ref.addJoint(
            trunk, pin.JointModelRY(), pin.SE3(np.eye(3), np.array([0, y, 0])), f"{leg}_hip"
        )
        ref.appendBodyToJoint(
            hip,
            pin.Inertia(1.0, np.array([0, 0, -0.1]), np.diag([0.004, 0.004, 0.001])),
            pin.SE3.Identity(),
        )
        knee = ref.addJoint(
            hip, pin.JointModelRY(), pin.SE3(np.eye(3), np.array([0, 0, -0.2])), f"{leg}_knee"
        )
        ref.appendBodyToJoint(
            knee,
            pin.Inertia(0.5, np.array([0, 0, -0.1]), np.diag([0.002, 0.002, 0.0005])),
            pin.SE3.Identity(),
        )
    q_ref = pin.neutral(ref)
    for name, v in {"l_hip": 0.3, "l_knee": -0.6, "r_hip": -0.2, "r_knee": 0.5}.items():
        q_ref[ref.joints[ref.getJointId(name)].idx_q] = v
    M_ref = full_mass_matrix(ref, q_ref)
    order = [
        robot.model.joints[robot.model.getJointId(n)].idx_v
        for n in ("l_hip", "l_knee", "r_hip", "r_knee")
    ]
    order_ref = [
        ref.joints[ref.getJointId(n)].idx_v for n in ("l_hip", "l_knee", "r_hip", "r_knee")
    ]
    idx = list(range(6)) + order
    idx_ref = list(range(6)) + order_ref
    np.testing.assert_allclose(
        M[np.ix_(idx, idx)], M_ref[np.ix_(idx_ref, idx_ref)], rtol=0, atol=1e-12
    )
