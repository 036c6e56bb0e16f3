"""A ``[[stage]]`` table -> :class:`StageType`: its kind, ratios (a list or a range),
efficiency model and band, life exponent, and its frame sizes with their ratings. Frames come
from ``[[stage.frame]]`` tables and from rows of a frames CSV (attached by :mod:`.io`).

Bad input raises :class:`~jointwright.errors.InputError` naming the file, the field and the rule
(docs/catalog-format.md).
"""

from __future__ import annotations

import math

from ..errors import InputError
from ..tomlfile import Table
from ..units import positive
from .bands import band_from_dict, check_band
from .efficiency import efficiency_from_dict
from .entries import at_most, check_entry_keys, entry_name, read_values
from .model import LIFE_BASES, STAGE_KINDS, StageFrame, StageType

#: StageFrame field -> (dimension, sign rule)
FRAME_FIELDS: dict[str, tuple[str, str]] = {
    "rated_peak_torque": ("torque", "positive"),
    "rated_continuous_torque": ("torque", "positive"),
    "mass": ("mass", "positive"),
    "input_inertia": ("inertia", "nonnegative"),
    "breakaway_torque": ("torque", "nonnegative"),
    "backlash": ("angle", "nonnegative"),
    "stiffness": ("stiffness_torsional", "positive"),
    "diameter": ("length", "nonnegative"),
    "length": ("length", "nonnegative"),
    "cost": ("dimensionless", "nonnegative"),
}

#: StageFrame life and shock ratings (docs/catalog-format.md, "Life and shock ratings")
FRAME_RATING_FIELDS: dict[str, tuple[str, str]] = {
    "rated_life_torque": ("torque", "positive"),
    "rated_life_speed": ("angular_velocity", "positive"),
    "rated_life_input_speed": ("angular_velocity", "positive"),
    "rated_life": ("lifetime", "positive"),
    "rated_momentary_torque": ("torque", "positive"),
}
FRAME_FIELDS.update(FRAME_RATING_FIELDS)

_STAGE_KEYS = (
    "name",
    "kind",
    "ratios",
    "ratio_range",
    "efficiency",
    "frame",
    "life_exponent",
    "efficiency_band",
)


def read_frame(t: Table) -> StageFrame:
    check_entry_keys(t, ("name", *FRAME_FIELDS))
    kw = read_values(t, FRAME_FIELDS, StageFrame)
    at_most(t, kw, "rated_continuous_torque", "rated_peak_torque", "N·m")
    _frame_ratings(t, kw)
    return StageFrame(name=entry_name(t), **kw)


# --- stages: life and shock ratings ---------------------------------------------------------

_LIFE_KEYS = ("rated_life_torque", "rated_life")
_LIFE_SPEEDS = ("rated_life_speed", "rated_life_input_speed")


def _frame_ratings(t: Table, kw: dict) -> None:
    """A rated life needs its torque, life and exactly one speed; ratings order with the peak."""
    life = [k for k in (*_LIFE_KEYS, *_LIFE_SPEEDS) if k in kw]
    speeds = [k for k in _LIFE_SPEEDS if k in kw]
    if len(speeds) == 2:
        raise InputError(
            t.file,
            t.field(speeds[1]),
            "give the rated life's speed once: at the output (rated_life_speed) or at the "
            "input (rated_life_input_speed)",
        )
    if life:
        missing = [k for k in _LIFE_KEYS if k not in kw] or (
            ["rated_life_speed"] if not speeds else []
        )
        if missing:
            raise InputError(
                t.file,
                t.field(missing[0]),
                f"is required with {life[0]}: a rated life needs rated_life_torque, rated_life "
                "and rated_life_speed (or rated_life_input_speed)",
            )
        if kw["rated_life_torque"] > kw["rated_peak_torque"]:
            raise InputError(
                t.file,
                t.field("rated_life_torque"),
                f"must not exceed rated_peak_torque ({kw['rated_peak_torque']:g} N·m), got "
                f"{kw['rated_life_torque']:g} N·m",
            )
    if kw.get("rated_momentary_torque", math.inf) < kw["rated_peak_torque"]:
        raise InputError(
            t.file,
            t.field("rated_momentary_torque"),
            f"must be at least rated_peak_torque ({kw['rated_peak_torque']:g} N·m, the repeated "
            f"peak), got {kw['rated_momentary_torque']:g} N·m",
        )


