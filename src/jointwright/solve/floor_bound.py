"""Measure bounds over the completions of a partial design that reach a payload floor
(docs/optimizer.md, item 12; docs/frontier.md, "Payload floors").

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


def useful_extremes(model, idx: np.ndarray, floors: np.ndarray, st: dict) -> dict:
    """Per floor (L,) and joint: the extremes of the free joints' useful options (L, n) —
    ``mmin``, ``mmax``, ``rmin``, ``cmin`` — and ``empty`` (L,): some free joint has no useful
    option (no completion reaches that floor). Assigned joints (``idx`` ≥ 0) keep their own
    option's values."""
    n, L = model.n, floors.size
    A = np.flatnonzero(idx >= 0)
    F = np.flatnonzero(idx < 0)
    node = dict(st)
    node["mmin"], node["mmax"] = st["mmin"].copy(), st["mmax"].copy()
    node["mmin"][A] = node["mmax"][A] = model.mass[idx[A]]
    out = {k: np.zeros((L, n)) for k in ("mmin", "mmax", "rmin", "cmin")}
    for key, values in (("mmin", model.mass), ("mmax", model.mass), ("rmin", model.reflected)):
        out[key][:, A] = values[idx[A]]
    out["cmin"][:, A] = model.cost[idx[A]]
    empty = np.zeros(L, dtype=bool)
    slack = 1e-9 * np.maximum(1.0, np.abs(floors)) + 1e-12
    for j in F:
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


def floor_bounds(model, metric: str, case: str | None, idx: np.ndarray, floors, st: dict):
    """Bounds (L,) on the measure of every completion of the partial design ``idx`` (−1 at the
    free joints) whose payload objective reaches each of ``floors``, in the frontier's internal
    sense (larger is better: −effective mass, −mass, −cost, +IMF); −inf where no completion
    reaches the floor. None where :func:`floor_applies` is False."""
    floors = np.asarray(floors, dtype=float)
    if not floor_applies(model, metric):
        return None
    ext = useful_extremes(model, idx, floors, st)
    if not ext:
        return None
    L = floors.size
    live = ~ext["empty"]
    out = np.full(L, -np.inf)
    if not live.any():
        return out
    if metric in ("mass", "cost"):
        key = "mmin" if metric == "mass" else "cmin"
        out[live] = -ext[key][live].sum(axis=1)
        return out
    rows = np.broadcast_to(idx, (int(live.sum()), model.n)).copy()
    if metric == "effective_mass":
        em = impact_bound.virtual_effective_mass(model, rows, ext["mmin"][live], ext["rmin"][live])
        out[live] = -em[case]
        return out
    got = impact_bound._impact_bounds_at(
        model, rows.shape[0], ext["mmin"][live], ext["mmax"][live], ext["rmin"][live]
    )
    out[live] = got[case][0]
    return out
