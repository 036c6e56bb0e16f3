"""Catalog data model: motors, parametric motor families, gear stage types and their frame sizes.

All values are SI (kg, m, N·m, kg·m², rad/s, V, Ω, K/W, s); temperatures in °C. Objects are
frozen; file loading and validation live in :mod:`jointwright.catalog.io`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Protocol, runtime_checkable

import numpy as np

#: stage types the tool knows; each has typical single-stage ratio and efficiency ranges
STAGE_KINDS = (
    "spur",
    "planetary",
    "cycloidal",
    "strain_wave",
    "belt",
    "cable",
    "ball_screw",
    "lead_screw",
    "worm",
)


@runtime_checkable
class EfficiencyModel(Protocol):
    """Forward and backward efficiency of one stage as functions of its ratio.

    ``pair(ratio)`` returns ``(eta_forward, eta_backward)`` as float arrays broadcast like
    ``ratio``. Forward: power flows input (motor side) -> output (joint side). Backward: power
    flows output -> input. ``eta_backward <= 0`` means the stage is self-locking.
    ``0 < eta_forward <= 1`` and ``eta_backward <= 1`` always hold. Given constants and table rows
    keep ``eta_backward > -1``; friction models (coulomb, screw, worm) can return
    ``eta_backward <= -1`` for a strongly self-locking stage (the magnitude is then the torque
    needed to drive it backwards over the ideal torque). Implementations live in
    :mod:`jointwright.catalog.efficiency`.
    """

    def pair(self, ratio: np.ndarray | float) -> tuple[np.ndarray, np.ndarray]: ...

    def describe(self) -> str: ...


@dataclass(frozen=True)
class Motor:
    """An electric motor.

    Attributes
    ----------
    peak_torque, continuous_torque : N·m
    rotor_inertia : kg·m²
    mass : kg
    max_speed : rad/s (mechanical limit or no-load speed, whichever the supplier gives)
    torque_constant : N·m/A, or None. Equal to the back-EMF constant in V·s/rad.
    resistance : Ω, line-to-line winding resistance at 20 °C, or None
    bus_voltage : V, or None
    thermal_resistance : K/W, winding to ambient, or None
    thermal_time_constant : s, winding, or None
    winding_temperature_max : °C
    cogging_torque : N·m, breakaway torque of the unpowered motor
    diameter, length : m (0 when unknown)
    cost : any currency unit, consistent across the catalog (0 when unknown)
    family, size : the parametric family and its size parameter when this motor is a family member
    """

    name: str
    peak_torque: float
    continuous_torque: float
    rotor_inertia: float
    mass: float
    max_speed: float
    torque_constant: float | None = None
    resistance: float | None = None
    bus_voltage: float | None = None
    thermal_resistance: float | None = None
    thermal_time_constant: float | None = None
    winding_temperature_max: float = 155.0
    cogging_torque: float = 0.0
    diameter: float = 0.0
    length: float = 0.0
    cost: float = 0.0
    family: str | None = None
    size: float | None = None

    @property
    def motor_constant(self) -> float | None:
        """Km = Kt/√R (N·m/√W), from line-to-line R; copper loss is τ²/Km²."""
        if self.torque_constant is None or self.resistance is None:
            return None
        return self.torque_constant / math.sqrt(self.resistance)


@dataclass(frozen=True)
class StageFrame:
    """One frame size of a stage type.

    Attributes
    ----------
    rated_peak_torque, rated_continuous_torque : N·m at the stage output
    mass : kg
    input_inertia : kg·m², seen at the stage input (its own rotating parts)
    breakaway_torque : N·m, torque that starts the unloaded stage turning, at its input
    backlash : rad at the output
    stiffness : N·m/rad torsional, at the output (inf when unknown)
    diameter, length : m (0 when unknown)
    cost : currency units (0 when unknown)

    Life and shock ratings (None: not rated; docs/catalog-format.md). ``rated_peak_torque`` is
    the repeated-peak rating (starts and stops of the normal cycle).

    rated_life_torque : N·m at the output, the torque of the rated life
    rated_life_speed : rad/s at the output, the speed of the rated life (or
        ``rated_life_input_speed`` at the input; exactly one of the two with a rated life)
    rated_life : s, the life at rated_life_torque and that speed
    rated_momentary_torque : N·m at the output, the emergency-stop / collision rating (a rare
        event, not a cycle)
    """

    name: str
    rated_peak_torque: float
    rated_continuous_torque: float
    mass: float
    input_inertia: float = 0.0
    breakaway_torque: float = 0.0
    backlash: float = 0.0
    stiffness: float = math.inf
    diameter: float = 0.0
    length: float = 0.0
    cost: float = 0.0
    # --- life and shock ratings (None: not rated) ---
    rated_life_torque: float | None = None
    rated_life_speed: float | None = None
    rated_life_input_speed: float | None = None
    rated_life: float | None = None
    rated_momentary_torque: float | None = None

    def life_output_speed(self, ratio: float) -> float | None:
        """The output speed (rad/s) of the rated life for a stage of this ``ratio``."""
        if self.rated_life_speed is not None:
            return self.rated_life_speed
        if self.rated_life_input_speed is not None:
            return self.rated_life_input_speed / ratio
        return None


#: life exponents p of L = L_r·(T_r/T_eq)^p·(n_r/n_avg) by the named basis: the basic rating
#: life of ISO 281 for ball (3) and roller (10/3) bearings [pub]
LIFE_BASES = {"ball_bearing": 3.0, "roller_bearing": 10.0 / 3.0}


@dataclass(frozen=True)
class StageType:
    """A gear stage type: its kind, the ratios it can have, its efficiency model, its frames.

    Exactly one of ``ratios`` (the available discrete ratios, ascending) or ``ratio_range``
    (``(low, high)`` for a continuous ratio) is set.
    """

    name: str
    kind: str
    efficiency: EfficiencyModel
    frames: tuple[StageFrame, ...]
    ratios: tuple[float, ...] | None = None
    ratio_range: tuple[float, float] | None = None
    #: life exponent p of the stage's life equation (LIFE_BASES, or the supplier's); None when
    #: no frame states a rated life
    life_exponent: float | None = None
    #: the band the efficiencies move over (catalog.bands.EfficiencyBand); None: no band
    efficiency_band: Any = None  # catalog.bands.EfficiencyBand | None

    def frame(self, name: str) -> StageFrame:
        for f in self.frames:
            if f.name == name:
                return f
        raise KeyError(name)

    def allows(self, ratio: float, rtol: float = 1e-9) -> bool:
        """Whether ``ratio`` is one this stage can have."""
        if self.ratios is not None:
            return any(abs(ratio - r) <= rtol * r for r in self.ratios)
        assert self.ratio_range is not None  # exactly one of ratios / ratio_range is set
        lo, hi = self.ratio_range
        return lo * (1 - rtol) <= ratio <= hi * (1 + rtol)


@dataclass(frozen=True)
class MotorFamily:
    """A parametric motor family: a reference motor at size 1 scaled by gap radius and length.

    A member of size ``s`` (gap radius scale) and length scale ``l`` follows the scaling laws of
    Wensing et al., IEEE T-RO 33(3), 2017, sec. III-C: torque ∝ s²·l, mass ∝ s·l,
    rotor inertia ∝ s³·l, Km² ∝ s³·l. ``sizes`` lists the members the catalog offers as
    ``(s, l)`` pairs.
    """

    name: str
    reference: Motor
    sizes: tuple[tuple[float, float], ...]
    #: mechanical speed limit (rad/s) of the size-1 member (bearings, rotor retention), or None;
    #: a member of gap-radius scale s is capped at speed_limit·s**speed_limit_scaling
    speed_limit: float | None = None
    #: exponent of the gap-radius scale in the mechanical speed limit (≤ 0); −1 keeps the rotor's
    #: surface speed (and the bearing's speed × bore product) of the reference [trade]
    speed_limit_scaling: float = -1.0

    def mechanical_speed(self, s: float) -> float:
        """The mechanical speed limit (rad/s) of a member of gap-radius scale ``s``; inf without
        a stated limit. The length scale does not enter: rotor radius and bearing bore follow
        the gap radius."""
        if self.speed_limit is None:
            return math.inf
        return self.speed_limit * s**self.speed_limit_scaling

    def member(self, s: float, l: float = 1.0) -> Motor:  # noqa: E741 (the length scale)
        """The member with gap-radius scale ``s`` and length scale ``l`` (both 1 = reference).

        The winding is taken as rewound to keep the line-to-line resistance of the reference, so
        Kt = Km·√R scales as √(s³·l) and the no-load speed at the same bus voltage as 1/Kt.
        Thermal resistance scales inversely with the outer surface, ∝ 1/(s·l) [trade].
        With a stated mechanical speed limit the member's maximum speed is the smaller of that
        electrical figure and :meth:`mechanical_speed`, so a scaled-down member does not gain an
        unbounded speed from its smaller torque constant.
        """
        ref = self.reference
        torque = s**2 * l
        kt, res, speed = ref.torque_constant, ref.resistance, ref.max_speed
        if ref.torque_constant is not None and res is not None:
            kt = ref.torque_constant * math.sqrt(s**3 * l)
            speed = ref.max_speed * ref.torque_constant / kt
        speed = min(speed, self.mechanical_speed(s))
        return Motor(
            name=f"{self.name}-{s:g}x{l:g}",
            peak_torque=ref.peak_torque * torque,
            continuous_torque=ref.continuous_torque * torque,
            rotor_inertia=ref.rotor_inertia * s**3 * l,
            mass=ref.mass * s * l,
            max_speed=speed,
            torque_constant=kt,
            resistance=res,
            bus_voltage=ref.bus_voltage,
            thermal_resistance=None
            if ref.thermal_resistance is None
            else ref.thermal_resistance / (s * l),
            thermal_time_constant=ref.thermal_time_constant,
            winding_temperature_max=ref.winding_temperature_max,
            cogging_torque=ref.cogging_torque * torque,
            diameter=ref.diameter * s,
            length=ref.length * l,
            cost=ref.cost * s * l,
            family=self.name,
            size=s,
        )

    def members(self) -> tuple[Motor, ...]:
        return tuple(self.member(s, length) for s, length in self.sizes)


@dataclass(frozen=True)
class Catalog:
    """Everything the optimizer may choose from. Names are unique within each collection."""

    motors: tuple[Motor, ...] = ()
    stages: tuple[StageType, ...] = ()
    families: tuple[MotorFamily, ...] = ()
    source: str = "<api>"
    notes: tuple[str, ...] = field(default=())
    #: motor drives (catalog.drives.Drive); empty when the catalog lists none
    drives: tuple = ()

    def all_motors(self) -> tuple[Motor, ...]:
        """Catalog motors followed by every offered member of every family."""
        out = list(self.motors)
        for fam in self.families:
            out.extend(fam.members())
        return tuple(out)

    def motor(self, name: str) -> Motor:
        for m in self.all_motors():
            if m.name == name:
                return m
        raise KeyError(name)

    def stage(self, name: str) -> StageType:
        for s in self.stages:
            if s.name == name:
                return s
        raise KeyError(name)

    def drive(self, name: str):
        """The drive (catalog.drives.Drive) named ``name``; KeyError when none."""
        for d in self.drives:
            if d.name == name:
                return d
        raise KeyError(name)
