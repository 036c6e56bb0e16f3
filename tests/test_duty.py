"""Duty cycle: motor torque per mode, RMS, winding temperature, energy, summary."""

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from jointwright.errors import InputError
from jointwright.metrics.duty import (
    BACKDRIVEN,
    HOLDING,
    MOTORING,
    cycle_energy,
    duty_summary,
    motor_torque,
    periodic_temperature,
    rms,
    thermal_response,
    transmission_energy,
)

ALPHA = 0.00393  # copper, 1/K [mem]


# ----------------------------------------------------------------------------------------------
# RMS
def test_rms_of_a_two_level_cycle():
    # [trade] 10 N·m for 0.2 s then 2 N·m for 0.8 s: √((10²·0.2 + 2²·0.8)/1) = √23.2 = 4.81664
    t = np.array([0.0, 0.2, 1.0])
    assert rms([10.0, 2.0, 2.0], t, hold="previous") == pytest.approx(4.81664, abs=5e-6)


def test_rms_of_a_ramp_is_exact_with_linear_hold():
    # calculus: the RMS of a ramp 0 → a is a/√3; linear hold integrates it exactly on 3 samples
    assert rms([0.0, 1.2, 3.0], [0.0, 0.4, 1.0], hold="linear") == pytest.approx(3 / math.sqrt(3))


def test_rms_batches_over_leading_axes():
    rng = np.random.default_rng(1)
    x = rng.normal(size=(3, 4, 50))
    t = np.cumsum(rng.uniform(0.01, 0.1, size=50))
    got = rms(x, t)
    for i, j in np.ndindex(3, 4):
        assert got[i, j] == pytest.approx(float(rms(x[i, j], t)), rel=1e-13)


# ----------------------------------------------------------------------------------------------
# motor torque per mode
eta_f_st = st.floats(0.2, 1.0)
eta_b_st = st.floats(-0.9, 1.0)
val = st.floats(-50.0, 50.0)


@settings(max_examples=80, deadline=None)
@given(tj=val, qd=val, qdd=val, n=st.floats(1.0, 200.0), ir=st.floats(0.0, 1e-3))
def test_frictionless_gives_the_classical_model_exactly(tj, qd, qdd, n, ir):
    # η = 1: the classical rigid gear with rotor inertia, τ_m = τ_j/N + N·I_r·q̈, in every mode
    tau, _ = motor_torque([tj], [qd], [qdd], n, 1.0, 1.0, ir)
    assert tau[0] == tj / n + n * ir * qdd


@settings(max_examples=80, deadline=None)
@given(
    tj=val,
    qd=val,
    qdd=val,
    n=st.floats(1.0, 200.0),
    ir=st.floats(0.0, 1e-3),
    ef=eta_f_st,
    eb=st.floats(0.05, 1.0),
)
def test_inverse_matches_the_forward_transmission_law(tj, qd, qdd, n, ir, ef, eb):
    # forward law (Modelica LossyGear [pub]: one efficiency per direction of power flow):
    # motoring τ_j = η_f·N·(τ_m − N·I_r·q̈); back-driven τ_j = (N/η_b)·(…)
    assume(tj * qd != 0)
    tau, mode = motor_torque([tj], [qd], [qdd], n, ef, eb, ir)
    gear_in = tau[0] - n * ir * qdd
    # subtracting the rotor term back out loses the round-off of that term, scaled to the joint
    slack = 1e-12 + 4e-16 * abs(n * ir * qdd) * n / min(ef, eb)
    if tj * qd > 0:
        assert mode[0] == MOTORING
        assert ef * n * gear_in == pytest.approx(tj, rel=1e-9, abs=slack)
    else:
        assert mode[0] == BACKDRIVEN
        assert n / eb * gear_in == pytest.approx(tj, rel=1e-9, abs=slack)


