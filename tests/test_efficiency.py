"""Efficiency models checked against published formulas and worked examples.

Sources (see REFERENCES.md): Budynas & Nisbett, Shigley's Mechanical Engineering Design, ch. 8
(power screws) and ch. 13 (worm gearing) [mem]; Müller, Epicyclic Drive Trains (1982) and
del Castillo, Mech. Mach. Theory 37(2), 2002 (basic-train method) [mem]. Expected numbers are
recomputed in the comments.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.catalog.efficiency import (
    MODELS,
    ConstantEfficiency,
    CoulombEfficiency,
    PlanetaryBasicTrainEfficiency,
    ProportionalEfficiency,
    ScrewEfficiency,
    TableEfficiency,
    WormEfficiency,
    efficiency_from_dict,
    screw_lower_torque,
    screw_raise_torque,
)
from jointwright.catalog.model import EfficiencyModel
from jointwright.errors import InputError

DEG = math.pi / 180

lead_angles = st.floats(0.5 * DEG, 45 * DEG)
frictions = st.floats(0.0, 0.4)
half_angles = st.floats(0.0, 30 * DEG)


def one(model, ratio=10.0):
    f, b = model.pair(ratio)
    return float(f), float(b)


# --- power screw: Shigley ch. 8 ---------------------------------------------------------------

# Shigley ch. 8 worked example [mem]: square thread, major diameter 32 mm, pitch 4 mm, double
# start -> lead l = 8 mm, mean diameter d_m = 32 - 4/2 = 30 mm; f = f_c = 0.08, collar
# d_c = 40 mm, F = 6.4 kN.
F, LEAD, DM, FRIC, DC = 6.4e3, 8e-3, 30e-3, 0.08, 40e-3


def test_shigley_power_screw_worked_example():
    # thread: (6400*0.030/2)*(0.008 + pi*0.08*0.030)/(pi*0.030 - 0.08*0.008)
    #       = 96 * 0.0155398 / 0.0936078 = 15.94 N*m;  collar: 6400*0.08*0.040/2 = 10.24 N*m
    thread = screw_raise_torque(F, LEAD, DM, FRIC)
    total = screw_raise_torque(F, LEAD, DM, FRIC, collar_friction=FRIC, collar_diameter=DC)
    assert thread == pytest.approx(15.94, abs=0.005)  # Shigley ch. 8 example [mem]
    assert total - thread == pytest.approx(10.24, abs=0.005)
    assert total == pytest.approx(26.18, abs=0.005)
    # lower: 96*(pi*0.08*0.030 - 0.008)/(pi*0.030 + 0.08*0.008) + 10.24 = -0.466 + 10.24 = 9.77
    lower = screw_lower_torque(F, LEAD, DM, FRIC, collar_friction=FRIC, collar_diameter=DC)
    assert lower == pytest.approx(9.77, abs=0.005)  # Shigley ch. 8 example [mem]
    # overall efficiency F*l/(2*pi*T_R) = 51.2/(2*pi*26.18) = 0.311
    assert F * LEAD / (2 * math.pi * total) == pytest.approx(0.311, abs=0.0005)


def test_screw_model_matches_worked_example_thread_efficiency():
    # thread alone: eta = F*l/(2*pi*T_thread) = 51.2/(2*pi*15.937) = 0.5113 (Shigley ch. 8 [mem]);
    # tan(lam) = 0.008/(pi*0.030) = 0.08488 > f = 0.08, so the thread alone is not self-locking
    model = ScrewEfficiency(lead=LEAD, mean_diameter=DM, friction=FRIC, thread_half_angle=0.0)
    forward, backward = one(model)
    assert forward == pytest.approx(F * LEAD / (2 * math.pi * 15.937), rel=1e-4)
    assert 0 < backward < 0.1


@given(lam=lead_angles, f=frictions, alpha=half_angles)
def test_screw_efficiencies_equal_ideal_over_actual_torque(lam, f, alpha):
    # Shigley ch. 8 [mem]: eta_f = F*l/(2*pi*T_R); the back-driven efficiency is the torque the
    # shaft delivers while lowering over the ideal one, eta_b = -T_L*2*pi/(F*l)
    dm = 0.02
    lead = math.pi * dm * math.tan(lam)
    ideal = F * lead / (2 * math.pi)
    forward, backward = one(ScrewEfficiency(lead_angle=lam, friction=f, thread_half_angle=alpha))
    t_r = screw_raise_torque(F, lead, dm, f, thread_half_angle=alpha)
    t_l = screw_lower_torque(F, lead, dm, f, thread_half_angle=alpha)
    if t_r > 0:  # lead angle + friction angle below 90 degrees
        assert forward == pytest.approx(ideal / t_r, rel=1e-9)
    assert backward == pytest.approx(-t_l / ideal, rel=1e-9, abs=1e-12)


@given(lam=lead_angles, f=frictions, alpha=half_angles)
def test_screw_self_locking_iff_friction_above_tan_lead_angle(lam, f, alpha):
    # Shigley ch. 8 [mem]: self-locking when f*sec(alpha) >= tan(lambda)
    fe, tl = f / math.cos(alpha), math.tan(lam)
    if abs(fe - tl) < 1e-9:
        return  # on the boundary rounding decides
    _, backward = one(ScrewEfficiency(lead_angle=lam, friction=f, thread_half_angle=alpha))
    assert (backward <= 0) == (fe > tl)


@given(lam=lead_angles, f=frictions)
def test_self_locking_screw_forward_efficiency_below_half(lam, f):
    # open statics text [pub]: a self-locking screw cannot exceed 50 % forward efficiency;
    # with phi >= lam, eta_f <= tan(lam)/tan(2 lam) = (1 - tan^2 lam)/2 < 1/2
    model = ScrewEfficiency(lead_angle=lam, friction=f, thread_half_angle=0.0)
    forward, backward = one(model)
    if backward <= 0:
        assert forward < 0.5


def test_screw_lead_with_units():
    a = efficiency_from_dict(
        {
            "model": "screw",
            "lead": "8 mm",
            "mean_diameter": "30 mm",
            "friction": 0.1,
            "thread_half_angle": 0,
        },
        file="f",
        field="e",
    )
    b = efficiency_from_dict(
        {
            "model": "screw",
            "lead": "8 mm/turn",
            "mean_diameter": "3 cm",
            "friction": 0.1,
            "thread_half_angle": "0 deg",
        },
        file="f",
        field="e",
    )
    # 8 mm per turn = 8/(2*pi) = 1.27324 mm per radian
    c = efficiency_from_dict(
        {
            "model": "screw",
            "lead": f"{8 / (2 * math.pi)} mm/rad",
            "mean_diameter": 0.03,
            "friction": 0.1,
            "thread_half_angle": 0,
        },
        file="f",
        field="e",
    )
    assert a.lead == pytest.approx(0.008) and b.lead == pytest.approx(0.008)
    assert c.lead == pytest.approx(0.008)


# --- worm: Shigley ch. 13 --------------------------------------------------------------------


def test_worm_formulas_hand_computed():
    # Shigley ch. 13 [mem], lambda = 10 deg, f = 0.05, phi_n = 20 deg:
    # cos 20 = 0.939693, tan 10 = 0.176327, cot 10 = 5.671282
    # e_W = (0.939693 - 0.008816)/(0.939693 + 0.283564) = 0.760983
    # e_G = (0.939693 - 0.283564)/(0.939693 + 0.008816) = 0.691748
    model = WormEfficiency(lead_angle=10 * DEG, friction=0.05, normal_pressure_angle=20 * DEG)
    forward, backward = one(model)
    assert forward == pytest.approx(0.760983, abs=2e-6)
    assert backward == pytest.approx(0.691748, abs=2e-6)


@given(lam=st.floats(0.5 * DEG, 40 * DEG), f=frictions, phi_n=st.floats(0.0, 30 * DEG))
def test_worm_self_locking_iff_friction_above_cos_phin_tan_lambda(lam, f, phi_n):
    # Shigley ch. 13 [mem]: the wheel cannot drive the worm when f > cos(phi_n)*tan(lambda)
    limit = math.cos(phi_n) * math.tan(lam)
    if abs(f - limit) < 1e-9 or f * math.tan(lam) >= math.cos(phi_n):
        return  # boundary, or a worm that cannot drive at all (rejected by the constructor)
    _, backward = one(WormEfficiency(lead_angle=lam, friction=f, normal_pressure_angle=phi_n))
    assert (backward <= 0) == (f > limit)


@given(lam=st.floats(0.5 * DEG, 40 * DEG), f=st.floats(0.0, 0.2), phi_n=st.floats(0.0, 30 * DEG))
def test_worm_equals_screw_with_normal_pressure_angle_as_thread_angle(lam, f, phi_n):
    # a worm is a screw: Shigley's ch. 13 formulas equal the ch. 8 screw formulas with
    # f' = f/cos(phi_n) (divide numerator and denominator by cos phi_n) [mem, algebra]
    worm = one(WormEfficiency(lead_angle=lam, friction=f, normal_pressure_angle=phi_n))
    screw = one(ScrewEfficiency(lead_angle=lam, friction=f, thread_half_angle=phi_n))
    assert worm == pytest.approx(screw, rel=1e-9, abs=1e-12)


# --- planetary: basic-train (Willis) method ------------------------------------------------


def test_planetary_basic_train_reference_values():
    # Z_s = 12, Z_r = 60 -> N = 1 + 60/12 = 6 (Müller 1982; del Castillo 2002 [mem])
    # eta_f = (1 + 0.97*5)/6 = 5.85/6 = 0.97500; eta_b = 6/(1 + 5/0.97) = 6/6.154639 = 0.97487
    n = 1 + 60 / 12
    forward, backward = one(PlanetaryBasicTrainEfficiency(basic_efficiency=0.97), ratio=n)
    assert n == 6
    assert forward == pytest.approx(0.97500, abs=5e-6)
    assert backward == pytest.approx(0.97487, abs=5e-6)


@given(eta0=st.floats(0.5, 0.999), n=st.floats(1.5, 20.0))
def test_planetary_loses_less_than_its_basic_train(eta0, n):
    # eta_f = eta0 + (1 - eta0)/N > eta0: only the relative (carrier-fixed) power passes the mesh
    forward, backward = one(PlanetaryBasicTrainEfficiency(basic_efficiency=eta0), ratio=n)
    assert eta0 < forward < 1
    assert 0 < backward < 1


def test_planetary_rejects_ratio_not_above_one():
    with pytest.raises(InputError):
        PlanetaryBasicTrainEfficiency(basic_efficiency=0.97).pair(np.array([3.0, 1.0]))


# --- Coulomb and proportional rules --------------------------------------------------------


@given(eta=st.floats(0.05, 1.0), torque=st.floats(0.1, 100.0))
def test_coulomb_rule_is_equal_loss_both_ways(eta, torque):
    # REFERENCES.md, direction-dependent efficiency [mem]: eta_b = 2 - 1/eta_f when the loss
    # torque (referred to the output) is the same whichever side drives, for the same output load
    forward, backward = one(CoulombEfficiency(forward=eta))
    loss_forward = torque / forward - torque  # motor supplies torque/eta_f to deliver `torque`
    loss_backward = torque - backward * torque  # load applies `torque`, motor side gets eta_b*it
    assert backward == pytest.approx(2 - 1 / eta)
    assert loss_backward == pytest.approx(loss_forward, rel=1e-9, abs=1e-9)
    assert backward <= forward


@given(eta=st.floats(0.05, 1.0), motor_torque=st.floats(0.1, 100.0))
def test_proportional_rule_is_loss_proportional_to_motor_side_torque(eta, motor_torque):
    # REFERENCES.md [mem]: eta_b = 1/(2 - eta_f) when the loss is (1 - eta_f) times the
    # motor-side torque in both directions
    forward, backward = one(ProportionalEfficiency(forward=eta))
    load_side = motor_torque / backward  # back-driven: load torque for this motor-side torque
    assert backward == pytest.approx(1 / (2 - eta))
    assert load_side - motor_torque == pytest.approx((1 - eta) * motor_torque, rel=1e-9)
    assert backward >= forward


@pytest.mark.parametrize(
    "model",
    [
        ConstantEfficiency(forward=1.0, backward=1.0),
        CoulombEfficiency(forward=1.0),
        ProportionalEfficiency(forward=1.0),
        ScrewEfficiency(lead_angle=5 * DEG, friction=0.0, thread_half_angle=14.5 * DEG),
        WormEfficiency(lead_angle=5 * DEG, friction=0.0, normal_pressure_angle=20 * DEG),
        PlanetaryBasicTrainEfficiency(basic_efficiency=1.0),
        TableEfficiency(rows=((30, 1.0, 1.0), (160, 1.0, 1.0))),
    ],
    ids=lambda m: m.kind,
)
def test_frictionless_limit_is_one_both_ways(model):
    # DESIGN.md 2.3: eta = 1 must reduce to the classical lossless model exactly
    forward, backward = model.pair(np.array([[30.0, 50.0], [100.0, 160.0]]))
    assert forward.shape == backward.shape == (2, 2)
    assert np.allclose(forward, 1.0, atol=1e-15)
    assert np.allclose(backward, 1.0, atol=1e-15)
    assert isinstance(model, EfficiencyModel)
    assert model.kind in model.describe()


# --- table ---------------------------------------------------------------------------------


def test_table_interpolates_linearly_and_refuses_to_extrapolate():
    table = TableEfficiency(rows=((50, 0.80, 0.70), (100, 0.70, 0.50)))
    forward, backward = table.pair(np.array([50.0, 75.0, 100.0]))
    # midpoint of (0.80, 0.70) and of (0.70, 0.50)
    assert np.allclose(forward, [0.80, 0.75, 0.70]) and np.allclose(backward, [0.70, 0.60, 0.50])
    with pytest.raises(InputError, match="outside the efficiency table"):
        table.pair(120.0)


# --- construction rules ----------------------------------------------------------------------


@pytest.mark.parametrize(
    "table, field, words",
    [
        ({"model": "constant", "forward": 1.2, "backward": 0.9}, "e.forward", "(0, 1]"),
        ({"model": "constant", "forward": 0.9, "backward": -1.0}, "e.backward", "(-1, 1]"),
        ({"model": "constant", "forward": 0.8, "backward": 0.9}, "e.backward", "proportional"),
        ({"model": "constant", "forward": 0.8}, "e.backward", "required"),
        ({"model": "coulomb", "forward": 0.0}, "e.forward", "(0, 1]"),
        ({"model": "coulomb", "forward": 0.9, "backward": 0.8}, "e.backward", "unknown"),
        ({"model": "constnt", "forward": 0.9}, "e.model", "did you mean 'constant'"),
        (
            {"model": "screw", "lead_angle": 0.05, "friction": -0.1, "thread_half_angle": 0},
            "e.friction",
            "[0, inf)",
        ),
        (
            {"model": "screw", "lead_angle": "95 deg", "friction": 0.1, "thread_half_angle": 0},
            "e.lead_angle",
            "(0°, 90°)",
        ),
        (
            {"model": "screw", "lead": "8 mm", "friction": 0.1, "thread_half_angle": 0},
            "e.mean_diameter",
            "together with lead",
        ),
        (
            {
                "model": "screw",
                "lead": "8 mm",
                "mean_diameter": "30 mm",
                "lead_angle": "5 deg",
                "friction": 0.1,
                "thread_half_angle": 0,
            },
            "e.lead_angle",
            "either",
        ),
        (
            {
                "model": "worm",
                "lead_angle": 10,
                "friction": 0.05,
                "normal_pressure_angle": "20 deg",
            },
            "e.lead_angle",
            "radians",
        ),
        (
            {"model": "planetary_basic_train", "basic_efficiency": 1.01},
            "e.basic_efficiency",
            "(0, 1]",
        ),
        ({"model": "table", "rows": [[50, 0.8, 0.7]]}, "e.rows", "at least two"),
        ({"model": "table", "rows": [[50, 0.8, 0.7], [40, 0.7, 0.6]]}, "e.rows[1][0]", "ascending"),
        (
            {"model": "table", "rows": [[50, 0.8, 0.7], [60, 0.7, 0.75]]},
            "e.rows[1].backward",
            "forward",
        ),
    ],
)
def test_bad_parameters_name_file_and_field(table, field, words):
    with pytest.raises(InputError) as info:
        efficiency_from_dict(table, file="cat.toml", field="e")
    assert info.value.file == "cat.toml"
    assert info.value.field == field
    assert words in info.value.rule


def test_every_model_is_registered_and_builds_from_a_dict():
    examples = {
        "constant": {"forward": 0.9, "backward": 0.85},
        "coulomb": {"forward": 0.9},
        "proportional": {"forward": 0.9},
        "screw": {
            "lead": "5 mm",
            "mean_diameter": "16 mm",
            "friction": 0.005,
            "thread_half_angle": 0,
        },
        "worm": {"lead_angle": "8 deg", "friction": 0.04, "normal_pressure_angle": "20 deg"},
        "planetary_basic_train": {"basic_efficiency": 0.98},
        "table": {"rows": [[30, 0.7, 0.6], [100, 0.8, 0.7]]},
    }
    assert set(examples) == set(MODELS)
    for name, params in examples.items():
        model = efficiency_from_dict({"model": name, **params}, file="f", field="e")
        assert type(model) is MODELS[name] and model.kind == name
        forward, backward = model.pair(np.full((4, 3), 50.0))
        assert forward.shape == backward.shape == (4, 3)
        assert np.all((0 < forward) & (forward <= 1))
        # only the proportional rule lets the backward efficiency exceed the forward one
        assert np.all(backward <= forward) != (name == "proportional")


@settings(max_examples=50)
@given(f=st.floats(0.01, 1.0), b=st.floats(-0.99, 1.0))
def test_constant_accepts_exactly_the_documented_region(f, b):
    # DESIGN.md 5: backward above forward is rejected for a friction model
    if b <= f:
        assert one(ConstantEfficiency(forward=f, backward=b)) == (f, b)
    else:
        with pytest.raises(InputError, match="proportional"):
            ConstantEfficiency(forward=f, backward=b)
