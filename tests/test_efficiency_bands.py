"""Efficiency bands: which end of the band is worst per metric, checked against the interior;
a one-joint closed form; a band of zero width gives today's numbers; sizing honours the band.

Sources: the transmission law τ_j = η_f·N·τ_m (motoring) and τ_j = (N/η_b)·τ_m (back-driven)
(Pasch & Seering, ASME J. Mech. Trans. Autom. Des. 106(4), 1984 [mem]; DESIGN.md); the lever
statics τ = F·L; Loewner-order monotonicity of the effective mass 1/(uᵀ·J·H⁻¹·Jᵀ·u) (Horn &
Johnson, *Matrix Analysis*, 2nd ed., 2013, Cor. 7.7.4 [mem]).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from test_solve_search import agree, build_table, example, set_limits, small_catalog

from jointwright.catalog.bands import EfficiencyBand, band_from_dict
from jointwright.catalog.efficiency import ConstantEfficiency
from jointwright.catalog.io import load_catalog
from jointwright.catalog.model import StageFrame, StageType
from jointwright.design import Design, arrays_from_designs
from jointwright.drivetrain import Actuator, StageChoice
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.project import Case, Requirements
from jointwright.robot import Robot

#: relative slack of the comparisons (LP and cone solvers round)
TOL = 1e-7


def robust(project, on=True):
    return dataclasses.replace(
        project, requirements=dataclasses.replace(project.requirements, efficiency_band=on)
    )


def interior(d, rng):
    """The designs with every stack's efficiencies drawn inside their bands, joint by joint."""
    tf, tb = rng.random(d.eta_forward.shape), rng.random(d.eta_backward.shape)
    ef = d.eta_forward_low + tf * (d.eta_forward_high - d.eta_forward_low)
    eb = d.eta_backward_low + tb * (d.eta_backward_high - d.eta_backward_low)
    locked = eb <= 0
    with np.errstate(divide="ignore"):
        brk = np.where(locked, np.inf, d.ratio * d.breakaway_motor_side / np.where(locked, 1, eb))
    return dataclasses.replace(
        d, eta_forward=ef, eta_backward=eb, self_locking=locked, breakaway_torque=brk
    )


@pytest.fixture(scope="module")
def arm():
    return example("arm")


@pytest.fixture(scope="module")
def arm_sample(arm):
    """Random arm designs over the bundled catalog (strain-wave and worm stages have bands)."""
    p = dataclasses.replace(arm, max_stages=1, stage_kinds=None)
    table = build_table(p)
    rng = np.random.default_rng(7)
    banded = np.flatnonzero(table.rows["eta_forward_high"] > table.rows["eta_forward_low"])
    pick = rng.choice(banded, (24, len(arm.robot.actuated)))
    return p, table.arrays(pick)


def test_bundled_arm_catalog_has_bands(arm):
    flex, worm = arm.catalog.stage("Flexring"), arm.catalog.stage("Spiral")
    assert isinstance(flex.efficiency_band, EfficiencyBand)
    f_lo, f_hi, b_lo, b_hi = worm.efficiency_band.ends(np.array([30.0]))
    # the worm's friction range crosses the self-locking limit f·sec(φ_n) = tan(λ) (Shigley
    # ch. 13 [mem]): tan 3.5° = 0.0612 lies between 0.05·sec 20° = 0.053 and 0.1·sec 20°
    assert b_lo[0] < 0 < b_hi[0]


def test_payload_is_worst_at_low_forward_high_backward(arm_sample):
    """Motoring capacity η_f·N·τ_m rises with η_f, holding N·τ_m/η_b falls with η_b: the
    payload at (η_f low, η_b high) is at most the payload anywhere inside the band."""
    p, d = arm_sample
    ev = Evaluator(p)
    worst = ev.evaluate(d.at_band("low", "high"))
    rng = np.random.default_rng(1)
    names = [c.name for c in p.cases if c.kind == "payload"]
    for _ in range(6):
        inside = ev.evaluate(interior(d, rng))
        for n in names:
            for key in ("payload", "payload_raise", "payload_lower", "payload_hold"):
                w, x = worst[n][key], inside[n][key]
                assert np.all(w <= x * (1 + TOL) + TOL), (n, key)
    # and the robust evaluation is that end
    rob = Evaluator(robust(p)).evaluate(d)
    for n in names:
        np.testing.assert_array_equal(rob[n]["payload"], worst[n]["payload"])


