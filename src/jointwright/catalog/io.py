"""Catalog files: TOML (motors, motor families, stage types with frames) and CSV tables.

The format is documented with complete examples in docs/catalog-format.md. In short:

* a catalog TOML holds ``[[motor]]``, ``[[motor_family]]`` and ``[[stage]]`` tables (each stage
  with ``[[stage.frame]]`` frame sizes), and may point to CSV tables with ``motors_csv`` (one
  motor per row) and ``frames_csv`` (one stage frame per row, the ``stage`` column naming the
  stage type it belongs to);
* a motors CSV can also be loaded on its own;
* CSV header cells may carry a unit in brackets (``peak_torque [N*m]``) that applies to plain
  numbers in the column; any cell may carry its own unit (``"0.8 kg*cm^2"``).

Bad input raises :class:`~jointwright.errors.InputError` naming the file, the field
(``motor[3].mass``, ``row 7, column mass``) and the rule. Values outside the typical range of a
stage kind are not errors: they become lines in :attr:`Catalog.notes`.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import NamedTuple

import numpy as np

from ..errors import InputError, did_you_mean
from ..tomlfile import Table, load_toml
from ..units import positive
from .csvfile import CsvRow, csv_lines, csv_rows, read_csv, split_header
from .drives import drive_from_table
from .entries import at_most, check_entry_keys, entry_name, read_values
from .model import Catalog, Motor, MotorFamily, StageType
from .stage_table import FRAME_FIELDS, StageDraft, read_frame

#: Motor field -> (dimension for units.quantity, sign rule)
MOTOR_FIELDS: dict[str, tuple[str, str]] = {
    "peak_torque": ("torque", "positive"),
    "continuous_torque": ("torque", "positive"),
    "rotor_inertia": ("inertia", "positive"),
    "mass": ("mass", "positive"),
    "max_speed": ("angular_velocity", "positive"),
    "torque_constant": ("torque_constant", "positive"),
    "resistance": ("resistance", "positive"),
    "bus_voltage": ("voltage", "positive"),
    "thermal_resistance": ("thermal_resistance", "positive"),
    "thermal_time_constant": ("time", "positive"),
    "winding_temperature_max": ("temperature", "any"),
    "cogging_torque": ("torque", "nonnegative"),
    "diameter": ("length", "nonnegative"),
    "length": ("length", "nonnegative"),
    "cost": ("dimensionless", "nonnegative"),
}

#: typical single-stage ratio (low, high) and forward efficiency (low, high) per stage kind
#: [trade, see REFERENCES.md]; None where no range is customary (screws: the ratio is rad/m)
TYPICAL: dict[str, tuple[tuple[float, float] | None, tuple[float, float]]] = {
    "spur": ((1.0, 10.0), (0.97, 0.995)),
    "planetary": ((3.0, 10.0), (0.95, 0.98)),
    "cycloidal": ((10.0, 100.0), (0.75, 0.93)),
    "strain_wave": ((30.0, 160.0), (0.60, 0.85)),
    "belt": ((1.0, 8.0), (0.94, 0.98)),
    "cable": (None, (0.95, 0.99)),
    "ball_screw": (None, (0.90, 0.95)),
    "lead_screw": (None, (0.20, 0.80)),
    "worm": (None, (0.40, 0.90)),
}

#: efficiency models that describe one stage kind only (others suit any kind)
MODEL_KINDS = {
    "screw": ("ball_screw", "lead_screw"),
    "worm": ("worm",),
    "planetary_basic_train": ("planetary",),
}

_TOP_KEYS = (
    "description",
    "motor",
    "motor_family",
    "stage",
    "motors_csv",
    "frames_csv",
    "drive",
)


class _Where(NamedTuple):
    file: str
    field: str


class _Part(NamedTuple):
    """What one file contributes, with where each item was defined."""

    motors: list[tuple[Motor, _Where]]
    families: list[tuple[MotorFamily, _Where]]
    stages: list[tuple[StageType, _Where]]
    notes: list[str]
    drives: tuple | list = ()  # (catalog.drives.Drive, _Where) pairs


# --- public API ----------------------------------------------------------------------------


def load_catalog(path: str | Path) -> Catalog:
    """Load one catalog file.

    Parameters
    ----------
    path : a catalog ``.toml`` (which may name CSV tables), or a motors ``.csv``

    Returns
    -------
    Catalog
        SI values; warnings about atypical stages in ``notes``; ``source`` is the path.

    Raises
    ------
    InputError
        Missing or malformed file, or any invalid entry (see docs/catalog-format.md).
    """
    return load_catalogs([path])


def load_catalogs(paths) -> Catalog:
    """Load several catalog files into one :class:`Catalog`, in the order given.

    Parameters
    ----------
    paths : iterable of str or Path, at least one

    Returns
    -------
    Catalog
        Motors, families and stages of all files concatenated; notes in file order; ``source``
        lists the files separated by ``"; "``.

    Raises
    ------
    InputError
        As :func:`load_catalog`, and for a name used twice: motors (including every
        motor-family member), motor families and stage types are unique across all files.
    """
    paths = [Path(p) for p in paths]
    if not paths:
        raise InputError("<api>", "paths", "give at least one catalog file")
    parts = [_load_part(p) for p in paths]
    return _merge(parts, source="; ".join(str(p) for p in paths))


# --- files ---------------------------------------------------------------------------------


def _load_part(path: Path) -> _Part:
    suffix = path.suffix.lower()
    if suffix == ".toml":
        return _toml_part(path)
    if suffix == ".csv":
        header_line, header, lines = csv_lines(path)
        if any(split_header(cell)[0] == "stage" for cell in header):
            raise InputError(
                str(path),
                f"row {header_line}, column stage",
                "a stage-frames "
                "table cannot be loaded on its own: name it in a catalog TOML "
                "(frames_csv = ...)",
            )
        rows = csv_rows(str(path), header_line, header, lines, ("name", *MOTOR_FIELDS))
        part = _Part([(_motor(row), _Where(row.file, row.path)) for row in rows], [], [], [])
        _require_content(part, path)
        return part
    raise InputError(str(path), "(file)", "a catalog file must end in .toml or .csv")


def _toml_part(path: Path) -> _Part:
    file = str(path)
    top = Table(load_toml(path), file, "")
    check_entry_keys(top, _TOP_KEYS)
    if top.has("description") and not isinstance(top.raw("description"), str):
        raise InputError(file, "description", "must be a string")
    drives = [(drive_from_table(t), _Where(file, t.path)) for t in top.tables("drive")]
    part = _Part([], [], [], [], drives)
    for t in top.tables("motor"):
        part.motors.append((_motor(t), _Where(file, t.path)))
    for csv_path in _paths(top, "motors_csv", path.parent):
        for row in read_csv(csv_path, allowed=("name", *MOTOR_FIELDS)):
            part.motors.append((_motor(row), _Where(row.file, row.path)))
    for t in top.tables("motor_family"):
        part.families.append((_family(t), _Where(file, t.path)))
    stages = [StageDraft(t) for t in top.tables("stage")]
    for csv_path in _paths(top, "frames_csv", path.parent):
        _attach_frames(stages, csv_path, file)
    for draft in stages:
        stage = draft.build()
        part.stages.append((stage, _Where(file, draft.t.path)))
        part.notes.extend(_stage_notes(stage, _Where(file, draft.t.path)))
    _require_content(part, path)
    return part


def _paths(top: Table, key: str, base: Path) -> list[Path]:
    value = top.raw(key, [])
    items = [value] if isinstance(value, str) else value
    if not isinstance(items, list) or not all(isinstance(v, str) and v for v in items):
        raise InputError(
            top.file, key, f"must be a file name or a list of file names, got {value!r}"
        )
    return [base / v for v in items]


def _require_content(part: _Part, path: Path) -> None:
    if not (part.motors or part.families or part.stages or part.drives):
        raise InputError(str(path), "(top level)", "defines no motor, motor_family, stage or drive")


# --- motors --------------------------------------------------------------------------------


def _motor(t: Table, default_name: str | None = None) -> Motor:
    for key in ("family", "size"):
        if t.has(key):
            raise InputError(
                t.file,
                t.field(key),
                "is set by the catalog for members of a "
                "[[motor_family]]; a plain motor does not take it",
            )
    check_entry_keys(t, ("name", *MOTOR_FIELDS))
    kw = read_values(t, MOTOR_FIELDS, Motor)
    at_most(t, kw, "continuous_torque", "peak_torque", "N·m")
    if kw.get("cogging_torque", 0.0) >= kw["continuous_torque"]:
        raise InputError(
            t.file,
            t.field("cogging_torque"),
            "must be below continuous_torque "
            f"({kw['continuous_torque']:g} N·m), got {kw['cogging_torque']:g} N·m",
        )
    t_max = kw.get("winding_temperature_max", math.inf)
    if t_max <= 20.0:
        raise InputError(
            t.file,
            t.field("winding_temperature_max"),
            f"must be above 20 °C (the winding reference temperature), got {t_max:g} °C",
        )
    return Motor(name=entry_name(t, default_name), **kw)


def _family(t: Table) -> MotorFamily:
    check_entry_keys(t, ("name", "reference", "sizes", *FAMILY_SPEED_FIELDS))
    name = entry_name(t)
    reference = _motor(t.table("reference"), default_name=name)
    raw = t.array("sizes")
    if not raw:
        raise InputError(
            t.file, t.field("sizes"), "must list at least one [gap_radius_scale, length_scale] pair"
        )
    sizes = []
    for i, pair in enumerate(raw):
        where = f"{t.field('sizes')}[{i}]"
        if not isinstance(pair, list) or len(pair) != 2:
            raise InputError(
                t.file, where, f"must be [gap_radius_scale, length_scale], got {pair!r}"
            )
        s, length = (
            positive(v, "dimensionless", file=t.file, field=f"{where}[{j}]")
            for j, v in enumerate(pair)
        )
        if (s, length) in sizes:
            raise InputError(t.file, where, f"size [{s:g}, {length:g}] is listed twice")
        sizes.append((s, length))
    return MotorFamily(name=name, reference=reference, sizes=tuple(sizes), **_family_speed(t))


# --- motor families: mechanical speed limit ------------------------------------------------

#: a family's mechanical speed limit at size 1 and its scaling exponent (docs/catalog-format.md)
FAMILY_SPEED_FIELDS = ("speed_limit", "speed_limit_scaling")


def _family_speed(t: Table) -> dict[str, float]:
    """``speed_limit`` and ``speed_limit_scaling`` of a ``[[motor_family]]``: both or neither."""
    given = [k for k in FAMILY_SPEED_FIELDS if t.has(k)]
    if not given:
        return {}
    if len(given) == 1:
        missing = next(k for k in FAMILY_SPEED_FIELDS if k not in given)
        raise InputError(
            t.file,
            t.field(missing),
            f"is required with {given[0]}: a mechanical speed limit states how it scales "
            "with the gap radius (-1 keeps the rotor surface speed)",
        )
    limit = t.quantity("speed_limit", "angular_velocity", sign="positive")
    scaling = t.quantity("speed_limit_scaling", "dimensionless")
    if not -3.0 <= scaling <= 0.0:
        raise InputError(
            t.file,
            t.field("speed_limit_scaling"),
            f"must be from -3 to 0 (a larger rotor is not allowed a higher speed), got {scaling:g}",
        )
    return {"speed_limit": limit, "speed_limit_scaling": scaling}


# --- stage frames from a CSV table ----------------------------------------------------------


def _attach_frames(stages: list[StageDraft], path: Path, toml_file: str) -> None:
    by_name = {d.name: d for d in stages}
    for row in read_csv(path, allowed=("stage", "name", *FRAME_FIELDS)):
        stage = row.text("stage")
        if stage not in by_name:
            raise InputError(
                row.file,
                row.field("stage"),
                f"no [[stage]] named {stage!r} in {toml_file}{did_you_mean(stage, by_name)}",
            )
        data = {k: v for k, v in row.data.items() if k != "stage"}
        frame_row = CsvRow(data, row.file, row.path)
        by_name[stage].frames.append((read_frame(frame_row), frame_row))


# --- notes ---------------------------------------------------------------------------------


def _stage_notes(stage: StageType, where: _Where) -> list[str]:
    """Warnings for values outside the typical range of the stage kind, and self-locking."""
    at = f"{where.file}: {where.field} ({stage.name!r}, {stage.kind})"
    if stage.ratios is not None:
        ratios = np.array(stage.ratios)
    else:  # a continuous range: sample it, a tabulated efficiency may dip inside
        lo, hi = stage.ratio_range or (math.nan, math.nan)
        ratios = np.geomspace(lo, hi, 9)
    forward, backward = stage.efficiency.pair(ratios)
    ratio_typ, eta_typ = TYPICAL[stage.kind]
    notes = []
    model = getattr(stage.efficiency, "kind", "")
    if stage.kind not in MODEL_KINDS.get(model, (stage.kind,)):
        notes.append(
            f"{at}: efficiency model {model!r} is meant for "
            f"{' or '.join(MODEL_KINDS[model])} stages"
        )
    if ratio_typ is not None and (ratios.min() < ratio_typ[0] or ratios.max() > ratio_typ[1]):
        notes.append(
            f"{at}: ratios {ratios.min():g}-{ratios.max():g} reach outside the typical "
            f"single-stage {ratio_typ[0]:g}-{ratio_typ[1]:g} [trade]"
        )
    out = (forward < eta_typ[0] - 1e-12) | (forward > eta_typ[1] + 1e-12)
    if np.any(out):
        notes.append(
            f"{at}: forward efficiency {forward[out][0]:.3f} at ratio {ratios[out][0]:g} "
            f"is outside the typical {eta_typ[0] * 100:g}-{eta_typ[1] * 100:g} % [trade]"
        )
    if np.any(backward <= 0):
        notes.append(
            f"{at}: self-locking (backward efficiency {backward.min():.3f} ≤ 0): a joint "
            "with this stage cannot be back-driven and holds its load unpowered; it can "
            "trap or crush. Apply the applicable machinery safety standards."
        )
    return notes


# --- merging and checks --------------------------------------------------------------------


def _merge(parts: list[_Part], *, source: str) -> Catalog:
    seen: dict[tuple[str, str], _Where] = {}

    def claim(what: str, name: str, where: _Where) -> None:
        if (what, name) in seen:
            first = seen[(what, name)]
            raise InputError(
                where.file,
                where.field,
                f"duplicate {what} name {name!r} (first defined in {first.file} at {first.field})",
            )
        seen[(what, name)] = where

    for part in parts:
        for motor, where in part.motors:
            claim("motor", motor.name, where)
        for family, where in part.families:
            claim("motor family", family.name, where)
            for member in family.members():
                claim("motor", member.name, _Where(where.file, f"{where.field}.sizes"))
        for stage, where in part.stages:
            claim("stage", stage.name, where)
        for drive, where in part.drives:
            claim("drive", drive.name, where)
    return Catalog(
        motors=tuple(m for p in parts for m, _ in p.motors),
        stages=tuple(s for p in parts for s, _ in p.stages),
        families=tuple(f for p in parts for f, _ in p.families),
        source=source,
        notes=tuple(n for p in parts for n in p.notes),
        drives=tuple(d for p in parts for d, _ in p.drives),
    )
