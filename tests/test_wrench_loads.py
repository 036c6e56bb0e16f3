"""Payload cases with a full wrench at the tip (``moment`` and ``offset``, metrics.loads).

Outside values: Pinocchio's 6-row frame Jacobian in LOCAL_WORLD_ALIGNED (J(q)ᵀ·w) and its
recursive Newton–Euler algorithm with external forces (an independent route to the same joint
torques); a planar two-link arm computed by hand (τ_i = axis_i · ((p − o_i) × F + M), the
principle of virtual work [mem]).
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pinocchio as pin
import pytest

import jointwright.examples as examples
from jointwright.design import arrays_from_designs, load_design
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.metrics.loads import torque_of_moment, torque_per_force
from jointwright.project import Case, project_from_dict
from jointwright.robot import Robot

ARM = Path(examples.__file__).parent / "arm"


def arm_project(extra_cases: list[dict]):
    data = tomllib.loads((ARM / "project.toml").read_text())
    data["case"] = [c for c in data["case"] if c["kind"] != "duty"] + extra_cases
    return project_from_dict(data, ARM / "project.toml")


def wrench_case(**kw) -> dict:
    data = tomllib.loads((ARM / "project.toml").read_text())
    case = dict(data["case"][0])
    case.update(name="wrench", **kw)
    return case


def test_wrench_torques_match_pinocchio_jacobian_and_rnea():
    """J(q)ᵀ·w with Pinocchio's LOCAL_WORLD_ALIGNED frame Jacobian, and the same torques from
    RNEA with the environment's reaction −w applied at the tool (Pinocchio)."""
    project = arm_project(
        [wrench_case(direction=[0.3, -0.2, 1], offset=[0.12, -0.05, 0.04], moment=[1.5, -2, 3])]
    )
    ev = Evaluator(project)
    pc = next(p for p in ev.cases if p.case.name == "wrench")
    robot = project.robot
    model = robot.model
    data = model.createData()
    q = pc.basis.q if pc.basis.q.ndim == 1 else pc.basis.q[0]
    fid = robot.frame_id("tool")
    J6 = pin.computeFrameJacobian(model, data, q, fid, pin.LOCAL_WORLD_ALIGNED)
    u = np.array(pc.case.direction)
    r = np.array(pc.case.offset)
    w = np.concatenate([u, np.cross(r, u)])
    np.testing.assert_allclose(pc.load_a, J6.T @ w, atol=1e-12)
    np.testing.assert_allclose(pc.tau_fixed, J6[3:].T @ np.array(pc.case.moment), atol=1e-12)

    # RNEA: the robot exerts s·u at the tool point + r and the moment M; the environment pushes
    # back with −(that) on the tool's parent joint (expressed in that joint's local frame)
    s = 37.0
    pin.framesForwardKinematics(model, data, q)
    frame = model.frames[fid]
    oMf = data.oMf[fid]
    force_world = -s * u
    moment_world_at_tip = -(np.cross(r, s * u) + np.array(pc.case.moment))
    oMi = data.oMi[frame.parentJoint]
    # the wrench at the joint origin, world axes: moment moves by (p_tip − p_joint) × f
    lever = oMf.translation - oMi.translation
    m_joint = moment_world_at_tip + np.cross(lever, force_world)
    R = oMi.rotation
    fext = [pin.Force.Zero() for _ in range(model.njoints)]
    fext[frame.parentJoint] = pin.Force(R.T @ force_world, R.T @ m_joint)
    tau = pin.rnea(model, data, q, np.zeros(model.nv), np.zeros(model.nv), fext)
    g = pin.computeGeneralizedGravity(model, data, q)
    np.testing.assert_allclose(g + pc.tau_fixed + s * pc.load_a, tau, rtol=1e-10, atol=1e-9)


