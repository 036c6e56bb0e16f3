"""The one physics oracle: every metric of every case for many designs in one numpy call.

Per case the pose terms are computed once (:mod:`jointwright.robot.basis`); a design's gravity
and mass matrix are then multiply-adds over its actuator masses and reflected inertias, and the
metrics come from the pure functions in :mod:`jointwright.metrics`.

Payload cases treat the base as held (the limb's own payload: the tip force it can exert with the
body supported); impact cases free the base (floating robots) so that the impact mitigation
factor exists. Power-flow modes per case:

* payload: each joint's mode follows the sign of τ_j·q̇_j with q̇ from the intended end-point
  motion (``motion`` = along / against the force, or hold). ``payload_frictionless`` uses N·τ_m.
* impact: the link drives the motors — back-driven reflected inertia N²·I_r/η_b (self-locking
  joints are locked); the frictionless (N²·I_r) values are shown too, and the forward-driving
  effective mass (the motors drive the contact: E_f⁻¹·M + R by each joint's power flow).
* backdrive: unpowered robot, joint-side breakaway torques, gravity held.
* speed: end-point speed along u while the joints carry the case's load (gravity, payload mass,
  commanded acceleration), each motor inside its torque–speed envelope (hot winding) in its
  joint's power-flow mode; the acceleration from rest with the load; the no-load figure
  (motor maximum speed / N) only as ``speed_no_load``.
* duty: per sample, from the sign of τ_j·q̇ along the trajectory (:mod:`jointwright.dutycase`).

Joints that are not actuated (docs/robot-format.md): a *held* joint never moves and its torque
goes to the structure — it sets no payload limit, joins the locked set of an impact and never
yields to a back-drive push; a *free* joint carries no torque — a payload or stance case must
leave it unloaded (else the robot cannot hold the load: payload 0 with that joint limiting), it
moves freely in an impact (no reflected inertia) and yields to any back-drive push. Speed and
duty cycles move the actuated joints only; held and free joints stay at their pose position.
"""

from __future__ import annotations

import os
import threading
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field, fields
from typing import Any, cast

import numpy as np

from .design import DesignArrays
from .dutycase import evaluate_duty, prepare_duty
from .metrics.backdrive import backdrive_force
from .metrics.contact_safety import transient_contact
from .metrics.gear_shock import gear_shock_torque, link_velocity_step
from .metrics.impact_fused import (
    FusedImpact,
    entries_batch_last,
    impact_fused,
    mass_matrix_entries,
)
from .metrics.inertia import effective_mass, forward_effective_mass, impact_mitigation
from .metrics.linalg_small import inv_small
from .metrics.loads import MOTION_SIGN, torque_of_moment, torque_per_force, torque_ratio
from .metrics.payload import payload_along, torque_bounds
from .metrics.speed import (
    acceleration_from_rest,
    endpoint_speed,
    loaded_endpoint_speed,
    payload_at_speed,
    speed_within_stroke,
)
from .project import Case
from .robot.basis import PoseBasis, gravity, mass_matrix, pose_basis
from .robust import ends_for, worst_of

#: joint velocity components below this fraction of the largest count as zero (holding)
VELOCITY_TOLERANCE = 1e-9
#: designs per call of the fused impact kernel (its entry rows stay in the core's cache)
IMPACT_CHUNK = 4096
#: threads that share a batch of designs, or the chunks of the fused impact kernel (numpy
#: releases the GIL inside its loops); 1, the default, runs everything on the calling thread:
#: two threads did not pay on the shared 2-core machine (docs/benchmarks.md)
THREADS = 1
_POOL: dict[int, ThreadPoolExecutor] = {}  # per process id: a forked child makes its own
#: batches of at least this many designs are evaluated on THREADS threads
PARALLEL_MIN = 2048
_LOCAL = threading.local()


def _join(values: list, sizes: list[int]) -> Any:
    """Per-design results of consecutive design slices joined along the design axis."""
    per_design = all(
        isinstance(v, np.ndarray) and v.ndim and v.shape[0] == n
        for v, n in zip(values, sizes, strict=True)
    )
    return np.concatenate(cast(list[np.ndarray], values), axis=0) if per_design else values[0]


def _pool() -> ThreadPoolExecutor:
    pid = os.getpid()
    if pid not in _POOL:
        _POOL.clear()
        _POOL[pid] = ThreadPoolExecutor(THREADS, thread_name_prefix="jointwright-eval")
    return _POOL[pid]


#: a free joint's gravity torque at or below this is rounding, taken as 0 (N·m or N)
FREE_JOINT_TOLERANCE = 1e-9


