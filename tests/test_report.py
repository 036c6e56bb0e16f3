"""The HTML design report: builds for the bundled examples, is self-contained, shows the assessment.

Checks are against the assessment's own JSON (the numbers in the page must be those numbers, as
formatted to 4 significant digits) and against the page as a browser renders it (headless
Chromium, when installed; CI installs it).
"""

from __future__ import annotations

import base64
import io
import json
import math
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from PIL import Image

from jointwright.assessment import assess
from jointwright.cli import main
from jointwright.design import load_design
from jointwright.project import load_project
from jointwright.report import build_report
from jointwright.report.markup import PERCENT_REQUIREMENTS

# the quadruped has 12 joints and stance cases (cone programs): a few seconds more; the arm's
# report takes about 4 s to build: both run with the slow tests, the leg by default
EXAMPLES = (
    "leg",
    pytest.param("arm", marks=pytest.mark.slow),
    pytest.param("quadruped", marks=pytest.mark.slow),
)
#: 4 significant digits: a shown number is within half a unit of its 4th digit, rel ≤ 5e-4 [trade]
SHOWN_RTOL = 6e-4
#: duty metrics that are fractions, shown in % (the report's own list must agree with this one)
PERCENT_METRICS = ("backdriven_share", "rms_ratio", "peak_ratio", "envelope_ratio", "thermal_ratio")


def _new(folder: Path, example: str) -> Path:
    r = CliRunner().invoke(main, ["new", str(folder), "--example", example])
    assert r.exit_code == 0, r.output
    return folder


@pytest.fixture(scope="module", params=EXAMPLES)
def built(request, tmp_path_factory):
    folder = _new(tmp_path_factory.mktemp(request.param) / "project", request.param)
    project = load_project(folder / "project.toml")
    design = load_design(folder / "design.toml", project)
    path = build_report(project, design, folder / "out")
    a = json.loads(json.dumps(assess(project, design).to_dict()))
    return {
        "path": path,
        "html": path.read_text(encoding="utf-8"),
        "assessment": a,
        "project": project,
    }


class _Cells(HTMLParser):
    """Collects text of elements with data-* attributes, the img sources and external links."""

    def __init__(self):
        super().__init__()
        self.cells, self.images, self.external, self._open = {}, [], [], []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "img":
            self.images.append(a.get("src", ""))
        for key in ("src", "href"):
            v = a.get(key) or ""
            if v and not v.startswith(("data:", "#")):
                self.external.append(v)
        if tag == "link" or tag == "script":
            self.external.append(tag)
        data = tuple(sorted((k, v) for k, v in attrs if k.startswith("data-")))
        self._open.append((data, []))

    def handle_endtag(self, tag):
        if not self._open:
            return
        data, text = self._open.pop()
        if data:
            self.cells[data] = "".join(text)
        if self._open:
            self._open[-1][1].extend(text)

    def handle_data(self, d):
        if self._open:
            self._open[-1][1].append(d)


def _parse(html: str) -> _Cells:
    p = _Cells()
    p.feed(html)
    return p


def _value(text: str) -> float:
    """The number at the start of a shown value: '235.5 N', '−23.2 %', '∞ N·m'."""
    if text.strip() == "> 10⁶ h":  # a gear life past a million hours (units.format_hours)
        return math.inf
    head = text.strip().split(" ")[0].replace("−", "-").replace(",", "").lstrip("+")
    return {"∞": math.inf, "-∞": -math.inf}.get(head, None) if "∞" in head else float(head)


def _close(shown: float, value) -> bool:
    v = {"inf": math.inf, "-inf": -math.inf}.get(value, value)
    if shown == math.inf and v > 1e6:  # shown "> 10⁶ h"
        return True
    if math.isinf(v) or math.isinf(shown):
        return shown == v
    return math.isclose(shown, v, rel_tol=SHOWN_RTOL, abs_tol=1e-12)


def _scaled(value, scale: float):
    return value if isinstance(value, str) else value * scale


def _cell(cells, **data) -> str:
    key = tuple(sorted((f"data-{k}", v) for k, v in data.items()))
    assert key in cells, f"no element with {data}"
    return cells[key]


