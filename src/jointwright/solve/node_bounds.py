"""Bounds over partial designs: what the joints still open can reach.

For a :class:`~.model.SizingModel` ``model``: per-joint extremes of the candidates
(:func:`stats`), each option's own payload bound (:func:`own_order`), the least useful mass at an
objective floor (:func:`useful_mmin`), and the bounds of giving a unit each of a set of options
(:func:`child_bounds`: objective, mass, reflected inertia, provable misses); docs/optimizer.md,
items 2-4. The search, the heuristics and the front's branch and bound call them through the
model's methods of the same names.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from . import budget_bound


def stats(model, candidates) -> dict:
    """Per joint, extremes over its candidate options (what an unassigned joint can reach)."""
    out = _extremes(model, candidates)
    out["reach"] = [_reach_front(model, j, c) for j, c in enumerate(candidates)]
    out["own"] = [own_bounds(model, j, c, out) for j, c in enumerate(candidates)]
    return out


def narrowed(model, st: dict, candidates) -> dict:
    """:func:`stats` of ``candidates``, subsets of those ``st`` describes, for the price of the
    extremes only: the least and greatest masses, costs, reflected inertias, breakaway forces
    and torque bounds are taken over the subsets; the payload reach fronts and own bounds stay
    the superset's, which still hold for every subset (looser, never wrong)."""
    return dict(st, **_extremes(model, candidates))


def _extremes(model, candidates) -> dict:
    """The least and greatest values per joint over its candidate options."""

    def ext(values, fn):
        return np.array([fn(values[c]) if c.size else np.nan for c in candidates])

    return {
        "mmin": ext(model.mass, np.min),
        "mmax": ext(model.mass, np.max),
        "cmin": ext(model.cost, np.min),
        "rmin": ext(model.reflected, np.min),
        "bmin": ext(model.breakaway, np.min),
        "hi": [
            np.array([t.hi[j, c].max() if c.size else np.nan for j, c in enumerate(candidates)])
            for t in model.payload
        ],
        "lo": [
            np.array([t.lo[j, c].min() if c.size else np.nan for j, c in enumerate(candidates)])
            for t in model.payload
        ],
    }


def own_bounds(model, j: int, cands: np.ndarray, st: dict):
    """Options of joint j sorted by their own payload bound (most favourable bias over all
    designs), descending, with the running least mass: an improving design needs
    min over cases of joint j's ratio bound ≥ the incumbent, so only that prefix is useful."""
    got = own_order(model, j, cands, st)
    if got is None:
        return None
    own, order = got
    return (
        own,
        np.minimum.accumulate(model.mass[cands][order]),
        np.minimum.accumulate(model.cost[cands][order]),
        model.mass[cands][order],
    )


def own_order(model, j: int, cands: np.ndarray, st: dict):
    """(own payload bound of each of joint j's options, descending; the order that sorts
    ``cands`` so), or None without payload cases. A design whose payload objective reaches
    f uses at joint j an option whose own bound reaches f (the bias over ``st``'s mass
    ranges is the most favourable)."""
    if model.kind != "payload" or not model.payload or cands.size == 0:
        return None
    own = np.full(cands.size, np.inf)
    for c, t in enumerate(model.payload):
        lo_b = (
            t.g0[j]
            + np.minimum(st["mmin"][:, None] * t.G, st["mmax"][:, None] * t.G).sum(axis=0)[j]
        )
        hi_b = (
            t.g0[j]
            + np.maximum(st["mmin"][:, None] * t.G, st["mmax"][:, None] * t.G).sum(axis=0)[j]
        )
        a = t.a[j]
        if a > 0:
            own = np.minimum(own, model.case_value(c, (t.hi[j, cands] - lo_b) / a))
        elif a < 0:
            own = np.minimum(own, model.case_value(c, (t.lo[j, cands] - hi_b) / a))
    order = np.argsort(-own, kind="stable")
    return own[order], order


def useful_mmin(model, st: dict, floor: float | None) -> np.ndarray:
    """Least mass per joint over the options that can still reach objective ``floor``."""
    if floor is None or model.kind != "payload":
        return st["mmin"]
    out = st["mmin"].copy()
    for j, entry in enumerate(st["own"]):
        if entry is None:
            continue
        own, run = entry[0], entry[1]
        count = int(np.searchsorted(-own, -floor, side="right"))
        # the own bounds may describe a superset of the candidates (:func:`narrowed`): the
        # candidates' own least mass bounds the useful ones too
        out[j] = max(run[count - 1], out[j]) if count else np.inf
    return out


def _reach_front(model, j: int, cands: np.ndarray) -> np.ndarray:
    """(P, C) non-dominated 'reach' of joint j's options over the payload cases.

    Reach in case c is the bound the ray meets first: hi for a_j > 0, lo for a_j < 0
    (stored signed so that (reach − τ_bias)/a_j is the joint's ratio bound); +inf where
    a_j = 0. Options whose reach is no better in every case are dropped: they can never
    give a larger bound."""
    if not model.payload or cands.size == 0:
        return np.zeros((0, len(model.payload)))
    cols = []
    for t in model.payload:
        a = t.a[j]
        cols.append(
            t.hi[j, cands] if a > 0 else (t.lo[j, cands] if a < 0 else np.full(cands.size, np.inf))
        )
    R = np.stack(cols, axis=1)
    signs = np.array([1.0 if t.a[j] >= 0 else -1.0 for t in model.payload])
    good = R * signs  # larger is better in every column
    good = np.where(np.isnan(good), -np.inf, good)
    # lexicographically best first: no row is dominated by a later one (that would make it
    # lexicographically larger), so each row the front so far does not dominate joins it, and
    # the rows a new member dominates (its equals among them) drop out, all at once
    remaining = np.lexsort(good.T[::-1])[::-1]
    front: list = []
    while remaining.size:
        i, rest = remaining[0], remaining[1:]
        front.append(i)
        remaining = rest[~np.all(good[rest] <= good[i], axis=1)]
    return R[np.array(front, dtype=int)]


