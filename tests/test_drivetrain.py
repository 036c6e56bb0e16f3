"""Actuator (motor + stage stack) properties against the transmission law written out by hand.

Source of the law: DESIGN.md §2.3 (power-flow-dependent efficiency; the Modelica Standard Library
LossyGear uses the same two-efficiency reading [pub]). Expected values are recomputed here.
"""

import math
from dataclasses import dataclass

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from jointwright.catalog.model import Motor, StageFrame, StageType
from jointwright.drivetrain import Actuator, StageChoice


@dataclass(frozen=True)
class Pair:
    forward: float
    backward: float

    def pair(self, ratio):
        r = np.asarray(ratio, dtype=float)
        return np.full(r.shape, self.forward), np.full(r.shape, self.backward)

    def describe(self):
        return "test pair"


MOTOR = Motor(
    name="m",
    peak_torque=2.0,
    continuous_torque=0.8,
    rotor_inertia=5e-5,
    mass=0.3,
    max_speed=300.0,
    cogging_torque=0.01,
)


def stage(fwd, bwd, *, peak=100.0, inertia=1e-6, breakaway=0.02, mass=0.2, name="s"):
    frame = StageFrame(
        name=name + "-f",
        rated_peak_torque=peak,
        rated_continuous_torque=peak / 2,
        mass=mass,
        input_inertia=inertia,
        breakaway_torque=breakaway,
    )
    return StageType(
        name=name,
        kind="planetary",
        efficiency=Pair(fwd, bwd),
        frames=(frame,),
        ratio_range=(1.0, 200.0),
    ), frame


def actuator(*specs):
    out = []
    for fwd, bwd, n, peak in specs:
        st_, fr = stage(fwd, bwd, peak=peak)
        out.append(StageChoice(st_, fr, n))
    return Actuator(MOTOR, tuple(out))


def test_frictionless_stack_is_classical():
    a = actuator((1.0, 1.0, 6.0, 1e9), (1.0, 1.0, 4.0, 1e9))
    n = 24.0
    i_r = MOTOR.rotor_inertia + 1e-6 + 1e-6 / 6.0**2
    assert a.ratio == pytest.approx(n)
    assert a.rotor_inertia == pytest.approx(i_r, rel=1e-12)
    for mode in ("frictionless", "motoring", "backdriven"):
        assert a.reflected_inertia(mode) == pytest.approx(n**2 * i_r, rel=1e-12)
        assert a.capacity(mode) == pytest.approx(n * MOTOR.peak_torque, rel=1e-12)


def test_efficiencies_multiply_per_direction_and_capacities_follow_the_law():
    a = actuator((0.95, 0.93, 5.0, 1e9), (0.9, 0.85, 10.0, 1e9))
    assert a.eta_forward == pytest.approx(0.95 * 0.9)
    assert a.eta_backward == pytest.approx(0.93 * 0.85)
    n = 50.0
    assert a.capacity("motoring") == pytest.approx(0.95 * 0.9 * n * 2.0)
    assert a.capacity("backdriven") == pytest.approx(n * 2.0 / (0.93 * 0.85))
    ir = a.rotor_inertia
    assert a.reflected_inertia("motoring") == pytest.approx(0.855 * n**2 * ir)
    assert a.reflected_inertia("backdriven") == pytest.approx(n**2 * ir / 0.7905)


def test_gear_rating_caps_capacity_through_the_ratio_after_each_stage():
    # stage 1 rated 5 N·m at its output carries τ_j/10; stage 2 rated 40 N·m carries τ_j
    a = actuator((1.0, 1.0, 5.0, 5.0), (1.0, 1.0, 10.0, 40.0))
    assert a.gear_peak_torque == pytest.approx(min(5.0 * 10.0, 40.0))
    assert a.capacity("motoring") == pytest.approx(40.0)


def test_self_locking_stack_holds_to_gear_rating_and_never_reports_nan():
    a = actuator((0.4, -0.2, 30.0, 25.0))
    assert a.self_locking
    assert a.eta_backward < 0
    assert a.capacity("backdriven") == 25.0
    assert a.reflected_inertia("backdriven") == math.inf
    assert a.breakaway_torque == math.inf
    two = actuator((0.4, -0.2, 30.0, 1e9), (0.5, -0.1, 2.0, 1e9))
    assert two.eta_backward < 0, "two locking stages must not multiply to a positive efficiency"


def test_breakaway_referred_through_the_backward_law():
    a = actuator((0.9, 0.8, 10.0, 1e9))
    # motor cogging 0.01 + stage input breakaway 0.02, both on the motor shaft, then (N/η_b)
    assert a.breakaway_torque == pytest.approx(10.0 * 0.03 / 0.8)


@given(st.floats(0.05, 1.0), st.floats(0.05, 1.0), st.floats(1.0, 150.0))
def test_holding_never_below_driving_when_backward_efficiency_is_at_most_one(f, b, n):
    a = actuator((f, min(b, f), n, 1e12))
    assert a.capacity("backdriven") >= a.capacity("motoring") - 1e-9
    assert a.reflected_inertia("backdriven") >= a.reflected_inertia("frictionless") * (1 - 1e-12)
    assert a.reflected_inertia("motoring") <= a.reflected_inertia("frictionless") * (1 + 1e-12)
