"""The reports as a person sees them: rendered and printed by headless Chromium.

Checks on the rendered page, not on the HTML text: the one-page summary prints on exactly one A4
and one Letter page (PDF page count), and no table is wider than the page — on screen at a
laptop width and at the printable width of an A4 page with the report's own print rules applied.
Screenshots (PNG) of the screen and the printable-width renderings are written next to the
report for a person to look at. Skipped with the reason when Chromium is not installed.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest
from click.testing import CliRunner
from PIL import Image

from jointwright.cli import main
from jointwright.design import load_design
from jointwright.project import load_project
from jointwright.report import build_report

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(
    CHROMIUM is None,
    reason="chromium is not installed: the reports cannot be rendered and "
    "printed here (install it, e.g. apt-get install chromium)",
)

#: printable width of an A4 page with the report's 12 mm margins: (210 − 2·12) mm at 96 px/in
#: (CSS px are 1/96 in) = 703 px; Letter gives (8.5 in − 24 mm) = 725 px, so A4 is the narrower
A4_PRINT_PX = round((210 - 24) / 25.4 * 96)
SCREEN_PX = 1100
#: a table may exceed its box by sub-pixel rounding only
SLACK_PX = 1

#: measures every table after layout and writes the overflows into the page for --dump-dom
_MEASURE = """<script>
(function () {
  var main = document.querySelector("main");
  var box = main.getBoundingClientRect();
  var style = getComputedStyle(main);
  var right = box.right - parseFloat(style.paddingRight);
  var out = [];
  document.querySelectorAll("table").forEach(function (t, k) {
    if (!t.getClientRects().length) return;          /* not displayed */
    var r = t.getBoundingClientRect();
    var wrap = t.parentElement;
    var cut = wrap.scrollWidth - wrap.clientWidth;
    if (r.right > right + %(slack)d || cut > %(slack)d) {
      var head = t.querySelector("thead") ? t.querySelector("thead").innerText : "";
      out.push({table: k, right: r.right, page_right: right, cut: cut,
                head: head.replace(/\\s+/g, " ").slice(0, 120)});
    }
  });
  var n = document.querySelectorAll("table").length;
  var pre = document.createElement("pre");
  pre.id = "overflow-report";
  pre.textContent = JSON.stringify({tables: n, width: document.documentElement.clientWidth,
                                    overflow: out});
  document.body.appendChild(pre);
})();
</script>""" % {"slack": SLACK_PX}


def _chromium(args: list[str], profile: Path) -> subprocess.CompletedProcess:
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
        "--hide-scrollbars",
        f"--user-data-dir={profile}",
        *args,
    ]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert r.returncode == 0, r.stderr[-2000:]
    return r


def _variant(
    html_path: Path, name: str, css: str = "", script: str = "", print_rules_on_screen: bool = False
) -> Path:
    """A copy of the report with extra CSS in the head and a script at the end of the body."""
    text = html_path.read_text(encoding="utf-8")
    if print_rules_on_screen:
        assert "@media print {" in text
        text = text.replace("@media print {", "@media all {")
    text = text.replace("</head>", f"<style>{css}</style></head>", 1)
    text = text.replace("</body>", f"{script}</body>", 1)
    out = html_path.with_name(f"{name}.html")
    out.write_text(text, encoding="utf-8")
    return out


def pdf_pages(pdf: Path) -> int:
    """Pages of a PDF as Chromium writes it: the page objects, cross-checked with /Count."""
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF-"), "not a PDF"
    pages = len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data))
    counts = [int(c) for c in re.findall(rb"/Type\s*/Pages\b[^>]*?/Count\s+(\d+)", data)]
    counts += [int(c) for c in re.findall(rb"/Count\s+(\d+)[^>]*?/Type\s*/Pages\b", data)]
    if counts:
        assert max(counts) == pages, (counts, pages)
    return pages


def print_pages(html_path: Path, tmp: Path, paper: str, css: str = "") -> int:
    page = _variant(html_path, f"print-{paper}", css=f"@page {{ size: {paper}; }} {css}")
    pdf = tmp / f"{page.stem}.pdf"
    _chromium(
        ["--no-pdf-header-footer", f"--print-to-pdf={pdf}", page.as_uri()],
        tmp / f"profile-{page.stem}",
    )
    return pdf_pages(pdf)


#: words are measured whole: a column squeezed narrower than its longest word would otherwise
#: break the word letter by letter (readable as nothing) instead of overflowing
WHOLE_WORDS = "th, td { overflow-wrap: normal !important; word-break: normal !important; }"


def overflowing_tables(html_path: Path, tmp: Path, width: int, printed: bool) -> dict:
    name = f"measure-{width}{'-print' if printed else ''}"
    page = _variant(
        html_path, name, css=WHOLE_WORDS, script=_MEASURE, print_rules_on_screen=printed
    )
    r = _chromium(
        ["--dump-dom", f"--window-size={width},1200", page.as_uri()], tmp / f"profile-{name}"
    )
    m = re.search(r'<pre id="overflow-report">(.*?)</pre>', r.stdout, flags=re.S)
    assert m, "the measuring script did not run"
    report = json.loads(
        m.group(1)
        .replace("&quot;", '"')
        .replace("&amp;", "&")
        .replace("&lt;", "<")
        .replace("&gt;", ">")
    )
    assert report["width"] <= width
    return report


def screenshot(html_path: Path, tmp: Path, width: int, height: int, printed: bool) -> Path:
    name = f"screen-{width}{'-print' if printed else ''}"
    page = _variant(html_path, name, print_rules_on_screen=printed)
    shot = html_path.parent / f"{name}.png"
    _chromium(
        [f"--screenshot={shot}", f"--window-size={width},{height}", page.as_uri()],
        tmp / f"profile-shot-{name}",
    )
    img = Image.open(shot).convert("L")
    assert img.size == (width, height)
    dark = sum(img.histogram()[:128])
    assert dark > 0.005 * img.width * img.height, "the page rendered text"
    return shot


# ---- the reports ---------------------------------------------------------------------------
def _new(folder: Path, example: str) -> Path:
    r = CliRunner().invoke(main, ["new", str(folder), "--example", example])
    assert r.exit_code == 0, r.output
    return folder


FRONTIER = {
    "x": {"label": "impact mitigation factor", "unit": ""},
    "y": {"label": "worst payload", "unit": "N"},
    "points": [
        {"x": 0.08, "y": 260.0, "design": "a", "changes": "knee 9:1"},
        {"x": 0.156, "y": 240.0, "design": "b", "changes": "knee 6:1"},
        {"x": 0.22, "y": 150.0, "design": "c", "changes": "hip_fe 6:1"},
    ],
    "chosen": 1,
    "knee": 1,
}
SIZING = {
    "status": "time_limit",
    "objective_kind": "payload",
    "objective": 240.0,
    "bound": 251.0,
    "gap": 0.044,
    "alternatives": [
        {
            "joint": "knee",
            "actuator": "Flatwind-4 | Orbit/Orbit-2 6:1",
            "change": "other motor",
            "objective": 230.0,
            "loss": 10.0,
        }
    ],
    "diagnosis": [
        {
            "requirement": "trot: rating use max",
            "limit": 1.0,
            "best_achievable": 0.93,
            "shortfall": -0.07,
            "relaxed_objective": 262.0,
        }
    ],
}


def _study(tmp: Path) -> dict:
    """A study summary with three varied parameters and two variants (many columns if every
    metric were shown), in the hook's plain-dict form."""
    params = [
        {"key": "requirements.total_mass_max", "label": "total mass max", "unit": "kg"},
        {"key": "case[3].imf_min", "label": "touchdown: imf min", "unit": ""},
        {"key": "catalog.max_stages", "label": "max stages", "unit": ""},
    ]
    results = [
        {"key": "objective", "label": "largest worst-case payload", "unit": "N", "better": "max"},
        {"key": "total_mass", "label": "actuator mass", "unit": "kg", "better": None},
    ]
    cases = []
    for variant in ("planetary", "strain-wave"):
        for budget in (3.4, 3.8, 4.2, 4.6):
            for imf in (0.05, 0.1, 0.15):
                for stages in (1, 2):
                    payload = 60 * budget - 300 * imf + 5 * stages + (8 if variant[0] == "s" else 0)
                    ok = payload > 130
                    cases.append(
                        {
                            "case": f"{variant}-{budget}-{imf}-{stages}",
                            "variant": variant,
                            "status": "optimal" if ok else "infeasible",
                            "values": {
                                "requirements.total_mass_max": budget,
                                "case[3].imf_min": imf,
                                "catalog.max_stages": stages,
                            },
                            "results": {
                                "objective": payload if ok else None,
                                "total_mass": budget - 0.1 if ok else None,
                            },
                            "design": "hip_ab: Flatwind-8 | Orbit/Orbit-3 7:1; hip_fe: Flatwind-2 | "
                            "Flexring/Flexring-1 30:1; knee: Flatwind-9 | Orbit/Orbit-3 7:1",
                        }
                    )
    return {
        "name": "leg budget study",
        "description": "budget, IMF and stage count",
        "parameters": params,
        "results": results,
        "cases": cases,
    }


