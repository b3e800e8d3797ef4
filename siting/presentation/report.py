"""The screening report (report.html), rendered to a string.

This module turns results that other modules computed into the values of one self-contained HTML
page; the jinja2 templates in ``siting/presentation/templates/`` (``report.html``, its tables in
``report_tables.html`` and ``report_record.html``, the shell and shared macros in ``page.html`` and
``parts.html``) lay them out, and :mod:`siting.output.screen` writes the file. The page has inline
CSS, figures inlined as base64 PNG data URLs, no scripts and no links outside the file, so a
regulator can open it offline years later. No physics lives here: every number shown was computed
elsewhere; this module only formats and arranges it. The figures are drawn by
:mod:`siting.presentation.figures` and arrive as PNG bytes; number formatting lives in
:mod:`siting.presentation.formats`, and what both pages share (the template environment, labels,
value display) in :mod:`siting.presentation.html_parts`. Numbers are formatted by what their
column measures, read from the unit suffix of the column name
(:func:`siting.presentation.formats.format_for_column`). Text from user files (site names,
designations, source ids, the title) is escaped by the templates (autoescape) wherever it enters
the page; Python hands them plain text only.

The page is laid out to fit an A4 or Letter page, on screen and in print: no table is wider than
the page (the sources table is transposed, one column per source, and split into blocks of a few
sources), long citations wrap in a smaller font or become numbered notes, and table rows are
never split across pages. In print (A4 portrait) table headers repeat on each page, headings stay
with what follows them, figures and list items are kept whole, and figures are capped in height
so that two fit on a page; every page but the first is headed by the title and the [project]
reference, and footed by "Page n of N"; the contents and the collapsed raw run record are left
out (run.json holds it). report.pdf is laid out from this very page by
:mod:`siting.presentation.report_pdf`. Status notes of the sources' and thresholds' citations
("from memory", "confirmed") are numbered notes under their tables, as the habitats' are. The
weather charts (wind rose, stability by wind speed) sit in section 2 right after the weather
summary; the other figures in section 5.
"""

from __future__ import annotations

import base64
from collections.abc import Callable, Iterable, Mapping
from typing import Any

import pandas as pd

from siting.errors import InputError
from siting.presentation.formats import MISSING_TEXT, format_for_column, format_percent, is_missing
from siting.presentation.html_parts import (
    Cell,
    Verdict,
    filled,
    is_number,
    macro,
    render,
    text,
    verdict,
)
from siting.presentation.report_options import options_view
from siting.presentation.report_record import flag_count, inputs_view, run_record_view

__all__ = ["SUMMARY_COLUMNS", "render_report"]

#: Columns the summary table needs: (column in `sites`, what it holds). The table shows them as
#: Site (name, designation below) | Verdict | Habitat | concentration group | deposition group |
#: threshold; see :func:`_summary`.
SUMMARY_COLUMNS: tuple[tuple[str, str], ...] = (
    ("name", "site name"),
    ("designation", "designation"),
    ("habitat", "habitat id (habitat_name is shown instead when present)"),
    ("critical_level_ug_m3", "critical level used [ug NH3 m-3]"),
    ("critical_load_used_kg_n_ha_yr", "critical load used [kg N ha-1 yr-1]"),
    ("pc_conc_max_ug_m3", "PC, maximum concentration over the site [ug NH3 m-3]"),
    ("pc_pct_level", "PC as % of the critical level"),
    ("pc_dep_max_kg_n_ha_yr", "PC, maximum deposition over the site [kg N ha-1 yr-1]"),
    ("pc_pct_load", "PC as % of the critical load"),
    ("threshold_percent", "screening threshold [%]"),
    ("verdict", "verdict"),
)

#: Net-change table columns: (column in `sites`, header label, unit), shown when filled.
_CHANGE_COLUMNS = (
    ("net_conc_max_ug_m3", "Net change", "µg NH3/m³"),
    ("net_pct_level", "Net change", "% of level"),
    ("net_dep_max_kg_n_ha_yr", "Net change", "kg N/ha/yr"),
    ("net_pct_load", "Net change", "% of load"),
    ("incomb_dep_max_kg_n_ha_yr", "In-combination", "kg N/ha/yr"),
    ("incomb_pct_load", "In-combination", "% of load"),
    ("background_dep_kg_n_ha_yr", "Background", "kg N/ha/yr"),
    ("pec_dep_kg_n_ha_yr", "Background + PC", "kg N/ha/yr"),
    ("pec_pct_load", "Background + PC", "% of load"),
)

