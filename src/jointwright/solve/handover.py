"""When the default back-end hands an instance to the MILP (HiGHS, solve/milp_matrix.py).

The branch and bound bounds a payload objective under a budget shared by many joints through
relaxations (docs/optimizer.md, items 4a-4c); the MILP sees the budget and the gravity coupling
exactly in one linear program per node. When the MILP models *every* requirement of the instance
(payload cases with their minimums, mass and cost budgets; every per-joint limit is already in
the candidates), so no lazy cut is needed, and the instance couples many joints through a
budget, HiGHS usually closes where the search stops at a gap (docs/benchmarks.md). The default
then cuts the options at the search's root with the primal heuristics' design, runs the MILP
over the options left, from that design, for a share of the time left, and continues with the
branch and bound from the best design when the MILP did not prove the optimum.
"""

from __future__ import annotations

import math

from .model import SizingModel

#: share of the time left that the MILP may use before the search takes over
MILP_SHARE = 0.9
#: the MILP's time without a time limit (s)
MILP_SECONDS = 60.0
#: joints at least (a small robot proves out in the search within seconds)
MILP_MIN_JOINTS = 6
#: candidate options summed over the joints at most (model size: x[u, o] binaries); HiGHS's
#: presolve on much larger models can overrun its time limit (docs/optimizer.md)
MILP_MAX_OPTIONS = 40_000


def milp_models(model: SizingModel) -> bool:
    """Whether the MILP models every requirement of ``model`` exactly and the instance is the
    kind it closes: payload objective, a finite mass or cost budget, at least
    :data:`MILP_MIN_JOINTS` joints, no case limit other than a payload minimum or a speed minimum
    (any other would need lazy cuts: correct, but slow). Per-joint limits are in the candidates
    already."""
    if model.kind != "payload" or model.measure is not None or not model.payload:
        return False
    if not (math.isfinite(model.total_mass_max) or math.isfinite(model.total_cost_max)):
        return False
    if model.n < MILP_MIN_JOINTS or model.stance:
        return False
    return models_every_limit(model)


def milp_fits(candidates) -> bool:
    """Whether the options left per joint make a MILP of at most :data:`MILP_MAX_OPTIONS`
    binaries."""
    return sum(int(c.size) for c in candidates) <= MILP_MAX_OPTIONS


def milp_suits(model: SizingModel) -> bool:
    """:func:`milp_models` and :func:`milp_fits` on the model's own candidates."""
    return milp_models(model) and milp_fits(model.candidates)


#: the share when the MILP leaves some requirement to the physics (its design may miss it)
MILP_SHARE_PARTIAL = 0.5


def milp_time(time_left: float | None, exact: bool = True) -> float:
    """Seconds the MILP gets: a share of the time left (:data:`MILP_SHARE`, or
    :data:`MILP_SHARE_PARTIAL` when it does not model every requirement, ``exact`` False), or
    :data:`MILP_SECONDS` without a limit."""
    if time_left is None:
        return MILP_SECONDS
    return (MILP_SHARE if exact else MILP_SHARE_PARTIAL) * time_left


def models_every_limit(model: SizingModel) -> bool:
    """Whether the MILP's rows hold every case limit of ``model``: a payload minimum of a payload
    or stance case, a speed minimum (a per-joint filter); no duty, back-drive or rotor
    coupling."""
    if model.duty or model.backdrive or model.project.rotor_coupling:
        return False
    exact = {"payload": {"payload_min"}, "stance": {"payload_min"}, "speed": {"speed_min"}}
    return all(set(c.limits) <= exact.get(c.kind, set()) for c in model.project.cases)