@settings(max_examples=80, deadline=None)
@given(
    tj=st.floats(0.1, 50.0),
    speed=st.floats(0.01, 10.0),
    n=st.floats(1.0, 200.0),
    ef=eta_f_st,
    eb=eta_b_st,
)
def test_backdriven_needs_less_motor_torque_than_motoring(tj, speed, n, ef, eb):
    # lowering a load at constant speed (τ_j·q̇ < 0) against raising it (τ_j·q̇ > 0) [trade]:
    # |η_b·τ_j/N| ≤ τ_j/(η_f·N) because |η_b|·η_f ≤ 1
    assume(eb <= ef)
    down, m_down = motor_torque([tj], [-speed], [0.0], n, ef, eb, 1e-5)
    up, m_up = motor_torque([tj], [speed], [0.0], n, ef, eb, 1e-5)
    assert m_down[0] == BACKDRIVEN and m_up[0] == MOTORING
    assert abs(down[0]) <= up[0]
    if ef < 1:
        assert abs(down[0]) < up[0]


def test_self_locking_lowering_the_motor_drives_the_load_down():
    # η_b = −0.3: τ_m = η_b·τ_j/N = −0.3·30/50 = −0.18 N·m, opposite τ_j and along q̇ < 0, so
    # the motor supplies power τ_m·N·q̇ = −0.18·50·(−0.4) = +3.6 W
    tau, mode = motor_torque([30.0], [-0.4], [0.0], 50.0, 0.4, -0.3, 0.0)
    assert mode[0] == BACKDRIVEN
    assert tau[0] == pytest.approx(-0.18)
    assert tau[0] * 50.0 * -0.4 == pytest.approx(3.6)


def test_holding_modes():
    # q̇ = 0: friction helps; a self-locking gear holds the load with no motor torque.
    # Three joints (leading axis), one sample each.
    tj, qd, qdd = [[30.0], [30.0], [0.0]], [[0.0], [0.0], [2.0]], [[0.0], [10.0], [10.0]]
    tau, mode = motor_torque(tj, qd, qdd, 50.0, 0.8, [0.6, -0.2, 0.6], 1e-5)
    np.testing.assert_array_equal(mode[:, 0], [HOLDING, HOLDING, HOLDING])
    assert tau[0, 0] == pytest.approx(0.6 * 30.0 / 50.0)
    assert tau[1, 0] == pytest.approx(50.0 * 1e-5 * 10.0)  # inertia only
    assert tau[2, 0] == pytest.approx(50.0 * 1e-5 * 10.0)  # no torque through the gear


def test_round_off_speed_counts_as_standstill():
    # a differentiated trajectory has |q̇| ~ 1e-16 at its turning points: not a power flow
    _, mode = motor_torque(
        [5.0, 5.0, 5.0], [-4e-16, 0.3, -0.3], [0.0, 0.0, 0.0], 10.0, 0.9, 0.8, 0.0, standstill=1e-9
    )
    np.testing.assert_array_equal(mode, [HOLDING, MOTORING, BACKDRIVEN])


def test_motor_torque_rejects_bad_efficiencies():
    with pytest.raises(InputError, match="eta_f"):
        motor_torque([1.0], [1.0], [0.0], 10.0, 1.2, 0.5, 0.0)
    with pytest.raises(InputError, match="eta_b"):
        motor_torque([1.0], [1.0], [0.0], 10.0, 0.8, 1.2, 0.0)
    # a strongly self-locking stage may have η_b ≤ −1 (catalog/efficiency.py): accepted
    tau, _ = motor_torque([1.0], [-1.0], [0.0], 10.0, 0.3, -1.5, 0.0)
    assert tau[0] == pytest.approx(-1.5 * 1.0 / 10.0)
    with pytest.raises(InputError, match="ratio"):
        motor_torque([1.0], [1.0], [0.0], 0.0, 0.8, 0.5, 0.0)


# ----------------------------------------------------------------------------------------------
# thermal
def ivp_temperature(t, loss_of, r_th, tau_th, ambient, alpha):
    """Reference: the same ODE integrated by scipy's DOP853, interval by interval."""
    c = tau_th / r_th
    out, theta = [ambient], 0.0
    for k in range(len(t) - 1):

        def rhs(s, y, k=k):
            return [(loss_of(k, s) * (1 + alpha * (ambient - 20 + y[0])) - y[0] / r_th) / c]

        sol = solve_ivp(rhs, (t[k], t[k + 1]), [theta], method="DOP853", rtol=1e-12, atol=1e-12)
        theta = sol.y[0, -1]
        out.append(ambient + theta)
    return np.array(out)