_LOAD = "critical_load_used_kg_n_ha_yr"
_UNDEPLETED = "pc_pct_load_undepleted"

# --------------------------------------------------------------------------------------------
# Small helpers
# --------------------------------------------------------------------------------------------


def _records(frame: pd.DataFrame, columns: Iterable[str]) -> list[dict[str, Any]]:
    """The rows of ``frame`` as dicts of the named columns that it has (so ``.get`` of an absent
    one gives None, as on a row Series); built from whole columns, which for thousands of
    sites is many times quicker than ``iterrows``."""
    present = [c for c in dict.fromkeys(columns) if c in frame]
    if not present:
        return [{} for _ in range(len(frame))]
    return [dict(zip(present, row)) for row in zip(*(frame[c].tolist() for c in present))]


def _cached(function: Callable[..., Any]) -> Callable[..., Any]:
    """``function(value, *args)`` remembered per (type, value, args): a table repeats the same
    critical levels, loads, thresholds and verdicts over thousands of rows. Unhashable values
    are passed through; a NaN is only found again as the same object, which is still right.
    The results are shared between rows, so they must not be changed (Cell is frozen)."""
    cache: dict[tuple, Any] = {}

    def cell(value: Any, *args: Any) -> Any:
        key = (type(value), value, *args)
        try:
            return cache[key]
        except KeyError:
            shown = cache[key] = function(value, *args)
            return shown
        except TypeError:
            return function(value, *args)

    return cell


def _percent_shown(value: Any, column: str, threshold: Any) -> tuple[str, bool]:
    """A % as shown and whether it is over the threshold, with more decimals when rounding
    would hide the difference from the threshold (1.04 % against 1 % shows "1.04", not
    "1.0")."""
    if is_missing(value) or not is_number(value) or not is_number(threshold):
        return format_for_column(value, column), False
    number, limit = float(value), float(threshold)
    decimals = 1
    shown = format_percent(number, decimals)
    while number != limit and shown == format_percent(limit, decimals) and decimals < 6:
        decimals += 1
        shown = format_percent(number, decimals)
    return shown, number > limit


def _percent_or_missing(value: Any) -> str:
    return MISSING_TEXT if is_missing(value) else format_percent(value)


def _span(low: Any, high: Any) -> str:
    """A sensitivity range of percentages, ``"5.6 – 24.1"``, or the missing mark."""
    if is_missing(low) or is_missing(high):
        return MISSING_TEXT
    return f"{format_percent(low)} – {format_percent(high)}"


# --------------------------------------------------------------------------------------------
# Section 1: summary and net change
# --------------------------------------------------------------------------------------------


def _summary(sites: pd.DataFrame) -> dict[str, Any]:
    """The summary table's values: one row per site, site and verdict first (the template
    ``report_tables.html`` lays them out to fit a portrait page). Each row is a tuple (name,
    designation or None, verdict, habitat cell, numbers), unpacked by the template; each number
    is (text, over the threshold)."""
    show_incomb = filled(sites, "incomb_pct_load")
    number = _cached(lambda value, column: (format_for_column(value, column), False))
    verdict_view = _cached(verdict)
    habitat_cell = _cached(lambda name, code: Cell(text(name)) if not is_missing(name)
                           else Cell(text(code), wrap=True))  # fmt: skip
    # the figures the rule set judged (its basis), else (a table without rule sets) the PC
    judged = "judged" if "judged_pct_load" in sites else "pc"
    conc, dep = f"{judged}_conc_max_ug_m3", f"{judged}_dep_max_kg_n_ha_yr"
    level_pct, load_pct = f"{judged}_pct_level", f"{judged}_pct_load"
    extra = [c for c in ("passes", "deciding_rule", conc, dep, level_pct, load_pct) if c in sites]
    columns = ["name", "designation", "habitat", "habitat_name", "verdict",
               *(c for c, _ in SUMMARY_COLUMNS), "incomb_pct_load", *extra]  # fmt: skip
    rows = []
    for record in _records(sites, columns):
        get = record.get
        threshold = get("threshold_percent")
        numbers = [
            number(get("critical_level_ug_m3"), "critical_level_ug_m3"),
            number(get(conc), "pc_conc_max_ug_m3"),
            _percent_shown(get(level_pct), "pc_pct_level", threshold),
            number(get(_LOAD), _LOAD),
            number(get(dep), "pc_dep_max_kg_n_ha_yr"),
            _percent_shown(get(load_pct), "pc_pct_load", threshold),
        ]
        if show_incomb:
            numbers.append(number(get("incomb_pct_load"), "incomb_pct_load"))
        numbers.append(number(threshold, "threshold_percent"))
        designation = get("designation")
        rows.append(
            (
                text(get("name")),
                None if is_missing(designation) else str(designation),
                _with_rule(verdict_view(get("verdict"), get("passes")), get("deciding_rule")),
                habitat_cell(get("habitat_name"), get("habitat")),
                numbers,
            )
        )
    return {"show_incomb": show_incomb, "rows": rows, "basis": _basis_note(sites)}


