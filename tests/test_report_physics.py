"""The numbers behind the report's figures: sections, ellipses, ratio and efficiency sweeps.

Sources named beside each check:
* force polytope P = {F : τ_low ≤ g + Jᵀ·F ≤ τ_high}, Chiacchio et al., J. Robotic Systems 1997
  [mem]; the force along a ray u is the closed-form one-variable LP of the same paper;
* operational-space inertia Λ = (J·H⁻¹·Jᵀ)⁻¹ (Khatib 1987 [pub]), effective mass 1/(uᵀ·Λ⁻¹·u)
  (Khatib 1995 [mem]);
* locked-joint inertia Λ_L ⪰ Λ and IMF non-increasing as reflected inertia grows (Wensing et al.,
  IEEE T-RO 33(3), 2017 [pub]);
* power-flow transmission law (motoring η_f·N·τ_m, back-driven N·τ_m/η_b, reflected inertia
  η_f·N²·I_r and N²·I_r/η_b): Modelica LossyGear two-efficiency model [pub] and the brief's law.
"""

from __future__ import annotations

import json
import re
from dataclasses import replace

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull

from jointwright.assessment import assess
from jointwright.cli import main
from jointwright.design import arrays_from_designs, load_design
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.metrics.payload import payload_along
from jointwright.project import load_project
from jointwright.report import duty_view, figures, frontier_map, sizing_result, study_results
from jointwright.report.geometry import MODES, ellipse_sections, plane_for, polytope_sections
from jointwright.report.sweeps import efficiency_sensitivity, impact_metric, ratio_sweep
from jointwright.robot.basis import gravity


@pytest.fixture(scope="module", params=("leg", "arm"))
def example(request, tmp_path_factory):
    folder = tmp_path_factory.mktemp(request.param)
    r = CliRunner().invoke(main, ["new", str(folder / "p"), "--example", request.param])
    assert r.exit_code == 0, r.output
    project = load_project(folder / "p" / "project.toml")
    design = load_design(folder / "p" / "design.toml", project)
    ev = Evaluator(project)
    a = assess(project, design, ev)
    return {
        "project": project,
        "design": design,
        "ev": ev,
        "arrays": arrays_from_designs([design]),
        "a": a,
        "cases": {c.name: c for c in a.cases},
    }


def _payloads(ex) -> dict:
    return {c.name: c.metrics["payload"] for c in ex["a"].cases if c.kind == "payload"}


def _radial_extent(vertices: np.ndarray, d: np.ndarray) -> float:
    """Largest s with s·d inside the convex polygon (which contains the origin)."""
    eq = ConvexHull(vertices).equations  # a·x + c ≤ 0 inside
    a, c = eq[:, :2], eq[:, 2]
    ad = a @ d
    return float(np.min(-c[ad > 1e-12] / ad[ad > 1e-12]))


@settings(max_examples=25, deadline=None)
@given(angle=st.floats(0.0, 2 * np.pi))
def test_polytope_section_is_the_slice_of_the_3d_polytope(example, angle):
    # Chiacchio et al. 1997 [mem]: along a ray s·u the force is the one-variable LP; a section by
    # the plane through F = 0 must reach exactly as far along every in-plane direction.
    ex = example
    ev, arrays = ex["ev"], ex["arrays"]
    caps = {m: arrays.capacity(m)[0] for m in MODES}
    for s in polytope_sections(ev, arrays, _payloads(ex)):
        pc = next(p for p in ev.cases if p.case.name == s.cases[0])
        bias = gravity(pc.basis, arrays.mass)[0][ev.v_index]
        d = np.array([np.cos(angle), np.sin(angle)])
        u = np.zeros(3)
        u[list(s.plane)] = d
        for mode in MODES:
            if s.clipped[mode]:
                continue
            ray = payload_along(pc.Jj, bias, -caps[mode], caps[mode], u).force
            reach = _radial_extent(s.vertices[mode], d)
            assert reach == pytest.approx(float(ray), rel=1e-7, abs=1e-6)


def test_polytope_markers_are_the_case_payloads_along_their_directions(example):
    pay = _payloads(example)
    for s in polytope_sections(example["ev"], example["arrays"], pay):
        for name, point in s.markers:
            assert np.linalg.norm(point) == pytest.approx(pay[name], rel=1e-12)


