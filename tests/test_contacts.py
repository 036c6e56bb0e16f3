"""Payload of a robot on several point contacts (cone program and pyramid linear programs).

Expected values come from rigid-body statics worked by hand in the comments, from the closed
form of a one-variable linear program (force along a direction, Chiacchio et al., J. Robotic
Systems 1997 [mem]), from the symmetry and convexity of the program, and from Pinocchio
(gravity vectors and frame Jacobians of small models built here).
"""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pinocchio as pin
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

from jointwright.errors import InputError
from jointwright.metrics import contacts as mc

from contact_cvxpy import reference_payload

G0 = 9.81  # Pinocchio's default gravity magnitude, m/s²
LEG_MASSES = (0.3, 0.5, 0.2)  # abduction housing, thigh, shank: kg
THIGH = SHANK = 0.2  # m
TAU_MAX = np.array([20.0, 15.0, 12.0])  # N·m, abduction, hip pitch, knee
BODY_SHARE = 3.0  # kg of body per leg
POSE = np.array([0.0, 0.7, -1.1])  # front-leg joint angles, rad


# --- models built with Pinocchio ------------------------------------------------------------


def _add_leg(model: pin.Model, parent: int, hip: np.ndarray, name: str) -> int:
    """Abduction (x), hip pitch (y), knee (y); returns the foot frame id."""
    down = pin.SE3(np.eye(3), np.array([0.0, 0.0, -THIGH / 2]))
    j1 = model.addJoint(parent, pin.JointModelRX(), pin.SE3(np.eye(3), hip), f"{name}_abd")
    model.appendBodyToJoint(j1, pin.Inertia.FromSphere(LEG_MASSES[0], 0.03), pin.SE3.Identity())
    j2 = model.addJoint(j1, pin.JointModelRY(), pin.SE3.Identity(), f"{name}_hip")
    model.appendBodyToJoint(j2, pin.Inertia.FromCylinder(LEG_MASSES[1], 0.02, THIGH), down)
    knee = pin.SE3(np.eye(3), np.array([0.0, 0.0, -THIGH]))
    j3 = model.addJoint(j2, pin.JointModelRY(), knee, f"{name}_knee")
    model.appendBodyToJoint(j3, pin.Inertia.FromCylinder(LEG_MASSES[2], 0.02, SHANK), down)
    foot = pin.SE3(np.eye(3), np.array([0.0, 0.0, -SHANK]))
    return model.addFrame(pin.Frame(f"{name}_foot", j3, foot, pin.FrameType.OP_FRAME))


def _hips(n_legs: int) -> list[np.ndarray]:
    """2 legs: front/back at (±0.25, 0, 0); 4 legs: the same pair at y = ±0.12 (m)."""
    ys = [0.0] if n_legs == 2 else [0.12, -0.12]
    return [np.array([x, y, 0.0]) for y in ys for x in (0.25, -0.25)]


def _jacobian(model, data, q, frame):
    pin.computeJointJacobians(model, data, q)
    pin.updateFramePlacements(model, data)
    return pin.getFrameJacobian(model, data, frame, pin.LOCAL_WORLD_ALIGNED)


def _stance(n_legs: int, mu, normals=None, yaw=0.0) -> mc.ContactStatics:
    """Floating body (n_legs·BODY_SHARE kg) on n_legs identical legs, payload at its centre.

    Back legs (x < 0) mirror the front ones in the plane x = 0: (q1, −q2, −q3). ``yaw`` (rad)
    turns the body about the vertical (the feet then push sideways at that angle in the world).
    """
    model = pin.Model()
    base = model.addJoint(0, pin.JointModelFreeFlyer(), pin.SE3.Identity(), "base")
    body = pin.Inertia.FromBox(n_legs * BODY_SHARE, 0.6, 0.3, 0.1)
    model.appendBodyToJoint(base, body, pin.SE3.Identity())
    centre = model.addFrame(pin.Frame("centre", base, pin.SE3.Identity(), pin.FrameType.OP_FRAME))
    hips = _hips(n_legs)
    feet = [_add_leg(model, base, hip, f"leg{i}") for i, hip in enumerate(hips)]
    data = model.createData()
    q = pin.neutral(model)
    q[5:7] = [math.sin(yaw / 2), math.cos(yaw / 2)]
    for i, hip in enumerate(hips):
        q[7 + 3 * i : 10 + 3 * i] = POSE if hip[0] > 0 else POSE * [1, -1, -1]
    g = pin.computeGeneralizedGravity(model, data, q)
    jc = np.array([_jacobian(model, data, q, f)[:3] for f in feet])
    jp = _jacobian(model, data, q, centre)[:3]
    k = len(feet)
    return mc.ContactStatics(
        gravity=g,
        contact_jacobians=jc,
        normals=np.tile([0, 0, 1.0], (k, 1)) if normals is None else normals,
        friction=mu,
        payload_jacobian=jp,
        payload_wrench=[0, 0, -1.0],
        tau_low=-np.tile(TAU_MAX, k),
        tau_high=np.tile(TAU_MAX, k),
        actuated=range(6, 6 + 3 * k),
    )


