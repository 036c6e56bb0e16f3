"""The evaluator (the one physics oracle) against independent computations.

References: Pinocchio (`pin`) for the mass matrix (crba, with the actuator masses appended as
bodies and the reflected inertia as `model.armature`), gravity and frame Jacobians; the impact
mitigation factor ξ = det(I − Λ·Λ_L⁻¹) of Wensing et al., IEEE T-RO 33(3), 2017 [pub] computed
with numpy.linalg; the one-variable LP ratio test for payload along a ray (Chiacchio et al.
1997 [mem]) written out by hand; the power-flow law of DESIGN.md §2.3.
"""

from __future__ import annotations

import dataclasses
import math
from importlib import resources

import numpy as np
import pinocchio as pin
import pytest

from jointwright.assessment import assess
from jointwright.catalog.efficiency import ConstantEfficiency
from jointwright.design import arrays_from_designs, load_design
from jointwright.evaluate import Evaluator
from jointwright.project import load_project


def example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        project = load_project(folder / "project.toml")
        design = load_design(folder / "design.toml", project)
    return project, design


@pytest.fixture(scope="module")
def leg():
    return example("leg")


@pytest.fixture(scope="module")
def arm():
    return example("arm")


def _pin_terms(project, design, case, reflected):
    """Mass matrix, gravity and tip Jacobian by Pinocchio on a model carrying the actuators."""
    robot = project.robot
    model = robot.with_actuator_masses([a.mass for a in design.actuators])
    model.armature[:] = 0.0
    for k, v in enumerate(robot.v_index):
        model.armature[v] = reflected[k]
    data = model.createData()
    q = robot.configuration(case.pose, case.base_xyz, case.base_rpy)
    H = pin.crba(model, data, q)
    H = np.triu(H) + np.triu(H, 1).T
    g = pin.computeGeneralizedGravity(model, data, q)
    pin.computeJointJacobians(model, data, q)
    pin.updateFramePlacements(model, data)
    fid = model.getFrameId(case.frame)
    J = pin.getFrameJacobian(model, data, fid, pin.LOCAL_WORLD_ALIGNED)[:3]
    return H, g, J


def test_payload_matches_ratio_test_on_pinocchio_terms(leg):
    project, design = leg
    ev = Evaluator(project).evaluate(arrays_from_designs([design]))
    v = project.robot.v_index
    for case in project.cases:
        if case.kind != "payload":
            continue
        _, g, J = _pin_terms(project, design, case, np.zeros(len(v)))
        u = np.array(case.direction)
        a = J[:, v].T @ u
        bias = g[v]
        qd = np.linalg.pinv(J[:, v]) @ u * (1 if case.motion == "along" else -1)
        best = math.inf
        for k, act in enumerate(design.actuators):
            drive, hold = act.capacity("motoring"), act.capacity("backdriven")
            # joint torque sign equal to its velocity sign: motoring; opposite: back-driven
            hi = drive if qd[k] > 0 else hold
            lo = -(hold if qd[k] > 0 else drive)
            if a[k] > 0:
                best = min(best, (hi - bias[k]) / a[k])
            elif a[k] < 0:
                best = min(best, (lo - bias[k]) / a[k])
        assert ev[case.name]["payload"][0] == pytest.approx(best, rel=1e-9), case.name


def test_impact_mitigation_matches_numpy_on_pinocchio_mass_matrix(leg):
    project, design = leg
    case = next(c for c in project.cases if c.kind == "impact")
    refl = np.array([a.reflected_inertia("backdriven") for a in design.actuators])
    H, _, J = _pin_terms(project, design, case, refl)
    lam = np.linalg.inv(J @ np.linalg.solve(H, J.T))
    Jb, Hbb = J[:, :6], H[:6, :6]
    lam_locked = np.linalg.inv(Jb @ np.linalg.solve(Hbb, Jb.T))
    imf = np.linalg.det(np.eye(3) - lam @ np.linalg.inv(lam_locked))
    u = np.array(case.direction)
    ev = Evaluator(project).evaluate(arrays_from_designs([design]))[case.name]
    assert ev["imf"][0] == pytest.approx(imf, rel=1e-8)
    assert ev["imf_direction"][0] == pytest.approx(1 - u @ lam @ u / (u @ lam_locked @ u), rel=1e-8)
    assert ev["effective_mass"][0] == pytest.approx(1 / (u @ np.linalg.inv(lam) @ u), rel=1e-8)
    # Λ_L does not depend on the gears: the frictionless and back-driven IMF differ only via Λ
    assert 0.0 <= ev["imf"][0] <= ev["imf_frictionless"][0] <= 1.0


