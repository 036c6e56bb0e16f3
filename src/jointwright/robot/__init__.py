"""Robot geometry and mass properties: Pinocchio models from URDF or project tables, actuator
mounts, and the per-pose terms of the mass matrix and gravity vector linear in actuator masses."""

from .basis import PoseBases, PoseBasis, gravity, mass_matrix, pose_basis, stack_bases
from .model import Mount, Robot

__all__ = [
    "Mount",
    "PoseBasis",
    "PoseBases",
    "Robot",
    "gravity",
    "mass_matrix",
    "pose_basis",
    "stack_bases",
]
