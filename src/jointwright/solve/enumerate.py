"""Exhaustive enumeration: the oracle the search and the Pyomo back-end are tested against.

Every combination of the given per-joint option lists is scored by the physics oracle in
batches; the best feasible design under the documented tie-break wins. No bound, no filter:
only for small instances.
"""

from __future__ import annotations

import math
import time

import numpy as np

from .model import SizingModel
from .result import SolveOutcome

#: designs per oracle call
BATCH = 20_000
#: refuse instances larger than this
MAX_DESIGNS = 5_000_000


def combinations(options: list[np.ndarray], start: int, stop: int) -> np.ndarray:
    """Rows ``start:stop`` of the Cartesian product of ``options`` (last joint fastest)."""
    sizes = [o.size for o in options]
    flat = np.arange(start, stop)
    cols = np.unravel_index(flat, sizes)
    return np.stack([o[c] for o, c in zip(options, cols, strict=True)], axis=1)


def enumerate_all(
    model: SizingModel, options: list[np.ndarray] | None = None, *, limit: int = MAX_DESIGNS
) -> SolveOutcome:
    """Best design over every combination of ``options`` (default: the model's candidates);
    refuses more than ``limit`` designs."""
    start_time = time.perf_counter()
    options = [np.asarray(o, dtype=np.int64) for o in (options or model.candidates)]
    total = math.prod(o.size for o in options)
    if total > limit:
        raise ValueError(f"{total} designs is too many to enumerate (limit {limit})")
    best = None
    for start in range(0, total, BATCH):
        key = model.best_key(combinations(options, start, min(total, start + BATCH)))
        if key is not None:
            if model.better(key, best):
                best = key
    seconds = time.perf_counter() - start_time
    if best is None:
        return SolveOutcome(
            "infeasible",
            None,
            -math.inf,
            -math.inf,
            seconds,
            f"{total} designs, none feasible",
            total,
        )
    return SolveOutcome(
        "optimal",
        np.array(best[3]),
        best[0],
        best[0],
        seconds,
        f"{total} designs enumerated",
        total,
    )