@dataclass(frozen=True, eq=False)
class PreparedCase:
    """Pose terms of one case, computed once."""

    case: Case
    basis: PoseBasis
    J: np.ndarray  # (3, nv) tip point Jacobian, world axes
    Jj: np.ndarray  # (3, n_act) columns of the actuated joints
    u: np.ndarray  # (3,) unit direction (zeros for a case without one: duty, stance)
    velocity_sign: np.ndarray  # (n_act,) for payload and stance cases
    contact_J: np.ndarray | None = None  # stance: (k, 3, nv) contact point Jacobians
    #: speed cases: (1 + n_act, n_act) Coriolis and centrifugal torques at the actuated joints per
    #: (end-point speed)², links only (row 0) and per kg of each actuator's mass (rows 1...)
    speed_terms: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    #: payload and stance cases with a ``moment`` or ``offset`` (metrics.loads): joint torques
    #: per newton of the case's force, (nv,), and the fixed moment's joint torques, (nv,)
    load_a: np.ndarray | None = None
    tau_fixed: np.ndarray | None = None


class Evaluator:
    """Prepares the cases of a project once and evaluates batches of designs.

    Parameters
    ----------
    project : Project
    """

    #: impact cases of floating-base robots through metrics.impact_fused (False: the generic
    #: metrics.inertia.impact_mitigation path, kept as the reference)
    fused_impact: bool = True

    def __init__(self, project):
        self.project = project
        robot = project.robot
        self.robot = robot
        self.floating = robot.n_base == 6
        self.v_index = np.asarray(robot.v_index)
        # joints not actuated: held ones take any torque (structure, brake) and never move;
        # free ones take none and move
        self.free_index = np.array(
            [robot.joint_v_index[robot.joint_names.index(j)] for j in robot.free], dtype=int
        )
        self.held_index = np.array(
            [robot.joint_v_index[robot.joint_names.index(j)] for j in robot.held], dtype=int
        )
        #: joints a limiting-joint index of a payload or back-drive result refers to
        self.limit_joints = tuple(robot.actuated) + tuple(robot.free)
        self.cases = tuple(
            self._prepare(c) for c in project.cases if c.kind not in ("duty", "torque")
        )
        #: joint-space cases (required torque per joint): no pose terms
        self.torque_cases = tuple(c for c in project.cases if c.kind == "torque")
        self.duty = tuple(
            prepare_duty(robot, c, str(project.file)) for c in project.cases if c.kind == "duty"
        )

    def _prepare(self, case) -> PreparedCase:
        robot = self.robot
        q = robot.configuration(
            case.pose,
            case.base_xyz,
            case.base_rpy,
            file=str(self.project.file),
            field=f"case {case.name}.pose",
        )
        contact_frames = [c[0] for c in case.contacts]
        basis = pose_basis(robot, q, [case.frame] + contact_frames)
        J = basis.J[0, :3, :]
        Jj = J[:, self.v_index]
        u = np.asarray(case.direction if case.direction is not None else (0.0, 0.0, 0.0), float)
        sign = np.zeros(len(self.v_index))
        if case.kind == "payload" and case.motion != "hold":
            qd = np.linalg.pinv(Jj) @ u
            qd = qd if case.motion == "along" else -qd
            big = np.abs(qd).max() if qd.size else 0.0
            sign = np.where(np.abs(qd) > VELOCITY_TOLERANCE * max(big, 1e-300), np.sign(qd), 0.0)
        contact_J = basis.J[1:, :3, :] if case.kind == "stance" else None
        if case.kind == "stance" and case.motion != "hold":
            sign = _stance_velocity_sign(contact_J, J, u, case.motion, self.v_index)
        speed_terms = _speed_terms(robot, q, Jj, u) if case.kind == "speed" else np.zeros((0, 0))
        load_a = tau_fixed = None
        if case.kind in ("payload", "stance") and case.has_wrench:
            J6 = basis.J[0]
            load_a = torque_per_force(J6, u, case.offset)
            tau_fixed = torque_of_moment(J6, case.moment)
        return PreparedCase(
            case=case,
            basis=basis,
            J=J,
            Jj=Jj,
            u=u,
            velocity_sign=sign,
            contact_J=contact_J,
            speed_terms=speed_terms,
            load_a=load_a,
            tau_fixed=tau_fixed,
        )

    # ------------------------------------------------------------------------------------------
    def evaluate(
        self, d: DesignArrays, *, detail: bool = True, band: str | None = None
    ) -> dict[str, dict[str, np.ndarray]]:
        """Metrics per case name: dict of arrays with leading dimension D (designs).

        ``detail=False`` computes only what requirements and objectives use (the case's own
        power-flow mode); ``True`` adds the other modes and the frictionless comparison.
        ``band``: "nominal" (the stages' nominal efficiencies) or "worst" (each metric at the
        worst end of the stacks' efficiency bands, :mod:`jointwright.robust`); by default
        "worst" when the project's requirements hold across the band, else "nominal".
        A batch of at least :data:`PARALLEL_MIN` designs is split between :data:`THREADS`
        threads (every design's metrics are its own, so the result is the same).
        """
        if band is None:
            band = "worst" if self.project.requirements.efficiency_band else "nominal"
        if THREADS > 1 and d.mass.shape[0] >= PARALLEL_MIN and not _LOCAL.__dict__.get("inner"):
            return self._evaluate_threads(d, detail, band)
        worst = band == "worst" and d.has_band
        out = {}
        for pc in self.cases + self.duty:
            kind = pc.case.kind
            if not worst:
                out[pc.case.name] = self._case(pc, d, detail)
                continue
            ends = ends_for(kind, detail, pc.case)
            out[pc.case.name] = worst_of(
                kind, [self._case(pc, d.at_band(f, b), detail) for f, b in ends]
            )
        for case in self.torque_cases:  # at (η_f low, η_b high) when robust: least capacity
            out[case.name] = self._torque(case, d.at_band("low", "high") if worst else d)
        return out

    def _evaluate_threads(
        self, d: DesignArrays, detail: bool, band: str
    ) -> dict[str, dict[str, np.ndarray]]:
        """:meth:`evaluate` on :data:`THREADS` slices of the designs at once (numpy releases the
        GIL inside its loops, so the slices share the cores), results joined in order."""
        D = d.mass.shape[0]
        cuts = np.linspace(0, D, THREADS + 1).astype(int)
        parts = [d.take(slice(a, b)) for a, b in zip(cuts[:-1], cuts[1:], strict=True)]

        def run(part: DesignArrays) -> dict[str, dict[str, np.ndarray]]:
            _LOCAL.inner = True
            try:
                return self.evaluate(part, detail=detail, band=band)
            finally:
                _LOCAL.inner = False

        results = list(_pool().map(run, parts))
        sizes = [p.mass.shape[0] for p in parts]
        return {
            name: {key: _join([r[name][key] for r in results], sizes) for key in results[0][name]}
            for name in results[0]
        }

    def _case(self, pc, d: DesignArrays, detail: bool) -> dict[str, np.ndarray]:
        kind = pc.case.kind
        if kind == "payload":
            return self._payload(pc, d, detail)
        if kind == "stance":
            return self._stance(pc, d, detail)
        if kind == "impact":
            return self._impact(pc, d, detail)
        if kind == "backdrive":
            return self._backdrive(pc, d)
        if kind == "speed":
            return self._speed(pc, d, detail)
        return evaluate_duty(pc, d, detail=detail)

    def _payload(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """Tip force along u for three intended motions and with a frictionless transmission.

        ``payload_raise``: the tip moves along its force (pushing, lifting); ``payload_lower``:
        the tip yields (lowering, absorbing); ``payload_hold``: static, holding capacity both
        ways. ``payload`` is the one the case's ``motion`` names.
        """
        g = gravity(pc.basis, d.mass)
        if pc.tau_fixed is not None:  # the case's fixed moment loads the joints like gravity
            g = g + pc.tau_fixed
        bias = g[..., self.v_index]
        cap_m, cap_b = d.capacity("motoring"), d.capacity("backdriven")
        if pc.case.tip_speed > 0:
            cap_m, cap_b = self.capacity_at_speed(pc, d)
        a = pc.Jj.T @ pc.u if pc.load_a is None else pc.load_a[self.v_index]
        # velocity_sign already points the way the case moves; flip it for the opposite motion
        along = pc.velocity_sign if pc.case.motion != "against" else -pc.velocity_sign
        own = {"along": "raise", "against": "lower", "hold": "hold"}[pc.case.motion]
        Jx, bias_x = self._with_free(pc, g, bias)
        ray = pc.u
        if pc.load_a is not None:  # a wrench: the ray is τ_bias + s·a, one row a per newton
            Jx = np.concatenate([a, pc.load_a[self.free_index]])[None, :]
            ray = np.ones(1)
        results = {}
        for label, s in (("raise", along), ("lower", -along), ("hold", np.zeros_like(along))):
            if detail or label == own:
                lo, hi = torque_bounds(np.broadcast_to(s, bias.shape), cap_m, cap_b)
                lo, hi = self._free_bounds(lo, hi)
                results[label] = payload_along(Jx, bias_x, lo, hi, ray)
        main = results[own]
        out = {
            "payload": main.force,
            "limiting_joint": main.limiting_joint,
            "self_supporting": main.feasible,
        }
        if detail:
            cap_0 = d.capacity("frictionless")
            lo0, hi0 = self._free_bounds(-cap_0, cap_0)
            out["payload_frictionless"] = payload_along(Jx, bias_x, lo0, hi0, ray).force
            for label in ("raise", "lower", "hold"):
                out[f"payload_{label}"] = results[label].force
            force = np.where(np.isfinite(main.force), main.force, 0.0)
            out["joint_torque"] = bias + force[..., None] * a
        return out

    def _torque(self, case, d: DesignArrays) -> dict[str, np.ndarray]:
        """A joint-space case: per named joint, its capacity in the case's power-flow mode over
        the required torque (metrics.loads.torque_ratio); the smallest ratio and its joint."""
        names = list(self.robot.actuated)
        cols = np.array([names.index(j) for j, _ in case.joint_torques], dtype=int)
        tau = np.array([v for _, v in case.joint_torques])
        sigma = np.array([MOTION_SIGN[m] for _, m in case.joint_motions])
        r = torque_ratio(
            tau, sigma, d.capacity("motoring")[..., cols], d.capacity("backdriven")[..., cols]
        )
        worst = np.min(r, axis=-1)
        return {
            "torque_ratio": worst,
            "limiting_joint": np.where(np.isfinite(worst), cols[np.argmin(r, axis=-1)], -1),
            "joint_torque_ratio": r,
        }

    def _free_gravity(self, g: np.ndarray) -> np.ndarray:
        """Gravity torques of the free joints from the full vector ``g``; rounding taken as 0."""
        g_free = g[..., self.free_index]
        return np.where(np.abs(g_free) <= FREE_JOINT_TOLERANCE, 0.0, g_free)

    def _with_free(self, pc: PreparedCase, g: np.ndarray, bias: np.ndarray):
        """Tip Jacobian columns and bias torques of the actuated joints, then the free ones
        (``g``: the full gravity vector, already computed)."""
        if not self.free_index.size:
            return pc.Jj, bias
        return (
            np.concatenate([pc.Jj, pc.J[:, self.free_index]], axis=1),
            np.concatenate([bias, self._free_gravity(g)], axis=-1),
        )

    def _free_bounds(self, lo: np.ndarray, hi: np.ndarray):
        """Torque bounds with the free joints appended: a free joint carries no torque."""
        if not self.free_index.size:
            return lo, hi
        zeros = np.zeros(lo.shape[:-1] + (self.free_index.size,))
        return np.concatenate([lo, zeros], axis=-1), np.concatenate([hi, zeros], axis=-1)

    def _stance(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """Robot-level payload on several contacts (second-order cone program per design).

        The load at ``frame`` pushes on the robot with s·(−u); the contacts push with forces in
        their friction cones; each joint's torque stays in its mode-dependent capacity.
        """
        from .metrics.contacts import solve_batch

        g = gravity(pc.basis, d.mass)
        p_jac, p_wrench = pc.J, -pc.u
        if pc.load_a is not None:  # a wrench (metrics.loads): force at the offset, fixed moment
            g = g + pc.tau_fixed
            p_jac = pc.basis.J[0]
            p_wrench = -np.concatenate([pc.u, np.cross(np.asarray(pc.case.offset), pc.u)])
        lo, hi = torque_bounds(
            np.broadcast_to(pc.velocity_sign, d.mass.shape),
            d.capacity("motoring"),
            d.capacity("backdriven"),
        )
        n = lo.shape[-1]
        rows = self.v_index
        if self.held_index.size:  # held joints: rows with any torque (the structure takes it)
            rows = np.concatenate([rows, self.held_index])
            inf = np.full(lo.shape[:-1] + (self.held_index.size,), np.inf)
            lo, hi = np.concatenate([lo, -inf], axis=-1), np.concatenate([hi, inf], axis=-1)
        frames = pc.case.contacts
        res = solve_batch(
            actuated=rows,
            gravity=g,
            contact_jacobians=pc.contact_J,
            normals=np.array([c[2] for c in frames]),
            friction=np.array([c[1] for c in frames]),
            payload_jacobian=p_jac,
            payload_wrench=p_wrench,
            tau_low=lo,
            tau_high=hi,
        )
        lo, hi = lo[..., :n], hi[..., :n]
        ok = res.status == "optimal"
        payload = np.where(ok, np.nan_to_num(res.payload, nan=0.0), 0.0)
        payload = np.where(res.status == "unbounded", np.inf, payload)
        span = np.where(np.isfinite(hi - lo), hi - lo, 1.0)
        tight = np.where(res.torque_at_high[..., :n] | res.torque_at_low[..., :n], 1.0, 0.0)
        limiting = np.where(tight.any(axis=-1), np.argmax(tight / span, axis=-1), -1)
        out = {"payload": payload, "limiting_joint": limiting, "self_supporting": ok}
        if detail:
            if not np.all(ok):  # why not: is it the joints, or the contacts and balance?
                inf = np.full(lo.shape[:-1] + (rows.size,), np.inf)
                rigid = solve_batch(
                    actuated=rows,
                    gravity=g,
                    contact_jacobians=pc.contact_J,
                    normals=np.array([c[2] for c in frames]),
                    friction=np.array([c[1] for c in frames]),
                    payload_jacobian=p_jac,
                    payload_wrench=p_wrench,
                    tau_low=-inf,
                    tau_high=inf,
                )
                out["holds_with_unlimited_torque"] = rigid.status != "infeasible"
            out["contact_force_z"] = res.contact_forces[..., 2]
            out["slipping_contacts"] = res.cone_binding.sum(axis=-1)
            out["joint_torque"] = res.joint_torques[..., :n]
        return out

    def capacity_at_speed(self, pc: PreparedCase, d: DesignArrays):
        """Drive and holding capacity with each motor at the speed the tip motion needs.

        The envelope is taken at the winding temperature limit (hot winding: the conservative
        end); motors without electrical data use the corner-point envelope.
        """
        qd = np.linalg.pinv(pc.Jj) @ pc.u * pc.case.tip_speed
        known = ~(np.isnan(d.torque_constant) | np.isnan(d.resistance) | np.isnan(d.bus_voltage))
        cap = payload_at_speed(
            qd,
            d.ratio,
            eta_f=d.eta_forward,
            eta_b=d.eta_backward,
            gear_rating=d.gear_peak_torque,
            peak_torque=d.motor_peak_torque,
            max_speed=d.motor_max_speed,
            torque_constant=np.where(known, d.torque_constant, 1.0),
            resistance=np.where(known, d.resistance, 1.0),
            bus_voltage=np.where(known, d.bus_voltage, np.inf),
            winding_temperature=d.winding_temperature_max,
        )
        hold = np.where(d.self_locking, d.gear_peak_torque, cap.backdriven)
        return cap.forward, hold

    def _impact(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """Inertia at the contact per power-flow direction (docs/metrics.md).

        Back-driven (the impact drives the motors): M + N²·I_r/η_b, self-locking joints locked;
        frictionless: M + N²·I_r; both give the IMF (floating base) and the effective mass.
        Forward-driving (``effective_mass_motoring``: the motors drive the contact): the energy
        reading of E_f⁻¹·M + R per joint power-flow sign (metrics.inertia.forward_effective_mass);
        it has no IMF (an impact back-drives the joints).
        """
        out: dict[str, Any] = {}
        nv = self.robot.nv
        # locked in an impact: held joints always, self-locking transmissions back-driven
        structure = np.zeros(d.self_locking.shape[:-1] + (nv,), dtype=bool)
        structure[..., self.held_index] = True
        locked = structure.copy()
        locked[..., self.v_index] = d.self_locking
        if detail:
            out["effective_mass_motoring"] = self._forward_effective_mass(pc, d)
        for mode in ("frictionless", "backdriven") if detail else ("backdriven",):
            refl = d.reflected_inertia(mode)
            refl = np.where(np.isfinite(refl), refl, 0.0)
            lock = locked if mode == "backdriven" else structure
            suffix = "" if mode == "backdriven" else f"_{mode}"
            if self.floating and self.fused_impact and pc.J.shape[0] <= 3:
                out.update(self._impact_fused(pc, d, refl, lock, suffix))
                continue
            H = mass_matrix(
                pc.basis,
                d.mass,
                refl,
                rotor_inertia=d.rotor_inertia,
                ratio=d.ratio,
                coupling=self.project.rotor_coupling,
            )
            if self.floating:
                J = np.broadcast_to(pc.J, H.shape[:-2] + pc.J.shape)
                imf = impact_mitigation(H, J, 6, lock[..., 6:], direction=pc.u)
                out["imf" + suffix] = imf.imf
                out["imf_restricted" + suffix] = imf.imf_restricted
                out["imf_direction" + suffix] = imf.imf_direction
                out["contact_rank" + suffix] = imf.rank
                out["effective_mass" + suffix] = 1.0 / np.einsum(
                    "i,...ij,j->...", pc.u, inv_small(imf.Lambda), pc.u
                )
            else:
                out["effective_mass" + suffix] = _effective_mass_locked(pc.J, H, pc.u, lock)
        region = getattr(pc.case, "body_region", None)
        if region is not None:  # a person struck along the case direction (back-driven robot)
            force, stiffness, body = region
            contact = transient_contact(out["effective_mass"], body, stiffness, force)
            out["contact_speed"] = contact.speed
            if detail:
                out["contact_energy"] = contact.energy
        if getattr(pc.case, "impact_speed", 0.0) > 0:
            out.update(self._gear_shock(pc, d, structure))
        return out

    def _gear_shock(self, pc: PreparedCase, d: DesignArrays, structure) -> dict[str, np.ndarray]:
        """Peak gear torque per joint at the impact and its use of the momentary rating
        (metrics/gear_shock.py): the links take the impulse with the rotors still, then each
        gear spring meets the joint's velocity step. Held joints are structure."""
        M = mass_matrix(pc.basis, d.mass, np.zeros_like(d.mass))
        impulse, dq = link_velocity_step(
            pc.J, M, pc.u, pc.case.impact_speed, pc.case.restitution, structure
        )
        # direct drive: momentary rating inf (no gear); an unrated stage: NaN (use unknown)
        has_gear = ~np.isposinf(d.gear_momentary_torque)
        torque = gear_shock_torque(
            dq[..., self.v_index],
            d.stiffness,
            d.reflected_inertia("backdriven"),
            d.self_locking,
            has_gear,
        )
        with np.errstate(invalid="ignore", divide="ignore"):
            use = np.where(has_gear, torque / d.gear_momentary_torque, 0.0)
        worst = np.where(np.isnan(use), np.inf, use)
        j = np.argmax(worst, axis=-1)
        return {
            "shock_use": np.take_along_axis(worst, j[..., None], axis=-1)[..., 0],
            "shock_limiting_joint": j,
            "impulse": impulse,
            "shock_torque": torque,
            "shock_use_joint": use,
            "shock_joint_speed": dq[..., self.v_index],
        }

    def _impact_fused(
        self, pc: PreparedCase, d: DesignArrays, refl: np.ndarray, lock: np.ndarray, suffix: str
    ) -> dict[str, np.ndarray]:
        """The floating-base fields of :meth:`_impact` for one mode through the fused kernel
        (metrics.impact_fused; equal to the generic path to round-off), designs in chunks of
        :data:`IMPACT_CHUNK`, the chunks shared between :data:`THREADS` threads."""
        D = d.mass.shape[0]
        n_base = self.robot.n_base
        coupling = self.project.rotor_coupling
        basis = cast(PoseBasis, pc.basis)

        def run(sl: slice) -> FusedImpact:
            if coupling:
                H = mass_matrix(
                    basis,
                    d.mass[sl],
                    refl[sl],
                    rotor_inertia=d.rotor_inertia[sl],
                    ratio=d.ratio[sl],
                    coupling=True,
                )
                h = entries_batch_last(np.ascontiguousarray(np.moveaxis(H, 0, -1)))
            else:
                h = mass_matrix_entries(basis.M0, basis.M_mass, d.mass[sl], basis.v_index, refl[sl])
            return impact_fused(h, pc.J, n_base, lock[sl, n_base:], cast(np.ndarray, pc.u))

        slices = [slice(s, min(s + IMPACT_CHUNK, D)) for s in range(0, D, IMPACT_CHUNK)]
        if THREADS > 1 and len(slices) > 1 and not _LOCAL.__dict__.get("inner"):
            parts = list(_pool().map(run, slices))
        else:
            parts = [run(sl) for sl in slices]
        res = {
            f.name: np.concatenate([getattr(r, f.name) for r in parts]) for f in fields(FusedImpact)
        }
        return {
            "imf" + suffix: res["imf"],
            "imf_restricted" + suffix: res["imf_restricted"],
            "imf_direction" + suffix: res["imf_direction"],
            "contact_rank" + suffix: res["rank"],
            "effective_mass" + suffix: 1.0 / res["mobility"],
        }

    def _forward_effective_mass(
        self, pc: PreparedCase, d: DesignArrays, directions: np.ndarray | None = None
    ) -> np.ndarray:
        """Forward-driving effective mass (metrics.inertia.forward_effective_mass) along the
        case direction for D designs, (D,); or, for one design, along each of ``directions``
        (k, 3), (k,)."""
        coupling = self.project.rotor_coupling
        M = mass_matrix(pc.basis, d.mass, np.zeros_like(d.mass))
        H0 = mass_matrix(
            pc.basis,
            d.mass,
            d.reflected_inertia("frictionless"),
            rotor_inertia=d.rotor_inertia,
            ratio=d.ratio,
            coupling=coupling,
        )
        nv = M.shape[-1]
        ef = np.ones(d.mass.shape[:-1] + (nv,))
        eb = np.ones_like(ef)
        ef[..., self.v_index] = d.eta_forward
        eb[..., self.v_index] = d.eta_backward
        R = H0 - M
        J = np.broadcast_to(pc.J, M.shape[:-2] + pc.J.shape)
        if self.held_index.size:  # held joints do not move: their coordinates leave the problem
            keep = np.setdiff1d(np.arange(nv), self.held_index)
            M, R = M[..., keep[:, None], keep], R[..., keep[:, None], keep]
            J, ef, eb = J[..., keep], ef[..., keep], eb[..., keep]
        u = pc.u
        if directions is not None:  # one design, several directions
            u = np.asarray(directions, dtype=float)
            k = u.shape[0]
            M, R, J, ef, eb = (np.broadcast_to(x[0], (k,) + x.shape[1:]) for x in (M, R, J, ef, eb))
        return forward_effective_mass(J, M, R, ef, eb, u).mass

    def _backdrive(self, pc: PreparedCase, d: DesignArrays) -> dict[str, np.ndarray]:
        # free joints start moving under any torque; held ones never do
        Jx, breakaway = pc.Jj, d.breakaway_torque
        if self.free_index.size:
            Jx = np.concatenate([pc.Jj, pc.J[:, self.free_index]], axis=1)
            breakaway = np.concatenate(
                [breakaway, np.zeros(breakaway.shape[:-1] + (self.free_index.size,))], axis=-1
            )
        r = backdrive_force(Jx, breakaway, pc.u)
        return {"backdrive_force": r.force, "limiting_joint": r.limiting_joint}

    def _speed(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """End-point speed along u under the case's load, acceleration from rest, no-load speed.

        Load: gravity of links and actuators, the payload mass at the frame (its weight and, with
        ``acceleration``, its inertia), the force the tip exerts (``tip_force``), M·q̈ for the
        commanded end-point acceleration and the Coriolis and centrifugal torques of links and
        actuators (base held, as for payload cases; the joints move along q̇ = J⁺·u·v,
        q̈ = J⁺·u·acceleration). Motors: torque–speed envelope at the hot winding (corner-point
        envelope without electrical data), each joint in its power-flow mode. With ``stroke``,
        ``speed`` is the speed reached from rest within it (metrics.speed.speed_within_stroke).
        """
        case = pc.case
        n_act = len(self.v_index)
        zeros = np.zeros_like(d.mass)
        M = mass_matrix(pc.basis, d.mass, zeros)[..., self.v_index[:, None], self.v_index]
        a = np.linalg.pinv(pc.Jj) @ pc.u
        g_vec = self.robot.gravity
        weight = case.payload_mass * (-g_vec)  # force the tip exerts to carry the payload, N
        g = gravity(pc.basis, d.mass)
        tau_rest = g[..., self.v_index] + pc.Jj.T @ (
            weight + np.asarray(case.tip_force, dtype=float)
        )
        tau_per_acc = M @ a + case.payload_mass * (pc.Jj.T @ pc.u)
        acc = case.acceleration
        known = ~(np.isnan(d.torque_constant) | np.isnan(d.resistance) | np.isnan(d.bus_voltage))
        motor = dict(
            peak_torque=d.motor_peak_torque,
            max_speed=d.motor_max_speed,
            torque_constant=np.where(known, d.torque_constant, 1.0),
            resistance=np.where(known, d.resistance, 1.0),
            bus_voltage=np.where(known, d.bus_voltage, np.inf),
            winding_temperature=d.winding_temperature_max,
        )
        trans = dict(
            eta_f=d.eta_forward,
            eta_b=d.eta_backward,
            rotor_inertia=d.rotor_inertia,
            gear_rating=d.gear_peak_torque,
        )
        c2 = pc.speed_terms[0] + d.mass @ pc.speed_terms[1:]
        loaded = loaded_endpoint_speed(
            pc.Jj,
            tau_rest + acc * tau_per_acc,
            pc.u,
            d.ratio,
            tau_per_speed2=c2,
            joint_acceleration=np.broadcast_to(a * acc, (n_act,)),
            **trans,
            **motor,
        )
        accel = acceleration_from_rest(
            pc.Jj, tau_rest, tau_per_acc, pc.u, d.ratio, **trans, **motor
        )
        speed, limiting = loaded.speed, loaded.limiting_joint
        extra = {}
        if case.stroke > 0:
            within = speed_within_stroke(
                pc.Jj,
                tau_rest,
                tau_per_acc,
                pc.u,
                d.ratio,
                case.stroke,
                tau_per_speed2=c2,
                **trans,
                **motor,
            )
            speed, limiting = within.speed, within.limiting_joint
            extra = {"speed_steady": loaded.speed, "stroke_time": within.time}
        carries = loaded.carries_load
        if self.free_index.size:
            # a free joint carries no torque: a load that needs torque there cannot be carried
            # (the motion is held still at the free joints; their weight and the load's share)
            Jf = pc.J[:, self.free_index]
            tau_free = self._free_gravity(g) + Jf.T @ (
                weight + np.asarray(case.tip_force, dtype=float)
            )
            stuck = np.any(np.abs(tau_free) > FREE_JOINT_TOLERANCE, axis=-1)
            carries = carries & ~stuck
            speed = np.where(stuck, 0.0, speed)
            accel_value = np.where(stuck, 0.0, accel.acceleration)
            limiting = np.where(
                stuck, len(self.v_index) + np.argmax(np.abs(tau_free), axis=-1), limiting
            )
        else:
            accel_value = accel.acceleration
        out = {
            "speed": speed,
            "limiting_joint": limiting,
            **extra,
            "carries_load": carries,
            "acceleration": accel_value,
            "acceleration_limiting_joint": accel.limiting_joint,
        }
        if detail:
            out["speed_no_load"] = endpoint_speed(pc.Jj, d.motor_max_speed / d.ratio, pc.u).speed
            out["motor_torque"] = loaded.motor_torque
            out["motor_speed"] = loaded.motor_speed
        return out


def _speed_terms(robot, q, Jj, u) -> np.ndarray:
    """Coriolis and centrifugal torques c(q, a) at the actuated joints for joint rates a = J⁺·u
    (one unit of end-point speed along u, base at rest), links only and per kg of each
    actuator: c is linear in the inertial parameters, so c(m) = c_0 + Σ_k m_k·(c(e_k) − c_0)."""
    import pinocchio as pin

    a = np.linalg.pinv(Jj) @ u
    v = np.zeros(robot.nv)
    v[np.asarray(robot.v_index)] = a

    def coriolis(masses):
        model = robot.with_actuator_masses(masses)
        data = model.createData()
        c = pin.nonLinearEffects(model, data, q, v) - pin.computeGeneralizedGravity(model, data, q)
        return np.asarray(c)[np.asarray(robot.v_index)]

    n = robot.n_act
    base = coriolis(np.zeros(n))
    rows = [base] + [coriolis(np.eye(n)[k]) - base for k in range(n)]
    return np.array(rows)


def _stance_velocity_sign(contact_J, J, u, motion, v_index) -> np.ndarray:
    """Joint velocity signs when the load point moves along u (``along``) or against it, with
    every contact point fixed: minimum-norm solution of [J_c; J_p]·q̇ = [0; ±u]."""
    A = np.concatenate([contact_J.reshape(-1, contact_J.shape[-1]), J], axis=0)
    b = np.concatenate([np.zeros(contact_J.shape[0] * 3), u if motion == "along" else -u])
    qd = np.linalg.lstsq(A, b, rcond=None)[0][v_index]
    big = np.abs(qd).max() if qd.size else 0.0
    return np.where(np.abs(qd) > VELOCITY_TOLERANCE * max(big, 1e-300), np.sign(qd), 0.0)


def _effective_mass_locked(J, H, u, locked) -> np.ndarray:
    """Effective mass 1/(uᵀ·J·H⁻¹·Jᵀ·u) with locked joints removed (fixed base)."""
    D = H.shape[0]
    out = np.empty(D)
    locked = np.asarray(locked, dtype=bool)
    if locked.shape[1] < 63:  # each row's pattern as one integer: its distinct values
        code = locked @ (np.int64(1) << np.arange(locked.shape[1], dtype=np.int64))
        _, first, which = np.unique(code, return_index=True, return_inverse=True)
        groups = [(locked[f], which == k) for k, f in enumerate(first)]
    else:
        groups = [
            (np.array(pat), np.all(locked == np.array(pat), axis=1))
            for pat in {tuple(row) for row in locked}
        ]
    for pat, rows in groups:
        free = ~np.array(pat, dtype=bool)
        if not free.any():
            out[rows] = np.inf
            continue
        Hs = H[rows][:, free][:, :, free]
        Js = J[:, free]
        out[rows] = effective_mass(np.broadcast_to(Js, (Hs.shape[0],) + Js.shape), Hs, u).mass
    return out
