"""Impact-mitigation and effective-mass bounds over partial designs (docs/optimizer.md, items 6
and 8): the mass matrix grows in the Loewner order with every actuator mass and reflected
inertia, so interval bounds for a partial design come from the lightest / heaviest remaining
choices.

Functions of a :class:`~jointwright.solve.model.SizingModel` (``model``).
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Sequence

import numpy as np

from ..metrics.linalg_small import (
    adjugate_entries,
    cholesky_entries,
    det_entries,
    forward_entries,
    gram_entries,
    quad_entries,
    stack_entries,
)

#: box evaluations per child at most: the plain IMF bound and the screen against the limits, and
#: the screen where the IMF is the objective (its bound must fall below the incumbent's value)
IMF_BOXES, IMF_OBJECTIVE_BOXES = 16, 96


def imf_limits_or_objective(model) -> bool:
    if (
        model.impact_evaluator is None
        or model.project.rotor_coupling
        or not model.impact_evaluator.floating
    ):
        return False
    if model.kind == "imf" or (model.measure is not None and model.measure[0] == "imf"):
        return True
    return any(
        "imf_min" in c.limits or "directional_imf_min" in c.limits for c in model.impact_cases
    )


def impact_bounds(
    model, idx: np.ndarray, unit: Sequence[int], options: np.ndarray, st: dict
) -> dict:
    """Upper bounds (K,) on the IMF ξ and the directional IMF ξ_x of every impact case over
    all completions of the K children (docs/optimizer.md, item 8).

    With A = Λ⁻¹ = J·H⁻¹·Jᵀ (base and unlocked joints) and B = Λ_L⁻¹ = J_b·H_bb⁻¹·J_bᵀ,
    ξ = det(A − B)/det(A) grows with A and falls with B in the Loewner order, and
    ξ_x = 1 − xᵀA⁻¹x / xᵀB⁻¹x likewise. H only grows with every actuator mass and every
    reflected inertia (locking is the limit of infinite inertia), so A is largest with every
    unassigned joint at its least mass and least back-driven reflected inertia, and B is
    smallest with every unassigned joint at its greatest mass (B does not see the reflected
    inertia). Evaluating ξ at (A_max, B_min) bounds every completion; the free joints' mass
    ranges are split into boxes (:func:`box_bounds`, about :data:`IMF_BOXES` per child)."""
    return box_bounds(model, idx, unit, options, st, budget=IMF_BOXES)[0]


def _mass_table(model, j: int):
    """Joint j's candidates by distinct mass: the sorted masses and a range-minimum table of
    the least back-driven reflected inertia per mass (level k: minima over 2^k masses)."""
    cands = model.candidates[j]
    cache = model.__dict__.setdefault("_imf_mass_tables", {})
    hit = cache.get(j)
    if hit is not None and hit[0] is cands:
        return hit[1]
    u, inv = np.unique(model.mass[cands], return_inverse=True)
    rmin = np.full(u.size, np.inf)
    np.minimum.at(rmin, np.asarray(inv).reshape(-1), model.reflected[cands])
    levels = [rmin]
    while 2 ** len(levels) <= u.size:
        h = 2 ** (len(levels) - 1)
        levels.append(np.minimum(levels[-1][:-h], levels[-1][h:]))
    cache[j] = (cands, (u, levels))
    return u, levels


def _range_min(levels: list, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """min of levels[0][a:b] for every pair (a < b), two table look-ups each."""
    k = np.floor(np.log2(b - a)).astype(np.int64)
    out = np.empty(a.size)
    for kk in np.unique(k):
        rows = k == kk
        table = levels[kk]
        out[rows] = np.minimum(table[a[rows]], table[b[rows] - 2**kk])
    return out


def box_bounds(
    model,
    idx: np.ndarray,
    unit: Sequence[int],
    options: np.ndarray,
    st: dict,
    *,
    floor: float | None = None,
    limits: bool = False,
    budget: int = IMF_BOXES,
):
    """IMF bounds over boxes of the free joints' masses (docs/optimizer.md, item 8).

    Each free joint's candidates, sorted by distinct mass, form a range; a box is one range per
    free joint, bounded by ξ(A_max, B_min) with every free joint at its range's least mass and
    least reflected inertia (for A) and greatest mass (for B). Every completion lies in one box,
    so the largest bound over a child's boxes bounds it. Boxes are halved at the free joint with
    the most masses left, breadth first, while they matter: with ``limits`` a box whose bound
    misses an IMF limit holds no feasible completion and is dropped; a box whose objective bound
    is below ``floor`` holds no improving one and is kept as it is; a box of one mass per free
    joint is exact (its bound is the IMF of a real completion) and, when it meets the limits and
    the floor, ends its child's refinement. At most ``budget`` box evaluations per child.

    Returns (per impact case (ξ bound, ξ_x bound), objective bound or None, live): maxima over
    the child's live boxes (−inf where none is live; live False: every completion misses an
    IMF limit)."""
    K0 = options.size
    # children differ only in the unit's mass and reflected inertia: bound each pair once
    pairs = np.stack(
        [
            model.mass[options],
            np.where(np.isfinite(model.reflected[options]), model.reflected[options], -1.0),
        ],
        axis=1,
    )
    _u, first, back = np.unique(pairs, axis=0, return_index=True, return_inverse=True)
    back = np.asarray(back).reshape(-1)
    if first.size < K0:
        per, obj, live = box_bounds(
            model, idx, unit, options[first], st, floor=floor, limits=limits, budget=budget
        )
        per = {k: (v[0][back], v[1][back]) for k, v in per.items()}
        return per, (None if obj is None else obj[back]), live[back]
    K = options.size
    full = np.broadcast_to(idx, (K, model.n)).copy()
    full[:, list(unit)] = options[:, None]
    safe = np.where(full < 0, 0, full)
    base_m, base_r = model.mass[safe], model.reflected[safe]
    F = np.flatnonzero(full[0] < 0) if K else np.zeros(0, dtype=np.int64)
    tables = [_mass_table(model, int(j)) for j in F]
    sizes = np.array([t[0].size for t in tables], dtype=np.int64)
    names = [pc.case.name for pc in model.impact_evaluator.cases if pc.case.kind == "impact"]
    per = {n: (np.full(K, -np.inf), np.full(K, -np.inf)) for n in names}
    obj_kind = model.kind == "imf" or (model.measure is not None and model.measure[0] == "imf")
    best = np.full(K, -np.inf)
    live = np.zeros(K, dtype=bool)
    if np.any(sizes == 0):  # a free joint without candidates: no completion at all
        return per, (best if obj_kind else None), live
    settled = np.zeros(K, dtype=bool)
    # first round: the whole box of every child and, as a witness, the completion with every
    # free joint at its least reflected inertia (a real design: its exact IMF may settle the
    # child at once; a sub-box adds nothing above the whole box's bound)
    witness = np.array([int(np.argmin(t[1][0])) for t in tables], dtype=np.int64)
    child = np.concatenate([np.arange(K), np.arange(K) if F.size else np.zeros(0, np.int64)])
    lo = np.zeros((child.size, F.size), dtype=np.int64)
    hi = np.broadcast_to(sizes, (child.size, F.size)).copy()
    lo[K:], hi[K:] = witness, witness + 1
    spent, cap = 0, budget * K
    while child.size:
        m_lo, m_hi, r_lo = base_m[child], base_m[child], base_r[child]
        for i, j in enumerate(F):
            u, levels = tables[i]
            m_lo[:, j], m_hi[:, j] = u[lo[:, i]], u[hi[:, i] - 1]
            r_lo[:, j] = _range_min(levels, lo[:, i], hi[:, i])
        got = _impact_bounds_at(model, child.size, m_lo, m_hi, r_lo)
        spent += child.size
        dead = np.zeros(child.size, dtype=bool)
        if limits:
            dead = ~_meets_limits(model, got, child.size)
        obj = _objective_of(model, got) if obj_kind else None
        high = np.ones(child.size, dtype=bool)
        if obj is not None and floor is not None:
            high = obj >= floor
        exact = np.all(hi - lo == 1, axis=1)
        settled[child[~dead & exact & high]] = True
        split = ~dead & ~exact & high & ~settled[child]
        if spent + 2 * int(np.count_nonzero(split)) > cap:
            split[:] = False
        done = ~split & ~dead
        for n in names:
            np.maximum.at(per[n][0], child[done], got[n][0][done])
            np.maximum.at(per[n][1], child[done], got[n][1][done])
        if obj is not None:
            np.maximum.at(best, child[done], obj[done])
        live[child[done]] = True
        # halve every box still open at its free joint with the most masses left
        rows = np.flatnonzero(split)
        if rows.size == 0:
            break
        at = np.argmax(hi[rows] - lo[rows], axis=1)
        mid = (lo[rows, at] + hi[rows, at]) // 2
        left_hi, right_lo = hi[rows].copy(), lo[rows].copy()
        left_hi[np.arange(rows.size), at] = mid
        right_lo[np.arange(rows.size), at] = mid
        child = np.concatenate([child[rows], child[rows]])
        lo = np.concatenate([lo[rows], right_lo])
        hi = np.concatenate([left_hi, hi[rows]])
    return per, (best if obj_kind else None), live


def _meets_limits(model, got: dict, P: int) -> np.ndarray:
    """Where the bounds reach every IMF limit (the checks' tolerance)."""
    ok = np.ones(P, dtype=bool)
    for c in model.impact_cases:
        if c.name not in got:
            continue
        xi, xd = got[c.name]
        if "imf_min" in c.limits:
            ok &= xi >= c.limits["imf_min"] * (1 - 1e-9) - 1e-12
        if "directional_imf_min" in c.limits:
            ok &= xd >= c.limits["directional_imf_min"] * (1 - 1e-9) - 1e-12
    return ok


def _objective_of(model, got: dict) -> np.ndarray:
    """The objective's bound from the cases' bounds: the worst case's ξ for ``imf``, the
    measured case's ξ for an IMF measure."""
    if model.kind == "imf":
        return np.min([v[0] for v in got.values()], axis=0)
    return got[model.measure[1]][0]


#: rows of mass and inertia extremes bounded at once: each row holds a few mass matrices and
#: their factors (kilobytes), so a table of a million options is bounded in pieces
BOUND_CHUNK = 16_384


def _impact_bounds_at(model, K: int, m_lo, m_hi, r_lo) -> dict:
    """:func:`impact_bounds` for given mass and reflected-inertia extremes (K, n), in pieces of
    :data:`BOUND_CHUNK` rows (each row is bounded on its own)."""
    if K <= BOUND_CHUNK:
        return _impact_bounds_rows(model, K, m_lo, m_hi, r_lo)
    m_lo, m_hi, r_lo = (np.broadcast_to(a, (K, model.n)) for a in (m_lo, m_hi, r_lo))
    parts = [
        _impact_bounds_rows(
            model,
            min(K, s + BOUND_CHUNK) - s,
            *(a[s : s + BOUND_CHUNK] for a in (m_lo, m_hi, r_lo)),
        )
        for s in range(0, K, BOUND_CHUNK)
    ]
    return {
        name: tuple(np.concatenate([p[name][i] for p in parts]) for i in range(2))
        for name in parts[0]
    }


def _impact_bounds_rows(model, K: int, m_lo, m_hi, r_lo) -> dict:
    """:func:`_impact_bounds_at` on one piece."""
    from ..robot.basis import mass_matrix

    locked = ~np.isfinite(r_lo)
    r_lo = np.where(locked, 0.0, r_lo)
    out = {}
    for pc in model.impact_evaluator.cases:
        if pc.case.kind != "impact":
            continue
        nb = 6
        H_lo = mass_matrix(pc.basis, m_lo, r_lo)
        H_hi = mass_matrix(pc.basis, m_hi, np.zeros_like(r_lo))
        J = np.asarray(pc.J, dtype=float)
        nv = H_lo.shape[-1]
        # moving coordinates: the base, free joints, and actuated joints that do not self-lock
        # (held joints never move: they join the locked set, as in the evaluator)
        keep = np.ones((K, nv), dtype=bool)
        keep[:, model.evaluator.held_index] = False
        keep[:, model.evaluator.v_index] = ~locked
        both = keep[:, :, None] & keep[:, None, :]
        H_lo = np.where(both, H_lo, np.eye(nv))
        Jt = np.where(keep[:, :, None], np.broadcast_to(J.T, (K,) + J.T.shape), 0.0)
        # A = J·H⁻¹·Jᵀ = WᵀW with W = L⁻¹Jᵀ (Cholesky, entry by entry over the batch, which
        # sits on the last axis so that every entry is one contiguous array)
        Jb = J[:, :nb]
        A, good_a = _gram(np.moveaxis(H_lo, 0, -1), np.moveaxis(Jt, 0, -1))
        B, good_b = _gram(np.moveaxis(H_hi[:, :nb, :nb], 0, -1), Jb.T)
        x = list(np.asarray(pc.u, dtype=float) / np.linalg.norm(pc.u))
        with np.errstate(divide="ignore", invalid="ignore"):
            if len(A) <= 3:
                det_a = det_entries(A)
                diff = [
                    [p - q for p, q in zip(r, t, strict=True)] for r, t in zip(A, B, strict=True)
                ]
                xi = det_entries(diff) / det_a
                qa = quad_entries(adjugate_entries(A), x) / det_a
                qb = quad_entries(adjugate_entries(B), x) / det_entries(B)
            else:  # a contact of more than 3 directions: the generic routines
                Am, Bm = stack_entries(A), stack_entries(B)
                xi = np.linalg.det(Am - Bm) / np.linalg.det(Am)
                qa = np.einsum("i,...ij,j->...", np.asarray(x), np.linalg.inv(Am), np.asarray(x))
                qb = np.einsum("i,...ij,j->...", np.asarray(x), np.linalg.inv(Bm), np.asarray(x))
            xd = np.where(qb > 0, 1.0 - qa / qb, 1.0)
        # a factorization that failed (round-off) proves nothing: the trivial bound 1
        xi = np.where(good_a & good_b, xi, np.nan)
        xd = np.where(good_a & good_b, xd, np.nan)
        xi = np.where(np.isfinite(xi), np.clip(xi, 0.0, 1.0), 1.0)
        xd = np.where(np.isfinite(xd), np.clip(xd, 0.0, 1.0), 1.0)
        # round-off: a relative slack on both
        out[pc.case.name] = (
            np.minimum(xi * (1 + 1e-7) + 1e-9, 1.0),
            np.minimum(xd * (1 + 1e-7) + 1e-9, 1.0),
        )
    return out


def _gram(h: np.ndarray, b: np.ndarray):
    """Entries of Bᵀ·H⁻¹·B (c×c) and where H is positive definite; ``h`` (n, n, K) symmetric,
    ``b`` (n, c) or (n, c, K), the batch on the last axis."""
    n = h.shape[0]
    low, positive = cholesky_entries([[h[i, j] for j in range(n)] for i in range(n)])
    w = forward_entries(low, [[b[i, j] for j in range(b.shape[1])] for i in range(n)])
    return gram_entries(w), positive


def impact_ok(model, idx, unit, options, st, bounds=None, floor=None) -> np.ndarray:
    """False where an IMF limit is provably missed by every completion; for the ``imf``
    objective (and an IMF measure) the objective bound in ``bounds`` is lowered to the
    largest bound over the live boxes (:func:`box_bounds`, refined against the limits and
    ``floor``, the objective an improving design must reach)."""
    K = options.size
    if K == 0:
        return np.ones(K, dtype=bool)
    imf_objective = model.kind == "imf" or (model.measure is not None and model.measure[0] == "imf")
    budget = IMF_OBJECTIVE_BOXES if imf_objective else IMF_BOXES
    _per, obj, live = box_bounds(
        model, idx, unit, options, st, floor=floor, limits=True, budget=budget
    )
    if bounds is not None and obj is not None:
        bounds["objective"] = np.minimum(bounds["objective"], obj)
    return live


def effective_mass_ok(
    model,
    idx: np.ndarray,
    unit: tuple,
    options: np.ndarray,
    st: dict,
    bounds: dict | None = None,
    deadline: float | None = None,
) -> np.ndarray:
    """False where the effective mass with every unassigned joint at its lightest mass and
    least reflected inertia already exceeds a limit (effective mass grows with the mass
    matrix in the Loewner order, so no completion can do better). True without limits or
    with rotor coupling (then the bound is not proven). Options are bounded
    :data:`BOUND_CHUNK` at a time; past ``deadline`` (``time.perf_counter()``) the rest are
    left uncut and their objective bounds as they were (skipping a cut is safe)."""
    K = options.size
    em_kind = model.measure is not None and model.measure[0] == "effective_mass"
    ok = np.ones(K, dtype=bool)
    if not (model.effective_mass_limits or em_kind) or model.project.rotor_coupling or K == 0:
        return ok
    for start in range(0, K, BOUND_CHUNK):
        if deadline is not None and time.perf_counter() > deadline:
            break
        part = slice(start, min(start + BOUND_CHUNK, K))
        full = np.broadcast_to(idx, (part.stop - start, model.n)).copy()
        full[:, list(unit)] = options[part, None]
        lows = np.broadcast_to(st["mmin"], full.shape), np.broadcast_to(st["rmin"], full.shape)
        em = virtual_effective_mass(model, full, *lows)
        for name, limit in model.effective_mass_limits:
            ok[part] &= em[name] <= limit * (1 + 1e-9) + 1e-12
        if em_kind and bounds is not None:
            bounds["objective"][part] = np.minimum(bounds["objective"][part], -em[model.measure[1]])
    return ok


def virtual_effective_mass(
    model, full: np.ndarray, m_lo: np.ndarray, r_lo: np.ndarray
) -> dict[str, np.ndarray]:
    """Per impact case, the effective mass (R,) of the virtual designs ``full`` (R, n): the
    assigned joints (index ≥ 0) at their options, every free joint (−1) at mass ``m_lo`` and
    back-driven reflected inertia ``r_lo`` (R, n; infinite: locked). The effective mass grows
    with the mass matrix in the Loewner order, so with each free joint's least mass and least
    reflected inertia over a set of its options this bounds from below every completion that
    takes its free joints from those sets."""
    R = full.shape[0]
    safe = np.where(full < 0, 0, full)
    arrays = model.table.arrays(safe)
    fields_ = {f.name: getattr(arrays, f.name).copy() for f in dataclasses.fields(arrays)}
    free = full < 0
    if free.any():
        locked = ~np.isfinite(r_lo)
        fields_["mass"][free] = m_lo[free]
        fields_["ratio"][free] = 1.0
        fields_["eta_backward"][free] = 1.0
        fields_["eta_forward"][free] = 1.0
        fields_["self_locking"][free] = locked[free]
        fields_["rotor_inertia"][free] = np.where(locked, 0.0, r_lo)[free]
    virtual = type(arrays)(**fields_)
    ev = model.impact_evaluator.evaluate(virtual, detail=False)
    return {
        pc.case.name: np.asarray(ev[pc.case.name]["effective_mass"], dtype=float).reshape(R)
        for pc in model.impact_evaluator.cases
        if pc.case.kind == "impact"
    }
