"""Per-pose bases linear in actuator masses: agreement with Pinocchio on models that carry the
actuator masses, closed forms, the rotor coupling term against kinetic energy and against an
explicit rotor body, and batching."""

from __future__ import annotations

import math

import numpy as np
import pinocchio as pin
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.robot import Robot, gravity, mass_matrix, pose_basis, stack_bases
from test_robot_model import arm4_table, full_mass_matrix, planar_elbow, spong_elbow

#: joint axes of tests/data/robot/arm4.* in their own joint frames
ARM4_AXES = {"yaw": [0, 0, 1], "shoulder": [0, 1, 0], "elbow": [0, 1, 0], "wrist": [0.6, 0, 0.8]}


def arm4(base="fixed", mixed_mounts=False) -> Robot:
    table = arm4_table()
    table["base"] = base
    if mixed_mounts:  # stator on the child, on the parent, and remote on a grandparent link
        joints = {j["name"]: j for j in table["joints"]}
        joints["shoulder"]["mount"] = "child"
        joints["wrist"]["mount_link"] = "upper_arm"
        joints["wrist"]["mount_xyz"] = [0.25, 0.01, 0.02]
    return Robot.from_links(table, file="arm4.toml")


def random_poses(robot, n, seed):
    rng = np.random.default_rng(seed)
    return [
        robot.configuration(
            rng.uniform(-1.5, 1.5, len(robot.joint_names)),
            rng.uniform(-1, 1, 3),
            rng.uniform(-1, 1, 3),
        )
        for _ in range(n)
    ]


# --------------------------------------------------------------------------- against Pinocchio
@pytest.mark.parametrize("base, mixed", [("fixed", False), ("floating", False), ("floating", True)])
def test_basis_assembly_equals_pinocchio_with_actuator_masses(base, mixed):
    # reference: Pinocchio crba / computeGeneralizedGravity on the model that carries the
    # actuators as point masses (Robot.with_actuator_masses), to 1e-10
    robot = arm4(base, mixed)
    poses = random_poses(robot, 4, seed=11)
    bases = stack_bases([pose_basis(robot, q) for q in poses])
    masses = np.random.default_rng(3).uniform(0.0, 3.0, (6, robot.n_act))
    H = mass_matrix(bases, masses, np.zeros_like(masses))
    g = gravity(bases, masses)
    assert H.shape == (6, 4, robot.nv, robot.nv) and g.shape == (6, 4, robot.nv)
    for d, m in enumerate(masses):
        model = robot.with_actuator_masses(m)
        for p, q in enumerate(poses):
            np.testing.assert_allclose(H[d, p], full_mass_matrix(model, q), rtol=0, atol=1e-10)
            ref = pin.computeGeneralizedGravity(model, model.createData(), q)
            np.testing.assert_allclose(g[d, p], ref, rtol=0, atol=1e-10)


def test_elbow_actuator_mass_matches_spong_with_a_lumped_first_link():
    # Spong, Hutchinson & Vidyasagar, planar elbow arm [mem, verified]: the elbow motor (point
    # mass m_a at the elbow, on link 1) lumps into link 1: m1' = m1 + m_a,
    # lc1' = (m1 lc1 + m_a l1)/m1', I1' = I1 + m1 (lc1 − lc1')² + m_a (l1 − lc1')² (parallel axes)
    m1, m2, l1, lc1, lc2, I1, I2, ma = 2.0, 1.3, 0.5, 0.22, 0.18, 0.04, 0.02, 0.8
    robot = planar_elbow(m1, m2, l1, lc1, lc2, I1, I2)
    M1 = m1 + ma
    c1 = (m1 * lc1 + ma * l1) / M1
    J1 = I1 + m1 * (lc1 - c1) ** 2 + ma * (l1 - c1) ** 2
    for q1, q2 in [(0.3, -1.1), (2.0, 0.4), (-0.7, 2.9)]:
        b = pose_basis(robot, robot.configuration([q1, q2]))
        H = mass_matrix(b, [5.0, ma], [0.0, 0.0])  # the base motor's 5 kg loads nothing
        g = gravity(b, [5.0, ma])
        D, g_ref = spong_elbow(q1, q2, M1, m2, l1, c1, lc2, J1, I2)
        np.testing.assert_allclose(H, D, rtol=1e-12)
        np.testing.assert_allclose(g, g_ref, rtol=1e-12, atol=1e-12)


