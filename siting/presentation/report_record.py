"""The run record and model settings as report.html shows them (sections 2 and 8).

Formatting only: the run record (run.json: inputs and tables with SHA-256, grid, versions,
timings) becomes small tables plus the raw JSON in a collapsed block, and the scenario's
settings a table grouped by scenario section. The page around them is :mod:`siting.presentation.report`.
"""

from __future__ import annotations

import html
import json
from collections.abc import Mapping
from pathlib import PurePath
from typing import Any

from siting.presentation.formats import is_missing
from siting.presentation.html_parts import (
    NOT_APPLICABLE,
    code_html,
    display_value,
    esc,
    key_value_table,
    plain_label,
)

__all__ = ["run_record_html", "settings_table"]

#: Keys of the run record shown elsewhere in the report (not repeated in section 7's tables).
_RECORD_SHOWN_ELSEWHERE = {
    "weather_summary": "section 2",
    "warnings": "section 6",
    "cautions": "section 7",
}

#: Scenario parameters not repeated in the model settings table (shown elsewhere).
_SETTINGS_SHOWN_ELSEWHERE = frozenset({"title", "source", "sources"})

#: Labels of scenario parameters whose names alone read poorly.
_SETTING_LABELS = {
    "crs": "Coordinate reference system",
    "path": "Scenario file",
    "hourly": "Hourly weather file",
    "land_type": "Land type (dispersion coefficients)",
    "sigma_scheme": "Dispersion coefficient scheme",
    "min_wind_speed_m_s": "Minimum wind speed [m/s]",
    "plume_depletion": "Plume depletion by deposition",
    "depletion_land_cover": "Land cover used for depletion",
    "critical_load_end": "End of the critical load range used",
    "critical_load_review": "Critical load review used",
    "wind_below_anemometer": "Wind below the anemometer height",
    "wind_profile_min_height_m": "Lowest height of the wind profile [m]",
    "direction_step_deg": "Reporting step of hourly wind directions [deg]",
    "temperature_dependent_emission": "Temperature-dependent hourly emission",
    "lichens_bryophytes_field": "Field saying whether lichens and bryophytes are present",
    "lichens_bryophytes_absent": "Sites stated free of lichens and bryophytes",
    "config_dir": "Own configuration tables folder",
}


def settings_table(parameters: Mapping[str, Any]) -> str:
    """The scenario's settings as read (defaults filled in), grouped by scenario table.

    Sources (section 2's derivation) and the title are left out; unset values read "not set".
    """
    groups: list[tuple[str, dict[str, Any]]] = [("General", {})]
    for key, value in parameters.items():
        if key in _SETTINGS_SHOWN_ELSEWHERE:
            continue
        if isinstance(value, Mapping):
            groups.append((plain_label(key), dict(value)))
        elif isinstance(value, (list, tuple)) and any(isinstance(v, Mapping) for v in value):
            continue  # a list of tables, e.g. sources: shown elsewhere
        else:
            groups[0][1][key] = value
    rows = []
    for heading, entries in groups:
        if not entries:
            continue
        rows.append(f'<tr class="step-group"><th colspan="2">{html.escape(heading)}</th></tr>')
        for key, value in entries.items():
            shown = (
                '<span class="empty">not set</span>'
                if value is None
                else display_value(str(key), value)
            )
            label = _SETTING_LABELS.get(str(key), plain_label(str(key)))
            rows.append(f'<tr><th scope="row">{html.escape(label)}</th><td>{shown}</td></tr>')
    if not rows:
        return ""
    return (
        "<h3>Model settings</h3>"
        '<p class="note">As read from the scenario file, with defaults filled in.</p>'
        f'<table class="compact settings"><tbody>{"".join(rows)}</tbody></table>'
    )