def test_requirement_values_equal_the_assessment(built):
    cells = _parse(built["html"]).cells
    a = built["assessment"]
    assert a["checks"], "the examples state requirements"
    for c in a["checks"]:
        key = f"{c['subject']}:{c['requirement']}"
        # rating, shock and peak uses are fractions, shown in %
        scale = 100.0 if c["requirement"] in PERCENT_REQUIREMENTS else 1.0
        achieved = _cell(cells, check=key, field="achieved")
        assert _close(_value(achieved), _scaled(c["achieved"], scale)), key
        assert _close(_value(_cell(cells, check=key, field="limit")), _scaled(c["limit"], scale))
        assert scale == 1.0 or achieved.endswith(" %"), key
        shown = _cell(cells, check=key, field="margin")
        m = float({"inf": math.inf, "-inf": -math.inf}.get(c["margin"], c["margin"]))
        if shown.startswith("> 100×"):  # a minimum met 100 times over (wording.margin_text)
            assert c["sense"] == "min" and 1.0 + m >= 100.0, key
        elif shown.endswith("× limit"):  # past +100 %: achieved ÷ limit, 3 digits
            times = float(shown.split("×")[0])
            assert c["sense"] == "min" and m > 1.0, key
            assert math.isclose(times, 1.0 + m, rel_tol=5e-3), key
        else:
            # margins are shown in % to one decimal: within 0.05 percentage points [trade]
            assert abs(_value(shown) - 100 * m) <= 0.05 + 1e-9, key


def test_joint_table_and_total_mass_equal_the_assessment(built):
    cells = _parse(built["html"]).cells
    a = built["assessment"]
    assert _close(_value(_cell(cells, field="total_mass")), a["total_mass"])
    for j in a["joints"]:
        for field, key in (
            ("mass", "mass"),
            ("drive", "capacity_motoring"),
            ("holding", "capacity_backdriven"),
        ):
            assert _close(_value(_cell(cells, joint=j["joint"], field=field)), j[key])


def test_case_metrics_equal_the_assessment(built):
    cells = _parse(built["html"]).cells
    shown = 0
    for case in built["assessment"]["cases"]:
        for key, value in case["metrics"].items():
            k = tuple(sorted((("data-case", case["name"]), ("data-metric", key))))
            if k in cells and isinstance(value, (int, float, str)) and value not in ("",):
                v = value * 100 if key.split(":")[0] in PERCENT_METRICS else value
                assert _close(_value(cells[k]), v), (case["name"], key)
                shown += 1
    assert shown >= 8


def test_page_is_self_contained_and_every_image_decodes(built):
    p = _parse(built["html"])
    assert p.external == [], "no external file, script or style sheet"
    assert len(p.images) >= 3  # ellipse, ratio trade, sensitivity at least
    for src in p.images:
        assert src.startswith("data:image/png;base64,")
        img = Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1])))
        img.load()
        assert img.width >= 500 and img.height >= 250
    figures = built["path"].parent / "figures"
    pngs = sorted(figures.glob("*.png"))
    assert len(pngs) == len(p.images)
    for png in pngs:
        Image.open(png).load()
        svg = png.with_suffix(".svg").read_text(encoding="utf-8")
        assert svg.lstrip().startswith("<?xml") and "<svg" in svg


def test_no_nan_and_every_section_present(built):
    text = re.sub(r'src="data:[^"]*"', "", built["html"])
    assert not re.search(r"\bnan\b", text, flags=re.IGNORECASE)
    for anchor in (
        "summary",
        "appendix",
        "job",
        "outcome",
        "requirements",
        "binding",
        "joints",
        "polytopes",
        "ellipses",
        "ratio",
        "sensitivity",
        "cases",
        "cautions",
    ):
        assert f'id="{anchor}"' in text
    for phrase in (
        "supplier",
        "trap or crush",
        "safety standards",
        "licensed engineering practice",
    ):
        assert phrase in text


def _summary(html: str) -> str:
    return html[html.index('id="summary"') : html.index('id="appendix"')]


