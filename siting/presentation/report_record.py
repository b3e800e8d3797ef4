"""The inputs and the run record as report.html shows them (sections 2 and 8), as plain values.

Formatting only: the sources' emission derivation (transposed, one column per source, in blocks
that fit the page), the weather summary, the habitats with their critical values (citations as
numbered notes), the screening thresholds used and the scenario's settings (section 2); and the
run record (run.json: inputs and tables with SHA-256, grid, versions, timings) as small tables
plus the raw JSON (section 8). Each function returns plain values (text, rows, labels); the
templates ``report_inputs.html`` and ``report_record.html`` lay them out. The page around them
is :mod:`siting.presentation.report`.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import PurePath
from typing import Any

import pandas as pd

from siting.presentation.formats import format_for_column, format_percent, is_missing
from siting.presentation.html_parts import (
    NOT_APPLICABLE,
    Cell,
    display_value,
    filled,
    is_number,
    is_share,
    key_values,
    number_cell,
    plain_label,
    text,
)
from siting.presentation.settings_view import settings_groups
from siting.presentation.weather_view import weather_summary_view

__all__ = ["flag_count", "inputs_view", "run_record_view"]

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
    (
        "What the abatement takes and costs (prices: the scenario's [appraisal])",
        (
            ("scrubber_capacity_m3_h", "Scrubber capacity [m³/h]"),
            ("water_m3_yr", "Fresh water [m³/yr]"),
            ("electricity_kwh_yr", "Electricity [kWh/yr]"),
            ("acid_kg_yr", "Sulphuric acid, as 100 % H2SO4 [kg/yr]"),
            ("capital_eur", "Investment [EUR]"),
            ("annual_cost_eur_yr", "Annual cost, annuity and running [EUR/yr]"),
            ("cost_eur_per_kg_nh3", "Cost per kg NH3 abated [EUR/kg]"),
            ("appraisal_note", "Note on the appraisal"),
        ),
    ),
)

#: Rows of the derivation table shown as citations (small wrapping text) and as a warning.
_CITATION_ROWS = frozenset({"factor_source", "reduction_source", "appraisal_note"})
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
    "sector_width_deg": "Sector width [°]",
    "speed_classes_m_s": "Wind speed classes [m/s]",
    "mean_speed_m_s": "Mean wind speed [m/s]",
    "stability_share": "Share of each stability class (Pasquill A-F)",
    "prevailing_from_deg": "Prevailing wind from [°]",
    "share_raised_to_min_speed": "Share of the record raised to the minimum wind speed [%]",
    "anemometer_height_m": "Anemometer height [m]",
    "rows": "Rows in the table",
    "frequencies_given_as": "Frequencies given as",
    # hourly records
    "files": "Hourly record file(s)",
    "latitude_deg": "Site latitude [°]",
    "longitude_deg": "Site longitude [°]",
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
    "direction_step_deg": "Reported direction step [°]",
    "direction_spread_deg": "Each hour's plume spread over [°]",
    "direction_rule": "Rule for hourly directions",
    "stability_method": "Stability class from",
    "temperature_c": "Air temperature [deg C]",
    "calm_rule": "Rule for calms",
    "missing_rule": "Rule for missing hours",
    "format": "Format of the hourly files",
    "sources": "The files as read (layout, missing codes, quality flags)",
    "grid_point": "Reanalysis grid point",
    "record_position": "Position of the record and its distance from the site",
    "by_year": "Each calendar year of the record",
    "screened_by": "Screened by",
    "temperature_required": "Hours without an air temperature counted missing",
    "worst_year_by_site": "Worst weather year of each site",
    "scrubber_treated_share": "Partial scrubbing: share of the year's ammonia treated",
    "emission_profile": "Hourly emission profile",
}

#: Keys of the run record shown elsewhere in the report (not repeated in section 8's tables).
_RECORD_SHOWN_ELSEWHERE = {
    "project": "the top of the report",
    "weather_summary": "section 2",
    "warnings": "section 6",
    "cautions": "section 7",
}


class _Notes:
    """Numbered citation notes: the same text gets the same number, in order of first use."""

    def __init__(self) -> None:
        self._numbers: dict[str, int] = {}

    def ref(self, note: Any) -> int | None:
        """The number of the note `note` (None for missing text: no reference shown)."""
        if is_missing(note):
            return None
        return self._numbers.setdefault(str(note).strip(), len(self._numbers) + 1)

    def texts(self) -> list[str]:
        """The notes' texts, in the order of their numbers."""
        return list(self._numbers)


