"""Payload bounds over partial designs that see the mass and cost budgets (docs/optimizer.md,
items 2, 4a and 4b): the interval payload bound of a case, the free joints' own bound, the budget
level bound per node and the budget cap over every design.

Functions of a :class:`~jointwright.solve.model.SizingModel` (``model``); they keep their caches on
it.
"""

from __future__ import annotations

import math
import time

import numpy as np


def _node_level_table(model, F: np.ndarray, idx: np.ndarray, A: np.ndarray, st: dict):
    """:func:`_level_table` with the own bounds of the free joints recomputed at this node:
    the assigned joints' masses are known exactly, which narrows the bias interval of the
    joints they load (the unit's and the free joints' masses keep their ranges)."""
    key = (idx.tobytes(), F.tobytes(), st["mmin"].tobytes())
    cache = model.__dict__.setdefault("_node_levels", {})
    if key in cache:
        return cache[key]
    node = dict(st)
    node["mmin"], node["mmax"] = st["mmin"].copy(), st["mmax"].copy()
    node["mmin"][A] = model.mass[idx[A]]
    node["mmax"][A] = model.mass[idx[A]]
    own = list(st["own"])
    for j in F:
        own[j] = model.own_bounds(int(j), model.candidates[j], node)
    node["own"] = own
    out = _level_table(model, F, node, cache=False)
    if len(cache) > 512:
        cache.pop(next(iter(cache)))
    cache[key] = out
    return out


def _level_table(model, F: np.ndarray, st: dict, cache: bool = True):
    """For the free joints F: the candidate levels (every own bound of their options,
    descending) and, at each level f, the least total mass and cost of options of F whose
    own bound reaches f (the per-joint least over the useful options, summed). Cached per
    set F (the search meets few distinct sets: one per depth)."""
    key = (id(st["own"]), F.tobytes())
    store = cache
    levels_cache: dict = model.__dict__.setdefault("_levels", {})
    hit = levels_cache.get(key) if store else None
    if hit is not None and hit[0] is st["own"]:  # the reference held keeps the id unique
        return hit[1]
    entries = [st["own"][j] for j in F]
    if any(e is None for e in entries):
        return None
    levels = np.unique(np.concatenate([e[0][np.isfinite(e[0])] for e in entries]))[::-1]
    g_mass = np.zeros(levels.size)
    g_cost = np.zeros(levels.size)
    for own, run_m, run_c, _m in entries:
        count = np.searchsorted(-own, -levels, side="right")  # options with own ≥ level
        g_mass += np.where(count > 0, run_m[np.maximum(count - 1, 0)], np.inf)
        g_cost += np.where(count > 0, run_c[np.maximum(count - 1, 0)], np.inf)
    if store:
        if len(levels_cache) > 256:
            levels_cache.pop(next(iter(levels_cache)))
        levels_cache[key] = (st["own"], (levels, g_mass, g_cost))
    return levels, g_mass, g_cost


