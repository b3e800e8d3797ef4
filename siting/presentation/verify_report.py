"""The verification report (verify.html) that ``siting verify`` writes.

This adapter turns what :mod:`siting.runs.verification` found into one self-contained HTML file for the
regulator's file: inline CSS, no scripts, no links outside the file, so it reads the same offline
years later. No checking happens here: the verdict, the input hashes, the figure comparison, the
plausibility findings and the sensitivity runs all arrive as plain data, and this module only
orders, formats and tabulates them. Text that may come from the applicant's files (site names,
file names, source ids, finding subjects, evidence) is HTML-escaped wherever it enters the page.

The page reuses the screening report's stylesheet, escaping and key/value formatting (the building
blocks of :mod:`siting.presentation.html_parts`, shared with :mod:`siting.presentation.report` so
both pages read alike) and the number formatting of :mod:`siting.presentation.formats`. It is laid
out for A4 portrait, on screen and in print: table rows are never split across pages, headings stay
with what follows, table headers repeat, and the long sensitivity table is printed in full (no
collapsed blocks)."""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from pathlib import Path, PurePath
from typing import Any

import numpy as np
import pandas as pd

from siting.errors import InputError
from siting.presentation.formats import MISSING_TEXT, format_number, format_percent, is_missing
from siting.presentation.html_parts import (
    SHARED_CSS,
    VERDICT_STYLE,
    bullet_list,
    code_html,
    display_value,
    esc,
    header_html,
    is_number,
    page_html,
    plain_label,
    sections_html,
)

__all__ = ["SENSITIVITY_COLUMNS", "SENSITIVITY_SUMMARY_COLUMNS", "write_verify_report"]

#: Columns of the long sensitivity table: one row per (site, variant).
SENSITIVITY_COLUMNS = ("site", "variant", "pct_load", "pct_level", "verdict")

#: Columns of the sensitivity summary: one row per site (min_pct_level / max_pct_level are
#: shown too when present).
SENSITIVITY_SUMMARY_COLUMNS = (
    "site",
    "central_pct_load",
    "min_pct_load",
    "max_pct_load",
    "central_verdict",
    "verdict_flips",
    "flipping_variants",
)

#: Finding severities, most serious first: (severity, what it means for the reader).
_SEVERITIES = (
    ("high", "could change the outcome; resolve before relying on the submission"),
    ("medium", "questionable; ask the applicant to justify"),
    ("low", "minor or unusual; note it"),
    ("info", "for the record"),
)
_SEVERITY_RANK = {name: rank for rank, (name, _) in enumerate(_SEVERITIES)}

#: Integrity status -> (badge text, CSS class of the badge and row).
_INTEGRITY_STYLE = {
    "ok": ("intact", "ok"),
    "changed": ("changed", "bad"),
    "missing": ("missing", "bad"),
}

#: The meaning of each exit code of ``siting verify``.
_EXIT_CODES = (
    (0, "consistent"),
    (1, "not consistent"),
    (2, "verify stopped with an error (no report is written then)"),
)

#: Most receptor rows listed in the differences table; beyond that the largest are listed.
_MAX_RECEPTOR_ROWS = 200

#: Name of the central (unvaried) run in the sensitivity tables.
_CENTRAL = "central"

_SHA_PLACEHOLDER = "same as recorded"

