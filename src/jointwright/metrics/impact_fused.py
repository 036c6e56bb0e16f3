"""The impact mitigation factor of many designs in one fused pass, designs on the last axis.

:func:`.impact_mitigation.impact_mitigation` is the reference: it takes mass matrices
shaped ``(..., nv, nv)`` with any batch shape, checks them, and works through generic entry
lists. The evaluator's impact case is narrower — one contact Jacobian shared by every design,
mass matrices that are symmetric by construction — and this module does that case with the
same formulas (Wensing et al., IEEE T-RO 33(3), 2017; docs/metrics.md) in fewer operations:

* **batch-last layout**: each entry of the mass matrices is a contiguous row of D numbers, so
  every step is one vector operation over all designs, with no gathering or stacking between;
* **structural zeros skipped**: an entry that is zero for every design in the batch (in a
  floating base's mass matrix, for example, the coupling of two translations) and every zero of
  the shared Jacobian is carried as the Python number ``0.0``, and products with it are never
  formed. Dropping ``x − 0·y`` changes no bit of a finite result;
* **one factorization**: the lower Cholesky factor of H (base first) and W = L⁻¹·Jᵀ give
  Λ_L⁻¹ = W_bᵀ·W_b and P = W_jᵀ·W_j; ξ, the rank, the restricted ξ and ξ_x follow by cofactors
  of 3×3 (or smaller) matrices, and the effective mass along x is 1/(xᵀ·Λ⁻¹·x) without forming
  Λ. Items whose rank the cofactor chain cannot settle go to the reference's eigenvalue path.

Results equal the reference to round-off (tests/test_impact_fused.py, 1e-9 relative).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, SingularPoseError
from .impact_mitigation import classified_imf
from .inertia import RANK_TOL
from .linalg_small import API, adjugate_entries, det_entries

#: an entry: a row over the designs, or a number shared by all of them (0.0: structural zero)
Entry = np.ndarray | float


@dataclass(frozen=True)
class FusedImpact:
    """Impact results of D designs (each array shaped ``(D,)``).

    Attributes
    ----------
    imf, rank, imf_restricted
        As in :class:`jointwright.metrics.impact_mitigation.ImpactMitigation`.
    imf_direction : ξ_x along the given direction
    mobility : xᵀ·Λ⁻¹·x = xᵀ·J·H⁻¹·Jᵀ·x, 1/kg; the effective mass along x is its inverse
    """

    imf: np.ndarray
    rank: np.ndarray
    imf_restricted: np.ndarray
    imf_direction: np.ndarray
    mobility: np.ndarray


def _zero(x: Entry) -> bool:
    return isinstance(x, float) and x == 0.0


def _mul(a: Entry, b: Entry) -> Entry:
    if _zero(a) or _zero(b):
        return 0.0
    return a * b


def _add(a: Entry, b: Entry) -> Entry:
    if _zero(a):
        return b
    if _zero(b):
        return a
    return a + b


def _sub(a: Entry, b: Entry) -> Entry:
    if _zero(b):
        return a
    if _zero(a):
        return -b
    return a - b


def mass_matrix_entries(
    M0: np.ndarray,
    M_mass: np.ndarray,
    masses: np.ndarray,
    v_index: np.ndarray,
    reflected: np.ndarray,
) -> list[list[Entry]]:
    """Lower triangle of H = M0 + Σ_k m_k·M_k + diag(reflected at the actuated joints).

    The same sum as :func:`jointwright.robot.basis.mass_matrix` (one pose, no rotor coupling),
    formed as one matrix product with the designs on the last axis. Entries that no design's
    mass changes are numbers (0.0 where zero).

    Parameters
    ----------
    M0 : array (nv, nv), link-only mass matrix
    M_mass : array (n_act, nv, nv), mass matrix per kg of each actuator
    masses : array (D, n_act), kg
    v_index : int array (n_act,), velocity index of each actuated joint
    reflected : array (D, n_act), reflected inertia per actuated joint (finite)

    Returns
    -------
    entry list, ``h[i][j]`` for j ≤ i (rows of D numbers or numbers); ``h[i][j]`` for j > i is 0
    """
    nv = M0.shape[0]
    rows, cols = np.tril_indices(nv)
    varies = np.any(M_mass[:, rows, cols] != 0.0, axis=0)
    ri, ci = rows[varies], cols[varies]
    per_mass = M_mass[:, ri, ci]  # (n_act, k)
    prod = per_mass.T @ masses.T  # (k, D)
    prod += M0[ri, ci][:, None]
    h: list[list[Entry]] = [[0.0] * nv for _ in range(nv)]
    for i, j in zip(rows[~varies], cols[~varies], strict=True):
        h[i][j] = float(M0[i, j])
    for r, (i, j) in enumerate(zip(ri, ci, strict=True)):
        h[i][j] = prod[r]
    for k, j in enumerate(v_index):
        h[j][j] = h[j][j] + reflected[:, k]
    return h


def entries_batch_last(H: np.ndarray) -> list[list[Entry]]:
    """Lower-triangle entry list of mass matrices laid out ``(nv, nv, D)``; entries zero in every
    design become 0.0."""
    nv = H.shape[0]
    nonzero = np.asarray(H.any(axis=-1))
    return [[H[i, j] if nonzero[i, j] else 0.0 for j in range(nv)] for i in range(nv)]


def impact_fused(
    H: list[list[Entry]],
    J: np.ndarray,
    n_base: int,
    locked: np.ndarray | None,
    direction: np.ndarray,
    *,
    rank_tol: float = RANK_TOL,
) -> FusedImpact:
    """ξ = det(I − Λ·Λ_L⁻¹), its rank and restricted form, ξ_x and xᵀ·Λ⁻¹·x for D designs.

    Parameters
    ----------
    H : entry list (nv × nv), ``H[i][j]`` for j ≤ i
        Lower triangle of the mass matrices, base first (symmetric by construction): rows of D
        numbers, or numbers shared by all designs (:func:`mass_matrix_entries`,
        :func:`entries_batch_last`).
    J : array (m, nv), m ≤ 3
        Contact Jacobian shared by all designs.
    n_base : int
        Base coordinates (6 for a free-flyer).
    locked : bool array (D, nv − n_base) or None
        Joints locked in the impact (their rows and columns leave H, their columns leave J).
    direction : array (m,), x (normally a unit vector; ξ_x does not depend on its length)
    rank_tol : float
        As in :func:`jointwright.metrics.impact_mitigation.impact_mitigation`.

    Returns
    -------
    FusedImpact

    Raises
    ------
    InputError
        H not positive definite in some item.
    SingularPoseError
        Base and free joints cannot move the contact in every direction.
    """
    nv, D = len(H), batch_size(H)
    m = J.shape[0]
    if m > 3:
        raise ValueError(f"the fused impact kernel is for m ≤ 3 contact rows, got {m}")
    free: list[np.ndarray | None] = [None] * nv
    if locked is not None and locked.any():
        for j in range(nv - n_base):
            if locked[:, j].any():
                free[n_base + j] = ~locked[:, j]
    h: list[list[Entry]] = [[0.0] * nv for _ in range(nv)]
    for i in range(nv):
        for j in range(i + 1):
            e = H[i][j]
            fi = free[i]
            if i == j and fi is not None:
                e = np.where(fi, e, 1.0)
            elif i != j and not _zero(e):
                for k in (i, j):
                    fk = free[k]
                    if fk is not None:
                        e = np.where(fk, e, 0.0)
            h[i][j] = e
    b: list[list[Entry]] = []
    for i in range(nv):
        row: list[Entry] = []
        for c in range(m):
            v = float(J[c, i])
            fi = free[i]
            row.append(v if fi is None or v == 0.0 else np.where(fi, v, 0.0))
        b.append(row)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        w, positive = _cholesky_whiten(h, b)
        if not np.all(positive):
            raise InputError(
                API,
                "H",
                "must be a symmetric positive definite mass matrix (symmetric to 1e-8 of its "
                "largest diagonal entry) in every batch item",
            )
        inv_l = _gram(w[:n_base], m)
        p = _gram(w[n_base:], m)
        a = [[_full(_add(inv_l[i][j], p[i][j]), D) for j in range(m)] for i in range(m)]
        det_a = det_entries(a)
        if not np.all(det_a > 0.0):
            raise SingularPoseError(
                "impact mitigation: J·H⁻¹·Jᵀ is singular (the base and the free joints cannot "
                "move the contact in every direction; check n_base and the rows of J)"
            )
        p_full = [[_full(x, D) for x in row] for row in p]
        inv_l_full = [[_full(x, D) for x in row] for row in inv_l]
        imf, rank, restricted = _closed_form(p_full, a, det_a, rank_tol)
        x = [float(v) for v in direction]
        mobility = _quad(a, x)
        adj_a = adjugate_entries(a)
        det_l = det_entries(inv_l_full)
        den = np.where(det_l > 0.0, _quad(adjugate_entries(inv_l_full), x) / det_l, np.inf)
        ratio = (_quad(adj_a, x) / det_a) / den
        direc = np.where(np.isfinite(den), np.clip(1.0 - ratio, 0.0, 1.0), 1.0)
    return FusedImpact(
        imf=imf,
        rank=rank.astype(int),
        imf_restricted=restricted,
        imf_direction=direc,
        mobility=np.broadcast_to(mobility, (D,)).copy(),
    )


def batch_size(h: list[list[Entry]]) -> int:
    """Number of designs D in an entry list (the length of its first row entry)."""
    for row in h:
        for x in row:
            if not isinstance(x, float):
                return int(np.shape(x)[-1])
    raise ValueError("the mass matrices do not vary over any design: pass at least one row")


def _full(x: Entry, D: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(x, dtype=float), (D,))


def _cholesky_whiten(
    h: list[list[Entry]], b: list[list[Entry]]
) -> tuple[list[list[Entry]], np.ndarray]:
    """L (H = L·Lᵀ, lower triangle of ``h`` read) and W = L⁻¹·B in one sweep over the rows.

    Row i of L needs rows < i only, and so does row i of W: both are formed together, pivots
    ≤ 0 replaced by 1 and reported in the mask (as :func:`.linalg_small.cholesky_entries`).
    """
    n, c = len(h), len(b[0])
    low: list[list[Entry]] = [[0.0] * n for _ in range(n)]
    w: list[list[Entry]] = [[0.0] * c for _ in range(n)]
    inv_diag: list[Entry] = []
    positive = np.ones((), dtype=bool)
    for i in range(n):
        for j in range(i):
            s = h[i][j]
            for k in range(j):
                s = _sub(s, _mul(low[i][k], low[j][k]))
            low[i][j] = _mul(s, inv_diag[j])
        s = h[i][i]
        for k in range(i):
            s = _sub(s, _mul(low[i][k], low[i][k]))
        good = np.asarray(s) > 0.0
        positive = positive & good
        d = np.sqrt(np.where(good, s, 1.0))
        low[i][i] = d
        inv = 1.0 / d
        inv_diag.append(inv)
        for col in range(c):
            s = b[i][col]
            for k in range(i):
                s = _sub(s, _mul(low[i][k], w[k][col]))
            w[i][col] = _mul(s, inv)
    return w, positive


def _gram(w: list[list[Entry]], m: int) -> list[list[Entry]]:
    """Wᵀ·W of an r×m entry list (symmetric m×m)."""
    g: list[list[Entry]] = [[0.0] * m for _ in range(m)]
    for i in range(m):
        for j in range(i, m):
            s: Entry = 0.0
            for row in w:
                s = _add(s, _mul(row[i], row[j]))
            g[i][j] = s
            g[j][i] = s
    return g


def _quad(a: list[list[np.ndarray]], x: list[float]) -> Entry:
    """xᵀ·A·x with a constant vector x (zeros skipped)."""
    total: Entry = 0.0
    for i, xi in enumerate(x):
        if xi == 0.0:
            continue
        for j, xj in enumerate(x):
            if xj != 0.0:
                total = _add(total, a[i][j] * (xi * xj))
    return total


def _closed_form(
    p: list[list[np.ndarray]], a: list[list[np.ndarray]], det_a: np.ndarray, tol: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """ξ, rank and restricted ξ by cofactors: the rule of
    :func:`.impact_mitigation._closed_form` (elementary symmetric functions of the
    eigenvalues of Λ·P), without forming Λ or Λ_L."""
    imf, rank, restricted, _adj_a = classified_imf(p, a, det_a, tol)
    return imf, rank, restricted