# --------------------------------------------------------------------------------------------
# Section 2: sources, habitats, thresholds, settings
# --------------------------------------------------------------------------------------------


def flag_count(sources: pd.DataFrame) -> int:
    """How many sources carry a flag on their abatement reduction (outside its range)."""
    return sum(1 for c in _FLAG_ROWS if c in sources for v in sources[c] if not is_missing(v))


def _source_ids(sources: pd.DataFrame) -> list[str]:
    """Column headers of the transposed sources table: source_id, else id, else 1, 2, ..."""
    for column in ("source_id", "id"):
        if column in sources:
            return [
                str(v) if not is_missing(v) else f"#{i + 1}" for i, v in enumerate(sources[column])
            ]
    return [f"#{i + 1}" for i in range(len(sources))]


def _derivation_cell(column: str, value: Any, notes: _Notes) -> Cell:
    """One cell of the transposed sources table, styled by what the row holds; a citation
    (where a figure comes from, and how sure it is) becomes the number of its note in
    ``notes`` (css "note"), listed under the table."""
    if is_missing(value):
        return Cell(NOT_APPLICABLE, "na")
    if column in _FLAG_ROWS:
        return Cell(f"⚠ {text(value)}", "flag")
    if column in _CITATION_ROWS:
        return Cell(notes.ref(value), "note")
    if is_share(column) and is_number(value):
        return Cell(format_percent(100.0 * float(value)), "num")
    if is_number(value):
        return number_cell(value, column)
    if isinstance(value, str) and len(value) > 40:
        return Cell(text(value), "cite")
    return Cell(text(value), wrap=True)


def _source_blocks(sources: pd.DataFrame) -> list[dict[str, Any]]:
    """The emission derivation, transposed: one column per source, one row per step.

    Split into blocks of at most ``_SOURCES_PER_BLOCK`` sources so that it fits the page; each
    block holds its column heads (id, flagged), its groups of rows and the notes its citation
    cells refer to by number (each distinct text once, numbered down the rows and across).
    """
    ids = _source_ids(sources)
    listed = {column for _, rows in _DERIVATION_ROWS for column, _ in rows}
    skip = listed | {"source_id", "id", "geometry"}
    extra = tuple((c, plain_label(c)) for c in map(str, sources.columns) if c not in skip)
    groups = list(_DERIVATION_ROWS) + ([("Other", extra)] if extra else [])
    shown = [(h, [(c, label) for c, label in rows if filled(sources, c)]) for h, rows in groups]
    flagged = [
        any(not is_missing(sources[c].iloc[i]) for c in _FLAG_ROWS if c in sources)
        for i in range(len(sources))
    ]
    blocks = []
    for start in range(0, len(sources), _SOURCES_PER_BLOCK):
        part = range(start, min(start + _SOURCES_PER_BLOCK, len(sources)))
        notes = _Notes()
        block_groups = [
            {
                "heading": heading,
                "rows": [
                    {
                        "label": label,
                        "result": column in _RESULT_ROWS,
                        "cells": [
                            _derivation_cell(column, sources[column].iloc[i], notes) for i in part
                        ],
                    }
                    for column, label in rows
                ],
            }
            for heading, rows in shown
            if rows
        ]
        heads = [(ids[i], flagged[i]) for i in part]
        blocks.append(
            {
                "heads": heads,
                "span": len(part) + 1,
                "groups": block_groups,
                "notes": notes.texts(),
            }
        )
    return blocks


