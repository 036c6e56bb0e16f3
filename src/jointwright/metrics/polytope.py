"""Force capability polytope of one pose: vertices and faces, for plots and multi-direction checks.

P = {F : τ_low ≤ τ_bias + Jᵀ·F ≤ τ_high} (Chiacchio et al. 1997 [mem]), with the sign
convention of :mod:`.payload`: F is the force the robot exerts at the tip and τ_bias + Jᵀ·F the
joint torques that takes. Each joint contributes two half-spaces; the intersection is found with
``scipy.spatial.HalfspaceIntersection`` from the Chebyshev centre (an LP), and the faces with
``scipy.spatial.ConvexHull``.

A direction no joint bound limits (an infinite capacity, a self-locking joint, a singular pose,
fewer joints than task dimensions) makes P unbounded. P is then clipped by the box
|F_k| ≤ ``box`` and flagged ``clipped``; vertices on the box are artefacts of the clipping.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .linalg_small import API, check_size, checked
from .payload import halfspaces

#: half-width of the clipping box, N (far above any concept-stage tip force)
DEFAULT_BOX = 1e6


@dataclass(frozen=True)
class ForcePolytope:
    """Vertices and faces of a force polytope (2-D or 3-D).

    Attributes
    ----------
    vertices : array (k, m), N
        Extreme points; counter-clockwise for m = 2. Shape (0, m) when ``empty``.
    A, b : arrays (f, m) and (f,)
        Irredundant half-spaces A·F ≤ b with unit outward normals, b in N; one row per face.
    simplices : int array (s, m)
        Indices into ``vertices``: edges (m = 2) or triangles (m = 3) covering the boundary.
    clipped : bool
        True when some vertex lies on the clipping box: P is unbounded in that direction.
    empty : bool
        No set of forces with positive area/volume satisfies every bound (for example the robot
        cannot hold itself whatever it pushes on, or a joint has τ_low = τ_high).
    box : float
        The clipping half-width used, N.
    """

    vertices: np.ndarray
    A: np.ndarray
    b: np.ndarray
    simplices: np.ndarray
    clipped: bool
    empty: bool
    box: float


def force_polytope(
    J, tau_low, tau_high, tau_bias=None, *, box: float = DEFAULT_BOX
) -> ForcePolytope:
    """Force polytope P = {F : τ_low ≤ τ_bias + Jᵀ·F ≤ τ_high} of one pose.

    Parameters
    ----------
    J : array (m, n), m = 2 or 3
        Tip Jacobian (translational rows), 1 or m/rad.
    tau_low, tau_high : arrays (n,), N·m; ±inf allowed (no bound)
    tau_bias : array (n,), N·m, optional
        g + M·q̈ + c; zero when omitted.
    box : float, N
        Clipping half-width for unbounded directions.

    Returns
    -------
    ForcePolytope
    """
    from scipy.optimize import linprog
    from scipy.spatial import ConvexHull, HalfspaceIntersection

    J, bias, low, high = _inputs(J, tau_low, tau_high, tau_bias, box)
    m = J.shape[0]
    a, b = halfspaces(J, bias, low, high)
    norms = np.linalg.norm(a, axis=1)
    flat = norms <= 1e-12 * max(float(norms.max(initial=0.0)), 1e-300)
    if np.any(b[flat] < 0.0):
        return _empty(m, box)
    a, b, norms = a[~flat], b[~flat], norms[~flat]
    scale = float(np.abs(b).max(initial=0.0)) or box
    a = np.concatenate([a / norms[:, None], np.eye(m), -np.eye(m)])
    b = np.concatenate([b / norms, np.full(2 * m, box)])
    # Chebyshev centre: max t s.t. a·F + t ≤ b (rows are unit vectors)
    res = linprog(
        np.r_[np.zeros(m), -1.0],
        A_ub=np.hstack([a, np.ones((len(b), 1))]),
        b_ub=b,
        bounds=[(None, None)] * m + [(0.0, None)],
        method="highs",
    )
    if res.status != 0 or res.x[-1] <= 1e-9 * scale:
        return _empty(m, box)
    hs = HalfspaceIntersection(np.hstack([a, -b[:, None]]), res.x[:m])
    pts = hs.intersections
    vertices = pts[ConvexHull(pts).vertices]
    hull = ConvexHull(vertices)
    faces = _distinct_planes(hull.equations, scale)
    clipped = bool(np.any(np.abs(vertices) >= box * (1.0 - 1e-9)))
    return ForcePolytope(
        vertices=vertices,
        A=faces[:, :m],
        b=-faces[:, m],
        simplices=hull.simplices,
        clipped=clipped,
        empty=False,
        box=float(box),
    )


def _distinct_planes(eq: np.ndarray, scale: float) -> np.ndarray:
    """One row per face from Qhull's per-simplex plane equations (coplanar triangles merged)."""
    kept: list[np.ndarray] = []
    for row in eq:
        same = any(
            np.abs(row[:-1] - k[:-1]).max() <= 1e-8 and abs(row[-1] - k[-1]) <= 1e-8 * scale
            for k in kept
        )
        if not same:
            kept.append(row)
    return np.array(kept)


def _inputs(J, tau_low, tau_high, tau_bias, box):
    J = checked(J, "J", 2)
    if J.ndim != 2 or J.shape[0] not in (2, 3):
        raise InputError(API, "J", f"must be one pose of shape (2 or 3, n), got {J.shape}")
    n = J.shape[1]
    low = checked(tau_low, "tau_low", 1, allow_inf=True)
    high = checked(tau_high, "tau_high", 1, allow_inf=True)
    bias = np.zeros(n) if tau_bias is None else checked(tau_bias, "tau_bias", 1)
    for name, v in (("tau_low", low), ("tau_high", high), ("tau_bias", bias)):
        if v.ndim != 1:
            raise InputError(API, name, f"must have shape ({n},), got {v.shape}")
        check_size(v, name, 0, n, "entries (one per column of J)")
    if np.any(low > high) or np.any(low == np.inf) or np.any(high == -np.inf):
        raise InputError(
            API, "tau_low/tau_high", "need tau_low <= tau_high, tau_low < +inf, tau_high > -inf"
        )
    if not (np.isfinite(box) and box > 0.0):
        raise InputError(API, "box", f"must be a finite force > 0 N, got {box}")
    return J, bias, low, high


def _empty(m: int, box: float) -> ForcePolytope:
    return ForcePolytope(
        vertices=np.zeros((0, m)),
        A=np.zeros((0, m)),
        b=np.zeros(0),
        simplices=np.zeros((0, m), dtype=int),
        clipped=False,
        empty=True,
        box=float(box),
    )