def test_impact_and_backdrive_are_worst_at_low_backward(arm_sample):
    """Back-driven reflected inertia N²·I_r/η_b and breakaway N·Σ/η_b fall as η_b rises: the
    effective mass and the back-drive force are largest at the low backward end."""
    p, d = arm_sample
    ev = Evaluator(p)
    worst = ev.evaluate(d.at_band("low", "low"))
    rng = np.random.default_rng(2)
    for _ in range(6):
        inside = ev.evaluate(interior(d, rng))
        for c in p.cases:
            if c.kind == "impact":
                assert np.all(
                    worst[c.name]["effective_mass"] >= inside[c.name]["effective_mass"] * (1 - TOL)
                )
            if c.kind == "backdrive":
                assert np.all(
                    worst[c.name]["backdrive_force"]
                    >= inside[c.name]["backdrive_force"] * (1 - TOL)
                )


def test_imf_is_worst_at_low_backward_on_a_floating_robot():
    """IMF ξ = det(I − Λ·Λ_L⁻¹) falls as the back-driven inertia grows (Loewner order): the
    low backward end bounds it from below (quadruped touchdown, random banded stages)."""
    q = example("quadruped")
    band = {"forward_change": [-0.1, 0.02], "backward_change": [-0.3, 0.02]}
    stages = tuple(
        dataclasses.replace(
            s,
            efficiency_band=band_from_dict(band, s.efficiency, file="<t>", field="band"),
        )
        for s in q.catalog.stages
    )
    p = dataclasses.replace(
        q,
        catalog=dataclasses.replace(q.catalog, stages=stages),
        cases=tuple(c for c in q.cases if c.kind == "impact"),
    )
    table = build_table(p)
    rng = np.random.default_rng(3)
    d = table.arrays(rng.integers(0, len(table), (16, len(p.robot.actuated))))
    ev = Evaluator(p)
    worst = ev.evaluate(d.at_band("low", "low"))["fl-touchdown"]
    for _ in range(5):
        inside = ev.evaluate(interior(d, rng))["fl-touchdown"]
        for key in ("imf", "imf_direction"):
            assert np.all(worst[key] <= inside[key] + 1e-9)
    rob = Evaluator(robust(p)).evaluate(d)["fl-touchdown"]
    np.testing.assert_array_equal(rob["imf"], worst["imf"])


def test_speed_and_duty_worst_of_the_ends_bounds_the_interior(arm_sample):
    """Steady loaded speed: each joint's motor torque is affine in 1/η_f (motoring) or η_b
    (back-driven), so the worst over the band is at an end; RMS and peak torque are convex in
    the same coordinates (max at a corner). The robust values bound the interior."""
    p, d = arm_sample
    rob = Evaluator(robust(p)).evaluate(d)
    ev = Evaluator(p)
    # the same speed case without its stroke: the steady speed from two corners only
    steady = tuple(
        dataclasses.replace(c, name=c.name + "-steady", stroke=0.0)
        for c in p.cases
        if c.kind == "speed"
    )
    ps = dataclasses.replace(p, cases=steady)
    rob_s, ev_s = Evaluator(robust(ps)).evaluate(d), Evaluator(ps)
    rng = np.random.default_rng(4)
    for _ in range(5):
        x = interior(d, rng)
        inside, inside_s = ev.evaluate(x), ev_s.evaluate(x)
        for c in steady:
            for key in ("speed", "acceleration"):
                assert np.all(rob_s[c.name][key] <= inside_s[c.name][key] * (1 + TOL) + TOL)
        for c in p.cases:
            if c.kind == "speed":
                for key in ("speed_steady", "acceleration"):
                    assert np.all(rob[c.name][key] <= inside[c.name][key] * (1 + TOL) + TOL)
            if c.kind == "duty":
                for key in ("rms_torque", "peak_torque"):
                    assert np.all(rob[c.name][key] >= inside[c.name][key] * (1 - TOL) - TOL)


