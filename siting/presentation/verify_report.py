"""The verification report (verify.html) that ``siting verify`` writes, rendered to a string.

This module turns what :mod:`siting.runs.verification` found into the values of one
self-contained HTML page for the regulator's file; the jinja2 template ``verify.html`` (in
``siting/presentation/templates/``, on the shell and macros of
:mod:`siting.presentation.html_parts` shared with report.html, so both pages read alike) lays
them out, and :mod:`siting.output.verify` writes the file. The page has inline CSS, no scripts
and no links outside the file, so it reads the same offline years later. No checking happens
here: verdicts, hashes, comparison, findings and sensitivity arrive as plain data; this module
orders, counts and formats them; the first section (what changed since the run) is built by
:mod:`siting.presentation.verify_changes` and the sensitivity section by
:mod:`siting.presentation.verify_sensitivity`. Text that may come from the applicant's files (site names, file
names, source ids, finding subjects, evidence) is escaped by the template (autoescape). The page
is laid out for A4 portrait, on screen and in print: table rows are never split across pages,
headings stay with what follows, table headers repeat, nothing is collapsed."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import PurePath
from typing import Any

import numpy as np
import pandas as pd

from siting.errors import InputError
from siting.presentation.formats import MISSING_TEXT, format_number, format_percent, is_missing
from siting.presentation.html_parts import display_value, is_number, plain_label, render, text
from siting.presentation.html_parts import verdict as verdict_view
from siting.presentation.verify_changes import changes_view
from siting.presentation.verify_sensitivity import flipping_sites, sensitivity_view

__all__ = ["SENSITIVITY_COLUMNS", "SENSITIVITY_SUMMARY_COLUMNS", "render_verify_report"]

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

#: Most receptor rows listed in the differences table; beyond that the largest are listed.
_MAX_RECEPTOR_ROWS = 200

#: The verdicts of a site shown side by side: as submitted, re-run, under the regulator's set.
_VERDICT_KINDS = ("submitted", "rerun", "regulator")


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


def _pair_texts(first: Any, second: Any, column: str) -> tuple[str, str]:
    """Two values of one figure as text, with enough digits that different values read
    differently (0.049012 and 0.049031 show as ``0.04901`` and ``0.04903``, not both
    ``0.049``).

    Percentages start at 2 decimals, other numbers at 3 significant digits; text is returned
    as given.
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


def _severity(finding: Mapping[str, Any]) -> str:
    """The finding's severity, lower-case ('' when missing)."""
    value = finding.get("severity")
    return "" if is_missing(value) else str(value).strip().lower()


def _severity_badge(severity: str) -> tuple[str, str]:
    """(CSS class, text) of a severity badge: the severity in words (colour is never the only
    cue), "unrated" when there is none."""
    css = f"sev-{severity}" if severity in _SEVERITY_RANK else "sev-other"
    return css, text(severity or "unrated")


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


def _integrity_problem_text(bad: Sequence[Mapping[str, Any]]) -> str:
    """``"1 changed, 1 missing"`` (other statuses by name)."""
    counts: dict[str, int] = {}
    for row in bad:
        status = str(row.get("status") or "unknown").lower()
        counts[status] = counts.get(status, 0) + 1
    return ", ".join(f"{n} {status}" for status, n in counts.items())


# --- What precedes the sections: the verdict box and the list of checks ----------------------


def _verdict_box(verdict_text: str, exit_code: int, n_high: int, flips: Sequence[str]) -> dict:
    """The verdict sentence, the box's colour and what needs attention (the template lists
    the exit codes and their meaning)."""
    attention = []
    if n_high:
        attention.append(f"{_plural(n_high, 'high-severity finding')} (section 2)")
    if flips:
        attention.append(
            f"{_plural(len(flips), 'site')} whose verdict flips in the sensitivity analysis "
            "(section 5)"
        )
    return {
        "css": {0: "pass", 1: "fail"}.get(int(exit_code), "unknown"),
        "verdict": text(verdict_text),
        "attention": "; ".join(attention) or None,
    }


