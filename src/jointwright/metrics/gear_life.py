"""Gear life over duty cycles: equivalent torque, average speed, rated-life equation, Miner's rule.

Over a load spectrum of output torques T_i at speeds n_i for times t_i (a duty cycle sampled in
time, t_i the quadrature weight of sample i):

* equivalent output torque, weighted by revolutions (speed × time) [trade]:
  T_eq = (Σ |n_i|·t_i·|T_i|^p / Σ |n_i|·t_i)^(1/p)
* average output speed: n_avg = Σ |n_i|·t_i / Σ t_i
* life at that spectrum from the stage's rated point (torque T_r, speed n_r, life L_r):
  L = L_r·(T_r/T_eq)^p·(n_r/n_avg)

The exponent p is the life exponent of the rolling bearings that limit the stage: ISO 281's basic
rating life L10 = (C/P)^p millions of revolutions has p = 3 for ball and p = 10/3 for roller
bearings [pub]; the speed factor turns revolutions into hours. Strain-wave stages (wave-generator
ball bearing) are commonly rated with p = 3 and cycloidal stages (roller bearings) with 10/3; a
gear-tooth-limited stage uses its supplier's exponent [trade]. The revolution weighting of T_eq
follows from the same law: damage per revolution ∝ T^p.

Several cycles sharing the operating time with shares s_c (Σ s_c = 1) add their damage by the
Palmgren–Miner rule (Miner, J. Appl. Mech. 12, 1945 [pub]): per hour of operation the damage is
Σ s_c / L_c, so the combined life is L = 1 / Σ (s_c / L_c).

Arrays: torques and speeds carry time on the last axis; everything else broadcasts against the
leading axes (designs, joints, stage slots).
"""

from __future__ import annotations

import numpy as np


def equivalent_torque(torque, speed, dt, exponent) -> tuple[np.ndarray, np.ndarray]:
    """Revolution-weighted equivalent torque and average speed of a load spectrum.

    Parameters
    ----------
    torque : array_like (..., T)
        Output torque per sample (N·m); its sign is ignored.
    speed : array_like (..., T)
        Output speed per sample (rad/s); its sign is ignored.
    dt : array_like (T,)
        Time per sample (s), ≥ 0 (quadrature weights of the cycle).
    exponent : array_like (...)
        Life exponent p > 0.

    Returns
    -------
    (T_eq, n_avg) : arrays (...)
        T_eq in N·m (0 when nothing turns), n_avg in rad/s.
    """
    tau = np.abs(np.asarray(torque, dtype=float))
    n = np.abs(np.asarray(speed, dtype=float))
    w = np.asarray(dt, dtype=float)
    p = np.asarray(exponent, dtype=float)
    turns = n * w  # rad per sample
    total = turns.sum(axis=-1)
    safe = np.where(total > 0, total, 1.0)
    scale = tau.max(axis=-1, initial=0.0)  # scaled: |T|^p must not overflow for large torques
    unit = np.where(scale > 0, scale, 1.0)
    mean = np.sum(turns * (tau / unit[..., None]) ** p[..., None], axis=-1) / safe
    t_eq = np.where(total > 0, unit * mean ** (1.0 / p), 0.0)
    return t_eq, total / w.sum()


def rated_life(life_rated, torque_rated, speed_rated, exponent, t_eq, n_avg) -> np.ndarray:
    """L = L_r·(T_r/T_eq)^p·(n_r/n_avg) (units of ``life_rated``); inf when T_eq or n_avg is 0.

    NaN ratings (an unrated stage) give NaN; an infinite rated life (no stage) gives inf.
    """
    lr, tr, nr, p = (
        np.asarray(x, dtype=float) for x in (life_rated, torque_rated, speed_rated, exponent)
    )
    t_eq, n_avg = np.asarray(t_eq, dtype=float), np.asarray(n_avg, dtype=float)
    idle = (t_eq <= 0) | (n_avg <= 0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        life = lr * (tr / np.where(idle, 1.0, t_eq)) ** p * (nr / np.where(idle, 1.0, n_avg))
    life = np.where(idle, np.inf, life)
    life = np.where(np.isinf(lr), np.inf, life)
    return np.where(np.isnan(lr + tr + nr + p), np.nan, life)


def stack_life(torque, speed, dt, life_torque, life_speed, life_rated, life_exponent):
    """Life of each stage of a stack over one cycle, referred to the joint, and the least.

    Parameters
    ----------
    torque, speed : (..., T) joint-side torque (N·m) and speed (rad/s) per sample
    dt : (T,) time per sample (s)
    life_torque, life_speed, life_rated, life_exponent : (..., S)
        Joint-side rated point per stage slot (design.DesignArrays); an empty slot has
        life_rated = inf, an unrated stage NaN.

    Returns
    -------
    (life, slot, t_eq, n_avg) : arrays (...)
        The least stage life (s; NaN when a stage is unrated, inf without stages), the slot that
        sets it, and the equivalent torque (N·m, with that slot's exponent) and average speed.
    """
    lt, ls, lr, lp = (
        np.asarray(x, dtype=float) for x in (life_torque, life_speed, life_rated, life_exponent)
    )
    S = lr.shape[-1]
    tau = np.asarray(torque, dtype=float)
    lives, teqs = [], []
    n_avg = None
    for k in range(S):
        p = np.where(np.isfinite(lp[..., k]) & (lp[..., k] > 0), lp[..., k], 3.0)
        t_eq, n_avg = equivalent_torque(tau, speed, dt, p)
        lives.append(rated_life(lr[..., k], lt[..., k], ls[..., k], lp[..., k], t_eq, n_avg))
        teqs.append(t_eq)
    life = np.stack(lives, axis=-1)
    unrated = np.isnan(life).any(axis=-1)
    slot = np.argmin(np.where(np.isnan(life), -np.inf, life), axis=-1)
    least = np.take_along_axis(life, slot[..., None], axis=-1)[..., 0]
    t_eq = np.take_along_axis(np.stack(teqs, axis=-1), slot[..., None], axis=-1)[..., 0]
    return np.where(unrated, np.nan, least), slot, t_eq, n_avg


def miner_life(lives, shares) -> np.ndarray:
    """Combined life 1/Σ(s_c/L_c) over cycles c (Palmgren–Miner).

    Parameters
    ----------
    lives : array_like (C, ...)
        Life of each cycle run alone (any time unit); inf for a cycle that does no damage.
    shares : array_like (C,)
        Share of the operating time spent in each cycle, > 0, summing to 1.

    Returns
    -------
    ndarray (...)
        Combined life in the unit of ``lives``; NaN when any life is NaN.
    """
    L = np.asarray(lives, dtype=float)
    s = np.asarray(shares, dtype=float).reshape((-1,) + (1,) * (L.ndim - 1))
    damage = np.sum(s / L, axis=0)
    with np.errstate(divide="ignore"):
        return 1.0 / damage  # no damage: inf