def test_frame_jacobian_is_world_aligned_linear_first():
    # finite difference of the frame origin along q ⊕ v·h (central, h = 1e-6): error ~h² [trade]
    robot = arm4("floating")
    q = random_poses(robot, 1, seed=5)[0]
    b = pose_basis(robot, q, ["tool", "elbow"])
    v = np.random.default_rng(2).normal(size=robot.nv)
    h = 1e-6
    data = robot.model.createData()
    fid = robot.frame_id("tool")

    def position(qq):
        pin.framesForwardKinematics(robot.model, data, qq)
        return data.oMf[fid].translation.copy()

    ahead, behind = pin.integrate(robot.model, q, v * h), pin.integrate(robot.model, q, -v * h)
    fd = (position(ahead) - position(behind)) / (2 * h)
    np.testing.assert_allclose(b.J[0, :3] @ v, fd, atol=1e-8)
    np.testing.assert_allclose(b.frame_positions[0], position(q), atol=1e-15)
    assert b.J.shape == (2, 6, robot.nv) and b.frames == ("tool", "elbow")


# --------------------------------------------------------------------------- rotor coupling
def rotor_axis_in_stator(robot, mount):
    """The joint axis at q = 0, carried into the stator body's frame by composing the joint
    placements from the joint up to the stator (identity rotations at q = 0 in between)."""
    jid = robot.model.getJointId(mount.joint)
    axis = np.array(ARM4_AXES[mount.joint], float)
    if mount.body_joint == jid:
        return axis
    j, rot = jid, np.eye(3)
    while j != mount.body_joint:
        rot = robot.model.jointPlacements[j].rotation @ rot
        j = robot.model.parents[j]
    return rot @ axis


def _coupling_inputs(robot, seed):
    rng = np.random.default_rng(seed)
    ir = rng.uniform(1e-5, 5e-4, robot.n_act)
    ratio = rng.uniform(2.0, 12.0, robot.n_act) * rng.choice([-1.0, 1.0], robot.n_act)
    return ir, ratio


@pytest.mark.parametrize("mixed", [False, True])
def test_coupling_equals_rotor_kinetic_energy_from_frame_velocities(mixed):
    # kinetic energy of a rotor spinning about the joint axis [pub: rigid-body mechanics]:
    # T = ½·I_r·(ω_stator·a + s·N·q̇_k)², ω_stator from Pinocchio's frame velocity of the mount
    # link, a the rotor axis (fixed in the stator) in the world; the basis must give
    # ½·q̇ᵀ·(H_coupled − H_links)·q̇ = Σ T with reflected = N²·I_r
    robot = arm4("floating", mixed)
    ir, ratio = _coupling_inputs(robot, seed=4)
    zeros = np.zeros(robot.n_act)
    rng = np.random.default_rng(9)
    for q in random_poses(robot, 3, seed=8):
        b = pose_basis(robot, q)
        Hc = mass_matrix(b, zeros, ratio**2 * ir, rotor_inertia=ir, ratio=ratio, coupling=True)
        H0 = mass_matrix(b, zeros, zeros)
        v = rng.normal(size=robot.nv)
        data = robot.model.createData()
        pin.forwardKinematics(robot.model, data, q, v)
        pin.updateFramePlacements(robot.model, data)
        energy = 0.0
        for k, mount in enumerate(robot.mounts):
            fid = robot.frame_id(mount.link)
            omega = pin.getFrameVelocity(robot.model, data, fid, pin.LOCAL_WORLD_ALIGNED).angular
            axis = data.oMi[mount.body_joint].rotation @ rotor_axis_in_stator(robot, mount)
            spin = omega @ axis + mount.spin_sign * ratio[k] * v[robot.v_index[k]]
            energy += 0.5 * ir[k] * spin**2
        assert 0.5 * v @ (Hc - H0) @ v == pytest.approx(energy, rel=1e-11)


