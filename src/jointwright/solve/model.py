"""The discrete co-design problem shared by every back-end: options, payload terms, exact scoring.

A design is one option index per actuated joint (into an :class:`~jointwright.options.OptionTable`).
Payload cases are linear in the actuator masses (robot/basis.py): with a = Jᵀu,

    τ_j(s) = g0_j + Σ_k m_k·G[k, j] + s·a_j,

and the case's payload is the largest s ≥ 0 with lo_j ≤ τ_j(s) ≤ hi_j for every joint (0 when
s = 0 already fails), lo/hi the mode-dependent bounds of joint j's option
(metrics.payload.torque_bounds; the terms are built in solve/case_terms.py). This module keeps
them and :meth:`SizingModel.score`,
which scores complete designs with the one physics oracle
(:class:`~jointwright.evaluate.Evaluator`) and the project's checks; the interval bounds the
search prunes with are in solve/node_bounds.py (reached through the model's methods).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..evaluate import Evaluator
from ..problem import checks, feasible, objective, objective_names, objective_transform
from ..project import life_shares
from . import budget_bound, impact_bound, node_bounds
from .case_terms import payload_terms, torque_terms

#: designs whose duty cases are checked per oracle call
DUTY_CHUNK = 32

#: relative tolerance under which two objective (or mass) values count as a tie
TIE_TOLERANCE = 1e-9


def unit_options(candidates: Sequence[np.ndarray], unit: Sequence[int]) -> np.ndarray:
    """The options a decision unit (a shared group or a lone joint) may take: those every one of
    its joints allows in ``candidates`` (one array of option indices per joint), as int64."""
    opts = candidates[unit[0]]
    for j in unit[1:]:
        opts = np.intersect1d(opts, candidates[j])
    return np.asarray(opts, dtype=np.int64)


def units_in_joint_order(n: int, shared) -> list[tuple[int, ...]]:
    """Decision units in joint order: each shared group (tuples of joint indices) once, at its
    first joint's place, every other joint alone."""
    grouped = {j: tuple(g) for g in shared for j in g}
    out: list[tuple[int, ...]] = []
    for j in range(n):
        unit = grouped.get(j, (j,))
        if unit not in out:
            out.append(unit)
    return out


def tie_tol(value: float) -> float:
    return TIE_TOLERANCE * max(1.0, abs(value)) if math.isfinite(value) else 0.0


@dataclass(frozen=True)
class Scored:
    """Complete designs scored by the physics oracle (arrays of length D)."""

    index: np.ndarray  # (D, n) option indices
    objective: np.ndarray  # value to maximize
    feasible: np.ndarray
    mass: np.ndarray
    reflected: np.ndarray  # sum of back-driven reflected inertia, kg·m²


