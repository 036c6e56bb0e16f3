"""Test-wide settings: property tests draw the same examples on every run (seeded randomness
only), so a CI run is reproducible; no deadline, since the 2-core CI machine may be loaded."""

import dataclasses
import itertools
from collections.abc import Callable
from importlib import resources

import numpy as np
import pytest
from hypothesis import HealthCheck, settings

from jointwright.design import DesignArrays, actuator_row, arrays_from_rows
from jointwright.drivetrain import Actuator, StageChoice
from jointwright.project import Project, load_project

settings.register_profile(
    "jointwright", derandomize=True, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.load_profile("jointwright")


@pytest.fixture(scope="session")
def leg_project() -> Project:
    """The bundled leg example, loaded once per test session."""
    with resources.as_file(
        resources.files("jointwright.examples") / "leg" / "project.toml"
    ) as path:
        return load_project(path)


@pytest.fixture(scope="session")
def random_designs() -> Callable[[Project, int, int], DesignArrays]:
    """``random_designs(project, count, seed)``: ``count`` designs drawn (seeded) from every
    single-stage option of the project's catalog, the same table for every joint."""

    def draw(project: Project, count: int, seed: int) -> DesignArrays:
        rows = [
            actuator_row(Actuator(motor, (StageChoice(stage, frame, float(ratio)),)))
            for motor in project.catalog.all_motors()
            for stage in project.catalog.stages
            for frame, ratio in itertools.product(stage.frames, stage.ratios)
        ]
        table = arrays_from_rows([rows])
        n = project.robot.n_act
        pick = np.random.default_rng(seed).integers(0, len(rows), size=(count, n))
        fields = dataclasses.fields(DesignArrays)
        return DesignArrays(**{f.name: getattr(table, f.name)[0][pick] for f in fields})

    return draw