def _build(tmp: Path, example: str, **extra) -> Path:
    folder = _new(tmp / example, example)
    project = load_project(folder / "project.toml")
    design = load_design(folder / "design.toml", project)
    return build_report(project, design, folder / "out", **extra)


@pytest.fixture(
    scope="module",
    params=[
        "leg-everything",
        pytest.param("arm", marks=pytest.mark.slow),
        pytest.param("quadruped", marks=pytest.mark.slow),
        pytest.param("self-locking", marks=pytest.mark.slow),
    ],
)
def report(request, tmp_path_factory):
    tmp = tmp_path_factory.mktemp(request.param)
    if request.param == "leg-everything":
        path = _build(tmp, "leg", frontier=FRONTIER, sizing=SIZING, study=_study(tmp))
    elif request.param == "self-locking":
        from test_report import WORM

        folder = _new(tmp / "leg", "leg")
        with open(folder / "catalog.toml", "a", encoding="utf-8") as fh:
            fh.write(WORM)
        text = (folder / "design.toml").read_text(encoding="utf-8")
        worm = '[{ stage = "WM", frame = "WM-50", ratio = 20 }]'
        text = re.sub(
            r"(\[joint\.knee\][^\[]*?stages = )\[.*\]",
            lambda m: m.group(1) + worm,
            text,
            flags=re.S,
        )
        (folder / "design.toml").write_text(text, encoding="utf-8")
        project = load_project(folder / "project.toml")
        path = build_report(project, load_design(folder / "design.toml", project), folder / "out")
    else:
        path = _build(tmp, request.param)
    return {"path": path, "tmp": tmp, "name": request.param}