def test_ellipse_mass_along_the_case_equals_the_assessment(example):
    # two code paths for Khatib's effective mass: the evaluator (IMF / locked-joint routine) and
    # the report's direct J·H⁻¹·Jᵀ solve; forward driving: the same energy reading in both
    suffix = {"backdriven": "", "motoring": "_motoring", "frictionless": "_frictionless"}
    sections = ellipse_sections(example["ev"], example["arrays"])
    assert sections
    for s in sections:
        metrics = example["cases"][s.case].metrics
        for mode in MODES:
            expected = metrics["effective_mass" + suffix[mode]]
            assert s.mass_along[mode] == pytest.approx(expected, rel=1e-9)


def _radius(curve: np.ndarray, d: np.ndarray) -> float:
    return _radial_extent(curve, d)


@settings(max_examples=25, deadline=None)
@given(angle=st.floats(0.0, 2 * np.pi))
def test_ellipse_radius_is_root_effective_mass_and_modes_are_ordered(example, angle):
    # radius of {y : yᵀ·Bᵀ·Λ⁻¹·B·y ≤ 1} along d is √(1/(dᵀ·Bᵀ·Λ⁻¹·B·d)) (Khatib 1995 [mem]);
    # N²·I_r ≤ N²·I_r/η_b grows H in the Loewner order, so frictionless ≤ back-driven ≤ locked
    # (Wensing et al. 2017: Λ ⪯ Λ_L); driving forward through lossy gears costs at least the
    # frictionless energy in every direction (docs/metrics.md), so that curve encloses it too
    d = np.array([np.cos(angle), np.sin(angle)])
    for s in ellipse_sections(example["ev"], example["arrays"]):
        r = {m: _radius(c, d) for m, c in s.curves.items()}
        tol = 1e-3  # polygon of 181 points inscribed in the ellipse: chord sag ≤ 1 − cos(π/180)
        assert r["frictionless"] <= r["motoring"] * (1 + tol)
        assert r["frictionless"] <= r["backdriven"] * (1 + tol)
        if "locked" in r:
            assert r["backdriven"] <= r["locked"] * (1 + tol)


def test_ratio_sweep_at_the_design_ratio_equals_the_assessment(example):
    sweep = ratio_sweep(example["project"], example["ev"], example["arrays"])
    k = int(np.argmin(np.abs(np.log(sweep.factors))))
    assert sweep.factors[k] == pytest.approx(1.0)
    # "payload": the payload mass every case carries (kg), the sizing's objective: each case's
    # force F read as (F − fixed_load)/(payload_share·g_n), g_n = 9.80665 m/s² (docs/report.md,
    # docs/project-format.md; standard gravity, CGPM 1901), the least over the payload cases
    carried = [
        (c.metrics["payload"] - case.fixed_load) / (case.payload_share * 9.80665)
        for c in example["a"].cases
        if c.kind == "payload"
        for case in [example["project"].case(c.name)]
        if case.payload_share > 0
    ]
    assert np.allclose(sweep.values["payload"][:, k], min(carried), rtol=1e-12)
    for case, (key, _s, _u) in impact_metric(example["project"], example["ev"]).items():
        expected = example["cases"][case].metrics[key]
        assert np.allclose(sweep.values[case][:, k], expected, rtol=1e-12)


def test_ratio_sweep_scales_a_shared_group_together():
    """The bundled quadruped shares each leg joint across its four legs: the sweep has one
    curve per group, and its values are those of the design with the whole group's ratio
    scaled (evaluated directly)."""
    from jointwright.project import load_example

    p = load_example("quadruped")
    design = load_design(p.base_dir / "design.toml", p)
    ev = Evaluator(p)
    arrays = arrays_from_designs([design])
    factors = np.array([0.5, 1.0, 2.0])
    sweep = ratio_sweep(p, ev, arrays, factors)
    assert len(sweep.joints) == 3 and all(j.endswith("(+3 shared)") for j in sweep.joints)
    joints = list(p.robot.actuated)
    group = [joints.index(j) for j in joints if j.endswith("_knee")]
    k = sweep.joints.index(next(j for j in sweep.joints if "knee" in j))
    scaled = replace(arrays, ratio=arrays.ratio.copy())
    scaled.ratio[0, group] *= 2.0
    direct = ev.evaluate(scaled, detail=False)
    from jointwright.problem import payload_mass

    assert sweep.values["payload"][k, 2] == pytest.approx(float(payload_mass(p, direct)[0]))


