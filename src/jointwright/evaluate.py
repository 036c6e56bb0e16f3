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
from dataclasses import fields
from typing import Any, cast

import numpy as np

from .design import DesignArrays
from .dutycase import evaluate_duty, prepare_duty
from .impactcase import forward_effective_mass_along, impact_case
from .metrics.backdrive import backdrive_force
from .metrics.impact_fused import (
    FusedImpact,
    entries_batch_last,
    impact_fused,
    mass_matrix_entries,
)
from .metrics.loads import torque_of_moment, torque_per_force
from .payloadcase import (
    VELOCITY_TOLERANCE,
    capacity_at_speed,
    payload_case,
    stance_case,
    stance_velocity_sign,
    torque_case,
)
from .preparedcase import PreparedCase
from .robot.basis import PoseBasis, mass_matrix, pose_basis
from .robust import ends_for, worst_of
from .speedcase import speed_case, speed_terms

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


class Evaluator:
    """Prepares the cases of a project once and evaluates batches of designs.

    Parameters
    ----------
    project : Project
    """

    #: impact cases of floating-base robots through metrics.impact_fused (False: the generic
    #: metrics.impact_mitigation.impact_mitigation path, kept as the reference)
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
            sign = stance_velocity_sign(contact_J, J, u, case.motion, self.v_index)
        coriolis = speed_terms(robot, q, Jj, u) if case.kind == "speed" else np.zeros((0, 0))
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
            speed_terms=coriolis,
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
            out[case.name] = torque_case(self, case, d.at_band("low", "high") if worst else d)
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
        """:func:`jointwright.payloadcase.payload_case`."""
        return payload_case(self, pc, d, detail)

    def _stance(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """:func:`jointwright.payloadcase.stance_case`."""
        return stance_case(self, pc, d, detail)

    def capacity_at_speed(self, pc: PreparedCase, d: DesignArrays):
        """:func:`jointwright.payloadcase.capacity_at_speed`."""
        return capacity_at_speed(self, pc, d)

    def _impact(
        self, pc: PreparedCase, d: DesignArrays, detail: bool = True
    ) -> dict[str, np.ndarray]:
        """:func:`jointwright.impactcase.impact_case`."""
        return impact_case(self, pc, d, detail)

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
        """:func:`jointwright.impactcase.forward_effective_mass_along`."""
        return forward_effective_mass_along(self, pc, d, directions)

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
        """:func:`jointwright.speedcase.speed_case`."""
        return speed_case(self, pc, d, detail)
