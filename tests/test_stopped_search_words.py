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