def test_summary_comes_first_with_the_decision_and_the_tightest_margins(built):
    html, a = built["html"], built["assessment"]
    assert html.index('id="summary"') < html.index('id="appendix"') < html.index('id="job"')
    top = _summary(html)
    cells = _parse(top).cells
    # every joint is in the decision table, with its catalog mass
    for j in a["joints"]:
        assert j["joint"] in top and j["motor"] in top
    assert _close(_value(_cell(cells, field="summary_total_mass")), a["total_mass"])
    missed = sum(not c["ok"] for c in a["checks"])
    verdict = (
        f"meets all {len(a['checks'])} requirements"
        if not missed
        else f"misses {missed} of {len(a['checks'])} requirements"
    )
    assert verdict in top
    # the verdict states the sizing's payload objective: the least payload mass over the cases
    from jointwright.report.markup import fmt

    carried = [
        float(c["metrics"]["payload_carried"])
        for c in a["cases"]
        if c["kind"] in ("payload", "stance")
        and isinstance(c["metrics"].get("payload_carried"), (int, float))
    ]
    if carried:
        assert f"payload at least {fmt(min(carried), 'kg')} in every payload case" in top
    # the three smallest margins, smallest first
    shown = [k for k in re.findall(r'data-summary-check="([^"]+)"', top)]
    order = sorted(a["checks"], key=lambda c: float(c["margin"]))[:3]
    assert shown == [f"{c['subject']}:{c['requirement']}" for c in order]
    for phrase in ("safety standards", "local codes", "licensed engineering practice"):
        assert phrase in top


def test_cost_is_shown_beside_mass_and_adds_up_from_the_catalog(built):
    # each actuator's cost is its motor's plus its frames' plus its drive's catalog costs
    # (catalog-format.md)
    project, a = built["project"], built["assessment"]
    motors = {m.name: m.cost for m in project.catalog.motors}
    frames = {f.name: f.cost for st in project.catalog.stages for f in st.frames}
    drives = {d.name: d.cost for d in project.catalog.drives}
    design = load_design(built["path"].parents[1] / "design.toml", project)
    want = sum(
        motors[x.motor.name]
        + sum(frames[s.frame.name] for s in x.stages)
        + (drives[x.drive.name] if x.drive is not None else 0.0)
        for x in design.actuators
    )
    assert want > 0, "the example catalogs give costs"
    cells = _parse(built["html"]).cells
    assert _close(_value(_cell(cells, field="total_cost")), want)
    assert _close(_value(_cell(cells, field="summary_total_cost")), want)
    for j in a["joints"]:
        assert _close(_value(_cell(cells, joint=j["joint"], field="cost")), j["cost"])


def test_outcome_names_missed_requirements_and_the_limiting_joint(built):
    a = built["assessment"]
    text = built["html"]
    outcome = text[text.index('id="outcome"') : text.index('id="requirements"')]
    missed = [c for c in a["checks"] if not c["ok"]]
    assert (f"misses {len(missed)} of" in outcome) == bool(missed)
    for c in missed:
        assert f"{c['subject']}: {c['requirement'].replace('_', ' ')}" in outcome
    # the payload case with the smallest margin against its own requirement
    margins = {c["subject"]: c["margin"] for c in a["checks"] if c["requirement"] == "payload_min"}
    worst = min(margins, key=margins.get)
    case = next(c for c in a["cases"] if c["name"] == worst)
    assert f"tightest against its requirement in case {worst}" in outcome
    assert f"limited by joint {case['limiting_joint']}" in outcome
    # the force is read as the payload mass it carries with the case's fixed load (the sizing's
    # objective), not as the force over g
    assert "carries a payload of" in outcome and "at standard gravity" not in outcome
    assert "self-locking" in outcome


def test_infinite_capacity_is_shown_as_infinity():
    from jointwright.report.markup import fmt, number, pct

    assert fmt(math.inf, "N·m") == "∞ N·m"
    assert fmt("inf", "kg*m^2") == "∞ kg·m²"
    assert number(-math.inf) == "−∞"
    assert number(math.nan) == "—" and number(None) == "—"
    assert pct(-0.2335) == "−23.4 %" and pct(math.inf) == "+∞ %"


@settings(max_examples=200, deadline=None)
@given(st.one_of(st.floats(-1e300, 1e300), st.sampled_from([math.inf, -math.inf])))
def test_shown_numbers_read_back_to_four_digits(x):
    # 4 significant digits: |shown − x| ≤ 5e-4·|x| (round half a unit in the 4th digit) [trade]
    from jointwright.report.markup import fmt

    text = fmt(x, "N·m")
    assert text.endswith(" N·m") and "nan" not in text.lower()
    shown = _value(text)
    assert shown == x if math.isinf(x) else abs(shown - x) <= 5e-4 * abs(x) + 1e-300


@pytest.mark.slow
def test_report_verb_writes_the_files(tmp_path):
    folder = _new(tmp_path / "leg", "leg")
    r = CliRunner().invoke(
        main,
        [
            "report",
            str(folder / "project.toml"),
            "--design",
            str(folder / "design.toml"),
            "--out",
            str(tmp_path / "r"),
            "--json",
        ],
    )
    assert r.exit_code == 0, r.output
    out = json.loads(r.output[r.output.index("{") :])
    assert Path(out["report"]).is_file()
    assert {Path(f).suffix for f in out["figures"]} == {".png", ".svg"}