def _habitat_columns(values: pd.DataFrame) -> tuple[list, list[str], list[str]]:
    """The habitat table's value columns (header, unit, columns, citation column), and the
    other filled columns: values shown by their name, and further ``*_source`` columns."""
    specs = [s for s in _HABITAT_VALUE_COLUMNS if any(filled(values, c) for c in s[2])]
    if not any(s[2] == _HABITAT_VALUE_COLUMNS[1][2] for s in specs):  # no range: cite on "used"
        specs = [
            (h, u, c, "critical_load_source" if c == ("critical_load_used_kg_n_ha_yr",) else s)
            for h, u, c, s in specs
        ]
    known = {"habitat", "habitat_name", "source", "land_cover", "geometry"}
    known |= {c for s in _HABITAT_VALUE_COLUMNS for c in (*s[2], s[3]) if c}
    extra = [str(c) for c in values.columns if str(c) not in known and filled(values, str(c))]
    extra_sources = [c for c in extra if c.endswith("_source")]
    return specs, [c for c in extra if c not in extra_sources], extra_sources


def _habitats(values: pd.DataFrame) -> dict[str, Any] | None:
    """Habitats and their critical values, one row per habitat; citations as numbered notes
    (numbered in the order the table cites them). None when there is no habitat."""
    if not len(values):
        return None
    specs, extra_values, extra_sources = _habitat_columns(values)
    land_cover = filled(values, "land_cover")
    notes = _Notes()
    rows = []
    for _, record in values.iterrows():
        get = record.get
        name, code = get("habitat_name"), get("habitat")
        row: dict[str, Any] = {
            "main": Cell(text(name)) if not is_missing(name) else Cell(text(code), wrap=True),
            "ref": notes.ref(get("source")),
            "sub": text(code) if not is_missing(name) and not is_missing(code) else None,
            "land_cover": text(get("land_cover")) if land_cover else None,
        }
        row["values"] = [
            (
                "–".join(format_for_column(get(c), c) for c in value_columns),
                notes.ref(get(source_column)) if source_column else None,
            )
            for _, _, value_columns, source_column in specs
        ]
        row["extras"] = [
            number_cell(get(c), c) if is_number(get(c)) else Cell(display_value(c, get(c)))
            for c in extra_values
        ]
        row["source_refs"] = [notes.ref(get(c)) for c in extra_sources]
        rows.append(row)
    return {
        "land_cover": land_cover,
        "heads": [(label, unit) for label, unit, _, _ in specs],
        "extra_heads": [plain_label(c) for c in extra_values],
        "other_sources": bool(extra_sources),
        "rows": rows,
        "notes": notes.texts(),
    }


def _thresholds(sites: pd.DataFrame) -> dict[str, Any] | None:
    """The screening threshold of each designation used, its source as a numbered note under
    the table (None if not known)."""
    if "threshold_percent" not in sites or not len(sites):
        return None
    columns = [c for c in ("designation", "tier", "threshold_percent", "threshold_source")
               if c in sites]  # fmt: skip
    labels = {
        "designation": ("Designation", ""),
        "tier": ("Tier", ""),
        "threshold_percent": ("Threshold", "% of CLe and CL"),
        "threshold_source": ("Source", "note below"),
    }
    rows = []
    notes = _Notes()
    for _, record in pd.DataFrame(sites[columns]).drop_duplicates().iterrows():
        cells = []
        for c in columns:
            if c == "threshold_percent":
                cells.append(number_cell(record[c], c))
            elif c == "threshold_source":  # the number of its note under the table
                number = notes.ref(record[c])
                cells.append(Cell(number, "note") if number else Cell(NOT_APPLICABLE, "na"))
            else:
                cells.append(Cell(text(record[c]), wrap=True))
        rows.append(cells)
    return {"heads": [labels[c] for c in columns], "rows": rows, "notes": notes.texts()}


def inputs_view(
    sources: pd.DataFrame,
    weather_summary: Mapping[str, Any],
    habitat_values: pd.DataFrame,
    sites: pd.DataFrame,
    parameters: Any,
    command: str = "screen",
) -> dict[str, Any]:
    """Section 2 of report.html as plain values: the sources' derivation blocks (None when no
    source) with their numbered notes, the weather rows, the habitats (None when none), the
    thresholds used (None when not known) and the settings that apply to the run (``command``
    made it; [] when the record has no parameters,
    :func:`siting.presentation.settings_view.settings_groups`)."""
    return {
        "source_blocks": _source_blocks(sources) if len(sources) else None,
        "weather": key_values(weather_summary_view(weather_summary), _WEATHER_LABELS),
        "habitats": _habitats(habitat_values),
        "thresholds": _thresholds(sites),
        "settings": settings_groups(parameters, command) if isinstance(parameters, Mapping) else [],
    }


