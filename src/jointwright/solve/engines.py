"""The engines behind ``size``'s default back-end, in order: the MILP hand-over when the
instance suits it (solve/handover.py), the primal heuristics for a first design
(solve/heuristic.py), then the exact branch and bound (solve/search.py) from the best design so
far; or the Pyomo back-end, or enumeration. Time shares: docs/optimizer.md, "The time limit".
"""

from __future__ import annotations

import math
import time

import numpy as np

from .model import SizingModel
from .result import SolveOutcome, relative_gap

#: share of the search's time given to the primal heuristics, and its cap in seconds
HEURISTIC_SHARE, HEURISTIC_SECONDS = 0.25, 10.0


#: share of the wall-clock limit the heuristics may stretch to when the process gets less than
#: a core (their CPU budget is then reached later; the search keeps the rest)
HEURISTIC_WALL_SHARE = 0.5
#: the same two shares (CPU seconds of the limit, wall) when stance cases alone set the objective
BLIND_CPU_SHARE, BLIND_WALL_SHARE = 0.6, 0.8


def first_design(model: SizingModel, units, time_limit, phase=None):
    """A feasible design from the primal heuristics (solve/heuristic.py), as a search key, or
    None; it takes a quarter of ``time_limit`` in CPU seconds of the process (at most 10 s,
    10 s without a limit), within half of ``time_limit`` in wall time; 60 % of the limit in CPU
    seconds within 80 % in wall time when stance cases alone set the objective."""
    from .heuristic import Heuristic, blind_screen

    (phase or (lambda text: None))("first designs")
    share = (
        HEURISTIC_SECONDS
        if time_limit is None
        else min(HEURISTIC_SHARE * time_limit, HEURISTIC_SECONDS)
    )
    wall = share if time_limit is None else max(share, HEURISTIC_WALL_SHARE * time_limit)
    if blind_screen(model) and time_limit is not None:
        # stance cases alone set the objective: the search's bounds (item 9) are loose at shallow
        # depth and each node costs linear programs, so the heuristics, which screen designs by
        # those programs and local search, get most of the run
        share, wall = BLIND_CPU_SHARE * time_limit, BLIND_WALL_SHARE * time_limit
    return Heuristic(
        model, units, time.perf_counter() + wall, extend=time_limit is not None, cpu=share
    ).run()


def run_backend(
    model: SizingModel, units, backend: str, time_limit, progress, phase=None
) -> SolveOutcome:
    if backend == "search":
        from .handover import milp_suits
        from .search import BranchAndBound

        milp, incumbent = None, None
        t0 = time.perf_counter()
        first = first_design(model, units, time_limit, phase)
        if first is not None:
            incumbent = first
        if time_limit is not None:
            time_limit = max(time_limit - (time.perf_counter() - t0), 1e-3)
        if milp_suits(model):
            milp, incumbent = _milp_first(model, units, time_limit, incumbent, phase)
            if milp.status == "optimal":
                return milp
            if time_limit is not None:
                time_limit = max(time_limit - milp.seconds, 1e-3)
        (phase or (lambda text: None))("searching")
        out = BranchAndBound(
            model, units, time_limit=time_limit, progress=progress, incumbent=incumbent
        ).run()
        return out if milp is None else _with_milp_bound(out, milp)
    if backend == "pyomo":
        from .pyomo_backend import solve_pyomo

        return solve_pyomo(model, units, time_limit=time_limit)
    from .enumerate import enumerate_all

    return enumerate_all(model)


def _milp_first(model: SizingModel, units, time_limit, incumbent, phase):
    """The MILP hand-over (solve/handover.py): HiGHS on the matrix-form MILP
    (solve/milp_matrix.py) for its share of the time, started from the heuristics' design; its
    design (scored by the physics like any) becomes the search's incumbent when it is better. An
    answer within the MILP's gap counts as proven (status ``optimal``)."""
    from .handover import MILP_GAP, milp_time
    from .milp_matrix import solve_matrix_milp

    (phase or (lambda text: None))("searching (MILP)")
    start = None if incumbent is None else np.asarray(incumbent[3])
    out = solve_matrix_milp(model, time_limit=milp_time(time_limit), start=start)
    if out.index is not None:
        key = model.best_key(np.asarray(out.index)[None, :])
        if key is not None and model.better(key, incumbent):
            incumbent = key
    if (
        incumbent is not None
        and math.isfinite(out.bound)
        and relative_gap(incumbent[0], out.bound) <= MILP_GAP
    ):
        out = SolveOutcome(
            "optimal",
            np.asarray(incumbent[3]),
            incumbent[0],
            max(out.bound, incumbent[0]),
            out.seconds,
            f"HiGHS hand-over: {out.native}",
            out.nodes,
        )
    return out, incumbent


def _with_milp_bound(out: SolveOutcome, milp: SolveOutcome) -> SolveOutcome:
    """The search's outcome with the MILP's bound when that is lower (both hold for every design
    with a positive payload, and the MILP's only when it is ≥ 0: a design that cannot hold
    itself has a payload objective ≤ 0)."""
    native = f"{out.native}; after the HiGHS hand-over: {milp.native}"
    bound = out.bound
    if out.status == "time_limit" and math.isfinite(milp.bound) and milp.bound >= 0:
        bound = max(min(out.bound, milp.bound), out.objective)
    return SolveOutcome(out.status, out.index, out.objective, bound, out.seconds, native, out.nodes)
