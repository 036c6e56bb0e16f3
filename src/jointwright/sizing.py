"""Size every actuator at once: the public entry point behind ``jointwright size``.

``size(project)`` builds every motor × stage-stack option, keeps per joint those that pass the
joint's own requirements, tightens the lists with bounds that hold for every completion, and
hands the discrete problem to a back-end (the project's exact branch and bound, Pyomo/HiGHS, or
enumeration). Whatever a back-end returns is re-evaluated by the numpy physics before it is
reported. The file fields read from the project's ``[objective]`` table are documented in
docs/optimizer.md.
"""

from __future__ import annotations

import dataclasses
import math
import time

import numpy as np

from .assessment import assess, unloaded_joints
from .design import Design, arrays_from_designs
from .errors import InputError
from .objective import check_gap, check_objective_kind, check_pins, check_shared, read_objective
from .option_rows import OutOfTime
from .options import JointCandidates, build_table, joint_candidates
from .problem import MINIMIZED, OBJECTIVES
from .solve.engines import run_backend
from .solve.model import SizingModel, unit_options
from .solve.result import OPTIMALITY_GAP, ROUNDING_GAP, SizingResult, SolveOutcome, relative_gap
from .units import format_number

BACKENDS = ("search", "pyomo", "enumerate")


def units_of(n: int, shared_idx) -> list[tuple]:
    """Decision units: each shared group together, every other joint alone."""
    grouped = {j for g in shared_idx for j in g}
    return [tuple(g) for g in shared_idx] + [(j,) for j in range(n) if j not in grouped]


def build_model(
    project, kind: str, pins: dict, exclude, shared, table=None, deadline=None, phase=None
) -> tuple[SizingModel, JointCandidates]:
    """Options, per-joint filters and root tightening (every cut holds for every completion).
    ``table``: an option table already built for this catalog and ``exclude`` (reused by re-solves).
    ``deadline`` (time.perf_counter() value): building the table raises :class:`OutOfTime` past it;
    tightening stops early (it only removes options, so stopping is safe). ``phase(text)`` is told
    each phase as it starts."""
    phase = phase or (lambda text: None)
    if any(c.kind == "stance" for c in project.cases):
        phase("loading the cone solver")  # its import: count it inside the limit
        import clarabel  # noqa: F401
    if table is None:
        phase("building options")
        # stack dominance keeps a pinned stage list only when no pin names one
        stages_pinned = any("stages" in pin for pin in pins.values())
        table = build_table(project, exclude, deadline=deadline, dominance=not stages_pinned)
    n = len(project.robot.actuated)
    joints = list(project.robot.actuated)
    shared_idx = [tuple(joints.index(j) for j in g) for g in shared]
    phase("filtering options")
    model = SizingModel(project, table, [np.arange(len(table))] * n, kind, shared_idx)
    cands = joint_candidates(project, table, model.evaluator, pins)
    model.candidates = list(cands.index)
    _check_deadline(deadline)
    phase("tightening")
    if deadline is not None:
        # a share of the time left: the cuts are optional, a first design is not
        now = time.perf_counter()
        deadline = now + TIGHTEN_SHARE * max(deadline - now, 0.0)
    tighten(model, units_of(n, shared_idx), deadline=deadline)
    return model, cands


def _check_deadline(deadline) -> None:
    if deadline is not None and time.perf_counter() > deadline:
        raise OutOfTime("the time limit ran out while the options were prepared")


#: share of the time left after the filters that the root tightening may take
TIGHTEN_SHARE = 0.5
#: options of a unit judged at once by the tightening (the clock is read between pieces)
TIGHTEN_CHUNK = 65_536


