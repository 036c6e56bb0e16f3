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
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterator

from ..errors import InputError
from ..tomlfile import Table, is_file, load_toml

#: version of the study file format this module reads
STUDY_FORMAT = 1
#: what a case can run
TASKS = ("size", "frontier")
#: how the varied parameters combine
COMBINE = ("product", "zip")
#: largest number of cases one study may expand to
MAX_CASES = 1_000_000

_BARE = re.compile(r"[A-Za-z0-9_-]+")
_NUMBER_FIRST = re.compile(r"\s*[-+]?(\d|\.\d|inf|nan)", re.IGNORECASE)
#: project fields that are text, not numbers: never varied (a [[variant]] may set them)
TEXT_FIELDS = ("project.name", "project.summary")
_INDEX = re.compile(r"\[(\d+)\]")


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


# ---------------------------------------------------------------------------------- paths


def parse_path(text: Any, *, file: str = "<api>", field: str = "path") -> tuple[str | int, ...]:
    """Split a dotted path into keys (str) and list indices (int).

    Grammar: ``segment ("." segment)*``; a segment is a bare key ``[A-Za-z0-9_-]+`` or a
    double-quoted key, followed by any number of ``[index]``. Example:
    ``robot.links."upper.arm".inertia[2]`` -> ``("robot", "links", "upper.arm", "inertia", 2)``.
    """
    if not isinstance(text, str) or not text:
        raise InputError(
            file, field, f"must be a dotted path such as robot.links.thigh.length, got {text!r}"
        )
    steps: list[str | int] = []
    pos, expect_key = 0, True
    while pos < len(text):
        if expect_key:
            if text[pos] == '"':
                end = text.find('"', pos + 1)
                if end < 0:
                    raise InputError(file, field, f"unclosed quote in path {text!r}")
                steps.append(text[pos + 1 : end])
                pos = end + 1
            else:
                m = _BARE.match(text, pos)
                if not m:
                    raise InputError(
                        file, field, f"bad key at character {pos + 1} of path {text!r}"
                    )
                steps.append(m.group())
                pos = m.end()
            expect_key = False
        elif (m := _INDEX.match(text, pos)) is not None:
            steps.append(int(m.group(1)))
            pos = m.end()
        elif text[pos] == ".":
            pos, expect_key = pos + 1, True
        else:
            raise InputError(file, field, f"bad character {text[pos]!r} in path {text!r}")
    if expect_key:
        raise InputError(file, field, f"path {text!r} ends with a dot")
    return tuple(steps)


def format_path(steps: tuple[str | int, ...]) -> str:
    """Inverse of :func:`parse_path` (quotes keys that are not bare)."""
    out = ""
    for s in steps:
        if isinstance(s, int):
            out += f"[{s}]"
        else:
            key = s if _BARE.fullmatch(s) else f'"{s}"'
            out += f".{key}" if out else key
    return out


def _walk(project: dict, steps: tuple, file: str, field: str, text: str) -> tuple[Any, Any]:
    """Return (container, last step) for ``steps``; every container on the way must exist."""
    node: Any = project
    for depth, step in enumerate(steps):
        where = format_path(steps[:depth]) or "the top level"
        if isinstance(step, int):
            if not isinstance(node, list):
                raise InputError(
                    file, field, f"{text!r}: {where} is not a list in the base project"
                )
            if step >= len(node):
                raise InputError(
                    file, field, f"{text!r}: {where} has {len(node)} items, no [{step}]"
                )
        elif not isinstance(node, dict):
            raise InputError(file, field, f"{text!r}: {where} is not a table in the base project")
        elif step not in node and depth < len(steps) - 1:
            raise InputError(
                file, field, f"{text!r}: the base project has no {format_path(steps[: depth + 1])}"
            )
        if depth == len(steps) - 1:
            return node, step
        node = node[step]
    raise InputError(file, field, "empty path")


def set_path(project: dict, path: str, value: Any) -> None:
    """Set ``value`` at dotted ``path`` in ``project`` (in place; the parent must exist)."""
    steps = parse_path(path)
    container, last = _walk(project, steps, "<api>", "path", path)
    container[last] = copy.deepcopy(value)


def case_project(spec: StudySpec, case: Case) -> dict:
    """The base project with the case's assignments applied (a fresh deep copy)."""
    project = copy.deepcopy(spec.base_project)
    for path, value in case.assignments:
        set_path(project, path, value)
    return project


def _overlap(a: tuple, b: tuple) -> bool:
    n = min(len(a), len(b))
    return a[:n] == b[:n]


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
    canonical = {"definition": definition, "base_project": base}
    if digests:
        canonical["inputs"] = digests
    digest = hashlib.sha256(canonical_json(canonical).encode()).hexdigest()
    return StudySpec(
        file, name, description, base_file, base, task, options, combine,
        parameters, variants, copy.deepcopy(definition), digest,
    )  # fmt: skip


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


