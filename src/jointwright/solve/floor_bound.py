"""Measure bounds over the completions of a partial design that reach a payload floor
(docs/optimizer.md and docs/frontier.md, "Payload floors").

A completion whose payload objective reaches f uses, at every free joint j, an option whose own
payload bound reaches f (:meth:`SizingModel.own_order`, the bias taken over the free joints'
mass ranges with the assigned joints' masses fixed: the most favourable over every completion).
So over those **useful** options, the least mass, least back-driven reflected inertia, least
cost and greatest mass bound free joint j for every completion of payload ≥ f, and each measure
bound that takes a free joint at such extremes holds for those completions with them:

* effective mass: the virtual design with every free joint at its least useful mass and least
  useful reflected inertia (the effective mass grows with the mass matrix in the Loewner order;
  :func:`.impact_bound.virtual_effective_mass`);
* IMF: ξ(A_max, B_min) with every free joint at its least useful mass and reflected inertia for
  A and its greatest useful mass for B (:func:`.impact_bound._impact_bounds_at`);
* total mass and cost: the assigned joints' values plus each free joint's least useful value.

The useful sets shrink as f grows, so the bound only gets worse (for the measure) with f.
Where some free joint has no useful option, no completion reaches f.

Functions of a :class:`~jointwright.solve.model.SizingModel` (``model``).
"""

from __future__ import annotations

import numpy as np

from . import impact_bound

#: the measures bounded here (the back-drive force has no floor bound)
FLOOR_METRICS = ("effective_mass", "imf", "mass", "cost")


def floor_applies(model, metric: str) -> bool:
    """Whether :func:`floor_bounds` bounds ``metric`` on ``model`` (built for the payload
    objective, measured by ``model.measure``-less metric names)."""
    if metric not in FLOOR_METRICS or model.kind != "payload" or not model.payload:
        return False
    if metric == "effective_mass":
        return model.impact_evaluator is not None and not model.project.rotor_coupling
    if metric == "imf":
        return (
            model.impact_evaluator is not None
            and not model.project.rotor_coupling
            and model.impact_evaluator.floating
        )
    return True


def useful_extremes(model, known: np.ndarray, free, floors: np.ndarray, st: dict) -> dict:
    """Per floor (L,) the extremes (L, n) of the useful options of the joints ``free`` —
    ``mmin``, ``mmax``, ``rmin``, ``cmin`` — and ``empty`` (L,): one of them has no useful
    option (no completion reaches that floor). The own bounds take the joints of ``known``
    (index ≥ 0) at their option's mass and every other joint over its whole mass range; the
    rows' other columns are left 0. Empty dict without payload terms."""
    n, L = model.n, floors.size
    A = np.flatnonzero(known >= 0)
    node = dict(st)
    node["mmin"], node["mmax"] = st["mmin"].copy(), st["mmax"].copy()
    node["mmin"][A] = node["mmax"][A] = model.mass[known[A]]
    out = {k: np.zeros((L, n)) for k in ("mmin", "mmax", "rmin", "cmin")}
    empty = np.zeros(L, dtype=bool)
    slack = 1e-9 * np.maximum(1.0, np.abs(floors)) + 1e-12
    for j in free:
        cands = model.candidates[j]
        got = model.own_order(int(j), cands, node)
        if got is None:
            return {}
        own, order = got
        count = np.searchsorted(-own, -(floors - slack), side="right")  # own ≥ floor − slack
        empty |= count == 0
        at = np.maximum(count - 1, 0)
        for key, values, fn in (
            ("mmin", model.mass, np.minimum),
            ("mmax", model.mass, np.maximum),
            ("rmin", model.reflected, np.minimum),
            ("cmin", model.cost, np.minimum),
        ):
            out[key][:, j] = fn.accumulate(values[cands][order])[at]
    out["empty"] = empty
    return out


def floor_bounds(
    model,
    metric: str,
    case: str | None,
    parent: np.ndarray,
    unit,
    options: np.ndarray,
    floors,
    st: dict,
):
    """Bounds (K, L) on the measure of every completion of each child of ``parent`` (−1 at the
    free joints; child k gives the joints of ``unit`` option ``options[k]``) whose payload
    objective reaches each of ``floors`` (L,), in the frontier's internal sense (larger is
    better: −effective mass, −mass, −cost, +IMF); −inf where no completion reaches the floor.
    The useful options of the free joints are taken over the parent's completions (the unit's
    mass over its whole range in the own bounds), which holds for every child. None where
    :func:`floor_applies` is False or a joint has no candidates."""
    floors = np.asarray(floors, dtype=float)
    options = np.asarray(options, dtype=np.int64)
    if not floor_applies(model, metric):
        return None
    unit = list(unit)
    free = [int(j) for j in np.flatnonzero(parent < 0) if j not in unit]
    ext = useful_extremes(model, parent, free, floors, st)
    if not ext:
        return None
    K, L = options.size, floors.size
    out = np.full((K, L), -np.inf)
    live = ~ext["empty"]
    if not live.any() or K == 0:
        return out
    fl = np.flatnonzero(live)
    rows = np.broadcast_to(parent, (K, fl.size, model.n)).copy()
    rows[:, :, unit] = options[:, None, None]
    rows = rows.reshape(-1, model.n)
    ends = {}
    for key in ("mmin", "mmax", "rmin", "cmin"):
        e = np.broadcast_to(ext[key][fl], (K, fl.size, model.n)).reshape(-1, model.n)
        ends[key] = np.where(rows >= 0, 0.0, e)
    if metric in ("mass", "cost"):
        values = model.mass if metric == "mass" else model.cost
        own = np.where(rows >= 0, values[np.maximum(rows, 0)], 0.0).sum(axis=1)
        got = -(own + ends["mmin" if metric == "mass" else "cmin"].sum(axis=1))
    elif metric == "effective_mass":
        em = impact_bound.virtual_effective_mass(model, rows, ends["mmin"], ends["rmin"])
        got = -em[str(case)]
    else:
        safe = np.maximum(rows, 0)
        assigned = rows >= 0
        m_lo = np.where(assigned, model.mass[safe], ends["mmin"])
        m_hi = np.where(assigned, model.mass[safe], ends["mmax"])
        r_lo = np.where(assigned, model.reflected[safe], ends["rmin"])
        got = impact_bound._impact_bounds_at(model, rows.shape[0], m_lo, m_hi, r_lo)[str(case)][0]
    out[:, fl] = np.asarray(got, dtype=float).reshape(K, fl.size)
    return out