@pytest.mark.parametrize("hold", ["previous", "linear"])
@pytest.mark.parametrize("n", [41, 4001])  # 5 s and 0.05 s samples: long and short intervals
def test_step_response_matches_first_order_closed_form(hold, n):
    # [trade] ΔT(t) = P·R_th·(1 − e^(−t/τ_th)); P = 10 W, R_th = 2 K/W, τ_th = 30 s → 20 K rise
    t = np.linspace(0.0, 200.0, n)
    got = thermal_response(np.full(n, 10.0), t, 2.0, 30.0, 25.0, resistance_tempco=False, hold=hold)
    np.testing.assert_allclose(got, 25.0 + 20.0 * (1 - np.exp(-t / 30.0)), rtol=1e-12)


def test_tempco_response_matches_numerical_integration():
    rng = np.random.default_rng(4)
    t = np.cumsum(np.r_[0.0, rng.uniform(0.5, 3.0, size=30)])
    p = rng.uniform(0.0, 60.0, size=31)
    got = thermal_response(p, t, 1.5, 20.0, 30.0, hold="previous")
    ref = ivp_temperature(t, lambda k, s: p[k], 1.5, 20.0, 30.0, ALPHA)
    np.testing.assert_allclose(got, ref, rtol=1e-9)


def test_linear_loss_matches_numerical_integration():
    rng = np.random.default_rng(8)
    t = np.cumsum(np.r_[0.0, rng.uniform(0.5, 3.0, size=30)])
    p = rng.uniform(0.0, 60.0, size=31)
    lin = lambda k, s: p[k] + (p[k + 1] - p[k]) * (s - t[k]) / (t[k + 1] - t[k])  # noqa: E731
    exact = thermal_response(p, t, 1.5, 20.0, 30.0, resistance_tempco=False)
    np.testing.assert_allclose(exact, ivp_temperature(t, lin, 1.5, 20.0, 30.0, 0.0), rtol=1e-9)


def test_linear_loss_with_tempco_is_second_order():
    # with the temperature coefficient the interval's decay rate uses its mean loss: the error
    # is O(α·ΔP·h²/C) per interval, so halving the sample spacing should quarter it
    errors = []
    for n in (21, 41):
        t = np.linspace(0.0, 30.0, n)
        p = 30.0 * (1 + np.sin(t / 2.0))

        def lin(k, s, t=t, p=p):
            return p[k] + (p[k + 1] - p[k]) * (s - t[k]) / (t[k + 1] - t[k])

        got = thermal_response(p, t, 1.5, 20.0, 30.0, resistance_tempco=True)
        errors.append(np.max(np.abs(got - ivp_temperature(t, lin, 1.5, 20.0, 30.0, ALPHA))))
    assert errors[0] < 1e-2 and errors[1] < errors[0] / 3, errors


def test_steady_state_with_tempco_and_runaway():
    # equilibrium of C·θ' = P20·(1 + α(T_a − 20 + θ)) − θ/R_th [derived]:
    # θ∞ = P20·(1 + α(T_a − 20))·R_th / (1 − α·P20·R_th)
    # P20 = 30 W, R_th = 1.5 K/W, T_a = 40 °C: 30·1.0786·1.5/(1 − 0.17685) = 58.965 K
    t = np.linspace(0.0, 10.0, 11)
    got = periodic_temperature(np.full(11, 30.0), t, 1.5, 20.0, 40.0)
    theta = 30 * (1 + ALPHA * 20) * 1.5 / (1 - ALPHA * 30 * 1.5)
    np.testing.assert_allclose(got, 40.0 + theta, rtol=1e-12)
    assert theta == pytest.approx(58.965, abs=1e-3)
    # α·P20·R_th = 0.00393·200·2 = 1.57 ≥ 1: no steady state, the winding runs away
    hot = periodic_temperature(np.full(11, 200.0), t, 2.0, 20.0, 40.0)
    assert np.all(np.isinf(hot)) and not np.any(np.isnan(hot))


