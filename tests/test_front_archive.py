"""The front archive's payload floor: a box at or below the floor of its measure bound is
dominated (the stance programs of the branch and bound skip it; docs/frontier.md)."""

from __future__ import annotations

import numpy as np
import pytest

from jointwright.solve.front_archive import FrontArchive


def archive(rng, with_incumbent: bool) -> FrontArchive:
    a = FrontArchive()
    k = int(rng.integers(0, 6))
    # a front: payload ascending, measure descending (internal sense: larger is better)
    a.fp = np.sort(rng.uniform(1.0, 100.0, k))
    a.fm = np.sort(rng.uniform(-1.0, 1.0, k))[::-1]
    a.inc = (float(rng.uniform(1, 100)), float(rng.uniform(-1, 1))) if with_incumbent else None
    return a


@pytest.mark.parametrize("with_incumbent", [False, True])
def test_every_box_at_or_below_the_floor_is_dominated(with_incumbent):
    """Checked against the archive's own dominance test on random fronts, at the front's own
    measures (the ties) and between them."""
    rng = np.random.default_rng(7)
    for _ in range(200):
        a = archive(rng, with_incumbent)
        m = np.concatenate([rng.uniform(-1.2, 1.2, 50), a.fm])
        floor = a.payload_floor(m)
        below = np.isfinite(floor)
        if a.fp.size or a.inc is not None:
            # the front's own measures always have a floor (their own point at least)
            assert below.any()
        # at the floor itself, and anywhere under it
        for scale in (1.0, rng.uniform(0.0, 1.0)):
            p = np.where(below, floor * scale, 0.0)
            assert a.dominated(p[below], m[below]).all()
        # the floor is the largest such payload among the front's points and the incumbent:
        # just above it (beyond the payload tolerance) a box is not dominated
        up = floor[below] * (1 + 1e-6) + 1e-6
        assert not a.dominated(up, m[below]).any()


def test_no_front_and_no_incumbent_has_no_floor():
    a = FrontArchive()
    a.fp, a.fm, a.inc = np.zeros(0), np.zeros(0), None
    assert np.isneginf(a.payload_floor(np.array([0.0, 1.0]))).all()
