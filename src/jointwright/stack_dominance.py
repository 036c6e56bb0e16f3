"""Dominance among stage stacks: a stack is dropped when another is at least as good for every
requirement the project can state, whatever motor, drive or joint it is given.

Each stack field an option is built from (:func:`jointwright.option_rows.stack_parts`) gets a
*rule* from what reads it (:func:`stack_rules`):

* ``"equal"``: read in both directions by some requirement, so a dominating stack must have the
  same value (to 12 significant digits: the same stage values multiplied in another order
  differ in the last bits). Ratio (speed against torque); mass (gravity loads other joints in
  either sense); forward and backward efficiency, self-locking and the efficiency band (a higher
  backward efficiency eases back-driving and lowers the holding capacity N·τ/η_b); the life
  ratings of each stage slot when the project has duty cases (the only reader);
* ``"low"``: every reader prefers less. Cost, length and diameter (sums, maxima and limits);
  the stages' breakaway torque (the back-drive force only, limited from above); the gear
  stiffness (the impact's gear shock T = |Δq̇|·√(k·I) only); the stages' input inertia when
  every case that reads it is a payload, stance, impact or back-drive case (reflected-inertia
  limits, the effective mass, the IMF and the shock grow with it; a speed case without
  commanded acceleration, stroke or acceleration limit does not read it), else ``"equal"`` (a
  commanded acceleration or a trajectory can make the rotor term N·I_r·q̈ work with the load);
* ``"high"``: every reader prefers more. The joint-side gear ratings (capacities are
  min(…, rating); uses are torque ÷ rating);
* ``"ignore"``: no requirement of the project reads it (the life slots without duty cases).

Stack A dominates stack B when every "equal" field agrees and A is no worse in every "low" and
"high" field (NaN, an unrated value, only matches NaN), and A is better in one of them or comes
first. Every option field is the stack's field or combines it monotonically with the unit's
(mass and cost add, inertia adds, breakaway is N·(cogging + stack part)/η_b with N and η_b
equal, diameter is a maximum, length a sum), so for every motor and drive option (m, A) is
then no worse than (m, B) in every field a requirement reads: replacing B by A in a feasible
design keeps it feasible with an objective at least as good. The relation is a strict partial
order, so every dropped stack is dominated by a kept one. Proof and tests: docs/optimizer.md,
tests/test_stack_dominance.py.
"""

from __future__ import annotations

import numpy as np

#: case kinds whose metrics all grow worse with the rotor-side inertia
INERTIA_MONOTONE_KINDS = frozenset({"payload", "stance", "impact", "backdrive"})

#: digits to which "equal" fields must agree
EQUAL_DIGITS = 12

_ALWAYS = {
    "ratio": "equal",
    "mass": "equal",
    "eta_forward": "equal",
    "eta_backward": "equal",
    "self_locking": "equal",
    "eta_forward_low": "equal",
    "eta_forward_high": "equal",
    "eta_backward_low": "equal",
    "eta_backward_high": "equal",
    "cost": "low",
    "length": "low",
    "diameter": "low",
    "breakaway": "low",
    "stiffness": "low",
    "gear_peak_torque": "high",
    "gear_continuous_torque": "high",
    "gear_momentary_torque": "high",
}

_LIFE = ("life_torque", "life_speed", "life_rated", "life_exponent")


def stack_rules(project) -> dict[str, str]:
    """Field -> "equal" | "low" | "high" | "ignore" for the stack fields of ``project``."""
    kinds = {c.kind for c in project.cases}
    rules = dict(_ALWAYS)
    inertia_read = [c for c in project.cases if not _inertia_neutral(c)]
    monotone = all(c.kind in INERTIA_MONOTONE_KINDS for c in inertia_read)
    rules["inertia"] = "low" if monotone else "equal"
    for name in _LIFE:
        rules[name] = "equal" if "duty" in kinds else "ignore"
    return rules


def _inertia_neutral(case) -> bool:
    """A speed case without commanded acceleration, stroke or acceleration limit: its checked
    figure (the loaded end-point speed, rotor term N·I_r·q̈ with q̈ = 0) does not read I_r."""
    return (
        case.kind == "speed"
        and case.acceleration == 0
        and case.stroke == 0
        and "acceleration_min" not in case.limits
    )


def _columns(parts: dict[str, np.ndarray], names) -> np.ndarray:
    cols = [np.asarray(parts[k], dtype=float).reshape(len(parts["ratio"]), -1) for k in names]
    return np.concatenate(cols, axis=1) if cols else np.zeros((len(parts["ratio"]), 0))


def undominated(parts: dict[str, np.ndarray], rules: dict[str, str]) -> np.ndarray:
    """Indices (ascending) of the stacks no other stack dominates.

    Parameters
    ----------
    parts : field -> array (S,) or (S, slots), the stacks' own parts of the option fields
    rules : field -> rule, from :func:`stack_rules`; every field of ``parts`` needs one
    """
    missing = set(parts) - set(rules)
    if missing:  # a new stack field needs its rule (and its proof) first
        raise KeyError(f"no dominance rule for stack fields {sorted(missing)}")
    S = len(parts["ratio"])
    eq = _columns(parts, [k for k in parts if rules[k] == "equal"])
    # "better is larger" for every compared column
    good = np.concatenate(
        [
            -_columns(parts, [k for k in parts if rules[k] == "low"]),
            _columns(parts, [k for k in parts if rules[k] == "high"]),
        ],
        axis=1,
    )
    key = np.array(
        [tuple(f"{v:.{EQUAL_DIGITS}g}" for v in row) for row in eq], dtype=object
    ).reshape(S, -1)
    groups: dict[tuple, list[int]] = {}
    for s in range(S):
        groups.setdefault(tuple(key[s]), []).append(s)
    keep = np.ones(S, dtype=bool)
    nan = np.isnan(good)
    for members in groups.values():
        if len(members) < 2:
            continue
        m = np.asarray(members)
        g, gn = good[m], nan[m]
        # ge[a, b]: a is no worse than b in every column (NaN only matches NaN)
        same_nan = (gn[:, None, :] == gn[None, :, :]).all(axis=2)
        with np.errstate(invalid="ignore"):
            ge = ((g[:, None, :] >= g[None, :, :]) | (gn[:, None, :] & gn[None, :, :])).all(axis=2)
            gt = (g[:, None, :] > g[None, :, :]).any(axis=2)
        ge &= same_nan
        first = m[:, None] < m[None, :]
        dom = ge & (gt | first)
        np.fill_diagonal(dom, False)
        keep[m[dom.any(axis=0)]] = False
    return np.flatnonzero(keep)