@pytest.mark.parametrize("tempco", [False, True])
def test_periodic_temperature_equals_repeating_the_cycle(tempco):
    rng = np.random.default_rng(2)
    t = np.linspace(0.0, 10.0, 101)
    p = 40.0 * (1 + np.sin(2 * np.pi * t / 10.0)) + rng.uniform(0.0, 5.0, size=101)
    p[-1] = p[0]
    temp = thermal_response(p, t, 1.2, 20.0, 25.0, resistance_tempco=tempco)
    for _ in range(200):
        nxt = thermal_response(p, t, 1.2, 20.0, 25.0, resistance_tempco=tempco, initial=temp[-1])
        if np.max(np.abs(nxt - temp)) < 1e-12:
            break
        temp = nxt
    got = periodic_temperature(p, t, 1.2, 20.0, 25.0, resistance_tempco=tempco)
    np.testing.assert_allclose(got, nxt, atol=1e-9)
    assert got[-1] == pytest.approx(got[0], abs=1e-9)


def test_thermal_batches_over_designs():
    rng = np.random.default_rng(6)
    t = np.linspace(0.0, 5.0, 26)
    p = rng.uniform(0, 50, size=(4, 26))
    r_th = rng.uniform(0.5, 3.0, size=4)
    got = periodic_temperature(p, t, r_th, 15.0, 25.0)
    for i in range(4):
        np.testing.assert_allclose(
            got[i], periodic_temperature(p[i], t, r_th[i], 15.0, 25.0), rtol=1e-13
        )


# ----------------------------------------------------------------------------------------------
# energy
def test_cycle_energy_regeneration():
    t = np.linspace(0.0, 1.0, 5)
    # motoring: 2 N·m at 50 rad/s for 1 s → 100 J mechanical + (2/0.2)² = 100 J copper
    e = cycle_energy(np.full(5, 2.0), np.full(5, 50.0), t, 0.2)
    assert (e.motor_work, e.copper_loss, e.electrical_regen) == pytest.approx((100, 100, 200))
    # generating: −1 N·m at 50 rad/s → −50 J + 25 J: −25 J back to the bus, or 0 without regen
    g = cycle_energy(np.full(5, -1.0), np.full(5, 50.0), t, 0.2)
    assert g.electrical_regen == pytest.approx(-25.0) and g.electrical_no_regen == 0.0
    # hot winding: R(120 °C)/R20 = 1.393 → copper 139.3 J
    hot = cycle_energy(
        np.full(5, 2.0), np.full(5, 50.0), t, 0.2, winding_temperature=np.full(5, 120.0)
    )
    assert hot.copper_loss == pytest.approx(139.3)


DRIVE = dict(ratio=30.0, eta_f=0.85, eta_b=0.7, rotor_inertia=2e-5)


def balance(tj, qd, qdd, t, drive=DRIVE):
    """(motor work from the motor torque, transmission energy) of one cycle."""
    tau, _ = motor_torque(tj, qd, qdd, *drive.values())
    work = cycle_energy(tau, drive["ratio"] * qd, t, 0.1).motor_work
    return work, transmission_energy(tj, qd, t, *drive.values())


def test_energy_balance_motoring_only():
    # raising at constant speed: all motoring, loss (1/η_f − 1)·τ_j·q̇·T = (1/0.85 − 1)·10·1·2
    t = np.linspace(0.0, 2.0, 21)
    work, gear = balance(np.full(21, 10.0), np.ones(21), np.zeros(21), t)
    assert gear.loss_backdriven == 0 and gear.loss_motoring == pytest.approx(20 / 0.85 - 20)
    assert work == pytest.approx(gear.joint_work + gear.loss_motoring, rel=1e-12)


@pytest.mark.parametrize("eta_b", [0.7, -0.25])
def test_energy_balance_backdriven_only(eta_b):
    # lowering: loss (1 − η_b)·(−τ_j·q̇)·T = (1 − η_b)·20 J; with η_b < 0 the motor adds power
    t = np.linspace(0.0, 2.0, 21)
    drive = dict(DRIVE, eta_b=eta_b)
    work, gear = balance(np.full(21, 10.0), -np.ones(21), np.zeros(21), t, drive)
    assert gear.loss_motoring == 0 and gear.loss_backdriven == pytest.approx((1 - eta_b) * 20)
    assert gear.joint_work == pytest.approx(-20.0)
    assert work == pytest.approx(gear.joint_work + gear.loss_backdriven, rel=1e-12)
    assert (work > 0) == (eta_b < 0)


def test_energy_balance_accelerating_from_rest():
    # q̇ = a·t: the rotor stores ½·I_r·N²·(a·T)² = ½·2e-5·900·4 = 0.036 J
    t = np.linspace(0.0, 2.0, 41)
    work, gear = balance(5.0 + 0.0 * t, 1.0 * t, np.ones(41), t)
    assert gear.rotor_kinetic_change == pytest.approx(0.036)
    assert work == pytest.approx(gear.motor_work, rel=1e-12)