def test_payload_with_wrench_puts_the_limiting_joint_on_its_bound():
    """At the reported payload, τ = g + J_ωᵀM + s·a reaches the limiting joint's capacity and no
    joint exceeds its own (payload_along's ratio test, checked on the torques)."""
    project = arm_project([wrench_case(offset=[0.1, 0, 0], moment=[0, 0, "3 N*m"])])
    design = load_design(ARM / "design.toml", project)
    arrays = arrays_from_designs([design])
    out = Evaluator(project).evaluate(arrays)["wrench"]
    tau = out["joint_torque"][0]
    cap_m, cap_b = arrays.capacity("motoring")[0], arrays.capacity("backdriven")[0]
    cap = np.maximum(cap_m, cap_b)
    assert np.all(np.abs(tau) <= cap * (1 + 1e-9))
    j = int(out["limiting_joint"][0])
    assert math.isclose(abs(tau[j]), min(cap_m[j], cap_b[j]), rel_tol=1e-9) or math.isclose(
        abs(tau[j]), cap[j], rel_tol=1e-9
    )
    assert tau[0] == pytest.approx(3.0)  # the base yaw carries the 3 N·m moment about z
    plain = Evaluator(project).evaluate(arrays)["reach-lift"]
    assert plain["joint_torque"][0][0] == pytest.approx(0.0, abs=1e-9)  # without: unloaded


def planar_two_link(L1: float, L2: float) -> Robot:
    links = [{"name": "base", "mass": 1.0, "com": [0, 0, 0], "inertia": np.eye(3).tolist()}]
    for i, L in enumerate((L1, L2)):
        links.append(
            {"name": f"l{i}", "mass": 0.5, "com": [L / 2, 0, 0], "inertia": np.eye(3).tolist()}
        )
    joints = [
        {"name": "j0", "type": "revolute", "parent": "base", "child": "l0", "xyz": [0, 0, 0],
         "axis": [0, 1, 0]},
        {"name": "j1", "type": "revolute", "parent": "l0", "child": "l1", "xyz": [L1, 0, 0],
         "axis": [0, 1, 0]},
    ]  # fmt: skip
    table = {
        "base": "fixed",
        "gravity": [0, 0, -9.81],
        "links": links,
        "joints": joints,
        "frames": [{"name": "tip", "link": "l1", "xyz": [L2, 0, 0]}],
    }
    return Robot.from_links(table, file="two-link.toml")


def test_planar_two_link_by_hand():
    """τ_i = ŷ·((p − o_i) × F) + ŷ·M for a planar 2R arm about y, worked by hand."""
    L1, L2, q1, q2 = 0.4, 0.3, 0.3, -0.6
    robot = planar_two_link(L1, L2)
    r = np.array([0.1, 0.0, 0.05])
    M = np.array([0.0, 2.0, 0.0])
    u = np.array([0.0, 0.0, 1.0])
    from jointwright.robot.basis import pose_basis

    q = robot.configuration({"j0": q1, "j1": q2})
    J6 = pose_basis(robot, q, ["tip"]).J[0]
    # rotation about y by θ maps x to (cos θ, 0, −sin θ)
    o2 = L1 * np.array([math.cos(q1), 0, -math.sin(q1)])
    tip = o2 + L2 * np.array([math.cos(q1 + q2), 0, -math.sin(q1 + q2)])
    p = tip + r
    y = np.array([0.0, 1.0, 0.0])
    by_hand = [y @ np.cross(p - o, u) for o in (np.zeros(3), o2)]
    np.testing.assert_allclose(torque_per_force(J6, u, r), by_hand, atol=1e-12)
    np.testing.assert_allclose(torque_of_moment(J6, M), [2.0, 2.0], atol=1e-12)
    # e.g. at q = 0 the force 1 N up at 0.1 m beyond the tip: τ = −(L1 + L2 + 0.1), −(L2 + 0.1)
    J6_0 = pose_basis(robot, robot.configuration({"j0": 0.0, "j1": 0.0}), ["tip"]).J[0]
    np.testing.assert_allclose(
        torque_per_force(J6_0, u, [0.1, 0, 0]), [-(L1 + L2 + 0.1), -(L2 + 0.1)], atol=1e-12
    )


