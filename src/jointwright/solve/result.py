"""One result vocabulary for every back-end: why it stopped, and what the point is.

A back-end returns a :class:`SolveOutcome` (option indices, objective, proven bound, native
status); :func:`jointwright.sizing.size` turns it into a :class:`SizingResult` after
re-evaluating the design with the numpy physics (:func:`jointwright.assessment.assess`).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from ..assessment import Assessment
    from ..design import Design

#: why a solve stopped
STATUSES = ("optimal", "time_limit", "infeasible", "error")

#: the default relative optimality gap of ``size``: an answer whose proven bound is within this
#: fraction of its objective counts as optimal (common practice: the default MIP gap of HiGHS
#: and of most MILP solvers); ``size(..., gap=0)`` proves the exact optimum and its tie-break
OPTIMALITY_GAP = 1e-4

#: a relative gap this small is the rounding of the objective and the bound in double precision
#: (a MILP's bound carried through its own arithmetic), not a distance to the optimum
ROUNDING_GAP = 1e-12


@dataclass(frozen=True)
class SolveOutcome:
    """What a back-end found, in option indices (internal).

    status : one of STATUSES
    index : int array (n_joints,) of option indices, or None
    objective : value of ``index`` (to maximize; −total mass for the mass objective)
    bound : proven upper bound on the optimum over the discrete options
    seconds : wall time, s
    native : the back-end's own status text
    nodes : branch-and-bound nodes or solver iterations
    """

    status: str
    index: np.ndarray | None
    objective: float
    bound: float
    seconds: float
    native: str
    nodes: int


@dataclass(frozen=True)
class Alternative:
    """A runner-up for one joint with the rest of the design kept.

    What it costs or what rules it out.
    """

    joint: str
    actuator: str
    change: str  # "other motor" or "other stage type"
    objective: float | None  # objective of the changed design (None when it misses a requirement)
    loss: float | None  # objective loss against the chosen design
    ruled_out_by: str | None  # the requirement with the smallest margin when it misses one
    mass_change: float = 0.0  # kg, total actuator mass of the changed design minus the chosen one


@dataclass(frozen=True)
class Diagnosis:
    """Why no design meets every requirement: one requirement at a time."""

    requirement: str  # check label, e.g. "landing: payload min"
    limit: float
    best_achievable: float  # over all options, this requirement alone
    shortfall: float  # relative, > 0 when it alone cannot be met
    relaxed_objective: (
        float | None
    )  # optimum with only this requirement dropped (None: infeasible or no time)
    relaxed_proven: bool = True  # False: the re-solve ran out of time and this is its bound
    #: False: ``best_achievable`` is an upper bound (a search stopped by its time share, or the
    #: no-load speed), not a value some design reaches; the requirement may be out of reach
    best_proven: bool = True


@dataclass(frozen=True)
class SizingResult:
    """The answer of :func:`jointwright.sizing.size`.

    status : "optimal", "time_limit", "infeasible" or "error"
    objective_kind : "payload", "margin", "mass", "cost" or "imf"
    design : Design or None
    assessment : Assessment of ``design`` by the numpy physics, or None
    objective : achieved objective (payload N; total mass kg for "mass"; IMF)
    bound : proven bound on the optimum in the same sense (≥ objective for payload/imf,
        ≤ objective for mass)
    gap : relative gap |bound − objective| / max(|objective|, 1e-12); 0 when proven optimal
    seconds : wall time, s
    backend : "search", "pyomo" or "enumerate"
    native_status : the back-end's own words
    nodes : nodes / iterations
    binding : labels of the requirements with the smallest margins
    alternatives : per-joint runner-ups
    diagnosis : for infeasible problems, per requirement
    options : number of options per joint after the joint's own filters
    message : one line for people
    unloaded_joints : actuated joints no case loads (their choice is only the smallest actuator
        that meets its own limits)
    """

    status: str
    objective_kind: str
    design: Design | None
    assessment: Assessment | None
    objective: float
    bound: float
    gap: float
    seconds: float
    backend: str
    native_status: str
    nodes: int
    binding: tuple = ()
    alternatives: tuple = ()
    diagnosis: tuple = ()
    options: dict = field(default_factory=dict)
    message: str = ""
    unloaded_joints: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        from ..assessment import _jsonable
        from ..design import design_to_toml

        d = {k: v for k, v in asdict(self).items() if k not in ("design", "assessment")}
        d["alternatives"] = [asdict(a) for a in self.alternatives]
        d["diagnosis"] = [asdict(a) for a in self.diagnosis]
        d["assessment"] = self.assessment.to_dict() if self.assessment is not None else None
        d["design_toml"] = design_to_toml(self.design) if self.design is not None else None
        return _jsonable(d)


def relative_gap(objective: float, bound: float) -> float:
    if not (math.isfinite(objective) and math.isfinite(bound)):
        return math.inf if objective != bound else 0.0
    return abs(bound - objective) / max(abs(objective), 1e-12)
