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
