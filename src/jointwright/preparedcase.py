"""A case's pose terms, computed once by the evaluator (:mod:`jointwright.evaluate`) and read
by the case kinds (:mod:`.payloadcase`, :mod:`.impactcase`, :mod:`.speedcase`)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .project import Case
from .robot.basis import PoseBasis


@dataclass(frozen=True, eq=False)
class PreparedCase:
    """Pose terms of one case, computed once."""

    case: Case
    basis: PoseBasis
    J: np.ndarray  # (3, nv) tip point Jacobian, world axes
    Jj: np.ndarray  # (3, n_act) columns of the actuated joints
    u: np.ndarray  # (3,) unit direction (zeros for a case without one: duty, stance)
    velocity_sign: np.ndarray  # (n_act,) for payload and stance cases
    contact_J: np.ndarray | None = None  # stance: (k, 3, nv) contact point Jacobians
    #: speed cases: (1 + n_act, n_act) Coriolis and centrifugal torques at the actuated joints per
    #: (end-point speed)², links only (row 0) and per kg of each actuator's mass (rows 1...)
    speed_terms: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    #: payload and stance cases with a ``moment`` or ``offset`` (metrics.loads): joint torques
    #: per newton of the case's force, (nv,), and the fixed moment's joint torques, (nv,)
    load_a: np.ndarray | None = None
    tau_fixed: np.ndarray | None = None
