"""Force polytope against pycapacity and hand cases; ray and support function against the polytope.

Sources: Chiacchio et al. 1997 [mem] for P = {F : τ_min ≤ Jᵀ·F + τ_bias ≤ τ_max}; pycapacity
(Skuric, Padois, Daney, JOSS 2023 [pub]) as the independent reference implementation. pycapacity's
convention Jᵀ·f = τ − t_bias is ours (τ = τ_bias + Jᵀ·F), so τ_bias is passed as t_bias unchanged.
"""

import math

import numpy as np
import pytest
from scipy.spatial import ConvexHull

from jointwright.errors import InputError
from jointwright.metrics.payload import max_force_component, payload_along
from jointwright.metrics.polytope import force_polytope


def random_case(seed, m, n, bias_scale=0.3):
    rng = np.random.default_rng(seed)
    J = rng.standard_normal((m, n))
    low, high = -rng.uniform(1, 3, n), rng.uniform(1, 3, n)
    return J, low, high, rng.uniform(-bias_scale, bias_scale, n), rng


def same_point_sets(a, b, atol):
    d = np.linalg.norm(a[:, None, :] - b[None, :, :], axis=-1)
    return d.min(axis=1).max() <= atol and d.min(axis=0).max() <= atol


@pytest.mark.parametrize("m,n", [(2, 2), (2, 3), (2, 5), (3, 3), (3, 4), (3, 6)])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_vertices_match_pycapacity(m, n, seed):
    pc = pytest.importorskip("pycapacity.robot")
    J, low, high, bias, _ = random_case(seed, m, n)
    ours = force_polytope(J, low, high, bias)
    theirs = pc.force_polytope(J, high, low, bias).vertices.T  # columns are vertices
    theirs = theirs[ConvexHull(theirs).vertices]  # keep extreme points only
    assert not ours.clipped and not ours.empty
    assert len(ours.vertices) == len(theirs)
    assert same_point_sets(ours.vertices, theirs, atol=1e-6)  # pycapacity ~4e-8 accurate


def test_box_polytope_by_hand():
    # J = I, bias (0.5, −1): τ = bias + F within [−1, 1] × [−2, 2] → F1 ∈ [−1.5, 0.5], F2 ∈ [−1, 3]
    P = force_polytope(np.eye(2), [-1.0, -2.0], [1.0, 2.0], [0.5, -1.0])
    expected = np.array([[-1.5, -1.0], [0.5, -1.0], [0.5, 3.0], [-1.5, 3.0]])
    assert same_point_sets(P.vertices, expected, atol=1e-12)
    assert P.A.shape == (4, 2) and P.simplices.shape == (4, 2)
    # counter-clockwise order in 2-D: positive signed area 2·4 = 8
    x, y = P.vertices.T
    assert 0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y) == pytest.approx(8.0)


def test_faces_are_consistent():
    J, low, high, bias, _ = random_case(5, 3, 6)
    P = force_polytope(J, low, high, bias)
    slack = P.vertices @ P.A.T - P.b
    assert slack.max() <= 1e-9  # every vertex inside every face
    on_face = (np.abs(slack) <= 1e-9).sum(axis=0)
    assert on_face.min() >= 3  # each face of a 3-D polytope holds at least 3 vertices
    np.testing.assert_allclose(np.linalg.norm(P.A, axis=1), 1.0)
    assert P.simplices.max() < len(P.vertices)


@pytest.mark.parametrize("seed", range(6))
def test_ray_and_support_against_polytope(seed):
    J, low, high, bias, rng = random_case(seed, 3, 5)
    P = force_polytope(J, low, high, bias)
    for _ in range(5):
        u = rng.standard_normal(3)
        un = u / np.linalg.norm(u)
        ray = payload_along(J, bias, low, high, u)
        sup = max_force_component(J, bias, low, high, u)
        # the ray leaves P through the first face with A·u > 0: s = min b_k/(A_k·u)
        au = P.A @ un
        s_poly = np.min(P.b[au > 0] / au[au > 0])
        assert ray.force == pytest.approx(s_poly, rel=1e-8)
        # support function = max over the vertices of uᵀv, and it is ≥ the ray
        assert sup.value == pytest.approx(np.max(P.vertices @ un), rel=1e-7, abs=1e-9)
        assert ray.force <= sup.value + 1e-9


def test_unbounded_is_clipped_and_flagged():
    # three joints but the z-row of J is zero: nothing limits F_z
    J = np.array([[1.0, 0.0, 0.3], [0.0, 1.0, -0.2], [0.0, 0.0, 0.0]])
    P = force_polytope(J, [-1.0] * 3, [1.0] * 3, box=1e4)
    assert P.clipped and not P.empty
    assert np.isclose(np.abs(P.vertices[:, 2]).max(), 1e4)
    # a self-locking joint (infinite holding bound on one side)
    P = force_polytope(np.eye(2), [-math.inf, -1.0], [1.0, 1.0], box=500.0)
    assert P.clipped and P.vertices[:, 0].min() == pytest.approx(-500.0)


def test_empty_polytope():
    # joint 2 feels no tip force and its bias exceeds its bound: no force helps
    J = np.array([[1.0, 0.0], [0.0, 0.0]])
    P = force_polytope(J, [-1.0, -1.0], [1.0, 1.0], [0.0, 3.0])
    assert P.empty and P.vertices.shape == (0, 2)
    # bias far outside every bound and the torques cannot all be met: empty
    P = force_polytope(np.array([[1.0, 1.0], [0.0, 0.0]]), [-1.0, -1.0], [1.0, 1.0], [5.0, -5.0])
    assert P.empty


def test_bad_input():
    with pytest.raises(InputError, match="J"):
        force_polytope(np.ones((4, 4)), -np.ones(4), np.ones(4))
    with pytest.raises(InputError, match="tau_high"):
        force_polytope(np.eye(2), [-1.0, -1.0], [1.0])
    with pytest.raises(InputError, match="box"):
        force_polytope(np.eye(2), [-1.0, -1.0], [1.0, 1.0], box=0.0)
    with pytest.raises(InputError, match="tau_low"):
        force_polytope(np.eye(2), [2.0, -1.0], [1.0, 1.0])
