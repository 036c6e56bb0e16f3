"""Continuous refinement of ratios from stage types that offer a range instead of a list.

The exact search works on the R20 preferred-number grid inside each range (options.py). After it,
each such stage of the winning design is moved within its range, one stage at a time with the rest
fixed, over a fine uniform grid between the neighbouring R20 values; a move is kept only when the
physics oracle scores the changed design better (objective, then mass, then reflected inertia)
and it meets every requirement. The result is at least as good as the grid optimum; it is a local
refinement, not a proof of optimality over the continuum.
"""

from __future__ import annotations

import time

import numpy as np

from ..design import Design, arrays_from_designs
from ..drivetrain import Actuator, StageChoice
from ..options import preferred_ratios

#: samples per refined stage and pass
SAMPLES = 41
PASSES = 2


def _neighbours(stage, ratio: float) -> tuple[float, float]:
    lo, hi = stage.ratio_range
    grid = (lo,) + preferred_ratios(lo, hi) + (hi,)
    below = max([g for g in grid if g < ratio * (1 - 1e-12)], default=lo)
    above = min([g for g in grid if g > ratio * (1 + 1e-12)], default=hi)
    return below, above


def refine(model, design: Design, pinned=(), deadline=None) -> Design:
    """The design with every range-ratio stage refined (joints in ``pinned`` are left alone).
    ``deadline`` (a ``time.perf_counter()`` value): stop refining there, keeping the moves made."""

    def key(d_list):
        s = model.score_arrays(
            arrays_from_designs(d_list), np.zeros((len(d_list), model.n), dtype=np.int64)
        )
        return s

    current = design
    base = key([current])
    if not base.feasible[0]:
        return design
    best = (float(base.objective[0]), float(base.mass[0]), float(base.reflected[0]), ())
    for _ in range(PASSES):
        moved = False
        for j, name in enumerate(current.joints):
            if name in pinned:
                continue
            act = current.actuators[j]
            for k, st in enumerate(act.stages):
                if st.stage.ratio_range is None:
                    continue
                if deadline is not None and time.perf_counter() > deadline:
                    return current
                lo, hi = _neighbours(st.stage, st.ratio)
                trials = []
                for r in np.linspace(lo, hi, SAMPLES):
                    stages = list(act.stages)
                    stages[k] = StageChoice(st.stage, st.frame, float(r))
                    acts = list(current.actuators)
                    acts[j] = Actuator(act.motor, tuple(stages), act.drive)
                    trials.append(Design(current.name, current.joints, tuple(acts)))
                s = key(trials)
                for i in np.flatnonzero(s.feasible):
                    cand = (float(s.objective[i]), float(s.mass[i]), float(s.reflected[i]), ())
                    if model.better(cand, best) and cand[:3] != best[:3]:
                        best, current, moved = cand, trials[i], True
                act = current.actuators[j]
        if not moved:
            break
    return current
