"""Exact branch and bound over joints, vectorized over each joint's options.

Joints are assigned in an order where every actuator whose mass loads a joint is chosen before
that joint (distal first on a chain), so a joint's payload bound is exact the moment it is
assigned; for other objectives the units whose choice moves the root's bound the most go first
(solve/unit_order.py). At each node all options of the next joint are bounded in one numpy call
(:meth:`SizingModel.child_bounds`); children whose bound cannot beat the incumbent (objective,
then least mass) or that provably miss a requirement are cut. Complete designs are scored in
batches by the physics oracle. Proofs of every cut: docs/optimizer.md.
"""

from __future__ import annotations

import math
import time

import numpy as np

from . import budget_bound
from .model import SizingModel, tie_tol, unit_options
from .node_bounds import narrowed
from .result import SolveOutcome
from .unit_order import SPREAD_SHARE, search_order, spread_order

#: complete designs scored per oracle call at the last level
LEAF_CHUNK = 512


class BranchAndBound:
    """Depth-first branch and bound; see the module docstring."""

    def __init__(
        self,
        model: SizingModel,
        units: list[tuple],
        *,
        time_limit=None,
        progress=None,
        ties=True,
        upper=None,
        incumbent=None,
        gap=0.0,
    ):
        """``ties=False`` proves only the optimal value (ties are not searched for the preferred
        design); ``upper`` is a known upper bound on the optimum: reaching it ends the search;
        ``incumbent`` the key (:meth:`SizingModel.key`) of a design known to be feasible (from
        the primal heuristics) to start from; ``gap`` the relative optimality gap: a node whose
        bound is within ``gap``·|incumbent| of the incumbent and whose mass bound is no lighter
        is not searched (its bound enters the proven bound; the least-mass tie-break stays
        exact, the reflected-inertia one only with gap 0)."""
        self.model = model
        self.st = model.stats(model.candidates)
        self.deadline = math.inf if time_limit is None else time.perf_counter() + time_limit
        spread_end = (
            math.inf if time_limit is None else time.perf_counter() + SPREAD_SHARE * time_limit
        )
        self.units = spread_order(model, search_order(model, units), spread_end, self.st)
        self.progress = progress
        self.best_key = incumbent
        # a bound on every design (budget, item 4b), within a tenth of the time limit
        cap_end = math.inf if time_limit is None else time.perf_counter() + 0.1 * time_limit
        self.cap = model.budget_cap(self.st, deadline=cap_end)
        # the per-component budget bound (item 4c), within a quarter of the limit
        self.levels = None
        if model.kind == "payload" and model.payload and math.isfinite(self.cap):
            from .component_bound import ComponentLevels, level_grid

            end = math.inf if time_limit is None else time.perf_counter() + 0.25 * time_limit
            low = min(0.0, incumbent[0]) if incumbent is not None else 0.0
            grid = level_grid(low, self.cap, None if incumbent is None else incumbent[0])
            if incumbent is not None and math.isfinite(incumbent[0]):
                # the tie floor itself: the least-mass tie-break bounds completions reaching it
                grid = np.union1d(grid, [incumbent[0] - tie_tol(incumbent[0])])
            self.levels = ComponentLevels(model, model.candidates, grid, deadline=end)
            self.cap = min(self.cap, self.levels.cap())
        # stance cases: one linear program per case and node (item 9)
        self.stance = None
        if model.stance_bounded:
            from .stance_bound import StanceBound

            self.stance = StanceBound.of(model)
            root = np.full(model.n, -1, dtype=np.int64)
            self.cap = min(self.cap, self.stance.bound(root, (), np.empty(0, dtype=np.int64)))
        self.nodes = 0
        self.scored = 0
        self.open_bound = -math.inf
        self.gap = float(gap)
        # the largest bound of the nodes left unsearched because they are within the gap
        self.gap_bound = -math.inf
        self.stopped = False
        self._probed = None
        self.ties = ties
        self.reached = False
        self.upper = math.inf if upper is None else upper
        # IMF limits: each node drops the open units' options that miss one (item 8)
        self.imf_limits = model.imf_limits_or_objective() and any(
            "imf_min" in c.limits or "directional_imf_min" in c.limits for c in model.impact_cases
        )
        # the payload probe at each node (:meth:`_node_candidates`)
        self.probe = model.kind == "payload" and (
            bool(model.effective_mass_limits)
            or self.imf_limits
            or math.isfinite(model.total_mass_max)
        )

    def run(self) -> SolveOutcome:
        start = time.perf_counter()
        n = self.model.n
        empty = [u for u in self.units if unit_options(self.model.candidates, u).size == 0]
        if empty:
            joints = [self.model.project.robot.actuated[j] for u in empty for j in u]
            names = joints[0] if len(joints) == 1 else f"{', '.join(joints[:-1])} or {joints[-1]}"
            what = (
                "no design meets every requirement: the per-joint filters and proven bounds "
                "rule out every option of every joint"
                if len(joints) == n
                else f"no option of {names} can meet every requirement in any design "
                "(per-joint filters and proven bounds)"
            )
            return SolveOutcome(
                "infeasible", None, -math.inf, -math.inf, time.perf_counter() - start, what, 0
            )
        if time.perf_counter() > self.deadline:
            # the preparation took the whole limit: the root bound holds for every design
            self.stopped = True
            self.open_bound = max(self.open_bound, self.cap)
        else:
            cands, st = self.probed()
            if all(c.size for c in cands):  # else no design reaches the incumbent
                self._node(np.full(n, -1, dtype=np.int64), 0, cands, st)
        elapsed = time.perf_counter() - start
        best = self.best_key
        if self.stopped:
            bound = max(self.open_bound, self.gap_bound, best[0] if best else -math.inf)
            status = "time_limit"
        else:
            bound = max(self.gap_bound, best[0]) if best else -math.inf
            status = "optimal" if best else "infeasible"
        native = (
            f"{self.nodes} node{'s' * (self.nodes != 1)}, "
            f"{self.scored} design{'s' * (self.scored != 1)} scored in the tree"
            + (
                " (a design found before the tree search, proven optimal by its bounds)"
                if best and self.scored == 0 and not self.stopped
                else ""
            )
        )
        index = np.array(best[3]) if best else None
        return SolveOutcome(
            status, index, best[0] if best else -math.inf, bound, elapsed, native, self.nodes
        )

    def root_candidates(self) -> list[np.ndarray]:
        """Per joint, the options that survive the root's cuts (:meth:`_children` at the root,
        each unit in turn): every design that beats the incumbent, or ties it with less mass,
        takes only these; the rest cannot reach the incumbent less its tie tolerance."""
        root = np.full(self.model.n, -1, dtype=np.int64)
        out = list(self.model.candidates)
        gap, self.gap = self.gap, 0.0  # exact cuts: the designs within the gap stay
        try:
            for u in self.units:
                kept, _ = self._children(root, u, unit_options(self.model.candidates, u), self.st)
                for j in u:
                    out[j] = np.sort(kept)
        finally:
            self.gap = gap
        return out

    # ------------------------------------------------------------------------------------------
    def probed(self):
        """The candidates the search starts from, and their statistics: with stance cases and an
        incumbent, each unit's options whose own stance program at the root is below it are
        dropped, in rounds (:meth:`.stance_bound.StanceBound.probe`; docs/optimizer.md, item 9),
        within half of the time left; the stance bound is then the one over what is left.
        Probed once: a later, better incumbent keeps these candidates (cut against a lower
        floor, so still every design that reaches it)."""
        if self._probed is None:
            self._probed = self._stance_probe()
        return self._probed

    def _stance_probe(self):
        model = self.model
        if self.stance is None or self.best_key is None:
            return model.candidates, self.st
        now = time.perf_counter()
        end = now + 0.5 * (self.deadline - now) if math.isfinite(self.deadline) else math.inf
        floor = self.best_key[0] - tie_tol(self.best_key[0])
        cands, self.stance = self.stance.probe(self.units, floor, deadline=end)
        if not all(c.size for c in cands):
            return cands, self.st
        return cands, model.stats(cands)

    def _prune(self, b: dict) -> np.ndarray:
        keep = b["ok"].copy()
        if self.best_key is not None:
            f0, m0 = self.best_key[0], self.best_key[1]
            tol = tie_tol(f0)
            keep &= b["objective"] >= f0 - tol if self.ties else b["objective"] > f0 + tol
            r0 = self.best_key[2]
            tie = b["objective"] <= f0 + tol
            keep &= ~(tie & (b["mass"] > m0 + tie_tol(m0)))
            if math.isfinite(r0):
                keep &= ~(
                    tie & (b["mass"] >= m0 - tie_tol(m0)) & (b["reflected"] > r0 + tie_tol(r0))
                )
            if self.gap > 0:
                # within the gap and no lighter than the incumbent: not searched (the bound of
                # what is left out is kept); a node that may hold a lighter design is, so the
                # tie-break by least mass stays exact
                near = (
                    keep
                    & (b["objective"] <= f0 + self.gap * abs(f0))
                    & (b["mass"] >= m0 - tie_tol(m0))
                )
                if near.any():
                    self.gap_bound = max(self.gap_bound, float(b["objective"][near].max()))
                    keep &= ~near
        return keep

    def _children(self, idx: np.ndarray, unit: tuple, opts: np.ndarray, st: dict):
        """Options of ``unit`` that survive every cut, best bound first, with their bounds;
        ``st``: the statistics of the node's candidates (:meth:`_node_candidates`)."""
        floor = None
        if self.best_key is not None:
            floor = self.best_key[0] - tie_tol(self.best_key[0])
        b = self.model.child_bounds(idx, unit, opts, st, floor)
        b["objective"] = np.minimum(b["objective"], self.cap)
        if self.levels is not None and opts.size:
            st_ = dict(st, mmin=self.model.useful_mmin(st, floor))
            b["objective"] = np.minimum(b["objective"], self.levels.bound(idx, unit, opts, st_))
        if self.stance is not None and opts.size:
            stance = self.stance.bound(idx, unit, opts, floor)
            b["objective"] = np.minimum(b["objective"], stance)
        if floor is not None and opts.size:
            # no child can beat the incumbent, only tie it: the mass decides, so it is bounded
            # per child (costlier; valid wherever it is used)
            ties_only = bool(b["objective"].max() <= floor + 2 * tie_tol(self.best_key[0]))
            mass = self._mass_floor(idx, unit, opts, st, floor, per_child=ties_only)
            b["mass"] = np.maximum(b["mass"], mass)
            # as child_bounds' budget cut: no completion reaching the floor fits the budget
            b["ok"] = b["ok"] & (b["mass"] <= self.model.total_mass_max * (1 + 1e-9))
        keep = self._prune(b)
        opts, b = opts[keep], {k: v[keep] for k, v in b.items()}
        if opts.size:
            deadline = self.deadline if math.isfinite(self.deadline) else None
            em = self.model.costly_ok(idx, unit, opts, st, b, floor, deadline)
            em &= self._prune(b)
            opts, b = opts[em], {k: v[em] for k, v in b.items()}
        order = np.lexsort((opts, b["mass"], -b["objective"]))
        return opts[order], {k: v[order] for k, v in b.items()}

    def _mass_floor(self, idx, unit, opts, st, floor: float, per_child: bool) -> np.ndarray:
        """Least mass of every completion reaching ``floor`` (K,) (docs/optimizer.md, item 4d):
        the free joints' least useful masses at the node, the untouched limbs' least masses at
        the floor and, with ``per_child``, the joints the unit loads judged per child mass."""
        model = self.model
        assigned = idx >= 0
        assigned[list(unit)] = False
        free = ~assigned
        free[list(unit)] = False
        A, F = np.flatnonzero(assigned), np.flatnonzero(free)
        st_ = dict(st, mmin=model.useful_mmin(st, floor))  # as child_bounds: its cached table
        if not np.all(np.isfinite(st_["mmin"][np.r_[F, list(unit)]])):
            return np.full(opts.size, np.inf)  # an open joint cannot reach the floor at all
        own = model.mass[idx[A]].sum() + len(unit) * model.mass[opts]
        # the joints the unit loads, per child mass, the others at their useful least
        out = own + st_["mmin"][F].sum()
        if per_child:
            out = out + budget_bound.loaded_mass_rise(
                model, F, idx, A, unit, opts, st_, floor, self.deadline
            )
        rest = budget_bound.free_mass_at_level(model, F, idx, A, st_, floor)
        if rest is not None:
            out = np.maximum(out, own + rest)
        if self.levels is not None:
            out = np.maximum(out, self.levels.mass_floor(idx, unit, opts, st_, floor))
        return out

    def _node_candidates(self, idx: np.ndarray, level: int, cands: list, st: dict):
        """The candidates of the units still open below a node, and their statistics; (None,
        None) when a unit has no option left. The node's own unit is left out: its options are
        screened as children, after the cheap cuts.

        - Payload probe (docs/optimizer.md, item 10): with a payload objective, an incumbent and
          a bound that reads the open joints' least masses (effective-mass or IMF limits, a
          total-mass budget), each open unit keeps only the options whose bound at this node
          (:meth:`SizingModel.child_bounds` without the budget tables) can still reach the
          incumbent less its tie tolerance and meets the cheap requirements; the strong
          options are the heavy ones, so the least masses rise and those bounds tighten.
        - IMF limits: options that miss a limit in every completion of the node are dropped
          (docs/optimizer.md, item 8).
        """
        if not (self.probe or self.imf_limits) or level == 0 or level + 2 > len(self.units):
            return cands, st
        from .impact_bound import impact_ok

        out = list(cands)
        probed = self.probe and self.best_key is not None
        floor = self.best_key[0] - tie_tol(self.best_key[0]) if probed else None
        for unit in self.units[level + 1 :]:
            opts = unit_options(out, unit)
            if probed:
                b = self.model.child_bounds(idx, unit, opts, st, floor, levels=False)
                opts = opts[b["ok"] & (np.minimum(b["objective"], self.cap) >= floor)]
            if self.imf_limits and opts.size:
                opts = opts[impact_ok(self.model, idx, unit, opts, st)]
            if opts.size == 0:
                return None, None
            for j in unit:
                out[j] = opts
        if all(a.size == b.size for a, b in zip(out, cands, strict=True)):
            return cands, st
        if probed:
            # the extremes only: at every node the full statistics would cost more than the
            # probe saves (measured: docs/benchmarks.md)
            return out, narrowed(self.model, st, out)
        return out, self.model.stats(out)

    def _node(self, idx: np.ndarray, level: int, cands=None, st=None) -> None:
        self.nodes += 1
        if self.progress is not None and self.nodes % 200 == 0:
            self.progress(self.nodes, self.best_key[0] if self.best_key else None)
        cands, st = self._node_candidates(
            idx, level, self.model.candidates if cands is None else cands, st or self.st
        )
        if cands is None or st is None:
            return
        unit = self.units[level]
        opts, b = self._children(idx, unit, unit_options(cands, unit), st)
        if level + 1 == len(self.units):
            self._leaves(idx, unit, opts, b)
            return
        version = self.best_key
        i = 0
        while i < opts.size:
            if self.best_key is not version:  # a better incumbent: re-bound what is left
                version = self.best_key
                opts, b = self._children(idx, unit, opts[i:], st)
                i = 0
                continue
            if self.reached:
                return
            if time.perf_counter() > self.deadline:
                self.stopped = True
            if self.stopped:
                self.open_bound = max(self.open_bound, float(b["objective"][i:].max()))
                return
            if self._prune({k: v[i : i + 1] for k, v in b.items()})[0]:
                child = idx.copy()
                child[list(unit)] = opts[i]
                self._node(child, level + 1, cands, st)
            i += 1

    def _leaves(self, idx: np.ndarray, unit: tuple, opts: np.ndarray, b: dict) -> None:
        """Score complete designs best bound first, re-cutting after each new incumbent."""
        model = self.model
        while opts.size and not self.reached:
            keep = self._prune(b)
            opts, b = opts[keep], {k: v[keep] for k, v in b.items()}
            chunk_opts = opts[:LEAF_CHUNK]
            if chunk_opts.size == 0:
                return
            chunk_bound = float(b["objective"][:LEAF_CHUNK].max())
            full = np.broadcast_to(idx, (chunk_opts.size, model.n)).copy()
            full[:, list(unit)] = chunk_opts[:, None]
            opts, b = opts[LEAF_CHUNK:], {k: v[LEAF_CHUNK:] for k, v in b.items()}
            key, left = model.best_key_until(
                full, self.deadline if math.isfinite(self.deadline) else None
            )
            self.scored += full.shape[0]
            if left > -math.inf:  # the limit struck inside the costly checks of this chunk
                self.stopped = True
                # the chunk's own bounds hold for its unchecked designs too
                self.open_bound = max(self.open_bound, min(left, chunk_bound))
            if key is not None:
                if model.better(key, self.best_key):
                    self.best_key = key
                    if key[0] >= self.upper - tie_tol(self.upper):
                        self.reached = True
            if (self.stopped or time.perf_counter() > self.deadline) and opts.size:
                self.stopped = True
                self.open_bound = max(self.open_bound, float(b["objective"].max()))
                return
            if self.stopped:
                return
