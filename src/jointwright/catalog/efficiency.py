"""Forward and backward efficiency models of one gear stage.

Every model is a frozen dataclass with ``pair(ratio) -> (eta_forward, eta_backward)``, vectorized
over ``ratio`` (any array shape), and ``describe()``. Forward: power flows from the stage input
(motor side) to its output (joint side); backward: from the output to the input. A backward
efficiency ≤ 0 means the stage is self-locking: the load cannot drive it, and the magnitude of
the negative value is the torque needed to drive it backwards relative to the ideal torque (it can
be below −1 for a strongly self-locking screw or worm).

Parameters are validated when a model is built, from Python or from a catalog file through
:func:`efficiency_from_dict`; a bad value raises :class:`~jointwright.errors.InputError` naming the
file and the field. The formulas and their sources are listed in docs/catalog-format.md.
"""

from __future__ import annotations

import math
from dataclasses import MISSING, dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from ..errors import InputError, did_you_mean
from ..units import quantity, registry

_DEG = math.pi / 180.0

#: (file, field) of the model's own table, used in error messages
_API = ("<api>", "efficiency")


def _num(
    model: Any,
    name: str,
    lo: float,
    hi: float,
    *,
    lo_open: bool,
    hi_open: bool,
    angle: bool = False,
) -> float:
    """Check ``model.<name>`` is a real number in the interval; store and return it as float.

    Angles are checked in rad and shown in degrees in the message.
    """
    value = getattr(model, name)
    file, where = model.origin
    scale, unit = (1 / _DEG, "°") if angle else (1.0, "")
    left, right = "(" if lo_open else "[", ")" if hi_open else "]"
    interval = f"{left}{lo * scale:g}{unit}, {hi * scale:g}{unit}{right}"
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(file, f"{where}.{name}", f"must be a number in {interval}, got {value!r}")
    value = float(value)
    ok = (value > lo if lo_open else value >= lo) and (value < hi if hi_open else value <= hi)
    if not ok or math.isnan(value):
        hint = ' (a plain number is read as radians; write e.g. "5 deg")' if angle else ""
        raise InputError(
            file, f"{where}.{name}", f"must be in {interval}, got {value * scale:g}{unit}{hint}"
        )
    object.__setattr__(model, name, value)
    return value


def _fail(model: Any, name: str, rule: str) -> InputError:
    file, where = model.origin
    return InputError(file, f"{where}.{name}" if name else where, rule)


def _full(ratio: Any, forward: float, backward: float) -> tuple[np.ndarray, np.ndarray]:
    shape = np.shape(ratio)
    return np.full(shape, forward), np.full(shape, backward)


def _summary(model: Any) -> str:
    """``forward 0.503, backward 0.026[, self-locking]`` for a ratio-independent model."""
    f, b = (float(x) for x in model.pair(1.0))
    return f"forward {f:.3f}, backward {b:.3f}" + (", self-locking" if b <= 0 else "")


_BACKWARD_ABOVE_FORWARD = (
    "must not exceed the forward efficiency ({f:g}), got {b:g}: a friction loss does not shrink "
    'when the load drives the stage. For data where it does, use model = "proportional" '
    "(loss proportional to the input torque, backward = 1/(2 - forward))"
)


# --- ratio-independent models --------------------------------------------------------------


@dataclass(frozen=True, kw_only=True)
class ConstantEfficiency:
    """Two independent constants: 0 < forward ≤ 1, −1 < backward ≤ forward.

    The direction-dependent two-efficiency gear of the Modelica Standard Library
    (``Mechanics.Rotational.Components.LossyGear``).
    """

    kind: ClassVar[str] = "constant"
    params: ClassVar[dict[str, str]] = {"forward": "dimensionless", "backward": "dimensionless"}

    forward: float
    backward: float
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        f = _num(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)
        b = _num(self, "backward", -1.0, 1.0, lo_open=True, hi_open=False)
        if b > f:
            raise _fail(self, "backward", _BACKWARD_ABOVE_FORWARD.format(f=f, b=b))

    def pair(self, ratio):
        return _full(ratio, self.forward, self.backward)

    def describe(self) -> str:
        return f"constant: forward {self.forward:.3f}, backward {self.backward:.3f}"


