"""Back-drive force of the unpowered robot: static joint friction against a push at the tip.

Sources: Coulomb breakaway (static friction) of each joint and virtual-work statics τ = Jᵀ·F
[trade]; the hand cases below are recomputed in the comments; a scan over the push magnitude
is the independent oracle for random serial arms.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.errors import InputError
from jointwright.metrics.backdrive import backdrive_force


def one_link(length=0.5):
    return np.array([[0.0], [length]])  # horizontal link about z: tip moves in y


def test_one_link_with_gravity_by_hand():
    # gravity holds 4.905 N·m (2 kg at 0.25 m) against a 6 N·m breakaway.
    # Push down (u = −y): τ = 4.905 + 0.5·s reaches 6 at s = (6 − 4.905)/0.5 = 2.19 N.
    # Push up (u = +y): τ = 4.905 − 0.5·s reaches −6 at s = (6 + 4.905)/0.5 = 21.81 N.
    down = backdrive_force(one_link(), [6.0], [0.0, -1.0], tau_bias=[4.905])
    up = backdrive_force(one_link(), [6.0], [0.0, 1.0], tau_bias=[4.905])
    assert down.force == pytest.approx(2.19, rel=1e-12) and down.limiting_joint == 0
    assert up.force == pytest.approx(21.81, rel=1e-12)
    # gravity held elsewhere: symmetric, 6/0.5 = 12 N
    assert backdrive_force(one_link(), [6.0], [0.0, 1.0]).force == pytest.approx(12.0)


def test_self_locking_and_unloaded():
    res = backdrive_force(one_link(), [math.inf], [0.0, 1.0], tau_bias=[4.9])
    assert res.force == math.inf and res.self_locked and res.limiting_joint == -1
    # a push along the link loads no joint: infinite, but not because of self-locking
    res = backdrive_force(one_link(), [1.0], [1.0, 0.0])
    assert res.force == math.inf and not res.self_locked


def test_sags_unpowered():
    # gravity 4.905 N·m above a 3 N·m breakaway: the arm falls by itself
    res = backdrive_force(one_link(), [3.0], [0.0, 1.0], tau_bias=[4.905])
    assert not res.holds and res.force == 0.0 and res.limiting_joint == 0


def test_first_joint_to_slip_two_links():
    # q = (0, π/2), l1 = 0.4, l2 = 0.3: J = [[−0.3, −0.3], [0.4, 0]].
    # Push along −x: Jᵀu = (0.3, 0.3); τ = −s·(0.3, 0.3); breakaways (3, 1.5) N·m → joint 2 at
    # s = 1.5/0.3 = 5 N before joint 1 at 10 N.
    J = np.array([[-0.3, -0.3], [0.4, 0.0]])
    res = backdrive_force(J, [3.0, 1.5], [-1.0, 0.0])
    assert res.force == pytest.approx(5.0) and res.limiting_joint == 1
    # a self-locking elbow hands the slip to the shoulder: 3/0.3 = 10 N
    res = backdrive_force(J, [3.0, math.inf], [-1.0, 0.0])
    assert res.force == pytest.approx(10.0) and res.limiting_joint == 0 and not res.self_locked


@settings(derandomize=True, max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_matches_scan_over_push(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 5))
    J = rng.standard_normal((3, n))
    b = rng.uniform(1.0, 5.0, n)
    c = rng.uniform(-0.9, 0.9, n) * b  # gravity inside every breakaway
    u = rng.standard_normal(3)
    res = backdrive_force(J, b, u, tau_bias=c)
    un = u / np.linalg.norm(u)
    assert res.holds and np.isfinite(res.force)

    def slips(s):
        return np.any(np.abs(c - s * (J.T @ un)) > b)

    assert not slips(res.force * (1 - 1e-9))
    assert slips(res.force * (1 + 1e-9) + 1e-12)
    k = res.limiting_joint
    assert abs(abs(c[k] - res.force * (J.T @ un)[k]) - b[k]) <= 1e-9 * b[k]


def test_batched_shapes():
    J = np.stack([one_link(0.5), one_link(0.25)])  # two poses
    b = np.array([[6.0], [3.0], [12.0]])[:, None, :]  # three designs
    res = backdrive_force(J, b, [0.0, 1.0])
    np.testing.assert_allclose(res.force, [[12, 24], [6, 12], [24, 48]])


def test_bad_input():
    with pytest.raises(InputError, match="breakaway"):
        backdrive_force(one_link(), [-1.0], [0.0, 1.0])
    with pytest.raises(InputError, match="breakaway"):
        backdrive_force(one_link(), [1.0, 2.0], [0.0, 1.0])
    with pytest.raises(InputError, match="u"):
        backdrive_force(one_link(), [1.0], [0.0, 0.0])
    with pytest.raises(InputError, match="tau_bias"):
        backdrive_force(one_link(), [1.0], [0.0, 1.0], tau_bias=[math.inf])