_CSS = (
    SHARED_CSS
    + """
.verdict-box { border: 2px solid; border-left-width: 10px; padding: 0.7rem 1rem;
               margin: 0.8rem 0 1rem; border-radius: 0.2rem; }
.verdict-box.pass { background: #e2f2e6; border-color: #3d8b56; color: #123f22; }
.verdict-box.fail { background: #fbe0d8; border-color: #c2543a; color: #6e1808; }
.verdict-box.unknown { background: #ececec; border-color: #8a8a8a; color: #2d2d2d; }
.verdict-box .headline { font-size: 1.25rem; font-weight: 700; margin: 0 0 0.3rem; }
.verdict-box p { margin: 0.25rem 0; }
.verdict-box .meaning { font-size: 0.92em; }
.exit-codes { list-style: none; padding: 0; margin: 0.4rem 0 0; font-size: 0.88em; }
.exit-codes li { display: inline-block; margin-right: 1.1rem; opacity: 0.75; }
.exit-codes li.current, .exit-codes li.label { opacity: 1; font-weight: 700; }
.exit-codes li.label { margin-right: 0.5rem; }
.exit-codes code { border: 1px solid currentColor; border-radius: 0.2rem; padding: 0 0.3rem;
                   font-weight: 700; }
ul.checks { padding-left: 1.4rem; margin: 0.3rem 0 0.8rem; }
ul.checks li { margin: 0.35rem 0; }
ul.checks .outcome { display: block; font-size: 0.92em; }
.outcome.bad { color: #7f1d0b; font-weight: 700; }
.outcome.good { color: #1f5f33; }
.badge { display: inline-block; font-weight: 700; font-size: 0.85em; padding: 0.05rem 0.45rem;
         border-radius: 0.25rem; border: 1px solid; white-space: nowrap; }
.sev-high { background: #c2543a; color: #fff; border-color: #8d2f1b; }
.sev-medium { background: #f6d7a7; color: #5b3600; border-color: #c98a1c; }
.sev-low { background: #dfe8f1; color: #1f3f62; border-color: #7d9cbd; }
.sev-info { background: #f1f1f1; color: #444; border-color: #a8a8a8; }
.sev-other { background: #fff; color: #333; border-color: #777; border-style: dashed; }
.badge.ok { background: #e2f2e6; color: #1f5f33; border-color: #3d8b56; }
.badge.bad { background: #c2543a; color: #fff; border-color: #8d2f1b; }
.badge.flip { background: #c2543a; color: #fff; border-color: #8d2f1b; }
.badge.noflip { background: #e2f2e6; color: #1f5f33; border-color: #3d8b56; }
.badge.unexplained { background: #fbe0d8; color: #7f1d0b; border-color: #c2543a; }
tbody tr.bad, tbody tr.flips { background: #fbe0d8; }
tbody tr.bad td, tbody tr.flips td { border-top: 2px solid #c2543a;
                                     border-bottom: 2px solid #c2543a; }
table.findings { width: 100%; }
table.findings td.sev { width: 6.5em; }
table.findings .subject { font-weight: 700; }
table.findings .message { display: block; margin: 0.15rem 0; }
table.findings .code { display: block; color: var(--muted); }
table.findings td.evidence { width: 40%; }
dl.evidence { display: grid; grid-template-columns: minmax(6em, max-content) 1fr;
              gap: 0.1rem 0.6rem; margin: 0; font-size: 0.88em; }
dl.evidence dt { color: var(--muted); }
dl.evidence dd { margin: 0; overflow-wrap: anywhere; }
table.integrity { width: 100%; }
table.integrity td.hash { width: 36%; }
table.differences { width: 100%; }
table.sensitivity { width: 100%; }
tr.central td { font-weight: 700; }
table.sensitivity tr.step-group th { text-transform: none; letter-spacing: 0; font-size: 0.95em; }
td.ident { font-family: "DejaVu Sans Mono", Consolas, "Liberation Mono", monospace;
           font-size: 0.87em; min-width: 7em; }
.counts { font-weight: 600; }
.sev-legend { font-size: 0.88em; color: var(--muted); margin: 0.2rem 0 0.6rem; padding: 0;
              list-style: none; }
.sev-legend li { margin: 0.15rem 0; }
footer { margin-top: 2.2rem; border-top: 1px solid var(--rule); padding-top: 0.5rem;
         color: var(--muted); font-size: 0.88rem; }
@media print {
  .verdict-box, ul.checks li, dl.evidence { page-break-inside: avoid; break-inside: avoid; }
  .verdict-box, .badge, tr.bad, tr.flips, tr.bad td, tr.flips td {
    -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .verdict-box .headline { font-size: 13pt; }
}
"""
)


# --------------------------------------------------------------------------------------------
# Small helpers
# --------------------------------------------------------------------------------------------


def _plural(count: int, singular: str, plural: str | None = None) -> str:
    """``"1 file"``, ``"3 files"``."""
    return f"{count} {singular if count == 1 else (plural or singular + 's')}"


def _verb(count: int, singular: str = "differs", plural: str = "differ") -> str:
    """The verb agreeing with a count."""
    return singular if count == 1 else plural


def _is_percent_column(column: str) -> bool:
    """True when a column name says it holds a percentage (``pc_pct_load``, ``*_percent``)."""
    name = str(column).lower()
    return name.endswith(("_percent", "_pct")) or "_pct_" in name or name.startswith("pct_")


def _percent_text(value: Any, decimals: int | None = None) -> str:
    """A percentage without the sign: 2 decimals below 100 %, 1 from there (or `decimals`)."""
    if not is_number(value):
        return format_number(value)
    number = float(value)
    if not np.isfinite(number):
        return format_number(number)
    if decimals is None:
        decimals = 2 if abs(number) < 100.0 else 1
    return format_percent(number, decimals)


def _pair_texts(first: Any, second: Any, column: str) -> tuple[str, str]:
    """Two values of one figure as text, with enough digits that different values read
    differently (0.049012 and 0.049031 show as ``0.04901`` and ``0.04903``, not both
    ``0.049``).

    Percentages start at 2 decimals, other numbers at 3 significant digits; text is returned
    as given (unescaped).
    """
    if not (is_number(first) and is_number(second)):
        return format_number(first), format_number(second)
    a, b = float(first), float(second)
    if _is_percent_column(column):
        decimals = 2
        while True:
            texts = (format_percent(a, decimals), format_percent(b, decimals))
            if a == b or texts[0] != texts[1] or decimals >= 8:
                return texts
            decimals += 1
    digits = 3
    while True:
        texts = (format_number(a, significant_digits=digits),
                 format_number(b, significant_digits=digits))  # fmt: skip
        if a == b or texts[0] != texts[1] or digits >= 12:
            return texts
        digits += 1


