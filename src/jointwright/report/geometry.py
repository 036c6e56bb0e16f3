"""Force-polytope sections and inertia-ellipse sections at the key poses, per power-flow mode.

Everything here is numbers for the figures; nothing is drawn. Both shapes are *sections* through
the origin of the 3-D tip-force (or tip-velocity) space by a plane spanned by two world axes:

* force polytope P = {F : τ_low ≤ g + Jᵀ·F ≤ τ_high} (Chiacchio et al. 1997 [mem]); restricted
  to F = B·f (B the 3×2 matrix of the two axes) it is the 2-D polytope of Bᵀ·J with the same
  bounds, so the section is exact, not a projection.
* inertia ellipse: the ellipsoid {x : xᵀ·Λ⁻¹·x ≤ 1} (Khatib 1995 [mem]) cut by the same kind of
  plane is {y : yᵀ·(Bᵀ·Λ⁻¹·B)·y ≤ 1}; its radius along an in-plane unit direction is the square
  root of the effective mass 1/(uᵀ·Λ⁻¹·u) along it.

Modes: frictionless (capacity N·τ_m, inertia N²·I_r), motoring (η_f·N·τ_m; inertia: the
forward-driving effective mass of docs/metrics.md, drawn as √m_f(u)·u, not an ellipse) and
back-driven (N·τ_m/η_b, N²·I_r/η_b; self-locking joints hold without limit and are locked).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..metrics.polytope import force_polytope
from ..robot.basis import gravity, mass_matrix

MODES = ("frictionless", "motoring", "backdriven")
AXES = "xyz"


@dataclass(frozen=True)
class PolytopeSection:
    """Force-polytope sections of one pose, one per mode; forces in N in the plane's axes."""

    title: str
    cases: tuple[str, ...]
    plane: tuple[int, int]  # world axis indices
    vertices: dict  # mode -> (k, 2) array, counter-clockwise; empty (0, 2) when no section
    clipped: dict  # mode -> bool (unbounded: a self-locking joint or a direction no joint limits)
    markers: tuple  # (case name, (2,) point in the plane, N)


@dataclass(frozen=True)
class EllipseSection:
    """Inertia-ellipse sections of one pose, per mode (and locked joints for a floating base)."""

    title: str
    case: str
    plane: tuple[int, int]
    curves: dict  # mode or "locked" -> (k, 2) points, √kg
    unbounded: dict  # mode -> bool: some in-plane direction cannot be moved (infinite mass)
    mass_along: dict  # mode -> effective mass along the case direction, kg (inf when immovable)
    direction: np.ndarray  # (2,) case direction in the plane (unit, or zero when normal to it)


def plane_for(directions, J) -> tuple[int, int]:
    """Two world axes: those of the case directions, topped up with the best-actuated axis.

    Parameters
    ----------
    directions : list of (3,) arrays
    J : array (3, n) tip Jacobian of the actuated joints, m/rad

    Returns
    -------
    (i, j) world axis indices, i < j
    """
    chosen: list[int] = []
    for u in directions:
        k = int(np.argmax(np.abs(u)))
        if k not in chosen:
            chosen.append(k)
    mobility = np.linalg.norm(J, axis=1)
    for k in np.argsort(-mobility, kind="stable"):
        if len(chosen) >= 2:
            break
        if int(k) not in chosen:
            chosen.append(int(k))
    first, second = sorted(chosen[:2])
    return first, second


def _basis(plane) -> np.ndarray:
    B = np.zeros((3, 2))
    B[plane[0], 0] = 1.0
    B[plane[1], 1] = 1.0
    return B


def plane_label(plane) -> str:
    return f"{AXES[plane[0]]}–{AXES[plane[1]]}"


def polytope_sections(evaluator, arrays, payload) -> list[PolytopeSection]:
    """One section per distinct (pose, frame) of the payload cases.

    Parameters
    ----------
    evaluator : Evaluator
    arrays : DesignArrays of one design
    payload : dict case name -> payload force along the case direction, N
    """
    groups: dict = {}
    for pc in evaluator.cases:
        if pc.case.kind != "payload":
            continue
        c = pc.case
        # a wrench case (offset, moment) has its own polytope: the force acts at the offset point
        # and the fixed moment's torques join the bias (metrics.loads)
        key = (c.frame, tuple(sorted(c.pose.items())), c.base_xyz, c.base_rpy, c.offset, c.moment)
        groups.setdefault(key, []).append(pc)
    caps = {m: arrays.capacity(m)[0] for m in MODES}
    out = []
    for pcs in groups.values():
        first = pcs[0]
        Jp = first.Jj
        bias = gravity(first.basis, arrays.mass)[0][evaluator.v_index]
        if first.load_a is not None:
            J6 = first.basis.J[0]
            r = np.asarray(first.case.offset, dtype=float)
            skew = np.array([[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]])
            # velocity of the offset point: v + ω × r = (J_v − [r]×·J_ω)·q̇
            Jp = (J6[:3] - skew @ J6[3:])[:, evaluator.v_index]
            bias = bias + first.tau_fixed[evaluator.v_index]
        plane = plane_for([p.u for p in pcs], Jp)
        B = _basis(plane)
        J2 = B.T @ Jp
        verts, clipped = {}, {}
        for mode in MODES:
            poly = force_polytope(J2, -caps[mode], caps[mode], bias)
            verts[mode], clipped[mode] = poly.vertices, poly.clipped
        markers = tuple(
            (p.case.name, B.T @ (payload[p.case.name] * p.u))
            for p in pcs
            if np.isfinite(payload.get(p.case.name, np.nan))
        )
        names = tuple(p.case.name for p in pcs)
        out.append(
            PolytopeSection(
                title=f"Force capability at the pose of {', '.join(names)}",
                cases=names,
                plane=plane,
                vertices=verts,
                clipped=clipped,
                markers=markers,
            )
        )
    return out


