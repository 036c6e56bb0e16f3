"""The payload versus back-drivability front by bi-objective branch and bound: complete, proven.

Joints are assigned in the single-objective search's order (:func:`.search.search_order`). Every
option of the next unit of a partial design gets a **bound box**: an upper bound on the payload
of every completion (:meth:`SizingModel.child_bounds` of the payload model with the budget cap,
the bounds the single-objective search prunes with) and a bound on the best measure of every
completion (the same model with the measure as objective: the Loewner-order IMF upper bound
:meth:`SizingModel.impact_bounds`, the effective-mass lower bound with every free joint at its
lightest, least-inertia option, the back-drive force lower bound from the least breakaway
torques). Both objectives are maximized internally (payload, sign·measure).

Boxes wait in a priority queue, largest payload bound first (best first); the children of a
node wait as one entry keyed by the best not yet taken. An entry is dropped when a front point
weakly dominates its best corner, when a known feasible design (an incumbent) beats it strictly,
or when some requirement is provably missed (the single-objective cuts). Total mass and cost are
bounded exactly by the assigned values plus each free joint's least value. Complete designs
are scored in batches by the physics oracle on the static cases and wait keyed by the smaller of
their static payload and their leaf box (whose stance programs bound the stance cases); the
costly ones (duty cycles, stance) are checked when the design reaches the head of the queue, and
its full payload (never above that key past the tie tolerance) puts it back. A fully checked
design at the head joins the front: every design of larger payload has been resolved by then,
so each point is final when found (proof:
docs/frontier.md, "Method: bi-objective branch and bound"). Past the deadline the search
stops: the points found are proven, and the entries left bound the region where points may be
missing.
"""

from __future__ import annotations

import heapq
import itertools
import math
import time
from dataclasses import dataclass

import numpy as np

from ..problem import checks, feasible
from .bound_models import SEPARABLE, measure_model, shared_payload_bounds
from .floor_bound import floor_applies, floor_bounds
from .front_archive import FINAL, NODE, SCREENED, FrontArchive
from .model import SizingModel, tie_tol, unit_options
from .pareto import _payload, measure_values
from .unit_order import search_order

#: complete designs scored per oracle call at the last level
LEAF_CHUNK = 512
#: payload floors per partial design taken from the queue (:meth:`BiObjectiveSearch._floor_key`)
FLOOR_LEVELS = 8
#: children whose floor bounds are computed per oracle call
FLOOR_CHUNK = 256


@dataclass(frozen=True)
class BiOutcome:
    """Front points (payload, measure, index, mass), largest payload first."""

    points: tuple  # (payload kg, measure, index (n,), mass kg): proven even when stopped
    complete: bool  # the whole tree was searched
    scored: int  # complete designs scored by the oracle (static cases)
    checked: int  # designs through the costly cases (duty, stance)
    nodes: int
    seconds: float
    #: when stopped: every missing point has payload ≤ open_payload and a measure no better
    #: than open_measure (the largest bounds over the boxes left open); None when complete
    open_payload: float | None
    open_measure: float | None