def _life_exponent(t: Table) -> float | None:
    """A stage's ``life_exponent``: a number > 0 or a named basis (LIFE_BASES)."""
    if not t.has("life_exponent"):
        return None
    raw = t.raw("life_exponent")
    if isinstance(raw, str) and raw in LIFE_BASES:
        return LIFE_BASES[raw]
    if isinstance(raw, (int, float)) and not isinstance(raw, bool) and 0 < raw <= 20:
        return float(raw)
    raise InputError(
        t.file,
        t.field("life_exponent"),
        f"must be {' or '.join(repr(k) for k in LIFE_BASES)} or a number from 0 to 20 (the "
        f"supplier's life exponent), got {raw!r}",
    )


class StageDraft:
    """A ``[[stage]]`` table read up to its frames, which CSV rows may still add to."""

    def __init__(self, t: Table):
        check_entry_keys(t, _STAGE_KEYS)
        self.t = t
        self.name = entry_name(t)
        self.kind = t.text("kind", choices=STAGE_KINDS)
        self.ratios, self.ratio_range = _ratios(t)
        self.efficiency = efficiency_from_dict(
            t.raw("efficiency"), file=t.file, field=t.field("efficiency")
        )
        check = getattr(self.efficiency, "check_ratios", None)
        if check is not None:
            key = "ratios" if self.ratios is not None else "ratio_range"
            check(self.ratios or self.ratio_range, file=t.file, field=t.field(key))
        self.frames = [(read_frame(ft), ft) for ft in t.tables("frame")]
        self.life_exponent = _life_exponent(t)
        self.band = None  # efficiency band (catalog.bands), None when the stage states none
        if t.has("efficiency_band"):
            where = t.field("efficiency_band")
            self.band = band_from_dict(
                t.raw("efficiency_band"), self.efficiency, file=t.file, field=where
            )
            check_band(self.band, self.ratios, self.ratio_range, file=t.file, field=where)

    def build(self) -> StageType:
        if not self.frames:
            raise InputError(
                self.t.file,
                self.t.field("frame"),
                "a stage needs at least one "
                "frame size ([[stage.frame]] or a row of a frames_csv table)",
            )
        seen: dict[str, Table] = {}
        for frame, ft in self.frames:
            if frame.name in seen:
                raise InputError(
                    ft.file,
                    ft.field("name"),
                    f"duplicate frame name {frame.name!r} in stage {self.name!r}",
                )
            seen[frame.name] = ft
        rated = [ft for frame, ft in self.frames if frame.rated_life is not None]
        if rated and self.life_exponent is None:
            raise InputError(
                self.t.file,
                self.t.field("life_exponent"),
                f"is required: frame {rated[0].path} states a rated life; give the life "
                'exponent ("ball_bearing" = 3, "roller_bearing" = 10/3 per ISO 281, or the '
                "supplier's number)",
            )
        return StageType(
            name=self.name,
            kind=self.kind,
            efficiency=self.efficiency,
            frames=tuple(f for f, _ in self.frames),
            ratios=self.ratios,
            ratio_range=self.ratio_range,
            life_exponent=self.life_exponent,
            efficiency_band=self.band,
        )


def _ratios(t: Table):
    """``(ratios, None)`` or ``(None, (low, high))``; exactly one of the two keys is given."""
    if t.has("ratios") == t.has("ratio_range"):
        raise InputError(
            t.file,
            t.field("ratios"),
            "give exactly one of ratios = [...] "
            "(discrete) or ratio_range = [low, high] (continuous)",
        )
    if t.has("ratios"):
        raw = t.array("ratios")
        if not raw:
            raise InputError(t.file, t.field("ratios"), "must list at least one ratio")
        values = [
            positive(v, "ratio", file=t.file, field=f"{t.field('ratios')}[{i}]")
            for i, v in enumerate(raw)
        ]
        for i in range(1, len(values)):
            if values[i] <= values[i - 1]:
                raise InputError(
                    t.file,
                    f"{t.field('ratios')}[{i}]",
                    f"ratios must be strictly ascending, got {values[i]:g} after {values[i - 1]:g}",
                )
        return tuple(values), None
    lo, hi = t.vector("ratio_range", 2, dimension="ratio")
    if not lo > 0:
        raise InputError(t.file, f"{t.field('ratio_range')}[0]", f"must be > 0, got {lo:g}")
    if not hi > lo:
        raise InputError(
            t.file, t.field("ratio_range"), f"low must be below high, got [{lo:g}, {hi:g}]"
        )
    return None, (lo, hi)