# --------------------------------------------------------------------------------------------
# Section 8: the run record
# --------------------------------------------------------------------------------------------


def _file_hashes(
    files: Mapping[str, Any], heading: str, first_header: str, version: str
) -> dict[str, Any]:
    """Input files as table values: key, file name and folder (None when no path), SHA-256.

    The key column is left out (``show_key`` False) when every key is just the file's name. A
    file bundled with siting (its entry marked ``bundled``) says so after its folder, with
    the version of siting that made the run (``version``).
    """
    entries = {k: (e if isinstance(e, Mapping) else {"sha256": e}) for k, e in files.items()}
    show_key = any(
        is_missing(e.get("path")) or PurePath(str(e.get("path"))).name != str(k)
        for k, e in entries.items()
    )
    rows = []
    for key, entry in entries.items():
        path = entry.get("path")
        file = None
        if not is_missing(path):
            pure = PurePath(str(path))
            folder = str(pure.parent) if str(pure.parent) not in ("", ".") else ""
            if entry.get("bundled") is True:
                folder = f"{folder} (bundled with siting {version})".lstrip()
            file = (text(pure.name), folder)
        rows.append((text(key), file, text(entry.get("sha256"))))
    return {"heading": heading, "first_header": first_header, "show_key": show_key, "rows": rows}


def run_record_view(record: Mapping[str, Any]) -> dict[str, Any]:
    """Section 8: the run record as table values (files and hashes, grid, versions, timings,
    other entries; each None when the record lacks it), a note on what is shown elsewhere and
    the raw JSON."""
    done = set()
    overview = {k: v for k, v in record.items() if not isinstance(v, (Mapping, list, tuple))}
    done |= set(overview)
    labels = {"tool": "Tool", "version": "Version", "run_time_utc": "Run time (UTC)",
              "title": "Title"}  # fmt: skip
    files = []
    for key, heading, first in (
        ("inputs", "Input files", "Input"),
        ("config_tables", "Configuration tables", "Table"),
    ):
        if isinstance(record.get(key), Mapping) and record[key]:
            files.append(_file_hashes(record[key], heading, first, text(record.get("version"))))
            done.add(key)
    grid = None
    if isinstance(record.get("grid"), Mapping):
        grid_labels = {"west_m": "West edge [m]", "north_m": "North edge [m]",
                       "cell_m": "Cell size [m]", "n_cols": "Columns", "n_rows": "Rows",
                       "crs": "Coordinate reference system"}  # fmt: skip
        grid = key_values(record["grid"], grid_labels)
        done.add("grid")
    versions = None
    if isinstance(record.get("versions"), Mapping) and record["versions"]:
        versions = [(text(k), text(v)) for k, v in record["versions"].items()]
        done.add("versions")
    timings = None
    if isinstance(record.get("timings_s"), Mapping) and record["timings_s"]:
        timing_labels = {k: plain_label(k) for k in record["timings_s"]}
        timing_labels["receptors"] = "Receptor points computed"
        timings = key_values(record["timings_s"], timing_labels)
        done.add("timings_s")
    elsewhere = [(k, where) for k, where in _RECORD_SHOWN_ELSEWHERE.items() if k in record]
    done |= {k for k, _ in elsewhere} | {"parameters"}
    rest = {k: v for k, v in record.items() if k not in done}
    notes = []
    if "parameters" in record:
        notes.append("model settings: see section 2 (and the raw record below)")
    notes += [f"{plain_label(k).lower()}: see {where}" for k, where in elsewhere]
    note = "; ".join(notes)
    return {
        "overview": key_values(overview, labels) if overview else None,
        "files": files,
        "grid": grid,
        "versions": versions,
        "timings": timings,
        "rest": key_values(rest, {}) if rest else None,
        "note": f"{note[:1].upper()}{note[1:]}." if note else None,
        "raw": json.dumps(record, indent=2, default=str, ensure_ascii=False),
    }
