"""Evaluator.evaluate on several threads equals one thread to 1e-9.

Every design's metrics depend on that design only (the evaluator's contract,
tests/test_evaluate.py::test_batched_equals_one_by_one), so splitting a batch between threads
may change nothing but round-off in the batched matrix products.
"""

from __future__ import annotations

import numpy as np
import pytest

import jointwright.evaluate as evaluate_module
from jointwright.evaluate import Evaluator


def _same(a: dict, b: dict) -> None:
    assert a.keys() == b.keys()
    for case in a:
        assert a[case].keys() == b[case].keys(), case
        for key in a[case]:
            x, y = np.asarray(a[case][key]), np.asarray(b[case][key])
            assert x.shape == y.shape, (case, key)
            if x.dtype.kind == "f":
                np.testing.assert_allclose(y, x, rtol=1e-9, atol=1e-300, err_msg=f"{case} {key}")
            else:
                np.testing.assert_array_equal(y, x, err_msg=f"{case} {key}")


@pytest.mark.parametrize("detail", [False, True])
def test_threaded_evaluation_equals_one_thread(leg_project, random_designs, detail, monkeypatch):
    monkeypatch.setattr(evaluate_module, "PARALLEL_MIN", 64)
    d = random_designs(leg_project, 301, 9)  # odd: unequal slices
    ev = Evaluator(leg_project)
    monkeypatch.setattr(evaluate_module, "THREADS", 1)
    one = ev.evaluate(d, detail=detail)
    monkeypatch.setattr(evaluate_module, "THREADS", 2)
    two = ev.evaluate(d, detail=detail)
    _same(one, two)