def _single_leg():
    """The front leg on a fixed hip at the same pose: joint gravity g_leg and foot z-row."""
    model = pin.Model()
    foot = _add_leg(model, 0, np.zeros(3), "leg")
    data = model.createData()
    g = pin.computeGeneralizedGravity(model, data, POSE)
    return g, _jacobian(model, data, POSE, foot)[2]


def _ray_bound(bias, a, low, high):
    """Largest f ≥ 0 with low ≤ bias − a·f ≤ high, joint by joint (closed-form one-variable
    LP, Chiacchio et al. 1997 [mem]); returns (f*, limiting joint, its side)."""
    cands = [
        ((bias[i] - low[i]) / a[i], i, "low")
        if a[i] > 0
        else ((bias[i] - high[i]) / a[i], i, "high")
        for i in range(len(a))
        if a[i] != 0
    ]
    return min(cands)


# --- symmetric stance -----------------------------------------------------------------------


def test_symmetric_stance_is_single_leg_times_number_of_legs():
    # Assumptions: frictionless feet (μ = 0) so foot forces are vertical; body weight shared
    # equally (body mass = n·BODY_SHARE); payload at the symmetric centre. The joint rows of the
    # floating-base statics are those of a fixed-hip leg, so each foot carries at most f*, the
    # single-leg ray bound with the leg's own gravity; vertical balance of the whole robot then
    # gives s* = n·(f* − (m_leg + BODY_SHARE)·g0) = n·s_1, reached with every foot at f*.
    g_leg, jz = _single_leg()
    f_star, joint, side = _ray_bound(g_leg, jz, -TAU_MAX, TAU_MAX)
    s_1 = f_star - (sum(LEG_MASSES) + BODY_SHARE) * G0
    assert s_1 > 10.0  # a meaningful payload, N
    for n_legs in (2, 4):
        res = mc.solve(_stance(n_legs, 0.0))
        assert res.status == "optimal"
        assert res.payload == pytest.approx(n_legs * s_1, rel=1e-6)
        np.testing.assert_allclose(res.contact_forces[:, 2], f_star, rtol=1e-6)
        np.testing.assert_allclose(res.contact_forces[:, :2], 0.0, atol=1e-9)
        flags = res.torque_at_high if side == "high" else res.torque_at_low
        limited = flags.reshape(n_legs, 3)
        assert limited[0].tolist() == [i == joint for i in range(3)]
        # mirrored back legs: pitch torques change sign, so the other bound is active there
        mirrored = (res.torque_at_low if side == "high" else res.torque_at_high).reshape(n_legs, 3)
        assert (limited | mirrored).sum(axis=1).tolist() == [1] * n_legs


def test_with_friction_four_legs_carry_twice_two_legs():
    # The 4-leg robot is two copies of the 2-leg robot side by side (body mass doubles): the
    # sum of two 2-leg solutions is feasible for 4 legs (lateral moments cancel by the y-mirror),
    # and averaging a 4-leg optimum over the y-mirror splits into two 2-leg solutions
    # (convexity + symmetry), so s4 = 2·s2 exactly. Friction must help here (the knee relieves
    # itself by pushing the foot sideways), so s2(μ) > s2(0).
    s2 = mc.solve(_stance(2, 0.6)).payload
    s4 = mc.solve(_stance(4, 0.6)).payload
    assert s4 == pytest.approx(2 * s2, rel=1e-6)
    assert s2 > mc.solve(_stance(2, 0.0)).payload + 1.0


def test_frictionless_foot_force_is_along_its_normal():
    # Foot 0 on a slope (tilted normal) with μ = 0; the others at μ = 0.6. Its force must be
    # normal-only, along the tilted normal (not vertical), while friction is used elsewhere.
    normals = np.tile([0.0, 0.0, 1.0], (4, 1))
    normals[0] = [0.15, 0.05, 1.0]
    mu = np.array([0.0, 0.6, 0.6, 0.6])
    res = mc.solve(_stance(4, mu, normals))
    assert res.status == "optimal"
    n0 = normals[0] / np.linalg.norm(normals[0])
    f0 = res.contact_forces[0]
    assert np.linalg.norm(f0) > 10.0
    np.testing.assert_allclose(f0, (f0 @ n0) * n0, atol=1e-8 * np.linalg.norm(f0))
    assert not res.cone_binding[0]
    tangential = np.linalg.norm(res.contact_forces[1:, :2], axis=1)
    assert (tangential > 1e-3 * res.contact_forces[1:, 2]).all()
    assert res.payload <= mc.solve(_stance(4, 0.6)).payload * (1 + 1e-7)


