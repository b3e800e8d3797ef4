"""The screening report (report.html).

This adapter turns results that other modules computed into one self-contained HTML file: inline
CSS, figures inlined as base64 PNG data URLs, no scripts and no links outside the file, so a
regulator can open it offline years later. No physics lives here: every number shown was computed
elsewhere; this module only formats and tabulates it. The figures are drawn by
:mod:`siting.presentation.figures` and arrive as PNG bytes; number formatting and the other
presentation helpers shared with :mod:`siting.presentation.webmap` live in
:mod:`siting.presentation.formats`, and the small HTML building blocks shared with the verification
report (stylesheet, escaping, labels, value display) in :mod:`siting.presentation.html_parts`.
Numbers are formatted by what their column measures, read from the unit suffix of the column name
(:func:`siting.presentation.formats.format_for_column`). Text from user files (site names,
designations, source ids, the title) is HTML-escaped wherever it enters the page.

The page is laid out to fit an A4 or Letter page, on screen and in print: no table is wider than
the page (the sources table is transposed, one column per source, and split into blocks of a few
sources), long citations wrap in a smaller font or become numbered notes, and table rows are
never split across pages. In print (A4 portrait) table headers repeat on each page, headings stay
with what follows them, figures, list items and the run record's small tables are kept whole,
and figures are capped in height so that two fit on a page. The weather charts (wind rose,
stability by wind speed) sit in section 2 right after the weather summary; the other figures
in section 5.
"""

from __future__ import annotations

import base64
import html
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

import pandas as pd

from siting.errors import InputError
from siting.presentation.formats import MISSING_TEXT, format_for_column, format_percent, is_missing
from siting.presentation.html_parts import (
    NOT_APPLICABLE,
    SHARED_CSS,
    VERDICT_STYLE,
    bullet_list,
    code_html,
    display_value,
    esc,
    header_html,
    is_number,
    is_share,
    key_value_table,
    page_html,
    plain_label,
    sections_html,
)
from siting.presentation.report_record import run_record_html, settings_table

__all__ = ["SUMMARY_COLUMNS", "write_report"]

#: Columns the summary table needs: (column in `sites`, what it holds). The table shows them as
#: Site (name, designation below) | Verdict | Habitat | concentration group | deposition group |
#: threshold; see :func:`_summary_table`.
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

#: Transposed sources table: (group heading, ((column in `sources`, row label), ...)), in the
#: order of the derivation. Rows empty for every source are left out, and so is a group whose
#: rows all are; columns not listed here are shown at the end under a label made from the name.
_DERIVATION_ROWS: tuple[tuple[str, tuple[tuple[str, str], ...]], ...] = (
    (
        "Kind, role and release",
        (
            ("kind", "Kind of source"),
            ("role", "Role"),
            ("x_m", "Position x (easting) [m]"),
            ("y_m", "Position y (northing) [m]"),
            ("height_m", "Release height [m]"),
            ("plume_rise", "Plume rise"),
            ("plume_rise_basis", "Why (building wake)"),
        ),
    ),
    (
        "Emission before abatement",
        (
            ("livestock", "Livestock"),
            ("housing", "Housing"),
            ("places", "Animal places"),
            ("factor_nh3_kg_per_place_yr", "Emission factor [kg NH3/place/yr]"),
            ("factor_source", "Where the factor comes from"),
            ("nh3_unabated_kg_yr", "NH3 before abatement [kg/yr]"),
        ),
    ),
    (
        "Abatement",
        (
            ("abatement", "Abatement technique"),
            ("reduction_percent", "Reduction by the technique [%]"),
            ("reduction_range_percent", "Published range of the reduction [%]"),
            ("reduction_basis", "Basis of the reduction"),
            ("reduction_flag", "Check of the reduction"),
            ("reduction_source", "Where the reduction comes from"),
            ("scrubber_design_share", "Scrubber sized for [% of maximum ventilation]"),
            ("treated_air_fraction", "Share of the ammonia treated over the year [%]"),
            ("effective_reduction_percent", "Effective reduction [%]"),
        ),
    ),
    (
        "Emission used in the model",
        (
            ("nh3_kg_yr", "NH3 emitted [kg/yr]"),
            ("emission_g_s", "Source strength [g/s]"),
        ),
    ),
    (
        "Captured by abatement",
        (
            ("nh3_removed_kg_yr", "NH3 removed [kg/yr]"),
            ("n_captured_kg_yr", "N captured in the effluent [kg N/yr]"),
            ("effluent_m3_yr", "Effluent [m³/yr]"),
        ),
    ),
)

