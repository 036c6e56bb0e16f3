"""Distance and time to accelerate over a piece of speeds where the acceleration is a quadratic
in the speed: x = ∫ w/P(w) dw and t = ∫ dw/P(w) in closed form, and the speed at which x
reaches a given distance (:mod:`.stroke`)."""

from __future__ import annotations

import numpy as np

#: Newton iterations (bracketed by bisection) for the speed where the distance equals the stroke
INVERSE_ITERATIONS = 60


def _psi(z):
    """(−ln(1 − z) − z)/z² for z < 1 (1/2 at 0; inf at 1), without cancellation near 0."""
    small = np.abs(z) < 1e-4
    zs = np.where(small, 1.0, z)
    with np.errstate(divide="ignore", invalid="ignore"):
        big = (-np.log1p(-zs) - zs) / (zs * zs)
    return np.where(small, 0.5 + z * (1.0 / 3.0 + z * (0.25 + z * 0.2)), big)


def piece_integrals(w0, H, p0, p1, p2):
    """Distance ∫ w/P(w) dw and time ∫ dw/P(w) over [w0, w0 + H] for
    P(w0 + h) = p0 + p1·h + p2·h² > 0 on [0, H) (inf where P reaches 0 at w0 + H; inf where
    p0 ≤ 0 and H > 0; 0 where H = 0 or P is infinite).

    With a real root r of P (the smallest positive one when there is one):
    P(h) = (r − h)·Q(h), Q(h) = p0/r − p2·h, and with z = H/r, z₂ = p2·H·r/p0,
    ψ(z) = (−ln(1 − z) − z)/z², Q_r = Q(r):
    time = H/p0 + (z²ψ(z) − z₂²ψ(z₂))/Q_r, distance = w0·time + H·(zψ(z) − z₂ψ(z₂))/Q_r
    (partial fractions; ψ keeps the near-constant and near-linear cases free of cancellation).
    Without a real root (p2 > 0): time = (2/√−Δ)·(atan((2p2H + p1)/√−Δ) − atan(p1/√−Δ)),
    distance = w0·time + (ln(P(H)/p0) − p1·time)/(2p2), Δ = p1² − 4·p2·p0.
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        disc = p1 * p1 - 4.0 * p2 * p0
        const = (p1 == 0) & (p2 == 0)
        real = (disc >= 0) & ~const
        sq = np.sqrt(np.where(real, disc, 0.0))
        q = -0.5 * (p1 + np.copysign(sq, p1))
        ra = np.where((p2 != 0) & real, q / np.where(p2 != 0, p2, 1.0), np.inf)
        rb = np.where((q != 0) & real, p0 / np.where(q != 0, q, 1.0), np.inf)
        pos_a, pos_b = ra > 0, rb > 0
        r = np.where(
            pos_a & pos_b,
            np.minimum(ra, rb),
            np.where(pos_a, ra, np.where(pos_b, rb, np.where(np.isfinite(rb), rb, ra))),
        )
        r = np.where(real & np.isfinite(r) & (r != 0), r, 1.0)
        z = H / r
        z2 = p2 * H * r / p0
        qr = p0 / r - p2 * r
        pz, pz2 = _psi(z), _psi(z2)
        t_real = H / p0 + (z * z * pz - z2 * z2 * pz2) / qr
        x_real = w0 * t_real + H * (z * pz - z2 * pz2) / qr
        # no real root (p2 > 0)
        wq = np.sqrt(np.where(real | const, 1.0, -disc))
        p2s = np.where(p2 != 0, p2, 1.0)
        t_cplx = (2.0 / wq) * np.arctan2(
            2.0 * p2 * H / wq, 1.0 + (2.0 * p2 * H + p1) * p1 / (wq * wq)
        )
        x_cplx = w0 * t_cplx + (np.log1p((p1 * H + p2 * H * H) / p0) - p1 * t_cplx) / (2 * p2s)
        t_const = H / p0
        x_const = (w0 + 0.5 * H) * H / p0
        t = np.where(const, t_const, np.where(real, t_real, t_cplx))
        x = np.where(const, x_const, np.where(real, x_real, x_cplx))
        stuck = (p0 <= 0) & (H > 0)
        t = np.where(stuck, np.inf, t)
        x = np.where(stuck, np.inf, x)
        empty = (H <= 0) | np.isinf(p0)
        t = np.where(empty, 0.0, t)
        x = np.where(empty, 0.0, x)
        # a root inside the piece (rounding at a crossing) leaves P ≤ 0 there: nothing beyond
        x = np.where(np.isnan(x), np.inf, x)
        t = np.where(np.isnan(t), np.inf, t)
    return x, t


def invert_distance(w0, H, p0, p1, p2, target):
    """h in [0, H] with distance(w0, h) = target (Newton on the closed form, kept inside a
    bisection bracket); 0 where the target is 0 or the piece cannot be entered."""
    lo = np.zeros_like(w0)
    hi = np.array(H, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        g = 2.0 * p0 * target
        h = np.clip(g / (np.sqrt(w0 * w0 + g) + w0), lo, hi)  # uniform acceleration p0
        h = np.where(np.isfinite(h), h, 0.5 * hi)
        for _ in range(INVERSE_ITERATIONS):
            x, _ = piece_integrals(w0, h, p0, p1, p2)
            f = x - target
            lo = np.where(f <= 0, h, lo)
            hi = np.where(f >= 0, h, hi)
            slope = (w0 + h) / (p0 + h * (p1 + h * p2))
            step = np.where(slope > 0, h - f / slope, np.nan)
            inside = (step >= lo) & (step <= hi)
            new = np.where(inside, step, 0.5 * (lo + hi))
            if np.all(np.abs(new - h) <= 1e-15 * (w0 + new) + 1e-300):
                h = new
                break
            h = new
    return np.where((target > 0) & (p0 > 0), h, 0.0)