def tighten(model: SizingModel, units: list[tuple], rounds: int = 10, deadline=None) -> None:
    """Remove options that miss a requirement for every completion; repeat until nothing changes
    (or ``deadline`` passes, checked between pieces of :data:`TIGHTEN_CHUNK` options: every
    piece only removes options, so stopping early, with the rest kept, is safe)."""
    root = np.full(model.n, -1, dtype=np.int64)
    for _ in range(rounds):
        changed = False
        if deadline is not None and time.perf_counter() > deadline:
            return
        # statistics of the candidates at the start of the round: a superset of the current
        # ones, so every bound from them still holds for every completion
        st = model.stats(model.candidates)
        for unit in units:
            if deadline is not None and time.perf_counter() > deadline:
                return
            opts = unit_options(model.candidates, unit)
            if opts.size == 0:
                return
            ok = np.ones(opts.size, dtype=bool)
            for lo in range(0, opts.size, TIGHTEN_CHUNK):
                if deadline is not None and time.perf_counter() > deadline:
                    break  # the pieces not judged keep their options
                piece = opts[lo : lo + TIGHTEN_CHUNK]
                judged = model.child_bounds(root, unit, piece, st)["ok"]
                judged[judged] = model.costly_ok(root, unit, piece[judged], st)
                ok[lo : lo + piece.size] = judged
            keep = opts[ok]
            for j in unit:
                if keep.size != model.candidates[j].size:
                    changed = True
                model.candidates[j] = keep
        if not changed:
            return


def solve_value(project, kind: str, *, table=None, time_limit=None) -> SolveOutcome:
    """An exact search for the value only (no explanation, ties not searched): for re-solves."""
    from .solve.search import BranchAndBound

    cfg = read_objective(project)
    model, _ = build_model(project, kind, cfg["pin"], cfg["exclude"], cfg["shared"], table)
    return BranchAndBound(
        model, units_of(model.n, model.shared), time_limit=time_limit, ties=False
    ).run()


#: share of the time limit kept for the explanation (runner-ups, diagnosis) when it is asked for
EXPLAIN_SHARE = 0.2


class Plan:
    """How a time limit is shared: preparing and solving end at ``solve_end``; the explanation
    gets the rest of the limit, and never more than the time already spent (at least 1 s when
    there is no limit)."""

    def __init__(self, start: float, time_limit, explain: bool, gap: float = OPTIMALITY_GAP):
        self.start = start
        self.gap = gap  # the relative optimality gap asked for
        self.limit = time_limit
        self.end = math.inf if time_limit is None else start + time_limit
        self.solve_end = (
            self.end
            if (time_limit is None or not explain)
            else start + (1 - EXPLAIN_SHARE) * time_limit
        )

    def solve_left(self):
        return (
            None if math.isinf(self.solve_end) else max(self.solve_end - time.perf_counter(), 1e-3)
        )

    def explain_end(self) -> float:
        """Stop explaining here: within the limit (less 5 % kept for the last oracle call to
        finish) and after no more time than the run has spent so far."""
        now = time.perf_counter()
        return min(self.diagnosis_end(), now + max(now - self.start, 1.0))

    def diagnosis_end(self) -> float:
        """Stop diagnosing an infeasible project here: the rest of the limit (less 5 %), or
        no end of its own without one (the diagnosis caps itself). When nothing is feasible
        the diagnosis is the answer, so it may take longer than the search that proved it."""
        return self.end if self.limit is None else self.end - 0.05 * self.limit


def _phase_of(progress):
    fn = getattr(progress, "phase", None)
    return fn if callable(fn) else (lambda text: None)


