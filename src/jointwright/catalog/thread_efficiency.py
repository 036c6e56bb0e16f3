"""Sliding-thread stages: the power screw and the worm, whose efficiencies follow from the lead
angle λ and the friction angle φ (Budynas & Nisbett, Shigley's Mechanical Engineering Design,
ch. 8 and ch. 13), and the power-screw raise/lower torques. Both models are self-locking
(backward efficiency ≤ 0) when the friction angle reaches the lead angle: such a joint holds its
load unpowered and can trap or crush.

Parameters are validated when a model is built (:mod:`.efficiency_checks`); the catalog reads
them through :func:`jointwright.catalog.efficiency.efficiency_from_dict`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from ..units import quantity, registry
from .efficiency_checks import (
    API_ORIGIN,
    DEG,
    check_number,
    constant_pair,
    model_error,
    pair_summary,
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
            raise model_error(
                self,
                "friction",
                "lead angle + friction angle must be below 90°: the stage cannot be driven forward",
            )

    def pair(self, ratio):
        lam, phi = self.lead_angle_rad, math.atan(self.friction_angle_tan)
        return constant_pair(
            ratio, math.tan(lam) / math.tan(lam + phi), math.tan(lam - phi) / math.tan(lam)
        )


def lead_per_revolution(value: Any, *, file: str, field: str) -> float:
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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        check_number(self, "friction", 0.0, math.inf, lo_open=False, hi_open=True)
        check_number(
            self, "thread_half_angle", 0.0, 60 * DEG, lo_open=False, hi_open=True, angle=True
        )
        geometric = self.lead is not None or self.mean_diameter is not None
        if geometric == (self.lead_angle is not None):
            raise model_error(
                self, "lead_angle", "give either lead and mean_diameter, or lead_angle"
            )
        if geometric:
            for name, other in (("lead", "mean_diameter"), ("mean_diameter", "lead")):
                if getattr(self, name) is None:
                    raise model_error(self, name, f"is required together with {other}")
                check_number(self, name, 0.0, math.inf, lo_open=True, hi_open=True)
        else:
            check_number(self, "lead_angle", 0.0, 90 * DEG, lo_open=True, hi_open=True, angle=True)
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
            f"screw: lead angle {self.lead_angle_rad / DEG:.2f}°, friction angle "
            f"{math.atan(self.friction_angle_tan) / DEG:.2f}° -> {pair_summary(self)}"
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
    origin: tuple[str, str] = field(default=API_ORIGIN, compare=False, repr=False)

    def __post_init__(self):
        check_number(self, "lead_angle", 0.0, 90 * DEG, lo_open=True, hi_open=True, angle=True)
        check_number(self, "friction", 0.0, math.inf, lo_open=False, hi_open=True)
        check_number(
            self, "normal_pressure_angle", 0.0, 45 * DEG, lo_open=False, hi_open=True, angle=True
        )
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
            f"worm: lead angle {self.lead_angle / DEG:.2f}°, f {self.friction:.3f}, "
            f"φn {self.normal_pressure_angle / DEG:.1f}° -> {pair_summary(self)}"
        )
