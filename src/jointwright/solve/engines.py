"""The engines behind ``size``'s default back-end, in order: the primal heuristics for a first
design (solve/heuristic.py); the MILP hand-over when the instance suits it (solve/handover.py),
or the stance MILP when stance cases set the payload objective (solve/stance_milp.py); then the
exact branch and bound (solve/search.py) from the best design so far; or the Pyomo back-end, or
enumeration. Time shares: docs/optimizer.md, "The time limit".
"""

from __future__ import annotations

import copy
import math
import time

import numpy as np

from .model import SizingModel, tie_tol
from .result import SolveOutcome, relative_gap

#: share of the search's time given to the primal heuristics, and its cap in seconds
HEURISTIC_SHARE, HEURISTIC_SECONDS = 0.25, 10.0


#: share of the wall-clock limit the heuristics may stretch to when the process gets less than
#: a core (their CPU budget is then reached later; the search keeps the rest)
HEURISTIC_WALL_SHARE = 0.5


def first_design(model: SizingModel, units, time_limit, phase=None):
    """A feasible design from the primal heuristics (solve/heuristic.py), as a search key, or
    None; it takes a quarter of ``time_limit`` in CPU seconds of the process (at most 10 s,
    10 s without a limit), within half of ``time_limit`` in wall time."""
    from .heuristic import Heuristic

    (phase or (lambda text: None))("first designs")
    share = (
        HEURISTIC_SECONDS
        if time_limit is None
        else min(HEURISTIC_SHARE * time_limit, HEURISTIC_SECONDS)
    )
    wall = share if time_limit is None else max(share, HEURISTIC_WALL_SHARE * time_limit)
    return Heuristic(
        model, units, time.perf_counter() + wall, extend=time_limit is not None, cpu=share
    ).run()


def run_backend(
    model: SizingModel, units, backend: str, time_limit, progress, phase=None, gap=0.0
) -> SolveOutcome:
    """The back-end's outcome; ``gap``: the relative optimality gap of the default and Pyomo
    back-ends (:data:`.result.OPTIMALITY_GAP` in ``size``; 0: the exact optimum and, in the
    default back-end, its tie-break)."""
    if backend == "search":
        from .handover import milp_models
        from .search import BranchAndBound
        from .stance_milp import stance_milp_models

        t0 = time.perf_counter()
        incumbent = first_design(model, units, time_limit, phase)
        if time_limit is not None:
            time_limit = max(time_limit - (time.perf_counter() - t0), 1e-3)
        (phase or (lambda text: None))("searching")
        search = BranchAndBound(
            model, units, time_limit=time_limit, progress=progress, incumbent=incumbent, gap=gap
        )
        milp = None
        if milp_models(model):
            milp, incumbent = _milp_first(model, search, incumbent, phase, gap)
        elif stance_milp_models(model) and incumbent is not None:
            milp, incumbent = _stance_milp_first(model, search, incumbent, phase, gap)
        if milp is not None:
            if milp.status == "optimal":
                return milp
            if incumbent is not None and model.better(incumbent, search.best_key):
                search.best_key = incumbent
        out = search.run()
        return out if milp is None else _with_milp_bound(out, milp)
    if backend == "pyomo":
        from .pyomo_backend import solve_pyomo

        return solve_pyomo(model, units, time_limit=time_limit, gap=gap)
    from .enumerate import enumerate_all

    return enumerate_all(model)


def _milp_first(model: SizingModel, search, incumbent, phase, gap: float):
    """The MILP hand-over (solve/handover.py): the options that survive the search's root cuts
    with the heuristics' design (:meth:`.search.BranchAndBound.root_candidates`), when they fit
    the MILP, go to HiGHS in matrix form (solve/milp_matrix.py) for its share of the time, from
    that design. Its design (scored by the physics like any) becomes the incumbent when it is
    better. Every design that beats the incumbent less its tie tolerance takes only those
    options, so the optimum is at most the larger of that floor and the MILP's bound; an answer
    within ``gap`` of it counts as proven (status ``optimal``). None when the options left do not
    fit."""
    from .handover import milp_fits, milp_time
    from .milp_matrix import solve_matrix_milp

    t0 = time.perf_counter()
    reduced, floor = model, -math.inf
    if incumbent is not None:
        reduced = copy.copy(model)
        reduced.candidates = search.root_candidates()
        floor = incumbent[0] - tie_tol(incumbent[0])
    if not milp_fits(reduced.candidates):
        return None, incumbent
    left = None if math.isinf(search.deadline) else max(search.deadline - time.perf_counter(), 1e-3)
    (phase or (lambda text: None))("searching (MILP)")
    start = None if incumbent is None else np.asarray(incumbent[3])
    # the search's root bound (items 4b, 4c, 9) holds for every design: the payload's upper bound
    out = solve_matrix_milp(
        reduced, time_limit=milp_time(left), start=start, upper=search.cap, gap=gap
    )
    # every design: payload ≤ 0, or in the reduced MILP (≤ its bound), or below the floor
    bound = max(0.0 if out.status == "infeasible" else max(out.bound, 0.0), floor)
    bound = min(bound, search.cap)
    native = (f"HiGHS hand-over: {out.native}", f"the HiGHS hand-over: {out.native}")
    return _handed_back(model, incumbent, out.index, bound, gap, t0, native, out.nodes)


