"""Forward and backward efficiency models of one gear stage.

Every model is a frozen dataclass with ``pair(ratio) -> (eta_forward, eta_backward)``, vectorized
over ``ratio`` (any array shape), and ``describe()``. Forward: power flows from the stage input
(motor side) to its output (joint side); backward: from the output to the input. A backward
efficiency ≤ 0 means the stage is self-locking: the load cannot drive it, and the magnitude of
the negative value is the torque needed to drive it backwards relative to the ideal torque (it can
be below −1 for a strongly self-locking screw or worm).

Parameters are validated when a model is built, from Python or from a catalog file through
:func:`efficiency_from_dict`; a bad value raises :class:`~jointwright.errors.InputError` naming the
file and the field. The formulas and their sources are listed in docs/catalog-format.md. The
sliding-thread models (power screw, worm) live in :mod:`.thread_efficiency`; :data:`MODELS`
registers every model.
"""

from __future__ import annotations

from dataclasses import MISSING, dataclass, field
from typing import Any, ClassVar

import numpy as np

from ..errors import InputError, did_you_mean
from ..units import quantity
from .efficiency_checks import API_ORIGIN, check_number, constant_pair, model_error
from .thread_efficiency import ScrewEfficiency, WormEfficiency, lead_per_revolution

# the power-screw torques are public API here too (jointwright.catalog, docs/catalog-format.md)
from .thread_efficiency import screw_lower_torque as screw_lower_torque
from .thread_efficiency import screw_raise_torque as screw_raise_torque

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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        f = check_number(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)
        b = check_number(self, "backward", -1.0, 1.0, lo_open=True, hi_open=False)
        if b > f:
            raise model_error(self, "backward", _BACKWARD_ABOVE_FORWARD.format(f=f, b=b))

    def pair(self, ratio):
        return constant_pair(ratio, self.forward, self.backward)

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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        check_number(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)

    @property
    def backward(self) -> float:
        return 2.0 - 1.0 / self.forward

    def pair(self, ratio):
        return constant_pair(ratio, self.forward, self.backward)

    def describe(self) -> str:
        return f"coulomb: forward {self.forward:.3f}, backward 2 - 1/forward = {self.backward:.3f}"


@dataclass(frozen=True, kw_only=True)
class ProportionalEfficiency:
    """Loss proportional to the input torque: backward = 1/(2 − forward) (≥ forward)."""

    kind: ClassVar[str] = "proportional"
    params: ClassVar[dict[str, str]] = {"forward": "dimensionless"}

    forward: float
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        check_number(self, "forward", 0.0, 1.0, lo_open=True, hi_open=False)

    @property
    def backward(self) -> float:
        return 1.0 / (2.0 - self.forward)

    def pair(self, ratio):
        return constant_pair(ratio, self.forward, self.backward)

    def describe(self) -> str:
        return (
            f"proportional: forward {self.forward:.3f}, "
            f"backward 1/(2 - forward) = {self.backward:.3f}"
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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        check_number(self, "basic_efficiency", 0.0, 1.0, lo_open=True, hi_open=False)

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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        rows = self.rows
        if not isinstance(rows, (list, tuple)) or len(rows) < 2:
            raise model_error(
                self, "rows", "must list at least two [ratio, forward, backward] rows"
            )
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
            kwargs[key] = lead_per_revolution(value, file=file, field=where)
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