def budget_cap(
    model,
    st: dict,
    idx: np.ndarray | None = None,
    rounds: int = 3,
    steps: int = 40,
    deadline: float = math.inf,
) -> float:
    """A bound on the payload objective of every design (completion of ``idx``) that sees the
    budgets with consistent loader masses (docs/optimizer.md, item 4b).

    For a level f, lb_k starts at each joint's least mass; a design reaching f has, at every
    joint j, an option whose own bound with every mass k in [lb_k, m_max,k] is ≥ f, so its
    mass is ≥ the least such option's: that is the next lb_j; and ≤ the heaviest such option
    that leaves room for the others' lb within the mass budget: the next ub_j. Repeating
    keeps [lb_k, ub_k] an interval holding joint k's mass in any design reaching f; it only
    narrows as f grows. The largest f with Σ lb ≤ total_mass_max (and likewise cost) is
    found by bisection."""
    if (
        model.kind != "payload"
        or not model.payload
        or not (math.isfinite(model.total_mass_max) or math.isfinite(model.total_cost_max))
    ):
        return math.inf
    n = model.n
    idx = np.full(n, -1, dtype=np.int64) if idx is None else idx
    fixed = idx >= 0
    cands = [np.array([idx[j]]) if fixed[j] else model.candidates[j] for j in range(n)]
    if any(c.size == 0 for c in cands):
        return math.inf
    mmax = np.array([model.mass[c].max() for c in cands])
    mmin0 = np.array([model.mass[c].min() for c in cands])

    budget = model.total_mass_max * (1 + 1e-9)

    def fits(f: float) -> bool:
        lb, ub = mmin0.copy(), mmax.copy()
        cost = None
        for _ in range(rounds):
            node = dict(st, mmin=lb, mmax=ub)
            new, new_ub, cost = lb.copy(), ub.copy(), 0.0
            for j in range(n):
                entry = model.own_bounds(j, cands[j], node)
                if entry is None:
                    continue
                own, run_m, run_c, m_sorted = entry
                count = int(np.searchsorted(-own, -f, side="right"))
                if count == 0:
                    return False
                new[j] = max(lb[j], run_m[count - 1])
                cost += run_c[count - 1]
                # the heaviest option that reaches f and leaves room for the others' least
                room = budget - (lb.sum() - lb[j])
                useful = m_sorted[:count]
                useful = useful[useful <= room]
                if useful.size == 0:
                    return False
                new_ub[j] = min(ub[j], float(useful.max()))
            lb, ub = new, np.maximum(new_ub, new)
        ok = lb.sum() <= model.total_mass_max * (1 + 1e-9)
        if math.isfinite(model.total_cost_max):
            ok = ok and cost <= model.total_cost_max * (1 + 1e-9)
        return ok

    ents = [model.own_bounds(j, cands[j], dict(st, mmin=mmin0, mmax=mmax)) for j in range(n)]
    tops = [float(e[0][0]) for e in ents if e is not None and e[0].size]
    hi = min(tops) if tops else math.inf
    if not math.isfinite(hi) or hi <= 0:
        return math.inf
    hi = hi * (1 + 1e-12) + 1e-12  # no design reaches above every joint's best own bound
    lo = 0.0
    if fits(hi):
        return math.inf

    for _ in range(steps):
        if time.perf_counter() > deadline:  # every hi so far is a valid bound
            break
        mid = 0.5 * (lo + hi)
        if fits(mid):
            lo = mid
        else:
            hi = mid
    return hi


def budget_level_bound(model, F, idx, A, unit, options, st) -> np.ndarray:
    """Upper bound on the payload objective that sees the mass and cost budgets (K,).

    A design with objective ≥ f has, at every joint j, an option whose own bound (the most
    favourable bias over all designs, ``model.own_bounds``) is ≥ f, so the free joints weigh
    at least g(f) = Σ_j least mass over those options; g never decreases with f. With the
    mass already fixed by the assigned joints and the unit's option, the objective is at
    most the largest level f with fixed + g(f) ≤ total_mass_max (likewise for cost): a
    relaxation of the multiple-choice knapsack over per-joint options."""
    K = options.size
    out = np.full(K, np.inf)
    budgets = [(model.mass, model.total_mass_max, 1), (model.cost, model.total_cost_max, 2)]
    if not any(math.isfinite(b[1]) for b in budgets):
        return out
    table = _node_level_table(model, F, idx, A, st) if A.size else _level_table(model, F, st)
    if table is None or table[0].size == 0:
        return out
    levels = table[0]
    for values, limit, col in budgets:
        if not math.isfinite(limit):
            continue
        fixed = values[idx[A]].sum() + len(unit) * values[options]
        room = limit * (1 + 1e-9) - fixed
        g = table[col]  # nonincreasing along the descending levels
        first = np.searchsorted(-g, -room, side="left")  # first level whose g fits the room
        bound = np.where(first < levels.size, levels[np.minimum(first, levels.size - 1)], -np.inf)
        # the payload is never below 0: a design of payload 0 needs no level
        out = np.minimum(out, np.maximum(bound, 0.0))
    return out


def free_mass_at_level(model, F, idx, A, st, floor: float) -> float | None:
    """Least total mass of the free joints F over the completions of a node whose payload
    objective reaches ``floor``: every free joint then takes an option whose own bound at the
    node (the assigned masses fixed, the others in their ranges) is ≥ ``floor``, so the sum of
    the least such masses bounds theirs from below (docs/optimizer.md, item 4d). None when the
    levels give nothing tighter (no payload bounds, or ``floor`` above every finite level)."""
    if F.size == 0 or model.kind != "payload" or not model.payload:
        return None
    table = _node_level_table(model, F, idx, A, st) if A.size else _level_table(model, F, st)
    if table is None or table[0].size == 0:
        return None
    levels, g_mass = table[0], table[1]
    k = int(np.searchsorted(-levels, -floor, side="right")) - 1  # last level ≥ floor
    return None if k < 0 else float(g_mass[k])