def with_rotor_bodies(robot, ir, ratio):
    """The robot's model rebuilt depth first with one extra revolute joint per rotor: on the
    stator body at the mount, coaxial with the rotor axis, inertia I_r about it (Pinocchio needs
    each subtree's velocities contiguous, so a rotor joins right after its stator's subtree).
    Returns (model, T, place) with v_ext = T·v under the gear constraint q̇_rotor = s·N·q̇_k and
    place(q) -> q_ext."""
    src = robot.model
    model = pin.Model()
    model.gravity = src.gravity
    new = {0: 0}
    rotors = []

    def visit(j):
        if j:
            new[j] = model.addJoint(
                new[src.parents[j]], src.joints[j], src.jointPlacements[j], src.names[j]
            )
            model.appendBodyToJoint(new[j], src.inertias[j], pin.SE3.Identity())
        for c in range(j + 1, src.njoints):
            if src.parents[c] == j:
                visit(c)
        for k, mount in enumerate(robot.mounts):
            if mount.body_joint == j:
                axis = rotor_axis_in_stator(robot, mount)
                rid = model.addJoint(
                    new[j],
                    pin.JointModelRevoluteUnaligned(axis),
                    pin.SE3(np.eye(3), mount.point),
                    f"rotor_{k}",
                )
                inertia = pin.Inertia(0.0, np.zeros(3), ir[k] * np.outer(axis, axis))
                model.appendBodyToJoint(rid, inertia, pin.SE3.Identity())
                rotors.append((k, rid))

    visit(0)
    T = np.zeros((model.nv, src.nv))
    for j in range(1, src.njoints):
        a, b = model.joints[new[j]], src.joints[j]
        T[a.idx_v : a.idx_v + b.nv, b.idx_v : b.idx_v + b.nv] = np.eye(b.nv)
    for k, rid in rotors:
        T[model.joints[rid].idx_v, robot.v_index[k]] = robot.mounts[k].spin_sign * ratio[k]

    def place(q):
        out = pin.neutral(model)
        for j in range(1, src.njoints):
            a, b = model.joints[new[j]], src.joints[j]
            out[a.idx_q : a.idx_q + b.nq] = q[b.idx_q : b.idx_q + b.nq]
        return out

    return model, T, place


@pytest.mark.parametrize("base, mixed", [("fixed", False), ("floating", False), ("floating", True)])
def test_coupling_equals_explicit_rotor_bodies(base, mixed):
    # Each rotor modelled as its own Pinocchio body (with_rotor_bodies); the gear imposes
    # q̇_rotor = s·N·q̇_k relative to the stator, so v_ext = T·v and the reduced mass matrix is
    # Tᵀ·M_ext·T [pub: Lagrangian mechanics with linear velocity constraints]
    robot = arm4(base, mixed)
    ir, ratio = _coupling_inputs(robot, seed=6)
    model, T, place = with_rotor_bodies(robot, ir, ratio)
    zeros = np.zeros(robot.n_act)
    for q in random_poses(robot, 3, seed=12):
        b = pose_basis(robot, q)
        Hc = mass_matrix(b, zeros, ratio**2 * ir, rotor_inertia=ir, ratio=ratio, coupling=True)
        np.testing.assert_allclose(Hc, T.T @ full_mass_matrix(model, place(q)) @ T, atol=1e-12)
        # without coupling only the diagonal N²·I_r remains: what the coupling adds is not zero
        H = mass_matrix(b, zeros, ratio**2 * ir)
        assert np.abs(Hc - H).max() > 1e-5


