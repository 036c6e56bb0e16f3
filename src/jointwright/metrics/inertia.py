"""Inertia felt at a contact: task-space inertia, effective mass, ellipsoids.

The impact mitigation factor, built on these, is in :mod:`.impact_mitigation`.

Pure functions of matrices with leading batch dimensions ``...`` (designs, poses):
a Jacobian ``J`` is ``(..., m, n)``, a mass matrix ``(..., n, n)``, a direction ``(..., m)``.
The mass matrix is the caller's: it includes whichever reflected rotor inertia the power-flow
direction calls for (N²·I_r/η_b back-driven, N²·I_r frictionless). The forward-driving
direction is not a mass matrix of that kind (E_f⁻¹·M + R): see :func:`forward_effective_mass`.

All products X = J·M⁻¹·Jᵀ are formed as Wᵀ·W with W = L⁻¹·Jᵀ and M = L·Lᵀ (Cholesky), entry by
entry over the batch (see :mod:`.linalg_small`). Sources: Khatib 1987 (operational-space
inertia), Khatib 1995 (effective mass), Wensing et al. 2017 (impact mitigation factor).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, SingularPoseError
from .linalg_small import (
    API,
    adjugate_entries,
    batch_shape,
    check_size,
    checked,
    det_entries,
    gram_entries,
    map_chunks,
    require_spd,
    stack_entries,
    symmetric_positive,
    unit_vectors,
    whiten,
    whiten_entries,
)

#: a pose is singular when the trace bound of cond(J·M⁻¹·Jᵀ) exceeds this (see task_space_inertia)
SINGULAR_CONDITION = 1e10

#: eigenvalues of I − Λ·Λ_L⁻¹ (dimensionless, in [0, 1]) at or below this count as zero
RANK_TOL = 1e-9


def _jacobian_and_mass(J, M, mname: str = "M") -> tuple[np.ndarray, np.ndarray]:
    J = checked(J, "J", 2)
    M = checked(M, mname, 2)
    check_size(M, mname, -2, M.shape[-1], "rows (square matrix)")
    check_size(M, mname, -1, J.shape[-1], "columns (one per column of J)")
    batch_shape(J=(J, 2), **{mname: (M, 2)})
    return J, M


# --------------------------------------------------------------------------------------------
# task-space inertia
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class TaskSpaceInertia:
    """Operational-space inertia Λ = (J·M⁻¹·Jᵀ)⁻¹ over a batch.

    Attributes
    ----------
    Lambda : array (..., m, m)
        kg for translational rows/columns (kg·m for mixed, kg·m² for rotational ones);
        ``+inf`` in every entry where ``singular`` is True (Λ does not exist there).
    singular : bool array (...)
        True where J·M⁻¹·Jᵀ is singular or its condition bound exceeds the threshold.
    condition : array (...)
        κ̂ = tr(X)·tr(X⁻¹) for X = J·M⁻¹·Jᵀ, an upper bound on the 2-norm condition number
        κ of X with κ ≤ κ̂ ≤ m²·κ; ``inf`` where X is exactly singular.
    """

    Lambda: np.ndarray
    singular: np.ndarray
    condition: np.ndarray


def task_space_inertia(J, M, *, cond_max: float = SINGULAR_CONDITION) -> TaskSpaceInertia:
    """Task-space (operational-space) inertia Λ = (J·M⁻¹·Jᵀ)⁻¹ (Khatib 1987).

    Singular poses are flagged.

    Parameters
    ----------
    J : array (..., m, n)
        Task Jacobian at the contact point (m/rad for revolute, 1 for prismatic columns).
    M : array (..., n, n)
        Joint-space mass matrix, symmetric positive definite (kg·m², kg).
    cond_max : float
        A pose is singular when κ̂ = tr(X)·tr(X⁻¹) > cond_max, X = J·M⁻¹·Jᵀ. κ̂ bounds the true
        condition number within a factor m². For rows of mixed units (force and moment) κ̂
        depends on the length unit; the default 1e10 is meant for translational rows in metres.

    Returns
    -------
    TaskSpaceInertia
        Fast path for m ≤ 3 (cofactor inverse); eigen-decomposition for m > 3.
    """
    J, M = _jacobian_and_mass(J, M)
    if not cond_max > 1.0:
        raise InputError(API, "cond_max", f"must be > 1, got {cond_max}")
    lam, singular, cond = map_chunks(
        lambda j, mm: _tsi_chunk(j, mm, cond_max), (J, M), (2, 2), (2, 0, 0)
    )
    return TaskSpaceInertia(Lambda=lam, singular=singular, condition=cond)


def _inverse_gram(J, M):
    """X = J·M⁻¹·Jᵀ as an entry list."""
    w, valid = whiten_entries(M, np.swapaxes(J, -1, -2))
    require_spd(valid, "M")
    return gram_entries(w)


def _tsi_chunk(J, M, cond_max):
    m = J.shape[-2]
    x = _inverse_gram(J, M)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if m <= 3:
            det = det_entries(x)
            adj = adjugate_entries(x)
            trace = sum(x[i][i] for i in range(m))
            trace_adj = sum(adj[i][i] for i in range(m))
            cond = np.where(det > 0.0, trace * trace_adj / det, np.inf)
            lam = stack_entries([[a / det for a in row] for row in adj])
        else:
            xa = stack_entries(x)
            ev, vec = np.linalg.eigh(xa)
            good = ev[..., 0] > 0.0
            inv_ev = np.where(good[..., None], 1.0 / np.where(ev > 0, ev, 1.0), 0.0)
            cond = np.where(good, ev.sum(-1) * inv_ev.sum(-1), np.inf)
            lam = np.einsum("...ik,...k,...jk->...ij", vec, inv_ev, vec)
    singular = ~(cond <= cond_max)
    lam = np.where(singular[..., None, None], np.inf, lam)
    return lam, singular, cond


def task_space_inertia_strict(J, M, *, cond_max: float = SINGULAR_CONDITION) -> np.ndarray:
    """Λ = (J·M⁻¹·Jᵀ)⁻¹ like :func:`task_space_inertia`, raising at a singular pose.

    Returns
    -------
    array (..., m, m)
        Λ in kg (translational rows).

    Raises
    ------
    SingularPoseError
        Naming how many batch items are singular and the first one.
    """
    res = task_space_inertia(J, M, cond_max=cond_max)
    if res.singular.any():
        first = tuple(int(i) for i in np.argwhere(res.singular)[0])
        raise SingularPoseError(
            f"task-space inertia does not exist at {int(res.singular.sum())} of "
            f"{res.singular.size} batch items (first at index {first}): "
            f"condition bound of J·M⁻¹·Jᵀ above {cond_max:g}"
        )
    return res.Lambda


# --------------------------------------------------------------------------------------------
# effective mass and ellipsoid
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class EffectiveMass:
    """Effective mass along a direction, m_u = 1/(uᵀ·J·M⁻¹·Jᵀ·u).

    Attributes
    ----------
    mass : array (...), kg (kg·m² for a rotational direction); ``inf`` where ``immovable``
    immovable : bool array (...)
        True where ‖Jᵀ·u‖ ≤ 1e-12·‖J‖_F: the joints cannot move the contact along u at all.
    """

    mass: np.ndarray
    immovable: np.ndarray


def effective_mass(J, M, u) -> EffectiveMass:
    """Effective mass felt at the contact along unit direction u (Khatib 1995 [mem]).

    m_u = 1 / (uᵀ·J·M⁻¹·Jᵀ·u) = 1 / (uᵀ·Λ⁻¹·u). This is the mass a collision along u meets
    when the impulse acts only along u. It differs from uᵀ·Λ·u (the kinetic-energy weight of a
    velocity along u) unless u is an eigenvector of Λ; then both equal that eigenvalue. It exists
    at singular poses too (no inverse of J·M⁻¹·Jᵀ is needed).

    Parameters
    ----------
    J : array (..., m, n)
    M : array (..., n, n), symmetric positive definite, kg·m² / kg
    u : array (..., m), direction (normalized here; nonzero)

    Returns
    -------
    EffectiveMass
    """
    J, M = _jacobian_and_mass(J, M)
    u = unit_vectors(u, "u", J.shape[-2])
    batch_shape(J=(J, 2), M=(M, 2), u=(u, 1))
    mass, immovable = map_chunks(_em_chunk, (J, M, u), (2, 2, 1), (0, 0))
    return EffectiveMass(mass=mass, immovable=immovable)


def _em_chunk(J, M, u):
    a = np.einsum("...mn,...m->...n", J, u)
    w, valid = whiten(M, a[..., None])
    require_spd(valid, "M")
    mobility = np.sum(w[..., 0] ** 2, axis=-1)
    immovable = np.linalg.norm(a, axis=-1) <= 1e-12 * np.linalg.norm(J, axis=(-2, -1))
    with np.errstate(divide="ignore"):
        mass = np.where(immovable, np.inf, 1.0 / np.where(immovable, 1.0, mobility))
    return mass, immovable


# --------------------------------------------------------------------------------------------
# inertia per power-flow direction
# --------------------------------------------------------------------------------------------
def forward_apparent_inertia(M, R, eta_f):
    """Forward-driving apparent inertia A_f = E_f⁻¹·M + R (DESIGN §2.3), arrays broadcast.

    With every joint motoring, the motoring law τ_j = η_f·(τ_id − R·q̈) (τ_id = N·τ_m the ideal
    joint torque, R = diag(N²·I_r)) and the link dynamics M·q̈ = τ_j + Jᵀ·F give
    (E_f⁻¹·M + R)·q̈ = τ_id + E_f⁻¹·Jᵀ·F: A_f is the inertia the actuators overcome per unit of
    ideal joint torque. Rows of joints without a transmission (η_f = 1: base, free joints) are
    untouched. A_f is not symmetric unless M is diagonal or E_f a multiple of I; its quadratic
    form vᵀ·A_f·v is twice the actuators' energy for an impulsive start along v when every
    joint motors (see :func:`forward_effective_mass`).

    Parameters
    ----------
    M : array (..., n, n), link-side mass matrix (actuator masses included, no rotor inertia)
    R : array (..., n) diagonal or (..., n, n), rotor-side inertia seen at the joints, N²·I_r
    eta_f : array (..., n), forward efficiency per joint, 1 where no transmission
    """
    M = np.asarray(M, dtype=float)
    R = np.asarray(R, dtype=float)
    ef = np.asarray(eta_f, dtype=float)
    Rm = R if R.ndim >= 2 and R.shape[-2:] == M.shape[-2:] else R[..., None] * np.eye(M.shape[-1])
    return M / ef[..., :, None] + Rm


@dataclass(frozen=True)
class ForwardEffectiveMass:
    """Forward-driving effective mass along u (see :func:`forward_effective_mass`).

    Attributes
    ----------
    mass : array (...), kg; ``inf`` where ``immovable``
    frictionless : array (...), kg: 1/(uᵀ·J·(M + R)⁻¹·Jᵀ·u) of the same motion
    motion : array (..., n), the joint-velocity pattern v used (per unit end-point speed along u)
    backdriven_joints : bool array (..., n), joints whose link-side power p_i < 0 along v
    immovable : bool array (...)
    """

    mass: np.ndarray
    frictionless: np.ndarray
    motion: np.ndarray
    backdriven_joints: np.ndarray
    immovable: np.ndarray


def forward_effective_mass(J, M, R, eta_f, eta_b, u) -> ForwardEffectiveMass:
    """Effective mass along u that the actuators feel when they drive the end point.

    Energy reading (the classical effective mass is m_u = min{vᵀ·H·v : uᵀ·J·v = 1}, twice the
    least kinetic energy that gives the end point unit speed along u, attained by the natural
    motion v ∝ H⁻¹·Jᵀ·u of a frictionless robot; Khatib 1995). Driving through lossy gears, the
    actuators must supply for an impulsive start along v: the rotors' kinetic energy ½·vᵀ·R·v,
    plus, per joint, the link-side work p_i = ½·v_i·(M·v)_i through the gear, which costs
    p_i/η_f where it flows motor → link (motoring) and returns only η_b·p_i where it flows back
    (a joint that the motion back-drives; η_b ≤ 0 for a self-locking joint, which the motor must
    drive along). With the natural motion v = (M + R)⁻¹·Jᵀ·û scaled to unit speed along û:

        m_f(u) = [ Σ_i φ_i(v_i·(M·v)_i) + vᵀ·R·v ] / (ûᵀ·J·v)²,
        φ_i(p) = p/η_f,i for p > 0,  η_b,i·p for p ≤ 0.

    Properties (tested): φ_i(p) ≥ p, so m_f ≥ the frictionless m_u in every direction; it equals
    m_u when η_f = η_b = 1; for one joint it is (I_link/η_f + N²·I_r)/J²; and where every joint
    motors it is the quadratic form of the forward-driving apparent inertia E_f⁻¹·M + R
    (:func:`forward_apparent_inertia`) along v. Using vᵀ·(E_f⁻¹·M + R)·v for every v instead
    would credit a joint that the motion back-drives with the motoring loss, and can fall below
    the frictionless value when joints are coupled, which no lossy transmission can do; hence the
    per-joint power-flow sign. m_f is not a quadratic form in u, so there is no forward-driving
    Λ matrix: plot √m_f(u) over directions (it encloses the frictionless ellipse).

    Parameters
    ----------
    J : array (..., m, n)
    M : array (..., n, n), link-side mass matrix (actuator masses, no rotor inertia), SPD
    R : array (..., n) diagonal or (..., n, n) symmetric PSD, rotor-side inertia at the joints
    eta_f, eta_b : array (..., n), per joint (1 where no transmission), 0 < η_f ≤ 1, η_b ≤ 1
    u : array (..., m), nonzero

    Returns
    -------
    ForwardEffectiveMass
    """
    J, M = _jacobian_and_mass(J, M)
    u = unit_vectors(u, "u", J.shape[-2])
    R = np.asarray(R, dtype=float)
    n = M.shape[-1]
    Rm = R if R.ndim >= 2 and R.shape[-2:] == (n, n) else R[..., None] * np.eye(n)
    ef = np.asarray(eta_f, dtype=float)
    eb = np.asarray(eta_b, dtype=float)
    if np.any(~((ef > 0) & (ef <= 1))) or np.any(~(np.isfinite(eb) & (eb <= 1))):
        raise InputError(API, "eta_f, eta_b", "need 0 < eta_f <= 1 and a finite eta_b <= 1")
    H = M + Rm
    y = np.einsum("...mn,...m->...n", J, u)
    v = np.linalg.solve(H, y[..., None])[..., 0]
    s = np.einsum("...n,...n->...", y, v)  # ûᵀ·J·v = ûᵀ·J·H⁻¹·Jᵀ·û
    immovable = np.linalg.norm(y, axis=-1) <= 1e-12 * np.linalg.norm(J, axis=(-2, -1))
    p = v * np.einsum("...ij,...j->...i", M, v)
    phi = np.where(p > 0, p / ef, eb * p)
    rotor = np.einsum("...i,...ij,...j->...", v, Rm, v)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(immovable, 1.0, s)
        mass = np.where(immovable, np.inf, (phi.sum(-1) + rotor) / scale**2)
        free = np.where(immovable, np.inf, 1.0 / scale)
        motion = v / scale[..., None]
    return ForwardEffectiveMass(
        mass=mass,
        frictionless=free,
        motion=motion,
        backdriven_joints=(p < 0) & ~immovable[..., None],
        immovable=immovable,
    )


@dataclass(frozen=True)
class InertiaEllipsoid:
    """Principal axes of Λ for plots.

    Attributes
    ----------
    masses : array (..., m), eigenvalues of Λ ascending, kg
    axes : array (..., m, m), unit eigenvectors as columns, ``axes[..., :, k]`` ↔ ``masses[..., k]``
    semi_axes : array (..., m), √masses, √kg: the ellipsoid {x : xᵀ·Λ⁻¹·x ≤ 1} has these
        semi-axes, and its radius along a unit u is √(effective mass along u).
    """

    masses: np.ndarray
    axes: np.ndarray
    semi_axes: np.ndarray


def inertia_ellipsoid(Lambda) -> InertiaEllipsoid:
    """Principal masses and directions of a task-space inertia, Λ = V·diag(μ)·Vᵀ.

    Parameters
    ----------
    Lambda : array (..., m, m), symmetric positive definite and finite, kg

    Returns
    -------
    InertiaEllipsoid
    """
    lam = checked(Lambda, "Lambda", 2)
    check_size(lam, "Lambda", -2, lam.shape[-1], "rows (square matrix)")
    symmetric_positive(lam, "Lambda")
    mu, vec = np.linalg.eigh(lam)
    return InertiaEllipsoid(masses=mu, axes=vec, semi_axes=np.sqrt(mu))