_BASIS_WORDS = {
    "proposal": "the proposed sources alone",
    "installation": "the installation after the change (proposed + existing sources)",
    "net": "the net change (proposed sources less those removed)",
}


def _basis_note(sites: pd.DataFrame) -> str:
    """What the summary's figures are and which rule set judged them, in words."""
    if "basis" not in sites or not len(sites):
        return "PC: process contribution of the installation (proposed + existing sources)"
    basis, rules = str(sites["basis"].iloc[0]), str(sites["rules"].iloc[0])
    return (
        f"PC: the contribution rule set {rules} judges, {_BASIS_WORDS.get(basis, basis)}; "
        f"verdicts and deciding rules are that set's (`siting rules {rules}` prints it)"
    )


def _with_rule(shown: Verdict, rule: Any) -> Verdict:
    """The verdict with its deciding rule, in words, as its hint (when the table has one)."""
    if is_missing(rule) or not str(rule).strip():
        return shown
    return Verdict(shown.text, shown.css, f"deciding rule {rule}")


def _change(sites: pd.DataFrame) -> dict[str, Any] | None:
    """Net change (proposed - removed), in-combination and background + PC, one row per site.

    Columns that are empty for every site (e.g. no background in the habitat layer) are left
    out; None when none is present. Each row is (name, the numbers as text).
    """
    columns = [c for c in _CHANGE_COLUMNS if filled(sites, c[0])]
    if not columns:
        return None
    number = _cached(format_for_column)
    rows = [
        (text(record.get("name")), [number(record.get(col), col) for col, _, _ in columns])
        for record in _records(sites, ["name", *(col for col, _, _ in columns)])
    ]
    return {"columns": [(label, unit) for _, label, unit in columns], "rows": rows}


def _change_table(sites: pd.DataFrame) -> str:
    """The net-change table on its own, as the page shows it ('' when it has no column)."""
    change = _change(sites)
    return "" if change is None else macro("report_tables.html", "change_table", change)


# --------------------------------------------------------------------------------------------
# Section 4: cautious choices and sensitivity; section 5: figures
# --------------------------------------------------------------------------------------------


def _cautious(choices, sites: pd.DataFrame, summary, end: str = "lower") -> dict[str, Any]:
    """The run's modelling choices (each with its cautious default and the alternative), and
    per site the critical level's basis, what depletion took off and the sensitivity range:
    a tuple per site (name, level, its basis or None, load, review, % without depletion, the
    two sensitivity ranges, the variants that flip the verdict), unpacked by the template."""
    ranges = {}
    if summary is not None and len(summary):
        ranges = {str(r["site"]): r for r in summary.to_dict("records")}
    level_cell = _cached(lambda level, basis: (format_for_column(level, "critical_level_ug_m3"),
                                               None if is_missing(basis) else str(basis)))  # fmt: skip
    load_text = _cached(lambda load: format_for_column(load, _LOAD))
    columns = ["name", "critical_level_basis", "critical_level_ug_m3", _LOAD,
               "critical_load_review", _UNDEPLETED]  # fmt: skip
    rows = []
    for row in _records(sites, columns):
        name = str(row.get("name"))
        r = ranges.get(name, {})
        flips = r.get("flipping_variants")
        rows.append(
            (
                text(name),
                *level_cell(row.get("critical_level_ug_m3"), row.get("critical_level_basis")),
                load_text(row.get(_LOAD)),
                text(row.get("critical_load_review", MISSING_TEXT)),
                _percent_or_missing(row.get(_UNDEPLETED)),
                _span(r.get("min_pct_load"), r.get("max_pct_load")),
                _span(r.get("min_pct_level"), r.get("max_pct_level")),
                text(flips) if not is_missing(flips) and flips else "none",
            )
        )
    return {
        "choices": [tuple(text(v) for v in choice) for choice in choices or ()],
        "undepleted": _UNDEPLETED in sites.columns,
        "end": text(end),
        "rows": rows,
    }


