"""The speed reached within a stroke (metrics.stroke) against closed forms and the grid.

References: uniform acceleration v = √(2·α·s) [pub, kinematics]; the DC motor line
τ(ω) = Kt·(V − Kt·ω)/R [trade], which makes the acceleration linear in speed, so that
x(v) = ∫ w/α(w) dw is a logarithm [derived by hand below]; scipy.integrate.quad and brentq on
α(v) for a speed-dependent (centrifugal) load; the grid computation the package used before
(tests/stroke_grid.py: 64 intervals crossed at the smaller end acceleration), which converges
to the same integral as its grid is refined.
"""

from __future__ import annotations

import math
from dataclasses import fields

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from stroke_grid import grid_speed_within_stroke

import jointwright.speedcase as speedcase
from jointwright.design import DesignArrays, actuator_row, arrays_from_rows
from jointwright.drivetrain import Actuator, StageChoice
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.metrics.envelope import winding_resistance
from jointwright.metrics.stroke import speed_within_stroke

# one joint of length L driving a point inertia IL, gear ratio N (invented numbers)
L, IL, N = 0.3, 0.05, 10.0
LINE = dict(
    peak_torque=[30.0],
    max_speed=[1e4],
    torque_constant=[0.1],
    resistance=[0.5],
    bus_voltage=[48.0],
    winding_temperature=120.0,
)


def test_constant_acceleration_is_uniform_acceleration():
    # corner-point motor: the acceleration does not fall with speed, so v = √(2·α·s) until the
    # speed limit ω_max·L/N; α from the one-joint torque balance [trade]
    W, Ir, ef = 40.0, 3e-5, 0.8
    motor = dict(peak_torque=[3.0], max_speed=[600.0])
    alpha = (3.0 - W * L / (ef * N)) / (IL / (L * ef * N) + N * Ir / L)
    common = dict(eta_f=[ef], eta_b=[0.6], rotor_inertia=[Ir], **motor)
    for s in (0.01, 0.05):
        r = speed_within_stroke([[L]], [W * L], [IL / L], [1.0], [N], s, **common)
        v = math.sqrt(2 * alpha * s)
        assert r.speed == pytest.approx(v, rel=1e-12)
        assert r.time == pytest.approx(v / alpha, rel=1e-12)
        assert r.limiting_joint == 0
    r = speed_within_stroke([[L]], [W * L], [IL / L], [1.0], [N], 5.0, **common)
    top = 600.0 * L / N
    assert r.speed == pytest.approx(top, rel=1e-12) == r.steady_speed
    assert r.time == pytest.approx(top / alpha, rel=1e-12)


def _line_constants():
    R = float(winding_resistance(0.5, 120.0))
    m = IL / L**2  # tip mass, kg
    A = 0.1 * 48 / R * N / L  # stall force at the tip, N (the peak is not reached)
    b = (0.1 * 0.1 / R) * (N / L) ** 2  # force lost per unit tip speed, N·s/m
    return m, A, b


@pytest.mark.parametrize("s", [0.001, 0.05, 0.5])
def test_motor_line_matches_the_logarithmic_integral(s):
    # unloaded joint on the DC line: α(v) = (A − b·v)/m, so
    # x(v) = m·(−v/b − (A/b²)·ln(1 − b·v/A)) and t(v) = −(m/b)·ln(1 − b·v/A)
    m, A, b = _line_constants()

    def x(v):
        return m * (-v / b - (A / b**2) * math.log1p(-b * v / A))

    v_exact = brentq(lambda v: x(v) - s, 1e-12, A / b * (1 - 1e-15), xtol=1e-15, rtol=1e-15)
    r = speed_within_stroke([[L]], [0.0], [IL / L], [1.0], [N], s, **LINE)
    assert r.speed == pytest.approx(v_exact, rel=1e-9)
    assert r.time == pytest.approx(-(m / b) * math.log1p(-b * v_exact / A), rel=1e-9)
    assert r.speed < r.steady_speed == pytest.approx(A / b, rel=1e-12)
    # the grid underestimates it (it crosses each interval at the smaller acceleration)
    grid = grid_speed_within_stroke([[L]], [0.0], [IL / L], [1.0], [N], s, **LINE)
    assert grid.speed <= r.speed
    assert r.speed - grid.speed <= r.steady_speed / 64


