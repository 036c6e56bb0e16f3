"""Peak gear torque at an impact (touchdown, collision), before any controller reacts.

Model (docs/metrics.md, "Gear shock at an impact"):

1. **Contact impulse on the link side.** The contact is much stiffer than the gears, so in the
   instant of the impact the gear springs carry no torque yet and the rotors keep their speed:
   the links (with the actuator masses, without the rotors) take a rigid impact of approach speed
   v along u with restitution e (Walker, IEEE Trans. Robot. Autom. 10(5), 1994; Wensing et al.,
   IEEE T-RO 33(3), 2017 [pub]). With M the mass matrix of the joints that can move (held joints
   are structure), the contact impulse and the joint velocity step are
   p = (1 + e)·v·m_link, m_link = 1/(uᵀ·J·M⁻¹·Jᵀ·u), and Δq̇ = M⁻¹·Jᵀ·u·p.
2. **Velocity shock on each gear.** Joint i's rotor, of joint-side inertia I_i (back-driven
   reflected inertia N²·I_r/η_b: the link side drives the rotor through the gear), is tied to
   the link by the gear's torsional stiffness k_i (joint side). The link side steps by Δq̇_i while
   the rotor is still; the undamped spring–mass answer to a velocity step (Harris & Piersol,
   Shock and Vibration Handbook, ch. 8, velocity shock on a single-degree-of-freedom system
   [mem]) peaks at deflection Δq̇_i·√(I_i/k_i), i.e. a gear torque T_i = |Δq̇_i|·√(k_i·I_i).

Holding the link at its stepped speed (no link-side inertia limit), and leaving out damping,
motor torque and friction, makes T_i an upper estimate of this model; backlash and a stiffer
environment (a longer, harder impact) are not in it. A self-locking stage cannot be turned from
its output: its rotor acts as infinitely heavy and T_i = ∞ (the gear takes the impact on its
teeth). A gear of unknown stiffness (∞) gives T_i = ∞. A joint without stages has no gear.
"""

from __future__ import annotations

import numpy as np


def link_velocity_step(J, M, u, speed, restitution, locked=None):
    """Contact impulse and joint velocity step of a rigid impact with the rotors not yet moving.

    Parameters
    ----------
    J : (..., 3, nv) contact point Jacobian
    M : (..., nv, nv) mass matrix of links and actuator masses (no reflected inertia)
    u : (3,) unit direction of the impact (the way the environment pushes the contact point)
    speed : float, approach speed v ≥ 0 (m/s)
    restitution : float, e in [0, 1]
    locked : (..., nv) bool, optional
        Coordinates that do not move (held joints): removed from the problem.

    Returns
    -------
    (impulse, dq) : (...) N·s and (..., nv) rad/s or m/s
        ``impulse`` is inf and ``dq`` 0 where the free joints cannot move the contact along u.
    """
    J = np.asarray(J, dtype=float)
    M = np.asarray(M, dtype=float)
    u = np.asarray(u, dtype=float)
    nv = M.shape[-1]
    batch = M.shape[:-2]
    lock = (
        np.zeros(batch + (nv,), bool) if locked is None else np.broadcast_to(locked, batch + (nv,))
    )
    J = np.broadcast_to(J, batch + J.shape[-2:])
    flat_lock = lock.reshape(-1, nv)
    Mf, Jf = M.reshape(-1, nv, nv), J.reshape(-1, 3, nv)
    impulse = np.empty(flat_lock.shape[0])
    dq = np.zeros((flat_lock.shape[0], nv))
    # one lock pattern for the whole batch is the usual case: no sort, no row selection
    one = flat_lock.shape[0] == 0 or bool((flat_lock == flat_lock[:1]).all())
    for pattern in flat_lock[:1] if one else np.unique(flat_lock, axis=0):
        rows = np.ones(flat_lock.shape[0], bool) if one else np.all(flat_lock == pattern, axis=1)
        free = ~pattern
        Jr, Mr = (Jf, Mf) if one else (Jf[rows], Mf[rows])
        if not free.all():
            Jr, Mr = Jr[:, :, free], Mr[:, free][:, :, free]
        a = Jr.transpose(0, 2, 1) @ u  # (k, f) Jᵀ·u
        x = np.linalg.solve(Mr, a[..., None])[..., 0]  # M⁻¹·Jᵀ·u
        mobility = np.einsum("kf,kf->k", a, x)  # uᵀ·J·M⁻¹·Jᵀ·u = 1/m_link
        scale = np.abs(a).max(axis=-1, initial=0.0)
        moves = mobility > 1e-12 * np.maximum(scale * scale, 1e-300)
        p = np.where(moves, (1.0 + restitution) * speed / np.where(moves, mobility, 1.0), np.inf)
        impulse[rows] = p
        step = np.where(moves[:, None], x * np.where(moves, p, 0.0)[:, None], 0.0)
        if one and free.all():
            dq[:] = step
        else:
            full = np.zeros((step.shape[0], nv))
            full[:, free] = step
            dq[rows] = full
    return impulse.reshape(batch), dq.reshape(batch + (nv,))


def gear_shock_torque(dq, stiffness, reflected, self_locking, has_gear) -> np.ndarray:
    """Peak gear torque T = |Δq̇|·√(k·I) per joint (N·m), arrays broadcast.

    Parameters
    ----------
    dq : joint velocity step (rad/s)
    stiffness : joint-side gear stiffness k (N·m/rad), inf when unknown
    reflected : joint-side rotor inertia I (kg·m²), the back-driven N²·I_r/η_b
    self_locking : bool, a stack that cannot be back-driven (T = inf where dq ≠ 0)
    has_gear : bool, False for a joint without stages (T = 0: no gear teeth)
    """
    dq = np.abs(np.asarray(dq, dtype=float))
    k, inertia = np.asarray(stiffness, dtype=float), np.asarray(reflected, dtype=float)
    locked = np.asarray(self_locking, bool)
    with np.errstate(invalid="ignore", over="ignore"):
        torque = dq * np.sqrt(k * np.where(locked, np.inf, inertia))
    torque = np.where(dq == 0, 0.0, torque)
    return np.where(np.asarray(has_gear, bool), torque, 0.0)