def test_pyramids_bracket_the_cone_and_tighten():
    # Inscribed pyramid ⊂ cone ⊂ circumscribed pyramid, so inner ≤ cone ≤ outer; doubling the
    # number of sides nests both pyramids, so the gap never grows, and cos(π/p) → 1 closes it.
    # Low friction (μ = 0.05) so that every cone binds; the body is yawed so that the feet's
    # sideways forces fall between pyramid edges (turning the robot leaves the cone result).
    st = _stance(4, 0.05, yaw=0.3)
    res = mc.solve(st)
    cone = res.payload
    assert res.cone_binding.all()
    assert cone == pytest.approx(mc.solve(_stance(4, 0.05)).payload, rel=1e-6)
    gaps = []
    for sides in (4, 8, 16, 32, 64):
        b = mc.pyramid_bounds(st, sides=sides)
        assert b.inner.status == b.outer.status == "optimal"
        assert b.inner.payload <= cone * (1 + 1e-7) and cone <= b.outer.payload * (1 + 1e-7)
        gaps.append(b.gap)
    assert all(later <= earlier + 1e-6 for earlier, later in zip(gaps, gaps[1:]))
    assert gaps[0] > 1e-2 * cone and gaps[-1] < 1e-3 * cone


# --- rigid-body statics, worked by hand ------------------------------------------------------

W, A, B = 100.0, 0.5, 0.4  # body weight N; contacts at (±A, ±B, 0) m
CORNERS = np.array([[A, B, 0], [A, -B, 0], [-A, -B, 0], [-A, B, 0]], dtype=float)


def _box(mu, point, wrench, height=0.1) -> mc.ContactStatics:
    """A rigid body (no joints) of weight W with its centre of mass at (0, 0, height) on four
    corner contacts; base coordinates (v_o, ω) world-aligned at the origin.
    g = (0, 0, W, W·(c × e_z)) = (0, 0, W, 0, 0, 0) since c ∥ e_z."""
    jp = mc.rigid_point_jacobian(np.asarray(point, float), angular=len(wrench) == 6)
    return mc.ContactStatics(
        gravity=[0, 0, W, 0, 0, 0],
        contact_jacobians=mc.rigid_point_jacobian(CORNERS),
        normals=np.tile([0, 0, 1.0], (4, 1)),
        friction=mu,
        payload_jacobian=jp,
        payload_wrench=wrench,
        tau_low=[],
        tau_high=[],
        actuated=[],
    )


def test_rigid_body_tips_over_an_edge():
    # Downward load s at x = 1.0 m, outside the support: tipping about the edge x = A,
    # W·A = s·(1.0 − A) → s* = 100·0.5/0.5 = 100 N; the edge contacts carry (W + s)/2 = 100 N
    # each, the far ones lift off. Frictionless: both pyramids equal the cone.
    st = _box(0.0, [1.0, 0.0, 0.0], [0, 0, -1.0])
    res = mc.solve(st)
    assert res.payload == pytest.approx(W * A / (1.0 - A), rel=1e-7)
    np.testing.assert_allclose(res.contact_forces[:, 2], [100, 100, 0, 0], atol=1e-5)
    assert res.contact_unloaded.tolist() == [False, False, True, True]
    bounds = mc.pyramid_bounds(st, sides=4)
    assert bounds.inner.payload == pytest.approx(100.0, rel=1e-9)
    assert bounds.outer.payload == pytest.approx(100.0, rel=1e-9)


@pytest.mark.parametrize("share", [0.0, 0.2, 0.25])
def test_least_contact_share_moves_the_tipping_point(share):
    # The same box and load with every corner taking at least ρ of the total normal force
    # N = W + s (statics by hand, frictionless: vertical forces only). The centre of pressure
    # is furthest towards +x when the two +x corners take 1 − 2ρ and the others ρ each:
    # x_p = A·(1 − 2ρ) − A·2ρ = A·(1 − 4ρ); moments about the origin: s·1.0 = (W + s)·x_p,
    # so s* = W·x_p / (1 − x_p). ρ = 0: 100 N (tipping, as above); ρ = 0.2: x_p = 0.1,
    # s* = 11.11 N; ρ = 0.25 = 1/k: equal shares, x_p = 0, no off-centre load at all.
    st = mc.ContactStatics(**{**_fields(_box(0.0, [1.0, 0.0, 0.0], [0, 0, -1.0])), "share_min": share})
    x_p = A * (1 - 4 * share)
    expect = W * x_p / (1.0 - x_p)
    res = mc.solve(st)
    assert res.payload == pytest.approx(expect, rel=1e-6, abs=1e-6)
    fz = res.contact_forces[:, 2]
    assert (fz >= share * fz.sum() - 1e-6).all()
    status, payload, _ = reference_payload(st)  # cvxpy in force coordinates, same constraint
    assert status == "optimal" and payload == pytest.approx(expect, rel=1e-6, abs=1e-6)
    bounds = mc.pyramid_bounds(st, sides=4)  # frictionless: the pyramids equal the cone
    assert bounds.inner.payload == pytest.approx(expect, rel=1e-7, abs=1e-7)
    assert bounds.outer.payload == pytest.approx(expect, rel=1e-7, abs=1e-7)