#: Rows of the derivation table shown as citations (small wrapping text) and as a warning.
_CITATION_ROWS = frozenset({"factor_source", "reduction_source"})
_FLAG_ROWS = frozenset({"reduction_flag"})
#: Rows of the derivation table shown in bold: the figures the model uses.
_RESULT_ROWS = frozenset({"nh3_kg_yr", "emission_g_s"})

#: Habitat table value columns: (header, unit, value column(s) joined by "–", citation column).
_HABITAT_VALUE_COLUMNS: tuple[tuple[str, str, tuple[str, ...], str | None], ...] = (
    ("Deposition velocity", "m/s", ("deposition_velocity_m_s",), "deposition_velocity_source"),
    (
        "Critical load range",
        "kg N/ha/yr",
        ("critical_load_min_kg_n_ha_yr", "critical_load_max_kg_n_ha_yr"),
        "critical_load_source",
    ),
    ("Critical load used", "kg N/ha/yr", ("critical_load_used_kg_n_ha_yr",), None),
    ("Critical level", "µg NH3/m³", ("critical_level_ug_m3",), "critical_level_source"),
)

#: Most sources side by side in one block of the transposed table (fits A4 portrait).
_SOURCES_PER_BLOCK = 6

#: Plain-words labels of the weather summary keys (unknown keys get a label from their name).
_WEATHER_LABELS = {
    "file": "Frequency table file",
    "station": "Station",
    "sectors": "Wind direction sectors",
    "sector_width_deg": "Sector width [deg]",
    "speed_classes_m_s": "Wind speed classes [m/s]",
    "mean_speed_m_s": "Mean wind speed [m/s]",
    "stability_share": "Share of each stability class (Pasquill A-F)",
    "prevailing_from_deg": "Prevailing wind from [deg]",
    "share_raised_to_min_speed": "Share of the record raised to the minimum wind speed [%]",
    "anemometer_height_m": "Anemometer height [m]",
    "rows": "Rows in the table",
    "frequencies_given_as": "Frequencies given as",
    # hourly records
    "files": "Hourly record file(s)",
    "latitude_deg": "Site latitude [deg]",
    "longitude_deg": "Site longitude [deg]",
    "first_time_utc": "First hour (UTC)",
    "last_time_utc": "Last hour (UTC)",
    "time_offsets": "Time offsets",
    "years_covered": "Calendar years covered",
    "record_years": "Length of record [years]",
    "hours_expected": "Hours in the period",
    "hours_used": "Hours used",
    "hours_missing": "Hours missing (not filled)",
    "missing_percent": "Missing [% of hours]",
    "gap_count": "Gaps",
    "gaps": "Longest gaps",
    "calm_threshold_m_s": "Calm below [m/s]",
    "min_wind_speed_m_s": "Minimum wind speed used [m/s]",
    "calm_hours": "Calm hours",
    "calm_percent": "Calms [% of hours used]",
    "calm_direction_filled_hours": "Calm hours given the last wind direction",
    "raised_to_min_speed_percent": "Raised to the minimum speed [% of hours used]",
    "mean_observed_speed_m_s": "Mean observed wind speed [m/s]",
    "prevailing_from_words": "Prevailing wind",
    "direction_step_deg": "Reported direction step [deg]",
    "direction_spread_deg": "Each hour's plume spread over [deg]",
    "direction_rule": "Rule for hourly directions",
    "stability_method": "Stability class from",
    "temperature_c": "Air temperature [deg C]",
    "calm_rule": "Rule for calms",
    "missing_rule": "Rule for missing hours",
    "scrubber_treated_share": "Partial scrubbing: share of the year's ammonia treated",
    "emission_profile": "Hourly emission profile",
}

_ROLE_NOTE = (
    "Roles: proposed and existing sources make up the process contribution (PC); removed "
    "sources are subtracted in the net change; other sources (somebody else's) count only "
    "in-combination. “–” marks a step that does not apply to that source."
)

_CAUTION_TOP_LINE = (
    "Screening estimate from a simplified model, not a decision: read the cautions in section 7. "
    "The competent authority and local regulations decide."
)

