"""The linear exit finder of the acceleration limits equals the general one with c2 = 0.

Reference: metrics.loaded._first_rise (first x in [start, end] where c2·x² + c1·x + c0 turns
positive), itself checked against integrals and Pinocchio terms in tests/test_speed.py. The
acceleration limits are linear in α, so the speed case's stroke figure calls the linear form;
its results must be the same numbers, including zeros, infinities and tiny values.
"""

from __future__ import annotations

import numpy as np

from jointwright.metrics.acceleration import _first_rise_linear
from jointwright.metrics.loaded import _first_rise


def test_linear_exit_equals_the_general_root_finder():
    rng = np.random.default_rng(0)
    n = 100_000
    special = np.array([0.0, -0.0, 1.0, -1.0, np.inf, -np.inf, 1e-300, 3.5, -2.25, 1e300])
    c1 = rng.choice(special, n) * np.where(rng.random(n) < 0.5, 1.0, rng.random(n))
    c0 = rng.choice(special, n) * rng.normal(size=n)
    start = rng.choice([0.0, 0.5, 2.0], n)
    end = rng.choice([0.1, 1.0, np.inf], n)
    with np.errstate(invalid="ignore"):
        want = _first_rise(start, end, np.zeros(n), c1, c0)
    got = _first_rise_linear(start, end, c1, c0)
    np.testing.assert_array_equal(got, want)
    assert np.isfinite(got).any() and np.isinf(got).any() and (got == start).any()