def test_a_case_without_wrench_keeps_the_point_force_path():
    project = arm_project([])
    assert all(pc.load_a is None for pc in Evaluator(project).cases)
    assert not Case("x", "payload", "tool", {}).has_wrench


@pytest.mark.parametrize(
    "extra, field",
    [
        ({"moment": [1, 2]}, "moment"),
        ({"offset": ["1 kg", 0, 0]}, "offset[0]"),
        ({"moment": ["1 N", 0, 0]}, "moment[0]"),
    ],
)
def test_bad_wrench_fields_name_the_field(extra, field):
    with pytest.raises(InputError) as e:
        arm_project([wrench_case(**extra)])
    assert field in str(e.value)


def test_stance_wrench_balances_the_whole_robot():
    """A stance case with an offset and a moment on frictionless feet (vertical contact forces
    only): the ground forces carry the weight plus the load, and their moments about the world
    axes balance the load's moment s·(p + r) × u + M and the weight's at the centre of mass
    (static equilibrium of the whole robot [pub, rigid-body mechanics]; positions and the
    centre of mass from Pinocchio)."""
    import dataclasses
    from importlib import resources

    from jointwright.project import load_project

    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        project = load_project(folder / "project.toml")
        design = load_design(folder / "design.toml", project)
    base = project.case("stand-carry")
    r = np.array([0.05, 0.02, 0.0])
    M = np.array([3.0, -2.0, 0.0])
    case = dataclasses.replace(
        base,
        contacts=tuple((f, 0.0, n) for f, _mu, n in base.contacts),
        offset=tuple(r),
        moment=tuple(M),
    )
    project = dataclasses.replace(project, cases=(case,))
    ev = Evaluator(project)
    out = ev.evaluate(arrays_from_designs([design]))[case.name]
    assert out["self_supporting"][0]
    s = float(out["payload"][0])
    assert s > 0
    fz = out["contact_force_z"][0]
    model = project.robot.with_actuator_masses([a.mass for a in design.actuators])
    data = model.createData()
    q = project.robot.configuration(case.pose, case.base_xyz, case.base_rpy)
    pin.framesForwardKinematics(model, data, q)
    com = pin.centerOfMass(model, data, q)
    g = 9.81  # the robot's gravity
    weight = pin.computeTotalMass(model) * g
    pc = [np.array(data.oMf[project.robot.frame_id(f)].translation) for f, _, _ in case.contacts]
    p = np.array(data.oMf[project.robot.frame_id(case.frame)].translation) + r
    u = np.array(case.direction)
    assert fz.sum() == pytest.approx(weight + s, rel=1e-5)
    # x: Σ y_c f_c − (p_y)·s·u_z − M_x − W·y_com = 0; y: −Σ x_c f_c + p_x·s·u_z − M_y + W·x_com = 0
    mx = (
        sum(c[1] * f for c, f in zip(pc, fz, strict=True))
        - p[1] * s * u[2]
        - M[0]
        - weight * com[1]
    )
    my = (
        -sum(c[0] * f for c, f in zip(pc, fz, strict=True))
        + p[0] * s * u[2]
        - M[1]
        + weight * com[0]
    )
    scale = weight * 0.3
    assert abs(mx) < 1e-4 * scale and abs(my) < 1e-4 * scale


def test_offset_point_jacobian_gives_the_same_torques():
    """The force s·u at the offset point r: its point Jacobian J_v − [r]×·J_ω (velocity
    v + ω × r, rigid-body kinematics [pub]) gives the same per-newton torques as J6ᵀ·(u, r × u)
    (the report's polytope of a wrench case uses the former)."""
    rng = np.random.default_rng(3)
    J6 = rng.normal(size=(6, 5))
    r = rng.normal(size=3)
    u = rng.normal(size=3)
    u /= np.linalg.norm(u)
    skew = np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])
    np.testing.assert_allclose((J6[:3] - skew @ J6[3:]).T @ u, torque_per_force(J6, u, r))