# --------------------------------------------------------------------------------------------
# The report: small HTML builders
# --------------------------------------------------------------------------------------------


class _Notes:
    """Numbered citation notes: the same text gets the same number; rendered as a list."""

    def __init__(self) -> None:
        self._numbers: dict[str, int] = {}

    def ref(self, text: Any) -> str:
        """A superscript reference ``[n]`` to `text` (empty for missing text)."""
        if is_missing(text):
            return ""
        number = self._numbers.setdefault(str(text).strip(), len(self._numbers) + 1)
        return f'<sup class="ref">[{number}]</sup>'

    def html(self, heading: str) -> str:
        """The notes as an ordered list under a small heading ('' when there are none)."""
        if not self._numbers:
            return ""
        items = "".join(f"<li>{esc(text)}</li>" for text in self._numbers)
        return f'<h4>{html.escape(heading)}</h4><ol class="cite-list">{items}</ol>'


# --------------------------------------------------------------------------------------------
# The report: sections
# --------------------------------------------------------------------------------------------


def _records(frame: pd.DataFrame, columns: Iterable[str]) -> list[dict[str, Any]]:
    """The rows of ``frame`` as dicts of the named columns that it has (so ``.get`` of an absent
    one gives None, as on a row Series); built from whole columns, which for thousands of
    sites is many times quicker than ``iterrows``."""
    present = [c for c in dict.fromkeys(columns) if c in frame]
    if not present:
        return [{} for _ in range(len(frame))]
    return [dict(zip(present, row)) for row in zip(*(frame[c].tolist() for c in present))]


def _cached(function: Callable[..., str]) -> Callable[..., str]:
    """``function(value, *args)`` remembered per (type, value, args): a table repeats the same
    critical levels, loads, thresholds and verdicts over thousands of rows. Unhashable values
    are passed through; a NaN is only found again as the same object, which is still right."""
    cache: dict[tuple, str] = {}

    def cell(value: Any, *args: Any) -> str:
        key = (type(value), value, *args)
        try:
            return cache[key]
        except KeyError:
            text = cache[key] = function(value, *args)
            return text
        except TypeError:
            return function(value, *args)

    return cell


def _verdict_cell(value: Any) -> str:
    """The verdict <td>: a coloured badge and a plain-words hint."""
    text = "" if is_missing(value) else str(value)
    css, hint = VERDICT_STYLE.get(text.strip().lower(), ("verdict-none", ""))
    shown = esc(text) if text else MISSING_TEXT
    hint_html = f'<span class="verdict-hint">{html.escape(hint)}</span>' if hint else ""
    return f'<td class="verdict-cell"><span class="verdict {css}">{shown}</span>{hint_html}</td>'


def _number_cell(value: Any, column: str, css: str = "") -> str:
    """A right-aligned <td> of a number formatted by its column name."""
    classes = " ".join(c for c in ("num", css) if c)
    return f'<td class="{classes}">{html.escape(format_for_column(value, column))}</td>'


def _percent_cell(value: Any, column: str, threshold: Any) -> str:
    """A % <td>; marked when over the threshold, with more decimals when rounding would hide
    the difference from the threshold (1.04 % against 1 % shows "1.04", not "1.0")."""
    if is_missing(value) or not is_number(value) or not is_number(threshold):
        return _number_cell(value, column)
    number, limit = float(value), float(threshold)
    decimals = 1
    text = format_percent(number, decimals)
    while number != limit and text == format_percent(limit, decimals) and decimals < 6:
        decimals += 1
        text = format_percent(number, decimals)
    css = "num over" if number > limit else "num"
    return f'<td class="{css}">{html.escape(text)}</td>'


