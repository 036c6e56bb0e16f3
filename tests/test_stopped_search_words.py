"""A sizing run stopped by its time limit is never presented as an optimum: the design it writes
is named as the best found, not proven, and the report's summary says the search stopped, with
the proven gap (docs/report.md) [derived from the result's own status]."""

from __future__ import annotations

import dataclasses
import math

import pytest

from jointwright.report.summary import search_note


def test_search_note_names_the_stop_and_the_gap():
    note = search_note({"status": "time_limit", "gap": 0.0834})
    assert "stopped at its time limit" in note and "not a proven optimum" in note
    assert "8.34 %" in note
    unknown = search_note({"status": "time_limit", "gap": "inf"})
    assert "not known" in unknown
    assert search_note({"status": "optimal", "gap": 0.0}) is None
    assert search_note(None) is None


def test_a_stopped_run_names_its_design_best_found(monkeypatch):
    """The leg example sized with the back-end's outcome marked as stopped: the design is named
    "best payload found (not proven)"; the same run proven keeps "payload optimum"."""
    from jointwright import sizing
    from jointwright.project import load_example

    project = load_example("leg")
    real = sizing.run_backend

    def stopped(*args, **kwargs):
        out = real(*args, **kwargs)
        return dataclasses.replace(out, status="time_limit", bound=out.objective * 1.05)

    proven = sizing.size(project, explain=False)
    assert proven.status == "optimal" and proven.design.name == "payload optimum"
    monkeypatch.setattr(sizing, "run_backend", stopped)
    res = sizing.size(project, explain=False)
    assert res.status == "time_limit"
    assert res.design.name == "best payload found (not proven)"
    assert math.isfinite(res.gap) and res.gap == pytest.approx(0.05, rel=1e-3)


def test_a_best_alone_from_a_stopped_search_is_marked_as_a_bound():
    """The diagnosis's "best alone" of an IMF limit comes from a search of its own; when that
    search stops at its time share its bound is no design's value: ``best_proven`` is False and
    the table marks it "≤" (its margin alone "≤" too); a finished search's value is unmarked."""
    from types import SimpleNamespace

    from jointwright.project import load_example
    from jointwright.report.wording import bound_mark
    from jointwright.sizing import build_model
    from jointwright.solve.explain import diagnose

    leg = load_example("leg")
    p = dataclasses.replace(
        leg,
        cases=tuple(
            dataclasses.replace(c, limits={"imf_min": 0.9}) if c.name == "touchdown" else c
            for c in leg.cases
        ),
    )
    model, _ = build_model(p, "payload", {}, [], [])
    for status, proven in (("time_limit", False), ("optimal", True)):

        def resolve(project, kind, table=None, time_limit=None, status=status):
            # the IMF alone: 0.5 found, 0.95 its bound; every other re-solve: nothing
            if kind.startswith("imf@"):
                return SimpleNamespace(status=status, objective=0.5, bound=0.95, index=[0])
            return SimpleNamespace(
                status="infeasible", objective=-math.inf, bound=-math.inf, index=None
            )

        rows = diagnose(p, model, "payload", None, resolve=resolve)
        row = next(d for d in rows if d.requirement == "touchdown: imf min")
        assert row.best_proven is proven
        assert row.best_achievable == pytest.approx(0.95 if not proven else 0.5)
        assert bound_mark(row.requirement, row.best_proven) == ("" if proven else "≤ ")


def test_the_diagnosis_lists_every_requirement_assess_checks():
    """Every requirement assess checks on the bundled leg has a row of its own in the
    diagnosis (the duty cycle's rating use included; the per-joint life and gear peak use
    checks of the life requirement as its one row, "robot: life min"); dropping the duty rating
    removes its requirement and no other."""
    from jointwright.assessment import assess
    from jointwright.design import load_design
    from jointwright.project import load_example
    from jointwright.solve.explain import relax, requirement_list

    leg = load_example("leg")
    design = load_design(leg.base_dir / "design.toml", leg)

    # the life requirement is checked per joint (life and gear peak use), relaxed as one
    checked = {
        "robot: life_min"
        if c.requirement in ("life_min", "gear_peak_use_max")
        else f"{c.subject}: {c.requirement}"
        for c in assess(leg, design).checks
    }
    listed = {f"{s}: {k}" for s, k, _ in requirement_list(leg)}
    assert checked <= listed and "trot: rating_use_max" in listed
    dropped = relax(leg, "trot", "rating_use_max")
    assert {f"{s}: {k}" for s, k, _ in requirement_list(dropped)} == listed - {
        "trot: rating_use_max"
    }



def test_dropping_a_duty_rating_keeps_the_life_requirement_on_its_cycle():
    """With the trot's rating use dropped, the trot is still the cycle the life requirement
    counts: the search of the relaxed project keeps checking gear life and gear peak use on it,
    so its design meets every requirement the relaxed project states (the bundled leg with
    life_min raised to 50,000 h, where the life binds at hip_fe)."""
    from jointwright.assessment import assess
    from jointwright.project import load_example
    from jointwright.sizing import size
    from jointwright.solve.explain import relax

    leg = load_example("leg")
    p = dataclasses.replace(
        leg, requirements=dataclasses.replace(leg.requirements, life_min=50_000 * 3600.0)
    )
    dropped = relax(p, "trot", "rating_use_max")
    r = size(dropped, explain=False, time_limit=60)
    assert r.status == "optimal"
    a = assess(dropped, r.design)
    assert a.feasible
    lives = [c for c in a.checks if c.requirement == "life_min"]
    assert lives and all(c.ok for c in lives)
