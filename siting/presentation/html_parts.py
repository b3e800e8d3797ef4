"""Small HTML building blocks shared by report.html and verify.html.

What lives here: the pieces that the screening report (:mod:`siting.presentation.report`) and the
verification report (:mod:`siting.presentation.verify_report`) both use, so that the two pages read alike.
That is the shared stylesheet (:data:`SHARED_CSS`, which verify.html extends with rules of its
own), HTML escaping, identifier text that may wrap and the contents of a header cell, readable
labels made from column and key names (their unit suffix in brackets), the display of one value
of a key/value listing, bullet lists, and the CSS class and hint of each screening verdict. Each
is a small function of plain values returning an HTML fragment as a string; text is escaped
wherever it enters one.

Also the page shell both use (:func:`page_html`, :func:`sections_html`) and the two-column
key/value table. What does not live here: the sections and the tables specific to one page,
which stay in :mod:`siting.presentation.report` and :mod:`siting.presentation.verify_report`. Number
formatting (significant digits, percentages, the text shown for a missing value) belongs to
:mod:`siting.presentation.formats`, which this module calls; no checking or physics happens here.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from siting.presentation.formats import MISSING_TEXT, format_for_column, format_percent, is_missing

__all__ = [
    "NOT_APPLICABLE",
    "SHARED_CSS",
    "UNIT_SUFFIXES",
    "VERDICT_STYLE",
    "bullet_list",
    "code_html",
    "display_value",
    "esc",
    "header_html",
    "is_number",
    "is_share",
    "key_value_table",
    "page_html",
    "plain_label",
    "sections_html",
]

#: CSS class and plain-words hint per verdict (styling of a verdict cell or badge).
VERDICT_STYLE = {
    "below threshold": ("verdict-below", "insignificant at screening"),
    "above threshold": ("verdict-above", "needs further assessment"),
    "not assessed": ("verdict-none", "no PC figure for this site"),
}

#: Shown where a value does not apply: a step that does not apply to a source in a
#: transposed table (e.g. no abatement), or an empty list.
NOT_APPLICABLE = "–"

#: Unit suffixes of column names and the unit shown in a label, longest first. `_fraction` and
#: `_share` values are shown as percentages (see :func:`display_value`).
UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_kg_n_ha_yr", "kg N/ha/yr"),
    ("_mol_n_ha_yr", "mol N/ha/yr"),
    ("_keq_ha_yr", "keq/ha/yr"),
    ("_kg_per_place_yr", "kg/place/yr"),
    ("_ug_m3", "µg/m³"),
    ("_m3_yr", "m³/yr"),
    ("_kg_yr", "kg/yr"),
    ("_g_s", "g/s"),
    ("_m_s", "m/s"),
    ("_percent", "%"),
    ("_fraction", "%"),
    ("_deg", "deg"),
    ("_ha", "ha"),
    ("_m", "m"),
    ("_s", "s"),
)

#: The stylesheet of report.html; verify.html appends rules of its own.
SHARED_CSS = """
:root { --ink: #1d2430; --muted: #5a6472; --rule: #c9ced6; --band: #f3f5f8; --accent: #23436b;
        --warn-bg: #fbe0d8; --warn-ink: #7f1d0b; --warn-rule: #c2543a; }
* { box-sizing: border-box; }
body { font-family: "Segoe UI", "Helvetica Neue", Arial, sans-serif; color: var(--ink);
       margin: 0 auto; max-width: 1200px; padding: 1.2rem 1.6rem 3rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin: 0.4rem 0 0.2rem; color: var(--accent); }
h2 { font-size: 1.25rem; margin-top: 2rem; border-bottom: 2px solid var(--accent);
     padding-bottom: 0.2rem; color: var(--accent); }
h3 { font-size: 1.05rem; margin-top: 1.4rem; }
h4 { font-size: 0.95rem; margin: 1rem 0 0.2rem; }
.meta { color: var(--muted); font-size: 0.9rem; margin: 0 0 0.8rem; }
.note { color: var(--muted); font-size: 0.9em; margin: 0.2rem 0 0.8rem; }
.caution-line { background: #fff4d6; border: 1px solid #d9a400; border-left: 6px solid #d9a400;
                padding: 0.5rem 0.8rem; font-weight: 600; margin: 0.6rem 0 1rem; }
.cautions { background: #fff4d6; border: 2px solid #d9a400; padding: 0.6rem 1.2rem;
            font-size: 1.02rem; }
.cautions li { margin: 0.3rem 0; }
nav.toc { font-size: 0.92rem; }
nav.toc ol { margin: 0.2rem 0 0; padding-left: 1.4rem; }
table { border-collapse: collapse; margin: 0.6rem 0 1rem; font-size: 0.9rem; max-width: 100%; }
th, td { border: 1px solid var(--rule); padding: 0.28rem 0.5rem; vertical-align: top; }
th { background: #e4e8ee; text-align: left; }
thead th { vertical-align: bottom; }
th .unit { display: block; font-weight: 400; font-size: 0.9em; color: var(--muted);
           white-space: nowrap; }
th.group { text-align: center; border-bottom-color: var(--accent); }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.na { color: var(--muted); text-align: center; }
td.over { color: var(--warn-ink); font-weight: 700; }
tbody tr:nth-child(even) { background: var(--band); }
.table-wrap { overflow-x: auto; }
.sub { display: block; font-size: 0.87em; color: var(--muted); }
.cite { font-size: 0.85em; line-height: 1.3; color: #3b4452; overflow-wrap: anywhere; }
.mono { font-family: "DejaVu Sans Mono", Consolas, "Liberation Mono", monospace;
        font-size: 0.87em; overflow-wrap: anywhere; }
sup.ref { font-size: 0.78em; color: var(--accent); margin-left: 0.15em; }
table.fit { width: 100%; }
table.summary th { font-size: 0.92em; }
table.summary td.site { min-width: 8em; }
table.summary .site-name { font-weight: 600; }
table.derivation { width: 100%; table-layout: fixed; }
table.derivation col.label { width: 16em; }
table.derivation tbody th { font-weight: 600; background: #eef1f5; }
tr.step-group th { background: #d5dce6; color: var(--accent); font-size: 0.9em;
                   text-transform: uppercase; letter-spacing: 0.03em; }
table.derivation tr.result td { font-weight: 700; }
table.derivation td { overflow-wrap: anywhere; }
td.flag { background: var(--warn-bg); color: var(--warn-ink); font-weight: 700;
          border: 2px solid var(--warn-rule); }
th.flagged { background: var(--warn-bg); color: var(--warn-ink); }
table.mini { margin: 0; font-size: 0.95em; }
table.mini th, table.mini td { padding: 0.1rem 0.45rem; text-align: center; }
table.compact td, table.compact th { padding: 0.18rem 0.5rem; }
ol.cite-list { font-size: 0.9em; color: #3b4452; padding-left: 2.2rem; }
ol.cite-list li { margin: 0.15rem 0; }
.verdict { font-weight: 700; padding: 0.1rem 0.45rem; border-radius: 0.25rem; white-space: nowrap;
           display: inline-block; }
.verdict-above { background: var(--warn-bg); color: var(--warn-ink);
                 border: 1px solid var(--warn-rule); }
.verdict-below { background: #dbe9f6; color: #0b3c6e; border: 1px solid #4a7fb5; }
.verdict-none { background: #ececec; color: #3d3d3d; border: 1px dashed #8a8a8a; }
.verdict-hint { display: block; font-size: 0.83em; color: var(--muted); font-weight: 400; }
.empty { color: var(--muted); font-style: italic; }
figure { margin: 1rem 0 1.6rem; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: 0.9rem; margin-top: 0.3rem; }
details { margin: 0.8rem 0; }
details summary { cursor: pointer; color: var(--accent); }
pre.record { background: var(--band); border: 1px solid var(--rule); padding: 0.6rem;
             font-size: 0.78rem; white-space: pre-wrap; word-break: break-all; }
tr, img, figure { page-break-inside: avoid; break-inside: avoid; }
thead { display: table-header-group; }
table.keyval > tbody > tr > th { min-width: 13em; }
@page { size: A4 portrait; margin: 14mm 12mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 9.5pt; }
  table { font-size: 8pt; }
  th, td { padding: 0.12rem 0.25rem; }
  h1, h2, h3, h4 { page-break-after: avoid; break-after: avoid; }
  tr.step-group { page-break-after: avoid; break-after: avoid; }
  .table-wrap { overflow: visible; }
  nav.toc { display: none; }
  a { color: inherit; text-decoration: none; }
  figure { margin: 0.6rem 0 1rem; }
  figure img { max-height: 100mm; width: auto; }
  figcaption { page-break-before: avoid; break-before: avoid; }
  .cautions, .caution-line, table.mini, li { page-break-inside: avoid; break-inside: avoid; }
  #run-record table { page-break-inside: avoid; break-inside: avoid; }
  .cautions, .caution-line, .verdict, td.flag, th.flagged, tr.step-group th {
    -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


def esc(value: Any) -> str:
    """HTML-escaped text of any value (None/NaN -> 'n/a')."""
    if is_missing(value):
        return MISSING_TEXT
    return html.escape(str(value), quote=True)


def code_html(value: Any) -> str:
    """Escaped identifier-like text that may wrap after underscores (``partly_<wbr>slatted``)."""
    return esc(value).replace("_", "_<wbr>")


def header_html(label: str, unit: str = "") -> str:
    """Contents of a header cell: the label, and the unit on a second, muted line."""
    unit_html = f'<span class="unit">{html.escape(unit)}</span>' if unit else ""
    return f"{html.escape(label)}{unit_html}"


def plain_label(key: str) -> str:
    """A readable label made from a column or key name, its unit suffix in brackets.

    ``"calm_fraction"`` -> ``"Calm [%]"``, ``"distance_m"`` -> ``"Distance [m]"``.
    """
    name = str(key)
    unit = ""
    for suffix, shown in UNIT_SUFFIXES:
        if name.lower().endswith(suffix) and len(name) > len(suffix):
            name, unit = name[: -len(suffix)], shown
            break
    words = name.replace("_", " ").strip()
    words = words[:1].upper() + words[1:]
    return f"{words} [{unit}]" if unit else words


def is_share(key: str) -> bool:
    """True when a key names a dimensionless share 0..1 (shown as a percentage)."""
    name = str(key).lower()
    return name.endswith(("_fraction", "_share")) or name.startswith("share")


def _compass(direction_deg: float) -> str:
    """16-point compass name of a direction [deg clockwise from north]."""
    points = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
              "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")  # fmt: skip
    return points[int(round(float(direction_deg) / 22.5)) % 16]


def display_value(key: str, value: Any) -> str:
    """HTML of one value of a key/value listing, formatted by what its key names.

    Shares and fractions become percentages, lists are joined with ", ", a mapping of shares
    becomes a small row of percentages, other mappings "key: value" pairs, and a prevailing
    direction gets its compass point. Text is escaped.
    """
    if isinstance(value, Mapping):
        if value and is_share(key) and all(is_number(v) for v in value.values()):
            head = "".join(f"<th>{esc(k)}</th>" for k in value)
            cells = "".join(
                f"<td>{html.escape(format_percent(100.0 * float(v)))} %</td>"
                for v in value.values()
            )
            return (
                f'<table class="mini"><thead><tr>{head}</tr></thead>'
                f"<tbody><tr>{cells}</tr></tbody></table>"
            )
        return ", ".join(f"{esc(k)}: {display_value(str(k), v)}" for k, v in value.items())
    if isinstance(value, (list, tuple)) and value and all(isinstance(v, Mapping) for v in value):
        columns = list(dict.fromkeys(k for row in value for k in row))
        head = "".join(f"<th>{esc(plain_label(c))}</th>" for c in columns)
        body = "".join(
            "<tr>" + "".join(f"<td>{display_value(c, row.get(c))}</td>" for c in columns) + "</tr>"
            for row in value
        )
        return f'<table class="mini"><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'
    if isinstance(value, (list, tuple, np.ndarray)):
        return ", ".join(display_value(key, v) for v in value) or NOT_APPLICABLE
    if is_share(key) and is_number(value):
        return html.escape(format_percent(100.0 * float(value)))
    text = html.escape(format_for_column(value, key))
    if str(key).endswith("from_deg") and is_number(value):
        text += f" ({_compass(float(value))})"
    return text


def is_number(value: Any) -> bool:
    """True for a real number, finite or infinite (bool excluded), that is not missing."""
    return (
        isinstance(value, (int, float, np.integer, np.floating))
        and not isinstance(value, (bool, np.bool_))
        and not is_missing(value)
    )


def bullet_list(items: Sequence[str], empty_text: str, css_class: str = "") -> str:
    """An escaped <ul>, or a muted paragraph when the list is empty."""
    if not items:
        return f'<p class="empty">{html.escape(empty_text)}</p>'
    cls = f' class="{css_class}"' if css_class else ""
    return f"<ul{cls}>" + "".join(f"<li>{esc(item)}</li>" for item in items) + "</ul>"


def key_value_table(
    mapping: Mapping[str, Any], labels: Mapping[str, str], empty_text: str, css: str = ""
) -> str:
    """Two-column table of a mapping: plain-words label, then the value formatted by its key."""
    if not mapping:
        return f'<p class="empty">{html.escape(empty_text)}</p>'
    rows = []
    for key, value in mapping.items():
        label = labels.get(str(key), plain_label(str(key)))
        rows.append(
            f'<tr><th scope="row">{html.escape(label)}</th>'
            f"<td>{display_value(str(key), value)}</td></tr>"
        )
    cls = f' class="{css}"' if css else ""
    return f"<table{cls}><tbody>{''.join(rows)}</tbody></table>"


def sections_html(sections: Sequence[tuple[str, str, str]]) -> str:
    """<section> elements from (anchor, heading, content HTML); headings escaped."""
    return "".join(
        f'<section id="{anchor}"><h2>{html.escape(heading)}</h2>{content}</section>'
        for anchor, heading, content in sections
    )


def page_html(title: str, css: str, body: str) -> str:
    """A whole self-contained page: UTF-8, viewport, escaped title, inline stylesheet, body."""
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{esc(title)}</title><style>{css}</style></head><body>"
        f"{body}</body></html>\n"
    )