def test_energy_balance_over_a_mixed_swing():
    # swinging against gravity: half the cycle motoring, half back-driven; periodic, ΔK = 0
    t = np.linspace(0.0, 1.0, 2001)
    w = 2 * np.pi
    q, qd, qdd = 0.8 * np.sin(w * t), 0.8 * w * np.cos(w * t), -0.8 * w * w * np.sin(w * t)
    tj = 12.0 * np.cos(q) + 0.3 * qdd
    work, gear = balance(tj, qd, qdd, t)
    assert gear.loss_motoring > 0 and gear.loss_backdriven > 0
    assert abs(gear.rotor_kinetic_change) < 1e-12
    scale = gear.loss_motoring + gear.loss_backdriven
    assert work == pytest.approx(gear.motor_work, abs=1e-6 * scale)


@settings(max_examples=60, deadline=None)
@given(tj=val, qd=val, ef=eta_f_st, eb=eta_b_st)
def test_transmission_never_creates_energy(tj, qd, ef, eb):
    # a passive gear dissipates (1 − η) of the power entering it, in either direction [trade]
    gear = transmission_energy(np.full(3, tj), np.full(3, qd), [0.0, 0.5, 1.0], 10.0, ef, eb, 0.0)
    assert gear.loss_motoring >= 0 and gear.loss_backdriven >= 0


# ----------------------------------------------------------------------------------------------
# summary
MOTOR = dict(
    peak_torque=2.0,
    continuous_torque=0.5,
    max_speed=100.0,
    torque_constant=0.1,
    resistance=0.5,
    bus_voltage=24.0,
    thermal_resistance=2.0,
    thermal_time_constant=60.0,
    winding_temperature_max=155.0,
    ambient=25.0,
)


def lift(qd_sign, eta_b=0.6):
    t = np.linspace(0.0, 10.0, 11)
    tj = np.full(11, 20.0)
    qd = np.full(11, 0.5 * qd_sign)
    return duty_summary(
        tj, qd, np.zeros(11), t, ratio=40.0, eta_f=0.8, eta_b=eta_b, rotor_inertia=1e-5, **MOTOR
    )


def test_summary_of_a_constant_lift():
    s = lift(+1)
    tau = 20.0 / (0.8 * 40.0)  # 0.625 N·m motoring
    assert s.rms_torque == pytest.approx(tau) and s.peak_torque == pytest.approx(tau)
    assert s.rms_ratio == pytest.approx(tau / 0.5) and s.peak_ratio == pytest.approx(tau / 2.0)
    assert s.speed_ratio == pytest.approx(20.0 / 100.0)  # ω_m = 40·0.5 = 20 rad/s
    # copper loss at 20 °C: τ²·R/Kt² = 0.390625·0.5/0.01 = 19.53 W; steady rise with tempco
    p20 = tau**2 * 0.5 / 0.01
    theta = p20 * (1 + ALPHA * 5) * 2.0 / (1 - ALPHA * p20 * 2.0)
    assert s.peak_temperature == pytest.approx(25.0 + theta, rel=1e-12)
    assert s.thermal_ratio == pytest.approx(theta / 130.0)
    # energy per cycle: 0.625·20·10 = 125 J mechanical + hot copper loss for 10 s
    hot = p20 * (1 + ALPHA * (5 + theta))
    assert s.energy_regen == pytest.approx(125.0 + 10 * hot, rel=1e-12)
    assert s.energy_no_regen == pytest.approx(s.energy_regen)
    assert s.joint_work == pytest.approx(100.0)
    assert s.transmission_loss == pytest.approx(100 / 0.8 - 100)
    assert s.backdriven_share == 0.0 and s.limiting == "rms_torque" and not s.feasible


def test_summary_of_lowering():
    s = lift(-1)
    assert s.backdriven_share == pytest.approx(1.0)
    assert s.rms_torque == pytest.approx(0.6 * 20.0 / 40.0)  # 0.3 N·m, friction helps
    # the motor brakes: −0.3·20 = −6 W mechanical, ~4.75 W copper → net regeneration
    assert s.energy_regen < 0 and s.energy_no_regen == 0.0
    locked = lift(-1, eta_b=-0.25)
    # self-locking: the motor drives the load down, nothing comes back
    assert locked.energy_no_regen == pytest.approx(locked.energy_regen) and locked.energy_regen > 0


