"""The search's payload probe (docs/optimizer.md, item 10) against exhaustive enumeration.

At a node, with a payload objective and an incumbent, each open unit keeps only the options whose
bound at the node can still reach the incumbent (less the tie tolerance); the statistics of what
is left are taken by :func:`jointwright.solve.node_bounds.narrowed`. Both are checked here on
random small leg instances (catalog subsets of the bundled example, limits set from random
designs, a total-mass budget and effective-mass / IMF limits): every option the probe drops has
no completion under the node that meets every requirement and reaches the floor (each completion
scored by the evaluator, the one physics oracle), and the narrowed statistics bound the subsets
they describe.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_solve_search import example, leg_with_impact_limits, oracle

from jointwright.sizing import units_of
from jointwright.solve.enumerate import combinations
from jointwright.solve.model import tie_tol, unit_options
from jointwright.solve.node_bounds import narrowed, useful_mmin
from jointwright.solve.search import BranchAndBound


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def instance(leg, seed):
    rng = np.random.default_rng(seed)
    return leg_with_impact_limits(leg, rng, {"imf_min": 1.0, "effective_mass_max": 1.0})


# seeds whose instances have feasible designs: with and without a budget, effective-mass and
# IMF limits (seeds 2, 4, 5, 7, 9, 10, 12, 14 of the first 20)
@pytest.mark.parametrize("seed", [2, 4, 5, 7, 9, 10, 12, 14])
def test_probe_drops_only_options_with_no_completion_that_reaches_the_floor(leg, seed):
    project = instance(leg, seed)
    _ref, model = oracle(project, "payload")
    search = BranchAndBound(model, units_of(model.n, model.shared))
    if not search.probe:
        pytest.skip("no bound reading the least masses in this instance")
    rows = combinations(model.candidates, 0, int(np.prod([c.size for c in model.candidates])))
    s = model.score(rows)
    good = s.feasible & np.isfinite(s.objective)
    assert good.any()
    first, second, third = search.units
    dropped = 0
    # floors: the best feasible payload (only ties survive) and a lower quantile
    for f0 in (float(s.objective[good].max()), float(np.quantile(s.objective[good], 0.5))):
        search.best_key = (f0, np.inf, np.inf, ())
        floor = f0 - tie_tol(f0)
        reach = good & (s.objective >= floor)
        for o in unit_options(model.candidates, first):
            idx = np.full(model.n, -1, dtype=np.int64)
            idx[list(first)] = o
            under = np.all(rows[:, list(first)] == o, axis=1)
            cands, st = search._node_candidates(idx, 1, list(model.candidates), search.st)
            if cands is None:
                assert not (reach & under).any(), "a node with a design that reaches the floor"
                continue
            assert st is not None
            for j in third:
                gone = np.setdiff1d(model.candidates[j], cands[j])
                dropped += gone.size
                hit = reach & under & np.isin(rows[:, j], gone)
                assert not hit.any(), (
                    f"joint {j}: dropped options {np.unique(rows[hit, j])} carry designs "
                    f"reaching {floor}"
                )
            # the units at and before the node's own are not touched
            for j in (*first, *second):
                assert np.array_equal(cands[j], model.candidates[j])
    assert dropped > 0, "the probe never dropped an option"


@pytest.mark.parametrize("seed", range(4))
def test_narrowed_statistics_bound_the_subsets(leg, seed):
    rng = np.random.default_rng(100 + seed)
    project = instance(leg, seed)
    _ref, model = oracle(project, "payload")
    st = model.stats(model.candidates)
    subsets = [
        np.sort(rng.choice(c, size=max(1, c.size // 3), replace=False)) for c in model.candidates
    ]
    nar = narrowed(model, st, subsets)
    exact = model.stats(subsets)
    for key in ("mmin", "mmax", "cmin", "rmin", "bmin"):
        assert np.array_equal(nar[key], exact[key]), key
    for a, b in zip(nar["hi"] + nar["lo"], exact["hi"] + exact["lo"], strict=True):
        assert np.array_equal(a, b)
    # the least useful mass from the superset's own bounds never exceeds the subset's own
    for floor in np.quantile([t.minimum for t in model.payload] + [0.0, 50.0], [0.0, 0.5, 1.0]):
        loose, tight = (
            useful_mmin(model, nar, float(floor)),
            useful_mmin(model, exact, float(floor)),
        )
        assert np.all((loose <= tight + 1e-12) | ~np.isfinite(tight))
        assert np.all(loose >= nar["mmin"] - 1e-12)
