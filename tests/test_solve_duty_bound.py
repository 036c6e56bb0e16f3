"""The duty-cycle lower bound used for pruning never exceeds the evaluator's rating use.

Reference: the evaluator's own duty metrics (dutycase.evaluate_duty: RMS/continuous, peak/peak and
speed/max-speed uses per joint, metrics/duty.py); the bound must stay below each joint's largest
of those three for every design, exactly (interval collapsed) or with the masses of other joints
only known within their option range. Also the closed-form motor torque of the bound against
metrics.duty.motor_torque.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from jointwright.dutycase import evaluate_duty
from jointwright.metrics.duty import STANDSTILL, motor_torque
from jointwright.options import build_table
from jointwright.solve.duty_bound import motor_torque_linear
from jointwright.solve.model import SizingModel
from test_solve_search import example, small_catalog


@pytest.fixture(scope="module")
def setup():
    leg = example("leg")
    rng = np.random.default_rng(0)
    p = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=4, kinds=3, ratios=3),
        max_stages=1,
        objective={},
    )
    cases = tuple(
        dataclasses.replace(c, limits={"rating_use_max": 1.0}) if c.kind == "duty" else c
        for c in p.cases
    )
    p = dataclasses.replace(p, cases=cases)
    table = build_table(p)
    model = SizingModel(p, table, [np.arange(len(table))] * 3)
    assert model.duty_bound, "the leg example needs a duty case for this test"
    return p, table, model


def uses(model, pd, idx):
    ev = evaluate_duty(pd, model.table.arrays(idx), detail=True)
    return np.nanmax(np.stack([ev["rms_ratio"], ev["peak_ratio"], ev["speed_ratio"]]), axis=0)


@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_bound_below_rating_use(setup, seed):
    _p, table, model = setup
    pd, _limit = model.duty_bound.cases[0]
    rng = np.random.default_rng(seed)
    idx = rng.integers(0, len(table), (20, 3))
    actual = uses(model, pd, idx)
    st_ = model.stats([np.arange(len(table))] * 3)
    for j in range(3):
        # exact joint torque (every mass known)
        tau = pd.tau_links[j] + np.einsum("dk,kt->dt", model.mass[idx], pd.tau_mass[:, j])
        lb = model.duty_bound.lower_bound(pd, j, idx[:, j], tau, tau)
        assert np.all(lb <= actual[:, j] * (1 + 1e-9) + 1e-12)
        # other joints' masses only known within their ranges
        others = [k for k in range(3) if k != j]
        tm = pd.tau_mass[:, j]
        own = pd.tau_links[j] + model.mass[idx[:, j]][:, None] * tm[j]
        lo = own + sum(np.minimum(st_["mmin"][k] * tm[k], st_["mmax"][k] * tm[k]) for k in others)
        hi = own + sum(np.maximum(st_["mmin"][k] * tm[k], st_["mmax"][k] * tm[k]) for k in others)
        lbi = model.duty_bound.lower_bound(pd, j, idx[:, j], lo, hi)
        assert np.all(lbi <= lb * (1 + 1e-9) + 1e-12)  # wider interval, weaker bound


def test_closed_form_motor_torque_matches_the_metric(setup):
    _p, table, model = setup
    pd, _ = model.duty_bound.cases[0]
    r = table.rows
    rng = np.random.default_rng(2)
    o = rng.integers(0, len(table), 10)
    tau = rng.normal(0, 5, (10, pd.qd.shape[1]))
    j = 1
    ref, _mode = motor_torque(
        tau,
        pd.qd[j],
        pd.qdd[j],
        r["ratio"][o],
        r["eta_forward"][o],
        r["eta_backward"][o],
        r["rotor_inertia"][o],
        standstill=STANDSTILL * np.max(np.abs(pd.qd[j])),
    )
    got = motor_torque_linear(
        tau,
        pd.qd[j],
        pd.qdd[j],
        r["ratio"][o][:, None],
        r["eta_forward"][o][:, None],
        r["eta_backward"][o][:, None],
        r["rotor_inertia"][o][:, None],
    )
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-12)


@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(seed=st.integers(0, 2**31 - 1))
def test_upper_bound_holds_over_every_inner_interval(setup, seed):
    """The safe-option test's bound (module docstring of solve/duty_bound.py) is never below
    the lower bound over any interval inside the one it was computed for."""
    _p, table, model = setup
    pd, _limit = model.duty_bound.cases[0]
    rng = np.random.default_rng(seed)
    o = rng.integers(0, len(table), 30)
    T = pd.qd.shape[1]
    for j in range(3):
        a, b = rng.normal(0, 20, (2, T))
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        up = model.duty_bound.upper_bound(pd, j, o, lo[None, :], hi[None, :])
        s, w = rng.uniform(0, 1, (2, 30, T))
        inner_lo = lo + (hi - lo) * s * w
        inner_hi = inner_lo + (hi - inner_lo) * rng.uniform(0, 1, (30, T))
        lb = model.duty_bound.lower_bound(pd, j, o, inner_lo, inner_hi)
        assert np.all(lb <= up * (1 + 1e-12) + 1e-12)
        point = model.duty_bound.lower_bound(pd, j, o, inner_lo, inner_lo)
        assert np.all(point <= up * (1 + 1e-12) + 1e-12)


def _judge_everything(bound):
    """``bound`` with no option ever taken as safe: every option judged per node."""
    bound.safe = lambda c, j, options, lo, hi, deadline=None: np.zeros(options.size, dtype=bool)
    return bound


@pytest.mark.parametrize("limit", [0.3, 0.6, 1.0])
def test_safe_options_change_no_decision(setup, limit):
    """Pruning by the duty bound with the safe options skipped keeps exactly the options the
    full per-node judgement keeps, at random partial designs (every option, every level)."""
    from jointwright.solve.duty_bound import DutyBound

    p, table, _model = setup
    cases = tuple(
        dataclasses.replace(c, limits={"rating_use_max": limit}) if c.kind == "duty" else c
        for c in p.cases
    )
    q = dataclasses.replace(p, cases=cases)
    model = SizingModel(q, table, [np.arange(len(table))] * 3)
    fast = DutyBound(model.evaluator, table)
    slow = _judge_everything(DutyBound(model.evaluator, table))
    st_ = model.stats(model.candidates)
    rng = np.random.default_rng(int(limit * 10))
    options = np.arange(len(table))
    kept = 0
    for _ in range(20):
        unit = (int(rng.integers(0, 3)),)
        idx = np.full(3, -1, dtype=np.int64)
        for k in range(3):
            if k != unit[0] and rng.uniform() < 0.5:
                idx[k] = rng.integers(0, len(table))
        a = fast.ok(idx, unit, options, st_, model.mass)
        b = slow.ok(idx, unit, options, st_, model.mass)
        np.testing.assert_array_equal(a, b)
        kept += int(a.sum())
    assert 0 < kept  # the instance keeps some options ...
    if limit < 1.0:
        assert kept < 20 * len(table)  # ... and prunes some: the decisions are not trivial


def test_a_bound_stopped_by_its_deadline_cuts_nothing_it_did_not_judge(setup):
    """Past the deadline the duty bound keeps every option it has not judged (skipping a cut is
    safe): with the clock already past, nothing is cut; with no deadline the same node cuts
    some options (a tight limit), and a later call still judges them all."""
    import time

    from jointwright.solve.duty_bound import DutyBound

    p, table, _model = setup
    cases = tuple(
        dataclasses.replace(c, limits={"rating_use_max": 0.3}) if c.kind == "duty" else c
        for c in p.cases
    )
    model = SizingModel(dataclasses.replace(p, cases=cases), table, [np.arange(len(table))] * 3)
    bound = DutyBound(model.evaluator, table)
    st_ = model.stats(model.candidates)
    idx = np.full(3, -1, dtype=np.int64)
    options = np.arange(len(table))
    late = bound.ok(idx, (0,), options, st_, model.mass, time.perf_counter() - 1.0)
    assert late.all()
    full = bound.ok(idx, (0,), options, st_, model.mass)
    assert not full.all()
    fresh = DutyBound(model.evaluator, table).ok(idx, (0,), options, st_, model.mass)
    np.testing.assert_array_equal(full, fresh)