def _figures(figures: Mapping[str, bytes]) -> list[tuple[str, str]]:
    """(caption, PNG data URL) of each figure, in order.

    Raises
    ------
    InputError
        If a figure is not PNG bytes.
    """
    shown = []
    for caption, png in figures.items():
        if not isinstance(png, (bytes, bytearray)) or not bytes(png).startswith(b"\x89PNG"):
            raise InputError(f"report figure {caption!r}: expected PNG bytes")
        data = base64.b64encode(bytes(png)).decode("ascii")
        shown.append((text(caption), f"data:image/png;base64,{data}"))
    return shown


def _verdict_counts(sites: pd.DataFrame) -> str:
    """``"2 above threshold; 3 below threshold"`` (verdicts in order of first appearance)."""
    counts: dict[str, int] = {}
    for value in sites["verdict"]:
        key = "not assessed" if is_missing(value) else str(value)
        counts[key] = counts.get(key, 0) + 1
    return "; ".join(f"{n} {k}" for k, n in counts.items()) or "no sites"


#: The [project] keys shown on the report's cover, in this order, with their labels.
_PROJECT_LABELS = (
    ("applicant", "Applicant"),
    ("site", "Site"),
    ("reference", "Reference"),
    ("author", "Prepared by"),
    ("date", "Date"),
)


def _project(project: Any) -> tuple[list[tuple[str, str, bool]], str | None]:
    """The cover's project rows (label, text, whether it is the reference) of the keys given,
    and the reference alone (for the running header); ([], None) without a [project]."""
    if not isinstance(project, Mapping):
        return [], None
    rows = [
        (label, text(project[key]), key == "reference")
        for key, label in _PROJECT_LABELS
        if not is_missing(project.get(key))
    ]
    reference = project.get("reference")
    return rows, None if is_missing(reference) else text(reference)


# --------------------------------------------------------------------------------------------
# The page
# --------------------------------------------------------------------------------------------