def _stance_milp_first(model: SizingModel, search, incumbent, phase, gap: float):
    """The stance MILP (solve/stance_milp.py) when stance cases set the payload objective:
    the search's root probing with the heuristics' design (:meth:`.search.BranchAndBound.probed`)
    leaves each unit a few options; when they fit, HiGHS maximizes the payload objective (the
    stance cases' and the static payload cases' least carried payload) over them for a share of
    the time left, from that design. Its design (scored by the physics like any) becomes the
    incumbent when it is better. Every design that beats the incumbent less its tie tolerance
    takes only the options left, so the optimum is at most the larger of that floor and the
    MILP's bound; an answer within ``gap`` of it counts as proven (status ``optimal``).
    (None, incumbent) when the options left do not fit."""
    from .handover import milp_time, models_every_limit
    from .stance_milp import fits, solve_stance_milp

    t0 = time.perf_counter()
    floor = incumbent[0] - tie_tol(incumbent[0])
    cands, _ = search.probed()
    if not all(c.size for c in cands):
        return None, incumbent
    bound = search.stance
    if any(a.size != b.size for a, b in zip(cands, bound.candidates, strict=True)):
        # the probing stopped at its deadline within a round: the program over what it left
        bound = bound.restricted(cands)
    if not fits(bound, search.units):
        return None, incumbent
    left = None if math.isinf(search.deadline) else max(search.deadline - time.perf_counter(), 1e-3)
    (phase or (lambda text: None))("searching (stance MILP)")
    out = solve_stance_milp(
        bound,
        search.units,
        milp_time(left, models_every_limit(model)),
        start=np.asarray(incumbent[3]),
        gap=gap / 2,
    )
    words = (
        f"HiGHS stance MILP over the {out.options:,} options left after probing "
        f"({_units_text(model, search.units)}), {_count(out.nodes, 'node')}"
        + (", stopped at its time share" if out.status == "time_limit" else "")
    )
    return _handed_back(
        model,
        incumbent,
        out.index,
        min(max(out.bound, floor), search.cap),
        gap,
        t0,
        (words, f"the {words}"),
        out.nodes,
    )


def _count(k: int, noun: str) -> str:
    return f"{k:,} {noun}{'s' * (k != 1)}"


def _units_text(model: SizingModel, units) -> str:
    """What the options are of: "12 joints", "3 shared groups", "3 shared groups and 2 joints"."""
    groups = sum(1 for u in units if len(u) > 1)
    lone = len(units) - groups
    parts = [_count(groups, "shared group")] if groups else []
    return " and ".join(parts + ([_count(lone, "joint")] if lone else []))


def _handed_back(model: SizingModel, incumbent, index, bound, gap, t0, native, nodes):
    """(outcome, incumbent) after a MILP: its design ``index`` (scored by the physics like any)
    becomes the incumbent when better; status ``optimal`` when the incumbent is within ``gap``
    of ``bound`` (with gap 0 the search still runs after it, for the exact tie-break by least
    mass), else ``time_limit``. ``native``: the words when proven, and otherwise."""
    if index is not None:
        key = model.best_key(np.asarray(index)[None, :])
        if key is not None and model.better(key, incumbent):
            incumbent = key
    seconds = time.perf_counter() - t0
    if incumbent is None:
        return SolveOutcome("time_limit", None, -math.inf, bound, seconds, native[1], 0), None
    proven = gap > 0 and math.isfinite(bound) and relative_gap(incumbent[0], bound) <= gap
    outcome = SolveOutcome(
        "optimal" if proven else "time_limit",
        np.asarray(incumbent[3]),
        incumbent[0],
        max(bound, incumbent[0]),
        seconds,
        native[0] if proven else native[1],
        nodes,
    )
    return outcome, incumbent


def _with_milp_bound(out: SolveOutcome, milp: SolveOutcome) -> SolveOutcome:
    """The search's outcome with the MILP's bound when that is lower (both hold for every design
    with a positive payload, and the MILP's only when it is ≥ 0: a design that cannot hold
    itself has a payload objective ≤ 0)."""
    native = f"{out.native}; after {milp.native}"
    bound = out.bound
    if out.status == "time_limit" and math.isfinite(milp.bound) and milp.bound >= 0:
        bound = max(min(out.bound, milp.bound), out.objective)
    return SolveOutcome(out.status, out.index, out.objective, bound, out.seconds, native, out.nodes)
