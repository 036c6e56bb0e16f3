"""Payload along a ray, support function and mode-dependent torque bounds.

Sources: DESIGN §2.3 transmission law (motoring η_f·N·τ_m, back-driven N·τ_m/η_b; the Modelica
LossyGear two-efficiency reading [pub]); Chiacchio et al. 1997 [mem] for the one-variable LP of
the force along a direction; statics of a one-link arm [trade] for the hand examples. Expected
numbers are recomputed in the comments; an independent bisection is the oracle for random cases.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.metrics.payload import (
    BACKDRIVEN,
    HOLDING,
    MOTORING,
    joint_modes,
    max_force_component,
    payload_along,
    torque_bounds,
)

# N = 10, τ_m,max = 2 N·m, η_f = 0.9, η_b = 0.8:
# motoring 0.9·10·2 = 18 N·m, holding 10·2/0.8 = 25 N·m
C_F, C_B = 0.9 * 10 * 2.0, 10 * 2.0 / 0.8


def test_torque_bounds_per_velocity_sign():
    low, high = torque_bounds([1, -1, 0], [C_F] * 3, [C_B] * 3)
    # σ>0: +τ motoring (18), −τ back-driven (25); σ<0 mirrored; σ=0 holding both ways
    np.testing.assert_allclose(high, [18.0, 25.0, 25.0])
    np.testing.assert_allclose(low, [-25.0, -18.0, -25.0])


def test_torque_bounds_self_locking_and_frictionless():
    low, high = torque_bounds([1, 0], [C_F, C_F], [math.inf, math.inf])
    assert high[0] == 18.0 and low[0] == -math.inf and high[1] == math.inf
    # η = 1 reduces to the classical symmetric bound N·τ_m = 20 N·m
    low, high = torque_bounds([1, -1], [20.0, 20.0], [20.0, 20.0])
    np.testing.assert_allclose(np.c_[low, high], [[-20, 20], [-20, 20]])


def test_joint_modes():
    modes = joint_modes([5.0, -5.0, 5.0, 0.0, 3.0], [1, 1, -1, 1, 0])
    assert list(modes) == [MOTORING, BACKDRIVEN, BACKDRIVEN, HOLDING, HOLDING]


def test_mode_bounds_agree_with_modes():
    # a torque at the upper bound for σ = +1 is motoring, at the lower bound back-driven
    low, high = torque_bounds([1, 1], [C_F, C_F], [C_B, C_B])
    assert list(joint_modes([high[0], low[1]], [1, 1])) == [MOTORING, BACKDRIVEN]


def one_link(q=0.0, length=0.5):
    """Planar link about z, tip Jacobian rows (x, y) = l·(−sin q, cos q)."""
    return np.array([[-length * math.sin(q)], [length * math.cos(q)]])


def test_one_link_lift_by_hand():
    # 2 kg link, COM at 0.25 m, horizontal: gravity torque 2·9.81·0.25 = 4.905 N·m.
    # Lifting (u = +y) raises the link: σ = +1, motoring bound 18 N·m; Jᵀu = 0.5 m.
    # s* = (18 − 4.905)/0.5 = 26.19 N
    low, high = torque_bounds([1], [C_F], [C_B])
    res = payload_along(one_link(), [4.905], low, high, [0.0, 1.0])
    assert res.feasible and res.limiting_joint == 0
    assert res.force == pytest.approx((18.0 - 4.905) / 0.5, rel=1e-12)
    # lowering (σ = −1) while pressing down (u = −y): τ = 4.905 − 0.5 s ≥ −18 → s = 45.81 N
    low, high = torque_bounds([-1], [C_F], [C_B])
    res = payload_along(one_link(), [4.905], low, high, [0.0, -1.0])
    assert res.force == pytest.approx((4.905 + 18.0) / 0.5, rel=1e-12)


def test_direction_is_normalized():
    a = payload_along(one_link(), [0.0], [-10.0], [10.0], [0.0, 3.0]).force
    b = payload_along(one_link(), [0.0], [-10.0], [10.0], [0.0, 1.0]).force
    assert a == b == pytest.approx(20.0)


def test_infeasible_and_unlimited():
    # gravity 30 N·m beyond a 25 N·m hold: the arm cannot hold itself → 0, not NaN
    res = payload_along(one_link(), [30.0], [-25.0], [25.0], [0.0, 1.0])
    assert not res.feasible and res.force == 0.0 and res.limiting_joint == 0
    # a push the joint does not feel (along the link) is unlimited
    res = payload_along(one_link(), [1.0], [-25.0], [25.0], [1.0, 0.0])
    assert res.force == math.inf and res.limiting_joint == -1
    # self-locking joint loaded in its back-driven direction: unlimited
    res = payload_along(one_link(), [1.0], [-math.inf], [25.0], [0.0, -1.0])
    assert res.force == math.inf


def two_link_jacobian(q1, q2, l1=0.4, l2=0.3):
    s1, c1, s12, c12 = math.sin(q1), math.cos(q1), math.sin(q1 + q2), math.cos(q1 + q2)
    return np.array([[-l1 * s1 - l2 * s12, -l2 * s12], [l1 * c1 + l2 * c12, l2 * c12]])


def bisect_ray(J, bias, low, high, u, top=1e6):
    """Independent oracle: bisection on s of the feasibility of τ_bias + s·Jᵀu."""
    u = np.asarray(u) / np.linalg.norm(u)

    def ok(s):
        tau = bias + s * (J.T @ u)
        return np.all(tau >= low) and np.all(tau <= high)

    lo, hi = 0.0, top
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if ok(mid) else (lo, mid)
    return lo


@settings(derandomize=True, max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_ray_matches_bisection(seed):
    rng = np.random.default_rng(seed)
    J = two_link_jacobian(rng.uniform(-2, 2), rng.uniform(0.2, 2.8))
    sigma = rng.choice([-1, 0, 1], 2)
    low, high = torque_bounds(sigma, rng.uniform(5, 20, 2), rng.uniform(20, 40, 2))
    bias = rng.uniform(-4, 4, 2)
    u = rng.standard_normal(2)
    res = payload_along(J, bias, low, high, u)
    assert res.feasible
    assert res.force == pytest.approx(bisect_ray(J, bias, low, high, u), rel=1e-9, abs=1e-9)
    # the limiting joint sits on one of its bounds at s*
    tau = bias + res.force * (J.T @ (u / np.linalg.norm(u)))
    k = res.limiting_joint
    assert min(abs(tau[k] - low[k]), abs(tau[k] - high[k])) <= 1e-9 * max(1, abs(tau[k]))


def test_batch_matches_single_calls():
    rng = np.random.default_rng(4)
    J = np.stack([two_link_jacobian(*rng.uniform(0.3, 1.5, 2)) for _ in range(5)])  # poses
    cap = rng.uniform(8, 20, (7, 1, 2))  # designs
    low, high = -cap, cap
    bias = rng.uniform(-2, 2, (5, 2))
    res = payload_along(J, bias, low, high, [0.0, 1.0])
    assert res.force.shape == (7, 5)
    for d in range(7):
        for p in range(5):
            one = payload_along(J[p], bias[p], low[d, 0], high[d, 0], [0.0, 1.0])
            assert res.force[d, p] == one.force and res.limiting_joint[d, p] == one.limiting_joint


def test_support_function_box_by_hand():
    # J = I, |F1| ≤ 1, |F2| ≤ 2. Along u = (1,1)/√2: the ray stops at F1 = 1 → s = √2;
    # the support function is max uᵀF at the corner (1, 2): 3/√2 = 2.12132
    J, low, high = np.eye(2), np.array([-1.0, -2.0]), np.array([1.0, 2.0])
    u = np.array([1.0, 1.0])
    ray = payload_along(J, np.zeros(2), low, high, u)
    sup = max_force_component(J, np.zeros(2), low, high, u)
    assert ray.force == pytest.approx(math.sqrt(2), rel=1e-12)
    assert sup.value == pytest.approx(3 / math.sqrt(2), rel=1e-9)
    np.testing.assert_allclose(sup.force, [1.0, 2.0], atol=1e-9)
    assert sup.nonempty and sup.bounded


def test_support_function_unbounded_empty_and_assisted():
    J = np.array([[1.0, 0.0], [0.0, 0.0]])  # joint 2 does not feel any tip force
    r = max_force_component(J, [0.0, 0.0], [-1.0, -1.0], [1.0, 1.0], [0.0, 1.0])
    assert r.value == math.inf and not r.bounded
    r = max_force_component(J, [0.0, 5.0], [-1.0, -1.0], [1.0, 1.0], [1.0, 0.0])
    assert r.value == -math.inf and not r.nonempty
    # bias 3 N·m beyond a 2 N·m bound, but pushing with F1 ∈ [−3, −1] brings it back:
    # the polytope is non-empty although the robot cannot hold itself with F = 0
    r = max_force_component(np.eye(1), [3.0], [-2.0], [2.0], [1.0])
    assert r.nonempty and r.value == pytest.approx(-1.0, abs=1e-9)
    assert not payload_along(np.eye(1), [3.0], [-2.0], [2.0], [1.0]).feasible


def test_bad_input():
    with pytest.raises(InputError, match="velocity_sign"):
        torque_bounds([2], [1.0], [1.0])
    with pytest.raises(InputError, match="backdriven_capacity"):
        torque_bounds([1], [1.0], [-1.0])
    with pytest.raises(InputError, match="tau_low"):
        payload_along(one_link(), [0.0], [1.0], [-1.0], [0, 1])
    with pytest.raises(InputError, match="tau_bias"):
        payload_along(one_link(), [0.0, 1.0], [-1.0], [1.0], [0, 1])
    with pytest.raises(InputError, match="u"):
        payload_along(one_link(), [0.0], [-1.0], [1.0], [0, 0])
    with pytest.raises(InputError, match="NaN"):
        payload_along(one_link(), [np.nan], [-1.0], [1.0], [0, 1])
    with pytest.raises(InputError, match="broadcast"):
        payload_along(np.zeros((3, 2, 1)), np.zeros((4, 1)), [-1.0], [1.0], [0, 1])