def test_zero_width_band_is_todays_result(arm):
    """A project that requires the band, over stages without one or with a band of zero width,
    gives exactly the nominal numbers."""
    stages = tuple(
        dataclasses.replace(
            s,
            efficiency_band=band_from_dict(
                {"forward_change": [0, 0], "backward_change": [0, 0]},
                s.efficiency,
                file="<t>",
                field="band",
            ),
        )
        for s in arm.catalog.stages
    )
    p0 = dataclasses.replace(arm, max_stages=1, stage_kinds=None)
    table = build_table(p0)
    pick = np.random.default_rng(5).integers(0, len(table), (10, len(arm.robot.actuated)))
    nominal = Evaluator(p0).evaluate(table.arrays(pick))
    p1 = robust(dataclasses.replace(p0, catalog=dataclasses.replace(arm.catalog, stages=stages)))
    t1 = build_table(p1)
    zero = Evaluator(p1).evaluate(t1.arrays(pick))
    for case, metrics in nominal.items():
        for key, value in metrics.items():
            np.testing.assert_array_equal(np.asarray(zero[case][key]), np.asarray(value))


def _one_joint_project(arm):
    """A horizontal link of length L about a y-axis joint; gravity −z; tip frame at L."""
    L = 0.5
    robot = Robot.from_links(
        {
            "base": "fixed",
            "gravity": [0, 0, -9.81],
            "links": [
                {
                    "name": "base",
                    "mass": 1.0,
                    "com": [0, 0, 0],
                    "inertia": [[0.01, 0, 0], [0, 0.01, 0], [0, 0, 0.01]],
                },
                {
                    "name": "arm",
                    "mass": 2.0,
                    "com": [L / 2, 0, 0],
                    "inertia": [[1e-3, 0, 0], [0, 2 * L * L / 12, 0], [0, 0, 2 * L * L / 12]],
                },
            ],
            "joints": [
                {
                    "name": "j",
                    "type": "revolute",
                    "parent": "base",
                    "child": "arm",
                    "xyz": [0, 0, 0],
                    "axis": [0, -1, 0],
                }
            ],
            "frames": [{"name": "tip", "link": "arm", "xyz": [L, 0, 0]}],
        },
        file="one-joint.toml",
    )
    cases = (
        Case("lift", "payload", "tip", {"j": 0.0}, direction=(0.0, 0.0, 1.0), limits={}),
        Case("push", "backdrive", "tip", {"j": 0.0}, direction=(0.0, 0.0, 1.0), limits={}),
    )
    return dataclasses.replace(
        arm, robot=robot, cases=cases, requirements=Requirements(efficiency_band=True)
    ), L


def test_one_joint_closed_form(arm):
    """Lift: F·L = η_f·N·τ_peak − τ_g, so F_worst = F_nom − (η_f,nom − η_f,lo)·N·τ_peak/L;
    push (unpowered): F·L = N·Σ/η_b at the low backward end."""
    p, L = _one_joint_project(arm)
    eff = ConstantEfficiency(forward=0.9, backward=0.85)
    band = band_from_dict(
        {"forward": [0.85, 0.95], "backward": [0.7, 0.85]}, eff, file="<t>", field="band"
    )
    frame = StageFrame(
        "F", rated_peak_torque=1e6, rated_continuous_torque=1e6, mass=0.2, breakaway_torque=0.05
    )
    stage = StageType("S", "spur", eff, (frame,), ratios=(10.0,), efficiency_band=band)
    motor = arm.catalog.motors[5]
    a = Actuator(motor, (StageChoice(stage, frame, 10.0),))
    d = arrays_from_designs([Design("one", ("j",), (a,))])
    nominal = Evaluator(p).evaluate(d, band="nominal")
    worst = Evaluator(p).evaluate(d)
    N, tau = 10.0, motor.peak_torque
    assert worst["lift"]["payload"][0] == pytest.approx(
        nominal["lift"]["payload"][0] - (0.9 - 0.85) * N * tau / L, rel=1e-9
    )
    sigma = motor.cogging_torque + 0.05
    assert worst["push"]["backdrive_force"][0] == pytest.approx(N * sigma / (0.7 * L), rel=1e-9)
    assert nominal["push"]["backdrive_force"][0] == pytest.approx(N * sigma / (0.85 * L), rel=1e-9)