def _summary_table(sites: pd.DataFrame) -> str:
    """The summary: one row per site, site and verdict first, fitting a portrait page."""
    show_incomb = "incomb_pct_load" in sites and any(
        not is_missing(v) for v in sites["incomb_pct_load"]
    )
    n_dep = 4 if show_incomb else 3
    head_top = (
        f'<th rowspan="2">{header_html("Site", "designation")}</th>'
        f'<th rowspan="2">{header_html("Verdict")}</th>'
        f'<th rowspan="2">{header_html("Habitat")}</th>'
        f'<th colspan="3" class="group">{header_html("Ammonia concentration")}</th>'
        f'<th colspan="{n_dep}" class="group">{header_html("Nitrogen deposition")}</th>'
        f'<th rowspan="2">{header_html("Threshold", "%")}</th>'
    )
    head_sub = [
        header_html("Critical level", "µg NH3/m³"),
        header_html("PC max", "µg NH3/m³"),
        header_html("PC", "% of level"),
        header_html("Critical load", "kg N/ha/yr"),
        header_html("PC max", "kg N/ha/yr"),
        header_html("PC", "% of load"),
    ]
    if show_incomb:
        head_sub.append(header_html("In-comb.", "% of load"))
    head = f"<tr>{head_top}</tr><tr>" + "".join(f"<th>{h}</th>" for h in head_sub) + "</tr>"
    rows = []
    number_cell, verdict_cell = _cached(_number_cell), _cached(_verdict_cell)
    sub_html = _cached(lambda v: "" if is_missing(v) else f'<span class="sub">{esc(v)}</span>')
    habitat_html = _cached(lambda name, code: esc(name) if not is_missing(name)
                           else code_html(code))  # fmt: skip
    columns = ["name", "designation", "habitat", "habitat_name", "verdict",
               *(c for c, _ in SUMMARY_COLUMNS), "incomb_pct_load"]  # fmt: skip
    for record in _records(sites, columns):
        get = record.get
        threshold = get("threshold_percent")
        cells = [
            f'<td class="site"><span class="site-name">{esc(get("name"))}</span>'
            f"{sub_html(get('designation'))}</td>",
            verdict_cell(get("verdict")),
            f"<td>{habitat_html(get('habitat_name'), get('habitat'))}</td>",
            number_cell(get("critical_level_ug_m3"), "critical_level_ug_m3"),
            number_cell(get("pc_conc_max_ug_m3"), "pc_conc_max_ug_m3"),
            _percent_cell(get("pc_pct_level"), "pc_pct_level", threshold),
            number_cell(get("critical_load_used_kg_n_ha_yr"), "critical_load_used_kg_n_ha_yr"),
            number_cell(get("pc_dep_max_kg_n_ha_yr"), "pc_dep_max_kg_n_ha_yr"),
            _percent_cell(get("pc_pct_load"), "pc_pct_load", threshold),
        ]
        if show_incomb:
            cells.append(number_cell(get("incomb_pct_load"), "incomb_pct_load"))
        cells.append(number_cell(threshold, "threshold_percent"))
        rows.append(f'<tr class="site-row">{"".join(cells)}</tr>')
    if not rows:
        empty = "No habitat site in the layer."
        body = f'<tr><td colspan="{7 + n_dep}" class="empty">{empty}</td></tr>'
    else:
        body = "".join(rows)
    legend = (
        '<p class="note">PC: process contribution of the installation (proposed + existing '
        "sources), maximum over the site. Threshold: the site's screening threshold, as a % of "
        "both the critical level and the critical load; a % in bold red is above it."
        + (" In-comb.: PC together with the other sources in the scenario." if show_incomb else "")
        + "</p>"
    )
    return (
        f'<div class="table-wrap"><table class="summary fit"><thead>{head}</thead>'
        f"<tbody>{body}</tbody></table></div>{legend}"
    )


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


def _change_table(sites: pd.DataFrame) -> str:
    """Net change (proposed - removed), in-combination and background + PC, one row per site.

    Columns that are empty for every site (e.g. no background in the habitat layer) are left
    out; returns "" when none is present.
    """
    columns = [
        c for c in _CHANGE_COLUMNS if c[0] in sites and any(not is_missing(v) for v in sites[c[0]])
    ]
    if not columns:
        return ""
    head = "<th>Site</th>" + "".join(
        f"<th>{header_html(label, unit)}</th>" for _, label, unit in columns
    )
    rows = []
    number_cell = _cached(_number_cell)
    for record in _records(sites, ["name", *(col for col, _, _ in columns)]):
        cells = [f'<td class="site"><span class="site-name">{esc(record.get("name"))}</span></td>']
        cells += [number_cell(record.get(col), col) for col, _, _ in columns]
        rows.append(f"<tr>{''.join(cells)}</tr>")
    note = (
        '<p class="note">Net change: proposed sources less those to be removed, maximum over '
        "the site (negative where the proposal lowers the contribution). In-combination: PC "
        "together with the other farms in the scenario. Background + PC: the predicted "
        "environmental total where the habitat layer gives a background.</p>"
    )
    return (
        "<h3>Net change, in-combination and background</h3>"
        f'<div class="table-wrap"><table class="summary fit"><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table></div>{note}"
    )