class SizingModel:
    """Options, candidates and case terms of one project for one objective.

    Parameters
    ----------
    project : Project
    table : OptionTable
    candidates : list of int arrays, per joint
    kind : "payload", "margin", "mass", "cost", "imf" or "metric@case" (frontier)
    shared : list of tuples of joint indices that must take the same option
    """

    def __init__(self, project, table, candidates, kind="payload", shared=()):
        self.project = project
        self.table = table
        #: the user's objective; "margin" runs on the payload machinery with its own per-case
        #: transform (case_value), so every payload bound below serves it unchanged
        self.objective_kind = kind
        self.kind = "payload" if kind == "margin" else kind
        self.n = len(project.robot.actuated)
        self.shared = tuple(tuple(g) for g in shared)
        #: "metric@case" kinds (frontier): maximize sign·metric of one case
        self.measure = None
        if "@" in kind:
            metric, case = kind.split("@", 1)
            self.measure = (metric, case, 1.0 if metric == "imf" else -1.0)
        self.evaluator = Evaluator(project)
        impact = tuple(c for c in project.cases if c.kind == "impact")
        self.impact_cases = impact
        self.impact_evaluator = (
            Evaluator(dataclasses.replace(project, cases=impact)) if impact else None
        )
        # duty cases set no objective; only those with a limit, or counted by the gear-life
        # requirement (its per-joint life and gear peak use read their cycles), take part
        life = project.requirements.life_min > 0
        counted = {name for name, _share in life_shares(project)} if life else set()
        self.duty = tuple(
            c for c in project.cases if c.kind == "duty" and (c.limits or c.name in counted)
        )
        # stance cases (a cone program per design) are checked lazily like duty cycles; their
        # payload joins the objective only there, so the screen's objective is an upper bound;
        # like duty cases, only those with a limit or in the objective take part in the search
        names = objective_names(project, self.objective_kind)
        self.stance = tuple(
            c for c in project.cases if c.kind == "stance" and (c.limits or c.name in names)
        )
        self.static_project = dataclasses.replace(
            project, cases=tuple(c for c in project.cases if c.kind not in ("duty", "stance"))
        )
        self.static_evaluator = Evaluator(self.static_project)
        self.payload = tuple(
            payload_terms(self, pc) for pc in self.evaluator.cases if pc.case.kind == "payload"
        )
        # the payload objective is the payload mass every case carries: each case's force bound
        # goes through its own increasing transform (problem.carried_payload) before the min
        by_name = {c.name: c for c in project.cases}
        self.carry = tuple(
            objective_transform(project, self.objective_kind, by_name[t.name], names)
            for t in self.payload
        )
        # the stance cases whose carried payload (kg) is part of the payload objective: the
        # stance bounds (solve/stance_bound.py, stance_milp.py) bound those alone; a stance case
        # left out by ``[objective] cases``, or under the margin objective, is only checked
        self.stance_objective = tuple(
            c for c in self.stance if self.objective_kind == "payload" and c.name in names
        )
        # the stance cases the programs hold: those of the objective, and under the payload
        # objective those with a payload minimum (a row s_c ≥ minimum: a requirement every
        # feasible design meets, so the programs still bound every feasible completion)
        self.stance_bounded = tuple(
            c
            for c in self.stance
            if c in self.stance_objective
            or (self.objective_kind == "payload" and c.limits.get("payload_min", 0.0) > 0)
        )
        self.candidates = [np.asarray(c, dtype=np.int64) for c in candidates]
        self.reflected = table.reflected_backdriven
        self.mass = table.rows["mass"]
        self.cost = table.rows["cost"]
        self.breakaway = table.rows["breakaway_torque"]
        if project.requirements.efficiency_band:  # the robust back-drive force's own breakaway
            self.breakaway = self._band(np.arange(len(table)), "low").breakaway_torque[:, 0]
        self.backdrive = tuple(
            (np.abs(pc.Jj.T @ (pc.u / np.linalg.norm(pc.u))), pc.case.limits["backdrive_force_max"])
            for pc in self.evaluator.cases
            if pc.case.kind == "backdrive" and "backdrive_force_max" in pc.case.limits
        )
        self.effective_mass_limits = tuple(
            (c.name, c.limits["effective_mass_max"])
            for c in impact
            if "effective_mass_max" in c.limits
        )
        from .duty_bound import DutyBound
        from .stroke_bound import StrokeBound

        #: the acceleration the speed cases' strokes and minimums need (item 11), or None
        self.stroke_bound = StrokeBound.of(self)

        self.duty_bound = DutyBound(self.evaluator, table)
        #: torque cases: (joint, options that carry its torque with the case's factor) per named
        #: joint; a per-joint requirement, so a unit's option that misses it fails every completion
        self.torque_ok = torque_terms(self, project)
        req = project.requirements
        self.total_mass_max = req.total_mass_max
        self.total_cost_max = req.total_cost_max

    def _band(self, options: np.ndarray, backward: str):
        """DesignArrays of single options (O, 1) at the low forward end and ``backward``."""
        return self.table.arrays(np.asarray(options)[:, None]).at_band("low", backward)

    def score(self, index: np.ndarray, *, full: bool = True) -> Scored:
        """Objective, feasibility, mass and reflected-inertia sum of complete designs (physics
        oracle). ``full=False`` leaves the duty cases out of the feasibility (a cheaper screen)."""
        index = np.atleast_2d(np.asarray(index, dtype=np.int64))
        return self.score_arrays(self.table.arrays(index), index, full=full)

    def score_arrays(
        self, arrays, index: np.ndarray, *, full: bool = True, evaluation=None
    ) -> Scored:
        """:meth:`score` for designs given as DesignArrays (``index`` only labels them);
        ``evaluation``: the matching evaluator output when the caller has it already."""
        full = full and bool(self.duty or self.stance)
        project = self.project if full else self.static_project
        ev = (
            evaluation
            if evaluation is not None
            else (self.evaluator if full else self.static_evaluator).evaluate(arrays, detail=False)
        )
        ok = feasible(checks(project, arrays, ev), index.shape[0])
        for group in self.shared:
            ok &= np.all(index[:, list(group)] == index[:, [group[0]]], axis=1)
        if self.measure is not None:
            metric, case, sign = self.measure
            f = sign * np.asarray(ev[case][metric], dtype=float)
        elif self.objective_kind == "payload" and not any(
            c.kind in ("payload", "stance") for c in project.cases
        ):
            f = np.full(index.shape[0], np.inf)  # screen without stance cases: no payload bound yet
        else:
            f = np.asarray(objective(project, arrays, ev, self.objective_kind), dtype=float)
        f = np.where(np.isnan(f), -np.inf, f)
        refl = arrays.reflected_inertia("backdriven").sum(axis=1)
        return Scored(index, f, ok, arrays.mass.sum(axis=1), refl)

    def best_key(self, index: np.ndarray) -> tuple | None:
        """Key of the best design among ``index`` (D, n) that meets every requirement, or None.

        Static cases screen all rows at once; duty cases, the costly ones, are checked only for
        the leading rows until the best fully feasible one is known.
        """
        return self.best_key_until(index, None)[0]

    def best_key_until(self, index: np.ndarray, deadline) -> tuple[tuple | None, float]:
        """:meth:`best_key`, stopping the costly checks at ``deadline`` (``time.perf_counter()``
        value). Returns (key of the best fully checked feasible row or None, an upper bound on the
        objective of the rows left unchecked, −inf when none is left)."""
        import time

        costly = bool(self.duty or self.stance)
        s = self.score(index, full=not costly)
        if not costly:
            row = self.best(s)
            return (None if row is None else self.key(s, row)), -math.inf
        known = np.zeros(s.index.shape[0], dtype=bool)
        ok, f = s.feasible.copy(), s.objective.copy()
        order = np.lexsort(tuple(s.index.T[::-1]) + (s.reflected, s.mass, -s.objective))
        while True:
            current = dataclasses.replace(s, feasible=ok, objective=f)
            row = self.best(current)
            if row is None:
                return None, -math.inf
            if known[row]:
                return self.key(current, row), -math.inf
            if deadline is not None and time.perf_counter() > deadline:
                done = ok & known
                left = ok & ~known
                best = None
                if done.any():
                    r = self.best(dataclasses.replace(s, feasible=done, objective=f))
                    best = None if r is None else self.key(current, r)
                return best, float(f[left].max())
            todo = [row] + [r for r in order if ok[r] and not known[r] and r != row][
                : DUTY_CHUNK - 1
            ]
            verdict = self.score(s.index[todo])
            known[todo] = True
            ok[todo] = verdict.feasible
            # the screen's objective bounds the full one from above (stance cases can only lower
            # the worst payload), so a row that stays best once known is the true best
            f[todo] = verdict.objective

    def best(self, s: Scored) -> int | None:
        """Row of the best feasible design: highest objective (ties within TIE_TOLERANCE), then
        least mass, then lowest back-driven reflected-inertia sum, then option order."""
        rows = np.flatnonzero(s.feasible)
        if rows.size == 0:
            return None
        f = s.objective[rows]
        top = f.max()
        rows = rows[f >= top - tie_tol(top)]
        m = s.mass[rows]
        rows = rows[m <= m.min() + tie_tol(m.min())]
        r = s.reflected[rows]
        rmin = r.min()
        rows = rows[r <= rmin + (tie_tol(rmin) if math.isfinite(rmin) else 0.0)]
        order = np.lexsort(s.index[rows].T[::-1])
        return int(rows[order[0]])

    @staticmethod
    def better(a: tuple, b: tuple | None) -> bool:
        """Whether key a = (objective, mass, reflected, index tuple) beats key b."""
        if b is None:
            return True
        for k in range(3):
            x, y = a[k], b[k]
            sign = 1 if k == 0 else -1
            tol = tie_tol(y) if math.isfinite(y) else 0.0
            if sign * (x - y) > tol:
                return True
            if sign * (x - y) < -tol:
                return False
        return tuple(a[3]) < tuple(b[3])

    def key(self, s: Scored, row: int) -> tuple:
        return (
            float(s.objective[row]),
            float(s.mass[row]),
            float(s.reflected[row]),
            tuple(int(v) for v in s.index[row]),
        )

    # --- bounds over partial designs (solve/node_bounds.py) ------------------------------------
    def stats(self, candidates) -> dict:
        """Per joint, extremes over its candidate options (:func:`.node_bounds.stats`). The
        last answer is kept for the same model object and the same candidate arrays (the
        heuristics and the search both start from the root's: over 500,000 options per joint
        each call costs about a second)."""
        last = getattr(self, "_stats_last", None)
        if (
            last is not None
            and last[0] == id(self)
            and len(last[1]) == len(candidates)
            and all(a is b for a, b in zip(last[1], candidates, strict=True))
        ):
            return dict(last[2])
        out = node_bounds.stats(self, candidates)
        self._stats_last = (id(self), tuple(candidates), out)
        return dict(out)

    def own_bounds(self, j: int, cands: np.ndarray, st: dict):
        """Joint j's own payload bounds, running least masses (:func:`.node_bounds.own_bounds`)."""
        return node_bounds.own_bounds(self, j, cands, st)

    def own_order(self, j: int, cands: np.ndarray, st: dict):
        """Joint j's options by their own payload bound (:func:`.node_bounds.own_order`)."""
        return node_bounds.own_order(self, j, cands, st)

    def useful_mmin(self, st: dict, floor: float | None) -> np.ndarray:
        """Least mass per joint that can reach ``floor`` (:func:`.node_bounds.useful_mmin`)."""
        return node_bounds.useful_mmin(self, st, floor)

    def child_bounds(
        self,
        idx: np.ndarray,
        unit: Sequence[int],
        options: np.ndarray,
        st: dict,
        floor: float | None = None,
        levels: bool = True,
    ) -> dict:
        """Bounds for giving ``unit`` each of ``options`` (:func:`.node_bounds.child_bounds`)."""
        return node_bounds.child_bounds(self, idx, unit, options, st, floor, levels)

    def case_value(self, c: int, bound: np.ndarray) -> np.ndarray:
        """The objective's value of payload case ``c`` given an upper bound on its payload (N):
        the identity for the payload objective. Any monotone nondecreasing per-case transform
        may replace it; every bound here applies it to each case's bound before the minimum
        over cases, which keeps the bounds valid. Here: the payload mass the case carries at
        that force (:func:`jointwright.problem.carried_payload`), increasing in the force."""
        return self.carry[c](bound)

    def costly_ok(
        self,
        idx: np.ndarray,
        unit: tuple,
        options: np.ndarray,
        st: dict,
        bounds: dict | None = None,
        floor: float | None = None,
        deadline: float | None = None,
    ) -> np.ndarray:
        """The bounds that cost an oracle call or a trajectory: effective mass, IMF, the speed
        cases' acceleration (item 11), then duty.
        For an effective-mass objective the objective bound in ``bounds`` is set here; ``floor``:
        the objective an improving design must reach (the IMF bound refines up to it);
        ``deadline`` (``time.perf_counter()``): the effective-mass and duty bounds of a large
        node stop there, leaving the rest of its options uncut (safe)."""
        ok = impact_bound.effective_mass_ok(self, idx, unit, options, st, bounds, deadline)
        if ok.any() and impact_bound.imf_limits_or_objective(self):
            rows = np.flatnonzero(ok)
            sub = None if bounds is None else {"objective": bounds["objective"][rows]}
            ok[rows] = impact_bound.impact_ok(self, idx, unit, options[rows], st, sub, floor)
            if sub is not None and bounds is not None:
                bounds["objective"][rows] = sub["objective"]
                bounds["objective"][~ok] = np.minimum(bounds["objective"][~ok], -np.inf)
        if self.stroke_bound is not None and ok.any():
            rows = np.flatnonzero(ok)
            ok[rows] = self.stroke_bound.ok(idx, unit, options[rows], st)
        if self.duty_bound and ok.any():
            rows = np.flatnonzero(ok)
            ok[rows] = self.duty_bound.ok(idx, unit, options[rows], st, self.mass, deadline)
        return ok

    def budget_cap(self, st: dict, **kwargs) -> float:
        """A bound on the payload objective of every design (:func:`budget_bound.budget_cap`)."""
        return budget_bound.budget_cap(self, st, **kwargs)

    def impact_bounds(self, idx, unit, options, st) -> dict:
        """Upper bounds on the IMF of every impact case (:func:`impact_bound.impact_bounds`)."""
        return impact_bound.impact_bounds(self, idx, unit, options, st)

    def imf_limits_or_objective(self) -> bool:
        """Whether the IMF bounds apply (:func:`impact_bound.imf_limits_or_objective`)."""
        return impact_bound.imf_limits_or_objective(self)