def _checks(
    findings: Sequence[Mapping[str, Any]],
    integrity: Sequence[Mapping[str, Any]],
    differences: Sequence[Mapping[str, Any]],
    summary: pd.DataFrame,
    changes: Mapping[str, Any] | None = None,
) -> dict[str, tuple[str, str]]:
    """The outcome of each check, (text, "good", "bad" or "" for neither), by section
    (``changes``: the view of :func:`changes_view`, None when nothing was compared)."""
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
    flips = flipping_sites(summary)
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
    changes_check = (
        ("Nothing recorded to compare with.", "")
        if changes is None
        else (changes["lead"], "good" if changes["nothing"] else "bad")
    )
    return {
        "changes": changes_check,
        "findings": (finding_text, "bad" if n_serious else "good"),
        "integrity": (integrity_text, "bad" if bad_files else "good"),
        "figures": (difference_text, "bad" if unexplained else ("" if differences else "good")),
        "sensitivity": (sensitivity_text, "bad" if flips else ("good" if n_sites else "")),
    }


# --- Sections 1 and 2: findings, inputs intact -----------------------------------------------


def _evidence(evidence: Any) -> Any:
    """The evidence of a finding: None when none is given, text, or (label, value) rows of a
    small key/value list (labels from the key names)."""
    empty = not evidence if isinstance(evidence, (Mapping, list, tuple)) else is_missing(evidence)
    if empty:
        return None
    if not isinstance(evidence, Mapping):
        return text(evidence)
    return [
        (plain_label(str(key)), display_value(str(key), value)) for key, value in evidence.items()
    ]