def _verdict_badge(value: Any) -> str:
    """A screening verdict as the report's coloured badge (no hint line)."""
    text = "" if is_missing(value) else str(value)
    css, _ = VERDICT_STYLE.get(text.strip().lower(), ("verdict-none", ""))
    return f'<span class="verdict {css}">{esc(text) if text else MISSING_TEXT}</span>'


def _severity(finding: Mapping[str, Any]) -> str:
    """The finding's severity, lower-case ('' when missing)."""
    value = finding.get("severity")
    return "" if is_missing(value) else str(value).strip().lower()


def _severity_badge(severity: str) -> str:
    """A coloured badge with the severity in words (colour is never the only cue)."""
    css = f"sev-{severity}" if severity in _SEVERITY_RANK else "sev-other"
    return f'<span class="badge {css}">{esc(severity or "unrated")}</span>'


def _truthy(value: Any) -> bool:
    """A flag from a table cell: True, 1, "true", "yes" are true; missing is false."""
    if is_missing(value):
        return False
    if isinstance(value, str):
        return value.strip().lower() in {"true", "yes", "1", "y"}
    return bool(value)


def _check_columns(table: pd.DataFrame, columns: Sequence[str], name: str) -> None:
    """Raise InputError naming the missing columns of a non-empty table."""
    if table is None or not len(table):
        return
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise InputError(
            f"verification report: {name} table lacks column(s) {', '.join(missing)}; "
            f"expected {', '.join(columns)}"
        )


# --------------------------------------------------------------------------------------------
# Sections
# --------------------------------------------------------------------------------------------


def _verdict_box(verdict: str, exit_code: int, n_high: int, flips: Sequence[str]) -> str:
    """The verdict sentence in a coloured box, with what the exit code and the word mean."""
    css = {0: "pass", 1: "fail"}.get(int(exit_code), "unknown")
    codes = "".join(
        f'<li class="{"current" if code == int(exit_code) else ""}"><code>{code}</code> '
        f"{html.escape(meaning)}</li>"
        for code, meaning in _EXIT_CODES
    )
    attention = []
    if n_high:
        attention.append(f"{_plural(n_high, 'high-severity finding')} (section 1)")
    if flips:
        attention.append(
            f"{_plural(len(flips), 'site')} whose verdict flips in the sensitivity analysis "
            "(section 4)"
        )
    high_note = (
        f"<p><strong>Read before relying on the submission: {html.escape('; '.join(attention))}"
        ".</strong></p>"
        if attention
        else ""
    )
    return (
        f'<div class="verdict-box {css}" role="status">'
        f'<p class="headline">{esc(verdict)}</p>'
        '<p class="meaning">“Consistent” means that this version of siting reproduces the '
        "submission from its own inputs within the stated tolerance; it is not a judgement on "
        "the proposal or on its effect on any habitat.</p>"
        f"{high_note}"
        f'<ul class="exit-codes"><li class="label">Exit code of siting verify:</li>{codes}</ul>'
        "</div>"
    )


def _outcome(text: str, state: str) -> str:
    """The outcome line of one check, marked "good", "bad" or "" (neither)."""
    return f'<span class="outcome {state}">{html.escape(text)}</span>'


def _checks_list(
    findings: Sequence[Mapping[str, Any]],
    integrity: Sequence[Mapping[str, Any]],
    differences: Sequence[Mapping[str, Any]],
    summary: pd.DataFrame,
    this_version: str,
) -> str:
    """What was checked, one line per section, each with its outcome and a link to it."""
    by_severity = _severity_counts(findings)
    n_serious = by_severity.get("high", 0) + by_severity.get("medium", 0)
    finding_text = (
        "Nothing implausible was found."
        if not findings
        else f"{_plural(len(findings), 'finding')}: {_severity_count_text(by_severity)}."
    )
    bad_files = [r for r in integrity if str(r.get("status", "")).lower() != "ok"]
    integrity_text = (
        "No input files were recorded in the submission."
        if not integrity
        else f"{len(integrity) - len(bad_files)} of {_plural(len(integrity), 'file')} intact"
        + (f"; {_integrity_problem_text(bad_files)}." if bad_files else ".")
    )
    unexplained = sum(1 for d in differences if is_missing(d.get("explained_by")))
    difference_text = (
        "No figure differs beyond the tolerance."
        if not differences
        else f"{_plural(len(differences), 'figure')} {_verb(len(differences))} beyond the "
        "tolerance"
        + (f", {unexplained} of them unexplained." if unexplained else ", all explained.")
    )
    flips = _flipping_sites(summary)
    n_sites = len(summary) if summary is not None else 0
    sensitivity_text = (
        "No sensitivity analysis was run."
        if not n_sites
        else (
            f"The verdict flips for {len(flips)} of {_plural(n_sites, 'site')}."
            if flips
            else f"No verdict flips for any of the {_plural(n_sites, 'site')}."
        )
    )
    items = (
        ("findings", "1. Findings",
         ("plausibility of inputs and results against published ranges and tables, e.g. an "
          "abatement reduction beyond what the technique achieves, an emission factor below the "
          "table, a short or distant weather record, a habitat site left out."),
         _outcome(finding_text, "bad" if n_serious else "good")),
        ("integrity", "2. Inputs intact?",
         "each input file's SHA-256 hash against the hash the submission recorded.",
         _outcome(integrity_text, "bad" if bad_files else "good")),
        ("figures", "3. Same numbers?",
         (f"the assessment re-run with siting {this_version} from the submitted inputs, and "
          "its figures compared with the submitted ones."),
         _outcome(difference_text, "bad" if unexplained else ("" if differences else "good"))),
        ("sensitivity", "4. Sensitivity",
         ("each site's verdict re-computed across the deposition-velocity range, the "
          "critical-load range and other weather years."),
         _outcome(sensitivity_text, "bad" if flips else ("good" if n_sites else ""))),
    )  # fmt: skip
    rows = "".join(
        f'<li><a href="#{anchor}"><strong>{html.escape(label)}</strong></a>: '
        f"{html.escape(what)}{outcome}</li>"
        for anchor, label, what, outcome in items
    )
    return f'<h2 id="checks">What was checked</h2><ul class="checks">{rows}</ul>'