def size(
    project,
    *,
    objective=None,
    backend="search",
    time_limit=None,
    pins=None,
    exclude=None,
    shared=None,
    progress=None,
    explain=True,
    gap=OPTIMALITY_GAP,
) -> SizingResult:
    """Choose motor, stage stack and ratio for every actuated joint.

    Parameters
    ----------
    project : Project
    objective : "payload" (maximize the payload mass every payload and stance case carries, kg,
        problem.payload_mass), "mass" (minimize
        total actuator mass, kg) or "imf" (maximize the worst IMF); None: the project's
        ``[objective] maximize``, else "payload".
    backend : "search" (exact branch and bound), "pyomo" (MILP with HiGHS and lazy cuts) or
        "enumerate" (every combination; small instances only)
    time_limit : float, s, optional. Bounds the whole run: option building, filtering,
        tightening, search and explanation. On expiry the best design so far with a proven bound.
    pins : dict joint -> {"motor": name, "stages": [{"stage", "frame", "ratio"}, ...]}
    exclude : list of motor, stage-type or frame names
    shared : list of joint-name lists that must get the same option
    progress : callable(nodes, best objective or None), optional; when it also has a ``phase``
        method, ``phase(text)`` is called as each phase starts
    explain : compute alternatives and, when infeasible, the per-requirement diagnosis
    gap : relative optimality gap, 0 ≤ gap < 1 (default 1e-4): the run ends once the proven
        bound is within ``gap``·|objective| of the best design, status ``optimal``; 0 proves
        the exact optimum (docs/optimizer.md, "Ties and the optimality gap"); the default
        back-end breaks ties by least mass at any gap except in a MILP hand-over's answer

    Returns
    -------
    SizingResult
    """
    start = time.perf_counter()
    cfg = read_objective(project)
    kind = objective or cfg["maximize"]
    if kind not in OBJECTIVES:
        raise InputError(
            "<api>", "objective", f"must be one of {', '.join(OBJECTIVES)}, got {kind!r}"
        )
    if backend not in BACKENDS:
        raise InputError(
            "<api>", "backend", f"must be one of {', '.join(BACKENDS)}, got {backend!r}"
        )
    if time_limit is not None and not (isinstance(time_limit, (int, float)) and time_limit > 0):
        raise InputError(
            "<api>", "time_limit", f"must be a positive number of seconds, got {time_limit!r}"
        )
    check_gap(gap, "<api>", "gap")
    pins = cfg["pin"] if pins is None else pins
    check_pins(pins, project, "<api>", "pins")
    exclude = cfg["exclude"] if exclude is None else list(exclude)
    shared = cfg["shared"] if shared is None else [list(g) for g in shared]
    check_shared(shared, list(project.robot.actuated), "<api>", "shared")
    check_objective_kind(project, kind)
    plan = Plan(start, time_limit, explain, float(gap))
    phase = _phase_of(progress)
    deadline = None if math.isinf(plan.solve_end) else plan.solve_end
    try:
        model, cands = build_model(
            project, kind, pins, exclude, shared, deadline=deadline, phase=phase
        )
    except OutOfTime as e:
        sense = -1.0 if kind in MINIMIZED else 1.0
        return SizingResult(
            "time_limit",
            kind,
            None,
            None,
            math.nan,
            sense * math.inf,
            math.inf,
            time.perf_counter() - start,
            backend,
            str(e),
            0,
            message="time limit reached before any design was searched",
        )
    units = units_of(model.n, model.shared)
    if backend != "search":
        phase("searching")
    outcome = run_backend(model, units, backend, plan.solve_left(), progress, phase, float(gap))
    return finish(project, model, cands, outcome, kind, backend, start, explain, plan, phase)


def design_of(project, model: SizingModel, index, name: str) -> Design:
    acts = tuple(model.table.actuators[int(i)] for i in index)
    return Design(name=name, joints=tuple(project.robot.actuated), actuators=acts)


