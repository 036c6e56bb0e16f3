"""The fused impact kernel (metrics.impact_fused) equals the generic path to 1e-9.

Reference: metrics.impact_mitigation.impact_mitigation (the generic entry-list path, itself checked
against numpy.linalg on Pinocchio mass matrices and against the impact mitigation factor
ξ = det(I − Λ·Λ_L⁻¹) of Wensing et al., IEEE T-RO 33(3), 2017 [pub] in tests/test_evaluate.py
and tests/test_metrics_inertia.py). The evaluator runs either path (``Evaluator.fused_impact``).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import jointwright.evaluate as evaluate_module
import jointwright.impactcase as impactcase_module
from jointwright.errors import InputError, SingularPoseError
from jointwright.evaluate import Evaluator
from jointwright.metrics.impact_fused import entries_batch_last, impact_fused
from jointwright.metrics.impact_mitigation import impact_mitigation

RTOL = 1e-9


def _assert_same(a: dict, b: dict) -> None:
    assert a.keys() == b.keys()
    for key in a:
        x, y = np.asarray(a[key], dtype=float), np.asarray(b[key], dtype=float)
        assert x.shape == y.shape, key
        np.testing.assert_allclose(y, x, rtol=RTOL, atol=1e-300, err_msg=key)


@pytest.mark.parametrize("detail", [False, True])
def test_leg_impact_case_equals_the_generic_path(leg_project, random_designs, detail, monkeypatch):
    # several chunks, shared between two threads, with some self-locking joints (locked)
    monkeypatch.setattr(evaluate_module, "IMPACT_CHUNK", 700)
    monkeypatch.setattr(evaluate_module, "THREADS", 2)
    d = random_designs(leg_project, 3000, 11)
    locking = np.random.default_rng(3).random(d.self_locking.shape) < 0.2
    d = dataclasses.replace(d, self_locking=locking)
    ev = Evaluator(leg_project)
    pc = next(p for p in ev.cases if p.case.kind == "impact")
    ev.fused_impact = False
    generic = ev._impact(pc, d, detail)
    ev.fused_impact = True
    fused = ev._impact(pc, d, detail)
    _assert_same(generic, fused)
    assert (fused["contact_rank"] < 3).any() and (fused["contact_rank"] == 3).any()


def test_leg_whole_evaluation_unchanged_by_the_fused_kernel(leg_project, random_designs):
    d = random_designs(leg_project, 500, 5)
    ev = Evaluator(leg_project)
    ev.duty = ()
    ev.fused_impact = False
    generic = ev.evaluate(d, detail=False)
    ev.fused_impact = True
    fused = ev.evaluate(d, detail=False)
    for name in generic:
        _assert_same(generic[name], fused[name])


def _random_case(rng, D: int, nv: int = 9, rank_drop: bool = False):
    A = rng.normal(size=(D, nv, nv))
    H = A @ np.swapaxes(A, -1, -2) + nv * np.eye(nv)
    H = 0.5 * (H + np.swapaxes(H, -1, -2))
    J = rng.normal(size=(3, nv))
    if rank_drop:  # base and joints decoupled, joints moving the contact along one line only:
        # K = J_j − J_b·H_bb⁻¹·H_bj = J_j has rank 1, so rank(I − Λ·Λ_L⁻¹) = 1
        H[:, :6, 6:] = 0.0
        H[:, 6:, :6] = 0.0
        J[:, 6:] = np.outer(rng.normal(size=3), rng.normal(size=nv - 6))
    x = rng.normal(size=3)
    return H, J, x / np.linalg.norm(x)


@pytest.mark.parametrize("rank_drop", [False, True])
def test_kernel_equals_impact_mitigation_on_random_matrices(rank_drop):
    rng = np.random.default_rng(42)
    D = 400
    H, J, x = _random_case(rng, D, rank_drop=rank_drop)
    locked = rng.random((D, 3)) < 0.25
    ref = impact_mitigation(H, np.broadcast_to(J, (D, 3, 9)), 6, locked, direction=x)
    got = impact_fused(
        entries_batch_last(np.ascontiguousarray(np.moveaxis(H, 0, -1))), J, 6, locked, x
    )
    np.testing.assert_array_equal(got.rank, ref.rank)
    for name, want in (
        ("imf", ref.imf),
        ("imf_restricted", ref.imf_restricted),
        ("imf_direction", ref.imf_direction),
    ):
        np.testing.assert_allclose(getattr(got, name), want, rtol=RTOL, atol=1e-15, err_msg=name)
    # effective mass along x: 1/(xᵀ·Λ⁻¹·x), Λ from the reference
    want_mass = 1.0 / np.einsum("i,...ij,j->...", x, np.linalg.inv(ref.Lambda), x)
    np.testing.assert_allclose(1.0 / got.mobility, want_mass, rtol=RTOL)
    if rank_drop:
        assert set(np.unique(got.rank)) <= {0, 1} and (got.rank == 1).any()


def test_kernel_reports_a_matrix_that_is_not_positive_definite():
    rng = np.random.default_rng(1)
    H, J, x = _random_case(rng, 4)
    H[2, 7, 7] = -1.0
    with pytest.raises(InputError, match="positive definite"):
        impact_fused(entries_batch_last(np.ascontiguousarray(np.moveaxis(H, 0, -1))), J, 6, None, x)


def test_kernel_reports_a_contact_that_cannot_move():
    rng = np.random.default_rng(2)
    H, J, x = _random_case(rng, 4)
    J[2, :] = 0.0  # no coordinate moves the contact along z
    with pytest.raises(SingularPoseError):
        impact_fused(entries_batch_last(np.ascontiguousarray(np.moveaxis(H, 0, -1))), J, 6, None, x)


def test_a_single_design(leg_project, random_designs, monkeypatch):
    # the evaluator sends small batches the generic way; force the fused kernel on one design
    monkeypatch.setattr(impactcase_module, "FUSED_IMPACT_MIN", 1)
    d = random_designs(leg_project, 1, 2)
    ev = Evaluator(leg_project)
    pc = next(p for p in ev.cases if p.case.kind == "impact")
    ev.fused_impact = False
    generic = ev._impact(pc, d, True)
    ev.fused_impact = True
    _assert_same(generic, ev._impact(pc, d, True))


def test_rotor_coupling_goes_through_the_assembled_mass_matrix(leg_project, random_designs):
    # the rotor's spin with its stator body adds off-diagonal terms (docs/metrics.md); the fused
    # kernel then reads H as the generic path builds it
    project = dataclasses.replace(leg_project, rotor_coupling=True)
    d = random_designs(project, 900, 4)
    ev = Evaluator(project)
    pc = next(p for p in ev.cases if p.case.kind == "impact")
    ev.fused_impact = False
    generic = ev._impact(pc, d, True)
    ev.fused_impact = True
    _assert_same(generic, ev._impact(pc, d, True))