def test_ratio_sweep_is_monotone(example):
    # capacity η_f·N·τ_m (capped) widens the torque box as N grows: payload never falls
    # (Chiacchio LP over a growing feasible set); N²·I_r grows H: IMF never rises and back-driven
    # effective mass never falls (Wensing et al. 2017)
    sweep = ratio_sweep(example["project"], example["ev"], example["arrays"])
    assert np.all(np.diff(sweep.values["payload"], axis=1) >= -1e-9)
    for case, (key, _s, _u) in impact_metric(example["project"], example["ev"]).items():
        step = np.diff(sweep.values[case], axis=1)
        assert np.all(step <= 1e-12) if key == "imf" else np.all(step >= -1e-12)


def test_efficiency_sensitivity_signs(example):
    sens = efficiency_sensitivity(example["project"], example["ev"], example["arrays"])
    keys = [k for k in sens.values if k.startswith("payload")]
    assert len(keys) == 1 + len(_payloads(example))  # the smallest and one per case
    for k in keys:
        pay = sens.values[k]
        # raising η_f widens the motoring capacity η_f·N·τ_m: payload never falls
        assert np.all(pay[:, 0, 1] >= sens.base[k] - 1e-9)
        assert np.all(pay[:, 0, 0] <= sens.base[k] + 1e-9)
    for case, (key, _s, _u) in impact_metric(example["project"], example["ev"]).items():
        v, base = sens.values[case], sens.base[case]
        # impacts feel the back-driven inertia N²·I_r/η_b only: η_f changes nothing
        assert np.allclose(v[:, 0, :], base, rtol=1e-12)
        up = v[:, 1, 1] - base  # η_b up -> smaller reflected inertia
        assert np.all(up >= -1e-12) if key == "imf" else np.all(up <= 1e-12)


def test_sensitivity_flags_a_joint_that_becomes_self_locking(example):
    arrays = example["arrays"]
    eb = arrays.eta_backward.copy()
    eb[0, 0] = 0.03  # −5 points makes it −0.02: self-locking (η_b ≤ 0)
    moved = replace(arrays, eta_backward=eb)
    sens = efficiency_sensitivity(example["project"], example["ev"], moved)
    assert sens.locking_changed[0, 1, 0]
    assert not sens.locking_changed[0, 1, 1] and not sens.locking_changed[1:].any()


def test_sensitivity_note_says_where_a_move_stops(example):
    """η_f 0.969 + 5 points would pass 1: the move stops at η_f = 1 and the note says so
    (sweeps.efficiency_sensitivity keeps η_f in [0.01, 1], η_b ≤ 1)."""
    from jointwright.report.plots import _sensitivity_table

    sens = efficiency_sensitivity(example["project"], example["ev"], example["arrays"])
    ef, eb = example["arrays"].eta_forward[0], example["arrays"].eta_backward[0]
    text = _sensitivity_table(sens, ["payload"], {"payload": "Payload mass"}, {"payload": "kg"})
    for j in range(len(sens.joints)):
        assert sens.clipped[j, 0, 1] == (ef[j] + sens.step > 1.0)
        assert sens.clipped[j, 1, 1] == (eb[j] + sens.step > 1.0)
    if sens.clipped[:, 0, 1].any():
        assert "+5: stops at η_f = 1" in text
    assert "limited by a bound" not in text


def test_plane_keeps_the_case_directions():
    J = np.array([[0.3, 0.0], [0.0, 0.0], [0.0, 0.2]])
    assert plane_for([np.array([0, 0, -1.0]), np.array([0, -1.0, 0])], J) == (1, 2)
    assert plane_for([np.array([0, 0, 1.0])], J) == (0, 2)  # x is the best-actuated other axis