def test_rotor_axes_of_the_mixed_mounts():
    # the wrist stator sits on upper_arm, two joints up, so the rotor-body checks above really
    # compose placements; the stored rotor axes agree with that composition
    robot = arm4("floating", mixed_mounts=True)
    assert robot.model.parents[robot.model.getJointId("wrist")] != robot.mounts[3].body_joint
    for mount in robot.mounts:
        np.testing.assert_allclose(mount.axis, rotor_axis_in_stator(robot, mount), atol=1e-15)


# --------------------------------------------------------------------------- batching, invariants
def test_shapes_single_pose_batch_dims_and_per_pose_reflection():
    robot = arm4()
    poses = random_poses(robot, 3, seed=1)
    single = pose_basis(robot, poses[0])
    bases = stack_bases([pose_basis(robot, q) for q in poses])
    assert bases.n_poses == 3
    m = np.random.default_rng(0).uniform(0, 2, (2, 5, 4))
    r = np.random.default_rng(1).uniform(0, 0.3, (2, 5, 4))
    H = mass_matrix(bases, m, r)
    assert H.shape == (2, 5, 3, robot.nv, robot.nv)
    np.testing.assert_allclose(mass_matrix(single, m[1, 2], r[1, 2]), H[1, 2, 0], atol=1e-15)
    assert gravity(single, m[0, 0]).shape == (4,)
    per_pose = np.broadcast_to(r[..., None, :], (2, 5, 3, 4)).copy()
    per_pose[:, :, 2] *= 2.0
    Hp = mass_matrix(bases, m, per_pose)
    np.testing.assert_allclose(Hp[:, :, :2], H[:, :, :2], atol=1e-15)
    idx = robot.v_index
    added = Hp[:, :, 2][..., idx, idx] - H[:, :, 2][..., idx, idx]
    np.testing.assert_allclose(added, r, atol=1e-14)


@settings(max_examples=30, deadline=None)
@given(
    seed=st.integers(0, 2**31),
    scale=st.floats(0.0, 5.0),
    n=st.floats(-50.0, 50.0),
)
def test_mass_matrix_invariants(seed, scale, n):
    # linear in masses; symmetric positive definite; more actuator mass or reflected inertia never
    # lowers it (Loewner order); coupling adds Σ I_r·u_k·u_kᵀ ⪰ 0 (its energy is a square)
    robot = _ROBOT
    rng = np.random.default_rng(seed)
    b = _BASES
    m1, m2 = rng.uniform(0, scale, (2, robot.n_act))
    r = rng.uniform(0, 0.1, robot.n_act)
    ir = rng.uniform(0, 1e-3, robot.n_act)
    ratio = np.full(robot.n_act, n)
    Hsum = mass_matrix(b, m1 + m2, r)
    np.testing.assert_allclose(
        Hsum + mass_matrix(b, 0 * m1, r), mass_matrix(b, m1, r) + mass_matrix(b, m2, r), atol=1e-11
    )
    np.testing.assert_allclose(Hsum, np.swapaxes(Hsum, -1, -2), atol=1e-13)
    assert np.all(np.linalg.eigvalsh(Hsum) > 0)
    grow = np.linalg.eigvalsh(mass_matrix(b, m1 + m2, 2 * r) - mass_matrix(b, m1, r))
    assert np.all(grow > -1e-12)
    Hc = mass_matrix(b, m1, n**2 * ir, rotor_inertia=ir, ratio=ratio, coupling=True)
    added = np.linalg.eigvalsh(Hc - mass_matrix(b, m1, 0 * r))
    assert np.all(added > -1e-10 * max(1.0, n**2))
    np.testing.assert_allclose(
        gravity(b, m1 + m2) + gravity(b, 0 * m1), gravity(b, m1) + gravity(b, m2), atol=1e-11
    )