def render_report(  # over 80 lines only for the docstring of its 18 parameters
    *,
    title: str,
    version: str,
    run_time: str,
    scenario_file: str,
    sites: pd.DataFrame,
    sources: pd.DataFrame,
    weather_summary: dict,
    habitat_values: pd.DataFrame,
    warnings: list[str],
    cautions: list[str],
    method_notes: list[str],
    run_record: dict,
    figures: dict[str, bytes],
    weather_figures: Mapping[str, bytes] | None = None,
    cautious_choices: list[tuple[str, str, str]] | None = None,
    sensitivity_summary: pd.DataFrame | None = None,
    options: pd.DataFrame | None = None,
    what_it_takes: pd.DataFrame | None = None,
) -> str:
    """report.html as text: a self-contained, offline-readable account of one screening run.

    Parameters
    ----------
    title : str
        Scenario title (user text, escaped).
    version : str
        siting version that made the run.
    run_time : str
        Time of the run, as it should be shown (e.g. ISO 8601).
    scenario_file : str
        Name or path of the scenario file, as it should be shown.
    sites : DataFrame
        One row per habitat site with the columns of :data:`SUMMARY_COLUMNS` (``name``,
        ``designation``, ``habitat``, ``critical_level_ug_m3`` [ug m-3],
        ``critical_load_used_kg_n_ha_yr`` [kg N ha-1 yr-1], ``pc_conc_max_ug_m3`` [ug m-3],
        ``pc_pct_level`` [%], ``pc_dep_max_kg_n_ha_yr`` [kg N ha-1 yr-1], ``pc_pct_load`` [%],
        ``threshold_percent`` [%], ``verdict``). Used when present: ``habitat_name`` (shown
        instead of the habitat id), ``incomb_pct_load`` [%], and ``tier`` and
        ``threshold_source`` (the table of screening thresholds).
    sources : DataFrame
        One row per source with its emission derivation, shown transposed (one column per
        source, headed by ``source_id``); the known derivation columns get plain-words labels,
        other non-empty columns a label made from their name (a ``geometry`` column is left out).
    weather_summary : dict
        Key -> value lines describing the weather data used; known keys get plain-words labels,
        shares are shown as percentages.
    habitat_values : DataFrame
        Habitats and their critical values with the source of each (habitat, habitat_name,
        critical_load_min/max/used, critical_level, land_cover, deposition velocity, ``*_source``
        or ``source`` columns); sources become numbered notes under the table.
    warnings : list of str
        Warnings collected during the run.
    cautions : list of str
        The cautions every output carries; shown prominently in section 7.
    method_notes : list of str
        Method and assumption statements for section 3.
    run_record : dict
        Version, time, inputs with SHA-256 and parameters; shown as tables, and in full as
        indented JSON in a collapsed block. Its ``project`` ([project]: applicant, site,
        reference, author, date) heads the page, the reference also every printed page; its
        ``command`` ("screen" when absent) says which settings apply. Paths are shown as
        given: the writer passes them relative (:func:`siting.output.portable.portable_record`).
    figures : dict of str to bytes
        Caption -> PNG bytes, inlined as data URLs in that order (section 5).
    weather_figures : mapping of str to bytes, optional
        Caption -> PNG bytes of the weather charts (wind rose, stability by wind speed), shown
        in section 2 right after the weather summary table; none by default.
    cautious_choices : list of (choice, this run, alternative), optional
        The run's modelling choices, shown in section 4 with the per-site sensitivity.
    sensitivity_summary : DataFrame, optional
        One row per site (sensitivity.py): min/max % of critical load and level over the
        variants and the variants that flip its verdict.
    options : DataFrame, optional
        options.csv's rows (one per site and option, the base first), shown side by side in
        section 1 with what each option changes (``run_record["options"]``).
    what_it_takes : DataFrame, optional
        what_it_takes.csv's rows: per proposed house (``source_id``), the cheapest way to let
        every site pass in words (``cheapest_option``), shown in section 1.

    Returns
    -------
    page : str
        The whole page (UTF-8 text; :func:`siting.output.screen.write_report` writes it).

    Raises
    ------
    InputError
        If `sites` lacks a summary column or a figure is not PNG bytes.
    """
    missing = [key for key, _ in SUMMARY_COLUMNS if key not in sites.columns]
    if missing:
        raise InputError(
            f"report: sites table lacks column(s) {', '.join(missing)}; "
            f"expected {', '.join(k for k, _ in SUMMARY_COLUMNS)}"
        )
    parameters = run_record.get("parameters")
    end = str((parameters or {}).get("assessment", {}).get("critical_load_end", "lower"))
    command = str(run_record.get("command", "screen"))
    project, reference = _project(run_record.get("project"))
    return render(
        "report.html",
        page_title=f"{title} · siting report",
        title=text(title),
        project=project,
        reference=reference,
        version=text(version),
        run_time=text(run_time),
        scenario_file=text(scenario_file),
        n_sites=len(sites),
        verdict_counts=_verdict_counts(sites),
        n_flags=flag_count(sources),
        summary=_summary(sites),
        change=_change(sites),
        options=options_view(options, run_record.get("options") or [], sources),
        ways=[]
        if what_it_takes is None
        else [
            (text(sid), text(words))
            for sid, words in zip(what_it_takes["source_id"], what_it_takes["cheapest_option"])
        ],
        inputs=inputs_view(sources, weather_summary, habitat_values, sites, parameters, command),
        weather_figures=_figures(weather_figures or {}),
        method_notes=[text(note) for note in method_notes],
        cautious=_cautious(cautious_choices, sites, sensitivity_summary, end),
        figures=_figures(figures),
        warnings=[text(warning) for warning in warnings],
        cautions=[text(caution) for caution in cautions],
        run_record=run_record_view(run_record),
    )