def _severity_counts(findings: Sequence[Mapping[str, Any]]) -> dict[str, int]:
    """Count of findings per severity, most serious first (unknown severities last)."""
    counts: dict[str, int] = {}
    for finding in _sorted_findings(findings):
        key = _severity(finding) or "unrated"
        counts[key] = counts.get(key, 0) + 1
    return counts


def _severity_count_text(counts: Mapping[str, int]) -> str:
    """``"1 high, 2 medium, 1 info"``."""
    return ", ".join(f"{n} {severity}" for severity, n in counts.items())


def _sorted_findings(findings: Sequence[Mapping[str, Any]]) -> list[Mapping[str, Any]]:
    """Findings most serious first (high, medium, low, info, then others); stable otherwise."""
    return sorted(findings, key=lambda f: _SEVERITY_RANK.get(_severity(f), len(_SEVERITIES)))


def _evidence_html(evidence: Any) -> str:
    """The evidence of a finding as a small key/value list (labels from the key names)."""
    empty = not evidence if isinstance(evidence, (Mapping, list, tuple)) else is_missing(evidence)
    if empty:
        return '<span class="empty">none given</span>'
    if not isinstance(evidence, Mapping):
        return esc(evidence)
    entries = "".join(
        f"<dt>{html.escape(plain_label(str(key)))}</dt><dd>{display_value(str(key), value)}</dd>"
        for key, value in evidence.items()
    )
    return f'<dl class="evidence">{entries}</dl>'


def _findings_section(findings: Sequence[Mapping[str, Any]]) -> str:
    """Section 1: the plausibility findings, most serious first."""
    legend = "".join(
        f"<li>{_severity_badge(name)} {html.escape(meaning)}</li>" for name, meaning in _SEVERITIES
    )
    if not findings:
        return (
            '<p class="empty">No finding: none of the plausibility checks found an input or a '
            "result outside the published ranges and tables it was compared with.</p>"
        )
    rows = []
    for finding in _sorted_findings(findings):
        severity = _severity(finding)
        rows.append(
            f'<tr class="finding sev-row-{html.escape(severity or "unrated")}">'
            f'<td class="sev">{_severity_badge(severity)}</td>'
            f'<td><span class="subject">{esc(finding.get("subject"))}</span>'
            f'<span class="message">{esc(finding.get("message"))}</span>'
            f'<span class="code mono">{esc(finding.get("code"))}</span></td>'
            f'<td class="evidence">{_evidence_html(finding.get("evidence"))}</td></tr>'
        )
    counts = _severity_count_text(_severity_counts(findings))
    return (
        f'<p class="counts">{_plural(len(findings), "finding")}: {html.escape(counts)}.</p>'
        f'<ul class="sev-legend">{legend}</ul>'
        '<div class="table-wrap"><table class="findings"><thead><tr>'
        f"<th>{header_html('Severity')}</th>"
        f"<th>{header_html('Finding', 'what, message, check code')}</th>"
        f"<th>{header_html('Evidence')}</th></tr></thead><tbody>{''.join(rows)}</tbody></table></div>"
    )


def _integrity_problem_text(bad: Sequence[Mapping[str, Any]]) -> str:
    """``"1 changed, 1 missing"`` (other statuses by name)."""
    counts: dict[str, int] = {}
    for row in bad:
        status = str(row.get("status") or "unknown").lower()
        counts[status] = counts.get(status, 0) + 1
    return ", ".join(f"{n} {status}" for status, n in counts.items())


