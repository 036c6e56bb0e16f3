"""Motor + stage stack -> the joint-side properties of one actuator, per power-flow mode.

Stage order runs from the motor to the joint: ``stages[0]`` is driven by the motor shaft, the
last stage drives the joint. The transmission law per joint (ratio N, forward efficiency η_f,
backward efficiency η_b, rotor-side inertia I_r, motor torque τ_m, joint-side torque τ_j):

* motoring (τ_j·q̇ > 0):    τ_j = η_f·N·(τ_m − N·I_r·q̈)
* back-driven (τ_j·q̇ < 0): τ_j = (N/η_b)·(τ_m − N·I_r·q̈), η_b > 0
* η_b ≤ 0: self-locking — the load cannot drive the motor; the joint holds up to the gear rating.

Efficiencies of a stack multiply per direction; any stage with η_b ≤ 0 makes the stack
self-locking; its backward efficiency is then reported as the most negative stage value times
the product of the positive ones, and the stack is flagged.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .catalog.drives import Drive, FedMotor, fed_motor
from .catalog.model import Motor, StageFrame, StageType

#: power-flow modes, in the order the metrics report them
MODES = ("frictionless", "motoring", "backdriven")


def torque_capacity(
    mode, ratio, eta_forward, eta_backward, self_locking, motor_torque, gear_torque
):
    """Joint torque capacity in a power-flow mode (N·m), arrays broadcast.

    frictionless N·τ_m; motoring η_f·N·τ_m; back-driven (holding while the load drives) N·τ_m/η_b;
    a self-locking stack holds whatever the motor does. Every value is capped by the gear rating.
    """
    n, tau = np.asarray(ratio, float), np.asarray(motor_torque, float)
    if mode == "frictionless":
        value = n * tau
    elif mode == "motoring":
        value = eta_forward * n * tau
    elif mode == "backdriven":
        locked = np.asarray(self_locking, bool)
        value = np.where(locked, np.inf, n * tau / np.where(locked, 1.0, eta_backward))
    else:
        raise ValueError(f"unknown mode {mode!r}; expected one of {MODES}")
    return np.minimum(value, gear_torque)


def reflected_inertia(mode, ratio, eta_forward, eta_backward, self_locking, rotor_inertia):
    """Rotor inertia seen at the joint (kg·m²) per mode, arrays broadcast.

    frictionless N²·I_r; back-driven N²·I_r/η_b (inf when self-locking), what the link side
    meets when it drives the motor. ``"motoring"`` gives η_f·N²·I_r: only the rotor's share per
    unit of torque that reaches the joint, not the forward-driving inertia of the robot (that is
    E_f⁻¹·M + R, metrics.inertia.forward_effective_mass).
    """
    base = np.asarray(ratio, float) ** 2 * rotor_inertia
    if mode == "frictionless":
        return base
    if mode == "motoring":
        return eta_forward * base
    if mode == "backdriven":
        locked = np.asarray(self_locking, bool)
        return np.where(locked, np.inf, base / np.where(locked, 1.0, eta_backward))
    raise ValueError(f"unknown mode {mode!r}; expected one of {MODES}")


def stack_backward(values) -> float:
    """Backward efficiency of stages in series: Π η_b,k; when any stage self-locks (η_b ≤ 0) the
    most-locking stage's value times the product of those that pass power (two locking stages
    must not multiply to a positive number)."""
    if any(v <= 0 for v in values):
        return float(min(values) * math.prod(v for v in values if v > 0))
    return float(math.prod(values))


@dataclass(frozen=True)
class StageChoice:
    """One stage of a stack: its type, frame size and ratio (input speed / output speed)."""

    stage: StageType
    frame: StageFrame
    ratio: float

    @cached_property
    def efficiencies(self) -> tuple[float, float]:
        f, b = self.stage.efficiency.pair(np.asarray(self.ratio, dtype=float))
        return float(f), float(b)

    @cached_property
    def band(self) -> tuple[float, float, float, float]:
        """(η_f low, η_f high, η_b low, η_b high) of the stage's efficiency band at this ratio;
        the nominal pair four times when the stage states no band (catalog.bands)."""
        band = self.stage.efficiency_band
        if band is None:
            f, b = self.efficiencies
            return f, f, b, b
        f_lo, f_hi, b_lo, b_hi = band.ends(np.asarray(self.ratio, dtype=float))
        return float(f_lo), float(f_hi), float(b_lo), float(b_hi)

    def label(self) -> str:
        return f"{self.stage.name}/{self.frame.name} {self.ratio:g}:1"


@dataclass(frozen=True)
class Actuator:
    """A motor driving a joint through a stack of stages (possibly empty: direct drive), fed by
    a drive (None: the motor's own ratings apply, see :mod:`jointwright.catalog.drives`)."""

    motor: Motor
    stages: tuple[StageChoice, ...] = ()
    drive: Drive | None = None

    # --- motor as fed by its drive (catalog.drives) ---------------------------------------------
    @cached_property
    def fed(self) -> FedMotor:
        """The motor's ratings under its drive's current and voltage limits."""
        return fed_motor(self.motor, self.drive)

    # --- ratios and efficiencies -------------------------------------------------------------
    @cached_property
    def ratio(self) -> float:
        """Total ratio N = Π N_k (motor speed / joint speed)."""
        return float(math.prod(s.ratio for s in self.stages)) if self.stages else 1.0

    @cached_property
    def eta_forward(self) -> float:
        """Stack forward efficiency Π η_f,k (power motor -> joint)."""
        return float(math.prod(s.efficiencies[0] for s in self.stages)) if self.stages else 1.0

    @cached_property
    def self_locking(self) -> bool:
        """True when any stage's backward efficiency is ≤ 0."""
        return any(s.efficiencies[1] <= 0 for s in self.stages)

    @cached_property
    def eta_backward(self) -> float:
        """Stack backward efficiency Π η_b,k (power joint -> motor); ≤ 0 when self-locking."""
        if not self.stages:
            return 1.0
        return stack_backward([s.efficiencies[1] for s in self.stages])

    @cached_property
    def efficiency_band(self) -> tuple[float, float, float, float]:
        """Stack (η_f low, η_f high, η_b low, η_b high): every stage at the same end of its band
        (catalog.bands); the nominal pair four times when no stage states a band."""
        if not self.stages:
            return 1.0, 1.0, 1.0, 1.0
        bands = [s.band for s in self.stages]
        return (
            float(math.prod(b[0] for b in bands)),
            float(math.prod(b[1] for b in bands)),
            stack_backward([b[2] for b in bands]),
            stack_backward([b[3] for b in bands]),
        )

    @cached_property
    def breakaway_motor_side(self) -> float:
        """Motor cogging plus each stage's breakaway torque referred to the motor shaft (N·m)."""
        return self.motor.cogging_torque + sum(
            s.frame.breakaway_torque / self._ratio_before(k) for k, s in enumerate(self.stages)
        )

    def _ratio_before(self, k: int) -> float:
        return float(math.prod(s.ratio for s in self.stages[:k])) if k else 1.0

    def _ratio_after(self, k: int) -> float:
        return float(math.prod(s.ratio for s in self.stages[k + 1 :]))

    # --- inertia and mass --------------------------------------------------------------------
    @cached_property
    def rotor_inertia(self) -> float:
        """Rotor-side inertia I_r (kg·m²): rotor plus each stage's input inertia reflected to the
        motor shaft, I_in,k / (N_1…N_{k−1})²."""
        return self.motor.rotor_inertia + sum(
            s.frame.input_inertia / self._ratio_before(k) ** 2 for k, s in enumerate(self.stages)
        )

    def reflected_inertia(self, mode: str) -> float:
        """Inertia seen at the joint from the link side (kg·m²); see :func:`reflected_inertia`."""
        return float(
            reflected_inertia(
                mode,
                self.ratio,
                self.eta_forward,
                self.eta_backward,
                self.self_locking,
                self.rotor_inertia,
            )
        )

    @cached_property
    def mass(self) -> float:
        """Motor plus stage masses (kg), plus the drive's when it has one."""
        own = self.drive.mass if self.drive is not None else 0.0
        return self.motor.mass + sum(s.frame.mass for s in self.stages) + own

    @cached_property
    def cost(self) -> float:
        own = self.drive.cost if self.drive is not None else 0.0
        return self.motor.cost + sum(s.frame.cost for s in self.stages) + own

    @cached_property
    def diameter(self) -> float:
        """Largest outer diameter of motor and stages (m)."""
        return max([self.motor.diameter] + [s.frame.diameter for s in self.stages])

    @cached_property
    def length(self) -> float:
        """Motor plus stage lengths stacked axially (m)."""
        return self.motor.length + sum(s.frame.length for s in self.stages)

    # --- torque capacity ---------------------------------------------------------------------
    @cached_property
    def gear_peak_torque(self) -> float:
        """Joint-side torque at which the first stage reaches its peak rating (N·m), ideal
        torque split: stage k carries τ_j / (N_{k+1}…N_n). inf for direct drive."""
        if not self.stages:
            return math.inf
        return min(
            s.frame.rated_peak_torque * self._ratio_after(k) for k, s in enumerate(self.stages)
        )

    @cached_property
    def gear_continuous_torque(self) -> float:
        if not self.stages:
            return math.inf
        return min(
            s.frame.rated_continuous_torque * self._ratio_after(k)
            for k, s in enumerate(self.stages)
        )

    def capacity(self, mode: str, *, continuous: bool = False) -> float:
        """Joint torque capacity (N·m) in a mode, capped by the gear rating; see
        :func:`torque_capacity`."""
        tau_m = self.fed.continuous_torque if continuous else self.fed.peak_torque
        gear = self.gear_continuous_torque if continuous else self.gear_peak_torque
        return float(
            torque_capacity(
                mode,
                self.ratio,
                self.eta_forward,
                self.eta_backward,
                self.self_locking,
                tau_m,
                gear,
            )
        )

    @cached_property
    def breakaway_torque(self) -> float:
        """Joint-side torque that starts the unpowered actuator moving (N·m).

        Motor cogging and each stage's breakaway torque (at its input) are referred to the
        motor shaft (divided by the ratio before the stage), then to the joint through the
        back-driven law: τ = (N/η_b)·Σ. inf when self-locking.
        """
        if self.self_locking:
            return math.inf
        motor_side = self.motor.cogging_torque + sum(
            s.frame.breakaway_torque / self._ratio_before(k) for k, s in enumerate(self.stages)
        )
        return self.ratio * motor_side / self.eta_backward

    @cached_property
    def max_joint_speed(self) -> float:
        """Joint speed at the motor's maximum speed (rad/s), its drive's no-load speed cap
        included."""
        return self.fed.max_speed / self.ratio

    @cached_property
    def stiffness(self) -> float:
        """Joint-side torsional stiffness of the stages in series (N·m/rad); inf when unknown."""
        compliance = sum(
            1.0 / (s.frame.stiffness * self._ratio_after(k) ** 2)
            for k, s in enumerate(self.stages)
            if math.isfinite(s.frame.stiffness)
        )
        return math.inf if compliance == 0 else 1.0 / compliance

    @cached_property
    def backlash(self) -> float:
        """Joint-side backlash (rad): each stage's output backlash divided by the ratio after it."""
        return sum(s.frame.backlash / self._ratio_after(k) for k, s in enumerate(self.stages))

    # --- life and shock ratings, joint side (metrics/gear_life.py, metrics/gear_shock.py) ----
    @cached_property
    def life_ratings(self) -> tuple[tuple[float, float, float, float], ...]:
        """Per stage, its rated life referred to the joint: (torque N·m, speed rad/s, life s,
        exponent). Stage k carries τ_j/(N_{k+1}…N_n) at q̇·(N_{k+1}…N_n) (ideal split, as the
        gear ratings), so its rated torque T_r and output speed n_r become T_r·N_after and
        n_r/N_after at the joint. NaN for a stage without a rated life."""
        out = []
        for k, s in enumerate(self.stages):
            f, after = s.frame, self._ratio_after(k)
            speed = f.life_output_speed(s.ratio)
            if (
                f.rated_life is None
                or f.rated_life_torque is None
                or speed is None
                or s.stage.life_exponent is None
            ):
                out.append((math.nan,) * 4)
            else:
                out.append(
                    (
                        f.rated_life_torque * after,
                        speed / after,
                        f.rated_life,
                        s.stage.life_exponent,
                    )
                )
        return tuple(out)

    @cached_property
    def gear_momentary_torque(self) -> float:
        """Joint-side torque at which the first stage reaches its momentary (emergency-stop)
        rating (N·m); inf for direct drive, NaN when a stage states none."""
        if not self.stages:
            return math.inf
        values = [
            math.nan
            if s.frame.rated_momentary_torque is None
            else s.frame.rated_momentary_torque * self._ratio_after(k)
            for k, s in enumerate(self.stages)
        ]
        return math.nan if any(math.isnan(v) for v in values) else min(values)

    def label(self) -> str:
        stack = " + ".join(s.label() for s in self.stages) or "no gear (direct drive)"
        tail = f" | fed by drive {self.drive.name}" if self.drive is not None else ""
        return f"{self.motor.name} | {stack}{tail}"
