"""The catalog: motors, parametric motor families, gear stage types with frame sizes, their
forward/backward efficiency models, and the TOML/CSV files they are read from.
"""

from __future__ import annotations

from .efficiency import (
    MODELS,
    ConstantEfficiency,
    CoulombEfficiency,
    PlanetaryBasicTrainEfficiency,
    ProportionalEfficiency,
    TableEfficiency,
    efficiency_from_dict,
)
from .io import load_catalog, load_catalogs
from .model import (
    STAGE_KINDS,
    Catalog,
    EfficiencyModel,
    Motor,
    MotorFamily,
    StageFrame,
    StageType,
)
from .thread_efficiency import (
    ScrewEfficiency,
    WormEfficiency,
    screw_lower_torque,
    screw_raise_torque,
)

__all__ = [
    "MODELS",
    "STAGE_KINDS",
    "Catalog",
    "ConstantEfficiency",
    "CoulombEfficiency",
    "EfficiencyModel",
    "Motor",
    "MotorFamily",
    "PlanetaryBasicTrainEfficiency",
    "ProportionalEfficiency",
    "ScrewEfficiency",
    "StageFrame",
    "StageType",
    "TableEfficiency",
    "WormEfficiency",
    "efficiency_from_dict",
    "load_catalog",
    "load_catalogs",
    "screw_lower_torque",
    "screw_raise_torque",
]
