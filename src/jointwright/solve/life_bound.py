"""Per-joint filters for the gear life requirement (``[requirements] life_min``), proven safe.

Along a duty cycle the joint torque is linear in the actuator masses,
τ_j(t) = τ_links,j(t) + Σ_k m_k·τ_k,j(t) (dutycase.py). For joint j with option o the own mass
m_o is known; every other joint's mass lies in [m_min, m_max], the lightest and heaviest option
of the whole table. So per sample

    |τ_j(t)| ≥ ℓ(t) = max(0, |c(t)| − r(t)),  c = τ_links,j + m_o·τ_j,j + Σ_k mid_k·τ_k,j,
                                              r = Σ_k half_k·|τ_k,j|   (k ≠ j)

for every completion of the design. The equivalent torque T_eq grows with every |T_i|, so
T_eq(ℓ) ≤ T_eq(τ_j), and the life L = L_r·(T_r/T_eq)^p·(n_r/n_avg) (n_avg does not depend on the
design) is at most its value at ℓ; a stack's life is its weakest stage's, so it is at most the
least of those bounds; Miner's rule 1/Σ(s_c/L_c) grows with every L_c. An option whose upper
bound is below life_min misses it in every design, and so does one whose stage is unrated
(life unknown). Likewise the peak joint torque is at least max_t ℓ(t): above the repeated-peak
rating, the option misses ``gear_peak_use_max`` in every design.
"""

from __future__ import annotations

import numpy as np

from ..metrics.gear_life import equivalent_torque, miner_life, rated_life
from ..metrics.signals import weights
from ..project import life_shares

#: an option is removed only when its bound misses the limit by more than this (relative)
SLACK = 1e-9


def life_masks(project, table, evaluator) -> list[tuple[int, str, np.ndarray]]:
    """(joint, label, keep mask over the table's options) for ``life_min``; [] without it."""
    limit = project.requirements.life_min
    shares = life_shares(project)
    if limit <= 0 or not shares:
        return []
    by_name = {pd.case.name: pd for pd in evaluator.duty}
    cycles = [(by_name[name], s) for name, s in shares]
    r = table.rows
    mass = r["mass"]
    lo, hi = float(mass.min()), float(mass.max())
    mid, half = (lo + hi) / 2.0, (hi - lo) / 2.0
    n = len(project.robot.actuated)
    own_masses, own_index = np.unique(mass, return_inverse=True)
    out = []
    for j in range(n):
        lives, peaks = [], []
        for pd, _share in cycles:
            others = [k for k in range(n) if k != j]
            tm = pd.tau_mass  # (n_act, n, T)
            centre = pd.tau_links[j] + mid * tm[others, j].sum(axis=0)  # (T,)
            radius = half * np.abs(tm[others, j]).sum(axis=0)
            c = centre[None, :] + own_masses[:, None] * tm[j, j][None, :]  # (U, T)
            least = np.maximum(np.abs(c) - radius[None, :], 0.0)  # (U, T) per distinct mass
            peaks.append(least.max(axis=-1)[own_index])
            lives.append(_stack_life_bound(least, own_index, pd.qd[j], weights(pd.trajectory.t), r))
        life = miner_life(lives, [s for _pd, s in cycles])
        with np.errstate(invalid="ignore"):
            keep_life = life >= limit * (1 - SLACK)  # NaN (unrated) is never kept
            keep_peak = np.max(peaks, axis=0) <= r["gear_peak_torque"] * (1 + SLACK)
        out.append((j, "life_min", keep_life))
        out.append((j, "gear_peak_use_max", keep_peak))
    return out


def _stack_life_bound(least, own_index, speed, dt, r: dict) -> np.ndarray:
    """Upper bound (O,) on each option's stack life from per-sample torque lower bounds (U, T)
    per distinct own mass (``own_index`` maps options to them)."""
    lt, ls, lr, lp = (r[k] for k in ("life_torque", "life_speed", "life_rated", "life_exponent"))
    bound = np.full(lr.shape[0], np.inf)
    exponents = np.where(np.isfinite(lp) & (lp > 0), lp, 3.0)
    t_eq_of = {}
    n_avg = None
    for p in np.unique(exponents):
        t_eq_of[p], n_avg = equivalent_torque(least, speed, dt, np.full(least.shape[0], p))
    for k in range(lr.shape[-1]):
        t_eq = np.empty(lr.shape[0])
        for p, values in t_eq_of.items():
            rows = exponents[:, k] == p
            t_eq[rows] = values[own_index[rows]]
        life = rated_life(lr[:, k], lt[:, k], ls[:, k], lp[:, k], t_eq, n_avg)
        bound = np.where(np.isnan(life) | np.isnan(bound), np.nan, np.minimum(bound, life))
    return bound