def _source_ids(sources: pd.DataFrame) -> list[str]:
    """Column headers of the transposed sources table: source_id, else id, else 1, 2, ..."""
    for column in ("source_id", "id"):
        if column in sources:
            return [
                str(v) if not is_missing(v) else f"#{i + 1}" for i, v in enumerate(sources[column])
            ]
    return [f"#{i + 1}" for i in range(len(sources))]


def _derivation_cell(column: str, value: Any) -> str:
    """One <td> of the transposed sources table, styled by what the row holds."""
    if is_missing(value):
        return f'<td class="na">{NOT_APPLICABLE}</td>'
    if column in _FLAG_ROWS:
        return f'<td class="flag">⚠ {esc(value)}</td>'
    if column in _CITATION_ROWS:
        return f'<td class="cite">{esc(value)}</td>'
    if is_share(column) and is_number(value):
        return f'<td class="num">{html.escape(format_percent(100.0 * float(value)))}</td>'
    if is_number(value):
        return _number_cell(value, column)
    if isinstance(value, str) and len(value) > 40:
        return f'<td class="cite">{esc(value)}</td>'
    return f"<td>{code_html(value)}</td>"


def _sources_table(sources: pd.DataFrame) -> str:
    """The emission derivation, transposed: one column per source, one row per step.

    Split into blocks of at most ``_SOURCES_PER_BLOCK`` sources so that it fits the page.
    """
    if not len(sources):
        return '<p class="empty">No sources were given.</p>'
    ids = _source_ids(sources)
    listed = {column for _, rows in _DERIVATION_ROWS for column, _ in rows}
    skip = listed | {"source_id", "id", "geometry"}
    extra = tuple((c, plain_label(c)) for c in map(str, sources.columns) if c not in skip)
    groups = list(_DERIVATION_ROWS) + ([("Other", extra)] if extra else [])

    def filled(column: str) -> bool:
        return column in sources and any(not is_missing(v) for v in sources[column])

    flagged = [
        any(not is_missing(sources[c].iloc[i]) for c in _FLAG_ROWS if c in sources)
        for i in range(len(sources))
    ]
    blocks = []
    for start in range(0, len(sources), _SOURCES_PER_BLOCK):
        part = range(start, min(start + _SOURCES_PER_BLOCK, len(sources)))
        head = "".join(
            f'<th class="flagged" scope="col">{esc(ids[i])} ⚠</th>'
            if flagged[i]
            else f'<th scope="col">{esc(ids[i])}</th>'
            for i in part
        )
        body = []
        for heading, rows in groups:
            shown = [(column, label) for column, label in rows if filled(column)]
            if not shown:
                continue
            body.append(
                f'<tr class="step-group"><th colspan="{len(part) + 1}">'
                f"{html.escape(heading)}</th></tr>"
            )
            for column, label in shown:
                css = ' class="result"' if column in _RESULT_ROWS else ""
                cells = "".join(_derivation_cell(column, sources[column].iloc[i]) for i in part)
                body.append(f'<tr{css}><th scope="row">{html.escape(label)}</th>{cells}</tr>')
        blocks.append(
            '<table class="derivation"><colgroup><col class="label"></colgroup>'
            f'<thead><tr><th scope="col">Source id</th>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table>"
        )
    return "".join(blocks) + f'<p class="note">{html.escape(_ROLE_NOTE)}</p>'