def test_fixed_base_effective_mass_matches_pinocchio(arm):
    project, design = arm
    case = next(c for c in project.cases if c.kind == "impact")
    refl = np.array([a.reflected_inertia("backdriven") for a in design.actuators])
    H, _, J = _pin_terms(project, design, case, refl)
    u = np.array(case.direction)
    expected = 1.0 / (u @ J @ np.linalg.solve(H, J.T) @ u)
    ev = Evaluator(project).evaluate(arrays_from_designs([design]))[case.name]
    assert ev["effective_mass"][0] == pytest.approx(expected, rel=1e-9)
    assert ev["effective_mass_frictionless"][0] <= ev["effective_mass"][0]


def _with_efficiency(design, forward, backward):
    acts = []
    for a in design.actuators:
        stages = tuple(
            dataclasses.replace(
                s,
                stage=dataclasses.replace(
                    s.stage, efficiency=ConstantEfficiency(forward=forward, backward=backward)
                ),
            )
            for s in a.stages
        )
        acts.append(dataclasses.replace(a, stages=stages))
    return dataclasses.replace(design, actuators=tuple(acts))


def test_frictionless_gears_reduce_to_the_classical_model(leg):
    project, design = leg
    ideal = _with_efficiency(design, 1.0, 1.0)
    ev = Evaluator(project).evaluate(arrays_from_designs([ideal]))
    for case in project.cases:
        e = ev[case.name]
        if case.kind == "payload":
            for key in ("payload_raise", "payload_lower", "payload_hold"):
                assert e[key][0] == pytest.approx(e["payload_frictionless"][0], rel=1e-12)
        if case.kind == "impact":
            assert e["imf"][0] == pytest.approx(e["imf_frictionless"][0], rel=1e-12)
            assert e["effective_mass"][0] == pytest.approx(
                e["effective_mass_frictionless"][0], rel=1e-12
            )
            assert e["effective_mass_motoring"][0] == pytest.approx(
                e["effective_mass_frictionless"][0], rel=1e-10
            )
            assert "imf_motoring" not in e  # an impact back-drives the joints: no forward IMF


@pytest.mark.parametrize("name", ["leg", "arm"])
def test_lossy_gears_raise_the_effective_mass_in_both_power_flow_directions(name):
    # DESIGN.md §2.3: with losses the end-point inertia is larger than frictionless whichever way
    # the power flows; the forward-driving value at η = 1 would be the frictionless one
    project, design = example(name)
    for ef, eb in ((0.9, 0.8), (0.7, 0.4), (0.95, 0.1)):
        ev = Evaluator(project).evaluate(arrays_from_designs([_with_efficiency(design, ef, eb)]))
        for case in project.cases:
            if case.kind != "impact":
                continue
            e = ev[case.name]
            assert e["effective_mass_motoring"][0] > e["effective_mass_frictionless"][0]
            assert e["effective_mass"][0] > e["effective_mass_frictionless"][0]


def test_backdriven_imf_non_increasing_as_backward_efficiency_falls_and_zero_when_self_locking(leg):
    # Wensing et al. 2017: ξ falls as the joint inertia grows (N²·I_r/η_b); a self-locking gear
    # locks its joint for the impact, and with every joint locked the contact meets Λ_L: ξ = 0
    project, design = leg
    case = next(c for c in project.cases if c.kind == "impact")
    values = []
    for eb in (0.9, 0.7, 0.5, 0.3, 0.1):
        ev = Evaluator(project).evaluate(arrays_from_designs([_with_efficiency(design, 0.9, eb)]))
        values.append(float(ev[case.name]["imf"][0]))
    assert all(b <= a * (1 + 1e-12) for a, b in zip(values, values[1:]))
    assert values[-1] < values[0]
    ev = Evaluator(project).evaluate(arrays_from_designs([_with_efficiency(design, 0.9, -0.2)]))[
        case.name
    ]
    assert ev["imf"][0] == 0.0 and ev["imf_direction"][0] == pytest.approx(0.0, abs=1e-12)