def _file_cell(path: Any) -> str:
    """File name, with its folder on a muted second line."""
    if is_missing(path):
        return f"<td>{MISSING_TEXT}</td>"
    pure = PurePath(str(path))
    folder = str(pure.parent) if str(pure.parent) not in ("", ".") else ""
    folder_html = f'<span class="sub mono">{esc(folder)}/</span>' if folder else ""
    return f"<td>{esc(pure.name)}{folder_html}</td>"


def _integrity_section(integrity: Sequence[Mapping[str, Any]]) -> str:
    """Section 2: each recorded input file, its status and its hashes."""
    if not integrity:
        return (
            '<p class="empty">The submission records no input files, so none could be checked.</p>'
        )
    bad = [r for r in integrity if str(r.get("status", "")).lower() != "ok"]
    lead = (
        f"All {_plural(len(integrity), 'input file')} match the SHA-256 hashes recorded in "
        "the submission."
        if not bad
        else f"{len(bad)} of {len(integrity)} input files not intact "
        f"({_integrity_problem_text(bad)}): a changed file no longer matches the hash "
        "recorded when the submission was made; a "
        "missing file is not in the submission folder. Figures re-computed from changed inputs "
        "cannot confirm the submitted ones."
    )
    rows = []
    for row in integrity:
        status = "" if is_missing(row.get("status")) else str(row.get("status")).strip().lower()
        text, css = _INTEGRITY_STYLE.get(status, (status or "unknown", "bad"))
        expected, actual = row.get("expected_sha256"), row.get("actual_sha256")
        if is_missing(actual):
            absent = "file not found" if status == "missing" else MISSING_TEXT
            actual_html = f'<span class="empty">{absent}</span>'
        elif not is_missing(expected) and str(actual).lower() == str(expected).lower():
            actual_html = f'<span class="empty">{_SHA_PLACEHOLDER}</span>'
        else:
            actual_html = f'<span class="mono">{esc(actual)}</span>'
        rows.append(
            f'<tr class="{css}"><td class="ident">{code_html(row.get("key"))}</td>'
            f"{_file_cell(row.get('file'))}"
            f'<td><span class="badge {css}">{"⚠ " if css == "bad" else ""}{esc(text)}</span></td>'
            f'<td class="hash mono">{esc(expected)}</td><td class="hash">{actual_html}</td></tr>'
        )
    return (
        f'<p class="{"counts" if bad else ""}">{html.escape(lead)}</p>'
        '<div class="table-wrap"><table class="integrity"><thead><tr>'
        f"<th>{header_html('Input')}</th><th>{header_html('File', 'folder below')}</th>"
        f"<th>{header_html('Status')}</th>"
        f"<th>{header_html('SHA-256 recorded', 'in the submission')}</th>"
        f"<th>{header_html('SHA-256 now', 'of the file as found')}</th></tr></thead>"
        f"<tbody>{''.join(rows)}</tbody></table></div>"
    )


def _difference_rows(differences: Sequence[Mapping[str, Any]]) -> tuple[list, int]:
    """Rows to list: every site row, and the receptor rows with the largest relative
    differences up to ``_MAX_RECEPTOR_ROWS``; also how many receptor rows were left out."""
    sites = [d for d in differences if str(d.get("table", "")).lower() != "receptors"]
    receptors = [d for d in differences if str(d.get("table", "")).lower() == "receptors"]
    if len(receptors) <= _MAX_RECEPTOR_ROWS:
        return sites + receptors, 0

    def size(row: Mapping[str, Any]) -> float:
        value = row.get("relative_difference")
        return abs(float(value)) if is_number(value) else np.inf  # unknown size first

    largest = sorted(receptors, key=size, reverse=True)[:_MAX_RECEPTOR_ROWS]
    return sites + largest, len(receptors) - _MAX_RECEPTOR_ROWS


def _relative_text(value: Any) -> str:
    """A relative difference as a number and, below it, as a percentage."""
    if not is_number(value):
        return '<span class="empty">–</span>'
    number = float(value)
    return (
        f"{html.escape(format_number(number))}"
        f'<span class="sub">{html.escape(format_number(100.0 * number))} %</span>'
    )