# ---- hooks taking plain dicts ------------------------------------------------------------------
FRONTIER = {
    "x": {"label": "impact mitigation factor", "unit": ""},
    "y": {"label": "payload", "unit": "N"},
    "points": [{"x": 0.1, "y": 300.0, "design": "a"}, {"x": 0.3, "y": 200.0, "design": "b"}],
    "chosen": 1,
    "knee": 1,
}


def test_frontier_hook_draws_points_and_rejects_bad_points(tmp_path):
    s = frontier_map.frontier_section(FRONTIER, tmp_path)
    assert (
        "200 N" in s.body and "◆ turning point" in s.body and (tmp_path / "frontier.svg").is_file()
    )
    bad = {**FRONTIER, "points": [{"x": 0.1, "y": 300.0}, {"x": 0.3, "y": "lots"}]}
    with pytest.raises(InputError, match=r"points\[1\]\.y"):
        frontier_map.frontier_section(bad, tmp_path)
    with pytest.raises(InputError, match="chosen"):
        frontier_map.frontier_section({**FRONTIER, "chosen": 7}, tmp_path)


def test_a_dominated_chosen_design_is_said_to_lie_inside_the_frontier(tmp_path):
    """Pareto dominance (at least as good on both axes, strictly on one) [trade]: a ring off
    the frontier names the point that beats it; on the frontier, nothing is added."""
    from jointwright.report.frontier_map import dominating_point

    xy = [(0.14, 26.9), (0.149, 24.4), (0.15, 22.1)]
    assert dominating_point(xy, (0.104, 26.9), "pre") == 0  # IMF: larger is better
    assert dominating_point(xy, (0.145, 23.0), "pre") == 1  # the larger payload of two
    assert dominating_point(xy, xy[1], "pre") is None  # a frontier point: not dominated
    assert dominating_point(xy, (0.104, 26.9), "post") is None  # smaller x better: 0.104 wins
    assert dominating_point(xy, (0.2, 20.0), "post") == 0
    assert dominating_point(xy, (0.104, 26.9), None) is None  # direction not known
    assert dominating_point(xy, None, "pre") is None
    data = {**FRONTIER, "chosen": {"x": 0.05, "y": 250.0}, "steps": "pre"}
    body = frontier_map.frontier_section(data, tmp_path).body
    assert "inside the frontier: point 1 carries" in body
    assert "inside the frontier" not in frontier_map.frontier_section(FRONTIER, tmp_path).body


def _alternative(actuator, objective, loss, ruled_out_by, change="other motor"):
    return {
        "joint": "knee",
        "actuator": actuator,
        "change": change,
        "objective": objective,
        "loss": loss,
        "ruled_out_by": ruled_out_by,
    }


SIZING = {
    "status": "optimal",
    "objective_kind": "payload",
    "objective": 240.0,
    "bound": 240.0,
    "gap": 0.0,
    "backend": "search",
    "message": "proven optimum",
    "alternatives": [
        _alternative("Flatwind-4 | Orbit/Orbit-2 6:1", 230.0, 10.0, None),
        _alternative(
            "Flatwind-6 | Flexring/Flexring-1 50:1",
            None,
            None,
            "touchdown: imf min",
            "other stage type",
        ),
    ],
    "diagnosis": [
        {
            "requirement": "touchdown: imf min",
            "limit": 0.2,
            "best_achievable": 0.18,
            "shortfall": 0.1,
            "relaxed_objective": 250.0,
        }
    ],
}


def test_runner_ups_hook_reads_the_sizing_result_form():
    s = sizing_result.runner_ups_section(SIZING)
    # the payload objective is the payload mass every case carries, in kg
    assert (
        "−10 kg payload against the chosen design" in s.body
        and "misses touchdown: imf min" in s.body
        and "250 kg" in s.body
    )
    assert "relative gap 0 %" in s.body and "230 kg" in s.body  # proven: no sign, no decimals
    bad = {**SIZING, "alternatives": [_alternative("m", "high", None, None)]}
    with pytest.raises(InputError, match=r"alternatives\[0\]\.objective"):
        sizing_result.runner_ups_section(bad)
    with pytest.raises(InputError, match="objective_kind"):
        sizing_result.runner_ups_section({"status": "optimal"})


