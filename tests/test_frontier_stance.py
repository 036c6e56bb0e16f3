"""The frontier over stance (several-contact) cases: every point's payload is carried by every
stance case, whichever method found it.

Reference: brute force over every design of a small invented quadruped instance (3 motors,
2 stage types; tests/test_solve_stance_bound.py builds it), each design assessed in full by the
evaluator; a point on the front is a design no other design beats on payload and measure
[definition of Pareto optimality, pub].
"""

from __future__ import annotations

import pytest

from jointwright.assessment import assess
from jointwright.errors import InputError
from jointwright.frontier import frontier
from test_solve_stance_bound import _quadruped

#: the legs share one actuator per joint kind (as in the bundled quadruped): 3 units, a few
#: thousand designs, so the exhaustive method is the brute-force reference
LEGS = [
    [f"{leg}_{joint}" for leg in ("fl", "fr", "hl", "hr")] for joint in ("hip_ab", "hip_fe", "knee")
]


def _shared(seed):
    import dataclasses

    return dataclasses.replace(_quadruped(seed), objective={"shared": LEGS})


@pytest.mark.slow
@pytest.mark.parametrize("method", ["sweep", "branch-and-bound", "exhaustive"])
def test_stance_payload_holds_at_every_frontier_point(method):
    project = _shared(11)
    reference = frontier(project, "mass", method="exhaustive")
    front = frontier(project, "mass", method=method)
    assert front.complete
    for p in front.points:
        a = assess(project, p.design)
        stance = [c for c in a.cases if c.kind == "stance"]
        assert stance
        for c in stance:
            # the payload the stance case carries is at least the point's payload
            assert c.metrics["payload_mass"] >= p.payload - 1e-6 * max(1.0, p.payload), (
                method,
                c.name,
                p.payload,
            )
    got = [(round(p.payload, 6), round(p.value, 6)) for p in front.points]
    want = [(round(p.payload, 6), round(p.value, 6)) for p in reference.points]
    assert got == want


def test_exhaustive_refuses_a_front_too_large_to_score():
    # 12 joints with several options each: far more combinations than the exhaustive method
    # may hold; one clear message instead of exhausting the memory
    project = _quadruped(11)
    with pytest.raises(InputError, match="branch and bound") as err:
        frontier(project, "mass", method="exhaustive")
    assert err.value.field == "method"
