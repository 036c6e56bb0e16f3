"""The frontier over stance (several-contact) cases: the second stage of a frontier point (the
best measure at the point's payload) must keep the payload on stance cases too, and the
exhaustive method must refuse what it cannot hold.

Reference: the payload-to-force law of a case, F = fixed_load + share·g_n·m (docs/metrics.md;
standard gravity g_n = 9.80665 m/s², CGPM 1901 [pub]).
"""

from __future__ import annotations

import pytest

from jointwright.cases import STANDARD_GRAVITY
from jointwright.errors import InputError
from jointwright.frontier import frontier, with_payload_floor
from test_solve_stance_bound import _quadruped


def test_payload_floor_binds_stance_cases_as_well_as_payload_cases():
    project = _quadruped(11)
    stance = [c for c in project.cases if c.kind == "stance"]
    assert stance, "the invented quadruped instance has stance cases"
    floored = with_payload_floor(project, 20.0)
    for before, after in zip(project.cases, floored.cases, strict=True):
        if before in stance and before.payload_share > 0:
            want = before.fixed_load + before.payload_share * STANDARD_GRAVITY * 20.0
            assert after.limits["payload_min"] == pytest.approx(want, rel=1e-8)


def test_exhaustive_refuses_a_front_too_large_to_score():
    # 12 joints with several options each: far more combinations than the exhaustive method
    # may hold; one clear message instead of exhausting the memory
    project = _quadruped(11)
    with pytest.raises(InputError, match="branch and bound") as err:
        frontier(project, "mass", method="exhaustive")
    assert err.value.field == "method"
