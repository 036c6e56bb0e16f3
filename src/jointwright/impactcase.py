"""Impact cases of the evaluator (:mod:`jointwright.evaluate`): inertia at the contact per
power-flow direction, the person struck, the gear shock.

The fused floating-base kernel (threads, chunks) stays with the evaluator:
:meth:`jointwright.evaluate.Evaluator._impact_fused`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .design import DesignArrays
from .metrics.contact_safety import transient_contact
from .metrics.gear_shock import gear_shock_torque, link_velocity_step
from .metrics.impact_mitigation import impact_mitigation
from .metrics.inertia import effective_mass, forward_effective_mass
from .metrics.linalg_small import inv_small
from .preparedcase import PreparedCase
from .robot.basis import mass_matrix

#: batches of fewer designs take the generic path: the fused kernel's loops over matrix entries
#: cost about 1.5 ms per call whatever the batch (the bundled quadruped's impact case, CPU per
#: call: 16 designs 1.57 ms fused against 0.84 generic, 64 designs 1.53 against 1.64, one
#: machine). The two paths agree to round-off (tests/test_impact_fused.py), so a design's
#: figures may differ in the last digits with the size of the batch it is scored in
FUSED_IMPACT_MIN = 48


def impact_case(
    ev, pc: PreparedCase, d: DesignArrays, detail: bool = True
) -> dict[str, np.ndarray]:
    """Inertia at the contact per power-flow direction (docs/metrics.md).

    Back-driven (the impact drives the motors): M + N²·I_r/η_b, ev-locking joints locked;
    frictionless: M + N²·I_r; both give the IMF (floating base) and the effective mass.
    Forward-driving (``effective_mass_motoring``: the motors drive the contact): the energy
    reading of E_f⁻¹·M + R per joint power-flow sign (metrics.inertia.forward_effective_mass);
    it has no IMF (an impact back-drives the joints).
    """
    out: dict[str, Any] = {}
    nv = ev.robot.nv
    # locked in an impact: held joints always, ev-locking transmissions back-driven
    structure = np.zeros(d.self_locking.shape[:-1] + (nv,), dtype=bool)
    structure[..., ev.held_index] = True
    locked = structure.copy()
    locked[..., ev.v_index] = d.self_locking
    if detail:
        out["effective_mass_motoring"] = forward_effective_mass_along(ev, pc, d)
    for mode in ("frictionless", "backdriven") if detail else ("backdriven",):
        refl = d.reflected_inertia(mode)
        refl = np.where(np.isfinite(refl), refl, 0.0)
        lock = locked if mode == "backdriven" else structure
        suffix = "" if mode == "backdriven" else f"_{mode}"
        fused = ev.fused_impact and d.mass.shape[0] >= FUSED_IMPACT_MIN
        if ev.floating and fused and pc.J.shape[0] <= 3:
            out.update(ev._impact_fused(pc, d, refl, lock, suffix))
            continue
        H = mass_matrix(
            pc.basis,
            d.mass,
            refl,
            rotor_inertia=d.rotor_inertia,
            ratio=d.ratio,
            coupling=ev.project.rotor_coupling,
        )
        if ev.floating:
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
            out["effective_mass" + suffix] = effective_mass_locked(pc.J, H, pc.u, lock)
    region = getattr(pc.case, "body_region", None)
    if region is not None:  # a person struck along the case direction (back-driven robot)
        force, stiffness, body = region
        contact = transient_contact(out["effective_mass"], body, stiffness, force)
        out["contact_speed"] = contact.speed
        if detail:
            out["contact_energy"] = contact.energy
    if getattr(pc.case, "impact_speed", 0.0) > 0:
        out.update(gear_shock(ev, pc, d, structure))
    return out


def gear_shock(ev, pc: PreparedCase, d: DesignArrays, structure) -> dict[str, np.ndarray]:
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
        dq[..., ev.v_index],
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
        "shock_joint_speed": dq[..., ev.v_index],
    }


def forward_effective_mass_along(
    ev, pc: PreparedCase, d: DesignArrays, directions: np.ndarray | None = None
) -> np.ndarray:
    """Forward-driving effective mass (metrics.inertia.forward_effective_mass) along the
    case direction for D designs, (D,); or, for one design, along each of ``directions``
    (k, 3), (k,)."""
    coupling = ev.project.rotor_coupling
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
    ef[..., ev.v_index] = d.eta_forward
    eb[..., ev.v_index] = d.eta_backward
    R = H0 - M
    J = np.broadcast_to(pc.J, M.shape[:-2] + pc.J.shape)
    if ev.held_index.size:  # held joints do not move: their coordinates leave the problem
        keep = np.setdiff1d(np.arange(nv), ev.held_index)
        M, R = M[..., keep[:, None], keep], R[..., keep[:, None], keep]
        J, ef, eb = J[..., keep], ef[..., keep], eb[..., keep]
    u = pc.u
    if directions is not None:  # one design, several directions
        u = np.asarray(directions, dtype=float)
        k = u.shape[0]
        M, R, J, ef, eb = (np.broadcast_to(x[0], (k,) + x.shape[1:]) for x in (M, R, J, ef, eb))
    return forward_effective_mass(J, M, R, ef, eb, u).mass


def effective_mass_locked(J, H, u, locked) -> np.ndarray:
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
