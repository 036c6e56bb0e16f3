"""Impact-mitigation and effective-mass bounds over partial designs (docs/optimizer.md, items 6
and 8): the mass matrix grows in the Loewner order with every actuator mass and reflected
inertia, so interval bounds for a partial design come from the lightest / heaviest remaining
choices.

Functions of a :class:`~jointwright.solve.model.SizingModel` (``model``).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Sequence

import numpy as np

#: mass groups per free joint in the IMF bound, and group combinations per bound at most
IMF_GROUPS, IMF_COMBOS = 4, 16


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
    inertia). Evaluating ξ at (A_max, B_min) bounds every completion."""
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
        sub = impact_bounds(model, idx, unit, options[first], st)
        return {k: (v[0][back], v[1][back]) for k, v in sub.items()}
    K = options.size
    unit = list(unit)
    full = np.broadcast_to(idx, (K, model.n)).copy()
    full[:, unit] = options[:, None]
    free = full < 0
    safe = np.where(free, 0, full)
    m_lo = np.where(free, st["mmin"][None, :], model.mass[safe])
    m_hi = np.where(free, st["mmax"][None, :], model.mass[safe])
    r_lo = np.where(free, st["rmin"][None, :], model.reflected[safe])
    # each free joint's candidates split into mass groups: every completion takes, at each
    # free joint, an option of one group, so the largest bound over the group combinations
    # bounds it (docs/optimizer.md, item 8); one combination is the plain bound
    F = np.flatnonzero(free[0]) if K else np.zeros(0, dtype=np.int64)
    out: dict = {}
    for combo in _imf_combos(model, F, st):
        m_lo[:, F], m_hi[:, F], r_lo[:, F] = combo
        got = _impact_bounds_at(model, K, m_lo, m_hi, r_lo.copy())
        if not out:
            out = got
        else:
            out = {
                k: (np.maximum(out[k][0], v[0]), np.maximum(out[k][1], v[1]))
                for k, v in got.items()
            }
    return out


def _imf_combos(model, F: np.ndarray, st: dict):
    """(m_min, m_max, r_min) rows over the free joints F, one per combination of mass groups
    (at most :data:`IMF_COMBOS`); one row of the plain extremes when F is empty."""
    if F.size == 0:
        yield (np.zeros(0), np.zeros(0), np.zeros(0))
        return
    per = max(1, min(IMF_GROUPS, int(math.floor(IMF_COMBOS ** (1.0 / F.size) + 1e-9))))
    groups = []
    for j in F:
        c = model.candidates[j]
        m = model.mass[c]
        u = np.unique(m)
        if per == 1 or u.size < 2:
            groups.append([(st["mmin"][j], st["mmax"][j], st["rmin"][j])])
            continue
        cuts = u[np.linspace(0, u.size, min(per, u.size) + 1).astype(int)[1:-1]]
        g = np.searchsorted(cuts, m, side="right")
        groups.append(
            [
                (m[g == k].min(), m[g == k].max(), model.reflected[c][g == k].min())
                for k in range(cuts.size + 1)
                if np.any(g == k)
            ]
        )
    for combo in itertools.product(*groups):
        arr = np.array(combo, dtype=float)
        yield arr[:, 0], arr[:, 1], arr[:, 2]


def _impact_bounds_at(model, K: int, m_lo, m_hi, r_lo) -> dict:
    """:func:`impact_bounds` for given mass and reflected-inertia extremes (K, n)."""
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
        # moving coordinates: the base, free joints, and actuated joints that do not model-lock
        # (held joints never move: they join the locked set, as in the evaluator)
        keep = np.ones((K, nv), dtype=bool)
        keep[:, model.evaluator.held_index] = False
        keep[:, model.evaluator.v_index] = ~locked
        both = keep[:, :, None] & keep[:, None, :]
        H_lo = np.where(both, H_lo, np.eye(nv))
        Jt = np.where(keep[:, :, None], np.broadcast_to(J.T, (K,) + J.T.shape), 0.0)
        A = np.einsum("ij,kjl->kil", J, np.linalg.solve(H_lo, Jt))
        Jb = J[:, :nb]
        rhs = np.broadcast_to(Jb.T, (K,) + Jb.T.shape)
        B = np.einsum("ij,kjl->kil", Jb, np.linalg.solve(H_hi[:, :nb, :nb], rhs))
        A = 0.5 * (A + np.swapaxes(A, 1, 2))
        B = 0.5 * (B + np.swapaxes(B, 1, 2))
        det_a = np.linalg.det(A)
        with np.errstate(divide="ignore", invalid="ignore"):
            xi = np.linalg.det(A - B) / det_a
            x = np.asarray(pc.u, dtype=float) / np.linalg.norm(pc.u)
            qa = np.einsum("i,kij,j->k", x, np.linalg.inv(A), x)
            qb = np.einsum("i,kij,j->k", x, np.linalg.inv(B), x)
            xd = np.where(qb > 0, 1.0 - qa / qb, 1.0)
        xi = np.where(np.isfinite(xi), np.clip(xi, 0.0, 1.0), 1.0)
        xd = np.where(np.isfinite(xd), np.clip(xd, 0.0, 1.0), 1.0)
        # round-off: a relative slack on both
        out[pc.case.name] = (
            np.minimum(xi * (1 + 1e-7) + 1e-9, 1.0),
            np.minimum(xd * (1 + 1e-7) + 1e-9, 1.0),
        )
    return out