# ------------------------------------------------------------------------ value sources


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _as_quantity(v: Any, file: str, field: str):
    """(magnitude, unit text or None, dimensionality or None) of a number or quantity string."""
    if _is_number(v):
        if isinstance(v, int) and abs(v) > 2**1023:
            raise InputError(file, field, f"must be finite, got a {len(str(abs(v)))}-digit number")
        if not math.isfinite(v):
            raise InputError(file, field, f"must be finite, got {v!r}")
        return float(v), None, None
    if not isinstance(v, str):
        raise InputError(
            file, field, f"must be a number or a quantity string such as '2 kg', got {v!r}"
        )
    try:
        return float(v), None, None
    except ValueError:
        pass
    if not _NUMBER_FIRST.match(v):
        raise InputError(
            file, field, f"must be a number or a quantity string such as '2 kg', got {v!r}"
        )
    from ..units import registry

    try:
        q = registry().Quantity(v.strip())
    except Exception:
        raise InputError(file, field, f"cannot read {v!r} as a number with a unit") from None
    if not math.isfinite(float(q.magnitude)):
        raise InputError(file, field, f"must be finite, got {v!r}")
    return float(q.magnitude), format(q.units, "~C"), q.dimensionality


def _same_dimension(items: list, file: str, field: str) -> None:
    dims = {str(d) for _, _, d in items}
    if len(dims) > 1:
        if "None" in dims:
            raise InputError(
                file,
                field,
                "mixes plain numbers and quantities with units; write every value with its unit",
            )
        raise InputError(
            file, field, f"values have different dimensions: {', '.join(sorted(dims))}"
        )


def _listed(values: list, file: str, field: str) -> list:
    if not values:
        raise InputError(file, field, "must list at least one value")
    items = [_as_quantity(v, file, f"{field}[{i}]") for i, v in enumerate(values)]
    _same_dimension(items, file, field)
    return list(values)


def _endpoints(t: Table, keys: tuple[str, str], scale: str) -> tuple[float, float, str | None]:
    a, b = (t.raw(k) for k in keys)
    qa = _as_quantity(a, t.file, t.field(keys[0]))
    qb = _as_quantity(b, t.file, t.field(keys[1]))
    _same_dimension([qa, qb], t.file, t.field(keys[1]))
    lo, hi, unit = qa[0], qb[0], qa[1]
    if unit is not None and qb[1] != unit:
        from ..units import registry

        hi = float(registry().Quantity(b.strip()).to(unit).magnitude)
    if scale == "log" and not (lo > 0 and hi > 0):
        raise InputError(
            t.file,
            t.field(keys[0]),
            f"log scale needs {keys[0]} and {keys[1]} > 0, got {a!r}, {b!r}",
        )
    return lo, hi, unit


def _count(t: Table, key: str) -> int:
    n = t.raw(key)
    if not isinstance(n, int) or isinstance(n, bool) or n < 1:
        raise InputError(t.file, t.field(key), f"must be a whole number >= 1, got {n!r}")
    if n > MAX_CASES:
        got = n if n < 10**12 else f"a {len(str(n))}-digit number"
        raise InputError(
            t.file,
            t.field(key),
            f"must be at most {MAX_CASES} (the most cases a study may have), got {got}",
        )
    return n


def _written(xs, unit: str | None) -> list:
    """Round to 12 significant digits (so 0.30000000000000004 reads 0.3) and re-attach the unit."""
    out = [float(f"{float(x):.12g}") for x in xs]
    return out if unit is None else [f"{x!r} {unit}" for x in out]


def _grid(t: Table, file: str) -> list:
    """``{start, stop, num, scale}``: ``num`` points from start to stop inclusive."""
    import numpy as np

    scale = t.text("scale", "linear", choices=("linear", "log"))
    start, stop, unit = _endpoints(t, ("start", "stop"), scale)
    num = _count(t, "num")
    if num > 1 and start == stop:
        raise InputError(
            file, t.field("stop"), f"must differ from start when num > 1, got {start!r}"
        )
    xs = np.geomspace(start, stop, num) if scale == "log" else np.linspace(start, stop, num)
    return _written(xs, unit)


def _random(t: Table, file: str) -> list:
    """``{low, high, count, seed, scale}``: uniform samples (of the log when scale = log)."""
    import numpy as np

    scale = t.text("scale", "linear", choices=("linear", "log"))
    low, high, unit = _endpoints(t, ("low", "high"), scale)
    if not low < high:
        raise InputError(
            file, t.field("high"), f"must be greater than low, got low={low!r}, high={high!r}"
        )
    count = _count(t, "count")
    seed = t.raw("seed")
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise InputError(file, t.field("seed"), f"must be a whole number >= 0, got {seed!r}")
    rng = np.random.default_rng(seed)
    if scale == "log":
        xs = np.exp(rng.uniform(math.log(low), math.log(high), count))
    else:
        xs = rng.uniform(low, high, count)
    return _written(xs, unit)


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