_ROBOT = arm4("floating", mixed_mounts=True)
_BASES = stack_bases([pose_basis(_ROBOT, q) for q in random_poses(_ROBOT, 3, seed=21)])


def test_bad_calls_raise_input_errors():
    robot, floating = arm4(), arm4("floating")
    q = robot.configuration()
    b = pose_basis(robot, q)
    cases = [
        (lambda: pose_basis(robot, q[:2]), "q"),
        (lambda: pose_basis(floating, 2 * floating.configuration()), "q"),
        (lambda: pose_basis(robot, q, ["nose"]), "frames"),
        (lambda: mass_matrix(b, np.ones(3), np.ones(4)), "masses"),
        (lambda: mass_matrix(b, np.ones((2, 4)), np.ones((3, 4))), "reflected"),
        (lambda: mass_matrix(b, np.ones(4), np.full(4, np.nan)), "reflected"),
        (lambda: mass_matrix(b, np.ones(4), np.ones(4), coupling=True), "coupling"),
        (lambda: gravity("pose", np.ones(4)), "bases"),
        (lambda: stack_bases([]), "bases"),
        (lambda: stack_bases([b, pose_basis(robot, q, ["tool"])]), "bases[1]"),
    ]
    for call, field in cases:
        with pytest.raises(InputError) as err:
            call()
        assert err.value.field == field


def test_prismatic_screw_joint_basis_and_coupling():
    # a screw-driven slider (ratio in rad/m) whose motor rides on the moving carriage: basis vs
    # Pinocchio with the actuator masses, and the rotor energy ½·I_r·(ω_stator·a − N·q̇)² with the
    # stator on the child (s = −1) [pub: rigid-body mechanics]
    robot = Robot.from_links(
        {
            "base": "floating",
            "links": [
                {"name": "frame", "mass": 3.0, "shape": "box", "size": [0.4, 0.1, 0.1]},
                {
                    "name": "carriage",
                    "mass": 0.8,
                    "com": [0.02, 0, 0],
                    "shape": "box",
                    "size": [0.08, 0.06, 0.04],
                },
            ],
            "joints": [
                {
                    "name": "slide",
                    "type": "prismatic",
                    "parent": "frame",
                    "child": "carriage",
                    "xyz": [0.1, 0.0, 0.05],
                    "rpy": [0.2, 0, 0.4],
                    "axis": [1, 1, 0],
                    "mount": "child",
                }
            ],
        },
        file="slider.toml",
    )
    (mount,) = robot.mounts
    assert mount.spin_sign == -1 and robot.n_act == 1
    ir, ratio = np.array([2e-5]), np.array([2 * math.pi / 0.005])  # 5 mm lead
    rng = np.random.default_rng(13)
    for q in random_poses(robot, 3, seed=14):
        b = pose_basis(robot, q)
        model = robot.with_actuator_masses([0.6])
        np.testing.assert_allclose(
            mass_matrix(b, [0.6], [0.0]), full_mass_matrix(model, q), atol=1e-12
        )
        Hc = mass_matrix(b, [0.0], ratio**2 * ir, rotor_inertia=ir, ratio=ratio, coupling=True)
        v = rng.normal(size=robot.nv)
        data = robot.model.createData()
        pin.forwardKinematics(robot.model, data, q, v)
        omega = data.oMi[2].rotation @ data.v[2].angular  # carriage angular velocity, world
        axis = data.oMi[2].rotation @ (np.array([1.0, 1.0, 0.0]) / math.sqrt(2))
        spin = omega @ axis - ratio[0] * v[robot.v_index[0]]
        H0 = mass_matrix(b, [0.0], [0.0])
        assert 0.5 * v @ (Hc - H0) @ v == pytest.approx(0.5 * ir[0] * spin**2, rel=1e-10)