def test_least_contact_share_on_a_legged_stance_matches_the_cvxpy_model():
    # the four-legged stance with two weak legs: a share keeps the strong pair from carrying
    # everything, so the payload drops; cvxpy in force coordinates agrees, pyramids bracket it
    st = _stance(4, 0.6)
    weak = np.repeat([1.0, 0.2, 0.2, 1.0], 3)
    base = {**_fields(st), "tau_low": st.tau_low * weak, "tau_high": st.tau_high * weak}
    free = mc.solve(mc.ContactStatics(**base)).payload
    shared = mc.ContactStatics(**base, share_min=0.2)
    res = mc.solve(shared)
    assert res.status == "optimal" and res.payload < free
    _status, payload, _ = reference_payload(shared)
    assert res.payload == pytest.approx(payload, rel=1e-6)
    bounds = mc.pyramid_bounds(shared, sides=16)
    assert bounds.inner.payload <= res.payload * (1 + 1e-6)
    assert res.payload <= bounds.outer.payload * (1 + 1e-6)
    with pytest.raises(InputError) as err:
        mc.ContactStatics(**base, share_min=0.3)  # 4 × 0.3 > 1
    assert err.value.field == "share_min"


def test_rigid_body_pure_moment_payload():
    # A 6-D payload: pure moment s about +y ON the body, frictionless. Moment balance about y:
    # Σ x_k f_k = s with f_k ≥ 0, Σ f_k = W → s* = A·W = 50 N·m.
    res = mc.solve(_box(0.0, [0, 0, 0], [0, 0, 0, 0, 1.0, 0]))
    assert res.payload == pytest.approx(A * W, rel=1e-7)


@pytest.mark.parametrize("alpha", [0.0, 0.3, 1.1])
def test_rigid_body_slides_and_pyramid_values(alpha):
    # Horizontal load at angle α at the centre of mass height 0.1 m; tipping would need
    # s ≥ W·0.4/0.1 = 400 N, so sliding limits: the total friction force is at most μ·Σf_n = μW
    # (triangle inequality), s* = 0.5·100 = 50 N with every cone active. The same Minkowski-sum
    # argument gives the pyramids exactly (Σ f_n,k·P = W·P for one convex polygon P): the
    # friction force points along β = α + π; outer = μW / max_j cos(β − 2πj/p), inner =
    # μW·cos(π/p) / max_j cos(β − (2j+1)π/p), angles from t1 = e_x.
    mu, p = 0.5, 6
    st = _box(mu, [0, 0, 0.1], [math.cos(alpha), math.sin(alpha), 0.0])
    res = mc.solve(st)
    assert res.payload == pytest.approx(mu * W, rel=1e-6)
    assert res.cone_binding.all()
    beta = alpha + math.pi
    j = np.arange(p)
    outer = mu * W / np.max(np.cos(beta - 2 * math.pi * j / p))
    inner = mu * W * math.cos(math.pi / p) / np.max(np.cos(beta - (2 * j + 1) * math.pi / p))
    bounds = mc.pyramid_bounds(st, sides=p)
    assert bounds.outer.payload == pytest.approx(outer, rel=1e-7)
    assert bounds.inner.payload == pytest.approx(inner, rel=1e-7)


def test_rigid_point_jacobian_matches_pinocchio_free_flyer():
    # Pinocchio frame Jacobian (LOCAL_WORLD_ALIGNED) of a point on a free body at identity
    # orientation: v = v_o + ω × r.
    model = pin.Model()
    base = model.addJoint(0, pin.JointModelFreeFlyer(), pin.SE3.Identity(), "base")
    r = np.array([0.3, -0.2, 0.15])
    frame = model.addFrame(pin.Frame("p", base, pin.SE3(np.eye(3), r), pin.FrameType.OP_FRAME))
    data = model.createData()
    jac = _jacobian(model, data, pin.neutral(model), frame)
    np.testing.assert_allclose(mc.rigid_point_jacobian(r, angular=True), jac, atol=1e-12)


# --- fixed base, bounds, statuses ------------------------------------------------------------


def _leg_case(high=TAU_MAX, low=None, bias_force=0.0) -> mc.ContactStatics:
    """The fixed-hip leg with the foot pushing up: payload s along +z at the foot."""
    g, jz = _single_leg()
    jp = np.vstack([np.zeros((2, 3)), jz])
    return mc.ContactStatics(
        gravity=g - jz * bias_force,
        contact_jacobians=np.zeros((0, 3, 3)),
        normals=np.zeros((0, 3)),
        friction=[],
        payload_jacobian=jp,
        payload_wrench=[0, 0, 1.0],
        tau_low=-np.asarray(high) if low is None else low,
        tau_high=high,
        actuated=[0, 1, 2],
    )


