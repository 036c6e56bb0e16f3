"""Upper bounds on the payload of stance (several-contact) cases over a partial design.

The stance payload of a complete design is, per stance case, the largest s ≥ 0 with

    Sᵀτ + Σ_k J_kᵀ f_k + s·J_pᵀw = g(m),   lo_j ≤ τ_j ≤ hi_j,   f_k in its friction cone,

g(m) = g0 + Σ_i m_i·g_i linear in the actuator masses (robot/basis.py; metrics/contacts.py,
Evaluator._stance); the objective's stance part is the least over the cases of the carried
payload T_c(s_c) (problem.carried_payload, affine and increasing). One linear program relaxes
all cases at once for every completion of a partial design (docs/optimizer.md, item 9): each
case has its own torques, forces and s_c, the masses are shared, t ≤ T_c(s_c) for every case,
maximize t; and

* an assigned joint's mass is fixed, a free joint's lies in [m_min, m_max] over its candidates;
* a free joint's torque lies in the hull [min lo, max hi] over its candidates and under the
  concave upper envelope of its candidates' (mass, hi) points (above the convex lower envelope of
  (mass, lo)): every candidate lies on or under (over) those lines, so they cut no completion;
* the masses sum to at most the actuator mass budget (``total_mass_max``);
* each cone becomes the circumscribed pyramid of ``stance_program.SIDES`` sides.

Every completion whose cases all hold is feasible for the program, so its optimum bounds the
objective's stance part; one whose case c cannot hold itself has at most T_c(0). The options of
the joints being decided are bounded per group: options sorted by mass and by torque range fall
into at most ``GROUPS`` groups, each group's program takes the hull of its own options, and
each option's bound is its group's lowered by that program's duals (weak duality), so the
children of a node are ordered and cut option by option; when the unit's joints are the last
ones free, every distinct option gets its own program (the design's own program: complete
designs are cut before their cone programs are solved). With an incumbent, root probing
(:meth:`StanceBound.probe`) drops the options whose own root program is below it, in rounds
over the ever smaller candidates. The program is built once in HiGHS (highspy), shared by the
heuristics and the search; a node only changes column bounds and re-solves from the previous
basis. Proofs: docs/optimizer.md, item 9.
"""

from __future__ import annotations

import copy
import math
import time
import weakref

import numpy as np

from ..metrics.payload import torque_bounds
from .model import unit_options
from .stance_program import StanceProgram

#: option groups bounded per node (mass bins × torque bins)
MASS_BINS, TORQUE_BINS = 4, 4
GROUPS = MASS_BINS * TORQUE_BINS
#: the options of a unit solved by their own programs in a dive, best by their group's duals
#: first (the search uses the duals' bounds alone: measured no better with them, at half the nodes)
LEAD = 32
#: torque margins of the designs read off the root program (:meth:`StanceBound.rounded`)
ROUNDING_MARGINS = (1.0, 1.03, 1.06, 1.1, 0.97)


def option_groups(mass: np.ndarray, torque: np.ndarray) -> np.ndarray:
    """Group number of each option: mass quantile bin, then torque quantile bin within it."""
    count = mass.size
    group = np.zeros(count, dtype=np.int64)
    if count <= GROUPS:
        return np.arange(count)
    by_mass = np.argsort(mass, kind="stable")
    for b, rows in enumerate(np.array_split(by_mass, MASS_BINS)):
        by_t = rows[np.argsort(torque[rows], kind="stable")]
        for t, sub in enumerate(np.array_split(by_t, TORQUE_BINS)):
            group[sub] = b * TORQUE_BINS + t
    return group


#: each model's stance bound, with the candidates and budget it was built for (StanceBound.of)
_BUILT: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _built_for(model) -> tuple:
    """What a stance bound is built from besides the model's fixed cases and options: each
    joint's candidates and the actuator mass budget."""
    return (tuple(c.tobytes() for c in model.candidates), float(model.total_mass_max))


