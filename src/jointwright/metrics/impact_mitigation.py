"""Impact mitigation factor of a floating-base robot at a contact (Wensing et al. 2017).

ξ = det(I − Λ·Λ_L⁻¹): how much of the inertia felt at the contact the free (back-drivable)
joints take away, Λ with the joints free and Λ_L with them locked. The same batch conventions
as :mod:`.inertia` (leading dimensions designs, poses); the evaluator's fused kernel
(:mod:`.impact_fused`) is checked against :func:`impact_mitigation`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, SingularPoseError
from .inertia import RANK_TOL, _jacobian_and_mass
from .linalg_small import (
    API,
    adjugate_entries,
    batch_shape,
    check_size,
    det_entries,
    entries,
    gram_entries,
    map_chunks,
    quad_entries,
    require_spd,
    stack_entries,
    unit_vectors,
    whiten_entries,
)


@dataclass(frozen=True)
class ImpactMitigation:
    """Impact mitigation factor of a floating-base robot at one contact (Wensing et al. 2017).

    Attributes
    ----------
    imf : array (...)
        ξ = det(I − Λ·Λ_L⁻¹) in [0, 1]; exactly 0 where ``full_rank`` is False.
    rank : int array (...)
        Rank of I − Λ·Λ_L⁻¹ (eigenvalues above ``rank_tol``): the number of contact directions
        in which the free joints change the inertia felt. Equal to the rank of
        K = J_j − J_b·H_bb⁻¹·H_bj, the contact velocity per joint velocity with the base free.
    full_rank : bool array (...)
        ``rank == m``. When False the determinant form is identically 0.
    imf_restricted : array (...)
        ξ over V = range(K) only: the factor the same robot has if the contact takes impulses
        only in V, i.e. the determinant form with J replaced by Qᵀ·J for an orthonormal basis Q
        of V. Equal to ``imf`` where ``full_rank``; 0 where ``rank`` is 0.
    imf_direction : array (...) or None
        ξ_x = 1 − xᵀ·Λ·x / xᵀ·Λ_L·x for the given unit ``direction`` x, in [0, 1].
    Lambda : array (..., m, m)
        Λ = (J·H⁻¹·Jᵀ)⁻¹ over the base and the free (unlocked) joints, kg.
    Lambda_locked : array (..., m, m)
        Λ_L = (J_b·H_bb⁻¹·J_bᵀ)⁻¹, every joint locked, kg; ``inf`` where J_b cannot move the
        contact in every direction.
    """

    imf: np.ndarray
    rank: np.ndarray
    full_rank: np.ndarray
    imf_restricted: np.ndarray
    imf_direction: np.ndarray | None
    Lambda: np.ndarray
    Lambda_locked: np.ndarray


def impact_mitigation(
    H, J, n_base: int = 6, locked=None, *, direction=None, rank_tol: float = RANK_TOL
) -> ImpactMitigation:
    """Impact mitigation factor ξ = det(I − Λ·Λ_L⁻¹) (Wensing et al., IEEE T-RO 33(3), 2017).

    Coordinates are q = [q_b (n_base); q_j], the contact Jacobian J = [J_b J_j]. With the
    Cholesky factor of H in that order, W = L⁻¹·Jᵀ splits into base rows W_b and joint rows
    W_j, and Λ_L⁻¹ = W_bᵀ·W_b, Λ⁻¹ = Λ_L⁻¹ + P with P = W_jᵀ·W_j = K·S⁻¹·Kᵀ
    (S = H_jj − H_jb·H_bb⁻¹·H_bj, K = J_j − J_b·H_bb⁻¹·H_bj). Hence I − Λ·Λ_L⁻¹ = Λ·P and
    ξ = det(P) / det(Λ⁻¹) = det(K)²·det(Λ)/det(S) when K is square.

    Parameters
    ----------
    H : array (..., nv, nv)
        Full mass matrix, base first, including the reflected rotor inertia of the mode being
        assessed (normally back-driven, N²·I_r/η_b), SI (kg, kg·m, kg·m²).
    J : array (..., m, nv)
        Contact Jacobian (m = 3 for a point contact), same coordinate order.
    n_base : int
        Number of base coordinates (6 for a free-flyer). The base block must make J_b full row
        rank for Λ_L to be finite (always true for a point contact on a 6-dof base).
    locked : bool array (..., nv − n_base), optional
        Joints that do not move in an impact (self-locking stages). They join the locked set:
        their rows and columns leave H and their columns leave J for Λ. Λ_L, with every joint
        locked, does not change.
    direction : array (..., m), optional
        x for the directional form ξ_x (normalized here).
    rank_tol : float
        Eigenvalues of I − Λ·Λ_L⁻¹ at or below this count as zero.

    Returns
    -------
    ImpactMitigation
    """
    H, J, locked, x = _imf_inputs(H, J, n_base, locked, direction)
    if not 0.0 < rank_tol < 1.0:
        raise InputError(API, "rank_tol", f"must be in (0, 1), got {rank_tol}")
    outs = map_chunks(
        lambda h, j, lk, xx: _imf_chunk(h, j, lk, xx, n_base, rank_tol),
        (H, J, locked, x),
        (2, 2, 1, 1),
        (0, 0, 0, 0, 2, 2),
    )
    imf, rank, restricted, direc, lam, lam_l = outs
    return ImpactMitigation(
        imf=imf,
        rank=rank.astype(int),
        full_rank=rank == J.shape[-2],
        imf_restricted=restricted,
        imf_direction=direc,
        Lambda=lam,
        Lambda_locked=lam_l,
    )


def _imf_inputs(H, J, n_base, locked, direction):
    J, H = _jacobian_and_mass(J, H, "H")
    nv = H.shape[-1]
    if (
        isinstance(n_base, bool)
        or not isinstance(n_base, (int, np.integer))
        or not (1 <= n_base < nv)
    ):
        raise InputError(API, "n_base", f"must be an integer in [1, {nv - 1}], got {n_base!r}")
    if locked is not None:
        locked = np.asarray(locked)
        if locked.dtype != bool:
            raise InputError(API, "locked", f"must be a boolean mask, got dtype {locked.dtype}")
        if locked.ndim < 1:
            raise InputError(API, "locked", "must have one entry per joint")
        check_size(locked, "locked", -1, nv - n_base, "entries (one per joint)")
    x = None if direction is None else unit_vectors(direction, "direction", J.shape[-2])
    batch_shape(H=(H, 2), J=(J, 2), locked=(locked, 1), direction=(x, 1))
    return H, J, locked, x


def _imf_chunk(H, J, locked, x, n_base, tol):
    m = J.shape[-2]
    jt = np.swapaxes(J, -1, -2)
    if locked is not None:
        free = np.concatenate([np.ones(locked.shape[:-1] + (n_base,), bool), ~locked], axis=-1)
        both = free[..., :, None] & free[..., None, :]
        H = np.where(both, H, np.eye(H.shape[-1]))
        jt = np.where(free[..., :, None], jt, 0.0)
    we, valid = whiten_entries(H, jt)
    require_spd(valid, "H")
    inv_l = gram_entries(we[:n_base])
    p = gram_entries(we[n_base:])
    a = [[inv_l[i][j] + p[i][j] for j in range(m)] for i in range(m)]
    _contact_movable(a)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if m <= 3:
            imf, rank, restricted, lam, lam_l = _closed_form(p, a, inv_l, tol)
        else:
            lam = np.linalg.inv(stack_entries(a))
            lam_l = _inverse_or_inf(stack_entries(inv_l))
            imf, rank, restricted = _spectral(stack_entries(p), stack_entries(a), tol)
        direc = None
        if x is not None:
            xe = [x[..., i] for i in range(m)]
            den = quad_entries(entries(lam_l), xe)
            ratio = quad_entries(entries(lam), xe) / den
            direc = np.where(np.isfinite(den), np.clip(1.0 - ratio, 0.0, 1.0), 1.0)
    return imf, rank, restricted, direc, lam, lam_l


def _contact_movable(a):
    """Raise when J·H⁻¹·Jᵀ is singular: base and joints together cannot move the contact."""
    if len(a) <= 3:
        ok = det_entries(a) > 0.0
    else:
        ok = np.linalg.eigvalsh(stack_entries(a))[..., 0] > 0.0
    if not np.all(ok):
        raise SingularPoseError(
            "impact mitigation: J·H⁻¹·Jᵀ is singular (the base and the free joints cannot move "
            "the contact in every direction; check n_base and the rows of J)"
        )


def _closed_form(p, a, inv_l, tol):
    """ξ, rank, restricted ξ, Λ, Λ_L for m ≤ 3 by cofactors (:func:`classified_imf`).

    With e_k the elementary symmetric functions of the eigenvalues λ of Λ·P (e_k = sum of its
    principal k-minors, e_0 = 1), e_m/e_(m−1) lies in [λ_min/m, λ_min]. Items are sorted into
    *full rank* (every e_k > tol·e_(k−1): λ_min > tol; the whole chain guards against round-off
    in a rank ≤ m−2 case passing for a real eigenvalue), *one short* (e_m ≤ (tol/m)·e_(m−1),
    so λ_min ≤ tol, and e_(m−1) > 2·tol·e_(m−2), so the next eigenvalue is above tol), and the
    rest, which go to :func:`_spectral`. One short: adj(P) = tr(adj P)·n·nᵀ with n the null
    direction of P, and for an orthonormal basis Q of n⊥, det(Qᵀ·X·Q) = nᵀ·adj(X)·n, so the
    restricted factor is tr(adj P)² / tr(adj(Λ⁻¹)·adj(P)).
    """
    det_a = det_entries(a)
    imf, rank, restricted, adj_a = classified_imf(p, a, det_a, tol)
    lam = stack_entries([[v / det_a for v in row] for row in adj_a])
    lam_l = _inverse_or_inf(stack_entries(inv_l))
    return imf, rank, restricted, lam, lam_l


def classified_imf(p, a, det_a, tol):
    """ξ, rank and restricted ξ of entry lists P and A = Λ⁻¹ (det A given), and adj(A), by the
    rule of :func:`_closed_form`; shared with the fused kernel (metrics/impact_fused.py)."""
    m = len(a)
    det_p = det_entries(p)
    adj_a, adj_p = adjugate_entries(a), adjugate_entries(p)
    imf = det_p / det_a
    chain = [1.0]
    if m >= 2:
        chain.append(_trace_product(adj_a, p) / det_a)
    if m == 3:
        chain.append(_trace_product(adj_p, a) / det_a)
    chain.append(imf)
    batch = np.shape(imf)
    below = np.ones(batch, dtype=bool)
    for k in range(1, m - 1):
        below = below & (chain[k] > tol * chain[k - 1])
    full = below & (chain[m - 1] > tol * chain[m - 2]) & (chain[m] > tol * chain[m - 1])
    short = below & (chain[m - 1] > 2.0 * tol * chain[m - 2]) & (chain[m] <= tol / m * chain[m - 1])
    rank = np.where(full, m, m - 1)
    if m >= 2:
        tr_adj_p = sum(adj_p[i][i] for i in range(m))
        cut = tr_adj_p**2 / _trace_product(adj_a, adj_p)
    else:
        cut = 0.0
    restricted = np.array(np.broadcast_to(np.where(full, imf, cut), batch))
    imf = np.array(np.broadcast_to(np.where(full, imf, 0.0), batch))
    doubt = ~(full | short)
    if doubt.any():
        pa, aa = stack_entries(p)[doubt], stack_entries(a)[doubt]
        imf[doubt], rank[doubt], restricted[doubt] = _spectral(pa, aa, tol)
    return imf, rank, restricted, adj_a


def _trace_product(x, y):
    """tr(X·Y) of two square entry lists."""
    k = len(x)
    return sum(x[i][j] * y[j][i] for i in range(k) for j in range(k))


def _inverse_or_inf(a):
    e = entries(a) if a.shape[-1] <= 3 else None
    if e is not None:
        det = det_entries(e)
        inv = stack_entries([[v / det for v in row] for row in adjugate_entries(e)])
        ok = det > 0.0
    else:
        ev = np.linalg.eigvalsh(a)
        ok = ev[..., 0] > 0.0
        inv = np.linalg.inv(np.where(ok[..., None, None], a, np.eye(a.shape[-1])))
    return np.where(ok[..., None, None], inv, np.inf)


def _spectral(p, a, tol):
    """ξ, rank and restricted ξ from the eigenvalues of C = L⁻¹·P·L⁻ᵀ (A = Λ⁻¹ = L·Lᵀ).

    C has the eigenvalues of Λ·P = I − Λ·Λ_L⁻¹; for C·w = λ·w with λ > 0, L·w lies in
    range(P), so the columns L·w₊ span the directions the free joints can move.
    """
    m = p.shape[-1]
    low = np.linalg.cholesky(a)
    y = np.linalg.solve(low, p)
    c = np.linalg.solve(low, np.swapaxes(y, -1, -2))
    lam, vec = np.linalg.eigh(0.5 * (c + np.swapaxes(c, -1, -2)))
    lam = np.clip(lam, 0.0, 1.0)
    rank = np.sum(lam > tol, axis=-1)
    imf = np.where(rank == m, np.prod(lam, axis=-1), 0.0)
    restricted = np.where(rank == m, imf, 0.0)
    for r in range(1, m):
        sel = rank == r
        if sel.any():
            b = low[sel] @ vec[sel][..., -r:]
            bt = np.swapaxes(b, -1, -2)
            restricted[sel] = np.linalg.det(bt @ p[sel] @ b) / np.linalg.det(bt @ a[sel] @ b)
    return imf, rank, restricted