def test_fixed_base_leg_matches_closed_form_and_multiplier():
    # τ = g − a·s with a = J_zᵀ; s* = ratio bound (Chiacchio 1997 [mem]); the active bound's
    # multiplier is |ds*/dτ_bound| = 1/|a_i| (derivative of the ratio), the others are 0.
    g, jz = _single_leg()
    f_star, joint, side = _ray_bound(g, jz, -TAU_MAX, TAU_MAX)
    res = mc.solve(_leg_case())
    assert res.payload == pytest.approx(f_star, rel=1e-7)
    mult = res.torque_multiplier_high if side == "high" else res.torque_multiplier_low
    assert mult[joint] == pytest.approx(1.0 / abs(jz[joint]), rel=1e-5)
    assert np.delete(mult, joint).max() < 1e-6
    assert res.binding() == (
        f"joint {joint} {'upper' if side == 'high' else 'lower'} torque bound",
    )


def test_infinite_bounds_statuses_and_linear_program_agree():
    g, jz = _single_leg()
    f_star, joint, _ = _ray_bound(g, jz, -TAU_MAX, TAU_MAX)
    loose = TAU_MAX.copy()
    other = (joint + 1) % 3
    loose[other] = math.inf  # a joint that does not limit: no change
    res = mc.solve(_leg_case(loose))
    assert res.payload == pytest.approx(f_star, rel=1e-7)
    assert not res.torque_at_high[other] and res.torque_multiplier_high[other] == 0.0
    free = mc.solve(_leg_case(np.full(3, math.inf)))
    assert (free.status, free.payload) == ("unbounded", math.inf)
    # too weak to hold the leg's own weight plus a 500 N preload: no payload exists
    weak = mc.solve(_leg_case(bias_force=500.0))
    assert weak.status == "infeasible" and math.isnan(weak.payload)
    for case, status in (
        (_leg_case(np.full(3, math.inf)), "unbounded"),
        (_leg_case(bias_force=500.0), "infeasible"),
    ):
        b = mc.pyramid_bounds(case)
        assert b.inner.status == b.outer.status == status


@settings(max_examples=20, deadline=None, database=None)
@given(scale=hs.floats(1.0, 4.0), knee=hs.floats(0.5, 1.5))
def test_payload_never_drops_when_bounds_widen(scale, knee):
    # Widening every torque bound enlarges the feasible set [trade: monotonicity of an LP/SOCP
    # optimum in its right-hand side].
    high = TAU_MAX * np.array([1.0, 1.0, knee])
    base = mc.solve(_leg_case(high)).payload
    assert mc.solve(_leg_case(high * scale)).payload >= base * (1 - 1e-7)


def _random_legged(seed: int, k: int, mu: float, planted: bool) -> mc.ContactStatics:
    """A floating body on k random 3-joint limbs: foot Jacobian [I, −[r]×] on the base and a
    random 3×3 block on its own joints. With ``planted`` the bias g is built from a point that
    holds s = 1 (torques at half their bounds, forces at half the friction radius, which lies
    inside every pyramid of ≥ 4 sides), so no bound can be infeasible; otherwise g is a body
    weight with random joint terms."""
    rng = np.random.default_rng(seed)
    nv = 6 + 3 * k
    feet = rng.uniform([-0.4, -0.3, -0.5], [0.4, 0.3, -0.3], (k, 3))
    jc = np.zeros((k, 3, nv))
    jc[:, :, :6] = mc.rigid_point_jacobian(feet)
    for c in range(k):
        jc[c, :, 6 + 3 * c : 9 + 3 * c] = rng.normal(0, 0.3, (3, 3))
    normals = np.column_stack([rng.normal(0, 0.2, (k, 2)), np.ones(k)])
    tau = rng.uniform(5, 40, 3 * k)
    w = rng.normal(size=3)
    w /= np.linalg.norm(w)
    jp = np.hstack([mc.rigid_point_jacobian(rng.uniform(-0.1, 0.1, 3)), np.zeros((3, 3 * k))])
    if planted:
        t1, t2, n = mc.tangent_basis(normals)
        fn = rng.uniform(10, 100, k)
        angle = rng.uniform(0, 2 * np.pi, k)
        ft = 0.5 * mu * fn
        f = (
            fn[:, None] * n
            + (ft * np.cos(angle))[:, None] * t1
            + (ft * np.sin(angle))[:, None] * t2
        )
        g = np.einsum("kiv,ki->v", jc, f) + jp.T @ w
        g[6:] += rng.uniform(-0.5, 0.5, 3 * k) * tau
    else:
        weight, com = rng.uniform(50, 200), rng.uniform(-0.05, 0.05, 3)
        g = np.concatenate(
            [[0, 0, weight], weight * np.cross(com, [0, 0, 1]), rng.normal(0, 1, 3 * k)]
        )
    return mc.ContactStatics(
        gravity=g,
        contact_jacobians=jc,
        normals=normals,
        friction=mu,
        payload_jacobian=jp,
        payload_wrench=w,
        tau_low=-tau,
        tau_high=tau,
        actuated=range(6, nv),
    )


