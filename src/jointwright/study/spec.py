"""The study file (TOML): a base project and what varies -> a list of :class:`Case`.

A study names a base project file and the parameters that vary across cases. Parameters are
addressed by dotted paths into the project as a plain dict (``robot.links.thigh.length``,
``cases[0].payload``). A path must exist in the base project, or its parent table must (then
the key is added). Values are kept exactly as written (numbers, or quantity strings such as
``"2.5 kg"`` that the project loader converts); grid and random samples keep the unit of
their ``start``/``low``. See docs/study-format.md for the format with a complete example.
"""

from __future__ import annotations

import copy
import hashlib
import itertools
import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterator

from ..errors import InputError
from ..tomlfile import Table, is_file, load_toml
from .paths import _overlap, _walk, format_path, parse_path, set_path
from .values import _NUMBER_FIRST, MAX_CASES, _grid, _listed, _random

#: version of the study file format this module reads
STUDY_FORMAT = 1
#: what a case can run
TASKS = ("size", "frontier")
#: how the varied parameters combine
COMBINE = ("product", "zip")

#: project fields that are text, not numbers: never varied (a [[variant]] may set them)
TEXT_FIELDS = ("project.name", "project.summary")


@dataclass(frozen=True)
class Parameter:
    """One varied parameter: a dotted path and its values (as written, in file order)."""

    path: str
    values: tuple[Any, ...]
    source: str  # "values", "grid" or "random"


@dataclass(frozen=True)
class Variant:
    """A named set of assignments applied together, optionally with its own task and options."""

    name: str
    assignments: tuple[tuple[str, Any], ...]
    task: str | None = None
    options: dict | None = None


@dataclass(frozen=True)
class StudySpec:
    """A validated study. ``definition`` is the study file as parsed; ``hash`` covers it and
    the base project's content (sha256, hex)."""

    file: str
    name: str
    description: str
    base_file: Path
    base_project: dict
    task: str
    options: dict
    combine: str
    parameters: tuple[Parameter, ...]
    variants: tuple[Variant, ...]
    definition: dict
    hash: str

    @property
    def base_dir(self) -> Path:
        """Directory of the base project (relative paths inside it resolve from here)."""
        return self.base_file.parent


@dataclass(frozen=True)
class Case:
    """One case of a study.

    Attributes
    ----------
    id : str
        16 hex digits of the sha256 of the case's canonical parameters (stable across runs).
    index : int
        Position in the expansion (0-based).
    variant : str or None
        Variant name, or None when the study has no variants.
    values : dict
        Varied path -> value as written.
    assignments : tuple of (path, value)
        Everything this case sets in the base project: the variant's settings, then ``values``.
    task : str
        ``size`` or ``frontier``.
    options : dict
        Options for the case function.
    """

    id: str
    index: int
    variant: str | None
    values: dict
    assignments: tuple[tuple[str, Any], ...]
    task: str
    options: dict


def case_project(spec: StudySpec, case: Case) -> dict:
    """The base project with the case's assignments applied (a fresh deep copy)."""
    project = copy.deepcopy(spec.base_project)
    for path, value in case.assignments:
        set_path(project, path, value)
    return project


# ------------------------------------------------------------------------------- loading


def load_study(path: str | Path) -> StudySpec:
    """Read and validate a study file; the base project path is relative to the study file."""
    path = Path(path)
    return parse_study(load_toml(path), file=str(path), study_dir=path.parent)


def parse_study(definition: dict, *, file: str = "<api>", study_dir: str | Path = ".") -> StudySpec:
    """Validate a parsed study definition (a dict shaped like the TOML file)."""
    top = Table(definition, file, "")
    head = top.table("study")
    fmt = head.raw("format", STUDY_FORMAT)
    if fmt != STUDY_FORMAT or isinstance(fmt, bool):
        raise InputError(
            file,
            "study.format",
            f"must be {STUDY_FORMAT} (the format this version reads), got {fmt!r}",
        )
    name = head.text("name")
    description = head.text("description", "")
    base_rel = head.text("base")
    task = head.text("task", "size", choices=TASKS)
    combine = head.text("combine", "product", choices=COMBINE)
    inputs = head.array("inputs", [])
    head.done()
    base_file = (Path(study_dir) / base_rel).resolve()
    if not is_file(base_file, file, "study.base"):
        raise InputError(file, "study.base", f"base project {str(base_file)!r} not found")
    base = load_toml(base_file)
    digests = _input_digests(inputs, base_file.parent, file)
    options = _options(top.raw("options", {}), file, "options")
    parameters = tuple(_parameter(t, base, file) for t in top.tables("vary"))
    variants = tuple(_variant(t, base, file) for t in top.tables("variant"))
    top.done()
    _check_structure(parameters, variants, combine, file)
    _check_new_keys(parameters, variants, base, base_file, file)
    canonical = {"definition": definition, "base_project": base}
    if digests:
        canonical["inputs"] = digests
    digest = hashlib.sha256(canonical_json(canonical).encode()).hexdigest()
    return StudySpec(
        file, name, description, base_file, base, task, options, combine,
        parameters, variants, copy.deepcopy(definition), digest,
    )  # fmt: skip


