"""HTML building blocks of the report: numbers with units, tables, figures, sections, the page.

The page is one self-contained file: the style sheet is inline, figures are base64 PNG, and
nothing is fetched from the network. Every number is written with its unit; an infinite value
(a self-locking holding capacity) is written ∞, never NaN.
"""

from __future__ import annotations

import base64
import html
import math
from dataclasses import dataclass

from ..units import format_hours, format_number

#: unit spellings of the input files -> as shown
_UNIT_TEXT = {"kg*m^2": "kg·m²", "kg·m²": "kg·m²", "N*m": "N·m", "-": "", "1": ""}


def esc(text) -> str:
    return html.escape(str(text), quote=True)


def unit_text(unit: str) -> str:
    return _UNIT_TEXT.get(unit, unit)


def number(value, digits: int = 4) -> str:
    """``value`` with ``digits`` significant digits; ∞ for infinities, — for missing."""
    return format_number(value, digits, minus="−")


#: requirements whose values are fractions of a rating, shown in %
PERCENT_REQUIREMENTS = ("rating_use_max", "shock_use_max", "gear_peak_use_max")


def as_float(x) -> float:
    """A number from the report's dicts: JSON's "inf"/"-inf" strings as infinities, None as NaN."""
    return float({"inf": math.inf, "-inf": -math.inf}.get(x, x)) if x is not None else math.nan


def check_value(c: dict, key: str) -> str:
    """A requirement check's ``achieved`` or ``limit`` with its unit (rating uses in %)."""
    v = c[key]
    if c.get("requirement") in PERCENT_REQUIREMENTS and v is not None:
        v = {"inf": math.inf, "-inf": -math.inf}.get(v, v)
        return fmt(100.0 * float(v), "%")
    return fmt(v, c.get("unit", ""))


def fmt(value, unit: str = "", digits: int = 4) -> str:
    """A number and its unit, e.g. ``235.5 N``; dimensionless quantities have no suffix; hours
    (gear lives) readable, "32,400 h" (units.format_hours)."""
    if unit == "h":
        return format_hours(value, minus="−")
    text = number(value, digits)
    u = unit_text(unit)
    return f"{text} {u}" if u and text != "—" else text


def pct(margin) -> str:
    """A relative margin as a signed percentage."""
    if margin is None:
        return "—"
    m = float(margin)
    if math.isinf(m):
        return "+∞ %" if m > 0 else "−∞ %"
    return f"{100 * m:+.1f} %".replace("-", "−")


@dataclass(frozen=True)
class Cell:
    """A table cell with optional CSS class and data attributes (for tests and scripts)."""

    text: str
    cls: str = ""
    data: tuple = ()  # ((name, value), ...)

    def render(self, tag: str = "td") -> str:
        attrs = f' class="{esc(self.cls)}"' if self.cls else ""
        attrs += "".join(f' data-{esc(k)}="{esc(v)}"' for k, v in self.data)
        return f"<{tag}{attrs}>{esc(self.text)}</{tag}>"


@dataclass(frozen=True)
class Group:
    """A row of a table that heads the rows after it (the poses of one region case)."""

    text: str


def table(headers: list[str], rows: list, *, caption: str = "", cls: str = "") -> str:
    """A table; cells are strings or :class:`Cell`; numeric-looking columns align right; a
    :class:`Group` in place of a row heads the rows after it across the whole width."""
    head = "".join(f"<th>{esc(h)}</th>" for h in headers)
    body = []
    for row in rows:
        if isinstance(row, Group):
            body.append(
                f'<tr class="group"><th colspan="{len(headers)}" scope="rowgroup">'
                f"{esc(row.text)}</th></tr>"
            )
            continue
        cells = [c if isinstance(c, Cell) else Cell(str(c)) for c in row]
        body.append("<tr>" + "".join(c.render() for c in cells) + "</tr>")
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    klass = f' class="{esc(cls)}"' if cls else ""
    return (
        f'<div class="scroll"><table{klass}>{cap}<thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(body)}</tbody></table></div>"
    )


def figure(png: bytes, name: str, alt: str, caption: str) -> str:
    """An embedded PNG figure with its caption; ``name`` links the PNG/SVG files beside it."""
    data = base64.b64encode(png).decode("ascii")
    img = f'<img alt="{esc(alt)}" src="data:image/png;base64,{data}">'
    return (
        f'<figure id="fig-{esc(name)}">{img}'
        f'<figcaption>{esc(caption)} <span class="files">(files: figures/{esc(name)}.png, '
        f"figures/{esc(name)}.svg)</span></figcaption></figure>"
    )


def paragraph(text: str, cls: str = "") -> str:
    klass = f' class="{esc(cls)}"' if cls else ""
    return f"<p{klass}>{esc(text)}</p>"


def bullets(items: list[str], cls: str = "") -> str:
    klass = f' class="{esc(cls)}"' if cls else ""
    return f"<ul{klass}>" + "".join(f"<li>{esc(i)}</li>" for i in items) + "</ul>"


@dataclass(frozen=True)
class Section:
    """One numbered part of the report: an anchor, a heading and its HTML body."""

    anchor: str
    title: str
    body: str