ORDER = {"infeasible": 0, "optimal": 1, "unbounded": 2}


@settings(max_examples=25, deadline=None, database=None)
@given(
    seed=hs.integers(0, 2**32 - 1),
    k=hs.integers(1, 4),
    mu=hs.floats(0.0, 1.2),
    planted=hs.booleans(),
)
def test_cone_between_pyramids_on_random_robots(seed, k, mu, planted):
    # Inner ⊂ cone ⊂ outer holds for any statics: infeasible/optimal/unbounded are ordered too.
    st = _random_legged(seed, k, mu, planted)
    cone = mc.solve(st)
    b = mc.pyramid_bounds(st, sides=8)
    statuses = [b.inner.status, cone.status, b.outer.status]
    assert "error" not in statuses
    if planted:
        assert b.inner.status != "infeasible" and b.inner.payload >= 1.0 - 1e-6
    assert [ORDER[s] for s in statuses] == sorted(ORDER[s] for s in statuses)
    if statuses == ["optimal"] * 3:
        tol = 1e-6 * max(1.0, cone.payload)
        assert b.inner.payload <= cone.payload + tol <= b.outer.payload + 2 * tol
        # the cone solution satisfies the statics it was given (residual of g = Sᵀτ + Σ Jᵀf + ...)
        resid = (
            st.gravity
            - st.selection_transpose() @ cone.joint_torques
            - np.einsum("kiv,ki->v", st.contact_jacobians, cone.contact_forces)
            - st.payload_jacobian.T @ st.payload_wrench * cone.payload
        )
        assert np.abs(resid).max() < 1e-6 * max(1.0, np.abs(st.gravity).max(), cone.payload)


# --- re-solving, batches ---------------------------------------------------------------------


@pytest.mark.parametrize("seed", range(6))
def test_cone_program_matches_a_cvxpy_model_of_the_contact_forces(seed):
    # cvxpy (general-purpose convex modelling) in the original coordinates f_k against the
    # library's scaled program written straight into the solver's form: same payload, same
    # statuses, including frictionless contacts (μ = 0) and unbounded torques; resolving on one
    # problem object gives the same numbers as a fresh solve
    rng = np.random.default_rng(seed)
    legs = 2 if seed % 2 else 4
    problem = mc.MultiContactPayload.for_statics(_stance(legs, 0.6))
    statuses = set()
    for trial in range(4):
        mu = rng.uniform(0.0, 1.0, legs)
        mu[rng.random(legs) < 0.4] = 0.0
        st = _stance(legs, mu, yaw=rng.uniform(-0.5, 0.5))
        low = st.tau_low * rng.uniform(0.3, 1.5, st.tau_low.size)
        high = st.tau_high * rng.uniform(0.3, 1.5, st.tau_high.size)
        if trial == 3:  # some joints without a bound on one side
            free = rng.random(low.size) < 0.3
            low, high = np.where(free, -np.inf, low), np.where(free[::-1], np.inf, high)
        scaled = mc.ContactStatics(**{**_fields(st), "tau_high": high, "tau_low": low})
        status, payload, _tau = reference_payload(scaled)
        mine = problem.resolve(scaled)
        statuses.add(mine.status)
        assert mine.status == {"optimal": "optimal", "infeasible": "infeasible",
                               "unbounded": "unbounded"}[status]
        if status == "optimal":
            assert mine.payload == pytest.approx(payload, rel=1e-6, abs=1e-6)
            fresh = mc.solve(scaled)
            assert mine.payload == fresh.payload
            np.testing.assert_array_equal(mine.contact_forces, fresh.contact_forces)
            np.testing.assert_array_equal(
                mine.torque_multiplier_high, fresh.torque_multiplier_high
            )
    assert "optimal" in statuses
    with pytest.raises(InputError, match="problem built for"):
        problem.resolve(_stance(6 - legs, 0.6))


