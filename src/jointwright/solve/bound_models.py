"""The models the bi-objective branch and bound bounds with (:mod:`.biobjective`): the payload
model with the frontier's measure as its objective, and the single-objective search's further
payload bounds (per-component budget levels, the stance linear program) built once and shared.
"""

from __future__ import annotations

import copy
import math
import time

from .model import SizingModel

#: the robot-level measures: sums of per-joint values, bounded exactly by the per-joint minima
SEPARABLE = ("mass", "cost")


def measure_model(model: SizingModel, case: str | None, metric: str) -> SizingModel:
    """The payload model with its measure set to ``metric`` at ``case`` (for the measure bounds
    of :meth:`SizingModel.child_bounds` and :meth:`SizingModel.costly_ok`); shares every array.
    The robot-level measures (total mass, cost; ``case`` None) are the model's own objectives
    "mass" and "cost", whose bound is the exact sum of the per-joint least values."""
    m = copy.copy(model)
    if metric in SEPARABLE:
        m.kind, m.measure = metric, None
    else:
        m.kind = f"{metric}@{case}"
        m.measure = (metric, case, 1.0 if metric == "imf" else -1.0)
    # the duty-cycle bound costs a trajectory pass per node and only removes designs that the
    # costly check at the leaves rejects anyway: left out of the inner nodes (fewer cuts only)
    m.duty_bound = None
    return m


def shared_payload_bounds(model: SizingModel, cap: float, deadline: float):
    """The single-objective search's further payload bounds, shared: the per-component budget
    levels (``solve/component_bound.py``) and the stance-case linear program
    (``solve/stance_bound.py``), built as :class:`.search.BranchAndBound` builds them.
    Returns (levels or None, stance or None)."""
    from .component_bound import ComponentLevels, level_grid
    from .stance_bound import StanceBound

    levels = stance = None
    if model.payload and math.isfinite(cap):
        end = min(deadline, time.perf_counter() + 2.0)
        levels = ComponentLevels(model, model.candidates, level_grid(0.0, cap, None), end)
    if model.stance_bounded:
        stance = StanceBound(model)
    return levels, stance