@pytest.mark.parametrize(
    "band, field",
    [
        ("{ friction = [0.08, 0.1] }", "stage[0].efficiency_band.friction"),  # misses 0.07
        ("{ lead_angle = [0.05, 0.07], mu = [0.05, 0.1] }", "stage[0].efficiency_band.mu"),
        ("{ forward_change = [0.01, 0.02] }", "stage[0].efficiency_band.forward_change"),
        ("{ forward_change = [-0.01] }", "stage[0].efficiency_band.forward_change"),
        ("{ forward_change = [-0.1, 0.9] }", "stage[0].efficiency_band"),  # η_f above 1
        ("[0.9, 0.95]", "stage[0].efficiency_band"),
    ],
)
def test_bad_bands_name_the_field(tmp_path, band, field):
    text = (
        '[[stage]]\nname = "W"\nkind = "worm"\nratios = [20, 40]\n'
        'efficiency = { model = "worm", lead_angle = "3.5 deg", friction = 0.07, '
        'normal_pressure_angle = "20 deg" }\n'
        f"efficiency_band = {band}\n"
        '[[stage.frame]]\nname = "W-1"\nrated_peak_torque = 40\n'
        "rated_continuous_torque = 20\nmass = 0.5\n"
    )
    f = tmp_path / "c.toml"
    f.write_text(text)
    with pytest.raises(InputError) as e:
        load_catalog(f)
    assert e.value.field == field


@pytest.mark.parametrize("seed, kind", [(2, "payload"), (9, "mass")])
def test_sizing_honours_the_band_exactly(arm, seed, kind):
    """The search on a robust project agrees with enumeration (both score with the worst-end
    evaluation) on a seeded 3-joint planar arm with lift, side-impact, push and speed cases; its
    optimum meets every requirement at the worst end and is no better than the nominal one."""
    from test_solve_search import planar_arm

    rng = np.random.default_rng(seed)
    cat = small_catalog(arm.catalog, rng, motors=2, kinds=2, ratios=2)
    stages = tuple(
        s
        if s.efficiency_band is not None
        else dataclasses.replace(
            s,
            efficiency_band=band_from_dict(
                {"forward_change": [-0.05, 0.01], "backward_change": [-0.08, 0.01]},
                s.efficiency,
                file="<t>",
                field="band",
            ),
        )
        for s in cat.stages
    )
    pose = {"j0": 0.4, "j1": -0.7, "j2": 0.5}
    up, side = (0.0, 0.0, 1.0), (1.0, 0.0, 0.0)
    cases = (
        Case("lift", "payload", "tip", pose, direction=up, limits={"payload_min": 1.0}),
        Case("bump", "impact", "tip", pose, direction=side, limits={"effective_mass_max": 1.0}),
        Case("push", "backdrive", "tip", pose, direction=side, limits={"backdrive_force_max": 1.0}),
        Case("move", "speed", "tip", pose, direction=side, limits={"speed_min": 1.0}),
    )
    p = dataclasses.replace(
        arm,
        robot=planar_arm(rng),
        catalog=dataclasses.replace(cat, stages=stages),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=cases,
        requirements=Requirements(),
    )
    p = set_limits(p, rng, build_table(p), keep_duty=False)
    res = agree(robust(p), kind)
    nominal = agree(p, kind)
    if res.status == "optimal":
        assert all(c.margin_worst is None or c.margin_worst >= -1e-9 for c in res.assessment.checks)
        assert res.assessment.efficiency == "worst end of the band"
        sense = -1.0 if kind == "mass" else 1.0
        assert sense * res.objective <= sense * nominal.objective + 1e-9
    else:
        assert res.status == "infeasible"