@pytest.mark.parametrize(
    "case",
    ["lifted point mass", "no joints, 6-dim payload", "no contacts", "pulling contact"],
)
def test_edge_cases_match_the_cvxpy_model(case):
    # small statics worked by hand: a 1 kg point on one frictionless floor contact lifted by a
    # force s: it holds s ≤ 9.81 N (then the contact unloads); a rigid 100 N box on four
    # frictionless corners under a downward moment-free load (6-dim wrench, no joints) carries
    # any load (unbounded); a fixed-base joint with no contact; a point whose bias force pulls
    # it up (g_z < 0) over a floor contact that cannot pull, the load pulling up too: it cannot
    # be held even without payload (infeasible)
    if case == "lifted point mass":
        st = mc.ContactStatics(
            gravity=[0, 0, 9.81], contact_jacobians=np.eye(3)[None], normals=[[0, 0, 1.0]],
            friction=0.0, payload_jacobian=np.eye(3), payload_wrench=[0, 0, 1.0],
            tau_low=[], tau_high=[], actuated=[],
        )
        expect = ("optimal", 9.81)
    elif case == "no joints, 6-dim payload":
        corners = np.array([[0.5, 0.4, 0], [0.5, -0.4, 0], [-0.5, -0.4, 0], [-0.5, 0.4, 0]])
        st = mc.ContactStatics(
            gravity=[0, 0, 100.0, 0, 0, 0], contact_jacobians=mc.rigid_point_jacobian(corners),
            normals=np.tile([0, 0, 1.0], (4, 1)), friction=0.0,
            payload_jacobian=mc.rigid_point_jacobian(np.zeros(3), angular=True),
            payload_wrench=[0, 0, -1.0, 0, 0, 0], tau_low=[], tau_high=[], actuated=[],
        )
        expect = ("unbounded", math.inf)
    elif case == "no contacts":  # one joint 0.5 m from a mass: 2 N·m holds s·0.5 + 0 ≤ 2
        st = mc.ContactStatics(
            gravity=[0.0], contact_jacobians=np.zeros((0, 3, 1)), normals=np.zeros((0, 3)),
            friction=[], payload_jacobian=[[0.0], [0.0], [0.5]], payload_wrench=[0, 0, -1.0],
            tau_low=[-2.0], tau_high=[2.0], actuated=[0],
        )
        expect = ("optimal", 4.0)
    else:
        st = mc.ContactStatics(
            gravity=[0, 0, -9.81], contact_jacobians=np.eye(3)[None], normals=[[0, 0, 1.0]],
            friction=0.5, payload_jacobian=np.eye(3), payload_wrench=[0, 0, 1.0],
            tau_low=[], tau_high=[], actuated=[],
        )
        expect = ("infeasible", math.nan)
    status, payload, _ = reference_payload(st)
    mine = mc.solve(st)
    assert (mine.status, status) == (expect[0], expect[0])
    if expect[0] == "optimal":
        assert mine.payload == pytest.approx(expect[1], rel=1e-6)
        assert payload == pytest.approx(expect[1], rel=1e-6)


def test_a_batch_reuses_its_pose_and_gives_fresh_numbers():
    # designs in one pose whose pattern of finite bounds changes between them: forces,
    # torques and multipliers equal a fresh solve of each design
    st = _stance(4, 0.5)
    rng = np.random.default_rng(3)
    scale = rng.uniform(0.5, 1.5, (5, st.tau_low.size))
    low, high = st.tau_low * scale, st.tau_high * scale
    low[2, :3] = -np.inf
    high[3, 4:6] = np.inf
    base = _fields(st)
    out = mc.solve_batch(
        **{n: v for n, v in base.items() if n not in ("tau_low", "tau_high")},
        tau_low=low,
        tau_high=high,
    )
    problem = mc.MultiContactPayload.for_statics(st)
    for d in range(5):
        one = problem.resolve(mc.ContactStatics(**{**base, "tau_low": low[d], "tau_high": high[d]}))
        assert out.payload[d] == one.payload
        np.testing.assert_array_equal(out.contact_forces[d], one.contact_forces)
        np.testing.assert_array_equal(out.joint_torques[d], one.joint_torques)
    assert out.status.tolist() == ["optimal"] * 5


def test_settings_are_checked_when_the_problem_is_made():
    with pytest.raises(InputError, match="no setting"):
        mc.MultiContactPayload(6, 0, 1, settings={"tolerance": 1e-9})
    with pytest.raises(InputError) as err:
        mc.MultiContactPayload(6, 0, 1, settings={"max_iter": "many"})
    assert err.value.field == "settings.max_iter"
    tight = mc.MultiContactPayload.for_statics(_stance(2, 0.6), settings={"tol_gap_rel": 1e-10})
    assert tight.resolve(_stance(2, 0.6)).payload == pytest.approx(
        mc.solve(_stance(2, 0.6)).payload, rel=1e-7
    )


def _fields(st: mc.ContactStatics) -> dict:
    names = (
        "gravity",
        "contact_jacobians",
        "normals",
        "friction",
        "payload_jacobian",
        "payload_wrench",
        "tau_low",
        "tau_high",
        "actuated",
    )
    return {n: getattr(st, n) for n in names}