def loaded_mass_rise(
    model, F, idx, A, unit, options, st, floor: float, deadline: float = math.inf
) -> np.ndarray:
    """How much the least useful mass of the free joints the unit loads rises with each
    child's own mass (K,), kg (docs/optimizer.md, item 4d).

    For a free joint j loaded by the unit (G[u, j] ≠ 0 in a case), the bias of j in case c is
    exact in the assigned masses and the option's own mass, m·ΣG[u, j] for the child's mass m
    taken over the interval of the child's mass bin, and an interval [b⁻, b⁺] over the ranges
    [mmin, mmax] of the other free joints. A
    completion whose objective reaches ``floor`` gives j an option o that holds the bias in
    every case whose objective value at payload 0 is below ``floor`` (hi_o ≥ b⁻, lo_o ≤ b⁺,
    item 2: else the payload is 0) and whose ratio bound reaches ``floor`` in every case, so j
    weighs at least the least such option: least_j(m). Returned: Σ_j (least_j(m) − mmin_j), to
    add to a mass bound that counts mmin_j for j (``st``). Past ``deadline`` the joints left
    add nothing (the trivial bound)."""
    K = options.size
    out = np.zeros(K)
    if F.size == 0 or model.kind != "payload" or not model.payload:
        return out
    if not np.all(np.isfinite(st["mmin"][F])):  # a free joint cannot reach the floor at all
        return out
    unit = list(unit)
    # the children's masses in at most RISE_BINS bins, each judged over its mass interval
    masses, inverse = np.unique(model.mass[options], return_inverse=True)
    edges = np.unique(np.linspace(0, masses.size, min(RISE_BINS, masses.size) + 1).astype(int))
    bin_of = np.searchsorted(edges, np.arange(masses.size), side="right") - 1
    m_lo, m_hi = masses[edges[:-1]], masses[edges[1:] - 1]
    at_zero = [float(model.case_value(c, np.array(0.0))) for c in range(len(model.payload))]
    for j in F:
        loads = [float(t.G[unit, j].sum()) for t in model.payload]
        cands = model.candidates[j]
        if not any(loads) or cands.size == 0:
            continue
        if time.perf_counter() > deadline:
            break
        cands = cands[np.argsort(model.mass[cands], kind="stable")]
        least = np.full(m_lo.size, np.inf)
        todo = np.arange(m_lo.size)
        # lightest options first, in blocks: a bin is settled by its first useful option
        for s in range(0, cands.size, RISE_BLOCK):
            block = cands[s : s + RISE_BLOCK]
            ok = _useful(
                model, j, F, idx, A, (m_lo[todo], m_hi[todo]), loads, block, st, floor, at_zero
            )
            hit = ok.any(axis=1)
            least[todo[hit]] = model.mass[block][np.argmax(ok[hit], axis=1)]
            todo = todo[~hit]
            if todo.size == 0:
                break
        out += least[bin_of[inverse]] - st["mmin"][j]
    return out


#: options of a free joint judged at once, and bins of the children's masses, in
#: :func:`loaded_mass_rise`
RISE_BLOCK, RISE_BINS = 512, 1024


def _useful(model, j, F, idx, A, unit_mass, loads, cands, st, floor, at_zero) -> np.ndarray:
    """(bins, options): whether option ``cands`` of free joint j can serve a completion reaching
    ``floor`` when the unit's mass lies in [lo, hi] = ``unit_mass`` (per bin; see
    :func:`loaded_mass_rise`)."""
    others = F[F != j]
    m_lo, m_hi = unit_mass
    useful = np.ones((m_lo.size, cands.size), dtype=bool)
    for c, (t, load) in enumerate(zip(model.payload, loads, strict=True)):
        g = t.G[:, j]
        base = t.g0[j] + model.mass[idx[A]] @ g[A]
        lo_f = np.minimum(st["mmin"][others] * g[others], st["mmax"][others] * g[others]).sum()
        hi_f = np.maximum(st["mmin"][others] * g[others], st["mmax"][others] * g[others]).sum()
        # the unit's mass interval per row, the option's own mass per column
        own = base + (model.mass[cands] * g[j])[None, :]
        b_lo = own + (np.minimum(m_lo * load, m_hi * load) + lo_f)[:, None]
        b_hi = own + (np.maximum(m_lo * load, m_hi * load) + hi_f)[:, None]
        hi, lo, a = t.hi[j, cands][None, :], t.lo[j, cands][None, :], t.a[j]
        if at_zero[c] < floor:  # a payload of 0 misses the floor: the joint must hold
            eps = 1e-9 * (np.abs(b_lo) + np.abs(b_hi) + 1.0)
            with np.errstate(invalid="ignore"):
                useful &= ~((hi < b_lo - eps) | (lo > b_hi + eps))
        if a == 0:
            continue
        with np.errstate(invalid="ignore", divide="ignore"):
            s_ = (hi - b_lo) / a if a > 0 else (lo - b_hi) / a
        s_ = np.where(np.isnan(s_), np.inf, s_)
        useful &= model.case_value(c, s_) >= floor
    return useful


