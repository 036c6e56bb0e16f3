"""Tables, CSV and plot data across a study's cases (jointwright.study.summary)."""

from __future__ import annotations

import csv
import math
import sys
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.errors import InputError  # noqa: E402
from jointwright.study import (  # noqa: E402
    CaseRecord, StudyStore, expand, export_csv, parse_study, plot_series, summary_rows, summary_table,
    variant_values,
)  # fmt: skip
from tests.study_cases import BASE_PROJECT  # noqa: E402


@pytest.fixture
def store(tmp_path):
    """2 budgets (one written in grams) x 2 thigh lengths x 2 variants; one case failed."""
    (tmp_path / "leg.toml").write_text(BASE_PROJECT)
    spec = parse_study({
        "study": {"name": "summary test", "base": "leg.toml"},
        "vary": [{"path": "requirements.mass_budget", "values": ["2 kg", "2500 g"]},
                 {"path": "robot.links.thigh.length", "values": [0.2, 0.3]}],
        "variant": [{"name": "a"}, {"name": "b"}],
    }, study_dir=tmp_path)  # fmt: skip
    path = tmp_path / "s.sqlite"
    with StudyStore.open(path, spec, 8) as st:
        for case in expand(spec):
            thigh = case.values["robot.links.thigh.length"]
            if case.index == 5:
                st.write(case, CaseRecord("failed", error="ValueError: boom", wall_time=0.5))
                continue
            metrics = {"payload": 100 * thigh + case.index, "joint": "knee",
                       "holding": math.inf if case.variant == "b" else 50.0}  # fmt: skip
            st.write(case, CaseRecord("done", metrics, "null", wall_time=0.25, worker="w:1"))
    return path


def test_rows_hold_parameters_metrics_and_status(store):
    header, rows = summary_rows(store)
    assert header == ["case_id", "variant", "requirements.mass_budget", "robot.links.thigh.length",
                      "payload", "joint", "holding", "status", "wall_time", "worker", "error"]  # fmt: skip
    assert len(rows) == 8
    first = dict(zip(header, rows[0]))
    assert (
        first["variant"],
        first["requirements.mass_budget"],
        first["robot.links.thigh.length"],
    ) == ("a", "2 kg", 0.2)
    assert first["payload"] == pytest.approx(100 * 0.2 + 0) and first["status"] == "done"
    failed = dict(zip(header, rows[5]))
    assert (failed["status"], failed["payload"], failed["error"]) == (
        "failed",
        None,
        "ValueError: boom",
    )
    header, rows = summary_rows(store, ["holding"])
    assert "payload" not in header and "holding" in header


def test_csv_round_trip(store, tmp_path):
    out = export_csv(store, tmp_path / "s.csv", ["payload", "holding"])
    with out.open(newline="") as fh:
        table = list(csv.DictReader(fh))
    header, rows = summary_rows(store, ["payload", "holding"])
    assert len(table) == len(rows) == 8
    for got, want in zip(table, rows):
        want = dict(zip(header, want))
        assert got["case_id"] == want["case_id"]
        if want["payload"] is None:
            assert got["payload"] == ""
        else:
            assert float(got["payload"]) == want["payload"]
            assert float(got["holding"]) == want["holding"]  # "inf" reads back as infinity


def test_rich_table_sorts_cuts_and_shows_infinity(store):
    from rich.console import Console

    table = summary_table(store, ["payload", "holding"], sort_by="payload", max_rows=3)
    console = Console(record=True, width=250)
    console.print(table)
    text = console.export_text()
    assert table.row_count == 3
    assert "7 done, 1 failed of 8 cases" in text
    assert "inf" in text and "nan" not in text.lower()
    # payload = 100*thigh + index; the three largest among done cases: 37 (7), 33 (3), 31 (1);
    # case 5 (35) failed and has none
    assert text.index(" 37 ") < text.index(" 33 ") < text.index(" 31 ") and " 35 " not in text
    with pytest.raises(InputError, match="unknown column"):
        summary_table(store, sort_by="colour")


def test_plot_series_converts_units_and_skips_failed(store):
    series = plot_series(store, ["payload"])
    assert [(s.metric, s.parameter) for s in series] == [("payload", "requirements.mass_budget"),
                                                         ("payload", "robot.links.thigh.length")]  # fmt: skip
    budget, thigh = series
    assert budget.unit == "kg" and thigh.unit is None
    # 2500 g = 2.5 kg by the SI prefix [trade]; failed case 5 is left out
    assert budget.x.tolist() == [2.0, 2.0, 2.5, 2.5, 2.0, 2.5, 2.5]
    assert np.allclose(thigh.y, 100 * thigh.x + np.array([0, 1, 2, 3, 4, 6, 7]))
    assert thigh.variant.tolist() == ["a"] * 4 + ["b"] * 3
    assert len(set(thigh.case_id)) == 7
    with pytest.raises(InputError, match="no case reports metric"):
        plot_series(store, ["imf"])
    with pytest.raises(InputError, match="not varied"):
        plot_series(store, ["payload"], ["robot.links.shank.length"])


def test_variant_values_group_numeric_metrics(store):
    groups = variant_values(store, "holding")
    assert groups["a"].tolist() == [50.0] * 4
    assert np.isinf(groups["b"]).all() and len(groups["b"]) == 3
    assert variant_values(store, "joint") == {}