def child_bounds(
    model,
    idx: np.ndarray,
    unit: Sequence[int],
    options: np.ndarray,
    st: dict,
    floor: float | None = None,
    levels: bool = True,
) -> dict:
    """Bounds for giving the joints of ``unit`` each option in ``options`` (K,).

    ``idx`` (n,) holds the option of every assigned joint and −1 elsewhere; ``st`` the
    :func:`stats` of the candidates. Returned arrays are (K,): ``objective`` an upper bound
    on the objective of every completion, ``mass``/``reflected`` lower bounds, ``ok`` False
    where some requirement is provably missed by every completion. Exact when every joint
    is assigned (up to rounding). With ``floor`` (payload objective) only completions whose
    objective reaches ``floor`` are bounded, so free joints count their useful options only
    (:func:`useful_mmin`); the mass bound then holds for those completions. ``levels=False``
    leaves out the budget level bound (:func:`.budget_bound.budget_level_bound`): a looser,
    cheaper bound, still valid.
    """
    if floor is not None and model.kind == "payload":
        st = dict(st, mmin=useful_mmin(model, st, floor))
    n, K = model.n, options.size
    unit = list(unit)
    assigned = idx >= 0
    assigned[unit] = False
    free = ~assigned
    free[unit] = False
    A, F = np.flatnonzero(assigned), np.flatnonzero(free)
    if not np.all(np.isfinite(st["mmin"][F])):  # a free joint cannot reach the floor
        none = np.zeros(K, dtype=bool)
        return {
            "objective": np.full(K, -np.inf),
            "mass": np.full(K, np.inf),
            "reflected": np.full(K, np.inf),
            "ok": none,
        }
    mass_lb = model.mass[idx[A]].sum() + st["mmin"][F].sum() + len(unit) * model.mass[options]
    refl_lb = (
        model.reflected[idx[A]].sum() + st["rmin"][F].sum() + len(unit) * model.reflected[options]
    )
    ok = (mass_lb <= model.total_mass_max * (1 + 1e-9)) & np.isfinite(mass_lb)
    if math.isfinite(model.total_cost_max):
        cost_lb = model.cost[idx[A]].sum() + st["cmin"][F].sum() + len(unit) * model.cost[options]
        ok &= cost_lb <= model.total_cost_max * (1 + 1e-9)
    for j, good in model.torque_ok:
        if j in unit:
            ok &= good[options]
    worst = np.full(K, np.inf)
    b_lo = []
    for c, t in enumerate(model.payload):
        bound, bias_lo, bias_hi = budget_bound.payload_bound(
            model, t, c, idx, A, F, unit, options, st
        )
        ok &= bound >= t.minimum * (1 - 1e-9) - 1e-12
        worst = np.minimum(worst, model.case_value(c, bound))
        b_lo.append(np.where((t.a > 0), bias_lo, bias_hi))
    if model.kind == "payload" and F.size and model.payload:
        worst = np.minimum(worst, budget_bound.free_bound(model, F, b_lo, st))
    if levels and model.kind == "payload" and F.size and model.payload:
        worst = np.minimum(
            worst, budget_bound.budget_level_bound(model, F, idx, A, unit, options, st)
        )
    for absa, fmax in model.backdrive:
        b = np.empty((K, n))
        b[:, A] = model.breakaway[idx[A]]
        b[:, F] = st["bmin"][F]
        b[:, unit] = model.breakaway[options][:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            force = np.where(absa > 0, b / absa, np.inf).min(axis=1)
        ok &= force <= fmax * (1 + 1e-9) + 1e-12
    if model.kind == "payload":
        f = worst
    elif model.kind == "mass":
        f = -mass_lb
    elif model.kind == "cost":  # cost is separable per joint like mass: a lower bound
        f = -(model.cost[idx[A]].sum() + st["cmin"][F].sum() + len(unit) * model.cost[options])
    elif model.measure is not None and model.measure[0] == "backdrive_force":
        pc = next(p for p in model.evaluator.cases if p.case.name == model.measure[1])
        absa = np.abs(pc.Jj.T @ (pc.u / np.linalg.norm(pc.u)))
        b = np.empty((K, n))
        b[:, A], b[:, F], b[:, unit] = (
            model.breakaway[idx[A]],
            st["bmin"][F],
            model.breakaway[options][:, None],
        )
        with np.errstate(divide="ignore", invalid="ignore"):
            f = -np.where(absa > 0, b / absa, np.inf).min(axis=1)
    elif model.measure is not None and model.measure[0] == "effective_mass":
        f = np.full(K, np.inf)  # bounded in costly_ok
    else:
        f = np.ones(K)  # the IMF is at most 1; no tighter proven bound is used
    return {"objective": f, "mass": mass_lb, "reflected": refl_lb, "ok": ok}