def test_report_verb_rejects_bad_json_with_one_line(tmp_path):
    folder = _new(tmp_path / "leg", "leg")
    bad = tmp_path / "frontier.json"
    bad.write_text("{not json", encoding="utf-8")
    r = CliRunner().invoke(
        main,
        [
            "report",
            str(folder / "project.toml"),
            "--design",
            str(folder / "design.toml"),
            "--frontier",
            str(bad),
        ],
    )
    assert r.exit_code == 2
    assert "frontier.json" in r.output and "--frontier" in r.output and "not valid JSON" in r.output
    assert "Traceback" not in r.output


def test_report_verb_rejects_an_out_path_that_is_a_file(tmp_path):
    folder = _new(tmp_path / "leg", "leg")
    taken = tmp_path / "taken"
    taken.write_text("", encoding="utf-8")
    r = CliRunner().invoke(
        main,
        [
            "report",
            str(folder / "project.toml"),
            "--design",
            str(folder / "design.toml"),
            "--out",
            str(taken),
        ],
    )
    assert r.exit_code == 2 and "--out" in r.output and "must be a folder" in r.output


# ---- the page in a browser -----------------------------------------------------------------
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
needs_chromium = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (CI installs it)"
)


def _chromium(args, profile: Path) -> subprocess.CompletedProcess:
    cmd = [
        CHROMIUM,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        f"--user-data-dir={profile}",
        *args,
    ]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120)


@needs_chromium
@pytest.mark.slow
def test_browser_renders_the_numbers_and_images(built, tmp_path):
    url = built["path"].resolve().as_uri()
    r = _chromium(["--dump-dom", url], tmp_path / "profile")
    assert r.returncode == 0, r.stderr[-2000:]
    dom = _parse(r.stdout)
    assert len(dom.images) == len(_parse(built["html"]).images)
    a = built["assessment"]
    assert _close(_value(_cell(dom.cells, field="total_mass")), a["total_mass"])
    for c in a["checks"]:
        key = f"{c['subject']}:{c['requirement']}"
        scale = 100.0 if c["requirement"] in PERCENT_REQUIREMENTS else 1.0  # a fraction, in %
        shown = _value(_cell(dom.cells, check=key, field="achieved"))
        assert _close(shown, _scaled(c["achieved"], scale))
    shot = tmp_path / "page.png"
    r = _chromium([f"--screenshot={shot}", "--window-size=1100,2400", url], tmp_path / "profile2")
    assert r.returncode == 0 and shot.is_file(), r.stderr[-2000:]
    img = Image.open(shot).convert("L")
    dark = sum(img.histogram()[:128])
    assert dark > 0.005 * img.width * img.height, "the page rendered text"


WORM = """
[[stage]]
name = "WM"
kind = "worm"
ratios = [20, 30]

[stage.efficiency]
model = "worm"
lead_angle = "5 deg"
friction = 0.1
normal_pressure_angle = "20 deg"

[[stage.frame]]
name = "WM-50"
rated_peak_torque = "60 N*m"
rated_continuous_torque = "30 N*m"
mass = "0.5 kg"
input_inertia = "0.1 kg*cm^2"
breakaway_torque = "0.05 N*m"
diameter = "50 mm"
length = "60 mm"
"""


@pytest.mark.slow
def test_self_locking_joint_shows_infinity_and_the_caution(tmp_path):
    # worm, Shigley ch. 13 [mem]: self-locking when f ≥ cos φ_n·tan λ; 0.1 ≥ cos 20°·tan 5° = 0.0822
    folder = _new(tmp_path / "leg", "leg")
    with open(folder / "catalog.toml", "a", encoding="utf-8") as fh:
        fh.write(WORM)
    text = (folder / "design.toml").read_text(encoding="utf-8")
    worm = '[{ stage = "WM", frame = "WM-50", ratio = 20 }]'
    text = re.sub(
        r"(\[joint\.knee\][^\[]*?stages = )\[.*\]", lambda m: m.group(1) + worm, text, flags=re.S
    )
    (folder / "design.toml").write_text(text, encoding="utf-8")
    project = load_project(folder / "project.toml")
    design = load_design(folder / "design.toml", project)
    assert design.actuator("knee").self_locking
    html = build_report(project, design, tmp_path / "out").read_text(encoding="utf-8")
    outcome = html[html.index('id="outcome"') : html.index('id="requirements"')]
    assert "Self-locking joints: knee" in outcome
    assert "Self-locking: knee" in _summary(html)  # a top risk on the summary page
    assert "∞ kg·m²" in html and "∞ N·m" in html  # back-driven reflected inertia, breakaway torque
    assert "pinch and crush hazard" in html
    assert not re.search(r"\bnan\b", re.sub(r'src="data:[^"]*"', "", html), flags=re.IGNORECASE)