@dataclass(frozen=True, kw_only=True)
class CoulombEfficiency:
    """Loss torque the same in both directions: backward = 2 − 1/forward.

    Exact only when the friction torque does not depend on which side drives; self-locking for
    forward ≤ 0.5.
    """

    kind: ClassVar[str] = "coulomb"
    params: ClassVar[dict[str, str]] = {"forward": "dimensionless"}

    forward: float
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        _num(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)

    @property
    def backward(self) -> float:
        return 2.0 - 1.0 / self.forward

    def pair(self, ratio):
        return _full(ratio, self.forward, self.backward)

    def describe(self) -> str:
        return f"coulomb: forward {self.forward:.3f}, backward 2 - 1/forward = {self.backward:.3f}"


@dataclass(frozen=True, kw_only=True)
class ProportionalEfficiency:
    """Loss proportional to the input torque: backward = 1/(2 − forward) (≥ forward)."""

    kind: ClassVar[str] = "proportional"
    params: ClassVar[dict[str, str]] = {"forward": "dimensionless"}

    forward: float
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        _num(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)

    @property
    def backward(self) -> float:
        return 1.0 / (2.0 - self.forward)

    def pair(self, ratio):
        return _full(ratio, self.forward, self.backward)

    def describe(self) -> str:
        return (
            f"proportional: forward {self.forward:.3f}, "
            f"backward 1/(2 - forward) = {self.backward:.3f}"
        )


# --- power screw ---------------------------------------------------------------------------


def screw_raise_torque(
    load,
    lead,
    mean_diameter,
    friction,
    *,
    thread_half_angle=0.0,
    collar_friction=0.0,
    collar_diameter=0.0,
):
    """Torque to raise a load with a power screw (thread plus thrust collar).

    T_R = (F·d_m/2)·(l + π·f'·d_m)/(π·d_m − f'·l) + F·f_c·d_c/2, with f' = f·sec α
    (Budynas & Nisbett, Shigley's Mechanical Engineering Design, ch. 8).

    Parameters
    ----------
    load : axial load F, N
    lead : advance l per revolution, m
    mean_diameter : mean thread diameter d_m, m
    friction : thread friction coefficient f (≥ 0)
    thread_half_angle : thread half-angle α, rad (0 square thread, 14.5° Acme)
    collar_friction, collar_diameter : f_c and mean collar diameter d_c, m (0 = no collar)

    Returns
    -------
    torque, N·m (array-like, broadcast over the inputs)
    """
    fe = np.asarray(friction) / np.cos(thread_half_angle)
    thread = (
        load
        * mean_diameter
        / 2
        * (lead + np.pi * fe * mean_diameter)
        / (np.pi * mean_diameter - fe * lead)
    )
    return thread + load * collar_friction * collar_diameter / 2


def screw_lower_torque(
    load,
    lead,
    mean_diameter,
    friction,
    *,
    thread_half_angle=0.0,
    collar_friction=0.0,
    collar_diameter=0.0,
):
    """Torque to lower a load with a power screw (thread plus thrust collar).

    T_L = (F·d_m/2)·(π·f'·d_m − l)/(π·d_m + f'·l) + F·f_c·d_c/2, with f' = f·sec α; a negative
    thread term means the load lowers itself (the thread is not self-locking). Parameters as
    :func:`screw_raise_torque`; returns N·m.
    """
    fe = np.asarray(friction) / np.cos(thread_half_angle)
    thread = (
        load
        * mean_diameter
        / 2
        * (np.pi * fe * mean_diameter - lead)
        / (np.pi * mean_diameter + fe * lead)
    )
    return thread + load * collar_friction * collar_diameter / 2


class _SlidingThread:
    """Screw and worm: a sliding thread with lead angle λ and friction f' (angles folded in).

    φ = atan f'; η_f = tan λ/tan(λ + φ), η_b = tan(λ − φ)/tan λ (Shigley ch. 8 and ch. 13).
    Subclasses provide ``lead_angle_rad`` (λ) and ``friction_angle_tan`` (f').
    """

    if TYPE_CHECKING:  # read-only properties of the subclasses

        @property
        def lead_angle_rad(self) -> float: ...

        @property
        def friction_angle_tan(self) -> float: ...

    def _check_drivable(self) -> None:
        """η_f > 0 needs λ + φ < 90°, i.e. f'·tan λ < 1."""
        if self.friction_angle_tan * math.tan(self.lead_angle_rad) >= 1.0:
            raise _fail(
                self,
                "friction",
                "lead angle + friction angle must be below 90°: the stage cannot be driven forward",
            )

    def pair(self, ratio):
        lam, phi = self.lead_angle_rad, math.atan(self.friction_angle_tan)
        return _full(
            ratio, math.tan(lam) / math.tan(lam + phi), math.tan(lam - phi) / math.tan(lam)
        )