def _figures_section(
    differences: Sequence[Mapping[str, Any]],
    submitted_version: str,
    this_version: str,
    tolerance_text: str,
) -> str:
    """Section 3: versions, how figures were compared, and the figures that differ."""
    same = str(submitted_version).strip() == str(this_version).strip()
    versions = (
        f"<p>The submission was made with siting <strong>{esc(submitted_version)}</strong>; "
        f"this check re-ran it with siting <strong>{esc(this_version)}</strong>"
        + (
            " (the same version), so any difference points at changed inputs or settings.</p>"
            if same
            else " (a different version). A difference that a documented change between the "
            "two versions explains is listed with that change; the others are unexplained.</p>"
        )
    )
    tolerance = f'<p class="note">How figures were compared: {esc(tolerance_text)}</p>'
    if not differences:
        return (
            versions
            + tolerance
            + (
                '<p class="outcome good"><strong>No figure differs beyond the tolerance.</strong></p>'
            )
        )
    listed, left_out = _difference_rows(differences)
    unexplained = sum(1 for d in differences if is_missing(d.get("explained_by")))
    tables = list(dict.fromkeys(str(d.get("table", "")) for d in differences))
    lead = (
        f"{_plural(len(differences), 'figure')} {_verb(len(differences))} beyond the tolerance "
        f"({', '.join(tables)}); "
        + (f"{unexplained} unexplained." if unexplained else "each with a stated explanation.")
    )
    rows = []
    for d in listed:
        column = "" if is_missing(d.get("column")) else str(d.get("column"))
        submitted, recomputed = _pair_texts(d.get("submitted"), d.get("recomputed"), column)
        explained = d.get("explained_by")
        explained_html = (
            '<span class="badge unexplained">⚠ not explained</span>'
            if is_missing(explained)
            else esc(explained)
        )
        css = ' class="bad"' if is_missing(explained) else ""
        rows.append(
            f"<tr{css}><td>{esc(d.get('table'))}</td><td>{esc(d.get('id'))}</td>"
            f'<td class="ident">{code_html(column)}</td>'
            f'<td class="num">{html.escape(submitted)}</td>'
            f'<td class="num">{html.escape(recomputed)}</td>'
            f'<td class="num">{_relative_text(d.get("relative_difference"))}</td>'
            f"<td>{explained_html}</td></tr>"
        )
    more = (
        f'<p class="note">{_plural(left_out, "more receptor figure")} also '
        f"{_verb(left_out)} and {_verb(left_out, 'is', 'are')} not listed: the table shows the "
        f"{_MAX_RECEPTOR_ROWS} receptor figures with the largest relative differences.</p>"
        if left_out
        else ""
    )
    return (
        versions
        + tolerance
        + f'<p class="counts">{html.escape(lead)}</p>'
        + '<div class="table-wrap"><table class="differences"><thead><tr>'
        f"<th>{header_html('Table')}</th><th>{header_html('Site or receptor')}</th>"
        f"<th>{header_html('Figure', 'column')}</th>"
        f"<th>{header_html('Submitted', f'siting {submitted_version}')}</th>"
        f"<th>{header_html('This version', f'siting {this_version}')}</th>"
        f"<th>{header_html('Relative difference', 'fraction, then %')}</th>"
        f"<th>{header_html('Explained by')}</th></tr></thead>"
        f"<tbody>{''.join(rows)}</tbody></table></div>"
        + more
        + '<p class="note">Figures are shown with as many digits as it takes to tell the two '
        "apart. Columns ending in pct are percentages of the critical load or level.</p>"
    )


def _flipping_sites(summary: pd.DataFrame) -> list[str]:
    """Names of the sites whose verdict flips in some variant."""
    if summary is None or not len(summary) or "verdict_flips" not in summary:
        return []
    return [
        str(row.get("site")) for _, row in summary.iterrows() if _truthy(row.get("verdict_flips"))
    ]


def _range_text(low: Any, high: Any) -> str:
    """``"0.84 – 1.12"`` (2 decimals below 100 %)."""
    return f"{_percent_text(low)} – {_percent_text(high)}"


def _summary_table(summary: pd.DataFrame) -> str:
    """Per site: the central % of critical load and verdict, the range, and any flip."""
    rows = []
    for _, row in summary.iterrows():
        flips = _truthy(row.get("verdict_flips"))
        variants = row.get("flipping_variants")
        if flips:
            flip_html = '<span class="badge flip">⚠ flips</span>' + (
                f'<span class="sub">under: {esc(variants)}</span>'
                if not is_missing(variants)
                else ""
            )
        else:
            flip_html = '<span class="badge noflip">no</span>'
        rows.append(
            f'<tr class="{"flips" if flips else ""}">'
            f'<td class="site"><span class="site-name">{esc(row.get("site"))}</span></td>'
            f"<td>{_verdict_badge(row.get('central_verdict'))}</td>"
            f'<td class="num">{html.escape(_percent_text(row.get("central_pct_load")))}</td>'
            f'<td class="num">'
            f"{html.escape(_range_text(row.get('min_pct_load'), row.get('max_pct_load')))}</td>"
            f'<td class="num">'
            f"{html.escape(_range_text(row.get('min_pct_level'), row.get('max_pct_level')))}</td>"
            f"<td>{flip_html}</td></tr>"
        )
    return (
        '<div class="table-wrap"><table class="sensitivity"><thead><tr>'
        f"<th>{header_html('Site')}</th><th>{header_html('Central verdict')}</th>"
        f"<th>{header_html('PC, central', '% of critical load')}</th>"
        f"<th>{header_html('PC, lowest – highest', '% of critical load, all variants')}</th>"
        f"<th>{header_html('PC, lowest – highest', '% of critical level, all variants')}</th>"
        f"<th>{header_html('Verdict flips?', 'variants that flip it')}</th></tr></thead>"
        f"<tbody>{''.join(rows)}</tbody></table></div>"
    )