class StanceBound:
    """The stance cases of ``model``: their joint program and every option's torque ranges."""

    @classmethod
    def of(cls, model) -> StanceBound:
        """The stance bound of ``model``, built once and shared (the primal heuristics and the
        search use the same program) while the candidates and the budget stay the same."""
        key = _built_for(model)
        held = _BUILT.get(model)
        if held is not None and held[0] == key:
            return held[1]
        bound = cls(model)
        _BUILT[model] = (key, bound)
        return bound

    def __init__(self, model) -> None:
        self.model = model
        ev = model.evaluator
        table = model.table
        count, n = len(table), model.n
        # an option's capacities do not depend on its joint: one column, broadcast over the
        # joints (gathered for every joint, a large table cost a gigabyte here)
        arr = table.arrays(np.arange(count)[:, None])
        cap_m = np.broadcast_to(arr.capacity("motoring"), (count, n))
        cap_b = np.broadcast_to(arr.capacity("backdriven"), (count, n))
        pcs, self.lo, self.hi = [], [], []
        names = {c.name for c in model.stance_bounded}
        for pc in ev.cases:
            if pc.case.name not in names:
                continue
            lo, hi = torque_bounds(np.broadcast_to(pc.velocity_sign, (count, n)), cap_m, cap_b)
            pcs.append(pc)
            self.lo.append(np.asarray(lo).T.copy())  # (n, O)
            self.hi.append(np.asarray(hi).T.copy())
        self.pcs = pcs
        self._build(list(model.candidates))

    def _build(self, candidates: list) -> None:
        """The program and the free joints' hulls over ``candidates`` (one array per joint)."""
        model = self.model
        self.candidates = candidates
        self.program = StanceProgram(
            self.pcs,
            model.evaluator,
            model,
            list(zip(self.lo, self.hi, strict=True)),
            candidates,
            objective={c.name for c in model.stance_objective},
        )
        self.m_free = np.array(
            [[model.mass[c].min(), model.mass[c].max()] if c.size else [0, 0] for c in candidates]
        )
        self.t_free = [
            np.array(
                [
                    [lo[j, c].min(), hi[j, c].max()] if c.size else [0, 0]
                    for j, c in enumerate(candidates)
                ]
            )
            for lo, hi in zip(self.lo, self.hi, strict=True)
        ]

    def restricted(self, candidates: list) -> StanceBound:
        """The same cases over fewer candidates (each joint's a subset of this one's): the
        envelopes and hulls are those of the subsets, so they bound only completions drawn
        from them."""
        out = copy.copy(self)
        out._build(list(candidates))
        return out

    def probe(self, units, floor: float, rounds: int = 6, deadline: float = math.inf):
        """Each unit's options whose own program at the root (every other joint free) is below
        ``floor`` can be in no design reaching it; drop them, rebuild the program over what is
        left (tighter envelopes and hulls) and repeat while something is dropped (at most
        ``rounds`` times, until ``deadline``, a ``time.perf_counter`` value). Returns the
        candidates left (one array per joint) and the bound over them; stopping early is safe
        (docs/optimizer.md, item 9, root probing)."""
        bound = self
        root = np.full(self.model.n, -1, dtype=np.int64)
        for _ in range(rounds):
            cands = list(bound.candidates)
            for u in units:
                if time.perf_counter() > deadline:
                    return cands, bound
                opts = unit_options(cands, u)
                if opts.size == 0:
                    return [np.empty(0, dtype=np.int64)] * len(cands), bound
                b = bound.bound(root, u, opts, floor)
                live = np.flatnonzero(b >= floor)
                own = bound.group_bounds(root, list(u), opts[live], np.arange(live.size))
                keep = opts[live[own >= floor]]
                for j in u:
                    cands[j] = np.intersect1d(cands[j], keep) if len(u) > 1 else keep
            if all(a.size == b.size for a, b in zip(cands, bound.candidates, strict=True)):
                return cands, bound
            if any(c.size == 0 for c in cands):
                return cands, bound
            bound = bound.restricted(cands)
        return list(bound.candidates), bound

    def bound(self, idx: np.ndarray, unit, options: np.ndarray, floor=None, lead=0):
        """An upper bound on the payload objective's stance part (the least over stance cases of
        the carried payload): a number for every completion of ``idx`` when ``unit`` is empty,
        else one per option in ``options`` for every completion with the unit at that option.
        Each option's bound is its group's, lowered by that program's duals; the ``lead`` best
        (reaching ``floor``) are solved by their own programs. At the last joints every
        option reaching ``floor`` is solved by its own program (the others keep their group's,
        valid, bound). ``floor``: a payload, or one per option."""
        model = self.model
        unit = list(unit)
        options = np.asarray(options, dtype=np.int64)
        if not unit or options.size == 0:
            return float(self.group_bounds(idx, [], options, np.zeros(0, dtype=np.int64))[0])
        width = (self.hi[0][unit][:, options] - self.lo[0][unit][:, options]).sum(axis=0)
        out = self.group_bounds(idx, unit, options, option_groups(model.mass[options], width))
        fixed = idx >= 0
        fixed[unit] = False
        if np.count_nonzero(fixed) + len(unit) < model.n:
            if lead > 0:  # the leading options by their group's duals: their own programs
                ahead = np.lexsort((model.mass[options], -out))[:lead]
                if floor is not None:
                    ahead = ahead[out[ahead] >= np.broadcast_to(floor, out.shape)[ahead]]
                if ahead.size:
                    own = self.group_bounds(idx, unit, options[ahead], np.arange(ahead.size))
                    out[ahead] = np.minimum(out[ahead], own)
            return out
        # the last joints: every distinct option gets its own (the design's own) program
        live = np.flatnonzero(out >= floor) if floor is not None else np.arange(options.size)
        if live.size:
            o = options[live]
            key = np.column_stack([model.mass[o]] + [v[unit][:, o].T for v in (*self.lo, *self.hi)])
            _, fine = np.unique(key, axis=0, return_inverse=True)
            out[live] = np.minimum(out[live], self.group_bounds(idx, unit, o, fine.reshape(-1)))
        return out

    def complete(self, index: np.ndarray) -> np.ndarray:
        """The bound of each complete design of ``index`` (D, n): its own program (the design's
        statics with circumscribed pyramids, so within the pyramid's gap of its cone value).
        A cheap screen: one small linear program per design instead of a cone program per case."""
        index = np.asarray(index, dtype=np.int64)
        out = np.empty(index.shape[0])
        cols = np.arange(self.model.n)
        for r, row in enumerate(index):
            m = self.model.mass[row]
            out[r] = self.program.solve(
                [lo[cols, row] for lo in self.lo], [hi[cols, row] for hi in self.hi], m, m
            )
        return out

    def rounded(self, units, margins=ROUNDING_MARGINS) -> np.ndarray:
        """Designs (R, n) read off the root program's solution: per unit and margin f, the
        lightest common option of its joints whose torque range holds f·τ*_c,j for every case c
        (τ* the program's torques); a unit with none takes its option covering the most. A
        heuristic: the designs are scored in full by the caller, nothing is proven."""
        model = self.model
        n = model.n
        root = np.full(n, -1, dtype=np.int64)
        self.group_bounds(root, [], np.empty(0), np.empty(0))
        if not self.program.solved():
            return np.empty((0, n), dtype=np.int64)
        x = np.asarray(self.program.h.getSolution().col_value)
        taus = [x[c : c + n] for c in self.program.tau_cols]
        out = []
        for f in margins:
            idx = np.full(n, -1, dtype=np.int64)
            for u in units:
                opts = unit_options(self.candidates, u)
                if opts.size == 0:
                    return np.empty((0, n), dtype=np.int64)
                cover = np.zeros(opts.size)
                for j in u:
                    for lo, hi, t in zip(self.lo, self.hi, taus, strict=True):
                        cover += (lo[j, opts] <= f * t[j] + 1e-9) & (hi[j, opts] >= f * t[j] - 1e-9)
                best = opts[cover == cover.max()]
                idx[list(u)] = best[np.argmin(model.mass[best])]
            out.append(idx)
        return np.unique(np.array(out), axis=0)

    def dive(self, units) -> np.ndarray:
        """A design read off the programs (a heuristic: the caller scores it in full): the units,
        in the order given, each take the option of best bound given the ones already taken
        (:meth:`bound` with the ``LEAD`` best solved by their own programs; least mass among
        equals). Empty when a unit has no option."""
        model = self.model
        idx = np.full(model.n, -1, dtype=np.int64)
        for u in units:
            opts = unit_options(self.candidates, u)
            if opts.size == 0:
                return np.empty(0, dtype=np.int64)
            b = self.bound(idx, u, opts, None, LEAD)
            top = np.flatnonzero(b >= b.max() - 1e-9 * max(1.0, abs(b.max())))
            idx[list(u)] = opts[top[np.argmin(model.mass[opts[top]])]]
        return idx

    def group_bounds(self, idx, unit: list, options, group_of) -> np.ndarray:
        """Per option (one value when ``unit`` is empty): the bound of its group's program
        (``group_of``: the group of each option), lowered per option by that program's duals
        (:meth:`.stance_program.StanceProgram.option_bounds`)."""
        model = self.model
        fixed = idx >= 0
        fixed[unit] = False
        a = np.flatnonzero(fixed)
        m_lo, m_hi = self.m_free[:, 0].copy(), self.m_free[:, 1].copy()
        m_lo[a] = m_hi[a] = model.mass[idx[a]]
        t_lo = [t[:, 0].copy() for t in self.t_free]
        t_hi = [t[:, 1].copy() for t in self.t_free]
        for c, (lo, hi) in enumerate(zip(self.lo, self.hi, strict=True)):
            t_lo[c][a], t_hi[c][a] = lo[a, idx[a]], hi[a, idx[a]]
        if not unit:
            return np.array([self.program.solve(t_lo, t_hi, m_lo, m_hi)])
        order = np.argsort(group_of, kind="stable")
        groups = np.split(order, np.cumsum(np.bincount(group_of))[:-1])
        out = np.full(options.size, math.inf)
        for rows in groups:
            if rows.size == 0:
                continue
            o = options[rows]
            m_lo[unit], m_hi[unit] = model.mass[o].min(), model.mass[o].max()
            for c, (lo, hi) in enumerate(zip(self.lo, self.hi, strict=True)):
                t_lo[c][unit] = lo[unit][:, o].min(axis=1)
                t_hi[c][unit] = hi[unit][:, o].max(axis=1)
            value = self.program.solve(t_lo, t_hi, m_lo, m_hi)
            out[rows] = value
            if rows.size > 1 and math.isfinite(value):  # each option from the group's duals
                box_lo, box_hi = self.boxes(unit, o)
                out[rows] = self.program.option_bounds(value, unit, box_lo, box_hi)
        return out

    def boxes(self, unit: list, options: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Each option's box over the unit's columns (:meth:`StanceProgram.columns`): its torque
        range in every case, then its mass (O, K)."""
        mass = np.repeat(self.model.mass[options][:, None], len(unit), axis=1)
        lo = [lo[unit][:, options].T for lo in self.lo] + [mass]
        hi = [hi[unit][:, options].T for hi in self.hi] + [mass]
        return np.hstack(lo), np.hstack(hi)
