"""Torque–speed envelope and motor constants against published formulas and check values."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.metrics.envelope import (
    copper_loss,
    motor_constant,
    no_load_speed,
    speed_at_torque,
    stall_torque,
    torque_constant_from_kv,
    torque_speed_envelope,
    winding_resistance,
)

# Check motor: DC-equivalent torque line [trade], Kt from Kv [mem]:
# V = 24 V, R = 0.2 Ω (line to line), Kt = 0.095493 N·m/A (Kv = 100 rpm/V).
V, R, KT = 24.0, 0.2, 0.095493
ELEC = dict(torque_constant=KT, resistance=R, bus_voltage=V)


def test_torque_constant_from_kv():
    # Kt = 60/(2π·Kv) [mem]; Kv = 100 rpm/V: 60/628.3185 = 0.0954930 N·m/A
    assert torque_constant_from_kv(100.0) == pytest.approx(0.0954930, rel=1e-6)


def test_stall_and_no_load():
    # torque line τ = Kt(V − Ke·ω)/R, Ke = Kt [trade]:
    # stall Kt·V/R = 0.095493·24/0.2 = 11.4592 N·m; no-load V/Kt = 24/0.095493 = 251.327 rad/s
    assert stall_torque(KT, R, V) == pytest.approx(11.459, abs=5e-4)
    assert no_load_speed(KT, V) == pytest.approx(251.33, abs=5e-3)


def test_motor_constant_and_copper_loss():
    # Km = Kt/√R [derived: copper loss i²·R with i = τ/Kt]:
    # 0.095493/0.4472136 = 0.213529 N·m/√W;
    # loss at 2 N·m: 2²/0.213529² = 4/0.0455946 = 87.73 W
    km = motor_constant(torque_constant_from_kv(100.0), 0.2)
    assert km == pytest.approx(0.213529, rel=2e-6)
    assert copper_loss(2.0, km) == pytest.approx(87.73, abs=5e-3)


def test_envelope_follows_the_torque_line_between_stall_and_no_load():
    # The same line written through its two end points [trade]: τ(ω) = τ_stall·(1 − ω/ω0).
    stall, w0 = KT * V / R, V / KT
    w = np.array([0.0, 50.0, 100.0, 200.0, 250.0])
    expected = stall * (1 - w / w0)  # e.g. ω = 100: 11.4592·(1 − 100/251.327) = 6.8997 N·m
    got = torque_speed_envelope(w, peak_torque=1e3, max_speed=1e3, **ELEC)
    np.testing.assert_allclose(got, expected, rtol=1e-12)
    assert got[2] == pytest.approx(6.8997, abs=1e-4)


def test_envelope_is_capped_by_peak_torque_and_zero_past_speed_limits():
    w = np.array([0.0, 150.0, 260.0, 300.0])
    got = torque_speed_envelope(w, peak_torque=5.0, max_speed=280.0, **ELEC)
    line_150 = KT * (V - KT * 150.0) / R  # 0.095493·(24 − 14.324)/0.2 = 4.620 N·m < 5
    np.testing.assert_allclose(got, [5.0, line_150, 0.0, 0.0], rtol=1e-12)
    # sign of the speed does not matter in the driving quadrant
    assert torque_speed_envelope(-150.0, peak_torque=5.0, max_speed=280.0, **ELEC) == line_150


def test_corner_point_envelope_without_electrical_data():
    got = torque_speed_envelope([0.0, 99.9, 100.0, 100.1], peak_torque=3.0, max_speed=100.0)
    np.testing.assert_array_equal(got, [3.0, 3.0, 3.0, 0.0])


def test_hot_winding_lowers_the_line():
    # R(T) = R20·(1 + 0.00393·(T − 20)) [mem]; at 120 °C: 0.2·1.393 = 0.2786 Ω
    assert winding_resistance(R, 120.0) == pytest.approx(0.2786, rel=1e-12)
    hot = stall_torque(KT, R, V, winding_temperature=120.0)
    assert hot == pytest.approx(KT * V / 0.2786, rel=1e-12)
    cold = torque_speed_envelope(100.0, peak_torque=50.0, max_speed=1e3, **ELEC)
    warm = torque_speed_envelope(
        100.0, peak_torque=50.0, max_speed=1e3, winding_temperature=120, **ELEC
    )
    assert warm == pytest.approx(cold / 1.393, rel=1e-12)


def test_braking_quadrant_gets_help_from_back_emf():
    # braking: i = (V + Ke·ω)/R; at ω = 100: 0.095493·(24 + 9.5493)/0.2 = 16.018 N·m
    got = torque_speed_envelope(100.0, peak_torque=50.0, max_speed=1e3, braking=True, **ELEC)
    assert got == pytest.approx(KT * (V + KT * 100.0) / R, rel=1e-12)


def test_speed_at_torque_inverts_the_envelope():
    tau = np.array([0.5, 2.0, 4.0])
    w = speed_at_torque(tau, peak_torque=5.0, max_speed=1e3, **ELEC)
    back = torque_speed_envelope(w, peak_torque=5.0, max_speed=1e3, **ELEC)
    np.testing.assert_allclose(back, tau, rtol=1e-12)
    assert speed_at_torque(6.0, peak_torque=5.0, max_speed=1e3, **ELEC) == 0.0
    assert speed_at_torque(1.0, peak_torque=5.0, max_speed=80.0, **ELEC) == 80.0
    assert speed_at_torque(1.0, peak_torque=5.0, max_speed=80.0) == 80.0


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (dict(peak_torque=-1.0, max_speed=10.0), "peak_torque"),
        (dict(peak_torque=1.0, max_speed=0.0), "max_speed"),
        (dict(peak_torque=1.0, max_speed=10.0, torque_constant=0.1), "torque_constant, resistance"),
        (
            dict(
                peak_torque=1.0, max_speed=10.0, torque_constant=0.1, resistance=-1, bus_voltage=24
            ),
            "resistance",
        ),
        (dict(peak_torque=np.array([1.0, np.nan]), max_speed=10.0), "peak_torque"),
    ],
)
def test_bad_arguments_raise_input_error(kwargs, field):
    with pytest.raises(InputError) as err:
        torque_speed_envelope(1.0, **kwargs)
    assert field in err.value.field


pos = st.floats(1e-3, 1e3, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(
    peak=pos,
    kt=st.floats(0.01, 1.0),
    r=st.floats(0.01, 5.0),
    v=st.floats(5.0, 400.0),
    temp=st.floats(-20.0, 180.0),
    w1=st.floats(0, 5e3),
    w2=st.floats(0, 5e3),
)
def test_envelope_invariants(peak, kt, r, v, temp, w1, w2):
    # within [0, peak], non-increasing in |ω|, and never above its braking counterpart [trade]
    kw = dict(
        peak_torque=peak,
        max_speed=2e3,
        torque_constant=kt,
        resistance=r,
        bus_voltage=v,
        winding_temperature=temp,
    )
    lo, hi = sorted((w1, w2))
    a, b = torque_speed_envelope(lo, **kw), torque_speed_envelope(hi, **kw)
    assert 0.0 <= b <= a <= peak
    assert a <= torque_speed_envelope(lo, braking=True, **kw) or lo > 2e3


def test_envelope_broadcasts_like_a_loop():
    rng = np.random.default_rng(7)
    w = rng.uniform(0, 300, size=(4, 1, 6))
    peak = rng.uniform(1, 12, size=(3, 1))
    kt = rng.uniform(0.05, 0.2, size=(3, 1))
    temp = rng.uniform(20, 120, size=(1, 6))
    got = torque_speed_envelope(
        w,
        peak_torque=peak,
        max_speed=280.0,
        torque_constant=kt,
        resistance=0.3,
        bus_voltage=48.0,
        winding_temperature=temp,
    )
    assert got.shape == (4, 3, 6)
    for i, j, k in np.ndindex(4, 3, 6):
        one = torque_speed_envelope(
            w[i, 0, k],
            peak_torque=peak[j, 0],
            max_speed=280.0,
            torque_constant=kt[j, 0],
            resistance=0.3,
            bus_voltage=48.0,
            winding_temperature=temp[0, k],
        )
        assert got[i, j, k] == pytest.approx(float(one), rel=1e-14)
    assert math.isfinite(got.sum())