@pytest.mark.slow
def test_sizing_and_frontier_sections_join_the_report(tmp_path):
    folder = _new(tmp_path / "leg", "leg")
    project = load_project(folder / "project.toml")
    design = load_design(folder / "design.toml", project)
    alternative = {
        "joint": "hip_ab",
        "actuator": "Flatwind-4 | Orbit/Orbit-2 6:1",
        "change": "other motor",
        "objective": 70.0,
        "loss": 4.96,
    }
    sizing = {
        "status": "time_limit",
        "objective_kind": "payload",
        "objective": 74.96,
        "bound": 80.0,
        "gap": 0.067,
        "alternatives": [alternative],
        "diagnosis": [
            {
                "requirement": "jump-push: payload min",
                "limit": 150.0,
                "best_achievable": 561.2,
                "shortfall": -2.74,
                "relaxed_objective": None,
            }
        ],
    }
    frontier = {
        "x": {"label": "impact mitigation factor", "unit": ""},
        "y": {"label": "worst payload", "unit": "N"},
        "points": [{"x": 0.10, "y": 90.0}, {"x": 0.15, "y": 74.96}, {"x": 0.22, "y": 50.0}],
        "chosen": 1,
    }
    path = build_report(project, design, tmp_path / "out", sizing=sizing, frontier=frontier)
    html = path.read_text("utf-8")
    assert 'id="runner-ups"' in html and 'id="frontier"' in html
    # the payload objective is a payload mass (kg)
    assert "proven bound 80 kg" in html and "−4.96 kg payload against the chosen design" in html
    assert "561.2 N" in html  # the diagnosis takes the requirement's unit from the assessment
    p = _parse(html)
    for src in p.images:
        Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1]))).load()
    assert (tmp_path / "out" / "figures" / "frontier.png").is_file()


def test_duty_cycle_section_plots_the_project_duty_case(built):
    duty = [c for c in built["assessment"]["cases"] if c["kind"] == "duty"]
    for c in duty:
        assert f'id="duty-{c["name"]}"' in built["html"]
        assert (built["path"].parent / "figures" / f"duty-{c['name']}.png").is_file()


@pytest.mark.slow
def test_same_input_same_files(tmp_path):
    folder = _new(tmp_path / "arm", "arm")
    project = load_project(folder / "project.toml")
    design = load_design(folder / "design.toml", project)
    one = build_report(project, design, tmp_path / "one")
    two = build_report(project, design, tmp_path / "two")
    assert one.read_bytes() == two.read_bytes()
    for f in sorted((one.parent / "figures").iterdir()):
        assert f.read_bytes() == (two.parent / "figures" / f.name).read_bytes(), f.name


def _check(subject, requirement, achieved, limit, margin, unit="N"):
    return {
        "subject": subject,
        "requirement": requirement,
        "achieved": achieved,
        "limit": limit,
        "margin": margin,
        "ok": margin >= 0,
        "unit": unit,
        "sense": "min",
    }


def test_summary_risks_order_and_thresholds():
    # relative margin (achieved − limit)/|limit| [trade]: 105/100 → +5 % is thin (< 10 %),
    # 130/100 → +30 % is not; 90/100 → −10 % is missed and comes first
    from jointwright.report.summary import MAX_RISKS, risks

    a = {
        "checks": [
            _check("lift", "payload_min", 105.0, 100.0, 0.05),
            _check("push", "payload_min", 130.0, 100.0, 0.30),
            _check("reach", "payload_min", 90.0, 100.0, -0.10),
        ],
        "joints": [
            {"joint": "knee", "self_locking": True},
            {"joint": "hip", "self_locking": False},
        ],
        "cases": [
            {
                "name": "walk",
                "kind": "duty",
                "limiting_joint": "hip",
                "metrics": {"rating_use": 0.95, "limiting_quantity": "rms_torque"},
            }
        ],
    }
    got = risks(a, {"points": 5, "change": 0.0468, "joint": "hip", "efficiency": "η_f"})
    assert len(got) <= MAX_RISKS
    assert got[0].startswith("Missed: reach: payload min is 90 N against 100 N (−10.0 %)")
    assert got[1].startswith("Self-locking: knee")
    assert "lift: payload min (+5.0 %)" in got[2] and "push" not in got[2]
    assert "walk" in got[3] and "95 %" in got[3]
    assert "4.68 %" in got[4] and "η_f of hip" in got[4]
    assert got[-1].startswith("Assumed:")
    flat = risks(a, {"points": 5, "change": 0.0, "joint": "hip", "efficiency": "η_f"})
    assert "leaves the payload mass every case carries unchanged" in " ".join(flat)