def _habitat_table(values: pd.DataFrame) -> str:
    """Habitats and their critical values, one row per habitat; citations as numbered notes."""
    if not len(values):
        return '<p class="empty">No habitat values available.</p>'

    def filled(column: str) -> bool:
        return column in values and any(not is_missing(v) for v in values[column])

    specs = [s for s in _HABITAT_VALUE_COLUMNS if any(filled(c) for c in s[2])]
    if not any(s[2] == _HABITAT_VALUE_COLUMNS[1][2] for s in specs):  # no range: cite on "used"
        specs = [
            (h, u, c, "critical_load_source" if c == ("critical_load_used_kg_n_ha_yr",) else s)
            for h, u, c, s in specs
        ]
    known = {"habitat", "habitat_name", "source", "land_cover", "geometry"}
    known |= {c for s in _HABITAT_VALUE_COLUMNS for c in (*s[2], s[3]) if c}
    extra = [str(c) for c in values.columns if str(c) not in known and filled(str(c))]
    extra_sources = [c for c in extra if c.endswith("_source")]
    extra_values = [c for c in extra if c not in extra_sources]

    head = ["<th>Habitat</th>"]
    if filled("land_cover"):
        head.append("<th>Land cover</th>")
    head += [f"<th>{header_html(label, unit)}</th>" for label, unit, _, _ in specs]
    head += [f"<th>{html.escape(plain_label(c))}</th>" for c in extra_values]
    if extra_sources:
        head.append("<th>Other sources</th>")

    notes = _Notes()
    rows = []
    for _, record in values.iterrows():
        get = record.get
        name, code = get("habitat_name"), get("habitat")
        main = esc(name) if not is_missing(name) else code_html(code)
        both = not is_missing(name) and not is_missing(code)
        sub = f'<span class="sub">{code_html(code)}</span>' if both else ""
        cells = [f"<td>{main}{notes.ref(get('source'))}{sub}</td>"]
        if filled("land_cover"):
            cells.append(f"<td>{code_html(get('land_cover'))}</td>")
        for _, _, value_columns, source_column in specs:
            text = "–".join(format_for_column(get(c), c) for c in value_columns)
            ref = notes.ref(get(source_column)) if source_column else ""
            cells.append(f'<td class="num">{html.escape(text)}{ref}</td>')
        for column in extra_values:
            value = get(column)
            cells.append(
                _number_cell(value, column)
                if is_number(value)
                else f"<td>{display_value(column, value)}</td>"
            )
        if extra_sources:
            cells.append("<td>" + "".join(notes.ref(get(c)) for c in extra_sources) + "</td>")
        rows.append(f"<tr>{''.join(cells)}</tr>")
    return (
        f'<div class="table-wrap"><table class="fit"><thead><tr>{"".join(head)}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table></div>" + notes.html("Where the values come from")
    )


def _thresholds_table(sites: pd.DataFrame) -> str:
    """The screening threshold of each designation used, with its source ('' if not known)."""
    if "threshold_percent" not in sites or not len(sites):
        return ""
    columns = [c for c in ("designation", "tier", "threshold_percent", "threshold_source")
               if c in sites]  # fmt: skip
    table = pd.DataFrame(sites[columns]).drop_duplicates()
    labels = {
        "designation": header_html("Designation"),
        "tier": header_html("Tier"),
        "threshold_percent": header_html("Threshold", "% of CLe and CL"),
        "threshold_source": header_html("Where the threshold comes from"),
    }
    head = "".join(f"<th>{labels[c]}</th>" for c in columns)
    rows = []
    for _, record in table.iterrows():
        cells = []
        for c in columns:
            if c == "threshold_percent":
                cells.append(_number_cell(record[c], c))
            elif c == "threshold_source":
                cells.append(f'<td class="cite">{esc(record[c])}</td>')
            else:
                cells.append(f"<td>{code_html(record[c])}</td>")
        rows.append(f"<tr>{''.join(cells)}</tr>")
    return (
        "<h3>Screening thresholds used</h3>"
        f'<div class="table-wrap"><table class="fit"><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table></div>"
    )


_LOAD = "critical_load_used_kg_n_ha_yr"
_UNDEPLETED = "pc_pct_load_undepleted"


def _percent_or_missing(value: Any) -> str:
    return MISSING_TEXT if is_missing(value) else format_percent(value)


def _span(low: Any, high: Any) -> str:
    """A sensitivity range of percentages, ``"5.6 – 24.1"``, or the missing mark."""
    if is_missing(low) or is_missing(high):
        return MISSING_TEXT
    return f"{format_percent(low)} – {format_percent(high)}"