def _check_new_keys(parameters, variants, base: dict, base_file: Path, file: str) -> None:
    """A path whose last key the base project lacks adds that key: the base project is read
    with it (a parameter's first value; a variant's settings all together) so a misspelt key
    is named here, against the study file, instead of failing every case of the run. Only an
    unknown-name error is reported here (other rules may depend on values the study combines);
    paths the base project already has need no read."""
    from ..project import project_from_dict

    trials = [
        (f"vary[{j}].path", ((p.path, p.values[0]),))
        for j, p in enumerate(parameters)
        if _adds_key(base, p.path)
    ]
    trials += [
        (f"variant[{k}].set", v.assignments)
        for k, v in enumerate(variants)
        if any(_adds_key(base, path) for path, _value in v.assignments)
    ]
    for field, assignments in trials:
        trial = copy.deepcopy(base)
        for path, value in assignments:
            set_path(trial, path, value)
        try:
            project_from_dict(trial, base_file)
        except InputError as e:
            if not e.rule.startswith("unknown field"):
                continue
            for path, _value in assignments:
                last = parse_path(path)[-1]
                if _adds_key(base, path) and (e.field == path or e.field.endswith(f".{last}")):
                    raise InputError(
                        file,
                        field,
                        f"{path!r} adds {last!r}, which the base project does not have: {e.rule}",
                    ) from None


def _adds_key(base: dict, path: str) -> bool:
    steps = parse_path(path)
    node: Any = base
    for step in steps[:-1]:
        node = node[step]
    return isinstance(node, dict) and steps[-1] not in node


def _input_digests(inputs: list, folder: Path, file: str) -> dict[str, str]:
    """sha256 of each further input file (relative to the base project's folder)."""
    out = {}
    for i, rel in enumerate(inputs):
        if not isinstance(rel, str) or not is_file(folder / rel, file, f"study.inputs[{i}]"):
            raise InputError(
                file,
                f"study.inputs[{i}]",
                f"must name a file next to the base project, got {rel!r}",
            )
        out[rel] = hashlib.sha256((folder / rel).read_bytes()).hexdigest()
    return out


def canonical_json(value: Any) -> str:
    """Deterministic JSON (sorted keys, no spaces; dates as ISO text) used for hashes."""
    return json.dumps(value, sort_keys=True, separators=(",", ":"), default=str, ensure_ascii=False)


def _options(value: Any, file: str, field: str) -> dict:
    if not isinstance(value, dict):
        raise InputError(file, field, f"must be a table of options, got {value!r}")
    return copy.deepcopy(value)


def _parameter(t: Table, base: dict, file: str) -> Parameter:
    text = t.text("path")
    steps = parse_path(text, file=file, field=t.field("path"))
    container, last = _walk(base, steps, file, t.field("path"), text)
    current = container[last] if isinstance(last, int) or last in container else None
    if isinstance(current, (dict, list)):
        raise InputError(
            file, t.field("path"), f"{text!r} is a table or list in the base project; "
            "a varied parameter must be a number or quantity (use a [[variant]] to replace it)",
        )  # fmt: skip
    text_value = isinstance(current, str) and not _NUMBER_FIRST.match(current)
    if format_path(steps) in TEXT_FIELDS or text_value or isinstance(current, bool):
        raise InputError(
            file, t.field("path"), f"{text!r} is text or true/false in the base project, not a "
            "number or quantity; only numbers and quantities can be varied (a [[variant]] may "
            "set other values)",
        )  # fmt: skip
    kinds = [k for k in ("values", "grid", "random") if t.has(k)]
    if len(kinds) != 1:
        raise InputError(file, t.field("path"), "give exactly one of values, grid or random")
    kind = kinds[0]
    if kind == "values":
        values = _listed(t.array("values"), file, t.field("values"))
    else:
        sub = t.table(kind)
        values = _grid(sub, file) if kind == "grid" else _random(sub, file)
        sub.done()
    t.done()
    seen = set()
    for i, v in enumerate(values):
        key = canonical_json(v)
        if key in seen:
            raise InputError(
                file, t.field(kind), f"value {v!r} appears twice (item {i}); cases would repeat"
            )
        seen.add(key)
    return Parameter(format_path(steps), tuple(values), kind)