_STYLE = """
:root { --ink:#2b2f36; --muted:#5f6b7a; --line:#d9dde3; --band:#f3f5f7; --ok:#2f7d6d;
        --bad:#b0413e; --warn:#8a6d1f; --accent:#3b6ea5; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fff;
       font: 15px/1.5 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }
main { max-width: 960px; margin: 0 auto; padding: 24px 28px 60px; }
header { border-bottom: 3px solid var(--accent); margin-bottom: 14px; padding-bottom: 6px; }
h1 { font-size: 1.6em; margin: 0 0 4px; }
h2 { font-size: 1.22em; margin: 34px 0 8px; padding-bottom: 3px;
     border-bottom: 1px solid var(--line); }
h2.appendix { font-size: 1.4em; margin-top: 48px; border-bottom: 3px solid var(--accent); }
h3 { font-size: 1.04em; margin: 20px 0 6px; }
h4 { font-size: 0.96em; margin: 12px 0 4px 14px; color: var(--muted); }
.sub { color: var(--muted); margin: 0; }
nav ul { columns: 2; margin: 8px 0 0; padding-left: 0; list-style: none; color: var(--muted); }
nav a { color: var(--accent); text-decoration: none; }
.scroll { overflow-x: auto; max-width: 100%; }
table { border-collapse: collapse; margin: 8px 0 14px; font-size: 0.88em; min-width: 50%;
        max-width: 100%; }
caption { caption-side: bottom; text-align: left; color: var(--muted); font-size: 0.92em;
          padding-top: 4px; }
th, td { border-bottom: 1px solid var(--line); padding: 4px 9px; text-align: left;
         vertical-align: top; overflow-wrap: break-word; }
th { background: var(--band); font-weight: 600; }
tr.group th { background: #e8eef6; font-weight: 600; padding-top: 6px; }
td.grouped { padding-left: 22px; }
td.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
td.ok { color: var(--ok); font-weight: 600; }
td.bad { color: var(--bad); font-weight: 600; }
table.wide { font-size: 0.8em; }
td.lines { white-space: pre-line; }
table.wide th, table.wide td { padding: 3px 6px; }
table.wide td.num { white-space: normal; }
.verdict { padding: 10px 14px; border-left: 5px solid var(--ok); background: var(--band); }
.verdict.bad { border-left-color: var(--bad); }
.verdict p { margin: 0; }
.caution { padding: 10px 14px; border-left: 5px solid var(--warn); background: #faf6ea; }
.caution p { margin: 0; }
figure { margin: 14px 0 22px; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: 0.9em; margin-top: 4px; }
.files { font-size: 0.9em; }
#summary h2 { margin-top: 10px; }
#summary h3 { margin: 12px 0 4px; }
#summary table.compact { font-size: 0.84em; margin: 4px 0 6px; min-width: 0; }
#summary table.compact th, #summary table.compact td { padding: 2px 7px; white-space: nowrap; }
#summary table.compact td:first-child { white-space: normal; }
#summary figure { margin: 4px 0 0; }
#summary ul.risks { margin: 4px 0; padding-left: 20px; font-size: 0.92em; }
#summary .caution { font-size: 0.9em; padding: 6px 12px; }
#summary .caution + p { margin-top: 8px; font-size: 0.9em; }
.pair { display: flex; gap: 18px; align-items: flex-start; }
.pair > div { flex: 1 1 50%; min-width: 0; }
@page { margin: 12mm; }
@media print {
  body { font-size: 10pt; line-height: 1.35; }
  main { max-width: none; padding: 0; }
  nav, .files { display: none; }
  .scroll { overflow: visible; }
  table { width: 100%; }
  th, td { padding: 2px 5px; }
  td.num { white-space: normal; }
  figure, tr, .verdict, .caution { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  figure img { max-height: 150mm; width: auto; }
  #summary { break-after: page; }
  #summary figure img { max-height: 52mm; }
  #summary h3 { margin: 8px 0 3px; }
  #summary table.compact { width: auto; }
}
footer { margin-top: 40px; color: var(--muted); font-size: 0.85em;
         border-top: 1px solid var(--line); padding-top: 8px; }
"""


def page(
    title: str, subtitle: str, sections: list[Section], footer: str, summary: Section | None = None
) -> str:
    """The whole HTML document: the summary (when given) first, then the sections, numbered
    A1, A2, … as its appendix (1, 2, … without a summary)."""
    mark = "A" if summary is not None else ""
    nav = "".join(
        f'<li><a href="#{esc(s.anchor)}">{mark}{k}. {esc(s.title)}</a></li>'
        for k, s in enumerate(sections, start=1)
    )
    body = "".join(
        f'<section id="{esc(s.anchor)}"><h2>{mark}{k}. {esc(s.title)}</h2>{s.body}</section>'
        for k, s in enumerate(sections, start=1)
    )
    top = ""
    if summary is not None:
        top = (
            f'<section id="{esc(summary.anchor)}"><h2>{esc(summary.title)}</h2>'
            f"{summary.body}</section>"
            '<h2 class="appendix" id="appendix">Appendix: the full assessment</h2>'
        )
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{esc(title)}</title><style>{_STYLE}</style></head><body><main>"
        f'<header><h1>{esc(title)}</h1><p class="sub">{esc(subtitle)}</p></header>'
        f"{top}<nav><ul>{nav}</ul></nav>{body}<footer>{esc(footer)}</footer>"
        "</main></body></html>\n"
    )
