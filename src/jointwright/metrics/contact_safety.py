"""Transient contact with a person: the largest permissible relative speed (power and force
limiting, the two-body model of ISO/TS 15066:2016, annex A).

A robot of effective mass m_R along the contact direction strikes a body region of effective
mass m_H, modelled as a linear spring of constant k with a permissible force F_max. The reduced
mass μ = (1/m_H + 1/m_R)⁻¹ carries kinetic energy E = ½·μ·v², which the spring stores as
E = F²/(2·k); so the contact force stays within F_max while

    v ≤ v_max = F_max / √(μ·k),   with transferred energy E_max = F_max² / (2·k).

Every body-region value is the user's, from the standard or practice that applies to the
application; none is shipped. The model is a concept-stage estimate: clamping (quasi-static
contact), pressure limits, the robot's stopping behaviour and the risk assessment stay with the
applicable standard and licensed engineering practice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class TransientContact:
    """Permissible relative speed v_max (m/s) and the energy E_max (J) the body region takes."""

    speed: np.ndarray
    energy: np.ndarray
    reduced_mass: np.ndarray


def transient_contact(
    robot_mass, body_mass: float, stiffness: float, force_max: float
) -> TransientContact:
    """v_max = F_max/√(μ·k), μ = (1/m_H + 1/m_R)⁻¹ (ISO/TS 15066 annex A two-body model).

    Parameters
    ----------
    robot_mass : array (...), kg, > 0; ``inf`` for an immovable robot (μ = m_H)
    body_mass : float, kg, > 0
    stiffness : float, N/m, > 0
    force_max : float, N, > 0

    Returns
    -------
    TransientContact
    """
    m_r = np.asarray(robot_mass, dtype=float)
    with np.errstate(divide="ignore"):
        mu = 1.0 / (1.0 / body_mass + 1.0 / m_r)
    speed = force_max / np.sqrt(mu * stiffness)
    energy = np.full(np.shape(m_r), force_max**2 / (2.0 * stiffness))
    return TransientContact(speed=speed, energy=energy, reduced_mass=mu)