def _findings(findings: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    """Section 1: the plausibility findings, most serious first, and the severity legend."""
    rows = []
    for finding in _sorted_findings(findings):
        severity = _severity(finding)
        rows.append(
            {
                "severity": severity or "unrated",
                "badge": _severity_badge(severity),
                "subject": text(finding.get("subject")),
                "message": text(finding.get("message")),
                "code": text(finding.get("code")),
                "evidence": _evidence(finding.get("evidence")),
            }
        )
    return {
        "counts": f"{_plural(len(findings), 'finding')}: "
        f"{_severity_count_text(_severity_counts(findings))}.",
        "legend": [(_severity_badge(name), meaning) for name, meaning in _SEVERITIES],
        "rows": rows,
    }


def _verdicts(rows: Sequence[Mapping[str, Any]] | None, rule_sets: str) -> dict[str, Any] | None:
    """Section 1's verdicts by rule set (None without rows): the line naming the sets; per site
    whether the regulator's verdict differs, the site, its _VERDICT_KINDS and deciding rule."""
    if not rows:
        return None
    shown = [
        (bool(r.get("differs")), text(r.get("site")))
        + tuple(verdict_view(r.get(f"{k}_verdict"), r.get(f"{k}_passes")) for k in _VERDICT_KINDS)
        + (text(r.get("regulator_rule")),)
        for r in rows
    ]
    return {"line": text(rule_sets) if rule_sets else None, "rows": shown}


def _integrity_row(row: Mapping[str, Any]) -> dict[str, Any]:
    """One recorded input file: its key, name and folder, status badge and both hashes."""
    status = "" if is_missing(row.get("status")) else str(row.get("status")).strip().lower()
    badge, css = _INTEGRITY_STYLE.get(status, (status or "unknown", "bad"))
    expected, actual = row.get("expected_sha256"), row.get("actual_sha256")
    if is_missing(actual):
        actual_shown = ("file not found" if status == "missing" else MISSING_TEXT, "empty")
    elif not is_missing(expected) and str(actual).lower() == str(expected).lower():
        actual_shown = ("same as recorded", "empty")
    else:
        actual_shown = (text(actual), "mono")
    path, file = row.get("file"), None
    if not is_missing(path):
        pure = PurePath(str(path))
        file = (text(pure.name), str(pure.parent) if str(pure.parent) not in ("", ".") else "")
    return {
        "css": css,
        "key": text(row.get("key")),
        "file": file,
        "badge": f"{'⚠ ' if css == 'bad' else ''}{text(badge)}",
        "expected": text(expected),
        "actual": actual_shown,
    }


def _integrity(integrity: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    """Section 2: each recorded input file, its status and its hashes, and the counts that
    lead the section (how many files, how many not intact and why)."""
    bad = [r for r in integrity if str(r.get("status", "")).lower() != "ok"]
    return {
        "files": _plural(len(integrity), "input file"),
        "n_files": len(integrity),
        "n_bad": len(bad),
        "problems": _integrity_problem_text(bad),
        "rows": [_integrity_row(r) for r in integrity],
    }


# --- Section 3: the same numbers with this version? ------------------------------------------


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


def _difference_row(difference: Mapping[str, Any]) -> dict[str, Any]:
    """One differing figure: where, both values (telling digits), the relative difference as a
    fraction and a percentage (None when unknown) and its explanation (None when none)."""
    column = "" if is_missing(difference.get("column")) else str(difference.get("column"))
    submitted, recomputed = _pair_texts(
        difference.get("submitted"), difference.get("recomputed"), column
    )
    relative = difference.get("relative_difference")
    explained = difference.get("explained_by")
    return {
        "table": text(difference.get("table")),
        "id": text(difference.get("id")),
        "column": text(column),
        "submitted": submitted,
        "recomputed": recomputed,
        "relative": (
            (format_number(float(relative)), format_number(100.0 * float(relative)))
            if is_number(relative)
            else None
        ),
        "explained": None if is_missing(explained) else text(explained),
    }


def _figures(
    differences: Sequence[Mapping[str, Any]], submitted_version: str, this_version: str
) -> dict[str, Any]:
    """Section 3: whether both versions are the same, and the figures that differ."""
    same = str(submitted_version).strip() == str(this_version).strip()
    if not differences:
        return {"same_version": same, "lead": None, "rows": [], "more": None}
    listed, left_out = _difference_rows(differences)
    unexplained = sum(1 for d in differences if is_missing(d.get("explained_by")))
    tables = list(dict.fromkeys(str(d.get("table", "")) for d in differences))
    lead = (
        f"{_plural(len(differences), 'figure')} {_verb(len(differences))} beyond the tolerance "
        f"({', '.join(tables)}); "
        + (f"{unexplained} unexplained." if unexplained else "each with a stated explanation.")
    )
    more = (
        f"{_plural(left_out, 'more receptor figure')} also {_verb(left_out)} and "
        f"{_verb(left_out, 'is', 'are')} not listed: the table shows the {_MAX_RECEPTOR_ROWS} "
        "receptor figures with the largest relative differences."
        if left_out
        else None
    )
    rows = [_difference_row(d) for d in listed]
    return {"same_version": same, "lead": lead, "rows": rows, "more": more}


# --- The page --------------------------------------------------------------------------------


def render_verify_report(  # over 80 lines only for the docstring of its 16 parameters
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
    verdicts: list[dict] | None = None,
    rule_sets: str = "",
    changes: dict | None = None,
) -> str:
    """verify.html as text: a self-contained, offline-readable verification report.

    Parameters
    ----------
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
    verdicts : list of dict, optional
        Per site (``VerifyResult.verdicts``): ``site``, ``differs`` and ``<kind>_verdict``,
        ``<kind>_passes`` for each kind of _VERDICT_KINDS, and ``regulator_rule``.
    rule_sets : str
        Which rule sets were used, in one line.
    changes : dict, optional
        What changed since the run (``Changes.as_dict()`` of :mod:`siting.runs.changes`):
        the page's first section; None says nothing was compared.

    Returns
    -------
    page : str
        The whole page (:func:`siting.output.verify.write_verify_report` writes it).

    Raises
    ------
    InputError
        If a non-empty sensitivity table lacks a column.
    """
    _check_columns(sensitivity, SENSITIVITY_COLUMNS, "sensitivity")
    _check_columns(sensitivity_summary, SENSITIVITY_SUMMARY_COLUMNS, "sensitivity summary")
    n_high = _severity_counts(findings).get("high", 0)
    changed = changes_view(changes)
    name = PurePath(str(submission)).name or submission
    return render(
        "verify.html",
        page_title=f"Verification of {name} · siting",
        submission=text(submission),
        submitted_version=text(submitted_version),
        this_version=text(this_version),
        run_time=text(run_time),
        exit_code=int(exit_code),
        box=_verdict_box(verdict, exit_code, n_high, flipping_sites(sensitivity_summary)),
        checks=_checks(findings, integrity, differences, sensitivity_summary, changed),
        changes=changed,
        findings=_findings(findings) if findings else None,
        verdicts=_verdicts(verdicts, rule_sets),
        integrity=_integrity(integrity) if integrity else None,
        tolerance=text(tolerance_text),
        figures=_figures(differences, submitted_version, this_version),
        sensitivity=sensitivity_view(sensitivity, sensitivity_summary),
        cautions=[text(caution) for caution in cautions],
    )
