"""Primal heuristics: a good feasible design within seconds, to start the exact search from.

Nothing here proves anything; every design returned has been scored by the physics oracle and
the project's checks (duty and stance cases included), so it is feasible, and the exact search
only uses it as its first incumbent (a cut against it is as safe as against any incumbent).

* **Level greedy** (payload objective): for a target payload level s, the joints are assigned in
  the search order, each to its lightest option whose interval bound (docs/optimizer.md, items
  2-4, with every unassigned joint limited to its options that can still reach s) reaches s and
  meets every bounded requirement. Light choices load the joints assigned later the least. The
  largest level whose design scores feasible is found by bisection.
* **Sampling and local search** (every objective): random designs drawn from the per-joint
  candidates are scored in batches; the best ones are improved by changing one decision unit
  (a joint or a shared group) at a time to the option that scores best with the rest kept
  (feasible first, then objective, then least mass; an infeasible design moves to the option with
  the least total requirement violation).
* **Stance cases alone** (no static payload case sets the objective): designs are first read off
  the stance programs, by dives along their bounds (:meth:`.stance_bound.StanceBound.dive`, in
  the search order and in its reverse) and
  from the root solution (:meth:`.stance_bound.StanceBound.rounded`), and sampled
  designs and moves are screened by each design's own stance linear program (an upper bound
  within the friction pyramid's gap of its cone value); only the best few are scored in full.

Budget: the phases are measured in CPU time of the process (``time.process_time``), so a loaded
machine, which gives the process only part of a core, does not leave the sampling fewer designs
than its share; a wall-clock ``deadline`` (the user's time limit) stops everything regardless.
"""

from __future__ import annotations

import math
import time

import numpy as np

from ..problem import checks
from .model import SizingModel, unit_options

#: designs per oracle call
BATCH = 1024
#: options tried per unit and local-search move (a random subset when there are more)
MOVE_OPTIONS = 2048
#: the same when stance cases alone set the objective (a linear program per design and case)
MOVE_OPTIONS_STANCE = 256
#: designs of a sampled batch scored in full (cone programs) when stance cases alone set the
#: objective: the best by their linear programs
OFFER_STANCE = 4


def _merit(model: SizingModel, index: np.ndarray, stance=None):
    """(screen-feasible, objective, mass, total violation) of designs ``index`` (D, n) with the
    static cases (duty and stance cases left out: a screen). With ``stance`` (a
    :class:`.stance_bound.StanceBound`, when stance cases alone set the objective) the objective
    is each design's stance linear program, an upper bound within the friction pyramid's gap of
    its cone value, instead of the cone programs themselves."""
    arrays = model.table.arrays(index)
    full = blind_screen(model) and stance is None
    ev = (model.evaluator if full else model.static_evaluator).evaluate(arrays, detail=False)
    cl = checks(model.project if full else model.static_project, arrays, ev)
    s = model.score_arrays(arrays, index, full=full, evaluation=ev)
    f = s.objective if stance is None else np.minimum(s.objective, stance.complete(index))
    viol = np.zeros(index.shape[0])
    for c in cl:
        m = c.margin
        viol += np.where(m < -1e-12, np.minimum(-m, 1e6), 0.0)
    return s.feasible, f, s.mass, viol


def blind_screen(model: SizingModel) -> bool:
    """Whether the screen without duty and stance cases carries no objective (a payload
    objective set by stance cases only): the heuristics then score designs in full."""
    return model.kind == "payload" and not model.payload and bool(model.stance)


def _order(ok, f, mass, viol) -> np.ndarray:
    """Rows best first: feasible by objective then mass; then infeasible by least violation."""
    f = np.where(np.isfinite(f), f, np.where(f > 0, 1e300, -1e300))
    return np.lexsort((mass, -f, viol, ~ok))