def payload_bound(model, t, c, idx, A, F, unit, options, st) -> tuple:
    """Upper bound on the payload of case t over all completions (interval arithmetic).

    Only the joints of the unit and the joints its mass loads differ between the K
    children; every other joint's ratio bound is computed once."""
    K = options.size
    Gm_lo = np.minimum(st["mmin"][F, None] * t.G[F], st["mmax"][F, None] * t.G[F]).sum(axis=0)
    Gm_hi = np.maximum(st["mmin"][F, None] * t.G[F], st["mmax"][F, None] * t.G[F]).sum(axis=0)
    base = t.g0 + model.mass[idx[A]] @ t.G[A]
    load = t.G[unit].sum(axis=0)
    add = model.mass[options][:, None] * load
    b_lo, b_hi = base + Gm_lo + add, base + Gm_hi + add
    hi1 = np.empty(model.n)
    lo1 = np.empty(model.n)
    hi1[A], lo1[A] = t.hi[A, idx[A]], t.lo[A, idx[A]]
    hi1[F], lo1[F] = st["hi"][c][F], st["lo"][c][F]
    moving = np.zeros(model.n, dtype=bool)
    moving[unit] = True
    moving |= load != 0
    cols = np.flatnonzero(moving)
    still = np.flatnonzero(~moving)
    a = t.a

    def ratio(hi, lo, blo, bhi, av):
        eps = 1e-9 * (np.abs(blo) + np.abs(bhi) + 1.0)
        with np.errstate(invalid="ignore"):
            cannot = (hi < blo - eps) | (lo > bhi + eps)
        with np.errstate(divide="ignore", invalid="ignore"):
            s_ = np.where(av > 0, (hi - blo) / av, np.where(av < 0, (lo - bhi) / av, np.inf))
        return cannot, np.where(np.isnan(s_), np.inf, s_)

    # joints no child changes: one value for all children
    c_still, s_still = ratio(
        hi1[still],
        lo1[still],
        b_lo[0, still] - add[0, still],
        b_hi[0, still] - add[0, still],
        a[still],
    )
    hi = np.broadcast_to(hi1[cols], (K, cols.size)).copy()
    lo = np.broadcast_to(lo1[cols], (K, cols.size)).copy()
    pos = {j: i for i, j in enumerate(cols)}
    for j in unit:
        hi[:, pos[j]], lo[:, pos[j]] = t.hi[j, options], t.lo[j, options]
    c_move, s_move = ratio(hi, lo, b_lo[:, cols], b_hi[:, cols], a[cols])
    cannot_hold = c_move.any(axis=1) | bool(c_still.any())
    smin = s_move.min(axis=1) if cols.size else np.full(K, np.inf)
    if still.size:
        smin = np.minimum(smin, s_still.min())
    bound = np.maximum(smin, 0.0)
    return np.where(cannot_hold, 0.0, bound), b_lo, b_hi


def free_bound(model, F, bias, st) -> np.ndarray:
    """max over options of min over cases of each free joint's ratio bound; min over joints.

    ``bias[c]`` (K, n) is the least favourable-to-nothing bias per case: its lower end where
    a_j > 0, upper end where a_j < 0, so each ratio bound is optimistic."""
    K = bias[0].shape[0]
    out = np.full(K, np.inf)
    for j in F:
        R = st["reach"][j]  # (P, C)
        if R.shape[0] == 0:
            continue
        per = []
        for c, t in enumerate(model.payload):
            a = t.a[j]
            if a == 0:
                continue
            with np.errstate(invalid="ignore"):
                v = (R[None, :, c] - bias[c][:, j, None]) / a  # (K, P)
            per.append(model.case_value(c, np.where(np.isnan(v), np.inf, v)))
        if per:
            out = np.minimum(out, np.maximum(np.min(per, axis=0).max(axis=1), 0.0))
    return out