def test_lossy_gears_lift_less_and_hold_more_than_frictionless(leg):
    project, design = leg
    ev = Evaluator(project).evaluate(arrays_from_designs([_with_efficiency(design, 0.8, 0.7)]))
    push = ev["jump-push"]
    assert push["payload_raise"][0] < push["payload_frictionless"][0] < push["payload_hold"][0]


def test_self_locking_joint_is_locked_for_impact_and_infinite_holding_is_not_nan(arm):
    project, design = arm
    worm = project.catalog.stage("Spiral")
    acts = list(design.actuators)
    s0 = acts[2].stages[0]
    acts[2] = dataclasses.replace(
        acts[2], stages=(dataclasses.replace(s0, stage=worm, frame=worm.frames[1], ratio=50.0),)
    )
    locked = dataclasses.replace(design, actuators=tuple(acts))
    a = assess(project, locked)
    elbow = next(j for j in a.joints if j.joint == "elbow")
    assert elbow.self_locking and elbow.reflected_backdriven == math.inf
    data = a.to_dict()
    assert data["joints"][2]["reflected_backdriven"] == "inf"
    assert any("self-locking" in c for c in a.cautions)
    # locking a joint can only raise the effective mass a collision meets
    free = assess(project, design)
    em = {c.name: c.metrics for c in a.cases}["side-collision"]["effective_mass"]
    em_free = {c.name: c.metrics for c in free.cases}["side-collision"]["effective_mass"]
    assert em >= em_free


def test_batched_equals_one_by_one(leg):
    project, design = leg
    other = _with_efficiency(design, 0.9, 0.85)
    evaluator = Evaluator(project)
    both = evaluator.evaluate(arrays_from_designs([design, other]))
    for i, d in enumerate((design, other)):
        one = evaluator.evaluate(arrays_from_designs([d]))
        for case, metrics in one.items():
            for key, value in metrics.items():
                if value.dtype.kind in "fiub":
                    np.testing.assert_allclose(both[case][key][i], value[0], rtol=1e-12)
                else:
                    assert both[case][key][i] == value[0]