def _lead_per_revolution(value: Any, *, file: str, field: str) -> float:
    """A screw lead in m per revolution; "8 mm", "8 mm/turn" and "1.27 mm/rad" all work.

    A plain number is metres per revolution. Angles are dimensionless for pint, so an angle in the
    denominator is converted explicitly instead of being dropped.
    """
    if isinstance(value, str):
        try:
            q = registry().Quantity(value.strip())
            per_angle = any(
                exp < 0 and not registry().get_dimensionality(unit) for unit, exp in q.unit_items()
            )
        except Exception:
            per_angle = False
        if per_angle:
            return quantity(q.to("m/turn").magnitude, "length", file=file, field=field)
    return quantity(value, "length", file=file, field=field)


@dataclass(frozen=True, kw_only=True)
class ScrewEfficiency(_SlidingThread):
    """Power screw (sliding lead screw, or a ball screw with its rolling friction coefficient).

    tan λ = l/(π·d_m) (or λ given), φ = atan(f·sec α); η_f = tan λ/tan(λ + φ),
    η_b = tan(λ − φ)/tan λ, self-locking (η_b ≤ 0) when f·sec α ≥ tan λ (Shigley ch. 8).
    Thrust-bearing (collar) losses are not included. Independent of the stage ratio.

    Give either ``lead`` (m per revolution) and ``mean_diameter`` (m), or ``lead_angle`` (rad).
    """

    kind: ClassVar[str] = "screw"
    params: ClassVar[dict[str, str]] = {
        "friction": "dimensionless",
        "lead": "lead",
        "mean_diameter": "length",
        "lead_angle": "angle",
        "thread_half_angle": "angle",
    }

    friction: float
    thread_half_angle: float
    lead: float | None = None
    mean_diameter: float | None = None
    lead_angle: float | None = None
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        _num(self, "friction", 0.0, math.inf, lo_open=False, hi_open=True)
        _num(self, "thread_half_angle", 0.0, 60 * _DEG, lo_open=False, hi_open=True, angle=True)
        geometric = self.lead is not None or self.mean_diameter is not None
        if geometric == (self.lead_angle is not None):
            raise _fail(self, "lead_angle", "give either lead and mean_diameter, or lead_angle")
        if geometric:
            for name, other in (("lead", "mean_diameter"), ("mean_diameter", "lead")):
                if getattr(self, name) is None:
                    raise _fail(self, name, f"is required together with {other}")
                _num(self, name, 0.0, math.inf, lo_open=True, hi_open=True)
        else:
            _num(self, "lead_angle", 0.0, 90 * _DEG, lo_open=True, hi_open=True, angle=True)
        self._check_drivable()

    @property
    def lead_angle_rad(self) -> float:
        """λ, rad."""
        if self.lead_angle is not None:
            return self.lead_angle
        assert self.lead is not None and self.mean_diameter is not None  # checked on creation
        return math.atan(self.lead / (math.pi * self.mean_diameter))

    @property
    def friction_angle_tan(self) -> float:
        """tan φ = f·sec α."""
        return self.friction / math.cos(self.thread_half_angle)

    def describe(self) -> str:
        return (
            f"screw: lead angle {self.lead_angle_rad / _DEG:.2f}°, friction angle "
            f"{math.atan(self.friction_angle_tan) / _DEG:.2f}° -> {_summary(self)}"
        )


# --- worm ----------------------------------------------------------------------------------


