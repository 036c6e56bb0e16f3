"""The budget bound per coupled component: least mass (and cost) for a payload level, per limb.

The payload cases couple joints only through gravity: joint j's bias in case c is
g0_j + Σ_k m_k·G_c[k, j] (solve/model.py). Joints linked through nonzero G entries form
*components* (a leg of a legged robot, an arm); no actuator of one component loads a joint of
another. The payload objective of a design is then the least over components of the
component's own value P_C (the least over cases of the case transform of the least ratio bound
over the component's joints; docs/optimizer.md, item 4c), and the design's mass is the sum of the
components' masses. So a design reaching level f has, in every component C, an assignment
reaching f, whose mass is at least M_C(f) = min{mass(x_C) : P_C(x_C) ≥ f}, and
Σ_C M_C(f) ≤ total_mass_max is necessary for f.

M_C is bounded from below by a *mass-bin relaxation*: each joint's candidate masses are split
into bins; for every tuple of bins (one per joint of C) and every joint j, j's options whose
mass lies in its bin are judged with the most favourable bias over the masses allowed by the
tuple (interval arithmetic as in item 2), and the least mass of those that reach f is taken.
Every assignment x_C reaching f has its masses in one tuple, where each of its options passes
(its true bias lies in the tuple's interval), so Σ_j (least mass in j's bin reaching f) ≤
mass(x_C). The least such sum over tuples bounds M_C(f) from below. Finer bins give tighter
bounds; exact masses (one per bin) give M_C(f) exactly over the payload cases.

Values are tabulated on a grid of levels; M_C is nondecreasing in f, so for any f the value at
the largest grid level ≤ f is a lower bound. :class:`ComponentLevels` is built once per search
(the frontier engine can build it per sweep) and answers :meth:`ComponentLevels.cap` (a bound on
the objective of every design) and :meth:`ComponentLevels.bound` (per child of a node).
"""

from __future__ import annotations

import itertools
import math
import time

import numpy as np

#: bin tuples per component (the product of the bins of its joints) at most
TUPLES = 4096


class _Late(Exception):
    """The deadline passed while a component's table was built."""


def components(model) -> list[np.ndarray]:
    """Joint groups linked by gravity loads in some payload case (G[k, j] ≠ 0), ascending."""
    n = model.n
    link = np.zeros((n, n), dtype=bool)
    for t in model.payload:
        link |= np.abs(t.G) > 1e-12 * (np.abs(t.G).max() + 1e-300)
    link |= link.T
    seen = np.zeros(n, dtype=bool)
    out = []
    for j in range(n):
        if seen[j]:
            continue
        stack, comp = [j], []
        seen[j] = True
        while stack:
            k = stack.pop()
            comp.append(k)
            for m in np.flatnonzero(link[k] & ~seen):
                seen[m] = True
                stack.append(int(m))
        out.append(np.array(sorted(comp), dtype=np.int64))
    return out


def _bins(masses: np.ndarray, count: int) -> np.ndarray:
    """Bin edges (ascending unique masses split into ``count`` groups of equal size): returns
    the index of the first unique mass of each bin."""
    u = np.unique(masses)
    count = max(1, min(count, u.size))
    return u[np.linspace(0, u.size, count + 1).astype(int)[:-1]]