class BiObjectiveSearch(FrontArchive):
    """Best-first bi-objective branch and bound; see the module docstring.

    ``model``: built for the payload objective with the measure's own limit removed;
    ``sense`` "min": larger measure is better (IMF), "max": smaller is better.
    """

    def __init__(
        self,
        model: SizingModel,
        units: list[tuple],
        case: str | None,
        metric: str,
        sense: str,
        *,
        deadline: float = math.inf,
    ):
        self.model = model
        self.mmodel = measure_model(model, case, metric)
        self.units = search_order(model, units)
        self.case, self.metric = case, metric
        self.sign = 1.0 if sense == "min" else -1.0
        self.deadline = deadline
        self.st = model.stats(model.candidates)
        cap_end = min(deadline, time.perf_counter() + 2.0)
        self.cap = model.budget_cap(self.st, deadline=cap_end)
        self.levels, self.stance = shared_payload_bounds(model, self.cap, deadline)
        if self.levels is not None:
            self.cap = min(self.cap, self.levels.cap())
        if self.stance is not None:
            root = np.full(model.n, -1, dtype=np.int64)
            self.cap = min(self.cap, self.stance.bound(root, (), np.empty(0, dtype=np.int64)))
        self.lazy = bool(model.duty or model.stance)
        n = model.n
        # the front: fully checked feasible designs, non-dominated, sorted by payload ascending
        self.fp = np.zeros(0)
        self.fm = np.zeros(0)
        self.fi = np.zeros((0, n), dtype=np.int64)
        self.fmass = np.zeros(0)
        self.frefl = np.zeros(0)
        #: a feasible design's (payload, measure) that prunes what it beats strictly
        #: (:meth:`incumbent`), and its queue entry
        self.inc: tuple[float, float] | None = None
        self.inc_entry: tuple | None = None
        self.nodes = self.scored = self.checked = self.floor_calls = self.floor_waits = 0
        #: payload floors (:meth:`_floor_key`) for the measures :mod:`.floor_bound` bounds
        self.floors = floor_applies(model, metric)
        #: most queue entries taken (a stop that does not depend on the clock, for tests)
        self.max_pops: float = math.inf
        self.stopped = False

    # ------------------------------------------------------------------------------------------
    def run(self) -> BiOutcome:
        start = time.perf_counter()
        n = self.model.n
        heap: list = []
        tick = itertools.count()
        opts = [unit_options(self.model.candidates, u) for u in self.units]
        if all(o.size for o in opts):
            top = 1.0 if self.metric == "imf" else 0.0  # the trivial measure bound
            root = (np.full(n, -1, dtype=np.int64), None, [self.cap], [top], 0, None)
            heap.append((-self.cap, -top, 0.0, 0.0, next(tick), NODE, root, 0))
            if self.inc_entry is not None:
                heapq.heappush(heap, self.inc_entry)
        self.leaves: list = []  # complete designs not yet scored, by their (near-exact) boxes
        pops = 0
        while heap or self.leaves:
            pops += 1
            if time.perf_counter() > self.deadline or pops > self.max_pops:
                self.stopped = True
                break
            if self.leaves and (not heap or self.leaves[0][:2] <= heap[0][:2]):
                self._score_leaves(heap, tick)
                continue
            negp, negm, mass, refl, _t, kind, idx, level = heapq.heappop(heap)
            p, m = -negp, -negm
            if kind == NODE:  # the best child not yet taken; its siblings wait behind it
                self._next_sibling(heap, tick, idx, level)
            if self.dominated1(p, m):
                continue
            if kind == NODE:
                parent, options, _pb, _mbs, k, stairs = idx
                child = parent.copy()
                if options is not None:
                    child[list(self.units[level - 1])] = options[k]
                    q = self._floor_key(idx, level, p, m)
                    if q == -np.inf:  # every completion is dominated
                        continue
                    if q < p:  # every completion of payload > q is dominated: wait at q
                        self.floor_waits += 1
                        one = {"grid": stairs["grid"], "b": stairs["b"][k : k + 1]}
                        entry = (parent, options[k : k + 1], np.array([q]), np.array([m]), 0, one)
                        heapq.heappush(
                            heap, (-q, negm, -float(level), 0.0, next(tick), NODE, entry, level)
                        )
                        continue
                self._expand(heap, tick, child, level)
            elif kind == SCREENED:  # static cases passed: the costly ones decide
                full = self.model.score(idx[None, :], full=True)
                self.checked += 1
                if full.feasible[0]:
                    # its full payload (p, the key, may be a stance program's bound above it;
                    # never above the key past the tie tolerance, so the front stays ordered)
                    q = min(float(full.objective[0]), p + tie_tol(p))
                    heapq.heappush(heap, (-q, negm, mass, refl, next(tick), FINAL, idx, level))
            else:
                self._add(p, m, idx, mass, refl)
        open_p = open_m = None
        if self.stopped:
            # every entry's box; a sibling entry holds one box per child not yet taken (arrays:
            # millions of them), an entry of one child (a waiting one) its key
            keys = [h[:2] for h in self.leaves]
            ps, ms = [], []
            for h in heap:
                pb = h[6][2] if h[5] == NODE else ()
                if len(pb) - (h[6][4] if h[5] == NODE else 0) > 1:
                    ps.append(np.asarray(pb[h[6][4] :], dtype=float))
                    ms.append(np.asarray(h[6][3][h[6][4] :], dtype=float))
                else:
                    keys.append(h[:2])
            single = -np.array(keys, dtype=float).reshape(-1, 2)
            rest_p = np.concatenate([single[:, 0], *ps])
            rest_m = np.concatenate([single[:, 1], *ms])
            live = ~self.dominated(rest_p, rest_m)
            if live.any():
                open_p = float(rest_p[live].max())
                open_m = self.sign * float(rest_m[live].max()) + 0.0  # no negative zero
            self.stopped = bool(live.any())
        order = np.argsort(-self.fp, kind="stable")
        pts = tuple(
            (
                float(self.fp[k]),
                self.sign * float(self.fm[k]),
                self.fi[k].copy(),
                float(self.fmass[k]),
            )
            for k in order
        )
        return BiOutcome(
            pts,
            not self.stopped,
            self.scored,
            self.checked,
            self.nodes,
            time.perf_counter() - start,
            open_p,
            open_m,
        )

    def _floor_key(self, entry: tuple, level: int, p: float, m: float) -> float:
        """The payload below which child ``k`` of a sibling ``entry`` (box (p, m)) may still
        hold a front point (docs/frontier.md, "Payload floors"). With floors f_1 > … > f_L = 0
        and b_i bounding the measure of every completion of payload ≥ f_i
        (:func:`.floor_bound.floor_bounds`), the completions of payload in (f_(i+1), f_i] lie
        in the box (f_i, b_(i+1)), those above the first floor below p in (p, b), those at
        most f_L in (f_L, m). Returns p when the first box is not dominated, else the top of
        the first box that is not (every completion above it is dominated by, or equal to, a
        known point or strictly beaten by the incumbent; the rest have payload ≤ it and
        measure bound m), −inf when none is. The floors of a sibling entry are one grid below
        its best child's payload bound; the children's bounds are computed :data:`FLOOR_CHUNK`
        at a time in one oracle call, once, and kept with the entry."""
        parent, options, pb, _mbs, k, stairs = entry
        if not self.floors or not (self.fp.size or self.inc is not None):
            return p
        if not (math.isfinite(p) and p > 0):
            return p
        if stairs["grid"] is None:
            top = float(pb[0]) if math.isfinite(pb[0]) else p
            frac = np.arange(1, FLOOR_LEVELS + 1) / FLOOR_LEVELS
            stairs["grid"] = top * (1.0 - frac**2)
            stairs["b"] = np.full((len(options), FLOOR_LEVELS), np.nan)
        grid, b = stairs["grid"], stairs["b"]
        if np.isnan(b[k, 0]):
            end = min(k + FLOOR_CHUNK, len(options))
            got = floor_bounds(
                self.model,
                self.metric,
                self.case,
                parent,
                self.units[level - 1],
                options[k:end],
                grid,
                self.st,
            )
            if got is None:
                self.floors = False
                return p
            self.floor_calls += 1
            b[k:end] = got
        below = grid < p - tie_tol(p)
        tops = np.concatenate([[p], grid[below]])
        lows = np.concatenate([b[k][below], [m]])
        for i in range(tops.size):
            if lows[i] > -np.inf and not self.dominated1(float(tops[i]), float(lows[i])):
                return p if i == 0 else float(tops[i])
        return -np.inf

    def _boxes(self, idx: np.ndarray, unit: tuple, opts: np.ndarray, last: bool):
        """Children of ``unit`` that survive every cut, largest payload bound first, with their
        boxes (payload upper bound, measure bound, internal sense)."""
        b = self.model.child_bounds(idx, unit, opts, self.st)
        p = np.minimum(b["objective"], self.cap)
        if self.levels is not None and opts.size:
            p = np.minimum(p, self.levels.bound(idx, unit, opts, self.st))
        keep = b["ok"] & (p > -np.inf)
        if self.metric in SEPARABLE or self.metric == "backdrive_force":
            # total mass or cost: the assigned joints' values plus each free joint's least one
            # (exact for a complete design); back-drive force: the least breakaway torques
            mb = self.mmodel.child_bounds(idx, unit, opts[keep], self.st)["objective"]
        else:
            # the trivial bounds: an IMF is at most 1, an effective mass at least 0
            mb = np.full(int(keep.sum()), 1.0 if self.metric == "imf" else 0.0)
        opts, p = opts[keep], p[keep]
        keep = ~self.dominated(p, mb)
        opts, p, mb = opts[keep], p[keep], mb[keep]
        if opts.size and (self.fp.size or self.inc is not None or last):
            # the measure bounds cost an oracle call; above the last level, before the first
            # front point, they cut nothing (no box is dominated): they start with it there
            # (skipping a cut is safe); complete designs always get theirs. Total mass and cost
            # have theirs already (exact sums): the call checks the other limits only
            bounds = None if self.metric in SEPARABLE else {"objective": mb.copy()}
            ok = self.mmodel.costly_ok(idx, unit, opts, self.st, bounds)
            if bounds is not None:
                mb = np.minimum(mb, bounds["objective"])
            ok &= ~self.dominated(p, mb)
            opts, p, mb = opts[ok], p[ok], mb[ok]
        if self.stance is not None and opts.size:
            # the stance programs (a linear program per option group, per option at the last
            # joints) last, on the boxes the cheaper bounds left undominated; at the last joints
            # an option whose group bound already puts its box below the front's floor keeps
            # that bound (dominated) instead of its own program
            p = np.minimum(p, self.stance.bound(idx, unit, opts, self.payload_floor(mb)))
            keep = (p > -np.inf) & ~self.dominated(p, mb)
            opts, p, mb = opts[keep], p[keep], mb[keep]
        order = np.lexsort((opts, -mb, -p))
        return opts[order], p[order], mb[order]

    def _expand(self, heap: list, tick, idx: np.ndarray, level: int) -> None:
        """Bound every option of the next unit; push the surviving children, or score the
        complete designs at the last level in one batch and push the feasible ones."""
        self.nodes += 1
        unit = self.units[level]
        opts, p, mb = self._boxes(
            idx, unit, unit_options(self.model.candidates, unit), level + 1 == len(self.units)
        )
        if not opts.size:
            return
        if level + 1 < len(self.units):
            # one queue entry for all the children, keyed by the best: they are sorted by
            # payload bound, then measure bound, the queue's own order, so taking them one at a
            # time (:meth:`_next_sibling`) visits them exactly as single entries would. Among
            # equal boxes the deeper node goes first (third key −depth; complete designs carry
            # their mass ≥ 0 there, so a node still precedes them)
            heapq.heappush(
                heap,
                (
                    -p[0],
                    -mb[0],
                    -(level + 1.0),
                    0.0,
                    next(tick),
                    NODE,
                    (idx, opts, p, mb, 0, {"grid": None, "b": None}),
                    level + 1,
                ),
            )
            return
        rows = np.broadcast_to(idx, (opts.size, self.model.n)).copy()
        rows[:, list(unit)] = opts[:, None]
        for k in range(opts.size):
            heapq.heappush(self.leaves, (-p[k], -mb[k], next(tick), rows[k]))

    def _next_sibling(self, heap: list, tick, entry: tuple, level: int) -> None:
        """Queue the next child of a sibling entry (the one after ``entry``'s), skipping the
        children the front already dominates (the front only grows: they stay dominated)."""
        parent, options, pb, mbs, k, stairs = entry
        k += 1
        while k < len(pb) and self.dominated1(float(pb[k]), float(mbs[k])):
            k += 1
        if k < len(pb):
            heapq.heappush(
                heap,
                (
                    -pb[k],
                    -mbs[k],
                    -float(level),
                    0.0,
                    next(tick),
                    NODE,
                    (parent, options, pb, mbs, k, stairs),
                    level,
                ),
            )

    def _score_leaves(self, heap: list, tick) -> None:
        """Score the best leaf boxes not dominated by the front (up to :data:`LEAF_CHUNK`, in
        one oracle call) and push the feasible designs with their static values."""
        picked: list[np.ndarray] = []
        boxes: list[float] = []
        while self.leaves and len(picked) < LEAF_CHUNK:
            negp, negm, _t, row = heapq.heappop(self.leaves)
            if not self.dominated1(-negp, -negm):
                picked.append(row)
                boxes.append(-negp)
        if not picked:
            return
        model = self.model
        chunk = np.stack(picked)
        arrays = model.table.arrays(chunk)
        ev = model.static_evaluator.evaluate(arrays, detail=False)
        ok = feasible(checks(model.static_project, arrays, ev), chunk.shape[0])
        pay = _payload(model, arrays, ev, chunk.shape[0])
        if self.lazy:
            # a design waiting for its costly check is keyed by its static payload or its leaf
            # box, the smaller (the box's stance programs bound the stance cases not yet
            # checked), so fewer designs reach the check undominated
            pay = np.minimum(pay, boxes)
        mu = self.sign * measure_values(arrays, ev, self.case, self.metric)
        ok &= np.isfinite(mu) & ~np.isnan(pay)
        self.scored += chunk.shape[0]
        keep = np.flatnonzero(ok)
        keep = keep[~self.dominated(pay[keep], mu[keep])]
        mass = arrays.mass.sum(axis=1)
        refl = arrays.reflected_inertia("backdriven").sum(axis=1)
        kind = SCREENED if self.lazy else FINAL
        last = len(self.units)
        for k in keep:
            heapq.heappush(
                heap, (-pay[k], -mu[k], mass[k], refl[k], next(tick), kind, chunk[k], last)
            )