class Heuristic:
    """First incumbent for the exact search; see the module docstring."""

    def __init__(
        self,
        model: SizingModel,
        units: list[tuple],
        deadline: float,
        seed: int = 0,
        extend: bool = False,
        cpu: float | None = None,
    ):
        """``deadline``: wall-clock end (``time.perf_counter``), a hard stop; ``cpu``: the CPU
        seconds of the process the heuristics may use (None: until ``deadline``). ``extend``:
        keep sampling while no design is found until half that budget is used; otherwise a fixed
        number of samples."""
        self.model = model
        self.extend = extend
        self.units = units
        self.deadline = deadline
        self.cpu_end = math.inf if cpu is None else time.process_time() + cpu
        #: stance cases alone set the objective: designs are screened by their stance linear
        #: programs (solve/stance_bound.py) and only the best are scored in full
        self.stance = None
        if blind_screen(model) and model.stance_objective:
            from .stance_bound import StanceBound

            self.stance = StanceBound.of(model)
        #: designs drawn by the sampling phase
        self.sampled = 0
        #: designs read off the stance program (local search starts from them first)
        self.seeds: list[np.ndarray] = []
        #: the level greedy's designs that failed a check the bounds do not see (a speed or a
        #: duty case, an impact limit): local search starts from them when nothing is feasible
        self.near_misses: list[np.ndarray] = []
        self.rng = np.random.default_rng(seed)
        self.best: tuple | None = None
        self.tried = 0
        self.options = [unit_options(model.candidates, u) for u in units]

    def out_of_time(self) -> bool:
        return time.perf_counter() > self.deadline or time.process_time() > self.cpu_end

    def offer(self, index: np.ndarray) -> None:
        """Score designs in full (best first among them) and keep the best feasible one."""
        if index.size == 0:
            return
        key = self.model.best_key_until(index, self.deadline)[0]
        self.tried += index.shape[0]
        if key is not None and self.model.better(key, self.best):
            self.best = key

    def run(self, stats=None) -> tuple | None:
        if any(o.size == 0 for o in self.options) or time.perf_counter() > self.deadline:
            return self.best
        if self.model.kind == "payload" and self.model.payload:
            self.level_greedy(stats)
        elif self.model.kind == "mass":
            from .unit_order import search_order

            st = stats if stats is not None else self.model.stats(self.model.candidates)
            idx = self.greedy_at(None, st, search_order(self.model, self.units))
            if idx is not None:
                self.offer(idx[None, :])
        if self.stance is not None:  # designs read off the stance program's solution
            from .unit_order import search_order

            order = search_order(self.model, self.units)
            dives = [self.stance.dive(o) for o in (order, order[::-1]) if not self.out_of_time()]
            self.seeds = [d for d in dives if d.size] + list(self.stance.rounded(self.units))
            for idx in self.seeds:
                self.offer(idx[None, :])
        if time.perf_counter() <= self.deadline:  # its first draws whatever the CPU budget
            self.sample_and_improve()
        return self.best

    # ------------------------------------------------------------------------------------------
    def greedy_at(self, level, st, order) -> np.ndarray | None:
        model = self.model
        idx = np.full(model.n, -1, dtype=np.int64)
        for u in order:
            opts = self.options[self.units.index(u)]
            b = model.child_bounds(idx, u, opts, st, level)
            good = b["ok"] if level is None else b["ok"] & (b["objective"] >= level * (1 - 1e-9))
            if not good.any():
                return None
            rows = np.flatnonzero(good)
            pick = rows[np.lexsort((opts[rows], model.mass[opts[rows]]))[0]]
            idx[list(u)] = opts[pick]
        return idx

    def level_greedy(self, st=None) -> None:
        from .unit_order import search_order

        model = self.model
        st = st if st is not None else model.stats(model.candidates)
        order = search_order(model, self.units)
        root = np.full(model.n, -1, dtype=np.int64)
        top = model.child_bounds(root, order[0], self.options[self.units.index(order[0])], st)[
            "objective"
        ]
        hi = float(top.max()) if top.size else 0.0
        lo = 0.0
        if not math.isfinite(hi) or hi <= 0:
            return
        # at most half of the CPU budget: sampling and local search get the rest
        now = time.process_time()
        half = now + 0.5 * (self.cpu_end - now) if math.isfinite(self.cpu_end) else math.inf
        for _ in range(24):
            if self.out_of_time() or time.process_time() > half:
                break
            if hi - lo <= 1e-4 * max(hi, 1e-9):
                break
            level = 0.5 * (lo + hi)
            idx = self.greedy_at(level, st, order)
            if idx is None:
                hi = level
                continue
            before = self.best
            self.offer(idx[None, :])
            if (
                self.best is not None
                and self.best is not before
                and self.best[0] >= level * (1 - 1e-9)
            ):
                lo = max(lo, self.best[0])
            else:
                hi = level
                self.near_misses.append(idx)

    def sample_and_improve(self, samples: int = 4 * BATCH, starts: int = 3) -> None:
        """Random designs: at least ``samples``, and, with ``extend`` and no design yet, more until
        half of the budget left has been used (CPU time when the budget is set in CPU time, else
        wall time); then local search from the best few. The first ``samples`` designs (a quarter
        of them when stance cases alone set the objective) are drawn whatever the CPU budget,
        unless the wall-clock deadline strikes."""
        model = self.model
        drawn: list[tuple] = []  # per batch: its best few designs and their merits
        share = 0.5
        # longer sampling only when the greedy found nothing (random designs rarely beat it)
        extend = self.extend and self.best is None
        if math.isfinite(self.cpu_end):
            clock, end = time.process_time, self.cpu_end
        else:
            clock, end = time.perf_counter, self.deadline
        t0 = clock()
        half = t0 + share * max(end - t0, 0.0) if extend else t0
        blind = blind_screen(model)
        size = 256 if blind else BATCH
        least = max(1, samples // BATCH) * size
        while self.sampled < least or clock() < half:
            if time.perf_counter() > self.deadline or (
                self.sampled >= least and self.out_of_time()
            ):
                break
            index = np.empty((size, model.n), dtype=np.int64)
            for u, opts in zip(self.units, self.options, strict=True):
                index[:, list(u)] = self.rng.choice(opts, size)[:, None]
            ok, f, mass, viol = _merit(model, index, self.stance)
            self.sampled += size
            order = _order(ok, f, mass, viol)
            # screened by linear programs when blind: only the batch's best few are scored in full
            self.offer(index[order[: OFFER_STANCE if blind else 32]])
            drawn.append(
                (
                    index[order[:starts]],
                    ok[order[:starts]],
                    f[order[:starts]],
                    mass[order[:starts]],
                    viol[order[:starts]],
                )
            )
        pool: list[np.ndarray] = []
        if drawn:
            idx_all, *merit = (np.concatenate(x) for x in zip(*drawn, strict=True))
            pool = list(idx_all[_order(*merit)[:starts]])
        if self.seeds:  # the designs read off the stance program first, best screen first
            seeds = np.array(self.seeds)
            ok, f, mass, viol = _merit(model, seeds, self.stance)
            rows = [r for r in _order(ok, f, mass, viol) if ok[r] and f[r] > 0]
            pool = [seeds[r] for r in rows] + pool
        if self.best is None and self.near_misses:
            # the lowest level's miss first: the least to repair
            pool = [self.near_misses[-1]] + pool
        if self.best is not None:
            pool.insert(0, np.array(self.best[3]))
        seen = set()
        for start in pool:
            key = tuple(np.asarray(start).tolist())
            if key in seen:
                continue
            seen.add(key)
            if len(seen) > starts + 1 or self.out_of_time():
                break
            self.improve(np.array(start))

    def improve(self, index: np.ndarray, passes: int = 4) -> None:
        """One-unit moves, best move per unit, until a pass changes nothing."""
        model = self.model
        cur = _merit(model, index[None, :], self.stance)
        for _ in range(passes):
            moved = False
            for u, opts in zip(self.units, self.options, strict=True):
                if self.out_of_time():
                    self.offer(index[None, :])
                    return
                cap = MOVE_OPTIONS_STANCE if blind_screen(model) else MOVE_OPTIONS
                if opts.size > cap:
                    opts = np.unique(
                        np.concatenate([self.rng.choice(opts, cap, replace=False), [index[u[0]]]])
                    )
                trial = np.broadcast_to(index, (opts.size, model.n)).copy()
                trial[:, list(u)] = opts[:, None]
                ok, f, mass, viol = _merit(model, trial, self.stance)
                row = int(_order(ok, f, mass, viol)[0])
                cand = (ok[row], f[row], mass[row], viol[row])
                if _better_merit(cand, tuple(x[0] for x in cur)):
                    index = trial[row].copy()
                    cur = tuple(np.array([x]) for x in cand)
                    moved = True
            if not moved:
                break
        self.offer(index[None, :])


def _better_merit(a, b) -> bool:
    ok_a, f_a, m_a, v_a = a
    ok_b, f_b, m_b, v_b = b
    if ok_a != ok_b:
        return bool(ok_a)
    if not ok_a:
        return v_a < v_b * (1 - 1e-9)
    tol = 1e-9 * max(1.0, abs(f_b)) if math.isfinite(f_b) else 0.0
    if f_a > f_b + tol:
        return True
    tied = f_a == f_b or abs(f_a - f_b) <= tol  # equal infinities tie (no inf − inf)
    return tied and m_a < m_b * (1 - 1e-12)