def test_speed_dependent_load_matches_numerical_integration():
    # a centrifugal-like joint torque c·v² against the motor's peak and its line: α(v) is a
    # quadratic in v with a kink where the line takes over from the peak; x(v) by quad
    c2, peak = 0.05, 4.0
    motor = dict(LINE, peak_torque=[peak])
    r = speed_within_stroke(
        [[L]], [0.0], [IL / L], [1.0], [N], 0.2, tau_per_speed2=[c2], eta_f=[0.9], **motor
    )
    R = float(winding_resistance(0.5, 120.0))

    def alpha(v):
        tm = min(peak, 0.1 * (48 - 0.1 * N * v / L) / R)  # motor torque available, N·m
        return (tm - c2 * v * v / (0.9 * N)) / (IL / (L * 0.9 * N))

    top = float(r.steady_speed)
    assert alpha(top) == pytest.approx(0.0, abs=1e-9 * alpha(0.0))
    kink = brentq(lambda v: 0.1 * (48 - 0.1 * N * v / L) / R - peak, 0.0, top)

    def x(v):
        parts = [(0.0, min(v, kink)), (kink, v)] if v > kink else [(0.0, v)]
        return sum(
            quad(lambda w: w / alpha(w), a, b, epsabs=0, epsrel=1e-12, limit=200)[0]
            for a, b in parts
        )

    want = brentq(lambda v: x(v) - 0.2, 1e-9, 0.9 * top, xtol=1e-14, rtol=1e-14)
    assert 0 < kink < want < top  # the stroke ends on the motor line, past the kink
    assert r.speed == pytest.approx(want, rel=1e-9)
    t_want = sum(
        quad(lambda w: 1 / alpha(w), a, b, epsrel=1e-12, limit=200)[0]
        for a, b in ((0, kink), (kink, want))
    )
    assert r.time == pytest.approx(t_want, rel=1e-8)


def test_bad_node_count_is_refused():
    with pytest.raises(InputError, match="nodes"):
        speed_within_stroke([[L]], [0.0], [IL / L], [1.0], [N], 0.1, nodes=0, **LINE)


# ----------------------------------------------------------------------------------------------
# random designs of the bundled leg
# ----------------------------------------------------------------------------------------------
def _leg_stroke_arguments(leg_project, designs, seed):
    """The arguments the evaluator passes to speed_within_stroke for the leg's speed case,
    for random single-stage designs (every motor, stage, frame and ratio of the catalog)."""
    catalog = leg_project.catalog
    rows = [
        actuator_row(Actuator(motor, (StageChoice(stage, frame, float(ratio)),)))
        for motor in catalog.all_motors()
        for stage in catalog.stages
        for frame in stage.frames
        for ratio in stage.ratios
    ]
    pick = np.random.default_rng(seed).integers(0, len(rows), size=(designs, 3))
    table = arrays_from_rows([rows])
    d = DesignArrays(**{f.name: getattr(table, f.name)[0][pick] for f in fields(DesignArrays)})
    ev = Evaluator(leg_project)
    (pc,) = [pc for pc in ev.cases if pc.case.kind == "speed" and pc.case.stroke > 0]
    seen = {}

    def spy(*args, **kwargs):
        seen["call"] = (args, kwargs)
        return speed_within_stroke(*args, **kwargs)

    mp = pytest.MonkeyPatch()
    mp.setattr(speedcase, "speed_within_stroke", spy)
    try:
        out = ev._speed(pc, d, False)
    finally:
        mp.undo()
    return seen["call"], out


def _subset(call, idx, designs):
    args, kwargs = call

    def take(x):
        x = np.asarray(x)
        return x[idx] if x.ndim >= 1 and x.shape[0] == designs else x

    return [take(x) for x in args], {k: take(v) for k, v in kwargs.items()}


def test_leg_designs_agree_with_the_grid_within_its_resolution(leg_project):
    D = 3000
    (args, kwargs), out = _leg_stroke_arguments(leg_project, D, seed=3)
    new = speed_within_stroke(*args, **kwargs)
    old = grid_speed_within_stroke(*args, **kwargs)
    np.testing.assert_array_equal(out["speed"][out["carries_load"]], new.speed[out["carries_load"]])
    top = np.where(np.isfinite(new.steady_speed), new.steady_speed, 0.0)
    assert np.mean(new.speed > 0) > 0.9  # most random designs carry the load
    assert np.all(np.abs(new.speed - old.speed) <= top / 64 * (1 + 1e-9))
    assert np.all(new.speed <= top * (1 + 1e-12))
    # the node count only finds the pieces: the integral is the same
    for nodes in (4, 32):
        other = speed_within_stroke(*args, **kwargs, nodes=nodes)
        np.testing.assert_allclose(other.speed, new.speed, rtol=1e-9, atol=0)
        np.testing.assert_allclose(other.time, new.time, rtol=1e-8, atol=0)


def test_leg_designs_converge_with_the_grid(leg_project):
    # the grid's error falls like 1/steps (first order) towards the closed form
    D = 400
    (args, kwargs), _ = _leg_stroke_arguments(leg_project, D, seed=5)
    new = speed_within_stroke(*args, **kwargs)
    fine = grid_speed_within_stroke(*args, **kwargs, steps=4096)
    moving = new.speed > 0
    rel = np.abs(fine.speed - new.speed)[moving] / new.speed[moving]
    assert rel.max() < 2e-4
    rel_t = np.abs(fine.time - new.time)[moving] / new.time[moving]
    assert rel_t.max() < 1e-3
    assert np.mean(fine.limiting_joint[moving] == new.limiting_joint[moving]) > 0.99


@pytest.mark.slow
def test_many_leg_designs_converge_with_a_fine_grid(leg_project):
    D = 3000
    (args, kwargs), _ = _leg_stroke_arguments(leg_project, D, seed=9)
    new = speed_within_stroke(*args, **kwargs)
    fine = grid_speed_within_stroke(*args, **kwargs, steps=16384)
    moving = new.speed > 0
    rel = np.abs(fine.speed - new.speed)[moving] / new.speed[moving]
    assert rel.max() < 5e-5