def test_speed_case_under_load_matches_pinocchio_terms(arm):
    # the speed case's load, built independently: Pinocchio gravity, mass matrix and Coriolis
    # terms c(q, q̇) (rnea with and without velocity) on the model carrying the actuators, the
    # payload's weight and inertia through Jᵀ, then the loaded-speed metric; DESIGN.md §2.4
    import dataclasses as dc

    from jointwright.metrics.acceleration import acceleration_from_rest
    from jointwright.metrics.loaded import loaded_endpoint_speed

    project, design = arm
    base = next(c for c in project.cases if c.kind == "speed")
    case = dc.replace(
        base, payload_mass=2.0, acceleration=3.0, stroke=0.0, tip_force=(5.0, -3.0, 2.0)
    )
    project = dc.replace(project, cases=(case,))
    H, g, J = _pin_terms(project, design, case, np.zeros(len(design.actuators)))
    robot = project.robot
    v_idx = np.asarray(robot.v_index)
    Jj = J[:, v_idx]
    u = np.array(case.direction)
    a = np.linalg.pinv(Jj) @ u
    model = robot.with_actuator_masses([x.mass for x in design.actuators])
    data = model.createData()
    q = robot.configuration(case.pose, case.base_xyz, case.base_rpy)
    v = np.zeros(robot.nv)
    v[v_idx] = a
    c2 = (pin.rnea(model, data, q, v, np.zeros(robot.nv)) - pin.rnea(model, data, q, 0 * v, 0 * v))[
        v_idx
    ]
    weight = -case.payload_mass * robot.gravity
    tau_rest = g[v_idx] + Jj.T @ (weight + np.array([5.0, -3.0, 2.0]))
    per_acc = H[np.ix_(v_idx, v_idx)] @ a + case.payload_mass * Jj.T @ u
    arrays = arrays_from_designs([design])
    motor = dict(
        peak_torque=arrays.motor_peak_torque[0],
        max_speed=arrays.motor_max_speed[0],
        torque_constant=arrays.torque_constant[0],
        resistance=arrays.resistance[0],
        bus_voltage=arrays.bus_voltage[0],
        winding_temperature=arrays.winding_temperature_max[0],
    )
    trans = dict(
        eta_f=arrays.eta_forward[0],
        eta_b=arrays.eta_backward[0],
        rotor_inertia=arrays.rotor_inertia[0],
        gear_rating=arrays.gear_peak_torque[0],
    )
    expected = loaded_endpoint_speed(
        Jj,
        tau_rest + 3.0 * per_acc,
        u,
        arrays.ratio[0],
        tau_per_speed2=c2,
        joint_acceleration=3.0 * a,
        **trans,
        **motor,
    )
    accel = acceleration_from_rest(Jj, tau_rest, per_acc, u, arrays.ratio[0], **trans, **motor)
    ev = Evaluator(project).evaluate(arrays)[case.name]
    assert ev["speed"][0] == pytest.approx(float(expected.speed), rel=1e-9)
    assert ev["acceleration"][0] == pytest.approx(float(accel.acceleration), rel=1e-9)
    assert ev["limiting_joint"][0] == expected.limiting_joint
    # plausibility [trade]: under load never faster than the no-load figure, and the end point's
    # speed is each moving joint's motor speed / N over its rate per unit end-point speed
    assert 0 < ev["speed"][0] <= ev["speed_no_load"][0]
    k = int(ev["limiting_joint"][0])
    assert ev["speed"][0] == pytest.approx(
        ev["motor_speed"][0, k] / arrays.ratio[0, k] / abs(a[k]), rel=1e-9
    )
    assert np.all(ev["motor_speed"][0] <= arrays.motor_max_speed[0] * (1 + 1e-12))
    # a heavier payload never makes the tool faster or quicker to accelerate (same tip force)
    heavy = dc.replace(case, payload_mass=6.0)
    ev6 = Evaluator(dc.replace(project, cases=(heavy,))).evaluate(arrays)[case.name]
    assert ev6["speed"][0] <= ev["speed"][0] and ev6["acceleration"][0] < ev["acceleration"][0]
    # within a stroke: the same terms through speed_within_stroke, never above the steady speed
    from jointwright.metrics.stroke import speed_within_stroke

    stroke = dc.replace(case, acceleration=0.0, stroke=0.2, tip_force=(0.0, 0.0, 0.0))
    evs = Evaluator(dc.replace(project, cases=(stroke,))).evaluate(arrays)[case.name]
    within = speed_within_stroke(
        Jj,
        g[v_idx] + Jj.T @ weight,
        per_acc,
        u,
        arrays.ratio[0],
        0.2,
        tau_per_speed2=c2,
        **trans,
        **motor,
    )
    assert evs["speed"][0] == pytest.approx(float(within.speed), rel=1e-9)
    assert 0 < evs["speed"][0] < evs["speed_steady"][0] <= evs["speed_no_load"][0]
    assert evs["stroke_time"][0] > 0.2 / evs["speed_steady"][0]


def test_a_project_without_a_duty_case_says_its_thermal_load_is_not_checked(leg):
    """Peak, speed and impact cases say nothing of continuous torque or winding temperature:
    an assessment of a project without a duty case carries that caution, and one with a duty
    case does not."""
    project, design = leg
    with_duty = assess(project, design)
    assert any(c.kind == "duty" for c in project.cases)
    assert not any(c.startswith("No duty case") for c in with_duty.cautions)
    peaks = dataclasses.replace(project, cases=tuple(c for c in project.cases if c.kind != "duty"))
    without = assess(peaks, design)
    assert any(c.startswith("No duty case") and "winding temperature" in c for c in without.cautions)
