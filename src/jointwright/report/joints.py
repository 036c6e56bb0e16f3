"""The per-joint choices of the report: motor, stages, ratio, efficiencies, torques, reflected
inertias and, with drives, the motor ratings the drive allows."""

from __future__ import annotations

import math

from .markup import (
    Cell,
    Section,
    as_float,
    fmt,
    number,
    table,
)


def _tagged(value, unit: str, joint: str, field: str) -> Cell:
    return Cell(fmt(value, unit), "num", (("joint", joint), ("field", field)))


_INERTIAS = (
    "rotor_inertia",
    "reflected_frictionless",
    "reflected_backdriven",
)


def joints_section(a: dict) -> Section:
    """Per joint: drivetrain, efficiencies, capacities, reflected inertia, mass, cost, speed."""
    costs = as_float(a.get("total_cost", 0.0)) > 0
    drive, inertia = [], []
    for j in a["joints"]:
        name = j["joint"]
        lock = " (self-locking)" if j["self_locking"] else ""
        drive.append(
            [
                name,
                j["motor"],
                " + ".join(j["stages"]) or "direct drive",
                Cell(f"{number(j['ratio'])} : 1", "num"),
                Cell(number(j["eta_forward"], 3), "num"),
                Cell(number(j["eta_backward"], 3) + lock, "num"),
                _tagged(j["capacity_motoring"], "N·m", name, "drive"),
                _tagged(j["capacity_backdriven"], "N·m", name, "holding"),
                Cell(fmt(j["gear_peak_torque"], "N·m") if j["stages"] else "— (no gear)", "num"),
            ]
        )
        row = (
            [name]
            + [Cell(fmt(j[k], "kg·m²"), "num") for k in _INERTIAS]
            + [_tagged(j["mass"], "kg", name, "mass")]
        )
        if costs:
            row.append(Cell(fmt(j.get("cost")), "num", (("joint", name), ("field", "cost"))))
        inertia.append(
            row
            + [
                Cell(fmt(j["max_joint_speed"], "rad/s"), "num"),
                Cell(fmt(j["breakaway_torque"], "N·m"), "num"),
            ]
        )
    total = [
        Cell("total", "num"),
        "",
        "",
        "",
        Cell(fmt(a["total_mass"], "kg"), "num", (("field", "total_mass"),)),
    ]
    if costs:
        total.append(Cell(fmt(a["total_cost"]), "num", (("field", "total_cost"),)))
    inertia.append(total + ["", ""])
    head = (
        [
            "joint",
            "rotor-side inertia I_r",
            "reflected N²·I_r",
            "back-driven N²·I_r/η_b",
            "mass",
        ]
        + (["cost"] if costs else [])
        + ["max joint speed", "breakaway torque"]
    )
    caption = _INERTIA_CAPTION + (" Cost in the catalog's currency units." if costs else "")
    body = table(
        [
            "joint",
            "motor",
            "stages",
            "ratio",
            "η forward",
            "η backward",
            "drive torque",
            "holding torque",
            "gear torque limit (peak)",
        ],
        drive,
        caption=_DRIVE_CAPTION,
        cls="wide",
    ) + table(head, inertia, caption=caption, cls="wide")
    body += _drives_table(a)
    return Section("joints", "Per-joint choices", body)


def _drives_table(a: dict) -> str:
    """The motor drives and the ratings they allow, with the side that sets each ("" when the
    design has no drives: every motor then runs on its own ratings)."""
    if not any(j.get("drive") for j in a["joints"]):
        return ""
    rows = [
        [
            j["joint"],
            j.get("drive") or "none (motor's own ratings)",
            Cell(f"{fmt(j['motor_peak_torque'], 'N·m')} ({j['peak_torque_by']})", "num"),
            Cell(
                f"{fmt(j['motor_continuous_torque'], 'N·m')} ({j['continuous_torque_by']})", "num"
            ),
            Cell(
                f"{fmt(j['motor_max_speed'], 'rad/s')} = "
                f"{fmt(as_float(j['motor_max_speed']) * 60 / (2 * math.pi), 'rpm')} "
                f"({j['max_speed_by']})",
                "num",
            ),
        ]
        for j in a["joints"]
    ]
    return table(
        ["joint", "drive", "motor peak torque", "motor continuous torque", "motor top speed"],
        rows,
        caption="Motor ratings as the drive feeds them (docs/metrics.md, Drive limits): peak "
        "min(motor, Kt·I_peak), continuous min(motor, Kt·I_cont), top speed min(motor, "
        "V_bus/Kt); in brackets the side whose limit is lower. The torque–speed line runs from "
        "the drive's bus voltage.",
        cls="wide",
    )


_DRIVE_CAPTION = (
    "Drive torque = η_f·N·τ_peak (motoring); holding torque = N·τ_peak/η_b while the load "
    "back-drives the joint; both capped by the gear torque limit (peak) (a self-locking joint "
    "holds up to that limit whatever the motor). Efficiencies are dimensionless."
)


_INERTIA_CAPTION = (
    "Reflected inertia as seen from the link side; the back-driven value is what an impact "
    "feels. Breakaway torque: joint-side torque that starts the unpowered actuator moving."
)