def test_solve_batch_broadcasts_designs_by_poses():
    # 3 designs (torque scale) × 2 poses (friction stands in for a pose-dependent input).
    base = _fields(_stance(2, 0.6))
    scales = np.array([0.8, 1.0, 1.3])[:, None, None]
    mus = np.array([[0.3, 0.3], [0.8, 0.8]])
    arrays = {
        **{n: v for n, v in base.items() if n != "actuated"},
        "tau_high": base["tau_high"] * scales,
        "tau_low": base["tau_low"] * scales,
        "friction": mus,
    }
    out = mc.solve_batch(actuated=base["actuated"], **arrays)
    assert out.payload.shape == (3, 2) and out.contact_forces.shape == (3, 2, 2, 3)
    for d in range(3):
        for p in range(2):
            one = mc.ContactStatics(
                **{
                    **base,
                    "tau_high": arrays["tau_high"][d, 0],
                    "tau_low": arrays["tau_low"][d, 0],
                    "friction": mus[p],
                }
            )
            assert out.payload[d, p] == pytest.approx(mc.solve(one).payload, rel=1e-7)
    assert (np.diff(out.payload, axis=0) > 0).all()
    one_mu = mc.solve_batch(actuated=base["actuated"], **{**arrays, "friction": 0.8})
    np.testing.assert_allclose(one_mu.payload, out.payload[:, 1:2], rtol=1e-7)  # (3, 1)
    with pytest.raises(InputError, match="unknown argument"):
        mc.solve_batch(actuated=base["actuated"], gravty=1.0, **arrays)


# --- inputs ---------------------------------------------------------------------------------

ONE_JOINT = {"tau_low": [-1.0], "tau_high": [1.0], "actuated": [0]}


@pytest.mark.parametrize(
    "change, field",
    [
        ({"friction": -0.1}, "friction"),
        ({"friction": "slippery"}, "friction"),
        ({"normals": np.zeros((4, 3))}, "normals"),
        ({"payload_wrench": [0.0, 0.0, 0.0]}, "payload_wrench"),
        ({"gravity": [0, 0, math.nan, 0, 0, 0]}, "gravity"),
        ({"contact_jacobians": np.zeros((4, 3, 5))}, "contact_jacobians"),
        ({"payload_jacobian": np.zeros((4, 6))}, "payload_jacobian"),
        ({"actuated": None}, "actuated"),
        ({**ONE_JOINT, "actuated": [6]}, "actuated"),
        ({**ONE_JOINT, "actuated": [0.5]}, "actuated"),
        ({**ONE_JOINT, "tau_low": [1.0], "tau_high": [0.0]}, "tau_low[0]"),
        ({**ONE_JOINT, "tau_low": [math.inf], "tau_high": [math.inf]}, "tau_low/tau_high"),
        ({**ONE_JOINT, "tau_high": [1.0, 2.0]}, "tau_high"),
    ],
)
def test_bad_input_names_the_field(change, field):
    args = {**_fields(_box(0.5, [0, 0, 0], [0, 0, -1.0])), **change}
    with pytest.raises(InputError) as err:
        mc.ContactStatics(**args)
    assert err.value.field == field and err.value.file == "<api>"


def test_bad_problem_arguments():
    with pytest.raises(InputError, match="sides"):
        mc.pyramid_bounds(_box(0.5, [0, 0, 0], [0, 0, -1.0]), sides=2)
    with pytest.raises(InputError, match="payload_dim"):
        mc.MultiContactPayload(6, 0, 4, payload_dim=4)
    with pytest.raises(InputError, match="n_joints"):
        mc.MultiContactPayload(6, 7, 4)


@settings(max_examples=50, deadline=None, database=None)
@given(
    hs.lists(hs.floats(-1, 1), min_size=3, max_size=3).filter(lambda v: np.linalg.norm(v) > 1e-3)
)
def test_tangent_basis_is_right_handed_orthonormal(normal):
    t1, t2, n = mc.tangent_basis(np.array(normal))
    frame = np.array([t1, t2, n])
    np.testing.assert_allclose(frame @ frame.T, np.eye(3), atol=1e-12)
    assert np.linalg.det(frame) == pytest.approx(1.0, abs=1e-12)


def test_import_does_not_load_the_cone_solver():
    code = "import sys, jointwright.metrics.contacts; print('clarabel' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_with_design_equals_a_fresh_case_and_checks_its_fields():
    st = _stance(2, 0.6)
    g = st.gravity * 1.1
    other = st.with_design(g, st.tau_low * 0.9, st.tau_high * 0.9)
    fresh = mc.ContactStatics(
        **{**_fields(st), "gravity": g, "tau_low": st.tau_low * 0.9, "tau_high": st.tau_high * 0.9}
    )
    assert mc.solve(other).payload == mc.solve(fresh).payload
    with pytest.raises(InputError) as err:
        st.with_design(np.full_like(g, np.nan), st.tau_low, st.tau_high)
    assert err.value.field == "gravity"
    with pytest.raises(InputError) as err:
        st.with_design(g, st.tau_high, st.tau_low)
    assert err.value.field == "tau_low[0]"
    for bad, field in (
        ((np.full_like(g, np.inf), st.tau_low, st.tau_high), "gravity"),
        ((g[:-1], st.tau_low, st.tau_high), "gravity"),
        ((g, st.tau_low[:-1], st.tau_high), "tau_low"),
    ):
        with pytest.raises(InputError) as err:
            st.with_design(*bad)
        assert err.value.field == field
    for name in ("gravity", "tau_low", "tau_high", "contact_jacobians"):
        assert not getattr(other, name).flags.writeable
    with pytest.raises(AttributeError):
        other.gravity = g  # frozen