@dataclass(frozen=True, kw_only=True)
class WormEfficiency(_SlidingThread):
    """Worm and wheel, worm on the motor side (Shigley ch. 13).

    η_f = e_W = (cos φ_n − f·tan λ)/(cos φ_n + f·cot λ) (worm driving);
    η_b = e_G = (cos φ_n − f·cot λ)/(cos φ_n + f·tan λ) (wheel driving), self-locking (≤ 0) when
    f ≥ cos φ_n·tan λ. Independent of the stage ratio.
    """

    kind: ClassVar[str] = "worm"
    params: ClassVar[dict[str, str]] = {
        "lead_angle": "angle",
        "friction": "dimensionless",
        "normal_pressure_angle": "angle",
    }

    lead_angle: float
    friction: float
    normal_pressure_angle: float
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        _num(self, "lead_angle", 0.0, 90 * _DEG, lo_open=True, hi_open=True, angle=True)
        _num(self, "friction", 0.0, math.inf, lo_open=False, hi_open=True)
        _num(self, "normal_pressure_angle", 0.0, 45 * _DEG, lo_open=False, hi_open=True, angle=True)
        self._check_drivable()

    @property
    def lead_angle_rad(self) -> float:
        return self.lead_angle

    @property
    def friction_angle_tan(self) -> float:
        """f' = f/cos φn: dividing e_W and e_G through by cos φn gives the thread formulas."""
        return self.friction / math.cos(self.normal_pressure_angle)

    def describe(self) -> str:
        return (
            f"worm: lead angle {self.lead_angle / _DEG:.2f}°, f {self.friction:.3f}, "
            f"φn {self.normal_pressure_angle / _DEG:.1f}° -> {_summary(self)}"
        )


# --- ratio-dependent models ----------------------------------------------------------------


@dataclass(frozen=True, kw_only=True)
class PlanetaryBasicTrainEfficiency:
    """Ring-fixed planetary, sun in and carrier out, by the basic-train (Willis) method.

    With the ratio N = 1 + Z_r/Z_s and the fixed-carrier efficiency η0:
    η_f = (1 + η0·(N − 1))/N, η_b = N/(1 + (N − 1)/η0) (Müller, Epicyclic Drive Trains, 1982;
    del Castillo, Mech. Mach. Theory 37(2), 2002). Needs N > 1.
    """

    kind: ClassVar[str] = "planetary_basic_train"
    params: ClassVar[dict[str, str]] = {"basic_efficiency": "dimensionless"}

    basic_efficiency: float
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        _num(self, "basic_efficiency", 0.0, 1.0, lo_open=True, hi_open=False)

    def check_ratios(self, ratios, *, file: str, field: str) -> None:
        """Raise InputError unless every ratio is > 1 (Z_r/Z_s = N − 1 > 0)."""
        r = np.asarray(ratios, dtype=float)
        if not np.all(r > 1.0):
            bad = float(r[~(r > 1.0)].flat[0])
            raise InputError(
                file,
                field,
                f"a ring-fixed planetary needs ratios > 1 (N = 1 + Z_r/Z_s), got {bad:g}",
            )

    def pair(self, ratio):
        n = np.asarray(ratio, dtype=float)
        self.check_ratios(n, file=self.origin[0], field=f"{self.origin[1]} (ratio)")
        eta0 = self.basic_efficiency
        return (1.0 + eta0 * (n - 1.0)) / n, n / (1.0 + (n - 1.0) / eta0)

    def describe(self) -> str:
        return (
            f"planetary_basic_train: η0 {self.basic_efficiency:.3f}, "
            "forward (1 + η0(N-1))/N, backward N/(1 + (N-1)/η0)"
        )