def mobility(evaluator, pc, arrays, mode: str) -> tuple[np.ndarray, np.ndarray | None]:
    """Λ⁻¹ = J·H⁻¹·Jᵀ (3×3, 1/kg) in one mode, and the locked-joint Λ_L⁻¹ for a floating base.

    Self-locking joints are locked in the back-driven mode (they leave H and J), as in
    :meth:`Evaluator._impact`.
    """
    refl = arrays.reflected_inertia(mode)
    refl = np.where(np.isfinite(refl), refl, 0.0)
    H = mass_matrix(
        pc.basis,
        arrays.mass,
        refl,
        rotor_inertia=arrays.rotor_inertia,
        ratio=arrays.ratio,
        coupling=evaluator.project.rotor_coupling,
    )[0]
    nv = H.shape[-1]
    locked = np.zeros(nv, dtype=bool)
    if mode == "backdriven":
        locked[evaluator.v_index] = arrays.self_locking[0]
    free = ~locked
    J = pc.J
    X = J[:, free] @ np.linalg.solve(H[np.ix_(free, free)], J[:, free].T)
    X_locked = None
    if evaluator.floating:
        Jb = J[:, :6]
        X_locked = Jb @ np.linalg.solve(H[:6, :6], Jb.T)
    return 0.5 * (X + X.T), X_locked


def _ellipse(S: np.ndarray, n: int = 181) -> tuple[np.ndarray, bool]:
    """Points of {y : yᵀ·S·y = 1}; an unbounded direction is cut at 1e3 √kg and flagged."""
    s, V = np.linalg.eigh(0.5 * (S + S.T))
    tiny = s <= 1e-12 * max(float(s.max()), 1e-300)
    radii = np.where(tiny, 1e3, 1.0 / np.sqrt(np.where(tiny, 1.0, s)))
    t = np.linspace(0.0, 2.0 * np.pi, n)
    pts = (V @ (radii[:, None] * np.vstack([np.cos(t), np.sin(t)]))).T
    return pts, bool(tiny.any())


def _forward_curve(evaluator, pc, arrays, B, n: int = 181) -> tuple[np.ndarray, bool]:
    """Points √m_f(d)·d over in-plane unit directions d, m_f the forward-driving effective mass
    (not a quadratic form in d, so not an ellipse); immovable directions cut at 1e3 √kg."""
    t = np.linspace(0.0, 2.0 * np.pi, n)
    d2 = np.vstack([np.cos(t), np.sin(t)]).T
    m = np.asarray(evaluator._forward_effective_mass(pc, arrays, d2 @ B.T), dtype=float)
    bad = ~np.isfinite(m) | (m > 1e6)
    r = np.where(bad, 1e3, np.sqrt(np.where(bad, 1.0, m)))
    return r[:, None] * d2, bool(bad.any())


def ellipse_sections(evaluator, arrays) -> list[EllipseSection]:
    """One section per impact case (or the first payload case when the project has none)."""
    pcs = [p for p in evaluator.cases if p.case.kind == "impact"]
    if not pcs:
        pcs = [p for p in evaluator.cases if p.case.kind == "payload"][:1]
    out = []
    for pc in pcs:
        plane = plane_for([pc.u], pc.Jj)
        B = _basis(plane)
        curves, unbounded, along = {}, {}, {}
        locked_X = None
        for mode in MODES:
            if (
                mode == "motoring"
            ):  # forward driving: no ellipse, the curve √m_f(u)·u (docs/metrics.md)
                curves[mode], unbounded[mode] = _forward_curve(evaluator, pc, arrays, B)
                along[mode] = float(evaluator._forward_effective_mass(pc, arrays)[0])
                continue
            X, X_locked = mobility(evaluator, pc, arrays, mode)
            curves[mode], unbounded[mode] = _ellipse(B.T @ X @ B)
            q = float(pc.u @ X @ pc.u)
            along[mode] = 1.0 / q if q > 1e-12 * np.trace(X) else np.inf
            locked_X = X_locked
        if locked_X is not None:
            curves["locked"], unbounded["locked"] = _ellipse(B.T @ locked_X @ B)
        out.append(
            EllipseSection(
                title=f"Inertia felt at the contact, case {pc.case.name}",
                case=pc.case.name,
                plane=plane,
                curves=curves,
                unbounded=unbounded,
                mass_along=along,
                direction=B.T @ pc.u,
            )
        )
    return out