@pytest.mark.slow
def test_duty_hook_table_and_bad_series(tmp_path):
    data = {
        "case": "trot",
        "time": [0.0, 0.5, 1.0],
        "motor_torque": {"knee": [0.1, 0.4, 0.1]},
        "limits": {"knee continuous": 0.3},
        "summary": [{"joint": "knee", "rms_torque": 0.25, "backdriven_share": 0.4}],
    }
    d = duty_view.duty_section(data, tmp_path)
    assert "0.25 N·m" in d.body and "40 %" in d.body
    odd = duty_view.duty_section({**data, "case": "walk / run 2"}, tmp_path)
    assert odd.anchor == "duty-walk-run-2" and (tmp_path / "duty-walk-run-2.png").is_file()
    with pytest.raises(InputError, match="motor_torque.knee"):
        duty_view.duty_section({**data, "motor_torque": {"knee": [1.0]}}, tmp_path)
    with pytest.raises(InputError, match=r"time\[1\]"):
        duty_view.duty_section({**data, "time": [0.0, "x", 1.0]}, tmp_path)


def test_duty_figure_draws_each_joint_against_its_own_peak_rating(tmp_path, monkeypatch):
    """With every joint's peak rating given, each joint's motor torque is drawn as a share of
    its own rating (100·τ/τ_peak) against ±100 % lines, so no joint's curve is read against
    another joint's rating."""
    drawn = {}
    real = duty_view.sweep_figures.series_figure

    def spy(time, series, limits, **kw):
        drawn.update(series=series, limits=limits, **kw)
        return real(time, series, limits, **kw)

    monkeypatch.setattr(duty_view.sweep_figures, "series_figure", spy)
    data = {
        "case": "trot",
        "time": [0.0, 0.5, 1.0],
        "motor_torque": {"hip": [0.5, -1.0, 0.25], "knee": [0.1, 0.4, 0.1]},
        "limits": {"knee peak rating": 0.8},
        "peak_rating": {"hip": 2.0, "knee": 0.8},
    }
    d = duty_view.duty_section(data, tmp_path)
    assert drawn["series"]["hip"] == pytest.approx([25.0, -50.0, 12.5])
    assert drawn["series"]["knee"] == pytest.approx([12.5, 50.0, 12.5])
    assert drawn["limits"] == {"each joint's peak rating": 100.0}
    assert "as a share of its own motor" in d.body and "lines are ±100 %" in d.body


STUDY = {
    "name": "knee sweep",
    "description": "knee ratio against budget",
    "parameters": [
        {"key": "ratio", "label": "knee ratio", "unit": ""},
        {"key": "budget", "label": "total mass max", "unit": "kg"},
    ],
    "results": [
        {"key": "objective", "label": "largest worst-case payload", "unit": "N", "better": "max"},
        {"key": "total_mass", "label": "actuator mass", "unit": "kg", "better": None},
    ],
    "cases": [
        {
            "case": f"c{k}",
            "variant": "",
            "status": "optimal",
            "values": {"ratio": r, "budget": b},
            "results": {"objective": 10.0 * r + b, "total_mass": b - 0.1},
            "design": f"knee: Flatwind-{k % 9 + 1} | Orbit/Orbit-2 {r}:1",
        }
        for k, (r, b) in enumerate((r, b) for b in (3.0, 4.0) for r in (6, 9, 12))
    ],
}


@pytest.mark.slow
def test_study_hook_table_has_units_best_case_and_rejects_bad_rows(tmp_path):
    s = study_results.study_section(STUDY, tmp_path)
    text = re.sub(r'src="data:[^"]*"', "", s.body)
    # every header names its unit; every number carries it
    for head in (
        "knee ratio (dimensionless)",
        "total mass max (kg)",
        "largest worst-case payload (N)",
        "actuator mass (kg)",
    ):
        assert head in text
    assert "124 N" in text and "3.9 kg" in text
    # the best case: ratio 12 at 4 kg gives 10·12 + 4 = 124 N
    assert re.search(r'data-study-best="all cases">124 N<', text)
    assert "Flatwind-6 | Orbit/Orbit-2 12:1" in text
    assert (tmp_path / "study-1.png").is_file() and (tmp_path / "study-2.png").is_file()
    with pytest.raises(InputError, match=r"cases\[0\]\.values"):
        study_results.study_section({**STUDY, "cases": [{"case": "x", "results": {}}]}, tmp_path)
    bad = {**STUDY["cases"][0], "results": {"objective": [1, 2]}}
    with pytest.raises(InputError, match=r"cases\[0\]\.results\.objective"):
        study_results.study_section({**STUDY, "cases": [bad]}, tmp_path)


