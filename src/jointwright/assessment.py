"""All metrics of one design, with requirement margins: the result behind ``jointwright assess``."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import asdict, dataclass, field

import numpy as np

from .cautions import (
    contact_heights,
    design_cautions,
    friction_cautions,
    ground_cautions,
    slow_speed_cautions,
    stance_cautions,
)
from .design import Design, arrays_from_designs
from .evaluate import Evaluator
from .metrics.drive import binding_limit, envelope_uses
from .problem import carried_payload, checks, feasible


@dataclass(frozen=True)
class JointSummary:
    joint: str
    actuator: str
    motor: str
    stages: tuple[str, ...]
    ratio: float
    eta_forward: float
    eta_backward: float
    self_locking: bool
    mass: float  # kg
    rotor_inertia: float  # kg·m², motor side
    reflected_frictionless: float  # kg·m², N²·I_r
    reflected_motoring: float
    reflected_backdriven: float  # inf when self-locking
    capacity_motoring: float  # N·m
    capacity_backdriven: float  # N·m (holding while back-driven)
    capacity_frictionless: float
    gear_peak_torque: float
    breakaway_torque: float  # N·m joint side, inf when self-locking
    max_joint_speed: float  # rad/s
    cost: float = 0.0  # catalog currency units (0 when the catalog gives no costs)
    # the motor as its drive feeds it (catalog.drives.fed_motor); without a drive, its own
    drive: str | None = None
    motor_peak_torque: float = math.nan  # N·m, min(motor, Kt·I_peak)
    motor_continuous_torque: float = math.nan  # N·m, min(motor, Kt·I_cont)
    motor_max_speed: float = math.nan  # rad/s, min(motor, V_bus/Kt)
    peak_torque_by: str = "motor"  # "motor" or "drive": whose limit is lower
    continuous_torque_by: str = "motor"
    max_speed_by: str = "motor"
    # efficiency band of the stack (low, high) per direction; equal ends without a band
    eta_forward_band: tuple[float, float] = (math.nan, math.nan)
    eta_backward_band: tuple[float, float] = (math.nan, math.nan)


@dataclass(frozen=True)
class CheckResult:
    subject: str
    requirement: str
    achieved: float
    limit: float
    sense: str
    unit: str | None
    margin: float
    ok: bool
    # with an efficiency band (robust.py): the value and margin at the nominal efficiencies and
    # at the band's worst end; None when no stage of the design states a band
    achieved_nominal: float | None = None
    margin_nominal: float | None = None
    achieved_worst: float | None = None
    margin_worst: float | None = None


@dataclass(frozen=True)
class CaseResult:
    name: str
    kind: str
    metrics: dict  # name -> float (SI)
    limiting_joint: str | None
    joint_modes: dict | None  # payload cases: joint -> motoring / back-driven / holding
    note: str | None = None  # why a payload is 0, in words


@dataclass(frozen=True)
class Assessment:
    project: str
    design: str
    joints: tuple[JointSummary, ...]
    cases: tuple[CaseResult, ...]
    checks: tuple[CheckResult, ...]
    total_mass: float
    total_cost: float
    feasible: bool
    cautions: tuple[str, ...]
    #: "nominal" (no band), "nominal, worst end shown" or "worst end of the band" (robust)
    efficiency: str = "nominal"
    #: cases over a region of poses (jointwright.regions): user case name -> its worst pose
    #: {"index", "case", "margin", "poses", "pose"}; the member cases stay in ``cases``
    regions: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return _jsonable(asdict(self))


def _jsonable(x):
    """JSON-safe: infinities as the strings "inf"/"-inf" (never NaN, never a silent number)."""
    if isinstance(x, dict):
        return {k: _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.floating, float)):
        x = float(x)
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        if math.isnan(x):
            return None
        return x
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    return x


MODE_NAMES = {1: "motoring", -1: "back-driven", 0: "holding"}


def joint_summary(joint: str, a) -> JointSummary:
    return JointSummary(
        joint=joint,
        actuator=a.label(),
        motor=a.motor.name,
        stages=tuple(s.label() for s in a.stages),
        ratio=a.ratio,
        eta_forward=a.eta_forward,
        eta_backward=a.eta_backward,
        self_locking=a.self_locking,
        mass=a.mass,
        rotor_inertia=a.rotor_inertia,
        reflected_frictionless=a.reflected_inertia("frictionless"),
        reflected_motoring=a.reflected_inertia("motoring"),
        reflected_backdriven=a.reflected_inertia("backdriven"),
        capacity_motoring=a.capacity("motoring"),
        capacity_backdriven=a.capacity("backdriven"),
        capacity_frictionless=a.capacity("frictionless"),
        gear_peak_torque=a.gear_peak_torque,
        breakaway_torque=a.breakaway_torque,
        max_joint_speed=a.max_joint_speed,
        cost=a.cost,
        drive=None if a.drive is None else a.drive.name,
        motor_peak_torque=a.fed.peak_torque,
        motor_continuous_torque=a.fed.continuous_torque,
        motor_max_speed=a.fed.max_speed,
        peak_torque_by=a.fed.peak_by,
        continuous_torque_by=a.fed.continuous_by,
        max_speed_by=a.fed.speed_by,
        eta_forward_band=a.efficiency_band[:2],
        eta_backward_band=a.efficiency_band[2:],
    )


def assess(project, design: Design, evaluator: Evaluator | None = None) -> Assessment:
    """Every metric of every case for one design, and every requirement with its margin."""
    evaluator = evaluator or Evaluator(project)
    arrays = arrays_from_designs([design])
    ev = evaluator.evaluate(arrays)
    names = list(project.robot.actuated)
    cases = []
    for case in project.cases:
        if case.name not in ev:
            continue
        metrics, limiting, modes = {}, None, None
        for k, v in ev[case.name].items():
            v = np.asarray(v)
            if k == "limiting_joint":
                idx = int(v.reshape(-1)[0])
                limiting = evaluator.limit_joints[idx] if idx >= 0 else None
            elif k.endswith("_limiting_joint"):
                idx = int(v.reshape(-1)[0])
                metrics[k] = names[idx] if idx >= 0 else None
            elif k in ("contact_force_normal", "friction_use"):
                name = "normal_force" if k == "contact_force_normal" else k
                for (frame, _, _), f in zip(case.contacts, v.reshape(-1), strict=True):
                    metrics[f"{name}:{frame}"] = float(f)
            elif k == "joint_torque":
                tau = v.reshape(-1, len(names))[0]
                metrics.update(
                    {f"joint_torque:{n}": float(t) for n, t in zip(names, tau, strict=True)}
                )
                if case.kind == "payload":
                    modes = _payload_modes(evaluator, case.name, tau)
            elif k == "joint_torque_ratio" and case.kind == "torque":
                metrics.update(
                    {
                        f"torque_ratio:{j}": float(x)
                        for (j, _), x in zip(case.joint_torques, v.reshape(-1), strict=True)
                    }
                )
            elif v.ndim == 2 and v.shape == (1, len(names)):
                metrics.update({f"{k}:{n}": float(x) for n, x in zip(names, v[0], strict=True)})
            elif v.ndim >= 1 and v.shape[0] == 1:
                metrics[k] = v.reshape(-1)[0].item()
        if case.kind in ("payload", "stance") and "payload" in metrics:
            # the robot payload mass this case's force carries (problem.carried_payload), kg
            metrics["payload_carried"] = float(carried_payload(case, metrics["payload"]))
        if case.kind == "speed":
            metrics["envelope_limit"] = _envelope_limit(design, metrics)
        note = _zero_payload_note(project, case, metrics, limiting)
        cases.append(CaseResult(case.name, case.kind, metrics, limiting, modes, note))
    cl = checks(project, arrays, ev)
    robust = project.requirements.efficiency_band
    if arrays.has_band:  # each margin at the nominal efficiencies and at the band's worst end
        efficiency = "worst end of the band" if robust else "nominal, worst end shown"
        cl_nom = checks(project, arrays, evaluator.evaluate(arrays, detail=False, band="nominal"))
        worst_project = dataclasses.replace(
            project,
            requirements=dataclasses.replace(project.requirements, efficiency_band=True),
        )
        worst_ev = evaluator.evaluate(arrays, detail=False, band="worst")
        cl_worst = checks(worst_project, arrays, worst_ev)
        ends = [
            dict(
                achieved_nominal=float(n.achieved[0]),
                margin_nominal=float(n.margin[0]),
                achieved_worst=float(w.achieved[0]),
                margin_worst=float(w.margin[0]),
            )
            for n, w in zip(cl_nom, cl_worst, strict=True)
        ]
    else:
        efficiency = "nominal"
        ends = [{} for _ in cl]
    results = tuple(
        CheckResult(
            c.subject,
            c.name,
            float(c.achieved[0]),
            c.limit,
            c.sense,
            c.unit,
            float(c.margin[0]),
            bool(c.ok[0]),
            **e,
        )
        for c, e in zip(cl, ends, strict=True)
    )
    return Assessment(
        project=project.name,
        design=design.name,
        joints=tuple(joint_summary(j, a) for j, a in zip(names, design.actuators, strict=True)),
        cases=tuple(cases),
        checks=results,
        total_mass=design.mass,
        total_cost=design.cost,
        feasible=bool(feasible(cl, 1)[0]),
        cautions=tuple(
            design_cautions(project, design)
            + friction_cautions(cases)
            + slow_speed_cautions(cases)
            + stance_cautions(project, cases)
            + ground_cautions(contact_heights(evaluator))
        ),
        efficiency=efficiency,
        regions=_regions(project, results),
    )


def _envelope_limit(design, metrics: dict) -> str | None:
    """At a speed case's steady loaded speed: the joint whose motor is at its envelope, the
    part of the envelope it is on and whether the motor or its drive sets that part
    (metrics.drive), as "joint: part"; None without the operating points."""
    best = None
    for joint, a in zip(design.joints, design.actuators, strict=True):
        tau, w = metrics.get(f"motor_torque:{joint}"), metrics.get(f"motor_speed:{joint}")
        if tau is None or w is None or not (math.isfinite(tau) and math.isfinite(w)):
            continue
        m, fed = a.motor, a.fed
        electrical = None not in (m.torque_constant, m.resistance, fed.bus_voltage)
        uses = envelope_uses(
            tau,
            w,
            peak_torque=fed.peak_torque,
            max_speed=fed.max_speed,
            torque_constant=m.torque_constant if electrical else None,
            resistance=m.resistance if electrical else None,
            bus_voltage=fed.bus_voltage if electrical else None,
            winding_temperature=m.winding_temperature_max,
        )
        top = max(uses.values())
        if best is None or top > best[0] + 1e-9:
            best = (top, f"{joint}: {binding_limit(uses, fed, a.drive is not None)}")
    return None if best is None else best[1]


def _regions(project, results) -> dict:
    """The worst pose of each region case: the lowest smallest-margin over its poses."""
    from .regions import worst_poses

    if not any(c.region for c in project.cases):
        return {}
    margins: dict[str, float] = {}
    for r in results:
        margins[r.subject] = min(margins.get(r.subject, math.inf), r.margin)
    out = worst_poses(project.cases, margins)
    for info in out.values():
        info["pose"] = dict(project.case(info["case"]).pose)
    return out


def _zero_payload_note(project, case, metrics: dict, limiting: str | None) -> str | None:
    """Why a payload, stance or speed case carries nothing, in words (None when it carries)."""
    robot = project.robot
    if case.kind == "speed":
        if metrics.get("carries_load", True):
            return None
        if limiting in robot.free:
            return (
                f"free joint {limiting} would have to carry torque to hold this load; a free "
                "joint holds none (make it held or actuated, or change the pose)"
            )
        return "the joints cannot carry this load at this pose, even at rest"
    if case.kind not in ("payload", "stance") or metrics.get("payload") != 0.0:
        return None
    if (
        case.kind == "payload"
        and getattr(case, "tip_speed", 0.0) > 0
        and limiting in robot.actuated
        and metrics.get("self_supporting", True) is False
    ):
        return (
            f"at a tip speed of {case.tip_speed:g} m/s joint {limiting}'s motor runs out of torque "
            "on its torque-speed line (or past its top speed) before it holds the robot's own "
            "weight: lower the tip speed or give that joint more speed"
        )
    if limiting in robot.free:
        return (
            f"free joint {limiting} would have to carry torque to hold this load at this pose; a "
            "free joint holds none (make it held or actuated, or change the pose)"
        )
    if not metrics.get("self_supporting", True):
        if case.kind == "stance" and metrics.get("holds_without_share", False):
            return (
                f"with every contact taking at least {case.contact_share_min:g} of the ground "
                "force the robot cannot hold itself, though its joints hold it without that "
                "share: the centre of mass lies too near the edge of the support for this "
                "share (lower contact_share_min, or shift the pose over the support)"
            )
        if case.kind == "stance" and not metrics.get("holds_with_unlimited_torque", True):
            free = (
                f", or a free joint ({', '.join(robot.free)}) would need torque"
                if robot.free
                else ""
            )
            return (
                "no contact forces inside the friction cones hold the robot even with unlimited "
                "joint torque: the centre of mass is outside the support, or a contact would have "
                f"to pull or slip{free}"
            )
        who = f": joint {limiting} runs out of torque first" if limiting else ""
        return f"the actuators cannot hold the robot's own weight at this pose{who}"
    if limiting:
        return f"joint {limiting} is at its torque limit before any load is added"
    return "the load direction cannot be resisted at this pose (the joints cannot push along it)"


def _payload_modes(evaluator: Evaluator, case_name: str, tau: np.ndarray) -> dict:
    pc = next(p for p in evaluator.cases if p.case.name == case_name)
    sign = pc.velocity_sign
    power = np.sign(tau) * sign
    return {j: MODE_NAMES[int(p)] for j, p in zip(evaluator.robot.actuated, power, strict=True)}


def unloaded_joints(project, evaluator: Evaluator | None = None) -> tuple[str, ...]:
    """Actuated joints that no case loads: sized against nothing but their own limits.

    A payload or stance case loads joint i when the case's force reaches it
    (|J_iᵀ·u| > 0) or the links' weight does (|g_0,i| > 0) at the case's pose; a speed case when
    the links' weight or the force its tip exerts (the payload's weight, ``tip_force``) does
    (it carries them along the motion); a torque case every joint it
    requires a non-zero torque of; a duty cycle every joint it moves or whose links' weight it
    carries. Impact cases load none (they set inertia, not torque), nor do back-drive cases (an
    upper limit on breakaway). Thresholds: 1e-9 of the largest term of the case.
    """
    evaluator = evaluator or Evaluator(project)
    names = project.robot.actuated
    loaded = np.zeros(len(names), dtype=bool)
    for pc in evaluator.cases:
        if pc.case.kind not in ("payload", "stance", "speed"):
            continue
        g = np.abs(np.asarray(pc.basis.g0)[evaluator.v_index])
        if pc.case.kind == "speed":  # the force the tip exerts: the payload's weight, tip_force
            c = pc.case
            force = c.payload_mass * -np.asarray(evaluator.robot.gravity, dtype=float)
            terms = (g, np.abs(pc.Jj.T @ (force + np.asarray(c.tip_force, dtype=float))))
        else:
            terms = (np.abs(pc.Jj.T @ pc.u), g)
        for term in terms:
            loaded |= term > 1e-9 * max(float(term.max(initial=0.0)), 1e-300)
    for case in evaluator.torque_cases:
        required = dict(case.joint_torques)
        loaded |= np.array([required.get(n, 0.0) != 0.0 for n in names])
    for pd in evaluator.duty:  # torques of the links' motion and weight, (n_act, T)
        peak = np.abs(np.asarray(pd.tau_links)).max(axis=-1)
        loaded |= peak > 1e-9 * max(float(peak.max(initial=0.0)), 1e-300)
        loaded |= np.abs(np.asarray(pd.qd)).max(axis=-1) > 0
    return tuple(n for n, ok in zip(names, loaded, strict=True) if not ok)