def _long_table(sensitivity: pd.DataFrame) -> str:
    """Every (site, variant) run, grouped by site; rows whose verdict differs from the
    site's central verdict are marked."""
    rows = []
    for site, group in sensitivity.groupby("site", sort=False, dropna=False):
        central = [
            r["verdict"] for _, r in group.iterrows()
            if str(r["variant"]).strip().lower() == _CENTRAL
        ]  # fmt: skip
        central_verdict = None if not central else str(central[0]).strip().lower()
        rows.append(f'<tr class="step-group"><th colspan="4">{esc(site)}</th></tr>')
        for _, r in group.iterrows():
            is_central = str(r["variant"]).strip().lower() == _CENTRAL
            verdict = "" if is_missing(r["verdict"]) else str(r["verdict"]).strip().lower()
            flips = central_verdict is not None and not is_central and verdict != central_verdict
            css = "flips" if flips else ("central" if is_central else "")
            mark = ' <span class="badge flip">⚠ flips</span>' if flips else ""
            rows.append(
                f'<tr class="{css}"><td>{esc(r["variant"])}</td>'
                f'<td class="num">{html.escape(_percent_text(r["pct_load"]))}</td>'
                f'<td class="num">{html.escape(_percent_text(r["pct_level"]))}</td>'
                f"<td>{_verdict_badge(r['verdict'])}{mark}</td></tr>"
            )
    return (
        '<div class="table-wrap"><table class="sensitivity long"><thead><tr>'
        f"<th>{header_html('Variant')}</th><th>{header_html('PC', '% of critical load')}</th>"
        f"<th>{header_html('PC', '% of critical level')}</th>"
        f"<th>{header_html('Verdict')}</th></tr></thead>"
        f"<tbody>{''.join(rows)}</tbody></table></div>"
    )


def _sensitivity_section(sensitivity: pd.DataFrame, summary: pd.DataFrame) -> str:
    """Section 4: the per-site summary, then every variant under a subheading."""
    if (summary is None or not len(summary)) and (sensitivity is None or not len(sensitivity)):
        return '<p class="empty">No sensitivity analysis was run.</p>'
    parts = [
        (
            "<p>Each site's process contribution (PC) and verdict were re-computed with one "
            "assumption changed at a time, each in the direction that can raise the figure as "
            "well as the one that can lower it: the deposition velocity at the low and high end "
            "of its range (the high end above the screening value), the critical load at both "
            "ends of the habitat's range, the critical level at 1 and 3 µg/m³, plume depletion "
            "on and off, the other rule for the wind below the anemometer, every claimed "
            "abatement at the lower end of its published range, the emission factors at their "
            "stated uncertainty, and other weather records where given. “Central” is the "
            "submission's own choice. A verdict that flips within these ranges means the result "
            "rests on that assumption.</p>"
        )
    ]
    if summary is not None and len(summary):
        flips = _flipping_sites(summary)
        lead = (
            f"The verdict flips for {len(flips)} of {_plural(len(summary), 'site')}: "
            + ", ".join(flips)
            + "."
            if flips
            else f"The verdict holds across every variant for all {_plural(len(summary), 'site')}."
        )
        parts.append(f'<p class="counts">{esc(lead)}</p>')
        parts.append(_summary_table(summary))
    if sensitivity is not None and len(sensitivity):
        parts.append("<h3>Every variant, by site</h3>")
        parts.append(
            '<p class="note">The central run in bold; a row marked ⚠ has a different verdict '
            "from the central run.</p>"
        )
        parts.append(_long_table(sensitivity))
    return "".join(parts)


# --------------------------------------------------------------------------------------------
# The page
# --------------------------------------------------------------------------------------------


def _numbered_sections(
    findings: Sequence[Mapping[str, Any]],
    integrity: Sequence[Mapping[str, Any]],
    figures_html: str,
    sensitivity: pd.DataFrame,
    sensitivity_summary: pd.DataFrame,
    cautions: Sequence[str],
) -> tuple[tuple[str, str, str], ...]:
    """Sections 1 to 5 of the page as (anchor, heading, HTML), in page order; section 3
    (from :func:`_figures_section`) arrives ready made."""
    return (
        ("findings", "1. Findings", _findings_section(findings)),
        ("integrity", "2. Inputs intact?", _integrity_section(integrity)),
        ("figures", "3. Same numbers with this version?", figures_html),
        ("sensitivity", "4. Sensitivity", _sensitivity_section(sensitivity, sensitivity_summary)),
        (
            "cautions",
            "5. Cautions",
            f'<div class="cautions">{bullet_list(cautions, "No cautions given.")}</div>',
        ),
    )