def test_study_lines_join_only_cases_that_share_the_other_parameters():
    # a line through cases that differ in another parameter would zig-zag between unrelated
    # designs; each group must hold one value of every other parameter
    for param, other in (("ratio", "budget"), ("budget", "ratio")):
        p = next(x for x in STUDY["parameters"] if x["key"] == param)
        groups = study_results._study_groups(
            STUDY["cases"], STUDY["parameters"], p, STUDY["results"][0], variants=False
        )
        n_other = len({c["values"][other] for c in STUDY["cases"]})
        assert len(groups) == n_other
        for label, (xs, ys) in groups.items():
            members = [
                c
                for c in STUDY["cases"]
                if c["values"][param] in xs
                and 10.0 * c["values"]["ratio"] + c["values"]["budget"] in ys
            ]
            assert len({c["values"][other] for c in members}) == 1, label
            assert sorted(xs) == sorted({c["values"][param] for c in STUDY["cases"]})
    fig = figures.study_figure(
        [("knee ratio (dimensionless)", groups)], y_label="payload (N)", title="payload"
    )
    assert len(fig.axes[0].get_lines()) == len(groups)
    assert fig.axes[0].get_xlabel() == "knee ratio (dimensionless)"


def test_duty_plot_series_has_the_assessed_rms_and_peak(example):
    # RMS over the cycle √(∫τ²dt / T) [trade] and peak |τ_m| of the plotted motor torque must be
    # the assessment's numbers: the plot and the table come from one power-flow law
    from jointwright.metrics.duty import rms
    from jointwright.report.plots import duty_data

    a = example["a"].to_dict()
    data = duty_data(example["ev"], example["arrays"], a)
    assert len(data) == sum(c.kind == "duty" for c in example["project"].cases)
    for d in data:
        t = np.asarray(d["time"])
        for row in d["summary"]:
            x = np.asarray(d["motor_torque"][row["joint"]])
            assert float(rms(x, t)) == pytest.approx(row["rms_torque"], rel=1e-9)
            assert float(np.abs(x).max()) == pytest.approx(row["peak_torque"], rel=1e-9)


@pytest.mark.slow
def test_study_store_becomes_the_study_section(tmp_path):
    import sys
    from pathlib import Path

    from jointwright.report.study import study_data
    from jointwright.study import CaseRecord, StudyStore, expand, parse_study

    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from tests.study_cases import BASE_PROJECT

    (tmp_path / "leg.toml").write_text(BASE_PROJECT)
    spec = parse_study(
        {
            "study": {"name": "thigh study", "base": "leg.toml"},
            "vary": [
                {"path": "robot.links.thigh.length", "values": [0.2, 0.3]},
                {"path": "requirements.mass_budget", "values": ["2 kg", "3000 g"]},
            ],
            "variant": [
                {"name": "short", "set": {"robot.links.shank.length": 0.2}},
                {"name": "long", "set": {"robot.links.shank.length": 0.4}},
            ],
        },
        study_dir=tmp_path,
    )
    store = tmp_path / "s.sqlite"
    with StudyStore.open(store, spec, 2) as st:
        for case in expand(spec):
            thigh = case.values["robot.links.thigh.length"]
            result = json.dumps({"objective_kind": "payload"})
            st.write(
                case,
                CaseRecord(
                    "done",
                    {
                        "objective": 1000 * thigh,
                        "total_mass": 2.5,
                        "sizing_status": "optimal",
                        "knee:actuator": f"m{thigh}",
                    },
                    result,
                    wall_time=0.1,
                    worker="w:1",
                ),
            )
    data = study_data(store)
    assert data["name"] == "thigh study"
    params = {p["key"]: p for p in data["parameters"]}
    assert params["robot.links.thigh.length"]["label"] == "length"
    assert params["requirements.mass_budget"]["unit"] == "kg"
    # "3000 g" is shown in the parameter's unit, kg
    assert sorted({c["values"]["requirements.mass_budget"] for c in data["cases"]}) == [2.0, 3.0]
    assert [r["unit"] for r in data["results"]] == ["kg", "kg"]  # payload mass, actuator mass
    assert {c["variant"] for c in data["cases"]} == {"short", "long"}
    section = study_results.study_section(data, tmp_path)
    text = re.sub(r'src="data:[^"]*"', "", section.body)
    assert "payload mass every case carries (kg)" in text and "300 kg" in text
    assert 'data-study-best="short">300 kg<' in text and 'data-study-best="long">300 kg<' in text
    assert not re.search(r"\bnan\b", text, flags=re.I)
    # the same store through the command line, beside a design report
    r = CliRunner().invoke(main, ["new", str(tmp_path / "leg"), "--example", "leg"])
    assert r.exit_code == 0, r.output
    r = CliRunner().invoke(
        main,
        [
            "report",
            str(tmp_path / "leg" / "project.toml"),
            "--design",
            str(tmp_path / "leg" / "design.toml"),
            "--study",
            str(store),
            "--out",
            str(tmp_path / "out"),
            "--json",
        ],
    )
    assert r.exit_code == 0, r.output
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert 'id="study"' in html and "Variants side by side" in html