def finish(
    project, model, cands, outcome: SolveOutcome, kind, backend, start, explain, plan, phase=None
):
    """Re-evaluate the back-end's design with the numpy physics and explain it (``plan``:
    a :class:`Plan`, or a time limit in seconds for callers outside :func:`size`)."""
    from .solve.explain import alternatives, binding, diagnose

    if not isinstance(plan, Plan):
        plan = Plan(start, plan, explain)
    phase = phase or (lambda text: None)
    sense = -1.0 if kind in MINIMIZED else 1.0
    # the options each joint keeps after its own filters (not after the coupled tightening,
    # which empties every joint once one is empty)
    own = model.candidates if cands is None else cands.index
    options = {j: int(np.size(c)) for j, c in zip(project.robot.actuated, own, strict=True)}
    empty = [j for j, k in options.items() if k == 0]
    if outcome.index is None and outcome.status == "infeasible" and empty:
        names = empty[0] if len(empty) == 1 else f"{', '.join(empty[:-1])} or {empty[-1]}"
        outcome = dataclasses.replace(
            outcome,
            native=f"no option of {names} meets the joint's own requirements (per-joint filters)",
        )
    if outcome.index is None and outcome.status == "infeasible":
        # where to read why: the diagnosis when this run computes it (the explanation), else
        # how to get it (--no-explain, a study's cases)
        outcome = dataclasses.replace(
            outcome,
            native=f"{outcome.native}; "
            + (
                "the diagnosis shows each requirement's part"
                if explain
                else "no diagnosis in this run: size the project with the explanation on for it"
            ),
        )
    if outcome.index is None:
        diag: tuple = ()
        if explain and outcome.status == "infeasible":
            phase("diagnosing")
            end = plan.diagnosis_end()
            diag = diagnose(
                project,
                model,
                kind,
                plan.limit,
                resolve=solve_value,
                deadline=end if math.isfinite(end) else None,
            )
        return SizingResult(
            outcome.status,
            kind,
            None,
            None,
            math.nan,
            sense * outcome.bound,
            math.inf,
            time.perf_counter() - start,
            backend,
            outcome.native,
            outcome.nodes,
            diagnosis=diag,
            options=options,
            message=_message(outcome.status, kind, None, diag),
            unloaded_joints=unloaded_joints(project, model.evaluator),
        )
    # only a proven design is called an optimum (a stopped run's is the best found so far)
    name = f"{kind} optimum" if outcome.status == "optimal" else f"best {kind} found (not proven)"
    design = design_of(project, model, outcome.index, name)
    value = float(model.score(outcome.index[None, :]).objective[0])
    if any(s.stage.ratio_range is not None for a_ in design.actuators for s in a_.stages):
        from .solve.refine import refine

        phase("refining ratios")
        pinned = [j for j, pin in read_objective(project)["pin"].items() if "stages" in pin]
        design = refine(model, design, pinned, deadline=None if math.isinf(plan.end) else plan.end)
    a = assess(project, design, model.evaluator)
    refined = model.score_arrays(arrays_from_designs([design]), outcome.index[None, :])
    value = max(value, float(refined.objective[0]))
    status = outcome.status
    if not a.feasible:
        status = "error"
    alts: tuple = ()
    if explain:
        phase("explaining")
        alts = alternatives(project, model, outcome.index, value, deadline=plan.explain_end())
    # within the optimality gap asked for (``plan.gap``; 0 when the exact optimum is proven)
    gap = relative_gap(value, max(outcome.bound, value))
    return SizingResult(
        status=status,
        objective_kind=kind,
        design=design,
        assessment=a,
        objective=sense * value,
        bound=sense * max(outcome.bound, value),
        gap=gap,
        seconds=time.perf_counter() - start,
        backend=backend,
        native_status=outcome.native,
        nodes=outcome.nodes,
        binding=binding(a),
        alternatives=alts,
        options=options,
        message=_message(status, kind, sense * value, (), gap, plan.gap),
        unloaded_joints=unloaded_joints(project, model.evaluator),
    )


def _message(status, kind, value, diag, gap=0.0, asked=0.0) -> str:
    unit = {"payload": "kg", "mass": "kg", "imf": "", "cost": "", "margin": ""}[kind]
    kind = {"payload": "payload mass", "margin": "smallest normalized margin"}.get(kind, kind)
    if status == "optimal":
        shown = f"{format_number(value)} {unit}".rstrip()
        if gap >= ROUNDING_GAP:
            return (
                f"proven within {100 * gap:.3g} % of the optimum over the discrete options: "
                f"{kind} {shown}"
            )
        return f"proven optimum over the discrete options: {kind} {shown}"
    if status == "time_limit" and value is None:
        return "time limit reached before any design met every requirement"
    if status == "time_limit":
        shown = f"{format_number(value)} {unit}".rstrip()
        if gap <= asked or gap < ROUNDING_GAP:
            return (
                f"time limit reached: {kind} {shown}, its value proven within the gap asked for; "
                "the tie-break among designs of that value (least mass) was not finished"
            )
        return f"time limit reached: best {kind} {shown}, see bound and gap"
    if status == "infeasible":
        if not diag:
            return "no design meets every requirement"
        # the requirements whose removal alone makes the project feasible (the relaxations
        # the diagnosis solved), else those no design meets even alone
        culprits = [d.requirement for d in diag if d.relaxed_objective is not None]
        if culprits:
            return (
                "no design meets every requirement; feasible without "
                + " or without ".join(culprits)
                + " (see the diagnosis)"
            )
        alone = [d.requirement for d in diag if d.shortfall == d.shortfall and d.shortfall > 0]
        if alone:
            return f"no design meets every requirement; {', '.join(alone)} cannot be met even alone"
        return "no design meets every requirement; see the diagnosis"
    return "the back-end's design failed re-evaluation by the physics; not reported as a solution"
