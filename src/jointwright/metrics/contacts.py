"""Payload of a whole robot held on several point contacts: a second-order cone program.

A legged robot carries a load on its body while standing on its feet; an arm on a mobile base
braces against a table. The payload of such a robot is not the payload of one limb: the contact
forces share the load and friction lets limbs push sideways. Static equilibrium (generalized
coordinates ``v`` of size nv; a floating base puts its 6 rows first)::

    g = Sᵀ·τ + Σ_k J_kᵀ·f_k + J_pᵀ·(s·w)

* ``g`` (nv): generalized gravity and bias forces, the left side of M·q̈ + g = Sᵀτ + Σ Jᵀf.
* ``S`` selects the actuated rows (``actuated`` indices); ``τ`` (n_joints) within [τ_low, τ_high].
* ``f_k`` (3): force the environment exerts ON the robot at point contact k, world-aligned,
  ``J_k`` its 3×nv linear (world-aligned) point Jacobian. Friction cone with unit normal ``n_k``
  pointing from the environment into the robot: ``‖f_k − (n_kᵀf_k)·n_k‖ ≤ μ_k·n_kᵀf_k``.
  μ_k = 0 is a frictionless contact (normal force only).
* ``s·w``: the wrench the payload exerts ON the robot at the payload point, ``w`` its direction
  per unit ``s`` (3: force; 6: force then moment, matching a 6×nv ``J_p`` with linear rows first).
  A mass m carried on the body under gravity −z is ``w = (0, 0, −1)`` and ``s = m·g₀`` in N.

The program maximizes ``s ≥ 0``. In the scaled contact coordinates
``f_k = λ_k·n_k + μ_k·(ν_k1·t_k1 + ν_k2·t_k2)`` every cone is the standard one ``‖ν_k‖ ≤ λ_k``
and the program is written straight into the conic form of the Clarabel solver (no modelling
layer, no compile step; docs/contacts.md). :func:`pyramid_bounds` solves the same statics as two
linear programs (scipy/HiGHS) with inscribed and circumscribed p-sided friction pyramids: an
inner and an outer bound on the cone result.

The work is split by job: contact_statics.py (the validated matrices, contact frames),
contact_result.py (the result record), contact_cone.py (the cone program, one design or a
batch) and contact_pyramid.py (the pyramid linear programs); this module is their public face.
"""

from __future__ import annotations

from .contact_cone import ContactPayloadBatch, MultiContactPayload, solve, solve_batch
from .contact_pyramid import PyramidBounds, pyramid_bounds
from .contact_result import STATUSES, ContactPayloadResult
from .contact_statics import ContactStatics, rigid_point_jacobian, tangent_basis

__all__ = [
    "STATUSES",
    "ContactPayloadBatch",
    "ContactPayloadResult",
    "ContactStatics",
    "MultiContactPayload",
    "PyramidBounds",
    "pyramid_bounds",
    "rigid_point_jacobian",
    "solve",
    "solve_batch",
    "tangent_basis",
]