def _variant(t: Table, base: dict, file: str) -> Variant:
    name = t.text("name")
    if not name.strip():
        raise InputError(file, t.field("name"), "must not be empty")
    settings = t.raw("set", {})
    if not isinstance(settings, dict):
        raise InputError(file, t.field("set"), f"must be a table of path = value, got {settings!r}")
    assignments = []
    for text, value in _flatten(settings, (), file, t.field("set")):
        steps_text = format_path(text)
        _walk(base, text, file, t.field("set"), steps_text)
        assignments.append((steps_text, copy.deepcopy(value)))
    task = t.text("task", None, choices=TASKS) if t.has("task") else None
    options = _options(t.raw("options"), file, t.field("options")) if t.has("options") else None
    t.done()
    return Variant(name, tuple(assignments), task, options)


def _flatten(table: dict, prefix: tuple, file: str, field: str) -> Iterator[tuple[tuple, Any]]:
    """Nested tables in ``set`` read as dotted paths: ``{a = {b = 1}}`` sets ``a.b``."""
    for key, value in table.items():
        steps = prefix + parse_path(key, file=file, field=f"{field}.{key}")
        if isinstance(value, dict):
            if not value:
                raise InputError(
                    file, f"{field}.{key}", "empty table; set each value by its dotted path"
                )
            yield from _flatten(value, steps, file, field)
        else:
            yield steps, value


# ---------------------------------------------------------------------------- structure


def _check_structure(parameters, variants, combine: str, file: str) -> None:
    if not parameters and not variants:
        raise InputError(
            file, "vary", "empty study: give at least one [[vary]] parameter or [[variant]]"
        )
    seen: dict[str, int] = {}
    for i, v in enumerate(variants):
        if v.name in seen:
            raise InputError(
                file,
                f"variant[{i}].name",
                f"duplicate variant name {v.name!r} (also variant[{seen[v.name]}])",
            )
        seen[v.name] = i
    steps = [parse_path(p.path) for p in parameters]
    for i, j in itertools.combinations(range(len(parameters)), 2):
        if _overlap(steps[i], steps[j]):
            raise InputError(
                file,
                f"vary[{j}].path",
                f"{parameters[j].path!r} overlaps vary[{i}] ({parameters[i].path!r})",
            )
    for k, v in enumerate(variants):
        for path, _ in v.assignments:
            for i, s in enumerate(steps):
                if _overlap(parse_path(path), s):
                    raise InputError(
                        file,
                        f"variant[{k}].set",
                        f"{path!r} overlaps vary[{i}] ({parameters[i].path!r})",
                    )
    if combine == "zip" and len({len(p.values) for p in parameters}) > 1:
        sizes = ", ".join(f"{p.path}: {len(p.values)}" for p in parameters)
        raise InputError(
            file, "study.combine", f"zip needs the same number of values per parameter ({sizes})"
        )
    n = count_cases(parameters, variants, combine)
    if n > MAX_CASES:
        raise InputError(
            file, "vary", f"study expands to {n} cases; at most {MAX_CASES} are allowed"
        )


def count_cases(parameters, variants, combine: str) -> int:
    """Number of cases the study expands to."""
    if not parameters:
        per = 1
    elif combine == "zip":
        per = len(parameters[0].values)
    else:
        per = math.prod(len(p.values) for p in parameters)
    return per * max(1, len(variants))


def expand(spec: StudySpec) -> list[Case]:
    """All cases of the study, in a deterministic order.

    Variants are the outer loop (always crossed with the parameters). With ``combine =
    "product"`` the parameters form the full product, the last one varying fastest; with
    ``"zip"`` their i-th values go together.
    """
    paths = [p.path for p in spec.parameters]
    lists = [p.values for p in spec.parameters]
    if spec.combine == "zip" and lists:
        combos = list(zip(*lists, strict=True))
    else:
        combos = list(itertools.product(*lists))
    variants = spec.variants or (None,)
    cases: list = []
    for variant in variants:
        for combo in combos:
            values = dict(zip(paths, combo, strict=True))
            fixed = variant.assignments if variant else ()
            task = (variant.task if variant else None) or spec.task
            options = {**spec.options, **((variant.options or {}) if variant else {})}
            name = variant.name if variant else None
            assigned = (*fixed, *values.items())
            key = {"variant": name, "set": list(assigned), "task": task, "options": options}
            cid = hashlib.sha256(canonical_json(key).encode()).hexdigest()[:16]
            cases.append(Case(cid, len(cases), name, values, assigned, task, options))
    return cases
