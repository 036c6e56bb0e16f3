"""Duty-cycle cases: inverse dynamics along a trajectory against Pinocchio, design by design.

References: Pinocchio's RNEA with external forces (`pin.rnea(model, data, q, v, a, fext)`) on a
model that carries the actuator masses as bodies [reference library]; the linearity of inverse
dynamics in the inertial parameters (any robotics text, e.g. Siciliano et al., Robotics:
Modelling, Planning and Control, ch. 7 [mem]); the power-flow law of DESIGN.md §2.3.
"""

from __future__ import annotations

import dataclasses
from importlib import resources

import numpy as np
import pinocchio as pin
import pytest

from jointwright.catalog.efficiency import ConstantEfficiency
from jointwright.design import arrays_from_designs, load_design
from jointwright.dutycase import joint_torques
from jointwright.evaluate import Evaluator
from jointwright.project import load_project


@pytest.fixture(scope="module", params=["leg", "arm"])
def example(request):
    with resources.as_file(resources.files("jointwright.examples") / request.param) as folder:
        project = load_project(folder / "project.toml")
        design = load_design(folder / "design.toml", project)
    return project, design, Evaluator(project)


def _rnea_reference(robot, case, traj, masses, sample):
    model = robot.with_actuator_masses(masses)
    data = model.createData()
    v = np.asarray(robot.v_index)
    q = robot.configuration(dict(zip(robot.actuated, traj.q[sample])), case.base_xyz, case.base_rpy)
    qd, qdd = np.zeros(model.nv), np.zeros(model.nv)
    qd[v], qdd[v] = traj.qd[sample], traj.qdd[sample]
    pin.forwardKinematics(model, data, q)
    pin.updateFramePlacements(model, data)
    fext = pin.StdVec_Force()
    for _ in range(model.njoints):
        fext.append(pin.Force.Zero())
    for f, frame in enumerate(traj.frames):
        fid = model.getFrameId(frame)
        p = data.oMf[fid].translation
        force = traj.wrench[sample, f, :3]
        moment = traj.wrench[sample, f, 3:] + np.cross(p, force)
        joint = model.frames[fid].parentJoint
        fext[joint] += data.oMi[joint].actInv(pin.Force(force, moment))
    return pin.rnea(model, data, q, qd, qdd, fext)[v]


def test_joint_torques_equal_rnea_with_actuator_bodies_and_external_forces(example):
    project, design, ev = example
    pd = ev.duty[0]
    masses = np.array([[a.mass for a in design.actuators], [0.0] * len(design.actuators)])
    tau = joint_torques(pd, masses)
    T = pd.trajectory.t.size
    for sample in (0, T // 3, T // 2, T - 1):
        for row in range(2):
            expected = _rnea_reference(project.robot, pd.case, pd.trajectory, masses[row], sample)
            np.testing.assert_allclose(tau[row, :, sample], expected, rtol=1e-9, atol=1e-9)


def _lossless(design):
    acts = []
    for a in design.actuators:
        stages = tuple(
            dataclasses.replace(
                s,
                stage=dataclasses.replace(
                    s.stage, efficiency=ConstantEfficiency(forward=1.0, backward=1.0)
                ),
            )
            for s in a.stages
        )
        acts.append(dataclasses.replace(a, stages=stages))
    return dataclasses.replace(design, actuators=tuple(acts))


def test_gear_losses_are_never_negative_and_vanish_when_frictionless(example):
    project, design, ev = example
    name = ev.duty[0].case.name
    lossy = ev.evaluate(arrays_from_designs([design]))[name]
    ideal = ev.evaluate(arrays_from_designs([_lossless(design)]))[name]
    np.testing.assert_allclose(ideal["transmission_loss"], 0.0, atol=1e-9)
    # the transmission never creates energy, in either power-flow mode (DESIGN.md §2.3)
    assert np.all(lossy["transmission_loss"] >= -1e-9)
    assert np.all(lossy["transmission_loss"].sum() > 0)
    # the link-side work per cycle does not depend on the gears
    np.testing.assert_allclose(lossy["joint_work"], ideal["joint_work"], rtol=1e-9, atol=1e-9)


def test_rating_use_is_the_worst_ratio_and_names_its_joint(example):
    project, design, ev = example
    e = ev.evaluate(arrays_from_designs([design]))[ev.duty[0].case.name]
    ratios = np.stack(
        [
            e[k][0]
            for k in ("rms_ratio", "peak_ratio", "speed_ratio", "envelope_ratio", "thermal_ratio")
        ]
    )
    worst = np.nanmax(ratios, axis=0)
    assert e["rating_use"][0] == pytest.approx(worst.max())
    assert e["limiting_joint"][0] == int(np.argmax(worst))


def test_payload_at_tip_speed_never_exceeds_the_static_payload(example):
    project, design, ev = example
    case = next(c for c in project.cases if c.kind == "payload" and c.motion != "hold")
    fast = dataclasses.replace(project, cases=(dataclasses.replace(case, tip_speed=1.5),))
    slow = dataclasses.replace(project, cases=(case,))
    arrays = arrays_from_designs([design])
    p_fast = Evaluator(fast).evaluate(arrays)[case.name]["payload"][0]
    p_slow = Evaluator(slow).evaluate(arrays)[case.name]["payload"][0]
    assert p_fast <= p_slow + 1e-9
