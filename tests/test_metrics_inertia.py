"""Task-space inertia, effective mass and impact mitigation against published and independent
values.

Sources named beside each check: Wensing et al., IEEE T-RO 33(3) 2017 [pub] (one-joint model,
eq. 8; IMF definition); rigid-body mechanics [pub] (locked single body); Spong, Hutchinson,
Vidyasagar, Robot Modeling and Control [mem, verified] (planar elbow arm); Pinocchio (`pin`)
as an independent reference library (KKT contact matrix inverse, reduced models).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError, SingularPoseError
from jointwright.metrics.impact_mitigation import impact_mitigation
from jointwright.metrics.inertia import (
    effective_mass,
    inertia_ellipsoid,
    task_space_inertia,
    task_space_inertia_strict,
)
from jointwright.metrics.linalg_small import det_small, inv_small

SEEDS = st.integers(min_value=0, max_value=2**32 - 1)


def skew(r):
    return np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])


def random_spd(rng, n, batch=()):
    x = rng.standard_normal(batch + (n, n))
    return x @ np.swapaxes(x, -1, -2) + n * np.eye(n)


def random_system(seed, nv, m, batch):
    """Seeded random SPD mass matrices (batch, nv, nv) and Jacobians (batch, m, nv)."""
    rng = np.random.default_rng(seed)
    return random_spd(rng, nv, batch), rng.standard_normal(batch + (m, nv)), rng


def rigid_body_block(m, c, inertia_c):
    """Spatial inertia of one body about its frame origin, coordinates (v_origin, ω):
    KE = ½m|v − [c]×ω|² + ½ωᵀI_cω  [pub, rigid-body mechanics]."""
    s = skew(c)
    return np.block([[m * np.eye(3), -m * s], [m * s, inertia_c - m * s @ s]])


def reference_imf(H, J, n_base=6):
    """ξ = det(I − Λ·Λ_L⁻¹) straight from the definition with np.linalg (Wensing 2017 [pub])."""
    jb = J[..., :n_base]
    lam = np.linalg.inv(J @ np.linalg.solve(H, np.swapaxes(J, -1, -2)))
    inv_l = jb @ np.linalg.solve(H[..., :n_base, :n_base], np.swapaxes(jb, -1, -2))
    return np.linalg.det(np.eye(J.shape[-2]) - lam @ inv_l), lam, np.linalg.inv(inv_l)


# ------------------------------------------------------------------------------------------
# Wensing et al. 2017, eq. 8: body m_b on a prismatic leg m_l driven through pinion radius r
# with actuator inertia I. m_e = (m_b·I + m_l·I + r²·m_b·m_l)/(m_b·r² + I).
# m_b = 10, m_l = 0.5, r = 0.05: I = 0 → 0.5; I = 1e-2 → 0.1175/0.035 = 3.357143; I → ∞ → 10.5.
# ------------------------------------------------------------------------------------------
MB, ML, R = 10.0, 0.5, 0.05


def wensing_me(inertia):
    return (MB * inertia + ML * inertia + R**2 * MB * ML) / (MB * R**2 + inertia)


def one_joint_1d(inertia):
    """Coordinates [x_b, y]: KE = ½m_b ẋ_b² + ½m_l(ẋ_b + ẏ)² + ½I(ẏ/r)²; contact at the leg."""
    H = np.array([[MB + ML, ML], [ML, ML + inertia / R**2]])
    return H, np.array([[1.0, 1.0]])


def one_joint_3d(inertia, height=0.4):
    """Floating 6-dof body (COM at its frame origin) with the leg mass on the z axis below it,
    prismatic along z; the rotor sits on the base with I/r² on the joint diagonal."""
    p = np.array([0.0, 0.0, -height])
    jl = np.hstack([np.eye(3), -skew(p), np.array([[0.0], [0.0], [1.0]])])  # leg point velocity
    H = np.zeros((7, 7))
    H[:6, :6] = rigid_body_block(MB, np.zeros(3), np.diag([0.3, 0.4, 0.2]))
    H += ML * jl.T @ jl
    H[6, 6] += inertia / R**2
    return H, jl


@pytest.mark.parametrize("inertia", [0.0, 1e-2, 1e6])
def test_wensing_one_joint_reduced(inertia):
    H, J = one_joint_1d(inertia)
    res = impact_mitigation(H, J, n_base=1)
    me = wensing_me(inertia)
    assert res.Lambda[0, 0] == pytest.approx(me, rel=1e-12)
    assert res.Lambda_locked[0, 0] == pytest.approx(MB + ML, rel=1e-12)  # Λ_L = 10.5
    assert res.imf == pytest.approx(1.0 - me / (MB + ML), rel=1e-10, abs=1e-12)


def test_wensing_check_values():
    # eq. 8 itself at the published check points (arithmetic recomputed in the header comment)
    assert wensing_me(0.0) == pytest.approx(0.5, rel=1e-12)
    assert wensing_me(1e-2) == pytest.approx(3.357143, abs=5e-7)
    assert wensing_me(1e9) == pytest.approx(10.5, rel=1e-9)
    H, J = one_joint_1d(1e9)
    assert impact_mitigation(H, J, n_base=1).Lambda[0, 0] == pytest.approx(10.5, rel=1e-9)


@pytest.mark.parametrize("inertia", [0.0, 1e-2])
def test_wensing_one_joint_floating_base(inertia):
    # One joint cannot move a 3-D contact in every direction: det form ≡ 0 (REFERENCES, Wensing)
    H, J = one_joint_3d(inertia)
    res = impact_mitigation(H, J, direction=[0.0, 0.0, 1.0])
    me = wensing_me(inertia)
    assert res.imf == 0.0 and not res.full_rank and res.rank == 1
    # the contact z row decouples (everything on the z axis): Λ_zz = m_e, Λ_L,zz = 10.5
    assert res.Lambda[2, 2] == pytest.approx(me, rel=1e-10)
    assert res.Lambda_locked[2, 2] == pytest.approx(MB + ML, rel=1e-12)
    assert res.imf_restricted == pytest.approx(1.0 - me / 10.5, rel=1e-9)
    assert res.imf_direction == pytest.approx(1.0 - me / 10.5, rel=1e-9)


def test_locked_single_rigid_body_closed_form():
    # Λ_L⁻¹ = I₃/m − [r]×·I_c⁻¹·[r]×, r from the COM to the contact [pub, rigid-body mechanics]
    rng = np.random.default_rng(7)
    m, c, p = 12.0, rng.uniform(-0.1, 0.1, 3), rng.uniform(-0.5, 0.5, 3)
    inertia_c = random_spd(rng, 3) * 0.05
    H = np.zeros((7, 7))
    H[:6, :6] = rigid_body_block(m, c, inertia_c)
    H[6, 6] = 1.0  # one decoupled dummy joint that does not move the contact
    J = np.hstack([np.eye(3), -skew(p), np.zeros((3, 1))])
    r = skew(p - c)
    expected_inv = np.eye(3) / m - r @ np.linalg.inv(inertia_c) @ r
    res = impact_mitigation(H, J)
    lam_l_inv = np.linalg.inv(res.Lambda_locked)
    np.testing.assert_allclose(lam_l_inv, expected_inv, rtol=1e-10, atol=1e-12)
    assert res.rank == 0 and res.imf == 0.0 and res.imf_restricted == 0.0
    tsi = task_space_inertia(J[:, :6], H[:6, :6])
    np.testing.assert_allclose(tsi.Lambda, np.linalg.inv(expected_inv), rtol=1e-10)


# ------------------------------------------------------------------------------------------
# Pinocchio as an independent reference: a floating base with a 3-joint leg
# ------------------------------------------------------------------------------------------
def pinocchio_leg(armature=(0.05, 0.08, 0.06), q_leg=(0.1, 0.4, -0.8)):
    pin = pytest.importorskip("pinocchio")
    model = pin.Model()

    def link(parent, joint, place, name, inertia):
        j = model.addJoint(parent, joint, place, name)
        f = model.addJointFrame(j, -1)
        model.appendBodyToJoint(j, inertia, pin.SE3.Identity())
        model.addBodyFrame(name + "_body", j, pin.SE3.Identity(), f)
        return j, f

    def se3(x, y, z):
        return pin.SE3(np.eye(3), np.array([x, y, z]))

    base, _ = link(
        0,
        pin.JointModelFreeFlyer(),
        se3(0, 0, 0),
        "base",
        pin.Inertia(8.0, np.array([0.02, 0.01, 0.0]), np.diag([0.1, 0.2, 0.15])),
    )
    j1, _ = link(
        base,
        pin.JointModelRX(),
        se3(0.05, 0.1, -0.05),
        "hip_roll",
        pin.Inertia(0.5, np.array([0, 0, -0.02]), np.diag([1e-3, 1e-3, 1e-3])),
    )
    j2, _ = link(
        j1,
        pin.JointModelRY(),
        se3(0, 0, 0),
        "hip_pitch",
        pin.Inertia(1.0, np.array([0, 0, -0.15]), np.diag([0.01, 0.01, 0.002])),
    )
    j3, f3 = link(
        j2,
        pin.JointModelRY(),
        se3(0, 0, -0.3),
        "knee",
        pin.Inertia(0.6, np.array([0, 0, -0.15]), np.diag([0.008, 0.008, 0.001])),
    )
    model.addFrame(pin.Frame("foot", j3, f3, se3(0, 0, -0.3), pin.FrameType.OP_FRAME))
    model.armature[6:] = armature
    q = pin.neutral(model)
    q[7:] = q_leg
    return pin, model, q, (j1, j2, j3)


def pin_contact(pin, model, q):
    data = model.createData()
    M = pin.crba(model, data, q)
    M = np.triu(M) + np.triu(M, 1).T
    pin.computeJointJacobians(model, data, q)
    pin.updateFramePlacements(model, data)
    J = pin.getFrameJacobian(model, data, model.getFrameId("foot"), pin.LOCAL_WORLD_ALIGNED)[:3]
    kkt = pin.computeKKTContactDynamicMatrixInverse(model, data, q, J)
    return M, J, -kkt[model.nv :, model.nv :]  # lower-right block of [[M Jᵀ][J 0]]⁻¹ is −Λ


def pin_reduced_lambda(pin, model, q, lock):
    red = pin.buildReducedModel(model, list(lock), q)
    keep = [i for i in range(2, model.njoints) if i not in lock]
    qr = pin.neutral(red)
    qr[:7] = q[:7]
    qr[7:] = [q[7 + i - 2] for i in keep]
    return pin_contact(pin, red, qr)[2]


def test_imf_against_pinocchio():
    pin, model, q, joints = pinocchio_leg()
    M, J, lam_ref = pin_contact(pin, model, q)
    lam_l_ref = pin_reduced_lambda(pin, model, q, joints)  # every joint locked
    res = impact_mitigation(M, J)
    np.testing.assert_allclose(res.Lambda, lam_ref, rtol=1e-9)
    np.testing.assert_allclose(res.Lambda_locked, lam_l_ref, rtol=1e-9)
    xi = np.linalg.det(np.eye(3) - lam_ref @ np.linalg.inv(lam_l_ref))
    assert res.full_rank and res.imf == pytest.approx(xi, rel=1e-8)
    assert 0.0 < res.imf < 1.0
    np.testing.assert_allclose(task_space_inertia(J, M).Lambda, lam_ref, rtol=1e-9)


def test_locked_joint_matches_pinocchio_reduced_model():
    # a self-locking knee: Λ over base + hip joints, Λ_L unchanged
    pin, model, q, joints = pinocchio_leg()
    M, J, _ = pin_contact(pin, model, q)
    lam_ref = pin_reduced_lambda(pin, model, q, [joints[2]])
    res = impact_mitigation(M, J, locked=np.array([False, False, True]))
    np.testing.assert_allclose(res.Lambda, lam_ref, rtol=1e-9)
    np.testing.assert_allclose(res.Lambda_locked, impact_mitigation(M, J).Lambda_locked, rtol=1e-12)
    assert res.rank == 2 and res.imf == 0.0  # two free joints, 3-D contact


# ------------------------------------------------------------------------------------------
# planar two-link arm (Spong et al. [mem, verified]); point masses at the link ends
# ------------------------------------------------------------------------------------------
def spong_arm(q1, q2, m1=2.0, m2=1.5, l1=0.4, l2=0.3, lc1=None, lc2=None, i1=0.0, i2=0.0):
    lc1 = l1 if lc1 is None else lc1
    lc2 = l2 if lc2 is None else lc2
    c2 = math.cos(q2)
    d11 = m1 * lc1**2 + m2 * (l1**2 + lc2**2 + 2 * l1 * lc2 * c2) + i1 + i2
    d12 = m2 * (lc2**2 + l1 * lc2 * c2) + i2
    d22 = m2 * lc2**2 + i2
    s1, c1, s12, c12 = math.sin(q1), math.cos(q1), math.sin(q1 + q2), math.cos(q1 + q2)
    J = np.array([[-l1 * s1 - l2 * s12, -l2 * s12], [l1 * c1 + l2 * c12, l2 * c12]])
    return np.array([[d11, d12], [d12, d22]]), J


def test_two_link_effective_mass_hand_cases():
    # q = (0, π/2): link 2 points along +y. Pushing along link 2 (u = y) moves both masses in y
    # together: m_u = m1 + m2 = 3.5 kg. Along x only joint 2 moves the tip: m_u = m2 = 1.5 kg.
    M, J = spong_arm(0.0, math.pi / 2)
    assert effective_mass(J, M, [0.0, 1.0]).mass == pytest.approx(3.5, rel=1e-12)
    assert effective_mass(J, M, [1.0, 0.0]).mass == pytest.approx(1.5, rel=1e-12)


def test_two_link_effective_mass_closed_form():
    # a = Jᵀu; m_u = det(D)/(a1²·d22 − 2·a1·a2·d12 + a2²·d11) for the 2×2 mass matrix D
    rng = np.random.default_rng(3)
    for _ in range(20):
        q1, q2, ang = rng.uniform(-3, 3), rng.uniform(0.3, 2.8), rng.uniform(0, 2 * math.pi)
        M, J = spong_arm(q1, q2, lc1=0.2, lc2=0.15, i1=0.02, i2=0.01)
        u = np.array([math.cos(ang), math.sin(ang)])
        a1, a2 = J.T @ u
        (d11, d12), (_, d22) = M
        expected = (d11 * d22 - d12**2) / (a1**2 * d22 - 2 * a1 * a2 * d12 + a2**2 * d11)
        assert effective_mass(J, M, u).mass == pytest.approx(expected, rel=1e-11)


def test_effective_mass_is_not_quadratic_form():
    # Khatib 1995 [mem]: 1/(uᵀΛ⁻¹u) equals uᵀΛu only along an eigenvector of Λ
    M, J = spong_arm(0.3, 1.1, lc1=0.2, lc2=0.15, i1=0.02, i2=0.01)
    lam = task_space_inertia(J, M).Lambda
    u = np.array([1.0, 1.0]) / math.sqrt(2)
    assert effective_mass(J, M, u).mass < u @ lam @ u
    ell = inertia_ellipsoid(lam)
    for k in range(2):
        v = ell.axes[:, k]
        assert effective_mass(J, M, v).mass == pytest.approx(ell.masses[k], rel=1e-10)
        assert ell.semi_axes[k] == pytest.approx(math.sqrt(ell.masses[k]))


def test_singular_pose_flagged_and_strict_raises():
    M, J = spong_arm(0.2, 0.0)  # stretched arm: J has rank 1
    res = task_space_inertia(J, M)
    assert res.singular and np.isinf(res.Lambda).all()
    with pytest.raises(SingularPoseError):
        task_space_inertia_strict(J, M)
    # the effective mass still exists: along the arm the joints cannot move the tip
    along = np.array([math.cos(0.2), math.sin(0.2)])
    em = effective_mass(J, M, along)
    assert em.immovable and em.mass == math.inf
    assert np.isfinite(effective_mass(J, M, [-along[1], along[0]]).mass)


def test_planar_leg_restricted_equals_reduced_jacobian():
    # two joints moving a 3-D contact: ξ ≡ 0; the restricted form is ξ of Qᵀ·J over range(K)
    rng = np.random.default_rng(11)
    H = random_spd(rng, 8)
    J = rng.standard_normal((3, 8))
    res = impact_mitigation(H, J, direction=[0.2, 0.3, 0.9])
    assert res.rank == 2 and res.imf == 0.0
    k = J[:, 6:] - J[:, :6] @ np.linalg.solve(H[:6, :6], H[:6, 6:])
    q, _ = np.linalg.qr(k)
    xi_reduced, _, _ = reference_imf(H, q.T @ J)
    assert res.imf_restricted == pytest.approx(xi_reduced, rel=1e-9)
    assert impact_mitigation(H, q.T @ J).imf == pytest.approx(xi_reduced, rel=1e-9)
    _, lam, lam_l = reference_imf(H, J)
    x = np.array([0.2, 0.3, 0.9]) / np.linalg.norm([0.2, 0.3, 0.9])
    assert res.imf_direction == pytest.approx(1 - x @ lam @ x / (x @ lam_l @ x), rel=1e-9)


def test_rank_deficient_batch_paths_agree():
    # closed-form "one short" path vs the eigen-decomposition path, over a batch
    from jointwright.metrics.impact_mitigation import _spectral

    H, J, _ = random_system(5, 8, 3, (300,))
    res = impact_mitigation(H, J)
    jb = J[..., :6]
    a = J @ np.linalg.solve(H, np.swapaxes(J, -1, -2))
    inv_l = jb @ np.linalg.solve(H[..., :6, :6], np.swapaxes(jb, -1, -2))
    _, rank, restricted = _spectral(a - inv_l, a, 1e-9)
    assert (rank == 2).all() and (res.rank == 2).all()
    np.testing.assert_allclose(res.imf_restricted, restricted, rtol=1e-8)


# ------------------------------------------------------------------------------------------
# invariants (hypothesis, derandomized) and fast paths against np.linalg
# ------------------------------------------------------------------------------------------
@settings(derandomize=True, max_examples=40, deadline=None)
@given(seed=SEEDS, m=st.integers(1, 3), n=st.integers(3, 7))
def test_lambda_symmetric_positive_definite(seed, m, n):
    rng = np.random.default_rng(seed)
    M = random_spd(rng, n)
    J = rng.standard_normal((m, n))
    lam = task_space_inertia(J, M).Lambda
    np.testing.assert_allclose(lam, lam.T, rtol=1e-10, atol=1e-12 * np.abs(lam).max())
    assert np.linalg.eigvalsh(lam).min() > 0
    np.testing.assert_allclose(lam, np.linalg.inv(J @ np.linalg.solve(M, J.T)), rtol=1e-10)


@settings(derandomize=True, max_examples=40, deadline=None)
@given(seed=SEEDS, n=st.integers(2, 6), grow=st.floats(0.0, 10.0))
def test_effective_mass_never_drops_when_reflected_inertia_grows(seed, n, grow):
    rng = np.random.default_rng(seed)
    M = random_spd(rng, n)
    J = rng.standard_normal((3, n))
    u = rng.standard_normal(3)
    d = np.diag(rng.uniform(0, 1, n) * grow)
    before, after = effective_mass(J, M, u).mass, effective_mass(J, M + d, u).mass
    assert after >= before * (1 - 1e-12)


@settings(derandomize=True, max_examples=40, deadline=None)
@given(seed=SEEDS, nj=st.integers(1, 4), m=st.integers(1, 3), grow=st.floats(0.0, 50.0))
def test_imf_bounded_and_non_increasing(seed, nj, m, grow):
    rng = np.random.default_rng(seed)
    H = random_spd(rng, 6 + nj)
    J = rng.standard_normal((m, 6 + nj))
    extra = np.zeros((6 + nj, 6 + nj))
    extra[6:, 6:] = np.diag(rng.uniform(0, 1, nj) * grow)  # reflected rotor inertia on joints
    a, b = impact_mitigation(H, J), impact_mitigation(H + extra, J)
    for r in (a, b):
        assert 0.0 <= r.imf <= 1.0 and 0.0 <= r.imf_restricted <= 1.0
    assert b.imf <= a.imf * (1 + 1e-9) + 1e-15
    if a.rank == b.rank:  # range(K) does not depend on the joint diagonal
        assert b.imf_restricted <= a.imf_restricted * (1 + 1e-9) + 1e-15
    if a.full_rank:
        ref, _, _ = reference_imf(H, J)
        assert a.imf == pytest.approx(ref, rel=1e-8, abs=1e-10)
        lam = np.linalg.eigvals(np.eye(m) - a.Lambda @ np.linalg.inv(a.Lambda_locked)).real
        assert lam.min() >= -1e-10 and lam.max() <= 1 + 1e-10


@settings(derandomize=True, max_examples=30, deadline=None)
@given(seed=SEEDS, k=st.integers(1, 3))
def test_small_inverse_and_determinant_match_numpy(seed, k):
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((50, k, k)) + 2 * np.eye(k)
    np.testing.assert_allclose(det_small(a), np.linalg.det(a), rtol=1e-10, atol=1e-12)
    ok = np.abs(np.linalg.det(a)) > 1e-3
    np.testing.assert_allclose(inv_small(a)[ok], np.linalg.inv(a[ok]), rtol=1e-8, atol=1e-10)


def check_fixed_base_against_numpy(J, M, u):
    """Λ and the effective mass against np.linalg solves of the definitions."""
    lam = np.linalg.inv(J @ np.linalg.solve(M, np.swapaxes(J, -1, -2)))
    np.testing.assert_allclose(task_space_inertia(J, M).Lambda, lam, rtol=1e-8)
    u = np.asarray(u, dtype=float)
    a = np.einsum("...mn,m->...n", J, u)
    em_ref = 1 / np.einsum("...i,...i->...", a, np.linalg.solve(M, a[..., None])[..., 0])
    np.testing.assert_allclose(effective_mass(J, M, u).mass, em_ref, rtol=1e-10)


def test_batched_fast_paths_match_numpy():
    H, J, _ = random_system(21, 9, 3, (2000,))
    ref, lam, lam_l = reference_imf(H, J)
    res = impact_mitigation(H, J)
    full = res.full_rank
    assert full.mean() > 0.99
    np.testing.assert_allclose(res.imf[full], ref[full], atol=1e-10)
    np.testing.assert_allclose(res.Lambda, lam, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(res.Lambda_locked, lam_l, rtol=1e-9, atol=1e-12)
    check_fixed_base_against_numpy(J[:, :, 6:], H[:, 6:, 6:], [0.0, 0.6, 0.8])


def test_broadcasting_designs_by_poses():
    rng = np.random.default_rng(2)
    H = random_spd(rng, 9, (40, 3))  # 40 designs × 3 poses
    J = rng.standard_normal((3, 3, 9))  # one Jacobian per pose, shared by all designs
    res = impact_mitigation(H, J, locked=np.array([False, False, False]))
    assert res.imf.shape == (40, 3) and res.Lambda.shape == (40, 3, 3, 3)
    ref, _, _ = reference_imf(H, np.broadcast_to(J, (40, 3, 3, 9)))
    np.testing.assert_allclose(res.imf, ref, atol=1e-10)


def test_chunked_batches_equal_one_call(monkeypatch):
    import jointwright.metrics.linalg_small as ls

    rng = np.random.default_rng(8)
    H = random_spd(rng, 9, (30, 7))
    J = rng.standard_normal((7, 3, 9))
    lock = rng.random((30, 1, 3)) < 0.3
    whole = impact_mitigation(H, J, locked=lock, direction=[1.0, 0.0, 0.0])
    em = effective_mass(J[:, :, 6:], H[..., 6:, 6:], [0.0, 0.0, 1.0]).mass
    monkeypatch.setattr(ls, "CHUNK", 16)  # 2 designs × 7 poses per chunk
    parts = impact_mitigation(H, J, locked=lock, direction=[1.0, 0.0, 0.0])
    for name in ("imf", "rank", "imf_restricted", "imf_direction", "Lambda", "Lambda_locked"):
        np.testing.assert_array_equal(getattr(parts, name), getattr(whole, name))
    np.testing.assert_array_equal(effective_mass(J[:, :, 6:], H[..., 6:, 6:], [0, 0, 1.0]).mass, em)


def test_batched_lock_masks_equal_single_calls():
    rng = np.random.default_rng(9)
    H = random_spd(rng, 9, (8,))
    J = rng.standard_normal((8, 3, 9))
    lock = np.array([[a, b, c] for a in (0, 1) for b in (0, 1) for c in (0, 1)], dtype=bool)
    res = impact_mitigation(H, J, locked=lock)
    for i in range(8):
        keep = [k for k in range(9) if k < 6 or not lock[i, k - 6]]
        one = impact_mitigation(H[i][np.ix_(keep, keep)], J[i][:, keep]) if len(keep) > 6 else None
        if one is None:  # every joint locked: nothing mitigates
            assert res.imf[i] == 0.0 and res.rank[i] == 0
            np.testing.assert_allclose(res.Lambda[i], res.Lambda_locked[i], rtol=1e-10)
            continue
        assert res.rank[i] == one.rank and res.imf[i] == pytest.approx(one.imf, abs=1e-12)
        assert res.imf_restricted[i] == pytest.approx(one.imf_restricted, rel=1e-9)
        np.testing.assert_allclose(res.Lambda[i], one.Lambda, rtol=1e-10)


def test_generic_paths_for_wrench_rows_and_large_models():
    # m = 6 (force and moment rows) takes the eigen-decomposition path; n = 20 > 16 joints
    # takes np.linalg's Cholesky: both against the definition
    H, J, rng = random_system(12, 12, 6, (5,))
    ref, lam, _ = reference_imf(H, J)
    res = impact_mitigation(H, J)
    assert res.full_rank.all()
    np.testing.assert_allclose(res.imf, ref, rtol=1e-8, atol=1e-12)
    np.testing.assert_allclose(task_space_inertia(J, H).Lambda, lam, rtol=1e-9)
    check_fixed_base_against_numpy(
        rng.standard_normal((4, 3, 20)), random_spd(rng, 20, (4,)), [0.0, 1.0, 0.0]
    )


def test_bad_input_raises_input_error():
    H, J = one_joint_1d(0.0)
    with pytest.raises(InputError, match="n_base"):
        impact_mitigation(H, J, n_base=2)
    with pytest.raises(InputError, match="symmetric positive definite"):
        impact_mitigation(np.array([[1.0, 2.0], [0.0, 1.0]]), J, n_base=1)
    with pytest.raises(InputError, match="locked"):
        impact_mitigation(H, J, n_base=1, locked=np.array([1, 0]))
    with pytest.raises(InputError, match="M"):
        task_space_inertia(np.ones((2, 3)), np.eye(2))
    with pytest.raises(InputError, match="NaN"):
        effective_mass(np.array([[np.nan, 1.0]]), np.eye(2), [1.0])
    with pytest.raises(InputError, match="nonzero"):
        effective_mass(np.ones((2, 2)), np.eye(2), [0.0, 0.0])


# ----------------------------------------------------------------------------------------------
# inertia per power-flow direction (DESIGN.md §2.3; docs/metrics.md)
# ----------------------------------------------------------------------------------------------
from jointwright.metrics.inertia import forward_apparent_inertia, forward_effective_mass  # noqa: E402


def _backdriven_mass(J, M, R, eta_b, u):
    return effective_mass(J, M + np.diag(R / eta_b), u).mass


@settings(derandomize=True, max_examples=80, deadline=None)
@given(seed=SEEDS, n=st.integers(1, 6), m=st.integers(1, 3))
def test_lossy_transmission_never_lowers_effective_mass_in_either_direction(seed, n, m):
    # energy bound [derived]: through a lossy gear the actuators supply p/η_f ≥ p for the link
    # work they send and get back only η_b·p ≤ p (p < 0) for the work they receive, so forward
    # effective mass ≥ frictionless; back-driven M + R/η_b ⪰ M + R (Loewner), so its effective
    # mass ≥ frictionless too; both along every direction
    rng = np.random.default_rng(seed)
    M = random_spd(rng, n)
    J = rng.standard_normal((m, n))
    R = rng.uniform(0, 2, n)
    ef = rng.uniform(0.3, 1.0, n)
    eb = ef * rng.uniform(0.1, 1.0, n)
    for _ in range(5):
        u = rng.standard_normal(m)
        base = effective_mass(J, M + np.diag(R), u).mass
        fwd = forward_effective_mass(J, M, R, ef, eb, u)
        assert fwd.frictionless == pytest.approx(base, rel=1e-9)
        assert fwd.mass >= base * (1 - 1e-12)
        assert _backdriven_mass(J, M, R, eb, u) >= base * (1 - 1e-12)
        # a self-locking backward efficiency: the motor drives back-driven joints along, still ≥
        lock = forward_effective_mass(J, M, R, ef, -0.2 * np.ones(n), u)
        assert lock.mass >= base * (1 - 1e-12)


@settings(derandomize=True, max_examples=40, deadline=None)
@given(seed=SEEDS, n=st.integers(1, 6))
def test_frictionless_transmission_is_the_classical_model(seed, n):
    # η_f = η_b = 1: both directions are 1/(uᵀ·J·(M + R)⁻¹·Jᵀ·u) (Khatib 1995)
    rng = np.random.default_rng(seed)
    M = random_spd(rng, n)
    J = rng.standard_normal((3, n))
    R = rng.uniform(0, 2, n)
    u = rng.standard_normal(3)
    u /= np.linalg.norm(u)
    classical = 1.0 / (u @ J @ np.linalg.solve(M + np.diag(R), J.T) @ u)
    ones = np.ones(n)
    assert forward_effective_mass(J, M, R, ones, ones, u).mass == pytest.approx(
        classical, rel=1e-10
    )
    assert _backdriven_mass(J, M, R, ones, u) == pytest.approx(classical, rel=1e-10)


def test_one_joint_closed_form_per_direction():
    # one revolute joint, link inertia I about it, tip at lever L (J = [L]), R = N²·I_r:
    # forward (I/η_f + N²·I_r)/L², back-driven (I + N²·I_r/η_b)/L², frictionless (I + N²·I_r)/L²
    # [derived from the transmission law of DESIGN.md §2.3]
    I, L, N, Ir, ef, eb = 0.04, 0.3, 20.0, 2e-5, 0.8, 0.6
    R = N * N * Ir
    J, M = np.array([[L]]), np.array([[I]])
    fwd = forward_effective_mass(J, M, [R], [ef], [eb], [1.0])
    assert fwd.mass == pytest.approx((I / ef + R) / L**2, rel=1e-12)
    assert fwd.frictionless == pytest.approx((I + R) / L**2, rel=1e-12)
    assert _backdriven_mass(J, M, np.array([R]), eb, [1.0]) == pytest.approx(
        (I + R / eb) / L**2, rel=1e-12
    )
    # the old reading η_f·N²·I_r would give (I + η_f·R)/L² < frictionless: not what the motor feels
    assert (I + ef * R) / L**2 < fwd.frictionless < fwd.mass
    # forward apparent inertia of one joint: I/η_f + N²·I_r
    assert forward_apparent_inertia(M, [R], [ef])[0, 0] == pytest.approx(I / ef + R, rel=1e-12)


def test_coupled_joints_need_the_per_joint_power_flow_sign():
    # two coupled joints: along this direction the natural motion back-drives joint 0
    # (v_0·(M·v)_0 < 0). Reading the all-motoring quadratic form vᵀ·(E_f⁻¹·M + R)·v there would
    # fall below the frictionless effective mass, which no lossy gear can do; with each joint's
    # own power-flow sign the forward value stays above it [derived]
    M = np.array([[1.0, 0.9], [0.9, 1.0]])
    J = np.eye(2)
    R = np.zeros(2)
    ef = np.array([0.1, 1.0])
    u = np.array([0.1, 1.0])
    fwd = forward_effective_mass(J, M, R, ef, ef, u)
    v = fwd.motion
    assert fwd.backdriven_joints[0] and not fwd.backdriven_joints[1]
    all_motoring = v @ forward_apparent_inertia(M, R, ef) @ v
    assert all_motoring < fwd.frictionless < fwd.mass


def test_backdriven_imf_falls_with_backward_efficiency_and_vanishes_when_self_locking():
    # H = M + R/η_b grows in the Loewner order as η_b falls, so ξ = det(I − Λ·Λ_L⁻¹) cannot rise
    # (Wensing et al. 2017); with every joint self-locking the contact meets Λ_L: ξ = 0
    rng = np.random.default_rng(7)
    nj = 3
    H0 = random_spd(rng, 6 + nj)
    J = rng.standard_normal((3, 6 + nj))
    R = rng.uniform(0.05, 0.5, nj)
    values = []
    for eb in (1.0, 0.8, 0.5, 0.3, 0.1):
        H = H0.copy()
        H[6:, 6:] += np.diag(R / eb)
        values.append(float(impact_mitigation(H, J).imf))
    assert all(b <= a * (1 + 1e-12) for a, b in zip(values, values[1:]))
    assert values[-1] < values[0]
    locked = impact_mitigation(
        H0, J, locked=np.ones(nj, dtype=bool), direction=np.array([0.0, 0, 1])
    )
    assert locked.imf == 0.0 and locked.imf_direction == pytest.approx(0.0, abs=1e-12)
