"""Efficiency bands: the range a stage's forward and backward efficiencies move over.

A gear's efficiencies change with temperature, load, speed and wear. A stage may state a band
beside its nominal efficiency model (docs/catalog-format.md, ``efficiency_band``) in two ways,
which may be combined:

* **parameter intervals**: any number parameter of the stage's efficiency model as
  ``[low, high]`` around its nominal value, e.g. ``friction = [0.05, 0.09]`` for a worm or
  ``basic_efficiency = [0.95, 0.975]`` for a planetary; the band at a ratio spans the lowest to
  the highest efficiency of the model over every corner of the parameter box (each direction on
  its own). That is the band over the whole box wherever each efficiency is monotone in each
  parameter, which holds for every model of :mod:`jointwright.catalog.efficiency` over its
  valid range except the screw and worm lead angle (docs/metrics.md, "Efficiency bands");
* **changes**: ``forward_change = [-0.04, 0.01]`` and ``backward_change = [-0.06, 0.01]``, the
  absolute change of each efficiency from its value at the band's ends (any model, e.g. a
  measured table): low end + low change, high end + high change.

The band always contains the nominal pair. It must keep 0 < η_f ≤ 1 and η_b ≤ 1 at every ratio
the stage offers; a backward band that reaches 0 means the stage may self-lock at its low end.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..units import quantity

#: number of ratios a continuous ratio range is checked at (log-spaced, ends included)
RANGE_CHECK_POINTS = 64


@dataclass(frozen=True)
class EfficiencyBand:
    """A stage's efficiency band around its nominal model.

    Attributes
    ----------
    nominal : the stage's efficiency model
    corners : the model at every corner of the parameter box (empty without parameter intervals)
    forward_change, backward_change : (low, high) absolute changes, low ≤ 0 ≤ high
    intervals : parameter name -> (low, high), for describing the band
    """

    nominal: Any  # an efficiency model (catalog.efficiency): pair(ratio)
    corners: tuple = ()
    forward_change: tuple[float, float] = (0.0, 0.0)
    backward_change: tuple[float, float] = (0.0, 0.0)
    intervals: tuple = ()

    def ends(self, ratio) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(η_f low, η_f high, η_b low, η_b high) at ``ratio`` (arrays broadcast like it)."""
        pairs = [self.nominal.pair(ratio)] + [c.pair(ratio) for c in self.corners]
        f = np.stack([np.asarray(p[0], dtype=float) for p in pairs])
        b = np.stack([np.asarray(p[1], dtype=float) for p in pairs])
        return (
            f.min(axis=0) + self.forward_change[0],
            f.max(axis=0) + self.forward_change[1],
            b.min(axis=0) + self.backward_change[0],
            b.max(axis=0) + self.backward_change[1],
        )

    def describe(self) -> str:
        parts = [f"{k} {lo:g} to {hi:g}" for k, (lo, hi) in self.intervals]
        for name, (lo, hi) in (
            ("forward", self.forward_change),
            ("backward", self.backward_change),
        ):
            if lo or hi:
                parts.append(f"{name} {lo:+g}/{hi:+g}")
        return "band: " + ", ".join(parts)


def band_from_dict(d, model, *, file: str, field: str) -> EfficiencyBand:
    """Read a stage's ``efficiency_band`` table against its nominal efficiency ``model``."""
    if not isinstance(d, dict) or not d:
        raise InputError(
            file,
            field,
            "must be a table such as { friction = [0.05, 0.09] } or "
            f"{{ forward_change = [-0.04, 0.01], backward_change = [-0.06, 0.01] }}, got {d!r}",
        )
    changes = {"forward_change": (0.0, 0.0), "backward_change": (0.0, 0.0)}
    intervals: list[tuple[str, tuple[float, float]]] = []
    params = getattr(model, "params", {})
    for key, value in d.items():
        where = f"{field}.{key}"
        if key in changes:
            lo, hi = _pair(value, "dimensionless", file, where)
            if not lo <= 0.0 <= hi:
                raise InputError(
                    file, where, f"must be [low, high] with low ≤ 0 ≤ high, got [{lo:g}, {hi:g}]"
                )
            changes[key] = (lo, hi)
            continue
        dim = params.get(key)
        if dim is None or dim in ("rows", "lead"):
            usable = [k for k, v in params.items() if v not in ("rows", "lead")]
            known = ", ".join(["forward_change", "backward_change", *usable])
            raise InputError(
                file,
                where,
                f"is not an interval the band takes for model {getattr(model, 'kind', '?')!r}; "
                f"it takes {known}",
            )
        lo, hi = _pair(value, dim, file, where)
        nominal = float(getattr(model, key))
        if not lo <= nominal <= hi:
            raise InputError(
                file,
                where,
                f"must contain the nominal value {nominal:g}, got [{lo:g}, {hi:g}]",
            )
        intervals.append((key, (lo, hi)))
    corners = []
    for values in itertools.product(*[iv for _, iv in intervals]):
        change = dict(zip([k for k, _ in intervals], values, strict=True))
        try:
            corners.append(dataclasses.replace(model, **change))
        except InputError as e:
            raise InputError(
                file, field, f"at the corner {change} the model is invalid: {e.rule}"
            ) from None
    return EfficiencyBand(
        nominal=model,
        corners=tuple(corners),
        forward_change=changes["forward_change"],
        backward_change=changes["backward_change"],
        intervals=tuple(intervals),
    )


def check_band(
    band: EfficiencyBand, ratios=None, ratio_range=None, *, file: str, field: str
) -> None:
    """The band keeps 0 < η_f ≤ 1 and η_b ≤ 1 at the stage's ``ratios``, or over its
    ``ratio_range`` (low, high) checked at :data:`RANGE_CHECK_POINTS` log-spaced ratios."""
    if ratios is None:
        r = np.geomspace(ratio_range[0], ratio_range[1], RANGE_CHECK_POINTS)
    else:
        r = np.asarray(ratios, dtype=float)
    f_lo, f_hi, b_lo, b_hi = band.ends(r)
    for bad, rule in (
        (~(f_lo > 0), "keeps the forward efficiency above 0"),
        (~(f_hi <= 1), "keeps the forward efficiency at most 1"),
        (~(b_hi <= 1), "keeps the backward efficiency at most 1"),
        (~np.isfinite(b_lo), "keeps the backward efficiency finite"),
    ):
        if np.any(bad):
            at = float(r[np.argmax(bad)])
            values = (
                f"forward {float(f_lo[np.argmax(bad)]):.4g} to {float(f_hi[np.argmax(bad)]):.4g}, "
                f"backward {float(b_lo[np.argmax(bad)]):.4g} to {float(b_hi[np.argmax(bad)]):.4g}"
            )
            raise InputError(file, field, f"must be a band that {rule}: at ratio {at:g} {values}")


def _pair(value, dim: str, file: str, where: str) -> tuple[float, float]:
    if not isinstance(value, list) or len(value) != 2:
        raise InputError(file, where, f"must be [low, high], got {value!r}")
    lo, hi = (quantity(v, dim, file=file, field=f"{where}[{i}]") for i, v in enumerate(value))
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo > hi:
        raise InputError(file, where, f"must be [low, high] with low ≤ high, got {value!r}")
    return float(lo), float(hi)