def test_decision_names_each_joints_drive(built):
    # with drives in the project (the bundled quadruped), the decision table names the drive
    a = built["assessment"]
    drives = {j["drive"] for j in a["joints"] if j.get("drive")}
    html = built["html"]
    decision = html[html.index("Decision: the actuator of each joint") : html.index("Tightest")]
    assert ("<th>drive</th>" in decision) == bool(drives)
    assert all(d in decision for d in drives)


def test_summary_risks_name_the_worst_band_end_an_uncertain_lock_and_no_duty_cycle():
    """A margin thin only at the worst end of the efficiency band (+11.2 % nominal, +5.5 % at
    the worst end: relative margin (achieved − limit)/|limit| [trade]) is a thin margin; a
    joint whose backward efficiency band crosses 0 may or may not self-lock; a project without
    a duty cycle says so instead of claiming thermal limits over the cycles given."""
    from jointwright.report.summary import risks

    speed = {**_check("transfer", "speed_min", 1.112, 1.0, 0.112, "m/s"), "margin_worst": 0.055}
    a = {
        "checks": [speed],
        "joints": [
            {"joint": "elbow", "self_locking": True, "eta_backward_band": [-0.74, 0.13]},
            {"joint": "wrist", "self_locking": False, "eta_backward_band": [0.5, 0.6]},
            {"joint": "hip", "self_locking": False, "eta_backward_band": [-0.05, 0.4]},
        ],
        "cases": [{"name": "lift", "kind": "payload", "metrics": {}}],
    }
    got = " | ".join(risks(a))
    assert "Self-locking: elbow cannot be pushed back" in got and "it holds its load" in got
    assert "Uncertain self-locking: the backward efficiency band of hip crosses 0" in got
    assert "wrist" not in got and "band of elbow" not in got
    assert "transfer: speed min (+11.2 %, +5.5 % at the worst end)" in got
    assert "No duty cycle" in got and "thermal limits not checked (no duty cycle given)" in got


def test_summary_names_a_miss_at_the_band_end_and_no_payload_below_the_fixed_load():
    """A check met nominally but missed at the worst end of the efficiency band is said to be
    missed there, not "thin"; a nominally self-locking joint is not also "uncertain"; a design
    below a case's fixed load carries no payload (never "−24 kg")."""
    from jointwright.report.outcome import _payload_words
    from jointwright.report.summary import _verdict, risks

    edge = {**_check("lift", "payload_min", 130.0, 100.0, 0.30), "margin_worst": -0.08}
    a = {
        "checks": [edge],
        "joints": [{"joint": "elbow", "self_locking": True, "eta_backward_band": [-0.7, 0.1]}],
        "cases": [
            {"name": "lift", "kind": "payload", "metrics": {"payload_carried": -24.0}},
            {"name": "push", "kind": "payload", "metrics": {"payload_carried": 3.0}},
        ],
        "design": "d",
        "total_mass": 1.0,
        "total_cost": 0.0,
    }
    got = " | ".join(risks(a))
    assert "Missed at the worst end of the efficiency band: lift: payload min" in got
    assert "Thin margins" not in got and "Uncertain self-locking" not in got
    text, _ok = _verdict(a)
    assert "no payload (a case does not carry its own fixed load)" in text and "-24" not in text
    cases = [
        {"name": n, "kind": "payload", "limiting_joint": None,
         "metrics": {"payload": f, "payload_carried": m}}
        for n, f, m in (("lift", 10.0, -24.0), ("push", 50.0, 3.0))
    ]  # fmt: skip
    from jointwright.project import load_example

    head = _payload_words({"cases": cases, "checks": [], "joints": []}, load_example("leg"))[0]
    assert head == "The design carries no payload: case lift does not carry its own fixed load."
