"""The operating cases of a project: the :class:`Case` record, its kinds and requirement keys.

The ``[[case]]`` tables are read by :mod:`jointwright.case_table` (poses by
:mod:`jointwright.poses`); format in docs/project-format.md.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

CASE_KINDS = ("payload", "stance", "impact", "backdrive", "speed", "duty", "torque")
MOTIONS = ("along", "against", "hold")
STANDARD_GRAVITY = 9.80665
#: ambient temperatures the copper-resistance and thermal models cover, °C
AMBIENT_RANGE = (-100.0, 200.0)


@dataclass(frozen=True)
class Case:
    """One operating case: a pose (or trajectory), a tip frame, a direction and its requirements.

    kind
        ``payload``: largest force the tip can exert along ``direction`` (N), with the end point
        moving ``motion`` = along / against the force, or holding still.
        ``impact``: effective mass along ``direction`` and, for a floating base, the impact
        mitigation factor at the contact point ``frame``; back-driven reflected inertia.
        ``backdrive``: tip force along ``direction`` that starts the unpowered robot moving.
        ``speed``: end-point speed along ``direction`` reachable while the joints carry the
        case's load (gravity, ``payload_mass``, ``acceleration``) inside each motor's
        torque–speed envelope; also the acceleration along ``direction`` from rest.
        ``duty``: a trajectory (CSV) for RMS/peak torque, temperature and energy.
        ``stance``: robot-level payload: the largest load at ``frame`` (the robot holding it with
        a force along ``direction``) over every contact-force distribution on ``contacts``
        within friction cones and each joint's mode-dependent torque capacity.
    """

    name: str
    kind: str
    frame: str | None
    pose: dict[str, float]
    base_xyz: tuple[float, float, float] = (0.0, 0.0, 0.0)
    base_rpy: tuple[float, float, float] = (0.0, 0.0, 0.0)
    direction: tuple[float, ...] | None = None
    motion: str = "along"
    trajectory: Path | None = None
    ambient: float = 25.0
    #: payload cases: end-point speed (m/s) during the motion; the motors' torque–speed
    #: envelope at that speed then sets the capacity (0 = static capacity)
    tip_speed: float = 0.0
    #: payload and stance cases: how the required load grows with the robot's payload mass m_p:
    #: required = fixed_load + payload_share·m_p·g_n (N); the payload-mass objective reads the
    #: case's achieved force F as the payload it carries, (F − fixed_load)/(payload_share·g_n).
    #: payload_share = 0: the load does not grow with the payload (a constraint only)
    fixed_load: float = 0.0
    payload_share: float = 1.0
    #: speed cases: mass carried at the frame (kg; its weight, and its inertia when accelerating)
    payload_mass: float = 0.0
    #: speed cases: force the end point exerts on the environment during the motion (N, world
    #: axes), e.g. pushing a cart or pressing a tool; added to the payload's weight
    tip_force: tuple[float, float, float] = (0.0, 0.0, 0.0)
    #: speed cases: end-point acceleration along ``direction`` held during the motion (m/s²)
    acceleration: float = 0.0
    #: speed cases: distance along ``direction`` over which the end point gets up to speed from
    #: rest (m); 0 = the steady loaded speed, however long it takes to reach
    stroke: float = 0.0
    #: impact cases: the body region a person may be hit on, as the user's applicable standard
    #: gives it (ISO/TS 15066 two-body transient contact): (largest permissible force N,
    #: effective spring constant N/m, effective body-region mass kg); None: no contact check
    body_region: tuple[float, float, float] | None = None
    #: requirement name -> limit, e.g. {"payload_min": 150.0} (SI)
    limits: dict[str, float] = field(default_factory=dict)
    #: duty cases: share of the operating time spent in this cycle, for the gear life of
    #: ``[requirements] life_min`` (Miner's rule over the cycles); None: not counted
    life_share: float | None = None
    #: impact cases: approach speed along ``direction`` (m/s) and restitution of the impact, for
    #: the peak gear torque (metrics/gear_shock.py); 0: no gear shock check
    impact_speed: float = 0.0
    restitution: float = 0.0
    #: for payload cases: the force is reported as a mass too when the direction is vertical
    weight_equivalent: bool = False
    #: stance cases: (frame, friction coefficient, unit normal from the ground into the robot)
    contacts: tuple[tuple[str, float, tuple[float, float, float]], ...] = ()
    #: stance cases: each contact carries at least this fraction of the contacts' total normal
    #: force (0: any distribution, even one that leans the whole load on two diagonal feet with
    #: no margin against tipping; at most 1/len(contacts))
    contact_share_min: float = 0.0
    #: payload and stance cases: moment the robot exerts on the environment with the force (N·m,
    #: world-aligned axes, about the origin of ``frame``); fixed, it does not grow with the load
    moment: tuple[float, float, float] = (0.0, 0.0, 0.0)
    #: payload and stance cases: where the force acts, from the origin of ``frame`` (m,
    #: world-aligned axes), e.g. the payload's centre of mass; the force s·u there adds the
    #: moment s·(offset × u) at the frame, so it grows with the load (docs/metrics.md)
    offset: tuple[float, float, float] = (0.0, 0.0, 0.0)
    #: torque cases: required joint torque (N·m, N for a prismatic joint) per actuated joint
    joint_torques: tuple[tuple[str, float], ...] = ()
    #: torque cases: per joint, how it moves while carrying the torque: "along" (motoring),
    #: "against" (back-driven) or "hold"
    joint_motions: tuple[tuple[str, str], ...] = ()
    #: a case expanded from a region (``poses``, ``grid`` or ``trajectory_poses``): the user
    #: case's name and this pose's place in the region; "" for an ordinary case
    region: str = ""
    region_index: int = -1

    @property
    def has_wrench(self) -> bool:
        """Whether the case's load carries a moment (a ``moment`` or an ``offset``)."""
        return any(x != 0.0 for x in self.moment) or any(x != 0.0 for x in self.offset)


#: per kind: requirement key -> (dimension, sense); sense "min" means achieved >= limit
CASE_LIMITS: dict[str, dict[str, tuple[str, str]]] = {
    "payload": {"payload_min": ("force", "min")},
    "stance": {"payload_min": ("force", "min")},
    "impact": {
        "imf_min": ("dimensionless", "min"),
        "directional_imf_min": ("dimensionless", "min"),
        "effective_mass_max": ("mass", "max"),
        "contact_speed_min": ("velocity", "min"),
        # peak gear torque at the impact over the momentary rating, worst joint (1 = at rating)
        "shock_use_max": ("dimensionless", "max"),
    },
    "backdrive": {"backdrive_force_max": ("force", "max")},
    "speed": {"speed_min": ("velocity", "min"), "acceleration_min": ("acceleration", "min")},
    # achieved ÷ required joint torque, the smallest over the case's joints
    "torque": {"torque_ratio_min": ("dimensionless", "min")},
    # rating use: the worst of RMS/continuous, peak/peak torque, speed/max speed, torque/envelope
    # and temperature rise/allowed rise over the joints; 1.0 uses a rating fully
    "duty": {"rating_use_max": ("dimensionless", "max")},
}


#: fields of an impact case's body region (transient contact, ISO/TS 15066 two-body model)
BODY_REGION = (
    ("body_force_max", "force"),
    ("body_stiffness", "stiffness_linear"),
    ("body_mass", "mass"),
)