def _cautious_section(choices, sites: pd.DataFrame, summary, end: str = "lower") -> str:
    """The run's modelling choices (each with its cautious default and the alternative), and
    per site the critical level's basis, what depletion took off and the sensitivity range."""
    parts = [
        "<p>A screening verdict is only worth something if every default errs towards the "
        "higher process contribution. The table says, for each modelling choice, what this run "
        "used, whether that is the cautious default, and the alternative.</p>"
    ]
    if choices:
        rows = "".join(
            f'<tr><th scope="row">{esc(c)}</th><td>{esc(used)}</td><td>{esc(alt)}</td></tr>'
            for c, used, alt in choices
        )
        parts.append(
            '<div class="table-wrap"><table class="compact"><thead><tr>'
            f"<th>{header_html('Choice')}</th><th>{header_html('This run')}</th>"
            f"<th>{header_html('Alternative')}</th></tr></thead><tbody>{rows}</tbody></table></div>"
        )
    ranges = {}
    if summary is not None and len(summary):
        ranges = {str(r["site"]): r for r in summary.to_dict("records")}
    undepleted = _UNDEPLETED in sites.columns
    head = (
        f"<th>{header_html('Site')}</th>"
        f"<th>{header_html('Critical level', 'µg NH3/m³, and why')}</th>"
        f"<th>{header_html('Critical load', 'kg N/ha/yr, review and end of range')}</th>"
        + (
            f"<th>{header_html('Without depletion', '% of critical load')}</th>"
            if undepleted
            else ""
        )
        + f"<th>{header_html('Sensitivity range', '% of critical load')}</th>"
        f"<th>{header_html('Sensitivity range', '% of critical level')}</th>"
        f"<th>{header_html('Verdict flips under')}</th>"
    )
    rows = []
    level_cell = _cached(
        lambda level, basis: (
            f"<td>{esc(format_for_column(level, 'critical_level_ug_m3'))}"
            + ("" if is_missing(basis) else f'<span class="sub">{esc(basis)}</span>')
            + "</td>"
        )
    )
    load_cell = _cached(
        lambda load, review: (
            f"<td>{esc(format_for_column(load, _LOAD))}"
            f'<span class="sub">{esc(review)} review, {esc(end)} end</span></td>'
        )
    )
    columns = ["name", "critical_level_basis", "critical_level_ug_m3", _LOAD,
               "critical_load_review", _UNDEPLETED]  # fmt: skip
    for row in _records(sites, columns):
        name = str(row.get("name"))
        r = ranges.get(name, {})
        flips = r.get("flipping_variants")
        cells = [
            f'<td class="site">{esc(name)}</td>',
            level_cell(row.get("critical_level_ug_m3"), row.get("critical_level_basis")),
            load_cell(row.get(_LOAD), row.get("critical_load_review", MISSING_TEXT)),
        ]
        if undepleted:
            cells.append(f'<td class="num">{esc(_percent_or_missing(row.get(_UNDEPLETED)))}</td>')
        cells += [
            f'<td class="num">{esc(_span(r.get("min_pct_load"), r.get("max_pct_load")))}</td>',
            f'<td class="num">{esc(_span(r.get("min_pct_level"), r.get("max_pct_level")))}</td>',
            f"<td>{esc(flips) if not is_missing(flips) and flips else 'none'}</td>",
        ]
        rows.append(f"<tr>{''.join(cells)}</tr>")
    parts.append("<h3>By site</h3>")
    parts.append(
        '<div class="table-wrap"><table class="compact"><thead><tr>'
        f"{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"
    )
    parts.append(
        '<p class="note">Sensitivity: one assumption changed at a time, each both ways — '
        "deposition velocity over its whole range (the high end above the screening value), "
        "the critical load at both ends of its range, the critical level 1 and 3 µg/m³, "
        "plume depletion on and off, the other wind rule below the anemometer, claimed "
        "abatement at the lower end of its range, the emission factors at their stated "
        "uncertainty — re-run at the sites' own points (sensitivity.csv has every variant).</p>"
    )
    return "".join(parts)


def _figures_html(
    figures: Mapping[str, bytes], empty_text: str = "No figures were made for this run."
) -> str:
    """<figure> elements with PNG data URLs, captions escaped; `empty_text` when none ('' for
    nothing at all)."""
    if not figures:
        return f'<p class="empty">{html.escape(empty_text)}</p>' if empty_text else ""
    parts = []
    for caption, png in figures.items():
        if not isinstance(png, (bytes, bytearray)) or not bytes(png).startswith(b"\x89PNG"):
            raise InputError(f"report figure {caption!r}: expected PNG bytes")
        data = base64.b64encode(bytes(png)).decode("ascii")
        parts.append(
            f'<figure><img src="data:image/png;base64,{data}" alt="{esc(caption)}">'
            f"<figcaption>{esc(caption)}</figcaption></figure>"
        )
    return "".join(parts)


