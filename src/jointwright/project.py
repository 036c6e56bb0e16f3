"""The project file (TOML): robot, catalog, cases and requirements -> a :class:`Project`.

See docs/project-format.md for the format with a complete example.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .case_table import load_cases
from .cases import BODY_REGION, CASE_KINDS, CASE_LIMITS, MOTIONS, STANDARD_GRAVITY, Case
from .catalog.drives import drives_from_table
from .errors import InputError, unknown_name
from .poses import load_poses
from .progress import report
from .tomlfile import Table, load_toml

__all__ = [
    "BODY_REGION",
    "CASE_KINDS",
    "CASE_LIMITS",
    "EXAMPLES",
    "MOTIONS",
    "STANDARD_GRAVITY",
    "Case",
    "JointLimits",
    "Project",
    "Requirements",
    "load_example",
    "load_project",
    "project_from_dict",
]


@dataclass(frozen=True)
class JointLimits:
    mass_max: float = math.inf
    reflected_inertia_max: float = math.inf
    diameter_max: float = math.inf
    length_max: float = math.inf
    ratio_min: float = 0.0
    ratio_max: float = math.inf


@dataclass(frozen=True)
class Requirements:
    total_mass_max: float = math.inf
    total_cost_max: float = math.inf
    joints: dict[str, JointLimits] = field(default_factory=dict)
    #: least gear life of every joint over the duty cycles (s; Miner's rule with the cycles'
    #: life shares, metrics/gear_life.py); 0 = no requirement
    life_min: float = 0.0
    #: every requirement holds across the stages' efficiency bands (robust.py), not only at
    #: their nominal efficiencies
    efficiency_band: bool = False

    def joint(self, name: str) -> JointLimits:
        return self.joints.get(name, JointLimits())


@dataclass(frozen=True)
class Project:
    """Everything read from one project file. Quantities are SI."""

    name: str
    file: Path
    robot: Any  # jointwright.robot.Robot
    catalog: Any  # jointwright.catalog.model.Catalog
    cases: tuple[Case, ...]
    requirements: Requirements
    max_stages: int = 2
    stage_kinds: tuple[str, ...] | None = None
    rotor_coupling: bool = False
    summary: str = ""
    #: per actuated joint the drive names it may use (one: fixed, several: the optimizer
    #: chooses); None: no drives, every motor on its own ratings (catalog.drives)
    drives: dict[str, tuple[str, ...]] | None = None
    objective: dict = field(default_factory=dict)

    @property
    def base_dir(self) -> Path:
        return self.file.parent

    def case(self, name: str) -> Case:
        for c in self.cases:
            if c.name == name:
                return c
        raise KeyError(name)


def load_project(path: str | Path) -> Project:
    """Read and validate a project file; every error is one InputError naming file and field."""
    path = Path(path)
    data = load_toml(path)
    return project_from_dict(data, path)


#: bundled example projects (``jointwright new DIR --example NAME``)
EXAMPLES = ("leg", "arm", "quadruped")


def load_example(name: str) -> Project:
    """A bundled example project, read from the installed package (``EXAMPLES``).

    Its starting design is ``design.toml`` beside ``project.file``:
    ``load_design(project.file.with_name("design.toml"), project)``.
    """
    from importlib import resources

    if name not in EXAMPLES:
        raise InputError("<api>", "name", f"must be one of {', '.join(EXAMPLES)}, got {name!r}")
    folder = resources.files("jointwright.examples") / name
    with resources.as_file(folder / "project.toml") as path:
        return load_project(path)


def project_from_dict(data: dict, path: Path) -> Project:
    file = str(path)
    top = Table(data, file, "")
    # an unknown section fails first, with its likely meaning, before a required one is missed
    top.expect(
        "project", "robot", "catalog", "model", "requirements", "drives", "poses", "case",
        "objective",
    )  # fmt: skip
    head = top.table("project", {})
    name = head.text("name", path.stem)
    summary = head.text("summary", "")
    head.done()

    robot = _load_robot(top.table("robot"), path.parent)
    catalog, max_stages, kinds = _load_catalog(top.table("catalog"), path.parent)
    model = top.table("model", {})
    coupling = model.flag("rotor_coupling", False)
    model.done()
    requirements = _load_requirements(top.table("requirements", {}), robot)
    drives = drives_from_table(top.table("drives", {}), tuple(robot.actuated), catalog)
    poses = load_poses(top.table("poses", {}), robot)
    tables = top.tables("case")
    read: list[Case] = []
    for i, t in enumerate(tables):
        read.extend(load_cases(t, robot, path.parent, poses))
        if i % 500 == 499:
            report("reading cases", i + 1, len(tables))
    cases = tuple(read)
    if not cases:
        raise InputError(file, "case", "at least one [[case]] is required")
    seen: set[str] = set()  # a set, not a list scan: a project may hold tens of thousands of cases
    for i, c in enumerate(cases):
        if c.name in seen:
            raise InputError(file, f"case[{i}].name", f"duplicate case name {c.name!r}")
        seen.add(c.name)
    _check_life_shares(file, requirements, cases)
    objective = top.raw("objective", {})
    if not isinstance(objective, dict):
        raise InputError(file, "objective", "must be a table")
    top.done()
    return Project(
        name=name,
        file=path,
        robot=robot,
        catalog=catalog,
        cases=cases,
        requirements=requirements,
        max_stages=max_stages,
        stage_kinds=kinds,
        rotor_coupling=coupling,
        summary=summary,
        objective=dict(objective),
        drives=drives,
    )


def _load_robot(t: Table, base_dir: Path):
    from .robot import Robot

    if t.has("urdf"):
        urdf = base_dir / t.text("urdf")
        if not urdf.is_file():  # named against the project file and its field, not the URDF
            raise InputError(
                t.file,
                t.field("urdf"),
                f"no such file: {str(urdf)!r} (a relative path is read from the project "
                "file's folder)",
            )
        base = t.text("base", None, choices=("fixed", "floating"))
        actuated = t.array("actuated", None)
        mounts = t.raw("mounts", None)
        robot = Robot.from_urdf(
            str(urdf),
            floating=None if base is None else (base == "floating"),
            actuated=actuated,
            mounts=mounts,
            unactuated=t.raw("unactuated", None),
            included=t.raw("included", None),
            frames=t.array("frames", None),
            gravity=t.array("gravity", None),
            file=t.file,
            prefix=t.path,
        )
        t.done()
        return robot
    return Robot.from_links(t.data, file=t.file)


def _load_catalog(t: Table, base_dir: Path):
    from .catalog.io import load_catalogs
    from .catalog.model import STAGE_KINDS

    files = t.array("files")
    if not files or not all(isinstance(f, str) for f in files):
        raise InputError(t.file, t.field("files"), "must be a non-empty list of file paths")
    for i, f in enumerate(files):
        if not (base_dir / f).is_file():
            raise InputError(
                t.file,
                f"{t.field('files')}[{i}]",
                f"no catalog file {str(base_dir / f)!r} (paths are relative to the project file)",
            )
    catalog = load_catalogs([base_dir / f for f in files])
    max_stages = t.raw("max_stages", 2)
    if not isinstance(max_stages, int) or isinstance(max_stages, bool) or not 0 <= max_stages <= 3:
        raise InputError(
            t.file, t.field("max_stages"), f"must be a whole number from 0 to 3, got {max_stages!r}"
        )
    kinds: Any = t.array("stage_kinds", None)
    if kinds is not None:
        for i, k in enumerate(kinds):
            if k not in STAGE_KINDS:
                raise unknown_name(
                    t.file, f"{t.field('stage_kinds')}[{i}]", k, STAGE_KINDS, "stage kind"
                )
        kinds = tuple(kinds)
    t.done()
    return catalog, max_stages, kinds


def _load_requirements(t: Table, robot) -> Requirements:
    total = t.quantity("total_mass_max", "mass", math.inf, sign="positive")
    cost = t.quantity("total_cost_max", "dimensionless", math.inf, sign="positive")
    life = t.quantity("life_min", "lifetime", 0.0, sign="positive")
    band = t.flag("efficiency_band", False)
    joints = {}
    jt = t.table("joint", {})
    for jname in list(jt.data):
        sub = jt.table(jname)
        if jname not in robot.actuated:
            raise InputError(
                t.file,
                sub.path,
                f"unknown actuated joint {jname!r}; the robot has {', '.join(robot.actuated)}",
            )
        joints[jname] = JointLimits(
            mass_max=sub.quantity("mass_max", "mass", math.inf, sign="positive"),
            reflected_inertia_max=sub.quantity(
                "reflected_inertia_max", "inertia", math.inf, sign="positive"
            ),
            diameter_max=sub.quantity("diameter_max", "length", math.inf, sign="positive"),
            length_max=sub.quantity("length_max", "length", math.inf, sign="positive"),
            ratio_min=sub.quantity("ratio_min", "ratio", 0.0, sign="nonnegative"),
            ratio_max=sub.quantity("ratio_max", "ratio", math.inf, sign="positive"),
        )
        if joints[jname].ratio_min > joints[jname].ratio_max:
            raise InputError(
                t.file,
                sub.field("ratio_min"),
                f"must not exceed ratio_max "
                f"({joints[jname].ratio_max:g}), got {joints[jname].ratio_min:g}",
            )
        sub.done()
    jt.done()
    t.done()
    return Requirements(
        total_mass_max=total,
        total_cost_max=cost,
        joints=joints,
        life_min=life,
        efficiency_band=band,
    )


#: life shares of the counted duty cases must sum to 1 within this
LIFE_SHARE_TOLERANCE = 1e-6


def _check_life_shares(file: str, req: Requirements, cases: tuple[Case, ...]) -> None:
    """``life_min`` needs duty cycles whose ``life_share`` values sum to 1 (docs/project-format.md);
    a project with a single duty case may leave its share out (the whole life in that cycle)."""
    duty = [(i, c) for i, c in enumerate(cases) if c.kind == "duty"]
    counted = [(i, c) for i, c in duty if c.life_share is not None]
    if req.life_min > 0 and not duty:
        raise InputError(
            file, "requirements.life_min", "needs at least one duty case (the cycles the gears run)"
        )
    if req.life_min > 0 and not counted and len(duty) > 1:
        raise InputError(
            file,
            f"case[{duty[0][0]}].life_share",
            "is required with requirements.life_min and several duty cases: give each counted "
            "cycle its share of the operating time (the shares sum to 1)",
        )
    total = sum(float(c.life_share or 0.0) for _, c in counted)
    if counted and abs(total - 1.0) > LIFE_SHARE_TOLERANCE:
        raise InputError(
            file,
            f"case[{counted[-1][0]}].life_share",
            f"the duty cases' life shares must sum to 1 (the whole operating time), got {total:g}",
        )


def life_shares(project: Project) -> list[tuple[str, float]]:
    """(duty case name, share of the operating time) of the cycles the gear life counts."""
    duty = [c for c in project.cases if c.kind == "duty"]
    counted = [(c.name, c.life_share) for c in duty if c.life_share is not None]
    if not counted and len(duty) == 1:
        return [(duty[0].name, 1.0)]
    return counted
