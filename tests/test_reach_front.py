"""The per-joint payload reach front of the search's statistics against a brute-force filter.

Definition (Pareto dominance [pub]): an option's reach row survives when no other row is at
least as good in every payload case and better in one; equal rows count once. The search keeps
this front per joint (:func:`jointwright.solve.node_bounds._reach_front`) and reads its bounds
from it, so a row missing from it could cut a design. Random rows with ties, infinite reaches
(a case whose ray does not load the joint) and unknown (NaN) values are checked here.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from jointwright.solve.node_bounds import _reach_front


def _model(a: np.ndarray, hi: np.ndarray, lo: np.ndarray):
    """A stand-in with the fields _reach_front reads: per payload case t, a (n,), hi/lo (n, O)."""
    payload = [SimpleNamespace(a=a[t], hi=hi[t], lo=lo[t]) for t in range(a.shape[0])]
    return SimpleNamespace(payload=payload)


def _brute(a: np.ndarray, hi: np.ndarray, lo: np.ndarray, j: int, cands: np.ndarray) -> set:
    rows = []
    for o in cands:
        rows.append(
            [
                (hi[t, j, o] if a[t, j] > 0 else lo[t, j, o]) if a[t, j] != 0 else np.inf
                for t in range(a.shape[0])
            ]
        )
    R = np.array(rows, dtype=float)
    signs = np.where(a[:, j] >= 0, 1.0, -1.0)
    good = np.where(np.isnan(R * signs), -np.inf, R * signs)
    keep = set()
    for i in range(len(R)):
        if not any(
            np.all(good[k] >= good[i]) and np.any(good[k] > good[i]) for k in range(len(R))
        ):
            keep.add(tuple(good[i]))
    return keep


@pytest.mark.parametrize("seed", range(12))
def test_reach_front_is_the_pareto_front(seed):
    rng = np.random.default_rng(seed)
    cases, n, options = int(rng.integers(1, 4)), 2, int(rng.integers(1, 60))
    a = rng.choice([-1.0, 0.0, 0.5, 1.0], size=(cases, n))
    hi = rng.integers(0, 6, size=(cases, n, options)).astype(float)  # coarse: many ties
    lo = -rng.integers(0, 6, size=(cases, n, options)).astype(float)
    hi[rng.random(hi.shape) < 0.05] = np.inf  # self-locking holding capacity
    lo[rng.random(lo.shape) < 0.05] = np.nan
    j = int(rng.integers(0, n))
    cands = rng.permutation(options)[: int(rng.integers(1, options + 1))]
    front = _reach_front(_model(a, hi, lo), j, cands)
    signs = np.where(a[:, j] >= 0, 1.0, -1.0)
    got = np.where(np.isnan(front * signs), -np.inf, front * signs)
    assert len({tuple(r) for r in got}) == len(got)  # equal rows count once
    assert {tuple(r) for r in got} == _brute(a, hi, lo, j, cands)