def write_report(
    path: Path,
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
) -> None:
    """Write report.html: a self-contained, offline-readable account of one screening run.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
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
        indented JSON in a collapsed block.
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

    Raises
    ------
    InputError
        If `sites` lacks a summary column or a figure is not PNG bytes; nothing is written.
    """
    missing = [key for key, _ in SUMMARY_COLUMNS if key not in sites.columns]
    if missing:
        raise InputError(
            f"report: sites table lacks column(s) {', '.join(missing)}; "
            f"expected {', '.join(k for k, _ in SUMMARY_COLUMNS)}"
        )
    figures_html = _figures_html(figures)  # validates before anything is written
    weather_figures_html = _figures_html(weather_figures or {}, empty_text="")

    counts = {}
    for verdict in sites["verdict"]:
        key = "not assessed" if is_missing(verdict) else str(verdict)
        counts[key] = counts.get(key, 0) + 1
    count_text = "; ".join(f"{n} {k}" for k, n in counts.items()) or "no sites"
    n_flags = sum(1 for c in _FLAG_ROWS if c in sources for v in sources[c] if not is_missing(v))
    flag_line = (
        f'<p class="caution-line">{n_flags} source{"s use" if n_flags > 1 else " uses"} an '
        "abatement reduction outside its published range: see the ⚠ in section 2.</p>"
        if n_flags
        else ""
    )

    sections = [
        (
            "summary",
            "1. Summary",
            f"<p>{len(sites)} habitat site(s): {esc(count_text)}. "
            "Each figure is the maximum process contribution (PC) of the assessed sources over "
            "the site. The verdict compares the PC, as a percentage of the critical level and of "
            "the critical load, with the site's screening threshold; section 3 states how.</p>"
            + flag_line
            + _summary_table(sites)
            + _change_table(sites),
        ),
        (
            "inputs",
            "2. Inputs",
            "<h3>Sources and emission derivation</h3>"
            + _sources_table(sources)
            + '<div class="weather" id="weather"><h3>Weather</h3>'
            + key_value_table(
                weather_summary, _WEATHER_LABELS, "No weather summary available.", css="keyval"
            )
            + weather_figures_html
            + "</div>"
            + "<h3>Habitats and their critical values</h3>"
            + _habitat_table(habitat_values)
            + _thresholds_table(sites)
            + (
                settings_table(run_record["parameters"])
                if isinstance(run_record.get("parameters"), Mapping)
                else ""
            ),
        ),
        (
            "method",
            "3. Method and assumptions",
            bullet_list(method_notes, "No method notes recorded."),
        ),
        (
            "cautious",
            "4. Cautious choices and sensitivity",
            _cautious_section(
                cautious_choices,
                sites,
                sensitivity_summary,
                str(
                    (run_record.get("parameters") or {})
                    .get("assessment", {})
                    .get("critical_load_end", "lower")
                ),
            ),
        ),
        (
            "figures",
            "5. Figures",
            figures_html
            + (
                '<p class="note">The weather charts are in section 2, under Weather.</p>'
                if weather_figures
                else ""
            ),
        ),
        ("warnings", "6. Warnings", bullet_list(warnings, "No warnings were raised.")),
        (
            "cautions",
            "7. Cautions",
            f'<div class="cautions">{bullet_list(cautions, "No cautions given.")}</div>',
        ),
        ("run-record", "8. Run record", run_record_html(run_record)),
    ]
    toc = "".join(f'<li><a href="#{anchor}">{html.escape(h)}</a></li>' for anchor, h, _ in sections)
    body = (
        f'<p class="caution-line">{html.escape(_CAUTION_TOP_LINE)}</p>'
        f"<h1>{esc(title)}</h1>"
        f'<p class="meta">Ammonia screening report · siting {esc(version)} · '
        f"run {esc(run_time)} · scenario {esc(scenario_file)}</p>"
        f'<nav class="toc"><strong>Contents</strong><ol>{toc}</ol></nav>' + sections_html(sections)
    )
    Path(path).write_text(page_html(f"{title} · siting report", SHARED_CSS, body), encoding="utf-8")