def impact_ok(model, idx, unit, options, st, bounds=None) -> np.ndarray:
    """False where an IMF limit is provably missed by every completion; for the ``imf``
    objective (and an IMF measure) the objective bound in ``bounds`` is lowered to the
    worst case's bound (:func:`impact_bounds`)."""
    K = options.size
    ok = np.ones(K, dtype=bool)
    if K == 0:
        return ok
    ub = impact_bounds(model, idx, unit, options, st)
    for c in model.impact_cases:
        if c.name not in ub:
            continue
        xi, xd = ub[c.name]
        if "imf_min" in c.limits:
            ok &= xi >= c.limits["imf_min"] * (1 - 1e-9) - 1e-12
        if "directional_imf_min" in c.limits:
            ok &= xd >= c.limits["directional_imf_min"] * (1 - 1e-9) - 1e-12
    if bounds is not None:
        if model.kind == "imf":
            f = np.min([ub[n][0] for n in ub], axis=0) if ub else np.ones(K)
            bounds["objective"] = np.minimum(bounds["objective"], f)
        elif model.measure is not None and model.measure[0] == "imf" and model.measure[1] in ub:
            bounds["objective"] = np.minimum(bounds["objective"], ub[model.measure[1]][0])
    return ok


def effective_mass_ok(
    model,
    idx: np.ndarray,
    unit: tuple,
    options: np.ndarray,
    st: dict,
    bounds: dict | None = None,
) -> np.ndarray:
    """False where the effective mass with every unassigned joint at its lightest mass and
    least reflected inertia already exceeds a limit (effective mass grows with the mass
    matrix in the Loewner order, so no completion can do better). True without limits or
    with rotor coupling (then the bound is not proven)."""
    K = options.size
    em_kind = model.measure is not None and model.measure[0] == "effective_mass"
    if not (model.effective_mass_limits or em_kind) or model.project.rotor_coupling or K == 0:
        return np.ones(K, dtype=bool)
    full = np.broadcast_to(idx, (K, model.n)).copy()
    full[:, list(unit)] = options[:, None]
    free = np.flatnonzero(full[0] < 0)
    safe = np.where(full < 0, 0, full)
    arrays = model.table.arrays(safe)
    fields_ = {f.name: getattr(arrays, f.name).copy() for f in dataclasses.fields(arrays)}
    for k in free:
        fields_["mass"][:, k] = st["mmin"][k]
        fields_["ratio"][:, k] = 1.0
        fields_["eta_backward"][:, k] = 1.0
        fields_["eta_forward"][:, k] = 1.0
        locked = not math.isfinite(st["rmin"][k])
        fields_["self_locking"][:, k] = locked
        fields_["rotor_inertia"][:, k] = 0.0 if locked else st["rmin"][k]
    virtual = type(arrays)(**fields_)
    ev = model.impact_evaluator.evaluate(virtual, detail=False)
    ok = np.ones(K, dtype=bool)
    for name, limit in model.effective_mass_limits:
        ok &= np.asarray(ev[name]["effective_mass"]) <= limit * (1 + 1e-9) + 1e-12
    if em_kind and bounds is not None:
        bounds["objective"] = np.minimum(
            bounds["objective"], -np.asarray(ev[model.measure[1]]["effective_mass"])
        )
    return ok