def test_summary_of_a_thermal_runaway():
    # 1.5 N·m held with Km² = 0.01/0.5 = 0.02: P20 = 112.5 W; α·P20·R_th = 0.00393·112.5·2.5 = 1.1
    # ≥ 1, so the winding has no steady state: temperature and energy are inf, never NaN
    t = np.linspace(0.0, 1.0, 11)
    s = duty_summary(
        np.full(11, 60.0),
        np.zeros(11),
        np.zeros(11),
        t,
        ratio=40.0,
        eta_f=0.8,
        eta_b=1.0,
        rotor_inertia=0.0,
        **dict(MOTOR, thermal_resistance=2.5),
    )
    assert s.rms_torque == pytest.approx(1.5)  # holding, η_b = 1: 60/40
    assert math.isinf(s.peak_temperature) and math.isinf(s.energy_regen)
    assert s.limiting == "temperature" and s.holding_share == pytest.approx(1.0)


def test_summary_without_thermal_data_is_not_assessed():
    t = np.linspace(0.0, 1.0, 11)
    s = duty_summary(
        np.full(11, 5.0),
        np.full(11, 1.0),
        np.zeros(11),
        t,
        ratio=10.0,
        eta_f=0.9,
        eta_b=0.8,
        rotor_inertia=0.0,
        peak_torque=1.0,
        continuous_torque=0.4,
        max_speed=50.0,
    )
    assert math.isnan(s.peak_temperature) and math.isnan(s.energy_regen)
    assert s.limiting == "rms_torque"  # 5/(0.9·10) = 0.556 N·m against 0.4 N·m
    assert s.worst_ratio == pytest.approx(5 / 9 / 0.4)


def test_summary_batches_over_designs():
    t = np.linspace(0.0, 1.0, 201)
    w = 2 * np.pi
    qd = np.stack([np.cos(w * t), 0.5 * np.cos(w * t)])
    qdd = np.stack([-w * np.sin(w * t), -0.5 * w * np.sin(w * t)])
    tj = np.stack([8 + 0.2 * qdd[0], 3 * np.cos(w * t)])
    ratio = np.array([[20.0, 40.0], [30.0, 60.0], [50.0, 80.0]])  # (designs, joints)
    s = duty_summary(tj, qd, qdd, t, ratio=ratio, eta_f=0.8, eta_b=0.5, rotor_inertia=3e-5, **MOTOR)
    assert s.rms_torque.shape == (3, 2)
    for i, j in np.ndindex(3, 2):
        one = duty_summary(
            tj[j],
            qd[j],
            qdd[j],
            t,
            ratio=ratio[i, j],
            eta_f=0.8,
            eta_b=0.5,
            rotor_inertia=3e-5,
            **MOTOR,
        )
        for name in (
            "rms_torque",
            "peak_temperature",
            "envelope_ratio",
            "energy_regen",
            "backdriven_share",
        ):
            assert getattr(s, name)[i, j] == pytest.approx(float(getattr(one, name)), rel=1e-12)
        assert s.limiting[i, j] == one.limiting
    assert s.backdriven_share[0, 0] == pytest.approx(0.5, abs=0.01)


@pytest.mark.parametrize(
    "change, field",
    [
        (dict(winding_temperature_max=20.0), "winding_temperature_max"),
        (dict(hold="cubic"), "hold"),
        (dict(t=[0.0, 1.0, 1.0]), "t"),
        (dict(tau_joint=[1.0, 2.0]), "tau_joint"),
    ],
)
def test_summary_rejects_bad_arguments(change, field):
    args = dict(
        tau_joint=[1.0, 2.0, 3.0],
        qd=[1.0, 1.0, 1.0],
        qdd=[0.0, 0.0, 0.0],
        t=[0.0, 0.5, 1.0],
        ratio=10.0,
        eta_f=0.9,
        eta_b=0.8,
        rotor_inertia=0.0,
        **MOTOR,
    )
    args.update(change)
    with pytest.raises(InputError) as err:
        duty_summary(**args)
    assert field in err.value.field