def _file_hash_table(files: Mapping[str, Any], first_header: str) -> str:
    """Input files as a table: key, file name (folder below), SHA-256 in monospace.

    The key column is left out when every key is just the file's name.
    """
    entries = {k: (e if isinstance(e, Mapping) else {"sha256": e}) for k, e in files.items()}
    show_key = any(
        is_missing(e.get("path")) or PurePath(str(e.get("path"))).name != str(k)
        for k, e in entries.items()
    )
    rows = []
    for key, entry in entries.items():
        path = entry.get("path")
        if is_missing(path):
            file_html = f'<td class="na">{NOT_APPLICABLE}</td>'
        else:
            pure = PurePath(str(path))
            folder = str(pure.parent) if str(pure.parent) not in ("", ".") else ""
            folder_html = f'<span class="sub mono">{esc(folder)}</span>' if folder else ""
            file_html = f"<td>{esc(pure.name)}{folder_html}</td>"
        key_html = f"<td>{code_html(key)}</td>" if show_key else ""
        rows.append(
            f'<tr>{key_html}{file_html}<td class="mono">{esc(entry.get("sha256"))}</td></tr>'
        )
    key_head = f"<th>{html.escape(first_header)}</th>" if show_key else ""
    return (
        f'<table class="compact"><thead><tr>{key_head}<th>File</th>'
        f"<th>SHA-256</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
    )


def run_record_html(record: Mapping[str, Any]) -> str:
    """Section 7: the run record as tables (files and hashes, grid, versions) plus raw JSON."""
    parts = []
    done = set()
    overview = {k: v for k, v in record.items() if not isinstance(v, (Mapping, list, tuple))}
    labels = {"tool": "Tool", "version": "Version", "run_time_utc": "Run time (UTC)",
              "title": "Title"}  # fmt: skip
    if overview:
        parts.append(key_value_table(overview, labels, "", css="compact"))
        done |= set(overview)
    for key, heading, first in (
        ("inputs", "Input files", "Input"),
        ("config_tables", "Configuration tables", "Table"),
    ):
        if isinstance(record.get(key), Mapping) and record[key]:
            parts.append(f"<h4>{heading}</h4>" + _file_hash_table(record[key], first))
            done.add(key)
    if isinstance(record.get("grid"), Mapping):
        grid_labels = {"west_m": "West edge [m]", "north_m": "North edge [m]",
                       "cell_m": "Cell size [m]", "n_cols": "Columns", "n_rows": "Rows",
                       "crs": "Coordinate reference system"}  # fmt: skip
        parts.append(
            "<h4>Receptor grid</h4>"
            + key_value_table(record["grid"], grid_labels, "", css="compact")
        )
        done.add("grid")
    if isinstance(record.get("versions"), Mapping) and record["versions"]:
        versions = record["versions"]
        head = "".join(f"<th>{esc(k)}</th>" for k in versions)
        cells = "".join(f'<td class="mono">{esc(v)}</td>' for v in versions.values())
        parts.append(
            "<h4>Software versions</h4>"
            f'<table class="compact"><thead><tr>{head}</tr></thead>'
            f"<tbody><tr>{cells}</tr></tbody></table>"
        )
        done.add("versions")
    if isinstance(record.get("timings_s"), Mapping) and record["timings_s"]:
        timing_labels = {k: plain_label(k) for k in record["timings_s"]}
        timing_labels["receptors"] = "Receptor points computed"
        parts.append(
            "<h4>Timings</h4>"
            + key_value_table(record["timings_s"], timing_labels, "", css="compact")
        )
        done.add("timings_s")
    elsewhere = [(k, where) for k, where in _RECORD_SHOWN_ELSEWHERE.items() if k in record]
    done |= {k for k, _ in elsewhere} | {"parameters"}
    rest = {k: v for k, v in record.items() if k not in done}
    if rest:
        parts.append("<h4>Other entries</h4>" + key_value_table(rest, {}, "", css="compact"))
    notes = []
    if "parameters" in record:
        notes.append("model settings: see section 2 (and the raw record below)")
    notes += [f"{plain_label(k).lower()}: see {where}" for k, where in elsewhere]
    if notes:
        text = "; ".join(notes)
        parts.append(f'<p class="note">{html.escape(text[:1].upper() + text[1:])}.</p>')
    raw = json.dumps(record, indent=2, default=str, ensure_ascii=False)
    parts.append(
        "<details><summary>Complete run record (as in run.json)</summary>"
        f'<pre class="record">{html.escape(raw)}</pre></details>'
    )
    return "".join(parts)