class ComponentLevels:
    """Least mass and cost of each component for every level of a grid (lower bounds).

    Parameters
    ----------
    model : SizingModel (payload objective)
    candidates : per joint, the option indices it may take
    levels : ascending grid of objective levels
    deadline : time.perf_counter() value; past it the remaining components get no table
        (their bound is then the trivial 0, still valid)
    """

    def __init__(self, model, candidates, levels: np.ndarray, deadline: float = math.inf):
        self.model = model
        self.levels = np.asarray(levels, dtype=float)
        self.comps = components(model)
        self.deadline = deadline  # checked between bins and blocks of a joint too
        L = self.levels.size
        self.mass = np.zeros((len(self.comps), L))
        self.cost = np.zeros((len(self.comps), L))
        for i, comp in enumerate(self.comps):
            if time.perf_counter() > deadline:
                break
            if any(candidates[j].size == 0 for j in comp):
                self.mass[i] = np.inf
                self.cost[i] = np.inf
                continue
            try:
                self.mass[i], self.cost[i] = self._component(comp, candidates, deadline)
            except _Late:  # this component keeps the trivial bound 0 (still valid)
                break
        self.of_joint = np.empty(model.n, dtype=np.int64)
        for i, comp in enumerate(self.comps):
            self.of_joint[comp] = i

    # ------------------------------------------------------------------------------------------
    def _component(self, comp: np.ndarray, candidates, deadline) -> tuple[np.ndarray, np.ndarray]:
        model = self.model
        # only joints whose mass loads some joint need bins; the others take one bin (their
        # own least mass reaching a level is exact given the loaders' bins)
        loads = np.zeros(comp.size, dtype=bool)
        for t in model.payload:
            loads |= (np.abs(t.G[np.ix_(comp, comp)]) > 0).any(axis=1)
        nl = max(int(np.count_nonzero(loads)), 1)
        per = max(1, int(math.floor(TUPLES ** (1.0 / nl) + 1e-9)))
        starts = [
            _bins(model.mass[candidates[j]], per if loads[p] else 1) for p, j in enumerate(comp)
        ]
        # per joint: bin of every candidate and each bin's mass interval
        bin_of, lo_m, hi_m = [], [], []
        for j, s in zip(comp, starts, strict=True):
            m = model.mass[candidates[j]]
            b = np.searchsorted(s, m, side="right") - 1
            bin_of.append(b)
            lo_m.append(np.array([m[b == k].min() for k in range(s.size)]))
            hi_m.append(np.array([m[b == k].max() for k in range(s.size)]))
        shape = tuple(s.size for s in starts)
        tuples = np.array(list(itertools.product(*[range(k) for k in shape])), dtype=np.int64)
        T, L = tuples.shape[0], self.levels.size
        total_m = np.zeros((T, L))
        total_c = np.zeros((T, L))
        for pos, j in enumerate(comp):
            if time.perf_counter() > deadline:
                raise _Late
            wm, wc = self._joint(pos, int(j), comp, candidates[j], bin_of[pos], lo_m, hi_m, tuples)
            total_m += wm
            total_c += wc
        return total_m.min(axis=0), total_c.min(axis=0)

    def _joint(self, pos, j, comp, cands, bin_of, lo_m, hi_m, tuples):
        """(T, L) least mass and least cost of joint j's options in its bin of each tuple that
        reach each level with the most favourable bias over the tuple's masses."""
        model = self.model
        T, L = tuples.shape[0], self.levels.size
        wm = np.full((T, L), np.inf)
        wc = np.full((T, L), np.inf)
        for b in range(lo_m[pos].size):
            if time.perf_counter() > self.deadline:
                raise _Late
            rows = np.flatnonzero(tuples[:, pos] == b)
            opts = self._front(j, cands[bin_of == b])
            own = np.full((rows.size, opts.size), np.inf)
            for c, t in enumerate(model.payload):
                g = t.G[comp, j]  # loads of the component's masses on joint j
                lo = np.array([lo_m[p][tuples[rows, p]] for p in range(comp.size)]).T  # (R, nc)
                hi = np.array([hi_m[p][tuples[rows, p]] for p in range(comp.size)]).T
                b_lo = t.g0[j] + np.minimum(lo * g, hi * g).sum(axis=1)  # (R,)
                b_hi = t.g0[j] + np.maximum(lo * g, hi * g).sum(axis=1)
                top, bot = t.hi[j, opts][None, :], t.lo[j, opts][None, :]
                eps = 1e-9 * (np.abs(b_lo) + np.abs(b_hi) + 1.0)[:, None]
                cannot = (top < b_lo[:, None] - eps) | (bot > b_hi[:, None] + eps)
                a = t.a[j]
                with np.errstate(divide="ignore", invalid="ignore"):
                    if a > 0:
                        r = (top - b_lo[:, None]) / a
                    elif a < 0:
                        r = (bot - b_hi[:, None]) / a
                    else:
                        r = np.full(cannot.shape, np.inf)
                r = np.where(np.isnan(r), np.inf, np.maximum(r, 0.0))
                r = np.where(cannot, 0.0, r)
                if t.minimum > 0:
                    r = np.where(r >= t.minimum * (1 - 1e-9) - 1e-12, r, -np.inf)
                v = model.case_value(c, r)
                own = np.minimum(own, np.where(np.isnan(v), np.inf, v))
            if opts.size == 0 or rows.size == 0:
                continue
            mass, cost = model.mass[opts], model.cost[opts]
            order = np.argsort(-own, axis=1, kind="stable")
            own_s = np.take_along_axis(own, order, axis=1)
            run_m = np.minimum.accumulate(mass[order], axis=1)
            run_c = np.minimum.accumulate(cost[order], axis=1)
            count = self._counts(own_s)  # (R, L) options with own bound ≥ each level
            ok = count > 0
            k = np.maximum(count - 1, 0)
            wm[rows] = np.where(ok, np.take_along_axis(run_m, k, axis=1), np.inf)
            wc[rows] = np.where(ok, np.take_along_axis(run_c, k, axis=1), np.inf)
        return wm, wc

    def _counts(self, own_s: np.ndarray) -> np.ndarray:
        """Per row of ``own_s`` (R, O), sorted descending, how many entries are ≥ each level
        (R, L); one search over all rows (each row shifted by its own span). Levels are lowered
        by a relative 1e-9 first, so round-off can only count more options (a lower mass: the
        bound stays valid)."""
        lev = self.levels
        lo, hi = float(lev.min()), float(lev.max())
        span = (hi - lo) + 4.0 + 1e-6 * max(abs(lo), abs(hi))
        R, width = own_s.shape
        neg = -np.clip(own_s, lo - 1.0, hi + 1.0)  # ascending per row; order vs levels kept
        shift = (np.arange(R) * span)[:, None]
        flat = (neg + shift).ravel()
        q = -(lev - 1e-9 * np.maximum(np.abs(lev), 1.0))[None, :] + shift  # (R, L)
        pos = np.searchsorted(flat, q.ravel(), side="right").reshape(R, -1)
        return np.clip(pos - (np.arange(R) * width)[:, None], 0, width)

    def _front(self, j: int, opts: np.ndarray) -> np.ndarray:
        """The options of joint j not dominated in one bin: another option with no more mass and
        cost and, in every payload case, no lower upper torque bound and no higher lower one
        reaches every level under every bias the first one reaches (its ratio bounds are no
        smaller and it holds wherever the first holds), and inside a bin the loads on the other
        joints are taken over the bin's mass interval, not the option's own mass."""
        model = self.model
        if opts.size <= 1:
            return opts
        cols = [-model.mass[opts], -model.cost[opts]]
        for t in model.payload:
            cols += [t.hi[j, opts], -t.lo[j, opts]]
        V = np.stack(cols, axis=1)
        V = np.where(np.isnan(V), -np.inf, V)
        _u, first = np.unique(V, axis=0, return_index=True)
        first = np.sort(first)
        V, opts = V[first], opts[first]
        return opts[np.sort(pareto_front(V, self.deadline))]

    # ------------------------------------------------------------------------------------------
    def at(self, which: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(L,) least total mass and cost over the components ``which`` (indices) per level."""
        if len(which) == 0:
            return np.zeros(self.levels.size), np.zeros(self.levels.size)
        return self.mass[which].sum(axis=0), self.cost[which].sum(axis=0)

    def first_over(self, need: np.ndarray, room: np.ndarray) -> np.ndarray:
        """Per room value (K,): the least grid level whose need (L,) exceeds it; +inf when none.
        No design whose need at its level exceeds the room exists, and the need never falls
        as the level grows, so every level at or above that one is out of reach."""
        over = need[None, :] > room[:, None]  # (K, L), monotone along L
        first = np.argmax(over, axis=1)
        return np.where(over.any(axis=1), self.levels[first], np.inf)

    def cap(self) -> float:
        """A bound on the payload objective of every design: the least level at which the
        components' least masses (or costs) exceed the budgets."""
        model = self.model
        out = math.inf
        m, c = self.at(np.arange(len(self.comps)))
        for need, limit in ((m, model.total_mass_max), (c, model.total_cost_max)):
            if math.isfinite(limit):
                out = min(out, float(self.first_over(need, np.array([limit * (1 + 1e-9)]))[0]))
        return out

    def bound(self, idx: np.ndarray, unit, options: np.ndarray, st: dict) -> np.ndarray:
        """Per child (K,): a bound on the payload objective that sees the budgets, with the
        components untouched by the assigned joints and the unit at their least masses per level
        and every other unassigned joint at its least (useful) mass ``st['mmin']``."""
        model = self.model
        K = options.size
        out = np.full(K, np.inf)
        unit = list(unit)
        assigned = idx >= 0
        assigned[unit] = False
        A = np.flatnonzero(assigned)
        touched = np.zeros(len(self.comps), dtype=bool)
        touched[self.of_joint[A]] = True
        touched[self.of_joint[unit]] = True
        free_comps = np.flatnonzero(~touched)
        if free_comps.size == 0:
            return out
        rest = ~assigned & ~np.isin(self.of_joint, free_comps)
        rest[unit] = False
        m_need, c_need = self.at(free_comps)
        for values, limit, need, base in (
            (model.mass, model.total_mass_max, m_need, st["mmin"]),
            (model.cost, model.total_cost_max, c_need, st["cmin"]),
        ):
            if not math.isfinite(limit):
                continue
            fixed = values[idx[A]].sum() + len(unit) * values[options] + base[rest].sum()
            room = limit * (1 + 1e-9) - fixed
            out = np.minimum(out, self.first_over(need, room))
        return out

    def mass_floor(self, idx: np.ndarray, unit, options: np.ndarray, st: dict, floor: float):
        """Per child (K,): a lower bound on the total mass of every completion whose payload
        objective reaches ``floor``: the assigned masses, the components untouched by the
        assigned joints and the unit at their least mass for the largest grid level ≤ ``floor``
        (M_C never falls as the level grows), every other unassigned joint at ``st['mmin']``
        (its least useful mass); −inf when no grid level lies at or below ``floor``."""
        model = self.model
        k = int(np.searchsorted(self.levels, floor, side="right")) - 1
        if k < 0:
            return np.full(options.size, -np.inf)
        unit = list(unit)
        assigned = idx >= 0
        assigned[unit] = False
        A = np.flatnonzero(assigned)
        touched = np.zeros(len(self.comps), dtype=bool)
        touched[self.of_joint[A]] = True
        touched[self.of_joint[unit]] = True
        free_comps = np.flatnonzero(~touched)
        rest = ~assigned & ~np.isin(self.of_joint, free_comps)
        rest[unit] = False
        need = self.at(free_comps)[0][k]
        fixed = model.mass[idx[A]].sum() + st["mmin"][rest].sum() + need
        return fixed + len(unit) * model.mass[options]


def pareto_front(V: np.ndarray, deadline: float = math.inf) -> np.ndarray:
    """Rows of ``V`` (N, k), distinct, that no other row dominates (no smaller in every column,
    larger in one), as indices. Rows are taken in descending lexicographic order, where a
    dominating row always comes first, and each is compared with the front kept so far only: a
    row dominated by a dropped row is dominated by the front row that dropped it. Raises
    :class:`_Late` past ``deadline``."""
    order = np.lexsort(V.T[::-1])[::-1]
    front: list[int] = []
    block = np.empty((0, V.shape[1]))
    for count, i in enumerate(order):
        if count % 1024 == 0 and time.perf_counter() > deadline:
            raise _Late
        if block.shape[0] and np.any(np.all(block >= V[i], axis=1)):
            continue
        front.append(int(i))
        block = np.vstack([block, V[i][None, :]])
    return np.asarray(front, dtype=np.int64)


def level_grid(low: float, high: float, incumbent: float | None, count: int = 160) -> np.ndarray:
    """Ascending levels: a coarse grid over [low, high] and a fine one between the incumbent (or
    the middle) and ``high``, where the search needs the bound to be tight."""
    if not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        return np.array([low]) if math.isfinite(low) else np.zeros(1)
    coarse = np.linspace(low, high, 32)
    start = low + 0.5 * (high - low) if incumbent is None else max(low, incumbent)
    start = min(start, high)
    fine = np.linspace(start - 0.02 * (high - start), high, count)
    return np.unique(np.concatenate([coarse, fine, [high]]))
