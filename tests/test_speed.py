"""End-point speed, joint capacity at speed and the inertia-matching ratio."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linprog, minimize_scalar

from jointwright.errors import InputError
from jointwright.metrics.envelope import torque_speed_envelope
from jointwright.metrics.speed import (
    endpoint_speed,
    inertia_matching_ratio,
    joint_speed_limit,
    payload_at_speed,
)


def planar_jacobian(lengths, q):
    """Tip Jacobian of a planar serial arm (x, y rows), from the forward kinematics [trade]."""
    lengths, q = np.asarray(lengths, float), np.asarray(q, float)
    phi = np.cumsum(q)
    cols = []
    for i in range(len(q)):
        cols.append([-np.sum(lengths[i:] * np.sin(phi[i:])), np.sum(lengths[i:] * np.cos(phi[i:]))])
    return np.array(cols).T


def lp_speed(J, lim, u):
    """Exact largest v with J·q̇ = u·v, |q̇| ≤ lim, by linear programming (scipy HiGHS)."""
    m, n = J.shape
    c = np.zeros(n + 1)
    c[-1] = -1.0
    a_eq = np.hstack([J, -np.asarray(u, float)[:, None]])
    bounds = [(-li, li) for li in lim] + [(0, None)]
    res = linprog(c, A_eq=a_eq, b_eq=np.zeros(m), bounds=bounds, method="highs")
    assert res.status == 0
    return res.x[-1]


def test_one_link_tip_speed():
    # one link of length 0.5 m at q = 0: the tip moves along +y at L·q̇ [trade];
    # limit 2 rad/s gives 0.5·2 = 1 m/s
    J = planar_jacobian([0.5], [0.0])
    out = endpoint_speed(J, [2.0], [0.0, 1.0])
    assert out.speed == pytest.approx(1.0, rel=1e-12)
    assert out.limiting_joint == 0 and bool(out.reachable)
    np.testing.assert_allclose(out.joint_speeds, [2.0], rtol=1e-12)


def test_square_jacobian_matches_linear_programming():
    rng = np.random.default_rng(11)
    for _ in range(20):
        q = rng.uniform(-2.5, 2.5, size=2)
        if abs(np.sin(q[1])) < 0.2:
            continue
        J = planar_jacobian([0.4, 0.3], q)
        lim = rng.uniform(1.0, 6.0, size=2)
        u = rng.normal(size=2)
        u /= np.linalg.norm(u)
        out = endpoint_speed(J, lim, u)
        assert out.speed == pytest.approx(lp_speed(J, lim, u), rel=1e-7)
        k = int(out.limiting_joint)
        assert abs(out.joint_speeds[k]) == pytest.approx(lim[k], rel=1e-12)
        assert np.all(np.abs(out.joint_speeds) <= lim * (1 + 1e-12))
        np.testing.assert_allclose(J @ out.joint_speeds, u * out.speed, atol=1e-12)


def test_redundant_arm_minimum_norm_is_a_lower_bound():
    rng = np.random.default_rng(5)
    for _ in range(20):
        q = rng.uniform(-2.0, 2.0, size=3)
        J = planar_jacobian([0.4, 0.3, 0.2], q)
        lim = rng.uniform(1.0, 6.0, size=3)
        u = rng.normal(size=2)
        u /= np.linalg.norm(u)
        out = endpoint_speed(J, lim, u)
        assert out.speed <= lp_speed(J, lim, u) * (1 + 1e-9)


def test_batched_equals_loop():
    rng = np.random.default_rng(3)
    qs = rng.uniform(-2.0, 2.0, size=(5, 4, 2))
    J = np.array([[planar_jacobian([0.4, 0.3], q) for q in row] for row in qs])
    lim = rng.uniform(1.0, 5.0, size=(5, 1, 2))
    u = np.array([0.6, -0.8])
    out = endpoint_speed(J, lim, u)
    assert out.speed.shape == (5, 4) and out.joint_speeds.shape == (5, 4, 2)
    for i, j in np.ndindex(5, 4):
        one = endpoint_speed(J[i, j], lim[i, 0], u)
        assert out.speed[i, j] == pytest.approx(float(one.speed), rel=1e-12)
        assert out.limiting_joint[i, j] == one.limiting_joint


def test_stretched_arm_cannot_move_along_itself():
    # q2 = 0: both links along x; the tip cannot move along x (singular pose) [trade]
    J = planar_jacobian([0.4, 0.3], [0.0, 0.0])
    out = endpoint_speed(J, [3.0, 3.0], [1.0, 0.0])
    assert not out.reachable and out.speed == 0.0 and out.limiting_joint == -1
    # but it can move along y, at (0.4 + 0.3)·q̇1 + 0.3·q̇2 with the minimum-norm split
    assert endpoint_speed(J, [3.0, 3.0], [0.0, 1.0]).speed > 0


def test_bad_direction_and_limits():
    J = planar_jacobian([0.4, 0.3], [0.3, 1.0])
    with pytest.raises(InputError, match="u"):
        endpoint_speed(J, [1.0, 1.0], [0.0, 0.0])
    with pytest.raises(InputError, match="joint_speed_limit"):
        endpoint_speed(J, [1.0, -1.0], [1.0, 0.0])


def test_joint_speed_limit():
    # corner-point motor: max speed / N = 300/50 = 6 rad/s
    assert joint_speed_limit(50.0, peak_torque=2.0, max_speed=300.0) == pytest.approx(6.0)
    # on the torque line [trade]: ω = (V − τ·R/Kt)/Kt = (24 − 1·0.2/0.1)/0.1 = 220 rad/s → /20
    got = joint_speed_limit(
        20.0,
        1.0,
        peak_torque=3.0,
        max_speed=400.0,
        torque_constant=0.1,
        resistance=0.2,
        bus_voltage=24.0,
    )
    assert got == pytest.approx(11.0, rel=1e-12)


def test_payload_at_speed_uses_envelope_through_the_transmission_law():
    elec = dict(
        peak_torque=5.0, max_speed=260.0, torque_constant=0.1, resistance=0.2, bus_voltage=24.0
    )
    qd = np.array([0.0, 2.0, -2.0, 10.0])
    cap = payload_at_speed(qd, 20.0, eta_f=0.9, eta_b=0.8, **elec)
    np.testing.assert_allclose(cap.motor_speed, [0.0, 40.0, 40.0, 200.0])
    # driving at ω = 200: 0.1·(24 − 0.1·200)/0.2 = 2 N·m → forward 0.9·20·2 = 36 N·m
    assert cap.drive_torque[3] == pytest.approx(2.0, rel=1e-12)
    assert cap.forward[3] == pytest.approx(36.0, rel=1e-12)
    # standstill: peak torque → forward 0.9·20·5 = 90; back-driven holding 20·5/0.8 = 125 N·m
    assert cap.forward[0] == pytest.approx(90.0) and cap.backdriven[0] == pytest.approx(125.0)
    # braking at 200 rad/s: min(5, 0.1·(24 + 20)/0.2 = 22) = 5
    assert cap.brake_torque[3] == pytest.approx(5.0)


def test_payload_at_speed_self_locking_and_gear_cap():
    cap = payload_at_speed(
        [1.0, 1.0],
        40.0,
        eta_f=0.4,
        eta_b=[-0.3, 0.2],
        gear_rating=[math.inf, 150.0],
        peak_torque=1.0,
        max_speed=500.0,
    )
    assert math.isinf(cap.backdriven[0])  # self-locking: holds whatever the motor does
    assert cap.backdriven[1] == pytest.approx(150.0)  # 40·1/0.2 = 200, capped by the gear
    assert cap.forward[1] == pytest.approx(16.0)  # 0.4·40·1
    assert not np.any(np.isnan(cap.backdriven))


def accel(n, jl, jm, eta, tl, tm):
    """Load acceleration through the motoring law: (η·N·τ_m − T_L)/(J_L + η·N²·J_m)."""
    return (eta * n * tm - tl) / (jl + eta * n * n * jm)


@pytest.mark.parametrize(
    "eta, tl, expected",
    [
        # Pasch & Seering 1984 [mem], J_m = 1e-4, J_L = 0.04, τ_m = 1:
        (1.0, 0.0, 20.0),  # √(0.04/1e-4) = √400 = 20
        (0.8, 0.0, 22.3607),  # √(0.04/(0.8·1e-4)) = √500 = 22.3607
        (0.8, 2.0, 25.0),  # b = 2/0.8 = 2.5; 2.5 + √(6.25 + 500) = 2.5 + 22.5 = 25
    ],
)
def test_inertia_matching_reference_values(eta, tl, expected):
    got = inertia_matching_ratio(0.04, 1e-4, eta, tl, 1.0)
    assert got == pytest.approx(expected, abs=5e-5)
    best = minimize_scalar(
        lambda n: -accel(n, 0.04, 1e-4, eta, tl, 1.0),
        bounds=(1, 200),
        method="bounded",
        options={"xatol": 1e-8},
    )
    assert best.x == pytest.approx(float(got), rel=1e-5)


@settings(max_examples=50, deadline=None)
@given(
    jl=st.floats(1e-3, 1.0),
    jm=st.floats(1e-6, 1e-3),
    eta=st.floats(0.3, 1.0),
    tl=st.floats(0.0, 5.0),
    tm=st.floats(0.1, 5.0),
)
def test_inertia_matching_maximizes_acceleration(jl, jm, eta, tl, tm):
    n = float(inertia_matching_ratio(jl, jm, eta, tl, tm))
    a = accel(n, jl, jm, eta, tl, tm)
    for f in (0.97, 0.99, 1.01, 1.03):
        assert accel(n * f, jl, jm, eta, tl, tm) <= a + 1e-12 * abs(a)


def test_envelope_and_payload_agree():
    # the forward capacity divided by η_f·N is the envelope torque itself
    w = np.linspace(0, 12, 7)
    cap = payload_at_speed(
        w,
        25.0,
        eta_f=0.85,
        peak_torque=4.0,
        max_speed=300.0,
        torque_constant=0.12,
        resistance=0.4,
        bus_voltage=36.0,
    )
    env = torque_speed_envelope(
        25.0 * w,
        peak_torque=4.0,
        max_speed=300.0,
        torque_constant=0.12,
        resistance=0.4,
        bus_voltage=36.0,
    )
    np.testing.assert_allclose(cap.forward / (0.85 * 25.0), env, rtol=1e-12)


# ----------------------------------------------------------------------------------------------
# speed and acceleration while carrying a load
# ----------------------------------------------------------------------------------------------
from jointwright.metrics.acceleration import acceleration_from_rest  # noqa: E402
from jointwright.metrics.envelope import speed_at_torque, winding_resistance  # noqa: E402
from jointwright.metrics.loaded import BACKDRIVEN, MOTORING, loaded_endpoint_speed  # noqa: E402

# one-joint drive of an invented motor: Kt = 0.1 N·m/A, R20 = 0.5 Ω, 48 V, peak 3 N·m, 6000 rpm
ONE = dict(
    peak_torque=3.0,
    max_speed=6000 * 2 * math.pi / 60,
    torque_constant=0.1,
    resistance=0.5,
    bus_voltage=48.0,
    winding_temperature=120.0,
)


def test_one_joint_lifting_speed_closed_form():
    # a link of lever L lifts its tip load: τ_j = W·L; motoring τ_m = W·L/(η_f·N); the DC motor
    # line gives ω = (V − τ_m·R(T)/Kt)/Kt (DC-motor torque–speed line [trade]); tip speed
    # v = ω·L/N ("tip speed = motor speed / ratio × lever arm")
    L, W, N, ef, eb = 0.3, 40.0, 20.0, 0.8, 0.6
    r = loaded_endpoint_speed([[L]], [W * L], [1.0], [N], eta_f=[ef], eta_b=[eb], **ONE)
    tm = W * L / (ef * N)
    R = 0.5 * (1 + 0.00393 * (120 - 20))
    omega = (48.0 - tm * R / 0.1) / 0.1
    assert omega < ONE["max_speed"]
    assert r.speed == pytest.approx(omega * L / N, rel=1e-12)
    assert r.mode[0] == MOTORING and r.limiting_joint == 0 and r.carries_load
    assert r.motor_torque[0] == pytest.approx(tm, rel=1e-12)
    assert r.motor_speed[0] == pytest.approx(omega, rel=1e-12)


def test_one_joint_lowering_runs_to_the_speed_limit_with_back_driven_torque():
    # lowering: the load drives the joint (τ_j·q̇ < 0), τ_m = η_b·τ_j/N, braking quadrant. The
    # drive's voltage spans [−V, V], so the motor torque spans
    # [−Kt·(V + Kt·ω)/R, Kt·(V − Kt·ω)/R] (DC-motor line [trade]); a braking torque |τ_m| is
    # available up to ω = (V + |τ_m|·R/Kt)/Kt, past the no-load speed, then the speed limit
    L, W, N, eb = 0.3, 40.0, 20.0, 0.6
    r = loaded_endpoint_speed([[L]], [-W * L], [1.0], [N], eta_f=[0.8], eta_b=[eb], **ONE)
    assert r.mode[0] == BACKDRIVEN
    tm = eb * W * L / N
    assert r.motor_torque[0] == pytest.approx(-tm, rel=1e-12)
    R = 0.5 * (1 + 0.00393 * (120 - 20))
    omega = (48.0 + tm * R / 0.1) / 0.1
    assert 48.0 / 0.1 < omega < ONE["max_speed"]
    assert r.speed == pytest.approx(omega * L / N, rel=1e-12)
    # a lighter braking torque leaves the motor speed limit to decide
    slow = dict(ONE, max_speed=400.0)
    r = loaded_endpoint_speed([[L]], [-W * L], [1.0], [N], eta_f=[0.8], eta_b=[eb], **slow)
    assert r.speed == pytest.approx(400.0 * L / N, rel=1e-12)


def test_centrifugal_load_closed_form_corner_point_motor():
    # τ_j = k·v² (centrifugal, motoring); corner-point motor: k·v²/(η_f·N) = τ_peak at
    # v = √(τ_peak·η_f·N/k)
    k, N, ef = 0.02, 10.0, 0.9
    r = loaded_endpoint_speed(
        [[0.5]],
        [0.0],
        [1.0],
        [N],
        tau_per_speed2=[k],
        eta_f=[ef],
        peak_torque=[2.0],
        max_speed=[1e4],
    )
    assert r.speed == pytest.approx(math.sqrt(2.0 * ef * N / k), rel=1e-12)


def test_load_that_cannot_be_held_gives_zero_speed_and_names_the_joint():
    r = loaded_endpoint_speed(
        np.eye(2),
        [1.0, 500.0],
        [1.0, 1.0],
        [10.0, 10.0],
        peak_torque=[3.0, 3.0],
        max_speed=[100.0, 100.0],
    )
    assert not r.carries_load and r.speed == 0.0 and r.limiting_joint == 1
    # a gear rating below the load torque also stops it
    r = loaded_endpoint_speed(
        np.eye(2),
        [1.0, 5.0],
        [1.0, 1.0],
        [10.0, 10.0],
        peak_torque=[3.0, 3.0],
        max_speed=[100.0, 100.0],
        gear_rating=[100.0, 4.0],
    )
    assert not r.carries_load and r.limiting_joint == 1


def _feasible_brute(v, J, tau, c2, u, N, ef, eb, motor):
    """Every joint inside its drive's limits at end-point speed v, written out independently:
    motor torque by the transmission law, voltage range [−V, V] of the DC line, peak, speed."""
    a = np.linalg.pinv(J) @ (np.asarray(u, float) / np.linalg.norm(u))
    sigma = np.sign(a)
    tj = tau + c2 * v * v
    motoring = tj * sigma > 0
    tm = np.where(motoring, tj / (ef * N), eb * tj / N)
    w = N * np.abs(a) * v
    R = winding_resistance(motor["resistance"], motor["winding_temperature"])
    kt, V = motor["torque_constant"], motor["bus_voltage"]
    hi = np.minimum(motor["peak_torque"], kt * (V - kt * w) / R)
    lo = -np.minimum(motor["peak_torque"], kt * (V + kt * w) / R)
    st_ = sigma * tm
    return bool(
        np.all((w <= motor["max_speed"] * (1 + 1e-12)) & (st_ <= hi + 1e-12) & (st_ >= lo - 1e-12))
    )


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 10_000), load=st.floats(0.0, 30.0))
def test_loaded_speed_is_physically_bounded(seed, load):
    # plausibility checks [trade]: (1) never above the no-load figure (max speed / N);
    # (2) every speed from rest up to the answer keeps each motor inside its drive limits, and
    # just above it some joint is outside (brute-force scan with the limits written out again);
    # (3) each motor at N·|q̇| gives the torque it needs within the torque–speed envelope
    rng = np.random.default_rng(seed)
    q = rng.uniform(-1.5, 1.5, 3)
    J = planar_jacobian([0.3, 0.25, 0.1], q)
    u = rng.normal(size=2)
    N = rng.uniform(5, 50, 3)
    ef = rng.uniform(0.5, 1.0, 3)
    eb = ef * rng.uniform(0.3, 1.0, 3)
    tau = J.T @ np.array([0.0, load]) + rng.normal(scale=0.5, size=3)
    c2 = rng.normal(scale=0.05, size=3)
    motor = dict(
        peak_torque=np.full(3, 3.0),
        max_speed=np.full(3, 600.0),
        torque_constant=np.full(3, 0.1),
        resistance=np.full(3, 0.5),
        bus_voltage=np.full(3, 48.0),
        winding_temperature=120.0,
    )
    r = loaded_endpoint_speed(J, tau, u, N, tau_per_speed2=c2, eta_f=ef, eta_b=eb, **motor)
    free = endpoint_speed(J, motor["max_speed"] / N, u)
    assert r.speed <= free.speed * (1 + 1e-12)
    args = (J, tau, c2, u, N, ef, eb, motor)
    if not r.carries_load:
        assert not _feasible_brute(0.0, *args)
        return
    for v in np.linspace(0.0, float(r.speed) * (1 - 1e-9), 101):
        assert _feasible_brute(v, *args)
    assert not _feasible_brute(float(r.speed) * (1 + 1e-6) + 1e-9, *args)
    wm = np.abs(r.joint_speeds) * N
    driving = r.motor_torque * np.sign(r.joint_speeds) > 0
    avail = torque_speed_envelope(wm, braking=~driving, **motor)
    assert np.all(np.abs(r.motor_torque) <= avail * (1 + 1e-9) + 1e-9)


def test_one_joint_acceleration_from_rest_closed_form():
    # tip acceleration α along the motion of a link of lever L: q̈ = α/L; τ_j = W·L + I_L·α/L;
    # motoring τ_m = τ_j/(η_f·N) + N·I_r·q̈ must stay ≤ the standstill torque T = min(peak, Kt·V/R):
    # α = (T − W·L/(η_f·N)) / (I_L/(L·η_f·N) + N·I_r/L)  [Newton's law through the gear, trade]
    L, W, IL, Ir, N, ef = 0.3, 40.0, 0.2, 3e-5, 20.0, 0.8
    r = acceleration_from_rest(
        [[L]], [W * L], [IL / L], [1.0], [N], eta_f=[ef], eta_b=[0.6], rotor_inertia=[Ir], **ONE
    )
    T = min(3.0, 0.1 * 48 / float(winding_resistance(0.5, 120.0)))
    expected = (T - W * L / (ef * N)) / (IL / (L * ef * N) + N * Ir / L)
    assert r.acceleration == pytest.approx(expected, rel=1e-12)
    assert r.carries_load and r.limiting_joint == 0


def test_acceleration_with_a_load_that_helps_switches_mode():
    # the load pulls along the motion (τ_j < 0 at rest, q̇ > 0: back-driven); as α grows τ_j
    # changes sign and the joint motors: τ_m = η_b·τ_j/N before, τ_j/(η_f·N) after the break
    L, N, ef, eb, IL = 1.0, 10.0, 0.8, 0.5, 1.0
    tau0 = -5.0
    r = acceleration_from_rest(
        [[L]], [tau0], [IL], [1.0], [N], eta_f=[ef], eta_b=[eb], peak_torque=[2.0], max_speed=[1e3]
    )
    # after the break (α > 5): τ_m = (α − 5)/(η_f·N) = 2 → α = 5 + 2·η_f·N
    assert r.acceleration == pytest.approx(5.0 + 2.0 * ef * N, rel=1e-12)


def test_speed_under_load_never_exceeds_motor_speed_over_ratio_times_lever():
    # "foot speed under load ≤ loaded motor speed / N × lever arm" for one joint, and with a
    # heavier load the loaded motor speed drops (DC-motor line, [trade])
    L, N = 0.25, 9.0
    speeds = []
    for W in (0.0, 20.0, 60.0):
        r = loaded_endpoint_speed([[L]], [W * L], [1.0], [N], eta_f=[0.9], eta_b=[0.8], **ONE)
        omega_loaded = float(speed_at_torque(W * L / (0.9 * N), **ONE))
        assert r.speed <= omega_loaded / N * L * (1 + 1e-12)
        speeds.append(float(r.speed))
    assert speeds[0] > speeds[1] > speeds[2] > 0