def _opening(
    verdict: str,
    exit_code: int,
    findings: Sequence[Mapping[str, Any]],
    integrity: Sequence[Mapping[str, Any]],
    differences: Sequence[Mapping[str, Any]],
    sensitivity_summary: pd.DataFrame,
    this_version: str,
) -> str:
    """What precedes the sections: the verdict box, the list of checks and the caution line."""
    n_high = _severity_counts(findings).get("high", 0)
    return (
        _verdict_box(verdict, exit_code, n_high, _flipping_sites(sensitivity_summary))
        + _checks_list(findings, integrity, differences, sensitivity_summary, str(this_version))
        + '<p class="caution-line">A screening submission is an estimate from a simplified '
        "model: read the cautions in section 5. The competent authority and local regulations "
        "decide.</p>"
    )


def _page_heading(submission: str, submitted_version: str, this_version: str, run_time: str) -> str:
    """The page title and the line naming the submission, both versions and the run time."""
    return (
        "<h1>Verification of a screening submission</h1>"
        f'<p class="meta">Submission <span class="mono">{esc(submission)}</span> · made with '
        f"siting {esc(submitted_version)} · verified with siting {esc(this_version)} on "
        f"{esc(run_time)}</p>"
    )


def _page_footer(
    submission: str, submitted_version: str, this_version: str, run_time: str, exit_code: int
) -> str:
    """The footer: who wrote the page when, from which submission, with which exit code."""
    return (
        f"<footer>Verification report written by siting {esc(this_version)} on "
        f"{esc(run_time)} · submission made with siting {esc(submitted_version)} · "
        f'submission folder <span class="mono">{esc(submission)}</span> · '
        f"exit code {int(exit_code)}</footer>"
    )


def write_verify_report(  # over 80 lines only for the docstring of its 14 parameters
    path: Path,
    *,
    submission: str,
    submitted_version: str,
    this_version: str,
    run_time: str,
    verdict: str,
    exit_code: int,
    integrity: list[dict],
    differences: list[dict],
    tolerance_text: str,
    findings: list[dict],
    sensitivity: pd.DataFrame,
    sensitivity_summary: pd.DataFrame,
    cautions: list[str],
) -> None:
    """Write the verification report: a self-contained, offline-readable HTML file.

    Parameters
    ----------
    path : Path
        File to write.
    submission : str
        The submission folder as it should be shown (user text, escaped).
    submitted_version : str
        siting version that made the submission (from its run record).
    this_version : str
        siting version that verified it.
    run_time : str
        Time of the verification, as it should be shown (e.g. ISO 8601).
    verdict : str
        One sentence, "Consistent: ..." or "Not consistent: ...".
    exit_code : int
        Exit code of ``siting verify``: 0 consistent, 1 not consistent; it picks the colour of
        the verdict box.
    integrity : list of dict
        One row per recorded input file: ``key``, ``file``, ``expected_sha256``,
        ``actual_sha256`` (None when the file is missing) and ``status`` ("ok", "changed" or
        "missing").
    differences : list of dict
        One row per figure that differs beyond the tolerance: ``table`` ("sites" or
        "receptors"), ``id``, ``column``, ``submitted``, ``recomputed`` (float or str),
        ``relative_difference`` (float or None) and ``explained_by`` ("" when unknown).
        Receptor rows beyond 200 are summarised (the largest relative differences listed).
    tolerance_text : str
        How figures were compared, in words.
    findings : list of dict
        Plausibility findings: ``code``, ``severity`` ("high", "medium", "low", "info"),
        ``subject``, ``message`` and ``evidence`` (a mapping shown as a key/value list).
    sensitivity : DataFrame
        One row per (site, variant) with the columns of :data:`SENSITIVITY_COLUMNS`
        (``pct_load``, ``pct_level`` [%]); may be empty.
    sensitivity_summary : DataFrame
        One row per site with the columns of :data:`SENSITIVITY_SUMMARY_COLUMNS`
        (``*_pct_load`` [%], ``verdict_flips`` bool); may be empty.
    cautions : list of str
        The cautions every output carries.

    Raises
    ------
    InputError
        If a non-empty sensitivity table lacks a column; nothing is written then.
    """
    _check_columns(sensitivity, SENSITIVITY_COLUMNS, "sensitivity")
    _check_columns(sensitivity_summary, SENSITIVITY_SUMMARY_COLUMNS, "sensitivity summary")
    figures = _figures_section(differences, submitted_version, this_version, tolerance_text)
    sections = _numbered_sections(
        findings, integrity, figures, sensitivity, sensitivity_summary, cautions
    )
    opening = _opening(
        verdict, exit_code, findings, integrity, differences, sensitivity_summary, this_version
    )
    body = (
        _page_heading(submission, submitted_version, this_version, run_time)
        + opening
        + sections_html(sections)
        + _page_footer(submission, submitted_version, this_version, run_time, exit_code)
    )
    title = f"Verification of {PurePath(str(submission)).name or submission} · siting"
    Path(path).write_text(page_html(title, _CSS, body), encoding="utf-8")