def test_the_study_section_counts_cases_that_found_no_design(tmp_path):
    """A case that ran to the end and found no design (infeasible) is neither "a result" nor a
    case that failed to run: the count says which is which (6 cases: 4 with a design, 1
    infeasible, 1 failed)."""
    cases = [dict(c) for c in STUDY["cases"]]
    cases[1] = {**cases[1], "status": "infeasible", "results": {"objective": None}}
    cases[2] = {**cases[2], "status": "failed", "results": {}}
    s = study_results.study_section({**STUDY, "cases": cases}, tmp_path)
    assert "6 cases: 4 with a design, 1 that ran and found none" in s.body
    assert "1 that did not run to the end" in s.body


def test_variants_that_tie_at_the_best_are_both_marked():
    """Two variants with the same lead result (8.122 kg both, as shown) at one setting: both
    are the best, marked as a tie; a strictly better one alone is marked best."""
    lead = {"key": "objective", "label": "payload", "unit": "kg", "better": "max"}
    params = [{"key": "budget", "label": "budget", "unit": "kg"}]

    def case(name, variant, budget, value):
        return {
            "case": name,
            "variant": variant,
            "status": "optimal",
            "values": {"budget": budget},
            "results": {"objective": value},
        }

    cases = [
        case("a", "free", 3.0, 8.1221),
        case("b", "planetary-only", 3.0, 8.1219),
        case("c", "free", 3.6, 26.93),
        case("d", "planetary-only", 3.6, 20.97),
    ]
    html = study_results._variant_pivot(cases, params, lead)
    assert html.count("(best, tie)") == 2
    assert "26.93 kg (best)" in html and "20.97 kg (best" not in html


def test_sensitivity_leaves_a_direct_drive_alone(example):
    """A direct drive (no gear: η_f = η_b = 1 by definition of the transmission law, DESIGN.md
    §2.3) has no efficiency assumption to move: its values equal the design's, and its table
    row says so; a payload pushed below the fixed load reads "none", never a negative mass."""
    from jointwright.report.plots import _sensitivity_table

    design = example["design"]
    direct = replace(design.actuators[0], stages=())
    d = replace(design, actuators=(direct, *design.actuators[1:]))
    arrays = arrays_from_designs([d])
    sens = efficiency_sensitivity(example["project"], example["ev"], arrays)
    for k, v in sens.values.items():
        assert np.allclose(v[0], sens.base[k], rtol=0, atol=1e-12, equal_nan=True), k
    joint = sens.joints[0]
    text = _sensitivity_table(
        sens, ["payload"], {"payload": "Payload mass"}, {"payload": "kg"}, frozenset({joint})
    )
    assert "no gear: nothing to vary" in text
    low = replace(sens, base={**sens.base, "payload": -0.5})
    text = _sensitivity_table(low, ["payload"], {"payload": "Payload mass"}, {"payload": "kg"})
    assert "Design values: Payload mass none" in text
