"""The front found so far by the bi-objective branch and bound (:mod:`.biobjective`): its
points, the incumbent that starts it, and the dominance tests that drop a box (docs/frontier.md,
"Method: bi-objective branch and bound", step 1). A mixin of
:class:`.biobjective.BiObjectiveSearch`, whose ``model``, ``sign``, ``case``, ``metric``,
``cap`` and ``units`` it reads.
"""

from __future__ import annotations

import math

import numpy as np

from .model import SizingModel, tie_tol
from .pareto import measure_values

#: kinds of queue entries: the children of a partial design not yet taken (one entry, keyed by
#: the best of them), a complete design that passed the static cases, a complete design fully
#: checked (the incumbent's entry is one)
NODE, SCREENED, FINAL = 0, 1, 2


class FrontArchive:
    """The front (payload ascending ``fp``, internal measure ``fm``, designs ``fi``, masses
    ``fmass``, reflected inertias ``frefl``) and the incumbent ``inc`` / ``inc_entry``."""

    model: SizingModel
    sign: float
    case: str | None
    metric: str
    cap: float
    units: list[tuple]
    fp: np.ndarray
    fm: np.ndarray
    fi: np.ndarray
    fmass: np.ndarray
    frefl: np.ndarray
    #: a feasible design's (payload, measure) that prunes what it beats strictly, and its entry
    inc: tuple[float, float] | None
    inc_entry: tuple | None

    def _point(self, index: np.ndarray):
        """(payload, internal measure, mass, inertia) of a fully checked feasible design, or
        None."""
        model = self.model
        index = np.asarray(index, dtype=np.int64)[None, :]
        full = model.score(index, full=True)
        if not full.feasible[0]:
            return None
        arrays = model.table.arrays(index)
        ev = model.static_evaluator.evaluate(arrays, detail=False)
        m = self.sign * float(measure_values(arrays, ev, self.case, self.metric)[0])
        p = float(full.objective[0])
        if not (math.isfinite(p) and math.isfinite(m)):
            return None
        return p, m, float(full.mass[0]), float(full.reflected[0])

    def seed(self, index: np.ndarray) -> bool:
        """Start from a proven front point: ``index`` has the largest payload of all designs
        and the best measure among those of that payload (two single-objective searches, the
        sweep's first step). No design has more payload, so the cap falls to it, and every box
        whose measure bound is no better is dominated from the start."""
        point = self._point(index)
        if point is None:
            return False
        p, m, mass, refl = point
        self.cap = min(self.cap, p + tie_tol(p))
        self._add(p, m, np.asarray(index, dtype=np.int64).copy(), mass, refl)
        return True

    def incumbent(self, index: np.ndarray) -> bool:
        """Start from a feasible design of largest payload (the single-objective search's, the
        sweep's first step). Its point (P, μ) prunes every box that it beats strictly in
        measure with payload bound ≤ P: every design inside has payload ≤ P and a worse
        measure, so none is on the front. Boxes equal to it in measure stay, so the point at
        payload P with the best measure is still found; the design itself waits in the queue
        as a fully checked entry and joins the front when it reaches the head, unless a design
        of the same payload and a better measure came first. Of two incumbents the one of
        larger payload, then better measure, stays. Returns whether it was taken."""
        point = self._point(index)
        if point is None:
            return False
        p, m, mass, refl = point
        if self.inc is not None and (self.inc[0], self.inc[1]) >= (p, m):
            return False
        self.inc = (p, m)
        idx = np.asarray(index, dtype=np.int64).copy()
        self.inc_entry = (-p, -m, mass, refl, -1, FINAL, idx, len(self.units))
        return True

    def _add(self, p: float, m: float, idx: np.ndarray, mass: float, refl: float) -> None:
        """A fully checked design joins the front: every design of larger payload is known, so
        it is final. Payloads within the tie tolerance of the last point are one point (the
        better measure stays, as in :func:`.pareto._front`)."""
        if self.fp.size and abs(self.fp[0] - p) <= tie_tol(self.fp[0]):
            self.fp, self.fm, self.fi = self.fp[1:], self.fm[1:], self.fi[1:]
            self.fmass, self.frefl = self.fmass[1:], self.frefl[1:]
        self.fp = np.concatenate([[p], self.fp])
        self.fm = np.concatenate([[m], self.fm])
        self.fi = np.concatenate([idx[None, :], self.fi])
        self.fmass = np.concatenate([[mass], self.fmass])
        self.frefl = np.concatenate([[refl], self.frefl])

    def dominated(self, p: np.ndarray, m: np.ndarray) -> np.ndarray:
        """Whether a front point weakly dominates each box corner (p, m), within the tie
        tolerance on payload (payloads that close count as one point, docs/frontier.md)."""
        out = np.zeros(p.shape, dtype=bool)
        if self.inc is not None:  # beaten strictly in measure by a known feasible design
            ip, im = self.inc
            out = (p <= ip + tie_tol(ip)) & (m < im - _mtol(im))
        if self.fp.size == 0:
            return out
        tol = np.where(np.isfinite(p), 1e-9 * np.maximum(1.0, np.abs(p)), 0.0)
        # front sorted by payload ascending has its measure descending: the first front point
        # with payload ≥ p − tol has the best measure among all those with payload ≥ p − tol
        k = np.searchsorted(self.fp, p - tol, side="left")
        inside = k < self.fp.size
        best = np.where(inside, self.fm[np.minimum(k, self.fp.size - 1)], -np.inf)
        return out | (inside & (best >= m - _mtol_arr(m)))

    def payload_floor(self, m: np.ndarray) -> np.ndarray:
        """Per measure bound ``m``: a payload at or below which a box (p, m) is dominated
        (:meth:`dominated`; −inf when no payload is). The front point of largest payload whose
        measure is at least as good as m, or the incumbent when it beats m strictly; the payload
        tolerance of :meth:`dominated` is left out, so a box at the floor may still be
        dominated, never the other way round."""
        m = np.asarray(m, dtype=float)
        out = np.full(m.shape, -np.inf)
        if self.inc is not None:
            ip, im = self.inc
            out = np.where(m < im - _mtol(im), ip, out)
        if self.fp.size:
            # measures descend along the front: the first k points are those at least as good
            k = np.searchsorted(-self.fm, -(m - _mtol_arr(m)), side="right")
            out = np.maximum(out, np.where(k > 0, self.fp[np.maximum(k - 1, 0)], -np.inf))
        return out

    def dominated1(self, p: float, m: float) -> bool:
        """:meth:`dominated` for one box."""
        if self.inc is not None:
            ip, im = self.inc
            if p <= ip + tie_tol(ip) and m < im - _mtol(im):
                return True
        if self.fp.size == 0:
            return False
        tol = tie_tol(p)
        k = int(np.searchsorted(self.fp, p - tol, side="left"))
        return k < self.fp.size and float(self.fm[k]) >= m - _mtol(m)


def _mtol(m: float) -> float:
    return 1e-12 * max(1.0, abs(m)) if math.isfinite(m) else 0.0


def _mtol_arr(m: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(m), 1e-12 * np.maximum(1.0, np.abs(m)), 0.0)