#: hides everything after the summary: what prints is the summary alone
SUMMARY_ONLY = "#summary ~ * { display: none !important; }"


@pytest.mark.parametrize("paper", ["A4", "letter"])
def test_summary_prints_on_one_page(report, paper):
    assert print_pages(report["path"], report["tmp"], paper, css=SUMMARY_ONLY) == 1


def test_whole_report_prints_and_the_appendix_starts_on_a_new_page(report):
    whole = print_pages(report["path"], report["tmp"], "A4")
    # the summary page, then at least one page of appendix (the summary breaks the page)
    assert whole >= 2
    # the appendix alone, laid out as it is after the summary's page break: without the page
    # header too (it sits on the summary's page), else a report whose last page is nearly full
    # would count one page more for the header alone
    without_summary = print_pages(
        report["path"], report["tmp"], "A4", css="#summary, header { display: none !important; }"
    )
    assert whole == without_summary + 1


@pytest.mark.parametrize(
    "width,printed", [(SCREEN_PX, False), (A4_PRINT_PX, True)], ids=["screen", "A4-printable-width"]
)
def test_no_table_overflows_the_page(report, width, printed):
    got = overflowing_tables(report["path"], report["tmp"], width, printed)
    assert got["tables"] >= 5
    assert got["overflow"] == [], got["overflow"]


def test_screenshots_render_the_summary(report):
    for width, printed in ((SCREEN_PX, False), (A4_PRINT_PX, True)):
        shot = screenshot(report["path"], report["tmp"], width, 1400, printed)
        assert shot.is_file()


class _Text(HTMLParser):
    def __init__(self):
        super().__init__()
        self.text = []

    def handle_data(self, d):
        self.text.append(d)


def test_rendered_summary_states_the_decision_and_the_cautions(report):
    page = _variant(report["path"], "dom")
    r = _chromium(["--dump-dom", page.as_uri()], report["tmp"] / "profile-dom")
    dom = r.stdout
    top = dom[dom.index('id="summary"') : dom.index('id="appendix"')]
    p = _Text()
    p.feed(top)
    text = " ".join(p.text)
    assert "Decision: the actuator of each joint" in text
    assert "Tightest margins" in text and "Top risks" in text
    for phrase in ("safety standards", "local codes", "licensed engineering practice"):
        assert phrase in text
    if report["name"] == "leg-everything":
        assert 'id="fig-summary-frontier"' in top  # the frontier thumbnail
    if report["name"] == "self-locking":
        assert "Self-locking: knee" in text