@dataclass(frozen=True, kw_only=True)
class TableEfficiency:
    """Forward and backward efficiency tabulated over the ratio, linear in between.

    ``rows`` are ``(ratio, forward, backward)`` with strictly ascending ratios, each row obeying
    the rules of :class:`ConstantEfficiency`. A ratio outside the table raises InputError: the
    table is never extrapolated.
    """

    kind: ClassVar[str] = "table"
    params: ClassVar[dict[str, str]] = {"rows": "rows"}

    rows: tuple[tuple[float, float, float], ...]
    origin: tuple[str, str] = field(default=_API, compare=False, repr=False)

    def __post_init__(self):
        rows = self.rows
        if not isinstance(rows, (list, tuple)) or len(rows) < 2:
            raise _fail(self, "rows", "must list at least two [ratio, forward, backward] rows")
        file, field_ = self.origin
        clean: list[tuple[float, float, float]] = []
        for i, row in enumerate(rows):
            where = f"{field_}.rows[{i}]"
            if not isinstance(row, (list, tuple)) or len(row) != 3:
                raise InputError(file, where, f"must be [ratio, forward, backward], got {row!r}")
            r, f, b = (
                quantity(x, "dimensionless", file=file, field=f"{where}[{j}]")
                for j, x in enumerate(row)
            )
            if not r > 0 or (clean and r <= clean[-1][0]):
                raise InputError(
                    file, f"{where}[0]", f"ratios must be > 0 and strictly ascending, got {r:g}"
                )
            ConstantEfficiency(forward=f, backward=b, origin=(file, where))  # same rules per row
            clean.append((r, f, b))
        object.__setattr__(self, "rows", tuple(clean))

    @property
    def ratio_range(self) -> tuple[float, float]:
        return self.rows[0][0], self.rows[-1][0]

    def check_ratios(self, ratios, *, file: str, field: str) -> None:
        """Raise InputError unless every ratio lies inside the table."""
        r = np.asarray(ratios, dtype=float)
        lo, hi = self.ratio_range
        inside = (r >= lo * (1 - 1e-9)) & (r <= hi * (1 + 1e-9))
        if not np.all(inside):
            bad = float(r[~inside].flat[0])
            raise InputError(
                file,
                field,
                f"ratio {bad:g} is outside the efficiency table "
                f"[{lo:g}, {hi:g}]; the table is not extrapolated",
            )

    def pair(self, ratio):
        r = np.asarray(ratio, dtype=float)
        self.check_ratios(r, file=self.origin[0], field=f"{self.origin[1]}.rows")
        x, f, b = (np.array(c) for c in zip(*self.rows, strict=True))
        return np.interp(r, x, f), np.interp(r, x, b)

    def describe(self) -> str:
        lo, hi = self.ratio_range
        fwd = [row[1] for row in self.rows]
        return (
            f"table: {len(self.rows)} rows over ratio {lo:g}-{hi:g}, forward "
            f"{min(fwd):.3f}-{max(fwd):.3f}, linear in between"
        )


#: model name used in catalog files -> class
MODELS: dict[str, type] = {
    cls.kind: cls
    for cls in (
        ConstantEfficiency,
        CoulombEfficiency,
        ProportionalEfficiency,
        ScrewEfficiency,
        WormEfficiency,
        PlanetaryBasicTrainEfficiency,
        TableEfficiency,
    )
}


def efficiency_from_dict(d: dict, *, file: str, field: str):
    """Build an efficiency model from a catalog table, e.g. ``{model = "coulomb", forward = 0.8}``.

    Parameters
    ----------
    d : the table; ``model`` names the model (a key of :data:`MODELS`), the other keys are its
        parameters, as numbers (SI) or strings with units ("14.5 deg", "8 mm").
    file, field : where the table is, for error messages (e.g. ``stage[2].efficiency``).

    Raises
    ------
    InputError
        Not a table, unknown model, unknown or missing parameter, or a parameter out of range.
    """
    if not isinstance(d, dict):
        raise InputError(
            file,
            field,
            'must be a table such as { model = "constant", '
            f"forward = 0.9, backward = 0.85 }}, got {d!r}",
        )
    name = d.get("model")
    if not isinstance(name, str) or name not in MODELS:
        hint = did_you_mean(name, MODELS)
        got = "nothing" if name is None else repr(name)
        raise InputError(
            file, f"{field}.model", f"must be one of {', '.join(MODELS)}; got {got}{hint}"
        )
    cls: Any = MODELS[name]
    kwargs: dict[str, Any] = {}
    for key, value in d.items():
        if key == "model":
            continue
        where = f"{field}.{key}"
        if key not in cls.params:
            raise InputError(
                file,
                where,
                f"unknown parameter of model {name!r}; it takes {', '.join(cls.params)}",
            )
        dim = cls.params[key]
        if dim == "lead":
            kwargs[key] = _lead_per_revolution(value, file=file, field=where)
        elif dim == "rows":
            kwargs[key] = value
        else:
            kwargs[key] = quantity(value, dim, file=file, field=where)
    required = [
        k
        for k, f in cls.__dataclass_fields__.items()
        if k in cls.params and f.default is MISSING and k not in kwargs
    ]
    if required:
        raise InputError(file, f"{field}.{required[0]}", f"is required by model {name!r}")
    return cls(**kwargs, origin=(file, field))
